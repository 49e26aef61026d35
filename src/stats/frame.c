/*
** frame.c: the columnar data frame, its column builder (shared by the CSV
** and SQLite readers) and column summaries.
*/
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "frame_build.h"

#define INIT_ROWS 1024      /* first allocation of a builder's columns, in rows */
#define INIT_CELLS 65536    /* and in cells over all columns, for a wide file */
#define LIST_MAX 240        /* bytes of column names listed in a message */

/* ---- frames ---- */

/* Free one column's arrays and name. */
static void column_clear(sl_column *c) {
  free(c->name);
  free(c->x);
  free(c->code);
  for (size_t k = 0; k < c->nlevels; k++) free(c->levels[k]);
  free(c->levels);
  memset(c, 0, sizeof *c);
}

sl_frame *sl_frame_alloc(size_t nrow) {
  sl_frame *f = calloc(1, sizeof *f);
  if (f) f->nrow = nrow;
  return f;
}

void sl_frame_free(sl_frame *f) {
  if (!f) return;
  for (size_t j = 0; j < f->ncol; j++) column_clear(&f->col[j]);
  free(f->col);
  free(f);
}

/* Room for one more column, after checking the name is new. */
static sl_column *new_column(sl_frame *f, const char *name, sl_error *e) {
  if (!name || !*name) {
    sl_error_set(e, SL_EARG, 0, 0, "a column needs a name");
    return NULL;
  }
  if (sl_frame_find(f, name) >= 0) {
    sl_error_set(e, SL_EARG, 0, 0, "column '%s' already exists", name);
    return NULL;
  }
  if (f->ncol >= SL_FRAME_MAX_COLS) {
    sl_error_set(e, SL_ELIMIT, 0, 0, "a frame holds at most %d columns", SL_FRAME_MAX_COLS);
    return NULL;
  }
  sl_column *c = realloc(f->col, (f->ncol + 1) * sizeof *c);
  if (!c) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  f->col = c;
  memset(&c[f->ncol], 0, sizeof *c);
  return &c[f->ncol];
}

/* Free an array of n strings. */
static void free_strings(char **s, size_t n) {
  if (!s) return;
  for (size_t k = 0; k < n; k++) free(s[k]);
  free(s);
}

int sl_frame_adopt_numeric(sl_frame *f, char *name, double *x, sl_error *e) {
  sl_column *c = new_column(f, name, e);
  if (!c) { free(name); free(x); return e->code; }
  c->name = name;
  c->type = SL_NUMERIC;
  c->x = x;
  f->ncol++;
  return SL_OK;
}

int sl_frame_adopt_categorical(sl_frame *f, char *name, int32_t *code, char **levels,
                               size_t nlevels, sl_error *e) {
  sl_column *c = new_column(f, name, e);
  if (!c) { free(name); free(code); free_strings(levels, nlevels); return e->code; }
  c->name = name;
  c->type = SL_CATEGORICAL;
  c->code = code;
  c->levels = levels;
  c->nlevels = nlevels;
  f->ncol++;
  return SL_OK;
}

/* malloc that never returns NULL for a zero size. */
static void *alloc0(size_t n) { return malloc(n ? n : 1); }

