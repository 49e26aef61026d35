/*
** bench_rng.h: splitmix64, the benchmarks' seeded PRNG and the mixer of the
** edge checksum that gen_graph writes and bench_parse recomputes.
*/
#ifndef BENCH_RNG_H
#define BENCH_RNG_H

#include <stdint.h>

static inline uint64_t mix64(uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
  return z ^ (z >> 31);
}

/* The generator's state: set it to the seed before drawing. */
static uint64_t rng_state;
static inline uint64_t next_u64(void) { return mix64(rng_state += 0x9e3779b97f4a7c15ull); }

/* Uniform in [0, n) by rejection. */
static inline uint64_t below(uint64_t n) {
  uint64_t lim = UINT64_MAX - UINT64_MAX % n, r;
  do r = next_u64(); while (r >= lim);
  return r % n;
}

#endif
