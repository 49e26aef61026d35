/*
** test_notation.c: the graph notation parser (src/graph/notation.c), its
** error records and their formatting (error.c), reading a file, and the
** removal texts used by g:without.
**
** Expected canonical texts follow the form written by sl_graph_write as the
** graph notation section of DESIGN.md describes it and the canonical layout
** of write.c states it: a "hidden a, b" line first, then one "x -> c1, c2"
** line per node with children in bytewise name order, then "a <-> b" lines,
** then isolated observed nodes, one per line; a name is quoted when it is
** not made of [A-Za-z0-9_.] and UTF-8 bytes, or when it is "hidden".  Each
** expected text below was worked out by hand from those rules, not copied
** from the program's output.  Error positions were counted by hand: lines
** and columns are 1-based and a column counts UTF-8 characters.
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sys/stat.h>

#include "notation.h"
#include "test_text.h"

/* ---- helpers ---- */

/* Print s with C escapes, so that failures show invisible bytes. */
static void show_bytes(const char *label, const char *s, size_t n) {
  char out[2048];
  size_t k = 0;
  for (size_t i = 0; i < n && k + 8 < sizeof out; i++) {
    unsigned char c = (unsigned char)s[i];
    if (c == '\n') { out[k++] = '\\'; out[k++] = 'n'; }
    else if (c == '"' || c == '\\') { out[k++] = '\\'; out[k++] = (char)c; }
    else if (c < 0x20 || c >= 0x7f) k += (size_t)snprintf(out + k, sizeof out - k, "\\x%02x", c);
    else out[k++] = (char)c;
  }
  out[k] = '\0';
  print_error("  %s \"%s\"\n", label, out);
}

/* The canonical text of g as a NUL-terminated string (caller frees). */
/* Parse or fail the test, showing the error. */
static sl_graph *parse_ok(const char *text) {
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, strlen(text), &e);
  if (!g) {
    show_bytes("input", text, strlen(text));
    print_error("  error %d at %d:%d: %s\n", e.code, e.line, e.col, e.msg);
  }
  assert_non_null(g);
  return g;
}

/* ---- valid inputs and their canonical text ---- */

typedef struct valid_case {
  const char *in;
  size_t len;          /* 0: strlen(in) */
  const char *out;     /* expected canonical text */
} valid_case;

