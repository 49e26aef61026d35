/*
** identify_simplify.c: rewrite a formula into a shorter one that equals it
** for every distribution the graph allows (positive where it divides).
** The rules, each an identity of probability:
**   - a conditioning variable b of P(A | B) goes when A and b are
**     m-separated given B \ b in the observed ADMG (the global Markov
**     property of the latent projection: Richardson 2003; Tian and Pearl
**     2002); P(A | B) is a probability of the observed joint, so this holds;
**   - chain rule: P(A | B, C) P(B | C) = P(A, B | C), also when either
**     factor was written without conditions it does not depend on (the
**     separation says so);
**   - a sum over w of a product where one factor alone holds w, and is a
**     distribution of w (P(w, A | B), or a conditional of w), leaves that
**     factor without w: sum_w P(w, A | B) = P(A | B), sum_w P(w | B) = 1;
**   - factors without a summed variable leave the sum, and a sum splits
**     into one sum per group of factors that share summed variables;
**   - P(A | C) / P(B | C) = P(A \ B | B, C) for B inside A, and a factor
**     of a numerator equal to the denominator cancels.
** The front-door, back-door and napkin formulas come out in their
** textbook forms (Pearl 2009, sections 3.3 and 3.4; the napkin: Pearl and
** Mackenzie 2018; Shpitser and Pearl 2006).
*/
#include <stdlib.h>
#include <string.h>
#include "identify_internal.h"

static const sl_idx *simp(sl_idsimp *s, const sl_idx *x);

static const sl_idx *done(const sl_idx *x) {
  ((sl_idx *)x)->simple = 1;   /* nodes are the pool's: marking is safe */
  return x;
}

static int disjoint(const int32_t *a, size_t na, const int32_t *b, size_t nb) {
  for (size_t i = 0; i < na; i++) if (sl_set_has(b, nb, a[i])) return 0;
  return 1;
}

static int subset(const int32_t *a, size_t na, const int32_t *b, size_t nb) {
  for (size_t i = 0; i < na; i++) if (!sl_set_has(b, nb, a[i])) return 0;
  return 1;
}

/* A and B m-separated given C in the observed ADMG (B empty: yes). */
static int separated(sl_idsimp *s, const int32_t *a, size_t na, const int32_t *b, size_t nb,
                     const int32_t *c, size_t nc) {
  sl_admg_ws *w = s->ws;
  size_t n = w->a->n;
  if (!nb || !na) return 1;
  memset(w->mx, 0, n); memset(w->my, 0, n); memset(w->mz, 0, n);
  for (size_t i = 0; i < na; i++) w->mx[a[i]] = 1;
  for (size_t i = 0; i < nb; i++) w->my[b[i]] = 1;
  for (size_t i = 0; i < nc; i++) w->mz[c[i]] = 1;
  return sl_admg_separated(w);
}

/* P(A | B) without the members of B that A does not depend on. */
static const sl_idx *prune(sl_idsimp *s, const sl_idx *x) {
  if (x->na == 0) return done(sl_idx_one(s->pool));
  int32_t *b = sl_idpool_get(s->pool, (x->nb ? x->nb : 1) * sizeof *b);
  size_t nb = x->nb;
  memcpy(b, x->b, nb * sizeof *b);
  for (size_t i = nb; i-- > 0;) {
    int32_t v = b[i];
    memmove(b + i, b + i + 1, (nb - i - 1) * sizeof *b);
    if (separated(s, x->a, x->na, &v, 1, b, nb - 1)) { nb--; continue; }
    memmove(b + i + 1, b + i, (nb - i - 1) * sizeof *b);
    b[i] = v;
  }
  if (nb == x->nb) return done(x);
  return done(sl_idx_prob(s->pool, x->a, x->na, b, nb));
}

/* The factors of a product (or x alone) into a growable list. */
typedef struct flist { const sl_idx **v; size_t n, cap; } flist;

