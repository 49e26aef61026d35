/*
** test_db_regress.c: ols and logit of a lazy table summed inside an SQLite
** file (src/stats/db_regress.c); PostgreSQL is checked against a real
** server by tests/shell/postgres.sh (tests/lua/db_engines.lua).
**
** Where the expected values come from:
**   - NIST StRD Longley (tests/data/nist/Longley.dat, its certified
**     coefficients, standard deviations, residual SD and R^2);
**   - the in-memory fits sl_ols_opts and sl_logit_opts of the same rows,
**     which test_regress.c holds to NIST StRD and statsmodels, to 1e-9
**     relative on well-conditioned rows (invented by a fixed generator).
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

#include "db.h"
#include "db_regress.h"

#define ROWS 300
#define HOSTILE_COL "w\"; DROP TABLE t; --"

static char path[64];

/* Longley (NIST StRD): y x1 .. x6. */
static const double longley[16][7] = {
  {60323, 83.0, 234289, 2356, 1590, 107608, 1947}, {61122, 88.5, 259426, 2325, 1456, 108632, 1948},
  {60171, 88.2, 258054, 3682, 1616, 109773, 1949}, {61187, 89.5, 284599, 3351, 1650, 110929, 1950},
  {63221, 96.2, 328975, 2099, 3099, 112075, 1951}, {63639, 98.1, 346999, 1932, 3594, 113270, 1952},
  {64989, 99.0, 365385, 1870, 3547, 115094, 1953}, {63761, 100.0, 363112, 3578, 3350, 116219, 1954},
  {66019, 101.2, 397469, 2904, 3048, 117388, 1955}, {67857, 104.6, 419180, 2822, 2857, 118734, 1956},
  {68169, 108.4, 442769, 2936, 2798, 120445, 1957}, {66513, 110.8, 444546, 4681, 2637, 121950, 1958},
  {68655, 112.6, 482704, 3813, 2552, 123366, 1959}, {69564, 114.2, 502601, 3931, 2514, 125368, 1960},
  {69331, 115.7, 518173, 4806, 2572, 127852, 1961}, {70551, 116.9, 554894, 4007, 2827, 130081, 1962},
};

/* A fixed generator (splitmix64), for rows that stay the same. */
static uint64_t state_rng = 12345;
static double unif(void) {
  uint64_t z = (state_rng += 0x9E3779B97F4A7C15u);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9u;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBu;
  return (double)((z ^ (z >> 31)) >> 11) / 9007199254740992.0;
}

/* The rows of table r: y, x1, x2, the 0/1 outcome b, a text g, and the
** hostile-named copy of x1; every 17th row misses x2, every 23rd y. */
static double R[ROWS][4];
static int Rmiss[ROWS][2];

