/*
** regress.c: ordinary least squares and logistic regression.
**
** Both fit through a Householder QR factorization of the (weighted) design
** matrix, streamed over blocks of rows: each block [X_b  y_b] is folded into
** the triangular factor [R c; 0 rho] of all rows seen so far (by GSL's LQ
** decomposition of the transposed stack, done bit for bit as GSL does it
** but faster, see qracc_fold).  X is read in place, never copied and never
** squared into X'X, so memory beyond X is
** O(p^2 + block) and the coefficients lose digits in proportion to the
** condition number of X (after column scaling), not to its square as with
** the normal equations.  A second pass over X gives the residuals, the
** leverages h_ii = |R^-T x_i|^2 and the sandwich (robust) covariance.
** On the NIST StRD datasets this matches or beats GSL's column-pivoted QR
** (gsl_linalg_QRPT_decomp) and SVD (gsl_multifit_linear) on the whole X.
**
** Logistic regression needs a pass over X per Newton step.  While the
** weighted X'WX, scaled to a unit diagonal, is well conditioned (so that a
** step solved from the normal equations is good to about 1e-10 of its
** length), the steps come from X'WX summed by matrix products and factored
** by Cholesky, a pass costing a fraction of a QR pass; the pass at the
** final coefficients is always a QR pass, so the standard errors come from
** R as before.  Otherwise, or should that path stall, the fit is the QR's
** throughout.
**
** Rank: the sine of the angle between column j and the span of the earlier
** kept columns is |R_jj| / |x_j| in an unpivoted QR.  A column whose sine is
** at most SL_RANK_TOL is aliased; after each aliased column is found the
** others are refactored without it (limited pivoting: aliased columns are
** reported in their own order, the first of a collinear group being kept).
**
** Threads: OpenBLAS runs a product on one thread below a size threshold
** and may change its bits above it.  So every BLAS call here is kept small:
** the factorization works on blocks of about SL_QR_BLOCK_WORK / (p+1) rows,
** matrix products on a few rows at a time (SL_GEMM_WORK), R^-1 comes from
** triangular solves, the Cholesky factor of X'WX from plain loops, and
** every other sum runs in a fixed order.  Results are bit-identical for
** given inputs whatever the thread count, for p up to
** 512 (checked in test_regress).  GSL's error handler is never reached:
** sizes are checked here and no factor with a zero diagonal is inverted.
*/
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>
#include "regress.h"

#define SL_QR_BLOCK_WORK 9216u     /* (p+1) x (rows + p + 1) per block */
#define SL_QR_BLOCK_MAX 4096u
#define SL_HALVINGS 30             /* step-halvings before giving up */
#define SL_EXTREME (10 * DBL_EPSILON)  /* "numerically 0 or 1" */
#define SL_DRIFT 0.1               /* logit units per iteration: diverging */
#define SL_NE_COND 1e6             /* normal equations: largest condition of scaled X'WX */
#define SL_NE_GUESS 0.9            /* of tol: a predicted change taken as the last */

/* ---- the streamed QR ---- */

/* The factor is kept transposed: the rows of a block go into the columns of
** B = [L | X_b'] (q x (q + m), row-major, so each column of X is a
** contiguous row of B), and the LQ decomposition of B (qracc_fold) gives the
** new lower triangle L = R' in place.  Householder vectors then run along contiguous
** memory, about twice as fast as a QR of the row-major block itself. */
typedef struct qracc {
  size_t p, q, m;    /* columns of X, p + 1, rows per block */
  gsl_matrix *B;     /* q x (q + m): L = [R c; 0 rho]' then the block */
  gsl_matrix *Z;     /* m x p: a block of X R^-1 */
  double *w;         /* q: dot products of the rows with a reflection */
} qracc;

/* Free the workspaces of a (safe on a zeroed or half-built one). */
static void qracc_free(qracc *a) {
  if (a->B) gsl_matrix_free(a->B);
  if (a->Z) gsl_matrix_free(a->Z);
  free(a->w);
  memset(a, 0, sizeof *a);
}

/* Allocate the workspaces for p columns and at most n rows; 0 on success.
** Rows per block: q (m + q) <= SL_QR_BLOCK_WORK keeps each BLAS call
** made on a block below OpenBLAS's threading thresholds; at least 4q
** rows, so the triangle refactored with each block costs little. */
static int qracc_init(qracc *a, size_t p, size_t n) {
  memset(a, 0, sizeof *a);
  a->p = p;
  a->q = p + 1;
  size_t m = SL_QR_BLOCK_WORK / a->q;
  m = m > a->q ? m - a->q : 0;
  if (m < 4 * a->q) m = 4 * a->q;
  if (m > SL_QR_BLOCK_MAX) m = SL_QR_BLOCK_MAX;
  if (m > n) m = n;
  a->m = m;
  a->B = gsl_matrix_calloc(a->q, a->q + m);
  a->Z = gsl_matrix_alloc(m, p);
  a->w = malloc(a->q * sizeof *a->w);
  if (!a->B || !a->Z || !a->w) { qracc_free(a); return -1; }
  return 0;
}

/* Start a new factorization. */
static void qracc_reset(qracc *a) {
  gsl_matrix_view L = gsl_matrix_submatrix(a->B, 0, 0, a->q, a->q);
  gsl_matrix_set_zero(&L.matrix);
}

/* Where row r of the block goes: its entry j is at slot[j * B->tda]. */
static double *qracc_slot(qracc *a, size_t r) { return a->B->data + a->q + r; }

/* Householder vector of row i of B (its columns i..len-1), exactly as
** gsl_linalg_householder_transform makes it: beta into column i, the rest
** scaled in place; the coefficient tau into *tau (0: no reflection). */
static void qracc_reflector(double *row, size_t i, size_t len, double *tau) {
  gsl_vector_view x = gsl_vector_view_array(row + i + 1, len - i - 1);
  double xnorm = gsl_blas_dnrm2(&x.vector);
  *tau = 0;
  if (xnorm == 0) return;
  double alpha = row[i], beta = -(alpha >= 0 ? 1 : -1) * hypot(alpha, xnorm), s = alpha - beta;
  *tau = (beta - alpha) / beta;
  if (fabs(s) > DBL_MIN) {
    gsl_blas_dscal(1.0 / s, &x.vector);
  } else {
    gsl_blas_dscal(DBL_EPSILON / s, &x.vector);
    gsl_blas_dscal(1.0 / DBL_EPSILON, &x.vector);
  }
  row[i] = beta;
}

/* w[r] = B[r][c] + (row r's block) . u for rows r0..q-1, four rows at a
** time; each sum in column order, as gsl_linalg_householder_mh makes it. */
static void qracc_dots(const qracc *a, size_t k, size_t r0, size_t c, const double *u) {
  size_t q = a->q, tda = a->B->tda, r = r0;
  const double *B = a->B->data;
  double *w = a->w;
  for (; r + 4 <= q; r += 4) {
    const double *d0 = B + r * tda + q, *d1 = d0 + tda, *d2 = d1 + tda, *d3 = d2 + tda;
    double s0 = B[r * tda + c], s1 = B[(r + 1) * tda + c];
    double s2 = B[(r + 2) * tda + c], s3 = B[(r + 3) * tda + c];
    for (size_t j = 0; j < k; j++) {
      s0 += d0[j] * u[j]; s1 += d1[j] * u[j]; s2 += d2[j] * u[j]; s3 += d3[j] * u[j];
    }
    w[r] = s0; w[r + 1] = s1; w[r + 2] = s2; w[r + 3] = s3;
  }
  for (; r < q; r++) {
    const double *d = B + r * tda + q;
    double s = B[r * tda + c];
    for (size_t j = 0; j < k; j++) s += d[j] * u[j];
    w[r] = s;
  }
}

