/*
** optimal.c: the optimal adjustment set, the valid set whose least-squares
** coefficient has the smallest asymptotic variance in every linear model on
** the graph, for graphs with hidden nodes and <-> edges.
**
** The construction follows Runge 2021 (NeurIPS, "Necessary and sufficient
** graphical conditions for optimal adjustment sets in causal graphical
** models with hidden variables"), recalled from memory: work in the latent
** projection (hidden nodes become <-> edges), start from the parents of
** the causal nodes cn(X, Y) that are not forbidden (the set of Henckel,
** Perkovic and Maathuis 2022), and add the nodes joined to cn by collider
** paths (the district of cn, walked through <-> edges, and the parents of
** its members), observed and not forbidden.  Runge's exact side conditions
** are not recalled with certainty; the two below are ours, derived from
** the variance argument in the comments and checked on random graphs by
** the numeric oracle in tests/lua/test_optimal.lua:
**   - a node joins only when some valid set holds it together with what
**     was gathered so far (otherwise it can never be adjusted for with the
**     rest, and adding it would break validity);
**   - with O the result, Var(O) <= Var(Z) for a valid Z when the outcome
**     is independent of Z \ O given X and O (true by construction) and
**     sigma^2(X | O) >= sigma^2(X | Z).  A member E that informs the
**     treatment given the rest of O (x and E m-connected given O \ {E})
**     and that some valid set Z leaves out while x and E stay m-connected
**     given Z trades precision on the outcome against information on the
**     treatment: then no set is best in every model, and the rival Z is
**     named.  Members that are parents of cn never fail this (an open
**     trail to them would extend to an open non-causal trail to Y).
** The rivals tried are O without E, the minimal sets without E (at most
** SL_OPTIMAL_MAX_RIVALS of them) and the canonical set without E; the
** oracle checks on random graphs that the rival named and O each have
** the smaller variance in some model.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust.h"
#include "adjust_internal.h"

/* Minimal sets tried as rivals for one member before giving up. */
#define SL_OPTIMAL_MAX_RIVALS 10000

enum { IN_P = 1, IN_C = 2 };   /* how a member joined O */

typedef struct opt_ws {
  const sl_effect *q;
  const sl_graph *g;
  size_t n;
  unsigned char *cand;      /* observed, not forbidden, not an outcome */
  unsigned char *in_o;      /* 0, IN_P or IN_C */
  unsigned char *district;  /* walked through as a collider */
  int32_t *from;            /* the node the walk reached a member from */
  int32_t *o;               /* members, in the order they joined */
  size_t no;
  unsigned char *mark;      /* scratch marks */
  int32_t *queue, *walk, *list, *pa, *sb;
  uint32_t *seen_up, *seen_dn, *seen_pa, *seen_sb, epoch;
  sl_sep_ws *sep;
} opt_ws;

static void ws_free(opt_ws *w) {
  free(w->cand); free(w->in_o); free(w->district); free(w->from); free(w->o);
  free(w->mark); free(w->queue); free(w->walk); free(w->list); free(w->pa); free(w->sb);
  free(w->seen_up); free(w->seen_dn); free(w->seen_pa); free(w->seen_sb);
  if (w->sep) sl_sep_free(w->sep);
}

