/*
** bench_frontdoor.c: the listings of g:frontdoor and g:instruments on
** random graphs of 1e3 nodes, and the check of one front-door set.
**
**   bench_frontdoor NODES EDGES BIDIRECTED SEED LIMIT
**
** Builds a random graph (directed edges along a random order, <-> edges
** between random pairs), then looks among random pairs (x, y) with a
** directed path for the one whose front-door listing is longest (up to
** LIMIT sets, at most 20 pairs tried).  For that pair: the time to the
** first set and the delay between sets (CLOCK_MONOTONIC in the callback),
** the time of sl_frontdoor_check on a listed set (best of 5) beside one
** d-separation query of x and y on the same graph, and the listing of the
** instruments for the same pair: time to the first and the delay.  Every
** listed set is checked with sl_frontdoor_check (untimed); exit status 1
** when one fails.  On stdout: key=value pairs.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "graph.h"
#include "separation.h"
#include "frontdoor.h"
#include "instrument.h"

static uint64_t state = 0x9E3779B97F4A7C15ull;
static uint64_t rnd(void) {
  state ^= state << 13; state ^= state >> 7; state ^= state << 17;
  return state;
}

static sl_graph *random_graph(size_t n, size_t m, size_t nb) {
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  char name[32];
  int32_t *order = malloc(n * sizeof *order);
  for (size_t i = 0; i < n; i++) {
    int len = snprintf(name, sizeof name, "n%zu", i);
    order[i] = sl_builder_node(b, name, (size_t)len, &e);
  }
  for (size_t i = n - 1; i > 0; i--) {
    size_t j = rnd() % (i + 1);
    int32_t t = order[i]; order[i] = order[j]; order[j] = t;
  }
  for (size_t k = 0; k < m; k++) {
    size_t i = rnd() % n, j = rnd() % n;
    if (i == j) continue;
    if (i > j) { size_t t = i; i = j; j = t; }
    if (j - i > 20) j = i + 1 + rnd() % 20;     /* local edges: long paths */
    if (j >= n) continue;
    sl_builder_edge(b, order[i], order[j], SL_DIRECTED, 0, 0, &e);
  }
  for (size_t k = 0; k < nb; k++) {
    int32_t u = (int32_t)(rnd() % n), v = (int32_t)(rnd() % n);
    if (u != v) sl_builder_edge(b, u, v, SL_BIDIRECTED, 0, 0, &e);
  }
  sl_graph *g = sl_builder_finish(b, &e);
  sl_builder_free(b);
  free(order);
  return g;
}

typedef struct record {
  size_t limit, n;
  double *at;
  int32_t *first;      /* the first set, for the timed check */
  size_t nfirst;
  int32_t **sets;
  size_t *len;
} record;

static int keep(void *ctx, const int32_t *set, size_t n) {
  record *r = ctx;
  r->at[r->n] = now();
  r->sets[r->n] = malloc((n ? n : 1) * sizeof *set);
  memcpy(r->sets[r->n], set, n * sizeof *set);
  r->len[r->n] = n;
  return ++r->n >= r->limit;
}

static void record_free(record *r) {
  for (size_t i = 0; i < r->n; i++) free(r->sets[i]);
  r->n = 0;
}

typedef struct ivrec { size_t n; double at[4096]; } ivrec;

static int keep_iv(void *ctx, int32_t z, const int32_t *w, size_t nw) {
  (void)z; (void)w; (void)nw;
  ivrec *r = ctx;
  if (r->n < 4096) r->at[r->n] = now();
  r->n++;
  return 0;
}

