/*
** test_frame.c: the data frame (src/stats/frame.c), the CSV reader and
** writer (csv.c), the SQLite reader (sql.c) and file fingerprints
** (fingerprint.c).
**
** Where the expected values come from is said beside each check:
**   - the files in tests/data were read with pandas 1.5.3 (Debian
**     python3-pandas) and Python's csv module; their values and summaries
**     are copied from that output (quantiles: pandas' default 'linear',
**     which is R's type 7; sd with n - 1);
**   - SHA-256 digests are from sha256sum (GNU coreutils);
**   - numbers in generated files are checked against libc's strtod on the
**     same text;
**   - error rows and columns were counted by hand in the files (the header
**     is row 1).
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sys/stat.h>
#include <sqlite3.h>

#include "frame.h"

#define DATA "tests/data/"

/* ---- helpers ---- */

static char tmpdir[256];

/* A fresh temporary directory for the files a test writes. */
static int setup_tmp(void **state) {
  (void)state;
  snprintf(tmpdir, sizeof tmpdir, "/tmp/sluice_frame_XXXXXX");
  return mkdtemp(tmpdir) ? 0 : -1;
}

static int teardown_tmp(void **state) {
  (void)state;
  char cmd[512];
  snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
  return system(cmd) == 0 ? 0 : -1;
}

/* A path inside the temporary directory (a static buffer per slot). */
static const char *tmp(const char *name) {
  static char buf[4][512];
  static int k;
  k = (k + 1) % 4;
  snprintf(buf[k], sizeof buf[k], "%s/%s", tmpdir, name);
  return buf[k];
}

/* Write text to a file. */
static void put_file(const char *path, const char *text, size_t n) {
  FILE *f = fopen(path, "wb");
  assert_non_null(f);
  assert_int_equal(fwrite(text, 1, n, f), n);
  assert_int_equal(fclose(f), 0);
}

/* Read a CSV that must parse. */
static sl_frame *read_ok(const char *path, const sl_csv_opts *opts, sl_read_report *rep) {
  sl_error e = {0};
  sl_read_report own;
  sl_frame *f = sl_csv_read(path, opts, rep ? rep : &own, &e);
  if (!f) print_error("  unexpected error: %s\n", e.msg);
  assert_non_null(f);
  return f;
}

/* Read a CSV that must fail with this row, column and message text. */
static void read_fails(const char *path, const sl_csv_opts *opts, int line, int col,
                       const char *msg) {
  sl_error e = {0};
  sl_read_report rep;
  sl_frame *f = sl_csv_read(path, opts, &rep, &e);
  if (f) sl_frame_free(f);
  assert_null(f);
  if (!strstr(e.msg, msg)) print_error("  message: %s\n  lacks: %s\n", e.msg, msg);
  assert_non_null(strstr(e.msg, msg));
  assert_int_equal(e.line, line);
  assert_int_equal(e.col, col);
}

static const sl_column *col(const sl_frame *f, const char *name) {
  int j = sl_frame_find(f, name);
  if (j < 0) print_error("  no column %s\n", name);
  assert_true(j >= 0);
  return &f->col[j];
}

/* The level text of row i of a categorical column, or NULL when missing. */
static const char *level(const sl_column *c, size_t i) {
  assert_int_equal(c->type, SL_CATEGORICAL);
  return c->code[i] < 0 ? NULL : c->levels[c->code[i]];
}

static void assert_close(double got, double want, double rel) {
  if (!(fabs(got - want) <= rel * fabs(want))) print_error("  got %.17g, want %.17g\n", got, want);
  assert_true(fabs(got - want) <= rel * fabs(want));
}

/* ---- reading valid files ---- */

/* orchard.csv: pandas reads plot as int64, variety as object, rain, yield
** and pests as float64 with NaN at the NA, NaN, "." and empty cells. */
static void test_orchard(void **state) {
  (void)state;
  sl_read_report rep;
  sl_frame *f = read_ok(DATA "orchard.csv", NULL, &rep);
  assert_int_equal(f->nrow, 8);
  assert_int_equal(f->ncol, 5);
  const char *names[] = {"plot", "variety", "rain", "yield", "pests"};
  for (int j = 0; j < 5; j++) assert_string_equal(f->col[j].name, names[j]);
  const sl_column *v = col(f, "variety");
  assert_int_equal(v->nlevels, 3);
  assert_string_equal(v->levels[0], "braeburn");
  assert_string_equal(v->levels[1], "fuji");
  assert_string_equal(v->levels[2], "gala");
  const char *want[] = {"gala", "fuji", "gala", "braeburn", "fuji", "gala", "braeburn", "fuji"};
  for (int i = 0; i < 8; i++) assert_string_equal(level(v, (size_t)i), want[i]);
  const sl_column *rain = col(f, "rain"), *yield = col(f, "yield"), *pests = col(f, "pests");
  assert_int_equal(rain->type, SL_NUMERIC);
  assert_true(rain->x[0] == 71.5 && rain->x[2] == 80.25 && rain->x[7] == 59.75);
  assert_true(isnan(rain->x[4]));                       /* NaN */
  assert_true(isnan(yield->x[2]) && isnan(yield->x[5])); /* empty, "." */
  assert_true(isnan(pests->x[1]) && isnan(pests->x[7])); /* NA, empty at the end */
  assert_true(yield->x[4] == 11.0 && pests->x[3] == 0.0);
  assert_int_equal(rep.coerced, 0);
  assert_int_equal(rep.bytes, 177);
  sl_frame_free(f);
}

/* orchard.csv summaries, from pandas (Series.mean, std, quantile). */
static void test_summary_pandas(void **state) {
  (void)state;
  sl_frame *f = read_ok(DATA "orchard.csv", NULL, NULL);
  sl_summary s;
  sl_error e;
  assert_int_equal(sl_column_summary(col(f, "rain"), f->nrow, &s, &e), SL_OK);
  assert_int_equal(s.n, 7);
  assert_int_equal(s.missing, 1);
  assert_close(s.mean, 67.42857142857143, 1e-15);
  assert_close(s.sd, 8.54731230382087, 1e-14);
  assert_true(s.min == 55.0 && s.max == 80.25);
  assert_close(s.q1, 61.875, 1e-15);
  assert_close(s.median, 68.5, 1e-15);
  assert_close(s.q3, 72.25, 1e-15);
  assert_int_equal(sl_column_summary(col(f, "yield"), f->nrow, &s, &e), SL_OK);
  assert_int_equal(s.n, 6);
  assert_int_equal(s.missing, 2);
  assert_close(s.mean, 10.375, 1e-15);
  assert_close(s.sd, 1.2119199643540823, 1e-14);
  assert_close(s.q1, 9.6875, 1e-15);
  assert_close(s.median, 10.375, 1e-15);
  assert_close(s.q3, 10.875, 1e-15);
  assert_int_equal(sl_column_summary(col(f, "pests"), f->nrow, &s, &e), SL_OK);
  assert_close(s.mean, 1.8333333333333333, 1e-15);
  assert_close(s.sd, 1.4719601443879746, 1e-14);
  assert_true(s.q1 == 1.0 && s.median == 1.5 && s.q3 == 2.75);
  /* categorical: counts only */
  assert_int_equal(sl_column_summary(col(f, "variety"), f->nrow, &s, &e), SL_OK);
  assert_int_equal(s.n, 8);
  assert_int_equal(s.missing, 0);
  assert_true(isnan(s.mean));
  sl_frame_free(f);
}

