/*
** sensitivity.c: omitted-variable bias in the partial R^2 parametrisation
** (see sensitivity.h).  Formulas of Cinelli and Hazlett 2020, sections 4-6.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "sensitivity.h"

double sl_sens_partial_r2(double t, double df) {
  return t * t / (t * t + df);
}

/* Whether v is a partial R^2 the formulas accept. */
static int r2_ok(double v) { return v >= 0 && v <= SL_SENS_R2_MAX; }

/* RV for the partial Cohen's f: the root r of r^2 / (1 - r) = f^2, the
** equal strength at which the bias equals f (their eq. 16). */
static double rv_of_f(double f) {
  double f2 = f * f;
  return 0.5 * (sqrt(f2 * f2 + 4 * f2) - f2);
}

int sl_sens_rv(double t, double df, double q, double alpha, double *rv,
               double *rv_alpha, sl_error *e) {
  if (!isfinite(t)) return sl_error_set(e, SL_EARG, 0, 0, "the t statistic is not finite");
  if (!(df > 1)) return sl_error_set(e, SL_EARG, 0, 0, "needs more than 1 residual degree of "
                                     "freedom, got %g", df);
  if (!(q > 0) || !isfinite(q)) return sl_error_set(e, SL_EARG, 0, 0, "q = %g must be positive", q);
  if (!(alpha > 0 && alpha < 1))
    return sl_error_set(e, SL_EARG, 0, 0, "alpha = %g must lie strictly between 0 and 1", alpha);
  double fq = q * fabs(t) / sqrt(df);
  *rv = rv_of_f(fq);
  /* Z uses one more degree of freedom: the critical t on df - 1 */
  double fc = gsl_cdf_tdist_Qinv(alpha / 2, df - 1) / sqrt(df - 1);
  if (fq <= fc) *rv_alpha = 0;
  else if (fq * fc >= 1)   /* the least max strength is off the diagonal */
    *rv_alpha = (fq * fq - fc * fc) / (1 + fq * fq);
  else *rv_alpha = rv_of_f(fq - fc);
  return SL_OK;
}

int sl_sens_bound(double r2dx, double r2yx, double kd, double ky, double *r2dz,
                  double *r2yz, int *capped, sl_error *e) {
  if (!r2_ok(r2dx) || !r2_ok(r2yx))
    return sl_error_set(e, SL_EARG, 0, 0, "the benchmark's partial R^2 values must lie in "
                        "[0, 1), got %g and %g", r2dx, r2yx);
  if (!(kd >= 0 && isfinite(kd)) || !(ky >= 0 && isfinite(ky)))
    return sl_error_set(e, SL_EARG, 0, 0, "k must be a finite number >= 0");
  double dz = kd * r2dx / (1 - r2dx);
  if (!(dz < 1))
    return sl_error_set(e, SL_EARG, 0, 0, "a confounder %g times as strong as the benchmark "
                        "would explain all of the treatment (its partial R^2 with the "
                        "treatment is %g): use a smaller k", kd, r2dx);
  /* the partial R^2 of Z with the benchmark given D and X implied by kd */
  double zx = kd * r2dx * r2dx / ((1 - kd * r2dx) * (1 - r2dx));
  if (!(zx < 1))
    return sl_error_set(e, SL_EARG, 0, 0, "k = %g is impossible for this benchmark: use a "
                        "smaller k", kd);
  double eta = (sqrt(ky) + sqrt(zx)) / sqrt(1 - zx);
  double yz = eta * eta * r2yx / (1 - r2yx);
  *capped = yz > 1;
  *r2dz = dz;
  *r2yz = yz > 1 ? 1 : yz;
  return SL_OK;
}

int sl_sens_adjust(double est, double se, double df, double r2dz, double r2yz,
                   double *adj_est, double *adj_se, double *adj_t, sl_error *e) {
  if (!r2_ok(r2dz) || !(r2yz >= 0 && r2yz <= 1))
    return sl_error_set(e, SL_EARG, 0, 0, "partial R^2 values must lie in [0, 1), got %g "
                        "and %g", r2dz, r2yz);
  if (!(df > 1) || !(se >= 0) || !isfinite(est))
    return sl_error_set(e, SL_EARG, 0, 0, "needs a finite estimate, SE >= 0 and df > 1");
  /* |bias| = se sqrt(df r2yz r2dz / (1 - r2dz)) (their eq. 11) */
  double bias = se * sqrt(df * r2yz * r2dz / (1 - r2dz));
  *adj_est = est >= 0 ? est - bias : est + bias;
  *adj_se = se * sqrt((1 - r2yz) / (1 - r2dz)) * sqrt(df / (df - 1));
  *adj_t = *adj_se > 0 ? *adj_est / *adj_se : NAN;
  return SL_OK;
}

int sl_sens_sem_scaled(const sl_sem *m, int u, double factor, sl_sem *out, sl_error *e) {
  size_t n = m->n;
  if (u < 0 || (size_t)u >= n) return sl_error_set(e, SL_EARG, 0, 0, "no such node");
  if (!isfinite(factor)) return sl_error_set(e, SL_EARG, 0, 0, "the multiplier must be finite");
  double *B = malloc((n ? n * n : 1) * sizeof *B);
  if (!B) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  memcpy(B, m->B, n * n * sizeof *B);
  for (size_t i = 0; i < n; i++) B[i * n + (size_t)u] *= factor;   /* the edges u -> i */
  int rc = sl_sem_init(out, n, (const char *const *)m->names, m->observed, B, m->a,
                       m->omega, m->cut, m->logistic, m->order, e);
  free(B);
  return rc;
}