int sl_frame_add_numeric(sl_frame *f, const char *name, const double *x, sl_error *e) {
  char *nm = strdup(name ? name : "");
  double *v = alloc0(f->nrow * sizeof *v);
  if (!nm || !v) { free(nm); free(v); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  if (f->nrow) memcpy(v, x, f->nrow * sizeof *v);
  return sl_frame_adopt_numeric(f, nm, v, e);
}

int sl_frame_add_categorical(sl_frame *f, const char *name, const int32_t *code,
                             const char *const *levels, size_t nlevels, sl_error *e) {
  for (size_t k = 1; k < nlevels; k++)
    if (strcmp(levels[k - 1], levels[k]) >= 0)
      return sl_error_set(e, SL_EARG, 0, 0, "levels of column '%s' are not sorted and distinct "
                          "('%s' before '%s')", name ? name : "", levels[k - 1], levels[k]);
  for (size_t i = 0; i < f->nrow; i++)
    if (code[i] < -1 || (code[i] >= 0 && (size_t)code[i] >= nlevels))
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s', row %zu: code %d has no level",
                          name ? name : "", i + 1, (int)code[i]);
  char *nm = strdup(name ? name : "");
  int32_t *cd = alloc0(f->nrow * sizeof *cd);
  char **lv = calloc(nlevels ? nlevels : 1, sizeof *lv);
  int bad = !nm || !cd || !lv;
  for (size_t k = 0; !bad && k < nlevels; k++) bad = !(lv[k] = strdup(levels[k]));
  if (bad) {
    free(nm); free(cd); free_strings(lv, nlevels);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  if (f->nrow) memcpy(cd, code, f->nrow * sizeof *cd);
  return sl_frame_adopt_categorical(f, nm, cd, lv, nlevels, e);
}

int sl_frame_find(const sl_frame *f, const char *name) {
  for (size_t j = 0; j < f->ncol; j++)
    if (strcmp(f->col[j].name, name) == 0) return (int)j;
  return -1;
}

/* The names of the columns for a message, as many as fit in LIST_MAX
** bytes, then "... (N in all)". */
static void list_names(const sl_frame *f, char out[LIST_MAX]) {
  size_t len = 0;
  out[0] = '\0';
  for (size_t j = 0; j < f->ncol; j++) {
    const char *nm = f->col[j].name;
    if (len + strlen(nm) + 2 > LIST_MAX - 32) {
      snprintf(out + len, LIST_MAX - len, "%s... (%zu in all)", j ? ", " : "", f->ncol);
      return;
    }
    len += (size_t)snprintf(out + len, LIST_MAX - len, "%s%s", j ? ", " : "", nm);
  }
  if (f->ncol == 0) snprintf(out, LIST_MAX, "none");
}

int sl_frame_lookup(const sl_frame *f, const char *name, sl_error *e) {
  int j = sl_frame_find(f, name);
  if (j >= 0) return j;
  const char **names = malloc((f->ncol ? f->ncol : 1) * sizeof *names);
  const char *best = NULL;
  if (names) {
    for (size_t k = 0; k < f->ncol; k++) names[k] = f->col[k].name;
    best = sl_closest(name, names, f->ncol);
  }
  if (best) sl_error_set(e, SL_ENAME, 0, 0, "no column '%s'; did you mean '%s'?", name, best);
  else {
    char list[LIST_MAX];
    list_names(f, list);
    sl_error_set(e, SL_ENAME, 0, 0, "no column '%s' (the columns: %s)", name, list);
  }
  free(names);
  return -1;
}

/* Copy the rows of column c listed in rows (n of them; NULL: all nrow)
** into f under the same name. */
static int copy_column(sl_frame *f, const sl_column *c, const size_t *rows, size_t n,
                       sl_error *e) {
  if (c->type == SL_NUMERIC) {
    double *x = alloc0(n * sizeof *x);
    char *nm = strdup(c->name);
    if (!x || !nm) { free(x); free(nm); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
    for (size_t i = 0; i < n; i++) x[i] = c->x[rows ? rows[i] : i];
    return sl_frame_adopt_numeric(f, nm, x, e);
  }
  int32_t *code = alloc0(n * sizeof *code);
  if (!code) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t i = 0; i < n; i++) code[i] = c->code[rows ? rows[i] : i];
  /* levels are copied whole: a subset of rows keeps the column's levels */
  int rc = sl_frame_add_categorical(f, c->name, code, (const char *const *)c->levels,
                                    c->nlevels, e);
  free(code);
  return rc;
}

sl_frame *sl_frame_select(const sl_frame *f, const int *cols, size_t n, sl_error *e) {
  sl_frame *out = sl_frame_alloc(f->nrow);
  if (!out) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t k = 0; k < n; k++) {
    if (cols[k] < 0 || (size_t)cols[k] >= f->ncol) {
      sl_error_set(e, SL_EARG, 0, 0, "no column number %d", cols[k] + 1);
      sl_frame_free(out);
      return NULL;
    }
    if (copy_column(out, &f->col[cols[k]], NULL, f->nrow, e) != SL_OK) {
      sl_frame_free(out);
      return NULL;
    }
  }
  return out;
}

