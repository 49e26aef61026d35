/*
** db_sqlite.c: the SQLite engine of db.c (Debian's libsqlite3).  The file
** is opened read-only and never created; a statement that could write is
** refused before it runs (sqlite3_stmt_readonly).  A declared column type
** gives the column's type by SQLite's affinity rules (datatype3.html,
** section 3.1); an expression without one is typed by its first value.
*/
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>
#include <sqlite3.h>
#include "db_internal.h"

#define PROGRESS_STEPS 10000   /* virtual machine steps between two polls of the stop flag */

/* SQLite's progress handler: nonzero ends the statement (Ctrl-C). */
static int poll_stop(void *stop) {
  return *(volatile int *)stop != 0;
}

/* The error of the last call on the connection, in sl_error form. */
static int sqlite_error(sqlite3 *h, int rc, sl_error *e) {
  if (rc == SQLITE_INTERRUPT) return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  return sl_error_set(e, SL_EARG, 0, 0, "SQLite: %s", sqlite3_errmsg(h));
}

/* Prepare one statement that only reads, and bind its parameters. */
static int prepare(sqlite3 *h, const char *sql, const sl_db_param *p, size_t np,
                   sqlite3_stmt **st, sl_error *e) {
  const char *tail = NULL;
  int rc = sqlite3_prepare_v2(h, sql, -1, st, &tail);
  if (rc != SQLITE_OK) return sqlite_error(h, rc, e);
  if (!*st) return sl_error_set(e, SL_EARG, 0, 0, "the query is empty");
  if (tail && tail[strspn(tail, " \t\r\n;")])
    return sl_error_set(e, SL_EARG, 0, 0, "one statement at a time: text follows the "
                        "first ('%.40s')", tail);
  if (!sqlite3_stmt_readonly(*st))
    return sl_error_set(e, SL_EARG, 0, 0, "the statement would change the database; "
                        "sluice only reads");
  for (size_t k = 0; k < np; k++) {
    rc = p[k].text ? sqlite3_bind_text(*st, (int)k + 1, p[k].text, -1, SQLITE_TRANSIENT)
       : p[k].is_int ? sqlite3_bind_int64(*st, (int)k + 1, p[k].i)
                     : sqlite3_bind_double(*st, (int)k + 1, p[k].x);
    if (rc != SQLITE_OK) return sqlite_error(h, rc, e);
  }
  return SL_OK;
}

static int s_exec(sl_db *db, const char *sql, const sl_db_param *p, size_t np,
                  sl_db_row_fn fn, void *ctx, sl_error *e) {
  sqlite3 *h = db->h;
  sqlite3_stmt *st = NULL;
  int status = prepare(h, sql, p, np, &st, e);
  sl_db_row r = {db, NULL, 0};
  for (size_t i = 0; status == SL_OK; i++) {
    int rc = sqlite3_step(st);
    if (rc == SQLITE_DONE) break;
    if (rc != SQLITE_ROW) { status = sqlite_error(h, rc, e); break; }
    r.cur = st;
    r.row = (int)i;
    status = fn(ctx, &r, i, e);
  }
  sqlite3_finalize(st);
  return status == SL_DB_STOP ? SL_OK : status;
}

/* The type of a declared column type by the affinity rules; -1: none. */
static int affinity_type(const char *decl) {
  if (!decl || !decl[0]) return -1;
  char up[64];
  size_t n = strlen(decl) < sizeof up - 1 ? strlen(decl) : sizeof up - 1;
  for (size_t i = 0; i < n; i++) up[i] = (char)(decl[i] >= 'a' && decl[i] <= 'z' ? decl[i] - 32 : decl[i]);
  up[n] = 0;
  if (strstr(up, "INT")) return SL_NUMERIC;
  if (strstr(up, "CHAR") || strstr(up, "CLOB") || strstr(up, "TEXT")) return SL_CATEGORICAL;
  if (strstr(up, "BLOB")) return -1;
  return SL_NUMERIC;   /* REAL, FLOA, DOUB and NUMERIC affinity */
}

