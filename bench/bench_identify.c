/*
** bench_identify.c: g:identify on random graphs of 50 observed nodes and
** 20 <-> edges (random DAGs, about two arrows per node, seeded), each
** query a random treatment and one of its descendants as outcome.  Prints
** the time per identify query (latent projection, ID, simplification and
** the printed formula) beside its baseline, one m-separation query on the same graph (the
** library's sl_separated: x and y given the parents of x), and how many
** effects were identified.  Usage: bench_identify GRAPHS QUERIES
*/
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_rng.h"
#include "identify.h"
#include "notation.h"
#include "separation.h"

#define NODES 50
#define BIDIRECTED 20

/* A random graph: arrows along a random order, then <-> edges. */
static sl_graph *random_graph(void) {
  sl_buf b;
  sl_buf_init(&b);
  int order[NODES];
  for (int i = 0; i < NODES; i++) order[i] = i;
  for (int i = NODES - 1; i > 0; i--) {
    int j = (int)below((uint64_t)i + 1), t = order[i];
    order[i] = order[j]; order[j] = t;
  }
  for (int i = 0; i < NODES; i++) sl_buf_addf(&b, "n%d\n", i);
  for (int k = 0; k < 2 * NODES; k++) {
    int i = (int)below(NODES), j = (int)below(NODES);
    if (i == j) continue;
    if (i > j) { int t = i; i = j; j = t; }
    sl_buf_addf(&b, "n%d -> n%d\n", order[i], order[j]);
  }
  for (int k = 0; k < BIDIRECTED;) {
    int i = (int)below(NODES), j = (int)below(NODES);
    if (i == j) continue;
    sl_buf_addf(&b, "n%d <-> n%d\n", i, j);
    k++;
  }
  sl_error e;
  sl_graph *g = sl_graph_parse(b.data, b.len, &e);
  if (!g) { fprintf(stderr, "bench_identify: %s\n", e.msg); exit(1); }
  sl_buf_free(&b);
  return g;
}

int main(int argc, char **argv) {
  int graphs = argc > 1 ? atoi(argv[1]) : 20, queries = argc > 2 ? atoi(argv[2]) : 50;
  double t_id = 0, t_sep = 0;
  long identified = 0, total = 0, sep_true = 0;
  rng_state = 20250917;
  for (int gi = 0; gi < graphs; gi++) {
    sl_graph *g = random_graph();
    sl_sep_ws *w = sl_sep_alloc(g);
    for (int q = 0; q < queries; q++) {
      /* y a descendant of x, so that there is an effect to identify */
      int32_t x = (int32_t)below(NODES), y = -1;
      unsigned char de[NODES];
      sl_error e0;
      sl_graph_descendants(g, &x, 1, de, &e0);
      int nd = 0;
      for (int v = 0; v < NODES; v++) nd += de[v];
      if (!nd) { q--; continue; }
      for (int k = (int)below((uint64_t)nd), v = 0; v < NODES; v++)
        if (de[v] && k-- == 0) { y = v; break; }
      sl_identification r;
      sl_error e;
      double t0 = now();
      if (sl_identify(g, &x, 1, &y, 1, NULL, 0, &r, NULL, &e)) {
        fprintf(stderr, "bench_identify: %s\n", e.msg);
        return 1;
      }
      char *text = sl_identification_text(&r, g, 0);
      double t1 = now();
      if (!text) { fprintf(stderr, "bench_identify: no formula text\n"); return 1; }
      free(text);
      identified += r.identified;
      total++;
      sl_identification_free(&r);
      size_t np;
      const int32_t *pa = sl_graph_parents(g, x, &np);
      int32_t z[NODES];
      size_t nz = 0;
      for (size_t i = 0; i < np; i++) if (pa[i] != y) z[nz++] = pa[i];
      int sep = 0;
      double t2 = now();
      if (sl_separated(w, &x, 1, &y, 1, z, nz, &sep, NULL, &e)) {
        fprintf(stderr, "bench_identify: %s\n", e.msg);
        return 1;
      }
      double t3 = now();
      sep_true += sep;
      t_id += t1 - t0;
      t_sep += t3 - t2;
    }
    sl_sep_free(w);
    sl_graph_free(g);
  }
  printf("queries=%ld per_query=%.9f sep_per_query=%.9f identified=%ld separated=%ld\n", total,
         t_id / (double)total, t_sep / (double)total, identified, sep_true);
  return 0;
}
