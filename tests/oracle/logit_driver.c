/*
** logit_driver.c: sl_logit and sl_ols on a table of numbers, for the
** statsmodels oracle (tests/oracle/logit_statsmodels.py).
**
**   logit_driver logit|ols [weights]  < table.csv
**
** Each input line is comma-separated numbers: y first, then (with
** "weights") a prior weight, then the columns of X; a column of ones is
** put in front as the intercept.  Output, one item per line, numbers with
** 17 significant digits:
**   n N / coef ... / se ... / robust_se ... / loglik V / deviance V /
**   r2 V / adj_r2 V / sigma V / converged C / iterations K / warn TEXT
** On an error from the library: "error CODE MESSAGE" and exit status 2.
*/
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "regress.h"

/* Grow *buf to hold at least need doubles. */
static void reserve(double **buf, size_t *cap, size_t need) {
  if (need <= *cap) return;
  size_t c = *cap ? *cap : 1024;
  while (c < need) c *= 2;
  double *nb = realloc(*buf, c * sizeof *nb);
  if (!nb) { fprintf(stderr, "logit_driver: out of memory\n"); exit(1); }
  *buf = nb;
  *cap = c;
}

static void print_vec(const char *key, const double *v, size_t p) {
  printf("%s", key);
  for (size_t j = 0; j < p; j++) printf(" %.17g", v[j]);
  printf("\n");
}

int main(int argc, char **argv) {
  if (argc < 2 || (strcmp(argv[1], "logit") && strcmp(argv[1], "ols"))) {
    fprintf(stderr, "usage: logit_driver logit|ols [weights] < table.csv\n");
    return 1;
  }
  int logit = !strcmp(argv[1], "logit"), weighted = argc > 2 && !strcmp(argv[2], "weights");
  char line[65536];
  double *X = NULL, *y = NULL, *w = NULL;
  size_t capx = 0, capy = 0, capw = 0, n = 0, p = 0;
  while (fgets(line, sizeof line, stdin)) {
    double v[1024];
    size_t k = 0;
    char *s = line, *end;
    while (k < 1024) {
      v[k] = strtod(s, &end);
      if (end == s) break;
      k++;
      s = end;
      while (*s == ',' || *s == ' ') s++;
    }
    if (k == 0) continue;
    size_t lead = weighted ? 2 : 1;
    if (k <= lead) { fprintf(stderr, "logit_driver: line %zu has no X\n", n + 1); return 1; }
    if (p == 0) p = k - lead + 1;
    if (k - lead + 1 != p) { fprintf(stderr, "logit_driver: ragged line %zu\n", n + 1); return 1; }
    reserve(&X, &capx, (n + 1) * p);
    reserve(&y, &capy, n + 1);
    if (weighted) reserve(&w, &capw, n + 1);
    y[n] = v[0];
    if (weighted) w[n] = v[1];
    X[n * p] = 1;
    memcpy(X + n * p + 1, v + lead, (p - 1) * sizeof *X);
    n++;
  }
  sl_fit fit;
  sl_error e;
  char warn[512] = "";
  memset(&e, 0, sizeof e);
  int rc = logit ? sl_logit(X, y, w, n, p, NULL, 0, 0, &fit, warn, sizeof warn, &e)
                 : sl_ols(X, y, n, p, NULL, &fit, &e);
  if (rc) {
    printf("error %d %s\n", rc, e.msg);
    return 2;
  }
  printf("n %zu\n", fit.n);
  print_vec("coef", fit.coef, p);
  print_vec("se", fit.se, p);
  print_vec("robust_se", fit.robust_se, p);
  printf("loglik %.17g\ndeviance %.17g\nr2 %.17g\nadj_r2 %.17g\nsigma %.17g\n", fit.loglik,
         fit.deviance, fit.r2, fit.adj_r2, fit.sigma);
  printf("converged %d\niterations %d\nwarn %s\n", fit.converged, fit.iterations, warn);
  sl_fit_free(&fit);
  free(X); free(y); free(w);
  return 0;
}
