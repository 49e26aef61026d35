/*
** test_poisson_weight.c: the Poisson bootstrap's row weights
** (src/stats/poisson_weight.c): their distribution, their independence
** between neighbouring keys and replicates, extreme keys, and the SQL text
** run by SQLite giving the C value for every row.  PostgreSQL runs the
** same text in tests/lua/db_pois.lua (through tests/shell/postgres.sh).
**
** Reference values, from Debian's python3-scipy 1.10.1:
**   - scipy.stats.poisson.pmf(range(5), 1) and .sf(4, 1) (and .sf(3, 1))
**     for the expected frequencies of 0..4 and 5 or more;
**   - floor(M * scipy.stats.poisson.cdf(j, 1)), j = 0..11, M = 1073741789,
**     the thresholds (the same as with 60 digits in Python's decimal);
**   - scipy.stats.poisson.stats(1, moments='mvsk') = (1, 1, 1, 1): mean 1,
**     variance 1 and excess kurtosis 1, so the fourth central moment is 4
**     and the sample variance has standard error sqrt((4 - 1) / n);
**   - scipy.stats.chi2.ppf(0.999, 5) = 20.515005652432873 for the 6
**     frequencies of 0..5+, and scipy.stats.chi2.ppf(0.999, 24) =
**     51.17859777737739 for the 5 x 5 table of neighbouring draws (0..3,
**     4+) against the product of the Poisson probabilities.
** Correlations: under independence sqrt(n) r is about N(0, 1), so |r| <
** 4 / sqrt(n) is the bar (Fisher 1915; from memory).
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

#include "db_internal.h"
#include "poisson_weight.h"

#define M SL_POIS_M
#define NK 1000          /* keys ... */
#define NR 1000          /* ... times replicates: 10^6 draws a set */

/* scipy.stats.poisson.pmf(range(5), 1), then .sf(4, 1). */
static const double PMF6[6] = {0.3678794411714424, 0.3678794411714424, 0.18393972058572117,
                               0.06131324019524039, 0.015328310048810103,
                               0.003659846827343713};
/* the same for 0..3 and 4 or more (.sf(3, 1)) */
static const double PMF5[5] = {0.3678794411714424, 0.3678794411714424, 0.18393972058572117,
                               0.06131324019524039, 0.01898815687615381};
/* floor(M * scipy.stats.poisson.cdf(j, 1)), j = 0..11 */
static const int64_t SCIPY_T[12] = {395007529, 790015058, 987518823, 1053353411, 1069812058,
                                    1073103787, 1073652409, 1073730784, 1073740580,
                                    1073741669, 1073741778, 1073741788};
#define CHI2_5  20.515005652432873
#define CHI2_24 51.17859777737739

/* SplitMix64, for keys spread over the 64 bits (not the code's copy). */
static uint64_t mix(uint64_t *s) {
  uint64_t z = (*s += 0x9E3779B97F4A7C15u);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9u;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBu;
  return z ^ (z >> 31);
}

/* ---- the thresholds ---- */

static void test_thresholds(void **state) {
  (void)state;
  assert_int_equal(sl_pois_draw(0), 0);
  for (int j = 0; j < 12; j++) {
    assert_int_equal(sl_pois_draw(SCIPY_T[j] - 1), j);
    assert_int_equal(sl_pois_draw(SCIPY_T[j]), j + 1);
  }
  assert_int_equal(sl_pois_draw(M - 1), SL_POIS_MAX);
  /* and the same from the CDF by long double, as a second derivation */
  long double f = 0, term = expl(-1.0L);
  for (int j = 0; j < 12; j++) {
    f += term;
    term /= j + 1;
    assert_int_equal((int64_t)floorl(M * f), SCIPY_T[j]);
  }
}

/* ---- the distribution and the independence, over a grid of draws ---- */

typedef struct stats {
  double chi6, mean, var;          /* frequencies of 0..5+; moments */
  double corr_r, corr_k;           /* replicate r with r + 1; key k with the next key */
  double chi_r, chi_k;             /* the 5 x 5 tables of those pairs */
} stats;

/* w[i * NR + j]: the draw of key i in replicate j + 1. */
static void grid(const int64_t *keys, uint64_t seed, unsigned char *w) {
  sl_pois p;
  sl_pois_init(&p, seed);
  for (size_t i = 0; i < NK; i++)
    for (size_t j = 0; j < NR; j++) w[i * NR + j] = (unsigned char)sl_pois_at(&p, keys[i], (uint32_t)j + 1);
}

