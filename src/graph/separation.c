/*
** separation.c: trail enumeration, trail status, and d-separation by the
** reachability ("Bayes-ball") procedure: Geiger, Verma and Pearl 1990;
** Shachter 1998; Koller and Friedman 2009, Algorithm 3.1, here with <->
** edges counted as two arrowheads (m-separation).
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"
#include "separation.h"

/* ---- trails ---- */

int sl_trail_kind(const sl_trail *t) {
  if (t->len == 0) return SL_NONCAUSAL;
  if (t->steps[0] != SL_FORWARD) return SL_BACKDOOR;
  for (size_t i = 0; i < t->len; i++)
    if (t->steps[i] != SL_FORWARD) return SL_NONCAUSAL;
  return SL_CAUSAL;
}

int sl_trail_open(const sl_trail *t, sl_mark z, sl_mark an_z, size_t *at, int *why) {
  for (size_t i = 1; i < t->len; i++) {
    int32_t v = t->nodes[i];
    int head_left = t->steps[i - 1] != SL_BACKWARD;   /* -> v or <-> v */
    int head_right = t->steps[i] != SL_FORWARD;       /* v <- or v <-> */
    int blocked, reason;
    if (head_left && head_right) {
      blocked = !(an_z && an_z[v]);
      reason = SL_BLOCK_COLLIDER;
    } else {
      blocked = z && z[v];
      reason = SL_BLOCK_CONDITIONED;
    }
    if (blocked) {
      if (at) *at = i;
      if (why) *why = reason;
      return 0;
    }
  }
  if (why) *why = SL_OPEN;
  return 1;
}

/* One frame of the depth-first search: a node and where its neighbour scan
** stands (children, then parents, then siblings). */
typedef struct frame { int32_t v; uint32_t next; } frame;

/* The k-th neighbour of v across the three adjacency lists, or -1. */
static int32_t neighbour(const sl_graph *g, int32_t v, uint32_t k, unsigned char *step) {
  uint32_t nc = g->ch.off[v + 1] - g->ch.off[v];
  uint32_t np = g->pa.off[v + 1] - g->pa.off[v];
  uint32_t ns = g->sb.off[v + 1] - g->sb.off[v];
  if (k < nc) { *step = SL_FORWARD; return g->ch.adj[g->ch.off[v] + k]; }
  k -= nc;
  if (k < np) { *step = SL_BACKWARD; return g->pa.adj[g->pa.off[v] + k]; }
  k -= np;
  if (k < ns) { *step = SL_BOTH; return g->sb.adj[g->sb.off[v] + k]; }
  return -1;
}

int sl_trails_each(const sl_graph *g, const int32_t *x, size_t nx,
                   const int32_t *y, size_t ny, sl_trail_fn fn, void *ctx,
                   volatile int *stop, sl_error *e) {
  size_t n = g->n;
  unsigned char *role = calloc(n ? n : 1, 1);     /* 1 in X, 2 in Y, 4 on path */
  frame *st = malloc((n + 1) * sizeof *st);
  int32_t *nodes = malloc((n + 1) * sizeof *nodes);
  unsigned char *steps = malloc(n + 1);
  int32_t *starts = malloc((nx ? nx : 1) * sizeof *starts);
  int rc = SL_OK;
  if (!role || !st || !nodes || !steps || !starts) {
    rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    goto done;
  }
  for (size_t i = 0; i < nx; i++) role[x[i]] |= 1;
  for (size_t i = 0; i < ny; i++) role[y[i]] |= 2;
  /* start from the members of X in name order */
  size_t ns = 0;
  for (size_t r = 0; r < n; r++)
    if (role[g->by_rank[r]] & 1) starts[ns++] = g->by_rank[r];
  unsigned long ticks = 0;
  for (size_t s = 0; s < ns && rc == SL_OK; s++) {
    size_t top = 0;
    st[0] = (frame){starts[s], 0};
    nodes[0] = starts[s];
    role[starts[s]] |= 4;
    for (;;) {
      if ((++ticks & 4095) == 0 && stop && *stop) {
        rc = sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
        break;
      }
      frame *f = &st[top];
      unsigned char step;
      int32_t w = neighbour(g, f->v, f->next++, &step);
      if (w < 0) {                       /* this node is exhausted: back up */
        role[f->v] &= (unsigned char)~4;
        if (top == 0) break;
        top--;
        continue;
      }
      if (role[w] & 4) continue;
      if (role[w] & 2) {                 /* reached Y: a trail */
        steps[top] = step;
        nodes[top + 1] = w;
        sl_trail t = {nodes, steps, top + 1};
        int r = fn(ctx, &t);
        if (r) { rc = r; break; }
        continue;
      }
      if (role[w] & 1) continue;         /* inner nodes avoid X */
      steps[top] = step;
      nodes[++top] = w;
      st[top] = (frame){w, 0};
      role[w] |= 4;
    }
    for (size_t i = 0; i <= top && i < n; i++) role[nodes[i]] &= (unsigned char)~4;
  }
done:
  free(role); free(st); free(nodes); free(steps); free(starts);
  return rc;
}

