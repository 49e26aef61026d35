/*
** adjust.c: the adjustment and back-door criteria with their reasons.
** The listing of minimal sets is in adjust_list.c, the cheapest set in
** adjust_cut.c.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust.h"
#include "adjust_internal.h"

void sl_effect_free(sl_effect *q) {
  free(q->in_x); free(q->in_y); free(q->cn); free(q->forb); free(q->de_x);
  free(q->x); free(q->y);
  memset(q, 0, sizeof *q);
}

/* Breadth-first marking along children (down) or parents (up).  skip
** marks nodes that the search may not enter; mark receives the result (the
** start nodes only when reached again).  queue needs room for the start
** nodes plus every node. */
void sl_adj_walk(const sl_graph *g, const int32_t *src, size_t ns, int down,
                 const unsigned char *skip, const unsigned char *no_leave,
                 unsigned char *mark, int32_t *queue) {
  const sl_csr *c = down ? &g->ch : &g->pa;
  size_t head = 0, tail = 0;
  for (size_t i = 0; i < ns; i++) queue[tail++] = src[i];
  while (head < tail) {
    int32_t v = queue[head++];
    if (no_leave && no_leave[v] && head > ns) continue;
    for (uint32_t k = c->off[v]; k < c->off[v + 1]; k++) {
      int32_t w = c->adj[k];
      if (mark[w] || (skip && skip[w])) continue;
      mark[w] = 1;
      queue[tail++] = w;
    }
  }
}

int sl_effect_init(sl_effect *q, const sl_graph *g, const int32_t *x, size_t nx,
                   const int32_t *y, size_t ny, sl_error *e) {
  memset(q, 0, sizeof *q);
  size_t n = g->n ? g->n : 1;
  q->g = g;
  q->n = g->n;
  if (nx == 0) return sl_error_set(e, SL_EARG, 0, 0, "the treatment set is empty");
  if (ny == 0) return sl_error_set(e, SL_EARG, 0, 0, "the outcome set is empty");
  q->in_x = calloc(n, 1); q->in_y = calloc(n, 1); q->cn = calloc(n, 1);
  q->forb = calloc(n, 1); q->de_x = calloc(n, 1);
  q->x = malloc(nx * sizeof *q->x); q->y = malloc(ny * sizeof *q->y);
  unsigned char *down = calloc(n, 1), *up = calloc(n, 1);
  int32_t *queue = malloc(2 * n * sizeof *queue);   /* sources may be queued twice */
  int rc = SL_OK;
  if (!q->in_x || !q->in_y || !q->cn || !q->forb || !q->de_x || !q->x || !q->y ||
      !down || !up || !queue) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  for (size_t i = 0; i < nx; i++) {
    if (g->hidden[x[i]]) {
      rc = sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be a treatment",
                        sl_graph_name(g, x[i]));
      goto done;
    }
    if (!q->in_x[x[i]]) { q->in_x[x[i]] = 1; q->x[q->nx++] = x[i]; }
  }
  for (size_t i = 0; i < ny; i++) {
    if (q->in_x[y[i]]) {
      rc = sl_error_set(e, SL_EARG, 0, 0, "'%s' is both a treatment and an outcome",
                        sl_graph_name(g, y[i]));
      goto done;
    }
    if (g->hidden[y[i]]) {
      rc = sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be an outcome",
                        sl_graph_name(g, y[i]));
      goto done;
    }
    if (!q->in_y[y[i]]) { q->in_y[y[i]] = 1; q->y[q->ny++] = y[i]; }
  }
  /* cn: reached from X by arrows that avoid X, and reaching Y likewise */
  sl_adj_walk(g, q->x, q->nx, 1, q->in_x, NULL, down, queue);
  memcpy(up, q->in_y, g->n);
  sl_adj_walk(g, q->y, q->ny, 0, q->in_x, NULL, up, queue);
  size_t ncn = 0;
  for (size_t v = 0; v < g->n; v++)
    if (down[v] && up[v]) { q->cn[v] = 1; queue[ncn++] = (int32_t)v; }
  /* forb: cn, its descendants, and X */
  memcpy(q->forb, q->cn, g->n);
  sl_adj_walk(g, queue, ncn, 1, NULL, NULL, q->forb, queue);
  for (size_t i = 0; i < q->nx; i++) q->forb[q->x[i]] = 1;
  sl_adj_walk(g, q->x, q->nx, 1, NULL, NULL, q->de_x, queue);
