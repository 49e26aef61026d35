/*
** evaluate.c: the plug-in value of an identification formula on a discrete
** frame.  Each distinct variable set of the formula gets one dense table of
** weighted counts; a probability is a ratio of two cells.  An undefined
** value (an empty stratum) is a NaN that a zero factor absorbs (0 times
** anything is 0, as in a sum over a value the data never take); one that
** reaches the top is traced back to the stratum that caused it.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "evaluate.h"

typedef struct table {
  int32_t *vars;            /* the variable set, ascending */
  size_t nvars;
  size_t *stride;
  double *count;
} table;

typedef struct slot { const sl_idx *atom; table *joint, *cond; } slot;

struct sl_eval {
  const sl_idx *root;
  size_t nvar, nrow;
  const char *const *names;
  int32_t **level;          /* per used variable: the level of each row */
  size_t *nlev;
  char ***text;             /* per used variable: level texts */
  double **num;             /* numeric columns: level values */
  double *weight;           /* per row */
  double total;
  table *tab;
  size_t ntab, captab;
  slot *slots;              /* open addressing by atom pointer */
  size_t nslot;
  int32_t *env;             /* the current value of each variable */
  volatile int *stop;
  unsigned long ticks;
  int interrupted;
  /* the first empty stratum found */
  const sl_idx *gap;
  int32_t *gap_vars, *gap_vals;
  size_t ngap;
};

static void mark_used(const sl_idx *x, unsigned char *used) {
  for (size_t i = 0; i < x->na; i++) used[x->a[i]] = 1;
  for (size_t i = 0; i < x->nb; i++) used[x->b[i]] = 1;
  for (size_t i = 0; i < x->nkid; i++) mark_used(x->kid[i], used);
}

void sl_eval_used(const sl_idx *root, unsigned char *used) { mark_used(root, used); }

void sl_eval_free(sl_eval *w) {
  if (!w) return;
  for (size_t v = 0; v < w->nvar; v++) {
    free(w->level[v]);
    if (w->text[v]) for (size_t k = 0; k < w->nlev[v]; k++) free(w->text[v][k]);
    free(w->text[v]);
    free(w->num[v]);
  }
  for (size_t t = 0; t < w->ntab; t++) {
    free(w->tab[t].vars); free(w->tab[t].stride); free(w->tab[t].count);
  }
  free(w->level); free(w->nlev); free(w->text); free(w->num); free(w->weight);
  free(w->tab); free(w->slots); free(w->env); free(w->gap_vars); free(w->gap_vals);
  free(w);
}

static int cmp_double(const void *pa, const void *pb) {
  double a = *(const double *)pa, b = *(const double *)pb;
  return (a > b) - (a < b);
}

/* The text of a number level: the shortest "%.*g" that reads back. */
static char *number_text(double x) {
  char buf[40];
  for (int p = 1; p <= 17; p++) {
    snprintf(buf, sizeof buf, "%.*g", p, x);
    if (strtod(buf, NULL) == x) break;
  }
  return strdup(buf);
}

/* Levels of a numeric column of whole numbers. */
static int numeric_levels(sl_eval *w, int32_t v, const sl_column *c, sl_error *e) {
  size_t n = w->nrow, k = 0;
  double *s = malloc((n ? n : 1) * sizeof *s);
  if (!s) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; i < n; i++) {
    double x = c->x[i];
    if (x != x) { free(s); return sl_error_set(e, SL_EARG, 0, 0, "column '%s' has a missing value in row %zu; evaluate needs every row complete", c->name, i + 1); }
    if (!isfinite(x) || x != floor(x) || fabs(x) > 9007199254740992.0) {
      free(s);
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' is continuous (row %zu holds %g); "
                          "evaluate needs categorical or integer-coded columns", c->name, i + 1, x);
    }
    s[i] = x;
  }
  qsort(s, n, sizeof *s, cmp_double);
  for (size_t i = 0; i < n; i++) if (!k || s[k - 1] != s[i]) s[k++] = s[i];
  w->num[v] = s;
  w->nlev[v] = k;
  w->text[v] = calloc(k ? k : 1, sizeof *w->text[v]);
  if (!w->text[v]) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t j = 0; j < k; j++)
    if (!(w->text[v][j] = number_text(s[j]))) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; i < n; i++) {
    size_t lo = 0, hi = k;
    while (hi - lo > 1) { size_t mid = (lo + hi) / 2; if (s[mid] <= c->x[i]) lo = mid; else hi = mid; }
    w->level[v][i] = (int32_t)lo;
  }
  return SL_OK;
}

