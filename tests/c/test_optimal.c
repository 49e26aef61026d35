/*
** test_optimal.c: sl_optimal (src/graph/optimal.c) in graphs with hidden
** nodes and <-> edges, in C.  Expected sets: the case and the hand
** cases worked out in tests/lua/test_optimal.lua (variances from m:cov() of a
** linear model there: for x -> y, y <-> w with cov 0.8, the OLS coefficient
** of x has asymptotic variance 0.36 with {w} against 1.0 with {}), and
** pa(cn) \ forb for DAGs (Henckel, Perkovic and Maathuis 2022, JRSS B).
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "adjust.h"
#include "notation.h"

/* The optimal set of x -> y in text, names joined by ",", or "none:KIND"
** with the first reason's kind when there is none. */
static void optimal(const char *text, const char *x, const char *y, char *out, size_t cap) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  assert_non_null(g);
  int32_t xi = sl_graph_find(g, x, strlen(x)), yi = sl_graph_find(g, y, strlen(y));
  sl_effect q;
  assert_int_equal(sl_effect_init(&q, g, &xi, 1, &yi, 1, &e), SL_OK);
  int32_t *set = NULL;
  size_t n = 0;
  int ok = 0;
  sl_reasons rs;
  memset(&rs, 0, sizeof rs);
  assert_int_equal(sl_optimal(&q, &set, &n, &ok, &rs, &e), SL_OK);
  out[0] = '\0';
  if (ok) {
    for (size_t i = 0; i < n; i++) {
      if (i) strncat(out, ",", cap - strlen(out) - 1);
      strncat(out, sl_graph_name(g, set[i]), cap - strlen(out) - 1);
    }
  } else {
    assert_true(rs.n > 0);
    snprintf(out, cap, "none:%d", rs.r[0].kind);
  }
  free(set);
  sl_reasons_free(&rs);
  sl_effect_free(&q);
  sl_graph_free(g);
}

static void test_hidden_neighbour_of_outcome(void **state) {
  (void)state;
  char s[256];
  optimal("x -> y; y <-> w", "x", "y", s, sizeof s);
  assert_string_equal(s, "w");
  optimal("hidden u; x -> y; u -> y; u -> w", "x", "y", s, sizeof s);
  assert_string_equal(s, "w");
}

static void test_dags_keep_pa_cn(void **state) {
  (void)state;
  char s[256];
  optimal("a -> x; x -> m -> y; c -> m; b -> y; a -> b", "x", "y", s, sizeof s);
  assert_string_equal(s, "b,c");
  optimal("x <- b; b <- e; e <-> y; x -> y", "x", "y", s, sizeof s);
  assert_string_equal(s, "e");
  optimal("x -> d; d <-> y; x -> y", "x", "y", s, sizeof s);
  assert_string_equal(s, "");
}

static void test_none(void **state) {
  (void)state;
  char s[256], want[32];
  optimal("x <- a; a -> c; c <-> y; x -> y", "x", "y", s, sizeof s);
  snprintf(want, sizeof want, "none:%d", SL_WHY_TRADEOFF);
  assert_string_equal(s, want);
  optimal("x -> y; x <-> y", "x", "y", s, sizeof s);
  assert_true(strncmp(s, "none:", 5) == 0);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_hidden_neighbour_of_outcome),
    cmocka_unit_test(test_dags_keep_pa_cn),
    cmocka_unit_test(test_none),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
