/*
** frontdoor.c: the front-door criterion (Pearl 2009, definition 3.3.3):
** the check of one set with its reasons, the largest candidate set, and the
** listing of the inclusion-minimal sets.
**
** The largest set.  Condition (ii) holds member by member (Z_ii: the
** nodes that no open back-door trail from x reaches).  The sets within Z_ii
** that satisfy (iii) are closed under union, so there is a largest one;
** it is found by removing, until none is left, every candidate that a
** back-door trail from y reaches given x in the graph without the arrows
** out of the remaining candidates (Jeong, Tian and Bareinboim 2022,
** NeurIPS, "Finding and listing front-door adjustment sets": FindFDSet).
** A front-door set exists iff that set intercepts every directed path.
**
** The minimal sets.  Jeong, Tian and Bareinboim list every front-door set
** (ListFDSets).  We list the inclusion-minimal ones with a simpler method
** of our own, a branching search on violated conditions: a set I that is
** not a front-door set misses a directed path, or leaves a back-door trail
** from a member to y open given x; every front-door set holding I holds a
** node of it, so the search branches on those nodes (branch i takes node
** i and leaves out nodes 1..i-1: no set is found twice).  Each node of the
** search is pruned by the largest-set test above (nothing between I and R
** unless the largest set within R holds I and intercepts every path); a
** front-door set I is reported when no member can be dropped.  A step costs
** O(|I| (n + m)).  Polynomial delay is not guaranteed: the search may pass
** non-minimal front-door sets between two answers (make bench shows the
** mean and the largest delay on random graphs of 1e3 nodes).  Candidates
** are restricted to ancestors of y: each member of a minimal set has a
** directed path to y.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust_internal.h"
#include "frontdoor.h"

/* Checks that x and y are distinct observed nodes. */
static int check_xy(const sl_graph *g, int32_t x, int32_t y, sl_error *e) {
  if (x < 0 || y < 0 || (size_t)x >= g->n || (size_t)y >= g->n)
    return sl_error_set(e, SL_EARG, 0, 0, "no such node");
  if (x == y)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both the treatment and the outcome",
                        sl_graph_name(g, x));
  if (g->hidden[x])
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be a treatment",
                        sl_graph_name(g, x));
  if (g->hidden[y])
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be an outcome",
                        sl_graph_name(g, y));
  return SL_OK;
}

/* Scratch shared by the searches; every array has room for n nodes or 2n
** ball states. */
typedef struct fd_ws {
  const sl_graph *g;
  int32_t x, y;
  size_t n;
  unsigned char *anx;      /* x and its ancestors */
  unsigned char *seen;     /* 2n ball states */
  unsigned char *mark;     /* n: scratch */
  int32_t *queue;          /* 2n */
  int32_t *bad;            /* n */
} fd_ws;

static void ws_free(fd_ws *w) {
  free(w->anx); free(w->seen); free(w->mark); free(w->queue); free(w->bad);
  memset(w, 0, sizeof *w);
}

static int ws_init(fd_ws *w, const sl_graph *g, int32_t x, int32_t y, sl_error *e) {
  memset(w, 0, sizeof *w);
  size_t n = g->n ? g->n : 1;
  w->g = g; w->x = x; w->y = y; w->n = g->n;
  w->anx = calloc(n, 1); w->seen = calloc(2 * n, 1); w->mark = calloc(n, 1);
  w->queue = malloc(2 * n * sizeof *w->queue); w->bad = malloc(n * sizeof *w->bad);
  if (!w->anx || !w->seen || !w->mark || !w->queue || !w->bad) {
    ws_free(w);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  sl_adj_walk(g, &x, 1, 0, NULL, NULL, w->anx, w->queue);
  w->anx[x] = 1;
  return SL_OK;
}

/* Z_ii: mark[v] = 1 for every node no back-door trail from x reaches open
** given the empty set (the ball leaves x by arrowheads only and never
** passes a collider). */
static void cand_ii(fd_ws *w, unsigned char *out) {
  const sl_graph *g = w->g;
  size_t n = g->n, head = 0, tail = 0;
  memset(w->seen, 0, 2 * n);
  memset(out, 1, n);
  out[w->x] = 0;
  /* states 2v + (arrived by an arrowhead) */
  for (uint32_t k = g->pa.off[w->x]; k < g->pa.off[w->x + 1]; k++) {
    int32_t s = 2 * g->pa.adj[k];
    if (!w->seen[s]) { w->seen[s] = 1; w->queue[tail++] = s; }
  }
  for (uint32_t k = g->sb.off[w->x]; k < g->sb.off[w->x + 1]; k++) {
    int32_t s = 2 * g->sb.adj[k] + 1;
    if (!w->seen[s]) { w->seen[s] = 1; w->queue[tail++] = s; }
  }
  while (head < tail) {
    int32_t s = w->queue[head++], v = s / 2;
    out[v] = 0;
    if (v == w->x) continue;             /* trails from x end at x's return */
    int by_head = s & 1;
#define PUSH(t) do { int32_t t_ = (t); if (!w->seen[t_]) { w->seen[t_] = 1; w->queue[tail++] = t_; } } while (0)
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) PUSH(2 * g->ch.adj[k] + 1);
    if (!by_head) {                       /* a non-collider may turn back up */
      for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) PUSH(2 * g->pa.adj[k]);
      for (uint32_t k = g->sb.off[v]; k < g->sb.off[v + 1]; k++) PUSH(2 * g->sb.adj[k] + 1);
    }
  }
}