static const valid_case valid_cases[] = {
  /* an empty text is an empty graph, and so is one with only blanks,
  ** comments and statement ends */
  {"", 0, ""},
  {"  \t\n# only a comment\n;;\n\n", 0, ""},
  {"\xEF\xBB\xBF", 0, ""},
  /* a single arrow, written both ways */
  {"teacher -> pupil", 0, "teacher -> pupil\n"},
  {"pupil <- teacher", 0, "teacher -> pupil\n"},
  /* <-> is written with the smaller name first */
  {"lathe <-> drill", 0, "drill <-> lathe\n"},
  {"drill <-> lathe", 0, "drill <-> lathe\n"},
  /* chains: each arrow joins its neighbours */
  {"a -> b -> c", 0, "a -> b\nb -> c\n"},
  {"a -> b <- c", 0, "a -> b\nc -> b\n"},
  {"a <-> b -> c <- d", 0, "b -> c\nd -> c\na <-> b\n"},
  /* comma lists on both sides: every left node to every right node */
  {"a, b -> c, d", 0, "a -> c, d\nb -> c, d\n"},
  {"a, b -> c -> d, e", 0, "a -> c\nb -> c\nc -> d, e\n"},
  {"c, d <- a, b", 0, "a -> c, d\nb -> c, d\n"},
  {"x <-> y, z", 0, "x <-> y, z\n"},
  /* children are listed in name order whatever the input order */
  {"m -> z; m -> b; m -> q", 0, "m -> b, q, z\n"},
  /* hidden declarations: sorted, on one line, first */
  {"hidden mood\nmood -> attention, grade", 0, "hidden mood\nmood -> attention, grade\n"},
  {"hidden v, u", 0, "hidden u, v\n"},
  {"hidden u; hidden u", 0, "hidden u\n"},
  {"hidden q", 0, "hidden q\n"},
  {"hidden u, v; u, v -> a", 0, "hidden u, v\nu -> a\nv -> a\n"},
  /* isolated nodes come last, in name order */
  {"x", 0, "x\n"},
  {"z; y; x", 0, "x\ny\nz\n"},
  {"c, b, a", 0, "a\nb\nc\n"},       /* a name list alone declares each */
  {"x\na -> b", 0, "a -> b\nx\n"},
  /* a node on a <-> edge is not isolated; a hidden isolated node appears
  ** only in the hidden line */
  {"hidden h\nx\nb <-> a\nh -> a\nhidden k", 0, "hidden h, k\nh -> a\na <-> b\nx\n"},
  {"c -> a; b -> a; a <-> d; b <-> c; e", 0,
   "b -> a\nc -> a\na <-> d\nb <-> c\ne\n"},
  /* a node may have both kinds of edge to another */
  {"a -> b; a <-> b", 0, "a -> b\na <-> b\n"},
  /* bytewise order: capitals before small letters, digits before both */
  {"b -> A; a -> B; 9 -> a", 0, "9 -> a\na -> B\nb -> A\n"},
  /* bare names: letters, digits, '_', '.', UTF-8 */
  {"x_1.5 -> 2nd", 0, "x_1.5 -> 2nd\n"},
  {"Größe -> Gewicht", 0, "Größe -> Gewicht\n"},
  {"\xF0\x9F\x8D\x8E -> pear", 0, "\xF0\x9F\x8D\x8E -> pear\n"},
  /* quoted names: quotes dropped when not needed, kept when needed */
  {"\"x\" -> \"y\"", 0, "x -> y\n"},
  {"\"leaf N\" -> y", 0, "\"leaf N\" -> y\n"},
  {"\"a b\", \"c#d\", \"e;f\", \"g,h\" -> z", 0,
   "\"a b\" -> z\n\"c#d\" -> z\n\"e;f\" -> z\n\"g,h\" -> z\n"},
  {"\"x-y\" <-> \"x->y\"", 0, "\"x->y\" <-> \"x-y\"\n"},
  {"\"día libre\" -> ánimo", 0, "\"día libre\" -> ánimo\n"},
  /* escapes \" and \\ decode, and are written back */
  {"\"say \\\"hi\\\"\" -> \"back\\\\slash\"", 0,
   "\"say \\\"hi\\\"\" -> \"back\\\\slash\"\n"},
  {"\"\\\\\"", 0, "\"\\\\\"\n"},
  /* "hidden" quoted is an ordinary name, and is quoted when written */
  {"\"hidden\" -> a", 0, "\"hidden\" -> a\n"},
  {"hidden \"hidden\"", 0, "hidden \"hidden\"\n"},
  /* a name that merely starts with the keyword is bare */
  {"hiddenness -> a", 0, "hiddenness -> a\n"},
  /* comments, with and without a blank before the '#' */
  {"# header\na -> b # why\n# end", 0, "a -> b\n"},
  {"a -> b#c", 0, "a -> b\n"},
  {"\"x#y\" -> z # c", 0, "\"x#y\" -> z\n"},
  /* ';' and newlines end statements */
  {"a -> b; b -> c;;", 0, "a -> b\nb -> c\n"},
  {"a -> b\n\n\nb -> c\n", 0, "a -> b\nb -> c\n"},
  /* CRLF line ends and other blanks */
  {"a -> b\r\nc\r\n", 0, "a -> b\nc\n"},
  {"a\t->\fb\v", 0, "a -> b\n"},
  /* no blanks needed around arrows */
  {"a->b<->c", 0, "a -> b\nb <-> c\n"},
  {"a<-b", 0, "b -> a\n"},
  /* a byte-order mark at the very start is skipped */
  {"\xEF\xBB\xBF" "a -> b", 0, "a -> b\n"},
  /* repeated edges are kept once */
  {"a -> b; a -> b; a, a -> b, b", 0, "a -> b\n"},
  {"a <-> b; b <-> a", 0, "a <-> b\n"},
  {"b <- a\na -> b", 0, "a -> b\n"},
  /* DEL is allowed inside quotes, forces quoting, and is written as an
  ** escape so that it shows */
  {"\"a\x7f\" -> b", 0, "\"a\\u{007F}\" -> b\n"},
  /* quoted names may hold invisible characters; the canonical text writes
  ** each as \u{XXXX} (four hex digits at least, capitals), so that two
  ** names differing by one do not print the same.  UTF-8 bytes of the code
  ** points from the Unicode code charts (from memory): U+200B E2 80 8B,
  ** U+00A0 C2 A0, U+FEFF EF BB BF, U+202E E2 80 AE, U+E0001 F3 A0 80 81 */
  {"\"a\xE2\x80\x8B\" -> a", 0, "\"a\\u{200B}\" -> a\n"},
  {"\"no\xC2\xA0" "break\"", 0, "\"no\\u{00A0}break\"\n"},
  {"\"\xEF\xBB\xBF" "x\"", 0, "\"\\u{FEFF}x\"\n"},
  {"\"x\xE2\x80\xAE" "y\" <-> z", 0, "\"x\\u{202E}y\" <-> z\n"},
  {"\"e\xF3\xA0\x80\x81\"", 0, "\"e\\u{E0001}\"\n"},
  /* \u{hex} escapes read back: small letters too, 1 to 6 digits; a name
  ** that needs no quotes once decoded is written bare */
  {"\"a\\u{200b}\" -> a", 0, "\"a\\u{200B}\" -> a\n"},
  {"\"\\u{41}\\u{e9}\\u{01F34E}\" -> b", 0, "A\xC3\xA9\xF0\x9F\x8D\x8E -> b\n"},
  {"\"\\u{22}\\u{5C}\"", 0, "\"\\\"\\\\\"\n"},        /* '"' and '\\' */
  /* a variation selector is not refused: an emoji name needs it */
  {"\xE2\x9D\xA4\xEF\xB8\x8F -> b", 0, "\xE2\x9D\xA4\xEF\xB8\x8F -> b\n"},
  /* an explicit length stops the parser before a NUL */
  {"a -> b\0garbage", 6, "a -> b\n"},
};

/* Each valid input parses, and its canonical text is the expected one. */
static void test_valid_table(void **state) {
  (void)state;
  int bad = 0;
  for (size_t i = 0; i < sizeof valid_cases / sizeof *valid_cases; i++) {
    const valid_case *c = &valid_cases[i];
    size_t len = c->len ? c->len : strlen(c->in);
    sl_error e;
    memset(&e, 0, sizeof e);
    sl_graph *g = sl_graph_parse(c->in, len, &e);
    if (!g) {
      print_error("valid case %zu failed to parse: %d at %d:%d: %s\n", i, e.code,
                  e.line, e.col, e.msg);
      show_bytes("input", c->in, len);
      bad++;
      continue;
    }
    char *got = canonical(g);
    if (strcmp(got, c->out) != 0) {
      print_error("valid case %zu: wrong canonical text\n", i);
      show_bytes("input   ", c->in, len);
      show_bytes("expected", c->out, strlen(c->out));
      show_bytes("got     ", got, strlen(got));
      bad++;
    }
    free(got);
    sl_graph_free(g);
  }
  assert_int_equal(bad, 0);
}