/* Levels of a categorical column: the levels some row takes. */
static int categorical_levels(sl_eval *w, int32_t v, const sl_column *c, sl_error *e) {
  int32_t *map = malloc((c->nlevels ? c->nlevels : 1) * sizeof *map);
  if (!map) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t j = 0; j < c->nlevels; j++) map[j] = -1;
  for (size_t i = 0; i < w->nrow; i++) {
    if (c->code[i] < 0) { free(map); return sl_error_set(e, SL_EARG, 0, 0, "column '%s' has a missing value in row %zu; evaluate needs every row complete", c->name, i + 1); }
    map[c->code[i]] = 0;
  }
  size_t k = 0;
  for (size_t j = 0; j < c->nlevels; j++) if (map[j] == 0) map[j] = (int32_t)k++;
  w->nlev[v] = k;
  w->text[v] = calloc(k ? k : 1, sizeof *w->text[v]);
  if (!w->text[v]) { free(map); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  for (size_t j = 0; j < c->nlevels; j++)
    if (map[j] >= 0 && !(w->text[v][map[j]] = strdup(c->levels[j]))) {
      free(map);
      return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    }
  for (size_t i = 0; i < w->nrow; i++) w->level[v][i] = map[c->code[i]];
  free(map);
  return SL_OK;
}

static int weights(sl_eval *w, const sl_frame *f, int wcol, sl_error *e) {
  w->weight = malloc((w->nrow ? w->nrow : 1) * sizeof *w->weight);
  if (!w->weight) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  const sl_column *c = wcol >= 0 ? &f->col[wcol] : NULL;
  if (c && c->type != SL_NUMERIC)
    return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s' is a column of text; weights are "
                        "non-negative numbers", c->name);
  w->total = 0;
  for (size_t i = 0; i < w->nrow; i++) {
    double x = c ? c->x[i] : 1;
    if (x != x) return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s': row %zu has no weight (missing)", c->name, i + 1);
    if (!isfinite(x) || x < 0)
      return sl_error_set(e, SL_EARG, 0, 0, "weights = '%s': row %zu has the weight %g; weights "
                          "must be finite and non-negative", c->name, i + 1, x);
    w->weight[i] = x;
    w->total += x;
  }
  if (!(w->total > 0))
    return sl_error_set(e, SL_EARG, 0, 0, c ? "weights = '%s': every weight is 0" : "the frame has no rows%s",
                        c ? c->name : "");
  return SL_OK;
}

/* The count table of a variable set (ascending), built once. */
static table *table_of(sl_eval *w, const int32_t *vars, size_t n, sl_error *e) {
  for (size_t t = 0; t < w->ntab; t++)
    if (w->tab[t].nvars == n && (n == 0 || memcmp(w->tab[t].vars, vars, n * sizeof *vars) == 0))
      return &w->tab[t];
  if (w->ntab == w->captab) {
    size_t cap = w->captab ? 2 * w->captab : 16;
    table *nt = realloc(w->tab, cap * sizeof *nt);
    if (!nt) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
    w->tab = nt;
    w->captab = cap;
  }
  double cells = 1;
  for (size_t i = 0; i < n; i++) cells *= (double)w->nlev[vars[i]];
  if (cells > SL_EVAL_MAX_CELLS) {
    sl_error_set(e, SL_ELIMIT, 0, 0, "the formula needs the joint table of %zu variables, "
                 "%.3g cells (limit %u): the variables take too many values", n, cells,
                 SL_EVAL_MAX_CELLS);
    return NULL;
  }
  table *t = &w->tab[w->ntab];
  memset(t, 0, sizeof *t);
  t->vars = malloc((n ? n : 1) * sizeof *t->vars);
  t->stride = malloc((n ? n : 1) * sizeof *t->stride);
  t->count = calloc((size_t)cells, sizeof *t->count);
  if (!t->vars || !t->stride || !t->count) {
    free(t->vars); free(t->stride); free(t->count);
    sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return NULL;
  }
  w->ntab++;
  t->nvars = n;
  size_t s = 1;
  for (size_t i = 0; i < n; i++) { t->vars[i] = vars[i]; t->stride[i] = s; s *= w->nlev[vars[i]]; }
  for (size_t r = 0; r < w->nrow; r++) {
    size_t k = 0;
    for (size_t i = 0; i < n; i++) k += (size_t)w->level[vars[i]][r] * t->stride[i];
    t->count[k] += w->weight[r];
  }
  return t;
}

static size_t slot_hash(const sl_eval *w, const sl_idx *x) {
  return ((uintptr_t)x >> 4) * 11400714819323198485ull % w->nslot;
}

static slot *slot_of(const sl_eval *w, const sl_idx *x) {
  size_t h = slot_hash(w, x);
  while (w->slots[h].atom && w->slots[h].atom != x) h = (h + 1) % w->nslot;
  return &w->slots[h];
}

static size_t count_atoms(const sl_idx *x) {
  size_t n = x->kind == SL_IDX_PROB;
  for (size_t i = 0; i < x->nkid; i++) n += count_atoms(x->kid[i]);
  return n;
}

