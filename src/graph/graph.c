/*
** graph.c: queries on a finished, immutable graph.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"

void sl_graph_free(sl_graph *g) {
  if (!g) return;
  sl_names_free(&g->names);
  free(g->hidden); free(g->rank); free(g->by_rank);
  free(g->pa.off); free(g->pa.adj);
  free(g->ch.off); free(g->ch.adj);
  free(g->sb.off); free(g->sb.adj);
  free(g);
}

size_t sl_graph_nnodes(const sl_graph *g) { return g->n; }
size_t sl_graph_ndirected(const sl_graph *g) { return g->nd; }
size_t sl_graph_nbidirected(const sl_graph *g) { return g->nb; }
const char *sl_graph_name(const sl_graph *g, int32_t v) { return sl_names_get(&g->names, v); }
int sl_graph_is_hidden(const sl_graph *g, int32_t v) { return g->hidden[v]; }
int32_t sl_graph_rank(const sl_graph *g, int32_t v) { return g->rank[v]; }
int32_t sl_graph_by_rank(const sl_graph *g, int32_t r) { return g->by_rank[r]; }

int32_t sl_graph_find(const sl_graph *g, const char *name, size_t len) {
  return sl_names_find(&g->names, name, len);
}

int32_t sl_graph_lookup(const sl_graph *g, const char *name, size_t len, sl_error *e) {
  int32_t v = sl_names_find(&g->names, name, len);
  if (v >= 0) return v;
  const char *best = NULL;
  if (g->n <= 100000 && len <= 256) {   /* suggestions: bounded work */
    const char **cands = malloc((g->n ? g->n : 1) * sizeof *cands);
    if (cands) {
      char word[257];
      memcpy(word, name, len);
      word[len] = '\0';
      for (size_t i = 0; i < g->n; i++) cands[i] = sl_graph_name(g, (int32_t)i);
      best = sl_closest(word, cands, g->n);
      free(cands);
    }
  }
  int shown = len > 80 ? 80 : (int)len;
  if (best)
    sl_error_set(e, SL_ENAME, 0, 0, "no node '%.*s' in the graph; did you mean '%s'?",
                 shown, name, best);
  else
    sl_error_set(e, SL_ENAME, 0, 0, "no node '%.*s' in the graph", shown, name);
  return -1;
}

static const int32_t *adjacency(const sl_csr *c, int32_t v, size_t *n) {
  *n = c->off[v + 1] - c->off[v];
  return c->adj + c->off[v];
}
const int32_t *sl_graph_parents(const sl_graph *g, int32_t v, size_t *n) { return adjacency(&g->pa, v, n); }
const int32_t *sl_graph_children(const sl_graph *g, int32_t v, size_t *n) { return adjacency(&g->ch, v, n); }
const int32_t *sl_graph_siblings(const sl_graph *g, int32_t v, size_t *n) { return adjacency(&g->sb, v, n); }

void sl_graph_edges(const sl_graph *g, sl_edge *out) {
  size_t k = 0;
  for (size_t r = 0; r < g->n; r++) {
    int32_t v = g->by_rank[r];
    for (uint32_t i = g->ch.off[v]; i < g->ch.off[v + 1]; i++)
      out[k++] = (sl_edge){v, g->ch.adj[i], SL_DIRECTED};
  }
  for (size_t r = 0; r < g->n; r++) {
    int32_t v = g->by_rank[r];
    for (uint32_t i = g->sb.off[v]; i < g->sb.off[v + 1]; i++)
      if (g->rank[g->sb.adj[i]] > (int32_t)r)
        out[k++] = (sl_edge){v, g->sb.adj[i], SL_BIDIRECTED};
  }
}

/* Mark everything reachable from the set along c in one or more steps. */
static int reach(const sl_graph *g, const sl_csr *c, const int32_t *src, size_t n,
                 unsigned char *mark, sl_error *e) {
  int32_t *stack = malloc((g->n ? g->n : 1) * sizeof *stack);
  if (!stack) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  memset(mark, 0, g->n);
  size_t top = 0;
  for (size_t i = 0; i < n; i++) {
    int32_t v = src[i];
    for (uint32_t k = c->off[v]; k < c->off[v + 1]; k++)
      if (!mark[c->adj[k]]) { mark[c->adj[k]] = 1; stack[top++] = c->adj[k]; }
  }
  while (top) {
    int32_t v = stack[--top];
    for (uint32_t k = c->off[v]; k < c->off[v + 1]; k++)
      if (!mark[c->adj[k]]) { mark[c->adj[k]] = 1; stack[top++] = c->adj[k]; }
  }
  free(stack);
  return SL_OK;
}

int sl_graph_ancestors(const sl_graph *g, const int32_t *src, size_t n,
                       unsigned char *mark, sl_error *e) {
  return reach(g, &g->pa, src, n, mark, e);
}

int sl_graph_descendants(const sl_graph *g, const int32_t *src, size_t n,
                         unsigned char *mark, sl_error *e) {
  return reach(g, &g->ch, src, n, mark, e);
}

/* Binary min-heap of node ids keyed by name rank. */
static void heap_push(int32_t *h, size_t *n, int32_t v, const int32_t *rank) {
  size_t i = (*n)++;
  while (i > 0 && rank[h[(i - 1) / 2]] > rank[v]) { h[i] = h[(i - 1) / 2]; i = (i - 1) / 2; }
  h[i] = v;
}

