/*
** test_bootstrap.c: the bootstrap's fast routes (boot_linear.c,
** boot_aipw.c) against the full refit of the same resample
** (sl_est_point on the drawn rows, which the oracles check against
** statsmodels), with and without weights; the fall-back on an
** ill-conditioned replicate; and replicates bit-identical whatever the
** number of threads.
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "estimate_internal.h"

/* An invented field trial: covariates c1 (normal), c2 (0/1), t by a
** logistic in them, y linear with an interaction, w weights 0.5..2.5. */
static sl_frame *trial(size_t n, unsigned long seed) {
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  gsl_rng_set(r, seed);
  double *c1 = malloc(n * sizeof *c1), *c2 = malloc(n * sizeof *c2), *t = malloc(n * sizeof *t);
  double *y = malloc(n * sizeof *y), *w = malloc(n * sizeof *w);
  for (size_t i = 0; i < n; i++) {
    c1[i] = gsl_ran_gaussian(r, 1);
    c2[i] = gsl_rng_uniform(r) < 0.4;
    t[i] = gsl_rng_uniform(r) < 1 / (1 + exp(-(0.5 * c1[i] - 0.8 * c2[i])));
    y[i] = 1 + 2 * t[i] + c1[i] - 0.5 * c2[i] + 0.7 * t[i] * c1[i] + gsl_ran_gaussian(r, 1);
    w[i] = 0.5 + 2 * gsl_rng_uniform(r);
  }
  sl_frame *f = sl_frame_alloc(n);
  sl_error e;
  assert_int_equal(sl_frame_add_numeric(f, "c1", c1, &e), SL_OK);
  assert_int_equal(sl_frame_add_numeric(f, "c2", c2, &e), SL_OK);
  assert_int_equal(sl_frame_add_numeric(f, "t", t, &e), SL_OK);
  assert_int_equal(sl_frame_add_numeric(f, "y", y, &e), SL_OK);
  assert_int_equal(sl_frame_add_numeric(f, "w", w, &e), SL_OK);
  free(c1); free(c2); free(t); free(y); free(w);
  gsl_rng_free(r);
  return f;
}

static const int SET[] = {0, 1};

static sl_est_spec spec_of(const sl_frame *f, int method, int estimand, int weights) {
  sl_est_spec s;
  memset(&s, 0, sizeof s);
  s.data = f; s.treatment = 2; s.outcome = 3; s.set = SET; s.nset = 2;
  s.method = method; s.estimand = estimand; s.interactions = 1; s.contrast = 1;
  s.trunc_lo = 0; s.trunc_hi = 100; s.level = 0.95; s.seed = 7;
  s.weights = weights ? 5 : 0;
  return s;
}

/* Draw n rows, as bootstrap.c does; their counts (times the weights). */
static void resample(gsl_rng *r, const sl_prep *P, size_t *ix, double *count) {
  memset(count, 0, P->n * sizeof *count);
  for (size_t k = 0; k < P->n; k++) {
    ix[k] = (size_t)gsl_rng_uniform_int(r, P->n);
    count[ix[k]] += 1;
  }
  for (size_t k = 0; P->w && k < P->n; k++) count[k] *= P->w[k];
}

