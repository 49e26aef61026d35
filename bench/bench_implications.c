/*
** bench_implications.c: g:implications on a random graph of 1e3 nodes.
**
**   bench_implications NODES EDGES BIDIRECTED HIDDEN SEED
**
** Builds a random graph (directed edges between nodes at most 20 apart in
** a random order, <-> edges between random pairs, HIDDEN random nodes
** hidden), then times the whole listing and, as the baseline,
** one d-separation query per non-adjacent observed pair: the reachability
** test of separation.c given the observed parents of the later node (the
** first question the listing asks of a pair), timed over every such pair.
** Every STRIDE-th listed implication (up to 200) is kept and checked with
** sl_separated after the timing, its set for separation and minimality;
** exit status 1 when one fails.  On stdout:
** key=value pairs.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "graph.h"
#include "separation.h"
#include "implications.h"

static uint64_t state = 0x9E3779B97F4A7C15ull;
static uint64_t rnd(void) {
  state ^= state << 13; state ^= state >> 7; state ^= state << 17;
  return state;
}

static sl_graph *random_graph(size_t n, size_t m, size_t nb, size_t nh) {
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
    if (j - i > 20) j = i + 1 + rnd() % 20;
    if (j >= n) continue;
    sl_builder_edge(b, order[i], order[j], SL_DIRECTED, 0, 0, &e);
  }
  for (size_t k = 0; k < nb; k++) {
    int32_t u = (int32_t)(rnd() % n), v = (int32_t)(rnd() % n);
    if (u != v) sl_builder_edge(b, u, v, SL_BIDIRECTED, 0, 0, &e);
  }
  for (size_t k = 0; k < nh; k++) sl_builder_hidden(b, (int32_t)(rnd() % n));
  sl_graph *g = sl_builder_finish(b, &e);
  sl_builder_free(b);
  free(order);
  return g;
}

typedef struct kept { size_t n, every, seen; int32_t (*ab)[2]; int32_t (*z)[64]; size_t *nz; } kept;

#define STRIDE 997     /* implications between two kept for the check */

/* Keep every STRIDE-th implication (up to 200) for the untimed check. */
static int keep(void *ctx, int32_t a, int32_t b, const int32_t *given, size_t n) {
  kept *k = ctx;
  if (k->seen++ % k->every || k->n >= 200 || n > 64) return 0;
  k->ab[k->n][0] = a; k->ab[k->n][1] = b;
  memcpy(k->z[k->n], given, n * sizeof *given);
  k->nz[k->n++] = n;
  return 0;
}

static int sep(sl_sep_ws *w, int32_t a, int32_t b, const int32_t *z, size_t nz) {
  sl_error e;
  int s = 0;
  if (sl_separated(w, &a, 1, &b, 1, z, nz, &s, NULL, &e)) return -1;
  return s;
}

int main(int argc, char **argv) {
  if (argc != 6) { fprintf(stderr, "usage: bench_implications NODES EDGES BIDIRECTED HIDDEN SEED\n"); return 2; }
  size_t n = strtoull(argv[1], NULL, 10), m = strtoull(argv[2], NULL, 10);
  size_t nb = strtoull(argv[3], NULL, 10), nh = strtoull(argv[4], NULL, 10);
  state ^= strtoull(argv[5], NULL, 10) * 0x2545F4914F6CDD1Dull;
  sl_graph *g = random_graph(n, m, nb, nh);
  if (!g) { fprintf(stderr, "bench_implications: cannot build the graph\n"); return 1; }
  size_t nn = sl_graph_nnodes(g), untestable = 0;
  sl_error e;
  kept k = {0, STRIDE, 0, malloc(200 * sizeof *k.ab), malloc(200 * sizeof *k.z),
            malloc(200 * sizeof *k.nz)};
  double best = now();
  if (sl_implications_each(g, keep, &k, &untestable, NULL, &e)) {
    fprintf(stderr, "bench_implications: %s\n", e.msg);
    return 1;
  }
  best = now() - best;
  size_t found = k.seen;
  /* the baseline: one separation query per non-adjacent observed pair */
  int32_t *ord = malloc(nn * sizeof *ord), *z = malloc(nn * sizeof *z);
  unsigned char *adj = calloc(nn, 1);
  sl_graph_order(g, ord);
  size_t nobs = 0, pairs = 0, seps = 0;
  for (size_t i = 0; i < nn; i++) if (!sl_graph_is_hidden(g, ord[i])) ord[nobs++] = ord[i];
  sl_sep_ws *w = sl_sep_alloc(g);
  double t0 = now();
  for (size_t j = 1; j < nobs; j++) {
    int32_t b = ord[j];
    size_t np, nc, ns, nz = 0;
    const int32_t *pa = sl_graph_parents(g, b, &np), *ch = sl_graph_children(g, b, &nc),
                  *sb = sl_graph_siblings(g, b, &ns);
    for (size_t k = 0; k < np; k++) { adj[pa[k]] = 1; if (!sl_graph_is_hidden(g, pa[k])) z[nz++] = pa[k]; }
    for (size_t k = 0; k < nc; k++) adj[ch[k]] = 1;
    for (size_t k = 0; k < ns; k++) adj[sb[k]] = 1;
    for (size_t i = 0; i < j; i++) {
      if (adj[ord[i]]) continue;
      pairs++;
      seps += sep(w, ord[i], b, z, nz) == 1;
    }
    for (size_t k = 0; k < np; k++) adj[pa[k]] = 0;
    for (size_t k = 0; k < nc; k++) adj[ch[k]] = 0;
    for (size_t k = 0; k < ns; k++) adj[sb[k]] = 0;
  }
  double tq = now() - t0;
  /* the untimed check of the sample */
  int bad = 0;
  for (size_t i = 0; i < k.n && !bad; i++) {
    if (sep(w, k.ab[i][0], k.ab[i][1], k.z[i], k.nz[i]) != 1) bad = 1;
    for (size_t d = 0; d < k.nz[i] && !bad; d++) {
      size_t nz = 0;
      for (size_t c = 0; c < k.nz[i]; c++) if (c != d) z[nz++] = k.z[i][c];
      if (sep(w, k.ab[i][0], k.ab[i][1], z, nz) != 0) bad = 1;
    }
  }
  if (bad) fprintf(stderr, "bench_implications: a listed implication fails its check\n");
  printf("nodes=%zu edges=%zu observed=%zu pairs=%zu implications=%zu untestable=%zu "
         "parents_separate=%zu total_s=%.6f queries_s=%.6f per_pair_s=%.9f checked=%zu\n",
         nn, sl_graph_ndirected(g) + sl_graph_nbidirected(g), nobs, pairs, found, untestable,
         seps, best, tq, pairs ? best / (double)pairs : 0.0, k.n);
  sl_sep_free(w);
  free(ord); free(z); free(adj); free(k.ab); free(k.z); free(k.nz);
  sl_graph_free(g);
  return bad;
}