/* Fold the k rows placed in the block into the factor: GSL's LQ
** decomposition of B = [L | X_b'] (gsl_linalg_LQ_decomp, reflection i
** zeroing row i right of column i), with the same operations in the same
** order, so the same bits; but reflection i touches only column i of L
** (the rest of row i of L is 0) and the block, and the pass over a row
** that applies reflection i also forms its dot product with reflection
** i + 1, four rows at a time: about twice as fast as the library's. */
static void qracc_fold(qracc *a, size_t k) {
  size_t q = a->q, tda = a->B->tda, len = q + k;
  double *B = a->B->data, *w = a->w, tau;
  int have = 0;   /* w[r] holds row r's dot product with reflection i */
  qracc_reflector(B, 0, len, &tau);
  for (size_t i = 0; i < q; i++) {
    const double *u = B + i * tda + q;
    if (tau == 0) {   /* nothing to zero: no reflection */
      have = 0;
      if (i + 1 < q) qracc_reflector(B + (i + 1) * tda, i + 1, len, &tau);
      continue;
    }
    if (!have) qracc_dots(a, k, i + 1, i, u);
    if (i + 1 == q) break;
    double ti = tau, *a1 = B + (i + 1) * tda, t1 = ti * w[i + 1];
    a1[i] -= t1;   /* row i + 1, then reflection i + 1 from it */
    for (size_t j = 0; j < k; j++) a1[q + j] -= t1 * u[j];
    qracc_reflector(a1, i + 1, len, &tau);
    const double *un = a1 + q;
    size_t r = i + 2;
    have = tau != 0;
    for (; have && r + 4 <= q; r += 4) {
      double *r0 = B + r * tda, *r1 = r0 + tda, *r2 = r1 + tda, *r3 = r2 + tda;
      double t0 = ti * w[r], t1 = ti * w[r + 1], t2 = ti * w[r + 2], t3 = ti * w[r + 3];
      r0[i] -= t0; r1[i] -= t1; r2[i] -= t2; r3[i] -= t3;
      double s0 = r0[i + 1], s1 = r1[i + 1], s2 = r2[i + 1], s3 = r3[i + 1];
      double *d0 = r0 + q, *d1 = r1 + q, *d2 = r2 + q, *d3 = r3 + q;
      for (size_t j = 0; j < k; j++) {
        double uj = u[j], vj = un[j];
        d0[j] -= t0 * uj; s0 += d0[j] * vj;
        d1[j] -= t1 * uj; s1 += d1[j] * vj;
        d2[j] -= t2 * uj; s2 += d2[j] * vj;
        d3[j] -= t3 * uj; s3 += d3[j] * vj;
      }
      w[r] = s0; w[r + 1] = s1; w[r + 2] = s2; w[r + 3] = s3;
    }
    for (; r < q; r++) {
      double *rr = B + r * tda, *d = rr + q, t0 = ti * w[r], s = rr[i + 1];
      rr[i] -= t0;
      if (have) {
        for (size_t j = 0; j < k; j++) { d[j] -= t0 * u[j]; s += d[j] * un[j]; }
        w[r] = s;
      } else {
        for (size_t j = 0; j < k; j++) d[j] -= t0 * u[j];
      }
    }
  }
  for (size_t i = 0; i < q; i++)   /* keep L: above it, the reflections' (signed) 0s */
    for (size_t j = i + 1; j < q; j++) B[i * tda + j] = 0;
}

/* Entry (i, j), i <= j, of the upper factor [R c; 0 rho]. */
static double qracc_get(const qracc *a, size_t i, size_t j) { return gsl_matrix_get(a->B, j, i); }

/* Copy the p x p factor R out (lower triangle zero). */
static void qracc_R(const qracc *a, gsl_matrix *R) {
  gsl_matrix_set_zero(R);
  for (size_t i = 0; i < a->p; i++)
    for (size_t j = i; j < a->p; j++) gsl_matrix_set(R, i, j, qracc_get(a, i, j));
}

/* ---- messages ---- */

/* Append printf-style text to buf (size bytes), marking truncation. */
static void cat(char *buf, size_t size, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 3, 4)))
#endif
  ;
static void cat(char *buf, size_t size, const char *fmt, ...) {
  size_t k = strlen(buf);
  if (size < 4 || k + 1 >= size) return;
  va_list ap;
  va_start(ap, fmt);
  int r = vsnprintf(buf + k, size - k, fmt, ap);
  va_end(ap);
  if (r < 0 || (size_t)r >= size - k) memcpy(buf + size - 4, "...", 4);
}

/* The name of column j for messages: 'name', or its 1-based number. */
static void colname(char *out, size_t size, const char *const *names, size_t j) {
  if (names && names[j]) snprintf(out, size, "'%s'", names[j]);
  else snprintf(out, size, "%zu", j + 1);
}

/* Append "a, b and c" (the columns in list[0..k-1]) to buf. */
static void cat_list(char *buf, size_t size, const char *const *names,
                     const size_t *list, size_t k) {
  char nm[128];
  for (size_t i = 0; i < k; i++) {
    colname(nm, sizeof nm, names, list[i]);
    cat(buf, size, "%s%s", i == 0 ? "" : (i + 1 == k ? " and " : ", "), nm);
  }
}

/* ---- rank ---- */

/* Flag in alias[] the columns of X (whose triangular factor is R, p x p)
** that lie within SL_RANK_TOL of the span of earlier kept columns, and
** describe each group in msg.  Returns the number flagged, or (size_t)-1
** when out of memory. */
static size_t find_aliased(const gsl_matrix *R, const char *const *names, int *alias,
                           char *msg, size_t msgsize) {
  size_t p = R->size1, count = 0, ncols = p;
  double *norm = malloc(p * sizeof *norm);
  size_t *cols = malloc(p * sizeof *cols), *grp = malloc(p * sizeof *grp);
  gsl_matrix *M = gsl_matrix_alloc(p, p), *T = gsl_matrix_alloc(p, p);
  gsl_vector *v = gsl_vector_alloc(p);
  if (!norm || !cols || !grp || !M || !T || !v) { count = (size_t)-1; goto done; }
  for (size_t j = 0; j < p; j++) {
    gsl_vector_const_view c = gsl_matrix_const_column(R, j);
    norm[j] = gsl_blas_dnrm2(&c.vector);
    cols[j] = j;
    alias[j] = 0;
  }
  msg[0] = '\0';
  for (;;) {
    gsl_matrix_view Mv = gsl_matrix_submatrix(M, 0, 0, p, ncols);
    gsl_matrix_view Tv = gsl_matrix_submatrix(T, 0, 0, ncols, ncols);
    for (size_t k = 0; k < ncols; k++) {
      gsl_vector_const_view src = gsl_matrix_const_column(R, cols[k]);
      gsl_vector_view dst = gsl_matrix_column(&Mv.matrix, k);
      gsl_vector_memcpy(&dst.vector, &src.vector);
    }
    if (ncols < p) gsl_linalg_QR_decomp_r(&Mv.matrix, &Tv.matrix);   /* else M = R */
    size_t k = 0;
    while (k < ncols && norm[cols[k]] > 0 &&
           fabs(gsl_matrix_get(M, k, k)) > SL_RANK_TOL * norm[cols[k]])
      k++;
    if (k == ncols) break;
    size_t j = cols[k], ng = 0;
    alias[j] = 1;
    count++;
    if (msg[0]) cat(msg, msgsize, "; ");
    if (norm[j] == 0) {
      char nm[128];
      colname(nm, sizeof nm, names, j);
      cat(msg, msgsize, "column %s is all zeros: drop it", nm);
    } else {
      /* the combination: R_kk a = r_k over the kept columns before it */
      if (k > 0) {
        gsl_matrix_view Rk = gsl_matrix_submatrix(M, 0, 0, k, k);
        gsl_vector_view a = gsl_vector_subvector(v, 0, k);
        for (size_t i = 0; i < k; i++) gsl_vector_set(&a.vector, i, gsl_matrix_get(M, i, k));
        gsl_blas_dtrsv(CblasUpper, CblasNoTrans, CblasNonUnit, &Rk.matrix, &a.vector);
        for (size_t i = 0; i < k; i++)
          if (fabs(gsl_vector_get(&a.vector, i)) * norm[cols[i]] > 1e-6 * norm[j])
            grp[ng++] = cols[i];
      }
      grp[ng++] = j;
      if (ng == 1) {
        char nm[128];
        colname(nm, sizeof nm, names, j);
        cat(msg, msgsize, "column %s is a linear combination of earlier columns: drop it", nm);
      } else {
        cat(msg, msgsize, "columns ");
        cat_list(msg, msgsize, names, grp, ng);
        cat(msg, msgsize, " are collinear: drop one");
      }
    }
    memmove(cols + k, cols + k + 1, (ncols - k - 1) * sizeof *cols);
    ncols--;
    if (ncols == 0) break;
  }
done:
  free(norm); free(cols); free(grp);
  if (M) gsl_matrix_free(M);
  if (T) gsl_matrix_free(T);
  if (v) gsl_vector_free(v);
  return count;
}

/* ---- fit records ---- */

void sl_fit_free(sl_fit *fit) {
  if (!fit) return;
  free(fit->coef); free(fit->se); free(fit->robust_se); free(fit->cov); free(fit->aliased);
  free(fit->se_chosen); free(fit->cov_chosen);
  memset(fit, 0, sizeof *fit);
}

