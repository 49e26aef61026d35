/*
** plot.c: PLplot drawings.  PLplot keeps one current stream; each picture
** opens a stream of its own and ends it.
*/
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <plplot.h>
#include "plot.h"

/* The forest plot's lettering: 13 pt characters, which PLplot's drivers
** draw at a font size 1.34 times the character height; a line of a label
** every 1.25 font sizes. */
#define FOREST_FONT_PT 13.0
#define FOREST_EM_RATIO 1.34
#define FOREST_LINE 1.25
/* A label wider than this many em breaks between names onto more lines. */
#define FOREST_WRAP_EM 22.0
/* The most lines a label is broken into (the last holds the rest). */
#define FOREST_LINES_MAX 16
/* The frame of the forest plot is at least this many points wide. */
#define FOREST_FRAME_PT 420.0

/* The PLplot device for a path's extension, or NULL. */
static const char *device_of(const char *path) {
  const char *dot = strrchr(path, '.');
  if (!dot) return NULL;
  if (strcmp(dot, ".svg") == 0) return "svg";
  if (strcmp(dot, ".png") == 0) return "pngcairo";
  if (strcmp(dot, ".pdf") == 0) return "pdfcairo";
  return NULL;
}

/* Check the path can be written and open a stream on it, a page of w by
** h points (pixels for PNG). */
static int begin_sized(const char *path, int w, int h, sl_error *e) {
  const char *dev = device_of(path);
  if (!dev)
    return sl_error_set(e, SL_EARG, 0, 0, "cannot tell the picture format of '%s': "
                        "end the name in .svg, .png or .pdf", path);
  FILE *f = fopen(path, "wb");
  if (!f) return sl_error_set(e, SL_EIO, 0, 0, "cannot write '%s'", path);
  fclose(f);
  PLINT strm;
  plmkstrm(&strm);
  plsdev(dev);
  plsfnam(path);
  char geometry[32];
  snprintf(geometry, sizeof geometry, "%dx%d", w, h);
  plsetopt("geometry", geometry);
  plscolbg(255, 255, 255);
  plinit();
  plfontld(1);
  return SL_OK;
}

/* The pictures of a fixed size. */
static int begin(const char *path, sl_error *e) {
  return begin_sized(path, SL_PLOT_WIDTH, SL_PLOT_HEIGHT, e);
}

static void set_colour(int r, int g, int b) {
  plscol0(15, r, g, b);
  plcol0(15);
}