static int ws_alloc(opt_ws *w, const sl_effect *q) {
  memset(w, 0, sizeof *w);
  size_t n = q->g->n ? q->g->n : 1;
  w->q = q; w->g = q->g; w->n = q->g->n;
  w->cand = calloc(n, 1); w->in_o = calloc(n, 1); w->district = calloc(n, 1);
  w->mark = calloc(n, 1);
  w->from = malloc(n * sizeof *w->from); w->o = malloc(n * sizeof *w->o);
  w->queue = malloc(2 * n * sizeof *w->queue); w->walk = malloc(n * sizeof *w->walk);
  w->list = malloc(2 * n * sizeof *w->list);
  w->pa = malloc(n * sizeof *w->pa); w->sb = malloc(n * sizeof *w->sb);
  w->seen_up = calloc(n, sizeof *w->seen_up); w->seen_dn = calloc(n, sizeof *w->seen_dn);
  w->seen_pa = calloc(n, sizeof *w->seen_pa); w->seen_sb = calloc(n, sizeof *w->seen_sb);
  w->sep = sl_sep_alloc(q->g);
  if (!w->cand || !w->in_o || !w->district || !w->mark || !w->from || !w->o || !w->queue ||
      !w->walk || !w->list || !w->pa || !w->sb || !w->seen_up || !w->seen_dn ||
      !w->seen_pa || !w->seen_sb || !w->sep) {
    ws_free(w);
    return SL_ENOMEM;
  }
  for (size_t v = 0; v < w->n; v++)
    w->cand[v] = !w->g->hidden[v] && !q->forb[v] && !q->in_y[v];
  return SL_OK;
}

/* Down from hidden h through hidden nodes: the observed nodes reached are
** siblings of v in the projection (v <- ... h -> ... -> s). */
static void proj_down(opt_ws *w, int32_t v, int32_t h, size_t *nsb) {
  const sl_graph *g = w->g;
  size_t top = 0;
  if (w->seen_dn[h] == w->epoch) return;
  w->seen_dn[h] = w->epoch;
  w->list[top++] = h;
  while (top) {
    int32_t a = w->list[--top];
    for (uint32_t k = g->ch.off[a]; k < g->ch.off[a + 1]; k++) {
      int32_t c = g->ch.adj[k];
      if (g->hidden[c]) {
        if (w->seen_dn[c] != w->epoch) { w->seen_dn[c] = w->epoch; w->list[top++] = c; }
      } else if (c != v && w->seen_sb[c] != w->epoch) {
        w->seen_sb[c] = w->epoch;
        w->sb[(*nsb)++] = c;
      }
    }
  }
}