/* A new frame of the listed rows of every column. */
static sl_frame *take_rows(const sl_frame *f, const size_t *rows, size_t n, sl_error *e) {
  sl_frame *out = sl_frame_alloc(n);
  if (!out) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t j = 0; j < f->ncol; j++)
    if (copy_column(out, &f->col[j], rows, n, e) != SL_OK) {
      sl_frame_free(out);
      return NULL;
    }
  return out;
}

sl_frame *sl_frame_filter(const sl_frame *f, const unsigned char *keep, sl_error *e) {
  size_t n = 0;
  for (size_t i = 0; i < f->nrow; i++) n += keep[i] != 0;
  size_t *rows = alloc0(n * sizeof *rows);
  if (!rows) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t i = 0, k = 0; i < f->nrow; i++)
    if (keep[i]) rows[k++] = i;
  sl_frame *out = take_rows(f, rows, n, e);
  free(rows);
  return out;
}

sl_frame *sl_frame_head(const sl_frame *f, size_t n, sl_error *e) {
  if (n > f->nrow) n = f->nrow;
  size_t *rows = alloc0(n * sizeof *rows);
  if (!rows) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t i = 0; i < n; i++) rows[i] = i;
  sl_frame *out = take_rows(f, rows, n, e);
  free(rows);
  return out;
}

sl_frame *sl_frame_binarize(const sl_frame *f, int col, double cut, const char *name,
                            sl_error *e) {
  if (col < 0 || (size_t)col >= f->ncol) {
    sl_error_set(e, SL_EARG, 0, 0, "no column number %d", col + 1);
    return NULL;
  }
  const sl_column *c = &f->col[col];
  if (c->type != SL_NUMERIC) {
    sl_error_set(e, SL_EARG, 0, 0, "column '%s' is categorical; binarize needs numbers",
                 c->name);
    return NULL;
  }
  if (isnan(cut)) {
    sl_error_set(e, SL_EARG, 0, 0, "the cut is not a number");
    return NULL;
  }
  if (sl_frame_find(f, name) >= 0) {
    sl_error_set(e, SL_EARG, 0, 0, "column '%s' already exists", name);
    return NULL;
  }
  sl_frame *out = take_rows(f, NULL, f->nrow, e);
  if (!out) return NULL;
  double *x = alloc0(f->nrow * sizeof *x);
  char *nm = strdup(name);
  if (!x || !nm) {
    free(x); free(nm); sl_frame_free(out);
    sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return NULL;
  }
  for (size_t i = 0; i < f->nrow; i++)
    x[i] = isnan(c->x[i]) ? NAN : c->x[i] > cut ? 1.0 : 0.0;
  if (sl_frame_adopt_numeric(out, nm, x, e) != SL_OK) { sl_frame_free(out); return NULL; }
  return out;
}

