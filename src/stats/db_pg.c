/*
** db_pg.c: the PostgreSQL engine of db.c (libpq, Debian's libpq-dev).
** The session is read-only by default (SET SESSION CHARACTERISTICS), and
** every statement runs in its own BEGIN TRANSACTION READ ONLY ... ROLLBACK,
** so that nothing a query does (a function that writes, a set_config) can
** outlive it.  Results come as text: numbers are selected as double
** precision, whose text PostgreSQL writes exactly (shortest round trip, 12
** and later).  The server's own message is relayed, its first line, with a
** lost connection said as such.  A query waits in poll(), so that the stop
** flag can cancel it on the server.
*/
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <libpq-fe.h>
#include "db_internal.h"

#define POLL_MS 100          /* how often a waiting query looks at the stop flag */

/* Type OIDs of pg_type (src/include/catalog/pg_type.dat) that are numbers. */
static const struct { unsigned oid; const char *name; int number; } pg_types[] = {
  {16, "boolean", 1}, {20, "bigint", 1}, {21, "smallint", 1}, {23, "integer", 1},
  {26, "oid", 1}, {700, "real", 1}, {701, "double precision", 1}, {1700, "numeric", 1},
  {18, "\"char\"", 0}, {19, "name", 0}, {25, "text", 0}, {1042, "character", 0},
  {1043, "character varying", 0}, {1082, "date", 0}, {1083, "time", 0},
  {1114, "timestamp", 0}, {1184, "timestamp with time zone", 0}, {2950, "uuid", 0},
  {114, "json", 0}, {3802, "jsonb", 0},
};

/* Notices (an identifier cut to 63 bytes, say) are not printed. */
static void no_notice(void *arg, const char *msg) {
  (void)arg; (void)msg;
}

/* The first line of a libpq message, without "ERROR:  " in front. */
static void first_line(const char *msg, char *out, size_t size) {
  if (!msg) msg = "";
  if (strncmp(msg, "ERROR:  ", 8) == 0) msg += 8;
  if (strncmp(msg, "FATAL:  ", 8) == 0) msg += 8;
  size_t n = strcspn(msg, "\n");
  if (n >= size) n = size - 1;
  memcpy(out, msg, n);
  out[n] = 0;
}

/* The error of a failed result or connection, as one line. */
static int pg_error(PGconn *c, const PGresult *res, sl_error *e) {
  char line[SL_MSG_MAX - 64];
  if (PQstatus(c) == CONNECTION_BAD) {
    first_line(PQerrorMessage(c), line, sizeof line);
    return sl_error_set(e, SL_EIO, 0, 0, "the connection to the PostgreSQL server was lost "
                        "(%s); connect again", line[0] ? line : "no reason given");
  }
  const char *primary = res ? PQresultErrorField(res, PG_DIAG_MESSAGE_PRIMARY) : NULL;
  first_line(primary ? primary : PQerrorMessage(c), line, sizeof line);
  if (strcmp(line, "canceling statement due to user request") == 0)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "interrupted");
  return sl_error_set(e, SL_EARG, 0, 0, "PostgreSQL: %s", line);
}

/* Wait for the result of a sent statement, cancelling it when stop is set. */
static PGresult *wait_result(sl_db *db, int *cancelled) {
  PGconn *c = db->h;
  while (PQisBusy(c)) {
    struct pollfd pfd = {PQsocket(c), POLLIN, 0};
    if (pfd.fd < 0) break;
    if (poll(&pfd, 1, POLL_MS) < 0) continue;
    if (db->stop && *db->stop && !*cancelled) {
      PGcancel *k = PQgetCancel(c);
      char buf[256];
      if (k) { PQcancel(k, buf, sizeof buf); PQfreeCancel(k); }
      *cancelled = 1;
    }
    if (!PQconsumeInput(c)) break;
  }
  return PQgetResult(c);
}

/* Run one command without parameters (BEGIN, ROLLBACK). */
static int command(sl_db *db, const char *sql, sl_error *e) {
  PGresult *res = PQexec(db->h, sql);
  int ok = PQresultStatus(res) == PGRES_COMMAND_OK;
  int status = ok ? SL_OK : pg_error(db->h, res, e);
  PQclear(res);
  return status;
}

