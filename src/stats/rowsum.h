/*
** rowsum.h: the sums the estimators need, asked once and answered in two
** places.  An estimator describes per-row values (small expression trees
** over a row's variables: treatment, outcome, weight, covariates) and the
** aggregates it wants over the rows (sums of products of up to three
** values, minima, maxima); a data frame answers in C (rowsum.c), a lazy
** table in one SQL query (rowsum_sql.c).  The standardization, IPW and
** AIPW estimators and their working models are written once over this
** interface (sumest.c, sumfit.c).
**
** Replicates: one request may carry R replicates, each with its own
** parameter values (a replicate's coefficients) and its own row weight,
** the variable SL_RV_BOOT: 1 in replicate 0 (the whole sample) and a
** Poisson(1) draw from the row's key, the seed and r in replicate r > 0
** (the Poisson bootstrap; poisson_weight.h).  The answer holds R rows of
** aggregates.
*/
#ifndef SL_ROWSUM_H
#define SL_ROWSUM_H

#include <stddef.h>
#include <stdint.h>
#include "frame.h"

/* A row's variables. */
enum { SL_RV_T = 0,    /* the treatment, 0/1 when binary */
       SL_RV_Y,        /* the outcome */
       SL_RV_W,        /* the row's weight (1 without weights =) */
       SL_RV_BOOT,     /* the replicate's weight of the row */
       SL_RV_C0 };     /* SL_RV_C0 + j: covariate design column j */

enum sl_rx_op { SL_RX_NUM, SL_RX_VAR, SL_RX_PAR, SL_RX_VAL,
                SL_RX_ADD, SL_RX_SUB, SL_RX_MUL, SL_RX_DIV,
                SL_RX_EXPIT,       /* 1 / (1 + exp(-a)), without overflow */
                SL_RX_LOG1PEXP,    /* log(1 + exp(a)), without overflow */
                SL_RX_LT };        /* 1 when a < b, else 0 */

typedef struct sl_rx_node { int op, a, b; double x; } sl_rx_node;

/* The values of one request: value v is the tree rooted at root[v], which
** may refer to earlier values (SL_RX_VAL) and to parameters (SL_RX_PAR,
** a column of the replicates' parameter matrix). */
typedef struct sl_rx {
  sl_rx_node *node;
  size_t n, cap;
  int *root;
  size_t nval, valcap;
  int bad;               /* out of memory while building */
} sl_rx;

void sl_rx_init(sl_rx *x);
void sl_rx_free(sl_rx *x);
void sl_rx_clear(sl_rx *x);
/* Nodes; each returns its index (or -1 after a failure, kept in x->bad). */
int sl_rx_num(sl_rx *x, double v);
int sl_rx_var(sl_rx *x, int var);
int sl_rx_par(sl_rx *x, int j);
int sl_rx_op2(sl_rx *x, int op, int a, int b);
int sl_rx_op1(sl_rx *x, int op, int a);
/* A new value from the tree at node; returns its index v.  sl_rx_ref
** gives a node that reads value v. */
int sl_rx_value(sl_rx *x, int node);
int sl_rx_ref(sl_rx *x, int v);
/* sum_j par[first + j] * term[j]: a linear predictor whose coefficients
** are parameters. */
int sl_rx_linear(sl_rx *x, const int *term, size_t p, int first);

/* An aggregate over the rows: SUM of the product of values a, b, c (-1:
** left out), or MIN or MAX of value a. */
enum { SL_AGG_SUM = 0, SL_AGG_MIN, SL_AGG_MAX };
typedef struct sl_agg { int kind, a, b, c; } sl_agg;

typedef struct sl_sum_req {
  const sl_rx *rx;
  const sl_agg *agg;
  size_t nagg;
  const double *par;     /* nrep x npar, row-major */
  size_t npar, nrep;
  const int *rep;        /* nrep replicate numbers (0: the whole sample) */
} sl_sum_req;

/* What answers: out gets nrep x nagg numbers.  cluster_ss gives, for
** replicate 0, the sum over clusters of the square of the sum of value v
** within each, and the number of clusters. */
typedef struct sl_summer {
  void *ctx;
  int (*sums)(void *ctx, const sl_sum_req *q, double *out, sl_error *e);
  int (*cluster_ss)(void *ctx, const sl_rx *rx, int v, const double *par, size_t npar,
                    double *ss, size_t *groups, sl_error *e);
  /* value v's percentiles pct[0..k) over the rows, type 7 (replicate 0);
  ** NULL where not available */
  int (*quantiles)(void *ctx, const sl_rx *rx, int v, const double *par, const double *pct,
                   size_t k, double *out, sl_error *e);
  size_t q;              /* covariate design columns */
  const char *const *onames;   /* outcome-model terms: (intercept), t, C, t:C */
  const char *const *pnames;   /* propensity-model terms: (intercept), C */
  size_t n;              /* rows summed */
  int has_cluster;
} sl_summer;

/* A frame's answer: the rows ix[0..n) of an estimator's prepared data
** (estimate_internal.h); replicate 0 only. */
struct sl_prep;
typedef struct sl_frame_rows { const struct sl_prep *P; const size_t *ix; size_t n; } sl_frame_rows;
void sl_summer_frame(sl_summer *s, sl_frame_rows *rows);

/* A lazy table's answer (rowsum_sql.c): one query per request, the
** variables computed from the table's columns by SQL (var[k], in which
** each byte SL_DB_SLOT takes the next of the bound values vpar, in the
** order of the variables), over the rows where cond holds (the complete
** rows); key: the SQL of the rows' integer key (for the Poisson weights)
** or NULL; cluster: the SQL of the cluster, or NULL. */
#define SL_DB_SLOT '\x01'
struct sl_db_table;
struct sl_db_param;
typedef struct sl_db_vars {
  const struct sl_db_table *t;
  size_t nvar;                 /* SL_RV_C0 + q */
  char **var;                  /* nvar; var[SL_RV_BOOT] unused */
  struct sl_db_param *vpar;
  size_t nvpar;
  char *cond, *key, *cluster;
  uint64_t seed;               /* of the Poisson weights */
} sl_db_vars;
void sl_summer_db(sl_summer *s, sl_db_vars *v);

#endif
