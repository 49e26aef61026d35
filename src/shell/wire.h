/*
** wire.h: the framed records a replay child sends to its parent.  A
** record is one kind byte, a 4-byte big-endian length and that many bytes
** of payload.  The parent decides every verdict itself; the records only
** carry what the child saw, and a record that breaks the rules ends the
** replay of that child.
*/
#ifndef SLUICE_WIRE_H
#define SLUICE_WIRE_H

#include <stddef.h>

#define WIRE_HEAD 5                  /* kind byte + length */
#define WIRE_MAX  (64u << 20)        /* largest payload: 64 MiB */
#define WIRE_KINDS "EOFCDPBVZQ"      /* the kinds a child may send */

typedef struct wire_record {
  char kind;
  const unsigned char *payload;      /* points into the buffer parsed */
  size_t len;
} wire_record;

/* Parse one record at the start of buf[0..n).  Returns the bytes it took
** (the record is in *r), 0 when more bytes are needed, or -1 when the
** bytes cannot be a record (a kind not in WIRE_KINDS, a length above
** WIRE_MAX). */
long wire_parse(const unsigned char *buf, size_t n, wire_record *r);

/* Write the record head for kind and len into head[WIRE_HEAD]. */
void wire_head(unsigned char head[WIRE_HEAD], char kind, size_t len);

#endif