/* Database: r (the rows above), longley. */
static int make_db(void **st) {
  (void)st;
  snprintf(path, sizeof path, "/tmp/sluice-test-dbreg-XXXXXX");
  int fd = mkstemp(path);
  if (fd < 0) return -1;
  close(fd);
  sqlite3 *h;
  if (sqlite3_open(path, &h) != SQLITE_OK) return -1;
  int rc = sqlite3_exec(h, "BEGIN; CREATE TABLE r (y REAL, x1 REAL, x2 INTEGER, b INTEGER, g TEXT,"
                        " \"" "w\"\"; DROP TABLE t; --" "\" REAL);"
                        "CREATE TABLE longley (y REAL, x1 REAL, x2 REAL, x3 REAL, x4 REAL,"
                        " x5 REAL, x6 REAL); CREATE TABLE t (a INTEGER);", NULL, NULL, NULL);
  sqlite3_stmt *s;
  sqlite3_prepare_v2(h, "INSERT INTO r VALUES (?1, ?2, ?3, ?4, ?5, ?2)", -1, &s, NULL);
  for (int i = 0; i < ROWS; i++) {
    double x1 = 10 + 3 * unif(), x2 = floor(50 * unif()), u = unif();
    double eta = -0.5 + 0.8 * (x1 - 11.5) - 0.03 * (x2 - 25);
    double y = 2 + 1.5 * x1 - 0.2 * x2 + (unif() - 0.5) * (1 + x1 / 5);
    R[i][0] = y; R[i][1] = x1; R[i][2] = x2; R[i][3] = u < 1 / (1 + exp(-eta));
    Rmiss[i][0] = i % 23 == 5;
    Rmiss[i][1] = i % 17 == 3;
    sqlite3_reset(s);
    if (Rmiss[i][0]) sqlite3_bind_null(s, 1); else sqlite3_bind_double(s, 1, y);
    sqlite3_bind_double(s, 2, x1);
    if (Rmiss[i][1]) sqlite3_bind_null(s, 3); else sqlite3_bind_int(s, 3, (int)x2);
    sqlite3_bind_int(s, 4, (int)R[i][3]);
    sqlite3_bind_text(s, 5, i % 2 ? "p" : "q", -1, SQLITE_STATIC);
    if (sqlite3_step(s) != SQLITE_DONE) rc = -1;
  }
  sqlite3_finalize(s);
  sqlite3_prepare_v2(h, "INSERT INTO longley VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)", -1, &s, NULL);
  for (int i = 0; i < 16; i++) {
    sqlite3_reset(s);
    for (int j = 0; j < 7; j++) sqlite3_bind_double(s, j + 1, longley[i][j]);
    if (sqlite3_step(s) != SQLITE_DONE) rc = -1;
  }
  sqlite3_finalize(s);
  if (sqlite3_exec(h, "COMMIT", NULL, NULL, NULL) != SQLITE_OK) rc = -1;
  sqlite3_close(h);
  return rc == SQLITE_OK ? 0 : -1;
}

static int drop_db(void **st) {
  (void)st;
  unlink(path);
  return 0;
}

static void assert_close(double x, double ref, double tol, const char *what) {
  if (!(fabs(x - ref) <= tol * fabs(ref))) {
    fprintf(stderr, "%s: got %.17g, expected %.17g (relative %.3g)\n", what, x, ref,
            fabs(x - ref) / fabs(ref));
    fail();
  }
}

/* The complete rows of r for y (column 0 or 3) on x1, x2: X with an
** intercept, y; returns n. */
static size_t design(int ycol, double *X, double *y) {
  size_t n = 0;
  for (int i = 0; i < ROWS; i++) {
    if ((ycol == 0 && Rmiss[i][0]) || Rmiss[i][1]) continue;
    X[3 * n] = 1; X[3 * n + 1] = R[i][1]; X[3 * n + 2] = R[i][2];
    y[n++] = R[i][ycol];
  }
  return n;
}

static const char *const names[] = {"(intercept)", "x1", "x2"};

/* Least squares in the database equals the in-memory fit of the same rows. */
static void test_ols_equals_memory(void **st) {
  (void)st;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  assert_non_null(db);
  sl_db_table *t = sl_db_table_open(db, "r", &e);
  assert_non_null(t);
  static double X[3 * ROWS], y[ROWS];
  size_t n = design(0, X, y);
  int x[] = {1, 2};
  sl_vcov_kind kinds[] = {SL_VCOV_CLASSICAL, SL_VCOV_HC0, SL_VCOV_HC1};
  for (int k = 0; k < 3; k++) {
    sl_fit a, b;
    uint64_t dropped = 0;
    sl_fit_opts o = {NULL, kinds[k], NULL, 0};
    assert_int_equal(sl_db_ols(t, 0, x, 2, kinds[k], names, &a, &dropped, &e), SL_OK);
    assert_int_equal(sl_ols_opts(X, y, n, 3, names, &o, &b, &e), SL_OK);
    assert_int_equal(a.n, n);
    assert_int_equal(dropped, ROWS - n);
    for (int j = 0; j < 3; j++) {
      assert_close(a.coef[j], b.coef[j], 1e-9, "ols coef");
      assert_close(a.se[j], b.se[j], 1e-9, "ols classical se");
      assert_close(a.se_chosen[j], b.se_chosen[j], 1e-9, "ols chosen se");
    }
    assert_close(a.sigma, b.sigma, 1e-9, "ols sigma");
    assert_close(a.r2, b.r2, 1e-9, "ols R^2");
    assert_close(a.adj_r2, b.adj_r2, 1e-9, "ols adjusted R^2");
    assert_close(a.df, b.df, 0, "ols df");
    sl_fit_free(&a);
    sl_fit_free(&b);
  }
  sl_db_table_free(t);
  sl_db_close(db);
}

