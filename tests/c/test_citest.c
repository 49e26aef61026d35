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
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "citest.h"
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

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_partial),
    cmocka_unit_test(test_refusals),
    cmocka_unit_test(test_missing),
    cmocka_unit_test(test_gtest),
    cmocka_unit_test(test_adjust),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
