/*
** builder.c: collecting nodes and edges, then freezing them into an
** immutable sl_graph (sorted adjacency, acyclicity check).
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "notation.h"

typedef struct pending {
  int32_t from, to;
  int32_t line, col;
  int32_t kind;
} pending;

struct sl_builder {
  sl_names names;
  unsigned char *hidden;
  size_t hidden_cap;
  pending *e;
  size_t ne, ecap;
  int bad;                  /* out of memory while building */
};

sl_builder *sl_builder_alloc(void) {
  sl_builder *b = calloc(1, sizeof *b);
  if (!b) return NULL;
  if (sl_names_init(&b->names) != 0) { free(b); return NULL; }
  return b;
}

void sl_builder_free(sl_builder *b) {
  if (!b) return;
  sl_names_free(&b->names);
  free(b->hidden);
  free(b->e);
  free(b);
}

size_t sl_builder_nnodes(const sl_builder *b) { return b->names.n; }

const char *sl_builder_name(const sl_builder *b, int32_t v) {
  return sl_names_get(&b->names, v);
}

int32_t sl_builder_node(sl_builder *b, const char *name, size_t len, sl_error *e) {
  if (len > SL_MAX_NAME) {
    sl_error_set(e, SL_ELIMIT, 0, 0, "a node name is longer than %d bytes", SL_MAX_NAME);
    return -1;
  }
  if (b->bad) {
    sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return -1;
  }
  size_t before = b->names.n;
  int32_t v = sl_names_intern(&b->names, name, len);
  if (v < 0) {
    if (b->names.n >= SL_MAX_NODES)
      sl_error_set(e, SL_ELIMIT, 0, 0, "more than %d nodes", SL_MAX_NODES);
    else
      sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return -1;
  }
  if (b->names.n > before) {
    if (b->names.n > b->hidden_cap) {
      size_t cap = b->hidden_cap ? b->hidden_cap * 2 : 64;
      unsigned char *h = realloc(b->hidden, cap);
      if (!h) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return -1; }
      b->hidden = h;
      b->hidden_cap = cap;
    }
    b->hidden[v] = 0;
  }
  return v;
}

int sl_builder_hidden(sl_builder *b, int32_t v) {
  b->hidden[v] = 1;
  return SL_OK;
}

int sl_builder_edge(sl_builder *b, int32_t from, int32_t to, int kind,
                    int line, int col, sl_error *e) {
  if (from == to) {
    const char *nm = sl_names_get(&b->names, from);
    if (kind == SL_DIRECTED)
      return sl_error_set(e, SL_ESYNTAX, line, col,
                          "self-loop: '%s' cannot cause itself", nm);
    return sl_error_set(e, SL_ESYNTAX, line, col,
                        "'%s' cannot share a hidden cause with itself", nm);
  }
  if (b->ne == b->ecap) {
    size_t cap = b->ecap ? b->ecap * 2 : 256;
    if (b->ne >= (size_t)SL_MAX_EDGES * 2)
      return sl_error_set(e, SL_ELIMIT, line, col, "more than %d edges", SL_MAX_EDGES);
    pending *p = realloc(b->e, cap * sizeof *p);
    if (!p) return sl_error_set(e, SL_ENOMEM, line, col, "out of memory");
    b->e = p;
    b->ecap = cap;
  }
  b->e[b->ne++] = (pending){from, to, line, col, kind};
  return SL_OK;
}

int sl_builder_add_graph(sl_builder *b, const sl_graph *g, sl_error *e) {
  for (size_t v = 0; v < g->n; v++) {
    int32_t w = sl_builder_node(b, sl_graph_name(g, (int32_t)v),
                                g->names.len[v], e);
    if (w < 0) return e ? e->code : SL_ENOMEM;
    if (g->hidden[v]) b->hidden[w] = 1;
  }
  for (size_t v = 0; v < g->n; v++) {
    int32_t from = sl_names_find(&b->names, sl_graph_name(g, (int32_t)v), g->names.len[v]);
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) {
      int32_t w = g->ch.adj[k];
      int32_t to = sl_names_find(&b->names, sl_graph_name(g, w), g->names.len[w]);
      if (sl_builder_edge(b, from, to, SL_DIRECTED, 0, 0, e)) return e->code;
    }
    for (uint32_t k = g->sb.off[v]; k < g->sb.off[v + 1]; k++) {
      int32_t w = g->sb.adj[k];
      if (g->rank[w] < g->rank[v]) continue;
      int32_t to = sl_names_find(&b->names, sl_graph_name(g, w), g->names.len[w]);
      if (sl_builder_edge(b, from, to, SL_BIDIRECTED, 0, 0, e)) return e->code;
    }
  }
  return SL_OK;
}

/* ---- freezing ---- */

static const sl_names *sort_names;   /* qsort has no context argument */

static int cmp_by_name(const void *pa, const void *pb) {
  int32_t a = *(const int32_t *)pa, b = *(const int32_t *)pb;
  return strcmp(sl_names_get(sort_names, a), sl_names_get(sort_names, b));
}