/* The counts behind a few canonical texts, counted by hand. */
static void test_counts(void **state) {
  (void)state;
  sl_graph *g = parse_ok("hidden u\nu -> a, b; a -> b; a <-> c; b <-> a; d");
  assert_int_equal(sl_graph_nnodes(g), 5);        /* u a b c d */
  assert_int_equal(sl_graph_ndirected(g), 3);     /* u->a u->b a->b */
  assert_int_equal(sl_graph_nbidirected(g), 2);   /* a<->c a<->b */
  int32_t u = sl_graph_find(g, "u", 1), d = sl_graph_find(g, "d", 1);
  assert_true(u >= 0 && d >= 0);
  assert_true(sl_graph_is_hidden(g, u));
  assert_false(sl_graph_is_hidden(g, d));
  assert_string_equal(sl_graph_name(g, u), "u");
  sl_graph_free(g);

  /* decoded quoted names are stored without quotes or escapes */
  g = parse_ok("\"say \\\"hi\\\"\" -> \"back\\\\slash\"");
  assert_true(sl_graph_find(g, "say \"hi\"", 8) >= 0);
  assert_true(sl_graph_find(g, "back\\slash", 10) >= 0);
  assert_int_equal(sl_graph_nnodes(g), 2);
  sl_graph_free(g);
}

/* sl_notation_parse adds to what a builder holds. */
static void test_parse_into_builder(void **state) {
  (void)state;
  sl_builder *b = sl_builder_alloc();
  sl_error e;
  memset(&e, 0, sizeof e);
  assert_int_equal(sl_notation_parse(b, "a -> b", 6, &e), SL_OK);
  assert_int_equal(sl_notation_parse(b, "hidden c; c -> a", 16, &e), SL_OK);
  assert_int_equal(sl_builder_nnodes(b), 3);
  sl_graph *g = sl_builder_finish(b, &e);
  assert_non_null(g);
  char *t = canonical(g);
  assert_string_equal(t, "hidden c\na -> b\nc -> a\n");
  free(t);
  sl_graph_free(g);
  sl_builder_free(b);
}

/* A name of exactly SL_MAX_NAME bytes is accepted; one byte more is not. */
static void test_name_length_limit(void **state) {
  (void)state;
  size_t n = SL_MAX_NAME;
  char *s = malloc(n + 8);
  assert_non_null(s);
  memset(s, 'w', n);
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(s, n, &e);
  assert_non_null(g);
  assert_int_equal(strlen(sl_graph_name(g, 0)), n);
  sl_graph_free(g);

  s[n] = 'w';                        /* bare, one too long */
  g = sl_graph_parse(s, n + 1, &e);
  assert_null(g);
  assert_int_equal(e.code, SL_ESYNTAX);
  assert_int_equal(e.line, 1);
  assert_int_equal(e.col, 1);
  assert_non_null(strstr(e.msg, "too long"));

  char *q = malloc(n + 8);           /* quoted, one too long */
  assert_non_null(q);
  q[0] = '"';
  memset(q + 1, 'w', n + 1);
  q[n + 2] = '"';
  g = sl_graph_parse(q, n + 3, &e);
  assert_null(g);
  assert_int_equal(e.code, SL_ESYNTAX);
  assert_int_equal(e.col, 1);
  assert_non_null(strstr(e.msg, "too long"));
  free(q);
  free(s);
}

/* ---- invalid inputs ---- */

typedef struct invalid_case {
  const char *in;
  size_t len;          /* 0: strlen(in) */
  int code, line, col;
  const char *msg;     /* a substring of the message */
} invalid_case;

