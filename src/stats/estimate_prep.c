/*
** estimate_prep.c: checking the question and collecting the complete rows
** (covariates dummy-coded), then the whole estimate with its interval, or
** the rows' sums for the diagnostics.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include "estimate_internal.h"
#include "rowsum.h"

void sl_est_prep_free(sl_prep *P) {
  free(P->rows); free(P->t); free(P->y); free(P->C); free(P->A);
  free(P->cnames); free(P->onames); free(P->pnames); free(P->namebuf);
  free(P->w); free(P->cluster); free(P->cl_start); free(P->cl_rows);
  memset(P, 0, sizeof *P);
}

static int is_binary(const double *v, size_t n) {
  for (size_t i = 0; i < n; i++) if (v[i] != 0 && v[i] != 1) return 0;
  return 1;
}

/* Whether cell (row r, column c) is missing. */
static int missing(const sl_column *c, size_t r) {
  return c->type == SL_NUMERIC ? isnan(c->x[r]) : c->code[r] < 0;
}

/* The word for the aux columns of the method, for messages. */
static const char *aux_word(const sl_est_spec *s) {
  return s->method == SL_FRONTDOOR ? "mediator" : "instrument";
}

/* Check the mediators (frontdoor) or instruments (iv): present for those
** methods only, numeric, and none the treatment, the outcome, a covariate
** or named twice. */
static int check_aux(const sl_est_spec *s, sl_error *e) {
  const sl_frame *f = s->data;
  int route = s->method == SL_FRONTDOOR || s->method == SL_IV;
  if (!route) return s->naux ? sl_error_set(e, SL_EARG, 0, 0, "mediators and instruments apply "
                                            "to method = \"frontdoor\" and \"iv\"") : SL_OK;
  if (s->naux == 0)
    return sl_error_set(e, SL_EARG, 0, 0, s->method == SL_FRONTDOOR
                        ? "method = \"frontdoor\" needs via = {mediators}"
                        : "method = \"iv\" needs instrument = a column");
  if (s->naux > SL_ROUTE_MAX)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu %ss: at most %d", s->naux, aux_word(s),
                        SL_ROUTE_MAX);
  if (s->method == SL_FRONTDOOR && s->nset)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"frontdoor\" takes no adjustment set");
  for (size_t i = 0; i < s->naux; i++) {
    int c = s->aux[i];
    if (c < 0 || (size_t)c >= f->ncol) return sl_error_set(e, SL_EARG, 0, 0, "no such %s column", aux_word(s));
    const char *nm = f->col[c].name;
    if (c == s->treatment)
      return sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' cannot be its own %s", nm, aux_word(s));
    if (c == s->outcome)
      return sl_error_set(e, SL_EARG, 0, 0, "the outcome '%s' cannot be a %s", nm, aux_word(s));
    for (size_t j = 0; j < s->nset; j++)
      if (s->set[j] == c)
        return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both a %s and in the set", nm, aux_word(s));
    for (size_t j = 0; j < i; j++)
      if (s->aux[j] == c) return sl_error_set(e, SL_EARG, 0, 0, "the %s '%s' is named twice", aux_word(s), nm);
    if (f->col[c].type != SL_NUMERIC)
      return sl_error_set(e, SL_EARG, 0, 0, "the %s '%s' has text values: code it as a number "
                          "(f:binarize)", aux_word(s), nm);
  }
  if (s->estimand != SL_ATE)
    return sl_error_set(e, SL_EARG, 0, 0, s->method == SL_FRONTDOOR
                        ? "method = \"frontdoor\" estimates the average effect in the whole "
                          "population (ATE); ATT and ATC are not available"
                        : "method = \"iv\" has an estimand of its own (a local effect for "
                          "compliers); estimand = applies to standardize, ipw and aipw");
  if (s->method == SL_IV && s->scale != SL_DIFFERENCE)
    return sl_error_set(e, SL_EARG, 0, 0, "method = \"iv\" estimates a difference (a coefficient): "
                        "scale = \"difference\" only");
  if (s->contrast != 1)
    return sl_error_set(e, SL_EARG, 0, 0, "a contrast applies to a continuous treatment with standardize");
  return SL_OK;
}

