/*
** fuzz_csv.c: libFuzzer target for the CSV reader.  Each input is written
** to a scratch file (the reader takes a path), read with and without
** coerce, and, when it reads, written back and read again: the second
** frame must have the same shape.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "frame.h"

static char path[64], back[64];

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  if (!path[0]) {
    snprintf(path, sizeof path, "/tmp/sluice-fuzz-%d.csv", (int)getpid());
    snprintf(back, sizeof back, "/tmp/sluice-fuzz-%d-back.csv", (int)getpid());
  }
  FILE *f = fopen(path, "wb");
  if (!f) return 0;
  fwrite(data, 1, size, f);
  fclose(f);
  for (int coerce = 0; coerce < 2; coerce++) {
    sl_csv_opts opts;
    memset(&opts, 0, sizeof opts);
    opts.coerce = coerce;
    sl_read_report rep;
    sl_error e;
    sl_frame *fr = sl_csv_read(path, &opts, &rep, &e);
    if (!fr) continue;
    if (sl_csv_write(fr, back, &e) == SL_OK) {
      sl_frame *again = sl_csv_read(back, &opts, &rep, &e);
      /* text that looks like a number may come back as a number column,
      ** but the shape of the table must survive */
      if (again && (again->nrow != fr->nrow || again->ncol != fr->ncol)) abort();
      if (again) sl_frame_free(again);
    }
    sl_frame_free(fr);
  }
  return 0;
}
