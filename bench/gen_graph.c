/*
** gen_graph.c: write a random DAG in the sluice notation for the parse
** benchmark.
**
**   gen_graph NODES EDGES SEED OUT
**
** Nodes are n0 .. n(NODES-1).  EDGES distinct edges "ni -> nj" with i < j
** (so the graph is acyclic) are drawn uniformly by a seeded PRNG and
** written one per line, in the order drawn.  Nodes that no edge touches
** follow as lines holding the name alone, so the graph has exactly NODES
** nodes.  On stdout: "nodes=N edges=M sum=S", where S is an
** order-independent checksum of the edge set that bench_parse recomputes
** from the parsed graph.
*/
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "bench_rng.h"

/* Write "n<v>" into p; returns the number of bytes. */
static size_t put_name(char *p, uint64_t v) {
  char d[24];
  size_t k = 0, n = 0;
  do { d[k++] = (char)('0' + v % 10); v /= 10; } while (v);
  p[n++] = 'n';
  while (k) p[n++] = d[--k];
  return n;
}

int main(int argc, char **argv) {
  if (argc != 5) {
    fprintf(stderr, "usage: gen_graph NODES EDGES SEED OUT\n");
    return 2;
  }
  uint64_t n = strtoull(argv[1], NULL, 10), m = strtoull(argv[2], NULL, 10);
  rng_state = strtoull(argv[3], NULL, 10);
  if (n < 2 || m > n * (n - 1) / 4) {
    fprintf(stderr, "gen_graph: need NODES >= 2 and EDGES <= NODES*(NODES-1)/4\n");
    return 2;
  }
  /* open-addressing set of drawn edges, keyed (i << 32 | j) + 1 */
  size_t nslot = 1;
  while (nslot < 2 * m) nslot <<= 1;
  uint64_t *set = calloc(nslot, sizeof *set);
  unsigned char *used = calloc(n, 1);
  FILE *out = fopen(argv[4], "wb");
  if (!set || !used || !out) {
    fprintf(stderr, "gen_graph: cannot allocate or open '%s'\n", argv[4]);
    return 1;
  }
  static char buf[1 << 16];
  size_t blen = 0;
  blen += (size_t)snprintf(buf, sizeof buf, "# random DAG: %llu nodes, %llu edges, seed %s\n",
                           (unsigned long long)n, (unsigned long long)m, argv[3]);
  uint64_t sum = 0;
  for (uint64_t k = 0; k < m;) {
    uint64_t a = below(n), b = below(n);
    if (a == b) continue;
    if (a > b) { uint64_t t = a; a = b; b = t; }
    uint64_t key = (a << 32 | b) + 1;
    size_t i = (size_t)mix64(key) & (nslot - 1);
    while (set[i] && set[i] != key) i = (i + 1) & (nslot - 1);
    if (set[i]) continue;             /* drawn before */
    set[i] = key;
    k++;
    used[a] = used[b] = 1;
    sum += mix64(a << 32 | b);
    if (blen + 64 > sizeof buf) { fwrite(buf, 1, blen, out); blen = 0; }
    blen += put_name(buf + blen, a);
    memcpy(buf + blen, " -> ", 4); blen += 4;
    blen += put_name(buf + blen, b);
    buf[blen++] = '\n';
  }
  for (uint64_t v = 0; v < n; v++) {
    if (used[v]) continue;
    if (blen + 64 > sizeof buf) { fwrite(buf, 1, blen, out); blen = 0; }
    blen += put_name(buf + blen, v);
    buf[blen++] = '\n';
  }
  fwrite(buf, 1, blen, out);
  if (fclose(out) != 0) { fprintf(stderr, "gen_graph: cannot write '%s'\n", argv[4]); return 1; }
  free(set); free(used);
  printf("nodes=%llu edges=%llu sum=%llu\n", (unsigned long long)n,
         (unsigned long long)m, (unsigned long long)sum);
  return 0;
}
