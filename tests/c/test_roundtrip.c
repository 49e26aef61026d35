/*
** test_roundtrip.c: random graphs through the notation and back.
**
** A seeded xorshift generator makes random graphs: node names of many kinds
** (bare, quoted, UTF-8, with quotes, backslashes, blanks, '#', ';', ','),
** arrows that only go forward along a random order (so the graph is
** acyclic), <-> edges, hidden marks and isolated nodes.  Each graph is
** written as notation text by this file, in a random statement order with
** random grouping, quoting, blanks, comments and line ends, then parsed.
**
** The parsed graph is checked against the generator's own model, and its
** canonical text against one this file builds from the model following
** the canonical form described in DESIGN.md and write.c (hidden line, then
** "x -> ..." lines, then "<->" lines, then isolated observed nodes, every
** list in bytewise name order; quotes only when a name is not made of
** [A-Za-z0-9_.] and UTF-8 bytes, or is "hidden").  Then the canonical text
** must parse back to an equal graph that writes the very same bytes.
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
#include "test_text.h"

#define NGRAPHS 3000
#define MAXN 24

/* ---- a deterministic generator (xorshift64*) ---- */

static uint64_t rng_state;
static uint64_t rnd(void) {
  rng_state ^= rng_state >> 12;
  rng_state ^= rng_state << 25;
  rng_state ^= rng_state >> 27;
  return rng_state * 2685821657736338717ull;
}
static size_t below(size_t n) { return (size_t)(rnd() % n); }
static int chance(unsigned pct) { return below(100) < pct; }

/* ---- a growable string ---- */

typedef struct str { char *s; size_t n, cap; } str;

static void put(str *b, const char *s, size_t n) {
  if (b->n + n + 1 > b->cap) {
    size_t cap = b->cap ? b->cap : 256;
    while (cap < b->n + n + 1) cap *= 2;
    b->s = realloc(b->s, cap);
    assert_non_null(b->s);
    b->cap = cap;
  }
  memcpy(b->s + b->n, s, n);
  b->n += n;
  b->s[b->n] = '\0';
}
static void puts_(str *b, const char *s) { put(b, s, strlen(s)); }

/* ---- the model ---- */

typedef struct model {
  size_t n;
  char name[MAXN][400];
  unsigned char hidden[MAXN];
  unsigned char dir[MAXN][MAXN];    /* dir[a][b]: a -> b */
  unsigned char bi[MAXN][MAXN];     /* symmetric */
} model;

/* Pieces names are made of.  No U+FEFF: see test_bom_name_roundtrip. */
static const char *const utf8_bits[] = {
  "\xC3\xA9", "\xC3\x9F", "\xE6\x97\xA5", "\xE6\x9C\xAC", "\xF0\x9F\x8D\x8E",
  "\xCE\xA9", "\xC3\xB1", "\xC2\xA0", "\xE2\x80\x94", "\xF4\x8F\xBF\xBF",
};
static const char bare_chars[] =
  "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789_.";
static const char odd_chars[] = " \"\\#;,-<>=@$!'(){}[]/*+|&%~`?:\x7f";

static void random_name(char *out) {
  size_t k = 0, len;
  switch (below(9)) {
    case 0: case 1: case 2:                  /* bare ASCII */
      len = 1 + below(8);
      for (size_t i = 0; i < len; i++) out[k++] = bare_chars[below(sizeof bare_chars - 1)];
      break;
    case 3: {                                /* words and blanks */
      size_t words = 1 + below(3);
      for (size_t w = 0; w < words; w++) {
        if (w || chance(10)) out[k++] = ' ';
        len = 1 + below(5);
        for (size_t i = 0; i < len; i++) out[k++] = bare_chars[below(26)];
      }
      if (chance(10)) out[k++] = ' ';
      break;
    }
    case 4:                                  /* punctuation, quotes, backslashes */
      len = 1 + below(8);
      for (size_t i = 0; i < len; i++)
        out[k++] = chance(50) ? odd_chars[below(sizeof odd_chars - 1)]
                              : bare_chars[below(sizeof bare_chars - 1)];
      break;
    case 5: case 6:                          /* UTF-8, bare or not */
      len = 1 + below(5);
      for (size_t i = 0; i < len; i++) {
        if (chance(50)) {
          const char *u = utf8_bits[below(sizeof utf8_bits / sizeof *utf8_bits)];
          memcpy(out + k, u, strlen(u));
          k += strlen(u);
        } else if (chance(20)) {
          out[k++] = odd_chars[below(sizeof odd_chars - 1)];
        } else {
          out[k++] = bare_chars[below(sizeof bare_chars - 1)];
        }
      }
      break;
    case 7: {                                /* the keyword and its neighbours */
      static const char *const kw[] = {"hidden", "hidden", "Hidden", "hidden_", "hiddenx",
                                       "hidde", "hidden ", " hidden"};
      const char *s = kw[below(sizeof kw / sizeof *kw)];
      memcpy(out, s, strlen(s));
      k = strlen(s);
      break;
    }
    default:                                 /* long */
      len = 60 + below(300);
      for (size_t i = 0; i < len; i++) out[k++] = chance(5) ? ' ' : bare_chars[below(62)];
      break;
  }
  out[k] = '\0';
}

