/*
** gauss.c: GSL's normal stream (mt19937 + ziggurat), fast (see gauss.h).
*/
#include <pthread.h>
#include <string.h>
#include <gsl/gsl_randist.h>
#include "gauss.h"

#define MT_SHIFT 397            /* MT19937's middle offset */
#define ZIG_STRIPS 128          /* strips of GSL's ziggurat (index: the low 7 bits) */
#define ZIG_OFFSETS (1u << 24)  /* offsets within a strip (bits 8 to 31) */
#define ZIG_CHECKS 200000       /* words checked against GSL before the tables are used */

/* The ziggurat's rectangles as GSL's sampler has them: offset j of strip i
** is inside when j < inside[i], and then the draw is +-j * width[i].  All
** zero (every draw through GSL) until read and checked. */
static uint32_t inside[ZIG_STRIPS];
static double width[ZIG_STRIPS];
static pthread_once_t tables_once = PTHREAD_ONCE_INIT;

/* The twist of two neighbouring words (the upper bit of a, the rest of b). */
static inline uint32_t twist(uint32_t a, uint32_t b) {
  uint32_t y = (a & 0x80000000u) | (b & 0x7fffffffu);
  return (y >> 1) ^ ((y & 1u) ? 0x9908b0dfu : 0u);
}

/* Twist the 624 words and temper them into the next outputs (as GSL's
** mt_get does, 624 at a time). */
static void refill(sl_gauss *g) {
  uint32_t *mt = g->mt;
  int k;
  for (k = 0; k < SL_MT_WORDS - MT_SHIFT; k++)
    mt[k] = mt[k + MT_SHIFT] ^ twist(mt[k], mt[k + 1]);
  for (; k < SL_MT_WORDS - 1; k++)
    mt[k] = mt[k + MT_SHIFT - SL_MT_WORDS] ^ twist(mt[k], mt[k + 1]);
  mt[k] = mt[MT_SHIFT - 1] ^ twist(mt[k], mt[0]);
  for (k = 0; k < SL_MT_WORDS; k++) {
    uint32_t y = mt[k];
    y ^= y >> 11;
    y ^= (y << 7) & 0x9d2c5680u;
    y ^= (y << 15) & 0xefc60000u;
    y ^= y >> 18;
    g->out[k] = y;
  }
  g->next = 0;
}

/* The next 32-bit output. */
static inline uint32_t word(sl_gauss *g) {
  if (g->next == SL_MT_WORDS) refill(g);
  return g->out[g->next++];
}

/* The stream as a gsl_rng type, so GSL's sampler reads the same words. */
static unsigned long view_get(void *state) { return word(state); }
static double view_double(void *state) { return word(state) / 4294967296.0; }
static void view_set(void *state, unsigned long seed) { sl_gauss_seed(state, seed); }
static const gsl_rng_type view_type = {
  "sluice-mt19937", 0xffffffffUL, 0, sizeof(sl_gauss), view_set, view_get, view_double
};

void sl_gauss_seed(sl_gauss *g, unsigned long seed) {
  if (seed == 0) seed = 4357;   /* GSL's default for 0 */
  g->mt[0] = (uint32_t)seed;
  for (uint32_t k = 1; k < SL_MT_WORDS; k++)   /* Knuth's multiplier, as GSL */
    g->mt[k] = 1812433253u * (g->mt[k - 1] ^ (g->mt[k - 1] >> 30)) + k;
  g->next = SL_MT_WORDS;
  g->view.type = &view_type;
  g->view.state = g;
}

/* A scripted generator for reading GSL's tables: the first word is given,
** the rest (for the sampler's slower steps) come from a real generator;
** the calls are counted, so one call means the common step was taken. */
typedef struct probe { unsigned long first; int calls; gsl_rng *rest; } probe;
static unsigned long probe_get(void *s) {
  probe *p = s;
  return p->calls++ ? gsl_rng_get(p->rest) : p->first;
}
static double probe_double(void *s) { return probe_get(s) / 4294967296.0; }
static void probe_set(void *s, unsigned long seed) { (void)s; (void)seed; }
static const gsl_rng_type probe_type = {
  "sluice-probe", 0xffffffffUL, 0, sizeof(probe), probe_set, probe_get, probe_double
};

/* GSL's draw from word k; *common tells whether it took one word. */
static double gsl_draw(probe *p, unsigned long k, int *common) {
  gsl_rng r = {&probe_type, p};
  p->first = k;
  p->calls = 0;
  double x = gsl_ran_gaussian_ziggurat(&r, 1.0);
  *common = p->calls == 1;
  return x;
}

/* Read the rectangles off GSL's sampler (the common step is monotone in
** the offset: a bisection per strip), then check them on random words;
** on any difference keep the tables empty, so every draw goes to GSL. */
static void tables_read(void) {
  uint32_t in[ZIG_STRIPS];
  double w[ZIG_STRIPS];
  probe p = {0, 0, gsl_rng_alloc(gsl_rng_mt19937)};
  if (!p.rest) return;
  int common;
  for (uint32_t i = 0; i < ZIG_STRIPS; i++) {
    uint32_t lo = 0, hi = ZIG_OFFSETS;     /* inside[i] lies in [lo, hi] */
    gsl_draw(&p, 0x80u | i, &common);
    if (!common) hi = 0;
    while (lo < hi) {                      /* the least offset not inside */
      uint32_t mid = lo + (hi - lo + 1) / 2;
      gsl_draw(&p, ((unsigned long)(mid - 1) << 8) | 0x80u | i, &common);
      if (common) lo = mid; else hi = mid - 1;
    }
    in[i] = lo;
    w[i] = lo >= 2 ? gsl_draw(&p, (1ul << 8) | 0x80u | i, &common) : 0;
  }
  int ok = 1;
  for (int t = 0; ok && t < ZIG_CHECKS; t++) {
    unsigned long k = gsl_rng_get(p.rest);
    uint32_t i = (uint32_t)(k & 0x7f), j = (uint32_t)(k >> 8) & 0xffffff;
    double x = gsl_draw(&p, k, &common);
    if (common != (j < in[i])) ok = 0;
    else if (common) {
      double mine = (double)j * w[i];
      if (!(k & 0x80)) mine = -mine;
      ok = memcmp(&mine, &x, sizeof x) == 0;
    }
  }
  gsl_rng_free(p.rest);
  if (!ok) return;
  memcpy(width, w, sizeof w);
  memcpy(inside, in, sizeof in);
}

/* One draw: the common step inline, the others through GSL (which reads
** the word again, since it is not consumed here). */
static inline double normal(sl_gauss *g) {
  if (g->next == SL_MT_WORDS) refill(g);
  uint32_t k = g->out[g->next];
  uint32_t i = k & 0x7f, j = (k >> 8) & 0xffffff;
  if (j < inside[i]) {
    g->next++;
    double x = (double)j * width[i];
    uint64_t b;                  /* bit 7 clear: negate, by the sign bit (no branch to mispredict) */
    memcpy(&b, &x, sizeof b);
    b ^= (uint64_t)(~k & 0x80u) << 56;
    memcpy(&x, &b, sizeof x);
    return x;
  }
  return gsl_ran_gaussian_ziggurat(&g->view, 1.0);
}

void sl_gauss_normals(sl_gauss *g, double *z, size_t k) {
  pthread_once(&tables_once, tables_read);
  for (size_t t = 0; t < k; t++) z[t] = normal(g);
}

void sl_gauss_uniforms(sl_gauss *g, double *u, size_t k) {
  for (size_t t = 0; t < k; t++) u[t] = word(g) / 4294967296.0;
}
