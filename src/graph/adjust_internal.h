/*
** adjust_internal.h: helpers shared by adjust.c, adjust_list.c and
** adjust_cut.c.
*/
#ifndef SL_ADJUST_INTERNAL_H
#define SL_ADJUST_INTERNAL_H

#include "adjust.h"

void sl_adj_walk(const sl_graph *g, const int32_t *src, size_t ns, int down,
                 const unsigned char *skip, const unsigned char *no_leave,
                 unsigned char *mark, int32_t *queue);
int sl_adj_reason(sl_reasons *rs, int kind, int32_t node, int32_t via,
                  const int32_t *path, const unsigned char *steps, size_t npath);
size_t sl_adj_directed_path(const sl_graph *g, const unsigned char *from, int32_t t,
                            const unsigned char *allowed, int32_t *path);
int sl_adj_leaks(const sl_effect *q, const int32_t *z, size_t nz, sl_mark drop_out,
                 sl_mark cut, int *separated, sl_reasons *rs, size_t max_open,
                 sl_error *e);

/* The augmented (moral) proper back-door graph on An(X, Y, I): undirected,
** local ids, CSR adjacency. */
typedef struct sl_moral {
  size_t n;
  int32_t *node;        /* local id -> graph id */
  int32_t *local;       /* graph id -> local id or -1 */
  uint32_t *off;
  int32_t *adj;
} sl_moral;

int sl_moral_build(sl_moral *m, const sl_effect *q, sl_mark require, sl_error *e);
void sl_moral_free(sl_moral *m);

#endif
