/*
** test_frontdoor.c: the front-door criterion and conditional instruments
** (src/graph/frontdoor.c, instrument.c).
**
** Expected values: Pearl 2009, Causality, section 3.3.2 (the front-door
** graph: {m}); hand-worked cases from definition 3.3.3; and, on random
** graphs with hidden nodes and <-> edges, a brute force written here that
** reads the three conditions straight off the trails (every trail
** enumerated, each judged open or blocked by Pearl's definition 1.2.3),
** sharing none of the library's reachability code.  networkx gives a
** second opinion in tests/oracle/frontdoor_networkx.py.
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
#include "frontdoor.h"
#include "instrument.h"

static sl_graph *parse_ok(const char *text) {
  sl_error e;
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  if (!g) print_error("parse failed: %s\n", e.msg);
  assert_non_null(g);
  return g;
}

static int32_t id(const sl_graph *g, const char *name) {
  int32_t v = sl_graph_find(g, name, strlen(name));
  assert_true(v >= 0);
  return v;
}

/* Collect sets as "a,b;c" text. */
typedef struct sets_text { const sl_graph *g; char buf[4096]; size_t n, count; } sets_text;

static int collect(void *ctx, const int32_t *set, size_t n) {
  sets_text *t = ctx;
  if (t->count++) t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, ";");
  for (size_t i = 0; i < n; i++)
    t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, "%s%s", i ? "," : "",
                             sl_graph_name(t->g, set[i]));
  return 0;
}

static void list(const char *text, const char *x, const char *y, const char *want) {
  sl_graph *g = parse_ok(text);
  sets_text t = {g, "", 0, 0};
  sl_error e;
  int none = 0;
  assert_int_equal(sl_frontdoor_each(g, id(g, x), id(g, y), collect, &t, &none, NULL, NULL, &e), SL_OK);
  if (strcmp(t.buf, want) != 0) print_error("%s: got '%s', want '%s'\n", text, t.buf, want);
  assert_string_equal(t.buf, want);
  assert_int_equal(none, t.count == 0);
  sl_graph_free(g);
}

/* Pearl 2009, section 3.3.2: smoking -> tar -> cancer with a hidden
** genotype confounding smoking and cancer: {tar}. */
static void test_pearl(void **state) {
  (void)state;
  list("x -> m -> y; x <-> y", "x", "y", "m");
  list("hidden u; u -> x; u -> y; x -> m -> y", "x", "y", "m");
  /* definition 3.3.3 by hand: parallel mediators both; a chain either */
  list("x -> a -> y; x -> b -> y; x <-> y", "x", "y", "a,b");
  list("x -> a -> b -> y; x <-> y", "x", "y", "b;a");   /* in search order */
  /* a confounder of m and y joins: its arrows are cut in condition (iii) */
  list("x -> m -> y; z -> m; z -> y; x <-> y", "x", "y", "m,z");
  /* none: m <-> y breaks (iii), a direct edge breaks (i) */
  list("x -> m -> y; x <-> y; m <-> y", "x", "y", "");
  list("x -> y", "x", "y", "");
}

/* The reasons of a failing check name the condition and the trail. */
static void test_reasons(void **state) {
  (void)state;
  sl_graph *g = parse_ok("hidden u; u -> x; u -> m; x -> m -> y; x -> k -> y; x <-> y");
  sl_reasons rs = {0};
  sl_error e;
  int ok = 1;
  int32_t z[] = {id(g, "m")};
  assert_int_equal(sl_frontdoor_check(g, id(g, "x"), id(g, "y"), z, 1, &ok, &rs, 5, &e), SL_OK);
  assert_int_equal(ok, 0);
  assert_int_equal(rs.n, 3);
  assert_int_equal(rs.r[0].kind, SL_WHY_FD_MISSED);      /* x -> k -> y */
  assert_int_equal(rs.r[0].npath, 3);
  assert_int_equal(rs.r[0].path[1], id(g, "k"));
  assert_int_equal(rs.r[1].kind, SL_WHY_FD_FROM_X);      /* x <- u -> m */
  assert_int_equal(rs.r[1].path[1], id(g, "u"));
  assert_int_equal(rs.r[2].kind, SL_WHY_FD_TO_Y);        /* m <- u -> x <-> y */
  sl_reasons_free(&rs);
  int32_t h[] = {id(g, "u")};
  assert_int_equal(sl_frontdoor_check(g, id(g, "x"), id(g, "y"), h, 1, &ok, &rs, 5, &e), SL_EARG);
  assert_non_null(strstr(e.msg, "'u' is hidden"));
  assert_int_equal(sl_frontdoor_check(g, id(g, "x"), id(g, "x"), z, 1, &ok, &rs, 5, &e), SL_EARG);
  sl_reasons_free(&rs);
  sl_graph_free(g);
}

