/*
** plot.h: pictures of results through PLplot: overlapping histograms (the
** propensity overlap) and forest plots (estimates with intervals beside a
** reference line).  The format follows the extension: .svg, .png, .pdf.
*/
#ifndef SL_PLOT_H
#define SL_PLOT_H

#include <stddef.h>
#include "error.h"

/* Two histograms on [lo, hi] in nbins bins, drawn as outlines over each
** other, with a legend naming each group. */
int sl_plot_histograms(const char *path, const char *title, const char *xlabel,
                       const double *a, size_t na, const char *alabel,
                       const double *b, size_t nb, const char *blabel,
                       double lo, double hi, int nbins, sl_error *e);

/* One row per estimate: a point and its interval; ref (NaN: none) is drawn
** as a vertical line and labelled reflabel. */
int sl_plot_forest(const char *path, const char *title, const char *xlabel,
                   const char *const *labels, const double *est, const double *lo,
                   const double *hi, size_t n, double ref, const char *reflabel,
                   sl_error *e);

#endif
