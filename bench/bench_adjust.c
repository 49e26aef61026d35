/*
** bench_adjust.c: delay of sl_adjust_each, the listing of minimal
** adjustment sets, on a graph written by gen_graph.
**
**   bench_adjust FILE X Y LIMIT
**
** Parses FILE and lists the minimal adjustment sets for the effect of the
** node named X on the node named Y, stopping after LIMIT sets.  The clock
** (CLOCK_MONOTONIC) starts before sl_effect_init; the callback records the
** time of each set and copies the set.  Then, untimed, every set is checked
** with sl_admissible (the adjustment criterion, by separation in the
** proper back-door graph rather than by the separator search that lists
** them), every 25th for minimality (no member can be dropped: the set
** without it is not a separator in that graph), and the sets for
** repeats.  On stdout: key=value pairs sets=, complete= (1 when the
** listing ended by itself before LIMIT), first_s= (time to the first set),
** mean_delay_s= and max_delay_s= (between consecutive sets), per_s= (sets
** per second after the first), total_s=, mean_size=, nodes=, edges=,
** checked_minimal=.  Exit status 1 when a call fails or a set is not
** admissible, not minimal or repeated.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_common.h"
#include "bench_graph.h"
#include "separation.h"
#include "adjust.h"

/* What the callback keeps: the time of each set and the sets themselves. */
typedef struct record {
  size_t limit, nsets;
  double *at;
  int32_t *pool;
  size_t pool_len, pool_cap;
  size_t *start, *len;
  int oom;
} record;

static int keep(void *ctx, const int32_t *set, size_t n) {
  record *r = ctx;
  r->at[r->nsets] = now();
  if (r->pool_len + n > r->pool_cap) {
    size_t c = r->pool_cap ? r->pool_cap : 4096;
    while (c < r->pool_len + n) c *= 2;
    int32_t *p = realloc(r->pool, c * sizeof *p);
    if (!p) { r->oom = 1; return 1; }
    r->pool = p;
    r->pool_cap = c;
  }
  memcpy(r->pool + r->pool_len, set, n * sizeof *set);
  r->start[r->nsets] = r->pool_len;
  r->len[r->nsets] = n;
  r->pool_len += n;
  return ++r->nsets >= r->limit;
}

static const record *sort_rec;

/* Order of set indices by length, then members. */
static int cmp_set(const void *a, const void *b) {
  size_t i = *(const size_t *)a, j = *(const size_t *)b;
  if (sort_rec->len[i] != sort_rec->len[j]) return sort_rec->len[i] < sort_rec->len[j] ? -1 : 1;
  return memcmp(sort_rec->pool + sort_rec->start[i], sort_rec->pool + sort_rec->start[j],
                sort_rec->len[i] * sizeof(int32_t));
}

/* Print a set for a failure message. */
static void show(const sl_graph *g, const int32_t *s, size_t n) {
  fputc('{', stderr);
  for (size_t i = 0; i < n; i++) fprintf(stderr, "%s%s", i ? ", " : "", sl_graph_name(g, s[i]));
  fputs("}\n", stderr);
}