static const invalid_case invalid_cases[] = {
  /* an arrow with no node before it */
  {"-> b", 0, SL_ESYNTAX, 1, 1, "an arrow needs a node name before it"},
  {"a -> b\n<-> c", 0, SL_ESYNTAX, 2, 1, "an arrow needs a node name before it"},
  /* ... or after it: found the end of the text or of the statement */
  {"a ->", 0, SL_ESYNTAX, 1, 5, "expected a node name after '->', found end of text"},
  {"a <-\n", 0, SL_ESYNTAX, 1, 5, "expected a node name after '<-', found end of statement"},
  {"a <-> ;", 0, SL_ESYNTAX, 1, 7, "expected a node name after '<->', found end of statement"},
  {"a -> # nothing", 0, SL_ESYNTAX, 1, 15, "after '->', found end of text"},
  {"a -> -> b", 0, SL_ESYNTAX, 1, 6, "expected a node name after '->', found '->'"},
  /* dangling commas */
  {"a, -> b", 0, SL_ESYNTAX, 1, 4, "expected a node name after ',', found '->'"},
  {"a -> b,", 0, SL_ESYNTAX, 1, 8, "expected a node name after ',', found end of text"},
  {", a", 0, SL_ESYNTAX, 1, 1, "expected a node name before ','"},
  {"hidden a, , b", 0, SL_ESYNTAX, 1, 11, "expected a node name after ',', found ','"},
  /* unterminated quotes: the position is that of the opening quote */
  {"\"abc -> d", 0, SL_ESYNTAX, 1, 1, "unterminated quoted name"},
  {"a -> \"x\ny\"", 0, SL_ESYNTAX, 1, 6, "unterminated quoted name"},
  {"a -> \"x\r\n", 0, SL_ESYNTAX, 1, 6, "unterminated quoted name"},
  /* unknown escapes: the position is that of the backslash */
  {"\"a\\n\" -> b", 0, SL_ESYNTAX, 1, 3, "unknown escape"},
  {"x -> \"tab\\t\"", 0, SL_ESYNTAX, 1, 10, "only \\\", \\\\ and \\u{hex} are allowed"},
  /* bad \u escapes: no braces, no digits, too many, not hex, a control
  ** character, a surrogate, past U+10FFFF, unterminated */
  {"\"a\\u200B\"", 0, SL_ESYNTAX, 1, 3, "\\u{...} takes 1 to 6 hex digits"},
  {"\"a\\u{}\"", 0, SL_ESYNTAX, 1, 3, "\\u{...} takes 1 to 6 hex digits"},
  {"\"a\\u{1234567}\"", 0, SL_ESYNTAX, 1, 3, "\\u{...}"},
  {"\"a\\u{12g}\"", 0, SL_ESYNTAX, 1, 3, "\\u{...}"},
  {"\"a\\u{A}\"", 0, SL_ESYNTAX, 1, 3, "not a control character"},
  {"\"a\\u{D800}\"", 0, SL_ESYNTAX, 1, 3, "or a surrogate"},
  {"\"a\\u{110000}\"", 0, SL_ESYNTAX, 1, 3, "\\u{...}"},
  {"x -> \"a\\u{12\"", 0, SL_ESYNTAX, 1, 8, "\\u{...}"},
  /* invisible characters in bare names: refused at the character, named
  ** by code point (names from the Unicode code charts, from memory) */
  {"a\xE2\x80\x8B -> b", 0, SL_ESYNTAX, 1, 2,
   "invisible character U+200B (zero-width space) in a name; quote the name if you mean it"},
  {"x -> no\xC2\xA0" "break", 0, SL_ESYNTAX, 1, 8, "U+00A0 (no-break space)"},
  {"soft\xC2\xAD" "ware", 0, SL_ESYNTAX, 1, 5, "U+00AD (soft hyphen)"},
  {"a\xE2\x80\x8C" "b", 0, SL_ESYNTAX, 1, 2, "U+200C (zero-width non-joiner)"},
  {"a\xE2\x80\x8D" "b", 0, SL_ESYNTAX, 1, 2, "U+200D (zero-width joiner)"},
  {"\xE2\x80\x8E" "a -> b", 0, SL_ESYNTAX, 1, 1, "U+200E (left-to-right mark)"},
  {"a -> b\xE2\x80\x8F", 0, SL_ESYNTAX, 1, 7, "U+200F (right-to-left mark)"},
  {"x\xE2\x80\xAA" "y", 0, SL_ESYNTAX, 1, 2, "U+202A (left-to-right embedding)"},
  {"x\xE2\x80\xAE" "y", 0, SL_ESYNTAX, 1, 2, "U+202E (right-to-left override)"},
  {"x\xE2\x81\xA6" "y", 0, SL_ESYNTAX, 1, 2, "U+2066 (left-to-right isolate)"},
  {"x\xE2\x81\xA9" "y", 0, SL_ESYNTAX, 1, 2, "U+2069 (pop directional isolate)"},
  {"x\xE2\x81\xA0" "y", 0, SL_ESYNTAX, 1, 2, "U+2060 (word joiner)"},
  {"x\xE2\x80\x89" "y", 0, SL_ESYNTAX, 1, 2, "U+2009 (thin space)"},
  {"x\xE3\x80\x80" "y", 0, SL_ESYNTAX, 1, 2, "U+3000 (ideographic space)"},
  {"x\xC2\x85", 0, SL_ESYNTAX, 1, 2, "U+0085 (control character)"},
  {"e\xF3\xA0\x80\x81", 0, SL_ESYNTAX, 1, 2, "U+E0001 (tag character)"},
  /* a byte-order mark anywhere but at the very start */
  {"a -> b\n\xEF\xBB\xBF" "c -> d", 0, SL_ESYNTAX, 2, 1, "U+FEFF (byte-order mark)"},
  {"\xEF\xBB\xBF\xEF\xBB\xBF" "a", 0, SL_ESYNTAX, 1, 1, "U+FEFF (byte-order mark)"},
  {"a\xEF\xBB\xBF", 0, SL_ESYNTAX, 1, 2, "U+FEFF (byte-order mark)"},
  /* an empty quoted name */
  {"\"\" -> a", 0, SL_ESYNTAX, 1, 1, "empty quoted name"},
  {"a -> \"\"", 0, SL_ESYNTAX, 1, 6, "empty quoted name"},
  /* a mistyped keyword */
  {"hiden u", 0, SL_ESYNTAX, 1, 1, "unknown keyword; did you mean 'hidden'?"},
  {"a -> b\n  hiddn u, v", 0, SL_ESYNTAX, 2, 3, "did you mean 'hidden'?"},
  /* two names without an arrow */
  {"a b", 0, SL_ESYNTAX, 1, 3, "expected an arrow, ',' or the end of the statement, found a name"},
  {"a -> b c", 0, SL_ESYNTAX, 1, 8, "found a name"},
  {"\"a\" \"b\"", 0, SL_ESYNTAX, 1, 5, "found a name"},
  {"a -> b hidden c", 0, SL_ESYNTAX, 1, 8, "found 'hidden'"},
  /* arrows that do not exist */
  {"a => b", 0, SL_ESYNTAX, 1, 3, "unknown arrow: write '->', '<-' or '<->'"},
  {"a - b", 0, SL_ESYNTAX, 1, 3, "unknown arrow"},
  {"a -- b", 0, SL_ESYNTAX, 1, 3, "unknown arrow"},
  {"a > b", 0, SL_ESYNTAX, 1, 3, "unknown arrow"},
  {"a < b", 0, SL_ESYNTAX, 1, 3, "unknown arrow"},
  {"a <-- b", 0, SL_ESYNTAX, 1, 5, "unknown arrow"},
  {"a <->> b", 0, SL_ESYNTAX, 1, 6, "unknown arrow"},
  /* stray characters */
  {"a -> b $", 0, SL_ESYNTAX, 1, 8, "unexpected character '$' (quote names that hold it)"},
  {"a @ b", 0, SL_ESYNTAX, 1, 3, "unexpected character '@'"},
  {"a -> b\x01", 0, SL_ESYNTAX, 1, 7, "unexpected control character (byte 0x01)"},
  {"a\0b", 3, SL_ESYNTAX, 1, 2, "unexpected control character (byte 0x00)"},
  {"a -> b\x7f", 0, SL_ESYNTAX, 1, 7, "unexpected control character (byte 0x7f)"},
  {"\"a\tb\"", 0, SL_ESYNTAX, 1, 3, "control character in a quoted name"},
  /* the bare keyword used as a name */
  {"a -> hidden", 0, SL_ESYNTAX, 1, 6, "'hidden' is a keyword: quote it"},
  {"hidden a, hidden", 0, SL_ESYNTAX, 1, 11, "'hidden' is a keyword"},
  {"hidden -> a", 0, SL_ESYNTAX, 1, 8, "expected a node name after 'hidden', found '->'"},
  {"hidden", 0, SL_ESYNTAX, 1, 7, "expected a node name after 'hidden', found end of text"},
  /* self-loops: located at the arrow */
  {"a -> a", 0, SL_ESYNTAX, 1, 3, "self-loop: 'a' cannot cause itself"},
  {"x <- x", 0, SL_ESYNTAX, 1, 3, "self-loop: 'x' cannot cause itself"},
  {"a <-> a", 0, SL_ESYNTAX, 1, 3, "'a' cannot share a hidden cause with itself"},
  {"x, a -> b, a", 0, SL_ESYNTAX, 1, 6, "self-loop: 'a'"},
  {"p -> q\nq <-> q", 0, SL_ESYNTAX, 2, 3, "'q' cannot share a hidden cause with itself"},
  /* directed cycles: written from the smallest name, located at the
  ** latest-written edge of the cycle (the one that closed it) */
  {"a -> b -> c -> a", 0, SL_ECYCLE, 1, 13, "directed cycle: a -> b -> c -> a"},
  {"c -> a\na -> b\nb -> c", 0, SL_ECYCLE, 3, 3, "directed cycle: a -> b -> c -> a"},
  {"b -> c\nc -> a\na -> b", 0, SL_ECYCLE, 3, 3, "directed cycle: a -> b -> c -> a"},
  {"a -> b; c <- b; c -> a", 0, SL_ECYCLE, 1, 19, "directed cycle: a -> b -> c -> a"},
  {"b -> a; a -> c; c -> b", 0, SL_ECYCLE, 1, 19, "directed cycle: a -> c -> b -> a"},
  {"a <- b <- a", 0, SL_ECYCLE, 1, 8, "directed cycle: a -> b -> a"},
  {"  shift -> \n", 0, SL_ESYNTAX, 1, 12, "after '->'"},
  {"a -> b\nb -> a\na -> b", 0, SL_ECYCLE, 2, 3, "directed cycle: a -> b -> a"},
  {"\"x y\" -> z -> \"x y\"", 0, SL_ECYCLE, 1, 12, "directed cycle: \"x y\" -> z -> \"x y\""},
  {"press -> weld -> paint -> press", 0, SL_ECYCLE, 1, 24,
   "directed cycle: paint -> press -> weld -> paint"},
  {"a -> b; b <-> c; c -> a; b -> c", 0, SL_ECYCLE, 1, 28, "directed cycle: a -> b -> c -> a"},
  /* invalid UTF-8, bare and quoted */
  {"a -> b\xff", 0, SL_ESYNTAX, 1, 7, "invalid UTF-8 in a name"},
  {"\xff", 0, SL_ESYNTAX, 1, 1, "invalid UTF-8 in a name"},
  {"\xc0\xaf -> a", 0, SL_ESYNTAX, 1, 1, "invalid UTF-8"},        /* overlong '/' */
  {"\xed\xa0\x80", 0, SL_ESYNTAX, 1, 1, "invalid UTF-8"},          /* a surrogate */
  {"\xf4\x90\x80\x80", 0, SL_ESYNTAX, 1, 1, "invalid UTF-8"},      /* past U+10FFFF */
  {"a\xe2\x82", 0, SL_ESYNTAX, 1, 2, "invalid UTF-8 in a name"},   /* cut short */
  {"ab\x80", 0, SL_ESYNTAX, 1, 3, "invalid UTF-8 in a name"},      /* lone continuation */
  {"\"b\xc3(\" -> a", 0, SL_ESYNTAX, 1, 3, "invalid UTF-8 in a quoted name"},
  /* positions on later lines, after multi-byte characters, after CRLF,
  ** after a tab and after a byte-order mark */
  {"a -> b\n\nc -> $", 0, SL_ESYNTAX, 3, 6, "unexpected character '$'"},
  {"é, ü -> $", 0, SL_ESYNTAX, 1, 9, "unexpected character '$'"},
  {"\xF0\x9F\x8D\x8E -> $", 0, SL_ESYNTAX, 1, 6, "unexpected character '$'"},
  {"a -> b\r\nc -> $\r\n", 0, SL_ESYNTAX, 2, 6, "unexpected character '$'"},
  {"a\t-> $", 0, SL_ESYNTAX, 1, 6, "unexpected character '$'"},
  {"\xEF\xBB\xBF-> a", 0, SL_ESYNTAX, 1, 1, "an arrow needs a node name before it"},
  {"\"día\" -> \"x\\q\"", 0, SL_ESYNTAX, 1, 12, "unknown escape"},
};

