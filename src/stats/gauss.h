/*
** gauss.h: a stream of standard normal draws that is the stream of GSL's
** gsl_ran_gaussian_ziggurat(r, 1.0) on gsl_rng_mt19937 seeded with the
** same seed, value for value, made fast for simulating many rows.
**
** The Mersenne Twister (Matsumoto and Nishimura 1998) refills its 624
** words in one loop, and the common step of the ziggurat (a word whose
** strip index and offset fall inside the strip's rectangle, about 99% of
** draws) is taken inline from tables read off GSL's own sampler once.
** Every other draw is handed to GSL itself, reading the same words, so
** the values and the words used stay those of GSL.
*/
#ifndef SL_GAUSS_H
#define SL_GAUSS_H

#include <stddef.h>
#include <stdint.h>
#include <gsl/gsl_rng.h>

#define SL_MT_WORDS 624   /* the state of MT19937 in 32-bit words */

typedef struct sl_gauss {
  uint32_t mt[SL_MT_WORDS];   /* the generator's state */
  uint32_t out[SL_MT_WORDS];  /* its next 624 outputs, tempered */
  int next;                   /* index of the next output in out */
  gsl_rng view;               /* this stream as a gsl_rng, for GSL's sampler */
} sl_gauss;

/* Seed as gsl_rng_set(r, seed) seeds gsl_rng_mt19937. */
void sl_gauss_seed(sl_gauss *g, unsigned long seed);
/* k standard normals into z: gsl_ran_gaussian_ziggurat(r, 1.0) k times. */
void sl_gauss_normals(sl_gauss *g, double *z, size_t k);
/* k uniforms on [0, 1) into u: gsl_rng_uniform(r) k times. */
void sl_gauss_uniforms(sl_gauss *g, double *u, size_t k);

#endif
