/*
** scan.h: where the end of a piece of Lua source stands: in code, in a
** string or in a comment.  Completion needs to know.
*/
#ifndef SLUICE_SCAN_H
#define SLUICE_SCAN_H

#include <stddef.h>

enum scan_kind {
  SCAN_CODE,
  SCAN_SHORT,      /* inside "..." or '...' */
  SCAN_LONG,       /* inside [[...]] or [=[...]=] */
  SCAN_LINE_NOTE,  /* inside -- to the end of the line */
  SCAN_LONG_NOTE   /* inside --[[...]] */
};

typedef struct scan {
  int kind;        /* an enum scan_kind */
  int quote;       /* the quote of a short string */
  int level;       /* the number of '=' of a long bracket */
  size_t start;    /* where the string's text begins in the last piece */
} scan;

void scan_init(scan *c);

/* Advance over s[0..n); pieces fed in turn continue one another. */
void scan_feed(scan *c, const char *s, size_t n);

#endif