int sl_fit_alloc(sl_fit *fit, size_t n, size_t p) {
  memset(fit, 0, sizeof *fit);
  fit->n = n;
  fit->p = p;
  fit->coef = calloc(p, sizeof *fit->coef);
  fit->se = calloc(p, sizeof *fit->se);
  fit->robust_se = calloc(p, sizeof *fit->robust_se);
  fit->cov = calloc(p * p, sizeof *fit->cov);
  fit->aliased = calloc(p, sizeof *fit->aliased);
  fit->se_chosen = calloc(p, sizeof *fit->se_chosen);
  fit->cov_chosen = calloc(p * p, sizeof *fit->cov_chosen);
  if (!fit->coef || !fit->se || !fit->robust_se || !fit->cov || !fit->aliased ||
      !fit->se_chosen || !fit->cov_chosen) {
    sl_fit_free(fit);
    return -1;
  }
  return 0;
}

/* The p x p workspaces shared by both fits: R, its inverse, the sandwich
** meat in the coordinates of X R^-1, and one scratch matrix. */
typedef struct fitws {
  gsl_matrix *R, *Ri, *Mz, *W;
  gsl_vector *c;
} fitws;

static void fitws_free(fitws *w) {
  if (w->R) gsl_matrix_free(w->R);
  if (w->Ri) gsl_matrix_free(w->Ri);
  if (w->Mz) gsl_matrix_free(w->Mz);
  if (w->W) gsl_matrix_free(w->W);
  if (w->c) gsl_vector_free(w->c);
  memset(w, 0, sizeof *w);
}

static int fitws_init(fitws *w, size_t p) {
  w->R = gsl_matrix_alloc(p, p);
  w->Ri = gsl_matrix_alloc(p, p);
  w->Mz = gsl_matrix_alloc(p, p);
  w->W = gsl_matrix_alloc(p, p);
  w->c = gsl_vector_alloc(p);
  if (!w->R || !w->Ri || !w->Mz || !w->W || !w->c) { fitws_free(w); return -1; }
  return 0;
}

/* Solve R b = c from the accumulated factor into b (p entries). */
static void solve_coef(const qracc *a, fitws *w, double *b) {
  qracc_R(a, w->R);
  for (size_t j = 0; j < a->p; j++) gsl_vector_set(w->c, j, qracc_get(a, j, a->p));
  gsl_blas_dtrsv(CblasUpper, CblasNoTrans, CblasNonUnit, w->R, w->c);
  for (size_t j = 0; j < a->p; j++) b[j] = gsl_vector_get(w->c, j);
}

/* Ri = R^-1, column by column with triangular solves (level 2 BLAS, which
** OpenBLAS runs on one thread, so the bits never depend on the thread
** count; p^3 flops, little beside a pass over X). */
static void invert_R(fitws *w) {
  size_t p = w->R->size1;
  gsl_matrix_set_identity(w->Ri);
  for (size_t j = 0; j < p; j++) {
    gsl_vector_view v = gsl_matrix_column(w->Ri, j);
    gsl_blas_dtrsv(CblasUpper, CblasNoTrans, CblasNonUnit, w->R, &v.vector);
  }
}

/* Rows per level-3 call on p columns: rows x p x p stays within
** SL_GEMM_WORK, below which OpenBLAS runs a product on one thread. */
static size_t gemm_rows(size_t p) {
  size_t r = SL_GEMM_WORK / (p * p);
  return r ? r : 1;
}

/* Z = X_b R^-1 for the k rows of X at Xb (Ri holds R^-1). */
static void block_to_z(qracc *a, const fitws *w, const double *Xb, size_t k) {
  size_t p = a->p, c = gemm_rows(p);
  for (size_t r0 = 0; r0 < k; r0 += c) {
    size_t kr = k - r0 < c ? k - r0 : c;
    gsl_matrix_const_view Xv = gsl_matrix_const_view_array(Xb + r0 * p, kr, p);
    gsl_matrix_view Z = gsl_matrix_submatrix(a->Z, r0, 0, kr, p);
    gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &Xv.matrix, w->Ri, 0.0, &Z.matrix);
  }
}

/* Mz += Z' Z for the first k (already scaled) rows of Z. */
static void block_meat(qracc *a, fitws *w, size_t k) {
  size_t p = a->p, c = gemm_rows(p);
  for (size_t r0 = 0; r0 < k; r0 += c) {
    size_t kr = k - r0 < c ? k - r0 : c;
    gsl_matrix_view Z = gsl_matrix_submatrix(a->Z, r0, 0, kr, p);
    gsl_blas_dgemm(CblasTrans, CblasNoTrans, 1.0, &Z.matrix, &Z.matrix, 1.0, w->Mz);
  }
}

/* C = A op(B), a few rows of A at a time (see gemm_rows). */
static void mul_rows(const gsl_matrix *A, CBLAS_TRANSPOSE_t tb, const gsl_matrix *B,
                     gsl_matrix *C) {
  size_t c = gemm_rows(A->size2);
  for (size_t r0 = 0; r0 < A->size1; r0 += c) {
    size_t kr = A->size1 - r0 < c ? A->size1 - r0 : c;
    gsl_matrix_const_view Ar = gsl_matrix_const_submatrix(A, r0, 0, kr, A->size2);
    gsl_matrix_view Cr = gsl_matrix_submatrix(C, r0, 0, kr, C->size2);
    gsl_blas_dgemm(CblasNoTrans, tb, 1.0, &Ar.matrix, B, 0.0, &Cr.matrix);
  }
}

/* cov = scale * R^-1 R^-T into the fit, with the classical standard
** errors; Ri must hold R^-1. */
static void finish_classical(fitws *w, sl_fit *fit, double scale) {
  size_t p = fit->p;
  mul_rows(w->Ri, CblasTrans, w->Ri, w->W);
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j < p; j++) fit->cov[i * p + j] = scale * gsl_matrix_get(w->W, i, j);
  for (size_t j = 0; j < p; j++) fit->se[j] = sqrt(fit->cov[j * p + j]);
}

/* robust = R^-1 Mz R^-T into the fit, with the robust standard errors;
** Ri must hold R^-1 and Mz the meat in the coordinates of X R^-1. */
static void finish_robust(fitws *w, sl_fit *fit, int robust_ok) {
  size_t p = fit->p;
  mul_rows(w->Ri, CblasNoTrans, w->Mz, w->W);
  mul_rows(w->W, CblasTrans, w->Ri, w->Mz);
  for (size_t j = 0; j < p; j++)
    fit->robust_se[j] = robust_ok ? sqrt(gsl_matrix_get(w->Mz, j, j)) : NAN;
}

/* cov = scale * R^-1 R^-T and robust = R^-1 Mz R^-T into the fit, with the
** standard errors; Ri must hold R^-1. */
static void finish_cov(fitws *w, sl_fit *fit, double scale, int robust_ok) {
  finish_classical(w, fit, scale);
  finish_robust(w, fit, robust_ok);
}

/* Check that R has full rank; otherwise an SL_EARG error naming the
** aliased columns. */
static int check_rank(const gsl_matrix *R, const char *const *names, int *alias, sl_error *e) {
  char msg[SL_MSG_MAX];
  size_t k = find_aliased(R, names, alias, msg, sizeof msg);
  if (k == (size_t)-1) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (k > 0) return sl_error_set(e, SL_EARG, 0, 0, "%s", msg);
  return SL_OK;
}

/* An error naming a non-finite value of X. */
static int bad_x(sl_error *e, const char *const *names, size_t i, size_t j) {
  char nm[128];
  colname(nm, sizeof nm, names, j);
  return sl_error_set(e, SL_EARG, 0, 0, "row %zu, column %s: not a finite number", i + 1, nm);
}

/* Checks common to both fits. */
static int check_args(const char *fn, const double *X, const double *y, size_t n, size_t p,
                      sl_fit *fit, sl_error *e) {
  if (!fit) return sl_error_set(e, SL_EARG, 0, 0, "%s: no fit record given", fn);
  memset(fit, 0, sizeof *fit);
  if (!X || !y) return sl_error_set(e, SL_EARG, 0, 0, "%s: no data given", fn);
  if (p == 0) return sl_error_set(e, SL_EARG, 0, 0, "%s: the design matrix has no columns", fn);
  if (n < p)
    return sl_error_set(e, SL_EARG, 0, 0,
                        "%s: %zu rows for %zu columns: need at least as many rows as columns",
                        fn, n, p);
  if (p > ((size_t)-1 / sizeof(double)) / p)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%s: too many columns (%zu)", fn, p);
  return SL_OK;
}

