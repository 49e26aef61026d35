/*
** test_identify.c: identification of causal effects (src/graph/identify*.c).
**
** Expected formulas are the textbook ones, each with its source beside it;
** where a value is recalled rather than read, the comment says "from
** memory" and the derivation by the hedge criterion (Shpitser and Pearl
** 2006, Theorem 4: P(y | do(x)) is identified iff the graph holds no hedge
** for it) or by do-calculus is given as well.  The numbers behind the
** formulas are checked by tests/oracle/identify_oracle.py on random
** discrete models.
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
#include "identify.h"
#include "test_text.h"

static sl_graph *parse_ok(const char *text) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  if (!g) print_error("parse failed: %s\n", e.msg);
  assert_non_null(g);
  return g;
}

/* Ids of a comma-separated list of names ("" for none). */
static size_t ids(const sl_graph *g, const char *list, int32_t *out) {
  size_t n = 0;
  const char *s = list;
  while (*s) {
    const char *end = strchr(s, ',');
    size_t len = end ? (size_t)(end - s) : strlen(s);
    out[n] = sl_graph_find(g, s, len);
    if (out[n] < 0) print_error("no node %.*s\n", (int)len, s);
    assert_true(out[n] >= 0);
    n++;
    s += len;
    if (*s == ',') s++;
  }
  return n;
}

typedef struct answer {
  int identified;
  char text[2048], latex[2048];
  char f[256], f2[256];        /* the hedge, names joined by "," in name order */
} answer;

static void join_vars(const sl_identification *r, const sl_graph *g, const int32_t *v,
                      size_t n, char *out) {
  /* name order, for stable expectations */
  const char *names[64];
  assert_true(n <= 64);
  for (size_t i = 0; i < n; i++) names[i] = sl_graph_name(g, r->var_node[v[i]]);
  for (size_t i = 1; i < n; i++)
    for (size_t j = i; j > 0 && strcmp(names[j], names[j - 1]) < 0; j--) {
      const char *t = names[j]; names[j] = names[j - 1]; names[j - 1] = t;
    }
  out[0] = '\0';
  for (size_t i = 0; i < n; i++) { if (i) strcat(out, ","); strcat(out, names[i]); }
}

static answer ask(const char *graph, const char *x, const char *y, const char *z) {
  sl_graph *g = parse_ok(graph);
  int32_t vx[64], vy[64], vz[64];
  size_t nx = ids(g, x, vx), ny = ids(g, y, vy), nz = ids(g, z, vz);
  sl_identification r;
  sl_error e;
  answer a;
  memset(&a, 0, sizeof a);
  int rc = sl_identify(g, vx, nx, vy, ny, vz, nz, &r, NULL, &e);
  if (rc) print_error("identify failed: %s\n", e.msg);
  assert_int_equal(rc, SL_OK);
  a.identified = r.identified;
  char *t = sl_identification_text(&r, g, 0), *l = sl_identification_text(&r, g, 1);
  assert_non_null(t);
  assert_non_null(l);
  snprintf(a.text, sizeof a.text, "%s", t);
  snprintf(a.latex, sizeof a.latex, "%s", l);
  free(t);
  free(l);
  if (!r.identified) {
    join_vars(&r, g, r.hedge_f, r.nf, a.f);
    join_vars(&r, g, r.hedge_f2, r.nf2, a.f2);
  }
  sl_identification_free(&r);
  sl_graph_free(g);
  return a;
}

static void expect(const char *graph, const char *x, const char *y, const char *z,
                   const char *text) {
  answer a = ask(graph, x, y, z);
  if (!a.identified || strcmp(a.text, text) != 0)
    print_error("graph %s\n  expected %s\n  got      %s (identified %d)\n", graph, text,
                a.text, a.identified);
  assert_true(a.identified);
  assert_string_equal(a.text, text);
}

static void expect_hedge(const char *graph, const char *x, const char *y, const char *z,
                         const char *f, const char *f2) {
  answer a = ask(graph, x, y, z);
  if (a.identified) print_error("graph %s: identified as %s\n", graph, a.text);
  assert_false(a.identified);
  assert_string_equal(a.f, f);
  assert_string_equal(a.f2, f2);
}

