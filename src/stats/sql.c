/*
** sql.c: the result of an SQL query on an SQLite database as a frame
** (Debian's libsqlite3).  The database is opened read-only.  INTEGER and
** REAL values are numbers, TEXT values text, NULL missing; a column that
** mixes numbers and text is categorical, its numbers written as SQLite
** writes them.  SQLite's own error messages are passed on verbatim.  A
** query ends at a row limit (an endless recursive query would fill the
** memory) and, through SQLite's progress handler, when the stop flag is
** set.
*/
#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sqlite3.h>
#include "frame_build.h"

#define PROGRESS_STEPS 10000   /* virtual machine steps between two polls of the stop flag */

/* Whether nothing but blanks and semicolons follow the first statement. */
static int only_blanks(const char *s) {
  for (; s && *s; s++)
    if (*s != ' ' && *s != '\t' && *s != '\n' && *s != '\r' && *s != ';') return 0;
  return 1;
}

/* The column names of a prepared statement, checked for duplicates. */
static int column_names(sqlite3_stmt *st, const char **names, int n, sl_error *e) {
  size_t empty = (size_t)n, k = 0, j = 0;
  for (int i = 0; i < n; i++) {
    names[i] = sqlite3_column_name(st, i);
    if (!names[i]) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    if (!names[i][0] && empty == (size_t)n) empty = (size_t)i;
  }
  int dup = sl_names_duplicate(names, (size_t)n, &k, &j, e);
  if (dup < 0) return e->code;
  if (empty < (size_t)n && (!dup || empty <= j))   /* the first fault from the left */
    return sl_error_set(e, SL_EARG, 0, (int)empty + 1, "column %zu of the result has no "
                        "name; name it with AS", empty + 1);
  if (dup)
    return sl_error_set(e, SL_EARG, 0, (int)j + 1, "columns %zu and %zu of the result are "
                        "both named '%s'; rename one with AS", k + 1, j + 1, names[j]);
  return SL_OK;
}

/* Cell (row r, column j) of the current result row into the builder. */
static int put_cell(sl_build *b, sqlite3_stmt *st, int j, size_t r, sl_error *e) {
  int t = sqlite3_column_type(st, j);
  if (t == SQLITE_NULL) return sl_build_missing(b, (size_t)j);
  if (t == SQLITE_BLOB)
    return sl_error_set(e, SL_EARG, (int)r + 1, j + 1, "row %zu, column %d ('%s'): a BLOB "
                        "value; select it as text (CAST(... AS TEXT)) or leave it out", r + 1,
                        j + 1, b->col[j].name);
  double v = t == SQLITE_TEXT ? 0 : sqlite3_column_double(st, j);
  const char *s = (const char *)sqlite3_column_text(st, j);   /* after the double */
  size_t n = (size_t)sqlite3_column_bytes(st, j);
  if (!s) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (memchr(s, '\0', n))
    return sl_error_set(e, SL_EARG, (int)r + 1, j + 1, "row %zu, column %d ('%s'): the text "
                        "holds a NUL byte", r + 1, j + 1, b->col[j].name);
  if (t == SQLITE_TEXT) return sl_build_text(b, (size_t)j, s, n, (int)r + 1, e);
  return sl_build_number(b, (size_t)j, v, s, n, e);
}

/* SQLite's progress handler: a nonzero return ends the statement with
** SQLITE_INTERRUPT, so that Ctrl-C stops a query between two rows too. */
static int poll_stop(void *stop) {
  return *(volatile int *)stop != 0;
}

/* The error of a step that gave neither a row nor the end. */
static int step_error(sqlite3 *db, int rc, sl_error *e) {
  if (rc == SQLITE_INTERRUPT) return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  return sl_error_set(e, SL_EARG, 0, 0, "%s", sqlite3_errmsg(db));
}

