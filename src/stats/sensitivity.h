/*
** sensitivity.h: how strong an unmeasured confounder would have to be.
** The omitted-variable bias of a least-squares coefficient in the partial
** R^2 parametrisation (Cinelli and Hazlett 2020, JRSS-B 82(1)): robustness
** values, bounds from benchmark covariates, the adjusted estimate; and a
** linear structural model with a hidden node's coefficients scaled, for
** watching a set's large-sample value move as the confounder grows.
**
** Notation: D the treatment, Y the outcome, X the covariates, Z the
** confounder; r2dz = R^2_{D~Z|X}, r2yz = R^2_{Y~Z|D,X}; df the residual
** degrees of freedom of the regression of Y on D and X.
*/
#ifndef SL_SENSITIVITY_H
#define SL_SENSITIVITY_H

#include "error.h"
#include "sem.h"

/* Partial R^2 values must lie in [0, SL_SENS_R2_MAX]: at 1 the adjusted
** standard error is undefined. */
#define SL_SENS_R2_MAX 0.999999

/* The partial R^2 of a coefficient from its t statistic: t^2 / (t^2 + df). */
double sl_sens_partial_r2(double t, double df);

/* Robustness values of the estimate with statistic t on df degrees of
** freedom: rv the least equal strength of Z (both partial R^2) that moves
** the estimate by the fraction q of itself; rv_alpha the least strength
** that makes the moved estimate's confidence interval (level 1 - alpha)
** reach the estimate times (1 - q).  Needs df > 1, q > 0, 0 < alpha < 1. */
int sl_sens_rv(double t, double df, double q, double alpha, double *rv,
               double *rv_alpha, sl_error *e);

/* The strength of a confounder kd times as strong as a benchmark covariate
** in explaining D and ky times as strong in explaining Y, from the
** benchmark's partial R^2 with D given the other covariates (r2dx) and
** with Y given D and the others (r2yx): the bounds on r2dz and r2yz
** (r2yz capped at 1, with capped set).  An impossible kd (the bound on
** r2dz reaching 1) is an error. */
int sl_sens_bound(double r2dx, double r2yx, double kd, double ky, double *r2dz,
                  double *r2yz, int *capped, sl_error *e);

/* The estimate and its standard error adjusted for a confounder of
** strength (r2dz, r2yz), the bias taken towards zero; t the adjusted
** statistic against zero (df - 1 degrees of freedom). */
int sl_sens_adjust(double est, double se, double df, double r2dz, double r2yz,
                   double *adj_est, double *adj_se, double *adj_t, sl_error *e);

/* A copy of the exact model m with the coefficients of the edges out of
** node u multiplied by factor (out must be freed with sl_sem_free). */
int sl_sens_sem_scaled(const sl_sem *m, int u, double factor, sl_sem *out, sl_error *e);

#endif