/* ---- brute force ---- */

typedef struct bf {
  const sl_graph *g;
  int32_t x, y;
  const unsigned char *inz;      /* the candidate set */
  const unsigned char *cond, *an_cond;
  int cut_z;                     /* skip trails using arrows out of members */
  int backdoor_from_first;       /* trail must start with an arrowhead */
  int open_found;
} bf;

static int judge(void *ctx, const sl_trail *t) {
  bf *b = ctx;
  if (b->backdoor_from_first && t->steps[0] == SL_FORWARD) return 0;
  if (b->cut_z)
    for (size_t i = 0; i < t->len; i++) {
      if (t->steps[i] == SL_FORWARD && b->inz[t->nodes[i]]) return 0;
      if (t->steps[i] == SL_BACKWARD && b->inz[t->nodes[i + 1]]) return 0;
    }
  if (sl_trail_open(t, b->cond, b->an_cond, NULL, NULL)) { b->open_found = 1; return 1; }
  return 0;
}

/* A directed path x -> ... -> y avoiding the set, by depth-first search. */
static int directed(const sl_graph *g, int32_t v, int32_t y, const unsigned char *inz) {
  if (v == y) return 1;
  size_t k;
  const int32_t *ch = sl_graph_children(g, v, &k);
  for (size_t i = 0; i < k; i++)
    if (!inz[ch[i]] && directed(g, ch[i], y, inz)) return 1;
  return 0;
}

/* Pearl's three conditions, each read off the trails. */
static int brute_frontdoor(const sl_graph *g, int32_t x, int32_t y, const unsigned char *inz) {
  size_t n = sl_graph_nnodes(g);
  if (directed(g, x, y, inz)) return 0;
  unsigned char xm[16] = {0}, anx[16] = {0};
  xm[x] = 1;
  /* x's ancestors in the graph without the arrows out of members */
  anx[x] = 1;
  for (int changed = 1; changed;) {
    changed = 0;
    for (size_t v = 0; v < n; v++) {
      if (!anx[v]) continue;
      size_t k;
      const int32_t *pa = sl_graph_parents(g, (int32_t)v, &k);
      for (size_t i = 0; i < k; i++)
        if (!anx[pa[i]] && !inz[pa[i]]) { anx[pa[i]] = 1; changed = 1; }
    }
  }
  sl_error e;
  for (size_t v = 0; v < n; v++) {
    if (!inz[v]) continue;
    int32_t z = (int32_t)v;
    bf b = {g, x, y, inz, NULL, NULL, 0, 1, 0};     /* (ii): x to z, given {} */
    sl_trails_each(g, &x, 1, &z, 1, judge, &b, NULL, &e);
    if (b.open_found) return 0;
    bf c = {g, x, y, inz, xm, anx, 1, 1, 0};        /* (iii): z to y, given x */
    sl_trails_each(g, &z, 1, &y, 1, judge, &c, NULL, &e);
    if (c.open_found) return 0;
  }
  return 1;
}

static uint64_t rng_state = 88172645463325252ull;
static uint32_t rnd(void) {
  rng_state ^= rng_state << 13; rng_state ^= rng_state >> 7; rng_state ^= rng_state << 17;
  return (uint32_t)(rng_state >> 11);
}

