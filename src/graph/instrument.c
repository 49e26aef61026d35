/*
** instrument.c: conditional instruments, checked one at a time and listed.
**
** The listing follows van der Zander, Textor and Liskiewicz 2015: z is a
** conditional instrument given some W iff it is one given the separator of
** z and y nearest to y among the allowed ancestors of {y, z} (in the graph
** Gc without the arrows from x into the causal paths).  That separator is
** the allowed boundary of y's part of the moral graph of An[y, z]; each
** c-component (nodes joined by <->) with its parents forms a clique there,
** kept linear in size by one hub node per component.  Each candidate costs
** O(n + m), and O(|W| (n + m)) more to drop the members W does not need.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust_internal.h"
#include "separation.h"
#include "instrument.h"

/* Scratch for one question x -> y. */
typedef struct iv_ws {
  const sl_graph *g;
  sl_effect q;
  sl_sep_ws *sep;
  size_t n;
  unsigned char *de_y;      /* y and its descendants */
  unsigned char *anc;       /* An[y, z] in Gc */
  unsigned char *allowed;   /* may be in W */
  unsigned char *inw;
  int32_t *queue;           /* 2n */
  int32_t *root;            /* c-component representative (union-find) */
  uint32_t *off;            /* hub adjacency: members and parents per root */
  int32_t *adj;
  unsigned char *seen;      /* 2n: nodes, then hubs */
  int32_t *w;
  size_t nw;
} iv_ws;

static void ws_free(iv_ws *s) {
  if (s->q.g) sl_effect_free(&s->q);
  sl_sep_free(s->sep);
  free(s->de_y); free(s->anc); free(s->allowed); free(s->inw); free(s->queue);
  free(s->root); free(s->off); free(s->adj); free(s->seen); free(s->w);
  memset(s, 0, sizeof *s);
}

static int ws_init(iv_ws *s, const sl_graph *g, int32_t x, int32_t y, sl_error *e) {
  memset(s, 0, sizeof *s);
  if (x == y)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both the treatment and the outcome",
                        sl_graph_name(g, x));
  int rc = sl_effect_init(&s->q, g, &x, 1, &y, 1, e);
  if (rc) return rc;
  size_t n = g->n ? g->n : 1, m = sl_graph_ndirected(g) + sl_graph_nbidirected(g);
  s->g = g; s->n = g->n;
  s->sep = sl_sep_alloc(g);
  s->de_y = calloc(n, 1); s->anc = calloc(n, 1); s->allowed = calloc(n, 1);
  s->inw = calloc(n, 1); s->queue = malloc(2 * n * sizeof *s->queue);
  s->root = malloc(n * sizeof *s->root); s->off = malloc((n + 2) * sizeof *s->off);
  s->adj = malloc((2 * n + m + 1) * sizeof *s->adj); s->seen = calloc(2 * n, 1);
  s->w = malloc(n * sizeof *s->w);
  if (!s->sep || !s->de_y || !s->anc || !s->allowed || !s->inw || !s->queue || !s->root ||
      !s->off || !s->adj || !s->seen || !s->w) {
    ws_free(s);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  sl_adj_walk(g, &y, 1, 1, NULL, NULL, s->de_y, s->queue);
  s->de_y[y] = 1;
  return SL_OK;
}

/* Whether p -> v is an edge of Gc (not an arrow from x into a causal path). */
static int kept(const iv_ws *s, int32_t p, int32_t v) {
  return !(s->q.in_x[p] && s->q.cn[v]);
}

/* (c): z and y d-separated given w in Gc. */
static int sep_c(iv_ws *s, int32_t z, const int32_t *w, size_t nw, int *sep, sl_trail *t,
                 sl_error *e) {
  return sl_separated_cut(s->sep, &z, 1, s->q.y, 1, w, nw, s->q.in_x, s->q.cn, sep, t, e);
}

/* (b): z and x d-connected given w in G. */
static int relevant(iv_ws *s, int32_t z, const int32_t *w, size_t nw, int *rel, sl_error *e) {
  int sep;
  int rc = sl_separated(s->sep, &z, 1, s->q.x, 1, w, nw, &sep, NULL, e);
  *rel = !sep;
  return rc;
}

