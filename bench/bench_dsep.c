/*
** bench_dsep.c: time of sl_separated on a file written by gen_graph.
**
**   bench_dsep FILE QUERIES SEED REPS OUT
**
** Parses FILE (nodes n0 .. n(N-1), every edge ni -> nj with i < j), then
** draws QUERIES queries "x and y given Z" with a seeded PRNG, alternating
** two kinds:
**   even: x, y distinct and uniform, Z 0 to 5 distinct uniform nodes other
**         than x and y;
**   odd:  y uniform among the nodes with at most 5 parents, Z = pa(y), x
**         uniform among the nodes before y that are not parents of y.  Node
**         numbers rise along every edge, so x is not a descendant of y and
**         the local Markov property says x and y are separated given pa(y);
**         a "connected" answer there is a wrong answer.
** Each query is timed alone (CLOCK_MONOTONIC, no witness asked), REPS
** times over the whole list, keeping each query's best; the answers of all
** repetitions must agree.  OUT receives one line per query:
**   SEP SECONDS x y z1 z2 ...     (SEP 1 separated, 0 connected; names)
** for nx_dsep.py to repeat.  On stdout: key=value pairs queries=,
** mean_s= (mean of the per-query bests), max_s=, separated=,
** random_separated= (of the even ones), parse_s=.  Exit status 1 when the
** parse or a query fails, or an answer contradicts the Markov property or
** another repetition.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_graph.h"
#include "bench_rng.h"
#include "separation.h"

#define ZMAX 5

typedef struct query {
  int32_t x, y, z[ZMAX];   /* node ids */
  size_t nz;
  int kind;                /* 0 random, 1 Markov */
  int sep;                 /* -1 not yet answered */
  double best;
} query;

/* Whether v is among a[0..n). */
static int among(const int32_t *a, size_t n, int32_t v) {
  for (size_t i = 0; i < n; i++) if (a[i] == v) return 1;
  return 0;
}

/* A random query: x, y and 0..5 other nodes. */
static void draw_random(query *q, const int32_t *id, size_t n) {
  q->x = id[below(n)];
  do q->y = id[below(n)]; while (q->y == q->x);
  size_t k = (size_t)below(ZMAX + 1);
  q->nz = 0;
  while (q->nz < k) {
    int32_t v = id[below(n)];
    if (v == q->x || v == q->y || among(q->z, q->nz, v)) continue;
    q->z[q->nz++] = v;
  }
}

/* A query the local Markov property answers: x before y, given pa(y). */
static void draw_markov(query *q, const sl_graph *g, const int32_t *id, size_t n) {
  for (;;) {
    size_t j = (size_t)below(n), np;
    const int32_t *pa = sl_graph_parents(g, id[j], &np);
    if (np > ZMAX || j <= np) continue;      /* need a non-parent before y */
    q->y = id[j];
    q->nz = np;
    memcpy(q->z, pa, np * sizeof *pa);
    do q->x = id[below(j)]; while (among(pa, np, q->x));
    return;
  }
}

int main(int argc, char **argv) {
  if (argc != 6) {
    fprintf(stderr, "usage: bench_dsep FILE QUERIES SEED REPS OUT\n");
    return 2;
  }
  size_t nq = strtoull(argv[2], NULL, 10);
  rng_state = strtoull(argv[3], NULL, 10);
  int reps = atoi(argv[4]);
  if (nq < 1 || reps < 1) { fprintf(stderr, "bench_dsep: need QUERIES, REPS >= 1\n"); return 2; }
  size_t len;
  char *text = slurp(argv[1], &len, "bench_dsep");
  double t0 = now();
  sl_graph *g = parse_graph(text, len, "bench_dsep");
  double parse_s = now() - t0;
  free(text);
  sl_error e;
  memset(&e, 0, sizeof e);
  size_t n = sl_graph_nnodes(g);
  /* id[i] is the node named n<i> */
  int32_t *id = malloc(n * sizeof *id);
  query *qs = calloc(nq, sizeof *qs);
  sl_sep_ws *w = sl_sep_alloc(g);
  if (!id || !qs || !w) { fprintf(stderr, "bench_dsep: out of memory\n"); return 1; }
  for (size_t v = 0; v < n; v++) id[v] = -1;
  for (size_t v = 0; v < n; v++) {
    int64_t i = name_index(sl_graph_name(g, (int32_t)v));
    if (i < 0 || (size_t)i >= n || id[i] >= 0) {
      fprintf(stderr, "bench_dsep: unexpected node '%s'\n", sl_graph_name(g, (int32_t)v));
      return 1;
    }
    id[i] = (int32_t)v;
  }
  for (size_t k = 0; k < nq; k++) {
    qs[k].kind = (int)(k & 1);
    if (qs[k].kind) draw_markov(&qs[k], g, id, n); else draw_random(&qs[k], id, n);
    qs[k].sep = -1;
    qs[k].best = 1e30;
  }
  for (int r = 0; r < reps; r++)
    for (size_t k = 0; k < nq; k++) {
      query *q = &qs[k];
      int sep = -1;
      double a = now();
      int rc = sl_separated(w, &q->x, 1, &q->y, 1, q->z, q->nz, &sep, NULL, &e);
      double t = now() - a;
      if (rc != SL_OK) { fprintf(stderr, "bench_dsep: query %zu: %s\n", k, e.msg); return 1; }
      if (q->sep >= 0 && q->sep != sep) {
        fprintf(stderr, "bench_dsep: query %zu answered %d, then %d\n", k, q->sep, sep);
        return 1;
      }
      q->sep = sep;
      if (t < q->best) q->best = t;
    }
  FILE *out = fopen(argv[5], "w");
  if (!out) { perror(argv[5]); return 1; }
  double sum = 0, max = 0;
  size_t nsep = 0, rsep = 0, bad = 0;
  for (size_t k = 0; k < nq; k++) {
    query *q = &qs[k];
    sum += q->best;
    if (q->best > max) max = q->best;
    nsep += (size_t)q->sep;
    if (!q->kind) rsep += (size_t)q->sep;
    if (q->kind && !q->sep) {
      if (bad++ < 5)
        fprintf(stderr, "bench_dsep: query %zu: %s and %s connected given the parents of %s\n",
                k, sl_graph_name(g, q->x), sl_graph_name(g, q->y), sl_graph_name(g, q->y));
    }
    fprintf(out, "%d %.9f %s %s", q->sep, q->best, sl_graph_name(g, q->x), sl_graph_name(g, q->y));
    for (size_t i = 0; i < q->nz; i++) fprintf(out, " %s", sl_graph_name(g, q->z[i]));
    fputc('\n', out);
  }
  if (fclose(out) != 0) { fprintf(stderr, "bench_dsep: cannot write '%s'\n", argv[5]); return 1; }
  printf("queries=%zu mean_s=%.9f max_s=%.9f separated=%zu random_separated=%zu parse_s=%.3f\n",
         nq, sum / (double)nq, max, nsep, rsep, parse_s);
  sl_sep_free(w);
  sl_graph_free(g);
  free(id); free(qs);
  return bad ? 1 : 0;
}
