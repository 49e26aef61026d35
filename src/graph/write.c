/*
** write.c: a graph as text: canonical notation, DOT, and a terminal view.
*/
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "notation.h"

void sl_buf_init(sl_buf *b) { memset(b, 0, sizeof *b); }
void sl_buf_free(sl_buf *b) { free(b->data); memset(b, 0, sizeof *b); }

void sl_buf_add(sl_buf *b, const char *s, size_t n) {
  if (b->failed) return;
  if (b->len + n + 1 > b->cap) {
    size_t cap = b->cap ? b->cap : 256;
    while (cap < b->len + n + 1) cap *= 2;
    char *d = realloc(b->data, cap);
    if (!d) { b->failed = 1; return; }
    b->data = d;
    b->cap = cap;
  }
  memcpy(b->data + b->len, s, n);
  b->len += n;
  b->data[b->len] = '\0';
}

void sl_buf_adds(sl_buf *b, const char *s) { sl_buf_add(b, s, strlen(s)); }

void sl_buf_addf(sl_buf *b, const char *fmt, ...) {
  char tmp[512];
  va_list ap;
  va_start(ap, fmt);
  int n = vsnprintf(tmp, sizeof tmp, fmt, ap);
  va_end(ap);
  if (n < 0) return;
  if ((size_t)n < sizeof tmp) { sl_buf_add(b, tmp, (size_t)n); return; }
  char *big = malloc((size_t)n + 1);
  if (!big) { b->failed = 1; return; }
  va_start(ap, fmt);
  vsnprintf(big, (size_t)n + 1, fmt, ap);
  va_end(ap);
  sl_buf_add(b, big, (size_t)n);
  free(big);
}

