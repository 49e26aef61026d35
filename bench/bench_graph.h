/*
** bench_graph.h: the graph files gen_graph writes, as the benchmark
** programs read them: the node names "n<i>", the parse, and the two nodes
** a query names.
*/
#ifndef BENCH_GRAPH_H
#define BENCH_GRAPH_H

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "graph.h"
#include "notation.h"

/* Index i of a name "n<i>", or -1. */
static inline int64_t name_index(const char *s) {
  if (s[0] != 'n' || !s[1]) return -1;
  int64_t v = 0;
  for (const char *p = s + 1; *p; p++) {
    if (*p < '0' || *p > '9') return -1;
    v = v * 10 + (*p - '0');
  }
  return v;
}

/* The graph in text; on a parse error prints "PROG: ..." and exits 1. */
static inline sl_graph *parse_graph(const char *text, size_t len, const char *prog) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, len, &e);
  if (!g) {
    char msg[2048];
    fprintf(stderr, "%s: %s\n", prog, sl_error_format(&e, text, len, msg, sizeof msg));
    exit(1);
  }
  return g;
}

/* The graph in the file at path, read and parsed (exits 1 on failure). */
static inline sl_graph *load_graph(const char *path, const char *prog) {
  size_t len;
  char *text = slurp(path, &len, prog);
  sl_graph *g = parse_graph(text, len, prog);
  free(text);
  return g;
}

/* The nodes named xs and ys; exits 2 unless they are two distinct nodes. */
static inline void find_two(const sl_graph *g, const char *xs, const char *ys,
                            int32_t *x, int32_t *y, const char *prog) {
  *x = sl_graph_find(g, xs, strlen(xs));
  *y = sl_graph_find(g, ys, strlen(ys));
  if (*x < 0 || *y < 0 || *x == *y) {
    fprintf(stderr, "%s: need two distinct nodes of the graph\n", prog);
    exit(2);
  }
}

#endif
