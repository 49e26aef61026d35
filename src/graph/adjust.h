/*
** adjust.h: covariate adjustment for the total effect of X on Y.
**
**   the adjustment criterion: Shpitser, VanderWeele and Robins 2010; for
**     graphs with hidden confounding (<-> edges, hidden nodes): van der
**     Zander, Liskiewicz and Textor 2014, 2019 (Artificial Intelligence 270);
**   Pearl's back-door criterion (Pearl 2009, Causality, section 3.3.1);
**   minimal sets: the minimal X-Y separators of the augmented proper
**     back-door graph, listed from the one closest to X by the neighbourhood
**     step of Kloks and Kratsch 1998 (SIAM J. Computing 27);
**   the optimal set: O(X, Y) = pa(cn(X, Y)) \ forb(X, Y) of Henckel,
**     Perkovic and Maathuis 2022 (JRSS B 84) grown by the collider walk of
**     Runge 2021 (NeurIPS) for hidden nodes and <-> edges (optimal.c);
**   the cheapest set: a minimum vertex cut (van der Zander et al. 2019).
*/
#ifndef SL_ADJUST_H
#define SL_ADJUST_H

#include "graph.h"
#include "separation.h"

/* The structure of the question "effect of X on Y": computed once. */
typedef struct sl_effect {
  const sl_graph *g;
  size_t n;
  unsigned char *in_x, *in_y;
  unsigned char *cn;      /* on a proper causal path from X to Y (not X) */
  unsigned char *forb;    /* descendants of cn, and X: never adjusted for */
  unsigned char *de_x;    /* proper descendants of X */
  int32_t *x, *y;
  size_t nx, ny;
} sl_effect;

/* X and Y must be non-empty, disjoint and observed. */
int sl_effect_init(sl_effect *q, const sl_graph *g, const int32_t *x, size_t nx,
                   const int32_t *y, size_t ny, sl_error *e);
void sl_effect_free(sl_effect *q);

enum sl_reason_kind {
  SL_WHY_HIDDEN = 1,       /* a hidden node cannot be adjusted for */
  SL_WHY_TREATMENT,        /* the set holds a treatment */
  SL_WHY_OUTCOME,          /* the set holds an outcome */
  SL_WHY_MEDIATOR,         /* on a proper causal path: path holds it */
  SL_WHY_DESCENDANT,       /* descends from via, which is on path */
  SL_WHY_DESC_TREATMENT,   /* back-door only: a descendant of a treatment */
  SL_WHY_OPEN,             /* a non-causal trail left open: path */
  SL_WHY_NO_CAUSAL_PATH,   /* optimal: no outcome descends from a treatment */
  SL_WHY_BIDIRECTED,       /* optimal: <-> edges put it outside the theory */
  SL_WHY_FD_MISSED = 20,   /* front-door: path is a directed x-y path the set misses */
  SL_WHY_FD_FROM_X,        /* front-door: path is an open back-door trail x .. node */
  SL_WHY_FD_TO_Y,          /* front-door: path, node .. y, is open given x */
  SL_WHY_FD_NONE,          /* front-door: no allowed node intercepts path */
  SL_WHY_IV_IRRELEVANT,    /* instrument: node is d-separated from x given the set */
  SL_WHY_IV_OPEN,          /* instrument: path, node .. y, open given the set */
  SL_WHY_IV_FORBIDDEN,     /* instrument: node descends from via (y or a mediator) */
  SL_WHY_NO_VALID_SET = 40, /* optimal: no valid set, so no optimal one */
  SL_WHY_NOT_JOINT,        /* optimal: the gathered set is not valid as a whole */
  SL_WHY_TRADEOFF,         /* optimal: node sharpens the outcome (through via)
                              but informs the treatment along path, which a
                              valid set without it leaves open */
  SL_WHY_RIVAL             /* optimal: follows SL_WHY_TRADEOFF; path holds
                              that valid set (npath members, no steps) */
};

typedef struct sl_reason {
  int kind;
  int32_t node;            /* the member concerned, or -1 */
  int32_t via;             /* SL_WHY_DESCENDANT: the causal-path node */
  int32_t *path;           /* nodes of the trail, npath of them */
  unsigned char *steps;    /* npath - 1 steps */
  size_t npath;
} sl_reason;

typedef struct sl_reasons { sl_reason *r; size_t n, cap; } sl_reasons;
void sl_reasons_free(sl_reasons *rs);

/* The adjustment criterion.  *ok is 1 when z is an adjustment set; else
** every reason is appended to rs (at most max_open open trails). */
int sl_admissible(const sl_effect *q, const int32_t *z, size_t nz, int *ok,
                  sl_reasons *rs, size_t max_open, sl_error *e);

/* Pearl's back-door criterion (stricter). */
int sl_backdoor(const sl_effect *q, const int32_t *z, size_t nz, int *ok,
                sl_reasons *rs, size_t max_open, sl_error *e);

/* Called with each minimal adjustment set (ids sorted by name); return
** nonzero to stop. */
typedef int (*sl_set_fn)(void *ctx, const int32_t *set, size_t n);

/* Every minimal adjustment set containing require and avoiding forbid
** (marks, may be NULL).  When none exists, *none is set and reason (if not
** NULL) receives an open trail that no allowed set can block. */
int sl_adjust_each(const sl_effect *q, sl_mark forbid, sl_mark require,
                   sl_set_fn fn, void *ctx, int *none, sl_reasons *reason,
                   volatile int *stop, sl_error *e);

/* The optimal adjustment set (optimal.c).  *ok is 0 when none exists,
** with the reasons in rs: no causal path, no valid set (after the hidden
** parents of cn), or the members whose precision on the outcome trades
** against information on the treatment, each with a rival valid set.
** *set is the set the reasons speak of. */
int sl_optimal(const sl_effect *q, int32_t **set, size_t *n, int *ok,
               sl_reasons *rs, sl_error *e);

/* The minimum-cost adjustment set for the given costs per node (NULL: 1
** each; costs must be finite and >= 0).  *ok is 0 when no set exists. */
int sl_cheapest(const sl_effect *q, const double *cost, int32_t **set, size_t *n,
                double *total, int *ok, sl_error *e);

#endif