done:
  free(down); free(up); free(queue);
  if (rc) sl_effect_free(q);
  return rc;
}

void sl_reasons_free(sl_reasons *rs) {
  for (size_t i = 0; i < rs->n; i++) { free(rs->r[i].path); free(rs->r[i].steps); }
  free(rs->r);
  memset(rs, 0, sizeof *rs);
}

/* Append a reason, copying its trail. */
int sl_adj_reason(sl_reasons *rs, int kind, int32_t node, int32_t via,
                  const int32_t *path, const unsigned char *steps, size_t npath) {
  if (rs->n == rs->cap) {
    size_t cap = rs->cap ? rs->cap * 2 : 8;
    sl_reason *r = realloc(rs->r, cap * sizeof *r);
    if (!r) return SL_ENOMEM;
    rs->r = r;
    rs->cap = cap;
  }
  sl_reason *r = &rs->r[rs->n];
  memset(r, 0, sizeof *r);
  r->kind = kind; r->node = node; r->via = via;
  if (npath) {
    r->path = malloc(npath * sizeof *r->path);
    r->steps = malloc(npath);
    if (!r->path || !r->steps) { free(r->path); free(r->steps); return SL_ENOMEM; }
    memcpy(r->path, path, npath * sizeof *path);
    if (npath > 1) memcpy(r->steps, steps, npath - 1);
    r->npath = npath;
  }
  rs->n++;
  return SL_OK;
}

/* A directed path from a member of `from` to t, moving only through nodes
** allowed (or NULL: any), written into path; returns its node count or 0. */
size_t sl_adj_directed_path(const sl_graph *g, const unsigned char *from, int32_t t,
                            const unsigned char *allowed, int32_t *path) {
  size_t n = g->n;
  int32_t *pred = malloc(n * sizeof *pred), *queue = malloc(n * sizeof *queue);
  size_t len = 0;
  if (!pred || !queue) goto done;
  for (size_t v = 0; v < n; v++) pred[v] = -2;
  size_t head = 0, tail = 0;
  pred[t] = -1;
  queue[tail++] = t;           /* search backwards from t along parents */
  int32_t hit = -1;
  while (head < tail && hit < 0) {
    int32_t v = queue[head++];
    if (from[v] && v != t) { hit = v; break; }
    if (from[v] && v == t) { hit = v; break; }
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (pred[p] != -2) continue;
      if (!from[p] && allowed && !allowed[p]) continue;
      pred[p] = v;
      queue[tail++] = p;
    }
  }
  if (hit >= 0)
    for (int32_t v = hit; v >= 0; v = pred[v]) path[len++] = v;
done:
  free(pred); free(queue);
  return len;
}

/* A proper causal path from X through c to Y (c in cn). */
static size_t causal_path_through(const sl_effect *q, int32_t c, int32_t *path) {
  const sl_graph *g = q->g;
  size_t n = g->n;
  unsigned char *ok = calloc(n ? n : 1, 1);
  int32_t *tail = malloc((n ? n : 1) * sizeof *tail);
  size_t len = 0;
  if (!ok || !tail) goto done;
  /* x -> ... -> c through cn nodes */
  for (size_t v = 0; v < n; v++) ok[v] = q->cn[v];
  len = sl_adj_directed_path(g, q->in_x, c, ok, path);
  if (!len) goto done;
  if (q->in_y[c]) goto done;
  /* c -> ... -> y through cn nodes: search back from each y */
  unsigned char *fromc = calloc(n, 1);
  if (!fromc) { len = 0; goto done; }
  fromc[c] = 1;
  size_t tl = 0;
  for (size_t i = 0; i < q->ny && !tl; i++) tl = sl_adj_directed_path(g, fromc, q->y[i], ok, tail);
  free(fromc);
  for (size_t i = 1; i < tl; i++) path[len++] = tail[i];
done:
  free(ok); free(tail);
  return len;
}

