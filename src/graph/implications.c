/*
** implications.c: the testable implications of a graph (implications.h).
**
** The graph is first widened to a DAG: each <-> edge becomes a hidden node
** with two children.  For a pair (a, b) the ancestral set A = An({a, b}) is
** marked, and the moral graph of A is searched without being built: the
** neighbours of v are its parents, its children in A and their other
** parents.  Every search is a breadth-first search from one side that may
** not enter the nodes of a separator, so each pair costs O(|A| + edges of
** A) a few times over.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "implications.h"

#define POLL_PAIRS 64     /* pairs between two looks at *stop */

/* The widened DAG and the scratch space of the searches. */
typedef struct imp {
  const sl_graph *g;
  size_t n, nv;                  /* nodes of g; plus one per <-> edge */
  uint32_t *pa_off, *ch_off;
  int32_t *pa, *ch;
  unsigned char *hidden;         /* nv entries */
  uint32_t gen;                  /* stamps equal to gen are set */
  uint32_t *an, *seen, *inz, *inb;
  int32_t *queue, *bound, *given;
  size_t nbound;
} imp;

static void imp_free(imp *m) {
  free(m->pa_off); free(m->ch_off); free(m->pa); free(m->ch); free(m->hidden);
  free(m->an); free(m->seen); free(m->inz); free(m->inb);
  free(m->queue); free(m->bound); free(m->given);
}

/* A new generation of stamps (cleared on wrap-around). */
static uint32_t fresh(imp *m) {
  if (++m->gen == 0) {
    memset(m->an, 0, m->nv * sizeof *m->an);
    memset(m->seen, 0, m->nv * sizeof *m->seen);
    memset(m->inz, 0, m->nv * sizeof *m->inz);
    memset(m->inb, 0, m->nv * sizeof *m->inb);
    m->gen = 1;
  }
  return m->gen;
}

/* Fill one CSR from per-node counts already in off[1..]. */
static void prefix(uint32_t *off, size_t nv) {
  off[0] = 0;
  for (size_t v = 0; v < nv; v++) off[v + 1] += off[v];
}

/* The DAG with a hidden parent for each <-> edge, and the scratch arrays. */
static int imp_init(imp *m, const sl_graph *g, sl_error *e) {
  memset(m, 0, sizeof *m);
  m->g = g;
  m->n = g->n;
  m->nv = g->n + g->nb;
  size_t nv = m->nv ? m->nv : 1, nd = g->nd, nb = g->nb;
  m->pa_off = calloc(nv + 1, sizeof *m->pa_off);
  m->ch_off = calloc(nv + 1, sizeof *m->ch_off);
  m->pa = malloc((nd + 2 * nb + 1) * sizeof *m->pa);
  m->ch = malloc((nd + 2 * nb + 1) * sizeof *m->ch);
  m->hidden = calloc(nv, 1);
  m->an = calloc(nv, sizeof *m->an);
  m->seen = calloc(nv, sizeof *m->seen);
  m->inz = calloc(nv, sizeof *m->inz);
  m->inb = calloc(nv, sizeof *m->inb);
  m->queue = malloc(nv * sizeof *m->queue);
  m->bound = malloc(nv * sizeof *m->bound);
  m->given = malloc(nv * sizeof *m->given);
  if (!m->pa_off || !m->ch_off || !m->pa || !m->ch || !m->hidden || !m->an || !m->seen ||
      !m->inz || !m->inb || !m->queue || !m->bound || !m->given) {
    imp_free(m);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  size_t n = g->n;
  for (size_t v = 0; v < n; v++) {
    m->hidden[v] = g->hidden[v];
    m->pa_off[v + 1] = (g->pa.off[v + 1] - g->pa.off[v]) + (g->sb.off[v + 1] - g->sb.off[v]);
    m->ch_off[v + 1] = g->ch.off[v + 1] - g->ch.off[v];
  }
  for (size_t k = 0; k < nb; k++) { m->hidden[n + k] = 1; m->ch_off[n + k + 1] = 2; }
  prefix(m->pa_off, m->nv);
  prefix(m->ch_off, m->nv);
  /* fill: directed edges as they are; each <-> edge u < w gets node n + k */
  uint32_t *pfill = m->inz, *cfill = m->inb;   /* borrowed, zeroed below */
  for (size_t v = 0; v < m->nv; v++) { pfill[v] = m->pa_off[v]; cfill[v] = m->ch_off[v]; }
  for (size_t v = 0; v < n; v++)
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) {
      int32_t c = g->ch.adj[k];
      m->ch[cfill[v]++] = c;
      m->pa[pfill[c]++] = (int32_t)v;
    }
  size_t k = 0;
  for (size_t u = 0; u < n; u++)
    for (uint32_t i = g->sb.off[u]; i < g->sb.off[u + 1]; i++) {
      int32_t w = g->sb.adj[i];
      if ((size_t)w < u) continue;
      int32_t h = (int32_t)(n + k++);
      m->ch[cfill[h]++] = (int32_t)u;
      m->ch[cfill[h]++] = w;
      m->pa[pfill[u]++] = h;
      m->pa[pfill[w]++] = h;
    }
  memset(m->inz, 0, nv * sizeof *m->inz);
  memset(m->inb, 0, nv * sizeof *m->inb);
  return SL_OK;
}