/* What the options imply before a fit: the weights finite, non-negative
** and not all 0 (their sum, Kish's effective sample size and the rows of
** positive weight go into chk), and for a cluster covariance every row's
** cluster in range and at least two clusters among the rows of positive
** weight (their number into chk). */
static int check_opts(const char *fn, const sl_fit_opts *o, size_t n, sl_fit *chk,
                      sl_error *e) {
  const double *w = o ? o->w : NULL;
  double sum = 0, sum2 = 0;
  size_t npos = 0;
  for (size_t i = 0; i < n; i++) {
    double wi = w ? w[i] : 1;
    if (!isfinite(wi) || wi < 0)
      return sl_error_set(e, SL_EARG, 0, 0,
                          "row %zu: a weight must be finite and non-negative, not %g", i + 1, wi);
    sum += wi;
    sum2 += wi * wi;
    npos += wi > 0;
  }
  if (npos == 0) return sl_error_set(e, SL_EARG, 0, 0, "%s: every weight is 0", fn);
  chk->wsum = w ? sum : (double)n;
  chk->ess = w ? sum * sum / sum2 : (double)n;
  chk->npos = npos;
  chk->se_kind = o ? o->se : SL_VCOV_CLASSICAL;
  if (chk->se_kind > SL_VCOV_CLUSTER)
    return sl_error_set(e, SL_EARG, 0, 0, "%s: unknown kind of standard error", fn);
  if (chk->se_kind != SL_VCOV_CLUSTER) return SL_OK;
  if (!o->cluster || o->nclusters == 0 || o->nclusters > SL_CLUSTERS_MAX)
    return sl_error_set(e, SL_EARG, 0, 0, "%s: cluster standard errors need each row's cluster", fn);
  unsigned char *seen = calloc(o->nclusters, 1);
  if (!seen) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  size_t g = 0;
  for (size_t i = 0; i < n; i++) {
    if (o->cluster[i] >= o->nclusters) {
      free(seen);
      return sl_error_set(e, SL_EARG, 0, 0, "row %zu: cluster %zu is out of range (%zu clusters)",
                          i + 1, o->cluster[i], o->nclusters);
    }
    if ((w ? w[i] : 1) > 0 && !seen[o->cluster[i]]) { seen[o->cluster[i]] = 1; g++; }
  }
  free(seen);
  if (g < 2)
    return sl_error_set(e, SL_EARG, 0, 0,
                        "%s: every row is in one cluster; cluster standard errors need at least two",
                        fn);
  chk->nclusters = g;
  return SL_OK;
}

/* Copy what check_opts found into the fit. */
static void set_opts(sl_fit *fit, const sl_fit *chk) {
  fit->wsum = chk->wsum; fit->ess = chk->ess; fit->npos = chk->npos;
  fit->se_kind = chk->se_kind; fit->nclusters = chk->nclusters;
}

static int fit_chosen(qracc *a, fitws *ws, const double *X, const double *y, size_t n,
                      int logit, const sl_fit_opts *o, sl_fit *fit, sl_error *e);

/* ---- least squares ---- */

int sl_ols(const double *X, const double *y, size_t n, size_t p,
           const char *const *names, sl_fit *fit, sl_error *e) {
  return sl_ols_opts(X, y, n, p, names, NULL, fit, e);
}

int sl_ols_opts(const double *X, const double *y, size_t n, size_t p,
                const char *const *names, const sl_fit_opts *o, sl_fit *fit, sl_error *e) {
  int rc = check_args("ols", X, y, n, p, fit, e);
  if (rc) return rc;
  sl_fit chk;
  memset(&chk, 0, sizeof chk);
  if ((rc = check_opts("ols", o, n, &chk, e))) return rc;
  const double *w = o ? o->w : NULL;
  qracc a;
  fitws ws;
  memset(&a, 0, sizeof a);
  memset(&ws, 0, sizeof ws);
  int *ones = malloc(p * sizeof *ones);
  if (!ones || sl_fit_alloc(fit, n, p) || qracc_init(&a, p, n) || fitws_init(&ws, p)) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  set_opts(fit, &chk);
  /* pass 1: factor sqrt(w) [X y], find columns of ones, sum w y */
  for (size_t j = 0; j < p; j++) ones[j] = 1;
  double ysum = 0;
  size_t tda = a.B->tda;
  for (size_t i0 = 0; i0 < n; i0 += a.m) {
    size_t k = n - i0 < a.m ? n - i0 : a.m;
    double part = 0;
    for (size_t r = 0; r < k; r++) {
      size_t i = i0 + r;
      const double *row = X + i * p;
      double *dst = qracc_slot(&a, r), wi = w ? w[i] : 1, sw = w ? sqrt(wi) : 1;
      for (size_t j = 0; j < p; j++) {
        if (!isfinite(row[j])) { rc = bad_x(e, names, i, j); goto done; }
        if (row[j] != 1.0 && wi > 0) ones[j] = 0;
        dst[j * tda] = w ? sw * row[j] : row[j];
      }
      if (!isfinite(y[i])) {
        rc = sl_error_set(e, SL_EARG, 0, 0, "row %zu: the outcome is not a finite number", i + 1);
        goto done;
      }
      dst[p * tda] = w ? sw * y[i] : y[i];
      part += w ? wi * y[i] : y[i];
    }
    ysum += part;
    qracc_fold(&a, k);
  }
  qracc_R(&a, ws.R);
  if ((rc = check_rank(ws.R, names, fit->aliased, e))) goto done;
  solve_coef(&a, &ws, fit->coef);
  invert_R(&ws);

  /* pass 2: residuals, leverages h_i = w_i |z_i|^2 with z_i' = x_i' R^-1,
  ** and the HC3 meat sum (w_i e_i / (1 - h_i))^2 z_i z_i' (statsmodels'
  ** WLS: the residuals and rows of the weighted problem) */
  int intercept = 0;
  for (size_t j = 0; j < p; j++) intercept |= ones[j];
  double nw = w ? fit->wsum : (double)n;   /* the rows a frequency weight stands for */
  double ybar = ysum / nw, rss = 0, tss = 0;
  int lev1 = 0;
  gsl_matrix_set_zero(ws.Mz);
  for (size_t i0 = 0; i0 < n; i0 += a.m) {
    size_t k = n - i0 < a.m ? n - i0 : a.m;
    double prss = 0, ptss = 0;
    block_to_z(&a, &ws, X + i0 * p, k);
    for (size_t r = 0; r < k; r++) {
      const double *row = X + (i0 + r) * p;
      double *z = gsl_matrix_ptr(a.Z, r, 0), fit_i = 0, h = 0, f = 0;
      for (size_t j = 0; j < p; j++) { fit_i += row[j] * fit->coef[j]; h += z[j] * z[j]; }
      double res = y[i0 + r] - fit_i, d = intercept ? y[i0 + r] - ybar : y[i0 + r];
      double wi = w ? w[i0 + r] : 1;
      if (w) {
        h *= wi;
        prss += wi * res * res;
        ptss += wi * d * d;
      } else {
        prss += res * res;
        ptss += d * d;
      }
      if (wi == 0) f = 0;
      else if (1 - h <= 1e-10) lev1 = 1;   /* leverage 1: HC3 undefined */
      else f = wi * fabs(res) / (1 - h);
      for (size_t j = 0; j < p; j++) z[j] *= f;
    }
    rss += prss;
    tss += ptss;
    block_meat(&a, &ws, k);
  }
  double df = nw - (double)p;   /* n - p, or sum w - p for frequency weights */
  fit->rank = p;
  fit->rss = rss;
  fit->sigma = df > 0 ? sqrt(rss / df) : NAN;
  fit->r2 = 1 - rss / tss;
  fit->adj_r2 = df > 0 ? 1 - (nw - (double)intercept) / df * (rss / tss) : NAN;
  fit->deviance = rss;
  fit->loglik = -0.5 * nw * (log(2 * M_PI * rss / nw) + 1);
  fit->iterations = 1;
  fit->converged = 1;
  finish_cov(&ws, fit, fit->sigma * fit->sigma, !lev1 && fit->npos > p);
  rc = fit_chosen(&a, &ws, X, y, n, 0, o, fit, e);
done:
  free(ones);
  qracc_free(&a);
  fitws_free(&ws);
  if (rc) sl_fit_free(fit);
  return rc;
}

/* ---- normal equations for the middle iterations ---- */