/* Pearson's correlation of n pairs. */
typedef struct pairs { double n, sa, sb, saa, sbb, sab; double t[5][5]; } pairs;
static void pair_add(pairs *q, int a, int b) {
  q->n++; q->sa += a; q->sb += b; q->saa += a * a; q->sbb += b * b; q->sab += a * b;
  q->t[a < 4 ? a : 4][b < 4 ? b : 4]++;
}
static double pair_corr(const pairs *q) {
  double ca = q->saa - q->sa * q->sa / q->n, cb = q->sbb - q->sb * q->sb / q->n;
  return (q->sab - q->sa * q->sb / q->n) / sqrt(ca * cb);
}
static double pair_chi(const pairs *q) {
  double x = 0;
  for (int a = 0; a < 5; a++)
    for (int b = 0; b < 5; b++) {
      double e = q->n * PMF5[a] * PMF5[b];
      x += (q->t[a][b] - e) * (q->t[a][b] - e) / e;
    }
  return x;
}

static stats measure(const unsigned char *w) {
  stats s;
  double n = (double)NK * NR, sum = 0, ss = 0, obs[6] = {0};
  for (size_t i = 0; i < (size_t)NK * NR; i++) {
    sum += w[i];
    ss += (double)w[i] * w[i];
    obs[w[i] < 5 ? w[i] : 5]++;
  }
  s.mean = sum / n;
  s.var = (ss - sum * sum / n) / (n - 1);
  s.chi6 = 0;
  for (int j = 0; j < 6; j++) s.chi6 += (obs[j] - n * PMF6[j]) * (obs[j] - n * PMF6[j]) / (n * PMF6[j]);
  pairs pr = {0}, pk = {0};
  for (size_t i = 0; i < NK; i++)
    for (size_t j = 0; j + 1 < NR; j++) pair_add(&pr, w[i * NR + j], w[i * NR + j + 1]);
  for (size_t i = 0; i + 1 < NK; i++)
    for (size_t j = 0; j < NR; j++) pair_add(&pk, w[i * NR + j], w[(i + 1) * NR + j]);
  s.corr_r = pair_corr(&pr);
  s.corr_k = pair_corr(&pk);
  s.chi_r = pair_chi(&pr);
  s.chi_k = pair_chi(&pk);
  return s;
}

/* The checks of the brief on one set of keys; prints the figures. */
static void check_set(const char *what, const int64_t *keys, uint64_t seed) {
  unsigned char *w = malloc((size_t)NK * NR);
  assert_non_null(w);
  grid(keys, seed, w);
  stats s = measure(w);
  free(w);
  double n = (double)NK * NR, np = (double)NK * (NR - 1);
  printf("  %-22s chi2(5) %6.2f  mean %.5f  var %.5f  corr r,r+1 %+.5f  k,k' %+.5f  "
         "chi2(24) r %6.2f k %6.2f\n", what, s.chi6, s.mean, s.var, s.corr_r, s.corr_k,
         s.chi_r, s.chi_k);
  assert_true(s.chi6 < CHI2_5);
  assert_true(fabs(s.mean - 1) < 4 * sqrt(1 / n));
  assert_true(fabs(s.var - 1) < 4 * sqrt(3 / n));
  assert_true(fabs(s.corr_r) < 4 / sqrt(np));
  assert_true(fabs(s.corr_k) < 4 / sqrt(np));
  assert_true(s.chi_r < CHI2_24);
  assert_true(s.chi_k < CHI2_24);
}

static void test_distribution(void **state) {
  (void)state;
  int64_t k[NK];
  for (int i = 0; i < NK; i++) k[i] = i + 1;
  check_set("keys 1..1000", k, 20240611);
  check_set("keys 1..1000, seed 2", k, 2);
  for (int i = 0; i < NK; i++) k[i] = -(i + 1);
  check_set("keys -1..-1000", k, 20240611);
  for (int i = 0; i < NK; i++) k[i] = INT64_MIN + i;
  check_set("keys from INT64_MIN", k, 7);
  for (int i = 0; i < NK; i++) k[i] = INT64_MAX - i;
  check_set("keys to INT64_MAX", k, 7);
  for (int i = 0; i < NK; i++) k[i] = (int64_t)i * M + 5;       /* only k1 differs */
  check_set("keys M apart", k, 11);
  for (int i = 0; i < NK; i++) k[i] = (int64_t)(i - NK / 2) * 4294967296 - 3;
  check_set("keys 2^32 apart", k, 11);
  uint64_t s = 99;
  for (int i = 0; i < NK; i++) k[i] = (int64_t)mix(&s);
  check_set("keys at random", k, 12);
}