int main(int argc, char **argv) {
  if (argc != 6) { fprintf(stderr, "usage: bench_frontdoor NODES EDGES BIDIRECTED SEED LIMIT\n"); return 2; }
  size_t n = strtoull(argv[1], NULL, 10), m = strtoull(argv[2], NULL, 10);
  size_t nb = strtoull(argv[3], NULL, 10), limit = strtoull(argv[5], NULL, 10);
  state ^= strtoull(argv[4], NULL, 10) * 0x2545F4914F6CDD1Dull;
  if (limit < 1) limit = 1;
  sl_graph *g = random_graph(n, m, nb);
  if (!g) { fprintf(stderr, "bench_frontdoor: cannot build the graph\n"); return 1; }
  size_t nn = sl_graph_nnodes(g);
  record r = {limit, 0, malloc(limit * sizeof(double)), NULL, 0,
              malloc(limit * sizeof(int32_t *)), malloc(limit * sizeof(size_t))};
  sl_error e;
  unsigned char *de = calloc(nn, 1);
  int32_t bx = -1, by = -1;
  size_t best = 0;
  double best_first = 0, best_total = 0, best_t0 = 0;
  double *best_at = malloc(limit * sizeof *best_at);
  for (int tries = 0; tries < 20; tries++) {
    int32_t x = (int32_t)(rnd() % nn);
    memset(de, 0, nn);
    sl_graph_descendants(g, &x, 1, de, &e);
    int32_t y = -1;
    for (int k = 0; k < 50 && y < 0; k++) {
      int32_t c = (int32_t)(rnd() % nn);
      if (de[c] && c != x) y = c;
    }
    if (y < 0) continue;
    int none = 0;
    double t0 = now();
    int rc = sl_frontdoor_each(g, x, y, keep, &r, &none, NULL, NULL, &e);
    double t1 = now();
    if (rc != SL_OK && !(rc == 1 && r.n == limit)) { fprintf(stderr, "bench_frontdoor: %s\n", e.msg); return 1; }
    /* every listed set is a front-door set */
    for (size_t i = 0; i < r.n; i++) {
      sl_reasons rs = {0};
      int ok = 0;
      if (sl_frontdoor_check(g, x, y, r.sets[i], r.len[i], &ok, &rs, 1, &e) || !ok) {
        fprintf(stderr, "bench_frontdoor: a listed set fails the criterion\n");
        return 1;
      }
      sl_reasons_free(&rs);
    }
    if (r.n > best || (r.n == best && best == 0)) {
      best = r.n; bx = x; by = y;
      best_t0 = t0; best_total = t1 - t0;
      best_first = r.n ? r.at[0] - t0 : t1 - t0;
      memcpy(best_at, r.at, r.n * sizeof *best_at);
      free(r.first);
      r.nfirst = r.n ? r.len[0] : 0;
      r.first = malloc((r.nfirst ? r.nfirst : 1) * sizeof *r.first);
      if (r.n) memcpy(r.first, r.sets[0], r.nfirst * sizeof *r.first);
    }
    record_free(&r);
    if (best >= limit) break;
  }
  if (bx < 0) { fprintf(stderr, "bench_frontdoor: no pair with a directed path\n"); return 1; }
  double mean = 0, max = 0;
  for (size_t i = 1; i < best; i++) {
    double d = best_at[i] - best_at[i - 1];
    mean += d;
    if (d > max) max = d;
  }
  if (best > 1) mean /= (double)(best - 1);
  (void)best_t0;
  /* one check, best of 5, beside one separation query */
  double check = 1e9, sep = 1e9;
  sl_sep_ws *w = sl_sep_alloc(g);
  for (int k = 0; k < 5; k++) {
    sl_reasons rs = {0};
    int ok;
    double t0 = now();
    sl_frontdoor_check(g, bx, by, r.first, r.nfirst, &ok, &rs, 5, &e);
    double t1 = now();
    sl_reasons_free(&rs);
    if (t1 - t0 < check) check = t1 - t0;
    int s;
    t0 = now();
    sl_separated(w, &bx, 1, &by, 1, NULL, 0, &s, NULL, &e);
    t1 = now();
    if (t1 - t0 < sep) sep = t1 - t0;
  }
  /* the instruments for the same pair */
  ivrec iv;
  iv.n = 0;
  double i0 = now();
  if (sl_instruments_each(g, bx, by, keep_iv, &iv, NULL, &e)) { fprintf(stderr, "bench_frontdoor: %s\n", e.msg); return 1; }
  double i1 = now();
  double ivmean = 0;
  size_t nk = iv.n < 4096 ? iv.n : 4096;
  for (size_t i = 1; i < nk; i++) ivmean += iv.at[i] - iv.at[i - 1];
  if (nk > 1) ivmean /= (double)(nk - 1);
  printf("nodes=%zu edges=%zu sets=%zu first_s=%.9f mean_delay_s=%.9f max_delay_s=%.9f "
         "total_s=%.9f check_s=%.9f sep_s=%.9f instruments=%zu iv_first_s=%.9f "
         "iv_mean_delay_s=%.9f iv_total_s=%.9f\n",
         nn, sl_graph_ndirected(g) + sl_graph_nbidirected(g), best, best_first, mean, max,
         best_total, check, sep, iv.n, iv.n ? iv.at[0] - i0 : i1 - i0, ivmean, i1 - i0);
  sl_sep_free(w);
  free(de); free(best_at); free(r.at); free(r.sets); free(r.len); free(r.first);
  sl_graph_free(g);
  return 0;
}
