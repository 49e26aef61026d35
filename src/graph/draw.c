/*
** draw.c: pictures of a graph through the Graphviz library (libgvc).
*/
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <gvc.h>
#include "notation.h"

#define SL_DRAW_MAX_NODES 5000   /* beyond this a drawing is unreadable */

static char gv_message[256];     /* Graphviz reports errors through a callback */

/* One Graphviz context for the whole process: its text-layout plugin caches
** fonts across contexts, and a second context would read freed memory. */
static GVC_t *context(void) {
  static GVC_t *gvc;
  if (!gvc) gvc = gvContext();
  return gvc;
}

static int capture(char *msg) {
  size_t n = strlen(gv_message);
  if (n < sizeof gv_message - 1)
    snprintf(gv_message + n, sizeof gv_message - n, "%s", msg);
  return 0;
}

/* The Graphviz output format for a path's extension, or NULL. */
static const char *format_of(const char *path) {
  const char *dot = strrchr(path, '.');
  if (!dot) return NULL;
  if (strcmp(dot, ".svg") == 0) return "svg";
  if (strcmp(dot, ".png") == 0) return "png";
  if (strcmp(dot, ".pdf") == 0) return "pdf";
  return NULL;
}

int sl_graph_draw(const sl_graph *g, const char *path, sl_error *e) {
  const char *fmt = format_of(path);
  if (!fmt)
    return sl_error_set(e, SL_EARG, 0, 0,
                        "cannot tell the picture format of '%s': end the name in .svg, .png or .pdf", path);
  if (sl_graph_nnodes(g) > SL_DRAW_MAX_NODES)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu nodes are too many to draw (limit %d); use g:dot()",
                        sl_graph_nnodes(g), SL_DRAW_MAX_NODES);
  sl_buf dot;
  sl_buf_init(&dot);
  sl_graph_dot(g, &dot);
  if (dot.failed) { sl_buf_free(&dot); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  gv_message[0] = '\0';
  agseterr(AGERR);
  agseterrf(capture);
  int rc = SL_OK;
  GVC_t *gvc = context();
  Agraph_t *ag = gvc ? agmemread(dot.data) : NULL;
  if (!ag) rc = sl_error_set(e, SL_EARG, 0, 0, "Graphviz could not read the graph: %s", gv_message);
  else if (gvLayout(gvc, ag, "dot") != 0)
    rc = sl_error_set(e, SL_EARG, 0, 0, "Graphviz layout failed: %s", gv_message);
  else {
    /* open the file ourselves: Graphviz reports a failed open only through
    ** its message callback and still returns success */
    FILE *out = fopen(path, "wb");
    if (!out)
      rc = sl_error_set(e, SL_EIO, 0, 0, "cannot write '%s': %s", path, strerror(errno));
    else {
      int bad = gvRender(gvc, ag, fmt, out) != 0;
      bad |= fclose(out) != 0;
      if (bad)
        rc = sl_error_set(e, SL_EIO, 0, 0, "cannot write '%s': %s", path,
                          gv_message[0] ? gv_message : "Graphviz could not render it");
    }
    gvFreeLayout(gvc, ag);
  }
  if (ag) agclose(ag);
  agseterrf(NULL);
  sl_buf_free(&dot);
  return rc;
}