static const unsigned char forward_steps[1] = {SL_FORWARD};

/* Record a forbidden member with the causal path that forbids it. */
static int forbidden_reason(const sl_effect *q, int32_t v, sl_reasons *rs) {
  const sl_graph *g = q->g;
  int32_t *path = malloc((g->n + 1) * sizeof *path);
  unsigned char *steps = malloc(g->n + 1);
  int rc = SL_ENOMEM;
  if (!path || !steps) goto done;
  memset(steps, forward_steps[0], g->n + 1);
  int32_t via = v;
  if (!q->cn[v]) {   /* find the causal-path node it descends from */
    size_t k = sl_adj_directed_path(g, q->cn, v, NULL, path);
    via = k ? path[0] : v;
  }
  size_t len = causal_path_through(q, via, path);
  rc = sl_adj_reason(rs, q->cn[v] ? SL_WHY_MEDIATOR : SL_WHY_DESCENDANT, v, via,
                     path, steps, len);
done:
  free(path); free(steps);
  return rc;
}

/* The set without treatments and outcomes, for the separation test. */
static int32_t *proper_part(const sl_effect *q, const int32_t *z, size_t nz, size_t *m) {
  int32_t *out = malloc((nz ? nz : 1) * sizeof *out);
  *m = 0;
  if (!out) return NULL;
  for (size_t i = 0; i < nz; i++)
    if (!q->in_x[z[i]] && !q->in_y[z[i]]) out[(*m)++] = z[i];
  return out;
}

/* Open trails, by way of leaking: the witness first, then trails with a
** different set of colliders, up to max_open. */
typedef struct leak_ctx {
  const sl_effect *q;
  sl_mark drop_out, cut;
  unsigned char *zm, *anz;
  sl_reasons *rs;
  size_t max_open, found, visited;
  uint64_t *sigs;
  int rc;
} leak_ctx;

/* A signature of the colliders on a trail. */
static uint64_t collider_sig(const sl_trail *t) {
  uint64_t h = 1469598103934665603ull;
  for (size_t i = 1; i < t->len; i++)
    if (t->steps[i - 1] != SL_BACKWARD && t->steps[i] != SL_FORWARD) {
      h ^= (uint64_t)t->nodes[i] + 1;
      h *= 1099511628211ull;
    }
  return h;
}

static int on_leak(void *ctx, const sl_trail *t) {
  leak_ctx *c = ctx;
  if (++c->visited > 200000) return 1;   /* enough looking */
  for (size_t i = 0; i < t->len; i++) {
    int32_t a = t->nodes[i], b = t->nodes[i + 1];
    if (t->steps[i] == SL_FORWARD && c->drop_out && c->drop_out[a] && (!c->cut || c->cut[b])) return 0;
    if (t->steps[i] == SL_BACKWARD && c->drop_out && c->drop_out[b] && (!c->cut || c->cut[a])) return 0;
  }
  if (!sl_trail_open(t, c->zm, c->anz, NULL, NULL)) return 0;
  uint64_t sig = collider_sig(t);
  for (size_t i = 0; i < c->found; i++) if (c->sigs[i] == sig) return 0;
  c->sigs[c->found++] = sig;
  c->rc = sl_adj_reason(c->rs, SL_WHY_OPEN, -1, -1, t->nodes, t->steps, t->len + 1);
  return c->rc || c->found >= c->max_open;
}

