/*
** identify_admg.c: the observed ADMG of a graph with hidden nodes (its
** latent projection: Verma and Pearl 1990; Tian and Pearl 2002, section
** 2), and the structural queries the ID algorithm asks of it: ancestors in
** a subgraph, c-components (Tian and Pearl 2002), m-separation in a
** mutilated graph (Richardson and Spirtes 2002).
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "identify_internal.h"

/* ---- the pool ---- */

typedef struct sl_idblock { struct sl_idblock *next; size_t used, cap; } sl_idblock;
#define POOL_BLOCK (64u << 10)

sl_idpool *sl_idpool_alloc(void) { return calloc(1, sizeof(sl_idpool)); }

void sl_idpool_free(sl_idpool *p) {
  if (!p) return;
  for (sl_idblock *b = p->head, *nx; b; b = nx) { nx = b->next; free(b); }
  free(p);
}

void *sl_idpool_get(sl_idpool *p, size_t bytes) {
  bytes = (bytes + 7) & ~(size_t)7;
  if (!bytes) bytes = 8;
  sl_idblock *b = p->head;
  size_t hdr = (sizeof(sl_idblock) + 7) & ~(size_t)7;
  if (!b || b->cap - b->used < bytes) {
    size_t cap = bytes > POOL_BLOCK ? bytes : POOL_BLOCK;
    b = malloc(hdr + cap);
    if (!b) {
      if (p->fail) longjmp(*p->fail, 1);
      abort();   /* unreachable: sl_identify always sets the handler */
    }
    b->cap = cap;
    b->used = 0;
    /* a big block goes second, so the current small one keeps filling */
    if (p->head && cap > POOL_BLOCK) { b->next = p->head->next; p->head->next = b; }
    else { b->next = p->head; p->head = b; }
  }
  char *out = (char *)b + hdr + b->used;
  b->used += bytes;
  memset(out, 0, bytes);
  return out;
}

/* ---- latent projection ---- */

typedef struct pairs { int32_t (*v)[2]; size_t n, cap; } pairs;

static int pair_add(pairs *p, int32_t a, int32_t b) {
  if (p->n == p->cap) {
    size_t cap = p->cap ? p->cap * 2 : 64;
    void *nv = realloc(p->v, cap * sizeof *p->v);
    if (!nv) return -1;
    p->v = nv;
    p->cap = cap;
  }
  p->v[p->n][0] = a;
  p->v[p->n][1] = b;
  p->n++;
  return 0;
}

static int cmp_pair(const void *pa, const void *pb) {
  const int32_t *a = pa, *b = pb;
  if (a[0] != b[0]) return a[0] < b[0] ? -1 : 1;
  return (a[1] > b[1]) - (a[1] < b[1]);
}

/* Sort and drop repeats. */
static void pairs_unique(pairs *p) {
  if (!p->n) return;
  qsort(p->v, p->n, sizeof *p->v, cmp_pair);
  size_t k = 1;
  for (size_t i = 1; i < p->n; i++)
    if (cmp_pair(p->v[i], p->v[k - 1]) != 0) { p->v[k][0] = p->v[i][0]; p->v[k][1] = p->v[i][1]; k++; }
  p->n = k;
}

/* The observed nodes reached from hidden h by directed paths whose inner
** nodes are hidden (locals, appended to out); stamp marks visits. */
static size_t hidden_reach(const sl_graph *g, const int32_t *local, int32_t h,
                           uint32_t *stamp, uint32_t gen, int32_t *stack, int32_t *out) {
  size_t top = 0, k = 0;
  stack[top++] = h;
  stamp[h] = gen;
  while (top) {
    int32_t v = stack[--top];
    for (uint32_t i = g->ch.off[v]; i < g->ch.off[v + 1]; i++) {
      int32_t c = g->ch.adj[i];
      if (stamp[c] == gen) continue;
      stamp[c] = gen;
      if (g->hidden[c]) stack[top++] = c;
      else out[k++] = local[c];
    }
  }
  return k;
}

/* Every pair of the members of s[0..k) as a <-> edge. */
static int all_pairs(pairs *bi, const int32_t *s, size_t k) {
  for (size_t i = 0; i < k; i++)
    for (size_t j = i + 1; j < k; j++) {
      int32_t a = s[i] < s[j] ? s[i] : s[j], b = s[i] < s[j] ? s[j] : s[i];
      if (a != b && pair_add(bi, a, b)) return -1;
    }
  return 0;
}

