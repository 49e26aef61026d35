/*
** estimate_internal.h: what the estimator files share.
*/
#ifndef SL_ESTIMATE_INTERNAL_H
#define SL_ESTIMATE_INTERNAL_H

#include "estimate.h"

/* The complete rows, as the models see them. */
typedef struct sl_prep {
  size_t n;              /* complete rows */
  size_t *rows;          /* their frame rows */
  double *t, *y;         /* treatment and outcome */
  size_t q;              /* covariate columns after dummy coding */
  double *C;             /* n x q, row-major */
  char **cnames;         /* q names */
  const char **onames;   /* outcome-model term names: (intercept), t, C, t:C */
  const char **pnames;   /* propensity-model term names: (intercept), C */
  char *namebuf;
  int bin_t, bin_y;
  size_t t_values;       /* distinct treatment values (counted up to SL_FEW_VALUES + 1) */
  char t_level[2][64];   /* a recoded two-level treatment: control, treated as text */
  size_t k;              /* mediators (frontdoor) or instruments (iv) */
  double *A;             /* n x k, row-major */
  const char *anames[SL_ROUTE_MAX];
  int abin[SL_ROUTE_MAX];   /* column j takes only 0 and 1 */
  double *w;             /* NULL, or each row's weight (weights =) */
  size_t *cluster;       /* NULL, or each row's cluster, 0 .. nclusters - 1 */
  size_t nclusters;
  size_t *cl_start, *cl_rows;   /* the rows of cluster c: cl_rows[cl_start[c] ..
                                   cl_start[c + 1]) */
} sl_prep;

/* One point estimate on a sample of the complete rows. */
typedef struct sl_point {
  double est, se, mu1, mu0;
  int has_se;
  int se_log;            /* se is of log(est): a ratio or odds ratio */
  double accel;          /* BCa acceleration from the influence values */
  double ess, ess1, ess0, ps_min, ps_max;
  size_t ps_extreme;
  sl_route_info route;
} sl_point;

int sl_est_prepare(const sl_est_spec *s, sl_prep *P, size_t *dropped, sl_error *e);

/* Checks shared by the frame and the lazy table: the roles and options
** (on a frame's columns: a lazy table passes a frame of its columns and
** no rows); the kinds of treatment and outcome the method needs; which of
** a two-level treatment's values (seen sorted, txt their texts) is the
** treated one, given = the treated = option or NULL. */
int sl_est_check_roles(const sl_est_spec *s, sl_error *e);
int sl_est_check_kinds(const sl_est_spec *s, int bin_t, int bin_y, const char *tname, sl_error *e);
int sl_est_pick_treated(const char *name, int num, const double seen[2], char txt[2][64],
                        const char *given, int *treated, sl_error *e);

/* What the result says of the data beside the point (sl_est_report). */
typedef struct sl_est_info {
  size_t n, nclusters, t_values;
  int bin_t, bin_y;
  double ess_weights;    /* Kish's ESS of weights =, 0 without */
  char t_level[2][64];
  const char *tname, *yname;
} sl_est_info;
int sl_est_report(const sl_est_spec *s, const sl_point *pt, const sl_est_info *I, double *boot,
                  sl_est_result *res, sl_error *e);
/* The estimate on a lazy table (estimate_db.c). */
int sl_estimate_db(const sl_est_spec *s, sl_est_result *res, sl_error *e);
/* The sums of s's complete rows (rowsum.h), for the estimators written
** over them and the diagnostics (sumdiag.c): a lazy table's answered in
** SQL (estimate_db.c), a frame's in C (estimate_prep.c).  The roles are
** checked and the data's facts go to I; close the handle afterwards. */
struct sl_summer;
int sl_db_summer_open(const sl_est_spec *s, struct sl_summer *S, void **handle, sl_est_info *I,
                      size_t *dropped, sl_error *e);
void sl_db_summer_close(void *handle);
int sl_est_summer_open(const sl_est_spec *s, struct sl_summer *S, void **handle, sl_est_info *I,
                       size_t *dropped, sl_error *e);
void sl_est_summer_close(void *handle);
void sl_est_prep_free(sl_prep *P);
/* want_se: also the analytic standard error (the whole sample only). */
int sl_est_point(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                 int want_se, sl_point *out, char *warn, sl_error *e);
double sl_est_contrast(int scale, double mu1, double mu0);
double sl_est_quantile(double *v, size_t n, double q);
void sl_est_warn(char *buf, const char *msg);