static const int32_t *sort_rank;   /* context for cmp_rank_of */

/* One stable counting-sort pass of src into dst by key(e) in [0, nkeys). */
static void count_pass(const pending *src, pending *dst, size_t ne, size_t nkeys,
                       uint32_t *count, const int32_t *rank, int which) {
  memset(count, 0, (nkeys + 1) * sizeof *count);
#define KEY(p) ((size_t)(which == 0 ? rank[(p).to] : which == 1 ? rank[(p).from] : (p).kind))
  for (size_t i = 0; i < ne; i++) count[KEY(src[i]) + 1]++;
  for (size_t k = 0; k < nkeys; k++) count[k + 1] += count[k];
  for (size_t i = 0; i < ne; i++) dst[count[KEY(src[i])]++] = src[i];
#undef KEY
}

/* Sort the edges by kind, then from-rank, then to-rank, keeping the order
** of writing among repeats (so the first written comes first): three stable
** counting passes, linear in nodes plus edges. */
static int sort_edges(sl_builder *b, const int32_t *rank, size_t n) {
  size_t ne = b->ne;
  if (ne < 2) return 0;
  pending *tmp = malloc(ne * sizeof *tmp);
  uint32_t *count = malloc((n + 2) * sizeof *count);
  if (!tmp || !count) { free(tmp); free(count); return -1; }
  count_pass(b->e, tmp, ne, n, count, rank, 0);
  count_pass(tmp, b->e, ne, n, count, rank, 1);
  count_pass(b->e, tmp, ne, 2, count, rank, 2);
  free(b->e);
  b->e = tmp;
  b->ecap = ne;
  free(count);
  return 0;
}

/* Fill a CSR from (key, value) pairs given in value-rank order per key. */
static int csr_build(sl_csr *c, size_t n, size_t m, const pending *e, size_t ne,
                     int kind, int reverse, int both) {
  c->off = calloc(n + 1, sizeof *c->off);
  c->adj = malloc((m ? m : 1) * sizeof *c->adj);
  if (!c->off || !c->adj) return -1;
  for (size_t i = 0; i < ne; i++) {
    if (e[i].kind != kind) continue;
    c->off[(reverse ? e[i].to : e[i].from) + 1]++;
    if (both) c->off[e[i].to + 1]++;
  }
  for (size_t v = 0; v < n; v++) c->off[v + 1] += c->off[v];
  uint32_t *fill = malloc((n ? n : 1) * sizeof *fill);
  if (!fill) return -1;
  memcpy(fill, c->off, n * sizeof *fill);
  for (size_t i = 0; i < ne; i++) {
    if (e[i].kind != kind) continue;
    if (reverse) c->adj[fill[e[i].to]++] = e[i].from;
    else c->adj[fill[e[i].from]++] = e[i].to;
    if (both) c->adj[fill[e[i].to]++] = e[i].from;
  }
  free(fill);
  return 0;
}

static int cmp_rank_of(const void *pa, const void *pb) {
  int32_t a = sort_rank[*(const int32_t *)pa], b = sort_rank[*(const int32_t *)pb];
  return (a > b) - (a < b);
}

/* Sibling lists get entries from both ends of an edge: sort each. */
static void csr_sort(sl_csr *c, const int32_t *rank, size_t n) {
  sort_rank = rank;
  for (size_t v = 0; v < n; v++)
    qsort(c->adj + c->off[v], c->off[v + 1] - c->off[v], sizeof *c->adj, cmp_rank_of);
}

/* The position of the directed edge f -> t in the sorted, deduplicated e. */
static const pending *find_edge(const sl_graph *g, const pending *e, size_t nd,
                                int32_t f, int32_t t) {
  size_t lo = 0, hi = nd;
  int32_t rf = g->rank[f], rt = g->rank[t];
  while (lo < hi) {
    size_t mid = lo + (hi - lo) / 2;
    int32_t mf = g->rank[e[mid].from], mt = g->rank[e[mid].to];
    if (mf < rf || (mf == rf && mt < rt)) lo = mid + 1; else hi = mid;
  }
  return lo < nd && e[lo].from == f && e[lo].to == t ? &e[lo] : NULL;
}

