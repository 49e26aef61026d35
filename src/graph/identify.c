/*
** identify.c: the ID algorithm of Shpitser and Pearl 2006 (AAAI, Fig. 3;
** the numbered lines below are theirs) and IDC for conditional effects
** (Shpitser and Pearl 2006, UAI, Fig. 2), on the observed ADMG.
**
** The distribution P that the recursion carries is one of:
**   JOINT  the observed joint, marginal over the current nodes V: its
**          conditionals are plain P(a | b) of the data;
**   CHAIN  a product of one factor per node of V in topological order,
**          each a conditional of its node given earlier nodes and nodes
**          outside V (what line 7 builds): then P(v | earlier) is v's factor;
**   EXPR   any other expression over V: conditionals are quotients of
**          its margins.
*/
#include <stdlib.h>
#include <string.h>
#include "identify_internal.h"

enum { P_JOINT, P_CHAIN, P_EXPR };

typedef struct idp {
  int kind;
  const sl_idx *e;          /* EXPR */
  const sl_idx **f;         /* CHAIN: the factor of each node, by local id */
} idp;

typedef struct idctx {
  const sl_admg *a;
  sl_idpool *pool;          /* the expression: kept */
  sl_idpool *work;          /* sets of the recursion */
  size_t W;
  sl_idsimp simp;
  int32_t *stack;
  sl_bits *hedge_f, *hedge_f2;
  volatile int *stop;
  jmp_buf *jb;
  int interrupted;
} idctx;

/* ---- sets ---- */

static sl_bits *bnew(idctx *c) { return sl_idpool_get(c->work, c->W * sizeof(sl_bits)); }

static sl_bits *bdup(idctx *c, const sl_bits *s) {
  sl_bits *o = bnew(c);
  memcpy(o, s, c->W * sizeof *o);
  return o;
}

static int bempty(idctx *c, const sl_bits *s) {
  for (size_t i = 0; i < c->W; i++) if (s[i]) return 0;
  return 1;
}

static int bequal(idctx *c, const sl_bits *s, const sl_bits *t) {
  return memcmp(s, t, c->W * sizeof *s) == 0;
}

/* op 0: s & t, 1: s | t, 2: s & ~t */
static sl_bits *bop(idctx *c, const sl_bits *s, const sl_bits *t, int op) {
  sl_bits *o = bnew(c);
  for (size_t i = 0; i < c->W; i++)
    o[i] = op == 0 ? s[i] & t[i] : op == 1 ? s[i] | t[i] : s[i] & ~t[i];
  return o;
}

/* The members as an ascending list (in the work pool). */
static int32_t *blist(idctx *c, const sl_bits *s, size_t *n) {
  size_t k = 0;
  for (size_t v = 0; v < c->a->n; v++) k += bits_has(s, (int32_t)v);
  int32_t *l = sl_idpool_get(c->work, (k ? k : 1) * sizeof *l);
  k = 0;
  for (size_t v = 0; v < c->a->n; v++) if (bits_has(s, (int32_t)v)) l[k++] = (int32_t)v;
  *n = k;
  return l;
}

/* The members in topological order. */
static int32_t *border(idctx *c, const sl_bits *s, size_t *n) {
  size_t k = 0;
  int32_t *l = sl_idpool_get(c->work, (c->a->n ? c->a->n : 1) * sizeof *l);
  for (size_t p = 0; p < c->a->n; p++)
    if (bits_has(s, c->a->order[p])) l[k++] = c->a->order[p];
  *n = k;
  return l;
}

/* ---- the distribution ---- */

/* P(v | the nodes of V before v). */
static const sl_idx *cond(idctx *c, const idp *P, const sl_bits *V, int32_t v) {
  const sl_admg *a = c->a;
  if (P->kind == P_CHAIN) return P->f[v];
  sl_bits *before = bnew(c), *after = bnew(c);
  for (size_t u = 0; u < a->n; u++) {
    if (!bits_has(V, (int32_t)u) || (int32_t)u == v) continue;
    bits_set(a->pos[u] < a->pos[v] ? before : after, (int32_t)u);
  }
  size_t nb, nf;
  int32_t *lb = blist(c, before, &nb);
  if (P->kind == P_JOINT) return sl_idx_prob(c->pool, &v, 1, lb, nb);
  int32_t *lf = blist(c, after, &nf);
  const sl_idx *num = sl_idx_sum(c->pool, lf, nf, P->e);
  bits_set(after, v);
  lf = blist(c, after, &nf);
  const sl_idx *den = sl_idx_sum(c->pool, lf, nf, P->e);
  const sl_idx *q = sl_idx_simplify(&c->simp, sl_idx_quotient(c->pool, num, den, v));
  return q->kind == SL_IDX_ONE ? q : sl_idx_with_head(c->pool, q, v);
}