/* Random graphs of up to 7 nodes: every subset checked, the minimal ones
** against the listing. */
static void test_brute(void **state) {
  (void)state;
  int graphs = 0, with_set = 0;
  for (int round = 0; round < 400; round++) {
    int n = 3 + (int)(rnd() % 5);
    char text[2048];
    size_t len = 0;
    int perm[8];
    for (int i = 0; i < n; i++) perm[i] = i;
    for (int i = n - 1; i > 0; i--) { int j = (int)(rnd() % (uint32_t)(i + 1)), t = perm[i]; perm[i] = perm[j]; perm[j] = t; }
    for (int i = 0; i < n; i++) len += (size_t)snprintf(text + len, sizeof text - len, "v%d;", i);
    for (int i = 0; i < n; i++)
      for (int j = i + 1; j < n; j++) {
        if (rnd() % 100 < 40) len += (size_t)snprintf(text + len, sizeof text - len, "v%d -> v%d;", perm[i], perm[j]);
        if (rnd() % 100 < 15) len += (size_t)snprintf(text + len, sizeof text - len, "v%d <-> v%d;", i, j);
      }
    for (int i = 0; i < n; i++)
      if (rnd() % 100 < 15) len += (size_t)snprintf(text + len, sizeof text - len, "hidden v%d;", i);
    sl_graph *g = parse_ok(text);
    size_t nn = sl_graph_nnodes(g);
    int32_t x = (int32_t)(rnd() % nn), y = (int32_t)(rnd() % nn);
    if (x == y || sl_graph_is_hidden(g, x) || sl_graph_is_hidden(g, y)) { sl_graph_free(g); continue; }
    graphs++;
    /* every subset of the other observed nodes */
    int32_t other[8];
    size_t no = 0;
    for (size_t v = 0; v < nn; v++)
      if ((int32_t)v != x && (int32_t)v != y && !sl_graph_is_hidden(g, (int32_t)v)) other[no++] = (int32_t)v;
    unsigned char fd[256] = {0};
    for (unsigned mask = 0; mask < (1u << no); mask++) {
      unsigned char inz[16] = {0};
      int32_t z[8];
      size_t nz = 0;
      for (size_t i = 0; i < no; i++) if (mask >> i & 1) { inz[other[i]] = 1; z[nz++] = other[i]; }
      fd[mask] = (unsigned char)brute_frontdoor(g, x, y, inz);
      sl_reasons rs = {0};
      sl_error e;
      int ok = -1;
      assert_int_equal(sl_frontdoor_check(g, x, y, z, nz, &ok, &rs, 5, &e), SL_OK);
      if (ok != fd[mask]) print_error("check of mask %u in %s (x=%d y=%d): %d, brute %d\n", mask, text, x, y, ok, fd[mask]);
      assert_int_equal(ok, fd[mask]);
      assert_int_equal(rs.n == 0, ok);
      sl_reasons_free(&rs);
    }
    /* the minimal ones, as the listing writes them (sorted below) */
    char want[64][64];
    size_t nw = 0;
    for (unsigned mask = 0; mask < (1u << no); mask++) {
      if (!fd[mask]) continue;
      int minimal = 1;
      for (unsigned sub = (mask - 1) & mask; minimal && sub != mask; sub = (sub - 1) & mask) {
        if (fd[sub]) minimal = 0;
        if (sub == 0) break;
      }
      if (mask && fd[0]) minimal = 0;
      if (!minimal) continue;
      size_t k = 0;
      want[nw][0] = '\0';
      /* names in name order: v0 < v1 < ... for single digits */
      for (size_t r = 0; r < nn; r++) {
        int32_t v = sl_graph_by_rank(g, (int32_t)r);
        for (size_t i = 0; i < no; i++)
          if (other[i] == v && (mask >> i & 1))
            k += (size_t)snprintf(want[nw] + k, 64 - k, "%s%s", k ? "," : "", sl_graph_name(g, v));
      }
      nw++;
    }
    sets_text t = {g, "", 0, 0};
    sl_error e;
    int none;
    assert_int_equal(sl_frontdoor_each(g, x, y, collect, &t, &none, NULL, NULL, &e), SL_OK);
    /* compare as sorted lists of set texts */
    char *got[64];
    size_t ng = 0;
    if (t.count) {
      char *save, *p = strtok_r(t.buf, ";", &save);
      if (!p) got[ng++] = "";      /* the empty set alone */
      while (p) { got[ng++] = p; p = strtok_r(NULL, ";", &save); }
    }
    if (t.count == 1 && ng == 0) got[ng++] = "";
    assert_int_equal(ng, nw);
    for (size_t i = 0; i < nw; i++) {
      int found = 0;
      for (size_t j = 0; j < ng; j++) found |= strcmp(want[i], got[j]) == 0;
      if (!found) print_error("%s x=%d y=%d: missing {%s}\n", text, x, y, want[i]);
      assert_true(found);
    }
    with_set += nw > 0;
    sl_graph_free(g);
  }
  assert_true(graphs >= 200);
  assert_true(with_set >= 50);
}

