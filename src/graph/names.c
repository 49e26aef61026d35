/*
** names.c: interned node names (an arena plus an open-addressing table).
*/
#include <stdlib.h>
#include <string.h>
#include "graph_internal.h"

/* FNV-1a, 64 bit. */
static uint64_t hash(const char *s, size_t len) {
  uint64_t h = 1469598103934665603ull;
  for (size_t i = 0; i < len; i++) { h ^= (unsigned char)s[i]; h *= 1099511628211ull; }
  return h;
}

int sl_names_init(sl_names *t) {
  memset(t, 0, sizeof *t);
  t->nslot = 64;
  t->slot = malloc(t->nslot * sizeof *t->slot);
  if (!t->slot) return -1;
  for (size_t i = 0; i < t->nslot; i++) t->slot[i].id = -1;
  return 0;
}

void sl_names_free(sl_names *t) {
  free(t->arena); free(t->off); free(t->len); free(t->slot);
  memset(t, 0, sizeof *t);
}

/* The slot holding s, or the empty slot where it would go.  The stored
** hash bits spare most comparisons of the names themselves. */
static size_t find_slot(const sl_names *t, const char *s, size_t len, uint64_t h) {
  size_t mask = t->nslot - 1, i = (size_t)h & mask;
  uint32_t hi = (uint32_t)(h >> 32);
  for (;; i = (i + 1) & mask) {
    int32_t v = t->slot[i].id;
    if (v < 0) return i;
    if (t->slot[i].hash == hi && t->len[v] == len &&
        memcmp(t->arena + t->off[v], s, len) == 0)
      return i;
  }
}

int32_t sl_names_find(const sl_names *t, const char *s, size_t len) {
  return t->slot[find_slot(t, s, len, hash(s, len))].id;
}

/* Double the table and reinsert every name. */
static int grow_table(sl_names *t) {
  size_t nslot = t->nslot * 2, mask = nslot - 1;
  struct sl_slot *slot = malloc(nslot * sizeof *slot);
  if (!slot) return -1;
  for (size_t i = 0; i < nslot; i++) slot[i].id = -1;
  for (size_t v = 0; v < t->n; v++) {
    uint64_t h = hash(t->arena + t->off[v], t->len[v]);
    size_t i = (size_t)h & mask;
    while (slot[i].id >= 0) i = (i + 1) & mask;
    slot[i].id = (int32_t)v;
    slot[i].hash = (uint32_t)(h >> 32);
  }
  free(t->slot);
  t->slot = slot;
  t->nslot = nslot;
  return 0;
}

/* Make room for one more name of len bytes. */
static int reserve(sl_names *t, size_t len) {
  if (t->n == t->cap) {
    size_t cap = t->cap ? t->cap * 2 : 64;
    uint32_t *off = realloc(t->off, cap * sizeof *off);
    if (!off) return -1;
    t->off = off;
    uint32_t *ln = realloc(t->len, cap * sizeof *ln);
    if (!ln) return -1;
    t->len = ln;
    t->cap = cap;
  }
  if (t->arena_len + len + 1 > t->arena_cap) {
    size_t cap = t->arena_cap ? t->arena_cap : 1024;
    while (cap < t->arena_len + len + 1) cap *= 2;
    if (cap > UINT32_MAX) return -1;
    char *a = realloc(t->arena, cap);
    if (!a) return -1;
    t->arena = a;
    t->arena_cap = cap;
  }
  return 0;
}

int32_t sl_names_intern(sl_names *t, const char *s, size_t len) {
  uint64_t h = hash(s, len);
  size_t i = find_slot(t, s, len, h);
  if (t->slot[i].id >= 0) return t->slot[i].id;
  if (t->n >= SL_MAX_NODES || reserve(t, len) != 0) return -1;
  if ((t->n + 1) * 2 > t->nslot) {
    if (grow_table(t) != 0) return -1;
    i = find_slot(t, s, len, h);
  }
  int32_t v = (int32_t)t->n++;
  t->off[v] = (uint32_t)t->arena_len;
  t->len[v] = (uint32_t)len;
  memcpy(t->arena + t->arena_len, s, len);
  t->arena[t->arena_len + len] = '\0';
  t->arena_len += len + 1;
  t->slot[i].id = v;
  t->slot[i].hash = (uint32_t)(h >> 32);
  return v;
}