/* Check the roles of the columns. */
int sl_est_check_roles(const sl_est_spec *s, sl_error *e) {
  const sl_frame *f = s->data;
  if (s->treatment < 0 || (size_t)s->treatment >= f->ncol || s->outcome < -1 ||
      s->outcome >= (int)f->ncol)
    return sl_error_set(e, SL_EARG, 0, 0, "no such treatment or outcome column");
  /* no outcome (-1): the propensity model alone, for diagnostics */
  const sl_column *t = &f->col[s->treatment];
  const sl_column *y = &f->col[s->outcome >= 0 ? s->outcome : s->treatment];
  if (s->treatment == s->outcome)
    return sl_error_set(e, SL_EARG, 0, 0, "'%s' is both the treatment and the outcome", t->name);
  if (s->outcome >= 0 && y->type != SL_NUMERIC)
    return sl_error_set(e, SL_EARG, 0, 0, "the outcome '%s' has text values: code it as a number",
                        y->name);
  for (size_t i = 0; i < s->nset; i++) {
    if (s->set[i] == s->outcome)
      return sl_error_set(e, SL_EARG, 0, 0, "the outcome '%s' is also in the adjustment set", y->name);
    if (s->set[i] == s->treatment)
      return sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' is also in the adjustment set", t->name);
    for (size_t j = 0; j < i; j++)
      if (s->set[j] == s->set[i])
        return sl_error_set(e, SL_EARG, 0, 0, "'%s' is named twice in the adjustment set",
                            f->col[s->set[i]].name);
  }
  int rc = check_aux(s, e);
  if (rc) return rc;
  if (!(s->level > 0 && s->level < 1))
    return sl_error_set(e, SL_EARG, 0, 0, "level = %g must lie strictly between 0 and 1, e.g. 0.95",
                        s->level);
  if (!isfinite(s->contrast) || s->contrast == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "contrast = %g must be a finite number other than 0",
                        s->contrast);
  if ((s->method == SL_IPW || s->method == SL_AIPW) && s->contrast != 1)
    return sl_error_set(e, SL_EARG, 0, 0, "a contrast applies to a continuous treatment with standardize");
  if (s->weights && (s->method == SL_FRONTDOOR || s->method == SL_IV))
    return sl_error_set(e, SL_EARG, 0, 0, "weights = applies to standardize, ipw and aipw");
  if (s->se_kind == SL_SE_PS_KNOWN && s->method != SL_IPW)
    return sl_error_set(e, SL_EARG, 0, 0, "se = \"ps known\" applies to method = \"ipw\"");
  if (s->interval == SL_CI_PERCENTILE && s->boot == 0)
    return sl_error_set(e, SL_EARG, 0, 0, "interval = \"percentile\" needs a bootstrap: give boot = "
                        "200 or more");
  if (s->interval == SL_CI_BCA && (s->method == SL_FRONTDOOR || s->method == SL_IV))
    return sl_error_set(e, SL_EARG, 0, 0, "interval = \"bca\" applies to standardize, ipw and aipw, "
                        "whose influence values give its acceleration");
  if (s->interval == SL_CI_BCA && s->boot < SL_BCA_MIN)
    return sl_error_set(e, SL_EARG, 0, 0, "interval = \"bca\" needs boot = %d or more (it reads "
                        "the replicates' tails); got boot = %zu", SL_BCA_MIN, s->boot);
  if (s->method == SL_AIPW && (s->trunc_lo > 0 || s->trunc_hi < 100))
    return sl_error_set(e, SL_EARG, 0, 0, "weight truncation applies to ipw");
  if (s->trunc_lo < 0 || s->trunc_hi > 100 || s->trunc_lo >= s->trunc_hi)
    return sl_error_set(e, SL_EARG, 0, 0, "truncation percentiles must satisfy 0 <= lo < hi <= 100");
  return SL_OK;
}

