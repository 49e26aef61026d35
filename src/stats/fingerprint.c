/*
** fingerprint.c: SHA-256 of the bytes of a data file (libsodium), the
** fingerprint that a session log records for every file it read.
*/
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include "frame_build.h"

int sl_sha256_init(sl_sha256 *h, sl_error *e) {
  if (sodium_init() < 0)
    return sl_error_set(e, SL_EIO, 0, 0, "libsodium could not start");
  crypto_hash_sha256_init(&h->st);
  h->bytes = 0;
  return SL_OK;
}

void sl_sha256_update(sl_sha256 *h, const void *p, size_t n) {
  crypto_hash_sha256_update(&h->st, p, n);
  h->bytes += n;
}

void sl_sha256_final(sl_sha256 *h, unsigned char out[32]) {
  crypto_hash_sha256_final(&h->st, out);
}

int sl_fingerprint_file(const char *path, unsigned char sha256[32], uint64_t *bytes,
                        sl_error *e) {
  FILE *fp = fopen(path, "rb");
  if (!fp) return sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", path, strerror(errno));
  sl_sha256 h;
  if (sl_sha256_init(&h, e) != SL_OK) { fclose(fp); return e->code; }
  unsigned char buf[1 << 16];
  size_t n;
  while ((n = fread(buf, 1, sizeof buf, fp)) > 0) sl_sha256_update(&h, buf, n);
  int failed = ferror(fp);
  int err = errno;
  fclose(fp);
  if (failed) return sl_error_set(e, SL_EIO, 0, 0, "cannot read '%s': %s", path, strerror(err));
  sl_sha256_final(&h, sha256);
  *bytes = h.bytes;
  return SL_OK;
}

char *sl_fingerprint_hex(const unsigned char sha256[32], char hex[65]) {
  static const char digits[] = "0123456789abcdef";
  for (int i = 0; i < 32; i++) {
    hex[2 * i] = digits[sha256[i] >> 4];
    hex[2 * i + 1] = digits[sha256[i] & 15];
  }
  hex[64] = '\0';
  return hex;
}