/* Keys M^2 apart differ in the highest piece only (17 values of it). */
static void test_far_keys(void **state) {
  (void)state;
  const int64_t m2 = (int64_t)M * M;
  sl_pois p;
  sl_pois_init(&p, 3);
  pairs q = {0};
  for (uint32_t r = 1; r <= 100000; r++)
    for (int j = -8; j < 7; j++)
      pair_add(&q, sl_pois_at(&p, j * m2 + 12345, r), sl_pois_at(&p, (j + 1) * m2 + 12345, r));
  printf("  keys M^2 apart: corr %+.5f chi2(24) %.2f over %.0f pairs\n", pair_corr(&q),
         pair_chi(&q), q.n);
  assert_true(fabs(pair_corr(&q)) < 4 / sqrt(q.n));
  assert_true(pair_chi(&q) < CHI2_24);
}

/* Seeds s and s + 1 give unrelated weights; the seed's 64 bits all count. */
static void test_seeds(void **state) {
  (void)state;
  uint64_t seeds[][2] = {{1, 2}, {20240611, 20240612}, {0, UINT64_C(1) << 63},
                         {UINT64_MAX, UINT64_MAX - 1}};
  for (size_t s = 0; s < sizeof seeds / sizeof seeds[0]; s++) {
    sl_pois a, b;
    sl_pois_init(&a, seeds[s][0]);
    sl_pois_init(&b, seeds[s][1]);
    pairs q = {0};
    for (int64_t k = 1; k <= 1000; k++)
      for (uint32_t r = 1; r <= 200; r++) pair_add(&q, sl_pois_at(&a, k, r), sl_pois_at(&b, k, r));
    assert_true(fabs(pair_corr(&q)) < 4 / sqrt(q.n));
    assert_true(pair_chi(&q) < CHI2_24);
  }
}

/* Any key, any replicate number: a hash in [0, M), a draw in 0..12, the
** same on every call; replicates r and r + M alike (as documented). */
static void test_extremes(void **state) {
  (void)state;
  const int64_t keys[] = {INT64_MIN, INT64_MIN + 1, -(int64_t)M * M * 8, -(int64_t)M, -1, 0, 1,
                          M, (int64_t)M * M * 8, INT64_MAX - 1, INT64_MAX};
  const uint32_t reps[] = {0, 1, 2, M - 1, M, UINT32_MAX};
  sl_pois p;
  sl_pois_init(&p, UINT64_MAX);
  for (size_t i = 0; i < sizeof keys / sizeof keys[0]; i++)
    for (size_t j = 0; j < sizeof reps / sizeof reps[0]; j++) {
      int64_t h = sl_pois_hash(&p, keys[i], reps[j]);
      assert_true(h >= 0 && h < M);
      int w = sl_pois_weight(keys[i], UINT64_MAX, reps[j]);
      assert_int_equal(w, sl_pois_draw(h));
      assert_true(w >= 0 && w <= SL_POIS_MAX);
    }
  assert_int_equal(sl_pois_hash(&p, 77, M), sl_pois_hash(&p, 77, 0));
  /* the key's pieces tell every key apart: the extremes and their
  ** neighbours do not share hashes in every replicate */
  for (size_t i = 0; i + 1 < sizeof keys / sizeof keys[0]; i++) {
    int same = 1;
    for (uint32_t r = 1; r <= 8 && same; r++)
      same = sl_pois_hash(&p, keys[i], r) == sl_pois_hash(&p, keys[i + 1], r);
    assert_false(same);
  }
}

/* ---- the SQL, run by SQLite ---- */

/* The SQL text of the weight (hash_only: of the hash) for key_sql, r_sql. */
static char *sql_of(const char *key_sql, const char *r_sql, uint64_t seed, int hash_only) {
  sl_db_buf b = {0};
  if (hash_only) sl_pois_sql_hash(&b, key_sql, r_sql, seed);
  else sl_pois_sql(&b, key_sql, r_sql, seed);
  sl_error e;
  return sl_db_buf_done(&b, &e);
}

