/*
** scan.c: a small state machine over Lua's strings and comments.  It does
** not tokenize; it only follows quotes, long brackets and comments.
*/
#include <string.h>

#include "scan.h"

/* Start in code. */
void scan_init(scan *c) {
  memset(c, 0, sizeof *c);
  c->kind = SCAN_CODE;
}

/* The level of a long bracket "[==[" opening at s, or -1 when none. */
static int long_open(const char *s, size_t n) {
  size_t i = 1;
  while (i < n && s[i] == '=')
    i++;
  return i < n && s[i] == '[' ? (int)(i - 1) : -1;
}

/* Does s begin with the closing bracket "]==]" of the given level? */
static int long_close(const char *s, size_t n, int level) {
  size_t need = (size_t)level + 2;
  if (n < need || s[need - 1] != ']')
    return 0;
  for (size_t i = 1; i + 1 < need; i++)
    if (s[i] != '=')
      return 0;
  return 1;
}

/* One step in code; returns how many bytes it used. */
static size_t step_code(scan *c, const char *s, size_t n, size_t i) {
  int level;
  if (s[i] == '"' || s[i] == '\'') {
    c->kind = SCAN_SHORT;
    c->quote = s[i];
    c->start = i + 1;
    return 1;
  }
  if (s[i] == '[' && (level = long_open(s + i, n - i)) >= 0) {
    c->kind = SCAN_LONG;
    c->level = level;
    c->start = i + (size_t)level + 2;
    return (size_t)level + 2;
  }
  if (s[i] == '-' && i + 1 < n && s[i + 1] == '-') {
    if (i + 2 < n && s[i + 2] == '[' &&
        (level = long_open(s + i + 2, n - i - 2)) >= 0) {
      c->kind = SCAN_LONG_NOTE;
      c->level = level;
      return (size_t)level + 4;
    }
    c->kind = SCAN_LINE_NOTE;
    return 2;
  }
  return 1;
}

/* One step anywhere; returns how many bytes it used. */
static size_t step(scan *c, const char *s, size_t n, size_t i) {
  switch (c->kind) {
  case SCAN_CODE:
    return step_code(c, s, n, i);
  case SCAN_SHORT:
    if (s[i] == '\\')
      return i + 1 < n ? 2 : 1;
    if (s[i] == c->quote || s[i] == '\n')
      c->kind = SCAN_CODE;
    return 1;
  case SCAN_LONG:
  case SCAN_LONG_NOTE:
    if (s[i] == ']' && long_close(s + i, n - i, c->level)) {
      c->kind = SCAN_CODE;
      return (size_t)c->level + 2;
    }
    return 1;
  default:  /* SCAN_LINE_NOTE */
    if (s[i] == '\n')
      c->kind = SCAN_CODE;
    return 1;
  }
}

/* Step through a piece of text. */
void scan_feed(scan *c, const char *s, size_t n) {
  c->start = 0;
  for (size_t i = 0; i < n; )
    i += step(c, s, n, i);
}