/* The product of a CHAIN's factors over the members of s. */
static const sl_idx *chain_product(idctx *c, const idp *P, const sl_bits *s) {
  size_t n;
  int32_t *l = border(c, s, &n);
  const sl_idx **f = sl_idpool_get(c->work, (n ? n : 1) * sizeof *f);
  for (size_t i = 0; i < n; i++) f[i] = P->f[l[i]];
  return sl_idx_product(c->pool, f, n);
}

/* Whether a factor of the CHAIN over s, other than v's, mentions v. */
static int mentioned(idctx *c, const idp *P, const sl_bits *s, int32_t v) {
  for (size_t u = 0; u < c->a->n; u++) {
    if ((int32_t)u == v || !bits_has(s, (int32_t)u)) continue;
    if (sl_set_has(P->f[u]->fv, P->f[u]->nfv, v)) return 1;
  }
  return 0;
}

/* Line 2: P(keep) = the sum of P over V \ keep. */
static idp marginal(idctx *c, const idp *P, const sl_bits *V, const sl_bits *keep) {
  idp out = *P;
  sl_bits *drop = bop(c, V, keep, 2);
  size_t n;
  if (P->kind == P_JOINT) return out;
  if (P->kind == P_CHAIN) {
    /* a node no other factor mentions leaves with its factor (it sums to 1) */
    sl_bits *live = bdup(c, V);
    for (int changed = 1; changed;) {
      changed = 0;
      for (size_t u = 0; u < c->a->n; u++)
        if (bits_has(drop, (int32_t)u) && !mentioned(c, P, live, (int32_t)u)) {
          bits_clear(drop, (int32_t)u);
          bits_clear(live, (int32_t)u);
          changed = 1;
        }
    }
    if (bempty(c, drop)) return out;
    int32_t *l = blist(c, drop, &n);
    out.kind = P_EXPR;
    out.e = sl_idx_simplify(&c->simp, sl_idx_sum(c->pool, l, n, chain_product(c, P, live)));
    return out;
  }
  int32_t *l = blist(c, drop, &n);
  out.e = sl_idx_simplify(&c->simp, sl_idx_sum(c->pool, l, n, P->e));
  return out;
}

/* Line 1: the sum of P over V \ y. */
static const sl_idx *margin_of(idctx *c, const idp *P, const sl_bits *V, const sl_bits *y) {
  size_t n, ny;
  int32_t *l = blist(c, bop(c, V, y, 2), &n);
  if (P->kind == P_JOINT) {
    int32_t *ly = blist(c, y, &ny);
    return sl_idx_prob(c->pool, ly, ny, NULL, 0);
  }
  const sl_idx *body = P->kind == P_CHAIN ? chain_product(c, P, V) : P->e;
  return sl_idx_sum(c->pool, l, n, body);
}

/* ---- the recursion ---- */