/* Each invalid input fails with the expected code, position and message. */
static void test_invalid_table(void **state) {
  (void)state;
  int bad = 0;
  for (size_t i = 0; i < sizeof invalid_cases / sizeof *invalid_cases; i++) {
    const invalid_case *c = &invalid_cases[i];
    size_t len = c->len ? c->len : strlen(c->in);
    sl_error e;
    memset(&e, 0, sizeof e);
    sl_graph *g = sl_graph_parse(c->in, len, &e);
    if (g) {
      print_error("invalid case %zu parsed\n", i);
      show_bytes("input", c->in, len);
      sl_graph_free(g);
      bad++;
      continue;
    }
    if (e.code != c->code || e.line != c->line || e.col != c->col ||
        !strstr(e.msg, c->msg)) {
      print_error("invalid case %zu: expected %d at %d:%d \"%s\"\n"
                  "                  got %d at %d:%d \"%s\"\n",
                  i, c->code, c->line, c->col, c->msg, e.code, e.line, e.col, e.msg);
      show_bytes("input", c->in, len);
      bad++;
    }
  }
  assert_int_equal(bad, 0);
}

/* After "hidden u", an arrow is not allowed: the message must not claim
** that an arrow was expected while reporting that one was found (a user
** reading "expected an arrow ... found '->'" cannot tell what is wrong). */
static void test_hidden_then_arrow_message(void **state) {
  (void)state;
  const char *in = "hidden u -> x";
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(in, strlen(in), &e);
  assert_null(g);
  assert_int_equal(e.code, SL_ESYNTAX);
  assert_int_equal(e.line, 1);
  assert_int_equal(e.col, 10);                  /* the '->', counted by hand */
  int contradicts = strstr(e.msg, "expected an arrow") && strstr(e.msg, "found '->'");
  if (contradicts) print_error("message: %s\n", e.msg);
  assert_false(contradicts);
}

