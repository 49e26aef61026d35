/*
** sem.h: linear structural equation models on a causal graph: the true
** total effect ((I - B)^-1), the implied covariance, the large-sample
** limit of a least-squares coefficient, and simulation through GSL's
** generators.  The model is given as arrays (the binding reads the graph),
** so this module knows nothing of the graph library.
**
**   x_i = a_i + sum_j B[i][j] x_j + e_i,   e ~ N(0, Omega)
**
** with B[i][j] the coefficient of the edge j -> i, and Omega's off-diagonal
** entries the covariances of <-> pairs.  A node may instead be binary (a
** logistic link on its linear predictor) or binarized (1 above a cut, else
** 0, before its children see it); then the closed forms no longer hold and
** Monte Carlo versions are offered.
*/
#ifndef SL_SEM_H
#define SL_SEM_H

#include <stddef.h>
#include <stdint.h>
#include "frame.h"

typedef struct sl_sem {
  size_t n;
  char **names;          /* n, copied */
  unsigned char *observed;
  double *B;             /* n x n row-major: B[i*n + j] = coef of j -> i */
  double *a;             /* intercepts */
  double *omega;         /* n x n error covariance */
  double *chol;          /* its Cholesky factor (lower) */
  double *cut;           /* n: NaN, or the binarizing cut */
  unsigned char *logistic;
  int32_t *order;        /* a topological order */
  int exact;             /* no binary or binarized node: closed forms hold */
  int any_logistic;
  /* sparse forms for simulation: per node, its parents with coefficients
  ** and the nonzero entries of its row of the Cholesky factor */
  uint32_t *poff, *loff;
  int32_t *pidx, *lidx;
  double *pval, *lval;
} sl_sem;

/* Build: names (n), observed flags, B, a, omega are copied; order is a
** topological order of the directed part.  An omega that is not positive
** definite is an error naming the <-> pair that breaks it. */
int sl_sem_init(sl_sem *m, size_t n, const char *const *names,
                const unsigned char *observed, const double *B, const double *a,
                const double *omega, const double *cut, const unsigned char *logistic,
                const int32_t *order, sl_error *e);
void sl_sem_free(sl_sem *m);

/* The total effect of x on y: [(I - B)^-1]_{y x}.  Needs an exact model. */
int sl_sem_effect(const sl_sem *m, int x, int y, double *effect, sl_error *e);
/* The implied covariance of all nodes (n x n). */
int sl_sem_cov(const sl_sem *m, double *sigma, sl_error *e);
/* The limit of the coefficient of x in the least-squares regression of y
** on x and set[0..k). */
int sl_sem_limit(const sl_sem *m, int x, int y, const int *set, size_t k,
                 double *limit, sl_error *e);

/* n rows of the observed nodes (columns in the order of names), from the
** seed; bit-identical for a seed whatever the thread count. */
sl_frame *sl_sem_simulate(const sl_sem *m, size_t rows, uint64_t seed, int threads,
                          sl_error *e);

/* Monte Carlo versions for models that are not exact: the effect of
** setting x to 1 versus 0 (binary or binarized x) or of adding 1 to x, and
** the least-squares limit, from `draws` simulated rows; with standard errors. */
int sl_sem_effect_mc(const sl_sem *m, int x, int y, size_t draws, uint64_t seed,
                     double *effect, double *se, sl_error *e);
int sl_sem_limit_mc(const sl_sem *m, int x, int y, const int *set, size_t k, size_t draws,
                    uint64_t seed, double *limit, double *se, sl_error *e);

#endif
