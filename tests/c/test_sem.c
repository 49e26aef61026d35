/*
** test_sem.c: the simulation of linear structural models (src/stats/sem.c)
** and its normal stream (src/stats/gauss.c).
**
** References, named beside each check:
** - GSL 2.7 (Debian libgsl27): gsl_rng_mt19937 with gsl_rng_set, and
**   gsl_ran_gaussian_ziggurat(r, 1.0); the stream of gauss.c must be GSL's,
**   value for value.
** - The C++ standard ([rand.predef], ISO/IEC 14882:2011 26.5.5): the
**   10000th output of mt19937 default-constructed (seed 5489) is
**   4123659995.
** - The simulated rows are defined as before the chunked solver: the rows
**   of block b from a generator seeded with SplitMix64 (Steele, Lea and
**   Flood 2014) of (seed, b), drawn row by row, each row solved in
**   topological order.  sim_reference() below writes that definition out
**   with GSL alone, so a change of values or of their order fails here.
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
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "gauss.h"
#include "sem.h"

#define REF_BLOCK 65536   /* rows per generator, as sem.c's BLOCK_ROWS */

/* ---- the normal stream against GSL ---- */

/* Seeds GSL treats specially (0: its default 4357) or truncates (above
** 2^32 the first word keeps the low 32 bits). */
static const unsigned long seeds[] = {0, 1, 2, 4357, 5489, 0x100000000ul, 0xdeadbeefcafef00dul};

static void gauss_is_gsl(void **state) {
  (void)state;
  sl_gauss *g = malloc(sizeof *g);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  double *a = malloc(1000 * sizeof *a);
  assert_non_null(g); assert_non_null(r); assert_non_null(a);
  for (size_t s = 0; s < sizeof seeds / sizeof *seeds; s++) {
    sl_gauss_seed(g, seeds[s]);
    gsl_rng_set(r, seeds[s]);
    for (int t = 0; t < 300; t++) {    /* 3e5 normals: the rare steps too */
      size_t k = 1 + (size_t)t % 997;  /* batches that straddle the refills */
      sl_gauss_normals(g, a, k);
      for (size_t q = 0; q < k; q++) {
        double want = gsl_ran_gaussian_ziggurat(r, 1.0);   /* GSL 2.7 */
        assert_memory_equal(&a[q], &want, sizeof want);
      }
      sl_gauss_uniforms(g, a, 3);
      for (size_t q = 0; q < 3; q++) {
        double want = gsl_rng_uniform(r);                  /* GSL 2.7 */
        assert_memory_equal(&a[q], &want, sizeof want);
      }
    }
  }
  free(a); free(g);
  gsl_rng_free(r);
}

/* The generator is MT19937: the standard's check value. */
static void gauss_is_mt19937(void **state) {
  (void)state;
  sl_gauss *g = malloc(sizeof *g);
  assert_non_null(g);
  sl_gauss_seed(g, 5489);
  double u[10000];
  sl_gauss_uniforms(g, u, 10000);
  assert_true(u[9999] * 4294967296.0 == 4123659995.0);   /* C++11 [rand.predef] */
  free(g);
}

/* ---- models ---- */

/* A model of n nodes v1..vn, each with up to three parents among the next
** three nodes (so the topological order runs from vn down to v1), a few nodes are hidden, correlated errors between
** some pairs; flags add a logistic node and a binarized one. */
static void model(sl_sem *m, size_t n, int logistic, int binarized) {
  char (*nm)[24] = malloc(n * sizeof *nm);   /* "v" and any size_t */
  const char **names = malloc(n * sizeof *names);
  unsigned char *obs = malloc(n), *lg = calloc(n, 1);
  double *B = calloc(n * n, sizeof *B), *a = malloc(n * sizeof *a);
  double *om = calloc(n * n, sizeof *om), *cut = malloc(n * sizeof *cut);
  int32_t *ord = malloc(n * sizeof *ord);
  assert_true(nm && names && obs && lg && B && a && om && cut && ord);
  for (size_t i = 0; i < n; i++) {
    snprintf(nm[i], sizeof nm[i], "v%zu", i + 1);
    names[i] = nm[i];
    obs[i] = i % 7 != 3;                     /* v4, v11, v18 hidden */
    a[i] = 0.1 * (double)(i % 5);
    om[i * n + i] = 1 + 0.1 * (double)(i % 3);
    cut[i] = NAN;
    ord[i] = (int32_t)(n - 1 - i);
    for (size_t d = 1; d <= 3 && i + d < n; d++)
      if ((i + d) % 4 != 0) B[i * n + (i + d)] = 0.25 + 0.05 * (double)((i * 3 + d) % 7);
  }
  for (size_t i = 0; i + 5 < n; i += 6) om[i * n + i + 5] = om[(i + 5) * n + i] = 0.3;
  if (logistic) lg[n / 2] = 1;
  if (binarized) cut[n / 3] = 0.2;
  sl_error e;
  memset(&e, 0, sizeof e);
  assert_int_equal(sl_sem_init(m, n, names, obs, B, a, om, cut, lg, ord, &e), SL_OK);
  free(nm); free(names); free(obs); free(lg); free(B); free(a); free(om); free(cut); free(ord);
}