/* The neighbours of observed v in the latent projection (Verma and Pearl
** 1990; Richardson et al. 2017): parents reached upward through hidden
** nodes into w->pa, and <-> siblings (a <-> edge, or a trail through
** hidden non-colliders with arrowheads at both ends) into w->sb. */
static void proj_neighbours(opt_ws *w, int32_t v, size_t *npa, size_t *nsb) {
  const sl_graph *g = w->g;
  size_t head = 0, tail = 0;
  *npa = *nsb = 0;
  if (++w->epoch == 0) {   /* wrapped: clear the stamps */
    size_t n = w->n ? w->n : 1;
    memset(w->seen_up, 0, n * sizeof *w->seen_up); memset(w->seen_dn, 0, n * sizeof *w->seen_dn);
    memset(w->seen_pa, 0, n * sizeof *w->seen_pa); memset(w->seen_sb, 0, n * sizeof *w->seen_sb);
    w->epoch = 1;
  }
  w->seen_up[v] = w->epoch;
  w->walk[tail++] = v;
  while (head < tail) {
    int32_t a = w->walk[head++];
    for (uint32_t k = g->pa.off[a]; k < g->pa.off[a + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (g->hidden[p]) {
        if (w->seen_up[p] != w->epoch) { w->seen_up[p] = w->epoch; w->walk[tail++] = p; }
      } else if (w->seen_pa[p] != w->epoch) {
        w->seen_pa[p] = w->epoch;
        w->pa[(*npa)++] = p;
      }
    }
  }
  for (size_t i = 0; i < tail; i++) {
    int32_t a = w->walk[i];
    if (a != v) proj_down(w, v, a, nsb);
    for (uint32_t k = g->sb.off[a]; k < g->sb.off[a + 1]; k++) {
      int32_t b = g->sb.adj[k];
      if (g->hidden[b]) proj_down(w, v, b, nsb);
      else if (b != v && w->seen_sb[b] != w->epoch) { w->seen_sb[b] = w->epoch; w->sb[(*nsb)++] = b; }
    }
  }
}

/* Whether z (candidates only) is an adjustment set: X and Y separated in
** the proper back-door graph. */
static int is_valid(opt_ws *w, const int32_t *z, size_t nz, int *ok, sl_error *e) {
  const sl_effect *q = w->q;
  return sl_separated_cut(w->sep, q->x, q->nx, q->y, q->ny, z, nz, q->in_x, q->cn, ok,
                          NULL, e);
}

/* The canonical set An(X, Y, O, extra) among the candidates, into w->list
** by name rank, without `drop` (or -1).  It is valid when any valid set
** holding O and extra exists (van der Zander, Liskiewicz and Textor 2019,
** the constructive set with a required part; from memory). */
static size_t canonical(opt_ws *w, int with_o, int32_t extra, int32_t drop) {
  const sl_effect *q = w->q;
  size_t ns = 0;
  int32_t *src = w->list + w->n;   /* the upper half of list */
  memset(w->mark, 0, w->n);
  for (size_t i = 0; i < q->nx; i++) src[ns++] = q->x[i];
  for (size_t i = 0; i < q->ny; i++) src[ns++] = q->y[i];
  sl_adj_walk(w->g, src, ns, 0, NULL, NULL, w->mark, w->queue);
  ns = 0;
  if (with_o) for (size_t i = 0; i < w->no; i++) src[ns++] = w->o[i];
  if (extra >= 0) src[ns++] = extra;
  for (size_t i = 0; i < ns; i++) w->mark[src[i]] = 1;
  sl_adj_walk(w->g, src, ns, 0, NULL, NULL, w->mark, w->queue);
  size_t m = 0;
  for (size_t r = 0; r < w->n; r++) {
    int32_t v = w->g->by_rank[r];
    if (w->mark[v] && w->cand[v] && v != drop) w->list[m++] = v;
  }
  return m;
}

/* Whether some valid set holds O and v together. */
static int joins(opt_ws *w, int32_t v, int *ok, sl_error *e) {
  size_t m = canonical(w, 1, v, -1);
  return is_valid(w, w->list, m, ok, e);
}

static void add_member(opt_ws *w, int32_t v, int how, int32_t from) {
  w->in_o[v] = (unsigned char)how;
  w->from[v] = from;
  w->o[w->no++] = v;
}

/* O: the parents of cn, then the collider walk from cn through <-> edges
** (and the parents of the nodes walked through). */
static int gather(opt_ws *w, sl_error *e) {
  const sl_effect *q = w->q;
  size_t head = 0, tail = 0, npa, nsb;
  int ok, rc = SL_OK;
  /* its own queue: joins() uses w->queue */
  int32_t *bfs = malloc((w->n ? w->n : 1) * sizeof *bfs);
  if (!bfs) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t r = 0; r < w->n; r++) {
    int32_t c = w->g->by_rank[r];
    if (!q->cn[c] || w->g->hidden[c]) continue;
    bfs[tail++] = c;
    proj_neighbours(w, c, &npa, &nsb);
    for (size_t i = 0; i < npa; i++)
      if (w->cand[w->pa[i]] && !w->in_o[w->pa[i]]) add_member(w, w->pa[i], IN_P, c);
  }
  while (head < tail && !rc) {
    int32_t u = bfs[head++];
    proj_neighbours(w, u, &npa, &nsb);
    /* copy: joins() below reuses the scratch lists */
    int32_t *buf = malloc((npa + nsb + 1) * sizeof *buf);
    if (!buf) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); break; }
    memcpy(buf, w->pa, npa * sizeof *buf);
    memcpy(buf + npa, w->sb, nsb * sizeof *buf);
    for (size_t i = 0; i < npa + nsb && !rc; i++) {
      int32_t v = buf[i];
      int sibling = i >= npa;
      if (!w->cand[v] || (!sibling && !w->district[u])) continue;
      if (sibling ? w->district[v] : w->in_o[v] != 0) continue;
      if (!w->in_o[v]) {
        if ((rc = joins(w, v, &ok, e)) || !ok) continue;
        add_member(w, v, IN_C, u);
      }
      if (sibling) { w->district[v] = 1; bfs[tail++] = v; }
    }
    free(buf);
  }
  free(bfs);
  return rc;
}