/* An in-memory database with keys(k) of nk keys and reps(r). */
static sqlite3 *keys_db(const int64_t *keys, size_t nk, const int64_t *reps, size_t nr) {
  sqlite3 *h;
  assert_int_equal(sqlite3_open(":memory:", &h), SQLITE_OK);
  assert_int_equal(sqlite3_exec(h, "CREATE TABLE keys (k INTEGER); CREATE TABLE reps (r INTEGER);"
                                "BEGIN", NULL, NULL, NULL), SQLITE_OK);
  sqlite3_stmt *st;
  assert_int_equal(sqlite3_prepare_v2(h, "INSERT INTO keys VALUES (?)", -1, &st, NULL), SQLITE_OK);
  for (size_t i = 0; i < nk; i++) {
    sqlite3_bind_int64(st, 1, keys[i]);
    assert_int_equal(sqlite3_step(st), SQLITE_DONE);
    sqlite3_reset(st);
  }
  sqlite3_finalize(st);
  assert_int_equal(sqlite3_prepare_v2(h, "INSERT INTO reps VALUES (?)", -1, &st, NULL), SQLITE_OK);
  for (size_t i = 0; i < nr; i++) {
    sqlite3_bind_int64(st, 1, reps[i]);
    assert_int_equal(sqlite3_step(st), SQLITE_DONE);
    sqlite3_reset(st);
  }
  sqlite3_finalize(st);
  assert_int_equal(sqlite3_exec(h, "COMMIT", NULL, NULL, NULL), SQLITE_OK);
  return h;
}

/* 10^5 keys (in order, negative, at both ends of 64 bits, at random) in
** several replicates (a column) and two seeds: SQLite's hash and draw are
** integers (no overflow turned them into floats) equal to C's. */
static void test_sql_sqlite(void **state) {
  (void)state;
  enum { NKEY = 100000 };
  int64_t *keys = malloc(NKEY * sizeof *keys);
  assert_non_null(keys);
  uint64_t s = 5;
  for (int i = 0; i < 20000; i++) {
    keys[i] = i;
    keys[20000 + i] = -1 - i;
    keys[40000 + i] = INT64_MIN + i;
    keys[60000 + i] = INT64_MAX - i;
    keys[80000 + i] = (int64_t)mix(&s);
  }
  const int64_t reps[] = {0, 1, 2, 999, UINT32_MAX};
  sqlite3 *h = keys_db(keys, NKEY, reps, 5);
  const uint64_t seeds[] = {20240611, UINT64_MAX};
  size_t rows = 0, len = 0;
  for (int si = 0; si < 2; si++) {
    char *hash = sql_of("k", "r", seeds[si], 1), *w = sql_of("k", "r", seeds[si], 0);
    assert_non_null(hash);
    assert_non_null(w);
    len = strlen(w);
    char *sql = malloc(strlen(hash) + strlen(w) + 64);
    sprintf(sql, "SELECT k, r, %s, %s FROM keys CROSS JOIN reps", hash, w);
    sqlite3_stmt *st;
    assert_int_equal(sqlite3_prepare_v2(h, sql, -1, &st, NULL), SQLITE_OK);
    sl_pois p;
    sl_pois_init(&p, seeds[si]);
    int rc;
    while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
      int64_t k = sqlite3_column_int64(st, 0), r = sqlite3_column_int64(st, 1);
      assert_int_equal(sqlite3_column_type(st, 2), SQLITE_INTEGER);
      assert_int_equal(sqlite3_column_type(st, 3), SQLITE_INTEGER);
      int64_t hc = sl_pois_hash(&p, k, (uint32_t)r);
      if (sqlite3_column_int64(st, 2) != hc || sqlite3_column_int(st, 3) != sl_pois_draw(hc))
        fail_msg("key %lld r %lld seed %llu: SQLite %lld/%d, C %lld/%d", (long long)k,
                 (long long)r, (unsigned long long)seeds[si], (long long)sqlite3_column_int64(st, 2),
                 sqlite3_column_int(st, 3), (long long)hc, sl_pois_draw(hc));
      rows++;
    }
    assert_int_equal(rc, SQLITE_DONE);
    sqlite3_finalize(st);
    free(sql);
    free(hash);
    free(w);
  }
  assert_int_equal(rows, 2 * 5 * NKEY);
  printf("  SQLite = C on %zu rows; the weight's SQL is %zu bytes\n", rows, len);
  assert_true(len < 16384);
  sqlite3_close(h);
  free(keys);
}

