/*
** fuzz_csv.c: libFuzzer target for the CSV reader and writer.
**
** Each input is used twice.
**   1. As a file: it is read with and without coerce, and when it reads,
**      written back and read again: the second frame must equal the first
**      (shape, names, types, every number bit for bit, every text, every
**      missing cell).
**   2. As a recipe for a frame: numeric columns of any doubles (NaN is
**      missing) and categorical columns whose texts are runs of the input
**      (quotes, delimiters, line ends, edge spaces, UTF-8), one column as
**      often as several.  Written and read back, it must be the same frame.
** A difference aborts, so libFuzzer keeps the input.
*/
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "frame.h"

static char path[64], back[64];

/* Whether two frames hold the same names, types and cells. */
static int same_frame(const sl_frame *a, const sl_frame *b) {
  if (a->nrow != b->nrow || a->ncol != b->ncol) return 0;
  for (size_t j = 0; j < a->ncol; j++) {
    const sl_column *x = &a->col[j], *y = &b->col[j];
    if (strcmp(x->name, y->name) != 0 || x->type != y->type) return 0;
    for (size_t i = 0; i < a->nrow; i++) {
      if (x->type == SL_NUMERIC) {
        if (isnan(x->x[i]) != isnan(y->x[i])) return 0;
        if (!isnan(x->x[i]) && memcmp(&x->x[i], &y->x[i], sizeof x->x[i]) != 0) return 0;
        continue;
      }
      if ((x->code[i] < 0) != (y->code[i] < 0)) return 0;
      if (x->code[i] >= 0 && strcmp(x->levels[x->code[i]], y->levels[y->code[i]]) != 0)
        return 0;
    }
  }
  return 1;
}

/* Write f, read it back with opts, and abort when the frames differ. */
static void round_trip(const sl_frame *f, const sl_csv_opts *opts) {
  sl_error e;
  sl_read_report rep;
  if (sl_csv_write(f, back, &e) != SL_OK) {
    if (e.code != SL_EIO) abort();   /* a frame of the reader is always writable */
    return;
  }
  sl_frame *again = sl_csv_read(back, opts, &rep, &e);
  if (!again && f->nrow > 0) abort();   /* (no rows: a header alone is refused) */
  if (again && !same_frame(f, again)) abort();
  sl_frame_free(again);
}

/* Part 1: the input as a CSV file. */
static void as_file(const uint8_t *data, size_t size) {
  FILE *f = fopen(path, "wb");
  if (!f) return;
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
    round_trip(fr, &opts);
    sl_frame_free(fr);
  }
}

/* A cursor over the input. */
typedef struct cursor { const uint8_t *p; size_t n; } cursor;

static unsigned next_byte(cursor *c) {
  if (c->n == 0) return 0;
  c->n--;
  return *c->p++;
}

/* A text for a categorical cell: "t" and then a run of the input up to a
** byte 0xFF (NUL bytes dropped), so that it never reads as a number or as
** missing, and so stays a text of a categorical column. */
static void next_text(cursor *c, char *out, size_t max) {
  size_t k = 0;
  out[k++] = 't';
  while (c->n > 0 && k + 1 < max) {
    unsigned b = next_byte(c);
    if (b == 0xFF) break;
    if (b) out[k++] = (char)b;
  }
  out[k] = '\0';
}

/* Part 2: a frame made from the input, of 1 to 3 columns and 1 to 16 rows. */
static void as_recipe(const uint8_t *data, size_t size) {
  cursor c = {data, size};
  size_t ncol = 1 + next_byte(&c) % 3, nrow = 1 + next_byte(&c) % 16;
  sl_frame *f = sl_frame_alloc(nrow);
  sl_error e;
  if (!f) return;
  for (size_t j = 0; j < ncol; j++) {
    char name[16];
    snprintf(name, sizeof name, "c%zu", j);
    if (next_byte(&c) & 1) {
      double x[16];
      for (size_t i = 0; i < nrow; i++) {
        uint64_t bits = 0;
        for (int k = 0; k < 8; k++) bits = bits << 8 | next_byte(&c);
        memcpy(&x[i], &bits, sizeof x[i]);
      }
      if (sl_frame_add_numeric(f, name, x, &e) != SL_OK) abort();
      continue;
    }
    static char text[16][64];
    const char *sorted[16];
    int32_t code[16];
    size_t nl = 0;
    for (size_t i = 0; i < nrow; i++) {
      if (next_byte(&c) % 4 == 0) { code[i] = -1; continue; }
      next_text(&c, text[i], sizeof text[i]);
      code[i] = (int32_t)i;
    }
    /* levels: the distinct texts in bytewise order, then codes into them */
    for (size_t i = 0; i < nrow; i++) {
      if (code[i] < 0) continue;
      size_t at = 0;
      while (at < nl && strcmp(sorted[at], text[i]) < 0) at++;
      if (at < nl && strcmp(sorted[at], text[i]) == 0) continue;
      memmove(&sorted[at + 1], &sorted[at], (nl - at) * sizeof *sorted);
      sorted[at] = text[i];
      nl++;
    }
    for (size_t i = 0; i < nrow; i++) {
      if (code[i] < 0) continue;
      int32_t k = 0;
      while (strcmp(sorted[k], text[i]) != 0) k++;
      code[i] = k;
    }
    if (sl_frame_add_categorical(f, name, code, sorted, nl, &e) != SL_OK) abort();
  }
  /* a column with no value at all reads back as numbers: leave those out */
  int empty = 0;
  for (size_t j = 0; j < f->ncol; j++) {
    size_t seen = 0;
    for (size_t i = 0; i < nrow; i++)
      seen += f->col[j].type == SL_NUMERIC ? !isnan(f->col[j].x[i]) : f->col[j].code[i] >= 0;
    empty |= seen == 0 && f->col[j].type == SL_CATEGORICAL;
  }
  if (!empty) round_trip(f, NULL);
  sl_frame_free(f);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  if (!path[0]) {
    snprintf(path, sizeof path, "/tmp/sluice-fuzz-%d.csv", (int)getpid());
    snprintf(back, sizeof back, "/tmp/sluice-fuzz-%d-back.csv", (int)getpid());
  }
  as_file(data, size);
  as_recipe(data, size);
  return 0;
}
