/*
** adjust_list.c: every minimal adjustment set, as the minimal X-Y vertex
** separators of the augmented proper back-door graph H (moral.c) that use
** allowed nodes only (van der Zander, Liskiewicz and Textor 2019, Theorem
** 5 and Lemma 3: minimal sets lie within An(X, Y, I)).
**
** A separator S is generated from the one closest to X: for each s in S,
** the separator closest to C_X(S) + {s} (Kloks and Kratsch 1998).  Each is
** found in O(n + m), so the delay between two sets is polynomial; a hash
** set of the sets found keeps each listed once.
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "adjust_internal.h"

enum { R_X = 1, R_Y = 2, R_REQ = 4, R_OK = 8 };

typedef struct lister {
  sl_moral m;
  unsigned char *role;
  uint32_t *stamp_a, *stamp_s, *stamp_y, gen;
  int32_t *queue, *sep, *side;   /* scratch */
  size_t nsep, nside;
  /* found separators: a pool of sorted id arrays and an open hash table */
  int32_t *pool;
  size_t pool_len, pool_cap;
  size_t *start, *len, nfound, capfound;
  int64_t *table;
  size_t nslot;
} lister;

static void bump(lister *L) { L->gen++; }

/* The separator closest to the vertices in side[0..nside): in L->sep.
** Returns 0 when Y is reached without crossing an allowed node. */
static int closest(lister *L) {
  const sl_moral *m = &L->m;
  bump(L);
  uint32_t g = L->gen;
  size_t head = 0, tail = 0;
  L->nsep = 0;
  for (size_t i = 0; i < L->nside; i++) {
    int32_t v = L->side[i];
    if (L->stamp_a[v] != g) { L->stamp_a[v] = g; L->queue[tail++] = v; }
  }
  while (head < tail) {      /* grow through nodes that cannot be cut */
    int32_t v = L->queue[head++];
    for (uint32_t k = m->off[v]; k < m->off[v + 1]; k++) {
      int32_t w = m->adj[k];
      if (L->stamp_a[w] == g || (L->role[w] & R_REQ)) continue;
      if (L->role[w] & R_Y) return 0;
      if (L->role[w] & R_OK) {
        if (L->stamp_s[w] != g) { L->stamp_s[w] = g; L->sep[L->nsep++] = w; }
        continue;
      }
      L->stamp_a[w] = g;
      L->queue[tail++] = w;
    }
  }
  /* the part of Y's side beyond the boundary */
  head = tail = 0;
  for (size_t v = 0; v < m->n; v++)
    if ((L->role[v] & R_Y) && L->stamp_y[v] != g) { L->stamp_y[v] = g; L->queue[tail++] = (int32_t)v; }
  while (head < tail) {
    int32_t v = L->queue[head++];
    for (uint32_t k = m->off[v]; k < m->off[v + 1]; k++) {
      int32_t w = m->adj[k];
      if (L->stamp_y[w] == g || L->stamp_s[w] == g || (L->role[w] & R_REQ)) continue;
      L->stamp_y[w] = g;
      L->queue[tail++] = w;
    }
  }
  /* keep the boundary nodes that touch Y's side */
  size_t keep = 0;
  for (size_t i = 0; i < L->nsep; i++) {
    int32_t s = L->sep[i];
    int touches = 0;
    for (uint32_t k = m->off[s]; k < m->off[s + 1] && !touches; k++)
      touches = L->stamp_y[m->adj[k]] == g;
    if (touches) L->sep[keep++] = s;
  }
  L->nsep = keep;
  return 1;
}

/* C_X(S) for the separator sep: into side. */
static void x_side(lister *L, const int32_t *sep, size_t nsep) {
  const sl_moral *m = &L->m;
  bump(L);
  uint32_t g = L->gen;
  for (size_t i = 0; i < nsep; i++) L->stamp_s[sep[i]] = g;
  size_t head = 0;
  L->nside = 0;
  for (size_t v = 0; v < m->n; v++)
    if (L->role[v] & R_X) { L->stamp_a[v] = g; L->side[L->nside++] = (int32_t)v; }
  while (head < L->nside) {
    int32_t v = L->side[head++];
    for (uint32_t k = m->off[v]; k < m->off[v + 1]; k++) {
      int32_t w = m->adj[k];
      if (L->stamp_a[w] == g || L->stamp_s[w] == g || (L->role[w] & R_REQ)) continue;
      L->stamp_a[w] = g;
      L->side[L->nside++] = w;
    }
  }
}

