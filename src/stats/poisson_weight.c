/*
** poisson_weight.c: Poisson(1) weights from a hash of (key, seed, r), in C
** and as SQL text that computes the same integers (poisson_weight.h).
**
** The hash.  M = 2^30 - 35 is prime.  The key k (64 bits) goes in as three
** pieces, each a truncating division or remainder as C and both SQL
** engines compute them, made positive:
**   k0 = k % M + M,  k1 = k / M % M + M  (both in [1, 2M)),
**   k2 = k / M / M + 9  (in [1, 17], since |k| < 2^63 < 9 M^2),
** which determine k, since k = (k2 - 9) M^2 + (k1 - M) M + (k0 - M); the
** replicate goes in as r % M.  From x = x0, each round i takes in one of
** them, v, by x = (x (v + a_i) + b_i) % M, in the order of ORDER below:
** r, k0, k1, k2 twice, then r, k0.  Each input is thus multiplied by
** what earlier rounds made of the others and of itself, so h is a
** polynomial of degree 3 in r and k0 and 2 in k1 and k2, with coefficients
** from the seed: weights of neighbouring keys, of keys M or M^2 apart and
** of neighbouring replicates are uncorrelated (measured in the tests).  A
** round of x * x would do as well but writes x twice, doubling the SQL
** text each time; here each round adds a constant length.
**
** Bounds: x < M < 2^30, v + a_i < 3M < 2^32, so x (v + a_i) + b_i < 2^62,
** well inside the signed 64 bits of SQLite (which would turn an overflow
** into a float) and PostgreSQL's bigint (which would raise an error).
** Every operand is positive, so % gives the same result everywhere.
**
** The seed's constants x0, a_i, b_i in [1, M) are SplitMix64's outputs
** (Steele, Lea and Flood 2014) from the seed, reduced.
*/
#include <inttypes.h>
#include <stdlib.h>
#include "db_internal.h"
#include "poisson_weight.h"

#define M SL_POIS_M

/* The input of each round: r, k0, k1, k2 (see above). */
static const char ORDER[SL_POIS_ROUNDS] = {'r', '0', '1', '2', 'r', '0', '1', '2', 'r', '0'};

/* floor(M F(j)) for j = 0..11, F the Poisson(1) CDF, F(j) = e^-1 sum_{i<=j}
** 1/i!; computed with 60 decimal digits (Python's decimal module), and
** checked against scipy.stats.poisson.cdf in the tests.  The fraction of
** M F(j) is nowhere within 0.009 of an integer.  The draw is the number of
** thresholds at or below h, so P(draw = j) = (T[j] - T[j - 1]) / M. */
static const int64_t T[SL_POIS_MAX] = {
  395007529, 790015058, 987518823, 1053353411, 1069812058, 1073103787,
  1073652409, 1073730784, 1073740580, 1073741669, 1073741778, 1073741788
};

/* SplitMix64: the next output of the state *s. */
static uint64_t splitmix64(uint64_t *s) {
  uint64_t z = (*s += 0x9E3779B97F4A7C15u);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9u;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBu;
  return z ^ (z >> 31);
}

static int64_t constant(uint64_t *s) {
  return (int64_t)(splitmix64(s) % (M - 1)) + 1;
}

void sl_pois_init(sl_pois *p, uint64_t seed) {
  uint64_t s = seed;
  p->x0 = constant(&s);
  for (int i = 0; i < SL_POIS_ROUNDS; i++) {
    p->a[i] = constant(&s);
    p->b[i] = constant(&s);
  }
}

int64_t sl_pois_hash(const sl_pois *p, int64_t key, uint32_t r) {
  int64_t in[4];
  in[0] = (int64_t)(r % M);
  in[1] = key % M + M;
  in[2] = key / M % M + M;
  in[3] = key / M / M + 9;
  int64_t x = p->x0;
  for (int i = 0; i < SL_POIS_ROUNDS; i++) {
    int64_t v = in[ORDER[i] == 'r' ? 0 : ORDER[i] - '0' + 1];
    x = (x * (v + p->a[i]) + p->b[i]) % M;
  }
  return x;
}

int sl_pois_draw(int64_t h) {
  int j = 0;
  while (j < SL_POIS_MAX && h >= T[j]) j++;
  return j;
}

int sl_pois_at(const sl_pois *p, int64_t key, uint32_t r) {
  return sl_pois_draw(sl_pois_hash(p, key, r));
}

int sl_pois_weight(int64_t key, uint64_t seed, uint32_t r) {
  sl_pois p;
  sl_pois_init(&p, seed);
  return sl_pois_at(&p, key, r);
}

/* ---- the same in SQL ---- */

