/*
** bench_trails.c: trails per second of sl_trails_each on a small dense
** graph written by gen_graph.
**
**   bench_trails FILE X Y REPS
**
** Parses FILE and lists every trail between the nodes named X and Y, REPS
** times, timing each listing alone (CLOCK_MONOTONIC); the callback only
** counts.  With a single x and y the inner nodes of a trail avoid both, so
** the trails are exactly the simple paths from x to y in the undirected
** skeleton, which nx_paths.py counts.  On stdout: key=value pairs trails=
** (count), edges= (total length of all trails, a second check), best_s=,
** per_s= (trails per second of the best listing).  Exit status 1 when the
** parse or a listing fails, or two listings differ.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_graph.h"
#include "separation.h"

typedef struct tally { uint64_t trails, edges; } tally;

static int count(void *ctx, const sl_trail *t) {
  tally *c = ctx;
  c->trails++;
  c->edges += t->len;
  return 0;
}

int main(int argc, char **argv) {
  if (argc != 5) { fprintf(stderr, "usage: bench_trails FILE X Y REPS\n"); return 2; }
  int reps = atoi(argv[4]);
  sl_graph *g = load_graph(argv[1], "bench_trails");
  int32_t x, y;
  find_two(g, argv[2], argv[3], &x, &y, "bench_trails");
  sl_error e;
  memset(&e, 0, sizeof e);
  tally first = {0, 0};
  double best = 1e30;
  for (int r = 0; r < (reps > 0 ? reps : 1); r++) {
    tally c = {0, 0};
    double t0 = now();
    int rc = sl_trails_each(g, &x, 1, &y, 1, count, &c, NULL, &e);
    double t = now() - t0;
    if (rc != SL_OK) { fprintf(stderr, "bench_trails: %s\n", e.msg); return 1; }
    if (r == 0) first = c;
    else if (c.trails != first.trails || c.edges != first.edges) {
      fprintf(stderr, "bench_trails: listing %d gave %llu trails, the first %llu\n", r,
              (unsigned long long)c.trails, (unsigned long long)first.trails);
      return 1;
    }
    if (t < best) best = t;
  }
  printf("trails=%llu edges=%llu best_s=%.6f per_s=%.0f\n", (unsigned long long)first.trails,
         (unsigned long long)first.edges, best, best > 0 ? (double)first.trails / best : 0.0);
  sl_graph_free(g);
  return 0;
}
