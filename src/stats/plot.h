/*
** plot.h: pictures of results through PLplot: overlapping histograms (the
** propensity overlap) and forest plots (estimates with intervals beside a
** reference line).  The format follows the extension: .svg, .png, .pdf.
*/
#ifndef SL_PLOT_H
#define SL_PLOT_H

#include <stddef.h>
#include "error.h"

/* Two histograms on [lo, hi] in nbins bins from their counts (a[k] and
** b[k] in bin k), drawn as shares of each group, outlines over each other,
** with a legend naming each group. */
int sl_plot_histograms(const char *path, const char *title, const char *xlabel,
                       const double *a, const char *alabel, const double *b, const char *blabel,
                       double lo, double hi, int nbins, sl_error *e);

/* The size of a picture in points (pixels for PNG); a forest plot grows
** beyond it to show every label whole. */
#define SL_PLOT_WIDTH 800
#define SL_PLOT_HEIGHT 500

/* The most rows of a forest plot. */
#define SL_PLOT_ROWS_MAX 1000

/* One row per estimate: a point and its interval; ref (NaN: none) is drawn
** as a vertical line and labelled reflabel.  Labels are never cut: a long
** one breaks between names (at spaces outside double quotes) onto more
** lines, and the page widens and grows taller until each fits. */
int sl_plot_forest(const char *path, const char *title, const char *xlabel,
                   const char *const *labels, const double *est, const double *lo,
                   const double *hi, size_t n, double ref, const char *reflabel,
                   sl_error *e);

/* The most grid points a side of a contour picture. */
#define SL_PLOT_GRID_MAX 400

/* Contours of z over [0, xmax] x [0, ymax] on an nx by ny grid (z[i*ny + j]
** at x_i = xmax i/(nx-1), y_j = ymax j/(ny-1)), at round levels; the level
** special (NaN: none) drawn as a dashed red line and named by speciallabel
** above the frame; np labelled points. */
int sl_plot_contour(const char *path, const char *title, const char *xlabel,
                    const char *ylabel, const double *z, size_t nx, size_t ny,
                    double xmax, double ymax, double special, const char *speciallabel,
                    const double *px, const double *py, const char *const *plabels,
                    size_t np, sl_error *e);

/* ns lines over the points x[0..nx) (y[s*nx + i] the value of line s at
** x_i), each named by labels[s] at its right end; with first_dashed, line
** 0 is a dashed red reference (a truth). */
int sl_plot_lines(const char *path, const char *title, const char *xlabel,
                  const char *ylabel, const double *x, size_t nx, const double *y,
                  const char *const *labels, size_t ns, int first_dashed, sl_error *e);

#endif
