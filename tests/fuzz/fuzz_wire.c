/*
** fuzz_wire.c: libFuzzer target for the framing of replay records
** (src/shell/wire.c), the bytes a hostile child controls.  The input is
** parsed record by record as the parent does; every record must lie
** inside the input, its kind must be one the parent knows, and writing it
** back must give the same bytes.
*/
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "wire.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  size_t at = 0;
  while (at < size) {
    wire_record r;
    long took = wire_parse(data + at, size - at, &r);
    if (took <= 0)
      break;
    if ((size_t)took > size - at || (size_t)took != WIRE_HEAD + r.len ||
        r.payload != data + at + WIRE_HEAD || strchr(WIRE_KINDS, r.kind) == NULL)
      abort();
    unsigned char head[WIRE_HEAD];
    wire_head(head, r.kind, r.len);
    if (memcmp(head, data + at, WIRE_HEAD) != 0)
      abort();
    at += (size_t)took;
  }
  return 0;
}