static void random_model(model *m) {
  memset(m, 0, sizeof *m);
  m->n = below(MAXN + 1);
  for (size_t i = 0; i < m->n; i++) {
    for (;;) {                              /* distinct names */
      random_name(m->name[i]);
      size_t j = 0;
      while (j < i && strcmp(m->name[j], m->name[i]) != 0) j++;
      if (j == i) break;
    }
    m->hidden[i] = chance(15);
  }
  /* arrows forward along a random order */
  size_t perm[MAXN];
  for (size_t i = 0; i < m->n; i++) perm[i] = i;
  for (size_t i = m->n; i > 1; i--) {
    size_t j = below(i), t = perm[i - 1];
    perm[i - 1] = perm[j];
    perm[j] = t;
  }
  unsigned pd = (unsigned)below(40), pb = (unsigned)below(12);
  for (size_t i = 0; i < m->n; i++)
    for (size_t j = i + 1; j < m->n; j++) {
      if (chance(pd)) m->dir[perm[i]][perm[j]] = 1;
      if (chance(pb)) m->bi[perm[i]][perm[j]] = m->bi[perm[j]][perm[i]] = 1;
    }
}

/* ---- writing names, independently of write.c ---- */

/* The no-break space (U+00A0, UTF-8 C2 A0) is the one invisible character
** among utf8_bits: the notation refuses it in a bare name and writes it
** inside quotes as \u{00A0}; DEL is written as \u{007F} (docs/notation.md). */
static int needs_quotes(const char *s) {
  if (!*s || strcmp(s, "hidden") == 0 || strstr(s, "\xC2\xA0")) return 1;
  for (const unsigned char *p = (const unsigned char *)s; *p; p++)
    if (!((*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') ||
          (*p >= '0' && *p <= '9') || *p == '_' || *p == '.' || *p >= 0x80))
      return 1;
  return 0;
}

static void put_name(str *b, const char *s, int force_quotes) {
  if (!force_quotes && !needs_quotes(s)) { puts_(b, s); return; }
  put(b, "\"", 1);
  for (const char *p = s; *p; p++) {
    if (p[0] == '\xC2' && p[1] == '\xA0') { puts_(b, "\\u{00A0}"); p++; continue; }
    if (*p == '\x7f') { puts_(b, "\\u{007F}"); continue; }
    if (*p == '"' || *p == '\\') put(b, "\\", 1);
    put(b, p, 1);
  }
  put(b, "\"", 1);
}

/* ---- the expected canonical text ---- */

static const model *sort_model;
static int by_name(const void *a, const void *b) {
  return strcmp(sort_model->name[*(const size_t *)a], sort_model->name[*(const size_t *)b]);
}

static void sorted_ids(const model *m, size_t *ord) {
  for (size_t i = 0; i < m->n; i++) ord[i] = i;
  sort_model = m;
  qsort(ord, m->n, sizeof *ord, by_name);
}

static void expected_text(const model *m, str *out) {
  size_t ord[MAXN], pos[MAXN];
  sorted_ids(m, ord);
  for (size_t r = 0; r < m->n; r++) pos[ord[r]] = r;
  int first = 1;
  for (size_t r = 0; r < m->n; r++)
    if (m->hidden[ord[r]]) {
      puts_(out, first ? "hidden " : ", ");
      put_name(out, m->name[ord[r]], 0);
      first = 0;
    }
  if (!first) puts_(out, "\n");
  for (size_t r = 0; r < m->n; r++) {
    size_t v = ord[r];
    int any = 0;
    for (size_t q = 0; q < m->n; q++) {
      size_t w = ord[q];
      if (!m->dir[v][w]) continue;
      if (!any) { put_name(out, m->name[v], 0); puts_(out, " -> "); }
      else puts_(out, ", ");
      put_name(out, m->name[w], 0);
      any = 1;
    }
    if (any) puts_(out, "\n");
  }
  for (size_t r = 0; r < m->n; r++) {
    size_t v = ord[r];
    int any = 0;
    for (size_t q = r + 1; q < m->n; q++) {
      size_t w = ord[q];
      if (!m->bi[v][w]) continue;
      if (!any) { put_name(out, m->name[v], 0); puts_(out, " <-> "); }
      else puts_(out, ", ");
      put_name(out, m->name[w], 0);
      any = 1;
    }
    if (any) puts_(out, "\n");
  }
  for (size_t r = 0; r < m->n; r++) {
    size_t v = ord[r];
    int touched = m->hidden[v];
    for (size_t w = 0; w < m->n; w++) touched |= m->dir[v][w] | m->dir[w][v] | m->bi[v][w];
    if (touched) continue;
    put_name(out, m->name[v], 0);
    puts_(out, "\n");
  }
  (void)pos;
}

/* ---- random input text for a model ---- */

#define MAXSTMT 1024
typedef struct stmts { str s[MAXSTMT]; size_t n; } stmts;

static void blanks(str *b) {
  size_t k = below(4);
  static const char *const bl[] = {" ", " ", "\t", "  "};
  if (k == 0 && chance(50)) return;          /* sometimes none at all */
  for (size_t i = 0; i < (k ? k : 1); i++) puts_(b, bl[below(4)]);
}

static void name_in(str *b, const model *m, size_t v) {
  put_name(b, m->name[v], chance(15));
}

/* A name list "a, b, c" (a name may be repeated). */
static void list_in(str *b, const model *m, const size_t *v, size_t n) {
  for (size_t i = 0; i < n; i++) {
    if (i) { if (chance(30)) blanks(b); puts_(b, ","); blanks(b); }
    name_in(b, m, v[i]);
    if (chance(3)) { puts_(b, ", "); name_in(b, m, v[i]); }   /* repeated */
  }
}

static str *new_stmt(stmts *st) {
  assert_true(st->n < MAXSTMT);
  str *s = &st->s[st->n++];
  memset(s, 0, sizeof *s);
  puts_(s, "");
  return s;
}

/* Statements that say exactly the model, in random forms. */
static void model_statements(const model *m, stmts *st) {
  st->n = 0;
  unsigned char done[MAXN][MAXN];
  memset(done, 0, sizeof done);
  /* arrows: grouped by source, by target, as chains, or one by one */
  for (size_t v = 0; v < m->n; v++)
    for (size_t w = 0; w < m->n; w++) {
      if (!m->dir[v][w] || done[v][w]) continue;
      str *s = new_stmt(st);
      int form = (int)below(4);
      if (form == 0) {                       /* v -> all its remaining children */
        size_t c[MAXN], nc = 0;
        for (size_t u = 0; u < m->n; u++)
          if (m->dir[v][u] && !done[v][u]) { c[nc++] = u; done[v][u] = 1; }
        name_in(s, m, v); blanks(s); puts_(s, "->"); blanks(s); list_in(s, m, c, nc);
      } else if (form == 1) {                /* all remaining parents <- of w */
        size_t p[MAXN], np = 0;
        for (size_t u = 0; u < m->n; u++)
          if (m->dir[u][w] && !done[u][w]) { p[np++] = u; done[u][w] = 1; }
        name_in(s, m, w); blanks(s); puts_(s, "<-"); blanks(s); list_in(s, m, p, np);
      } else if (form == 2) {                /* a chain v -> w -> x ... */
        name_in(s, m, v);
        size_t cur = v, nxt = w;
        for (;;) {
          done[cur][nxt] = 1;
          blanks(s); puts_(s, "->"); blanks(s); name_in(s, m, nxt);
          cur = nxt;
          size_t u = 0;
          while (u < m->n && !(m->dir[cur][u] && !done[cur][u])) u++;
          if (u == m->n || chance(30)) break;
          nxt = u;
        }
      } else {                               /* one arrow, either way */
        done[v][w] = 1;
        if (chance(50)) { name_in(s, m, v); blanks(s); puts_(s, "->"); blanks(s); name_in(s, m, w); }
        else { name_in(s, m, w); blanks(s); puts_(s, "<-"); blanks(s); name_in(s, m, v); }
      }
    }
  /* <-> edges, either way round */
  for (size_t v = 0; v < m->n; v++)
    for (size_t w = v + 1; w < m->n; w++) {
      if (!m->bi[v][w]) continue;
      str *s = new_stmt(st);
      size_t a = v, b = w;
      if (chance(50)) { a = w; b = v; }
      name_in(s, m, a); blanks(s); puts_(s, "<->"); blanks(s); name_in(s, m, b);
    }
  /* hidden marks, alone or in groups */
  size_t h[MAXN], nh = 0;
  for (size_t v = 0; v < m->n; v++) if (m->hidden[v]) h[nh++] = v;
  for (size_t i = 0; i < nh;) {
    size_t k = 1 + below(nh - i);
    str *s = new_stmt(st);
    puts_(s, "hidden "); blanks(s); list_in(s, m, h + i, k);
    i += k;
  }
  /* every node named alone: declares isolated ones, harmless for others */
  for (size_t v = 0; v < m->n; v++) {
    int touched = 0;
    for (size_t w = 0; w < m->n; w++) touched |= m->dir[v][w] | m->dir[w][v] | m->bi[v][w];
    if (!touched || chance(10)) { str *s = new_stmt(st); name_in(s, m, v); }
  }
  /* a few repeats */
  size_t base = st->n;
  for (size_t i = 0; i < base && st->n < MAXSTMT; i++)
    if (chance(5)) { str *s = new_stmt(st); puts_(s, st->s[i].s); }
}

static void shuffle_statements(stmts *st) {
  for (size_t i = st->n; i > 1; i--) {
    size_t j = below(i);
    str t = st->s[i - 1];
    st->s[i - 1] = st->s[j];
    st->s[j] = t;
  }
}

/* Join statements with random ends: newline, CRLF, ';', comments. */
static void join_statements(const stmts *st, str *out) {
  if (chance(5)) puts_(out, "\xEF\xBB\xBF");
  if (chance(20)) puts_(out, "# a comment first, with \"quotes\" and ; and -> in it\n");
  for (size_t i = 0; i < st->n; i++) {
    if (chance(20)) blanks(out);
    puts_(out, st->s[i].s);
    if (chance(20)) blanks(out);
    switch (below(6)) {
      case 0: puts_(out, ";"); if (chance(50)) blanks(out); break;
      case 1: puts_(out, "\r\n"); break;
      case 2: puts_(out, " # why: \"a\" -> b; c\n"); break;
      case 3: puts_(out, "\n\n"); break;
      default: puts_(out, "\n"); break;
    }
  }
  if (chance(20)) puts_(out, "# trailing comment without a newline");
}

static void free_statements(stmts *st) {
  for (size_t i = 0; i < st->n; i++) free(st->s[i].s);
  st->n = 0;
}

/* ---- checks ---- */

static void show(const char *label, const char *s) {
  print_error("--- %s (%zu bytes)\n%s\n---\n", label, strlen(s), s);
}

static sl_graph *parse_or_fail(const char *text, size_t len, int iter) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, len, &e);
  if (!g) {
    print_error("graph %d: parse failed: %d at %d:%d: %s\n", iter, e.code, e.line, e.col, e.msg);
    show("input", text);
  }
  assert_non_null(g);
  return g;
}

