/*
** bootstrap.c: the nonparametric bootstrap of an estimate.  Replicate b
** draws its rows with a generator seeded from (seed, b) alone, and writes
** its result to slot b, so the replicates come out bit-identical whatever
** the number of threads and whatever order they run in.
*/
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_rng.h>
#include "estimate_internal.h"

/* SplitMix64: a well-mixed seed for replicate b. */
static uint64_t replicate_seed(uint64_t seed, uint64_t b) {
  uint64_t z = seed + 0x9E3779B97F4A7C15ull * (b + 1);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

typedef struct job {
  const sl_est_spec *s;
  const sl_prep *P;
  const sl_boot_linear *lin;       /* linear standardization from counts, or NULL */
  const sl_boot_aipw *aipw;        /* AIPW with a linear outcome from counts, or NULL */
  double *est;
  atomic_size_t next, done;
  atomic_int failed_hard;          /* out of memory in a worker */
} job;

/* The rows of replicate b: n draws of rows, or with clusters as many
** draws of whole clusters as there are (the cluster bootstrap; e.g.
** Cameron and Miller 2015, section VI.C, from memory).  Returns the rows
** drawn, growing *ix (capacity *cap) as needed; 0 when out of memory. */
static size_t draw(const sl_prep *P, gsl_rng *r, size_t **ix, size_t *cap) {
  if (!P->cluster) {
    for (size_t k = 0; k < P->n; k++) (*ix)[k] = (size_t)gsl_rng_uniform_int(r, P->n);
    return P->n;
  }
  size_t m = 0;
  for (size_t g = 0; g < P->nclusters; g++) {
    size_t c = (size_t)gsl_rng_uniform_int(r, P->nclusters);
    size_t lo = P->cl_start[c], hi = P->cl_start[c + 1];
    if (m + (hi - lo) > *cap) {
      size_t nc = 2 * (m + (hi - lo));
      size_t *grown = realloc(*ix, nc * sizeof *grown);
      if (!grown) return 0;
      *ix = grown; *cap = nc;
    }
    for (size_t k = lo; k < hi; k++) (*ix)[m++] = P->cl_rows[k];
  }
  return m;
}

/* Replicate b's estimate from its rows ix[0..n): from their counts when
** the linear route applies, else by refitting on the rows. */
static double replicate(const job *J, const size_t *ix, size_t n, double *count, double *work) {
  if (J->lin || J->aipw) {
    memset(count, 0, J->P->n * sizeof *count);
    for (size_t k = 0; k < n; k++) count[ix[k]] += 1;
    if (J->P->w)   /* a drawn row keeps its weight */
      for (size_t k = 0; k < J->P->n; k++) count[k] *= J->P->w[k];
    double est;
    if (J->lin ? sl_boot_linear_point(J->s, J->lin, count, work, &est) == 0
               : sl_boot_aipw_point(J->s, J->P, J->aipw, count, work, &est) == 0) return est;
  }
  sl_point pt;
  sl_error e;
  char warn[SL_WARN_MAX] = "";
  return sl_est_point(J->s, J->P, ix, n, 0, &pt, warn, &e) == SL_OK ? pt.est : NAN;
}

/* Take replicates until none are left. */
static void *worker(void *arg) {
  job *J = arg;
  size_t cap = J->P->n;
  size_t *ix = malloc(cap * sizeof *ix);
  int fast = J->lin || J->aipw;
  size_t nwork = J->lin ? sl_boot_linear_work(J->lin) : J->aipw ? sl_boot_aipw_work(J->aipw) : 0;
  double *count = fast ? malloc(J->P->n * sizeof *count) : NULL;
  double *work = fast ? malloc(nwork * sizeof *work) : NULL;
  gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
  if (!ix || !r || (fast && (!count || !work))) {
    atomic_store(&J->failed_hard, 1);
    free(ix); free(count); free(work);
    if (r) gsl_rng_free(r);
    return NULL;
  }
  for (;;) {
    if (J->s->stop && *J->s->stop) break;
    size_t b = atomic_fetch_add(&J->next, 1);
    if (b >= J->s->boot) break;
    gsl_rng_set(r, (unsigned long)replicate_seed(J->s->seed, b));
    size_t n = draw(J->P, r, &ix, &cap);
    if (n == 0) { atomic_store(&J->failed_hard, 1); break; }
    J->est[b] = replicate(J, ix, n, count, work);
    atomic_fetch_add(&J->done, 1);
  }
  free(ix); free(count); free(work);
  gsl_rng_free(r);
  return NULL;
}

int sl_est_bootstrap(const sl_est_spec *s, const sl_prep *P, double *est, sl_error *e) {
  job J;
  sl_boot_linear lin;
  sl_boot_aipw aipw;
  J.s = s; J.P = P; J.est = est; J.lin = NULL; J.aipw = NULL;
  if (s->method == SL_STANDARDIZE && !P->bin_y) {
    if (sl_boot_linear_init(s, P, s->interactions && P->q > 0, &lin, e)) return e->code;
    J.lin = &lin;
  } else if (s->method == SL_AIPW && !P->bin_y && P->bin_t) {
    if (sl_boot_aipw_init(s, P, &aipw, e)) return e->code;
    J.aipw = &aipw;
  }
  atomic_init(&J.next, 0); atomic_init(&J.done, 0); atomic_init(&J.failed_hard, 0);
  for (size_t b = 0; b < s->boot; b++) est[b] = NAN;
  long cores = sysconf(_SC_NPROCESSORS_ONLN);
  int nt = s->threads > 0 ? s->threads : (int)(cores > 0 ? cores : 1);
  if ((size_t)nt > s->boot) nt = (int)s->boot;
  if (nt > 64) nt = 64;
  pthread_t th[64];
  int started = 0;
  for (int i = 1; i < nt; i++)   /* the calling thread is worker 0 */
    if (pthread_create(&th[started], NULL, worker, &J) == 0) started++;
  if (s->progress) {
    /* report progress from this thread while the others work */
    size_t last = (size_t)-1;
    while (atomic_load(&J.next) < s->boot && !(s->stop && *s->stop) && started > 0) {
      size_t d = atomic_load(&J.done);
      if (d != last) { s->progress(s->progress_ctx, d, s->boot); last = d; }
      usleep(50000);
    }
  }
  worker(&J);
  for (int i = 0; i < started; i++) pthread_join(th[i], NULL);
  if (J.lin) sl_boot_linear_free(&lin);
  if (J.aipw) sl_boot_aipw_free(&aipw);
  if (s->progress) s->progress(s->progress_ctx, atomic_load(&J.done), s->boot);
  if (atomic_load(&J.failed_hard)) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory in the bootstrap");
  if (s->stop && *s->stop) return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  return SL_OK;
}
