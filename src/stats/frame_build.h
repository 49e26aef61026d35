/*
** frame_build.h: what the readers (csv.c, sql.c) share with frame.c: a
** column builder that streams cells into typed buffers and decides each
** column's type at the end, and a streaming SHA-256.  Internal to
** src/stats.
**
** A column is kept as doubles while every cell is a number or missing.
** From its first text cell on it also keeps a code per row into a table of
** the distinct texts seen (numbers included, as written).  At the end a
** column with text becomes numeric (coerce), an error, or categorical; in
** the last case the numbers seen before the first text cell have no text
** yet, and the reader passes over those rows again to supply it
** (sl_build_refill).  So the file text itself is never kept.
*/
#ifndef SL_FRAME_BUILD_H
#define SL_FRAME_BUILD_H

#include <sodium.h>
#include "frame.h"

/* Distinct texts, each with an id in order of first appearance. */
typedef struct sl_intern {
  char *arena;              /* the texts, NUL-terminated, one after another */
  size_t alen, acap;
  size_t *off;              /* per id: offset in arena */
  uint32_t *hash;           /* per id */
  size_t n, cap;
  int32_t *slot;            /* open addressing: id or -1; nslot a power of 2 */
  size_t nslot;
} sl_intern;

typedef struct sl_bcol {
  char *name;
  double *x;                /* per row; NaN for missing and for text */
  int32_t *code;            /* NULL until the first text cell; then id or -1 */
  size_t text_from;         /* row of the first text cell */
  size_t nnum, ntext, nmiss;
  size_t nnum_before;       /* numbers before text_from (need a refill) */
  int first_line;           /* the reader's row of the first text cell */
  char first_text[64];
  int type;                 /* after sl_build_decide */
  sl_intern dict;
} sl_bcol;

typedef struct sl_build {
  sl_bcol *col;
  size_t ncol, nrow, cap;   /* nrow: rows completed; cap: rows allocated */
} sl_build;

enum { SL_BUILD_CSV = 0, SL_BUILD_SQL = 1 };

/* Start a builder for ncol named columns; names are copied. */
int sl_build_init(sl_build *b, const char *const *names, size_t ncol, sl_error *e);
void sl_build_free(sl_build *b);
/* Make room for the row b->nrow; call before its cells. */
int sl_build_row(sl_build *b, sl_error *e);
int sl_build_missing(sl_build *b, size_t j);
int sl_build_number(sl_build *b, size_t j, double v, const char *tok, size_t len,
                    sl_error *e);
int sl_build_text(sl_build *b, size_t j, const char *tok, size_t len, int line,
                  sl_error *e);
/* Decide every column's type.  Returns -1, or (CSV without coerce) the
** index of a column that is mostly numbers with some text: an error for
** the reader to word.  Coerced cells are counted in rep. */
int sl_build_decide(sl_build *b, int mode, int coerce, sl_read_report *rep);
/* Rows that need a second pass (0: none), and whether column j needs the
** text of row r. */
size_t sl_build_refill_rows(const sl_build *b);
int sl_build_wants(const sl_build *b, size_t j, size_t r);
int sl_build_refill(sl_build *b, size_t j, size_t r, const char *tok, size_t len,
                    sl_error *e);
/* The frame; the builder is emptied (free it all the same). */
sl_frame *sl_build_finish(sl_build *b, sl_error *e);

/* Whether two of n names are the same (n log n): then 1, and the
** positions of the first two uses of the name whose second use comes
** first; 0 when all differ, -1 (e filled) when out of memory. */
int sl_names_duplicate(const char *const *names, size_t n, size_t *first, size_t *second,
                       sl_error *e);

/* Add a column taking ownership of its arrays (freed on failure too). */
int sl_frame_adopt_numeric(sl_frame *f, char *name, double *x, sl_error *e);
int sl_frame_adopt_categorical(sl_frame *f, char *name, int32_t *code, char **levels,
                               size_t nlevels, sl_error *e);

/* Streaming SHA-256 (fingerprint.c). */
typedef struct sl_sha256 { crypto_hash_sha256_state st; uint64_t bytes; } sl_sha256;
int sl_sha256_init(sl_sha256 *h, sl_error *e);
void sl_sha256_update(sl_sha256 *h, const void *p, size_t n);
void sl_sha256_final(sl_sha256 *h, unsigned char out[32]);

/* The text of a cell for a message: at most max bytes, "..." when cut. */
void sl_cell_excerpt(const char *tok, size_t len, char *out, size_t max);

#endif
