/*
** db.h: connections to a database (an SQLite file through the SQLite that
** sluice links, or a PostgreSQL server through libpq) and lazy tables: a
** table or query whose columns and types are known but whose rows stay in
** the database.  Counting, summaries, the first rows and the fetch into a
** frame run as queries.  Plain C, no Lua.
**
** Read-only by design: an SQLite file is opened read-only; every
** PostgreSQL statement runs inside BEGIN TRANSACTION READ ONLY ... ROLLBACK
** on a session whose default is read-only too.  SQL text is never built by
** pasting a user's string: names are quoted by sl_db_quote_ident, values
** are bound parameters; a user's query is placed, whole, as a subquery and
** must be one statement.  Only standard SQL aggregates (COUNT, SUM, AVG,
** MIN, MAX, COUNT(DISTINCT)) and ORDER BY ... LIMIT ... OFFSET are used, so
** that any PostgreSQL-compatible engine answers the same queries.
**
** The estimation half of issue 14 builds on sl_db_sums: the weighted sums
** and cross-products of columns over the rows, rows missing a used column
** dropped and counted, in ONE aggregate query (what ols, logit by IRLS and
** the estimators' means and sandwich sums need).
*/
#ifndef SL_DB_H
#define SL_DB_H

#include <stddef.h>
#include <stdint.h>
#include "frame.h"

/* Documented limits. */
#define SL_DB_FETCH_MAX_ROWS 1000000   /* rows t:fetch() reads unless given a limit */
#define SL_DB_MAX_NAME 1024            /* bytes in a table or column name */
#define SL_DB_MAX_COLS 1600            /* columns of a lazy table (PostgreSQL's own limit) */
#define SL_DB_MAX_SUMS 64              /* columns in one sl_db_sums query */

enum sl_db_engine { SL_DB_SQLITE = 0, SL_DB_POSTGRES = 1 };

typedef struct sl_db sl_db;             /* a connection */
typedef struct sl_db_table sl_db_table; /* a lazy table; keeps no rows */

/* A PostgreSQL URI ("postgresql://..." or "postgres://...", as libpq
** takes it; a socket folder as ?host=/path) or else the path of an SQLite
** file (a regular file; never created).  stop, when not NULL, is polled:
** nonzero ends a running query with "interrupted". */
sl_db *sl_db_open(const char *target, volatile int *stop, sl_error *e);
/* Close the connection but keep the record, so that lazy tables of it
** say "the connection is closed"; sl_db_close frees it too. */
void sl_db_disconnect(sl_db *db);
int sl_db_is_open(const sl_db *db);
void sl_db_close(sl_db *db);
int sl_db_engine(const sl_db *db);
/* A one-line description for people: the engine and version, the file or
** the database, user and host; never a password.  Returns buf. */
char *sl_db_describe(const sl_db *db, char *buf, size_t size);

/* name as a quoted SQL identifier: in double quotes, each double quote
** doubled (SQL:2016 5.2 <delimited identifier>), in a new string to free.
** An empty name, one longer than SL_DB_MAX_NAME or one that is not UTF-8
** is an error. */
char *sl_db_quote_ident(const char *name, sl_error *e);

/* A lazy table of a table or view by its exact name (an unknown name is
** an error suggesting the closest table), or of one query (a SELECT; its
** text goes to the engine as it is, as a subquery). */
sl_db_table *sl_db_table_open(sl_db *db, const char *name, sl_error *e);
sl_db_table *sl_db_query_open(sl_db *db, const char *sql, sl_error *e);
void sl_db_table_free(sl_db_table *t);

/* Columns: name, type (SL_NUMERIC or SL_CATEGORICAL) and the engine's
** type name ("integer", "text", "double precision"; "" when none). */
size_t sl_db_ncol(const sl_db_table *t);
const char *sl_db_colname(const sl_db_table *t, size_t j);
int sl_db_coltype(const sl_db_table *t, size_t j);
const char *sl_db_colsql(const sl_db_table *t, size_t j);
/* The rows' key: a column of whole numbers (the engine's integer types)
** that tells the rows apart, from which the Poisson bootstrap draws each
** row's weights; -1 when none was given. */
int sl_db_set_key(sl_db_table *t, size_t j, sl_error *e);
int sl_db_key(const sl_db_table *t);
/* What the table reads: the quoted name, or the query's text. */
const char *sl_db_source(const sl_db_table *t, int *is_query);
sl_db *sl_db_of(const sl_db_table *t);

/* A frame of the table's columns (names and kinds) and no rows: what the
** checks written for frames read (to free with sl_frame_free). */
sl_frame *sl_db_schema(const sl_db_table *t, sl_error *e);

/* The number of rows (COUNT(*)). */
int sl_db_count(const sl_db_table *t, uint64_t *n, sl_error *e);

/* Per column, as sl_column_summary gives it for a frame (n, missing;
** numbers: mean and sd by two passes, the mean of the first corrected by
** the second; min, max; type-7 quartiles from the ordered values), and for
** a categorical column the number of distinct texts in levels.  s and
** levels hold sl_db_ncol(t) entries. */
int sl_db_summary(const sl_db_table *t, sl_summary *s, size_t *levels, sl_error *e);

/* The first rows as a frame: at most head rows (SIZE_MAX: all); more than
** limit rows is an error (limit 0: SL_DB_FETCH_MAX_ROWS).  The frame's
** types follow the data as read_sql's do. */
sl_frame *sl_db_fetch(const sl_db_table *t, size_t head, size_t limit, sl_error *e);

/* The weighted sums and cross-products of p numeric columns cols[] over
** the rows where every one of them (and the weight column w, when w >= 0)
** is present, in one aggregate query: sum[k] = SUM(w x_k), cross[k*p + l]
** = SUM(w x_k x_l) (symmetric), *wsum = SUM(w), *used the rows summed and
** *dropped the rows left out for a missing value.  With centre (p values,
** or NULL) each x_k is x_k - centre[k], bound as parameters. */
typedef struct sl_db_sums_out {
  double wsum;
  uint64_t used, dropped;
} sl_db_sums_out;
int sl_db_sums(const sl_db_table *t, const int *cols, size_t p, int w, const double *centre,
               double *sum, double *cross, sl_db_sums_out *out, sl_error *e);

#endif