/* Round i's input plus its constant a as SQL (k: the key as a bigint;
** r_sql: the replicate), the input's own offset (M or 9) added to a. */
static void sql_input(sl_db_buf *b, char which, const char *k, const char *r_sql, int64_t a) {
  switch (which) {
  case 'r': sl_db_buf_add(b, "CAST((%s) AS BIGINT)%%%d+%" PRId64, r_sql, M, a); break;
  case '0': sl_db_buf_add(b, "%s%%%d+%" PRId64, k, M, M + a); break;
  case '1': sl_db_buf_add(b, "%s/%d%%%d+%" PRId64, k, M, M, M + a); break;
  default:  sl_db_buf_add(b, "%s/%d/%d+%" PRId64, k, M, M, 9 + a); break;
  }
}

/* The hash: "((...((x0)*(v1+a1)+b1)%M ...)*(v10+a10)+b10)%M".  SQL's *, /
** and % bind alike, from the left, as C's do. */
void sl_pois_sql_hash(sl_db_buf *b, const char *key_sql, const char *r_sql, uint64_t seed) {
  sl_pois p;
  sl_pois_init(&p, seed);
  sl_db_buf k = {0};
  sl_db_buf_add(&k, "CAST((%s) AS BIGINT)", key_sql);
  if (k.bad) { b->bad = 1; free(k.s); return; }
  sl_db_buf_add(b, "(");
  for (int i = 0; i < SL_POIS_ROUNDS; i++) sl_db_buf_add(b, "((");
  sl_db_buf_add(b, "%" PRId64, p.x0);
  for (int i = 0; i < SL_POIS_ROUNDS; i++) {
    sl_db_buf_add(b, ")*(");
    sql_input(b, ORDER[i], k.s, r_sql, p.a[i]);
    sl_db_buf_add(b, ")+%" PRId64 ")%%%d", p.b[i], M);
  }
  sl_db_buf_add(b, ")");
  free(k.s);
}

/* The draw from a hash: the number of thresholds at or below it. */
void sl_pois_sql_draw(sl_db_buf *b, const char *h_sql) {
  sl_db_buf_add(b, "(CASE");
  for (int j = 0; j < SL_POIS_MAX; j++)
    sl_db_buf_add(b, " WHEN (%s)<%" PRId64 " THEN %d", h_sql, T[j], j);
  sl_db_buf_add(b, " ELSE %d END)", SL_POIS_MAX);
}

void sl_pois_sql(sl_db_buf *b, const char *key_sql, const char *r_sql, uint64_t seed) {
  sl_db_buf h = {0};
  sl_pois_sql_hash(&h, key_sql, r_sql, seed);
  if (h.bad) { b->bad = 1; free(h.s); return; }
  sl_pois_sql_draw(b, h.s);
  free(h.s);
}

/* ---- the database's weights, for the tests ---- */

typedef struct gather { int *w; size_t n, cap; } gather;

static int gather_row(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  gather *g = ctx;
  (void)i;
  if (g->n == g->cap) {
    size_t cap = g->cap ? 2 * g->cap : 1024;
    int *w = realloc(g->w, cap * sizeof *w);
    if (!w) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    g->w = w;
    g->cap = cap;
  }
  const sl_db_ops *ops = r->db->ops;
  g->w[g->n++] = ops->kind(r, 0) == SL_DB_CELL_NULL ? -1 : (int)ops->number(r, 0);
  return SL_OK;
}

int sl_pois_db(const sl_db_table *t, size_t key, uint64_t seed, uint32_t r, int **w,
               size_t *n, sl_error *e) {
  *w = NULL;
  *n = 0;
  if (key >= sl_db_ncol(t))
    return sl_error_set(e, SL_EARG, 0, 0, "column %zu is out of range", key + 1);
  if (sl_db_coltype(t, key) != SL_NUMERIC)
    return sl_error_set(e, SL_EARG, 0, 0, "the key column '%s' holds texts, not integers",
                        sl_db_colname(t, key));
  sl_db *db = sl_db_of(t);
  if (!sl_db_is_open(db))
    return sl_error_set(e, SL_EARG, 0, 0, "the connection is closed (db:close()); connect again");
  char *q = sl_db_quote_ident(sl_db_colname(t, key), e);
  if (!q) return e->code;
  char ph[16];
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT ");
  sl_pois_sql(&b, q, sl_db_placeholder(db, 1, ph), seed);
  sl_db_buf_add(&b, " FROM %s WHERE %s IS NOT NULL ORDER BY CAST(%s AS BIGINT)", sl_db_from(t),
                q, q);
  free(q);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  sl_db_param par = {.is_int = 1, .i = (int64_t)r};
  gather g = {0};
  int status = db->ops->exec(db, sql, &par, 1, gather_row, &g, e);
  free(sql);
  if (status == SL_DB_STOP) status = SL_OK;
  if (status != SL_OK) { free(g.w); return status; }
  *w = g.w;
  *n = g.n;
  return SL_OK;
}
