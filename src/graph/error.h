/*
** error.h: the error record every sluice library call fills instead of
** printing or exiting.  Positions are 1-based; 0 means "no position".
*/
#ifndef SL_ERROR_H
#define SL_ERROR_H

#include <stddef.h>

#define SL_MSG_MAX 512

enum sl_status {
  SL_OK = 0,
  SL_ESYNTAX,   /* bad notation: line/col set */
  SL_ECYCLE,    /* directed cycle: msg holds the cycle */
  SL_ENAME,     /* unknown node name */
  SL_EARG,      /* bad argument value */
  SL_ENOMEM,    /* allocation failed */
  SL_EIO,       /* file could not be read or written */
  SL_ELIMIT     /* a documented limit was reached */
};

typedef struct sl_error {
  int code;              /* an sl_status */
  int line, col;         /* position in the source text, 1-based, 0 if none */
  char msg[SL_MSG_MAX];  /* one line, no trailing newline */
} sl_error;

/* Record an error (printf-style message); returns code for tail calls.
** Every library function that takes an sl_error * needs a non-NULL one. */
int sl_error_set(sl_error *e, int code, int line, int col, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 5, 6)))
#endif
  ;

/* Format "line L, column C: msg" plus the source line and a caret under
** column C into buf.  src may be NULL (then no caret).  Returns buf. */
char *sl_error_format(const sl_error *e, const char *src, size_t srclen,
                      char *buf, size_t bufsize);

/* The closest of n candidate names to word by edit distance, or NULL when
** none is near enough to be a useful suggestion. */
const char *sl_closest(const char *word, const char *const *cands, size_t n);

#endif
