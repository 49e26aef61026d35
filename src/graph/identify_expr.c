/*
** identify_expr.c: the nodes of an identification formula.  Nodes are
** immutable and may be shared; all live in one pool per query.  Each
** node knows its free variables, so the simplifier can ask which factors
** a summed variable touches.
*/
#include <stdlib.h>
#include <string.h>
#include "identify_internal.h"

static int cmp_i32(const void *pa, const void *pb) {
  int32_t a = *(const int32_t *)pa, b = *(const int32_t *)pb;
  return (a > b) - (a < b);
}

int sl_set_has(const int32_t *s, size_t n, int32_t v) {
  size_t lo = 0, hi = n;
  while (lo < hi) {
    size_t mid = (lo + hi) / 2;
    if (s[mid] == v) return 1;
    if (s[mid] < v) lo = mid + 1; else hi = mid;
  }
  return 0;
}

/* A sorted copy without repeats in the pool. */
static const int32_t *sorted_copy(sl_idpool *p, const int32_t *s, size_t n, size_t *out_n) {
  int32_t *c = sl_idpool_get(p, (n ? n : 1) * sizeof *c);
  if (n) memcpy(c, s, n * sizeof *c);
  qsort(c, n, sizeof *c, cmp_i32);
  size_t k = 0;
  for (size_t i = 0; i < n; i++)
    if (!k || c[k - 1] != c[i]) c[k++] = c[i];
  *out_n = k;
  return c;
}

/* The union of two sorted sets, in the pool. */
const int32_t *sl_set_union(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                                size_t nb, size_t *n) {
  int32_t *u = sl_idpool_get(p, (na + nb ? na + nb : 1) * sizeof *u);
  size_t i = 0, j = 0, k = 0;
  while (i < na || j < nb) {
    if (j >= nb || (i < na && a[i] < b[j])) u[k++] = a[i++];
    else if (i >= na || b[j] < a[i]) u[k++] = b[j++];
    else { u[k++] = a[i++]; j++; }
  }
  *n = k;
  return u;
}

/* a minus b, in the pool. */
const int32_t *sl_set_minus(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                                size_t nb, size_t *n) {
  int32_t *u = sl_idpool_get(p, (na ? na : 1) * sizeof *u);
  size_t k = 0;
  for (size_t i = 0; i < na; i++)
    if (!sl_set_has(b, nb, a[i])) u[k++] = a[i];
  *n = k;
  return u;
}

static sl_idx *node(sl_idpool *p, int kind) {
  sl_idx *x = sl_idpool_get(p, sizeof *x);
  x->kind = kind;
  x->head = -1;
  return x;
}

const sl_idx *sl_idx_one(sl_idpool *p) { return node(p, SL_IDX_ONE); }

const sl_idx *sl_idx_prob(sl_idpool *p, const int32_t *a, size_t na, const int32_t *b,
                          size_t nb) {
  sl_idx *x = node(p, SL_IDX_PROB);
  x->a = sorted_copy(p, a, na, &x->na);
  const int32_t *bb = sorted_copy(p, b, nb, &x->nb);
  x->b = sl_set_minus(p, bb, x->nb, x->a, x->na, &x->nb);
  x->fv = sl_set_union(p, x->a, x->na, x->b, x->nb, &x->nfv);
  if (x->na == 1) x->head = x->a[0];
  return x;
}

const sl_idx *sl_idx_product(sl_idpool *p, const sl_idx *const *kid, size_t n) {
  sl_idx *x = node(p, SL_IDX_PRODUCT);
  const sl_idx **k = sl_idpool_get(p, (n ? n : 1) * sizeof *k);
  const int32_t *fv = NULL;
  size_t nfv = 0;
  for (size_t i = 0; i < n; i++) {
    k[i] = kid[i];
    fv = sl_set_union(p, fv, nfv, kid[i]->fv, kid[i]->nfv, &nfv);
  }
  x->kid = k;
  x->nkid = n;
  x->fv = fv;
  x->nfv = nfv;
  return x;
}

const sl_idx *sl_idx_sum(sl_idpool *p, const int32_t *w, size_t nw, const sl_idx *body) {
  sl_idx *x = node(p, SL_IDX_SUM);
  const sl_idx **k = sl_idpool_get(p, sizeof *k);
  k[0] = body;
  x->kid = k;
  x->nkid = 1;
  x->a = sorted_copy(p, w, nw, &x->na);
  x->fv = sl_set_minus(p, body->fv, body->nfv, x->a, x->na, &x->nfv);
  return x;
}

const sl_idx *sl_idx_quotient(sl_idpool *p, const sl_idx *num, const sl_idx *den,
                              int32_t head) {
  sl_idx *x = node(p, SL_IDX_QUOTIENT);
  const sl_idx **k = sl_idpool_get(p, 2 * sizeof *k);
  k[0] = num;
  k[1] = den;
  x->kid = k;
  x->nkid = 2;
  x->head = head;
  x->fv = sl_set_union(p, num->fv, num->nfv, den->fv, den->nfv, &x->nfv);
  return x;
}

const sl_idx *sl_idx_with_head(sl_idpool *p, const sl_idx *x, int32_t head) {
  if (x->head == head) return x;
  sl_idx *c = sl_idpool_get(p, sizeof *c);
  *c = *x;
  c->head = head;
  return c;
}

static int same_set(const int32_t *a, size_t na, const int32_t *b, size_t nb) {
  return na == nb && (na == 0 || memcmp(a, b, na * sizeof *a) == 0);
}

int sl_idx_equal(const sl_idx *a, const sl_idx *b) {
  if (a == b) return 1;
  if (a->kind != b->kind || a->nkid != b->nkid) return 0;
  if (!same_set(a->a, a->na, b->a, b->na) || !same_set(a->b, a->nb, b->b, b->nb)) return 0;
  for (size_t i = 0; i < a->nkid; i++)
    if (!sl_idx_equal(a->kid[i], b->kid[i])) return 0;
  return 1;
}
