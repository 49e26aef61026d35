/*
** estimate.c: a point estimate on a sample of the complete rows: the
** standardization, IPW and AIPW estimators of sumest.c over the frame's
** sums, or the front-door and IV routes; and the helpers the routes and
** the bootstrap share (design rows, contrasts, quantiles, warnings).  Preparation of the data is in
** estimate_prep.c, the bootstrap in bootstrap.c, the diagnostics in
** sumdiag.c.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "estimate_internal.h"
#include "sumest.h"

/* Append a warning line (kept once). */
void sl_est_warn(char *buf, const char *msg) {
  if (!buf || strstr(buf, msg)) return;
  size_t len = strlen(buf);
  if (len + strlen(msg) + 2 >= SL_WARN_MAX) return;
  if (len) buf[len++] = '\n';
  strcpy(buf + len, msg);
}

/* Outcome-model design row for sample row i with treatment value tv. */
void sl_est_outcome_row(const sl_prep *P, size_t i, double tv, int inter, double *row) {
  const double *c = P->C + i * P->q;
  row[0] = 1;
  row[1] = tv;
  for (size_t j = 0; j < P->q; j++) row[2 + j] = c[j];
  if (inter)
    for (size_t j = 0; j < P->q; j++) row[2 + P->q + j] = tv * c[j];
}


/* Whether sample row k belongs to the target population of the estimand. */
int sl_est_in_target(const sl_est_spec *s, double t) {
  return s->estimand == SL_ATE || (s->estimand == SL_ATT ? t == 1 : t == 0);
}

/* The contrast of mu1 and mu0 on the chosen scale.  A ratio of means
** needs mu0 > 0 and mu1 >= 0: otherwise it is undefined or its sign says
** nothing (NaN, so a bootstrap replicate counts as failed). */
double sl_est_contrast(int scale, double mu1, double mu0) {
  if (scale == SL_RATIO) return mu0 > 0 && mu1 >= 0 ? mu1 / mu0 : NAN;
  if (scale == SL_ODDS_RATIO) return (mu1 / (1 - mu1)) / (mu0 / (1 - mu0));
  return mu1 - mu0;
}

/* The value at percentile q (0..100) of v[0..n) by linear interpolation
** (type 7); v is sorted in place. */
static int cmp_double(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}
double sl_est_quantile(double *v, size_t n, double q) {
  qsort(v, n, sizeof *v, cmp_double);
  double h = (double)(n - 1) * q / 100.0;
  size_t lo = (size_t)floor(h);
  if (lo + 1 >= n) return v[n - 1];
  return v[lo] + (h - (double)lo) * (v[lo + 1] - v[lo]);
}

int sl_est_point(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                 int want_se, sl_point *out, char *warn, sl_error *e) {
  memset(out, 0, sizeof *out);
  /* a resample may lose one arm: no estimate from it */
  if (P->bin_t && s->method != SL_IV) {
    size_t n1 = 0;
    for (size_t k = 0; k < n; k++) n1 += P->t[ix[k]] == 1;
    if (n1 == 0 || n1 == n)
      return sl_error_set(e, SL_EARG, 0, 0, "the sample holds one treatment level only");
  }
  if (s->method == SL_FRONTDOOR) return sl_est_frontdoor(s, P, ix, n, out, warn, e);
  if (s->method == SL_IV) return sl_est_iv(s, P, ix, n, out, warn, e);
  /* standardize, ipw, aipw: written once over sums (sumest.c) */
  sl_frame_rows fr = {P, ix, n};
  sl_summer S;
  sl_summer_frame(&S, &fr);
  int rep0 = 0;
  return sl_sum_point(s, &S, P->bin_t, P->bin_y, &rep0, 1, want_se, NULL, out, warn, e);
}