/* Mark An({a, b}) (a and b included) with stamp gen in m->an. */
static void mark_ancestors(imp *m, int32_t a, int32_t b, uint32_t gen) {
  size_t head = 0, tail = 0;
  m->an[a] = gen; m->queue[tail++] = a;
  if (m->an[b] != gen) { m->an[b] = gen; m->queue[tail++] = b; }
  while (head < tail) {
    int32_t v = m->queue[head++];
    for (uint32_t k = m->pa_off[v]; k < m->pa_off[v + 1]; k++) {
      int32_t p = m->pa[k];
      if (m->an[p] != gen) { m->an[p] = gen; m->queue[tail++] = p; }
    }
  }
}

/* Whether the search may not enter v: a member of the separator (stamp zg
** in inz), or with all_observed, any observed node. */
static inline int blocks(const imp *m, int32_t v, uint32_t zg, int all_observed) {
  return all_observed ? !m->hidden[v] : m->inz[v] == zg;
}

/* Visit w from the search: a blocking node joins the boundary once. */
#define REACH(w) do {                                                      \
    int32_t w_ = (w);                                                      \
    if (w_ == to) return 1;                                                \
    if (m->seen[w_] == sg) break;                                          \
    m->seen[w_] = sg;                                                      \
    if (blocks(m, w_, zg, all_observed)) m->bound[m->nbound++] = w_;       \
    else m->queue[tail++] = w_;                                            \
  } while (0)

/* Breadth-first search from `from` in the moral graph of the marked
** ancestral set (stamp ag), not entering blocking nodes.  Returns 1 when
** `to` is reached; else 0 with the blocking nodes it touched in bound. */
static int search(imp *m, int32_t from, int32_t to, uint32_t ag, uint32_t zg, int all_observed) {
  uint32_t sg = fresh(m);
  size_t head = 0, tail = 0;
  m->nbound = 0;
  m->seen[from] = sg;
  m->queue[tail++] = from;
  while (head < tail) {
    int32_t v = m->queue[head++];
    for (uint32_t k = m->pa_off[v]; k < m->pa_off[v + 1]; k++) REACH(m->pa[k]);
    for (uint32_t k = m->ch_off[v]; k < m->ch_off[v + 1]; k++) {
      int32_t c = m->ch[k];
      if (m->an[c] != ag) continue;
      REACH(c);
      for (uint32_t j = m->pa_off[c]; j < m->pa_off[c + 1]; j++)   /* married parents */
        if (m->pa[j] != v) REACH(m->pa[j]);
    }
  }
  return 0;
}
#undef REACH

/* Stamp the boundary of the last search as the separator; returns its stamp. */
static uint32_t boundary_as_separator(imp *m) {
  uint32_t zg = fresh(m);
  for (size_t i = 0; i < m->nbound; i++) m->inz[m->bound[i]] = zg;
  return zg;
}

static int cmp_i32(const void *x, const void *y) {
  int32_t a = *(const int32_t *)x, b = *(const int32_t *)y;
  return (a > b) - (a < b);
}

/* The boundary of the last search, sorted by name, into m->given. */
static size_t boundary_by_name(imp *m) {
  const sl_graph *g = m->g;
  for (size_t i = 0; i < m->nbound; i++) m->given[i] = g->rank[m->bound[i]];
  qsort(m->given, m->nbound, sizeof *m->given, cmp_i32);
  for (size_t i = 0; i < m->nbound; i++) m->given[i] = g->by_rank[m->given[i]];
  return m->nbound;
}

/* A minimal separator of a and b in m->given: -1 when no observed set
** separates them.  The observed parents of b are tried first, then every
** observed ancestor; either is cut down to the nodes that touch a's side,
** then to those that touch b's side. */
static long separate(imp *m, int32_t a, int32_t b) {
  if (m->gen > UINT32_MAX - 8) { m->gen = UINT32_MAX; fresh(m); }  /* no wrap mid-pair */
  uint32_t ag = fresh(m);
  mark_ancestors(m, a, b, ag);
  uint32_t zg = fresh(m);
  for (uint32_t k = m->pa_off[b]; k < m->pa_off[b + 1]; k++)
    if (!m->hidden[m->pa[k]]) m->inz[m->pa[k]] = zg;
  if (search(m, a, b, ag, zg, 0) && search(m, a, b, ag, 0, 1)) return -1;
  zg = boundary_as_separator(m);
  if (search(m, b, a, ag, zg, 0)) return -1;   /* cannot happen: zg separates */
  return (long)boundary_by_name(m);
}