/* ---- error formatting ---- */

static void parse_fail(const char *in, size_t len, sl_error *e) {
  memset(e, 0, sizeof *e);
  sl_graph *g = sl_graph_parse(in, len, e);
  assert_null(g);
}

/* The formatted error names the position, echoes the line, and puts a
** caret under the column (expected texts built by hand). */
static void test_error_format(void **state) {
  (void)state;
  char buf[1024];
  sl_error e;

  const char *in = "a -> b\nc -> $";
  parse_fail(in, strlen(in), &e);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 2, column 6: unexpected character '$' (quote names that hold it)\n"
                      "  c -> $\n"
                      "       ^");

  /* two-byte and four-byte characters before the error take one column
  ** each, so the caret has one blank per character */
  in = "a -> b\nxé -> $";
  parse_fail(in, strlen(in), &e);
  assert_int_equal(e.col, 7);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 2, column 7: unexpected character '$' (quote names that hold it)\n"
                      "  xé -> $\n"
                      "        ^");
  in = "\xF0\x9F\x8D\x8E, Größe -> @";
  parse_fail(in, strlen(in), &e);
  assert_int_equal(e.col, 13);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 1, column 13: unexpected character '@' (quote names that hold it)\n"
                      "  \xF0\x9F\x8D\x8E, Größe -> @\n"
                      "              ^");

  /* an invisible character is echoed as '?', one column, so the caret
  ** points at it and the terminal shows where it is */
  in = "a -> b\xE2\x80\x8B";
  parse_fail(in, strlen(in), &e);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 1, column 7: invisible character U+200B (zero-width space) in a name; "
                      "quote the name if you mean it\n"
                      "  a -> b?\n"
                      "        ^");
  /* ... and so is a control character before the error */
  in = "\"a\x1b[2Jb\" -> $";
  parse_fail(in, strlen(in), &e);
  assert_int_equal(e.col, 3);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 1, column 3: control character in a quoted name\n"
                      "  \"a?[2Jb\" -> $\n"
                      "    ^");

  /* a tab is copied so the caret lines up under it */
  in = "a\t-> $";
  parse_fail(in, strlen(in), &e);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 1, column 6: unexpected character '$' (quote names that hold it)\n"
                      "  a\t-> $\n"
                      "   \t   ^");

  /* CRLF: the echoed line stops before the CR */
  in = "a -> b\r\n-> c\r\nd";
  parse_fail(in, strlen(in), &e);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 2, column 1: an arrow needs a node name before it\n"
                      "  -> c\n"
                      "  ^");

  /* an error at the end of the text: caret after the last character */
  in = "a ->";
  parse_fail(in, strlen(in), &e);
  assert_string_equal(sl_error_format(&e, in, strlen(in), buf, sizeof buf),
                      "line 1, column 5: expected a node name after '->', found end of text\n"
                      "  a ->\n"
                      "      ^");

  /* without the source there is no caret */
  assert_string_equal(sl_error_format(&e, NULL, 0, buf, sizeof buf),
                      "line 1, column 5: expected a node name after '->', found end of text");

  /* an error without a position is the message alone */
  sl_error np;
  sl_error_set(&np, SL_ENAME, 0, 0, "no node '%s'", "x");
  assert_string_equal(sl_error_format(&np, in, strlen(in), buf, sizeof buf), "no node 'x'");

  /* a very long line is not echoed */
  char longl[400];
  memset(longl, 'a', 300);
  memcpy(longl + 300, " $", 3);
  parse_fail(longl, strlen(longl), &e);
  assert_int_equal(e.col, 302);
  assert_string_equal(sl_error_format(&e, longl, strlen(longl), buf, sizeof buf),
                      "line 1, column 302: unexpected character '$' (quote names that hold it)");

  /* a small buffer is truncated and still terminated */
  char small[12];
  memset(small, 'Z', sizeof small);
  in = "a -> b\nc -> $";
  parse_fail(in, strlen(in), &e);
  sl_error_format(&e, in, strlen(in), small, sizeof small);
  assert_string_equal(small, "line 2, col");
  char tiny[1] = {'Z'};
  sl_error_format(&e, in, strlen(in), tiny, 0);      /* bufsize 0: untouched */
  assert_int_equal(tiny[0], 'Z');
  /* room for the message and part of the echo only */
  char mid[80];
  sl_error_format(&e, in, strlen(in), mid, sizeof mid);
  assert_true(strlen(mid) < sizeof mid);
  assert_memory_equal(mid, "line 2, column 6: unexpected", 28);
}

