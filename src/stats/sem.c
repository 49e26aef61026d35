/*
** sem.c: linear structural equation models (see sem.h).
*/
#include <math.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sys/mman.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>
#include "sem.h"
#include "frame_build.h"
#include "gauss.h"
#include "regress.h"

#define BLOCK_ROWS 65536   /* rows drawn from one generator */
#define HUGE_PAGE (2u << 20)  /* a transparent huge page on x86-64 and arm64 */
#define CHUNK_CELLS 16384     /* rows x nodes solved together: a few hundred KB in cache */
#define CHUNK_ROWS_MAX 512    /* rows of one chunk, however few the nodes */

void sl_sem_free(sl_sem *m) {
  if (m->names) for (size_t i = 0; i < m->n; i++) free(m->names[i]);
  free(m->names); free(m->observed); free(m->B); free(m->a); free(m->omega);
  free(m->chol); free(m->cut); free(m->logistic); free(m->order);
  free(m->poff); free(m->loff); free(m->pidx); free(m->lidx); free(m->pval); free(m->lval);
  memset(m, 0, sizeof *m);
}

/* Cholesky factor of the n x n matrix s (lower, in out); 0 on success. */
static int cholesky(const double *s, size_t n, double *out) {
  memcpy(out, s, n * n * sizeof *out);
  gsl_matrix_view v = gsl_matrix_view_array(out, n, n);
  if (gsl_linalg_cholesky_decomp1(&v.matrix) != GSL_SUCCESS) return -1;
  for (size_t i = 0; i < n; i++)            /* keep the lower triangle only */
    for (size_t j = i + 1; j < n; j++) out[i * n + j] = 0;
  return 0;
}