static int cmp_i32(const void *a, const void *b) {
  int32_t x = *(const int32_t *)a, y = *(const int32_t *)b;
  return (x > y) - (x < y);
}

static uint64_t hash_set(const int32_t *s, size_t n) {
  uint64_t h = 1469598103934665603ull ^ n;
  for (size_t i = 0; i < n; i++) { h ^= (uint64_t)(uint32_t)s[i]; h *= 1099511628211ull; }
  return h;
}

/* Insert sep (sorted) unless present: 1 new, 0 present, -1 no memory. */
static int remember(lister *L, int32_t *sep, size_t n) {
  qsort(sep, n, sizeof *sep, cmp_i32);
  if ((L->nfound + 1) * 2 > L->nslot) {
    size_t nslot = L->nslot ? L->nslot * 2 : 1024;
    int64_t *t = malloc(nslot * sizeof *t);
    if (!t) return -1;
    for (size_t i = 0; i < nslot; i++) t[i] = -1;
    for (size_t f = 0; f < L->nfound; f++) {
      size_t i = hash_set(L->pool + L->start[f], L->len[f]) & (nslot - 1);
      while (t[i] >= 0) i = (i + 1) & (nslot - 1);
      t[i] = (int64_t)f;
    }
    free(L->table);
    L->table = t;
    L->nslot = nslot;
  }
  size_t i = hash_set(sep, n) & (L->nslot - 1);
  for (; L->table[i] >= 0; i = (i + 1) & (L->nslot - 1)) {
    size_t f = (size_t)L->table[i];
    if (L->len[f] == n && (n == 0 || memcmp(L->pool + L->start[f], sep, n * sizeof *sep) == 0))
      return 0;
  }
  if (L->nfound == L->capfound) {
    size_t c = L->capfound ? L->capfound * 2 : 256;
    size_t *s = realloc(L->start, c * sizeof *s), *l;
    if (!s) return -1;
    L->start = s;
    if (!(l = realloc(L->len, c * sizeof *l))) return -1;
    L->len = l;
    L->capfound = c;
  }
  if (L->pool_len + n > L->pool_cap) {
    size_t c = L->pool_cap ? L->pool_cap : 1024;
    while (c < L->pool_len + n) c *= 2;
    int32_t *p = realloc(L->pool, c * sizeof *p);
    if (!p) return -1;
    L->pool = p;
    L->pool_cap = c;
  }
  if (n) memcpy(L->pool + L->pool_len, sep, n * sizeof *sep);
  L->start[L->nfound] = L->pool_len;
  L->len[L->nfound] = n;
  L->pool_len += n;
  L->table[i] = (int64_t)L->nfound;
  L->nfound++;
  return 1;
}

static void lister_free(lister *L) {
  sl_moral_free(&L->m);
  free(L->role); free(L->stamp_a); free(L->stamp_s); free(L->stamp_y);
  free(L->queue); free(L->sep); free(L->side);
  free(L->pool); free(L->start); free(L->len); free(L->table);
}

static const sl_graph *rank_graph;
static int cmp_rank(const void *a, const void *b) {
  int32_t x = rank_graph->rank[*(const int32_t *)a], y = rank_graph->rank[*(const int32_t *)b];
  return (x > y) - (x < y);
}