/* sl_error_set fills every field and returns the code. */
static void test_error_set(void **state) {
  (void)state;
  sl_error e;
  memset(&e, 0, sizeof e);
  assert_int_equal(sl_error_set(&e, SL_EARG, 3, 4, "bad %s %d", "value", 7), SL_EARG);
  assert_int_equal(e.code, SL_EARG);
  assert_int_equal(e.line, 3);
  assert_int_equal(e.col, 4);
  assert_string_equal(e.msg, "bad value 7");
  assert_int_equal(sl_error_set(NULL, SL_EIO, 0, 0, "x"), SL_EIO);
  char big[2 * SL_MSG_MAX];
  memset(big, 'm', sizeof big - 1);
  big[sizeof big - 1] = '\0';
  sl_error_set(&e, SL_EARG, 0, 0, "%s", big);
  assert_int_equal(strlen(e.msg), SL_MSG_MAX - 1);
}

/* ---- files ---- */

static void test_read_missing(void **state) {
  (void)state;
  const char *path = "/nonexistent-sluice-dir/factory.graph";
  sl_error e;
  memset(&e, 0, sizeof e);
  assert_null(sl_graph_read(path, &e));
  assert_int_equal(e.code, SL_EIO);
  assert_int_equal(e.line, 0);
  assert_non_null(strstr(e.msg, path));
  assert_non_null(strstr(e.msg, strerror(ENOENT)));
}

static char *temp_dir(void) {
  char tmpl[] = "/tmp/sluice-test-XXXXXX";
  char *d = mkdtemp(tmpl);
  assert_non_null(d);
  return strdup(d);
}

static void write_file(const char *path, const char *text, size_t len) {
  FILE *f = fopen(path, "wb");
  assert_non_null(f);
  assert_int_equal(fwrite(text, 1, len, f), len);
  assert_int_equal(fclose(f), 0);
}

static void test_read_file(void **state) {
  (void)state;
  char *dir = temp_dir();
  char path[512];
  sl_error e;
  memset(&e, 0, sizeof e);

  snprintf(path, sizeof path, "%s/line.graph", dir);
  const char *text = "\xEF\xBB\xBF# factory line\r\nhidden wear\r\nwear -> press; "
                     "\"die temp\" -> press -> paint\r\n";
  write_file(path, text, strlen(text));
  sl_graph *g = sl_graph_read(path, &e);
  assert_non_null(g);
  char *t = canonical(g);
  assert_string_equal(t, "hidden wear\n\"die temp\" -> press\npress -> paint\nwear -> press\n");
  free(t);
  sl_graph_free(g);

  /* an error in a file keeps its position */
  write_file(path, "a -> b\nb -> a\n", 14);
  assert_null(sl_graph_read(path, &e));
  assert_int_equal(e.code, SL_ECYCLE);
  assert_int_equal(e.line, 2);
  assert_int_equal(e.col, 3);
  assert_string_equal(e.msg, "directed cycle: a -> b -> a");

  /* an empty file is an empty graph */
  write_file(path, "", 0);
  g = sl_graph_read(path, &e);
  assert_non_null(g);
  assert_int_equal(sl_graph_nnodes(g), 0);
  sl_graph_free(g);

  /* a file bigger than one read chunk (64 KiB) */
  size_t big = 200000, k = 0;
  char *bt = malloc(big + 64);
  assert_non_null(bt);
  for (int i = 0; k < big; i++) k += (size_t)sprintf(bt + k, "n%d -> n%d\n", i, i + 1);
  write_file(path, bt, k);
  g = sl_graph_read(path, &e);
  assert_non_null(g);
  sl_graph *h = sl_graph_parse(bt, k, &e);
  assert_non_null(h);
  assert_true(sl_graph_equal(g, h));
  assert_true(sl_graph_nnodes(g) > 10000);
  sl_graph_free(g);
  sl_graph_free(h);
  free(bt);

  /* a directory cannot be read as a graph */
  assert_null(sl_graph_read(dir, &e));
  assert_int_equal(e.code, SL_EIO);
  assert_non_null(strstr(e.msg, dir));

  unlink(path);
  rmdir(dir);
  free(dir);
}

