/*
** test_implications.c: the testable implications of a graph
** (src/graph/implications.c).
**
** Expected values: d-separation read off by hand with Pearl's definition
** (Pearl 2009, Causality, definition 1.2.3) on textbook graphs: the chain
** and the collider (Pearl 2009, section 1.2.3), the M-graph (Greenland,
** Pearl and Robins 1999; Pearl 2009, section 11.3.3), the graph of Verma's
** constraint, where a and d are joined by no edge yet no measured set
** separates them (Verma and Pearl 1990; Tian and Pearl 2002; from memory);
** and on random graphs with hidden nodes and <-> edges, a brute force over
** every subset of the observed nodes with the library's reachability test
** (sl_separated, itself checked against networkx in dsep_networkx.py), which
** shares no code with the moral-graph search under test.  networkx gives a
** second opinion in tests/oracle/implications_networkx.py.
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "notation.h"
#include "separation.h"
#include "implications.h"

static sl_graph *parse_ok(const char *text) {
  sl_error e;
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  if (!g) print_error("parse failed: %s\n", e.msg);
  assert_non_null(g);
  return g;
}

/* Implications as "a _ b | c,d;..." text. */
typedef struct text { const sl_graph *g; char buf[8192]; size_t n, count; } text;

static int collect(void *ctx, int32_t a, int32_t b, const int32_t *given, size_t n) {
  text *t = ctx;
  t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, "%s%s _ %s",
                           t->count++ ? ";" : "", sl_graph_name(t->g, a), sl_graph_name(t->g, b));
  for (size_t i = 0; i < n; i++)
    t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, "%s%s", i ? "," : " | ",
                             sl_graph_name(t->g, given[i]));
  return 0;
}

static void pairs(const char *graph, const char *want, size_t want_untestable) {
  sl_graph *g = parse_ok(graph);
  text t = {g, "", 0, 0};
  sl_error e;
  size_t untestable = 99;
  assert_int_equal(sl_implications_each(g, collect, &t, &untestable, NULL, &e), SL_OK);
  if (strcmp(t.buf, want) != 0) print_error("%s: got '%s', want '%s'\n", graph, t.buf, want);
  assert_string_equal(t.buf, want);
  assert_int_equal(untestable, want_untestable);
  sl_graph_free(g);
}

static void local(const char *graph, const char *want) {
  sl_graph *g = parse_ok(graph);
  text t = {g, "", 0, 0};
  sl_error e;
  assert_int_equal(sl_implications_local(g, collect, &t, NULL, &e), SL_OK);
  if (strcmp(t.buf, want) != 0) print_error("%s: got '%s', want '%s'\n", graph, t.buf, want);
  assert_string_equal(t.buf, want);
  sl_graph_free(g);
}

/* Pearl 2009, section 1.2.3: the chain blocks at its middle node; the
** collider blocks unconditioned; the fork blocks at its source. */
static void test_textbook(void **state) {
  (void)state;
  pairs("a -> b -> c", "a _ c | b", 0);
  pairs("a -> c <- b", "a _ b", 0);
  pairs("b <- a -> c", "b _ c | a", 0);
  pairs("a -> b; a -> c; b -> c", "", 0);      /* complete: nothing to test */
}

/* The M-graph x <- u1 -> m <- u2 -> y, x -> y, all measured.  By hand:
** u2 and x meet only at the colliders m and y, so the parent u1 of x is
** not needed (the empty set is the minimal subset of the parents); m and y
** need both parents of y; u1 and y need only x. */
static void test_m_graph(void **state) {
  (void)state;
  const char *m = "u1 -> x; u1 -> m; u2 -> m; u2 -> y; x -> y";
  pairs(m, "u1 _ u2;u2 _ x;m _ x | u1;u1 _ y | x;m _ y | u2,x", 0);
  /* with u1 and u2 unmeasured, m cannot be separated from x or from y:
  ** the hidden causes join them (an inducing path each) */
  pairs("hidden u1, u2; u1 -> x; u1 -> m; u2 -> m; u2 -> y; x -> y", "", 2);
  /* its latent projection x <-> m <-> y, x -> y joins the same pairs by
  ** edges: nothing listed, nothing untestable */
  pairs("x <-> m; m <-> y; x -> y", "", 0);
  pairs("x <-> m; m <-> y", "x _ y", 0);
}