static void fl_add(sl_idsimp *s, flist *l, const sl_idx *x) {
  if (x->kind == SL_IDX_ONE) return;
  if (x->kind == SL_IDX_PRODUCT) {
    for (size_t i = 0; i < x->nkid; i++) fl_add(s, l, x->kid[i]);
    return;
  }
  if (l->n == l->cap) {
    size_t cap = l->cap ? l->cap * 2 : 8;
    const sl_idx **nv = sl_idpool_get(s->pool, cap * sizeof *nv);
    if (l->n) memcpy(nv, l->v, l->n * sizeof *nv);
    l->v = nv;
    l->cap = cap;
  }
  l->v[l->n++] = x;
}

static void fl_remove(flist *l, size_t i) {
  memmove(l->v + i, l->v + i + 1, (l->n - i - 1) * sizeof *l->v);
  l->n--;
}

/* P(A | B, C1) P(B | D2) = P(A, B | C) with C = C1 and D2 together, when
** A is separated from D2 \ C1 given B, C1 and B from C1 \ D2 given D2
** (each factor keeps its value with the other's conditions added). */
static const sl_idx *chain(sl_idsimp *s, const sl_idx *f1, const sl_idx *f2) {
  if (f1->kind != SL_IDX_PROB || f2->kind != SL_IDX_PROB) return NULL;
  if (!subset(f2->a, f2->na, f1->b, f1->nb)) return NULL;
  size_t nc1, ne1, ne2, nc, na;
  const int32_t *c1 = sl_set_minus(s->pool, f1->b, f1->nb, f2->a, f2->na, &nc1);
  if (!disjoint(f1->a, f1->na, f2->b, f2->nb)) return NULL;
  const int32_t *e1 = sl_set_minus(s->pool, f2->b, f2->nb, c1, nc1, &ne1);
  if (!separated(s, f1->a, f1->na, e1, ne1, f1->b, f1->nb)) return NULL;
  const int32_t *e2 = sl_set_minus(s->pool, c1, nc1, f2->b, f2->nb, &ne2);
  if (!separated(s, f2->a, f2->na, e2, ne2, f2->b, f2->nb)) return NULL;
  const int32_t *c = sl_set_union(s->pool, c1, nc1, f2->b, f2->nb, &nc);
  const int32_t *a = sl_set_union(s->pool, f1->a, f1->na, f2->a, f2->na, &na);
  return prune(s, sl_idx_prob(s->pool, a, na, c, nc));
}

static const sl_idx *product_of(sl_idsimp *s, flist *l) {
  for (int changed = 1; changed;) {
    changed = 0;
    for (size_t i = 0; i < l->n && !changed; i++)
      for (size_t j = 0; j < l->n && !changed; j++) {
        if (i == j) continue;
        const sl_idx *c = chain(s, l->v[i], l->v[j]);
        if (!c) continue;
        l->v[i] = c;
        fl_remove(l, j);
        changed = 1;
      }
  }
  if (l->n == 0) return done(sl_idx_one(s->pool));
  if (l->n == 1) return l->v[0];
  return done(sl_idx_product(s->pool, l->v, l->n));
}

static const sl_idx *simp_product(sl_idsimp *s, const sl_idx *x) {
  flist l = {0};
  for (size_t i = 0; i < x->nkid; i++) fl_add(s, &l, simp(s, x->kid[i]));
  return product_of(s, &l);
}

/* Remove from the sorted set w (in place) the variable v. */
static void set_drop(int32_t *w, size_t *n, int32_t v) {
  for (size_t i = 0; i < *n; i++)
    if (w[i] == v) { memmove(w + i, w + i + 1, (*n - i - 1) * sizeof *w); (*n)--; return; }
}