static const sl_idx *id_rec(idctx *c, const sl_bits *y, const sl_bits *x, const idp *P,
                            const sl_bits *V) {
  const sl_admg *a = c->a;
  if (c->stop && *c->stop) { c->interrupted = 1; longjmp(*c->jb, 1); }
  /* 1: no intervention left */
  if (bempty(c, x)) return margin_of(c, P, V, y);
  /* 2: only the ancestors of y matter */
  sl_bits *an = bnew(c);
  sl_admg_ancestors(a, V, y, NULL, an, c->stack);
  if (!bequal(c, an, V)) {
    idp P2 = marginal(c, P, V, an);
    return id_rec(c, y, bop(c, x, an, 0), &P2, an);
  }
  /* 3: intervene also on the nodes that do not reach y once x is set */
  sl_bits *anx = bnew(c);
  sl_admg_ancestors(a, V, y, x, anx, c->stack);
  sl_bits *w = bop(c, bop(c, V, x, 2), anx, 2);
  if (!bempty(c, w)) return id_rec(c, y, bop(c, x, w, 1), P, V);
  /* 4: one factor per c-component of G \ x */
  sl_bits *vx = bop(c, V, x, 2);
  int32_t *comp = sl_idpool_get(c->work, (a->n ? a->n : 1) * sizeof *comp);
  size_t k = sl_admg_components(a, vx, comp, c->stack);
  if (k > 1) {
    const sl_idx **f = sl_idpool_get(c->work, k * sizeof *f);
    for (size_t i = 0; i < k; i++) {
      sl_bits *s = bnew(c);
      for (size_t u = 0; u < a->n; u++) if (comp[u] == (int32_t)i) bits_set(s, (int32_t)u);
      f[i] = id_rec(c, s, bop(c, V, s, 2), P, V);
      if (!f[i]) return NULL;
    }
    size_t n;
    int32_t *l = blist(c, bop(c, vx, y, 2), &n);
    return sl_idx_sum(c->pool, l, n, sl_idx_product(c->pool, f, k));
  }
  /* 5: G is a single c-component: a hedge (G, S) */
  int32_t *cg = sl_idpool_get(c->work, (a->n ? a->n : 1) * sizeof *cg);
  size_t kg = sl_admg_components(a, V, cg, c->stack);
  if (kg == 1) {
    c->hedge_f = bdup(c, V);
    c->hedge_f2 = bdup(c, vx);
    return NULL;
  }
  /* the c-component S' of G that holds S */
  int32_t first = -1;
  for (size_t u = 0; u < a->n && first < 0; u++) if (bits_has(vx, (int32_t)u)) first = (int32_t)u;
  sl_bits *s2 = bnew(c);
  for (size_t u = 0; u < a->n; u++) if (cg[u] == cg[first]) bits_set(s2, (int32_t)u);
  if (bequal(c, s2, vx)) {
    /* 6: S is a c-component of G: its Q-factor */
    size_t n;
    int32_t *l = border(c, vx, &n);
    const sl_idx **f = sl_idpool_get(c->work, (n ? n : 1) * sizeof *f);
    for (size_t i = 0; i < n; i++) f[i] = cond(c, P, V, l[i]);
    size_t ns;
    int32_t *sum = blist(c, bop(c, vx, y, 2), &ns);
    return sl_idx_sum(c->pool, sum, ns, sl_idx_product(c->pool, f, n));
  }
  /* 7: recurse into S' with its Q-factor */
  idp P7 = {P_CHAIN, NULL, sl_idpool_get(c->work, (a->n ? a->n : 1) * sizeof(sl_idx *))};
  for (size_t u = 0; u < a->n; u++)
    if (bits_has(s2, (int32_t)u)) P7.f[u] = cond(c, P, V, (int32_t)u);
  return id_rec(c, y, bop(c, x, s2, 0), &P7, s2);
}

/* ---- the query ---- */

static int cmp_i32(const void *pa, const void *pb) {
  int32_t a = *(const int32_t *)pa, b = *(const int32_t *)pb;
  return (a > b) - (a < b);
}

/* Graph ids to sorted locals (malloc'd); every member must be observed. */
static int32_t *to_locals(const sl_admg *a, const int32_t *v, size_t n) {
  int32_t *l = malloc((n ? n : 1) * sizeof *l);
  if (!l) return NULL;
  for (size_t i = 0; i < n; i++) l[i] = a->local[v[i]];
  qsort(l, n, sizeof *l, cmp_i32);
  return l;
}

static sl_bits *to_bits(idctx *c, const int32_t *l, size_t n) {
  sl_bits *s = bnew(c);
  for (size_t i = 0; i < n; i++) bits_set(s, l[i]);
  return s;
}

/* IDC's first rule: move to x each z whose arrows out do not reach y,
** given the rest (y and z m-separated in G with x's arrows in and z's
** arrows out removed). */
static void idc_move(idctx *c, sl_admg_ws *ws, sl_bits *x, sl_bits *z, const sl_bits *y) {
  const sl_admg *a = c->a;
  for (int moved = 1; moved;) {
    moved = 0;
    for (size_t p = 0; p < a->n && !moved; p++) {
      int32_t zi = a->order[p];
      if (!bits_has(z, zi)) continue;
      for (size_t u = 0; u < a->n; u++) {
        ws->mx[u] = (unsigned char)bits_has(y, (int32_t)u);
        ws->my[u] = (int32_t)u == zi;
        ws->mz[u] = (unsigned char)((bits_has(x, (int32_t)u) || bits_has(z, (int32_t)u)) &&
                                    (int32_t)u != zi);
        ws->no_in[u] = (unsigned char)bits_has(x, (int32_t)u);
        ws->no_out[u] = (int32_t)u == zi;
      }
      if (sl_admg_separated(ws)) {
        bits_clear(z, zi);
        bits_set(x, zi);
        moved = 1;
      }
    }
  }
  memset(ws->no_in, 0, a->n ? a->n : 1);
  memset(ws->no_out, 0, a->n ? a->n : 1);
}