/* A member of w that is not allowed: the directed path from y, or from the
** causal-path node it descends from. */
static int forbidden_reason(iv_ws *s, int32_t v, sl_reasons *rs) {
  const sl_graph *g = s->g;
  int32_t *path = malloc((g->n + 1) * sizeof *path);
  unsigned char *steps = malloc(g->n + 1), *from = calloc(g->n, 1);
  int rc = SL_ENOMEM;
  if (!path || !steps || !from) goto done;
  memset(steps, SL_FORWARD, g->n + 1);
  size_t len;
  if (s->de_y[v]) { from[s->q.y[0]] = 1; len = sl_adj_directed_path(g, from, v, NULL, path); }
  else len = sl_adj_directed_path(g, s->q.cn, v, NULL, path);
  rc = sl_adj_reason(rs, SL_WHY_IV_FORBIDDEN, v, len ? path[0] : -1, path, steps, len);
done:
  free(path); free(steps); free(from);
  return rc;
}

int sl_instrument_check(const sl_graph *g, int32_t x, int32_t y, int32_t z,
                        const int32_t *w, size_t nw, int *ok, sl_reasons *rs,
                        sl_error *e) {
  *ok = 0;
  if (g->hidden[z])
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: an instrument must be measured",
                        sl_graph_name(g, z));
  if (z == x || z == y)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is the %s: it cannot be its own instrument",
                        sl_graph_name(g, z), z == x ? "treatment" : "outcome");
  for (size_t i = 0; i < nw; i++) {
    const char *nm = sl_graph_name(g, w[i]);
    if (g->hidden[w[i]])
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be conditioned on", nm);
    if (w[i] == x || w[i] == y || w[i] == z)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is the %s: it cannot be in the given set", nm,
                          w[i] == x ? "treatment" : w[i] == y ? "outcome" : "instrument");
  }
  iv_ws s;
  int rc = ws_init(&s, g, x, y, e);
  if (rc) return rc;
  size_t before = rs->n, m = 0;
  for (size_t i = 0; i < nw; i++) s.inw[w[i]] = 1;
  for (size_t r = 0; r < g->n; r++) if (s.inw[g->by_rank[r]]) s.w[m++] = g->by_rank[r];
  for (size_t i = 0; i < m; i++)
    if (s.q.forb[s.w[i]] && forbidden_reason(&s, s.w[i], rs)) goto nomem;
  int rel, sep;
  sl_trail t;
  if ((rc = relevant(&s, z, s.w, m, &rel, e))) goto done;
  if (!rel && sl_adj_reason(rs, SL_WHY_IV_IRRELEVANT, z, -1, NULL, NULL, 0)) goto nomem;
  if ((rc = sep_c(&s, z, s.w, m, &sep, &t, e))) goto done;
  if (!sep && sl_adj_reason(rs, SL_WHY_IV_OPEN, z, -1, t.nodes, t.steps, t.len + 1)) goto nomem;
  *ok = rs->n == before;
  goto done;
nomem:
  rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
done:
  ws_free(&s);
  return rc;
}

/* ---- the listing ---- */

static int32_t find_root(int32_t *root, int32_t v) {
  while (root[v] != v) { root[v] = root[root[v]]; v = root[v]; }
  return v;
}

/* An[y, z] in Gc, the allowed members, the c-components within it and the
** hub adjacency: hub r lists the members of component r and their parents. */
static void moral_setup(iv_ws *s, int32_t z) {
  const sl_graph *g = s->g;
  size_t n = g->n, head = 0, tail = 0;
  int32_t y = s->q.y[0];
  memset(s->anc, 0, n);
  s->anc[y] = s->anc[z] = 1;
  s->queue[tail++] = y;
  s->queue[tail++] = z;
  while (head < tail) {
    int32_t v = s->queue[head++];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (s->anc[p] || !kept(s, p, v)) continue;
      s->anc[p] = 1;
      s->queue[tail++] = p;
    }
  }
  for (size_t v = 0; v < n; v++) {
    s->allowed[v] = s->anc[v] && !g->hidden[v] && !s->q.forb[v] && (int32_t)v != y &&
                    (int32_t)v != z;
    s->root[v] = (int32_t)v;
  }
  for (size_t v = 0; v < n; v++) {
    if (!s->anc[v]) continue;
    for (uint32_t k = g->sb.off[v]; k < g->sb.off[v + 1]; k++) {
      int32_t u = g->sb.adj[k];
      if (!s->anc[u]) continue;
      int32_t a = find_root(s->root, (int32_t)v), b = find_root(s->root, u);
      if (a != b) s->root[a] = b;
    }
  }
  for (size_t v = 0; v < n; v++) if (s->anc[v]) s->root[v] = find_root(s->root, (int32_t)v);
  /* count, then fill: hub r holds each member v and each kept parent of v */
  memset(s->off, 0, (n + 2) * sizeof *s->off);
  for (size_t v = 0; v < n; v++) {
    if (!s->anc[v]) continue;
    int32_t r = s->root[v];
    s->off[r + 2]++;
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
      if (kept(s, g->pa.adj[k], (int32_t)v)) s->off[r + 2]++;
  }
  for (size_t r = 0; r < n; r++) s->off[r + 2] += s->off[r + 1];
  for (size_t v = 0; v < n; v++) {
    if (!s->anc[v]) continue;
    int32_t r = s->root[v];
    s->adj[s->off[r + 1]++] = (int32_t)v;
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
      if (kept(s, g->pa.adj[k], (int32_t)v)) s->adj[s->off[r + 1]++] = g->pa.adj[k];
  }
}