/* The parameters in text form (a double's "%.17g" reads back exactly). */
typedef struct params { char (*text)[32]; const char **v; Oid *type; } params;
static void params_free(params *out) { free(out->text); free(out->v); free(out->type); }
static int format_params(const sl_db_param *p, size_t np, params *out, sl_error *e) {
  out->text = malloc((np + 1) * sizeof *out->text);
  out->v = malloc((np + 1) * sizeof *out->v);
  out->type = malloc((np + 1) * sizeof *out->type);
  if (!out->text || !out->v || !out->type) {
    params_free(out);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t k = 0; k < np; k++) {
    if (p[k].text) { out->v[k] = p[k].text; out->type[k] = 25; continue; }   /* text */
    if (p[k].is_int) snprintf(out->text[k], sizeof out->text[k], "%lld", (long long)p[k].i);
    else snprintf(out->text[k], sizeof out->text[k], "%.17g", p[k].x);
    out->v[k] = out->text[k];
    out->type[k] = p[k].is_int ? 20 : 701;   /* bigint, double precision */
  }
  return SL_OK;
}

/* Send sql and collect its single result into *res (a tuples result). */
static int run(sl_db *db, const char *sql, const sl_db_param *p, size_t np, PGresult **out,
               sl_error *e) {
  params pp;
  *out = NULL;
  if (np > 65535) return sl_error_set(e, SL_ELIMIT, 0, 0, "too many parameters (%zu)", np);
  int status = format_params(p, np, &pp, e);
  if (status != SL_OK) return status;
  if (!PQsendQueryParams(db->h, sql, (int)np, pp.type, pp.v, NULL, NULL, 0))
    status = pg_error(db->h, NULL, e);
  params_free(&pp);
  if (status != SL_OK) return status;
  int cancelled = 0;
  PGresult *res;
  while ((res = wait_result(db, &cancelled)) != NULL) {
    if (!*out && status == SL_OK) {
      if (PQresultStatus(res) == PGRES_TUPLES_OK) { *out = res; continue; }
      status = pg_error(db->h, res, e);
    }
    PQclear(res);
    if (PQstatus(db->h) == CONNECTION_BAD) break;
  }
  if (status == SL_OK && !*out) status = pg_error(db->h, NULL, e);
  if (status != SL_OK) { PQclear(*out); *out = NULL; }
  return status;
}

static int p_exec(sl_db *db, const char *sql, const sl_db_param *p, size_t np,
                  sl_db_row_fn fn, void *ctx, sl_error *e) {
  int status = command(db, "BEGIN TRANSACTION READ ONLY", e);
  if (status != SL_OK) return status;
  PGresult *res = NULL;
  status = run(db, sql, p, np, &res, e);
  sl_db_row r = {db, res, 0};
  int n = res ? PQntuples(res) : 0;
  for (int i = 0; status == SL_OK && i < n; i++) {
    r.row = i;
    status = fn(ctx, &r, (size_t)i, e);
  }
  PQclear(res);
  if (PQstatus(db->h) != CONNECTION_BAD) {
    sl_error e2;
    int s2 = command(db, "ROLLBACK", &e2);
    if (status == SL_OK || status == SL_DB_STOP) { if (s2 != SL_OK) { *e = e2; status = s2; } }
  }
  return status == SL_DB_STOP ? SL_OK : status;
}

/* The name and whether it is a number, of type oid. */
static const char *type_of(Oid oid, int *number) {
  for (size_t k = 0; k < sizeof pg_types / sizeof pg_types[0]; k++)
    if (pg_types[k].oid == oid) { *number = pg_types[k].number; return pg_types[k].name; }
  *number = 0;
  return NULL;
}