/* The projected edges: di (a -> b) and bi (a <-> b, a < b), as locals. */
static int project(const sl_graph *g, const int32_t *local, pairs *di, pairs *bi) {
  size_t n = g->n;
  uint32_t *stamp = calloc(n ? n : 1, sizeof *stamp);
  int32_t *stack = malloc((n ? n : 1) * sizeof *stack);
  int32_t *r1 = malloc((n ? n : 1) * sizeof *r1);
  int32_t *r2 = malloc((2 * n + 2) * sizeof *r2);
  uint32_t gen = 0;
  int rc = -1;
  if (!stamp || !stack || !r1 || !r2) goto done;
  for (size_t v = 0; v < n; v++) {
    if (g->hidden[v]) {                       /* a hidden common cause */
      size_t k = hidden_reach(g, local, (int32_t)v, stamp, ++gen, stack, r1);
      if (all_pairs(bi, r1, k)) goto done;
      continue;
    }
    for (uint32_t i = g->ch.off[v]; i < g->ch.off[v + 1]; i++) {
      int32_t c = g->ch.adj[i];
      if (!g->hidden[c]) { if (pair_add(di, local[v], local[c])) goto done; continue; }
      size_t k = hidden_reach(g, local, c, stamp, ++gen, stack, r1);
      for (size_t j = 0; j < k; j++)
        if (pair_add(di, local[v], r1[j])) goto done;
    }
  }
  /* a <-> edge is a hidden parent of both its ends */
  for (size_t v = 0; v < n; v++)
    for (uint32_t i = g->sb.off[v]; i < g->sb.off[v + 1]; i++) {
      int32_t w = g->sb.adj[i];
      if (w < (int32_t)v) continue;
      size_t k = 0;
      int32_t ends[2] = {(int32_t)v, w};
      for (int s = 0; s < 2; s++) {
        if (!g->hidden[ends[s]]) { r2[k++] = local[ends[s]]; continue; }
        k += hidden_reach(g, local, ends[s], stamp, ++gen, stack, r2 + k);
      }
      if (all_pairs(bi, r2, k)) goto done;
    }
  pairs_unique(di);
  pairs_unique(bi);
  rc = 0;
done:
  free(stamp); free(stack); free(r1); free(r2);
  return rc;
}

/* CSR adjacency from edge pairs: for each pair (a, b), b joins a's list
** (and a joins b's when both). */
static int csr(size_t n, const pairs *p, int by_second, int both, uint32_t **off, int32_t **adj) {
  *off = calloc(n + 1, sizeof **off);
  *adj = malloc((p->n * (both ? 2 : 1) + 1) * sizeof **adj);
  if (!*off || !*adj) return -1;
  for (size_t i = 0; i < p->n; i++) {
    (*off)[p->v[i][by_second] + 1]++;
    if (both) (*off)[p->v[i][1] + 1]++;
  }
  for (size_t v = 0; v < n; v++) (*off)[v + 1] += (*off)[v];
  uint32_t *fill = malloc((n + 1) * sizeof *fill);
  if (!fill) return -1;
  memcpy(fill, *off, (n + 1) * sizeof *fill);
  for (size_t i = 0; i < p->n; i++) {
    int32_t a = p->v[i][0], b = p->v[i][1];
    if (by_second) (*adj)[fill[b]++] = a;
    else (*adj)[fill[a]++] = b;
    if (both) (*adj)[fill[b]++] = a;
  }
  free(fill);
  return 0;
}

void sl_admg_free(sl_admg *a) {
  free(a->node); free(a->local); free(a->pos); free(a->order);
  free(a->pa_off); free(a->pa); free(a->sb_off); free(a->sb);
  free(a->ch_off); free(a->ch);
  memset(a, 0, sizeof *a);
}