/* Keys and replicates as other expressions: literals, a real number, a
** text of digits, sums; the draw from a hash column of an inner SELECT. */
static void test_sql_forms(void **state) {
  (void)state;
  sqlite3 *h;
  assert_int_equal(sqlite3_open(":memory:", &h), SQLITE_OK);
  struct { const char *key, *r; int64_t k; uint32_t rv; } f[] = {
    {"42", "7", 42, 7}, {"42.0", "'7'", 42, 7}, {"'-9223372036854775807'", "3", -INT64_MAX, 3},
    {"40 + 2", "3 + 4", 42, 7}, {"-9223372036854775807 - 1", "4294967295", INT64_MIN, UINT32_MAX},
  };
  for (size_t i = 0; i < sizeof f / sizeof f[0]; i++) {
    char *w = sql_of(f[i].key, f[i].r, 9, 0), *hs = sql_of(f[i].key, f[i].r, 9, 1);
    sl_db_buf d = {0};
    sl_pois_sql_draw(&d, "hv");
    sl_error e;
    char *draw = sl_db_buf_done(&d, &e);
    char *sql = malloc(strlen(w) + strlen(hs) + strlen(draw) + 64);
    sprintf(sql, "SELECT %s, %s FROM (SELECT %s AS hv) AS s", w, draw, hs);
    sqlite3_stmt *st;
    assert_int_equal(sqlite3_prepare_v2(h, sql, -1, &st, NULL), SQLITE_OK);
    assert_int_equal(sqlite3_step(st), SQLITE_ROW);
    int want = sl_pois_weight(f[i].k, 9, f[i].rv);
    assert_int_equal(sqlite3_column_int(st, 0), want);
    assert_int_equal(sqlite3_column_int(st, 1), want);
    sqlite3_finalize(st);
    free(sql); free(draw); free(hs); free(w);
  }
  sqlite3_close(h);
}

/* sl_pois_db on a lazy table of an SQLite file: ordered by key, NULL keys
** left out, a text key refused by name, a closed connection said. */
static void test_db_table(void **state) {
  (void)state;
  char path[64];
  snprintf(path, sizeof path, "/tmp/sluice-test-pois-XXXXXX");
  int fd = mkstemp(path);
  assert_true(fd >= 0);
  close(fd);
  sqlite3 *h;
  assert_int_equal(sqlite3_open(path, &h), SQLITE_OK);
  assert_int_equal(sqlite3_exec(h, "CREATE TABLE t (\"the \"\"key\", name TEXT);"
                                "INSERT INTO t VALUES (5, 'e'), (-3, 'c'), (NULL, 'n'),"
                                "(9223372036854775807, 'z'), (0, 'a'), (5, 'e2');",
                                NULL, NULL, NULL), SQLITE_OK);
  sqlite3_close(h);
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  assert_non_null(db);
  sl_db_table *t = sl_db_table_open(db, "t", &e);
  assert_non_null(t);
  int *w;
  size_t n;
  assert_int_equal(sl_pois_db(t, 0, 31, 4, &w, &n, &e), SL_OK);
  const int64_t order[] = {-3, 0, 5, 5, INT64_MAX};
  assert_int_equal(n, 5);
  for (size_t i = 0; i < n; i++) assert_int_equal(w[i], sl_pois_weight(order[i], 31, 4));
  free(w);
  assert_int_equal(sl_pois_db(t, 1, 31, 4, &w, &n, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'name' holds texts"));
  assert_null(w);
  sl_db_disconnect(db);
  assert_int_equal(sl_pois_db(t, 0, 31, 4, &w, &n, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "connection is closed"));
  sl_db_table_free(t);
  sl_db_close(db);
  unlink(path);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_thresholds),
    cmocka_unit_test(test_distribution),
    cmocka_unit_test(test_far_keys),
    cmocka_unit_test(test_seeds),
    cmocka_unit_test(test_extremes),
    cmocka_unit_test(test_sql_sqlite),
    cmocka_unit_test(test_sql_forms),
    cmocka_unit_test(test_db_table),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
