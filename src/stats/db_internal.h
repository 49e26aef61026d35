/*
** db_internal.h: what db.c (the engine-neutral queries) shares with the
** two engines, db_sqlite.c and db_pg.c.  Internal to src/stats.
*/
#ifndef SL_DB_INTERNAL_H
#define SL_DB_INTERNAL_H

#include "db.h"

/* The kind of a cell of a result row. */
enum { SL_DB_CELL_NULL = 0, SL_DB_CELL_NUMBER, SL_DB_CELL_TEXT, SL_DB_CELL_BLOB };

/* A row of a running query, as the engine's cursor sees it. */
typedef struct sl_db_row { const sl_db *db; void *cur; int row; } sl_db_row;

/* Called once per row (i from 0); returns SL_OK to go on, SL_DB_STOP to end
** the query early without an error, or an error code with e filled. */
#define SL_DB_STOP (-1)
typedef int (*sl_db_row_fn)(void *ctx, const sl_db_row *r, size_t i, sl_error *e);

/* A bound parameter: a double, a 64-bit integer, or a text when text is
** not NULL. */
typedef struct sl_db_param { int is_int; double x; int64_t i; const char *text; } sl_db_param;

/* Columns of a described statement; types SL_NUMERIC, SL_CATEGORICAL, or
** -1 when the engine cannot tell without looking at a value. */
typedef struct sl_db_desc {
  size_t n;
  char **names, **sqltypes;
  int *types;
  int *pgbool;   /* PostgreSQL boolean: a number through CAST(... AS INTEGER) */
} sl_db_desc;
void sl_db_desc_free(sl_db_desc *d);

typedef struct sl_db_ops {
  const char *engine;          /* "SQLite", "PostgreSQL" */
  int (*exec)(sl_db *db, const char *sql, const sl_db_param *p, size_t np, sl_db_row_fn fn,
              void *ctx, sl_error *e);
  int (*describe)(sl_db *db, const char *sql, sl_db_desc *d, sl_error *e);
  /* the SQL that lists the names of tables and views, one column */
  const char *tables_sql;
  int (*kind)(const sl_db_row *r, int j);
  double (*number)(const sl_db_row *r, int j);
  const char *(*text)(const sl_db_row *r, int j, size_t *len);
  void (*disconnect)(sl_db *db);
  char *(*label)(const sl_db *db, char *buf, size_t size);
} sl_db_ops;

struct sl_db {
  const sl_db_ops *ops;
  int engine;
  volatile int *stop;
  void *h;                     /* sqlite3 * or PGconn *; NULL once closed */
  char *path;                  /* SQLite: the file */
  int version;                 /* PostgreSQL: PQserverVersion */
  char label[256];             /* sl_db_describe's text, made while connected */
};

/* Placeholder k (1-based) in the engine's syntax: "?k" or "$k". */
const char *sl_db_placeholder(const sl_db *db, int k, char buf[16]);

/* A growing string for building SQL (db.c, db_regress.c); after a failure
** it stays bad and sl_db_buf_done returns NULL with e filled. */
typedef struct sl_db_buf { char *s; size_t n, cap; int bad; } sl_db_buf;
void sl_db_buf_add(sl_db_buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
char *sl_db_buf_done(sl_db_buf *b, sl_error *e);

/* What follows FROM for a lazy table, and column j's value in SQL (its
** quoted name, cast to a double on PostgreSQL). */
const char *sl_db_from(const sl_db_table *t);
const char *sl_db_expr(const sl_db_table *t, size_t j);

/* Run sql, a query of one row of n numbers (NULL as NaN), into v. */
int sl_db_numbers(const sl_db_table *t, const char *sql, const sl_db_param *p, size_t np,
                  double *v, size_t n, sl_error *e);

/* What closes a subquery in FROM so that the engine keeps it whole: both
** engines would otherwise pull it up and copy each of its expressions into
** every place that reads it (a chain of values, exponentially often).
** OFFSET 0 is standard SQL (SQL:2008); SQLite needs a LIMIT before it. */
const char *sl_db_fence(const sl_db *db);

/* Run sql on the lazy table's connection, fn once per result row; a
** cell's number (NaN for NULL). */
int sl_db_rows(const sl_db_table *t, const char *sql, const sl_db_param *p, size_t np,
               sl_db_row_fn fn, void *ctx, sl_error *e);
double sl_db_cell(const sl_db_row *r, int j);

/* The engines (db_sqlite.c, db_pg.c): fill db or return an error. */
int sl_db_sqlite_open(sl_db *db, const char *path, sl_error *e);
int sl_db_pg_open(sl_db *db, const char *uri, sl_error *e);

#endif
