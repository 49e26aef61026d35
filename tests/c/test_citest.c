/*
** test_citest.c: conditional-independence tests and p-value adjustment
** (src/stats/citest.c).
**
** References, named beside each check (values printed with repr() from
** Debian's python3-scipy 1.10.1, python3-statsmodels 0.13.5 and numpy 1.24
** and pasted):
** - numpy.linalg.lstsq residuals and scipy.stats.pearsonr for the partial
**   correlation; Fisher's z and interval (Fisher 1924) from scipy.stats.norm;
** - scipy.stats.chi2_contingency(t, correction=False,
**   lambda_="log-likelihood") per stratum for the G-test;
** - statsmodels.stats.multitest.multipletests(p, method="holm" / "fdr_bh").
** A lazy table (an SQLite file written here) is held to the same scipy
** values, and to the test of its fetched frame (itself held to scipy and
** statsmodels here and by tests/oracle/citest_scipy.py) to 1e-9 relative.
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
#include <sqlite3.h>

#include "citest.h"
#include "db.h"
#include "frame.h"

static void assert_close(double x, double ref, double tol, const char *what) {
  double d = fabs(ref) > 1e-300 ? fabs(ref) : 1;
  if (!(fabs(x - ref) / d <= tol)) {
    print_error("%s: got %.17g, expected %.17g\n", what, x, ref);
    fail();
  }
}

static const double A[10] = {1.2, 2.3, 3.1, 4.8, 5.0, 6.7, 7.1, 8.9, 9.2, 10.4};
static const double B[10] = {2.1, 1.9, 3.5, 3.9, 6.1, 5.8, 7.7, 7.2, 9.9, 9.8};
static const double Z[10] = {0.5, 1.1, 1.4, 2.2, 2.1, 3.3, 3.0, 4.4, 4.1, 5.2};

/* A frame of the columns a, b, z (and k, constant) above. */
static sl_frame *small_frame(void) {
  sl_error e;
  sl_frame *f = sl_frame_alloc(10);
  double k[10];
  for (int i = 0; i < 10; i++) k[i] = 3;
  assert_int_equal(sl_frame_add_numeric(f, "a", A, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "b", B, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "z", Z, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "k", k, &e), 0);
  return f;
}