static void same_as_refit(int method, int estimand, int weights) {
  sl_frame *f = trial(500, 3);
  sl_est_spec s = spec_of(f, method, estimand, weights);
  sl_prep P;
  size_t dropped;
  sl_error e;
  assert_int_equal(sl_est_prepare(&s, &P, &dropped, &e), SL_OK);
  sl_boot_linear L;
  sl_boot_aipw A;
  double *work;
  if (method == SL_STANDARDIZE) {
    assert_int_equal(sl_boot_linear_init(&s, &P, 1, &L, &e), SL_OK);
    work = malloc(sl_boot_linear_work(&L) * sizeof *work);
  } else {
    assert_int_equal(sl_boot_aipw_init(&s, &P, &A, &e), SL_OK);
    work = malloc(sl_boot_aipw_work(&A) * sizeof *work);
  }
  size_t *ix = malloc(P.n * sizeof *ix);
  double *count = malloc(P.n * sizeof *count);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  gsl_rng_set(r, 11);
  for (int b = 0; b < 20; b++) {
    resample(r, &P, ix, count);
    double fast;
    int rc = method == SL_STANDARDIZE ? sl_boot_linear_point(&s, &L, count, work, &fast)
                                      : sl_boot_aipw_point(&s, &P, &A, count, work, &fast);
    assert_int_equal(rc, 0);
    sl_point pt;
    char warn[SL_WARN_MAX] = "";
    assert_int_equal(sl_est_point(&s, &P, ix, P.n, 0, &pt, warn, &e), SL_OK);
    if (fabs(fast - pt.est) > 1e-9 * fabs(pt.est))
      fail_msg("replicate %d: fast %.17g, refit %.17g", b, fast, pt.est);
  }
  gsl_rng_free(r);
  free(ix); free(count); free(work);
  if (method == SL_STANDARDIZE) sl_boot_linear_free(&L); else sl_boot_aipw_free(&A);
  sl_est_prep_free(&P);
  sl_frame_free(f);
}

static void test_linear_routes(void **state) {
  (void)state;
  same_as_refit(SL_STANDARDIZE, SL_ATE, 0);
  same_as_refit(SL_STANDARDIZE, SL_ATT, 0);
  same_as_refit(SL_STANDARDIZE, SL_ATC, 1);
}

static void test_aipw_routes(void **state) {
  (void)state;
  same_as_refit(SL_AIPW, SL_ATE, 0);
  same_as_refit(SL_AIPW, SL_ATT, 1);
  same_as_refit(SL_AIPW, SL_ATC, 0);
}

/* Two covariates equal but for one row in 10^9: the normal equations of
** a replicate are refused, and the bootstrap falls back on the QR refit. */
static void test_ill_conditioned(void **state) {
  (void)state;
  sl_frame *f = trial(300, 5);
  double *near = malloc(300 * sizeof *near);
  for (size_t i = 0; i < 300; i++) near[i] = f->col[0].x[i] + (i == 17 ? 1e-9 : 0);
  sl_error e;
  assert_int_equal(sl_frame_add_numeric(f, "c1b", near, &e), SL_OK);
  free(near);
  static const int set3[] = {0, 5};
  sl_est_spec s = spec_of(f, SL_STANDARDIZE, SL_ATE, 0);
  s.set = set3;
  s.interactions = 0;
  sl_prep P;
  size_t dropped;
  assert_int_equal(sl_est_prepare(&s, &P, &dropped, &e), SL_OK);
  sl_boot_linear L;
  assert_int_equal(sl_boot_linear_init(&s, &P, 0, &L, &e), SL_OK);
  double *work = malloc(sl_boot_linear_work(&L) * sizeof *work), *count = malloc(P.n * sizeof *count);
  for (size_t k = 0; k < P.n; k++) count[k] = 1;
  double est;
  assert_int_equal(sl_boot_linear_point(&s, &L, count, work, &est), 1);
  free(work); free(count);
  sl_boot_linear_free(&L);
  sl_est_prep_free(&P);
  sl_frame_free(f);
}

/* The replicates, and so the SE and the interval, are the same bits with
** one thread and with four. */
static void test_threads(void **state) {
  (void)state;
  sl_frame *f = trial(400, 9);
  for (int method = SL_STANDARDIZE; method <= SL_AIPW; method++) {
    sl_est_result r1, r4;
    sl_error e;
    sl_est_spec s = spec_of(f, method, SL_ATE, 1);
    s.boot = 50;
    s.threads = 1;
    assert_int_equal(sl_estimate(&s, &r1, &e), SL_OK);
    s.threads = 4;
    assert_int_equal(sl_estimate(&s, &r4, &e), SL_OK);
    assert_memory_equal(&r1.se, &r4.se, sizeof r1.se);
    assert_memory_equal(&r1.lo, &r4.lo, sizeof r1.lo);
    assert_memory_equal(&r1.hi, &r4.hi, sizeof r1.hi);
  }
  sl_frame_free(f);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_linear_routes),
    cmocka_unit_test(test_aipw_routes),
    cmocka_unit_test(test_ill_conditioned),
    cmocka_unit_test(test_threads),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