/* Logistic regression in the database equals the in-memory fit: the same
** coefficients, SEs, sandwich, log-likelihood and iterations. */
static void test_logit_equals_memory(void **st) {
  (void)st;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "r", &e);
  assert_non_null(t);
  static double X[3 * ROWS], y[ROWS];
  size_t n = design(3, X, y);
  int x[] = {1, 2};
  sl_vcov_kind kinds[] = {SL_VCOV_CLASSICAL, SL_VCOV_HC0, SL_VCOV_HC1};
  for (int k = 0; k < 3; k++) {
    sl_fit a, b;
    uint64_t dropped = 0;
    char wa[256], wb[256];
    sl_fit_opts o = {NULL, kinds[k], NULL, 0};
    assert_int_equal(sl_db_logit(t, 3, x, 2, kinds[k], names, 0, 0, &a, &dropped, wa,
                                 sizeof wa, &e), SL_OK);
    assert_int_equal(sl_logit_opts(X, y, n, 3, names, &o, 0, 0, &b, wb, sizeof wb, &e), SL_OK);
    assert_int_equal(a.n, n);
    assert_int_equal(dropped, ROWS - n);
    assert_int_equal(a.iterations, b.iterations);
    assert_true(a.converged);
    assert_string_equal(wa, "");
    for (int j = 0; j < 3; j++) {
      assert_close(a.coef[j], b.coef[j], 1e-9, "logit coef");
      assert_close(a.se[j], b.se[j], 1e-9, "logit se");
      assert_close(a.robust_se[j], b.robust_se[j], 1e-9, "logit sandwich se");
      assert_close(a.se_chosen[j], b.se_chosen[j], 1e-9, "logit chosen se");
    }
    assert_close(a.loglik, b.loglik, 1e-12, "logit log-likelihood");
    sl_fit_free(&a);
    sl_fit_free(&b);
  }
  sl_db_table_free(t);
  sl_db_close(db);
}

/* NIST StRD Longley, certified values (tests/data/nist/Longley.dat): the
** centred sums keep about 9 digits of this ill-conditioned problem. */
static void test_longley(void **st) {
  (void)st;
  static const double b[] = {-3482258.63459582, 15.0618722713733, -0.358191792925910E-01,
                             -2.02022980381683, -1.03322686717359, -0.511041056535807E-01,
                             1829.15146461355};
  static const double sd[] = {890420.383607373, 84.9149257747669, 0.334910077722432E-01,
                              0.488399681651699, 0.214274163161675, 0.226073200069370,
                              455.478499142212};
  static const char *const ln[] = {"(intercept)", "x1", "x2", "x3", "x4", "x5", "x6"};
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "longley", &e);
  assert_non_null(t);
  int x[] = {1, 2, 3, 4, 5, 6};
  sl_fit f;
  uint64_t dropped;
  assert_int_equal(sl_db_ols(t, 0, x, 6, SL_VCOV_CLASSICAL, ln, &f, &dropped, &e), SL_OK);
  for (int j = 0; j < 7; j++) {
    assert_close(f.coef[j], b[j], 1e-7, "Longley coefficient");
    assert_close(f.se[j], sd[j], 1e-7, "Longley standard deviation");
  }
  assert_close(f.sigma, 304.854073561965, 1e-8, "Longley residual SD");
  assert_close(f.r2, 0.995479004577296, 1e-10, "Longley R^2");
  sl_fit_free(&f);
  sl_db_table_free(t);
  sl_db_close(db);
}