/* Verma's graph a -> b -> c -> d, b <-> d: a and c are separated by b; a
** and d by no measured set (given c, the collider b opens; without c, the
** chain is open), so the pair is untestable by conditional independence
** (Verma and Pearl 1990; from memory). */
static void test_verma(void **state) {
  (void)state;
  pairs("a -> b -> c -> d; b <-> d", "a _ c | b", 1);
  /* the front-door graph: every pair adjacent (Pearl 2009, section 3.3.2) */
  pairs("x -> m -> y; x <-> y", "", 0);
  /* a <-> edge into the middle of a chain does not open it: m is no
  ** collider on x <-> m -> y */
  pairs("x -> m -> y; x <-> m", "x _ y | m", 0);
  /* a hidden mediator joins its ends */
  pairs("hidden h; a -> h -> b", "", 1);
  /* a hidden parent of d and e: each of d's predecessors is separated by
  ** its measured parent c; d and e by nothing */
  pairs("hidden h; a -> b -> c -> d; h -> d; h -> e", "a _ c | b;a _ d | c;b _ d | c;a _ e;b _ e;c _ e", 1);
  /* the parents of the later node y (none) leave a <- w <-> y open; the
  ** ancestor w closes it */
  pairs("w -> a; w <-> y", "a _ y | w", 0);
}

