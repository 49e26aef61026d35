/*
** interval.c: the standard error and intervals of an estimate: the
** analytic SE and its normal interval (on the log scale for a ratio or odds
** ratio), and from bootstrap replicates their SE, the percentile interval
** and the bias-corrected and accelerated one (BCa; Efron 1987, JASA 82,
** 171-185), whose acceleration comes from the influence values.
*/
#include <math.h>
#include <stdio.h>
#include <gsl/gsl_cdf.h>
#include "estimate_internal.h"

/* BCa's interval from the replicates v[0..n): the bias correction z0 from
** the share below the estimate (ties count half), then the percentiles
** moved by z0 and the acceleration a. */
static void bca(double *v, size_t n, double est, double a, double level, sl_est_result *res) {
  double below = 0;
  for (size_t b = 0; b < n; b++) below += v[b] < est ? 1 : v[b] == est ? 0.5 : 0;
  double z0 = gsl_cdf_ugaussian_Pinv(below / (double)n);
  res->bias_z0 = z0;
  if (!isfinite(z0)) return;
  double q[2];
  for (int i = 0; i < 2; i++) {
    double za = gsl_cdf_ugaussian_Pinv(i == 0 ? (1 - level) / 2 : (1 + level) / 2);
    q[i] = gsl_cdf_ugaussian_P(z0 + (z0 + za) / (1 - a * (z0 + za)));
  }
  res->lo_bca = sl_est_quantile(v, n, 100 * q[0]);
  res->hi_bca = sl_est_quantile(v, n, 100 * q[1]);
}

/* Whether the method's estimate has influence values (and so BCa). */
static int has_influence(const sl_est_spec *s) {
  return s->method == SL_STANDARDIZE || s->method == SL_IPW || s->method == SL_AIPW;
}

int sl_est_intervals(const sl_est_spec *s, const sl_point *pt, double *boot,
                     sl_est_result *res, sl_error *e) {
  double level = s->level > 0 && s->level < 1 ? s->level : 0.95;
  double z = gsl_cdf_ugaussian_Pinv(0.5 + level / 2), est = pt->est;
  res->lo_pct = res->hi_pct = res->lo_bca = res->hi_bca = NAN;
  res->lo_normal = res->hi_normal = res->bias_z0 = NAN;
  res->se_analytic = pt->has_se ? pt->se : NAN;
  res->se_log = pt->has_se && pt->se_log;
  res->accel = pt->accel;
  res->se = NAN;
  res->se_source = SL_SE_NONE;
  if (pt->has_se) {
    res->se = pt->se;
    res->se_source = !has_influence(s) ? SL_SE_FROM_ROUTE
                   : s->method == SL_IPW && s->se_kind == SL_SE_PS_KNOWN ? SL_SE_FROM_PS_KNOWN
                   : SL_SE_FROM_SANDWICH;
    if (res->se_log) {
      res->lo_normal = exp(log(est) - z * pt->se);
      res->hi_normal = exp(log(est) + z * pt->se);
    } else {
      res->lo_normal = est - z * pt->se;
      res->hi_normal = est + z * pt->se;
    }
  }
  if (s->boot > 0) {
    size_t ok = 0;
    for (size_t b = 0; b < s->boot; b++) if (!isnan(boot[b])) boot[ok++] = boot[b];
    res->boot_done = ok;
    res->boot_failed = s->boot - ok;
    if (ok < 2) return sl_error_set(e, SL_EARG, 0, 0, "fewer than two bootstrap replicates succeeded");
    double mean = 0, ss = 0;
    for (size_t b = 0; b < ok; b++) mean += boot[b];
    mean /= (double)ok;
    for (size_t b = 0; b < ok; b++) ss += (boot[b] - mean) * (boot[b] - mean);
    res->se = sqrt(ss / (double)(ok - 1));
    res->se_log = 0;
    res->se_source = SL_SE_FROM_BOOT;
    res->lo_pct = sl_est_quantile(boot, ok, 50 * (1 - level));
    res->hi_pct = sl_est_quantile(boot, ok, 100 - 50 * (1 - level));
    if (has_influence(s) && pt->has_se) bca(boot, ok, est, pt->accel, level, res);
    if (!pt->has_se) {   /* no analytic SE: the normal interval from the bootstrap's */
      res->lo_normal = est - z * res->se;
      res->hi_normal = est + z * res->se;
    }
    if (res->boot_failed) {
      char m[192];
      snprintf(m, sizeof m, "%zu of %zu bootstrap replicates failed (e.g. one treatment level only%s) "
               "and were left out", res->boot_failed, s->boot,
               s->scale == SL_RATIO ? ", or a mean outcome at or below 0" : "");
      sl_est_warn(res->warnings, m);
    }
  }
  int iv = s->interval != SL_CI_DEFAULT ? s->interval : s->boot > 0 ? SL_CI_PERCENTILE : SL_CI_NORMAL;
  res->interval = iv;
  res->lo = iv == SL_CI_PERCENTILE ? res->lo_pct : iv == SL_CI_BCA ? res->lo_bca : res->lo_normal;
  res->hi = iv == SL_CI_PERCENTILE ? res->hi_pct : iv == SL_CI_BCA ? res->hi_bca : res->hi_normal;
  res->has_se = !isnan(res->se);
  if (!res->has_se)
    sl_est_warn(res->warnings, s->method == SL_FRONTDOOR
                ? "no analytic standard error for this front-door estimate (it has one only when "
                  "every model is linear without interactions, on the difference scale): give "
                  "boot = 200 or more"
                : s->method == SL_IV
                ? "no standard error: the outcome is an exact linear function of the fitted "
                  "treatment and the set; give boot = 200 or more"
                : "no analytic standard error: a working model's information matrix is "
                  "singular; give boot = 200 or more");
  else if (res->se_source == SL_SE_FROM_PS_KNOWN)
    sl_est_warn(res->warnings, "se = \"ps known\" treats the fitted propensities as known: "
                "conservative for the ATE (Lunceford and Davidian 2004), not necessarily for "
                "the ATT or ATC");
  if (iv == SL_CI_BCA && isnan(res->lo_bca))
    sl_est_warn(res->warnings, "no BCa interval: the estimate lies outside the replicates' range");
  return SL_OK;
}