/* Pearl 2009, Causality, eq. 3.42 (the front-door formula, section 3.3.2):
** P(y | do(x)) = sum_m P(m | x) sum_x' P(y | x', m) P(x'). */
static void test_front_door(void **state) {
  (void)state;
  const char *want = "P(y | do(x)) = Σ_m P(m | x) Σ_x' P(y | x', m) P(x')";
  expect("x -> m -> y; x <-> y", "x", "y", "", want);
  /* the same with the confounder written as a hidden node */
  expect("hidden u; u -> x; u -> y; x -> m -> y", "x", "y", "", want);
  answer a = ask("x -> m -> y; x <-> y", "x", "y", "");
  assert_string_equal(a.latex,
      "P(y \\mid do(x)) = \\sum_{m} P(m \\mid x) \\sum_{x'} P(y \\mid x', m) P(x')");
}

/* Pearl 2009, eq. 3.19 (back-door adjustment): sum_z P(y | x, z) P(z). */
static void test_back_door(void **state) {
  (void)state;
  expect("z -> x -> y; z -> y", "x", "y", "", "P(y | do(x)) = Σ_z P(y | x, z) P(z)");
  /* no confounding: the plain conditional (Pearl 2009, section 3.2.3) */
  expect("x -> y", "x", "y", "", "P(y | do(x)) = P(y | x)");
  /* a cause of y alone is not needed: P(y | x) again (x and z independent) */
  expect("x -> y; z -> y", "x", "y", "", "P(y | do(x)) = P(y | x)");
  /* hidden confounding of the mediator and the outcome only: x has no
  ** back-door, so P(y | do(x)) = P(y | x) (Pearl 2009, rule 2) */
  expect("x -> z -> y; z <-> y", "x", "y", "", "P(y | do(x)) = P(y | x)");
}

/* The bow arc (Pearl 2009, Fig. 3.9(a), from memory; Shpitser and Pearl
** 2006, the smallest hedge): F = {x, y}, F' = {y}. */
static void test_bow_arc(void **state) {
  (void)state;
  expect_hedge("x -> y; x <-> y", "x", "y", "", "x,y", "y");
  expect_hedge("hidden u; u -> x; u -> y; x -> y", "x", "y", "", "x,y", "y");
  answer a = ask("x -> y; x <-> y", "x", "y", "");
  assert_string_equal(a.text, "P(y | do(x))");
}

/* Hedges of Shpitser and Pearl 2006 (from memory, each checked against
** the definition: F' a c-forest rooted in R = An(y) of G_x-bar without x,
** F a larger c-forest with the same root set that meets x). */
static void test_hedges(void **state) {
  (void)state;
  /* x -> z -> y with x <-> z (Pearl 2009, Fig. 3.9(b), from memory):
  ** P(z | do(x)) is not identified, hence neither is P(y | do(x)) */
  expect_hedge("x -> z -> y; x <-> z", "x", "y", "", "x,z", "z");
  /* x -> z -> y, x <-> y, z <-> y: {x, z, y} is one c-component and
  ** {z, y} one once x is cut */
  expect_hedge("x -> z -> y; x <-> y; z <-> y", "x", "y", "", "x,y,z", "y,z");
  /* two treatments: x1 -> y <- x2 with x1 <-> y: the bow arc inside */
  expect_hedge("x1 -> y; x2 -> y; x1 <-> y", "x1,x2", "y", "", "x1,y", "y");
  /* the bow arc inside a larger c-component: ID stops at the whole
  ** c-component {w, x, y} (F) against {y} (F'), both rooted in y */
  expect_hedge("w -> x -> y; w -> y; w <-> x; x <-> y", "x", "y", "", "w,x,y", "y");
}

