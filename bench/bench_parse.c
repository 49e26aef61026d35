/*
** bench_parse.c: time and memory of sl_graph_parse on a file written by
** gen_graph.
**
**   bench_parse read FILE                      read the file only
**   bench_parse parse FILE NODES EDGES SUM REPS
**
** Both read the whole file into one buffer first.  "parse" then parses it
** REPS times, timing each parse alone with CLOCK_MONOTONIC, and checks the
** first graph against the generator's counts and edge checksum.  Output is
** one line of key=value pairs: best_s (parse), rss_kb (ru_maxrss of this
** process, taken right after the first parse and before any checking).
** Exit status 1 when the parse fails or the graph is not the one written.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_graph.h"
#include "bench_rng.h"

/* 0 when g has exactly the nodes, edges and checksum the generator wrote. */
static int check(const sl_graph *g, uint64_t nodes, uint64_t edges, uint64_t sum) {
  size_t n = sl_graph_nnodes(g);
  if (n != nodes || sl_graph_ndirected(g) != edges || sl_graph_nbidirected(g) != 0) {
    fprintf(stderr, "bench_parse: got %zu nodes, %zu ->, %zu <->; wrote %llu, %llu, 0\n",
            n, sl_graph_ndirected(g), sl_graph_nbidirected(g),
            (unsigned long long)nodes, (unsigned long long)edges);
    return 1;
  }
  uint64_t s = 0;
  for (size_t v = 0; v < n; v++) {
    int64_t a = name_index(sl_graph_name(g, (int32_t)v));
    if (a < 0 || (uint64_t)a >= nodes) {
      fprintf(stderr, "bench_parse: unexpected node '%s'\n", sl_graph_name(g, (int32_t)v));
      return 1;
    }
    size_t k;
    const int32_t *ch = sl_graph_children(g, (int32_t)v, &k);
    for (size_t i = 0; i < k; i++) {
      int64_t b = name_index(sl_graph_name(g, ch[i]));
      if (b < 0) return 1;
      s += mix64((uint64_t)a << 32 | (uint64_t)b);
    }
  }
  if (s != sum) {
    fprintf(stderr, "bench_parse: edge checksum %llu, generator wrote %llu\n",
            (unsigned long long)s, (unsigned long long)sum);
    return 1;
  }
  return 0;
}

int main(int argc, char **argv) {
  if (argc == 3 && strcmp(argv[1], "read") == 0) {
    size_t len;
    char *text = slurp(argv[2], &len, "bench_parse");
    printf("bytes=%zu rss_kb=%ld\n", len, maxrss_kb());
    free(text);
    return 0;
  }
  if (argc != 7 || strcmp(argv[1], "parse") != 0) {
    fprintf(stderr, "usage: bench_parse read FILE\n"
                    "       bench_parse parse FILE NODES EDGES SUM REPS\n");
    return 2;
  }
  uint64_t nodes = strtoull(argv[3], NULL, 10), edges = strtoull(argv[4], NULL, 10);
  uint64_t sum = strtoull(argv[5], NULL, 10);
  int reps = atoi(argv[6]);
  size_t len;
  char *text = slurp(argv[2], &len, "bench_parse");
  double best = 1e30;
  long rss = 0;
  for (int r = 0; r < (reps > 0 ? reps : 1); r++) {
    double t0 = now();
    sl_graph *g = parse_graph(text, len, "bench_parse");
    double t = now() - t0;
    if (r == 0) {
      rss = maxrss_kb();
      if (check(g, nodes, edges, sum)) return 1;
    }
    if (t < best) best = t;
    sl_graph_free(g);
  }
  printf("best_s=%.6f rss_kb=%ld bytes=%zu\n", best, rss, len);
  free(text);
  return 0;
}
