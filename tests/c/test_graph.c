/*
** test_graph.c: the queries on a finished graph (src/graph/graph.c), the
** builder (builder.c), the DOT and terminal views (write.c), pictures
** (draw.c) and name suggestions (error.c).
**
** Expected values come from the definitions: a parent of v is a node with
** an arrow into v, an ancestor (descendant) is reached by a directed path of
** length >= 1, a topological order puts every node after its parents, and
** "lexicographically smallest" compares the lists of names position by
** position.  The hand-worked values are checked again on random graphs
** against a transitive closure (Floyd-Warshall) and a brute force over all
** permutations, both written here and sharing no code with the library.
** The DOT text is checked by reading it back with Graphviz's own parser.
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gvc.h>

#include "notation.h"
#include "test_text.h"

/* ---- helpers ---- */

static sl_graph *parse_ok(const char *text) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  if (!g) print_error("parse failed: %d at %d:%d: %s\n", e.code, e.line, e.col, e.msg);
  assert_non_null(g);
  return g;
}

static int32_t id(const sl_graph *g, const char *name) {
  int32_t v = sl_graph_find(g, name, strlen(name));
  if (v < 0) print_error("no node %s\n", name);
  assert_true(v >= 0);
  return v;
}

/* The names of a list of ids joined by ",". */
static void join(const sl_graph *g, const int32_t *v, size_t n, char *out, size_t cap) {
  size_t k = 0;
  out[0] = '\0';
  for (size_t i = 0; i < n; i++)
    k += (size_t)snprintf(out + k, cap - k, "%s%s", i ? "," : "", sl_graph_name(g, v[i]));
}

/* The marked nodes in name order joined by ",". */
static void join_marks(const sl_graph *g, const unsigned char *mark, char *out, size_t cap) {
  size_t k = 0, first = 1;
  out[0] = '\0';
  for (size_t r = 0; r < sl_graph_nnodes(g); r++) {
    int32_t v = sl_graph_by_rank(g, (int32_t)r);
    if (!mark[v]) continue;
    k += (size_t)snprintf(out + k, cap - k, "%s%s", first ? "" : ",", sl_graph_name(g, v));
    first = 0;
  }
}

/* Deterministic xorshift64* generator. */
static uint64_t rng_state = 0x9E3779B97F4A7C15ull;
static uint64_t rnd(void) {
  rng_state ^= rng_state >> 12;
  rng_state ^= rng_state << 25;
  rng_state ^= rng_state >> 27;
  return rng_state * 2685821657736338717ull;
}
static size_t below(size_t n) { return (size_t)(rnd() % n); }

/*
** The classroom graph used by most tests.  Names are added in an order
** unlike their name order so that sorting is really tested.
**   directed:   tutor->grade, sleep->attention, attention->grade,
**               breakfast->attention, mood->grade, mood->attention
**   <->:        attention<->noise, seat<->noise
**   hidden:     mood;   isolated: desk
*/
static const char *classroom_text =
  "tutor -> grade\nsleep -> attention -> grade\nbreakfast -> attention\n"
  "hidden mood\nmood -> grade, attention\nnoise <-> attention; seat <-> noise\ndesk";

static sl_graph *classroom(void) { return parse_ok(classroom_text); }

/* ---- adjacency ---- */

