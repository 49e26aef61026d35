/*
** frame.h: a columnar data frame: numeric columns of doubles (NaN marks a
** missing value) and categorical columns (text levels, code -1 missing).
** Plain C; readers for CSV (libcsv) and SQLite live in csv.c and sql.c.
*/
#ifndef SL_FRAME_H
#define SL_FRAME_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include "error.h"

/* Documented limits. */
#define SL_FRAME_MAX_COLS 65536        /* columns of a frame read from a file */
#define SL_FRAME_MAX_LEVELS 2147483647 /* levels of a categorical column (int32 codes) */
#define SL_CSV_MAX_CELL (256u << 20)   /* bytes in one CSV cell (256 MiB) */
#define SL_CSV_MAX_LINES 2147483647    /* lines of a CSV file (rows are named by line) */
#define SL_SQL_MAX_ROWS 10000000       /* rows read_sql reads unless given a limit */

enum sl_coltype { SL_NUMERIC = 0, SL_CATEGORICAL = 1 };

typedef struct sl_column {
  char *name;
  int type;               /* sl_coltype */
  double *x;              /* SL_NUMERIC: nrow values, NaN = missing */
  int32_t *code;          /* SL_CATEGORICAL: nrow level indices, -1 = missing */
  char **levels;          /* SL_CATEGORICAL: level texts, sorted bytewise */
  size_t nlevels;
} sl_column;

typedef struct sl_frame {
  size_t nrow, ncol;
  sl_column *col;
} sl_frame;

sl_frame *sl_frame_alloc(size_t nrow);
void sl_frame_free(sl_frame *f);
/* Add a numeric column; x (nrow values) is copied.  Names must be unique. */
int sl_frame_add_numeric(sl_frame *f, const char *name, const double *x, sl_error *e);
/* Add a categorical column from codes (copied) and levels (copied). */
int sl_frame_add_categorical(sl_frame *f, const char *name, const int32_t *code,
                             const char *const *levels, size_t nlevels, sl_error *e);
/* Index of a column, or -1. */
int sl_frame_find(const sl_frame *f, const char *name);
/* Like find, but fills e with "no column 'x'; did you mean 'y'?". */
int sl_frame_lookup(const sl_frame *f, const char *name, sl_error *e);
/* New frames: some columns; the rows where keep[i] is nonzero. */
sl_frame *sl_frame_select(const sl_frame *f, const int *cols, size_t n, sl_error *e);
sl_frame *sl_frame_filter(const sl_frame *f, const unsigned char *keep, sl_error *e);
/* The first min(n, nrow) rows. */
sl_frame *sl_frame_head(const sl_frame *f, size_t n, sl_error *e);
/* A copy of f with a 0/1 column name added: 1 where column col (numeric) is
** above cut, 0 where it is not, missing where it is missing. */
sl_frame *sl_frame_binarize(const sl_frame *f, int col, double cut, const char *name,
                            sl_error *e);
/* A new frame with a 0/1 column name: 1 where the categorical column col
** holds one of the nlev levels, 0 at the others, missing where missing. */
sl_frame *sl_frame_binarize_levels(const sl_frame *f, int col, const char *const *levels,
                                   size_t nlev, const char *name, sl_error *e);

/* Per-column summary over the non-missing values.  A categorical column
** gets n and missing; its other fields are NaN.  sd divides by n - 1 (NaN
** below 2 values); with no values every statistic is NaN.  Infinities are
** values: the mean is inf (or -inf) when those of the column are all of
** one sign and NaN when both signs occur; sd is then NaN; min, max and the
** quartiles are what the sorted values give (next to an infinity a
** quartile is that infinity). */
typedef struct sl_summary {
  size_t n, missing;
  double mean, sd, min, q1, median, q3, max;   /* quartiles: type 7 (R's default) */
} sl_summary;
int sl_column_summary(const sl_column *c, size_t nrow, sl_summary *s, sl_error *e);
/* The same n, missing, mean, sd, min and max in one pass over the column,
** without sorting (the quartiles are NaN). */
void sl_column_moments(const sl_column *c, size_t nrow, sl_summary *s);

/* ---- reading and writing ---- */
typedef struct sl_csv_opts {
  char delim;                  /* 0: detect among ',', ';' and tab */
  const char *const *na;       /* extra missing-value tokens */
  size_t nna;
  int coerce;                  /* non-numeric cells in numeric columns become missing */
  volatile int *stop;          /* when set and nonzero, the read ends: "interrupted" */
} sl_csv_opts;

/* Type inference, per column, over its non-missing cells (missing: empty,
** NA, NaN, "." and opts->na; a cell is a number when strtod reads all of
** it, hexadecimal excepted, and it is within the range of a double: "inf"
** is a number, "1e400" a text, as pandas reads them):
**   - every cell a number: numeric;
**   - at most 10% of them text (a typo such as "1,5" or "n/a" in a
**     measurement): an error naming the file, row, column and cell, or with
**     coerce a numeric column where those cells are missing, counted in the
**     report;
**   - more text than that: categorical, numbers kept as the text written. */

typedef struct sl_read_report {
  size_t coerced;              /* cells made missing by coerce */
  size_t first_row, first_col; /* where the first one was (1-based file row/col) */
  char first_cell[64];         /* and its text (cut to fit) */
  unsigned char sha256[32];    /* of the bytes read: the file's fingerprint */
  uint64_t bytes;
} sl_read_report;

/* Read a CSV file with a header row.  Errors name the file, the row (line
** of the file, 1-based, header = 1) in e->line and the column in e->col.
** A file with a header but no rows is an error; so is a path that is not a
** regular file (a device, pipe or directory: checked before it is opened,
** and opened without waiting for a writer).  opts may be NULL. */
sl_frame *sl_csv_read(const char *path, const sl_csv_opts *opts, sl_read_report *rep,
                      sl_error *e);
/* Write f with a header row: numbers in the shortest "%.15g".."%.17g" form
** that reads back to the same double, missing as an empty field ("" when f
** has one column, so that no line is blank), text quoted when it holds a
** delimiter, quote, line break or edge space or starts with a byte-order
** mark.  sl_csv_read gives back the same frame, but for levels no row uses
** and a categorical column whose texts all read as numbers (it comes back
** numeric, as any file of numbers does).  A text that would read back as
** missing (empty, NA, NaN, "." or a spelling of NaN) is an error naming
** its column and row, and nothing is written. */
int sl_csv_write(const sl_frame *f, const char *path, sl_error *e);
typedef struct sl_sql_opts {
  size_t limit;                /* most rows to read; 0: SL_SQL_MAX_ROWS */
  volatile int *stop;          /* when set and nonzero, the query ends: "interrupted" */
} sl_sql_opts;
/* The result of an SQL query on an SQLite file (a regular file, as for
** sl_csv_read); SQL errors verbatim.  More rows than the limit is an error
** (an endless recursive query ends there).  opts may be NULL. */
sl_frame *sl_sql_read(const char *dbpath, const char *query, const sl_sql_opts *opts,
                      sl_read_report *rep, sl_error *e);

/* ---- fingerprints (SHA-256, libsodium) ---- */
/* Open a data file for reading; anything but a regular file is an error
** ("PATH is not a regular file (a device); ..."). */
FILE *sl_data_open(const char *path, sl_error *e);
int sl_fingerprint_file(const char *path, unsigned char sha256[32], uint64_t *bytes,
                        sl_error *e);
/* Lower-case hex of a digest into hex (65 bytes with the NUL); returns hex. */
char *sl_fingerprint_hex(const unsigned char sha256[32], char hex[65]);

#endif