/* The parsed graph holds exactly the model. */
static void check_against_model(const sl_graph *g, const model *m, int iter) {
  if (sl_graph_nnodes(g) != m->n) print_error("graph %d: node count\n", iter);
  assert_int_equal(sl_graph_nnodes(g), m->n);
  int32_t id[MAXN];
  size_t nd = 0, nb = 0;
  for (size_t v = 0; v < m->n; v++) {
    id[v] = sl_graph_find(g, m->name[v], strlen(m->name[v]));
    if (id[v] < 0) print_error("graph %d: lost node \"%s\"\n", iter, m->name[v]);
    assert_true(id[v] >= 0);
    assert_int_equal(sl_graph_is_hidden(g, id[v]), m->hidden[v]);
  }
  for (size_t v = 0; v < m->n; v++)
    for (size_t w = 0; w < m->n; w++) {
      nd += m->dir[v][w];
      if (w > v) nb += m->bi[v][w];
      size_t k, cnt;
      const int32_t *c = sl_graph_children(g, id[v], &cnt);
      for (k = 0; k < cnt && c[k] != id[w]; k++) {}
      assert_int_equal(k < cnt, m->dir[v][w]);
      c = sl_graph_siblings(g, id[v], &cnt);
      for (k = 0; k < cnt && c[k] != id[w]; k++) {}
      assert_int_equal(k < cnt, m->bi[v][w]);
    }
  assert_int_equal(sl_graph_ndirected(g), nd);
  assert_int_equal(sl_graph_nbidirected(g), nb);
}

