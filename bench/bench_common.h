/*
** bench_common.h: what the C benchmark programs share: the wall clock, the
** peak RSS of the process, and a file read whole into memory.
*/
#ifndef BENCH_COMMON_H
#define BENCH_COMMON_H

#include <stdio.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <time.h>

/* Seconds on CLOCK_MONOTONIC. */
static inline double now(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

/* Peak resident set size of this process so far, in KiB (ru_maxrss). */
static inline long maxrss_kb(void) {
  struct rusage ru;
  getrusage(RUSAGE_SELF, &ru);
  return ru.ru_maxrss;
}

/* The whole file in one allocation, NUL-terminated (so reading leaves no
** spare peak); on failure prints "PROG: ..." and exits 1. */
static inline char *slurp(const char *path, size_t *len, const char *prog) {
  FILE *f = fopen(path, "rb");
  struct stat st;
  if (!f || fstat(fileno(f), &st) != 0) { perror(path); exit(1); }
  char *text = malloc((size_t)st.st_size + 1);
  if (!text) { fprintf(stderr, "%s: out of memory\n", prog); exit(1); }
  *len = fread(text, 1, (size_t)st.st_size, f);
  if (*len != (size_t)st.st_size) { fprintf(stderr, "%s: short read\n", prog); exit(1); }
  fclose(f);
  text[*len] = '\0';
  return text;
}

#endif