/* The partial correlation of a and b given z: numpy residuals and
** scipy.stats.pearsonr; z = atanh(r) sqrt(10 - 1 - 3). */
static void test_partial(void **state) {
  (void)state;
  sl_frame *f = small_frame();
  sl_ci_result r;
  sl_error e;
  int given[1] = {2};
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.test, SL_CI_FISHER);
  assert_int_equal(r.n, 10);
  assert_close(r.effect, 0.8711491585379191, 1e-12, "partial r");
  assert_close(r.stat, 3.276991771007898, 1e-12, "Fisher z");
  assert_close(r.p, 0.001049194271974336, 1e-9, "p");
  assert_close(r.lo, 0.49122551266123454, 1e-12, "lower limit");
  assert_close(r.hi, 0.9725835569723642, 1e-12, "upper limit");
  /* no conditioning set: Pearson's r, scipy.stats.pearsonr(a, b) */
  assert_int_equal(sl_citest(f, 0, 1, NULL, 0, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_close(r.effect, 0.953166561825219, 1e-12, "Pearson r");
  /* a constant conditioning column changes nothing, and says so */
  int given2[2] = {2, 3};
  assert_int_equal(sl_citest(f, 0, 1, given2, 2, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_close(r.effect, 0.8711491585379191, 1e-12, "partial r with a constant column");
  assert_non_null(strstr(r.note, "'k' is constant"));
  sl_frame_free(f);
}

/* The refusals: each names what is wrong. */
static void test_refusals(void **state) {
  (void)state;
  sl_frame *f = small_frame();
  sl_ci_result r;
  sl_error e;
  assert_int_equal(sl_citest(f, 0, 3, NULL, 0, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'k' is constant over the 10 complete rows"));
  assert_int_equal(sl_citest(f, 0, 0, NULL, 0, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  int given[1] = {0};
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'a' is both tested and in the conditioning set"));
  assert_int_equal(sl_citest(f, 0, 1, NULL, 0, SL_CI_GTEST, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'a' is continuous"));
  /* too few rows: 6 rows for 3 conditioning columns need 7 */
  sl_frame *h = sl_frame_head(f, 6, &e);
  double w[6] = {1, 0, 2, 5, 3, 1}, v[6] = {0, 1, 1, 0, 2, 3};
  assert_int_equal(sl_frame_add_numeric(h, "w", w, &e), 0);
  assert_int_equal(sl_frame_add_numeric(h, "v", v, &e), 0);
  int g3[3] = {2, 4, 5};
  assert_int_equal(sl_citest(h, 0, 1, g3, 3, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "too few rows: 6 complete rows for 3 conditioning columns "
                                "(the test needs at least 7)"));
  sl_frame_free(h);
  sl_frame_free(f);
}

/* Missing values: rows dropped per test and counted. */
static void test_missing(void **state) {
  (void)state;
  sl_error e;
  sl_frame *f = sl_frame_alloc(10);
  double a[10], z[10];
  memcpy(a, A, sizeof a); memcpy(z, Z, sizeof z);
  a[3] = NAN; z[7] = NAN;
  assert_int_equal(sl_frame_add_numeric(f, "a", a, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "b", B, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "z", z, &e), 0);
  sl_ci_result r;
  int given[1] = {2};
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.n, 8);
  assert_int_equal(r.dropped, 2);
  assert_int_equal(sl_citest(f, 0, 1, NULL, 0, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.dropped, 1);
  sl_frame_free(f);
}

/* The G-test over two strata of c: scipy's G per stratum summed,
** 8.161371152850784 + 0.27049561624885876, df 1 + 1.  Tables (a rows,
** b columns): c = 0: [[10, 20], [30, 15]]; c = 1: [[5, 5], [8, 12]]. */
static void test_gtest(void **state) {
  (void)state;
  static const int cnt[2][2][2] = {{{10, 20}, {30, 15}}, {{5, 5}, {8, 12}}};
  size_t n = 0;
  for (int c = 0; c < 2; c++)
    for (int i = 0; i < 2; i++)
      for (int j = 0; j < 2; j++) n += (size_t)cnt[c][i][j];
  double a[200], b[200], cc[200];
  size_t k = 0;
  for (int c = 0; c < 2; c++)
    for (int i = 0; i < 2; i++)
      for (int j = 0; j < 2; j++)
        for (int m = 0; m < cnt[c][i][j]; m++) { a[k] = i; b[k] = j; cc[k] = c; k++; }
  sl_error e;
  sl_frame *f = sl_frame_alloc(n);
  assert_int_equal(sl_frame_add_numeric(f, "a", a, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "b", b, &e), 0);
  assert_int_equal(sl_frame_add_numeric(f, "c", cc, &e), 0);
  sl_ci_result r;
  int given[1] = {2};
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_GTEST, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.test, SL_CI_G);
  double g = 8.161371152850784 + 0.27049561624885876;
  assert_close(r.stat, g, 1e-12, "G");
  assert_close(r.df, 2, 0, "df");
  assert_close(r.effect, sqrt(1 - exp(-g / (double)n)), 1e-12, "implied correlation");
  /* 105 rows for 8 cells: the automatic choice is the G-test too */
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.test, SL_CI_G);
  /* the bootstrap: an interval, the same bits for the same seed */
  sl_ci_result r1, r2;
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_GTEST, 0.95, 200, 7, &r1, &e), 0);
  assert_int_equal(sl_citest(f, 0, 1, given, 1, SL_CI_GTEST, 0.95, 200, 7, &r2, &e), 0);
  assert_int_equal(r1.boot_done, 200);
  assert_true(r1.lo < r1.effect && r1.effect < r1.hi);
  assert_memory_equal(&r1.lo, &r2.lo, sizeof r1.lo);
  assert_memory_equal(&r1.hi, &r2.hi, sizeof r1.hi);
  sl_frame_free(f);
}

/* Holm and Benjamini-Hochberg: statsmodels multipletests on
** [0.01, 0.04, 0.03, 0.005, 0.5]; a NaN (not tested) is left out. */
static void test_adjust(void **state) {
  (void)state;
  const double p[6] = {0.01, 0.04, NAN, 0.03, 0.005, 0.5};
  const double holm[6] = {0.04, 0.09, NAN, 0.09, 0.025, 0.5};
  const double bh[6] = {0.024999999999999998, 0.049999999999999996, NAN,
                        0.049999999999999996, 0.024999999999999998, 0.5};
  double out[6];
  sl_error e;
  assert_int_equal(sl_citest_adjust(p, 6, SL_ADJ_HOLM, out, &e), 0);
  for (int i = 0; i < 6; i++)
    if (isnan(holm[i])) assert_true(isnan(out[i])); else assert_close(out[i], holm[i], 1e-15, "holm");
  assert_int_equal(sl_citest_adjust(p, 6, SL_ADJ_BH, out, &e), 0);
  for (int i = 0; i < 6; i++)
    if (isnan(bh[i])) assert_true(isnan(out[i])); else assert_close(out[i], bh[i], 1e-15, "bh");
  double q[6];
  memcpy(q, p, sizeof q);                 /* in place */
  assert_int_equal(sl_citest_adjust(q, 6, SL_ADJ_HOLM, q, &e), 0);
  assert_close(q[0], 0.04, 1e-15, "holm in place");
  assert_int_equal(sl_citest_adjust(p, 6, 9, out, &e), SL_EARG);
}

/* ---- a lazy table: the test inside the database (SQLite) ---- */

static char dbpath[64];

/* Row i of table u: smooth deterministic columns, well conditioned; x is
** missing in rows 3 and 17, w in row 8; d1, d2 are 0/1; w2 = 2 w is
** aliased with w, near = w + 1e-6 v nearly so (sine about 4e-6). */
static void u_row(int i, double *x, double *y, double *w, double *v, int *d1, int *d2) {
  *x = 2 * sin(0.7 * i) + 0.05 * i;
  *y = cos(1.1 * i) + 0.3 * *x + 0.2 * sin(0.37 * i + 1);
  *w = sin(0.37 * i + 1);
  *v = (i % 7) - 3 + 0.5 * cos(2.3 * i);
  *d1 = (i * 7) % 5 < 2;
  *d2 = i % 3 == 0;
}

/* The file: t holds A, B, Z above (k constant, s text) and a row whose a
** is missing; u holds 40 rows of u_row. */
static int make_db(void **state) {
  (void)state;
  snprintf(dbpath, sizeof dbpath, "/tmp/sluice-test-citest-XXXXXX");
  int fd = mkstemp(dbpath);
  if (fd < 0) return -1;
  close(fd);
  sqlite3 *h;
  sqlite3_stmt *st;
  if (sqlite3_open(dbpath, &h) != SQLITE_OK) return -1;
  int rc = sqlite3_exec(h, "CREATE TABLE t (a REAL, b REAL, z REAL, k INTEGER, s TEXT);"
                        "INSERT INTO t VALUES (NULL, 4.0, 1.0, 3, 'p');"
                        "CREATE TABLE u (x REAL, y REAL, w REAL, v REAL, d1 INTEGER, "
                        "d2 INTEGER, w2 REAL, near REAL);", NULL, NULL, NULL);
  rc |= sqlite3_prepare_v2(h, "INSERT INTO t VALUES (?, ?, ?, 3, 'q')", -1, &st, NULL);
  for (int i = 0; rc == SQLITE_OK && i < 10; i++) {
    sqlite3_bind_double(st, 1, A[i]); sqlite3_bind_double(st, 2, B[i]);
    sqlite3_bind_double(st, 3, Z[i]);
    rc = sqlite3_step(st) == SQLITE_DONE ? SQLITE_OK : SQLITE_ERROR;
    sqlite3_reset(st);
  }
  sqlite3_finalize(st);
  rc |= sqlite3_prepare_v2(h, "INSERT INTO u VALUES (?, ?, ?, ?, ?, ?, ?, ?)", -1, &st, NULL);
  for (int i = 0; rc == SQLITE_OK && i < 40; i++) {
    double x, y, w, v;
    int d1, d2;
    u_row(i, &x, &y, &w, &v, &d1, &d2);
    if (i == 3 || i == 17) sqlite3_bind_null(st, 1); else sqlite3_bind_double(st, 1, x);
    sqlite3_bind_double(st, 2, y);
    if (i == 8) sqlite3_bind_null(st, 3); else sqlite3_bind_double(st, 3, w);
    sqlite3_bind_double(st, 4, v);
    sqlite3_bind_int(st, 5, d1); sqlite3_bind_int(st, 6, d2);
    sqlite3_bind_double(st, 7, 2 * w); sqlite3_bind_double(st, 8, w + 1e-6 * v);
    rc = sqlite3_step(st) == SQLITE_DONE ? SQLITE_OK : SQLITE_ERROR;
    sqlite3_reset(st);
  }
  sqlite3_finalize(st);
  sqlite3_close(h);
  return rc == SQLITE_OK ? 0 : -1;
}

static int drop_db(void **state) {
  (void)state;
  unlink(dbpath);
  return 0;
}

/* A lazy table of the file and its column index by name. */
static sl_db_table *lazy(sl_db **db, const char *name) {
  sl_error e;
  *db = sl_db_open(dbpath, NULL, &e);
  assert_non_null(*db);
  sl_db_table *t = sl_db_table_open(*db, name, &e);
  assert_non_null(t);
  return t;
}

static int col(const sl_db_table *t, const char *name) {
  for (size_t j = 0; j < sl_db_ncol(t); j++)
    if (strcmp(sl_db_colname(t, j), name) == 0) return (int)j;
  fail_msg("no column %s", name);
  return -1;
}

/* The scipy values of test_partial, from the database: the row with a
** missing a is dropped and counted; the linear LR test of the same pair is
** -n log(1 - r^2), the Gaussian likelihood ratio of the nested fits when
** one column is added (worked from scipy's r). */
static void test_db_partial(void **state) {
  (void)state;
  sl_db *db;
  sl_db_table *t = lazy(&db, "t");
  sl_ci_result r;
  sl_error e;
  int a = col(t, "a"), b = col(t, "b"), z[2] = {col(t, "z"), col(t, "k")};
  assert_int_equal(sl_citest_db(t, a, b, z, 1, SL_CI_AUTO, 0.95, &r, &e), 0);
  assert_int_equal(r.test, SL_CI_FISHER);
  assert_int_equal(r.n, 10);
  assert_int_equal(r.dropped, 1);
  assert_close(r.effect, 0.8711491585379191, 1e-12, "partial r");
  assert_close(r.stat, 3.276991771007898, 1e-12, "Fisher z");
  assert_close(r.p, 0.001049194271974336, 1e-9, "p");
  assert_close(r.lo, 0.49122551266123454, 1e-12, "lower limit");
  assert_close(r.hi, 0.9725835569723642, 1e-12, "upper limit");
  assert_true(isnan(r.df));
  assert_int_equal(sl_citest_db(t, a, b, NULL, 0, SL_CI_PARTIAL, 0.95, &r, &e), 0);
  assert_close(r.effect, 0.953166561825219, 1e-12, "Pearson r");
  assert_int_equal(sl_citest_db(t, a, b, z, 2, SL_CI_AUTO, 0.95, &r, &e), 0);
  assert_close(r.effect, 0.8711491585379191, 1e-12, "partial r with a constant column");
  assert_non_null(strstr(r.note, "'k' is constant"));
  assert_int_equal(sl_citest_db(t, a, b, z, 1, SL_CI_LR, 0.95, &r, &e), 0);
  double rho = 0.8711491585379191;
  assert_int_equal(r.test, SL_CI_LR_LINEAR);
  assert_int_equal(r.response, 0);
  assert_close(r.stat, -10 * log(1 - rho * rho), 1e-11, "LR");
  assert_close(r.df, 1, 0, "df");
  assert_close(r.effect, rho, 1e-12, "LR effect");
  sl_db_table_free(t);
  sl_db_close(db);
}

/* Every field of two results equal: counts and kinds exactly, numbers to
** 1e-9 relative (the sums are added in another order). */
static void same_result(const sl_ci_result *x, const sl_ci_result *y, const char *what) {
  if (x->test != y->test || x->n != y->n || x->dropped != y->dropped ||
      x->response != y->response || strcmp(x->note, y->note) != 0) {
    print_error("%s: test %d/%d, n %zu/%zu, dropped %zu/%zu, response %d/%d, note '%s'/'%s'\n",
                what, x->test, y->test, x->n, y->n, x->dropped, y->dropped, x->response,
                y->response, x->note, y->note);
    fail();
  }
  const double *a[] = {&x->effect, &x->lo, &x->hi, &x->stat, &x->df, &x->p},
               *b[] = {&y->effect, &y->lo, &y->hi, &y->stat, &y->df, &y->p};
  for (int k = 0; k < 6; k++) {
    if (isnan(*b[k])) assert_true(isnan(*a[k]));
    else assert_close(*a[k], *b[k], 1e-9, what);
  }
}

/* The lazy table against its fetched frame, test by test. */
static void test_db_frame(void **state) {
  (void)state;
  sl_db *db;
  sl_db_table *t = lazy(&db, "u");
  sl_error e;
  sl_frame *f = sl_db_fetch(t, SIZE_MAX, 0, &e);
  assert_non_null(f);
  int x = col(t, "x"), y = col(t, "y"), w = col(t, "w"), v = col(t, "v"), d1 = col(t, "d1"),
      d2 = col(t, "d2");
  struct { int a, b, ng, given[3], method; } cases[] = {
    {x, y, 0, {0}, SL_CI_AUTO}, {x, y, 1, {w}, SL_CI_AUTO}, {y, x, 2, {w, v}, SL_CI_AUTO},
    {x, y, 3, {w, v, d1}, SL_CI_PARTIAL}, {v, y, 2, {d1, d2}, SL_CI_AUTO},
    {x, y, 2, {w, v}, SL_CI_LR}, {v, x, 1, {d2}, SL_CI_LR}, {d1, x, 1, {w}, SL_CI_PARTIAL},
    {d1, d2, 0, {0}, SL_CI_PARTIAL},
  };
  for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++) {
    sl_ci_result rd, rf;
    char what[32];
    snprintf(what, sizeof what, "case %zu", k + 1);
    if (sl_citest_db(t, cases[k].a, cases[k].b, cases[k].given, (size_t)cases[k].ng,
                     cases[k].method, 0.9, &rd, &e))
      fail_msg("%s: %s", what, e.msg);
    assert_int_equal(sl_citest(f, cases[k].a, cases[k].b, cases[k].given, (size_t)cases[k].ng,
                               cases[k].method, 0.9, 0, 1, &rf, &e), 0);
    same_result(&rd, &rf, what);
  }
  sl_frame_free(f);
  sl_db_table_free(t);
  sl_db_close(db);
}

/* What the database does not do is refused by name, with the advice. */
static void test_db_refusals(void **state) {
  (void)state;
  sl_db *db;
  sl_db_table *t = lazy(&db, "u");
  sl_error e;
  sl_frame *f = sl_db_fetch(t, SIZE_MAX, 0, &e);
  sl_ci_result r;
  int x = col(t, "x"), y = col(t, "y"), w = col(t, "w"), d1 = col(t, "d1"), d2 = col(t, "d2"),
      w2 = col(t, "w2"), near = col(t, "near");
  assert_int_equal(sl_citest_db(t, x, y, NULL, 0, SL_CI_RESIDUAL, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "method = \"residual\""));
  assert_non_null(strstr(e.msg, "t:fetch()"));
  assert_int_equal(sl_citest_db(t, d1, d2, NULL, 0, SL_CI_GTEST, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "method = \"gtest\""));
  /* 40 rows for 4 cells: auto would run the G-test on the frame */
  assert_int_equal(sl_citest_db(t, d1, d2, NULL, 0, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "method = \"auto\" chose the G-test"));
  assert_non_null(strstr(e.msg, "method = \"partial\", which runs in the database"));
  assert_int_equal(r.n, 40);
  assert_int_equal(sl_citest(f, d1, d2, NULL, 0, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  assert_int_equal(r.test, SL_CI_G);
  /* a 0/1 column against a continuous one: the logistic LR test */
  assert_int_equal(sl_citest_db(t, x, d1, NULL, 0, SL_CI_LR, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "method = \"lr\" chose the likelihood-ratio test with 'd1' (0/1) "
                                "as a logistic response"));
  assert_int_equal(r.n, 38);
  assert_int_equal(r.dropped, 2);
  /* aliased conditioning columns: the frame's QR says so; from the sums
  ** an exact alias shows as a sine of rounding size (about 1e-8), which
  ** the database refuses as nearly aliased unless the pivot is not
  ** positive at all */
  int g2[2] = {w, w2};
  assert_int_equal(sl_citest(f, x, y, g2, 2, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_string_equal(e.msg, "conditioning column 'w2' is a linear combination of the "
                             "conditioning columns before it: drop it");
  assert_int_equal(sl_citest_db(t, x, y, g2, 2, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_true(strstr(e.msg, "conditioning column 'w2' is a linear combination") ||
              strstr(e.msg, "'w2' is nearly a linear function of the conditioning columns"));
  /* nearly aliased: the frame's QR copes, the database's sums would not */
  int gn[2] = {w, near};
  assert_int_equal(sl_citest_db(t, x, y, gn, 2, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'near' is nearly a linear function of the conditioning "
                                "columns before it"));
  assert_non_null(strstr(e.msg, "t:fetch()"));
  assert_int_equal(sl_citest(f, x, y, gn, 2, SL_CI_AUTO, 0.95, 0, 1, &r, &e), 0);
  /* a tested column that the conditioning set fits exactly (or nearly, as
  ** the sums see it) */
  int gw[1] = {w};
  assert_int_equal(sl_citest(f, w2, y, gw, 1, SL_CI_AUTO, 0.95, 0, 1, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'w2' is a linear function of the conditioning set"));
  assert_int_equal(sl_citest_db(t, w2, y, gw, 1, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'w2' is "));
  assert_non_null(strstr(e.msg, "linear function of the conditioning set"));
  /* text, the same column twice, a constant one, too few rows */
  sl_db *db2;
  sl_db_table *t2 = lazy(&db2, "t");
  assert_int_equal(sl_citest_db(t2, col(t2, "a"), col(t2, "s"), NULL, 0, SL_CI_PARTIAL, 0.95,
                                &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'s' has text values"));
  assert_int_equal(sl_citest_db(t2, 0, 0, NULL, 0, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  int ga[1] = {0};
  assert_int_equal(sl_citest_db(t2, 0, 1, ga, 1, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'a' is both tested and in the conditioning set"));
  assert_int_equal(sl_citest_db(t2, 0, col(t2, "k"), NULL, 0, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'k' is constant over the 10 complete rows"));
  int many[63] = {0};
  assert_int_equal(sl_citest_db(t2, 0, 1, many, 63, SL_CI_AUTO, 0.95, &r, &e), SL_ELIMIT);
  sl_db_table_free(t2);
  sl_db_close(db2);
  sl_db *db3;
  sl_db_table *q = NULL;
  db3 = sl_db_open(dbpath, NULL, &e);
  q = sl_db_query_open(db3, "SELECT x, y, w, v, d1, d2 FROM u LIMIT 8", &e);
  assert_non_null(q);
  int g4[4] = {2, 3, 4, 5};
  assert_int_equal(sl_citest_db(q, 0, 1, g4, 4, SL_CI_AUTO, 0.95, &r, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "too few rows: 7 complete rows for 4 conditioning columns "
                                "(the test needs at least 8)"));
  sl_db_table_free(q);
  sl_db_close(db3);
  sl_frame_free(f);
  sl_db_table_free(t);
  sl_db_close(db);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_partial),
    cmocka_unit_test(test_refusals),
    cmocka_unit_test(test_missing),
    cmocka_unit_test(test_gtest),
    cmocka_unit_test(test_adjust),
    cmocka_unit_test(test_db_partial),
    cmocka_unit_test(test_db_frame),
    cmocka_unit_test(test_db_refusals),
  };
  return cmocka_run_group_tests(tests, make_db, drop_db);
}