/* The mediator or instrument columns of the complete rows, and which take
** only 0 and 1; P is freed on an error. */
static int fill_aux(const sl_est_spec *s, sl_prep *P, sl_error *e) {
  size_t n = P->n, k = s->naux;
  P->k = k;
  if (k == 0) return SL_OK;
  P->A = malloc(n * k * sizeof *P->A);
  if (!P->A) { sl_est_prep_free(P); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  size_t nbin = 0;
  for (size_t j = 0; j < k; j++) {
    const sl_column *c = &s->data->col[s->aux[j]];
    P->anames[j] = c->name;
    int bin = 1;
    double v0 = c->x[P->rows[0]];
    int one = 1;
    for (size_t m = 0; m < n; m++) {
      double v = c->x[P->rows[m]];
      P->A[m * k + j] = v;
      if (v != 0 && v != 1) bin = 0;
      if (v != v0) one = 0;
    }
    P->abin[j] = bin;
    nbin += (size_t)bin;
    if (one) {
      int rc = sl_error_set(e, SL_EARG, 0, 0, "the %s '%s' takes the single value %g in the "
                            "%zu complete rows", aux_word(s), c->name, v0, n);
      sl_est_prep_free(P);
      return rc;
    }
  }
  if (s->method == SL_FRONTDOOR && nbin > SL_ROUTE_BINARY_MAX) {
    sl_est_prep_free(P);
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu binary mediators: at most %d (the estimate sums "
                        "over their 2^k combinations)", nbin, SL_ROUTE_BINARY_MAX);
  }
  return SL_OK;
}

/* Each complete row's weight: a number at least 0, not missing, not all
** 0.  P is freed on an error. */
static int fill_weights(const sl_est_spec *s, sl_prep *P, sl_error *e) {
  if (!s->weights) return SL_OK;
  const sl_column *c = &s->data->col[s->weights - 1];
  int rc = SL_OK;
  if (c->type != SL_NUMERIC) {
    rc = sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' has text values: weights are numbers", c->name);
    sl_est_prep_free(P);
    return rc;
  }
  P->w = malloc(P->n * sizeof *P->w);
  if (!P->w) { sl_est_prep_free(P); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  double sum = 0;
  for (size_t k = 0; k < P->n && rc == SL_OK; k++) {
    double v = c->x[P->rows[k]];
    if (isnan(v))
      rc = sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' is missing at row %zu", c->name, P->rows[k] + 1);
    else if (!(v >= 0) || isinf(v))
      rc = sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' is %g at row %zu: weights must be finite and "
                        "not negative", c->name, v, P->rows[k] + 1);
    P->w[k] = v;
    sum += v;
  }
  if (rc == SL_OK && !(sum > 0))
    rc = sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' is 0 in every complete row", c->name);
  if (rc) sl_est_prep_free(P);
  return rc;
}

/* Whether a level's text names the treated arm of a two-level treatment. */
static int reads_treated(const char *v) {
  static const char *const yes[] = {"yes", "y", "true", "t", "treated", "exposed", "on", NULL};
  for (int i = 0; yes[i]; i++) if (strcasecmp(v, yes[i]) == 0) return 1;
  return 0;
}

int sl_est_pick_treated(const char *name, int num, const double seen[2], char txt[2][64],
                        const char *given, int *treated, sl_error *e) {
  *treated = 1;   /* default: the larger number, or the level that reads as treated */
  if (given) {
    int hit = -1;
    for (int i = 0; i < 2; i++) {
      char *end;
      double v = num ? strtod(given, &end) : 0;
      if (num ? (end != given && *end == 0 && v == seen[i]) : strcmp(given, txt[i]) == 0)
        hit = i;
    }
    if (hit < 0)
      return sl_error_set(e, SL_EARG, 0, 0, "treated = '%s' is not a value of '%s', whose values "
                          "are '%s' and '%s'", given, name, txt[0], txt[1]);
    *treated = hit;
  } else if (!num && reads_treated(txt[0]) && !reads_treated(txt[1])) *treated = 0;
  return SL_OK;
}

/* A treatment value as text: a level, or a number. */
static void value_text(const sl_column *c, double v, char *out, size_t size) {
  if (c->type == SL_NUMERIC) snprintf(out, size, "%.15g", v);
  else snprintf(out, size, "%s", c->levels[(size_t)v]);
}

/* P->t from the treatment column: numbers as they are, or a two-level
** treatment (numbers other than 0/1, text levels, or treated = given)
** coded 1 for the treated level and 0 for the other, whose texts go to
** P->t_level.  Counts the distinct values up to SL_FEW_VALUES + 1. */
static int code_treatment(const sl_est_spec *s, sl_prep *P, sl_error *e) {
  const sl_column *c = &s->data->col[s->treatment];
  int num = c->type == SL_NUMERIC;
  double seen[SL_FEW_VALUES + 1];
  size_t ns = 0;
  for (size_t m = 0; m < P->n && ns <= SL_FEW_VALUES; m++) {
    double v = num ? c->x[P->rows[m]] : (double)c->code[P->rows[m]];
    size_t j = 0;
    while (j < ns && seen[j] != v) j++;
    if (j == ns) seen[ns++] = v;
  }
  P->t_values = ns;
  int plain = num && ns == 2 && ((seen[0] == 0 && seen[1] == 1) || (seen[0] == 1 && seen[1] == 0));
  if (ns != 2 || (plain && !s->treated)) {
    if (!num)
      return sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' has %s%zu levels: a text treatment "
                          "needs two (f:binarize groups levels)", c->name,
                          ns > SL_FEW_VALUES ? "more than " : "", ns > SL_FEW_VALUES ? SL_FEW_VALUES : ns);
    if (s->treated && ns > 2)
      return sl_error_set(e, SL_EARG, 0, 0, "treated = applies to a two-level treatment, and '%s' "
                          "takes %s%zu values: use f:binarize", c->name,
                          ns > SL_FEW_VALUES ? "more than " : "", ns > SL_FEW_VALUES ? SL_FEW_VALUES : ns);
    for (size_t m = 0; m < P->n; m++) P->t[m] = c->x[P->rows[m]];
    return SL_OK;
  }
  char txt[2][64];
  if (seen[0] > seen[1]) { double v = seen[0]; seen[0] = seen[1]; seen[1] = v; }
  for (int i = 0; i < 2; i++) value_text(c, seen[i], txt[i], sizeof txt[i]);
  int treated, rc = sl_est_pick_treated(c->name, num, seen, txt, s->treated, &treated, e);
  if (rc) return rc;
  for (size_t m = 0; m < P->n; m++) {
    double v = num ? c->x[P->rows[m]] : (double)c->code[P->rows[m]];
    P->t[m] = v == seen[treated];
  }
  if (!plain || treated == 0) {
    memcpy(P->t_level[0], txt[1 - treated], sizeof txt[0]);
    memcpy(P->t_level[1], txt[treated], sizeof txt[0]);
  }
  return SL_OK;
}