/* Report a directed cycle among the nodes Kahn's algorithm left behind,
** written from its smallest name and located at its latest-written edge. */
static int report_cycle(const sl_graph *g, const int32_t *indeg,
                        const pending *e, size_t nd, sl_error *err) {
  size_t n = g->n;
  int32_t *seen = malloc(n * sizeof *seen), *path = malloc(n * sizeof *path);
  if (!seen || !path) {
    free(seen); free(path);
    return sl_error_set(err, SL_ECYCLE, 0, 0, "the graph has a directed cycle");
  }
  for (size_t v = 0; v < n; v++) seen[v] = -1;
  /* every leftover node keeps a leftover parent: walk parents to a repeat */
  int32_t v = 0;
  while (indeg[v] == 0) v++;
  size_t len = 0;
  while (seen[v] < 0) {
    seen[v] = (int32_t)len;
    path[len++] = v;
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
      if (indeg[g->pa.adj[k]] > 0) { v = g->pa.adj[k]; break; }
  }
  /* path[start..len) runs against the arrows: fwd(j) runs with them */
  size_t start = (size_t)seen[v], clen = len - start, best = 0;
#define FWD(j) path[start + (clen - ((j) % clen)) % clen]
  for (size_t j = 1; j < clen; j++)
    if (g->rank[FWD(j)] < g->rank[FWD(best)]) best = j;
  sl_buf b;
  sl_buf_init(&b);
  int line = 0, col = 0;
  for (size_t i = 0; i <= clen; i++) {
    int32_t cur = FWD(best + i);
    if (i) {
      const pending *p = find_edge(g, e, nd, FWD(best + i - 1), cur);
      if (p && (p->line > line || (p->line == line && p->col > col))) {
        line = p->line; col = p->col;
      }
      sl_buf_adds(&b, " -> ");
    }
    sl_name_write(sl_graph_name(g, cur), &b);
  }
#undef FWD
  sl_error_set(err, SL_ECYCLE, line, col, "directed cycle: %.*s",
               (int)(b.len < 400 ? b.len : 400), b.data ? b.data : "?");
  sl_buf_free(&b);
  free(seen); free(path);
  return SL_ECYCLE;
}

/* Kahn's algorithm: 0 when acyclic. */
static int check_acyclic(const sl_graph *g, const pending *e, size_t nd, sl_error *err) {
  size_t n = g->n, head = 0, tail = 0;
  int32_t *indeg = malloc((n ? n : 1) * sizeof *indeg);
  int32_t *queue = malloc((n ? n : 1) * sizeof *queue);
  if (!indeg || !queue) {
    free(indeg); free(queue);
    return sl_error_set(err, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t v = 0; v < n; v++) {
    indeg[v] = (int32_t)(g->pa.off[v + 1] - g->pa.off[v]);
    if (!indeg[v]) queue[tail++] = (int32_t)v;
  }
  while (head < tail) {
    int32_t v = queue[head++];
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++)
      if (--indeg[g->ch.adj[k]] == 0) queue[tail++] = g->ch.adj[k];
  }
  int rc = SL_OK;
  if (tail < n) rc = report_cycle(g, indeg, e, nd, err);
  free(indeg); free(queue);
  return rc;
}

sl_graph *sl_builder_finish(sl_builder *b, sl_error *err) {
  sl_graph *g = calloc(1, sizeof *g);
  if (!g) { sl_error_set(err, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  size_t n = b->names.n;
  g->n = n;
  g->names = b->names;
  g->hidden = b->hidden ? b->hidden : calloc(1, 1);
  b->hidden = NULL; b->hidden_cap = 0;
  if (sl_names_init(&b->names) != 0) b->bad = 1;
  g->rank = malloc((n ? n : 1) * sizeof *g->rank);
  g->by_rank = malloc((n ? n : 1) * sizeof *g->by_rank);
  if (!g->rank || !g->by_rank || !g->hidden) goto nomem;
  for (size_t v = 0; v < n; v++) g->by_rank[v] = (int32_t)v;
  sort_names = &g->names;
  qsort(g->by_rank, n, sizeof *g->by_rank, cmp_by_name);
  for (size_t r = 0; r < n; r++) g->rank[g->by_rank[r]] = (int32_t)r;
  /* normalise <-> edges, sort, drop repeats (keeping the first position) */
  pending *e = b->e;
  size_t ne = b->ne, m = 0;
  for (size_t i = 0; i < ne; i++)
    if (e[i].kind == SL_BIDIRECTED && g->rank[e[i].from] > g->rank[e[i].to]) {
      int32_t t = e[i].from; e[i].from = e[i].to; e[i].to = t;
    }
  if (sort_edges(b, g->rank, n) != 0) goto nomem;
  e = b->e;
  for (size_t i = 0; i < ne; i++)
    if (m == 0 || e[i].kind != e[m - 1].kind || e[i].from != e[m - 1].from ||
        e[i].to != e[m - 1].to)
      e[m++] = e[i];
  for (size_t i = 0; i < m; i++) { if (e[i].kind == SL_DIRECTED) g->nd++; else g->nb++; }
  if (csr_build(&g->ch, n, g->nd, e, m, SL_DIRECTED, 0, 0) ||
      csr_build(&g->pa, n, g->nd, e, m, SL_DIRECTED, 1, 0) ||
      csr_build(&g->sb, n, 2 * g->nb, e, m, SL_BIDIRECTED, 0, 1))
    goto nomem;
  csr_sort(&g->sb, g->rank, n);   /* parents arrive in from-rank order already */
  if (check_acyclic(g, e, g->nd, err) != SL_OK) {
    b->ne = 0;
    sl_graph_free(g);
    return NULL;
  }
  b->ne = 0;
  return g;
nomem:
  b->ne = 0;
  sl_graph_free(g);
  sl_error_set(err, SL_ENOMEM, 0, 0, "out of memory");
  return NULL;
}