/* A logit pass that folds its rows into the QR factor costs about twice
** one that sums X'WX (and the QR path needs a pass of its own for the
** meat), so the iterations before the last take their Newton steps from
** the normal equations H d = g (H = X'WX, g = X'w(y - mu)) solved by
** Cholesky, and the factor at the final coefficients comes from the QR
** (see sl_logit).  H is summed by matrix products over a few rows at a
** time, so the bits do not depend on the thread count; the factorization
** is written out here for the same reason. */
typedef struct neacc {
  size_t p, q, rows;  /* columns, p + 1 rounded up to a multiple of 4, rows per
                         matrix product */
  gsl_matrix *G;      /* m x q: rows W_i x_i', w_i (y_i - mu_i), then zeros */
  gsl_matrix *C;      /* q x p: G'X = [H; g'; 0] */
  gsl_matrix *L;      /* p x p: lower Cholesky factor of D H D, D = diag(H)^-1/2 */
  gsl_matrix *Li;     /* p x p: L^-1 */
  double *d;          /* p: the diagonal of D */
} neacc;

/* Free the workspaces of ne (safe on a zeroed or half-built one). */
static void neacc_free(neacc *ne) {
  if (ne->G) gsl_matrix_free(ne->G);
  if (ne->C) gsl_matrix_free(ne->C);
  if (ne->L) gsl_matrix_free(ne->L);
  if (ne->Li) gsl_matrix_free(ne->Li);
  free(ne->d);
  memset(ne, 0, sizeof *ne);
}

/* Allocate the workspaces for p columns and blocks of m rows; 0 on success.
** Rows per product: p x q x rows within SL_GEMM_WORK, as in gemm_rows; q a
** multiple of 4, which OpenBLAS's kernels run fastest (the padding is 0). */
static int neacc_init(neacc *ne, size_t p, size_t m) {
  memset(ne, 0, sizeof *ne);
  ne->p = p;
  ne->q = (p + 4) / 4 * 4;
  ne->rows = SL_GEMM_WORK / (p * ne->q);
  if (ne->rows == 0) ne->rows = 1;
  ne->G = gsl_matrix_calloc(m, ne->q);
  ne->C = gsl_matrix_alloc(ne->q, p);
  ne->L = gsl_matrix_alloc(p, p);
  ne->Li = gsl_matrix_alloc(p, p);
  ne->d = malloc(p * sizeof *ne->d);
  if (!ne->G || !ne->C || !ne->L || !ne->Li || !ne->d) { neacc_free(ne); return -1; }
  return 0;
}

/* C += G' X_b for the k rows of X at Xb and the first k rows of G. */
static void neacc_add(neacc *ne, const double *Xb, size_t k) {
  for (size_t r0 = 0; r0 < k; r0 += ne->rows) {
    size_t kr = k - r0 < ne->rows ? k - r0 : ne->rows;
    gsl_matrix_const_view Xv = gsl_matrix_const_view_array(Xb + r0 * ne->p, kr, ne->p);
    gsl_matrix_view Gv = gsl_matrix_submatrix(ne->G, r0, 0, kr, ne->q);
    gsl_blas_dgemm(CblasTrans, CblasNoTrans, 1.0, &Gv.matrix, &Xv.matrix, 1.0, ne->C);
  }
}

/* Factor D H D = L L' from C, with L^-1; 1 when H is positive definite
** and the condition number of D H D, bounded above by |D H D|_F times
** trace((D H D)^-1) = |L^-1|_F^2, is at most SL_NE_COND: then no column
** is near the span of the others (the QR's rank test would pass) and a
** step from these equations is good to about 1e-10 of its length. */
static int neacc_factor(neacc *ne) {
  size_t p = ne->p;
  gsl_matrix *L = ne->L, *Li = ne->Li;
  for (size_t j = 0; j < p; j++) {
    double h = gsl_matrix_get(ne->C, j, j);
    if (!(h > 0) || !isfinite(h)) return 0;
    ne->d[j] = 1 / sqrt(h);
  }
  double fro = 0, tr = 0;
  gsl_matrix_set_zero(L);
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j <= i; j++) {
      double v = gsl_matrix_get(ne->C, i, j) * ne->d[i] * ne->d[j];
      gsl_matrix_set(L, i, j, v);
      fro += (i == j ? 1 : 2) * v * v;
    }
  for (size_t j = 0; j < p; j++) {   /* left-looking, in place */
    double *Lj = gsl_matrix_ptr(L, j, 0), s = Lj[j];
    for (size_t k = 0; k < j; k++) s -= Lj[k] * Lj[k];
    if (!(s > 0)) return 0;
    Lj[j] = sqrt(s);
    for (size_t i = j + 1; i < p; i++) {
      double *Lr = gsl_matrix_ptr(L, i, 0), t = Lr[j];
      for (size_t k = 0; k < j; k++) t -= Lr[k] * Lj[k];
      Lr[j] = t / Lj[j];
    }
  }
  gsl_matrix_set_zero(Li);
  for (size_t c = 0; c < p; c++) {   /* column c of L^-1 by forward substitution */
    gsl_matrix_set(Li, c, c, 1 / gsl_matrix_get(L, c, c));
    for (size_t i = c + 1; i < p; i++) {
      const double *Lr = gsl_matrix_const_ptr(L, i, 0);
      double t = 0;
      for (size_t k = c; k < i; k++) t += Lr[k] * Li->data[k * Li->tda + c];
      gsl_matrix_set(Li, i, c, -t / Lr[i]);
    }
  }
  for (size_t i = 0; i < p; i++) {
    const double *Lr = gsl_matrix_const_ptr(Li, i, 0);
    for (size_t j = 0; j <= i; j++) tr += Lr[j] * Lr[j];
  }
  double cond = sqrt(fro) * tr;
  return isfinite(cond) && cond <= SL_NE_COND;
}

/* The Newton step from b: bn = b + D (L L')^-1 D g. */
static void neacc_step(const neacc *ne, const double *b, double *bn) {
  size_t p = ne->p;
  const gsl_matrix *L = ne->L;
  for (size_t i = 0; i < p; i++) {   /* L u = D g */
    double t = ne->d[i] * gsl_matrix_get(ne->C, p, i);
    for (size_t k = 0; k < i; k++) t -= gsl_matrix_get(L, i, k) * bn[k];
    bn[i] = t / gsl_matrix_get(L, i, i);
  }
  for (size_t i = p; i-- > 0;) {     /* L' v = u */
    double t = bn[i];
    for (size_t k = i + 1; k < p; k++) t -= gsl_matrix_get(L, k, i) * bn[k];
    bn[i] = t / gsl_matrix_get(L, i, i);
  }
  for (size_t i = 0; i < p; i++) bn[i] = b[i] + ne->d[i] * bn[i];
}

/* T = D L^-T into T (upper triangular): T' H T = I up to rounding at the
** coefficients of the factorization, so X T is well conditioned near them
** and serves as the coordinates of a sandwich meat (see neacc_meat_to_r). */
static void neacc_precond(const neacc *ne, gsl_matrix *T) {
  size_t p = ne->p;
  gsl_matrix_set_zero(T);
  for (size_t i = 0; i < p; i++)
    for (size_t j = i; j < p; j++) gsl_matrix_set(T, i, j, ne->d[i] * gsl_matrix_get(ne->Li, j, i));
}

/* Move a meat summed in the coordinates of X T (ws->Mz, T from the last
** neacc_precond) to those of X R^-1 (ws->Ri holding R^-1): Mz <- P Mz P'
** with P' = T^-1 R^-1 = L' D^-1 R^-1, close to a signed identity, so no
** digits are lost; then finish_robust gives R^-1 Mz R^-T, the sandwich
** with the QR's bread.  Overwrites ws->R, ws->W, ne->L and ne->Li. */
static void neacc_meat_to_r(neacc *ne, fitws *ws) {
  size_t p = ne->p;
  gsl_matrix_set_zero(ws->R);
  for (size_t i = 0; i < p; i++)
    for (size_t j = i; j < p; j++)
      gsl_matrix_set(ws->R, i, j, gsl_matrix_get(ne->L, j, i) / ne->d[j]);
  mul_rows(ws->R, CblasNoTrans, ws->Ri, ws->W);     /* P' */
  mul_rows(ws->Mz, CblasNoTrans, ws->W, ne->Li);    /* Mz P' */
  gsl_matrix_transpose_memcpy(ne->L, ws->W);        /* P */
  mul_rows(ne->L, CblasNoTrans, ne->Li, ws->Mz);
}

/* ---- logistic regression ---- */