/* A row's cluster value: a number, or a category's code. */
static double cluster_value(const sl_column *c, size_t r) {
  return c->type == SL_NUMERIC ? c->x[r] : (double)c->code[r];
}

/* Order frame rows by cluster value, then row. */
static const sl_column *sort_col;
static int by_cluster(const void *a, const void *b) {
  size_t i = *(const size_t *)a, j = *(const size_t *)b;
  double x = cluster_value(sort_col, i), y = cluster_value(sort_col, j);
  return x < y ? -1 : x > y ? 1 : (i > j) - (i < j);
}

/* Each complete row's cluster, numbered in the order of the values, and
** the rows of each cluster; one cluster only is an error.  P is freed on
** an error. */
static int fill_clusters(const sl_est_spec *s, sl_prep *P, sl_error *e) {
  if (!s->cluster) return SL_OK;
  size_t n = P->n;
  const sl_column *c = &s->data->col[s->cluster - 1];
  P->cluster = malloc(n * sizeof *P->cluster);
  P->cl_rows = malloc(n * sizeof *P->cl_rows);
  P->cl_start = malloc((n + 1) * sizeof *P->cl_start);
  if (!P->cluster || !P->cl_rows || !P->cl_start) {
    sl_est_prep_free(P);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t k = 0; k < n; k++) P->cl_rows[k] = k;
  /* sort positions among the complete rows by their frame rows' values */
  for (size_t k = 0; k < n; k++) P->cluster[k] = P->rows[k];
  sort_col = c;   /* estimates are prepared one at a time */
  qsort(P->cluster, n, sizeof *P->cluster, by_cluster);
  size_t g = 0;
  for (size_t k = 0; k < n; k++) {   /* frame row -> position: rows increase */
    size_t r = P->cluster[k], lo = 0, hi = n;
    while (lo < hi) { size_t mid = (lo + hi) / 2; if (P->rows[mid] < r) lo = mid + 1; else hi = mid; }
    if (k > 0 && cluster_value(c, r) != cluster_value(c, P->rows[P->cl_rows[k - 1]])) {
      g++;
      P->cl_start[g] = k;
    }
    P->cl_rows[k] = lo;
  }
  P->cl_start[0] = 0;
  P->nclusters = g + 1;
  P->cl_start[P->nclusters] = n;
  for (size_t c2 = 0; c2 < P->nclusters; c2++)
    for (size_t k = P->cl_start[c2]; k < P->cl_start[c2 + 1]; k++) P->cluster[P->cl_rows[k]] = c2;
  if (P->nclusters < 2) {
    int rc = sl_error_set(e, SL_EARG, 0, 0, "cluster = '%s' holds one cluster in the %zu complete "
                          "rows: clustered standard errors need two or more", c->name, n);
    sl_est_prep_free(P);
    return rc;
  }
  return SL_OK;
}