/* Ids of the observed nodes in the order of sl_graph_order. */
static int32_t *observed_order(const sl_graph *g, size_t *nobs, sl_error *e) {
  int32_t *ord = malloc((g->n ? g->n : 1) * sizeof *ord);
  if (!ord) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  sl_graph_order(g, ord);
  size_t k = 0;
  for (size_t i = 0; i < g->n; i++)
    if (!g->hidden[ord[i]]) ord[k++] = ord[i];
  *nobs = k;
  return ord;
}

/* Mark with stamp tag in adj every node joined to b by an edge. */
static void mark_adjacent(const sl_graph *g, int32_t b, int32_t *adj) {
  const sl_csr *lists[] = {&g->pa, &g->ch, &g->sb};
  for (int l = 0; l < 3; l++)
    for (uint32_t k = lists[l]->off[b]; k < lists[l]->off[b + 1]; k++) adj[lists[l]->adj[k]] = b;
}

int sl_implications_each(const sl_graph *g, sl_implication_fn fn, void *ctx,
                         size_t *untestable, volatile int *stop, sl_error *e) {
  imp m;
  size_t nobs = 0, pairs = 0;
  *untestable = 0;
  int rc = imp_init(&m, g, e);
  if (rc) return rc;
  int32_t *ord = observed_order(g, &nobs, e);
  int32_t *adj = malloc((g->n ? g->n : 1) * sizeof *adj);
  if (!ord || !adj) {
    rc = ord ? sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory") : SL_ENOMEM;
    goto done;
  }
  for (size_t v = 0; v < g->n; v++) adj[v] = -1;
  for (size_t j = 1; j < nobs && rc == SL_OK; j++) {
    int32_t b = ord[j];
    mark_adjacent(g, b, adj);
    for (size_t i = 0; i < j; i++) {
      int32_t a = ord[i];
      if (adj[a] == b) continue;
      if (++pairs % POLL_PAIRS == 0 && stop && *stop) {
        rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
        break;
      }
      long k = separate(&m, a, b);
      if (k < 0) { ++*untestable; continue; }
      int r = fn(ctx, a, b, m.given, (size_t)k);
      if (r) { rc = r; break; }
    }
  }
done:
  free(ord);
  free(adj);
  imp_free(&m);
  return rc;
}

/* SL_EARG naming a hidden node or a <-> edge, when the graph has one. */
static int only_visible(const sl_graph *g, sl_error *e) {
  static const char *what = "basis = \"local\" needs a graph without hidden nodes or <-> edges";
  for (size_t v = 0; v < g->n; v++) {
    if (g->hidden[v])
      return sl_error_set(e, SL_EARG, 0, 0, "%s, and '%s' is hidden (leave basis out to list "
                          "one implication per separable pair)", what, sl_names_get(&g->names, (int32_t)v));
    if (g->sb.off[v + 1] > g->sb.off[v])
      return sl_error_set(e, SL_EARG, 0, 0, "%s, and '%s' <-> '%s' is one (leave basis out to list "
                          "one implication per separable pair)", what, sl_names_get(&g->names, (int32_t)v),
                          sl_names_get(&g->names, g->sb.adj[g->sb.off[v]]));
  }
  return SL_OK;
}

int sl_implications_local(const sl_graph *g, sl_implication_fn fn, void *ctx,
                          volatile int *stop, sl_error *e) {
  int rc = only_visible(g, e);
  if (rc) return rc;
  size_t n = g->n;
  int32_t *ord = malloc((n ? n : 1) * sizeof *ord);
  unsigned char *skip = malloc(n ? n : 1);
  if (!ord || !skip) {
    free(ord); free(skip);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  sl_graph_order(g, ord);
  for (size_t i = 0; i < n && rc == SL_OK; i++) {
    int32_t v = ord[i];
    if (stop && *stop) { rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted"); break; }
    memset(skip, 0, n);
    if ((rc = sl_graph_descendants(g, &v, 1, skip, e))) break;
    skip[v] = 1;
    size_t np;
    const int32_t *pa = sl_graph_parents(g, v, &np);   /* sorted by name */
    for (size_t k = 0; k < np; k++) skip[pa[k]] = 1;
    for (size_t j = 0; j < n; j++) {
      if (skip[ord[j]]) continue;
      int r = fn(ctx, v, ord[j], pa, np);
      if (r) { rc = r; break; }
    }
  }
  free(ord);
  free(skip);
  return rc;
}