/* The napkin (Pearl and Mackenzie 2018, The Book of Why, ch. 7; Shpitser
** and Pearl 2006): identified, not by adjustment:
** P(y | do(x)) = sum_w1 P(x, y | w1, w2) P(w1) / sum_w1 P(x | w1, w2) P(w1). */
static void test_napkin(void **state) {
  (void)state;
  expect("w1 -> w2 -> x -> y; w1 <-> x; w1 <-> y", "x", "y", "",
         "P(y | do(x)) = (Σ_w1 P(x, y | w1, w2) P(w1)) / (Σ_w1 P(x | w1, w2) P(w1))");
  answer a = ask("w1 -> w2 -> x -> y; w1 <-> x; w1 <-> y", "x", "y", "");
  assert_string_equal(a.latex,
      "P(y \\mid do(x)) = \\frac{\\sum_{w_{1}} P(x, y \\mid w_{1}, w_{2}) P(w_{1})}"
      "{\\sum_{w_{1}} P(x \\mid w_{1}, w_{2}) P(w_{1})}");
}

/* IDC (Shpitser and Pearl 2006, UAI): a member of z whose arrows out do
** not reach y given the rest moves into the intervention (rule 2 of the
** do-calculus); else P(y, z | do(x)) / P(z | do(x)). */
static void test_conditional(void **state) {
  (void)state;
  /* the front-door graph, given the mediator: y is separated from m in
  ** G with x's arrows in and m's arrows out removed, so P(y | do(x), m) =
  ** P(y | do(x, m)) = sum_x' P(y | x', m) P(x') (back-door through x) */
  expect("x -> m -> y; x <-> y", "x", "y", "m",
         "P(y | do(x), m) = Σ_x' P(y | x', m) P(x')");
  /* z descends from y: it stays a condition: P(y | x, z) */
  expect("x -> y -> z", "x", "y", "z", "P(y | do(x), z) = P(y | x, z)");
  /* a confounder given: P(y | do(x), z) = P(y | x, z) */
  expect("z -> x -> y; z -> y", "x", "y", "z", "P(y | do(x), z) = P(y | x, z)");
  /* not identified: the bow arc with a descendant of y given */
  expect_hedge("x -> y -> z; x <-> y", "x", "y", "z", "x,y", "y");
}

/* Latent projection (Tian and Pearl 2002, section 2; Verma and Pearl
** 1990): a hidden common ancestor becomes <->, a directed path through
** hidden nodes becomes ->, a <-> edge at a hidden node reaches that
** node's observed descendants. */
static void test_projection(void **state) {
  (void)state;
  sl_graph *g = parse_ok("hidden u, h, k, h2\n"
                         "u -> a; u -> h; h -> b\n"
                         "a -> k; k -> c\n"
                         "c <-> h2; h2 -> d\n"
                         "e -> f; hidden q; q -> q2; hidden q2; q2 -> e; q2 -> f");
  sl_graph *want = parse_ok("a -> c; a <-> b; c <-> d; e -> f; e <-> f");
  sl_error e;
  sl_graph *p = sl_latent_project(g, &e);
  assert_non_null(p);
  char *got = canonical(p), *exp = canonical(want);
  assert_string_equal(got, exp);
  assert_true(sl_graph_equal(p, want));
  free(got); free(exp);
  sl_graph_free(g); sl_graph_free(want); sl_graph_free(p);
  /* the identification of both forms agrees */
  answer a = ask("hidden u; u -> x; u -> w1; w1 -> w2 -> x -> y; hidden v; v -> w1; v -> y",
                 "x", "y", "");
  answer b = ask("w1 -> w2 -> x -> y; w1 <-> x; w1 <-> y", "x", "y", "");
  assert_string_equal(a.text, b.text);
}

/* Bad input: a hidden treatment is refused with its name. */
static void test_bad(void **state) {
  (void)state;
  sl_graph *g = parse_ok("hidden u; u -> y; x -> y");
  int32_t u = sl_graph_find(g, "u", 1), y = sl_graph_find(g, "y", 1);
  sl_identification r;
  sl_error e;
  assert_int_equal(sl_identify(g, &u, 1, &y, 1, NULL, 0, &r, NULL, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'u' is hidden"));
  sl_graph_free(g);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_front_door),
    cmocka_unit_test(test_back_door),
    cmocka_unit_test(test_bow_arc),
    cmocka_unit_test(test_hedges),
    cmocka_unit_test(test_napkin),
    cmocka_unit_test(test_conditional),
    cmocka_unit_test(test_projection),
    cmocka_unit_test(test_bad),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
