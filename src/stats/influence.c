/*
** influence.c: analytic standard errors of the standardization, IPW and
** AIPW estimates from the rows' influence values (M-estimation, the
** "sandwich"; Stefanski and Boos 2002, The calculus of M-estimation).
**
** Every estimator here is a pair of means (mu1, mu0) solved jointly with a
** working model's score equations.  Stacking them, the estimate's error is
** to first order the mean of one value per row, phi_k; the working model
** enters phi through the derivative of the mean's equation with respect to
** the model's coefficients, d, and the model's bread H:
**
**   phi_k = (mean equation at row k) / A + (d' H^-1 x_k) r_k,
**
** with r_k the model's score residual (y - fitted).  For IPW this is the
** correction for estimated propensities of Lunceford and Davidian 2004
** (Statistics in Medicine 23, 2937-2960, section 3); leaving it out treats
** the propensities as known.  The contrast's standard error follows by the
** delta method: of the difference itself, of the logarithm of a ratio or
** odds ratio.  Rows of one cluster are summed before squaring (Liang and
** Zeger 1986), with the factor G/(G-1) (common practice).  The sums
** themselves are taken in sumest.c, for a frame and a lazy table alike.
*/
#include "estimate_internal.h"

/* The gradient of the contrast, on the scale its SE is given on: the
** difference itself; the logarithm of a ratio or odds ratio. */
void sl_infl_gradient(int scale, double mu1, double mu0, double *g1, double *g0) {
  if (scale == SL_RATIO) { *g1 = 1 / mu1; *g0 = -1 / mu0; }
  else if (scale == SL_ODDS_RATIO) { *g1 = 1 / (mu1 * (1 - mu1)); *g0 = -1 / (mu0 * (1 - mu0)); }
  else { *g1 = 1; *g0 = -1; }
}