/* Whether a name can be written without quotes. */
static int bare_ok(const char *s) {
  if (!*s || strcmp(s, "hidden") == 0) return 0;
  for (const unsigned char *p = (const unsigned char *)s; *p; p++)
    if (!((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9') ||
          *p == '_' || *p == '.' || *p >= 0x80))
      return 0;
  return sl_invisible_in(s, strlen(s)) == 0;   /* a BOM or a blank would not read back */
}

void sl_name_write(const char *name, sl_buf *out) {
  if (bare_ok(name)) { sl_buf_adds(out, name); return; }
  sl_buf_add(out, "\"", 1);
  size_t len = strlen(name);
  for (size_t i = 0; i < len;) {
    uint32_t cp;
    size_t n = sl_utf8_decode(name + i, len - i, &cp);
    if (n && (cp < 0x20 || cp == 0x7F || sl_invisible_name(cp))) {
      sl_buf_addf(out, "\\u{%04X}", (unsigned)cp);   /* seen, and read back */
      i += n;
      continue;
    }
    if (name[i] == '"' || name[i] == '\\') sl_buf_add(out, "\\", 1);
    sl_buf_add(out, name + i, n ? n : 1);
    i += n ? n : 1;
  }
  sl_buf_add(out, "\"", 1);
}

/* "a, b, c" for a neighbour list. */
static void write_list(const sl_graph *g, const int32_t *v, size_t n, sl_buf *out) {
  for (size_t i = 0; i < n; i++) {
    if (i) sl_buf_add(out, ", ", 2);
    sl_name_write(sl_graph_name(g, v[i]), out);
  }
}

void sl_graph_write(const sl_graph *g, sl_buf *out) {
  size_t n = g->n, nh = 0;
  for (size_t r = 0; r < n; r++) {
    int32_t v = g->by_rank[r];
    if (!g->hidden[v]) continue;
    sl_buf_adds(out, nh++ ? ", " : "hidden ");
    sl_name_write(sl_graph_name(g, v), out);
  }
  if (nh) sl_buf_add(out, "\n", 1);
  for (size_t r = 0; r < n; r++) {
    int32_t v = g->by_rank[r];
    size_t k;
    const int32_t *c = sl_graph_children(g, v, &k);
    if (!k) continue;
    sl_name_write(sl_graph_name(g, v), out);
    sl_buf_add(out, " -> ", 4);
    write_list(g, c, k, out);
    sl_buf_add(out, "\n", 1);
  }
  for (size_t r = 0; r < n; r++) {
    int32_t v = g->by_rank[r];
    size_t k, first = 0;
    const int32_t *s = sl_graph_siblings(g, v, &k);
    while (first < k && g->rank[s[first]] < (int32_t)r) first++;
    if (first == k) continue;
    sl_name_write(sl_graph_name(g, v), out);
    sl_buf_add(out, " <-> ", 5);
    write_list(g, s + first, k - first, out);
    sl_buf_add(out, "\n", 1);
  }
  for (size_t r = 0; r < n; r++) {   /* isolated observed nodes */
    int32_t v = g->by_rank[r];
    if (g->hidden[v] || g->pa.off[v + 1] > g->pa.off[v] || g->ch.off[v + 1] > g->ch.off[v] ||
        g->sb.off[v + 1] > g->sb.off[v])
      continue;
    sl_name_write(sl_graph_name(g, v), out);
    sl_buf_add(out, "\n", 1);
  }
}

/* A DOT double-quoted string. */
static void dot_id(const char *s, sl_buf *out) {
  sl_buf_add(out, "\"", 1);
  for (; *s; s++) {
    if (*s == '"' || *s == '\\') sl_buf_add(out, "\\", 1);
    sl_buf_add(out, s, 1);
  }
  sl_buf_add(out, "\"", 1);
}

void sl_graph_dot(const sl_graph *g, sl_buf *out) {
  sl_buf_adds(out,
    "digraph sluice {\n"
    "  graph [rankdir=TB, nodesep=0.4, ranksep=0.5, fontname=\"Helvetica\"];\n"
    "  node [shape=ellipse, fontname=\"Helvetica\", fontsize=12];\n"
    "  edge [arrowsize=0.8];\n");
  for (size_t r = 0; r < g->n; r++) {
    int32_t v = g->by_rank[r];
    sl_buf_adds(out, "  ");
    dot_id(sl_graph_name(g, v), out);
    if (g->hidden[v])
      sl_buf_adds(out, " [style=dashed, fontcolor=\"#666666\", color=\"#666666\", "
                       "tooltip=\"hidden: never measured\"]");
    sl_buf_adds(out, ";\n");
  }
  for (size_t r = 0; r < g->n; r++) {
    int32_t v = g->by_rank[r];
    size_t k;
    const int32_t *c = sl_graph_children(g, v, &k);
    for (size_t i = 0; i < k; i++) {
      sl_buf_adds(out, "  ");
      dot_id(sl_graph_name(g, v), out);
      sl_buf_adds(out, " -> ");
      dot_id(sl_graph_name(g, c[i]), out);
      if (g->hidden[v]) sl_buf_adds(out, " [style=dashed]");
      sl_buf_adds(out, ";\n");
    }
  }
  for (size_t r = 0; r < g->n; r++) {
    int32_t v = g->by_rank[r];
    size_t k;
    const int32_t *s = sl_graph_siblings(g, v, &k);
    for (size_t i = 0; i < k; i++) {
      if (g->rank[s[i]] < (int32_t)r) continue;
      sl_buf_adds(out, "  ");
      dot_id(sl_graph_name(g, v), out);
      sl_buf_adds(out, " -> ");
      dot_id(sl_graph_name(g, s[i]), out);
      sl_buf_adds(out, " [dir=both, style=dashed, constraint=false];\n");
    }
  }
  sl_buf_adds(out, "}\n");
}

/* Display width of a UTF-8 string, one column per character. */
static size_t width(const char *s) {
  size_t w = 0;
  for (; *s; s++) if (((unsigned char)*s & 0xC0) != 0x80) w++;
  return w;
}

/* A name in the terminal view: as it is, unless it holds a character that
** would not show; then in the notation's quoted form.  Returns its width. */
static size_t show_name(const char *nm, int hidden, sl_buf *out) {
  sl_buf q;
  sl_buf_init(&q);
  if (sl_invisible_in(nm, strlen(nm))) { sl_name_write(nm, &q); nm = q.data ? q.data : ""; }
  size_t w = width(nm) + (hidden ? 2 : 0);
  if (out) {
    if (hidden) sl_buf_addf(out, "(%s)", nm); else sl_buf_adds(out, nm);
  }
  sl_buf_free(&q);
  return w;
}

/* A node of the terminal view with the key it is listed by. */
typedef struct { int32_t depth; const char *name; int32_t v; } show_row;

/* By depth, then by name: a causal order a reader can check at a glance
** (no node listed after one deeper than it). */
static int show_row_cmp(const void *a, const void *b) {
  const show_row *x = a, *y = b;
  if (x->depth != y->depth) return x->depth < y->depth ? -1 : 1;
  return strcmp(x->name, y->name);
}

void sl_graph_show(const sl_graph *g, sl_buf *out) {
  size_t n = g->n, nh = 0, wmax = 4;
  for (size_t v = 0; v < n; v++) {
    nh += g->hidden[v];
    size_t w = show_name(sl_graph_name(g, (int32_t)v), g->hidden[v], NULL);
    if (w > wmax) wmax = w;
  }
  if (wmax > 28) wmax = 28;
  sl_buf_addf(out, "%zu node%s", n, n == 1 ? "" : "s");
  if (nh) sl_buf_addf(out, " (%zu hidden)", nh);
  sl_buf_addf(out, ", %zu arrow%s", g->nd, g->nd == 1 ? "" : "s");
  if (g->nb) sl_buf_addf(out, ", %zu hidden common cause%s", g->nb, g->nb == 1 ? "" : "s");
  sl_buf_adds(out, "; nodes in causal order, each with what points into it\n");
  int32_t *order = malloc((n ? n : 1) * sizeof *order);
  int32_t *depth = calloc(n ? n : 1, sizeof *depth);
  show_row *rows = malloc((n ? n : 1) * sizeof *rows);
  if (!order || !depth || !rows) { free(order); free(depth); free(rows); out->failed = 1; return; }
  sl_graph_order(g, order);
  for (size_t i = 0; i < n; i++) {     /* depth: longest path from a root */
    int32_t v = order[i];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
      if (depth[g->pa.adj[k]] + 1 > depth[v]) depth[v] = depth[g->pa.adj[k]] + 1;
  }
  for (size_t i = 0; i < n; i++)
    rows[i] = (show_row){depth[order[i]], sl_graph_name(g, order[i]), order[i]};
  if (n > 1) qsort(rows, n, sizeof *rows, show_row_cmp);
  for (size_t i = 0; i < n; i++) {
    int32_t v = rows[i].v;
    sl_buf_addf(out, "  %2d  ", depth[v]);
    size_t w = show_name(sl_graph_name(g, v), g->hidden[v], out);
    for (size_t k = w; k < wmax; k++) sl_buf_add(out, " ", 1);
    size_t np, ns;
    const int32_t *p = sl_graph_parents(g, v, &np), *s = sl_graph_siblings(g, v, &ns);
    if (np) { sl_buf_adds(out, "  <- "); write_list(g, p, np, out); }
    if (ns) { sl_buf_adds(out, "  <-> "); write_list(g, s, ns, out); }
    while (out->len && out->data[out->len - 1] == ' ') out->data[--out->len] = '\0';
    sl_buf_add(out, "\n", 1);
  }
  if (nh) sl_buf_adds(out, "  (name) marks a hidden node; the left column is the causal depth\n");
  else sl_buf_adds(out, "  the left column is the causal depth\n");
  free(order); free(depth); free(rows);
}