static int32_t heap_pop(int32_t *h, size_t *n, const int32_t *rank) {
  int32_t top = h[0], last = h[--(*n)];
  size_t i = 0;
  for (;;) {
    size_t c = 2 * i + 1;
    if (c >= *n) break;
    if (c + 1 < *n && rank[h[c + 1]] < rank[h[c]]) c++;
    if (rank[h[c]] >= rank[last]) break;
    h[i] = h[c];
    i = c;
  }
  if (*n) h[i] = last;
  return top;
}

void sl_graph_order(const sl_graph *g, int32_t *out) {
  size_t n = g->n, hn = 0, k = 0;
  int32_t *indeg = malloc((n ? n : 1) * sizeof *indeg);
  int32_t *heap = malloc((n ? n : 1) * sizeof *heap);
  if (!indeg || !heap) {   /* fall back to a plain Kahn order in out */
    free(indeg); free(heap);
    for (size_t v = 0; v < n; v++) out[v] = (int32_t)v;
    return;
  }
  for (size_t v = 0; v < n; v++) {
    indeg[v] = (int32_t)(g->pa.off[v + 1] - g->pa.off[v]);
    if (!indeg[v]) heap_push(heap, &hn, (int32_t)v, g->rank);
  }
  while (hn) {
    int32_t v = heap_pop(heap, &hn, g->rank);
    out[k++] = v;
    for (uint32_t i = g->ch.off[v]; i < g->ch.off[v + 1]; i++)
      if (--indeg[g->ch.adj[i]] == 0) heap_push(heap, &hn, g->ch.adj[i], g->rank);
  }
  free(indeg); free(heap);
}

/* Same rank-mapped neighbour lists for node ranks r in a and b. */
static int same_lists(const sl_graph *a, const sl_csr *ca, const sl_graph *b,
                      const sl_csr *cb, int32_t va, int32_t vb) {
  uint32_t na = ca->off[va + 1] - ca->off[va], nb = cb->off[vb + 1] - cb->off[vb];
  if (na != nb) return 0;
  for (uint32_t i = 0; i < na; i++)
    if (a->rank[ca->adj[ca->off[va] + i]] != b->rank[cb->adj[cb->off[vb] + i]]) return 0;
  return 1;
}

int sl_graph_equal(const sl_graph *a, const sl_graph *b) {
  if (a->n != b->n || a->nd != b->nd || a->nb != b->nb) return 0;
  for (size_t r = 0; r < a->n; r++) {
    int32_t va = a->by_rank[r], vb = b->by_rank[r];
    if (strcmp(sl_graph_name(a, va), sl_graph_name(b, vb)) != 0) return 0;
    if (a->hidden[va] != b->hidden[vb]) return 0;
  }
  for (size_t r = 0; r < a->n; r++) {
    int32_t va = a->by_rank[r], vb = b->by_rank[r];
    if (!same_lists(a, &a->ch, b, &b->ch, va, vb) ||
        !same_lists(a, &a->sb, b, &b->sb, va, vb))
      return 0;
  }
  return 1;
}

static int cmp_edge(const void *pa, const void *pb) {
  const sl_edge *a = pa, *b = pb;
  if (a->kind != b->kind) return a->kind - b->kind;
  if (a->from != b->from) return a->from < b->from ? -1 : 1;
  return (a->to > b->to) - (a->to < b->to);
}

sl_graph *sl_graph_without(const sl_graph *g, const unsigned char *drop_node,
                           const sl_edge *drop_edges, size_t ndrop, sl_error *e) {
  sl_edge *drop = malloc((ndrop ? ndrop : 1) * sizeof *drop);
  sl_builder *b = sl_builder_alloc();
  sl_graph *out = NULL;
  if (!drop || !b) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t i = 0; i < ndrop; i++) {   /* normalise <-> pairs by id */
    drop[i] = drop_edges[i];
    if (drop[i].kind == SL_BIDIRECTED && drop[i].from > drop[i].to) {
      int32_t t = drop[i].from; drop[i].from = drop[i].to; drop[i].to = t;
    }
  }
  qsort(drop, ndrop, sizeof *drop, cmp_edge);
  for (size_t v = 0; v < g->n; v++) {
    if (drop_node && drop_node[v]) continue;
    int32_t w = sl_builder_node(b, sl_graph_name(g, (int32_t)v), g->names.len[v], e);
    if (w < 0) goto done;
    if (g->hidden[v]) sl_builder_hidden(b, w);
  }
  for (size_t v = 0; v < g->n; v++) {
    if (drop_node && drop_node[v]) continue;
    for (int kind = SL_DIRECTED; kind <= SL_BIDIRECTED; kind++) {
      const sl_csr *c = kind == SL_DIRECTED ? &g->ch : &g->sb;
      for (uint32_t k = c->off[v]; k < c->off[v + 1]; k++) {
        int32_t t = c->adj[k];
        if ((drop_node && drop_node[t]) || (kind == SL_BIDIRECTED && t < (int32_t)v))
          continue;
        sl_edge key = {(int32_t)v, t, kind};
        if (ndrop && bsearch(&key, drop, ndrop, sizeof *drop, cmp_edge)) continue;
        int32_t from = sl_builder_node(b, sl_graph_name(g, (int32_t)v), g->names.len[v], e);
        int32_t to = sl_builder_node(b, sl_graph_name(g, t), g->names.len[t], e);
        if (sl_builder_edge(b, from, to, kind, 0, 0, e)) goto done;
      }
    }
  }
  out = sl_builder_finish(b, e);
done:
  free(drop);
  sl_builder_free(b);
  return out;
}