/* The same model built through the builder API, without any text. */
static sl_graph *build_directly(const model *m) {
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  int32_t id[MAXN];
  for (size_t v = 0; v < m->n; v++) {
    id[v] = sl_builder_node(b, m->name[v], strlen(m->name[v]), &e);
    assert_true(id[v] >= 0);
    if (m->hidden[v]) sl_builder_hidden(b, id[v]);
  }
  for (size_t v = 0; v < m->n; v++)
    for (size_t w = 0; w < m->n; w++) {
      if (m->dir[v][w]) assert_int_equal(sl_builder_edge(b, id[v], id[w], SL_DIRECTED, 0, 0, &e), SL_OK);
      if (m->bi[v][w]) assert_int_equal(sl_builder_edge(b, id[v], id[w], SL_BIDIRECTED, 0, 0, &e), SL_OK);
    }
  sl_graph *g = sl_builder_finish(b, &e);
  sl_builder_free(b);
  assert_non_null(g);
  return g;
}

static void test_random_roundtrip(void **state) {
  (void)state;
  rng_state = 0x2545F4914F6CDD1Dull;      /* fixed seed: the same graphs every run */
  static model m;
  static stmts st;
  size_t total_nodes = 0, total_edges = 0, quoted = 0, utf8 = 0;
  for (int iter = 0; iter < NGRAPHS; iter++) {
    random_model(&m);
    str want = {0}, in = {0};
    puts_(&want, "");
    puts_(&in, "");
    expected_text(&m, &want);
    model_statements(&m, &st);
    shuffle_statements(&st);
    join_statements(&st, &in);
    free_statements(&st);

    sl_graph *g = parse_or_fail(in.s, in.n, iter);
    check_against_model(g, &m, iter);
    char *t1 = canonical(g);
    if (strcmp(t1, want.s) != 0) {
      print_error("graph %d: canonical text differs from the expected one\n", iter);
      show("input", in.s);
      show("expected", want.s);
      show("written", t1);
    }
    assert_string_equal(t1, want.s);

    /* the canonical text parses to an equal graph that writes the same */
    sl_graph *g2 = parse_or_fail(t1, strlen(t1), iter);
    assert_true(sl_graph_equal(g, g2));
    assert_true(sl_graph_equal(g2, g));
    char *t2 = canonical(g2);
    assert_string_equal(t1, t2);

    /* another random wording of the same graph writes the same text */
    model_statements(&m, &st);
    shuffle_statements(&st);
    str in2 = {0};
    puts_(&in2, "");
    join_statements(&st, &in2);
    free_statements(&st);
    sl_graph *g3 = parse_or_fail(in2.s, in2.n, iter);
    char *t3 = canonical(g3);
    assert_string_equal(t1, t3);
    assert_true(sl_graph_equal(g, g3));

    /* and so does the graph built without text */
    sl_graph *g4 = build_directly(&m);
    assert_true(sl_graph_equal(g, g4));
    char *t4 = canonical(g4);
    assert_string_equal(t1, t4);

    total_nodes += m.n;
    total_edges += sl_graph_ndirected(g) + sl_graph_nbidirected(g);
    for (size_t v = 0; v < m.n; v++) {
      quoted += needs_quotes(m.name[v]);
      for (const unsigned char *p = (const unsigned char *)m.name[v]; *p; p++)
        if (*p >= 0x80) { utf8++; break; }
    }
    free(t1); free(t2); free(t3); free(t4);
    sl_graph_free(g); sl_graph_free(g2); sl_graph_free(g3); sl_graph_free(g4);
    free(want.s); free(in.s); free(in2.s);
  }
  /* the generator really made varied graphs */
  print_message("%d graphs, %zu nodes (%zu quoted, %zu UTF-8), %zu edges\n",
                NGRAPHS, total_nodes, quoted, utf8, total_edges);
  assert_true(total_nodes > 10 * NGRAPHS);
  assert_true(quoted > total_nodes / 5);
  assert_true(utf8 > total_nodes / 10);
  assert_true(total_edges > 10 * NGRAPHS);
}