/* The logistic function at eta: mu, 1 - mu, and log(1 + exp(-|eta|)), each
** to full relative accuracy (so log mu and log(1 - mu) lose nothing).  With
** d = 1 + t rounded, d - 1 and t - (d - 1) are exact, and log(1 + t) =
** log d + (t - (d - 1)) / d to within an ulp or two: one log instead of a
** log1p, whose branches cost about as much again. */
static void logistic(double eta, double *mu, double *omu, double *l1) {
  double t = exp(-fabs(eta)), d = 1 + t, u = 1 / d, tu = t * u;
  int pos = eta >= 0;   /* selects, not branches: the sign is unpredictable */
  *mu = pos ? u : tu;
  *omu = pos ? tu : u;
  if (l1) *l1 = log(d) + (t - (d - 1)) * u;
}

/* x log x with 0 log 0 = 0. */
static double xlogx(double x) { return x > 0 ? x * log(x) : 0; }

/* eta_r = x_r' b for the k rows at Xb, four rows at a time for speed; each
** sum runs over j in order from 0, as in sl_predict, so the bits agree. */
static void block_eta(const double *Xb, const double *b, size_t k, size_t p, double *eta) {
  size_t r = 0;
  for (; r + 4 <= k; r += 4) {
    const double *x0 = Xb + r * p, *x1 = x0 + p, *x2 = x1 + p, *x3 = x2 + p;
    double e0 = 0, e1 = 0, e2 = 0, e3 = 0;
    for (size_t j = 0; j < p; j++) {
      e0 += x0[j] * b[j];
      e1 += x1[j] * b[j];
      e2 += x2[j] * b[j];
      e3 += x3[j] * b[j];
    }
    eta[r] = e0; eta[r + 1] = e1; eta[r + 2] = e2; eta[r + 3] = e3;
  }
  for (; r < k; r++) {
    const double *row = Xb + r * p;
    double e = 0;
    for (size_t j = 0; j < p; j++) e += row[j] * b[j];
    eta[r] = e;
  }
}

/* ---- the chosen covariance ---- */

/* The meat of the chosen robust covariance, summed in the coordinates of
** X R^-1 (ws->Ri holding R^-1) into ws->Mz by one more pass over the rows
** at the coefficients b.  Row i's score is r_i x_i, with r_i = w_i e_i
** (least squares) or w_i (y_i - mu_i) (logit), and its leverage is
** h_i = W_i |x_i' R^-1|^2, W_i being the row's weight in R (w_i, or
** w_i mu_i (1 - mu_i)): HC0 and HC1 sum r_i^2 z_i z_i', HC3 divides each
** r_i by 1 - h_i (MacKinnon and White 1985), and the cluster meat sums
** the scores within each cluster first (S, one row per cluster; Liang and
** Zeger 1986).  Returns nonzero when HC3 meets a leverage of 1. */
static int chosen_meat(qracc *a, fitws *ws, const double *X, const double *y, size_t n,
                       int logit, const sl_fit_opts *o, const double *b, gsl_matrix *S,
                       double *eta) {
  size_t p = a->p;
  const double *w = o ? o->w : NULL;
  int lev1 = 0, hc3 = o->se == SL_VCOV_HC3;
  gsl_matrix_set_zero(ws->Mz);
  if (S) gsl_matrix_set_zero(S);
  for (size_t i0 = 0; i0 < n; i0 += a->m) {
    size_t k = n - i0 < a->m ? n - i0 : a->m;
    const double *Xb = X + i0 * p;
    block_to_z(a, ws, Xb, k);
    block_eta(Xb, b, k, p, eta);
    for (size_t r = 0; r < k; r++) {
      size_t i = i0 + r;
      double wi = w ? w[i] : 1, ri, Wi, h = 0, *z = gsl_matrix_ptr(a->Z, r, 0);
      if (logit) {
        double mu, omu, var;
        logistic(eta[r], &mu, &omu, NULL);
        var = mu * omu;
        if (var < DBL_EPSILON) var = DBL_EPSILON;   /* as in the QR pass */
        ri = wi * (y[i] * omu - (1 - y[i]) * mu);
        Wi = wi * var;
      } else {
        ri = wi * (y[i] - eta[r]);
        Wi = wi;
      }
      if (hc3 && wi > 0) {
        for (size_t j = 0; j < p; j++) h += z[j] * z[j];
        h *= Wi;
        if (1 - h <= 1e-10) { lev1 = 1; ri = 0; }
        else ri /= 1 - h;
      }
      if (S) {
        double *srow = gsl_matrix_ptr(S, o->cluster[i], 0);
        for (size_t j = 0; j < p; j++) srow[j] += ri * z[j];
      } else {
        for (size_t j = 0; j < p; j++) z[j] *= ri;
      }
    }
    if (!S) block_meat(a, ws, k);
  }
  if (S) {   /* Mz = S'S, a few rows of S at a time (see gemm_rows) */
    size_t c = gemm_rows(p);
    for (size_t r0 = 0; r0 < S->size1; r0 += c) {
      size_t kr = S->size1 - r0 < c ? S->size1 - r0 : c;
      gsl_matrix_view Sv = gsl_matrix_submatrix(S, r0, 0, kr, p);
      gsl_blas_dgemm(CblasTrans, CblasNoTrans, 1.0, &Sv.matrix, &Sv.matrix, 1.0, ws->Mz);
    }
  }
  return lev1;
}