/* A rival found by the minimal-set listing. */
typedef struct rival_ctx {
  opt_ws *w;
  int32_t node;
  int found;
  size_t tried;
  sl_reasons *rs;
  sl_error *e;
  int rc;
} rival_ctx;

static int record_tradeoff(opt_ws *w, int32_t node, const int32_t *z, size_t nz,
                           const sl_trail *t, sl_reasons *rs) {
  unsigned char *steps = calloc(nz + 1, 1);
  if (!steps) return SL_ENOMEM;
  int rc = sl_adj_reason(rs, SL_WHY_TRADEOFF, node, w->from[node], t->nodes, t->steps,
                         t->len + 1);
  if (!rc) rc = sl_adj_reason(rs, SL_WHY_RIVAL, node, -1, nz ? z : &node, steps, nz);
  free(steps);
  return rc;
}

/* Whether x and node are m-connected given z; if so, record the trade-off. */
static int try_rival(opt_ws *w, int32_t node, const int32_t *z, size_t nz, int *found,
                     sl_reasons *rs, sl_error *e) {
  const sl_effect *q = w->q;
  int sep;
  sl_trail wit;
  int rc = sl_separated(w->sep, q->x, q->nx, &node, 1, z, nz, &sep, &wit, e);
  if (rc || sep) return rc;
  *found = 1;
  if (record_tradeoff(w, node, z, nz, &wit, rs))
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  return SL_OK;
}

/* Stops the listing (sl_adjust_each returns it): not an error code. */
#define RIVAL_STOP (-1)

static int on_minimal(void *ctx, const int32_t *set, size_t n) {
  rival_ctx *c = ctx;
  c->rc = try_rival(c->w, c->node, set, n, &c->found, c->rs, c->e);
  return c->rc || c->found || ++c->tried >= SL_OPTIMAL_MAX_RIVALS ? RIVAL_STOP : 0;
}

/* A valid set without `node` that leaves x and node m-connected.  Tried
** in the order that makes the rival a real one (a set that beats O in some
** model): O without node first (it differs from O by node alone), then the
** minimal sets (little information on the treatment), then the canonical
** set without node. */
static int find_rival(opt_ws *w, int32_t node, int *found, sl_reasons *rs, sl_error *e) {
  int ok, rc, none;
  size_t m = 0;
  *found = 0;
  for (size_t r = 0; r < w->n; r++) {
    int32_t v = w->g->by_rank[r];
    if (w->in_o[v] && v != node) w->list[m++] = v;
  }
  if ((rc = is_valid(w, w->list, m, &ok, e))) return rc;
  if (ok && ((rc = try_rival(w, node, w->list, m, found, rs, e)) || *found)) return rc;
  rival_ctx c = {w, node, 0, 0, rs, e, SL_OK};
  unsigned char *forbid = calloc(w->n ? w->n : 1, 1);
  if (!forbid) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  forbid[node] = 1;
  rc = sl_adjust_each(w->q, forbid, NULL, on_minimal, &c, &none, NULL, NULL, e);
  free(forbid);
  if (rc == RIVAL_STOP) rc = c.rc;
  if (rc || (*found = c.found)) return rc;
  m = canonical(w, 0, -1, node);
  if ((rc = is_valid(w, w->list, m, &ok, e))) return rc;
  if (ok) rc = try_rival(w, node, w->list, m, found, rs, e);
  return rc;
}