int main(int argc, char **argv) {
  if (argc != 5) { fprintf(stderr, "usage: bench_adjust FILE X Y LIMIT\n"); return 2; }
  size_t limit = strtoull(argv[4], NULL, 10);
  if (limit < 1) limit = 1;
  sl_graph *g = load_graph(argv[1], "bench_adjust");
  int32_t x, y;
  find_two(g, argv[2], argv[3], &x, &y, "bench_adjust");
  sl_error e;
  memset(&e, 0, sizeof e);
  record r;
  memset(&r, 0, sizeof r);
  r.limit = limit;
  r.at = malloc(limit * sizeof *r.at);
  r.start = malloc(limit * sizeof *r.start);
  r.len = malloc(limit * sizeof *r.len);
  if (!r.at || !r.start || !r.len) { fprintf(stderr, "bench_adjust: out of memory\n"); return 1; }

  sl_effect q;
  int none = 0;
  double t0 = now();
  if (sl_effect_init(&q, g, &x, 1, &y, 1, &e) != SL_OK) {
    fprintf(stderr, "bench_adjust: %s\n", e.msg);
    return 1;
  }
  int rc = sl_adjust_each(&q, NULL, NULL, keep, &r, &none, NULL, NULL, &e);
  double t_end = now();
  if (r.oom) { fprintf(stderr, "bench_adjust: out of memory\n"); return 1; }
  if (rc != SL_OK && !(rc == 1 && r.nsets == limit)) {
    fprintf(stderr, "bench_adjust: %s\n", e.msg);
    return 1;
  }
  if (none || r.nsets == 0) {
    fprintf(stderr, "bench_adjust: no adjustment set for %s on %s\n", argv[2], argv[3]);
    return 1;
  }

  /* the checks, untimed */
  int bad = 0;
  size_t nmin = 0, total_size = 0;
  sl_sep_ws *w = sl_sep_alloc(g);
  int32_t *sub = malloc((sl_graph_nnodes(g) + 1) * sizeof *sub);
  size_t *order = malloc(r.nsets * sizeof *order);
  if (!w || !sub || !order) { fprintf(stderr, "bench_adjust: out of memory\n"); return 1; }
  for (size_t k = 0; k < r.nsets && bad < 5; k++) {
    const int32_t *s = r.pool + r.start[k];
    size_t n = r.len[k];
    total_size += n;
    sl_reasons rs;
    memset(&rs, 0, sizeof rs);
    int ok = 0;
    if (sl_admissible(&q, s, n, &ok, &rs, 1, &e) != SL_OK) {
      fprintf(stderr, "bench_adjust: %s\n", e.msg);
      return 1;
    }
    sl_reasons_free(&rs);
    if (!ok) {
      fprintf(stderr, "bench_adjust: set %zu is not an adjustment set: ", k);
      show(g, s, n);
      bad++;
      continue;
    }
    if (k % 25) continue;
    nmin++;
    for (size_t i = 0; i < n; i++) {   /* drop member i */
      size_t m = 0;
      for (size_t j = 0; j < n; j++) if (j != i) sub[m++] = s[j];
      int sep = 0;
      if (sl_separated_cut(w, &x, 1, &y, 1, sub, m, q.in_x, q.cn, &sep, NULL, &e) != SL_OK) {
        fprintf(stderr, "bench_adjust: %s\n", e.msg);
        return 1;
      }
      if (sep) {
        fprintf(stderr, "bench_adjust: set %zu is not minimal without %s: ", k,
                sl_graph_name(g, s[i]));
        show(g, s, n);
        bad++;
        break;
      }
    }
  }
  for (size_t k = 0; k < r.nsets; k++) order[k] = k;
  sort_rec = &r;
  qsort(order, r.nsets, sizeof *order, cmp_set);
  for (size_t k = 1; k < r.nsets && bad < 5; k++)
    if (cmp_set(&order[k - 1], &order[k]) == 0) {
      fprintf(stderr, "bench_adjust: set %zu is listed twice: ", order[k]);
      show(g, r.pool + r.start[order[k]], r.len[order[k]]);
      bad++;
    }

  double first = r.at[0] - t0, maxd = 0;
  for (size_t k = 1; k < r.nsets; k++)
    if (r.at[k] - r.at[k - 1] > maxd) maxd = r.at[k] - r.at[k - 1];
  double span = r.at[r.nsets - 1] - r.at[0];
  double mean = r.nsets > 1 ? span / (double)(r.nsets - 1) : first;
  printf("sets=%zu complete=%d first_s=%.9f mean_delay_s=%.9f max_delay_s=%.9f per_s=%.0f "
         "total_s=%.6f mean_size=%.1f nodes=%zu edges=%zu checked_minimal=%zu\n",
         r.nsets, r.nsets < limit, first, mean, maxd, mean > 0 ? 1 / mean : 0.0, t_end - t0,
         (double)total_size / (double)r.nsets, sl_graph_nnodes(g),
         sl_graph_ndirected(g) + sl_graph_nbidirected(g), nmin);
  sl_sep_free(w);
  sl_effect_free(&q);
  sl_graph_free(g);
  free(sub); free(order); free(r.at); free(r.pool); free(r.start); free(r.len);
  return bad ? 1 : 0;
}
