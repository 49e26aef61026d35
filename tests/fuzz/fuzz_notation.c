/*
** fuzz_notation.c: libFuzzer target for the graph notation parser.
**
** Every input is parsed.  A graph that parses is written as canonical
** text, which must parse again to an equal graph and write the very same
** bytes; its terminal view and DOT text are made too, so the sanitizers
** see them.  A text that fails must leave a one-line message with a sane
** position, and the formatted error (with its caret line) is made and
** holds no control character.  The canonical text shows every invisible
** character as an escape.  Any broken promise calls abort(), which
** libFuzzer reports as a crash.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "notation.h"

static void check(int ok, const char *what) {
  if (!ok) {
    fprintf(stderr, "fuzz_notation: %s\n", what);
    abort();
  }
}

/* A finished error record: a known code, a message of one line. */
static void check_error(const sl_error *e, const char *src, size_t len) {
  check(e->code > SL_OK && e->code <= SL_ELIMIT, "error code out of range");
  check(memchr(e->msg, '\0', sizeof e->msg) != NULL, "message not terminated");
  check(strchr(e->msg, '\n') == NULL, "message spans lines");
  check(e->line >= 0 && e->col >= 0, "negative position");
  if (e->code == SL_ESYNTAX) check(e->line >= 1 && e->col >= 1, "syntax error without a position");
  char buf[1024];
  sl_error_format(e, src, len, buf, sizeof buf);
  check(memchr(buf, '\0', sizeof buf) != NULL, "formatted error not terminated");
  for (const char *p = buf; *p; p++)   /* the echo hides what a terminal would obey */
    check((unsigned char)*p >= 0x20 || *p == '\n' || *p == '\t', "control character in a formatted error");
  char small[16];
  sl_error_format(e, src, len, small, sizeof small);
  check(memchr(small, '\0', sizeof small) != NULL, "small formatted error not terminated");
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size) {
  const char *text = (const char *)data;
  sl_error e;
  memset(&e, 0, sizeof e);
  sl_graph *g = sl_graph_parse(text, size, &e);
  if (!g) {
    check_error(&e, text, size);
    return 0;
  }

  sl_buf t1, t2, view, dot;
  sl_buf_init(&t1); sl_buf_init(&t2); sl_buf_init(&view); sl_buf_init(&dot);
  sl_graph_write(g, &t1);
  check(!t1.failed, "write failed");
  sl_graph *h = sl_graph_parse(t1.data ? t1.data : "", t1.len, &e);
  if (!h) {
    fprintf(stderr, "canonical text does not parse: %d:%d %s\n", e.line, e.col, e.msg);
    abort();
  }
  check(sl_graph_equal(g, h), "canonical text parses to a different graph");
  check(sl_invisible_in(t1.data ? t1.data : "", t1.len) == 0,
        "canonical text holds an invisible character unescaped");
  check(sl_graph_equal(h, g), "sl_graph_equal is not symmetric");
  sl_graph_write(h, &t2);
  check(t1.len == t2.len && (t1.len == 0 || memcmp(t1.data, t2.data, t1.len) == 0),
        "canonical text is not stable");

  /* the order is a topological order of all nodes */
  size_t n = sl_graph_nnodes(g);
  int32_t *order = malloc((n ? n : 1) * sizeof *order);
  int32_t *pos = malloc((n ? n : 1) * sizeof *pos);
  check(order && pos, "out of memory");
  for (size_t v = 0; v < n; v++) pos[v] = -1;
  sl_graph_order(g, order);
  for (size_t i = 0; i < n; i++) {
    check(order[i] >= 0 && (size_t)order[i] < n && pos[order[i]] < 0, "order is not a permutation");
    pos[order[i]] = (int32_t)i;
  }
  for (size_t v = 0; v < n; v++) {
    size_t k;
    const int32_t *c = sl_graph_children(g, (int32_t)v, &k);
    for (size_t i = 0; i < k; i++) check(pos[v] < pos[c[i]], "order puts a child first");
  }
  free(order);
  free(pos);

  sl_graph_show(g, &view);
  check(!view.failed, "show failed");
  sl_graph_dot(g, &dot);
  check(!dot.failed && dot.len > 0, "dot failed");

  sl_buf_free(&t1); sl_buf_free(&t2); sl_buf_free(&view); sl_buf_free(&dot);
  sl_graph_free(h);
  sl_graph_free(g);
  return 0;
}