void sl_identification_free(sl_identification *r) {
  if (!r) return;
  free(r->var_node); free(r->var_pos);
  free(r->x); free(r->y); free(r->z);
  free(r->hedge_f); free(r->hedge_f2); free(r->hedge_x); free(r->hedge_y);
  sl_idpool_free(r->pool);
  memset(r, 0, sizeof *r);
}

/* A set of bits as a malloc'd sorted list. */
static int32_t *keep_list(idctx *c, const sl_bits *s, size_t *n) {
  size_t k;
  int32_t *l = blist(c, s, &k), *o = malloc((k ? k : 1) * sizeof *o);
  if (o && k) memcpy(o, l, k * sizeof *o);
  *n = k;
  return o;
}

int sl_identify(const sl_graph *g, const int32_t *x, size_t nx, const int32_t *y,
                size_t ny, const int32_t *z, size_t nz, sl_identification *out,
                volatile int *stop, sl_error *e) {
  memset(out, 0, sizeof *out);
  sl_admg a;
  if (sl_admg_build(&a, g, e)) return e->code;
  for (int s = 0; s < 3; s++) {
    const int32_t *v = s == 0 ? x : s == 1 ? y : z;
    size_t n = s == 0 ? nx : s == 1 ? ny : nz;
    for (size_t i = 0; i < n; i++)
      if (a.local[v[i]] < 0) {
        sl_admg_free(&a);
        return sl_error_set(e, SL_EARG, 0, 0, "'%s' is hidden: it has no observed values",
                            sl_graph_name(g, v[i]));
      }
  }
  idctx c;
  memset(&c, 0, sizeof c);
  sl_admg_ws ws;
  jmp_buf jb;
  int rc = SL_OK;
  c.a = &a;
  c.W = a.words;
  c.stop = stop;
  c.jb = &jb;
  c.pool = sl_idpool_alloc();
  c.work = sl_idpool_alloc();
  c.stack = malloc((a.n ? a.n : 1) * sizeof *c.stack);
  int ws_ok = sl_admg_ws_init(&ws, &a) == 0;
  out->x = to_locals(&a, x, nx);
  out->y = to_locals(&a, y, ny);
  out->z = to_locals(&a, z, nz);
  out->var_node = malloc((a.n ? a.n : 1) * sizeof *out->var_node);
  out->var_pos = malloc((a.n ? a.n : 1) * sizeof *out->var_pos);
  if (!c.pool || !c.work || !c.stack || !ws_ok || !out->x || !out->y || !out->z ||
      !out->var_node || !out->var_pos) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  out->nx = nx; out->ny = ny; out->nz = nz;
  out->nvar = a.n;
  memcpy(out->var_node, a.node, a.n * sizeof *a.node);
  memcpy(out->var_pos, a.pos, a.n * sizeof *a.pos);
  c.pool->fail = c.work->fail = &jb;
  c.simp.pool = c.pool;
  c.simp.ws = &ws;
  c.simp.scratch = c.stack;
  if (setjmp(jb)) {
    rc = c.interrupted ? sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted")
                       : sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  sl_bits *bx = to_bits(&c, out->x, nx), *by = to_bits(&c, out->y, ny);
  sl_bits *bz = to_bits(&c, out->z, nz), *all = bnew(&c);
  for (size_t u = 0; u < a.n; u++) bits_set(all, (int32_t)u);
  idc_move(&c, &ws, bx, bz, by);
  sl_bits *target = bop(&c, by, bz, 1);
  idp P = {P_JOINT, NULL, NULL};
  const sl_idx *r = id_rec(&c, target, bx, &P, all);
  if (r && !bempty(&c, bz)) {           /* IDC: P(y, z) / P(z) under do(x) */
    size_t n;
    int32_t *ly = blist(&c, by, &n);
    r = sl_idx_quotient(c.pool, r, sl_idx_sum(c.pool, ly, n, r), -1);
  }
  if (r) {
    out->identified = 1;
    out->expr = sl_idx_simplify(&c.simp, r);
  } else {
    out->hedge_f = keep_list(&c, c.hedge_f, &out->nf);
    out->hedge_f2 = keep_list(&c, c.hedge_f2, &out->nf2);
    out->hedge_x = keep_list(&c, bx, &out->nhx);
    out->hedge_y = keep_list(&c, target, &out->nhy);
    if (!out->hedge_f || !out->hedge_f2 || !out->hedge_x || !out->hedge_y)
      rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  out->pool = c.pool;
  c.pool = NULL;
done:
  sl_idpool_free(c.pool);
  sl_idpool_free(c.work);
  free(c.stack);
  if (ws_ok) sl_admg_ws_free(&ws);
  sl_admg_free(&a);
  if (rc) sl_identification_free(out);
  return rc;
}