static int p_describe(sl_db *db, const char *sql, sl_db_desc *d, sl_error *e) {
  int status = command(db, "BEGIN TRANSACTION READ ONLY", e);
  if (status != SL_OK) return status;
  PGresult *res = PQprepare(db->h, "", sql, 0, NULL);
  if (PQresultStatus(res) != PGRES_COMMAND_OK) status = pg_error(db->h, res, e);
  PQclear(res);
  res = NULL;
  if (status == SL_OK) {
    res = PQdescribePrepared(db->h, "");
    if (PQresultStatus(res) != PGRES_COMMAND_OK) status = pg_error(db->h, res, e);
  }
  size_t n = status == SL_OK ? (size_t)PQnfields(res) : 0;
  if (status == SL_OK) {
    d->n = n;
    d->names = calloc(n + 1, sizeof *d->names);
    d->sqltypes = calloc(n + 1, sizeof *d->sqltypes);
    d->types = calloc(n + 1, sizeof *d->types);
    d->pgbool = calloc(n + 1, sizeof *d->pgbool);
    if (!d->names || !d->sqltypes || !d->types || !d->pgbool)
      status = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  for (size_t j = 0; status == SL_OK && j < n; j++) {
    Oid oid = PQftype(res, (int)j);
    int number;
    const char *tn = type_of(oid, &number);
    char other[32];
    snprintf(other, sizeof other, "type %u", (unsigned)oid);
    d->names[j] = strdup(PQfname(res, (int)j));
    d->sqltypes[j] = strdup(tn ? tn : other);
    d->types[j] = number ? SL_NUMERIC : SL_CATEGORICAL;
    d->pgbool[j] = oid == 16;
    if (!d->names[j] || !d->sqltypes[j]) status = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  PQclear(res);
  if (PQstatus(db->h) != CONNECTION_BAD) {
    sl_error e2;
    int s2 = command(db, "ROLLBACK", &e2);
    if (status == SL_OK && s2 != SL_OK) { *e = e2; status = s2; }
  }
  return status;
}

static int p_kind(const sl_db_row *r, int j) {
  if (PQgetisnull(r->cur, r->row, j)) return SL_DB_CELL_NULL;
  int number;
  type_of(PQftype(r->cur, j), &number);
  return number ? SL_DB_CELL_NUMBER : SL_DB_CELL_TEXT;
}

static double p_number(const sl_db_row *r, int j) {
  const char *s = PQgetvalue(r->cur, r->row, j);
  if (s[0] == 't' && !s[1]) return 1;   /* a boolean */
  if (s[0] == 'f' && !s[1]) return 0;
  return strtod(s, NULL);   /* "Infinity", "-Infinity" and "NaN" too */
}

static const char *p_text(const sl_db_row *r, int j, size_t *len) {
  *len = (size_t)PQgetlength(r->cur, r->row, j);
  return PQgetvalue(r->cur, r->row, j);
}

static void p_disconnect(sl_db *db) {
  PQfinish(db->h);
  db->h = NULL;
}

/* "PostgreSQL 15.18 database d as user u on host h port p": the
** connection's own settings, never its password. */
static char *p_label(const sl_db *db, char *buf, size_t size) {
  PGconn *c = db->h;
  const char *host = PQhost(c), *port = PQport(c);
  int v = db->version;
  snprintf(buf, size, "PostgreSQL %d.%d database \"%s\" as user \"%s\" %s %s%s%s",
           v / 10000, v % 10000, PQdb(c), PQuser(c),
           host && host[0] == '/' ? "through the socket folder" : "on host",
           host ? host : "", port && port[0] ? " port " : "", port ? port : "");
  return buf;
}

static const sl_db_ops pg_ops = {
  "PostgreSQL", p_exec, p_describe,
  "SELECT table_name FROM information_schema.tables WHERE table_schema NOT IN "
  "('pg_catalog', 'information_schema') ORDER BY table_name",
  p_kind, p_number, p_text, p_disconnect, p_label,
};

int sl_db_pg_open(sl_db *db, const char *uri, sl_error *e) {
  char *err = NULL;
  PQconninfoOption *opts = PQconninfoParse(uri, &err);
  if (!opts) {
    char line[SL_MSG_MAX - 64];
    first_line(err ? err : "out of memory", line, sizeof line);
    PQfreemem(err);
    return sl_error_set(e, SL_EARG, 0, 0, "not a PostgreSQL URI that libpq takes: %s", line);
  }
  PQconninfoFree(opts);
  const char *keys[] = {"dbname", "fallback_application_name", "client_encoding", NULL};
  const char *vals[] = {uri, "sluice", "UTF8", NULL};
  PGconn *c = PQconnectdbParams(keys, vals, 1);
  if (!c) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  if (PQstatus(c) != CONNECTION_OK) {
    char line[SL_MSG_MAX - 64];
    const char *msg = PQerrorMessage(c);
    const char *why = strstr(msg, "failed: ");   /* "connection to server ... failed: why" */
    first_line(why ? why + 8 : msg, line, sizeof line);
    PQfinish(c);
    return sl_error_set(e, SL_EIO, 0, 0, "cannot connect to PostgreSQL: %s", line);
  }
  PQsetNoticeProcessor(c, no_notice, NULL);
  db->h = c;
  db->ops = &pg_ops;
  db->engine = SL_DB_POSTGRES;
  db->version = PQserverVersion(c);
  sl_error e2;
  if (command(db, "SET SESSION CHARACTERISTICS AS TRANSACTION READ ONLY", &e2) != SL_OK) {
    *e = e2;
    p_disconnect(db);
    return e->code;
  }
  /* the estimators' queries are long expressions over few rows of output:
  ** compiling them (JIT, PostgreSQL 11 on) costs seconds and saves little.
  ** An engine without the setting ignores the failure. */
  if (db->version >= 110000) command(db, "SET jit = off", &e2);
  return SL_OK;
}