/* The front-door estimate (frontdoor_est.c) and two-stage least squares
** (iv.c) on a sample of the complete rows. */
int sl_est_frontdoor(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
                     sl_point *out, char *warn, sl_error *e);
int sl_est_iv(const sl_est_spec *s, const sl_prep *P, const size_t *ix, size_t n,
              sl_point *out, char *warn, sl_error *e);

/* Cross-products of rows given one at a time (gram.c): start with G (q x q,
** zeroed; the lower triangle is filled) and a block of sl_gram_rows(q) x q
** doubles; add row x scaled by s (the square root of its weight). */
typedef struct sl_gram {
  double *G, *blk;
  size_t q, rows, kb;
} sl_gram;
size_t sl_gram_rows(size_t q);
void sl_gram_start(sl_gram *a, double *G, double *blk, size_t q);
void sl_gram_add(sl_gram *a, const double *x, double s);
void sl_gram_finish(sl_gram *a);

/* The gradient of the contrast on the scale of its SE (influence.c):
** the difference; the logarithm of a ratio or odds ratio. */
void sl_infl_gradient(int scale, double mu1, double mu0, double *g1, double *g0);

/* The SE and intervals of the result from the whole sample's point and the
** replicates (boot: s->boot entries, NaN for a failed one; reordered). */
int sl_est_intervals(const sl_est_spec *s, const sl_point *pt, double *boot,
                     sl_est_result *res, sl_error *e);

/* A design row of the outcome model (intercept, t, covariates, t x
** covariates when inter) for row i with treatment value tv; whether a row
** with treatment t belongs to the estimand's target. */
void sl_est_outcome_row(const sl_prep *P, size_t i, double tv, int inter, double *row);
int sl_est_in_target(const sl_est_spec *s, double t);

/* Replicates of a standardization with a linear outcome model from counts
** (boot_linear.c): init once, then per replicate a point estimate from the
** counts of each row, with work of sl_boot_linear_work(L) doubles; nonzero
** when the replicate needs the QR fit instead. */
typedef struct sl_boot_linear {
  size_t n, p;
  int inter;
  double *Z;             /* n x p: design columns but the intercept, and y; centred */
  double *mean;          /* their means over all rows */
  double *Xa, *Xb;       /* n x p: design rows under the two treatment values */
  unsigned char *target; /* the row belongs to the estimand's target */
} sl_boot_linear;
int sl_boot_linear_init(const sl_est_spec *s, const sl_prep *P, int inter, sl_boot_linear *L,
                        sl_error *e);
/* The coefficients (p) of the least-squares fit weighted by count; nonzero
** when the centred cross-products are singular or too ill-conditioned. */
int sl_boot_linear_fit(const sl_boot_linear *L, const double *count, double *work, double *beta);
void sl_boot_linear_free(sl_boot_linear *L);
size_t sl_boot_linear_work(const sl_boot_linear *L);
int sl_boot_linear_point(const sl_est_spec *s, const sl_boot_linear *L, const double *count,
                         double *work, double *est);

/* Replicates of AIPW with a linear outcome model from counts
** (boot_aipw.c): the propensity model by Newton steps on count-weighted
** cross-products from the whole sample's coefficients, the outcome model
** as in sl_boot_linear.  Nonzero from the point: refit on the rows. */
typedef struct sl_boot_aipw {
  sl_boot_linear lin;    /* the outcome model: treatment x covariates */
  size_t q1;             /* propensity columns: the intercept and covariates */
  double *Xp;            /* n x q1 */
  double *gamma;         /* q1: the whole sample's propensity coefficients */
} sl_boot_aipw;
int sl_boot_aipw_init(const sl_est_spec *s, const sl_prep *P, sl_boot_aipw *A, sl_error *e);
void sl_boot_aipw_free(sl_boot_aipw *A);
size_t sl_boot_aipw_work(const sl_boot_aipw *A);
int sl_boot_aipw_point(const sl_est_spec *s, const sl_prep *P, const sl_boot_aipw *A,
                       const double *count, double *work, double *est);

/* The bootstrap: replicate estimates into est[0..B) (NaN when a replicate
** failed). */
int sl_est_bootstrap(const sl_est_spec *s, const sl_prep *P, double *est, sl_error *e);

#endif