/* The hubs a node touches: its own component's, and those of its children
** in An[y, z] (it is their parent). */
#define VISIT_HUB(r) do { int32_t h_ = (int32_t)n + (r);                       \
    if (!s->seen[h_]) { s->seen[h_] = 1; s->queue[tail++] = h_; } } while (0)

/* The allowed nodes bounding y's part of the moral graph, into s->w; 0
** when z lies in that part (no allowed set separates them). */
static int nearest(iv_ws *s, int32_t z) {
  const sl_graph *g = s->g;
  size_t n = g->n, head = 0, tail = 0;
  int32_t y = s->q.y[0];
  memset(s->seen, 0, 2 * n);
  s->nw = 0;
  s->seen[y] = 1;
  s->queue[tail++] = y;
  while (head < tail) {
    int32_t v = s->queue[head++];
    if (v >= (int32_t)n) {                 /* a hub: to every node of its clique */
      int32_t r = v - (int32_t)n;
      for (uint32_t k = s->off[r]; k < s->off[r + 1]; k++) {
        int32_t u = s->adj[k];
        if (s->seen[u]) continue;
        s->seen[u] = 1;
        if (u == z) return 0;
        if (s->allowed[u]) { s->w[s->nw++] = u; continue; }
        s->queue[tail++] = u;
      }
      continue;
    }
    VISIT_HUB(s->root[v]);
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) {
      int32_t c = g->ch.adj[k];
      if (s->anc[c] && kept(s, v, c)) VISIT_HUB(s->root[c]);
    }
  }
  return 1;
}
#undef VISIT_HUB

static int cmp_rank(const void *a, const void *b, const sl_graph *g) {
  int32_t x = g->rank[*(const int32_t *)a], y = g->rank[*(const int32_t *)b];
  return (x > y) - (x < y);
}

/* Sort ids by name (insertion sort: sets are small). */
static void sort_by_name(const sl_graph *g, int32_t *v, size_t n) {
  for (size_t i = 1; i < n; i++) {
    int32_t t = v[i];
    size_t j = i;
    while (j > 0 && cmp_rank(&v[j - 1], &t, g) > 0) { v[j] = v[j - 1]; j--; }
    v[j] = t;
  }
}

/* Whether z is an instrument; if so s->w holds an inclusion-minimal W. */
static int instrument_for(iv_ws *s, int32_t z, int *is, sl_error *e) {
  *is = 0;
  moral_setup(s, z);
  if (!nearest(s, z)) return SL_OK;
  int rel, sep, rc;
  if ((rc = relevant(s, z, s->w, s->nw, &rel, e))) return rc;
  if (!rel) return SL_OK;
  sort_by_name(s->g, s->w, s->nw);
  /* drop the members that (b) and (c) do not need, in name order */
  for (size_t i = 0; i < s->nw;) {
    int32_t v = s->w[i];
    memmove(s->w + i, s->w + i + 1, (s->nw - i - 1) * sizeof *s->w);
    s->nw--;
    if ((rc = sep_c(s, z, s->w, s->nw, &sep, NULL, e))) return rc;
    if (sep && (rc = relevant(s, z, s->w, s->nw, &rel, e))) return rc;
    if (sep && rel) continue;
    memmove(s->w + i + 1, s->w + i, (s->nw - i) * sizeof *s->w);
    s->w[i] = v;
    s->nw++;
    i++;
  }
  *is = 1;
  return SL_OK;
}

int sl_instruments_each(const sl_graph *g, int32_t x, int32_t y, sl_instrument_fn fn,
                        void *ctx, volatile int *stop, sl_error *e) {
  iv_ws s;
  int rc = ws_init(&s, g, x, y, e);
  if (rc) return rc;
  for (size_t r = 0; r < g->n && rc == SL_OK; r++) {
    int32_t z = g->by_rank[r];
    if (stop && *stop) { rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted"); break; }
    if (z == x || z == y || g->hidden[z]) continue;
    int is;
    if ((rc = instrument_for(&s, z, &is, e))) break;
    if (is) rc = fn(ctx, z, s.w, s.nw);
  }
  ws_free(&s);
  return rc;
}