/* Members whose information on the treatment some valid set avoids. */
static int check_tradeoffs(opt_ws *w, const int32_t *o, size_t m, int *any,
                           sl_reasons *rs, sl_error *e) {
  const sl_effect *q = w->q;
  int32_t *rest = malloc((m ? m : 1) * sizeof *rest);
  if (!rest) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int rc = SL_OK;
  *any = 0;
  for (size_t i = 0; i < m && !rc; i++) {
    int32_t v = o[i];
    if (w->in_o[v] != IN_C) continue;
    size_t k = 0;
    for (size_t j = 0; j < m; j++) if (j != i) rest[k++] = o[j];
    int sep, found;
    rc = sl_separated(w->sep, q->x, q->nx, &v, 1, rest, k, &sep, NULL, e);
    if (rc || sep) continue;
    rc = find_rival(w, v, &found, rs, e);
    if (found) *any = 1;
  }
  free(rest);
  return rc;
}

/* Hidden parents of cn (the members of Henckel's set that cannot be
** measured): named first when no valid set exists. */
static int hidden_parents(opt_ws *w, sl_reasons *rs) {
  const sl_graph *g = w->g;
  memset(w->mark, 0, w->n);
  for (size_t v = 0; v < w->n; v++) {
    if (!w->q->cn[v]) continue;
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (g->hidden[p] && !w->q->forb[p]) w->mark[p] = 1;
    }
  }
  for (size_t r = 0; r < w->n; r++) {
    int32_t v = g->by_rank[r];
    if (w->mark[v] && sl_adj_reason(rs, SL_WHY_HIDDEN, v, -1, NULL, NULL, 0)) return SL_ENOMEM;
  }
  return SL_OK;
}

/* The members by name rank into a new array. */
static int32_t *members(opt_ws *w, size_t *m) {
  int32_t *o = malloc((w->n ? w->n : 1) * sizeof *o);
  *m = 0;
  if (!o) return NULL;
  for (size_t r = 0; r < w->n; r++)
    if (w->in_o[w->g->by_rank[r]]) o[(*m)++] = w->g->by_rank[r];
  return o;
}

/* No valid set at all: the hidden parents, the reason, the open trails of
** the canonical set (returned as the set, so that the trails read right). */
static int no_valid_set(opt_ws *w, int32_t **set, size_t *n, sl_reasons *rs, sl_error *e) {
  size_t m = canonical(w, 0, -1, -1);
  int32_t *z = malloc((m ? m : 1) * sizeof *z);
  if (!z) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  memcpy(z, w->list, m * sizeof *z);
  if (hidden_parents(w, rs) || sl_adj_reason(rs, SL_WHY_NO_VALID_SET, -1, -1, NULL, NULL, 0)) {
    free(z);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  int ok;
  int rc = sl_admissible(w->q, z, m, &ok, rs, 3, e);
  if (rc) { free(z); return rc; }
  *set = z;
  *n = m;
  return SL_OK;
}

int sl_optimal(const sl_effect *q, int32_t **set, size_t *n, int *ok,
               sl_reasons *rs, sl_error *e) {
  *set = NULL; *n = 0; *ok = 0;
  int any = 0;
  for (size_t i = 0; i < q->ny; i++) any |= q->cn[q->y[i]];
  if (!any) {
    if (sl_adj_reason(rs, SL_WHY_NO_CAUSAL_PATH, -1, -1, NULL, NULL, 0))
      return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return SL_OK;
  }
  opt_ws w;
  if (ws_alloc(&w, q)) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int valid, rc;
  size_t m = canonical(&w, 0, -1, -1);
  if ((rc = is_valid(&w, w.list, m, &valid, e))) goto done;
  if (!valid) { rc = no_valid_set(&w, set, n, rs, e); goto done; }
  if ((rc = gather(&w, e))) goto done;
  int32_t *o = members(&w, &m);
  if (!o) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  *set = o;
  *n = m;
  if ((rc = is_valid(&w, o, m, &valid, e))) goto done;
  if (!valid) {
    if (sl_adj_reason(rs, SL_WHY_NOT_JOINT, -1, -1, NULL, NULL, 0)) {
      rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      goto done;
    }
    rc = sl_admissible(q, o, m, &valid, rs, 3, e);
    goto done;
  }
  if ((rc = check_tradeoffs(&w, o, m, &any, rs, e))) goto done;
  *ok = !any;
done:
  ws_free(&w);
  return rc;
}