/* The ball from y given {x} in the graph without the arrows out of the
** members of c; members it reaches by an arrowhead go to w->bad.  Members
** are walls: reached, never left.  Returns how many are bad. */
static size_t heads_reached(fd_ws *w, const unsigned char *c) {
  const sl_graph *g = w->g;
  size_t n = g->n, head = 0, tail = 0, nbad = 0;
  memset(w->seen, 0, 2 * n);
  w->seen[2 * w->y] = 1;
  w->queue[tail++] = 2 * w->y;
  while (head < tail) {
    int32_t s = w->queue[head++], v = s / 2;
    int by_head = s & 1;
    if (c[v]) {
      if (by_head) w->bad[nbad++] = v;
      continue;
    }
    int in_z = v == w->x;
    int pass_tail = !in_z, pass_head = by_head ? w->anx[v] : !in_z;
    if (pass_tail)
      for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) PUSH(2 * g->ch.adj[k] + 1);
    if (pass_head) {
      for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
        if (!c[g->pa.adj[k]]) PUSH(2 * g->pa.adj[k]);
      for (uint32_t k = g->sb.off[v]; k < g->sb.off[v + 1]; k++) PUSH(2 * g->sb.adj[k] + 1);
    }
  }
#undef PUSH
  /* a member reached twice by an arrowhead is listed once: seen guards it */
  return nbad;
}

/* Whether the members of c intercept every directed path from x to y. */
static int intercepts(fd_ws *w, const unsigned char *c) {
  const sl_graph *g = w->g;
  size_t head = 0, tail = 0;
  memset(w->mark, 0, g->n);
  w->mark[w->x] = 1;
  w->queue[tail++] = w->x;
  while (head < tail) {
    int32_t v = w->queue[head++];
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) {
      int32_t u = g->ch.adj[k];
      if (w->mark[u] || c[u]) continue;
      if (u == w->y) return 0;
      w->mark[u] = 1;
      w->queue[tail++] = u;
    }
  }
  return 1;
}

/* Shrink c to the largest subset satisfying (iii); each removed id is
** passed to undo (may be NULL) so the caller can put it back. */
typedef struct undo_stack { int32_t *v; size_t n; } undo_stack;

static size_t shrink_iii(fd_ws *w, unsigned char *c, undo_stack *u) {
  size_t removed = 0, nb;
  while ((nb = heads_reached(w, c)) > 0)
    for (size_t i = 0; i < nb; i++) {
      if (!c[w->bad[i]]) continue;
      c[w->bad[i]] = 0;
      removed++;
      if (u) u->v[u->n++] = w->bad[i];
    }
  return removed;
}

/* The candidates: observed, neither x nor y, satisfying (ii), and (when
** anc_y) ancestors of y. */
static void candidates(fd_ws *w, unsigned char *c, int anc_y) {
  const sl_graph *g = w->g;
  cand_ii(w, c);
  if (anc_y) {
    memset(w->mark, 0, g->n);
    sl_adj_walk(g, &w->y, 1, 0, NULL, NULL, w->mark, w->queue);
  }
  for (size_t v = 0; v < g->n; v++)
    if (g->hidden[v] || (int32_t)v == w->y || (anc_y && !w->mark[v])) c[v] = 0;
}