/* Tables for every P(a | b); and the number of terms the sums add up. */
static int prepare(sl_eval *w, const sl_idx *x, double *terms, sl_error *e) {
  if (x->kind == SL_IDX_PROB) {
    slot *s = slot_of(w, x);
    *terms = 1;
    if (s->atom) return SL_OK;
    s->atom = x;
    if (!(s->joint = table_of(w, x->fv, x->nfv, e))) return e->code;
    if (x->nb && !(s->cond = table_of(w, x->b, x->nb, e))) return e->code;
    return SL_OK;
  }
  double t = x->kind == SL_IDX_ONE ? 1 : 0;
  for (size_t i = 0; i < x->nkid; i++) {
    double k;
    if (prepare(w, x->kid[i], &k, e)) return e->code;
    t += k;
  }
  if (x->kind == SL_IDX_SUM)
    for (size_t i = 0; i < x->na; i++) t *= (double)w->nlev[x->a[i]];
  *terms = t;
  return SL_OK;
}

sl_eval *sl_eval_alloc(const sl_idx *root, size_t nvar, const sl_frame *f, const int *col,
                       const char *const *names, int wcol, volatile int *stop,
                       sl_error *e) {
  sl_eval *w = calloc(1, sizeof *w);
  if (!w) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  w->root = root;
  w->nvar = nvar;
  w->nrow = f->nrow;
  w->names = names;
  w->stop = stop;
  size_t nv = nvar ? nvar : 1;
  w->level = calloc(nv, sizeof *w->level);
  w->nlev = calloc(nv, sizeof *w->nlev);
  w->text = calloc(nv, sizeof *w->text);
  w->num = calloc(nv, sizeof *w->num);
  w->env = calloc(nv, sizeof *w->env);
  w->nslot = 2 * count_atoms(root) + 1;
  w->slots = calloc(w->nslot, sizeof *w->slots);
  if (!w->level || !w->nlev || !w->text || !w->num || !w->env || !w->slots) goto oom;
  if (weights(w, f, wcol, e)) goto fail;
  for (size_t v = 0; v < nvar; v++) {
    if (col[v] < 0) continue;
    const sl_column *c = &f->col[col[v]];
    if (!(w->level[v] = malloc((w->nrow ? w->nrow : 1) * sizeof **w->level))) goto oom;
    int rc = c->type == SL_CATEGORICAL ? categorical_levels(w, (int32_t)v, c, e)
                                       : numeric_levels(w, (int32_t)v, c, e);
    if (rc) goto fail;
  }
  double terms;
  if (prepare(w, root, &terms, e)) goto fail;
  if (terms > SL_EVAL_MAX_TERMS) {
    sl_error_set(e, SL_ELIMIT, 0, 0, "the formula's sums add up %.3g terms (limit %.0g): the "
                 "variables take too many values", terms, SL_EVAL_MAX_TERMS);
    goto fail;
  }
  return w;
oom:
  sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
fail:
  sl_eval_free(w);
  return NULL;
}

size_t sl_eval_nlevels(const sl_eval *w, int32_t v) { return w->nlev[v]; }

const char *sl_eval_level(const sl_eval *w, int32_t v, size_t k, int *is_number,
                          double *number) {
  *is_number = w->num[v] != NULL;
  *number = w->num[v] ? w->num[v][k] : 0;
  return w->text[v][k];
}

long sl_eval_find(const sl_eval *w, int32_t v, const char *text, double number) {
  for (size_t k = 0; k < w->nlev[v]; k++) {
    if (w->num[v] ? (!text && w->num[v][k] == number)
                  : (text && strcmp(w->text[v][k], text) == 0))
      return (long)k;
  }
  return -1;
}

/* ---- evaluation ---- */

static double cell(const sl_eval *w, const table *t) {
  size_t k = 0;
  for (size_t i = 0; i < t->nvars; i++) k += (size_t)w->env[t->vars[i]] * t->stride[i];
  return t->count[k];
}

static double prob(const sl_eval *w, const sl_idx *x) {
  const slot *s = slot_of(w, x);
  double den = s->cond ? cell(w, s->cond) : w->total;
  if (den <= 0) return NAN;
  return cell(w, s->joint) / den;
}

/* Step the summed variables to their next joint value; 0 after the last. */
static int next_values(sl_eval *w, const sl_idx *x) {
  for (size_t i = 0; i < x->na; i++) {
    int32_t v = x->a[i];
    if ((size_t)++w->env[v] < w->nlev[v]) return 1;
    w->env[v] = 0;
  }
  return 0;
}

static double ev(sl_eval *w, const sl_idx *x);