/* ---- removal texts ---- */

static sl_graph *classroom(void) {
  /* a classroom: sleep and breakfast feed attention; noise and attention
  ** share a hidden cause */
  return parse_ok("sleep -> attention -> grade\nbreakfast -> attention\n"
                  "noise <-> attention\nhidden mood\nmood -> grade\nseat");
}

static int32_t id(const sl_graph *g, const char *name) {
  int32_t v = sl_graph_find(g, name, strlen(name));
  assert_true(v >= 0);
  return v;
}

static void test_removal_parse(void **state) {
  (void)state;
  sl_graph *g = classroom();
  sl_removal r;
  sl_error e;
  memset(&e, 0, sizeof e);

  /* an unknown node, with a suggestion */
  assert_int_equal(sl_removal_parse(g, "sleeep", 6, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no node 'sleeep' in the graph; did you mean 'sleep'?");
  assert_null(r.drop_node);
  assert_null(r.edges);
  assert_int_equal(sl_removal_parse(g, "sleep -> grde", 13, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no node 'grde' in the graph; did you mean 'grade'?");
  /* an unknown node far from every name */
  assert_int_equal(sl_removal_parse(g, "xylophone", 9, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no node 'xylophone' in the graph");

  /* an edge that is not there, though both nodes are */
  assert_int_equal(sl_removal_parse(g, "sleep -> grade", 14, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no edge sleep -> grade in the graph");
  assert_int_equal(sl_removal_parse(g, "grade <- attention; attention -> sleep", 38, &r, &e),
                   SL_ENAME);
  assert_string_equal(e.msg, "no edge attention -> sleep in the graph");
  assert_int_equal(sl_removal_parse(g, "grade <-> sleep", 15, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no edge grade <-> sleep in the graph");
  /* a -> edge is not a <-> edge */
  assert_int_equal(sl_removal_parse(g, "sleep <-> attention", 19, &r, &e), SL_ENAME);
  assert_string_equal(e.msg, "no edge attention <-> sleep in the graph");

  /* a syntax error keeps its position */
  assert_int_equal(sl_removal_parse(g, "sleep ->", 8, &r, &e), SL_ESYNTAX);
  assert_int_equal(e.line, 1);
  assert_int_equal(e.col, 9);

  /* edges and nodes, either way round for <-> */
  const char *t = "noise <-> attention; sleep -> attention\nseat";
  assert_int_equal(sl_removal_parse(g, t, strlen(t), &r, &e), SL_OK);
  assert_int_equal(r.nedges, 2);
  /* edges in sl_graph_edges order of the removal text: directed first */
  assert_int_equal(r.edges[0].kind, SL_DIRECTED);
  assert_int_equal(r.edges[0].from, id(g, "sleep"));
  assert_int_equal(r.edges[0].to, id(g, "attention"));
  assert_int_equal(r.edges[1].kind, SL_BIDIRECTED);
  int32_t a = r.edges[1].from, b = r.edges[1].to;
  assert_true((a == id(g, "attention") && b == id(g, "noise")) ||
              (a == id(g, "noise") && b == id(g, "attention")));
  for (size_t v = 0; v < sl_graph_nnodes(g); v++)
    assert_int_equal(r.drop_node[v], (int32_t)v == id(g, "seat"));

  sl_graph *w = sl_graph_without(g, r.drop_node, r.edges, r.nedges, &e);
  assert_non_null(w);
  char *s = canonical(w);
  /* by hand: the classroom minus those two edges and seat; noise is now
  ** isolated */
  assert_string_equal(s, "hidden mood\nattention -> grade\nbreakfast -> attention\n"
                         "mood -> grade\nnoise\nsleep\n");
  free(s);
  sl_graph_free(w);
  sl_removal_free(&r);
  assert_null(r.drop_node);

  t = "attention <-> noise";
  assert_int_equal(sl_removal_parse(g, t, strlen(t), &r, &e), SL_OK);
  assert_int_equal(r.nedges, 1);
  sl_removal_free(&r);

  /* an empty removal text removes nothing */
  assert_int_equal(sl_removal_parse(g, "", 0, &r, &e), SL_OK);
  assert_int_equal(r.nedges, 0);
  for (size_t v = 0; v < sl_graph_nnodes(g); v++) assert_int_equal(r.drop_node[v], 0);
  sl_removal_free(&r);

  /* several nodes, one a hidden node named in a hidden declaration */
  t = "attention, grade; hidden mood";
  assert_int_equal(sl_removal_parse(g, t, strlen(t), &r, &e), SL_OK);
  w = sl_graph_without(g, r.drop_node, r.edges, r.nedges, &e);
  assert_non_null(w);
  s = canonical(w);
  assert_string_equal(s, "breakfast\nnoise\nseat\nsleep\n");
  free(s);
  sl_graph_free(w);
  sl_removal_free(&r);
  sl_graph_free(g);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_valid_table),
    cmocka_unit_test(test_counts),
    cmocka_unit_test(test_parse_into_builder),
    cmocka_unit_test(test_name_length_limit),
    cmocka_unit_test(test_invalid_table),
    cmocka_unit_test(test_hidden_then_arrow_message),
    cmocka_unit_test(test_error_format),
    cmocka_unit_test(test_error_set),
    cmocka_unit_test(test_read_missing),
    cmocka_unit_test(test_read_file),
    cmocka_unit_test(test_removal_parse),
  };
  return cmocka_run_group_tests(tests, NULL, NULL);
}