sl_frame *sl_frame_binarize_levels(const sl_frame *f, int col, const char *const *levels,
                                   size_t nlev, const char *name, sl_error *e) {
  if (col < 0 || (size_t)col >= f->ncol) {
    sl_error_set(e, SL_EARG, 0, 0, "no column number %d", col + 1);
    return NULL;
  }
  const sl_column *c = &f->col[col];
  if (c->type != SL_CATEGORICAL) {
    sl_error_set(e, SL_EARG, 0, 0, "column '%s' holds numbers: give a cut, not levels", c->name);
    return NULL;
  }
  if (nlev == 0) {
    sl_error_set(e, SL_EARG, 0, 0, "give one or more levels of '%s' to count as 1", c->name);
    return NULL;
  }
  if (sl_frame_find(f, name) >= 0) {
    sl_error_set(e, SL_EARG, 0, 0, "column '%s' already exists", name);
    return NULL;
  }
  unsigned char *one = calloc(c->nlevels ? c->nlevels : 1, 1);
  if (!one) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t i = 0; i < nlev; i++) {
    size_t l = 0;
    while (l < c->nlevels && strcmp(c->levels[l], levels[i]) != 0) l++;
    if (l == c->nlevels) {
      const char *near = sl_closest(levels[i], (const char *const *)c->levels, c->nlevels);
      sl_error_set(e, SL_EARG, 0, 0, "'%s' is not a level of '%s'%s%s%s", levels[i], c->name,
                   near ? "; did you mean '" : "", near ? near : "", near ? "'?" : "");
      free(one);
      return NULL;
    }
    one[l] = 1;
  }
  sl_frame *out = take_rows(f, NULL, f->nrow, e);
  double *x = out ? alloc0(f->nrow * sizeof *x) : NULL;
  char *nm = out ? strdup(name) : NULL;
  if (!out || !x || !nm) {
    free(one); free(x); free(nm); sl_frame_free(out);
    if (out) sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return NULL;
  }
  for (size_t i = 0; i < f->nrow; i++) x[i] = c->code[i] < 0 ? NAN : one[c->code[i]];
  free(one);
  if (sl_frame_adopt_numeric(out, nm, x, e) != SL_OK) { sl_frame_free(out); return NULL; }
  return out;
}

/* A name and its position, to sort names while keeping where they were. */
typedef struct name_ref { const char *name; size_t at; } name_ref;

/* qsort order: by name, then by position. */
static int cmp_name_ref(const void *a, const void *b) {
  const name_ref *x = a, *y = b;
  int c = strcmp(x->name, y->name);
  return c ? c : (x->at > y->at) - (x->at < y->at);
}

int sl_names_duplicate(const char *const *names, size_t n, size_t *first, size_t *second,
                       sl_error *e) {
  name_ref *ref = alloc0(n * sizeof *ref);
  if (!ref) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"), -1;
  for (size_t k = 0; k < n; k++) ref[k] = (name_ref){names[k], k};
  qsort(ref, n, sizeof *ref, cmp_name_ref);
  int found = 0;
  for (size_t k = 1; k < n; k++) {
    /* ref[k] is a second use when the name before it is the same and a
    ** different name (or nothing) comes before that: the group's first two */
    if (strcmp(ref[k - 1].name, ref[k].name) != 0) continue;
    if (k >= 2 && strcmp(ref[k - 2].name, ref[k].name) == 0) continue;
    if (!found || ref[k].at < *second) {
      *first = ref[k - 1].at;
      *second = ref[k].at;
      found = 1;
    }
  }
  free(ref);
  return found;
}

/* ---- summaries ---- */