static int s_describe(sl_db *db, const char *sql, sl_db_desc *d, sl_error *e) {
  sqlite3_stmt *st = NULL;
  int status = prepare(db->h, sql, NULL, 0, &st, e);
  if (status != SL_OK) { sqlite3_finalize(st); return status; }
  size_t n = (size_t)sqlite3_column_count(st);
  d->n = n;
  d->names = calloc(n + 1, sizeof *d->names);
  d->sqltypes = calloc(n + 1, sizeof *d->sqltypes);
  d->types = calloc(n + 1, sizeof *d->types);
  d->pgbool = calloc(n + 1, sizeof *d->pgbool);
  if (!d->names || !d->sqltypes || !d->types || !d->pgbool) goto nomem;
  for (size_t j = 0; j < n; j++) {
    const char *name = sqlite3_column_name(st, (int)j);
    const char *decl = sqlite3_column_decltype(st, (int)j);
    d->names[j] = strdup(name ? name : "");
    d->sqltypes[j] = strdup(decl ? decl : "");
    if (!d->names[j] || !d->sqltypes[j]) goto nomem;
    d->types[j] = affinity_type(decl);
  }
  sqlite3_finalize(st);
  return SL_OK;
nomem:
  sqlite3_finalize(st);
  return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
}

static int s_kind(const sl_db_row *r, int j) {
  switch (sqlite3_column_type(r->cur, j)) {
    case SQLITE_NULL: return SL_DB_CELL_NULL;
    case SQLITE_INTEGER: case SQLITE_FLOAT: return SL_DB_CELL_NUMBER;
    case SQLITE_TEXT: return SL_DB_CELL_TEXT;
    default: return SL_DB_CELL_BLOB;
  }
}

static double s_number(const sl_db_row *r, int j) {
  return sqlite3_column_double(r->cur, j);
}

/* The text of a cell (numbers as SQLite writes them); call after s_number. */
static const char *s_text(const sl_db_row *r, int j, size_t *len) {
  const char *s = (const char *)sqlite3_column_text(r->cur, j);
  *len = (size_t)sqlite3_column_bytes(r->cur, j);
  return s;
}

static void s_disconnect(sl_db *db) {
  sqlite3_close(db->h);
  db->h = NULL;
}

static char *s_label(const sl_db *db, char *buf, size_t size) {
  snprintf(buf, size, "SQLite %s file %s", sqlite3_libversion(), db->path);
  return buf;
}

static const sl_db_ops sqlite_ops = {
  "SQLite", s_exec, s_describe,
  "SELECT name FROM sqlite_master WHERE type IN ('table', 'view') ORDER BY name",
  s_kind, s_number, s_text, s_disconnect, s_label,
};

int sl_db_sqlite_open(sl_db *db, const char *path, sl_error *e) {
  struct stat sb;
  if (stat(path, &sb) != 0)
    return sl_error_set(e, SL_EIO, 0, 0, "no file '%s' (give an SQLite file, or a URI "
                        "postgresql://...)", path);
  if (!S_ISREG(sb.st_mode))
    return sl_error_set(e, SL_EIO, 0, 0, "'%s' is not a regular file, not an SQLite "
                        "database", path);
  sqlite3 *h = NULL;
  int rc = sqlite3_open_v2(path, &h, SQLITE_OPEN_READONLY, NULL);
  if (rc == SQLITE_OK)   /* a file that is not a database shows on the first read */
    rc = sqlite3_exec(h, "SELECT count(*) FROM sqlite_master", NULL, NULL, NULL);
  if (rc != SQLITE_OK) {
    sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s' as an SQLite database: %s", path,
                 h ? sqlite3_errmsg(h) : "out of memory");
    sqlite3_close(h);
    return e->code;
  }
  db->path = strdup(path);
  if (!db->path) { sqlite3_close(h); return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); }
  db->h = h;
  db->ops = &sqlite_ops;
  db->engine = SL_DB_SQLITE;
  if (db->stop) sqlite3_progress_handler(h, PROGRESS_STEPS, poll_stop, (void *)db->stop);
  return SL_OK;
}