static double ev_sum(sl_eval *w, const sl_idx *x) {
  int32_t saved[64], *keep = x->na <= 64 ? saved : malloc(x->na * sizeof *keep);
  if (!keep) return NAN;   /* not reached for formulas the limits allow */
  for (size_t i = 0; i < x->na; i++) { keep[i] = w->env[x->a[i]]; w->env[x->a[i]] = 0; }
  double total = 0;
  for (;;) {
    if ((++w->ticks & 65535) == 0 && w->stop && *w->stop) w->interrupted = 1;
    if (w->interrupted) break;
    total += ev(w, x->kid[0]);
    if (!next_values(w, x)) break;
  }
  for (size_t i = 0; i < x->na; i++) w->env[x->a[i]] = keep[i];
  if (keep != saved) free(keep);
  return total;
}

static double ev(sl_eval *w, const sl_idx *x) {
  switch (x->kind) {
  case SL_IDX_PROB: return prob(w, x);
  case SL_IDX_PRODUCT: {
    double r = 1;
    int undefined = 0;
    for (size_t i = 0; i < x->nkid; i++) {
      double v = ev(w, x->kid[i]);
      if (v == 0) return 0;
      if (v != v) undefined = 1; else r *= v;
    }
    return undefined ? NAN : r;
  }
  case SL_IDX_SUM: return ev_sum(w, x);
  case SL_IDX_QUOTIENT: {
    double n = ev(w, x->kid[0]), d = ev(w, x->kid[1]);
    if (n != n || d != d || d == 0) return NAN;
    return n / d;
  }
  default: return 1;
  }
}

/* Record the stratum: the variables of vars at their current values. */
static int gap(sl_eval *w, const sl_idx *x, const int32_t *vars, size_t n) {
  w->gap = x;
  w->gap_vars = malloc((n ? n : 1) * sizeof *w->gap_vars);
  w->gap_vals = malloc((n ? n : 1) * sizeof *w->gap_vals);
  if (!w->gap_vars || !w->gap_vals) return 1;
  for (size_t i = 0; i < n; i++) { w->gap_vars[i] = vars[i]; w->gap_vals[i] = w->env[vars[i]]; }
  w->ngap = n;
  return 1;
}

/* Find the empty stratum behind an undefined value of x (which is NaN). */
static int trace(sl_eval *w, const sl_idx *x) {
  switch (x->kind) {
  case SL_IDX_PROB: return gap(w, x, x->b, x->nb);
  case SL_IDX_PRODUCT:
    for (size_t i = 0; i < x->nkid; i++) {
      double v = ev(w, x->kid[i]);
      if (v != v) return trace(w, x->kid[i]);
    }
    return 0;
  case SL_IDX_SUM: {
    int32_t saved[64], *keep = x->na <= 64 ? saved : malloc(x->na * sizeof *keep);
    int found = 0;
    if (!keep) return 0;
    for (size_t i = 0; i < x->na; i++) { keep[i] = w->env[x->a[i]]; w->env[x->a[i]] = 0; }
    do {
      double v = ev(w, x->kid[0]);
      if (v != v) { found = trace(w, x->kid[0]); break; }
    } while (next_values(w, x));
    for (size_t i = 0; i < x->na; i++) w->env[x->a[i]] = keep[i];
    if (keep != saved) free(keep);
    return found;
  }
  case SL_IDX_QUOTIENT: {
    double n = ev(w, x->kid[0]), d = ev(w, x->kid[1]);
    if (n != n) return trace(w, x->kid[0]);
    if (d != d) return trace(w, x->kid[1]);
    return gap(w, x->kid[1], x->kid[1]->fv, x->kid[1]->nfv);
  }
  default: return 0;
  }
}

int sl_eval_run(sl_eval *w, const int32_t *val, double *out, const sl_idx **gap_at,
                sl_error *e) {
  for (size_t i = 0; i < w->root->nfv; i++) w->env[w->root->fv[i]] = val[w->root->fv[i]];
  *gap_at = NULL;
  w->interrupted = 0;
  double r = ev(w, w->root);
  if (w->interrupted) return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  if (r == r) { *out = r; return SL_OK; }
  free(w->gap_vars); free(w->gap_vals);
  w->gap_vars = w->gap_vals = NULL;
  w->ngap = 0;
  w->gap = NULL;
  if (!trace(w, w->root) || !w->gap_vars)
    return sl_error_set(e, SL_EARG, 0, 0, "the formula is undefined on these data");
  *gap_at = w->gap;
  char msg[SL_MSG_MAX];
  size_t k = (size_t)snprintf(msg, sizeof msg, "no rows with ");
  for (size_t i = 0; i < w->ngap && k < sizeof msg; i++)
    k += (size_t)snprintf(msg + k, sizeof msg - k, "%s%s = %s", i ? ", " : "",
                          w->names[w->gap_vars[i]], w->text[w->gap_vars[i]][w->gap_vals[i]]);
  return sl_error_set(e, SL_EARG, 0, 0, "%s", msg);
}