int sl_plot_histograms(const char *path, const char *title, const char *xlabel,
                       const double *a, const char *alabel, const double *b, const char *blabel,
                       double lo, double hi, int nbins, sl_error *e) {
  if (nbins < 1 || nbins > 1000 || !(hi > lo))
    return sl_error_set(e, SL_EARG, 0, 0, "a histogram needs 1 to 1000 bins and lo < hi");
  double *ca = calloc((size_t)nbins, sizeof *ca), *cb = calloc((size_t)nbins, sizeof *cb);
  if (!ca || !cb) { free(ca); free(cb); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  double width = (hi - lo) / nbins, top = 0;
  for (int pass = 0; pass < 2; pass++) {   /* as shares of each group */
    const double *v = pass ? b : a;
    double *c = pass ? cb : ca, n = 0;
    for (int k = 0; k < nbins; k++) {
      if (!(v[k] >= 0) || isinf(v[k])) {
        free(ca); free(cb);
        return sl_error_set(e, SL_EARG, 0, 0, "a histogram's counts are finite numbers, not negative");
      }
      n += v[k];
    }
    for (int k = 0; k < nbins; k++) {
      c[k] = v[k] / (n > 0 ? n : 1);
      if (c[k] > top) top = c[k];
    }
  }
  int rc = begin(path, e);
  if (rc) { free(ca); free(cb); return rc; }
  set_colour(0, 0, 0);
  plenv(lo, hi, 0, top * 1.1 + 1e-9, 0, 0);
  pllab(xlabel, "share of the group", title);
  for (int pass = 0; pass < 2; pass++) {
    double *c = pass ? cb : ca;
    if (pass) set_colour(200, 60, 40); else set_colour(40, 90, 180);
    pllsty(pass ? 2 : 1);
    plwidth(2);
    for (int k = 0; k < nbins; k++) {   /* the outline of each bar */
      PLFLT x[4] = {lo + k * width, lo + k * width, lo + (k + 1) * width, lo + (k + 1) * width};
      PLFLT y[4] = {0, c[k], c[k], 0};
      plline(4, x, y);
    }
    /* legend: a short line and the label in the top right corner */
    PLFLT lx[2] = {lo + 0.70 * (hi - lo), lo + 0.76 * (hi - lo)};
    PLFLT ly[2] = {top * (1.05 - 0.08 * pass), top * (1.05 - 0.08 * pass)};
    plline(2, lx, ly);
    plptex(lo + 0.78 * (hi - lo), ly[0], 1, 0, 0, pass ? blabel : alabel);
  }
  pllsty(1);
  plend1();
  free(ca); free(cb);
  return SL_OK;
}

/* Advance widths of DejaVu Sans for U+0020..U+007E, in 1/2048 em, read
** from its hmtx table.  It is among the widest common sans-serif faces, so
** a label measured by it fits in the face a viewer picks for "sans-serif". */
static const unsigned short dejavu_sans_ascii[95] = {
  651, 821, 942, 1716, 1303, 1946, 1597, 563, 799, 799, 1024, 1716, 651, 739, 651, 690,
  1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 1303, 690, 690, 1716, 1716, 1716, 1087,
  2048, 1401, 1405, 1430, 1577, 1294, 1178, 1587, 1540, 604, 604, 1343, 1141, 1767, 1532, 1612,
  1235, 1612, 1423, 1300, 1251, 1499, 1401, 2025, 1403, 1251, 1403, 799, 690, 799, 1716, 1024,
  1024, 1255, 1300, 1126, 1300, 1260, 721, 1300, 1298, 569, 569, 1186, 569, 1995, 1298, 1253,
  1300, 1300, 842, 1067, 803, 1298, 1212, 1675, 1212, 1212, 1075, 1303, 690, 1303, 1716};

/* The width in em of the n bytes of UTF-8 at s: any other character than
** printable ASCII counts as a full em, which no common glyph exceeds. */
static double text_em(const char *s, size_t n) {
  double w = 0;
  for (size_t i = 0; i < n; i++) {
    unsigned char c = (unsigned char)s[i];
    if (c >= 0x20 && c < 0x7f) w += dejavu_sans_ascii[c - 0x20] / 2048.0;
    else if ((c & 0xc0) != 0x80) w += 1.0;   /* the first byte of a character */
  }
  return w;
}

/* The text as PLplot draws it literally: its escape character # doubled. */
static char *plain_text(const char *s, size_t n) {
  char *t = malloc(2 * n + 1), *o = t;
  if (!t) return NULL;
  for (size_t i = 0; i < n; i++) {
    if (s[i] == '#') *o++ = '#';
    *o++ = s[i];
  }
  *o = 0;
  return t;
}

/* A label broken into lines no wider than max_em where it can be: breaks
** fall at spaces outside double quotes (between the names of a set, never
** inside one); a part wider than max_em keeps a line of its own.  Fills
** start/len of at most cap lines; returns the count. */
static size_t wrap_label(const char *s, double max_em, size_t *start, size_t *len, size_t cap) {
  size_t n = strlen(s), k = 0, line = 0, last_break = 0;
  int quoted = 0, have_break = 0;
  for (size_t i = 0; i < n; i++) {
    if (s[i] == '"') quoted = !quoted;
    if (s[i] != ' ' || quoted || i == line) continue;
    if (have_break && text_em(s + line, i - line) > max_em && k + 1 < cap) {
      start[k] = line; len[k++] = last_break - line;
      line = last_break + 1;
    }
    last_break = i; have_break = 1;
  }
  if (have_break && text_em(s + line, n - line) > max_em && last_break > line && k + 1 < cap) {
    start[k] = line; len[k++] = last_break - line;
    line = last_break + 1;
  }
  start[k] = line; len[k++] = n - line;
  return k;
}

int sl_plot_forest(const char *path, const char *title, const char *xlabel,
                   const char *const *labels, const double *est, const double *lo,
                   const double *hi, size_t n, double ref, const char *reflabel,
                   sl_error *e) {
  if (n == 0) return sl_error_set(e, SL_EARG, 0, 0, "nothing to plot");
  if (n > SL_PLOT_ROWS_MAX)
    return sl_error_set(e, SL_EARG, 0, 0, "a forest plot holds at most %d rows", SL_PLOT_ROWS_MAX);
  double xmin = INFINITY, xmax = -INFINITY;
  for (size_t i = 0; i < n; i++) {
    double v[3] = {est[i], lo[i], hi[i]};
    for (int k = 0; k < 3; k++)
      if (isfinite(v[k])) { if (v[k] < xmin) xmin = v[k]; if (v[k] > xmax) xmax = v[k]; }
  }
  if (isfinite(ref)) { if (ref < xmin) xmin = ref; if (ref > xmax) xmax = ref; }
  if (!isfinite(xmin)) return sl_error_set(e, SL_EARG, 0, 0, "no finite estimate to plot");
  double pad = (xmax - xmin) * 0.08 + 1e-9;
  /* the lines of every label, and the widest line and most lines of any */
  size_t *start = malloc(n * FOREST_LINES_MAX * sizeof *start);
  size_t *len = malloc(n * FOREST_LINES_MAX * sizeof *len), *nl = malloc(n * sizeof *nl);
  if (!start || !len || !nl) {
    free(start); free(len); free(nl);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  double wide = 0;
  size_t most = 1;
  for (size_t i = 0; i < n; i++) {
    size_t *s0 = start + i * FOREST_LINES_MAX, *l0 = len + i * FOREST_LINES_MAX;
    nl[i] = wrap_label(labels[i], FOREST_WRAP_EM, s0, l0, FOREST_LINES_MAX);
    for (size_t j = 0; j < nl[i]; j++) {
      double w = text_em(labels[i] + s0[j], l0[j]);
      if (w > wide) wide = w;
    }
    if (nl[i] > most) most = nl[i];
  }
  /* the page: room for the labels left of the frame, a frame as wide as
  ** the title, and rows tall enough for the most lines of a label */
  double em = FOREST_FONT_PT * FOREST_EM_RATIO;
  double left = (1.05 * wide + 1.5) * em + FOREST_FONT_PT;   /* a margin, and plmtex's gap of one height */
  double frame = fmax(FOREST_FRAME_PT, (text_em(title, strlen(title)) + 2) * em);
  double right = fmax(0.05 * SL_PLOT_WIDTH,
                      (reflabel ? text_em(reflabel, strlen(reflabel)) / 2 + 1 : 1) * em);
  double width = fmax(SL_PLOT_WIDTH, left + frame + right);
  double row = (double)most * FOREST_LINE * em + 0.4 * em;
  double height = fmax(SL_PLOT_HEIGHT, (double)(n + 1) * row / (0.90 - 0.12));
  int rc = begin_sized(path, (int)ceil(width), (int)ceil(height), e);
  if (rc) { free(start); free(len); free(nl); return rc; }
  width = ceil(width); height = ceil(height);
  plschr(FOREST_FONT_PT * 25.4 / 72, 1.0);
  set_colour(0, 0, 0);
  pladv(0);
  plvpor(left / width, 1 - right / width, 0.12, 0.90);
  plwind(xmin - pad, xmax + pad, 0, (double)n + 1);
  plbox("bcnst", 0, 0, "bc", 0, 0);
  pllab(xlabel, "", title);
  double step = FOREST_LINE * em / ((0.90 - 0.12) * height);   /* a line, as a share of the frame */
  for (size_t i = 0; i < n && rc == SL_OK; i++) {
    double y = (double)(n - i);
    for (size_t j = 0; j < nl[i]; j++) {   /* left of the frame, centred on the row */
      size_t at = i * FOREST_LINES_MAX + j;
      char *t = plain_text(labels[i] + start[at], len[at]);
      if (!t) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); break; }
      double pos = y / ((double)n + 1) + ((double)(nl[i] - 1) / 2 - (double)j) * step;
      plmtex("lv", 1.0, pos, 1.0, t);
      free(t);
    }
    if (isfinite(lo[i]) && isfinite(hi[i])) {
      PLFLT x[2] = {lo[i], hi[i]}, yy[2] = {y, y};
      plwidth(2);
      plline(2, x, yy);
    }
    if (isfinite(est[i])) {
      PLFLT x = est[i], yy = y;
      plpoin(1, &x, &yy, 17);
    }
  }
  if (isfinite(ref) && rc == SL_OK) {
    set_colour(200, 60, 40);
    pllsty(2);
    PLFLT x[2] = {ref, ref}, y[2] = {0, (double)n + 1};
    plline(2, x, y);
    pllsty(1);
    char *t = reflabel ? plain_text(reflabel, strlen(reflabel)) : NULL;
    if (t) plptex(ref, (double)n + 0.6, 1, 0, 0.5, t);
    free(t);
  }
  plend1();
  free(start); free(len); free(nl);
  return rc;
}

