/*
** adjust_cut.c: the cheapest adjustment set, a minimum vertex cut between
** X and Y in the augmented proper back-door graph of An(X, Y), each node
** split into an in- and an out-half joined by its cost (van der Zander,
** Liskiewicz and Textor 2019, section 4.4).  Maximum flow by Dinic's
** algorithm.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust_internal.h"

typedef struct arc { int32_t to; double cap; } arc;

typedef struct net {
  size_t n, narc, cap;
  arc *a;
  int32_t *next, *head;   /* adjacency as linked arcs; arc i^1 is its reverse */
  int32_t *level, *it, *queue;
} net;

static int add_arc(net *N, int32_t u, int32_t v, double c) {
  if (N->narc + 2 > N->cap) {
    size_t cap = N->cap ? N->cap * 2 : 1024;
    arc *a = realloc(N->a, cap * sizeof *a);
    if (!a) return -1;
    N->a = a;
    int32_t *nx = realloc(N->next, cap * sizeof *nx);
    if (!nx) return -1;
    N->next = nx;
    N->cap = cap;
  }
  N->a[N->narc] = (arc){v, c}; N->next[N->narc] = N->head[u]; N->head[u] = (int32_t)N->narc++;
  N->a[N->narc] = (arc){u, 0}; N->next[N->narc] = N->head[v]; N->head[v] = (int32_t)N->narc++;
  return 0;
}

static int bfs(net *N, int32_t s, int32_t t) {
  for (size_t v = 0; v < N->n; v++) N->level[v] = -1;
  size_t h = 0, tl = 0;
  N->level[s] = 0;
  N->queue[tl++] = s;
  while (h < tl) {
    int32_t v = N->queue[h++];
    for (int32_t i = N->head[v]; i >= 0; i = N->next[i])
      if (N->a[i].cap > 1e-12 && N->level[N->a[i].to] < 0) {
        N->level[N->a[i].to] = N->level[v] + 1;
        N->queue[tl++] = N->a[i].to;
      }
  }
  return N->level[t] >= 0;
}

/* One blocking-flow augmentation along level arcs (recursive, depth <= n). */
static double push(net *N, int32_t v, int32_t t, double f) {
  if (v == t) return f;
  for (; N->it[v] >= 0; N->it[v] = N->next[N->it[v]]) {
    int32_t i = N->it[v];
    arc *a = &N->a[i];
    if (a->cap <= 1e-12 || N->level[a->to] != N->level[v] + 1) continue;
    double d = push(N, a->to, t, f < a->cap ? f : a->cap);
    if (d > 0) { a->cap -= d; N->a[i ^ 1].cap += d; return d; }
  }
  return 0;
}

int sl_cheapest(const sl_effect *q, const double *cost, int32_t **set, size_t *nset,
                double *total, int *ok, sl_error *e) {
  const sl_graph *g = q->g;
  sl_moral m;
  *set = NULL; *nset = 0; *ok = 0; *total = 0;
  int rc = sl_moral_build(&m, q, NULL, e);
  if (rc) return rc;
  net N;
  memset(&N, 0, sizeof N);
  size_t nn = 2 * m.n + 2;
  int32_t src = (int32_t)(2 * m.n), dst = src + 1;
  N.n = nn;
  N.head = malloc(nn * sizeof *N.head); N.level = malloc(nn * sizeof *N.level);
  N.it = malloc(nn * sizeof *N.it); N.queue = malloc(nn * sizeof *N.queue);
  int32_t *out = malloc((m.n ? m.n : 1) * sizeof *out);
  if (!N.head || !N.level || !N.it || !N.queue || !out) goto nomem;
  for (size_t v = 0; v < nn; v++) N.head[v] = -1;
  double sum = 1;
  for (size_t i = 0; i < m.n; i++) if (cost) sum += cost[m.node[i]]; else sum += 1;
  double inf = 4 * sum;
  for (size_t i = 0; i < m.n; i++) {
    int32_t v = m.node[i];
    int allowed = !q->forb[v] && !g->hidden[v] && !q->in_x[v] && !q->in_y[v];
    double c = allowed ? (cost ? cost[v] : 1) : inf;
    if (add_arc(&N, (int32_t)(2 * i), (int32_t)(2 * i + 1), c)) goto nomem;
    if (q->in_x[v] && add_arc(&N, src, (int32_t)(2 * i), inf)) goto nomem;
    if (q->in_y[v] && add_arc(&N, (int32_t)(2 * i + 1), dst, inf)) goto nomem;
    for (uint32_t k = m.off[i]; k < m.off[i + 1]; k++)
      if (add_arc(&N, (int32_t)(2 * i + 1), 2 * m.adj[k], inf)) goto nomem;
  }
  double flow = 0;
  while (flow < inf && bfs(&N, src, dst)) {
    memcpy(N.it, N.head, nn * sizeof *N.it);
    double f;
    while ((f = push(&N, src, dst, inf)) > 0) { flow += f; if (flow >= inf) break; }
  }
  if (flow < sum) {
    bfs(&N, src, dst);   /* what the source still reaches: the cut follows */
    size_t k = 0;
    for (size_t i = 0; i < m.n; i++)
      if (N.level[2 * i] >= 0 && N.level[2 * i + 1] < 0) out[k++] = m.node[i];
    for (size_t i = 1; i < k; i++)   /* few members: insertion sort by name */
      for (size_t j = i; j > 0 && g->rank[out[j - 1]] > g->rank[out[j]]; j--) {
        int32_t t = out[j]; out[j] = out[j - 1]; out[j - 1] = t;
      }
    *set = out; out = NULL;
    *nset = k;
    *total = flow;
    *ok = 1;
  }
  goto done;
nomem:
  rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
done:
  free(N.a); free(N.next); free(N.head); free(N.level); free(N.it); free(N.queue);
  free(out);
  sl_moral_free(&m);
  return rc;
}