/* Find the <-> pair that makes omega indefinite: first a pair whose
** covariance alone exceeds the product of the SDs, else the first pair
** whose addition (in order) breaks positive definiteness. */
static int blame_pair(const sl_sem *m, const double *omega, sl_error *e) {
  size_t n = m->n;
  for (size_t i = 0; i < n; i++) {
    if (!(omega[i * n + i] > 0))
      return sl_error_set(e, SL_EARG, 0, 0, "the error variance of '%s' must be positive", m->names[i]);
    for (size_t j = i + 1; j < n; j++) {
      double c = omega[i * n + j];
      if (c != 0 && c * c >= omega[i * n + i] * omega[j * n + j])
        return sl_error_set(e, SL_EARG, 0, 0, "the covariance %g of %s <-> %s is not below the "
                            "product of their error SDs (%g): the error covariance is not "
                            "positive definite", c, m->names[i], m->names[j],
                            sqrt(omega[i * n + i] * omega[j * n + j]));
    }
  }
  double *s = calloc(n * n, sizeof *s), *w = malloc(n * n * sizeof *w);
  if (!s || !w) { free(s); free(w); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  for (size_t i = 0; i < n; i++) s[i * n + i] = omega[i * n + i];
  int rc = sl_error_set(e, SL_EARG, 0, 0, "the error covariance is not positive definite");
  for (size_t i = 0; i < n; i++)
    for (size_t j = i + 1; j < n; j++) {
      if (omega[i * n + j] == 0) continue;
      s[i * n + j] = s[j * n + i] = omega[i * n + j];
      if (cholesky(s, n, w) != 0) {
        rc = sl_error_set(e, SL_EARG, 0, 0, "adding the covariance of %s <-> %s makes the error "
                          "covariance not positive definite", m->names[i], m->names[j]);
        i = j = n;
      }
    }
  free(s); free(w);
  return rc;
}

int sl_sem_init(sl_sem *m, size_t n, const char *const *names,
                const unsigned char *observed, const double *B, const double *a,
                const double *omega, const double *cut, const unsigned char *logistic,
                const int32_t *order, sl_error *e) {
  memset(m, 0, sizeof *m);
  m->n = n;
  m->names = calloc(n ? n : 1, sizeof *m->names);
  m->observed = malloc(n ? n : 1); m->logistic = malloc(n ? n : 1);
  m->B = malloc((n ? n * n : 1) * sizeof *m->B);
  m->a = malloc((n ? n : 1) * sizeof *m->a);
  m->omega = malloc((n ? n * n : 1) * sizeof *m->omega);
  m->chol = malloc((n ? n * n : 1) * sizeof *m->chol);
  m->cut = malloc((n ? n : 1) * sizeof *m->cut);
  m->order = malloc((n ? n : 1) * sizeof *m->order);
  if (!m->names || !m->observed || !m->logistic || !m->B || !m->a || !m->omega ||
      !m->chol || !m->cut || !m->order) {
    sl_sem_free(m);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t i = 0; i < n; i++) {
    m->names[i] = strdup(names[i]);
    if (!m->names[i]) { sl_sem_free(m); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  }
  memcpy(m->observed, observed, n);
  memcpy(m->B, B, n * n * sizeof *B);
  memcpy(m->a, a, n * sizeof *a);
  memcpy(m->omega, omega, n * n * sizeof *omega);
  memcpy(m->order, order, n * sizeof *order);
  m->exact = 1;
  for (size_t i = 0; i < n; i++) {
    m->cut[i] = cut ? cut[i] : NAN;
    m->logistic[i] = logistic ? logistic[i] : 0;
    if (!isnan(m->cut[i]) || m->logistic[i]) m->exact = 0;
  }
  if (n && cholesky(omega, n, m->chol) != 0) {
    int rc = blame_pair(m, omega, e);
    sl_sem_free(m);
    return rc;
  }
  for (size_t i = 0; i < n; i++) m->any_logistic |= m->logistic[i];
  /* the sparse forms */
  size_t np = 0, nl = 0;
  for (size_t i = 0; i < n * n; i++) { np += m->B[i] != 0; nl += m->chol[i] != 0; }
  m->poff = malloc((n + 1) * sizeof *m->poff); m->loff = malloc((n + 1) * sizeof *m->loff);
  m->pidx = malloc((np ? np : 1) * sizeof *m->pidx); m->pval = malloc((np ? np : 1) * sizeof *m->pval);
  m->lidx = malloc((nl ? nl : 1) * sizeof *m->lidx); m->lval = malloc((nl ? nl : 1) * sizeof *m->lval);
  if (!m->poff || !m->loff || !m->pidx || !m->pval || !m->lidx || !m->lval) {
    sl_sem_free(m);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  np = nl = 0;
  for (size_t i = 0; i < n; i++) {
    m->poff[i] = (uint32_t)np;
    m->loff[i] = (uint32_t)nl;
    for (size_t j = 0; j < n; j++) {
      if (m->B[i * n + j] != 0) { m->pidx[np] = (int32_t)j; m->pval[np++] = m->B[i * n + j]; }
      if (m->chol[i * n + j] != 0) { m->lidx[nl] = (int32_t)j; m->lval[nl++] = m->chol[i * n + j]; }
    }
  }
  m->poff[n] = (uint32_t)np;
  m->loff[n] = (uint32_t)nl;
  return SL_OK;
}

/* (I - B)^-1 into inv (n x n), by LU decomposition. */
static int total_effects(const sl_sem *m, double *inv, sl_error *e) {
  size_t n = m->n;
  gsl_matrix *A = gsl_matrix_alloc(n, n);
  gsl_permutation *p = gsl_permutation_alloc(n);
  if (!A || !p) {
    if (A) gsl_matrix_free(A);
    if (p) gsl_permutation_free(p);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t i = 0; i < n; i++)
    for (size_t j = 0; j < n; j++) gsl_matrix_set(A, i, j, (i == j) - m->B[i * n + j]);
  int sign;
  gsl_matrix_view out = gsl_matrix_view_array(inv, n, n);
  int rc = gsl_linalg_LU_decomp(A, p, &sign) || gsl_linalg_LU_invert(A, p, &out.matrix);
  gsl_matrix_free(A);
  gsl_permutation_free(p);
  return rc ? sl_error_set(e, SL_EARG, 0, 0, "I - B is singular") : SL_OK;
}

/* The closed forms need an exact model. */
static int need_exact(const sl_sem *m, sl_error *e) {
  if (m->exact) return SL_OK;
  return sl_error_set(e, SL_EARG, 0, 0, "the model has binary or binarized nodes, so the exact "
                      "linear values do not hold: use the Monte Carlo value (draws =)");
}

int sl_sem_effect(const sl_sem *m, int x, int y, double *effect, sl_error *e) {
  int rc = need_exact(m, e);
  if (rc) return rc;
  double *inv = malloc(m->n * m->n * sizeof *inv);
  if (!inv) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  rc = total_effects(m, inv, e);
  if (!rc) *effect = inv[(size_t)y * m->n + (size_t)x];
  free(inv);
  return rc;
}

int sl_sem_cov(const sl_sem *m, double *sigma, sl_error *e) {
  int rc = need_exact(m, e);
  if (rc) return rc;
  size_t n = m->n;
  double *inv = malloc(n * n * sizeof *inv), *tmp = malloc(n * n * sizeof *tmp);
  if (!inv || !tmp) { free(inv); free(tmp); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  rc = total_effects(m, inv, e);
  if (!rc) {   /* Sigma = A Omega A' */
    gsl_matrix_view A = gsl_matrix_view_array(inv, n, n), T = gsl_matrix_view_array(tmp, n, n);
    gsl_matrix_const_view O = gsl_matrix_const_view_array(m->omega, n, n);
    gsl_matrix_view S = gsl_matrix_view_array(sigma, n, n);
    gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &A.matrix, &O.matrix, 0.0, &T.matrix);
    gsl_blas_dgemm(CblasNoTrans, CblasTrans, 1.0, &T.matrix, &A.matrix, 0.0, &S.matrix);
  }
  free(inv); free(tmp);
  return rc;
}

int sl_sem_limit(const sl_sem *m, int x, int y, const int *set, size_t k, double *limit,
                 sl_error *e) {
  size_t n = m->n, q = k + 1;
  double *sig = malloc(n * n * sizeof *sig);
  if (!sig) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  int rc = sl_sem_cov(m, sig, e);
  if (rc) { free(sig); return rc; }
  gsl_matrix *S = gsl_matrix_alloc(q, q);
  gsl_vector *b = gsl_vector_alloc(q), *beta = gsl_vector_alloc(q);
  if (!S || !b || !beta) rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  else {
    for (size_t i = 0; i < q; i++) {
      size_t vi = (size_t)(i ? set[i - 1] : x);
      gsl_vector_set(b, i, sig[vi * n + (size_t)y]);
      for (size_t j = 0; j < q; j++) {
        size_t vj = (size_t)(j ? set[j - 1] : x);
        gsl_matrix_set(S, i, j, sig[vi * n + vj]);
      }
    }
    /* Sigma_ZZ beta = Sigma_Zy, by Cholesky (a singular Sigma_ZZ means the
    ** set determines the treatment exactly) */
    if (gsl_linalg_cholesky_decomp1(S) != GSL_SUCCESS ||
        gsl_linalg_cholesky_solve(S, b, beta) != GSL_SUCCESS)
      rc = sl_error_set(e, SL_EARG, 0, 0, "the treatment and the set have a singular covariance: "
                        "the limit is not defined");
    else *limit = gsl_vector_get(beta, 0);
  }
  if (S) gsl_matrix_free(S);
  if (b) gsl_vector_free(b);
  if (beta) gsl_vector_free(beta);
  free(sig);
  return rc;
}

/* SplitMix64, for the seed of each block of rows. */
static uint64_t mix(uint64_t seed, uint64_t k) {
  uint64_t z = seed + 0x9E3779B97F4A7C15ull * (k + 1);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}

/* Draw the random parts of one row: standard normals z (n) and uniforms
** u (n; used by logistic nodes only). */
static void draw(const sl_sem *m, sl_gauss *g, double *z, double *u) {
  sl_gauss_normals(g, z, m->n);
  if (m->any_logistic)   /* uniforms only when a node needs them */
    sl_gauss_uniforms(g, u, m->n);
}

/* Solve the system for one row.  fix >= 0 sets node fix to the value
** fixval (shift: add fixval to its own value instead). */
static void solve_row(const sl_sem *m, const double *z, const double *u, double *x,
                      int fix, double fixval, int shift) {
  size_t n = m->n;
  for (size_t k = 0; k < n; k++) {
    size_t i = (size_t)m->order[k];
    double v = m->a[i];
    for (uint32_t k2 = m->poff[i]; k2 < m->poff[i + 1]; k2++) v += m->pval[k2] * x[m->pidx[k2]];
    if (m->logistic[i]) v = u[i] < 1 / (1 + exp(-v)) ? 1 : 0;
    else {
      for (uint32_t k2 = m->loff[i]; k2 < m->loff[i + 1]; k2++) v += m->lval[k2] * z[m->lidx[k2]];
      if (!isnan(m->cut[i])) v = v > m->cut[i] ? 1 : 0;
    }
    if ((int)i == fix) v = shift ? v + fixval : fixval;
    x[i] = v;
  }
}

/* A column of rows doubles that free() releases, on huge pages where the
** kernel offers them: a simulated frame is written once, and touching
** 10^7 x 20 doubles page by page costs more than drawing them. */
static double *column_alloc(size_t rows) {
  size_t bytes = rows * sizeof(double);
  if (bytes < HUGE_PAGE) return malloc(bytes);
  void *p = NULL;
  if (posix_memalign(&p, HUGE_PAGE, bytes) != 0) return NULL;
#ifdef MADV_HUGEPAGE
  madvise(p, bytes, MADV_HUGEPAGE);   /* advice only: without it, small pages */
#endif
  return p;
}

typedef struct sim_job {
  const sl_sem *m;
  size_t rows, nblocks, chunk;
  uint64_t seed;
  double **cols;            /* one array per observed node */
  size_t *col_of;           /* node -> column index, or (size_t)-1 */
  atomic_size_t next;
  atomic_int bad;
} sim_job;

/* Solve R rows at once, node by node in topological order, x[i] holding
** node i's R values: the same operations in the same order as solve_row
** for each row (so the same values), but each a loop over rows. */
static void solve_chunk(const sl_sem *m, const double *z, const double *u, double *const *x,
                        size_t R) {
  size_t n = m->n;
  for (size_t k = 0; k < n; k++) {
    size_t i = (size_t)m->order[k];
    double *restrict xi = x[i];
    for (size_t r = 0; r < R; r++) xi[r] = m->a[i];
    for (uint32_t k2 = m->poff[i]; k2 < m->poff[i + 1]; k2++) {
      const double *restrict xp = x[m->pidx[k2]];
      double c = m->pval[k2];
      for (size_t r = 0; r < R; r++) xi[r] += c * xp[r];
    }
    if (m->logistic[i]) {
      for (size_t r = 0; r < R; r++) xi[r] = u[r * n + i] < 1 / (1 + exp(-xi[r])) ? 1 : 0;
      continue;
    }
    for (uint32_t k2 = m->loff[i]; k2 < m->loff[i + 1]; k2++) {
      const double *restrict zl = z + m->lidx[k2];
      double c = m->lval[k2];
      for (size_t r = 0; r < R; r++) xi[r] += c * zl[r * n];
    }
    double cut = m->cut[i];
    if (!isnan(cut))
      for (size_t r = 0; r < R; r++) xi[r] = xi[r] > cut ? 1 : 0;
  }
}

/* Rows [lo, hi) of one block, a chunk at a time: draw the chunk's rows in
** row order (the generator's order does not depend on the chunk), solve
** them into the frame's columns (hidden nodes into scratch). */
static void sim_block(sim_job *J, sl_gauss *g, double *z, double *u, double *scratch,
                      double **x, size_t lo, size_t hi) {
  const sl_sem *m = J->m;
  size_t n = m->n;
  for (size_t r0 = lo; r0 < hi; r0 += J->chunk) {
    size_t R = hi - r0 < J->chunk ? hi - r0 : J->chunk;
    if (m->any_logistic)
      for (size_t r = 0; r < R; r++) draw(m, g, z + r * n, u + r * n);
    else sl_gauss_normals(g, z, R * n);   /* the same draws as row by row */
    for (size_t i = 0; i < n; i++)
      x[i] = J->col_of[i] != (size_t)-1 ? J->cols[J->col_of[i]] + r0 : scratch + i * J->chunk;
    solve_chunk(m, z, u, x, R);
  }
}

/* One thread: the next block not yet taken, until none is left.  Each
** block has its own generator, so which thread takes it never matters. */
static void *sim_worker(void *arg) {
  sim_job *J = arg;
  size_t n = J->m->n ? J->m->n : 1, cells = J->chunk * n;
  double *buf = malloc(3 * cells * sizeof *buf);
  double **x = malloc(n * sizeof *x);
  sl_gauss *g = malloc(sizeof *g);
  if (!buf || !x || !g) { atomic_store(&J->bad, 1); free(buf); free(x); free(g); return NULL; }
  for (;;) {
    size_t b = atomic_fetch_add(&J->next, 1);
    if (b >= J->nblocks) break;
    sl_gauss_seed(g, (unsigned long)mix(J->seed, b));
    size_t lo = b * BLOCK_ROWS, hi = lo + BLOCK_ROWS < J->rows ? lo + BLOCK_ROWS : J->rows;
    sim_block(J, g, buf, buf + cells, buf + 2 * cells, x, lo, hi);
  }
  free(buf); free(x); free(g);
  return NULL;
}

sl_frame *sl_sem_simulate(const sl_sem *m, size_t rows, uint64_t seed, int threads,
                          sl_error *e) {
  if (rows == 0) { sl_error_set(e, SL_EARG, 0, 0, "the number of rows must be positive"); return NULL; }
  size_t n = m->n, nobs = 0;
  for (size_t i = 0; i < n; i++) nobs += m->observed[i];
  sim_job J;
  memset(&J, 0, sizeof J);
  J.m = m; J.rows = rows; J.seed = seed;
  J.nblocks = (rows + BLOCK_ROWS - 1) / BLOCK_ROWS;
  J.chunk = CHUNK_CELLS / (n ? n : 1);
  if (J.chunk > CHUNK_ROWS_MAX) J.chunk = CHUNK_ROWS_MAX;
  if (J.chunk < 1) J.chunk = 1;
  J.cols = calloc(nobs ? nobs : 1, sizeof *J.cols);
  J.col_of = malloc((n ? n : 1) * sizeof *J.col_of);
  atomic_init(&J.next, 0);
  atomic_init(&J.bad, 0);
  sl_frame *f = NULL;
  if (!J.cols || !J.col_of) goto nomem;
  size_t c = 0;
  for (size_t i = 0; i < n; i++) {
    J.col_of[i] = m->observed[i] ? c : (size_t)-1;
    if (m->observed[i] && !(J.cols[c++] = column_alloc(rows))) goto nomem;
  }
  long cores = sysconf(_SC_NPROCESSORS_ONLN);
  int nt = threads > 0 ? threads : (int)(cores > 0 ? cores : 1);
  if ((size_t)nt > J.nblocks) nt = (int)J.nblocks;
  if (nt > 64) nt = 64;
  pthread_t th[64];
  int started = 0;
  for (int i = 1; i < nt; i++)
    if (pthread_create(&th[started], NULL, sim_worker, &J) == 0) started++;
  sim_worker(&J);
  for (int i = 0; i < started; i++) pthread_join(th[i], NULL);
  if (atomic_load(&J.bad)) goto nomem;
  f = sl_frame_alloc(rows);
  if (!f) goto nomem;
  c = 0;
  for (size_t i = 0; i < n; i++) {
    if (!m->observed[i]) continue;
    char *name = strdup(m->names[i]);
    double *col = J.cols[c];
    J.cols[c++] = NULL;
    if (!name || sl_frame_adopt_numeric(f, name, col, e) != SL_OK) {
      if (!name) { free(col); sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
      sl_frame_free(f);
      f = NULL;
      break;
    }
  }
  goto done;
nomem:
  sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory for %zu simulated rows", rows);
done:
  if (J.cols) for (size_t i = 0; i < nobs; i++) free(J.cols[i]);
  free(J.cols); free(J.col_of);
  return f;
}

/* Whether node x takes only the values 0 and 1 in the model. */
static int binary_node(const sl_sem *m, int x) {
  return m->logistic[x] || !isnan(m->cut[x]);
}

int sl_sem_effect_mc(const sl_sem *m, int x, int y, size_t draws, uint64_t seed,
                     double *effect, double *se, sl_error *e) {
  if (draws < 2) return sl_error_set(e, SL_EARG, 0, 0, "draws must be at least 2");
  size_t n = m->n;
  double *buf = malloc(4 * (n ? n : 1) * sizeof *buf);
  sl_gauss *r = malloc(sizeof *r);
  if (!buf || !r) { free(buf); free(r); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  double *z = buf, *u = buf + n, *x1 = buf + 2 * n, *x0 = buf + 3 * n;
  int bin = binary_node(m, x);
  double s = 0, s2 = 0;
  for (size_t k = 0; k < draws; k++) {
    if (k % BLOCK_ROWS == 0) sl_gauss_seed(r, (unsigned long)mix(seed, k / BLOCK_ROWS));
    draw(m, r, z, u);
    /* the same random parts under both interventions: common random numbers */
    if (bin) { solve_row(m, z, u, x1, x, 1, 0); solve_row(m, z, u, x0, x, 0, 0); }
    else { solve_row(m, z, u, x1, x, 1, 1); solve_row(m, z, u, x0, -1, 0, 0); }
    double d = x1[y] - x0[y];
    s += d; s2 += d * d;
  }
  *effect = s / (double)draws;
  double var = (s2 - s * s / (double)draws) / (double)(draws - 1);
  *se = sqrt((var > 0 ? var : 0) / (double)draws);   /* rounding can go below 0 */
  free(buf);
  free(r);
  return SL_OK;
}

int sl_sem_limit_mc(const sl_sem *m, int x, int y, const int *set, size_t k, size_t draws,
                    uint64_t seed, double *limit, double *se, sl_error *e) {
  size_t n = m->n, p = k + 2;
  if (draws < p + 1) return sl_error_set(e, SL_EARG, 0, 0, "draws must exceed the number of terms");
  double *X = malloc(draws * p * sizeof *X), *yv = malloc(draws * sizeof *yv);
  double *buf = malloc(3 * (n ? n : 1) * sizeof *buf);
  sl_gauss *r = malloc(sizeof *r);
  int rc = SL_OK;
  if (!X || !yv || !buf || !r) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  double *z = buf, *u = buf + n, *xv = buf + 2 * n;
  for (size_t d = 0; d < draws; d++) {
    if (d % BLOCK_ROWS == 0) sl_gauss_seed(r, (unsigned long)mix(seed, d / BLOCK_ROWS));
    draw(m, r, z, u);
    solve_row(m, z, u, xv, -1, 0, 0);
    double *row = X + d * p;
    row[0] = 1;
    row[1] = xv[x];
    for (size_t j = 0; j < k; j++) row[2 + j] = xv[set[j]];
    yv[d] = xv[y];
  }
  sl_fit fit;
  memset(&fit, 0, sizeof fit);
  if ((rc = sl_ols(X, yv, draws, p, NULL, &fit, e)) == SL_OK) {
    *limit = fit.coef[1];
    *se = fit.se[1];
    sl_fit_free(&fit);
  }
done:
  free(X); free(yv); free(buf); free(r);
  return rc;
}