int sl_frontdoor_find(const sl_graph *g, int32_t x, int32_t y, int32_t **set, size_t *n,
                      int *ok, sl_error *e) {
  *set = NULL; *n = 0; *ok = 0;
  int rc = check_xy(g, x, y, e);
  if (rc) return rc;
  fd_ws w;
  if ((rc = ws_init(&w, g, x, y, e))) return rc;
  unsigned char *c = calloc(g->n ? g->n : 1, 1);
  int32_t *out = malloc((g->n ? g->n : 1) * sizeof *out);
  if (!c || !out) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  candidates(&w, c, 0);
  shrink_iii(&w, c, NULL);
  if (intercepts(&w, c)) {
    *ok = 1;
    for (size_t r = 0; r < g->n; r++)
      if (c[g->by_rank[r]]) out[(*n)++] = g->by_rank[r];
    *set = out;
    out = NULL;
  }
done:
  free(c); free(out);
  ws_free(&w);
  return rc;
}

/* ---- the check of one set ---- */

/* Directed paths from x to y that avoid the set, up to max, as reasons.
** The search walks only nodes that reach y avoiding the set, so every
** branch it enters ends in a path. */
static int missed_paths(fd_ws *w, const unsigned char *inz, size_t max, sl_reasons *rs) {
  const sl_graph *g = w->g;
  size_t n = g->n, head = 0, tail = 0, found = 0;
  unsigned char *live = calloc(n ? n : 1, 1), *on = calloc(n ? n : 1, 1);
  int32_t *path = malloc((n + 1) * sizeof *path);
  uint32_t *next = malloc((n + 1) * sizeof *next);
  unsigned char *steps = malloc(n + 1);
  int rc = SL_OK;
  if (!live || !on || !path || !next || !steps) { rc = SL_ENOMEM; goto done; }
  memset(steps, SL_FORWARD, n + 1);
  live[w->y] = 1;                      /* live: reaches y through non-members */
  w->queue[tail++] = w->y;
  while (head < tail) {
    int32_t v = w->queue[head++];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (live[p] || inz[p]) continue;
      live[p] = 1;
      if (p != w->x) w->queue[tail++] = p;
    }
  }
  if (!live[w->x]) goto done;
  size_t top = 0;
  path[0] = w->x; next[0] = 0; on[w->x] = 1;
  while (found < max) {
    int32_t v = path[top];
    uint32_t k = g->ch.off[v] + next[top];
    if (k >= g->ch.off[v + 1]) {
      on[v] = 0;
      if (top == 0) break;
      top--;
      continue;
    }
    next[top]++;
    int32_t u = g->ch.adj[k];
    if (!live[u] || on[u] || u == w->x) continue;
    path[top + 1] = u;
    if (u == w->y) {
      if (sl_adj_reason(rs, SL_WHY_FD_MISSED, -1, -1, path, steps, top + 2)) { rc = SL_ENOMEM; goto done; }
      found++;
      continue;
    }
    top++;
    next[top] = 0;
    on[u] = 1;
  }
done:
  free(live); free(on); free(path); free(next); free(steps);
  return rc;
}