/* The chosen covariance into fit->cov_chosen and se_chosen, and the
** degrees of freedom of its t statistics (least squares; logit: none, the
** normal).  Classical: the fit's own.  Otherwise factor R^-1 M R^-T with M
** from chosen_meat and the factor statsmodels applies: HC1 n / (n - p),
** cluster G / (G - 1) (n - 1) / (n - p) (statsmodels 0.13,
** stats/sandwich_covariance.py, cov_cluster with use_correction=True, which
** OLS, WLS, GLM and Logit all use), n the rows of positive weight.
** ws->Ri must hold R^-1; ws->Mz and ws->W are overwritten. */
static int fit_chosen(qracc *a, fitws *ws, const double *X, const double *y, size_t n,
                      int logit, const sl_fit_opts *o, sl_fit *fit, sl_error *e) {
  size_t p = fit->p;
  double np = (double)fit->npos, G = (double)fit->nclusters, factor = 1;
  sl_vcov_kind kind = o ? o->se : SL_VCOV_CLASSICAL;
  if (kind == SL_VCOV_CLASSICAL) {
    memcpy(fit->cov_chosen, fit->cov, p * p * sizeof *fit->cov);
    memcpy(fit->se_chosen, fit->se, p * sizeof *fit->se);
    fit->df = logit ? INFINITY : (o && o->w ? fit->wsum : (double)n) - (double)p;
    return SL_OK;
  }
  double *eta = malloc(a->m * sizeof *eta);
  gsl_matrix *S = kind == SL_VCOV_CLUSTER ? gsl_matrix_alloc(o->nclusters, p) : NULL;
  if (!eta || (kind == SL_VCOV_CLUSTER && !S)) {
    free(eta);
    if (S) gsl_matrix_free(S);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  int lev1 = chosen_meat(a, ws, X, y, n, logit, o, fit->coef, S, eta);
  free(eta);
  if (S) gsl_matrix_free(S);
  if (kind == SL_VCOV_HC1) factor = np / (np - (double)p);
  if (kind == SL_VCOV_CLUSTER) factor = G / (G - 1) * (np - 1) / (np - (double)p);
  int ok = !lev1 && np > (double)p;
  mul_rows(ws->Ri, CblasNoTrans, ws->Mz, ws->W);
  mul_rows(ws->W, CblasTrans, ws->Ri, ws->Mz);
  for (size_t i = 0; i < p; i++)
    for (size_t j = 0; j < p; j++)
      fit->cov_chosen[i * p + j] = ok ? factor * gsl_matrix_get(ws->Mz, i, j) : NAN;
  for (size_t j = 0; j < p; j++) fit->se_chosen[j] = sqrt(fit->cov_chosen[j * p + j]);
  fit->df = logit ? INFINITY : kind == SL_VCOV_CLUSTER ? G - 1 : np - (double)p;
  return SL_OK;
}

typedef struct logit_ctx {
  const double *X, *y, *w;
  size_t n, p;
  qracc *a;
  fitws *ws;
  neacc *ne;
  double *eta, *u, *v, *f;   /* per row of a block: eta, two row scales, meat scale */
} logit_ctx;

typedef struct logit_pass_out {
  double dev, ll;
  size_t extreme;   /* rows with a fitted probability within SL_EXTREME of 0 or 1 */
} logit_pass_out;

enum { PASS_NEWTON, PASS_NORMAL, PASS_FINAL, PASS_SANDWICH };

/* One pass over the rows at coefficients b.  PASS_NEWTON folds the weighted
** least squares problem of the Newton step from b (rows sqrt(W_i) x_i,
** right-hand side sqrt(W_i) z_i, W_i = w_i mu_i (1 - mu_i), working
** response z_i = eta_i + (y_i - mu_i) / (mu_i (1 - mu_i))) into the factor;
** PASS_NORMAL sums the normal equations of the same step into c->ne;
** PASS_SANDWICH adds the HC0 meat, rows w_i (y_i - mu_i) x_i' T, to ws->Mz
** (ws->Ri holding T: R^-1, or neacc_precond's); PASS_FINAL does both
** PASS_NEWTON and PASS_SANDWICH.  All give the deviance and log-likelihood
** at b, with the same bits whatever the kind. */
static void logit_pass(const logit_ctx *c, const double *b, int kind, logit_pass_out *o) {
  qracc *a = c->a;
  neacc *ne = c->ne;
  size_t p = c->p, tda = a->B->tda;
  int qr = kind == PASS_NEWTON || kind == PASS_FINAL;
  int meat = kind == PASS_SANDWICH || kind == PASS_FINAL;
  int normal = kind == PASS_NORMAL;
  double dev = 0, ll = 0, *u = c->u, *v = c->v, *f = c->f, ln2 = log(2.0);
  int zero = 1;   /* b = 0, as in the first pass: every eta is 0, mu 1/2 */
  for (size_t j = 0; j < p; j++) zero &= b[j] == 0;
  o->extreme = 0;
  if (qr) qracc_reset(a);
  if (meat) gsl_matrix_set_zero(c->ws->Mz);
  if (normal) gsl_matrix_set_zero(ne->C);
  for (size_t i0 = 0; i0 < c->n; i0 += a->m) {
    size_t k = c->n - i0 < a->m ? c->n - i0 : a->m;
    const double *Xb = c->X + i0 * p;
    double pdev = 0, pll = 0;
    if (zero) memset(c->eta, 0, k * sizeof *c->eta);
    else block_eta(Xb, b, k, p, c->eta);
    for (size_t r = 0; r < k; r++) {
      size_t i = i0 + r;
      double wi = c->w ? c->w[i] : 1, yi = c->y[i], eta = c->eta[r], mu = 0.5, omu = 0.5, l1 = ln2;
      if (!zero) logistic(eta, &mu, &omu, &l1);
      /* log mu = -(l1 + max(-eta, 0)), log(1 - mu) = -(l1 + max(eta, 0)) */
      double lli = wi == 0 ? 0 : -wi * (l1 + (eta < 0 ? -yi * eta : (1 - yi) * eta));
      double resid = yi * omu - (1 - yi) * mu;   /* omu or -mu exactly when y is 0 or 1 */
      pll += lli;
      pdev -= 2 * lli;
      if ((yi != 0) & (yi != 1)) pdev += 2 * wi * (xlogx(yi) + xlogx(1 - yi));
      if (wi > 0 && (mu < SL_EXTREME || omu < SL_EXTREME)) o->extreme++;
      double var = mu * omu;
      if (var < DBL_EPSILON) var = DBL_EPSILON;
      if (qr) {   /* the row scale and the right-hand side */
        u[r] = v[r] = 0;
        if (wi > 0) {
          u[r] = sqrt(wi * var);
          v[r] = u[r] * eta + sqrt(wi / var) * resid;
        }
      } else if (normal) {   /* W_i, and w_i (y_i - mu_i) for the gradient */
        u[r] = wi * var;
        v[r] = wi * resid;
      }
      if (meat) f[r] = wi * resid;
    }
    dev += pdev;
    ll += pll;
    if (qr) {
      for (size_t r = 0; r < k; r++) {
        const double *restrict row = Xb + r * p;
        double *restrict dst = qracc_slot(a, r), s = u[r];
        for (size_t j = 0; j < p; j++) dst[j * tda] = s * row[j];
        dst[p * tda] = v[r];
      }
      qracc_fold(a, k);
    }
    if (normal) {
      for (size_t r = 0; r < k; r++) {
        const double *restrict row = Xb + r * p;
        double *restrict g = ne->G->data + r * ne->G->tda, s = u[r];
        for (size_t j = 0; j < p; j++) g[j] = s * row[j];
        g[p] = v[r];
      }
      neacc_add(ne, Xb, k);
    }
    if (meat) {
      block_to_z(a, c->ws, Xb, k);
      for (size_t r = 0; r < k; r++) {
        double *restrict z = a->Z->data + r * a->Z->tda, s = f[r];
        for (size_t j = 0; j < p; j++) z[j] *= s;
      }
      block_meat(a, c->ws, k);
    }
  }
  o->dev = dev;
  o->ll = ll;
}

/* Append "; " unless warn is empty. */
static void warn_sep(char *warn, size_t size) {
  if (warn[0]) cat(warn, size, "; ");
}

/* The convergence report: non-convergence, and separation with the
** columns whose coefficients still move by more than SL_DRIFT on the
** linear predictor per iteration (and by a tenth of the largest move). */
static void logit_report(char *wbuf, size_t size, const char *const *names, size_t p,
                         const double *step, const double *xmax, int converged, int stuck,
                         int it, const logit_pass_out *o, double wsum) {
  size_t *drift = malloc(p * sizeof *drift), nd = 0;
  double top = 0;
  for (size_t j = 0; j < p; j++)
    if (fabs(step[j]) * xmax[j] > top) top = fabs(step[j]) * xmax[j];
  if (drift)
    for (size_t j = 0; j < p; j++) {
      double d = fabs(step[j]) * xmax[j];
      if (d > SL_DRIFT && d >= 0.1 * top) drift[nd++] = j;
    }
  if (stuck && !isfinite(o->dev)) {
    cat(wbuf, size, "step-halving failed after %d iterations", it);
  } else if (!converged) {
    cat(wbuf, size, "did not converge in %d iteration%s", it, it == 1 ? "" : "s");
    if (nd > 0 && o->extreme == 0) {
      cat(wbuf, size, " (still changing: ");
      cat_list(wbuf, size, names, drift, nd);
      cat(wbuf, size, ")");
    }
  }
  if (o->extreme > 0 || (converged && nd > 0)) {
    const char *rows = o->extreme == 1 ? "row" : "rows";
    warn_sep(wbuf, size);
    if (nd > 0) {
      int complete = o->dev <= 1e-8 * (wsum > 1 ? wsum : 1);
      cat(wbuf, size, "%s separation: ", complete ? "complete" : "quasi-complete");
      if (o->extreme > 0)
        cat(wbuf, size, "fitted probabilities numerically 0 or 1 in %zu %s; ", o->extreme, rows);
      cat(wbuf, size, "the coefficient%s of ", nd > 1 ? "s" : "");
      cat_list(wbuf, size, names, drift, nd);
      cat(wbuf, size, " grow%s without bound", nd > 1 ? "" : "s");
    } else {
      cat(wbuf, size, "fitted probabilities numerically 0 or 1 in %zu %s", o->extreme, rows);
    }
  }
  free(drift);
}

/* Nonzero: every iteration of sl_logit takes the QR path (test_regress
** compares the two paths); the library only reads it. */
int sl_logit_qr_only = 0;

/* Newton-Raphson (IRLS) with step-halving.  While the scaled X'WX is well
** conditioned (neacc_factor) the steps come from the normal equations, in
** cheap passes; the convergence test is the same either way (the deviance
** is computed alike), and the pass at the final coefficients is a QR pass,
** which gives the factor for the standard errors and, beside it, the
** sandwich meat.  That pass is taken at once when the predicted decrease
** of the deviance, g'd, meets the convergence test with room to spare
** (near the optimum a Newton step's decrease is predicted to several
** digits; a wrong guess costs a QR step, whose pass is again a final one),
** or else after the test has passed.  Where the factor fails or the
** condition is poor, and when step-halving fails along a normal-equations
** step, the fit goes on by QR alone, as it does from the start when X is
** poorly conditioned (the QR's rank test at b = 0 then names any aliased
** columns). */
int sl_logit(const double *X, const double *y, const double *w, size_t n, size_t p,
             const char *const *names, int max_iter, double tol, sl_fit *fit,
             char *warn, size_t warnsize, sl_error *e) {
  sl_fit_opts o;
  memset(&o, 0, sizeof o);
  o.w = w;
  return sl_logit_opts(X, y, n, p, names, &o, max_iter, tol, fit, warn, warnsize, e);
}

int sl_logit_opts(const double *X, const double *y, size_t n, size_t p,
                  const char *const *names, const sl_fit_opts *opts, int max_iter, double tol,
                  sl_fit *fit, char *warn, size_t warnsize, sl_error *e) {
  char wbuf[SL_MSG_MAX];
  wbuf[0] = '\0';
  if (warn && warnsize) warn[0] = '\0';
  const double *w = opts ? opts->w : NULL;
  int rc = check_args("logit", X, y, n, p, fit, e);
  if (rc) return rc;
  if (max_iter <= 0) max_iter = 50;
  if (!(tol > 0)) tol = 1e-10;
  /* the outcome and weights */
  size_t npos = 0;
  double wsum = 0;
  for (size_t i = 0; i < n; i++) {
    double wi = w ? w[i] : 1;
    if (!isfinite(y[i]) || y[i] < 0 || y[i] > 1)
      return sl_error_set(e, SL_EARG, 0, 0,
                          "row %zu: the outcome must be 0 or 1 (or a proportion), not %g",
                          i + 1, y[i]);
    if (!isfinite(wi) || wi < 0)
      return sl_error_set(e, SL_EARG, 0, 0,
                          "row %zu: a weight must be finite and non-negative, not %g", i + 1, wi);
    if (wi > 0) npos++;
    wsum += wi;
  }
  if (npos < p)
    return sl_error_set(e, SL_EARG, 0, 0,
                        "logit: %zu rows with positive weight for %zu columns", npos, p);
  sl_fit chk;
  memset(&chk, 0, sizeof chk);
  if ((rc = check_opts("logit", opts, n, &chk, e))) return rc;
  qracc a;
  fitws ws;
  neacc ne;
  memset(&a, 0, sizeof a);
  memset(&ws, 0, sizeof ws);
  memset(&ne, 0, sizeof ne);
  int fast = !sl_logit_qr_only;
  double *b = calloc(p, sizeof *b), *bn = calloc(p, sizeof *bn);
  double *step = calloc(p, sizeof *step), *xmax = calloc(p, sizeof *xmax), *rows = NULL;
  if (!b || !bn || !step || !xmax || sl_fit_alloc(fit, n, p) || qracc_init(&a, p, n) ||
      fitws_init(&ws, p) || !(rows = malloc(4 * a.m * sizeof *rows)) ||
      (fast && neacc_init(&ne, p, a.m))) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  set_opts(fit, &chk);
  /* X finite; the largest |x_ij| of each column over rows in the fit */
  for (size_t i = 0; i < n; i++) {
    const double *row = X + i * p;
    int in = !w || w[i] > 0;
    for (size_t j = 0; j < p; j++) {
      if (!isfinite(row[j])) { rc = bad_x(e, names, i, j); goto done; }
      if (in && fabs(row[j]) > xmax[j]) xmax[j] = fabs(row[j]);
    }
  }
  logit_ctx c = {X, y, w, n, p, &a, &ws, &ne, rows, rows + a.m, rows + 2 * a.m, rows + 3 * a.m};
  logit_pass_out o, on;
  int at = PASS_NORMAL;   /* the kind of the pass made at b */
  if (fast) {             /* at b = 0: well conditioned means full rank */
    logit_pass(&c, b, PASS_NORMAL, &o);
    fast = neacc_factor(&ne);
  }
  if (!fast) {
    logit_pass(&c, b, at = PASS_NEWTON, &o);
    qracc_R(&a, ws.R);
    if ((rc = check_rank(ws.R, names, fit->aliased, e))) goto done;
  }
  int it = 0, converged = 0, stuck = 0, factored = fast;
  while (it < max_iter) {
    if (at == PASS_NORMAL && !factored && !(fast = neacc_factor(&ne)))
      logit_pass(&c, b, at = PASS_NEWTON, &o);   /* on by QR from here */
    factored = 0;
    double pred = 0;   /* d'H d = g'd, the decrease of the deviance predicted */
    if (at == PASS_NORMAL) {
      neacc_step(&ne, b, bn);
      for (size_t j = 0; j < p; j++) pred += gsl_matrix_get(ne.C, p, j) * (bn[j] - b[j]);
    } else {
      solve_coef(&a, &ws, bn);   /* by QR, or the step after a wrong guess */
      for (size_t i = 0; fast && i < p; i++) {   /* |R d|^2 */
        double t = 0;
        for (size_t j = i; j < p; j++) t += gsl_matrix_get(ws.R, i, j) * (bn[j] - b[j]);
        pred += t * t;
      }
    }
    int kind = !fast ? PASS_NEWTON
               : pred < SL_NE_GUESS * tol * (fabs(o.dev) + 0.1) ? PASS_FINAL : PASS_NORMAL;
    int hkind = fast ? PASS_NORMAL : PASS_NEWTON;
    it++;
    if (kind == PASS_FINAL) neacc_precond(&ne, ws.Ri);
    logit_pass(&c, bn, kind, &on);
    double rel = fabs(on.dev - o.dev) / (fabs(on.dev) + 0.1);
    int h = 0;
    while ((!isfinite(on.dev) || (on.dev > o.dev && rel >= tol)) && h < SL_HALVINGS) {
      for (size_t j = 0; j < p; j++) bn[j] = 0.5 * (bn[j] + b[j]);
      logit_pass(&c, bn, hkind, &on);
      rel = fabs(on.dev - o.dev) / (fabs(on.dev) + 0.1);
      h++;
    }
    if (!isfinite(on.dev) || (on.dev > o.dev && rel >= tol)) {
      /* no step along the Newton direction lowers the deviance: retry the
      ** iteration along the QR's direction, or give up */
      logit_pass(&c, b, at = PASS_NEWTON, &o);
      if (fast) { fast = 0; it--; continue; }
      stuck = 1;
      break;
    }
    at = h ? hkind : kind;
    for (size_t j = 0; j < p; j++) { step[j] = bn[j] - b[j]; b[j] = bn[j]; }
    o = on;
    if (rel < tol) { converged = 1; break; }
  }
  /* covariances at the final b, from a QR pass there */
  if (at == PASS_NORMAL) {
    if (neacc_factor(&ne)) {
      neacc_precond(&ne, ws.Ri);
      logit_pass(&c, b, at = PASS_FINAL, &o);
    } else {
      logit_pass(&c, b, at = PASS_NEWTON, &o);
    }
  }
  for (size_t j = 0; j < p; j++) fit->coef[j] = b[j];
  if (at == PASS_FINAL) {   /* the meat is summed in the coordinates of X T */
    qracc_R(&a, ws.R);
    invert_R(&ws);
    finish_classical(&ws, fit, 1.0);
    neacc_meat_to_r(&ne, &ws);
    finish_robust(&ws, fit, 1);
  } else {
    logit_pass_out os;
    qracc_R(&a, ws.R);
    invert_R(&ws);
    logit_pass(&c, b, PASS_SANDWICH, &os);
    finish_cov(&ws, fit, 1.0, 1);
  }
  fit->rank = p;
  fit->loglik = o.ll;
  fit->deviance = o.dev;
  fit->iterations = it;
  fit->converged = converged || (stuck && isfinite(o.dev));
  fit->r2 = fit->adj_r2 = fit->sigma = fit->rss = NAN;
  if ((rc = fit_chosen(&a, &ws, X, y, n, 1, opts, fit, e))) goto done;
  logit_report(wbuf, sizeof wbuf, names, p, step, xmax, fit->converged, stuck, it, &o, wsum);
  if (warn && warnsize) snprintf(warn, warnsize, "%s", wbuf);
done:
  free(b); free(bn); free(step); free(xmax); free(rows);
  qracc_free(&a);
  fitws_free(&ws);
  neacc_free(&ne);
  if (rc) sl_fit_free(fit);
  return rc;
}

/* ---- prediction ---- */

void sl_predict(const sl_fit *fit, const double *X, size_t n, int prob, double *out) {
  if (!fit || !fit->coef || !X || !out) return;
  size_t p = fit->p;
  for (size_t i = 0; i < n; i++) {
    const double *row = X + i * p;
    double eta = 0;
    for (size_t j = 0; j < p; j++) eta += row[j] * fit->coef[j];
    if (prob) {
      double mu, omu;
      logistic(eta, &mu, &omu, NULL);
      out[i] = mu;
    } else {
      out[i] = eta;
    }
  }
}