/* Type 7 by hand: {1, 2, 3, 4}: h = 3p, so q1 = 1 + 0.75 = 1.75, the
** median 2.5, q3 = 3.25; sd = sqrt(5/3); one value: sd NaN; none: all NaN. */
static void test_summary_hand(void **state) {
  (void)state;
  sl_error e;
  sl_frame *f = sl_frame_alloc(5);
  double x[] = {4, NAN, 1, 3, 2};
  assert_int_equal(sl_frame_add_numeric(f, "x", x, &e), SL_OK);
  sl_summary s;
  assert_int_equal(sl_column_summary(&f->col[0], 5, &s, &e), SL_OK);
  assert_true(s.n == 4 && s.missing == 1);
  assert_true(s.q1 == 1.75 && s.median == 2.5 && s.q3 == 3.25 && s.mean == 2.5);
  assert_close(s.sd, sqrt(5.0 / 3.0), 1e-15);
  double one[] = {NAN, NAN, 7, NAN, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "one", one, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[1], 5, &s, &e), SL_OK);
  assert_true(s.n == 1 && s.mean == 7 && s.median == 7 && isnan(s.sd));
  double none[] = {NAN, NAN, NAN, NAN, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "none", none, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[2], 5, &s, &e), SL_OK);
  assert_true(s.n == 0 && s.missing == 5 && isnan(s.mean) && isnan(s.min));
  sl_frame_free(f);
}

/* Infinities are values.  Expected values from pandas 1.5.3 (Series.mean,
** std, min, quantile, max) except where a comment says "by hand": numpy
** interpolates a + (b - a) t, which gives NaN next to an infinity even at
** t = 0, where the type-7 rule gives the infinity (or the exact value). */
static void test_summary_inf(void **state) {
  (void)state;
  sl_error e;
  sl_summary s;
  sl_frame *f = sl_frame_alloc(4);
  double a[] = {1, 2, INFINITY, 3};
  assert_int_equal(sl_frame_add_numeric(f, "a", a, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[0], 4, &s, &e), SL_OK);
  /* pandas: mean inf, std NaN, min 1, 25% 1.75, 50% 2.5, 75% inf, max inf */
  assert_true(s.mean == INFINITY && isnan(s.sd) && s.min == 1 && s.q1 == 1.75 &&
              s.median == 2.5 && s.q3 == INFINITY && s.max == INFINITY);
  double b[] = {-INFINITY, 1, 2, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "b", b, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[1], 4, &s, &e), SL_OK);
  /* pandas: mean -inf, std NaN, min -inf, 25% -inf, 50% 1, 75% 1.5, max 2 */
  assert_true(s.n == 3 && s.mean == -INFINITY && isnan(s.sd) && s.min == -INFINITY &&
              s.q1 == -INFINITY && s.median == 1 && s.q3 == 1.5 && s.max == 2);
  double c[] = {INFINITY, -INFINITY, 1, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "c", c, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[2], 4, &s, &e), SL_OK);
  /* pandas: mean NaN, std NaN, 25% -inf, 50% 1; 75% inf by hand (1 to inf) */
  assert_true(isnan(s.mean) && isnan(s.sd) && s.q1 == -INFINITY && s.median == 1 &&
              s.q3 == INFINITY);
  double d[] = {1, INFINITY, INFINITY, INFINITY};
  assert_int_equal(sl_frame_add_numeric(f, "d", d, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[3], 4, &s, &e), SL_OK);
  /* by hand: sorted 1 inf inf inf; q1 (h = 0.75) lies between 1 and inf:
  ** inf; the median (h = 1.5) between two infinities: inf */
  assert_true(s.mean == INFINITY && s.q1 == INFINITY && s.median == INFINITY);
  double big[] = {1e308, 1e308, 1e308, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "big", big, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[4], 4, &s, &e), SL_OK);
  /* by hand: the mean of three 1e308 is 1e308 and their sd 0 (pandas gives
  ** inf: its sum overflows) */
  assert_true(s.mean == 1e308 && s.sd == 0);
  double span[] = {1e308, -1e308, NAN, NAN};
  assert_int_equal(sl_frame_add_numeric(f, "span", span, &e), SL_OK);
  assert_int_equal(sl_column_summary(&f->col[5], 4, &s, &e), SL_OK);
  /* by hand: mean 0, sd sqrt(2) 1e308, median halfway: 0 */
  assert_true(s.mean == 0 && s.median == 0);
  assert_close(s.sd, sqrt(2.0) * 1e308, 1e-15);
  /* the one-pass moments agree with the summary */
  sl_summary m;
  sl_column_moments(&f->col[0], 4, &m);
  assert_true(m.mean == INFINITY && isnan(m.sd) && m.min == 1 && m.max == INFINITY &&
              isnan(m.median));
  sl_frame_free(f);
}

