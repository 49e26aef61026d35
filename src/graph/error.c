/*
** error.c: filling and formatting sl_error records; name suggestions.
*/
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "error.h"
#include "notation.h"

int sl_error_set(sl_error *e, int code, int line, int col, const char *fmt, ...) {
  if (e) {
    va_list ap;
    e->code = code;
    e->line = line;
    e->col = col;
    va_start(ap, fmt);
    vsnprintf(e->msg, sizeof e->msg, fmt, ap);
    va_end(ap);
  }
  return code;
}

/* Copy a source line into buf at k, each control or invisible character
** shown as one '?': it holds the column the caret counts, and a terminal
** neither hides it nor obeys it. */
static size_t echo_line(const char *p, size_t len, char *buf, size_t bufsize, size_t k) {
  for (size_t i = 0; i < len && k + 1 < bufsize;) {
    uint32_t cp = 0;
    size_t n = sl_utf8_decode(p + i, len - i, &cp);
    int hide = n ? (cp < 0x20 && cp != '\t') || cp == 0x7F || sl_invisible_name(cp) != NULL
                 : (unsigned char)p[i] < 0x20;
    if (hide) { buf[k++] = '?'; i += n ? n : 1; continue; }
    size_t m = n ? n : 1;
    if (k + m >= bufsize) break;
    memcpy(buf + k, p + i, m);
    k += m;
    i += m;
  }
  buf[k < bufsize ? k : bufsize - 1] = '\0';
  return k;
}

char *sl_error_format(const sl_error *e, const char *src, size_t srclen,
                      char *buf, size_t bufsize) {
  size_t k = 0;
  if (bufsize == 0) return buf;
  if (e->line > 0)
    k = (size_t)snprintf(buf, bufsize, "line %d, column %d: %s", e->line, e->col, e->msg);
  else
    k = (size_t)snprintf(buf, bufsize, "%s", e->msg);
  if (k >= bufsize || !src || e->line <= 0) return buf;
  /* find the start of the line */
  const char *p = src, *end = src + srclen;
  for (int l = 1; l < e->line && p < end; p++)
    if (*p == '\n') l++;
  const char *q = p;
  while (q < end && *q != '\n' && *q != '\r') q++;
  size_t linelen = (size_t)(q - p);
  if (linelen > 200) return buf;  /* too long to be worth echoing */
  k += (size_t)snprintf(buf + k, bufsize - k, "\n  ");
  if (k >= bufsize) return buf;
  k = echo_line(p, linelen, buf, bufsize, k);
  if (k + 1 >= bufsize) return buf;
  k += (size_t)snprintf(buf + k, bufsize - k, "\n  ");
  if (k >= bufsize) return buf;
  /* columns count UTF-8 characters; tabs are copied so the caret lines up
  ** with the echoed text */
  int chars = 0;
  for (size_t i = 0; i < linelen && chars < e->col - 1 && k + 1 < bufsize; i++) {
    unsigned char c = (unsigned char)p[i];
    if ((c & 0xC0) == 0x80) continue;
    buf[k++] = (c == '\t') ? '\t' : ' ';
    chars++;
  }
  if (k + 1 < bufsize) buf[k++] = '^';
  buf[k < bufsize ? k : bufsize - 1] = '\0';
  return buf;
}

/* Optimal string alignment distance, bounded: returns > limit early. */
static size_t edit_distance(const char *a, const char *b, size_t limit) {
  size_t n = strlen(a), m = strlen(b);
  if ((n > m ? n - m : m - n) > limit || n > 256 || m > 256) return limit + 1;
  size_t prev2[257], prev[257], cur[257];
  for (size_t j = 0; j <= m; j++) prev[j] = j;
  for (size_t i = 1; i <= n; i++) {
    cur[0] = i;
    size_t rowmin = cur[0];
    for (size_t j = 1; j <= m; j++) {
      size_t cost = a[i - 1] != b[j - 1];
      size_t v = prev[j] + 1;
      if (cur[j - 1] + 1 < v) v = cur[j - 1] + 1;
      if (prev[j - 1] + cost < v) v = prev[j - 1] + cost;
      if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] &&
          prev2[j - 2] + 1 < v)
        v = prev2[j - 2] + 1;
      cur[j] = v;
      if (v < rowmin) rowmin = v;
    }
    if (rowmin > limit) return limit + 1;
    memcpy(prev2, prev, (m + 1) * sizeof *prev);
    memcpy(prev, cur, (m + 1) * sizeof *prev);
  }
  return prev[m];
}

const char *sl_closest(const char *word, const char *const *cands, size_t n) {
  size_t len = strlen(word);
  size_t limit = len <= 3 ? 1 : len <= 6 ? 2 : 3;
  const char *best = NULL;
  size_t bestd = limit + 1;
  for (size_t i = 0; i < n; i++) {
    size_t d = edit_distance(word, cands[i], bestd - 1 < limit ? bestd - 1 : limit);
    if (d < bestd) { bestd = d; best = cands[i]; if (d == 0) break; }
  }
  return best;
}
