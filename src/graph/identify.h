/*
** identify.h: identification of a causal effect P(y | do(x)), and of a
** conditional one P(y | do(x), z), in a graph with hidden nodes and <->
** edges:
**
**   latent projection of the hidden nodes onto the observed ADMG: Verma
**     and Pearl 1990; Tian and Pearl 2002 (AAAI), section 2;
**   c-components and Q-factors: Tian and Pearl 2002;
**   the ID algorithm, sound and complete for P(y | do(x)): Shpitser and
**     Pearl 2006 (AAAI, "Identification of joint interventional
**     distributions in recursive semi-Markovian causal models", Fig. 3),
**     and its hedge criterion;
**   IDC for P(y | do(x), z), also complete: Shpitser and Pearl 2006 (UAI,
**     "Identification of conditional interventional distributions").
**
** The result is an expression tree over the observed variables (sums,
** products, quotients of conditional probabilities of the observed joint),
** simplified (identify_simplify.c) and printed as text or LaTeX
** (identify_print.c); src/stats/evaluate.c evaluates it on data.
*/
#ifndef SL_IDENTIFY_H
#define SL_IDENTIFY_H

#include <stddef.h>
#include <stdint.h>
#include "graph.h"

/* Documented limits. */
#define SL_ID_MAX_OBSERVED 100000   /* observed nodes g:identify accepts */
#define SL_ID_MAX_TEXT (1u << 24)   /* bytes of a printed formula */

enum sl_idx_kind {
  SL_IDX_ONE = 0,       /* the constant 1 */
  SL_IDX_PROB,          /* P(a | b) of the observed joint distribution */
  SL_IDX_PRODUCT,       /* kid[0] kid[1] ... */
  SL_IDX_SUM,           /* sum over the variables a of kid[0] */
  SL_IDX_QUOTIENT       /* kid[0] / kid[1] */
};

/* A node of the expression.  Variables are observed-node indices
** (0 .. nvar-1 of sl_identification), each set sorted ascending.  A sum
** binds its variables in its body (lexical scope): inside, a summed
** variable means the bound one, which printing marks with a prime when
** the name is already in use outside. */
typedef struct sl_idx {
  int kind;                      /* sl_idx_kind */
  int32_t head;                  /* a variable this is a conditional
                                    distribution of (sums to 1 over it), or -1 */
  const int32_t *a;              /* PROB: left side; SUM: summed variables */
  size_t na;
  const int32_t *b;              /* PROB: right side */
  size_t nb;
  const struct sl_idx *const *kid;
  size_t nkid;
  const int32_t *fv;             /* free variables */
  size_t nfv;
  int simple;                    /* already through the simplifier */
} sl_idx;

typedef struct sl_idpool sl_idpool;

/* The answer to one query.  Variables are the observed nodes; var_node
** maps each to its id in the graph, var_pos to its position in the
** graph's topological order (sl_graph_order restricted to observed
** nodes). */
typedef struct sl_identification {
  int identified;
  const sl_idx *expr;            /* the formula, when identified */
  size_t nvar;
  int32_t *var_node, *var_pos;
  int32_t *x, *y, *z;            /* the query, as variables, sorted */
  size_t nx, ny, nz;
  int32_t *hedge_f, *hedge_f2;   /* not identified: the hedge, as variables */
  size_t nf, nf2;
  int32_t *hedge_x, *hedge_y;    /* the query the hedge was found for (IDC
                                    may have moved members of z into x and
                                    asks for y and the rest of z jointly) */
  size_t nhx, nhy;
  sl_idpool *pool;               /* owns the expression */
} sl_identification;

/* Identify P(y | do(x), z) (z may be empty: P(y | do(x))).  x and y must
** be non-empty; x, y and z disjoint and observed.  *out is filled; free it
** with sl_identification_free.  stop, when set and nonzero, ends the
** search with SL_ELIMIT ("interrupted"). */
int sl_identify(const sl_graph *g, const int32_t *x, size_t nx, const int32_t *y,
                size_t ny, const int32_t *z, size_t nz, sl_identification *out,
                volatile int *stop, sl_error *e);
void sl_identification_free(sl_identification *r);

/* The latent projection of g: a graph of its observed nodes with a -> b
** for every directed path from a to b whose inner nodes are all hidden,
** and a <-> b for every pair that shares a hidden ancestor through such
** paths (a <-> edge counts as a hidden parent of both ends). */
sl_graph *sl_latent_project(const sl_graph *g, sl_error *e);

/* Text of the formula: "P(y | do(x)) = ..." (latex: the same in LaTeX
** math).  The text is malloc'd; NULL when out of memory or over
** SL_ID_MAX_TEXT. */
char *sl_identification_text(const sl_identification *r, const sl_graph *g, int latex);
/* The text of one expression node alone (no left side), for messages. */
char *sl_idx_text(const sl_identification *r, const sl_graph *g, const sl_idx *x,
                  int latex);

#endif