/* ---- separation by reachability ---- */

struct sl_sep_ws {
  const sl_graph *g;
  uint32_t gen;
  uint32_t *in_z, *in_a, *in_y, *seen;   /* generation stamps; seen has 2n */
  int32_t *queue, *pred;                  /* states: 2 * node + arrived-by-head */
  unsigned char *step_in;                 /* step that reached each state */
  int32_t *wnodes;                        /* the witness */
  unsigned char *wsteps;
  unsigned char *wmark, *wmark_an;        /* sets as marks, for witness checks */
};

sl_sep_ws *sl_sep_alloc(const sl_graph *g) {
  sl_sep_ws *w = calloc(1, sizeof *w);
  size_t n = g->n ? g->n : 1;
  if (!w) return NULL;
  w->g = g;
  w->in_z = calloc(n, sizeof *w->in_z);
  w->in_a = calloc(n, sizeof *w->in_a);
  w->in_y = calloc(n, sizeof *w->in_y);
  w->seen = calloc(2 * n, sizeof *w->seen);
  w->queue = malloc(2 * n * sizeof *w->queue);
  w->pred = malloc(2 * n * sizeof *w->pred);
  w->step_in = malloc(2 * n);
  w->wnodes = malloc((n + 1) * sizeof *w->wnodes);
  w->wsteps = malloc(n + 1);
  w->wmark = calloc(n, 1);
  w->wmark_an = calloc(n, 1);
  if (!w->in_z || !w->in_a || !w->in_y || !w->seen || !w->queue || !w->pred ||
      !w->step_in || !w->wnodes || !w->wsteps || !w->wmark || !w->wmark_an) {
    sl_sep_free(w);
    return NULL;
  }
  return w;
}

void sl_sep_free(sl_sep_ws *w) {
  if (!w) return;
  free(w->in_z); free(w->in_a); free(w->in_y); free(w->seen);
  free(w->queue); free(w->pred); free(w->step_in);
  free(w->wnodes); free(w->wsteps); free(w->wmark); free(w->wmark_an);
  free(w);
}

/* A fresh generation, so stamps from earlier queries read as unset. */
static void next_gen(sl_sep_ws *w) {
  if (++w->gen == 0) {   /* wrapped: clear every stamp once */
    size_t n = w->g->n;
    memset(w->in_z, 0, n * sizeof *w->in_z);
    memset(w->in_a, 0, n * sizeof *w->in_a);
    memset(w->in_y, 0, n * sizeof *w->in_y);
    memset(w->seen, 0, 2 * n * sizeof *w->seen);
    w->gen = 1;
  }
}

/* Whether the edge p -> v is removed in the cut graph. */
static inline int removed(sl_mark drop_out, sl_mark cut, int32_t p, int32_t v) {
  return drop_out && drop_out[p] && (!cut || cut[v]);
}

/* Find a simple open trail by depth-first search when the shortest
** connecting walk repeats a node: the context of the callback. */
typedef struct find_ctx { sl_sep_ws *w; sl_mark drop_out, cut; int found; size_t seen; } find_ctx;

#define WITNESS_SEARCH_MAX 1000000   /* trails examined before keeping the walk */

static int take_open(void *ctx, const sl_trail *t) {
  find_ctx *c = ctx;
  if (++c->seen > WITNESS_SEARCH_MAX) return 1;
  for (size_t i = 0; i < t->len; i++)   /* skip trails using removed edges */
    if ((t->steps[i] == SL_FORWARD && removed(c->drop_out, c->cut, t->nodes[i], t->nodes[i + 1])) ||
        (t->steps[i] == SL_BACKWARD && removed(c->drop_out, c->cut, t->nodes[i + 1], t->nodes[i])))
      return 0;
  if (!sl_trail_open(t, c->w->wmark, c->w->wmark_an, NULL, NULL)) return 0;
  memcpy(c->w->wnodes, t->nodes, (t->len + 1) * sizeof *t->nodes);
  memcpy(c->w->wsteps, t->steps, t->len);
  c->found = (int)t->len + 1;
  return 1;
}