int sl_frontdoor_check(const sl_graph *g, int32_t x, int32_t y, const int32_t *z,
                       size_t nz, int *ok, sl_reasons *rs, size_t max_paths,
                       sl_error *e) {
  *ok = 0;
  int rc = check_xy(g, x, y, e);
  if (rc) return rc;
  for (size_t i = 0; i < nz; i++)
    if (g->hidden[z[i]])
      return sl_error_set(e, SL_EARG, 0, 0,
                          "'%s' is hidden: a front-door set holds measured nodes only",
                          sl_graph_name(g, z[i]));
  fd_ws w;
  if ((rc = ws_init(&w, g, x, y, e))) return rc;
  size_t before = rs->n, m = 0;
  unsigned char *inz = calloc(g->n ? g->n : 1, 1);
  unsigned char *inx = calloc(g->n ? g->n : 1, 1);
  int32_t *zz = malloc((nz ? nz : 1) * sizeof *zz);
  sl_sep_ws *sw = sl_sep_alloc(g);
  if (!inz || !inx || !zz || !sw) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  inx[x] = 1;
  for (size_t i = 0; i < nz; i++) {
    int32_t v = z[i];
    if (v == x || v == y) {
      if (!inz[v] && sl_adj_reason(rs, v == x ? SL_WHY_TREATMENT : SL_WHY_OUTCOME, v, -1,
                                   NULL, NULL, 0)) goto nomem;
      inz[v] = 1;
      continue;
    }
    if (!inz[v]) { inz[v] = 1; zz[m++] = v; }
  }
  inz[x] = inz[y] = 0;
  /* (i): directed paths the set misses */
  if (missed_paths(&w, inz, max_paths ? max_paths : 1, rs)) goto nomem;
  /* members in name order, for a stable order of reasons */
  size_t k = 0;
  for (size_t r = 0; r < g->n; r++) if (inz[g->by_rank[r]]) zz[k++] = g->by_rank[r];
  for (size_t i = 0; i < m; i++) {
    int sep;
    sl_trail t;
    /* (ii): x and the member in the graph without the arrows out of x */
    if ((rc = sl_separated_cut(sw, &x, 1, &zz[i], 1, NULL, 0, inx, NULL, &sep, &t, e))) goto done;
    if (!sep && sl_adj_reason(rs, SL_WHY_FD_FROM_X, zz[i], -1, t.nodes, t.steps, t.len + 1)) goto nomem;
    /* (iii): the member and y given x, without the arrows out of the set */
    if ((rc = sl_separated_cut(sw, &zz[i], 1, &y, 1, &x, 1, inz, NULL, &sep, &t, e))) goto done;
    if (!sep && sl_adj_reason(rs, SL_WHY_FD_TO_Y, zz[i], -1, t.nodes, t.steps, t.len + 1)) goto nomem;
  }
  *ok = rs->n == before;
  goto done;
nomem:
  rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
done:
  free(inz); free(inx); free(zz);
  sl_sep_free(sw);
  ws_free(&w);
  return rc;
}

/* ---- listing the minimal sets ---- */

typedef struct lister {
  fd_ws w;
  sl_sep_ws *sep;
  unsigned char *r, *in;    /* the allowed set R and the chosen set I */
  unsigned char *tmp;       /* scratch copy for the minimality test */
  int32_t *cand;            /* candidates by name */
  size_t ncand, ni;
  undo_stack u;
  int32_t *out, *ids, *pred;
  sl_set_fn fn;
  void *ctx;
  volatile int *stop;
  int any;
} lister;

static void lister_free(lister *L) {
  free(L->r); free(L->in); free(L->tmp); free(L->cand); free(L->u.v); free(L->out);
  free(L->ids); free(L->pred);
  sl_sep_free(L->sep);
  ws_free(&L->w);
}

/* Whether some front-door set lies within I without drop: the largest
** such set intercepts every directed path. */
static int exists_within(lister *L, int32_t drop) {
  memcpy(L->tmp, L->in, L->w.n);
  L->tmp[drop] = 0;
  shrink_iii(&L->w, L->tmp, NULL);
  return intercepts(&L->w, L->tmp);
}

/* I is a front-door set: minimal when no member can be dropped. */
static int minimal(lister *L) {
  for (size_t i = 0; i < L->ncand; i++) {
    int32_t v = L->cand[i];
    if (L->in[v] && exists_within(L, v)) return 0;
  }
  return 1;
}

/* Put back the members of R removed since base. */
static void restore(lister *L, size_t base) {
  while (L->u.n > base) L->r[L->u.v[--L->u.n]] = 1;
}

/* A shortest directed path from x to y avoiding I: its inner nodes that R
** allows go to br; returns -1 when there is no such path, else their count. */
static long missed(lister *L, int32_t *br) {
  const sl_graph *g = L->w.g;
  size_t head = 0, tail = 0;
  for (size_t v = 0; v < g->n; v++) L->pred[v] = -2;
  L->pred[L->w.x] = -1;
  L->w.queue[tail++] = L->w.x;
  while (head < tail) {
    int32_t v = L->w.queue[head++];
    for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++) {
      int32_t u = g->ch.adj[k];
      if (L->pred[u] != -2 || L->in[u]) continue;
      L->pred[u] = v;
      if (u == L->w.y) {
        long nb = 0;
        for (int32_t t = v; t != L->w.x; t = L->pred[t]) if (L->r[t]) br[nb++] = t;
        return nb;
      }
      L->w.queue[tail++] = u;
    }
  }
  return -1;
}

