/*
** moral.c: the augmented proper back-door graph.  On the ancestors of
** X, Y and the required nodes in the proper back-door graph (every arrow
** x -> v with v on a proper causal path removed), join every two nodes that
** a collider path connects: each district (a component of <-> edges) with
** its parents forms a clique (Richardson 2003; van der Zander et al. 2019,
** section 4).  Then m-separation is vertex separation in this graph.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust_internal.h"

void sl_moral_free(sl_moral *m) {
  free(m->node); free(m->local); free(m->off); free(m->adj);
  memset(m, 0, sizeof *m);
}

typedef struct pair { int32_t a, b; } pair;

static int cmp_pair(const void *pa, const void *pb) {
  const pair *a = pa, *b = pb;
  if (a->a != b->a) return a->a < b->a ? -1 : 1;
  return (a->b > b->b) - (a->b < b->b);
}

/* Whether p -> v survives in the proper back-door graph. */
static inline int kept(const sl_effect *q, int32_t p, int32_t v) {
  return !(q->in_x[p] && q->cn[v]);
}

int sl_moral_build(sl_moral *m, const sl_effect *q, sl_mark require, sl_error *e) {
  const sl_graph *g = q->g;
  size_t n = g->n;
  memset(m, 0, sizeof *m);
  unsigned char *an = calloc(n ? n : 1, 1);
  int32_t *queue = malloc((n ? n : 1) * sizeof *queue);
  int32_t *district = malloc((n ? n : 1) * sizeof *district);
  m->local = malloc((n ? n : 1) * sizeof *m->local);
  pair *pairs = NULL;
  size_t np = 0, cap = 0;
  int rc = SL_OK;
  if (!an || !queue || !district || !m->local) goto nomem;
  /* the ancestral set, along kept arrows */
  size_t head = 0, tail = 0;
  for (size_t v = 0; v < n; v++)
    if (q->in_x[v] || q->in_y[v] || (require && require[v])) { an[v] = 1; queue[tail++] = (int32_t)v; }
  while (head < tail) {
    int32_t v = queue[head++];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (!an[p] && kept(q, p, v)) { an[p] = 1; queue[tail++] = p; }
    }
  }
  m->n = tail;
  m->node = malloc((tail ? tail : 1) * sizeof *m->node);
  if (!m->node) goto nomem;
  for (size_t v = 0; v < n; v++) m->local[v] = -1;
  size_t k = 0;
  for (size_t v = 0; v < n; v++)
    if (an[v]) { m->local[v] = (int32_t)k; m->node[k++] = (int32_t)v; }
  /* districts inside the ancestral set, each with its parents: cliques */
  for (size_t v = 0; v < n; v++) district[v] = -1;
  int32_t *members = malloc((n ? n : 1) * sizeof *members);
  unsigned char *in_clique = calloc(n ? n : 1, 1);
  if (!members || !in_clique) { free(members); free(in_clique); goto nomem; }
  for (size_t s = 0; s < m->n; s++) {
    int32_t root = m->node[s];
    if (district[root] >= 0) continue;
    size_t nm = 0, h = 0;
    district[root] = root;
    queue[nm++] = root;
    while (h < nm) {
      int32_t v = queue[h++];
      for (uint32_t j = g->sb.off[v]; j < g->sb.off[v + 1]; j++) {
        int32_t w = g->sb.adj[j];
        if (an[w] && district[w] < 0) { district[w] = root; queue[nm++] = w; }
      }
    }
    size_t nc = 0;
    for (size_t i = 0; i < nm; i++) {
      int32_t v = queue[i];
      if (!in_clique[v]) { in_clique[v] = 1; members[nc++] = v; }
      for (uint32_t j = g->pa.off[v]; j < g->pa.off[v + 1]; j++) {
        int32_t p = g->pa.adj[j];
        if (kept(q, p, v) && !in_clique[p]) { in_clique[p] = 1; members[nc++] = p; }
      }
    }
    for (size_t i = 0; i < nc; i++) {
      in_clique[members[i]] = 0;
      for (size_t j = i + 1; j < nc; j++) {
        if (np + 2 > cap) {
          size_t c2 = cap ? cap * 2 : 1024;
          pair *p2 = realloc(pairs, c2 * sizeof *p2);
          if (!p2) { free(members); free(in_clique); goto nomem; }
          pairs = p2;
          cap = c2;
        }
        int32_t a = m->local[members[i]], b = m->local[members[j]];
        pairs[np++] = (pair){a, b};
        pairs[np++] = (pair){b, a};
      }
    }
  }
  free(members); free(in_clique);
  if (np) qsort(pairs, np, sizeof *pairs, cmp_pair);
  size_t u = 0;
  for (size_t i = 0; i < np; i++)
    if (u == 0 || pairs[i].a != pairs[u - 1].a || pairs[i].b != pairs[u - 1].b) pairs[u++] = pairs[i];
  m->off = calloc(m->n + 1, sizeof *m->off);
  m->adj = malloc((u ? u : 1) * sizeof *m->adj);
  if (!m->off || !m->adj) goto nomem;
  for (size_t i = 0; i < u; i++) { m->off[pairs[i].a + 1]++; m->adj[i] = pairs[i].b; }
  for (size_t i = 0; i < m->n; i++) m->off[i + 1] += m->off[i];
  goto done;
nomem:
  rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_moral_free(m);
done:
  free(an); free(queue); free(district); free(pairs);
  return rc;
}
