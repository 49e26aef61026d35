/*
** identify_print.c: a formula as text ("P(y | do(x)) = Σ_m P(m | x) ...")
** or as LaTeX math.  A summed variable whose name is already in use
** outside the sum is printed with a prime (x', x'', ...).  Inside
** P(... | ...) the treatments come first, then the other variables in
** causal order; factors of a product go from the latest variable back
** (the chain rule's order), sums last.
*/
#include <ctype.h>
#include <stdlib.h>
#include <string.h>
#include "identify_internal.h"
#include "notation.h"

typedef struct pctx {
  const sl_identification *r;
  const sl_graph *g;
  int latex;
  sl_buf *b;
  int *depth;               /* bindings in scope, per variable */
  unsigned char *treat;     /* the query's treatments */
} pctx;

/* A name in LaTeX: "w1" as w_{1}, one letter as itself, else \mathrm{..}. */
static void latex_name(sl_buf *b, const char *s) {
  size_t n = strlen(s), i = 1;
  if (n && isalpha((unsigned char)s[0])) {
    while (i < n && isdigit((unsigned char)s[i])) i++;
    if (i == n) {
      sl_buf_add(b, s, 1);
      if (n > 1) sl_buf_addf(b, "_{%s}", s + 1);
      return;
    }
  }
  sl_buf_adds(b, "\\mathrm{");
  for (i = 0; i < n; i++) {
    char ch = s[i];
    if (strchr("#$%&_{}", ch)) { sl_buf_add(b, "\\", 1); sl_buf_add(b, &ch, 1); }
    else if (ch == '\\') sl_buf_adds(b, "\\backslash{}");
    else if (ch == '~') sl_buf_adds(b, "\\textasciitilde{}");
    else if (ch == '^') sl_buf_adds(b, "\\textasciicircum{}");
    else if (ch == ' ') sl_buf_adds(b, "\\ ");
    else sl_buf_add(b, &ch, 1);
  }
  sl_buf_adds(b, "}");
}

static void var(pctx *p, int32_t v) {
  const char *name = sl_graph_name(p->g, p->r->var_node[v]);
  if (p->latex) latex_name(p->b, name);
  else sl_name_write(name, p->b);
  for (int i = 1; i < p->depth[v]; i++) sl_buf_adds(p->b, "'");
}

/* Treatments first, then causal order. */
static int before(const pctx *p, int32_t a, int32_t b) {
  if (p->treat[a] != p->treat[b]) return p->treat[a] > p->treat[b];
  return p->r->var_pos[a] < p->r->var_pos[b];
}

static void vars(pctx *p, const int32_t *s, size_t n) {
  int32_t *o = malloc((n ? n : 1) * sizeof *o);
  if (!o) { p->b->failed = 1; return; }
  memcpy(o, s, n * sizeof *o);
  for (size_t i = 1; i < n; i++)          /* insertion sort: sets are small */
    for (size_t j = i; j > 0 && before(p, o[j], o[j - 1]); j--) {
      int32_t t = o[j]; o[j] = o[j - 1]; o[j - 1] = t;
    }
  for (size_t i = 0; i < n; i++) {
    if (i) sl_buf_adds(p->b, ", ");
    var(p, o[i]);
  }
  free(o);
}

static void expr(pctx *p, const sl_idx *x);

static void prob(pctx *p, const sl_idx *x) {
  sl_buf_adds(p->b, "P(");
  vars(p, x->a, x->na);
  if (x->nb) { sl_buf_adds(p->b, p->latex ? " \\mid " : " | "); vars(p, x->b, x->nb); }
  sl_buf_adds(p->b, ")");
}

/* Where a factor goes in a product: probabilities of later variables
** first, then quotients, then sums. */
static long rank_of(const pctx *p, const sl_idx *x) {
  if (x->kind == SL_IDX_PROB) {
    long m = 0;
    for (size_t i = 0; i < x->na; i++) if (p->r->var_pos[x->a[i]] + 1 > m) m = p->r->var_pos[x->a[i]] + 1;
    return -m;
  }
  return x->kind == SL_IDX_QUOTIENT ? 1 : 2;
}

static void open_group(pctx *p) { sl_buf_adds(p->b, p->latex ? "\\left[" : "["); }
static void close_group(pctx *p) { sl_buf_adds(p->b, p->latex ? "\\right]" : "]"); }