int sl_est_check_kinds(const sl_est_spec *s, int bin_t, int bin_y, const char *tname, sl_error *e) {
  if (!bin_t && s->method == SL_FRONTDOOR)
    return sl_error_set(e, SL_EARG, 0, 0, "treatment = '%s' takes values other than 0 and 1, and "
                        "method = \"frontdoor\" needs a 0/1 treatment: use f:binarize", tname);
  if (!bin_t && s->method != SL_STANDARDIZE && s->method != SL_IV)
    return sl_error_set(e, SL_EARG, 0, 0, "%s needs a 0/1 treatment, and '%s' takes other values: "
                        "use f:binarize, or method = \"standardize\" for a continuous treatment",
                        s->method == SL_IPW ? "ipw" : "aipw", tname);
  if (!bin_t && s->estimand != SL_ATE)
    return sl_error_set(e, SL_EARG, 0, 0, "ATT and ATC need a 0/1 treatment");
  if (s->scale == SL_ODDS_RATIO && !bin_y)
    return sl_error_set(e, SL_EARG, 0, 0, "an odds ratio needs a 0/1 outcome");
  return SL_OK;
}

int sl_est_prepare(const sl_est_spec *s, sl_prep *P, size_t *dropped, sl_error *e) {
  memset(P, 0, sizeof *P);
  int rc = sl_est_check_roles(s, e);
  if (rc) return rc;
  const sl_frame *f = s->data;
  size_t nr = f->nrow;
  unsigned char *keep = malloc(nr ? nr : 1);
  if (!keep) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  size_t n = 0;
  for (size_t r = 0; r < nr; r++) {
    int ok = !missing(&f->col[s->treatment], r) &&
             (s->outcome < 0 || !missing(&f->col[s->outcome], r));
    for (size_t i = 0; ok && i < s->nset; i++) ok = !missing(&f->col[s->set[i]], r);
    for (size_t i = 0; ok && i < s->naux; i++) ok = !missing(&f->col[s->aux[i]], r);
    if (ok && s->cluster) ok = !missing(&f->col[s->cluster - 1], r);
    keep[r] = (unsigned char)ok;
    n += (size_t)ok;
  }
  *dropped = nr - n;
  if (n == 0) {
    free(keep);
    return sl_error_set(e, SL_EARG, 0, 0, "no rows are left after dropping the %zu with missing "
                        "values in the treatment, outcome or set%s", nr,
                        s->naux ? (s->method == SL_FRONTDOOR ? " or mediators" : " or instruments") : "");
  }
  /* covariate design columns: numbers as they are, categories as dummies
  ** for every level but the first seen in the complete rows */
  size_t q = 0, namelen = 0;
  for (size_t i = 0; i < s->nset; i++) {
    const sl_column *c = &f->col[s->set[i]];
    q += c->type == SL_NUMERIC ? 1 : (c->nlevels ? c->nlevels - 1 : 0);
    namelen += (strlen(c->name) + 2) * (c->type == SL_NUMERIC ? 1 : c->nlevels + 1);
    for (size_t l = 0; c->type != SL_NUMERIC && l < c->nlevels; l++) namelen += strlen(c->levels[l]);
  }
  P->n = n; P->q = q;
  P->rows = malloc(n * sizeof *P->rows);
  P->t = malloc(n * sizeof *P->t); P->y = malloc(n * sizeof *P->y);
  P->C = malloc((n * q > 0 ? n * q : 1) * sizeof *P->C);
  P->cnames = calloc(q + 1, sizeof *P->cnames);
  P->onames = calloc(2 * q + 2, sizeof *P->onames);
  P->pnames = calloc(q + 1, sizeof *P->pnames);
  /* names: the covariate terms, then "t:term" for each */
  P->namebuf = malloc(2 * namelen + (strlen(f->col[s->treatment].name) + 2) * (q + 1) + 64);
  if (!P->rows || !P->t || !P->y || !P->C || !P->cnames || !P->onames || !P->pnames || !P->namebuf) {
    free(keep); sl_est_prep_free(P);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  char *nb = P->namebuf;
  size_t k = 0;
  for (size_t r = 0; r < nr; r++) if (keep[r]) P->rows[k++] = r;
  free(keep);
  const char *tname = f->col[s->treatment].name;
  size_t j = 0;
  for (size_t i = 0; i < s->nset; i++) {
    const sl_column *c = &f->col[s->set[i]];
    if (c->type == SL_NUMERIC) {
      for (size_t m = 0; m < n; m++) P->C[m * q + j] = c->x[P->rows[m]];
      P->cnames[j++] = nb;
      nb += sprintf(nb, "%s", c->name) + 1;
    } else {
      for (size_t l = 1; l < c->nlevels; l++) {
        for (size_t m = 0; m < n; m++) P->C[m * q + j] = c->code[P->rows[m]] == (int32_t)l;
        P->cnames[j++] = nb;
        nb += sprintf(nb, "%s=%s", c->name, c->levels[l]) + 1;
      }
    }
  }
  P->onames[0] = P->pnames[0] = "(intercept)";
  P->onames[1] = tname;
  for (size_t m = 0; m < q; m++) { P->onames[2 + m] = P->cnames[m]; P->pnames[1 + m] = P->cnames[m]; }
  for (size_t m = 0; m < q; m++) {
    P->onames[2 + q + m] = nb;
    nb += sprintf(nb, "%s:%s", tname, P->cnames[m]) + 1;
  }
  if ((rc = code_treatment(s, P, e))) { sl_est_prep_free(P); return rc; }
  for (size_t m = 0; m < n; m++)
    P->y[m] = s->outcome >= 0 ? f->col[s->outcome].x[P->rows[m]] : P->t[m];
  P->bin_t = is_binary(P->t, n);
  P->bin_y = is_binary(P->y, n);
  if ((rc = fill_aux(s, P, e))) return rc;
  if ((rc = fill_clusters(s, P, e))) return rc;
  if ((rc = fill_weights(s, P, e))) return rc;
  double t0 = P->t[0];
  int one = 1;
  for (size_t m = 1; m < n && one; m++) one = P->t[m] == t0;
  if (one) {
    sl_est_prep_free(P);
    return sl_error_set(e, SL_EARG, 0, 0, "the treatment '%s' takes the single value %g in the "
                        "%zu complete rows", tname, t0, n);
  }
  if ((rc = sl_est_check_kinds(s, P->bin_t, P->bin_y, tname, e))) { sl_est_prep_free(P); return rc; }
  return SL_OK;
}

/* The result from the whole sample's point and the replicates (either
** place: a frame here, a lazy table in estimate_db.c). */
int sl_est_report(const sl_est_spec *s, const sl_point *pt, const sl_est_info *I, double *boot,
                  sl_est_result *res, sl_error *e) {
  if (s->scale == SL_RATIO && !(pt->mu0 > 0 && pt->mu1 >= 0))
    return sl_error_set(e, SL_EARG, 0, 0, "scale = \"ratio\" needs positive mean outcomes, and the "
                        "mean of '%s' is %g under control and %g under treatment: their ratio is "
                        "not meaningful; use scale = \"difference\"", I->yname, pt->mu0, pt->mu1);
  res->estimate = pt->est;
  res->mu1 = pt->mu1; res->mu0 = pt->mu0;
  res->n = I->n;
  res->ess = pt->ess; res->ess1 = pt->ess1; res->ess0 = pt->ess0;
  res->ps_min = pt->ps_min; res->ps_max = pt->ps_max; res->ps_extreme = pt->ps_extreme;
  res->binary_outcome = I->bin_y; res->binary_treatment = I->bin_t;
  res->route = pt->route;
  if (I->nclusters && I->nclusters < SL_CLUSTERS_FEW) {
    char m[200];
    snprintf(m, sizeof m, "%zu clusters: clustered standard errors are too small with fewer "
             "than %d (common practice); read the interval with care", I->nclusters, SL_CLUSTERS_FEW);
    sl_est_warn(res->warnings, m);
  }
  res->nclusters = I->nclusters;
  res->ess_weights = I->ess_weights;
  memcpy(res->control_level, I->t_level[0], sizeof res->control_level);
  memcpy(res->treated_level, I->t_level[1], sizeof res->treated_level);
  if (!I->bin_t && I->t_values <= SL_FEW_VALUES && s->method != SL_IV) {
    char m[240];
    snprintf(m, sizeof m, "the treatment '%s' takes only %zu distinct values and is estimated as "
             "continuous (the effect of +%g): if its values are categories, compare two of them "
             "with f:binarize", I->tname, I->t_values, s->contrast);
    sl_est_warn(res->warnings, m);
  }
  if (s->method != SL_STANDARDIZE && pt->ps_extreme) {
    char m[160];
    snprintf(m, sizeof m, "%zu fitted propensities fall outside [0.01, 0.99]: check overlap{}",
             pt->ps_extreme);
    sl_est_warn(res->warnings, m);
  }
  return sl_est_intervals(s, pt, boot, res, e);
}

/* What the result says of the prepared rows (sl_est_report). */
static void info_of(const sl_est_spec *s, const sl_prep *P, sl_est_info *I) {
  *I = (sl_est_info){P->n, P->nclusters, P->t_values, P->bin_t, P->bin_y, 0, {{0}},
                     s->data->col[s->treatment].name,
                     s->outcome >= 0 ? s->data->col[s->outcome].name : NULL};
  memcpy(I->t_level, P->t_level, sizeof I->t_level);
  if (P->w) {
    double sw = 0, sw2 = 0;
    for (size_t k = 0; k < P->n; k++) { sw += P->w[k]; sw2 += P->w[k] * P->w[k]; }
    I->ess_weights = sw * sw / sw2;
  }
}

int sl_estimate(const sl_est_spec *s, sl_est_result *res, sl_error *e) {
  memset(res, 0, sizeof *res);
  if (s->table) return sl_estimate_db(s, res, e);
  if (s->outcome < 0) return sl_error_set(e, SL_EARG, 0, 0, "an estimate needs an outcome column");
  sl_prep P;
  int rc = sl_est_prepare(s, &P, &res->dropped, e);
  if (rc) return rc;
  size_t *ix = malloc(P.n * sizeof *ix);
  double *boot = NULL;
  if (!ix) { sl_est_prep_free(&P); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  for (size_t i = 0; i < P.n; i++) ix[i] = i;
  sl_point pt;
  rc = sl_est_point(s, &P, ix, P.n, 1, &pt, res->warnings, e);
  if (rc) goto done;
  sl_est_info I;
  info_of(s, &P, &I);
  if (s->boot > 0) {
    boot = malloc(s->boot * sizeof *boot);
    if (!boot) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
    if ((rc = sl_est_bootstrap(s, &P, boot, e))) goto done;
  }
  rc = sl_est_report(s, &pt, &I, boot, res, e);
done:
  free(ix); free(boot);
  sl_est_prep_free(&P);
  return rc;
}

/* A frame's complete rows as sums. */
typedef struct frame_summer { sl_prep P; size_t *ix; sl_frame_rows rows; } frame_summer;

int sl_est_summer_open(const sl_est_spec *s, sl_summer *S, void **handle, sl_est_info *I,
                       size_t *dropped, sl_error *e) {
  frame_summer *h = calloc(1, sizeof *h);
  *handle = NULL;
  if (!h) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int rc = sl_est_prepare(s, &h->P, dropped, e);
  if (rc) { free(h); return rc; }
  if (!(h->ix = malloc(h->P.n * sizeof *h->ix))) {
    sl_est_summer_close(h);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t i = 0; i < h->P.n; i++) h->ix[i] = i;
  h->rows = (sl_frame_rows){&h->P, h->ix, h->P.n};
  sl_summer_frame(S, &h->rows);
  info_of(s, &h->P, I);
  *handle = h;
  return SL_OK;
}

void sl_est_summer_close(void *handle) {
  frame_summer *h = handle;
  if (!h) return;
  free(h->ix);
  sl_est_prep_free(&h->P);
  free(h);
}