/* A round step (1, 2 or 5 times a power of ten) giving about k levels. */
static double nice_step(double range, int k) {
  double raw = range / k, p = pow(10, floor(log10(raw))), m = raw / p;
  return (m < 1.5 ? 1 : m < 3.5 ? 2 : m < 7.5 ? 5 : 10) * p;
}

int sl_plot_contour(const char *path, const char *title, const char *xlabel,
                    const char *ylabel, const double *z, size_t nx, size_t ny,
                    double xmax, double ymax, double special, const char *speciallabel,
                    const double *px, const double *py, const char *const *plabels,
                    size_t np, sl_error *e) {
  if (nx < 2 || ny < 2 || nx > SL_PLOT_GRID_MAX || ny > SL_PLOT_GRID_MAX || !(xmax > 0) || !(ymax > 0))
    return sl_error_set(e, SL_EARG, 0, 0, "a contour needs a grid of 2 to %d points a side "
                        "and positive axis ranges", SL_PLOT_GRID_MAX);
  double zmin = INFINITY, zmax = -INFINITY;
  for (size_t i = 0; i < nx * ny; i++)
    if (isfinite(z[i])) { if (z[i] < zmin) zmin = z[i]; if (z[i] > zmax) zmax = z[i]; }
  if (!isfinite(zmin)) return sl_error_set(e, SL_EARG, 0, 0, "no finite value to draw");
  PLFLT **rows = malloc(nx * sizeof *rows);
  PLFLT *xg = malloc(nx * sizeof *xg), *yg = malloc(ny * sizeof *yg);
  PLFLT lev[64];
  if (!rows || !xg || !yg) { free(rows); free(xg); free(yg); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  for (size_t i = 0; i < nx; i++) { rows[i] = (PLFLT *)(z + i * ny); xg[i] = xmax * (double)i / (double)(nx - 1); }
  for (size_t j = 0; j < ny; j++) yg[j] = ymax * (double)j / (double)(ny - 1);
  int nlev = 0;
  if (zmax > zmin) {   /* round levels across the range, the special one apart */
    double step = nice_step(zmax - zmin, 10);
    for (double v = ceil(zmin / step) * step; v <= zmax && nlev < 64; v += step)
      if (!(isfinite(special) && fabs(v - special) < step * 1e-6)) lev[nlev++] = v;
  }
  int rc = begin(path, e);
  if (rc) { free(rows); free(xg); free(yg); return rc; }
  PLcGrid grid = {xg, yg, NULL, (PLINT)nx, (PLINT)ny, 0};
  set_colour(0, 0, 0);
  plenv(0, xmax, 0, ymax, 0, 0);
  pllab(xlabel, ylabel, title);
  pl_setcontlabelformat(4, 3);
  pl_setcontlabelparam(0.008, 0.5, 0.25, 1);
  set_colour(90, 90, 90);
  if (nlev) plcont((const PLFLT *const *)rows, (PLINT)nx, (PLINT)ny, 1, (PLINT)nx, 1, (PLINT)ny,
                   lev, nlev, pltr1, &grid);
  if (isfinite(special) && special > zmin && special < zmax) {   /* the line that matters */
    set_colour(200, 60, 40);
    pllsty(2);
    plwidth(2);
    PLFLT s = special;
    plcont((const PLFLT *const *)rows, (PLINT)nx, (PLINT)ny, 1, (PLINT)nx, 1, (PLINT)ny,
           &s, 1, pltr1, &grid);
    pllsty(1);
    plwidth(1);
    if (speciallabel) plmtex("t", 0.5, 1.0, 1.0, speciallabel);
  }
  pl_setcontlabelparam(0.008, 0.5, 0.25, 0);
  set_colour(40, 90, 180);
  for (size_t k = 0; k < np; k++) {
    if (!isfinite(px[k]) || !isfinite(py[k])) continue;
    PLFLT x = px[k], y = py[k];
    plpoin(1, &x, &y, 18);
    if (plabels && plabels[k]) plptex(x + 0.015 * xmax, y, 1, 0, 0, plabels[k]);
  }
  plend1();
  free(rows); free(xg); free(yg);
  return SL_OK;
}

int sl_plot_lines(const char *path, const char *title, const char *xlabel,
                  const char *ylabel, const double *x, size_t nx, const double *y,
                  const char *const *labels, size_t ns, int first_dashed, sl_error *e) {
  if (nx < 2 || ns == 0) return sl_error_set(e, SL_EARG, 0, 0, "a line picture needs 2 or more points and a line");
  double ymin = INFINITY, ymax = -INFINITY;
  for (size_t i = 0; i < nx * ns; i++)
    if (isfinite(y[i])) { if (y[i] < ymin) ymin = y[i]; if (y[i] > ymax) ymax = y[i]; }
  if (!isfinite(ymin)) return sl_error_set(e, SL_EARG, 0, 0, "no finite value to draw");
  double pad = (ymax - ymin) * 0.08 + 1e-9, x0 = x[0], x1 = x[nx - 1];
  int rc = begin(path, e);
  if (rc) return rc;
  static const int palette[][3] = {{40, 90, 180}, {30, 140, 70}, {150, 70, 160},
                                   {210, 130, 20}, {20, 150, 160}, {120, 80, 40}};
  set_colour(0, 0, 0);
  pladv(0);
  plvpor(0.10, 0.72, 0.12, 0.90);   /* room on the right for the names */
  plwind(x0, x1, ymin - pad, ymax + pad);
  plbox("bcnst", 0, 0, "bcnstv", 0, 0);
  pllab(xlabel, ylabel, title);
  for (size_t s = 0; s < ns; s++) {
    const double *ys = y + s * nx;
    if (first_dashed && s == 0) { set_colour(200, 60, 40); pllsty(2); }
    else {
      const int *c = palette[(s - (first_dashed ? 1 : 0)) % 6];
      set_colour(c[0], c[1], c[2]);
      pllsty(1);
    }
    plwidth(2);
    for (size_t i = 0; i + 1 < nx; i++)
      if (isfinite(ys[i]) && isfinite(ys[i + 1])) {
        PLFLT xx[2] = {x[i], x[i + 1]}, yy[2] = {ys[i], ys[i + 1]};
        plline(2, xx, yy);
      }
    PLFLT px = x1, py = ys[nx - 1];
    if (isfinite(py)) {
      plpoin(1, &px, &py, 17);
      /* the name right of the frame, at the line's last height */
      double at = (py - (ymin - pad)) / (ymax - ymin + 2 * pad);
      if (labels && labels[s]) plmtex("rv", 1.0, at, 0.0, labels[s]);
    }
  }
  pllsty(1);
  plend1();
  return SL_OK;
}