/* Brito and Pearl 2002 (from memory): z -> x -> y, x <-> y: z given {}; a
** conditional instrument z <- w -> y: z given {w}. */
typedef struct ivs_text { const sl_graph *g; char buf[512]; size_t n; } ivs_text;

static int collect_iv(void *ctx, int32_t z, const int32_t *w, size_t nw) {
  ivs_text *t = ctx;
  t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, "%s%s|", t->n ? ";" : "",
                           sl_graph_name(t->g, z));
  for (size_t i = 0; i < nw; i++)
    t->n += (size_t)snprintf(t->buf + t->n, sizeof t->buf - t->n, "%s%s", i ? "," : "",
                             sl_graph_name(t->g, w[i]));
  return 0;
}

static void ivs(const char *text, const char *want) {
  sl_graph *g = parse_ok(text);
  ivs_text t = {g, "", 0};
  sl_error e;
  assert_int_equal(sl_instruments_each(g, id(g, "x"), id(g, "y"), collect_iv, &t, NULL, &e), SL_OK);
  if (strcmp(t.buf, want)) print_error("%s: got '%s', want '%s'\n", text, t.buf, want);
  assert_string_equal(t.buf, want);
  sl_graph_free(g);
}

static void test_instruments(void **state) {
  (void)state;
  ivs("z -> x -> y; x <-> y", "z|");
  ivs("w -> z; w -> y; z -> x -> y; x <-> y", "z|w");
  ivs("z -> x -> m -> y; x <-> y", "z|");            /* the total effect */
  ivs("z -> x -> y; z -> y; x <-> y", "");           /* z affects y directly */
  ivs("hidden u; u -> z; u -> y; z -> x -> y; x <-> y", "");
  sl_graph *g = parse_ok("w -> z; w -> y; z -> x -> y; x <-> y; y -> d");
  sl_reasons rs = {0};
  sl_error e;
  int ok = 1;
  int32_t w[] = {id(g, "d")};
  assert_int_equal(sl_instrument_check(g, id(g, "x"), id(g, "y"), id(g, "z"), w, 1, &ok, &rs, &e), SL_OK);
  assert_int_equal(ok, 0);
  assert_int_equal(rs.n, 2);
  assert_int_equal(rs.r[0].kind, SL_WHY_IV_FORBIDDEN);   /* d descends from y */
  assert_int_equal(rs.r[0].via, id(g, "y"));
  assert_int_equal(rs.r[1].kind, SL_WHY_IV_OPEN);        /* z <- w -> y */
  sl_reasons_free(&rs);
  assert_int_equal(sl_instrument_check(g, id(g, "x"), id(g, "y"), id(g, "x"), NULL, 0, &ok, &rs, &e), SL_EARG);
  sl_reasons_free(&rs);
  sl_graph_free(g);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_pearl),
    cmocka_unit_test(test_reasons),
    cmocka_unit_test(test_brute),
    cmocka_unit_test(test_instruments),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