static void test_adjacency_sorted(void **state) {
  (void)state;
  sl_graph *g = classroom();
  char s[256];
  size_t n;
  const int32_t *v;
  assert_int_equal(sl_graph_nnodes(g), 9);
  assert_int_equal(sl_graph_ndirected(g), 6);
  assert_int_equal(sl_graph_nbidirected(g), 2);

  v = sl_graph_parents(g, id(g, "grade"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "attention,mood,tutor");
  v = sl_graph_parents(g, id(g, "attention"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "breakfast,mood,sleep");
  v = sl_graph_parents(g, id(g, "desk"), &n);
  assert_int_equal(n, 0);
  v = sl_graph_parents(g, id(g, "noise"), &n);   /* <-> is not a parent */
  assert_int_equal(n, 0);

  v = sl_graph_children(g, id(g, "mood"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "attention,grade");
  v = sl_graph_children(g, id(g, "attention"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "grade");
  v = sl_graph_children(g, id(g, "grade"), &n);
  assert_int_equal(n, 0);

  v = sl_graph_siblings(g, id(g, "noise"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "attention,seat");
  v = sl_graph_siblings(g, id(g, "attention"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "noise");
  v = sl_graph_siblings(g, id(g, "seat"), &n);
  join(g, v, n, s, sizeof s);
  assert_string_equal(s, "noise");
  v = sl_graph_siblings(g, id(g, "grade"), &n);
  assert_int_equal(n, 0);

  assert_true(sl_graph_is_hidden(g, id(g, "mood")));
  assert_false(sl_graph_is_hidden(g, id(g, "grade")));
  sl_graph_free(g);
}

/* Name ranks: bytewise order, rank and by_rank inverse to each other. */
static void test_rank(void **state) {
  (void)state;
  sl_graph *g = classroom();
  static const char *sorted[] = {"attention", "breakfast", "desk", "grade", "mood",
                                 "noise", "seat", "sleep", "tutor"};
  for (int32_t r = 0; r < 9; r++) {
    int32_t v = sl_graph_by_rank(g, r);
    assert_string_equal(sl_graph_name(g, v), sorted[r]);
    assert_int_equal(sl_graph_rank(g, v), r);
  }
  sl_graph_free(g);
  /* bytewise: "B" (0x42) < "a" (0x61) < "b" < "é" (0xC3 0xA9) */
  g = parse_ok("é; b; a; B");
  const char *want[] = {"B", "a", "b", "é"};
  for (int32_t r = 0; r < 4; r++) assert_string_equal(sl_graph_name(g, sl_graph_by_rank(g, r)), want[r]);
  sl_graph_free(g);
}

/* Edges: directed first, each kind sorted by (from, to) name; <-> edges
** have from < to by name. */
static void test_edges(void **state) {
  (void)state;
  sl_graph *g = classroom();
  sl_edge e[8];
  sl_graph_edges(g, e);
  static const char *want[8][3] = {
    {"attention", "grade", "->"}, {"breakfast", "attention", "->"},
    {"mood", "attention", "->"},  {"mood", "grade", "->"},
    {"sleep", "attention", "->"}, {"tutor", "grade", "->"},
    {"attention", "noise", "<->"}, {"noise", "seat", "<->"},
  };
  for (int i = 0; i < 8; i++) {
    assert_string_equal(sl_graph_name(g, e[i].from), want[i][0]);
    assert_string_equal(sl_graph_name(g, e[i].to), want[i][1]);
    assert_int_equal(e[i].kind, strcmp(want[i][2], "->") == 0 ? SL_DIRECTED : SL_BIDIRECTED);
  }
  sl_graph_free(g);
}

/* ---- ancestors and descendants ---- */

typedef struct reach_case {
  int anc;                 /* 1 ancestors, 0 descendants */
  const char *set[3];
  const char *want;        /* marked nodes in name order, by hand */
} reach_case;

static void test_ancestors_descendants(void **state) {
  (void)state;
  sl_graph *g = classroom();
  static const reach_case cases[] = {
    {1, {"grade"}, "attention,breakfast,mood,sleep,tutor"},
    {1, {"attention"}, "breakfast,mood,sleep"},
    /* a member is marked only when it is an ancestor of another member */
    {1, {"attention", "grade"}, "attention,breakfast,mood,sleep,tutor"},
    {1, {"grade", "attention"}, "attention,breakfast,mood,sleep,tutor"},
    {1, {"sleep", "tutor"}, ""},
    {1, {"noise"}, ""},                       /* <-> is not a directed path */
    {1, {"desk", "seat"}, ""},
    {1, {NULL}, ""},                          /* the empty set */
    {0, {"sleep"}, "attention,grade"},
    {0, {"mood", "attention"}, "attention,grade"},
    {0, {"mood"}, "attention,grade"},
    {0, {"grade"}, ""},
    {0, {"noise", "seat"}, ""},
    {0, {"breakfast", "tutor", "desk"}, "attention,grade"},
    {0, {NULL}, ""},
  };
  unsigned char mark[9];
  char s[256];
  for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
    int32_t src[3];
    size_t n = 0;
    while (n < 3 && cases[i].set[n]) { src[n] = id(g, cases[i].set[n]); n++; }
    sl_error e;
    memset(mark, 7, sizeof mark);              /* the call must clear it */
    int rc = cases[i].anc ? sl_graph_ancestors(g, src, n, mark, &e)
                          : sl_graph_descendants(g, src, n, mark, &e);
    assert_int_equal(rc, SL_OK);
    for (size_t v = 0; v < 9; v++) assert_true(mark[v] == 0 || mark[v] == 1);
    join_marks(g, mark, s, sizeof s);
    if (strcmp(s, cases[i].want) != 0)
      print_error("reach case %zu: expected \"%s\" got \"%s\"\n", i, cases[i].want, s);
    assert_string_equal(s, cases[i].want);
  }
  sl_graph_free(g);
}

/* A random DAG built through the builder API: nodes named n00.. in a random
** topological order, arrows only forward in it, some <-> edges. adj holds
** the directed edges, n x n. */
static sl_graph *random_dag(size_t n, unsigned char *adj, unsigned p100) {
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  assert_non_null(b);
  size_t perm[16];
  for (size_t i = 0; i < n; i++) perm[i] = i;
  for (size_t i = n; i > 1; i--) { size_t j = below(i), t = perm[i - 1]; perm[i - 1] = perm[j]; perm[j] = t; }
  /* node ids 0..n-1 are interned first, so builder id == i */
  for (size_t i = 0; i < n; i++) {
    char nm[24];
    snprintf(nm, sizeof nm, "n%02zu", i);
    assert_int_equal(sl_builder_node(b, nm, strlen(nm), &e), (int32_t)i);
  }
  memset(adj, 0, n * n);
  for (size_t i = 0; i < n; i++)
    for (size_t j = i + 1; j < n; j++) {
      if (below(100) < p100) {
        adj[perm[i] * n + perm[j]] = 1;
        assert_int_equal(sl_builder_edge(b, (int32_t)perm[i], (int32_t)perm[j], SL_DIRECTED, 1, 1, &e), SL_OK);
      }
      if (below(100) < 10)
        assert_int_equal(sl_builder_edge(b, (int32_t)perm[j], (int32_t)perm[i], SL_BIDIRECTED, 1, 1, &e), SL_OK);
    }
  sl_graph *g = sl_builder_finish(b, &e);
  sl_builder_free(b);
  assert_non_null(g);
  assert_int_equal(sl_graph_nnodes(g), n);
  return g;
}

/* Ancestors and descendants of random sets against a transitive closure. */
static void test_reach_random(void **state) {
  (void)state;
  for (int iter = 0; iter < 400; iter++) {
    size_t n = 1 + below(14);
    unsigned char adj[16 * 16], clo[16 * 16], mark[16];
    sl_graph *g = random_dag(n, adj, (unsigned)below(60));
    /* the builder ids are the graph ids (names were interned in order) */
    memcpy(clo, adj, n * n);
    for (size_t k = 0; k < n; k++)
      for (size_t i = 0; i < n; i++)
        if (clo[i * n + k])
          for (size_t j = 0; j < n; j++) if (clo[k * n + j]) clo[i * n + j] = 1;
    int32_t src[16];
    size_t ns = 0;
    for (size_t v = 0; v < n; v++) if (below(3) == 0) src[ns++] = (int32_t)v;
    sl_error e;
    assert_int_equal(sl_graph_ancestors(g, src, ns, mark, &e), SL_OK);
    for (size_t v = 0; v < n; v++) {
      int want = 0;
      for (size_t i = 0; i < ns; i++) want |= clo[v * n + (size_t)src[i]];
      assert_int_equal(mark[v], want);
    }
    assert_int_equal(sl_graph_descendants(g, src, ns, mark, &e), SL_OK);
    for (size_t v = 0; v < n; v++) {
      int want = 0;
      for (size_t i = 0; i < ns; i++) want |= clo[(size_t)src[i] * n + v];
      assert_int_equal(mark[v], want);
    }
    /* parents and children are the direct edges, sorted by name (here
    ** names sort as ids do) */
    for (size_t v = 0; v < n; v++) {
      size_t np, nc;
      const int32_t *p = sl_graph_parents(g, (int32_t)v, &np);
      const int32_t *c = sl_graph_children(g, (int32_t)v, &nc);
      size_t kp = 0, kc = 0;
      for (size_t u = 0; u < n; u++) {
        if (adj[u * n + v]) { assert_true(kp < np); assert_int_equal(p[kp++], (int32_t)u); }
        if (adj[v * n + u]) { assert_true(kc < nc); assert_int_equal(c[kc++], (int32_t)u); }
      }
      assert_int_equal(kp, np);
      assert_int_equal(kc, nc);
    }
    sl_graph_free(g);
  }
}

/* ---- topological order ---- */

static void test_order_classroom(void **state) {
  (void)state;
  sl_graph *g = classroom();
  int32_t o[9];
  char s[256];
  sl_graph_order(g, o);
  join(g, o, 9, s, sizeof s);
  /* by hand: take the smallest name whose parents are all placed */
  assert_string_equal(s, "breakfast,desk,mood,noise,seat,sleep,attention,tutor,grade");
  sl_graph_free(g);

  g = parse_ok("b -> a; c -> b");
  sl_graph_order(g, o);
  join(g, o, 3, s, sizeof s);
  assert_string_equal(s, "c,b,a");
  sl_graph_free(g);

  g = parse_ok("");
  sl_graph_order(g, o);          /* nothing to write, must not crash */
  sl_graph_free(g);
}

/* Next permutation in lexicographic order; 0 after the last. */
static int next_perm(int32_t *a, size_t n) {
  if (n < 2) return 0;
  size_t i = n - 1;
  while (i > 0 && a[i - 1] >= a[i]) i--;
  if (i == 0) return 0;
  size_t j = n - 1;
  while (a[j] <= a[i - 1]) j--;
  int32_t t = a[i - 1]; a[i - 1] = a[j]; a[j] = t;
  for (size_t l = i, r = n - 1; l < r; l++, r--) { t = a[l]; a[l] = a[r]; a[r] = t; }
  return 1;
}

/* sl_graph_order against a brute force: the first permutation, in order of
** names, that puts every node after its parents. */
static void test_order_brute_force(void **state) {
  (void)state;
  for (int iter = 0; iter < 300; iter++) {
    size_t n = 1 + below(7);
    unsigned char adj[16 * 16];
    sl_graph *g = random_dag(n, adj, (unsigned)below(70));
    int32_t perm[16], got[16];
    for (size_t r = 0; r < n; r++) perm[r] = (int32_t)r;   /* ranks */
    int found = 0;
    do {
      int ok = 1;
      int32_t pos[16];
      for (size_t i = 0; i < n; i++) pos[sl_graph_by_rank(g, perm[i])] = (int32_t)i;
      for (size_t u = 0; u < n && ok; u++)
        for (size_t v = 0; v < n && ok; v++)
          if (adj[u * n + v] && pos[u] > pos[v]) ok = 0;
      if (ok) { found = 1; break; }
    } while (next_perm(perm, n));
    assert_true(found);
    sl_graph_order(g, got);
    for (size_t i = 0; i < n; i++) assert_int_equal(got[i], sl_graph_by_rank(g, perm[i]));
    sl_graph_free(g);
  }
}

/* A long chain: order and ancestors work without deep recursion. */
static void test_long_chain(void **state) {
  (void)state;
  size_t n = 100000;
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  char nm[32];
  for (size_t i = 0; i < n; i++) {
    snprintf(nm, sizeof nm, "s%06zu", n - 1 - i);    /* names fall along the chain */
    assert_int_equal(sl_builder_node(b, nm, strlen(nm), &e), (int32_t)i);
    if (i) assert_int_equal(sl_builder_edge(b, (int32_t)i - 1, (int32_t)i, SL_DIRECTED, 0, 0, &e), SL_OK);
  }
  sl_graph *g = sl_builder_finish(b, &e);
  assert_non_null(g);
  int32_t *o = malloc(n * sizeof *o);
  unsigned char *mark = malloc(n);
  assert_non_null(o);
  assert_non_null(mark);
  sl_graph_order(g, o);
  for (size_t i = 0; i < n; i++) assert_int_equal(o[i], (int32_t)i);
  int32_t last = (int32_t)n - 1;
  assert_int_equal(sl_graph_ancestors(g, &last, 1, mark, &e), SL_OK);
  size_t cnt = 0;
  for (size_t i = 0; i < n; i++) cnt += mark[i];
  assert_int_equal(cnt, n - 1);
  assert_int_equal(mark[n - 1], 0);
  free(o); free(mark);
  sl_graph_free(g);
  sl_builder_free(b);
}

/* ---- equality ---- */

static int equal_texts(const char *a, const char *b) {
  sl_graph *ga = parse_ok(a), *gb = parse_ok(b);
  int eq = sl_graph_equal(ga, gb);
  assert_int_equal(sl_graph_equal(gb, ga), eq);     /* symmetric */
  sl_graph_free(ga);
  sl_graph_free(gb);
  return eq;
}

static void test_equal(void **state) {
  (void)state;
  sl_graph *g = classroom();
  assert_true(sl_graph_equal(g, g));
  sl_graph_free(g);
  /* the same graph said differently */
  assert_true(equal_texts("a -> b -> c; x <-> y", "y <-> x\nb <- a\nc <- b"));
  assert_true(equal_texts("hidden u; u -> a", "u -> a; hidden u; u -> a"));
  assert_true(equal_texts("", "# nothing"));
  /* one difference each */
  assert_false(equal_texts("hidden u; u -> a", "u -> a"));             /* hidden mark */
  assert_false(equal_texts("a -> b", "b -> a"));                       /* direction */
  assert_false(equal_texts("a -> b", "a <-> b"));                      /* kind */
  assert_false(equal_texts("a -> b", "a -> c"));                       /* a name */
  assert_false(equal_texts("a -> b", "a -> b; c"));                    /* a node */
  assert_false(equal_texts("a -> b; c", "a -> c; b"));                 /* same counts */
  assert_false(equal_texts("a <-> b; c", "a <-> c; b"));
  assert_false(equal_texts("a -> b, c; d", "a -> b; d -> c"));
  assert_false(equal_texts("hidden a; b", "a; hidden b"));
  assert_false(equal_texts("A -> b", "a -> b"));                       /* case */
}

/* ---- the builder ---- */

static void test_builder(void **state) {
  (void)state;
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  memset(&e, 0, sizeof e);
  int32_t a = sl_builder_node(b, "press", 5, &e);
  int32_t c = sl_builder_node(b, "paint", 5, &e);
  assert_int_equal(sl_builder_node(b, "pressure", 5, &e), a);   /* first 5 bytes */
  assert_true(a >= 0 && c >= 0 && a != c);
  assert_int_equal(sl_builder_nnodes(b), 2);
  assert_string_equal(sl_builder_name(b, c), "paint");

  /* self-loops are refused at the given position */
  assert_int_equal(sl_builder_edge(b, a, a, SL_DIRECTED, 4, 9, &e), SL_ESYNTAX);
  assert_int_equal(e.line, 4);
  assert_int_equal(e.col, 9);
  assert_string_equal(e.msg, "self-loop: 'press' cannot cause itself");
  assert_int_equal(sl_builder_edge(b, c, c, SL_BIDIRECTED, 2, 1, &e), SL_ESYNTAX);
  assert_string_equal(e.msg, "'paint' cannot share a hidden cause with itself");

  /* a name over the limit */
  char *big = malloc(SL_MAX_NAME + 1);
  memset(big, 'x', SL_MAX_NAME + 1);
  assert_int_equal(sl_builder_node(b, big, SL_MAX_NAME + 1, &e), -1);
  assert_int_equal(e.code, SL_ELIMIT);
  assert_true(sl_builder_node(b, big, SL_MAX_NAME, &e) >= 0);
  free(big);

  assert_int_equal(sl_builder_edge(b, a, c, SL_DIRECTED, 1, 1, &e), SL_OK);
  assert_int_equal(sl_builder_hidden(b, c), SL_OK);
  sl_graph *g = sl_builder_finish(b, &e);
  assert_non_null(g);
  assert_int_equal(sl_graph_nnodes(g), 3);
  assert_true(sl_graph_is_hidden(g, id(g, "paint")));

  /* the builder is left empty and reusable */
  assert_int_equal(sl_builder_nnodes(b), 0);
  sl_graph *h = sl_builder_finish(b, &e);
  assert_non_null(h);
  assert_int_equal(sl_graph_nnodes(h), 0);
  assert_int_equal(sl_graph_ndirected(h), 0);
  sl_graph_free(h);
  /* ... also after a failed finish */
  int32_t x = sl_builder_node(b, "x", 1, &e), y = sl_builder_node(b, "y", 1, &e);
  sl_builder_hidden(b, x);
  sl_builder_edge(b, x, y, SL_DIRECTED, 1, 3, &e);
  sl_builder_edge(b, y, x, SL_DIRECTED, 2, 3, &e);
  assert_null(sl_builder_finish(b, &e));
  assert_int_equal(e.code, SL_ECYCLE);
  assert_string_equal(e.msg, "directed cycle: x -> y -> x");
  assert_int_equal(e.line, 2);
  assert_int_equal(e.col, 3);
  assert_int_equal(sl_builder_nnodes(b), 0);
  x = sl_builder_node(b, "x", 1, &e);
  h = sl_builder_finish(b, &e);
  assert_non_null(h);
  char *t = canonical(h);
  assert_string_equal(t, "x\n");       /* no leftover hidden mark or edge */
  free(t);
  sl_graph_free(h);
  sl_graph_free(g);
  sl_builder_free(b);
  sl_builder_free(NULL);
}

/* ---- with (add_graph + parse) and without ---- */

static sl_graph *with(const sl_graph *g, const char *text, sl_error *e) {
  sl_builder *b = sl_builder_alloc();
  assert_non_null(b);
  assert_int_equal(sl_builder_add_graph(b, g, e), SL_OK);
  sl_graph *out = NULL;
  if (sl_notation_parse(b, text, strlen(text), e) == SL_OK) out = sl_builder_finish(b, e);
  sl_builder_free(b);
  return out;
}

static void test_with(void **state) {
  (void)state;
  sl_graph *g = classroom();
  sl_error e;
  memset(&e, 0, sizeof e);

  /* adding nothing gives an equal graph */
  sl_graph *w = with(g, "", &e);
  assert_non_null(w);
  assert_true(sl_graph_equal(g, w));
  sl_graph_free(w);

  /* by hand: the classroom text plus the new arrow, mark and node */
  w = with(g, "tutor -> attention; hidden noise\nlamp; mood -> grade", &e);
  assert_non_null(w);
  char *t = canonical(w);
  assert_string_equal(t,
    "hidden mood, noise\n"
    "attention -> grade\nbreakfast -> attention\nmood -> attention, grade\n"
    "sleep -> attention\ntutor -> attention, grade\n"
    "attention <-> noise\nnoise <-> seat\n"
    "desk\nlamp\n");
  free(t);
  sl_graph_free(w);

  /* a new arrow that closes a cycle is named, and located, as the edge
  ** that closed it: the old edges have no position */
  assert_null(with(g, "\n  grade -> sleep", &e));
  assert_int_equal(e.code, SL_ECYCLE);
  assert_string_equal(e.msg, "directed cycle: attention -> grade -> sleep -> attention");
  assert_int_equal(e.line, 2);
  assert_int_equal(e.col, 9);
  /* syntax errors pass through */
  assert_null(with(g, "grade ->", &e));
  assert_int_equal(e.code, SL_ESYNTAX);
  assert_int_equal(e.col, 9);

  /* adding a graph to a builder that already holds some of its nodes */
  sl_builder *b = sl_builder_alloc();
  sl_notation_parse(b, "hidden grade; desk -> lamp", 26, &e);
  assert_int_equal(sl_builder_add_graph(b, g, &e), SL_OK);
  w = sl_builder_finish(b, &e);
  assert_non_null(w);
  assert_int_equal(sl_graph_nnodes(w), 10);
  assert_true(sl_graph_is_hidden(w, id(w, "grade")));
  assert_true(sl_graph_is_hidden(w, id(w, "mood")));
  assert_int_equal(sl_graph_ndirected(w), 7);
  assert_int_equal(sl_graph_nbidirected(w), 2);
  sl_graph_free(w);
  sl_builder_free(b);
  sl_graph_free(g);
}

static void test_without(void **state) {
  (void)state;
  sl_graph *g = classroom();
  sl_error e;
  memset(&e, 0, sizeof e);
  unsigned char drop[9];
  char *t;

  /* nothing dropped: an equal graph */
  sl_graph *w = sl_graph_without(g, NULL, NULL, 0, &e);
  assert_non_null(w);
  assert_true(sl_graph_equal(g, w));
  sl_graph_free(w);

  /* drop a node: its edges go too (by hand) */
  memset(drop, 0, sizeof drop);
  drop[id(g, "attention")] = 1;
  w = sl_graph_without(g, drop, NULL, 0, &e);
  assert_non_null(w);
  t = canonical(w);
  assert_string_equal(t, "hidden mood\nmood -> grade\ntutor -> grade\nnoise <-> seat\n"
                         "breakfast\ndesk\nsleep\n");
  free(t);
  assert_int_equal(sl_graph_find(w, "attention", 9), -1);
  sl_graph_free(w);

  /* drop edges of both kinds; the <-> one given either way round, and an
  ** edge that is not in the graph changes nothing */
  sl_edge de[4] = {
    {id(g, "mood"), id(g, "grade"), SL_DIRECTED},
    {id(g, "seat"), id(g, "noise"), SL_BIDIRECTED},
    {id(g, "grade"), id(g, "mood"), SL_DIRECTED},          /* not there */
    {id(g, "attention"), id(g, "sleep"), SL_BIDIRECTED},   /* not there */
  };
  w = sl_graph_without(g, NULL, de, 4, &e);
  assert_non_null(w);
  t = canonical(w);
  assert_string_equal(t, "hidden mood\nattention -> grade\nbreakfast -> attention\n"
                         "mood -> attention\nsleep -> attention\ntutor -> grade\n"
                         "attention <-> noise\ndesk\nseat\n");
  free(t);
  sl_graph_free(w);
  sl_edge de2[1] = {{id(g, "noise"), id(g, "attention"), SL_BIDIRECTED}};
  w = sl_graph_without(g, NULL, de2, 1, &e);
  assert_non_null(w);
  assert_int_equal(sl_graph_nbidirected(w), 1);
  size_t n;
  sl_graph_siblings(w, id(w, "attention"), &n);
  assert_int_equal(n, 0);
  sl_graph_free(w);

  /* a directed edge dropped does not drop the <-> edge between the same
  ** pair, and the other way round */
  sl_graph *p = parse_ok("a -> b; a <-> b");
  sl_edge d1[1] = {{id(p, "a"), id(p, "b"), SL_DIRECTED}};
  w = sl_graph_without(p, NULL, d1, 1, &e);
  t = canonical(w);
  assert_string_equal(t, "a <-> b\n");
  free(t);
  sl_graph_free(w);
  sl_edge d2[1] = {{id(p, "b"), id(p, "a"), SL_BIDIRECTED}};
  w = sl_graph_without(p, NULL, d2, 1, &e);
  t = canonical(w);
  assert_string_equal(t, "a -> b\n");
  free(t);
  sl_graph_free(w);
  sl_graph_free(p);

  /* drop every node */
  memset(drop, 1, sizeof drop);
  w = sl_graph_without(g, drop, NULL, 0, &e);
  assert_non_null(w);
  assert_int_equal(sl_graph_nnodes(w), 0);
  sl_graph_free(w);
  sl_graph_free(g);
}

/* ---- names ---- */

static void test_lookup(void **state) {
  (void)state;
  sl_graph *g = parse_ok("rain -> soil -> crop; hidden frost; frost -> crop");
  sl_error e;
  memset(&e, 0, sizeof e);
  assert_int_equal(sl_graph_lookup(g, "soil", 4, &e), id(g, "soil"));
  assert_int_equal(sl_graph_lookup(g, "soill", 5, &e), -1);
  assert_int_equal(e.code, SL_ENAME);
  assert_string_equal(e.msg, "no node 'soill' in the graph; did you mean 'soil'?");
  assert_int_equal(sl_graph_lookup(g, "Frost", 5, &e), -1);
  assert_string_equal(e.msg, "no node 'Frost' in the graph; did you mean 'frost'?");
  assert_int_equal(sl_graph_lookup(g, "weather", 7, &e), -1);
  assert_string_equal(e.msg, "no node 'weather' in the graph");
  /* only len bytes are looked at */
  assert_int_equal(sl_graph_lookup(g, "crops", 4, &e), id(g, "crop"));
  /* a long name is shown cut to 80 bytes */
  char longn[120];
  memset(longn, 'q', sizeof longn);
  assert_int_equal(sl_graph_lookup(g, longn, sizeof longn, &e), -1);
  char want[128];
  snprintf(want, sizeof want, "no node '%.80s' in the graph", longn);
  assert_string_equal(e.msg, want);
  sl_graph_free(g);

  /* an empty graph has no suggestions */
  g = parse_ok("");
  assert_int_equal(sl_graph_lookup(g, "x", 1, &e), -1);
  assert_string_equal(e.msg, "no node 'x' in the graph");
  sl_graph_free(g);
}

/* Edit distance by hand (optimal string alignment: insert, delete,
** substitute, swap two neighbours); the limit is 1 edit for words of up to
** 3 bytes, 2 up to 6, 3 beyond (error.c). */
static void test_closest(void **state) {
  (void)state;
  const char *c1[] = {"soil", "crop", "rain"};
  assert_string_equal(sl_closest("soill", c1, 3), "soil");   /* one insertion */
  assert_string_equal(sl_closest("sil", c1, 3), "soil");     /* one deletion */
  assert_string_equal(sl_closest("siol", c1, 3), "soil");    /* one swap */
  assert_string_equal(sl_closest("ran", c1, 3), "rain");
  assert_null(sl_closest("soil", c1, 0));                    /* no candidates */
  assert_null(sl_closest("zzzz", c1, 3));
  /* an exact match wins over an earlier near one */
  const char *c2[] = {"soil", "soi"};
  assert_string_equal(sl_closest("soi", c2, 2), "soi");
  /* the nearer of two wins, whatever the order */
  const char *c3[] = {"grader", "grade"};
  assert_string_equal(sl_closest("grad", c3, 2), "grade");
  const char *c3b[] = {"grade", "grader"};
  assert_string_equal(sl_closest("grad", c3b, 2), "grade");
  /* a tie gives one of the tied names */
  const char *c4[] = {"soil", "sail"};
  const char *t = sl_closest("seil", c4, 2);
  assert_true(t && (strcmp(t, "soil") == 0 || strcmp(t, "sail") == 0));
  /* a swap is one edit: "ba" is near "ab" though Levenshtein says 2 */
  const char *c5[] = {"ab"};
  assert_string_equal(sl_closest("ba", c5, 1), "ab");
  /* the limits: 3 bytes allow 1 edit, 6 allow 2, 7 allow 3 */
  const char *c6[] = {"cat"};
  assert_string_equal(sl_closest("cut", c6, 1), "cat");
  assert_null(sl_closest("cup", c6, 1));
  const char *c7[] = {"garden"};
  assert_string_equal(sl_closest("gaxdex", c7, 1), "garden");
  assert_null(sl_closest("gxxdex", c7, 1));
  const char *c8[] = {"orchard"};
  assert_string_equal(sl_closest("orxxxrd", c8, 1), "orchard");
  assert_null(sl_closest("oxxxxrd", c8, 1));
  /* case counts as an edit */
  const char *c9[] = {"soil"};
  assert_string_equal(sl_closest("SOil", c9, 1), "soil");
  assert_null(sl_closest("SOIL", c9, 1));
  /* far lengths are never near */
  const char *c10[] = {"a"};
  assert_null(sl_closest("abcdefgh", c10, 1));
  const char *c11[] = {"orchard"};
  assert_null(sl_closest("", c11, 1));
}

/* ---- DOT ---- */

static char *dot_text(const sl_graph *g) {
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_dot(g, &b);
  assert_false(b.failed);
  char *s = strdup(b.data);
  sl_buf_free(&b);
  return s;
}

static size_t count(const char *s, const char *sub) {
  size_t n = 0;
  for (const char *p = strstr(s, sub); p; p = strstr(p + 1, sub)) n++;
  return n;
}

static void test_dot(void **state) {
  (void)state;
  sl_graph *g = classroom();
  char *d = dot_text(g);
  assert_int_equal(strncmp(d, "digraph", 7), 0);
  assert_int_equal(strcmp(d + strlen(d) - 2, "}\n"), 0);
  /* every arrow once */
  static const char *arrows[] = {
    "\"attention\" -> \"grade\";", "\"breakfast\" -> \"attention\";",
    "\"sleep\" -> \"attention\";", "\"tutor\" -> \"grade\";",
    /* arrows out of a hidden node are dashed */
    "\"mood\" -> \"attention\" [style=dashed];", "\"mood\" -> \"grade\" [style=dashed];",
    /* <-> edges: both heads, dashed, no effect on the ranking */
    "\"attention\" -> \"noise\" [dir=both, style=dashed",
    "\"noise\" -> \"seat\" [dir=both, style=dashed",
  };
  for (size_t i = 0; i < sizeof arrows / sizeof *arrows; i++) {
    if (count(d, arrows[i]) != 1) print_error("missing once: %s\n%s", arrows[i], d);
    assert_int_equal(count(d, arrows[i]), 1);
  }
  assert_int_equal(count(d, " -> "), 8);
  assert_int_equal(count(d, "dir=both"), 2);
  /* the hidden node is marked, the others are not */
  assert_non_null(strstr(d, "\"mood\" [style=dashed"));
  assert_int_equal(count(d, "hidden: never measured"), 1);
  assert_non_null(strstr(d, "\"desk\";"));
  free(d);
  sl_graph_free(g);
}

/* The DOT text is valid for Graphviz, even with names full of quotes,
** backslashes and UTF-8: Graphviz finds the same number of nodes and edges
** and the same node names (labels decode \\ to \). */
static void test_dot_graphviz(void **state) {
  (void)state;
  const char *texts[] = {
    classroom_text,
    "\"say \\\"hi\\\"\" -> \"back\\\\slash\" -> \"ends with \\\\\"\n"
    "\"ünïcödé\" <-> \"say \\\"hi\\\"\"; \"a;b#c,d\"; hidden \"hidden\"",
    "",
  };
  for (size_t i = 0; i < sizeof texts / sizeof *texts; i++) {
    sl_graph *g = parse_ok(texts[i]);
    char *d = dot_text(g);
    Agraph_t *ag = agmemread(d);
    if (!ag) print_error("Graphviz could not read:\n%s", d);
    assert_non_null(ag);
    assert_int_equal(agnnodes(ag), (int)sl_graph_nnodes(g));
    assert_int_equal(agnedges(ag), (int)(sl_graph_ndirected(g) + sl_graph_nbidirected(g)));
    assert_true(agisdirected(ag));
    agclose(ag);
    free(d);
    sl_graph_free(g);
  }
}

/* ---- the terminal view ---- */

static void test_show(void **state) {
  (void)state;
  sl_graph *g = classroom();
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_show(g, &b);
  assert_false(b.failed);
  /* by hand: depth is the longest path from a root; nodes by depth, then
  ** by name (issue 12: tutor, depth 0, came after attention, depth 1);
  ** names padded to the widest (9); hidden in parentheses */
  assert_string_equal(b.data,
    "9 nodes (1 hidden), 6 arrows, 2 hidden common causes; nodes in causal order, "
    "each with what points into it\n"
    "   0  breakfast\n"
    "   0  desk\n"
    "   0  (mood)\n"
    "   0  noise      <-> attention, seat\n"
    "   0  seat       <-> noise\n"
    "   0  sleep\n"
    "   0  tutor\n"
    "   1  attention  <- breakfast, mood, sleep  <-> noise\n"
    "   2  grade      <- attention, mood, tutor\n"
    "  (name) marks a hidden node; the left column is the causal depth\n");
  sl_buf_free(&b);
  sl_graph_free(g);

  /* one line per node, plus a header and a footer, on a bigger graph */
  g = parse_ok("a -> b -> c -> d; a -> d; e <-> a; f; \"g h\" -> a");
  sl_buf_init(&b);
  sl_graph_show(g, &b);
  assert_int_equal(count(b.data, "\n"), sl_graph_nnodes(g) + 2);
  assert_non_null(strstr(b.data, "7 nodes, 5 arrows, 1 hidden common cause;"));
  /* d is at depth 4 ("g h" -> a -> b -> c -> d is the longest way in);
  ** names are padded to 4 columns, the narrowest the view uses */
  assert_non_null(strstr(b.data, "\n   4  d     <- a, c\n"));
  assert_non_null(strstr(b.data, "\n   1  a     <- \"g h\"  <-> e\n"));
  assert_non_null(strstr(b.data, "  the left column is the causal depth\n"));
  sl_buf_free(&b);
  sl_graph_free(g);

  /* padding counts characters, not bytes: "größe" is 5 wide (7 bytes) */
  g = parse_ok("größe -> a");
  sl_buf_init(&b);
  sl_graph_show(g, &b);
  assert_non_null(strstr(b.data, "\n   0  größe\n   1  a      <- größe\n"));
  sl_buf_free(&b);
  sl_graph_free(g);

  g = parse_ok("");
  sl_buf_init(&b);
  sl_graph_show(g, &b);
  assert_int_equal(strncmp(b.data, "0 nodes, 0 arrows;", 18), 0);
  assert_int_equal(count(b.data, "\n"), 2);
  sl_buf_free(&b);
  sl_graph_free(g);
}

/* ---- pictures ---- */

static int file_starts(const char *path, const char *magic, size_t n, char *head, size_t cap) {
  FILE *f = fopen(path, "rb");
  if (!f) return 0;
  size_t got = fread(head, 1, cap - 1, f);
  head[got] = '\0';
  fclose(f);
  return got >= n && memcmp(head, magic, n) == 0;
}

static void test_draw(void **state) {
  (void)state;
  char tmpl[] = "/tmp/sluice-draw-XXXXXX";
  char *dir = mkdtemp(tmpl);
  assert_non_null(dir);
  char path[256], head[4096];
  sl_graph *g = classroom();
  sl_error e;
  memset(&e, 0, sizeof e);

  snprintf(path, sizeof path, "%s/classroom.svg", dir);
  assert_int_equal(sl_graph_draw(g, path, &e), SL_OK);
  int xml = file_starts(path, "<?xml", 5, head, sizeof head);
  assert_true(xml || strstr(head, "<svg"));
  assert_non_null(strstr(head, "<svg"));
  unlink(path);

  /* PNG and PDF by their magic bytes (the PNG and PDF specifications) */
  snprintf(path, sizeof path, "%s/classroom.png", dir);
  if (sl_graph_draw(g, path, &e) == SL_OK) {
    assert_true(file_starts(path, "\x89PNG\r\n\x1a\n", 8, head, sizeof head));
    unlink(path);
  } else {   /* a Graphviz build without the cairo renderer: a clean error */
    assert_int_equal(e.code, SL_EIO);
  }
  snprintf(path, sizeof path, "%s/classroom.pdf", dir);
  if (sl_graph_draw(g, path, &e) == SL_OK) {
    assert_true(file_starts(path, "%PDF", 4, head, sizeof head));
    unlink(path);
  } else {
    assert_int_equal(e.code, SL_EIO);
  }

  /* an unknown or missing extension */
  snprintf(path, sizeof path, "%s/classroom.txt", dir);
  assert_int_equal(sl_graph_draw(g, path, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "classroom.txt"));
  assert_non_null(strstr(e.msg, ".svg"));
  assert_int_equal(access(path, F_OK), -1);
  assert_int_equal(sl_graph_draw(g, "classroom", &e), SL_EARG);
  assert_int_equal(sl_graph_draw(g, "/tmp/x.y/classroom", &e), SL_EARG);

  /* too many nodes to draw: refused before Graphviz is asked */
  sl_builder *b = sl_builder_alloc();
  char nm[32];
  for (int i = 0; i < 5001; i++) {
    snprintf(nm, sizeof nm, "station%d", i);
    assert_true(sl_builder_node(b, nm, strlen(nm), &e) >= 0);
  }
  sl_graph *many = sl_builder_finish(b, &e);
  sl_builder_free(b);
  assert_non_null(many);
  snprintf(path, sizeof path, "%s/many.svg", dir);
  assert_int_equal(sl_graph_draw(many, path, &e), SL_ELIMIT);
  assert_non_null(strstr(e.msg, "5001 nodes"));
  assert_int_equal(access(path, F_OK), -1);
  sl_graph_free(many);

  /* awkward names draw too, twice in a row */
  sl_graph *h = parse_ok("\"say \\\"hi\\\"\" -> \"back\\\\slash\"; hidden \"ü\"; \"ü\" -> \"back\\\\slash\"");
  snprintf(path, sizeof path, "%s/names.svg", dir);
  assert_int_equal(sl_graph_draw(h, path, &e), SL_OK);
  assert_int_equal(sl_graph_draw(h, path, &e), SL_OK);
  unlink(path);
  sl_graph_free(h);
  sl_graph_free(g);
  rmdir(dir);
}

/* A picture that cannot be written (its directory does not exist) must be
** reported as SL_EIO naming the path, not as success. */
static void test_draw_unwritable(void **state) {
  (void)state;
  char tmpl[] = "/tmp/sluice-draw-XXXXXX";
  char *dir = mkdtemp(tmpl);
  assert_non_null(dir);
  char path[256];
  snprintf(path, sizeof path, "%s/none/classroom.svg", dir);
  sl_graph *g = classroom();
  sl_error e;
  memset(&e, 0, sizeof e);
  int rc = sl_graph_draw(g, path, &e);
  sl_graph_free(g);
  int exists = access(path, F_OK) == 0;
  rmdir(dir);
  assert_false(exists);
  if (rc == SL_OK) print_error("sl_graph_draw returned SL_OK but wrote no file\n");
  assert_int_equal(rc, SL_EIO);
  assert_int_equal(e.code, SL_EIO);
  assert_non_null(strstr(e.msg, path));
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_adjacency_sorted),
    cmocka_unit_test(test_rank),
    cmocka_unit_test(test_edges),
    cmocka_unit_test(test_ancestors_descendants),
    cmocka_unit_test(test_reach_random),
    cmocka_unit_test(test_order_classroom),
    cmocka_unit_test(test_order_brute_force),
    cmocka_unit_test(test_long_chain),
    cmocka_unit_test(test_equal),
    cmocka_unit_test(test_builder),
    cmocka_unit_test(test_with),
    cmocka_unit_test(test_without),
    cmocka_unit_test(test_lookup),
    cmocka_unit_test(test_closest),
    cmocka_unit_test(test_dot),
    cmocka_unit_test(test_dot_graphviz),
    cmocka_unit_test(test_show),
    cmocka_unit_test(test_draw),
    cmocka_unit_test(test_draw_unwritable),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