/* A hostile column name is a regressor like any other. */
static void test_hostile(void **st) {
  (void)st;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "r", &e);
  assert_string_equal(sl_db_colname(t, 5), HOSTILE_COL);
  int x1[] = {1, 2}, xh[] = {5, 2};
  sl_fit a, b;
  uint64_t d1, d2;
  assert_int_equal(sl_db_ols(t, 0, x1, 2, SL_VCOV_HC1, names, &a, &d1, &e), SL_OK);
  assert_int_equal(sl_db_ols(t, 0, xh, 2, SL_VCOV_HC1, names, &b, &d2, &e), SL_OK);
  for (int j = 0; j < 3; j++) assert_true(a.coef[j] == b.coef[j] && a.se[j] == b.se[j]);
  sl_fit_free(&a);
  sl_fit_free(&b);
  sl_db_table *q = sl_db_table_open(db, "t", &e);   /* still there */
  assert_non_null(q);
  sl_db_table_free(q);
  sl_db_table_free(t);
  sl_db_close(db);
}

/* Refusals name what was wrong. */
static void test_errors(void **st) {
  (void)st;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "r", &e);
  sl_fit f;
  uint64_t d;
  char w[128];
  int x[] = {1, 2}, xg[] = {1, 4}, xy[] = {0}, xdup[] = {1, 5};
  assert_int_equal(sl_db_ols(t, 0, x, 2, SL_VCOV_HC3, names, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "HC3"));
  assert_int_equal(sl_db_ols(t, 0, x, 2, SL_VCOV_CLUSTER, names, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "cluster"));
  assert_int_equal(sl_db_ols(t, 0, xg, 2, SL_VCOV_CLASSICAL, names, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'g' has text values"));
  assert_int_equal(sl_db_ols(t, 0, xy, 1, SL_VCOV_CLASSICAL, names, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "both the response and a regressor"));
  /* x1 and its copy under the hostile name: aliased, as the in-memory fit says */
  static const char *const nd[] = {"(intercept)", "x1", HOSTILE_COL};
  assert_int_equal(sl_db_ols(t, 0, xdup, 2, SL_VCOV_CLASSICAL, nd, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "column '" HOSTILE_COL "' is a linear combination"));
  assert_int_equal(sl_db_logit(t, 0, x, 2, SL_VCOV_CLASSICAL, names, 0, 0, &f, &d, w, sizeof w,
                               &e), SL_EARG);
  assert_non_null(strstr(e.msg, "0/1 response; 'y' takes other values"));
  /* x1 + 1e-7 x2 beside x1: a sine near 2e-6 (sd of x2 about 14, of x1
  ** about 0.87), which the in-memory QR fits but the p x p sums cannot
  ** hold to the digits: refused, naming the column */
  sl_db_table *q = sl_db_query_open(db, "SELECT y, x1, x1 + 1e-7 * x2 AS near FROM r", &e);
  assert_non_null(q);
  static const char *const nn[] = {"(intercept)", "x1", "near"};
  assert_int_equal(sl_db_ols(q, 0, x, 2, SL_VCOV_CLASSICAL, nn, &f, &d, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "column 'near' is nearly a linear combination"));
  assert_non_null(strstr(e.msg, "fetch the rows"));
  sl_db_table_free(q);
  sl_db_table_free(t);
  sl_db_close(db);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_ols_equals_memory),
    cmocka_unit_test(test_logit_equals_memory),
    cmocka_unit_test(test_longley),
    cmocka_unit_test(test_hostile),
    cmocka_unit_test(test_errors),
  };
  return cmocka_run_group_tests(tests, make_db, drop_db);
}