/* Pearl 2009, section 1.2.3 (the local Markov condition): each node
** against its non-descendants other than parents, given its parents. */
static void test_local(void **state) {
  (void)state;
  local("a -> b -> c -> d", "c _ a | b;d _ a | c;d _ b | c");
  local("a -> c <- b", "a _ b;b _ a");
  local("a -> b; a -> c; b -> c", "");
  sl_error e;
  sl_graph *g = parse_ok("hidden u; u -> x; u -> y; x -> y");
  text t = {g, "", 0, 0};
  assert_int_equal(sl_implications_local(g, collect, &t, NULL, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'u' is hidden"));
  assert_non_null(strstr(e.msg, "basis = \"local\""));
  sl_graph_free(g);
  g = parse_ok("x -> y; y <-> z");
  assert_int_equal(sl_implications_local(g, collect, &t, NULL, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'y' <-> 'z'"));
  sl_graph_free(g);
}

static int stop_after_two(void *ctx, int32_t a, int32_t b, const int32_t *given, size_t n) {
  (void)a; (void)b; (void)given; (void)n;
  return ++*(int *)ctx >= 2 ? 7 : 0;
}

/* The callback's value stops the listing; a raised stop flag ends it. */
static void test_stop(void **state) {
  (void)state;
  sl_graph *g = parse_ok("a; b; c; d; e; f; g; h; i; j; k; l; m; n; o");   /* 105 pairs */
  sl_error e;
  size_t u;
  int count = 0;
  assert_int_equal(sl_implications_each(g, stop_after_two, &count, &u, NULL, &e), 7);
  assert_int_equal(count, 2);
  volatile int stop = 1;
  text t = {g, "", 0, 0};
  assert_int_equal(sl_implications_each(g, collect, &t, &u, &stop, &e), SL_ELIMIT);
  assert_int_equal(sl_implications_local(g, collect, &t, &stop, &e), SL_ELIMIT);
  sl_graph_free(g);
}

/* ---- brute force on random graphs ---- */

static uint64_t rng = 88172645463325252ull;
static uint32_t rnd(void) {
  rng ^= rng << 13; rng ^= rng >> 7; rng ^= rng << 17;
  return (uint32_t)(rng >> 16);
}

static int separated(sl_sep_ws *w, int32_t a, int32_t b, const int32_t *z, size_t nz) {
  sl_error e;
  int sep = 0;
  assert_int_equal(sl_separated(w, &a, 1, &b, 1, z, nz, &sep, NULL, &e), SL_OK);
  return sep;
}

typedef struct found { int32_t a, b; int32_t z[16]; size_t nz; } found;
typedef struct founds { found f[64]; size_t n; } founds;

static int keep(void *ctx, int32_t a, int32_t b, const int32_t *given, size_t n) {
  founds *F = ctx;
  assert_true(F->n < 64 && n <= 16);
  found *f = &F->f[F->n++];
  f->a = a; f->b = b; f->nz = n;
  memcpy(f->z, given, n * sizeof *given);
  return 0;
}

/* Every listed set separates and is minimal; every separable non-adjacent
** observed pair is listed once; the untestable count is the rest. */
static void check_random(const char *src) {
  sl_graph *g = parse_ok(src);
  size_t n = sl_graph_nnodes(g), untestable = 0, want_untestable = 0;
  sl_sep_ws *w = sl_sep_alloc(g);
  founds F = {.n = 0};
  sl_error e;
  assert_int_equal(sl_implications_each(g, keep, &F, &untestable, NULL, &e), SL_OK);
  int32_t obs[16], z[16];
  size_t nobs = 0;
  for (size_t v = 0; v < n; v++) if (!sl_graph_is_hidden(g, (int32_t)v)) obs[nobs++] = (int32_t)v;
  for (size_t i = 0; i < nobs; i++)
    for (size_t j = i + 1; j < nobs; j++) {
      int32_t a = obs[i], b = obs[j];
      size_t k, np, nc, ns;
      const int32_t *pa = sl_graph_parents(g, b, &np), *ch = sl_graph_children(g, b, &nc),
                    *sb = sl_graph_siblings(g, b, &ns);
      int adjacent = 0, listed = 0, separable = 0;
      for (k = 0; k < np; k++) adjacent |= pa[k] == a;
      for (k = 0; k < nc; k++) adjacent |= ch[k] == a;
      for (k = 0; k < ns; k++) adjacent |= sb[k] == a;
      for (k = 0; k < F.n; k++) {
        found *f = &F.f[k];
        if (!((f->a == a && f->b == b) || (f->a == b && f->b == a))) continue;
        listed++;
        assert_true(separated(w, a, b, f->z, f->nz));
        size_t npl, npo = 0;                           /* the later node's parents first */
        const int32_t *pl = sl_graph_parents(g, f->b, &npl);
        for (size_t c = 0; c < npl; c++) if (!sl_graph_is_hidden(g, pl[c])) z[npo++] = pl[c];
        if (separated(w, a, b, z, npo))
          for (size_t d = 0; d < f->nz; d++) {
            int parent = 0;
            for (size_t c = 0; c < npo; c++) parent |= z[c] == f->z[d];
            assert_true(parent);
          }
        for (size_t d = 0; d < f->nz; d++) {           /* minimal */
          assert_false(sl_graph_is_hidden(g, f->z[d]));
          size_t m = 0;
          for (size_t c = 0; c < f->nz; c++) if (c != d) z[m++] = f->z[c];
          assert_false(separated(w, a, b, z, m));
        }
      }
      if (adjacent) { assert_int_equal(listed, 0); continue; }
      size_t nrest = 0;
      int32_t rest[16];
      for (k = 0; k < nobs; k++) if (obs[k] != a && obs[k] != b) rest[nrest++] = obs[k];
      for (uint32_t mask = 0; mask < (1u << nrest) && !separable; mask++) {
        size_t m = 0;
        for (k = 0; k < nrest; k++) if (mask >> k & 1) z[m++] = rest[k];
        separable = separated(w, a, b, z, m);
      }
      assert_int_equal(listed, separable);
      want_untestable += !separable;
    }
  if (untestable != want_untestable) print_error("%s: untestable %zu, want %zu\n", src, untestable, want_untestable);
  assert_int_equal(untestable, want_untestable);
  sl_sep_free(w);
  sl_graph_free(g);
}

static void test_brute(void **state) {
  (void)state;
  char src[2048];
  for (int round = 0; round < 400; round++) {
    int n = 3 + (int)(rnd() % 6), len = 0;
    int perm[9];
    for (int i = 0; i < n; i++) perm[i] = i;
    for (int i = n - 1; i > 0; i--) { int j = (int)(rnd() % (uint32_t)(i + 1)), t = perm[i]; perm[i] = perm[j]; perm[j] = t; }
    uint32_t p = 20 + rnd() % 40, q = rnd() % 25, h = rnd() % 25;
    int nh = 0;
    for (int i = 0; i < n; i++)
      if (rnd() % 100 < h) len += snprintf(src + len, sizeof src - (size_t)len, "%sv%d", nh++ ? ", " : "hidden ", i);
    if (nh) len += snprintf(src + len, sizeof src - (size_t)len, "; ");
    for (int i = 0; i < n; i++) {
      len += snprintf(src + len, sizeof src - (size_t)len, "v%d; ", i);
      for (int j = i + 1; j < n; j++) {
        if (rnd() % 100 < p) len += snprintf(src + len, sizeof src - (size_t)len, "v%d -> v%d; ", perm[i], perm[j]);
        if (rnd() % 100 < q) len += snprintf(src + len, sizeof src - (size_t)len, "v%d <-> v%d; ", i, j);
      }
    }
    check_random(src);
  }
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_textbook),
    cmocka_unit_test(test_m_graph),
    cmocka_unit_test(test_verma),
    cmocka_unit_test(test_local),
    cmocka_unit_test(test_stop),
    cmocka_unit_test(test_brute),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