/* Sum over w of one factor that alone holds the variable v: the factor
** without v, or NULL when the rule does not apply. */
static const sl_idx *sum_out(sl_idsimp *s, const sl_idx *f, int32_t v) {
  if (f->kind == SL_IDX_PROB && sl_set_has(f->a, f->na, v)) {
    size_t na;
    const int32_t *a = sl_set_minus(s->pool, f->a, f->na, &v, 1, &na);
    return prune(s, sl_idx_prob(s->pool, a, na, f->b, f->nb));
  }
  if (f->head == v) return done(sl_idx_one(s->pool));
  return NULL;
}

/* Union-find over factor indices. */
static size_t find(size_t *up, size_t i) {
  while (up[i] != i) i = up[i] = up[up[i]];
  return i;
}

static const sl_idx *simp_sum(sl_idsimp *s, const sl_idx *x) {
  const sl_idx *body = simp(s, x->kid[0]);
  size_t nw = x->na;
  int32_t *w = sl_idpool_get(s->pool, (nw ? nw : 1) * sizeof *w);
  memcpy(w, x->a, nw * sizeof *w);
  /* nested sums over other variables merge */
  int changed = 0;
  while (body->kind == SL_IDX_SUM && disjoint(body->a, body->na, w, nw)) {
    changed = 1;
    size_t n;
    const int32_t *u = sl_set_union(s->pool, w, nw, body->a, body->na, &n);
    w = sl_idpool_get(s->pool, (n ? n : 1) * sizeof *w);
    memcpy(w, u, n * sizeof *w);
    nw = n;
    body = body->kid[0];
  }
  flist l = {0};
  fl_add(s, &l, body);
  /* summed variables that one factor alone holds */
  for (int again = 1; again;) {
    again = 0;
    for (size_t i = 0; i < nw && !again; i++) {
      size_t holder = 0, count = 0;
      for (size_t j = 0; j < l.n; j++)
        if (sl_set_has(l.v[j]->fv, l.v[j]->nfv, w[i])) { holder = j; count++; }
      if (count != 1) continue;
      const sl_idx *r = sum_out(s, l.v[holder], w[i]);
      if (!r) continue;
      set_drop(w, &nw, w[i]);
      if (r->kind == SL_IDX_ONE) fl_remove(&l, holder); else l.v[holder] = r;
      again = changed = 1;
    }
  }
  /* factors free of the summed variables leave; the rest group by the
  ** summed variables they share */
  flist out = {0};
  size_t *up = sl_idpool_get(s->pool, (l.n ? l.n : 1) * sizeof *up);
  for (size_t j = 0; j < l.n; j++) up[j] = j;
  for (size_t i = 0; i < nw; i++) {
    size_t first = (size_t)-1;
    for (size_t j = 0; j < l.n; j++)
      if (sl_set_has(l.v[j]->fv, l.v[j]->nfv, w[i])) {
        if (first == (size_t)-1) first = j;
        else up[find(up, j)] = find(up, first);
      }
  }
  int *used = sl_idpool_get(s->pool, (nw ? nw : 1) * sizeof *used);
  size_t groups = 0;
  for (size_t j = 0; j < l.n; j++) {
    if (!disjoint(l.v[j]->fv, l.v[j]->nfv, w, nw) && find(up, j) == j) groups++;
    else if (disjoint(l.v[j]->fv, l.v[j]->nfv, w, nw)) changed = 1;
  }
  if (groups > 1) changed = 1;
  for (size_t j = 0; j < l.n; j++) {
    if (disjoint(l.v[j]->fv, l.v[j]->nfv, w, nw)) { fl_add(s, &out, l.v[j]); continue; }
    if (find(up, j) != j) continue;
    flist g = {0};
    for (size_t k = 0; k < l.n; k++)
      if (find(up, k) == j && !disjoint(l.v[k]->fv, l.v[k]->nfv, w, nw)) fl_add(s, &g, l.v[k]);
    const sl_idx *gb = product_of(s, &g);
    if (!sl_idx_equal(gb, body)) changed = 1;
    int32_t *gw = sl_idpool_get(s->pool, (nw ? nw : 1) * sizeof *gw);
    size_t ngw = 0;
    for (size_t i = 0; i < nw; i++)
      if (sl_set_has(gb->fv, gb->nfv, w[i])) { gw[ngw++] = w[i]; used[i] = 1; }
    const sl_idx *sum = sl_idx_sum(s->pool, gw, ngw, gb);
    /* a sum that changed may simplify further; one that did not is done */
    if (changed) sum = simp(s, sum);
    fl_add(s, &out, done(sum));
  }
  /* a summed variable no factor holds multiplies by its number of values:
  ** keep it (the ID algorithm never makes one, but stay exact) */
  int32_t *idle = sl_idpool_get(s->pool, (nw ? nw : 1) * sizeof *idle);
  size_t nidle = 0;
  for (size_t i = 0; i < nw; i++) if (!used[i]) idle[nidle++] = w[i];
  const sl_idx *r = product_of(s, &out);
  if (nidle) r = done(sl_idx_sum(s->pool, idle, nidle, r));
  return r;
}