/* Separation of X and Y given z in the cut graph; on failure, reasons. */
int sl_adj_leaks(const sl_effect *q, const int32_t *z, size_t nz, sl_mark drop_out,
                 sl_mark cut, int *separated, sl_reasons *rs, size_t max_open,
                 sl_error *e) {
  const sl_graph *g = q->g;
  sl_sep_ws *w = sl_sep_alloc(g);
  if (!w) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  sl_trail wit;
  int rc = sl_separated_cut(w, q->x, q->nx, q->y, q->ny, z, nz, drop_out, cut, separated,
                            &wit, e);
  if (rc || *separated || max_open == 0) { sl_sep_free(w); return rc; }
  leak_ctx c = {q, drop_out, cut, calloc(g->n, 1), calloc(g->n, 1), rs, max_open, 0, 0,
                calloc(max_open + 1, sizeof(uint64_t)), SL_OK};
  int32_t *queue = malloc(g->n * sizeof *queue);
  if (!c.zm || !c.anz || !c.sigs || !queue) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t i = 0; i < nz; i++) c.zm[z[i]] = c.anz[z[i]] = 1;
  /* ancestors of z in the cut graph */
  size_t head = 0, tail = 0;
  for (size_t i = 0; i < nz; i++) queue[tail++] = z[i];
  while (head < tail) {
    int32_t v = queue[head++];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (c.anz[p] || (drop_out && drop_out[p] && (!cut || cut[v]))) continue;
      c.anz[p] = 1;
      queue[tail++] = p;
    }
  }
  c.sigs[c.found++] = collider_sig(&wit);
  if (sl_adj_reason(rs, SL_WHY_OPEN, -1, -1, wit.nodes, wit.steps, wit.len + 1)) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  if (c.found < max_open) sl_trails_each(g, q->x, q->nx, q->y, q->ny, on_leak, &c, NULL, NULL);
  if (c.rc) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
done:
  free(c.zm); free(c.anz); free(c.sigs); free(queue);
  sl_sep_free(w);
  return rc;
}

/* Members that can never be in a set: hidden nodes, treatments, outcomes. */
static int basic_reasons(const sl_effect *q, const int32_t *z, size_t nz, sl_reasons *rs) {
  for (size_t i = 0; i < nz; i++) {
    int32_t v = z[i];
    int kind = q->g->hidden[v] ? SL_WHY_HIDDEN : q->in_x[v] ? SL_WHY_TREATMENT
             : q->in_y[v] ? SL_WHY_OUTCOME : 0;
    if (kind && sl_adj_reason(rs, kind, v, -1, NULL, NULL, 0)) return SL_ENOMEM;
  }
  return SL_OK;
}

int sl_admissible(const sl_effect *q, const int32_t *z, size_t nz, int *ok,
                  sl_reasons *rs, size_t max_open, sl_error *e) {
  size_t before = rs->n, m;
  if (basic_reasons(q, z, nz, rs)) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; i < nz; i++) {
    int32_t v = z[i];
    if (q->forb[v] && !q->in_x[v] && !q->in_y[v] && forbidden_reason(q, v, rs))
      return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  int32_t *zz = proper_part(q, z, nz, &m);
  if (!zz) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int sep;
  int rc = sl_adj_leaks(q, zz, m, q->in_x, q->cn, &sep, rs, max_open ? max_open : 1, e);
  free(zz);
  if (rc) return rc;
  *ok = sep && rs->n == before;
  return SL_OK;
}

int sl_backdoor(const sl_effect *q, const int32_t *z, size_t nz, int *ok,
                sl_reasons *rs, size_t max_open, sl_error *e) {
  const sl_graph *g = q->g;
  size_t before = rs->n, m;
  if (basic_reasons(q, z, nz, rs)) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int32_t *path = malloc((g->n + 1) * sizeof *path);
  unsigned char *steps = malloc(g->n + 1);
  if (!path || !steps) { free(path); free(steps); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  memset(steps, SL_FORWARD, g->n + 1);
  for (size_t i = 0; i < nz; i++) {
    int32_t v = z[i];
    if (!q->de_x[v] || q->in_x[v] || q->in_y[v]) continue;
    size_t len = sl_adj_directed_path(g, q->in_x, v, NULL, path);
    if (sl_adj_reason(rs, SL_WHY_DESC_TREATMENT, v, -1, path, steps, len)) {
      free(path); free(steps);
      return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    }
  }
  free(path); free(steps);
  int32_t *zz = proper_part(q, z, nz, &m);
  if (!zz) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int sep;
  /* back-door trails: those left when every arrow out of X is removed */
  int rc = sl_adj_leaks(q, zz, m, q->in_x, NULL, &sep, rs, max_open ? max_open : 1, e);
  free(zz);
  if (rc) return rc;
  *ok = sep && rs->n == before;
  return SL_OK;
}