/* Why no set exists: an open trail that even the largest allowed set leaves. */
static int none_reason(const sl_effect *q, lister *L, sl_reasons *reason, sl_error *e) {
  if (!reason) return SL_OK;
  int32_t *z = malloc((L->m.n ? L->m.n : 1) * sizeof *z);
  if (!z) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  size_t nz = 0;
  for (size_t v = 0; v < L->m.n; v++)
    if (L->role[v] & (R_OK | R_REQ)) z[nz++] = L->m.node[v];
  int sep;
  int rc = sl_adj_leaks(q, z, nz, q->in_x, q->cn, &sep, reason, 1, e);
  free(z);
  return rc;
}

int sl_adjust_each(const sl_effect *q, sl_mark forbid, sl_mark require,
                   sl_set_fn fn, void *ctx, int *none, sl_reasons *reason,
                   volatile int *stop, sl_error *e) {
  const sl_graph *g = q->g;
  lister L;
  memset(&L, 0, sizeof L);
  *none = 0;
  for (size_t v = 0; require && v < g->n; v++) {
    if (!require[v]) continue;
    const char *nm = sl_graph_name(g, (int32_t)v);
    if (g->hidden[v]) return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it cannot be required", nm);
    if (q->in_x[v] || q->in_y[v])
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is a treatment or outcome: it cannot be required", nm);
    if (q->forb[v])
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' cannot be required: %s", nm,
                          q->cn[v] ? "it lies on a causal path from the treatment"
                                   : "it descends from a node on a causal path from the treatment");
    if (forbid && forbid[v])
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both required and forbidden", nm);
  }
  int rc = sl_moral_build(&L.m, q, require, e);
  if (rc) return rc;
  size_t n = L.m.n ? L.m.n : 1;
  L.role = calloc(n, 1);
  L.stamp_a = calloc(n, sizeof *L.stamp_a); L.stamp_s = calloc(n, sizeof *L.stamp_s);
  L.stamp_y = calloc(n, sizeof *L.stamp_y);
  L.queue = malloc(n * sizeof *L.queue); L.sep = malloc(n * sizeof *L.sep);
  L.side = malloc((n + 1) * sizeof *L.side);
  int32_t *out = malloc((g->n ? g->n : 1) * sizeof *out);
  if (!L.role || !L.stamp_a || !L.stamp_s || !L.stamp_y || !L.queue || !L.sep || !L.side || !out) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  for (size_t i = 0; i < L.m.n; i++) {
    int32_t v = L.m.node[i];
    if (q->in_x[v]) L.role[i] = R_X;
    else if (q->in_y[v]) L.role[i] = R_Y;
    else if (require && require[v]) L.role[i] = R_REQ;
    else if (!q->forb[v] && !g->hidden[v] && !(forbid && forbid[v])) L.role[i] = R_OK;
  }
  /* the first set: closest to X */
  L.nside = 0;
  for (size_t v = 0; v < L.m.n; v++) if (L.role[v] & R_X) L.side[L.nside++] = (int32_t)v;
  if (!closest(&L)) { *none = 1; rc = none_reason(q, &L, reason, e); goto done; }
  if (remember(&L, L.sep, L.nsep) < 0) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  rank_graph = g;
  for (size_t next = 0; next < L.nfound; next++) {
    if (stop && *stop) { rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted"); break; }
    /* report it: the separator plus the required nodes, by name */
    size_t k = 0, len = L.len[next];
    for (size_t i = 0; i < len; i++) out[k++] = L.m.node[L.pool[L.start[next] + i]];
    for (size_t v = 0; v < L.m.n; v++) if (L.role[v] & R_REQ) out[k++] = L.m.node[v];
    qsort(out, k, sizeof *out, cmp_rank);
    int r = fn(ctx, out, k);
    if (r) { rc = r; break; }
    /* its neighbours: move each member to X's side in turn */
    x_side(&L, L.pool + L.start[next], L.len[next]);
    size_t base = L.nside;
    for (size_t i = 0; i < L.len[next]; i++) {
      L.nside = base;     /* C_X(S) is unchanged: closest() only reads side */
      L.side[L.nside++] = L.pool[L.start[next] + i];
      if (!closest(&L)) continue;
      if (remember(&L, L.sep, L.nsep) < 0) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    }
  }
done:
  free(out);
  lister_free(&L);
  return rc;
}