/* P(A | C) / P(B | C0), B inside A, C0 inside C and B separated from
** C \ C0 given C0: P(A \ B | B, C). */
static const sl_idx *divide_probs(sl_idsimp *s, const sl_idx *n, const sl_idx *d) {
  if (n->kind != SL_IDX_PROB || d->kind != SL_IDX_PROB) return NULL;
  if (!subset(d->a, d->na, n->a, n->na) || !subset(d->b, d->nb, n->b, n->nb)) return NULL;
  size_t ne, na, nb;
  const int32_t *extra = sl_set_minus(s->pool, n->b, n->nb, d->b, d->nb, &ne);
  if (!separated(s, d->a, d->na, extra, ne, d->b, d->nb)) return NULL;
  const int32_t *a = sl_set_minus(s->pool, n->a, n->na, d->a, d->na, &na);
  const int32_t *b = sl_set_union(s->pool, n->b, n->nb, d->a, d->na, &nb);
  return prune(s, sl_idx_prob(s->pool, a, na, b, nb));
}

static const sl_idx *simp_quotient(sl_idsimp *s, const sl_idx *x) {
  const sl_idx *n = simp(s, x->kid[0]), *d = simp(s, x->kid[1]);
  if (d->kind == SL_IDX_ONE) return n;
  if (sl_idx_equal(n, d)) return done(sl_idx_one(s->pool));
  const sl_idx *r = divide_probs(s, n, d);
  if (r) return r;
  if (n->kind == SL_IDX_PRODUCT) {
    flist l = {0};
    fl_add(s, &l, n);
    for (size_t i = 0; i < l.n; i++) {
      if (sl_idx_equal(l.v[i], d)) { fl_remove(&l, i); return product_of(s, &l); }
      if ((r = divide_probs(s, l.v[i], d))) { l.v[i] = r; return product_of(s, &l); }
    }
  }
  if (n == x->kid[0] && d == x->kid[1]) return done(x);
  return done(sl_idx_quotient(s->pool, n, d, x->head));
}

static const sl_idx *simp(sl_idsimp *s, const sl_idx *x) {
  if (x->simple) return x;
  const sl_idx *r;
  switch (x->kind) {
  case SL_IDX_PROB: r = prune(s, x); break;
  case SL_IDX_PRODUCT: r = simp_product(s, x); break;
  case SL_IDX_SUM: r = simp_sum(s, x); break;
  case SL_IDX_QUOTIENT: r = simp_quotient(s, x); break;
  default: r = x;
  }
  /* a conditional of a variable stays one */
  if (x->head >= 0 && r->head != x->head && r->kind != SL_IDX_ONE)
    r = sl_idx_with_head(s->pool, r, x->head);
  return done(r);
}

const sl_idx *sl_idx_simplify(sl_idsimp *s, const sl_idx *x) { return simp(s, x); }