/* qsort order for doubles (no NaN here). */
static int cmp_double(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* Quantile p of sorted v[0..n-1] by the type-7 rule: v[h] interpolated at
** h = (n - 1) p (Hyndman and Fan 1996; R's default).  An exact position
** gives its value; next to an infinity the quantile is that infinity; the
** span from -inf to inf has none (NaN). */
static double quantile7(const double *v, size_t n, double p) {
  double h = (double)(n - 1) * p;
  size_t lo = (size_t)floor(h);
  if (lo + 1 >= n) return v[n - 1];
  double a = v[lo], b = v[lo + 1], f = h - (double)lo;
  if (f == 0 || a == b) return a;
  if (isinf(a) && isinf(b)) return NAN;
  if (isinf(a)) return a;
  if (isinf(b)) return b;
  double d = b - a;
  return isfinite(d) ? a + f * d : (1 - f) * a + f * b;   /* d overflows near DBL_MAX */
}

/* Mean and sd (n - 1) of the n values of x that are not NaN, each times
** scale: a sum, then a second pass that corrects its rounding. */
static void scaled_moments(const double *x, size_t nx, size_t n, double scale, double *mean,
                           double *sd) {
  double sum = 0, dev = 0, ss = 0;
  for (size_t i = 0; i < nx; i++)
    if (!isnan(x[i])) sum += x[i] * scale;
  double m = sum / (double)n;
  for (size_t i = 0; i < nx; i++)
    if (!isnan(x[i])) dev += x[i] * scale - m;
  m += dev / (double)n;
  for (size_t i = 0; i < nx; i++)
    if (!isnan(x[i])) ss += (x[i] * scale - m) * (x[i] * scale - m);
  *mean = m;
  *sd = n > 1 ? sqrt(ss / (double)(n - 1)) : NAN;
}

/* Mean and sd of the values of x (NaN: missing).  Infinities are values:
** the mean is the infinity when all are of one sign and NaN when both
** occur; the sd is NaN.  Finite values near DBL_MAX whose sums overflow
** are scaled by a power of two first (exact). */
static void moments(const double *x, size_t nx, size_t n, double *mean, double *sd) {
  size_t pos = 0, neg = 0;
  double big = 0;
  for (size_t i = 0; i < nx; i++) {
    if (x[i] == INFINITY) pos++;
    else if (x[i] == -INFINITY) neg++;
    else if (fabs(x[i]) > big) big = fabs(x[i]);
  }
  *mean = *sd = NAN;
  if (n == 0) return;
  if (pos || neg) {
    *mean = pos && neg ? NAN : pos ? INFINITY : -INFINITY;
    return;
  }
  scaled_moments(x, nx, n, 1.0, mean, sd);
  if (isfinite(*mean) && (n < 2 || isfinite(*sd))) return;
  int ex;
  frexp(big, &ex);
  scaled_moments(x, nx, n, ldexp(1.0, -ex), mean, sd);
  *mean = ldexp(*mean, ex);
  if (n > 1) *sd = ldexp(*sd, ex);
}

void sl_column_moments(const sl_column *c, size_t nrow, sl_summary *s) {
  memset(s, 0, sizeof *s);
  s->mean = s->sd = s->min = s->q1 = s->median = s->q3 = s->max = NAN;
  if (c->type == SL_CATEGORICAL) {
    for (size_t i = 0; i < nrow; i++) s->missing += c->code[i] < 0;
    s->n = nrow - s->missing;
    return;
  }
  double lo = INFINITY, hi = -INFINITY;
  for (size_t i = 0; i < nrow; i++) {
    double x = c->x[i];
    if (isnan(x)) continue;
    s->n++;
    if (x < lo) lo = x;
    if (x > hi) hi = x;
  }
  s->missing = nrow - s->n;
  if (s->n == 0) return;
  s->min = lo;
  s->max = hi;
  moments(c->x, nrow, s->n, &s->mean, &s->sd);
}

int sl_column_summary(const sl_column *c, size_t nrow, sl_summary *s, sl_error *e) {
  sl_column_moments(c, nrow, s);
  if (c->type == SL_CATEGORICAL || s->n == 0) return SL_OK;
  double *v = alloc0(s->n * sizeof *v);
  if (!v) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  size_t n = 0;
  for (size_t i = 0; i < nrow; i++)
    if (!isnan(c->x[i])) v[n++] = c->x[i];
  qsort(v, n, sizeof *v, cmp_double);
  s->q1 = quantile7(v, n, 0.25);
  s->median = quantile7(v, n, 0.5);
  s->q3 = quantile7(v, n, 0.75);
  free(v);
  return SL_OK;
}

/* ---- interned texts ---- */

/* FNV-1a: a quick hash for short texts. */
static uint32_t hash_text(const char *s, size_t n) {
  uint32_t h = 2166136261u;
  for (size_t i = 0; i < n; i++) h = (h ^ (unsigned char)s[i]) * 16777619u;
  return h;
}

static void intern_free(sl_intern *d) {
  free(d->arena);
  free(d->off);
  free(d->hash);
  free(d->slot);
  memset(d, 0, sizeof *d);
}

/* Double the slot table and reinsert every id. */
static int intern_rehash(sl_intern *d) {
  size_t ns = d->nslot ? d->nslot * 2 : 64;
  int32_t *slot = malloc(ns * sizeof *slot);
  if (!slot) return -1;
  for (size_t k = 0; k < ns; k++) slot[k] = -1;
  for (size_t id = 0; id < d->n; id++) {
    size_t k = d->hash[id] & (ns - 1);
    while (slot[k] >= 0) k = (k + 1) & (ns - 1);
    slot[k] = (int32_t)id;
  }
  free(d->slot);
  d->slot = slot;
  d->nslot = ns;
  return 0;
}

/* The id of text s (n bytes, no NUL inside), adding it when new; -1 when
** out of memory, -2 past the level limit. */
static int32_t intern(sl_intern *d, const char *s, size_t n) {
  if ((d->n + 1) * 2 > d->nslot && intern_rehash(d) != 0) return -1;
  uint32_t h = hash_text(s, n);
  size_t k = h & (d->nslot - 1);
  for (; d->slot[k] >= 0; k = (k + 1) & (d->nslot - 1)) {
    int32_t id = d->slot[k];
    const char *t = d->arena + d->off[id];
    if (d->hash[id] == h && strncmp(t, s, n) == 0 && t[n] == '\0') return id;
  }
  if (d->n >= (size_t)SL_FRAME_MAX_LEVELS - 1) return -2;
  if (d->n == d->cap) {
    size_t nc = d->cap ? d->cap * 2 : 16;
    size_t *off = realloc(d->off, nc * sizeof *off);
    if (off) d->off = off;
    uint32_t *hs = realloc(d->hash, nc * sizeof *hs);
    if (hs) d->hash = hs;
    if (!off || !hs) return -1;
    d->cap = nc;
  }
  if (d->alen + n + 1 > d->acap) {
    size_t na = d->acap ? d->acap * 2 : 256;
    while (na < d->alen + n + 1) na *= 2;
    char *a = realloc(d->arena, na);
    if (!a) return -1;
    d->arena = a;
    d->acap = na;
  }
  memcpy(d->arena + d->alen, s, n);
  d->arena[d->alen + n] = '\0';
  d->off[d->n] = d->alen;
  d->hash[d->n] = h;
  d->alen += n + 1;
  d->slot[k] = (int32_t)d->n;
  return (int32_t)d->n++;
}

/* ---- the column builder ---- */

void sl_cell_excerpt(const char *tok, size_t len, char *out, size_t max) {
  if (max < 8) { if (max) out[0] = '\0'; return; }
  if (len < max) { memcpy(out, tok, len); out[len] = '\0'; return; }
  size_t k = max - 4;
  while (k > 0 && ((unsigned char)tok[k] & 0xC0) == 0x80) k--;   /* whole UTF-8 chars */
  memcpy(out, tok, k);
  memcpy(out + k, "...", 4);
}

int sl_build_init(sl_build *b, const char *const *names, size_t ncol, sl_error *e) {
  memset(b, 0, sizeof *b);
  b->col = calloc(ncol ? ncol : 1, sizeof *b->col);
  if (!b->col) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  b->ncol = ncol;
  for (size_t j = 0; j < ncol; j++)
    if (!(b->col[j].name = strdup(names[j])))
      return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  return SL_OK;
}

void sl_build_free(sl_build *b) {
  for (size_t j = 0; b->col && j < b->ncol; j++) {
    free(b->col[j].name);
    free(b->col[j].x);
    free(b->col[j].code);
    intern_free(&b->col[j].dict);
  }
  free(b->col);
  memset(b, 0, sizeof *b);
}

int sl_build_row(sl_build *b, sl_error *e) {
  if (b->nrow < b->cap) return SL_OK;
  size_t first = b->ncol ? INIT_CELLS / b->ncol : INIT_ROWS;
  if (first > INIT_ROWS) first = INIT_ROWS;
  if (first < 8) first = 8;
  size_t nc = b->cap ? b->cap * 2 : first;
  for (size_t j = 0; j < b->ncol; j++) {
    sl_bcol *c = &b->col[j];
    double *x = realloc(c->x, nc * sizeof *x);
    if (!x) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    c->x = x;
    if (c->code) {
      int32_t *cd = realloc(c->code, nc * sizeof *cd);
      if (!cd) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      c->code = cd;
    }
  }
  b->cap = nc;
  return SL_OK;
}

int sl_build_missing(sl_build *b, size_t j) {
  sl_bcol *c = &b->col[j];
  c->x[b->nrow] = NAN;
  if (c->code) c->code[b->nrow] = -1;
  c->nmiss++;
  return SL_OK;
}

/* Code of a text in column c, or an error. */
static int put_code(sl_bcol *c, size_t r, const char *tok, size_t len, sl_error *e) {
  int32_t id = intern(&c->dict, tok, len);
  if (id == -1) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (id == -2)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "column '%s' has more than %d distinct texts",
                        c->name, SL_FRAME_MAX_LEVELS - 1);
  c->code[r] = id;
  return SL_OK;
}

int sl_build_number(sl_build *b, size_t j, double v, const char *tok, size_t len,
                    sl_error *e) {
  sl_bcol *c = &b->col[j];
  c->x[b->nrow] = v;
  c->nnum++;
  if (isnan(v)) {           /* "nan" as strtod reads it: a missing value */
    c->nnum--;
    c->nmiss++;
    if (c->code) c->code[b->nrow] = -1;
    return SL_OK;
  }
  if (c->code) return put_code(c, b->nrow, tok, len, e);
  return SL_OK;
}

int sl_build_text(sl_build *b, size_t j, const char *tok, size_t len, int line,
                  sl_error *e) {
  sl_bcol *c = &b->col[j];
  if (!c->code) {
    c->code = malloc(b->cap * sizeof *c->code);
    if (!c->code) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    for (size_t r = 0; r < b->nrow; r++) c->code[r] = -1;
    c->text_from = b->nrow;
    c->nnum_before = c->nnum;
    c->first_line = line;
    sl_cell_excerpt(tok, len, c->first_text, sizeof c->first_text);
  }
  c->x[b->nrow] = NAN;
  c->ntext++;
  return put_code(c, b->nrow, tok, len, e);
}

int sl_build_decide(sl_build *b, int mode, int coerce, sl_read_report *rep) {
  int first = -1;
  for (size_t j = 0; j < b->ncol; j++) {
    sl_bcol *c = &b->col[j];
    c->type = SL_NUMERIC;
    if (c->ntext == 0) continue;
    int mostly = c->ntext * 10 <= c->nnum + c->ntext;   /* at most 10% text */
    if (mode == SL_BUILD_CSV && mostly && !coerce) return (int)j;
    if (mode == SL_BUILD_CSV && mostly) {
      rep->coerced += c->ntext;
      if (first < 0 || c->first_line < b->col[first].first_line) first = (int)j;
      continue;
    }
    c->type = SL_CATEGORICAL;
  }
  if (first >= 0) {
    rep->first_row = (size_t)b->col[first].first_line;
    rep->first_col = (size_t)first + 1;
    memcpy(rep->first_cell, b->col[first].first_text, sizeof rep->first_cell);
  }
  return -1;
}

size_t sl_build_refill_rows(const sl_build *b) {
  size_t r = 0;
  for (size_t j = 0; j < b->ncol; j++) {
    const sl_bcol *c = &b->col[j];
    if (c->type == SL_CATEGORICAL && c->nnum_before > 0 && c->text_from > r) r = c->text_from;
  }
  return r;
}

int sl_build_wants(const sl_build *b, size_t j, size_t r) {
  const sl_bcol *c = &b->col[j];
  return c->type == SL_CATEGORICAL && c->nnum_before > 0 && r < c->text_from &&
         r < b->nrow && !isnan(c->x[r]);
}

int sl_build_refill(sl_build *b, size_t j, size_t r, const char *tok, size_t len,
                    sl_error *e) {
  return put_code(&b->col[j], r, tok, len, e);
}

/* Bytewise order of two interned ids (qsort_r is not C11: a file-level
** pointer would be global state, so sort (text, id) pairs instead). */
typedef struct level_ref { const char *text; int32_t id; } level_ref;
static int cmp_level(const void *a, const void *b) {
  return strcmp(((const level_ref *)a)->text, ((const level_ref *)b)->text);
}

/* Turn builder column c into a categorical column of f. */
static int finish_categorical(sl_frame *f, sl_bcol *c, size_t nrow, sl_error *e) {
  size_t n = c->dict.n;
  level_ref *ref = alloc0(n * sizeof *ref);
  int32_t *rank = alloc0(n * sizeof *rank);
  char **levels = calloc(n ? n : 1, sizeof *levels);
  int bad = !ref || !rank || !levels;
  for (size_t k = 0; !bad && k < n; k++) {
    ref[k].text = c->dict.arena + c->dict.off[k];
    ref[k].id = (int32_t)k;
  }
  if (!bad) qsort(ref, n, sizeof *ref, cmp_level);
  for (size_t k = 0; !bad && k < n; k++) {
    rank[ref[k].id] = (int32_t)k;
    bad = !(levels[k] = strdup(ref[k].text));
  }
  if (bad) {
    free(ref); free(rank); free_strings(levels, n);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  int32_t *code = c->code;
  for (size_t i = 0; i < nrow; i++)
    if (code[i] >= 0) code[i] = rank[code[i]];
  int32_t *shrunk = nrow ? realloc(code, nrow * sizeof *code) : NULL;
  if (shrunk) code = shrunk;
  free(ref);
  free(rank);
  c->code = NULL;
  free(c->x);
  c->x = NULL;
  intern_free(&c->dict);
  sl_column *out = &f->col[f->ncol++];   /* room made by sl_build_finish */
  out->name = c->name;
  c->name = NULL;
  out->type = SL_CATEGORICAL;
  out->code = code;
  out->levels = levels;
  out->nlevels = n;
  return SL_OK;
}

sl_frame *sl_build_finish(sl_build *b, sl_error *e) {
  sl_frame *f = sl_frame_alloc(b->nrow);
  if (!f) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  /* room for every column at once (the names are known to be distinct):
  ** adding them one by one, each checked against the others, was
  ** quadratic in the number of columns */
  f->col = calloc(b->ncol ? b->ncol : 1, sizeof *f->col);
  if (!f->col) { free(f); sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t j = 0; j < b->ncol; j++) {
    sl_bcol *c = &b->col[j];
    int rc;
    if (c->type == SL_CATEGORICAL) rc = finish_categorical(f, c, b->nrow, e);
    else {
      double *x = c->x ? c->x : alloc0(sizeof *x);
      double *shrunk = b->nrow && c->x ? realloc(x, b->nrow * sizeof *x) : NULL;
      if (shrunk) x = shrunk;
      free(c->code);
      intern_free(&c->dict);
      c->x = NULL; c->code = NULL;
      if (!x) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      else {
        sl_column *out = &f->col[f->ncol++];
        out->name = c->name;
        c->name = NULL;
        out->type = SL_NUMERIC;
        out->x = x;
        rc = SL_OK;
      }
    }
    if (rc != SL_OK) { sl_frame_free(f); return NULL; }
  }
  return f;
}