int sl_admg_build(sl_admg *a, const sl_graph *g, sl_error *e) {
  memset(a, 0, sizeof *a);
  size_t n = g->n, m = 0;
  for (size_t v = 0; v < n; v++) m += !g->hidden[v];
  if (m > SL_ID_MAX_OBSERVED)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "the graph has %zu observed nodes; identification "
                        "handles at most %d", m, SL_ID_MAX_OBSERVED);
  pairs di = {0}, bi = {0};
  int32_t *gorder = malloc((n ? n : 1) * sizeof *gorder);
  a->n = m;
  a->words = SL_BITS_WORDS(m ? m : 1);
  a->node = malloc((m ? m : 1) * sizeof *a->node);
  a->local = malloc((n ? n : 1) * sizeof *a->local);
  a->pos = malloc((m ? m : 1) * sizeof *a->pos);
  a->order = malloc((m ? m : 1) * sizeof *a->order);
  if (!gorder || !a->node || !a->local || !a->pos || !a->order) goto oom;
  /* locals in the graph's topological order (by name among ties) */
  sl_graph_order(g, gorder);
  for (size_t v = 0; v < n; v++) a->local[v] = -1;
  size_t k = 0;
  for (size_t i = 0; i < n; i++) {
    int32_t v = gorder[i];
    if (g->hidden[v]) continue;
    a->node[k] = v;
    a->local[v] = (int32_t)k;
    a->pos[k] = (int32_t)k;
    a->order[k] = (int32_t)k;
    k++;
  }
  if (project(g, a->local, &di, &bi)) goto oom;
  if (csr(m, &di, 1, 0, &a->pa_off, &a->pa) || csr(m, &di, 0, 0, &a->ch_off, &a->ch) ||
      csr(m, &bi, 0, 1, &a->sb_off, &a->sb))
    goto oom;
  free(gorder); free(di.v); free(bi.v);
  return SL_OK;
oom:
  free(gorder); free(di.v); free(bi.v);
  sl_admg_free(a);
  return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
}

sl_graph *sl_latent_project(const sl_graph *g, sl_error *e) {
  sl_admg a;
  if (sl_admg_build(&a, g, e)) return NULL;
  sl_builder *b = sl_builder_alloc();
  sl_graph *out = NULL;
  if (!b) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  int32_t *id = malloc((a.n ? a.n : 1) * sizeof *id);
  if (!id) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  for (size_t v = 0; v < a.n; v++) {
    int32_t gv = a.node[v];
    id[v] = sl_builder_node(b, sl_graph_name(g, gv), g->names.len[gv], e);
    if (id[v] < 0) { free(id); goto done; }
  }
  for (size_t v = 0; v < a.n; v++) {
    for (uint32_t i = a.ch_off[v]; i < a.ch_off[v + 1]; i++)
      if (sl_builder_edge(b, id[v], id[a.ch[i]], SL_DIRECTED, 0, 0, e)) { free(id); goto done; }
    for (uint32_t i = a.sb_off[v]; i < a.sb_off[v + 1]; i++)
      if (a.sb[i] > (int32_t)v &&
          sl_builder_edge(b, id[v], id[a.sb[i]], SL_BIDIRECTED, 0, 0, e)) { free(id); goto done; }
  }
  free(id);
  out = sl_builder_finish(b, e);
done:
  sl_builder_free(b);
  sl_admg_free(&a);
  return out;
}

/* ---- queries ---- */

void sl_admg_ancestors(const sl_admg *a, const sl_bits *v, const sl_bits *y,
                       const sl_bits *cut, sl_bits *out, int32_t *stack) {
  size_t top = 0;
  memset(out, 0, a->words * sizeof *out);
  for (size_t u = 0; u < a->n; u++)
    if (bits_has(y, (int32_t)u) && bits_has(v, (int32_t)u)) { bits_set(out, (int32_t)u); stack[top++] = (int32_t)u; }
  while (top) {
    int32_t u = stack[--top];
    if (cut && bits_has(cut, u)) continue;   /* its incoming edges are gone */
    for (uint32_t i = a->pa_off[u]; i < a->pa_off[u + 1]; i++) {
      int32_t p = a->pa[i];
      if (bits_has(v, p) && !bits_has(out, p)) { bits_set(out, p); stack[top++] = p; }
    }
  }
}

size_t sl_admg_components(const sl_admg *a, const sl_bits *v, int32_t *comp,
                          int32_t *stack) {
  size_t nc = 0;
  for (size_t u = 0; u < a->n; u++) comp[u] = -1;
  for (size_t p = 0; p < a->n; p++) {
    int32_t u = a->order[p];
    if (!bits_has(v, u) || comp[u] >= 0) continue;
    size_t top = 0;
    stack[top++] = u;
    comp[u] = (int32_t)nc;
    while (top) {
      int32_t t = stack[--top];
      for (uint32_t i = a->sb_off[t]; i < a->sb_off[t + 1]; i++) {
        int32_t s = a->sb[i];
        if (bits_has(v, s) && comp[s] < 0) { comp[s] = (int32_t)nc; stack[top++] = s; }
      }
    }
    nc++;
  }
  return nc;
}

