/*
** notation.h: the sluice graph notation (see docs/notation.md) and the
** textual and pictorial forms of a graph.
*/
#ifndef SL_NOTATION_H
#define SL_NOTATION_H

#include <stddef.h>
#include <stdint.h>
#include "graph.h"

/* Decode the UTF-8 sequence at s (left bytes available) into *cp: its
** length, or 0 when it is not valid UTF-8. */
size_t sl_utf8_decode(const char *s, size_t left, uint32_t *cp);

/* The name of a character that prints as nothing or as a blank (U+200B
** "zero-width space", U+00A0 "no-break space", ...), or NULL.  Such a
** character may not appear in a bare name. */
const char *sl_invisible_name(uint32_t cp);

/* The first such character in s[0..len), or 0 when there is none. */
uint32_t sl_invisible_in(const char *s, size_t len);

/* Growable byte buffer used for every text a graph is turned into. */
typedef struct sl_buf {
  char *data;
  size_t len, cap;
  int failed;           /* set when an allocation failed */
} sl_buf;

void sl_buf_init(sl_buf *b);
void sl_buf_free(sl_buf *b);
void sl_buf_add(sl_buf *b, const char *s, size_t n);
void sl_buf_adds(sl_buf *b, const char *s);
void sl_buf_addf(sl_buf *b, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 2, 3)))
#endif
  ;

/* Parse text into the builder (adds to what it holds).  Errors carry line
** and column.  Does not finish the builder. */
int sl_notation_parse(sl_builder *b, const char *text, size_t len, sl_error *e);

/* Parse a complete graph. NULL on error. */
sl_graph *sl_graph_parse(const char *text, size_t len, sl_error *e);

/* Read and parse a file; errors name the file. NULL on error. */
sl_graph *sl_graph_read(const char *path, sl_error *e);

/* What a removal text names: nodes (a name alone) and edges. */
typedef struct sl_removal {
  unsigned char *drop_node;   /* nnodes of the graph */
  sl_edge *edges;
  size_t nedges;
} sl_removal;

/* Parse a removal text against g ("a", "a -> b", "a <-> b"); every name and
** edge must exist in g.  Free with sl_removal_free. */
int sl_removal_parse(const sl_graph *g, const char *text, size_t len,
                     sl_removal *r, sl_error *e);
void sl_removal_free(sl_removal *r);

/* Canonical notation: parses back to an equal graph. */
void sl_graph_write(const sl_graph *g, sl_buf *out);
/* A name as the notation writes it: quoted when needed, and inside quotes
** '"' and '\\' escaped with a backslash, control and invisible characters
** as \u{XXXX}, so that the text parses back to the same name. */
void sl_name_write(const char *name, sl_buf *out);
/* DOT text. */
void sl_graph_dot(const sl_graph *g, sl_buf *out);
/* A text view for a terminal: one line per node in topological order. */
void sl_graph_show(const sl_graph *g, sl_buf *out);

/* Lay out with Graphviz and render to path; the format follows the
** extension (.svg, .png, .pdf). */
int sl_graph_draw(const sl_graph *g, const char *path, sl_error *e);

#endif
