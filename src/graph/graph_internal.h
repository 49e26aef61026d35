/*
** graph_internal.h: the layout of a finished graph, shared by the files
** of src/graph only.
*/
#ifndef SL_GRAPH_INTERNAL_H
#define SL_GRAPH_INTERNAL_H

#include "graph.h"

/* Node names live in one arena; a hash table maps a name to its id. */
typedef struct sl_names {
  char *arena;
  size_t arena_len, arena_cap;
  uint32_t *off;          /* start of each name in the arena */
  uint32_t *len;          /* its length in bytes */
  size_t n, cap;
  struct sl_slot { int32_t id; uint32_t hash; } *slot;  /* id -1: empty */
  size_t nslot;           /* a power of two */
} sl_names;

int sl_names_init(sl_names *t);
void sl_names_free(sl_names *t);
int32_t sl_names_find(const sl_names *t, const char *s, size_t len);
/* Id of s, adding it when new; -1 when out of memory or over a limit. */
int32_t sl_names_intern(sl_names *t, const char *s, size_t len);
static inline const char *sl_names_get(const sl_names *t, int32_t v) {
  return t->arena + t->off[v];
}

/* Compressed adjacency: the neighbours of v are adj[off[v] .. off[v+1]). */
typedef struct sl_csr {
  uint32_t *off;
  int32_t *adj;
} sl_csr;

struct sl_graph {
  size_t n, nd, nb;
  sl_names names;
  unsigned char *hidden;
  int32_t *rank, *by_rank;   /* name order */
  sl_csr pa, ch, sb;         /* parents, children, <-> siblings */
};

#endif