static void product(pctx *p, const sl_idx *x) {
  size_t n = x->nkid;
  const sl_idx **f = malloc((n ? n : 1) * sizeof *f);
  if (!f) { p->b->failed = 1; return; }
  memcpy(f, x->kid, n * sizeof *f);
  for (size_t i = 1; i < n; i++)          /* stable insertion sort */
    for (size_t j = i; j > 0 && rank_of(p, f[j]) < rank_of(p, f[j - 1]); j--) {
      const sl_idx *t = f[j]; f[j] = f[j - 1]; f[j - 1] = t;
    }
  for (size_t i = 0; i < n; i++) {
    int wrap = f[i]->kind == SL_IDX_QUOTIENT || (f[i]->kind == SL_IDX_SUM && i + 1 < n);
    if (i) sl_buf_adds(p->b, " ");
    if (wrap) open_group(p);
    expr(p, f[i]);
    if (wrap) close_group(p);
  }
  free(f);
}

/* Whether a summed variable's subscript needs braces in text. */
static int plain_name(const char *s) {
  for (; *s; s++) if (!isalnum((unsigned char)*s) && *s != '_') return 0;
  return 1;
}

static void sum(pctx *p, const sl_idx *x) {
  for (size_t i = 0; i < x->na; i++) p->depth[x->a[i]]++;
  int braces = p->latex || x->na > 1 ||
               (x->na == 1 && !plain_name(sl_graph_name(p->g, p->r->var_node[x->a[0]])));
  sl_buf_adds(p->b, p->latex ? "\\sum_" : "Σ_");
  if (braces) sl_buf_adds(p->b, "{");
  vars(p, x->a, x->na);
  if (braces) sl_buf_adds(p->b, "}");
  sl_buf_adds(p->b, " ");
  expr(p, x->kid[0]);
  for (size_t i = 0; i < x->na; i++) p->depth[x->a[i]]--;
}

static void quotient(pctx *p, const sl_idx *x) {
  if (p->latex) {
    sl_buf_adds(p->b, "\\frac{");
    expr(p, x->kid[0]);
    sl_buf_adds(p->b, "}{");
    expr(p, x->kid[1]);
    sl_buf_adds(p->b, "}");
    return;
  }
  for (int k = 0; k < 2; k++) {
    int wrap = x->kid[k]->kind != SL_IDX_PROB && x->kid[k]->kind != SL_IDX_ONE;
    if (k) sl_buf_adds(p->b, " / ");
    if (wrap) sl_buf_adds(p->b, "(");
    expr(p, x->kid[k]);
    if (wrap) sl_buf_adds(p->b, ")");
  }
}

static void expr(pctx *p, const sl_idx *x) {
  if (p->b->failed || p->b->len > SL_ID_MAX_TEXT) { p->b->failed = 1; return; }
  switch (x->kind) {
  case SL_IDX_ONE: sl_buf_adds(p->b, "1"); break;
  case SL_IDX_PROB: prob(p, x); break;
  case SL_IDX_PRODUCT: product(p, x); break;
  case SL_IDX_SUM: sum(p, x); break;
  case SL_IDX_QUOTIENT: quotient(p, x); break;
  }
}

/* Set up the scope (the query's variables are in use) and print. */
static char *render(const sl_identification *r, const sl_graph *g, const sl_idx *x,
                    int latex, int left) {
  sl_buf b;
  sl_buf_init(&b);
  pctx p = {r, g, latex, &b, calloc(r->nvar ? r->nvar : 1, sizeof(int)),
            calloc(r->nvar ? r->nvar : 1, 1)};
  if (!p.depth || !p.treat) { free(p.depth); free(p.treat); return NULL; }
  for (size_t i = 0; i < r->nx; i++) { p.treat[r->x[i]] = 1; p.depth[r->x[i]] = 1; }
  for (size_t i = 0; i < r->ny; i++) p.depth[r->y[i]] = 1;
  for (size_t i = 0; i < r->nz; i++) p.depth[r->z[i]] = 1;
  if (left) {
    sl_buf_adds(&b, "P(");
    vars(&p, r->y, r->ny);
    sl_buf_adds(&b, latex ? " \\mid do(" : " | do(");
    vars(&p, r->x, r->nx);
    sl_buf_adds(&b, ")");
    if (r->nz) { sl_buf_adds(&b, ", "); vars(&p, r->z, r->nz); }
    sl_buf_adds(&b, ")");
    if (x) sl_buf_adds(&b, " = ");
  }
  if (x) expr(&p, x);
  sl_buf_add(&b, "", 1);
  free(p.depth);
  free(p.treat);
  if (b.failed) { sl_buf_free(&b); return NULL; }
  return b.data;
}

char *sl_identification_text(const sl_identification *r, const sl_graph *g, int latex) {
  return render(r, g, r->identified ? r->expr : NULL, latex, 1);
}

char *sl_idx_text(const sl_identification *r, const sl_graph *g, const sl_idx *x, int latex) {
  return render(r, g, x, latex, 0);
}
