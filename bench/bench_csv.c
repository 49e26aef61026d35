/*
** bench_csv.c: speed and memory of sl_csv_read on a numeric CSV file.
**
**   bench_csv gen FILE ROWS COLS SEED   write the file; prints bytes= sum=
**   bench_csv read FILE REPS            read it REPS times
**
** The file has a header "c1,...,cK" and ROWS rows of numbers in the forms
** a measurement file has: plain decimals with 1 to 6 decimals, integers,
** some with exponents (1 in 16).  "read" prints one line of key=value
** pairs: best_s (the best of REPS reads), bytes, rows, cols, sum (of every
** value, to compare with pandas), base_kb (ru_maxrss before reading),
** rss_kb (ru_maxrss after the first read) and parsed_kb (the size of the
** parsed columns: rows x cols x 8 bytes).  Exit status 1 when the read
** fails or a column is not numeric.
*/
#include <inttypes.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_rng.h"
#include "frame.h"

/* Write the benchmark file. */
static int gen(const char *path, long rows, int cols, uint64_t seed) {
  FILE *f = fopen(path, "wb");
  if (!f) { perror(path); return 1; }
  for (int j = 0; j < cols; j++) fprintf(f, "%sc%d", j ? "," : "", j + 1);
  fputc('\n', f);
  uint64_t s = seed * 0x9e3779b97f4a7c15ull;
  for (long i = 0; i < rows; i++) {
    for (int j = 0; j < cols; j++) {
      uint64_t r = mix64(s++);
      double u = (double)(r >> 11) * 0x1.0p-53;
      int kind = (int)(r & 15);
      if (j) fputc(',', f);
      if (kind == 0) fprintf(f, "%.4e", (u - 0.5) * 1e6);
      else if (kind < 4) fprintf(f, "%d", (int)(u * 1000));
      else fprintf(f, "%.*f", 1 + kind % 6, (u - 0.3) * 200);
    }
    fputc('\n', f);
  }
  long bytes = ftell(f);
  fclose(f);
  printf("bytes=%ld\n", bytes);
  return 0;
}

/* Read the file REPS times. */
static int bench_read(const char *path, int reps) {
  long base = maxrss_kb(), rss = 0;
  double best = 1e30, sum = 0;
  size_t rows = 0, cols = 0;
  uint64_t bytes = 0;
  for (int r = 0; r < reps; r++) {
    sl_error e;
    sl_read_report rep;
    double t0 = now();
    sl_frame *f = sl_csv_read(path, NULL, &rep, &e);
    double t = now() - t0;
    if (!f) { fprintf(stderr, "bench_csv: %s\n", e.msg); return 1; }
    if (r == 0) {
      rss = maxrss_kb();
      rows = f->nrow;
      cols = f->ncol;
      bytes = rep.bytes;
      for (size_t j = 0; j < f->ncol; j++) {
        if (f->col[j].type != SL_NUMERIC) {
          fprintf(stderr, "bench_csv: column %s is not numeric\n", f->col[j].name);
          return 1;
        }
        for (size_t i = 0; i < f->nrow; i++) sum += f->col[j].x[i];
      }
    }
    if (t < best) best = t;
    sl_frame_free(f);
  }
  printf("best_s=%.6f bytes=%" PRIu64 " rows=%zu cols=%zu sum=%.10e base_kb=%ld rss_kb=%ld "
         "parsed_kb=%.0f\n", best, bytes, rows, cols, sum, base, rss,
         (double)rows * (double)cols * 8 / 1024);
  return 0;
}

int main(int argc, char **argv) {
  if (argc == 6 && strcmp(argv[1], "gen") == 0)
    return gen(argv[2], atol(argv[3]), atoi(argv[4]), (uint64_t)atoll(argv[5]));
  if (argc == 4 && strcmp(argv[1], "read") == 0) return bench_read(argv[2], atoi(argv[3]));
  fprintf(stderr, "usage: bench_csv gen FILE ROWS COLS SEED | read FILE REPS\n");
  return 2;
}
