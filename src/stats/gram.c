/*
** gram.c: cross-products sum_k s_k^2 x_k x_k' accumulated from rows given
** one at a time, a block of scaled rows per level-3 product.  The blocks
** stay below SL_GEMM_WORK (regress.h), where OpenBLAS runs on one thread,
** so the sums come out the same whatever the number of threads.
*/
#include <string.h>
#include <gsl/gsl_blas.h>
#include "estimate_internal.h"
#include "regress.h"

size_t sl_gram_rows(size_t q) {
  size_t r = SL_GEMM_WORK / (q * q);
  return r ? r : 1;
}

void sl_gram_start(sl_gram *a, double *G, double *blk, size_t q) {
  a->G = G; a->blk = blk; a->q = q; a->kb = 0; a->rows = sl_gram_rows(q);
  memset(G, 0, q * q * sizeof *G);
}

/* Fold the rows held into the lower triangle of G. */
static void fold(sl_gram *a) {
  if (a->kb == 0) return;
  gsl_matrix_view G = gsl_matrix_view_array(a->G, a->q, a->q);
  gsl_matrix_view B = gsl_matrix_view_array(a->blk, a->kb, a->q);
  gsl_blas_dsyrk(CblasLower, CblasTrans, 1.0, &B.matrix, 1.0, &G.matrix);
  a->kb = 0;
}

void sl_gram_add(sl_gram *a, const double *x, double s) {
  double *row = a->blk + a->kb * a->q;
  for (size_t j = 0; j < a->q; j++) row[j] = s * x[j];
  if (++a->kb == a->rows) fold(a);
}

void sl_gram_finish(sl_gram *a) { fold(a); }