int sl_admg_ws_init(sl_admg_ws *w, const sl_admg *a) {
  size_t n = a->n ? a->n : 1;
  memset(w, 0, sizeof *w);
  w->a = a;
  w->mx = calloc(n, 1); w->my = calloc(n, 1); w->mz = calloc(n, 1);
  w->anz = calloc(n, 1); w->seen = calloc(2 * n, 1);
  w->no_in = calloc(n, 1); w->no_out = calloc(n, 1);
  w->queue = malloc(2 * n * sizeof *w->queue);
  if (!w->mx || !w->my || !w->mz || !w->anz || !w->seen || !w->no_in || !w->no_out || !w->queue) {
    sl_admg_ws_free(w);
    return -1;
  }
  return 0;
}

void sl_admg_ws_free(sl_admg_ws *w) {
  free(w->mx); free(w->my); free(w->mz); free(w->anz); free(w->seen);
  free(w->no_in); free(w->no_out); free(w->queue);
  memset(w, 0, sizeof *w);
}

/* Z and its ancestors in the mutilated graph. */
static void ancestors_of_z(sl_admg_ws *w) {
  const sl_admg *a = w->a;
  size_t top = 0;
  int32_t *st = w->queue;
  for (size_t u = 0; u < a->n; u++) {
    w->anz[u] = w->mz[u];
    if (w->mz[u]) st[top++] = (int32_t)u;
  }
  while (top) {
    int32_t u = st[--top];
    if (w->no_in[u]) continue;
    for (uint32_t i = a->pa_off[u]; i < a->pa_off[u + 1]; i++) {
      int32_t p = a->pa[i];
      if (w->no_out[p] || w->anz[p]) continue;
      w->anz[p] = 1;
      st[top++] = p;
    }
  }
}

/* Reachability over (node, arrived by an arrowhead) states: a trail goes
** on through a collider in An(Z) and through a non-collider outside Z. */
int sl_admg_separated(sl_admg_ws *w) {
  const sl_admg *a = w->a;
  size_t n = a->n, head = 0, tail = 0;
  ancestors_of_z(w);
  memset(w->seen, 0, 2 * n);
  for (size_t u = 0; u < n; u++)
    if (w->mx[u]) { w->seen[2 * u] = 1; w->queue[tail++] = (int32_t)(2 * u); }
  while (head < tail) {
    int32_t s = w->queue[head++];
    int32_t v = s / 2;
    int arrow_in = s & 1;
    if (w->my[v] && !w->mx[v]) return 0;
    /* out along v -> c: v is a non-collider; a member of X starts trails */
    int pass_tail = w->mx[v] || !w->mz[v];
    /* out along v <- p or v <-> t: v is a collider when entered by an arrowhead */
    int pass_head = w->mx[v] || (arrow_in ? w->anz[v] : !w->mz[v]);
    if (pass_tail && !w->no_out[v])
      for (uint32_t i = a->ch_off[v]; i < a->ch_off[v + 1]; i++) {
        int32_t c = a->ch[i];
        if (w->no_in[c] || w->seen[2 * c + 1]) continue;
        w->seen[2 * c + 1] = 1;
        w->queue[tail++] = 2 * c + 1;
      }
    if (pass_head && !w->no_in[v]) {
      for (uint32_t i = a->pa_off[v]; i < a->pa_off[v + 1]; i++) {
        int32_t p = a->pa[i];
        if (w->no_out[p] || w->seen[2 * p]) continue;
        w->seen[2 * p] = 1;
        w->queue[tail++] = 2 * p;
      }
      for (uint32_t i = a->sb_off[v]; i < a->sb_off[v + 1]; i++) {
        int32_t t = a->sb[i];
        if (w->no_in[t] || w->seen[2 * t + 1]) continue;
        w->seen[2 * t + 1] = 1;
        w->queue[tail++] = 2 * t + 1;
      }
    }
  }
  return 1;
}
