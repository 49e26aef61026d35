/*
** evaluate.h: the plug-in value of an identification formula (identify.h)
** on discrete data: every P(a | b) of the formula is the weighted share of
** the rows with a among those with b, and the sums run over the values
** each variable takes in the data.  With a frame that holds each cell of a
** joint distribution once, weighted by its probability, the value is that
** of the distribution itself.
*/
#ifndef SL_EVALUATE_H
#define SL_EVALUATE_H

#include <stddef.h>
#include <stdint.h>
#include "error.h"
#include "frame.h"
#include "identify.h"

/* Documented limits. */
#define SL_EVAL_MAX_CELLS (1u << 24)   /* cells of the count table of one P(a | b) */
#define SL_EVAL_MAX_TERMS 1e9          /* terms the formula's sums may add up */

typedef struct sl_eval sl_eval;

/* Mark used[v] for every variable the formula mentions (nvar entries). */
void sl_eval_used(const sl_idx *root, unsigned char *used);

/* Prepare: col[v] is the frame column of each variable the formula uses
** (-1 for the others), names[v] its name for messages; wcol the column
** of frequency weights or -1.  Columns must be categorical or hold whole
** numbers, with no missing value; weights finite, non-negative, not all
** zero.  Errors name the column and the row (1-based). */
sl_eval *sl_eval_alloc(const sl_idx *root, size_t nvar, const sl_frame *f, const int *col,
                       const char *const *names, int wcol, volatile int *stop,
                       sl_error *e);
void sl_eval_free(sl_eval *w);

/* The values of variable v in the data, sorted (numbers by value, texts
** bytewise): how many, and the k-th as text (numbers as "%.17g" shortest)
** with *is_number set for a numeric column and *number its value. */
size_t sl_eval_nlevels(const sl_eval *w, int32_t v);
const char *sl_eval_level(const sl_eval *w, int32_t v, size_t k, int *is_number,
                          double *number);
/* The index of a value (text for a categorical column, number for a
** numeric one), or -1 when the data never hold it. */
long sl_eval_find(const sl_eval *w, int32_t v, const char *text, double number);

/* The value of the formula with each free variable v at level val[v].  An
** empty stratum the value needs is an error ("no rows with m = 1, x = 0");
** then *gap is the part of the formula that needed it (for its text). */
int sl_eval_run(sl_eval *w, const int32_t *val, double *out, const sl_idx **gap,
                sl_error *e);

#endif
