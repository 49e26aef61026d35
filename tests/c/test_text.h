/*
** test_text.h: the canonical notation of a graph as a malloc'd string, for
** the cmocka suites (include after cmocka.h).
*/
#ifndef SL_TEST_TEXT_H
#define SL_TEST_TEXT_H

#include <stdlib.h>
#include <string.h>
#include "notation.h"

static char *canonical(const sl_graph *g) {
  sl_buf b;
  sl_buf_init(&b);
  sl_graph_write(g, &b);
  assert_false(b.failed);
  char *s = strdup(b.data ? b.data : "");
  sl_buf_free(&b);
  assert_non_null(s);
  return s;
}

#endif
