/*
** wire.c: framing of the records between a replay child and its parent.
** Pure functions over bytes, so that make fuzz can hammer them.
*/
#include <string.h>

#include "wire.h"

long wire_parse(const unsigned char *buf, size_t n, wire_record *r) {
  if (n < 1)
    return 0;
  if (buf[0] == '\0' || strchr(WIRE_KINDS, buf[0]) == NULL)
    return -1;
  if (n < WIRE_HEAD)
    return 0;
  size_t len = ((size_t)buf[1] << 24) | ((size_t)buf[2] << 16) |
               ((size_t)buf[3] << 8) | (size_t)buf[4];
  if (len > WIRE_MAX)
    return -1;
  if (n - WIRE_HEAD < len)
    return 0;
  r->kind = (char)buf[0];
  r->payload = buf + WIRE_HEAD;
  r->len = len;
  return (long)(WIRE_HEAD + len);
}

void wire_head(unsigned char head[WIRE_HEAD], char kind, size_t len) {
  head[0] = (unsigned char)kind;
  head[1] = (unsigned char)(len >> 24);
  head[2] = (unsigned char)(len >> 16);
  head[3] = (unsigned char)(len >> 8);
  head[4] = (unsigned char)len;
}