/* Step through the result: pass 1 fills the builder (at most limit rows),
** pass 2 (after a reset) gives the texts of numbers in early rows of
** categorical columns. */
static int step_all(sqlite3 *db, sqlite3_stmt *st, sl_build *b, int pass, size_t upto,
                    size_t limit, sl_error *e) {
  size_t r = 0;
  for (;;) {
    if (pass == 2 && r >= upto) return SL_OK;
    int rc = sqlite3_step(st);
    if (rc == SQLITE_DONE) return SL_OK;
    if (rc != SQLITE_ROW) return step_error(db, rc, e);
    if (pass == 1 && r == limit)
      return sl_error_set(e, SL_ELIMIT, 0, 0, "the query returned more than %zu rows; give "
                          "{limit = ...} to read more", limit);
    if (pass == 1) {
      if (sl_build_row(b, e) != SL_OK) return e->code;
      for (int j = 0; j < (int)b->ncol; j++)
        if (put_cell(b, st, j, r, e) != SL_OK) return e->code;
      b->nrow++;
    } else {
      for (size_t j = 0; j < b->ncol; j++) {
        if (!sl_build_wants(b, j, r)) continue;
        const char *s = (const char *)sqlite3_column_text(st, (int)j);
        size_t n = (size_t)sqlite3_column_bytes(st, (int)j);
        if (!s) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
        if (sl_build_refill(b, j, r, s, n, e) != SL_OK) return e->code;
      }
    }
    r++;
  }
}

/* Run the query into a frame. */
static sl_frame *run_query(sqlite3 *db, const char *query, size_t limit, sl_read_report *rep,
                           sl_error *e) {
  sqlite3_stmt *st = NULL;
  const char *tail = NULL;
  if (sqlite3_prepare_v2(db, query, -1, &st, &tail) != SQLITE_OK) {
    sl_error_set(e, SL_EARG, 0, 0, "%s", sqlite3_errmsg(db));
    return NULL;
  }
  if (!st) { sl_error_set(e, SL_EARG, 0, 0, "the query is empty"); return NULL; }
  sl_frame *f = NULL;
  sl_build b;
  memset(&b, 0, sizeof b);
  int n = sqlite3_column_count(st);
  const char **names = NULL;
  if (!only_blanks(tail)) {
    sl_error_set(e, SL_EARG, 0, 0, "one statement at a time: text follows the first ('%.40s')",
                 tail);
    goto done;
  }
  if (n == 0) { sl_error_set(e, SL_EARG, 0, 0, "the statement returns no columns (read_sql runs a query such as SELECT)"); goto done; }
  names = malloc((size_t)n * sizeof *names);
  if (!names) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if (column_names(st, names, n, e) != SL_OK) goto done;
  if (sl_build_init(&b, names, (size_t)n, e) != SL_OK) goto done;
  if (step_all(db, st, &b, 1, 0, limit, e) != SL_OK) goto done;
  if (b.nrow == 0) { sl_error_set(e, SL_EARG, 0, 0, "the query returned no rows"); goto done; }
  sl_build_decide(&b, SL_BUILD_SQL, 0, rep);
  size_t upto = sl_build_refill_rows(&b);
  if (upto > 0) {
    sqlite3_reset(st);
    if (step_all(db, st, &b, 2, upto, limit, e) != SL_OK) goto done;
  }
  f = sl_build_finish(&b, e);
done:
  free(names);
  sl_build_free(&b);
  sqlite3_finalize(st);
  return f;
}

sl_frame *sl_sql_read(const char *dbpath, const char *query, const sl_sql_opts *opts,
                      sl_read_report *rep, sl_error *e) {
  sl_read_report own;
  if (!rep) rep = &own;
  memset(rep, 0, sizeof *rep);
  /* the fingerprint first: it also tells a missing file from an SQL error */
  if (sl_fingerprint_file(dbpath, rep->sha256, &rep->bytes, e) != SL_OK) return NULL;
  if (rep->bytes == 0) {
    sl_error_set(e, SL_EARG, 0, 0, "%s is empty, not an SQLite database", dbpath);
    return NULL;
  }
  sqlite3 *db = NULL;
  if (sqlite3_open_v2(dbpath, &db, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK) {
    sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", dbpath,
                 db ? sqlite3_errmsg(db) : "out of memory");
    sqlite3_close(db);
    return NULL;
  }
  if (opts && opts->stop) sqlite3_progress_handler(db, PROGRESS_STEPS, poll_stop,
                                                   (void *)opts->stop);
  size_t limit = opts && opts->limit ? opts->limit : SL_SQL_MAX_ROWS;
  sl_frame *f = run_query(db, query, limit, rep, e);
  sqlite3_close(db);
  return f;
}