/* Rebuild the walk that reached state s; if it repeats a node, search for
** a simple open trail instead (within WITNESS_SEARCH_MAX trails; past that
** the walk itself is the witness). */
static void witness(sl_sep_ws *w, int32_t s, const int32_t *x, size_t nx,
                    const int32_t *y, size_t ny, sl_mark drop_out, sl_mark cut,
                    sl_trail *out) {
  const sl_graph *g = w->g;
  size_t len = 0, k;
  int simple = 1;
  for (int32_t t = s; t >= 0; t = w->pred[t]) len++;
  k = len;
  for (int32_t t = s; t >= 0; t = w->pred[t]) {
    k--;
    w->wnodes[k] = t / 2;
    if (k > 0) w->wsteps[k - 1] = w->step_in[t];
  }
  for (size_t i = 0; i < len; i++) {    /* wmark is all zero between calls */
    if (w->wmark[w->wnodes[i]]) simple = 0;
    w->wmark[w->wnodes[i]] = 1;
  }
  for (size_t i = 0; i < len; i++) w->wmark[w->wnodes[i]] = 0;
  if (!simple) {
    /* marks of Z and An(Z) for sl_trail_open: rebuilt from the stamps */
    for (size_t v = 0; v < g->n; v++) {
      w->wmark[v] = w->in_z[v] == w->gen;
      w->wmark_an[v] = w->in_a[v] == w->gen;
    }
    find_ctx c = {w, drop_out, cut, 0, 0};
    sl_trails_each(g, x, nx, y, ny, take_open, &c, NULL, NULL);
    for (size_t v = 0; v < g->n; v++) w->wmark[v] = w->wmark_an[v] = 0;
    if (c.found) len = (size_t)c.found;
  }
  out->nodes = w->wnodes;
  out->steps = w->wsteps;
  out->len = len - 1;
}

int sl_separated_cut(sl_sep_ws *w, const int32_t *x, size_t nx, const int32_t *y,
                     size_t ny, const int32_t *z, size_t nz, sl_mark drop_out,
                     sl_mark cut, int *separated, sl_trail *wit, sl_error *e) {
  const sl_graph *g = w->g;
  next_gen(w);
  uint32_t gen = w->gen;
  for (size_t i = 0; i < nz; i++) w->in_z[z[i]] = gen;
  for (size_t i = 0; i < ny; i++) w->in_y[y[i]] = gen;
  for (size_t i = 0; i < nx; i++)
    if (w->in_z[x[i]] == gen || w->in_y[x[i]] == gen)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is in more than one of the sets",
                          sl_graph_name(g, x[i]));
  for (size_t i = 0; i < ny; i++)
    if (w->in_z[y[i]] == gen)
      return sl_error_set(e, SL_EARG, 0, 0, "'%s' is in more than one of the sets",
                          sl_graph_name(g, y[i]));
  /* phase 1: Z and its ancestors, along edges that are not removed */
  size_t head = 0, tail = 0;
  for (size_t i = 0; i < nz; i++)
    if (w->in_a[z[i]] != gen) { w->in_a[z[i]] = gen; w->queue[tail++] = z[i]; }
  while (head < tail) {
    int32_t v = w->queue[head++];
    for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++) {
      int32_t p = g->pa.adj[k];
      if (w->in_a[p] != gen && !removed(drop_out, cut, p, v)) {
        w->in_a[p] = gen;
        w->queue[tail++] = p;
      }
    }
  }
  /* phase 2: breadth-first over (node, arrived by an arrowhead) states */
  head = tail = 0;
  for (size_t i = 0; i < nx; i++) {
    int32_t s = 2 * x[i];
    if (w->seen[s] == gen) continue;
    w->seen[s] = gen;
    w->pred[s] = -1;
    w->queue[tail++] = s;
  }
  while (head < tail) {
    int32_t s = w->queue[head++], v = s / 2;
    int by_head = s & 1, in_z = w->in_z[v] == gen, in_a = w->in_a[v] == gen;
    if (w->in_y[v] == gen) {
      *separated = 0;
      if (wit) witness(w, s, x, nx, y, ny, drop_out, cut, wit);
      return SL_OK;
    }
    int pass_tail = !in_z;                   /* leaving by a tail at v */
    int pass_head = by_head ? in_a : !in_z;  /* leaving by an arrowhead at v */
#define VISIT(nb, headed, stp) do {                                        \
      int32_t t_ = 2 * (nb) + (headed);                                    \
      if (w->seen[t_] != gen) {                                            \
        w->seen[t_] = gen; w->pred[t_] = s; w->step_in[t_] = (stp);        \
        w->queue[tail++] = t_;                                             \
      } } while (0)
    if (pass_tail)
      for (uint32_t k = g->ch.off[v]; k < g->ch.off[v + 1]; k++)
        if (!removed(drop_out, cut, v, g->ch.adj[k])) VISIT(g->ch.adj[k], 1, SL_FORWARD);
    if (pass_head) {
      for (uint32_t k = g->pa.off[v]; k < g->pa.off[v + 1]; k++)
        if (!removed(drop_out, cut, g->pa.adj[k], v)) VISIT(g->pa.adj[k], 0, SL_BACKWARD);
      for (uint32_t k = g->sb.off[v]; k < g->sb.off[v + 1]; k++)
        VISIT(g->sb.adj[k], 1, SL_BOTH);
    }
#undef VISIT
  }
  *separated = 1;
  return SL_OK;
}

int sl_separated(sl_sep_ws *w, const int32_t *x, size_t nx, const int32_t *y, size_t ny,
                 const int32_t *z, size_t nz, int *separated, sl_trail *witness,
                 sl_error *e) {
  return sl_separated_cut(w, x, nx, y, ny, z, nz, NULL, NULL, separated, witness, e);
}