/* A number beyond the range of a double was read as inf without a word.
** It is a text (pandas 1.5.3 reads "1e400" as a string too): named in the
** error of a column of numbers, missing with coerce, kept as written in a
** column of texts.  "inf", "-inf" and "Infinity" are numbers. */
static void test_too_large(void **state) {
  (void)state;
  const char *path = tmp("huge.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  fputs("id,x,y,z\n", fp);
  for (int i = 1; i <= 20; i++)
    fprintf(fp, "%d,%s,%s,%s\n", i, i == 7 ? "-1e400" : "2.5", i % 2 ? "1e400" : "word",
            i == 3 ? "inf" : i == 4 ? "-Infinity" : "1");
  fclose(fp);
  read_fails(path, NULL, 8, 2, "huge.csv, row 8, column 2 ('x'): '-1e400' is beyond the "
             "range of a number (about 1.8e308; write inf for an infinity, or use "
             "{coerce = true} to read it as missing)");
  sl_csv_opts o = {0, NULL, 0, 1, NULL};
  sl_read_report rep;
  sl_frame *f = read_ok(path, &o, &rep);
  assert_true(isnan(col(f, "x")->x[6]) && col(f, "x")->x[5] == 2.5);
  assert_int_equal(rep.coerced, 1);
  assert_string_equal(rep.first_cell, "-1e400");
  assert_string_equal(level(col(f, "y"), 0), "1e400");
  assert_string_equal(level(col(f, "y"), 1), "word");
  const sl_column *z = col(f, "z");
  assert_int_equal(z->type, SL_NUMERIC);
  assert_true(z->x[2] == INFINITY && z->x[3] == -INFINITY && z->x[4] == 1);
  sl_frame_free(f);
}

/* classroom.csv: semicolons, detected; spaces around " 2.5 " trimmed (as
** pandas with skipinitialspace).  "-" in score: one text cell of five is
** more than 10%, so the column is categorical; with na = {"-"} it is
** numeric, as pandas reads it with na_values=['-']. */
static void test_semicolon(void **state) {
  (void)state;
  sl_frame *f = read_ok(DATA "classroom.csv", NULL, NULL);
  assert_int_equal(f->ncol, 4);
  assert_true(col(f, "hours")->x[0] == 2.5 && col(f, "hours")->x[4] == 5.25);
  const sl_column *score = col(f, "score");
  assert_int_equal(score->type, SL_CATEGORICAL);
  assert_string_equal(level(score, 3), "-");
  assert_string_equal(level(score, 0), "61");
  sl_frame_free(f);
  const char *na[] = {"-"};
  sl_csv_opts o = {0, na, 1, 0, NULL};
  f = read_ok(DATA "classroom.csv", &o, NULL);
  score = col(f, "score");
  assert_int_equal(score->type, SL_NUMERIC);
  assert_true(score->x[0] == 61 && score->x[1] == 72 && isnan(score->x[3]) && score->x[4] == 80);
  sl_frame_free(f);
}

/* factory.tsv: tabs, detected; pandas: output [1200, 1150.5, 990, 1010],
** defects [3, NaN, 7, 2]. */
static void test_tab(void **state) {
  (void)state;
  sl_frame *f = read_ok(DATA "factory.tsv", NULL, NULL);
  assert_int_equal(f->ncol, 4);
  assert_int_equal(f->nrow, 4);
  const sl_column *o = col(f, "output"), *d = col(f, "defects");
  assert_true(o->x[0] == 1200 && o->x[1] == 1150.5 && o->x[2] == 990 && o->x[3] == 1010);
  assert_true(d->x[0] == 3 && isnan(d->x[1]) && d->x[2] == 7 && d->x[3] == 2);
  assert_string_equal(level(col(f, "shift"), 3), "night");
  sl_frame_free(f);
}

/* quoted.csv: a byte-order mark, CRLF, no final newline; Python's csv
** module gives the notes 'stake, tall', 'said "prune"', 'two\nlines',
** 'plain', 'café récolte' and the weights 2.5, 3, 4.125, 5, -1e-3. */
static void test_quoted(void **state) {
  (void)state;
  sl_frame *f = read_ok(DATA "quoted.csv", NULL, NULL);
  assert_string_equal(f->col[0].name, "id");   /* the BOM is not part of the name */
  assert_int_equal(f->nrow, 5);
  const sl_column *n = col(f, "note"), *w = col(f, "weight");
  assert_string_equal(level(n, 0), "stake, tall");
  assert_string_equal(level(n, 1), "said \"prune\"");
  assert_string_equal(level(n, 2), "two\nlines");
  assert_string_equal(level(n, 3), "plain");
  assert_string_equal(level(n, 4), "caf\xc3\xa9 r\xc3\xa9" "colte");
  double want[] = {2.5, 3, 4.125, 5, -1e-3};
  for (int i = 0; i < 5; i++) assert_true(w->x[i] == want[i]);
  sl_frame_free(f);
}

/* grades.csv: a column that starts with numbers and turns to text at row 4
** (file row) keeps the numbers as written: levels "07", "1", "2.50", "K". */
static void test_mixed_keeps_text(void **state) {
  (void)state;
  sl_frame *f = read_ok(DATA "grades.csv", NULL, NULL);
  const sl_column *g = col(f, "grade");
  assert_int_equal(g->type, SL_CATEGORICAL);
  assert_int_equal(g->nlevels, 4);
  const char *lv[] = {"07", "1", "2.50", "K"};
  for (int k = 0; k < 4; k++) assert_string_equal(g->levels[k], lv[k]);
  const char *rows[] = {"07", "1", "K", "07", "K", "2.50"};
  for (int i = 0; i < 6; i++) assert_string_equal(level(g, (size_t)i), rows[i]);
  assert_int_equal(col(f, "mark")->type, SL_NUMERIC);
  sl_frame_free(f);
}

/* sensor.csv with na = {"-999", "?"}: temp NaN, 12.5, 13.25, NaN. */
static void test_extra_na(void **state) {
  (void)state;
  const char *na[] = {"-999", "?"};
  sl_csv_opts o = {0, na, 2, 0, NULL};
  sl_frame *f = read_ok(DATA "sensor.csv", &o, NULL);
  const sl_column *t = col(f, "temp");
  assert_int_equal(t->type, SL_NUMERIC);
  assert_true(isnan(t->x[0]) && t->x[1] == 12.5 && t->x[2] == 13.25 && isnan(t->x[3]));
  sl_frame_free(f);
}

/* An explicit delimiter overrides detection: orchard.csv read with ';' is
** one column whose name is the whole header line. */
static void test_given_delim(void **state) {
  (void)state;
  /* issue 12: a delimiter the header lacks while it holds another used to
  ** give one column silently; now an error naming both */
  sl_csv_opts o = {';', NULL, 0, 0, NULL};
  read_fails(DATA "orchard.csv", &o, 1, 0, "orchard.csv, row 1: delim = ';' does not occur "
             "in the header line, which seems to use ','");
  sl_csv_opts bad = {'x', NULL, 0, 0, NULL};
  sl_error e;
  assert_null(sl_csv_read(DATA "orchard.csv", &bad, NULL, &e));
  assert_non_null(strstr(e.msg, "delimiter"));
}

/* ---- errors ---- */

static void test_errors(void **state) {
  (void)state;
  read_fails(DATA "ragged.csv", NULL, 4, 0, "ragged.csv, row 4: 4 fields, the header has 5");
  read_fails(DATA "typo.csv", NULL, 13, 3,
             "typo.csv, row 13, column 3 ('yield'): expected a number, found 'n/a' "
             "(use {coerce = true} to read it as missing)");
  read_fails(DATA "dup.csv", NULL, 1, 5, "dup.csv, row 1, column 5: columns 2 and 5 are both "
             "named 'yield'");
  read_fails(DATA "header_only.csv", NULL, 0, 0, "header_only.csv has a header but no rows");
  read_fails(DATA "empty.csv", NULL, 0, 0, "empty.csv is empty");
  read_fails(DATA "unterminated.csv", NULL, 3, 2,
             "unterminated.csv, row 3, column 2: a quoted field is never closed");
  read_fails(DATA "stray_quote.csv", NULL, 3, 2, "stray_quote.csv, row 3, column 2: a quote "
             "inside a field that is not quoted");
  read_fails(DATA "empty_name.csv", NULL, 1, 2, "row 1, column 2: the header has an empty name");
  read_fails(DATA "no_such_file.csv", NULL, 0, 0,
             "cannot open 'tests/data/no_such_file.csv': No such file or directory");
}

/* typo.csv with coerce: yield is numeric, the one 'n/a' (row 13, column 3)
** missing and counted; the other cells are 10 + i/4 for plot i. */
static void test_coerce(void **state) {
  (void)state;
  sl_csv_opts o = {0, NULL, 0, 1, NULL};
  sl_read_report rep;
  sl_frame *f = read_ok(DATA "typo.csv", &o, &rep);
  const sl_column *y = col(f, "yield");
  assert_int_equal(y->type, SL_NUMERIC);
  assert_true(isnan(y->x[11]));
  assert_true(y->x[0] == 10.25 && y->x[19] == 15.0);
  assert_int_equal(rep.coerced, 1);
  assert_int_equal(rep.first_row, 13);
  assert_int_equal(rep.first_col, 3);
  assert_string_equal(rep.first_cell, "n/a");
  sl_frame_free(f);
}

/* Rows are lines of the file: a quoted field spanning three lines moves the
** next records down, and blank lines count too. */
static void test_error_lines(void **state) {
  (void)state;
  const char *text = "id,note,x\n1,\"a\nb\nc\",1\n\n2,ok,2\n3,ok\n";
  put_file(tmp("lines.csv"), text, strlen(text));
  read_fails(tmp("lines.csv"), NULL, 7, 0, "row 7: 2 fields, the header has 3");
  const char *t2 = "id,x\r\n1,1\r\n2,2\r\n3,3\r\n4,4\r\n5,5\r\n6,6\r\n7,7\r\n8,8\r\n9,9\r\n10,oops\r\n";
  put_file(tmp("crlf.csv"), t2, strlen(t2));
  read_fails(tmp("crlf.csv"), NULL, 11, 2, "row 11, column 2 ('x'): expected a number, found 'oops'");
  const char *t3 = "a,b\n1,\"x\"y\n";
  put_file(tmp("after.csv"), t3, strlen(t3));
  read_fails(tmp("after.csv"), NULL, 2, 2, "text after a closing quote");
  const char *t4 = "a,b\n1,x\0y\n";
  put_file(tmp("nul.csv"), t4, 10);
  read_fails(tmp("nul.csv"), NULL, 2, 2, "NUL byte");
  /* a NUL in a name cut it short without a word: "abcdef\0gh" was "abcdef" */
  put_file(tmp("nul_name.csv"), "id,abcdef\0gh,z\n1,2,3\n", 21);
  read_fails(tmp("nul_name.csv"), NULL, 1, 2, "nul_name.csv, row 1, column 2: a NUL byte in "
             "the header (is this a text file?)");
  put_file(tmp("nul_first.csv"), "\0\n1\n", 4);
  read_fails(tmp("nul_first.csv"), NULL, 1, 1, "row 1, column 1: a NUL byte in the header");
  const char *t5 = "\xEF\xBB\xBF";
  put_file(tmp("bom_only.csv"), t5, 3);
  read_fails(tmp("bom_only.csv"), NULL, 0, 0, "is empty");
}

/* A file over several read chunks: 300000 rows, quoted texts with embedded
** newlines, numbers checked against strtod on the same text; then the same
** file with a ragged last row, whose line number must count every line. */
static void test_large(void **state) {
  (void)state;
  const char *path = tmp("large.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  fputs("i,x,note,y\n", fp);
  size_t n = 300000;
  for (size_t i = 0; i < n; i++)
    fprintf(fp, "%zu,%zu.%03zu,\"n%zu\n%s\",%.6e\n", i, i % 977, (i * 7919) % 1000, i % 5,
            i % 3 ? "a" : "b,\"\"c\"\"", (double)i / 7.0);
  fclose(fp);
  sl_read_report rep;
  sl_frame *f = read_ok(path, NULL, &rep);
  assert_int_equal(f->nrow, n);
  const sl_column *x = col(f, "x"), *y = col(f, "y"), *note = col(f, "note");
  assert_int_equal(note->nlevels, 10);
  for (size_t i = 0; i < n; i++) {
    char buf[64];
    snprintf(buf, sizeof buf, "%zu.%03zu", i % 977, (i * 7919) % 1000);
    if (x->x[i] != strtod(buf, NULL)) fail_msg("x row %zu: %s", i, buf);
    snprintf(buf, sizeof buf, "%.6e", (double)i / 7.0);
    if (y->x[i] != strtod(buf, NULL)) fail_msg("y row %zu: %s", i, buf);
    snprintf(buf, sizeof buf, "n%zu\n%s", i % 5, i % 3 ? "a" : "b,\"c\"");
    if (strcmp(level(note, i), buf) != 0) fail_msg("note row %zu", i);
  }
  sl_frame_free(f);
  fp = fopen(path, "ab");
  fputs("1,2,3\n", fp);
  fclose(fp);
  /* header 1 line + 2 lines per row: the bad row is line 2 + 2n */
  read_fails(path, NULL, (int)(2 + 2 * n), 0, "3 fields, the header has 4");
}

/* 40000 columns: read_csv compared every name with every other one and
** added each column after a search of the ones before (9.5 s for such a
** file; now n log n).  The values are the column numbers and their
** doubles; a name used twice far apart, and an empty name, are found where
** a pairwise check finds them (the first fault from the left). */
static void test_wide(void **state) {
  (void)state;
  size_t n = 40000;
  const char *path = tmp("wide.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  for (size_t j = 0; j < n; j++) fprintf(fp, "%sc%zu", j ? "," : "", j);
  fputc('\n', fp);
  for (int row = 1; row <= 2; row++) {
    for (size_t j = 0; j < n; j++) fprintf(fp, "%s%zu", j ? "," : "", row * j);
    fputc('\n', fp);
  }
  fclose(fp);
  sl_frame *f = read_ok(path, NULL, NULL);
  assert_int_equal(f->ncol, n);
  assert_int_equal(f->nrow, 2);
  for (size_t j = 0; j < n; j++) {
    char name[32];
    snprintf(name, sizeof name, "c%zu", j);
    assert_string_equal(f->col[j].name, name);
    assert_true(f->col[j].x[0] == (double)j && f->col[j].x[1] == 2.0 * (double)j);
  }
  assert_int_equal(sl_frame_find(f, "c39999"), 39999);
  sl_error e;
  assert_int_equal(sl_frame_lookup(f, "nope", &e), -1);   /* a long list is cut */
  assert_non_null(strstr(e.msg, "no column 'nope' (the columns: c0, c1, c2, "));
  assert_non_null(strstr(e.msg, ", ... (40000 in all))"));
  sl_frame_free(f);
  fp = fopen(path, "wb");
  for (size_t j = 0; j < n; j++) fprintf(fp, "%sc%zu", j ? "," : "", j == n - 1 ? 7 : j);
  fputs("\n", fp);
  for (size_t j = 0; j < n; j++) fprintf(fp, "%s1", j ? "," : "");
  fputs("\n", fp);
  fclose(fp);
  read_fails(path, NULL, 1, 40000, "wide.csv, row 1, column 40000: columns 8 and 40000 are "
             "both named 'c7'");
  put_file(tmp("faults.csv"), "a,b,,b,a,\n1,2,3,4,5,6\n", 22);
  read_fails(tmp("faults.csv"), NULL, 1, 3, "row 1, column 3: the header has an empty name");
  put_file(tmp("faults.csv"), "a,b,c,b,a,\n1,2,3,4,5,6\n", 23);
  read_fails(tmp("faults.csv"), NULL, 1, 4, "row 1, column 4: columns 2 and 4 are both named 'b'");
  put_file(tmp("faults.csv"), "x,y,x,x,y\n1,2,3,4,5\n", 20);
  read_fails(tmp("faults.csv"), NULL, 1, 3, "row 1, column 3: columns 1 and 3 are both named 'x'");
}

/* A cell of 10 MB comes back whole.  libcsv grew its cell buffer 128
** bytes at a time, a copy each under ASan: this read took minutes there,
** which the alarm turns into a failure. */
static void test_long_cell(void **state) {
  (void)state;
  size_t n = 10u << 20;
  char *cell = malloc(n + 1);
  assert_non_null(cell);
  for (size_t i = 0; i < n; i++) cell[i] = (char)('a' + i % 26);
  cell[n] = '\0';
  const char *path = tmp("long.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  fprintf(fp, "id,text\n1,\"%s\"\n2,short\n", cell);
  fclose(fp);
  alarm(60);
  sl_frame *f = read_ok(path, NULL, NULL);
  alarm(0);
  const sl_column *t = col(f, "text");
  assert_int_equal(strlen(level(t, 0)), n);
  assert_string_equal(level(t, 0), cell);
  assert_string_equal(level(t, 1), "short");
  sl_frame_free(f);
  free(cell);
}

/* Decimal texts with up to 19 digits, exponents and signs: every value is
** the double strtod gives for the same text (the reader's fast path must
** agree with it bit for bit). */
static void test_numbers_strtod(void **state) {
  (void)state;
  const char *path = tmp("digits.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  fputs("v\n", fp);
  unsigned long long s = 88172645463325252ull;
  size_t n = 20000;
  char (*text)[48] = malloc(n * sizeof *text);
  for (size_t i = 0; i < n; i++) {
    s ^= s << 13; s ^= s >> 7; s ^= s << 17;        /* xorshift64 */
    int digits = 1 + (int)(s % 19), point = (int)((s >> 8) % (unsigned)(digits + 1));
    char *t = text[i];
    size_t k = 0;
    if ((s >> 20) & 1) t[k++] = '-';
    for (int d = 0; d < digits; d++) {
      if (d == point && d > 0) t[k++] = '.';
      t[k++] = (char)('0' + (s >> (24 + d * 2)) % 10);
    }
    if ((s >> 62) == 3) k += (size_t)sprintf(t + k, "e%d", (int)((s >> 30) % 40) - 20);
    t[k] = '\0';
    fprintf(fp, "%s\n", t);
  }
  fclose(fp);
  sl_frame *f = read_ok(path, NULL, NULL);
  assert_int_equal(f->col[0].type, SL_NUMERIC);
  for (size_t i = 0; i < n; i++) {
    double want = strtod(text[i], NULL);
    if (memcmp(&f->col[0].x[i], &want, sizeof want) != 0) fail_msg("'%s'", text[i]);
  }
  free(text);
  sl_frame_free(f);
}

/* ---- writing ---- */

/* Write then read: every double comes back bit for bit, texts with
** delimiters, quotes and newlines come back whole, missing stays missing. */
static void test_roundtrip(void **state) {
  (void)state;
  sl_error e;
  double x[] = {0.1, 1.0 / 3.0, 1e-300, 4.9406564584124654e-324, 1.7976931348623157e308,
                3.141592653589793, -2.5, NAN, 123456789012345680.0, 0.30000000000000004};
  size_t n = sizeof x / sizeof *x;
  sl_frame *f = sl_frame_alloc(n);
  assert_int_equal(sl_frame_add_numeric(f, "value", x, &e), SL_OK);
  const char *lv[] = {" edge space", "a,b", "line\nbreak", "plain", "say \"hi\""};
  int32_t code[] = {0, 1, 2, 3, 4, -1, 4, 3, 2, 1};
  assert_int_equal(sl_frame_add_categorical(f, "label, with comma", code, lv, 5, &e), SL_OK);
  assert_int_equal(sl_csv_write(f, tmp("out.csv"), &e), SL_OK);
  sl_frame *g = read_ok(tmp("out.csv"), NULL, NULL);
  assert_int_equal(g->nrow, n);
  assert_string_equal(g->col[1].name, "label, with comma");
  for (size_t i = 0; i < n; i++) {
    if (isnan(x[i])) assert_true(isnan(g->col[0].x[i]));
    else assert_memory_equal(&g->col[0].x[i], &x[i], sizeof x[i]);
    if (code[i] < 0) assert_null(level(&g->col[1], i));
    else assert_string_equal(level(&g->col[1], i), lv[code[i]]);
  }
  sl_frame_free(g);
  /* the shortest exact form: 0.1 is written "0.1", not 0.10000000000000001 */
  FILE *fp = fopen(tmp("out.csv"), "rb");
  char line[128];
  assert_non_null(fgets(line, sizeof line, fp));
  assert_string_equal(line, "value,\"label, with comma\"\n");
  assert_non_null(fgets(line, sizeof line, fp));
  assert_string_equal(line, "0.1,\" edge space\"\n");
  fclose(fp);
  assert_int_equal(sl_csv_write(f, "/nonexistent/dir/out.csv", &e), SL_EIO);
  assert_non_null(strstr(e.msg, "cannot write '/nonexistent/dir/out.csv'"));
  sl_frame_free(f);
}

/* A one-column frame with missing values was written with blank lines,
** which the reader skips: {1, NA, 3, NA, 5} came back as 3 rows.  A
** missing cell of a one-column frame is written "" (pandas, too, reads a
** quoted empty field as missing and skips blank lines). */
static void test_roundtrip_one_column(void **state) {
  (void)state;
  sl_error e;
  double x[] = {1, NAN, 3, NAN, 5};
  sl_frame *f = sl_frame_alloc(5);
  assert_int_equal(sl_frame_add_numeric(f, "v", x, &e), SL_OK);
  assert_int_equal(sl_csv_write(f, tmp("one.csv"), &e), SL_OK);
  sl_frame *g = read_ok(tmp("one.csv"), NULL, NULL);
  assert_int_equal(g->nrow, 5);
  for (int i = 0; i < 5; i++)
    assert_true(isnan(x[i]) ? isnan(g->col[0].x[i]) : g->col[0].x[i] == x[i]);
  sl_frame_free(g);
  FILE *fp = fopen(tmp("one.csv"), "rb");
  char text[64] = {0};
  assert_true(fread(text, 1, sizeof text - 1, fp) > 0);
  fclose(fp);
  assert_string_equal(text, "v\n1\n\"\"\n3\n\"\"\n5\n");
  sl_frame_free(f);
  /* categorical, all rows but one missing */
  const char *lv[] = {"a \"b\"\n, c"};
  int32_t code[] = {-1, -1, 0, -1};
  f = sl_frame_alloc(4);
  assert_int_equal(sl_frame_add_categorical(f, "note", code, lv, 1, &e), SL_OK);
  assert_int_equal(sl_csv_write(f, tmp("one.csv"), &e), SL_OK);
  g = read_ok(tmp("one.csv"), NULL, NULL);
  assert_int_equal(g->nrow, 4);
  assert_null(level(&g->col[0], 0));
  assert_string_equal(level(&g->col[0], 2), lv[0]);
  assert_null(level(&g->col[0], 3));
  sl_frame_free(g);
  sl_frame_free(f);
}

/* A text that would read back as missing cannot be written; a name that
** starts with a byte-order mark keeps it (it is quoted). */
static void test_write_refuses(void **state) {
  (void)state;
  sl_error e;
  double x[] = {1, 2, 3};
  const char *lv[] = {"NA", "ok"};
  int32_t code[] = {1, -1, 0};
  sl_frame *f = sl_frame_alloc(3);
  assert_int_equal(sl_frame_add_numeric(f, "id", x, &e), SL_OK);
  assert_int_equal(sl_frame_add_categorical(f, "grade", code, lv, 2, &e), SL_OK);
  assert_int_equal(sl_csv_write(f, tmp("na.csv"), &e), SL_EARG);
  assert_string_equal(e.msg, "column 'grade', row 3: the text 'NA' would read back as a "
                      "missing value (empty, NA, NaN and . are missing in a CSV file)");
  assert_true(access(tmp("na.csv"), F_OK) != 0);   /* nothing written */
  sl_frame_free(f);
  const char *odd[] = {"", ".", "NaN", "nan", "-nan(1)"};
  for (int k = 0; k < 5; k++) {
    int32_t one[] = {0};
    f = sl_frame_alloc(1);
    assert_int_equal(sl_frame_add_categorical(f, "t", one, &odd[k], 1, &e), SL_OK);
    assert_int_equal(sl_csv_write(f, tmp("na.csv"), &e), SL_EARG);
    assert_non_null(strstr(e.msg, "would read back as a missing value"));
    sl_frame_free(f);
  }
  f = sl_frame_alloc(1);
  assert_int_equal(sl_frame_add_numeric(f, "\xEF\xBB\xBFid", x, &e), SL_OK);
  assert_int_equal(sl_csv_write(f, tmp("bom.csv"), &e), SL_OK);
  sl_frame *g = read_ok(tmp("bom.csv"), NULL, NULL);
  assert_string_equal(g->col[0].name, "\xEF\xBB\xBFid");
  sl_frame_free(g);
  sl_frame_free(f);
}

/* Random frames of 1 to 3 columns written and read back are the same
** frame: numbers of any bits (NaN is missing, infinities, -0, subnormals),
** texts of quotes, delimiters, line ends, edge spaces and UTF-8 (each
** starting with a letter, so that it stays a text), missing cells. */
static void test_roundtrip_random(void **state) {
  (void)state;
  static const char *const bits[] = {"\"", ",", ";", "\t", "\n", "\r", " ", "\r\n", "a",
                                     "7", "\xC3\xA9", "\"\"", "x y", ".", "-", "NA"};
  unsigned long long s = 0x9E3779B97F4A7C15ull;
  for (int round = 0; round < 400; round++) {
    s ^= s << 13; s ^= s >> 7; s ^= s << 17;
    size_t ncol = 1 + s % 3, nrow = 1 + (s >> 8) % 12;
    sl_frame *f = sl_frame_alloc(nrow);
    sl_error e;
    for (size_t j = 0; j < ncol; j++) {
      char name[16];
      snprintf(name, sizeof name, "c%zu", j);
      s ^= s << 13; s ^= s >> 7; s ^= s << 17;
      if (s & 1) {
        double x[12];
        for (size_t i = 0; i < nrow; i++) {
          s ^= s << 13; s ^= s >> 7; s ^= s << 17;
          uint64_t b = s % 5 == 0 ? 0x7FF8000000000000ull : s % 7 == 0 ? 0x7FF0000000000000ull
                     : s % 11 == 0 ? 0x8000000000000000ull : s % 13 == 0 ? 1ull : s;
          memcpy(&x[i], &b, sizeof b);
        }
        assert_int_equal(sl_frame_add_numeric(f, name, x, &e), SL_OK);
        continue;
      }
      char text[12][64];
      const char *lv[12];
      int32_t code[12];
      size_t nl = 0;
      for (size_t i = 0; i < nrow; i++) {
        s ^= s << 13; s ^= s >> 7; s ^= s << 17;
        code[i] = -1;
        if (s % 4 == 0 && i > 0) continue;   /* row 1 holds a text */
        snprintf(text[nl], sizeof text[nl], "t%s%s%s", bits[(s >> 4) % 16],
                 bits[(s >> 9) % 16], bits[(s >> 14) % 16]);
        lv[nl] = text[nl];
        code[i] = (int32_t)nl++;
      }
      /* levels sorted and distinct: sort (selection), then merge equal texts */
      for (size_t a = 0; a < nl; a++)
        for (size_t b = a + 1; b < nl; b++)
          if (strcmp(lv[b], lv[a]) < 0) {
            const char *t = lv[a]; lv[a] = lv[b]; lv[b] = t;
          }
      size_t u = 0;
      for (size_t a = 0; a < nl; a++)
        if (u == 0 || strcmp(lv[u - 1], lv[a]) != 0) lv[u++] = lv[a];
      for (size_t i = 0; i < nrow; i++) {
        if (code[i] < 0) continue;
        const char *t = text[code[i]];
        int32_t k = 0;
        while (strcmp(lv[k], t) != 0) k++;
        code[i] = k;
      }
      assert_int_equal(sl_frame_add_categorical(f, name, code, lv, u, &e), SL_OK);
    }
    assert_int_equal(sl_csv_write(f, tmp("random_rt.csv"), &e), SL_OK);
    sl_frame *g = read_ok(tmp("random_rt.csv"), NULL, NULL);
    assert_int_equal(g->nrow, f->nrow);
    assert_int_equal(g->ncol, f->ncol);
    for (size_t j = 0; j < ncol; j++) {
      const sl_column *a = &f->col[j], *b = &g->col[j];
      assert_string_equal(a->name, b->name);
      assert_int_equal(a->type, b->type);
      for (size_t i = 0; i < nrow; i++) {
        if (a->type == SL_NUMERIC && isnan(a->x[i])) assert_true(isnan(b->x[i]));
        else if (a->type == SL_NUMERIC) assert_memory_equal(&a->x[i], &b->x[i], sizeof a->x[i]);
        else if (a->code[i] < 0) assert_null(level(b, i));
        else assert_string_equal(level(b, i), a->levels[a->code[i]]);
      }
    }
    sl_frame_free(g);
    sl_frame_free(f);
  }
}

/* ---- frame operations ---- */

static void test_ops(void **state) {
  (void)state;
  sl_error e;
  sl_frame *f = read_ok(DATA "orchard.csv", NULL, NULL);
  assert_int_equal(sl_frame_lookup(f, "yeild", &e), -1);
  assert_string_equal(e.msg, "no column 'yeild'; did you mean 'yield'?");
  assert_int_equal(sl_frame_lookup(f, "zzzzzzzz", &e), -1);
  /* nothing near: the columns are listed (before, only "no column 'zzzzzzzz'") */
  assert_string_equal(e.msg, "no column 'zzzzzzzz' (the columns: plot, variety, rain, yield, "
                      "pests)");
  int cols[] = {3, 1};
  sl_frame *s = sl_frame_select(f, cols, 2, &e);
  assert_non_null(s);
  assert_int_equal(s->ncol, 2);
  assert_string_equal(s->col[0].name, "yield");
  assert_string_equal(level(&s->col[1], 3), "braeburn");
  sl_frame_free(s);
  unsigned char keep[8] = {0, 1, 0, 1, 0, 0, 1, 0};
  sl_frame *k = sl_frame_filter(f, keep, &e);
  assert_int_equal(k->nrow, 3);
  assert_true(col(k, "plot")->x[0] == 2 && col(k, "plot")->x[2] == 7);
  assert_string_equal(level(col(k, "variety"), 1), "braeburn");
  sl_frame_free(k);
  sl_frame *h = sl_frame_head(f, 2, &e);
  assert_int_equal(h->nrow, 2);
  sl_frame_free(h);
  h = sl_frame_head(f, 100, &e);
  assert_int_equal(h->nrow, 8);
  sl_frame_free(h);
  /* rain 71.5 64 80.25 55 NaN 68.5 73 59.75, cut 68.5: 1 0 1 0 NaN 0 1 0 */
  sl_frame *b = sl_frame_binarize(f, sl_frame_find(f, "rain"), 68.5, "wet", &e);
  assert_non_null(b);
  const sl_column *wet = col(b, "wet");
  double want[] = {1, 0, 1, 0, NAN, 0, 1, 0};
  for (int i = 0; i < 8; i++)
    assert_true(isnan(want[i]) ? isnan(wet->x[i]) : wet->x[i] == want[i]);
  assert_int_equal(b->ncol, 6);
  sl_frame_free(b);
  assert_null(sl_frame_binarize(f, sl_frame_find(f, "variety"), 1, "v", &e));
  assert_non_null(strstr(e.msg, "categorical"));
  assert_null(sl_frame_binarize(f, 2, 1, "yield", &e));
  assert_string_equal(e.msg, "column 'yield' already exists");
  /* variety gala fuji gala braeburn fuji gala braeburn fuji; {gala, fuji}: 1 1 1 0 1 1 0 1 */
  const char *lv[] = {"gala", "fuji"};
  b = sl_frame_binarize_levels(f, sl_frame_find(f, "variety"), lv, 2, "sweet", &e);
  assert_non_null(b);
  double want2[] = {1, 1, 1, 0, 1, 1, 0, 1};
  for (int i = 0; i < 8; i++) assert_true(col(b, "sweet")->x[i] == want2[i]);
  sl_frame_free(b);
  const char *typo[] = {"fugi"};
  assert_null(sl_frame_binarize_levels(f, sl_frame_find(f, "variety"), typo, 1, "v", &e));
  assert_string_equal(e.msg, "'fugi' is not a level of 'variety'; did you mean 'fuji'?");
  assert_null(sl_frame_binarize_levels(f, sl_frame_find(f, "rain"), lv, 1, "v", &e));
  assert_non_null(strstr(e.msg, "holds numbers"));
  double z[8] = {0};
  assert_int_equal(sl_frame_add_numeric(f, "rain", z, &e), SL_EARG);
  const char *bad[] = {"b", "a"};
  int32_t c8[8] = {0};
  assert_int_equal(sl_frame_add_categorical(f, "c", c8, bad, 2, &e), SL_EARG);
  sl_frame_free(f);
}

/* ---- SQLite ---- */

/* Build the test database with the sqlite3 API. */
static void make_db(const char *path) {
  sqlite3 *db;
  assert_int_equal(sqlite3_open(path, &db), SQLITE_OK);
  const char *sql =
    "CREATE TABLE hives (id INTEGER, site TEXT, weight REAL, honey REAL, tag);"
    "INSERT INTO hives VALUES (1, 'ridge', 31.5, 12.25, 7);"
    "INSERT INTO hives VALUES (2, 'meadow', 28, NULL, 8);"
    "INSERT INTO hives VALUES (3, 'ridge', NULL, 9.5, 'lost');"
    "INSERT INTO hives VALUES (4, NULL, 30.125, 11, 2.5);"
    "CREATE TABLE blobs (b BLOB); INSERT INTO blobs VALUES (x'00ff');";
  char *err = NULL;
  if (sqlite3_exec(db, sql, NULL, NULL, &err) != SQLITE_OK) fail_msg("%s", err);
  sqlite3_close(db);
}

static void test_sql(void **state) {
  (void)state;
  const char *db = tmp("hives.db");
  make_db(db);
  sl_error e;
  sl_read_report rep;
  sl_frame *f = sl_sql_read(db, "SELECT * FROM hives ORDER BY id", NULL, &rep, &e);
  if (!f) fail_msg("%s", e.msg);
  assert_int_equal(f->nrow, 4);
  assert_int_equal(f->ncol, 5);
  assert_int_equal(col(f, "id")->type, SL_NUMERIC);
  assert_true(col(f, "id")->x[3] == 4);
  const sl_column *w = col(f, "weight"), *site = col(f, "site"), *tag = col(f, "tag");
  assert_true(w->x[0] == 31.5 && w->x[1] == 28 && isnan(w->x[2]) && w->x[3] == 30.125);
  assert_string_equal(level(site, 1), "meadow");
  assert_null(level(site, 3));
  /* tag mixes numbers and text: categorical, numbers as SQLite writes them */
  assert_int_equal(tag->type, SL_CATEGORICAL);
  assert_string_equal(level(tag, 0), "7");
  assert_string_equal(level(tag, 2), "lost");
  assert_string_equal(level(tag, 3), "2.5");
  assert_true(rep.bytes > 0);
  sl_frame_free(f);
  f = sl_sql_read(db, "SELECT site, avg(weight) AS w FROM hives WHERE site IS NOT NULL "
                  "GROUP BY site ORDER BY site", NULL, &rep, &e);
  assert_non_null(f);
  assert_true(col(f, "w")->x[0] == 28 && col(f, "w")->x[1] == 31.5);
  sl_frame_free(f);
  assert_null(sl_sql_read(db, "SELEC * FROM hives", NULL, &rep, &e));
  assert_string_equal(e.msg, "near \"SELEC\": syntax error");
  assert_null(sl_sql_read(db, "SELECT * FROM hive", NULL, &rep, &e));
  assert_string_equal(e.msg, "no such table: hive");
  assert_null(sl_sql_read(db, "SELECT * FROM hives WHERE id > 10", NULL, &rep, &e));
  assert_string_equal(e.msg, "the query returned no rows");
  assert_null(sl_sql_read(db, "SELECT id, site AS id FROM hives", NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "columns 1 and 2 of the result are both named 'id'"));
  assert_null(sl_sql_read(db, "SELECT 1 AS a, 2 AS b, 3 AS c, 4 AS b, 5 AS a", NULL, &rep, &e));
  assert_string_equal(e.msg, "columns 2 and 4 of the result are both named 'b'; rename one "
                      "with AS");
  assert_null(sl_sql_read(db, "SELECT 1 AS a, 2 AS \"\", 3 AS a", NULL, &rep, &e));
  assert_string_equal(e.msg, "column 2 of the result has no name; name it with AS");
  assert_null(sl_sql_read(db, "SELECT b FROM blobs", NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "row 1, column 1 ('b'): a BLOB value"));
  assert_null(sl_sql_read(db, "SELECT 1; SELECT 2", NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "one statement at a time"));
  assert_null(sl_sql_read(db, "DELETE FROM hives", NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "the statement returns no columns"));
  assert_null(sl_sql_read(tmp("none.db"), "SELECT 1", NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "No such file or directory"));
  put_file(tmp("text.db"), "not a database, just text\n", 26);
  assert_null(sl_sql_read(tmp("text.db"), "SELECT * FROM sqlite_master", NULL, &rep, &e));
  assert_string_equal(e.msg, "file is not a database");
}

/* ---- files that never end, and stopping a read ---- */

/* A device never ends and a pipe without a writer blocks the open: both
** are refused before a byte is read (the alarm turns a hang or an endless
** read into a failure of this test). */
static void test_not_regular(void **state) {
  (void)state;
  sl_error e;
  sl_read_report rep;
  alarm(20);
  assert_null(sl_csv_read("/dev/zero", NULL, &rep, &e));
  assert_string_equal(e.msg, "/dev/zero is not a regular file (a device); sluice reads "
                      "data from regular files");
  assert_null(sl_csv_read("/dev/urandom", NULL, &rep, &e));
  assert_string_equal(e.msg, "/dev/urandom is not a regular file (a device); sluice reads "
                      "data from regular files");
  const char *fifo = tmp("pipe.csv");
  assert_int_equal(mkfifo(fifo, 0600), 0);
  assert_null(sl_csv_read(fifo, NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "pipe.csv is not a regular file (a pipe)"));
  assert_null(sl_csv_read(tmpdir, NULL, &rep, &e));
  assert_non_null(strstr(e.msg, "is not a regular file (a directory)"));
  unsigned char sha[32];
  uint64_t bytes;
  assert_int_equal(sl_fingerprint_file(fifo, sha, &bytes, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "is not a regular file (a pipe)"));
  alarm(0);
}

/* A read polls the stop flag (set by Ctrl-C in the shell) between chunks. */
static void test_stop(void **state) {
  (void)state;
  const char *path = tmp("stop.csv");
  FILE *fp = fopen(path, "wb");
  assert_non_null(fp);
  fputs("a,b\n", fp);
  for (int i = 0; i < 100000; i++) fprintf(fp, "%d,%d\n", i, 2 * i);
  fclose(fp);
  volatile int stop = 1;
  sl_csv_opts o = {0, NULL, 0, 0, &stop};
  sl_error e;
  sl_read_report rep;
  assert_null(sl_csv_read(path, &o, &rep, &e));
  assert_string_equal(e.msg, "interrupted");
  assert_int_equal(e.code, SL_ELIMIT);
  stop = 0;
  sl_frame *f = read_ok(path, &o, NULL);
  assert_int_equal(f->nrow, 100000);
  sl_frame_free(f);
}

/* An endless recursive query ends at the row limit with an error saying
** how to read more; the stop flag ends it through SQLite's progress
** handler.  A result of exactly the limit is read. */
static void test_sql_limit(void **state) {
  (void)state;
  const char *db = tmp("limit.db");
  make_db(db);
  const char *endless = "WITH RECURSIVE r(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM r) "
                        "SELECT i FROM r";
  sl_error e;
  sl_read_report rep;
  sl_sql_opts o = {1000, NULL};
  alarm(60);
  assert_null(sl_sql_read(db, endless, &o, &rep, &e));
  assert_string_equal(e.msg, "the query returned more than 1000 rows; give {limit = ...} to "
                      "read more");
  assert_int_equal(e.code, SL_ELIMIT);
  o.limit = 4;
  sl_frame *f = sl_sql_read(db, "SELECT * FROM hives", &o, &rep, &e);
  assert_non_null(f);
  assert_int_equal(f->nrow, 4);
  sl_frame_free(f);
  o.limit = 3;
  assert_null(sl_sql_read(db, "SELECT * FROM hives", &o, &rep, &e));
  assert_string_equal(e.msg, "the query returned more than 3 rows; give {limit = ...} to "
                      "read more");
  volatile int stop = 1;
  sl_sql_opts s = {0, &stop};
  assert_null(sl_sql_read(db, endless, &s, &rep, &e));
  assert_string_equal(e.msg, "interrupted");
  stop = 0;
  f = sl_sql_read(db, "SELECT * FROM hives", &s, &rep, &e);
  assert_non_null(f);
  sl_frame_free(f);
  alarm(0);
  assert_int_equal(SL_SQL_MAX_ROWS, 10000000);   /* the documented default */
}

/* ---- fingerprints ---- */

/* Digests from sha256sum tests/data/orchard.csv tests/data/quoted.csv. */
static void test_sha256(void **state) {
  (void)state;
  sl_read_report rep;
  char hex[65];
  sl_frame *f = read_ok(DATA "orchard.csv", NULL, &rep);
  assert_string_equal(sl_fingerprint_hex(rep.sha256, hex),
                      "4185850cb103de325fba433e306d3e5713a4acc8aa936a40d8848098c4fe8fa4");
  assert_int_equal(rep.bytes, 177);
  sl_frame_free(f);
  f = read_ok(DATA "quoted.csv", NULL, &rep);   /* the BOM is part of the bytes */
  assert_string_equal(sl_fingerprint_hex(rep.sha256, hex),
                      "c6297956197ab2314a227674a535419dff4d0340f4faef60d533b9717a7020bf");
  assert_int_equal(rep.bytes, 118);
  sl_frame_free(f);
  unsigned char sha[32];
  uint64_t bytes;
  sl_error e;
  assert_int_equal(sl_fingerprint_file(DATA "empty.csv", sha, &bytes, &e), SL_OK);
  /* SHA-256 of no bytes, from sha256sum /dev/null */
  assert_string_equal(sl_fingerprint_hex(sha, hex),
                      "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
  assert_int_equal(bytes, 0);
}

/* Random short files over an alphabet of quotes, delimiters, line ends,
** digits and letters: every read gives a frame or an error with a message,
** never a crash (run under ASan by make asan); a frame's shape is sane. */
static void test_random_files(void **state) {
  (void)state;
  static const char alphabet[] = "\",;\t\n\r 0123456789.-eNAab\xc3\xa9";
  unsigned long long s = 0x2545F4914F6CDD1Dull;
  char text[200];
  int frames = 0, errors = 0;
  for (int round = 0; round < 3000; round++) {
    s ^= s << 13; s ^= s >> 7; s ^= s << 17;
    size_t n = (size_t)(s % sizeof text);
    for (size_t i = 0; i < n; i++) {
      s ^= s << 13; s ^= s >> 7; s ^= s << 17;
      /* lines of "a,b" are likelier, so that some files parse */
      text[i] = (s >> 40) % 16 ? "1,a\n"[i % 4] : alphabet[(s >> 8) % (sizeof alphabet - 1)];
    }
    put_file(tmp("random.csv"), text, n);
    sl_error e = {0};
    sl_read_report rep;
    sl_csv_opts o = {0, NULL, 0, (int)(round & 1), NULL};
    sl_frame *f = sl_csv_read(tmp("random.csv"), &o, &rep, &e);
    if (f) {
      frames++;
      assert_true(f->nrow > 0 && f->ncol > 0);
      for (size_t j = 0; j < f->ncol; j++)
        if (f->col[j].type == SL_CATEGORICAL)
          for (size_t i = 0; i < f->nrow; i++)
            assert_true(f->col[j].code[i] < (int32_t)f->col[j].nlevels);
      sl_frame_free(f);
    } else {
      errors++;
      assert_true(e.msg[0] != '\0');
    }
  }
  if (frames <= 100 || errors <= 100) print_error("  %d frames, %d errors\n", frames, errors);
  assert_true(frames > 100 && errors > 100);   /* both paths were taken */
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_orchard),
    cmocka_unit_test(test_summary_pandas),
    cmocka_unit_test(test_summary_hand),
    cmocka_unit_test(test_summary_inf),
    cmocka_unit_test(test_too_large),
    cmocka_unit_test(test_semicolon),
    cmocka_unit_test(test_tab),
    cmocka_unit_test(test_quoted),
    cmocka_unit_test(test_mixed_keeps_text),
    cmocka_unit_test(test_extra_na),
    cmocka_unit_test(test_given_delim),
    cmocka_unit_test(test_errors),
    cmocka_unit_test(test_coerce),
    cmocka_unit_test(test_error_lines),
    cmocka_unit_test(test_large),
    cmocka_unit_test(test_wide),
    cmocka_unit_test(test_long_cell),
    cmocka_unit_test(test_numbers_strtod),
    cmocka_unit_test(test_roundtrip),
    cmocka_unit_test(test_roundtrip_one_column),
    cmocka_unit_test(test_write_refuses),
    cmocka_unit_test(test_roundtrip_random),
    cmocka_unit_test(test_ops),
    cmocka_unit_test(test_sql),
    cmocka_unit_test(test_sha256),
    cmocka_unit_test(test_not_regular),
    cmocka_unit_test(test_stop),
    cmocka_unit_test(test_sql_limit),
    cmocka_unit_test(test_random_files),
  };
  return cmocka_run_group_tests(tests, setup_tmp, teardown_tmp);
}