/* Every order of the statements of one graph gives the same canonical text
** (all 5! = 120 orders, written by hand). */
static void test_statement_order(void **state) {
  (void)state;
  const char *s[5] = {"hidden \"wear level\"", "\"wear level\" -> press -> paint",
                      "cut <-> paint", "cut -> press", "inspect"};
  const char *want = "hidden \"wear level\"\ncut -> press\npress -> paint\n"
                     "\"wear level\" -> press\ncut <-> paint\ninspect\n";
  int idx[5] = {0, 1, 2, 3, 4}, count = 0;
  for (;;) {
    char text[512];
    size_t k = 0;
    for (int i = 0; i < 5; i++) k += (size_t)snprintf(text + k, sizeof text - k, "%s\n", s[idx[i]]);
    sl_graph *g = parse_or_fail(text, k, count);
    char *t = canonical(g);
    assert_string_equal(t, want);
    free(t);
    sl_graph_free(g);
    count++;
    /* next permutation */
    int i = 3;
    while (i >= 0 && idx[i] >= idx[i + 1]) i--;
    if (i < 0) break;
    int j = 4;
    while (idx[j] <= idx[i]) j--;
    int tmp = idx[i]; idx[i] = idx[j]; idx[j] = tmp;
    for (int l = i + 1, r = 4; l < r; l++, r--) { tmp = idx[l]; idx[l] = idx[r]; idx[r] = tmp; }
  }
  assert_int_equal(count, 120);
}

