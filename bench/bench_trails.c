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
#include <sys/stat.h>
#include <time.h>
#include "graph.h"
#include "notation.h"
#include "separation.h"

static double now(void) {
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

static char *slurp(const char *path, size_t *len) {
  FILE *f = fopen(path, "rb");
  struct stat st;
  if (!f || fstat(fileno(f), &st) != 0) { perror(path); exit(1); }
  char *text = malloc((size_t)st.st_size + 1);
  if (!text) { fprintf(stderr, "bench_trails: out of memory\n"); exit(1); }
  *len = fread(text, 1, (size_t)st.st_size, f);
  if (*len != (size_t)st.st_size) { fprintf(stderr, "bench_trails: short read\n"); exit(1); }
  fclose(f);
  text[*len] = '\0';
  return text;
}

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
  size_t len;
  char *text = slurp(argv[1], &len);
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, len, &e);
  if (!g) {
    char msg[2048];
    fprintf(stderr, "bench_trails: %s\n", sl_error_format(&e, text, len, msg, sizeof msg));
    return 1;
  }
  int32_t x = sl_graph_find(g, argv[2], strlen(argv[2]));
  int32_t y = sl_graph_find(g, argv[3], strlen(argv[3]));
  if (x < 0 || y < 0 || x == y) {
    fprintf(stderr, "bench_trails: need two distinct nodes of the graph\n");
    return 2;
  }
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
  free(text);
  return 0;
}
