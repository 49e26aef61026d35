/*
** fingerprint.c: opening data files, and the SHA-256 of their bytes
** (libsodium), the fingerprint that a session log records for every file
** it read.
*/
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include "frame_build.h"

/* What a file that is not regular is, for the message. */
static const char *file_kind(mode_t m) {
  if (S_ISDIR(m)) return "a directory";
  if (S_ISFIFO(m)) return "a pipe";
  if (S_ISCHR(m) || S_ISBLK(m)) return "a device";
  if (S_ISSOCK(m)) return "a socket";
  return "not a plain file";
}

/* The error for a path that is not a regular file. */
static FILE *not_regular(const char *path, mode_t m, sl_error *e) {
  sl_error_set(e, SL_EARG, 0, 0, "%s is not a regular file (%s); sluice reads data from "
               "regular files", path, file_kind(m));
  return NULL;
}

/* A device never ends (/dev/zero) and a pipe without a writer blocks the
** open itself, so the kind of file is checked before opening it, and again
** on what was opened (without waiting: O_NONBLOCK) in case it changed. */
FILE *sl_data_open(const char *path, sl_error *e) {
  struct stat st;
  if (stat(path, &st) != 0) {
    sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", path, strerror(errno));
    return NULL;
  }
  if (!S_ISREG(st.st_mode)) return not_regular(path, st.st_mode, e);
  int fd = open(path, O_RDONLY | O_NONBLOCK | O_NOCTTY | O_CLOEXEC);
  if (fd < 0) {
    sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", path, strerror(errno));
    return NULL;
  }
  if (fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
    close(fd);
    return not_regular(path, st.st_mode, e);
  }
  int fl = fcntl(fd, F_GETFL);
  if (fl != -1) fcntl(fd, F_SETFL, fl & ~O_NONBLOCK);
  FILE *fp = fdopen(fd, "rb");
  if (!fp) {
    sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", path, strerror(errno));
    close(fd);
  }
  return fp;
}

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
  FILE *fp = sl_data_open(path, e);
  if (!fp) return e->code;
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