/* SplitMix64 of (seed, block): the seed of a block's generator. */
static uint64_t block_seed(uint64_t seed, uint64_t k) {
  uint64_t z = seed + 0x9E3779B97F4A7C15ull * (k + 1);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

/* The definition of the rows, with GSL alone, one row at a time: column
** c of the observed nodes into out[c * rows + row]. */
static void sim_reference(const sl_sem *m, size_t rows, uint64_t seed, double *out) {
  size_t n = m->n;
  double *z = malloc(n * sizeof *z), *u = malloc(n * sizeof *u), *x = malloc(n * sizeof *x);
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  assert_true(z && u && x && r);
  for (size_t row = 0; row < rows; row++) {
    if (row % REF_BLOCK == 0) gsl_rng_set(r, (unsigned long)block_seed(seed, row / REF_BLOCK));
    for (size_t i = 0; i < n; i++) z[i] = gsl_ran_gaussian_ziggurat(r, 1.0);
    if (m->any_logistic)
      for (size_t i = 0; i < n; i++) u[i] = gsl_rng_uniform(r);
    for (size_t k = 0; k < n; k++) {
      size_t i = (size_t)m->order[k];
      double v = m->a[i];
      for (size_t j = 0; j < n; j++)
        if (m->B[i * n + j] != 0) v += m->B[i * n + j] * x[j];
      if (m->logistic[i]) v = u[i] < 1 / (1 + exp(-v)) ? 1 : 0;
      else {
        for (size_t j = 0; j < n; j++)
          if (m->chol[i * n + j] != 0) v += m->chol[i * n + j] * z[j];
        if (!isnan(m->cut[i])) v = v > m->cut[i] ? 1 : 0;
      }
      x[i] = v;
    }
    for (size_t i = 0, c = 0; i < n; i++)
      if (m->observed[i]) out[c++ * rows + row] = x[i];
  }
  free(z); free(u); free(x);
  gsl_rng_free(r);
}

/* Every cell of f equals the reference, bit for bit. */
static void same_as_reference(const sl_frame *f, const double *ref, size_t rows) {
  for (size_t c = 0; c < f->ncol; c++)
    assert_memory_equal(f->col[c].x, ref + c * rows, rows * sizeof(double));
}

/* The chunked, threaded simulation gives the rows of the definition, for
** plain, logistic and binarized models, across block boundaries. */
static void simulate_is_the_definition(void **state) {
  (void)state;
  size_t rows = 2 * REF_BLOCK + 1001;        /* three blocks, the last one short */
  for (int kind = 0; kind < 3; kind++) {
    sl_sem m;
    model(&m, 20, kind == 1, kind == 2);
    double *ref = malloc(20 * rows * sizeof *ref);
    assert_non_null(ref);
    sim_reference(&m, rows, 42 + (uint64_t)kind, ref);
    sl_error e;
    memset(&e, 0, sizeof e);
    sl_frame *f = sl_sem_simulate(&m, rows, 42 + (uint64_t)kind, 2, &e);
    assert_non_null(f);
    assert_int_equal(f->ncol, 17);           /* 20 nodes, 3 hidden */
    assert_string_equal(f->col[0].name, "v1");
    same_as_reference(f, ref, rows);
    sl_frame_free(f);
    free(ref);
    sl_sem_free(&m);
  }
}

/* The same frame whatever the thread count (1, 2, 3, 5 and all cores),
** with a logistic node so uniforms are drawn between the normals. */
static void simulate_same_bits_any_threads(void **state) {
  (void)state;
  sl_sem m;
  model(&m, 20, 1, 1);
  size_t rows = 5 * REF_BLOCK + 17;
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_frame *one = sl_sem_simulate(&m, rows, 9, 1, &e);
  assert_non_null(one);
  const int threads[] = {2, 3, 5, 0};
  for (size_t t = 0; t < sizeof threads / sizeof *threads; t++) {
    sl_frame *f = sl_sem_simulate(&m, rows, 9, threads[t], &e);
    assert_non_null(f);
    assert_int_equal(f->ncol, one->ncol);
    for (size_t c = 0; c < f->ncol; c++)
      assert_memory_equal(f->col[c].x, one->col[c].x, rows * sizeof(double));
    sl_frame_free(f);
  }
  sl_frame *other = sl_sem_simulate(&m, rows, 10, 2, &e);   /* another seed differs */
  assert_non_null(other);
  assert_true(memcmp(other->col[0].x, one->col[0].x, rows * sizeof(double)) != 0);
  sl_frame_free(other);
  sl_frame_free(one);
  sl_sem_free(&m);
}

/* Many nodes and few rows: chunks of a few dozen rows, columns below one
** huge page (plain malloc); the values are still the definition's. */
static void simulate_wide_and_short(void **state) {
  (void)state;
  sl_sem m;
  model(&m, 300, 0, 1);
  size_t rows = 70;
  double *ref = malloc(300 * rows * sizeof *ref);
  assert_non_null(ref);
  sim_reference(&m, rows, 5, ref);
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_frame *f = sl_sem_simulate(&m, rows, 5, 3, &e);
  assert_non_null(f);
  same_as_reference(f, ref, rows);
  sl_frame_free(f);
  free(ref);
  sl_sem_free(&m);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(gauss_is_gsl),
    cmocka_unit_test(gauss_is_mt19937),
    cmocka_unit_test(simulate_is_the_definition),
    cmocka_unit_test(simulate_same_bits_any_threads),
    cmocka_unit_test(simulate_wide_and_short),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