/* A node whose name starts with U+FEFF (the byte-order mark, valid UTF-8)
** must survive the round trip: the notation only skips a mark at the very
** start of a text, so a canonical text that begins with such a name must
** not lose it.  Regression test for what the fuzzer would find. */
static void test_bom_name_roundtrip(void **state) {
  (void)state;
  static const char *const inputs[] = {
    "\"\xEF\xBB\xBF" "x\"",                            /* an isolated node */
    "\"\xEF\xBB\xBF" "a\" -> \"\xEF\xBB\xBF" "b\"",  /* first arrow line */
    "\"\xEF\xBB\xBF" "a\" <-> \"\xEF\xBB\xBF" "b\"",  /* first <-> line */
  };
  int bad = 0;
  for (size_t i = 0; i < sizeof inputs / sizeof *inputs; i++) {
    sl_graph *g = parse_or_fail(inputs[i], strlen(inputs[i]), (int)i);
    assert_int_equal(sl_graph_name(g, 0)[0], (char)0xEF);
    char *t = canonical(g);
    sl_error e;
    memset(&e, 0, sizeof e);
    sl_graph *g2 = sl_graph_parse(t, strlen(t), &e);
    int same = g2 && sl_graph_equal(g, g2);
    if (!same) {
      print_error("BOM-named graph %zu does not survive: written as", i);
      for (const unsigned char *p = (const unsigned char *)t; *p; p++) print_error(" %02x", *p);
      print_error(", read back as %s\n", g2 && sl_graph_nnodes(g2) ? sl_graph_name(g2, 0) : "(error)");
      bad++;
    }
    free(t);
    sl_graph_free(g);
    sl_graph_free(g2);
  }
  assert_int_equal(bad, 0);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_random_roundtrip),
    cmocka_unit_test(test_statement_order),
    cmocka_unit_test(test_bom_name_roundtrip),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