/* An open back-door trail from a member of I to y given x, in the graph
** without the arrows out of I: its inner nodes that R allows go to br;
** -1 when every member is closed off. */
static long leak(lister *L, int32_t *br, sl_error *e, int *rc) {
  for (size_t i = 0; i < L->ncand; i++) {
    int32_t v = L->cand[i];
    if (!L->in[v]) continue;
    int sep;
    sl_trail t;
    *rc = sl_separated_cut(L->sep, &v, 1, &L->w.y, 1, &L->w.x, 1, L->in, NULL, &sep, &t, e);
    if (*rc) return -1;
    if (sep) continue;
    long nb = 0;
    for (size_t k = 1; k < t.len; k++)
      if (L->r[t.nodes[k]] && !L->in[t.nodes[k]]) br[nb++] = t.nodes[k];
    return nb;
  }
  return -1;
}

/* Report I, by name. */
static int report(lister *L) {
  size_t k = 0;
  for (size_t i = 0; i < L->ncand; i++) if (L->in[L->cand[i]]) L->out[k++] = L->cand[i];
  return L->fn(L->ctx, L->out, k);
}

/* One node of the search: every minimal set Z with I within Z within R.
** A front-door set Z that holds I must hold a node of each directed path
** that I misses and of each open trail from a member to y (adding members
** never closes such a trail but by standing on it), so we branch on those
** nodes, the i-th branch taking node i and leaving out nodes 1..i-1. */
static int search(lister *L, sl_error *e) {
  if (L->stop && *L->stop) return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  size_t base = L->u.n;
  shrink_iii(&L->w, L->r, &L->u);
  int rc = SL_OK;
  for (size_t i = base; i < L->u.n; i++)
    if (L->in[L->u.v[i]]) goto done;            /* a member cannot stay */
  if (!intercepts(&L->w, L->r)) goto done;
  long nb = missed(L, L->ids);
  if (nb < 0) nb = leak(L, L->ids, e, &rc);
  if (rc) goto done;
  if (nb < 0) {                                 /* I is a front-door set */
    if (minimal(L)) { L->any = 1; rc = report(L); }
    goto done;
  }
  int32_t *br = malloc(((size_t)nb + 1) * sizeof *br);
  if (!br) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  memcpy(br, L->ids, (size_t)nb * sizeof *br);
  for (long i = 0; i < nb && rc == SL_OK; i++) {
    int32_t v = br[i];
    if (!L->r[v]) continue;
    L->in[v] = 1;
    rc = search(L, e);
    L->in[v] = 0;
    L->r[v] = 0;                                /* later branches leave v out */
    L->u.v[L->u.n++] = v;
  }
  free(br);
done:
  restore(L, base);
  return rc;
}

int sl_frontdoor_each(const sl_graph *g, int32_t x, int32_t y, sl_set_fn fn, void *ctx,
                      int *none, sl_reasons *why, volatile int *stop, sl_error *e) {
  *none = 0;
  int rc = check_xy(g, x, y, e);
  if (rc) return rc;
  lister L;
  memset(&L, 0, sizeof L);
  if ((rc = ws_init(&L.w, g, x, y, e))) return rc;
  size_t n = g->n ? g->n : 1;
  L.r = calloc(n, 1); L.in = calloc(n, 1); L.tmp = calloc(n, 1);
  L.cand = malloc(n * sizeof *L.cand); L.u.v = malloc(2 * n * sizeof *L.u.v);
  L.out = malloc(n * sizeof *L.out); L.ids = malloc((n + 1) * sizeof *L.ids);
  L.pred = malloc(n * sizeof *L.pred); L.sep = sl_sep_alloc(g);
  L.fn = fn; L.ctx = ctx; L.stop = stop;
  if (!L.r || !L.in || !L.tmp || !L.cand || !L.u.v || !L.out || !L.ids || !L.pred || !L.sep) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  /* no directed path: the empty set, and only it, is minimal */
  if (intercepts(&L.w, L.in)) {
    int r = fn(ctx, L.out, 0);
    if (r) rc = r;
    goto done;
  }
  candidates(&L.w, L.r, 1);
  for (size_t r = 0; r < g->n; r++)
    if (L.r[g->by_rank[r]]) L.cand[L.ncand++] = g->by_rank[r];
  rc = search(&L, e);
  if (rc == SL_OK && !L.any) {
    *none = 1;
    if (why) {
      /* a directed path that the largest candidate set misses */
      memset(L.r, 0, g->n);
      candidates(&L.w, L.r, 0);
      shrink_iii(&L.w, L.r, NULL);
      size_t before = why->n;
      if (missed_paths(&L.w, L.r, 1, why)) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      for (size_t i = before; i < why->n; i++) why->r[i].kind = SL_WHY_FD_NONE;
    }
  }
done:
  lister_free(&L);
  return rc;
}
