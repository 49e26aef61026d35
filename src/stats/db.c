/*
** db.c: connections and lazy tables, engine-neutral: every query here is
** built from quoted names and placeholders, and run through the engine's
** exec (db_sqlite.c, db_pg.c) with a callback per result row.
*/
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "db_internal.h"
#include "frame_build.h"

struct sl_db_table {
  sl_db *db;
  int is_query;
  char *text;        /* the name as given, or the query */
  char *from;        /* what follows FROM: the quoted name, or "(query) AS sl_source" */
  sl_db_desc d;
  char **expr;       /* per column: its value in SQL (quoted name, cast for numbers) */
  int key;           /* the rows' integer key column, or -1 */
};

/* ---- text ---- */

/* Append printf-style text. */
void sl_db_buf_add(sl_db_buf *b, const char *fmt, ...) {
  if (b->bad) return;
  for (;;) {
    va_list ap;
    va_start(ap, fmt);
    int k = vsnprintf(b->s ? b->s + b->n : NULL, b->s ? b->cap - b->n : 0, fmt, ap);
    va_end(ap);
    if (k < 0) { b->bad = 1; return; }
    if (b->s && b->n + (size_t)k < b->cap) { b->n += (size_t)k; return; }
    size_t cap = (b->cap ? b->cap * 2 : 256) + (size_t)k;
    char *s = realloc(b->s, cap);
    if (!s) { b->bad = 1; return; }
    b->s = s;
    b->cap = cap;
  }
}

/* The string built, or NULL (e filled) when memory ran out. */
char *sl_db_buf_done(sl_db_buf *b, sl_error *e) {
  if (b->bad || !b->s) {
    free(b->s);
    sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return NULL;
  }
  return b->s;
}

/* Whether s is well-formed UTF-8 (RFC 3629: no overlongs, surrogates or
** code points past U+10FFFF). */
static int valid_utf8(const unsigned char *s) {
  while (*s) {
    unsigned c = *s;
    int n = c < 0x80 ? 0 : (c >> 5) == 6 ? 1 : (c >> 4) == 14 ? 2 : (c >> 3) == 30 ? 3 : -1;
    if (n < 0 || (n == 1 && c < 0xC2)) return 0;
    unsigned cp = n == 0 ? c : c & (0x3Fu >> n);
    for (int k = 1; k <= n; k++) {
      if ((s[k] & 0xC0) != 0x80) return 0;
      cp = (cp << 6) | (s[k] & 0x3F);
    }
    if ((n == 2 && (cp < 0x800 || (cp >= 0xD800 && cp <= 0xDFFF))) ||
        (n == 3 && (cp < 0x10000 || cp > 0x10FFFF))) return 0;
    s += n + 1;
  }
  return 1;
}

char *sl_db_quote_ident(const char *name, sl_error *e) {
  size_t n = strlen(name);
  if (n == 0) { sl_error_set(e, SL_EARG, 0, 0, "a name cannot be empty"); return NULL; }
  if (n > SL_DB_MAX_NAME) {
    sl_error_set(e, SL_ELIMIT, 0, 0, "a name of %zu bytes is longer than %d", n, SL_DB_MAX_NAME);
    return NULL;
  }
  if (!valid_utf8((const unsigned char *)name)) {
    sl_error_set(e, SL_EARG, 0, 0, "the name is not valid UTF-8");
    return NULL;
  }
  char *q = malloc(2 * n + 3), *p = q;
  if (!q) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  *p++ = '"';
  for (const char *s = name; *s; s++) {
    if (*s == '"') *p++ = '"';
    *p++ = *s;
  }
  *p++ = '"';
  *p = 0;
  return q;
}

const char *sl_db_placeholder(const sl_db *db, int k, char buf[16]) {
  snprintf(buf, 16, "%c%d", db->engine == SL_DB_POSTGRES ? '$' : '?', k);
  return buf;
}

/* ---- connections ---- */

sl_db *sl_db_open(const char *target, volatile int *stop, sl_error *e) {
  sl_db *db = calloc(1, sizeof *db);
  if (!db) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  db->stop = stop;
  int pg = strncmp(target, "postgresql://", 13) == 0 || strncmp(target, "postgres://", 11) == 0;
  int status = target[0] == 0 ? sl_error_set(e, SL_EARG, 0, 0, "give an SQLite file or a "
                                             "URI postgresql://...; got an empty text")
             : pg ? sl_db_pg_open(db, target, e) : sl_db_sqlite_open(db, target, e);
  if (status != SL_OK) { free(db->path); free(db); return NULL; }
  db->ops->label(db, db->label, sizeof db->label);
  return db;
}

/* Close the connection; the record stays for the tables that name it. */
void sl_db_disconnect(sl_db *db) {
  if (db && db->h) db->ops->disconnect(db);
}

void sl_db_close(sl_db *db) {
  if (!db) return;
  sl_db_disconnect(db);
  free(db->path);
  free(db);
}

int sl_db_engine(const sl_db *db) {
  return db->engine;
}

int sl_db_is_open(const sl_db *db) {
  return db->h != NULL;
}

char *sl_db_describe(const sl_db *db, char *buf, size_t size) {
  snprintf(buf, size, "%s%s", db->label, db->h ? "" : " (closed)");
  return buf;
}

/* Run sql through the engine, or say that the connection is closed. */
static int db_exec(const sl_db *db, const char *sql, const sl_db_param *p, size_t np,
                   sl_db_row_fn fn, void *ctx, sl_error *e) {
  if (!db->h) return sl_error_set(e, SL_EARG, 0, 0, "the connection is closed (db:close()); "
                                  "connect again");
  return db->ops->exec((sl_db *)db, sql, p, np, fn, ctx, e);
}

/* ---- catalogue ---- */

void sl_db_desc_free(sl_db_desc *d) {
  for (size_t j = 0; j < d->n; j++) {
    if (d->names) free(d->names[j]);
    if (d->sqltypes) free(d->sqltypes[j]);
  }
  free(d->names);
  free(d->sqltypes);
  free(d->types);
  free(d->pgbool);
  memset(d, 0, sizeof *d);
}

/* The names of a one-column result, gathered into a list. */
typedef struct names { char **v; size_t n, cap; } names;
static int gather_name(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  names *nm = ctx;
  (void)i;
  if (r->db->ops->kind(r, 0) == SL_DB_CELL_NULL) return SL_OK;
  size_t len;
  const char *s = r->db->ops->text(r, 0, &len);
  if (nm->n == nm->cap) {
    size_t cap = nm->cap ? nm->cap * 2 : 32;
    char **v = realloc(nm->v, cap * sizeof *v);
    if (!v) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    nm->v = v;
    nm->cap = cap;
  }
  nm->v[nm->n] = strndup(s ? s : "", len);
  if (!nm->v[nm->n]) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  nm->n++;
  return SL_OK;
}

static void names_free(names *nm) {
  for (size_t k = 0; k < nm->n; k++) free(nm->v[k]);
  free(nm->v);
}

/* Whether the database has a table or view of that exact name; when not,
** the error names the closest one. */
static int check_table(sl_db *db, const char *name, sl_error *e) {
  names nm = {0};
  int status = db_exec(db, db->ops->tables_sql, NULL, 0, gather_name, &nm, e);
  if (status != SL_OK) { names_free(&nm); return status; }
  int found = 0;
  for (size_t k = 0; k < nm.n && !found; k++) found = strcmp(nm.v[k], name) == 0;
  if (!found) {
    const char *near = sl_closest(name, (const char *const *)nm.v, nm.n);
    if (nm.n == 0) sl_error_set(e, SL_ENAME, 0, 0, "no table '%s': the database has no tables", name);
    else if (near) sl_error_set(e, SL_ENAME, 0, 0, "no table '%s'; did you mean '%s'?", name, near);
    else sl_error_set(e, SL_ENAME, 0, 0, "no table '%s' (%zu tables, such as '%s')", name, nm.n,
                      nm.v[0]);
  }
  names_free(&nm);
  return found ? SL_OK : SL_ENAME;
}

/* The type of a column the declaration leaves open, from its first value. */
typedef struct probe { int type; } probe;
static int probe_row(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  (void)i; (void)e;
  size_t len;
  const char *s = r->db->ops->text(r, 0, &len);
  ((probe *)ctx)->type = s && (strcmp(s, "integer") == 0 || strcmp(s, "real") == 0)
                       ? SL_NUMERIC : SL_CATEGORICAL;
  return SL_DB_STOP;
}

/* SQLite's typeof() of the first present value of column j (number when
** there is none). */
static int probe_type(sl_db_table *t, size_t j, const char *q, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT typeof(%s) FROM %s WHERE %s IS NOT NULL LIMIT 1", q, t->from, q);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  probe p = {SL_NUMERIC};
  int status = db_exec(t->db, sql, NULL, 0, probe_row, &p, e);
  free(sql);
  if (status == SL_OK) t->d.types[j] = p.type;
  return status;
}

/* Columns, their quoted names and their value expressions. */
static int describe(sl_db_table *t, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT * FROM %s", t->from);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  if (!t->db->h) { free(sql); return db_exec(t->db, "", NULL, 0, NULL, NULL, e); }
  int status = t->db->ops->describe(t->db, sql, &t->d, e);
  free(sql);
  if (status != SL_OK) return status;
  if (t->d.n == 0) return sl_error_set(e, SL_EARG, 0, 0, "the result has no columns");
  if (t->d.n > SL_DB_MAX_COLS)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu columns; at most %d", t->d.n, SL_DB_MAX_COLS);
  size_t k = 0, l = 0;
  int dup = sl_names_duplicate((const char *const *)t->d.names, t->d.n, &k, &l, e);
  if (dup < 0) return e->code;
  if (dup) return sl_error_set(e, SL_EARG, 0, (int)l + 1, "columns %zu and %zu are both named "
                               "'%s'; rename one with AS", k + 1, l + 1, t->d.names[l]);
  t->expr = calloc(t->d.n, sizeof *t->expr);
  if (!t->expr) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  for (size_t j = 0; j < t->d.n; j++) {
    char *q = sl_db_quote_ident(t->d.names[j], e);
    if (!q) return sl_error_set(e, e->code, 0, (int)j + 1, "column %zu: %s", j + 1, e->msg);
    if (t->d.types[j] < 0 && probe_type(t, j, q, e) != SL_OK) { free(q); return e->code; }
    sl_db_buf x = {0};
    if (t->db->engine == SL_DB_POSTGRES && t->d.types[j] == SL_NUMERIC)
      sl_db_buf_add(&x, t->d.pgbool[j] ? "CAST(CAST(%s AS INTEGER) AS DOUBLE PRECISION)"
                                : "CAST(%s AS DOUBLE PRECISION)", q);
    else sl_db_buf_add(&x, "%s", q);
    free(q);
    if (!(t->expr[j] = sl_db_buf_done(&x, e))) return e->code;
  }
  return SL_OK;
}

/* A table record for text, reading from from (taken). */
static sl_db_table *new_table(sl_db *db, const char *text, int is_query, char *from,
                              sl_error *e) {
  sl_db_table *t = calloc(1, sizeof *t);
  if (!t || !from || !(t->text = strdup(text))) {
    free(from);
    if (t) free(t);
    sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    return NULL;
  }
  t->db = db;
  t->is_query = is_query;
  t->from = from;
  t->key = -1;
  if (describe(t, e) != SL_OK) { sl_db_table_free(t); return NULL; }
  return t;
}

sl_db_table *sl_db_table_open(sl_db *db, const char *name, sl_error *e) {
  char *q = sl_db_quote_ident(name, e);
  if (!q) return NULL;
  if (check_table(db, name, e) != SL_OK) { free(q); return NULL; }
  return new_table(db, name, 0, q, e);
}

sl_db_table *sl_db_query_open(sl_db *db, const char *sql, sl_error *e) {
  size_t n = strlen(sql);
  while (n > 0 && strchr(" \t\r\n;", sql[n - 1])) n--;   /* a final ';' is allowed */
  if (n == 0) { sl_error_set(e, SL_EARG, 0, 0, "the query is empty"); return NULL; }
  sl_db_buf b = {0};
  /* the query whole, as a subquery; a line break ends a final -- comment */
  sl_db_buf_add(&b, "(%.*s\n) AS sl_source", (int)n, sql);
  char *from = b.bad ? NULL : b.s;
  if (!from) free(b.s);
  return new_table(db, sql, 1, from, e);
}

void sl_db_table_free(sl_db_table *t) {
  if (!t) return;
  if (t->expr) for (size_t j = 0; j < t->d.n; j++) free(t->expr[j]);
  free(t->expr);
  sl_db_desc_free(&t->d);
  free(t->text);
  free(t->from);
  free(t);
}

size_t sl_db_ncol(const sl_db_table *t) { return t->d.n; }
const char *sl_db_colname(const sl_db_table *t, size_t j) { return t->d.names[j]; }
int sl_db_coltype(const sl_db_table *t, size_t j) { return t->d.types[j]; }
const char *sl_db_colsql(const sl_db_table *t, size_t j) { return t->d.sqltypes[j]; }
sl_db *sl_db_of(const sl_db_table *t) { return t->db; }
int sl_db_key(const sl_db_table *t) { return t->key; }

/* SQLite's rule for INTEGER affinity: the declared type contains "INT". */
static int has_int(const char *ty) {
  for (; *ty; ty++)
    if ((ty[0] | 32) == 'i' && (ty[1] | 32) == 'n' && (ty[2] | 32) == 't') return 1;
  return 0;
}

int sl_db_set_key(sl_db_table *t, size_t j, sl_error *e) {
  if (j >= t->d.n) return sl_error_set(e, SL_EARG, 0, 0, "column %zu is out of range", j + 1);
  const char *ty = t->d.sqltypes[j];
  /* SQLite: a column computed by a query has no declared type; its values
  ** are cast to whole numbers and then must be distinct (estimate_db.c) */
  int whole = t->db->engine == SL_DB_SQLITE ? has_int(ty) || ty[0] == 0
            : strcmp(ty, "integer") == 0 || strcmp(ty, "bigint") == 0 || strcmp(ty, "smallint") == 0;
  if (!whole)
    return sl_error_set(e, SL_EARG, 0, 0, "key = '%s' is of type %s: the rows' key must be a "
                        "column of whole numbers (INTEGER), one per row", t->d.names[j],
                        ty[0] ? ty : "none");
  t->key = (int)j;
  return SL_OK;
}
const char *sl_db_from(const sl_db_table *t) { return t->from; }
const char *sl_db_expr(const sl_db_table *t, size_t j) { return t->expr[j]; }
const char *sl_db_source(const sl_db_table *t, int *is_query) {
  if (is_query) *is_query = t->is_query;
  return t->text;
}

/* ---- aggregates ---- */

/* Numbers of the single result row, NULL as NaN. */
typedef struct one_row { double *v; size_t n; int seen; } one_row;
static int take_row(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  one_row *o = ctx;
  (void)i; (void)e;
  for (size_t j = 0; j < o->n; j++)
    o->v[j] = r->db->ops->kind(r, (int)j) == SL_DB_CELL_NULL ? NAN : r->db->ops->number(r, (int)j);
  o->seen = 1;
  return SL_DB_STOP;
}

/* Run sql, a query of one row of n numbers, into v. */
int sl_db_numbers(const sl_db_table *t, const char *sql, const sl_db_param *p, size_t np,
                   double *v, size_t n, sl_error *e) {
  one_row o = {v, n, 0};
  for (size_t j = 0; j < n; j++) v[j] = NAN;
  return db_exec(t->db, sql, p, np, take_row, &o, e);
}

const char *sl_db_fence(const sl_db *db) {
  return db->engine == SL_DB_POSTGRES ? " OFFSET 0" : " LIMIT -1 OFFSET 0";
}

int sl_db_rows(const sl_db_table *t, const char *sql, const sl_db_param *p, size_t np,
               sl_db_row_fn fn, void *ctx, sl_error *e) {
  return db_exec(t->db, sql, p, np, fn, ctx, e);
}

double sl_db_cell(const sl_db_row *r, int j) {
  return r->db->ops->kind(r, j) == SL_DB_CELL_NULL ? NAN : r->db->ops->number(r, j);
}

sl_frame *sl_db_schema(const sl_db_table *t, sl_error *e) {
  sl_frame *f = sl_frame_alloc(0);
  if (!f) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  for (size_t j = 0; j < sl_db_ncol(t); j++) {
    int rc = sl_db_coltype(t, j) == SL_CATEGORICAL
           ? sl_frame_add_categorical(f, sl_db_colname(t, j), NULL, NULL, 0, e)
           : sl_frame_add_numeric(f, sl_db_colname(t, j), NULL, e);
    if (rc) { sl_frame_free(f); return NULL; }
  }
  return f;
}

int sl_db_count(const sl_db_table *t, uint64_t *n, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*) FROM %s", t->from);
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  double v;
  int status = sl_db_numbers(t, sql, NULL, 0, &v, 1, e);
  free(sql);
  *n = status == SL_OK && v >= 0 ? (uint64_t)v : 0;
  return status;
}

/* Quantile p by the type-7 rule (as frame.c's quantile7) of the n present
** values of column j, from the two ordered values around position h. */
static int quartile(const sl_db_table *t, size_t j, size_t n, double p, double *q,
                    sl_error *e) {
  double h = (double)(n - 1) * p;
  size_t lo = (size_t)floor(h);
  char ph[16];
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT MIN(v), MAX(v) FROM (SELECT %s AS v FROM %s WHERE %s IS NOT NULL "
         "ORDER BY %s LIMIT 2 OFFSET %s) AS sl_pair", t->expr[j], t->from, t->expr[j],
         t->expr[j], sl_db_placeholder(t->db, 1, ph));
  char *sql = sl_db_buf_done(&b, e);
  if (!sql) return e->code;
  sl_db_param par = {1, 0, (int64_t)lo, NULL};
  double v[2];
  int status = sl_db_numbers(t, sql, &par, 1, v, 2, e);
  free(sql);
  if (status != SL_OK) return status;
  double a = v[0], c = v[1], f = h - (double)lo;
  if (lo + 1 >= n || f == 0 || a == c) *q = a;
  else if (isinf(a) && isinf(c)) *q = NAN;
  else if (isinf(a)) *q = a;
  else if (isinf(c)) *q = c;
  else *q = isfinite(c - a) ? a + f * (c - a) : (1 - f) * a + f * c;
  return SL_OK;
}

/* First pass: COUNT(*), then per column COUNT and, for numbers, AVG, MIN,
** MAX, or for texts COUNT(DISTINCT). */
static char *first_pass_sql(const sl_db_table *t, sl_error *e) {
  sl_db_buf b = {0};
  sl_db_buf_add(&b, "SELECT COUNT(*)");
  for (size_t j = 0; j < t->d.n; j++) {
    const char *x = t->expr[j];
    if (t->d.types[j] == SL_NUMERIC) sl_db_buf_add(&b, ", COUNT(%s), AVG(%s), MIN(%s), MAX(%s)", x, x, x, x);
    else sl_db_buf_add(&b, ", COUNT(%s), COUNT(DISTINCT %s), 0, 0", x, x);
  }
  sl_db_buf_add(&b, " FROM %s", t->from);
  return sl_db_buf_done(&b, e);
}

/* Second pass: per numeric column SUM(x - m) and SUM((x - m)^2) about the
** first mean m, bound as parameters. */
static char *second_pass_sql(const sl_db_table *t, const double *v, sl_db_param *par,
                             size_t *np, sl_error *e) {
  sl_db_buf b = {0};
  char ph[16];
  sl_db_buf_add(&b, "SELECT 0");
  *np = 0;
  for (size_t j = 0; j < t->d.n; j++) {
    if (t->d.types[j] != SL_NUMERIC || !isfinite(v[1 + 4 * j + 1])) continue;
    par[*np] = (sl_db_param){0, v[1 + 4 * j + 1], 0, NULL};
    sl_db_placeholder(t->db, (int)++*np, ph);
    sl_db_buf_add(&b, ", SUM(%s - %s), SUM((%s - %s) * (%s - %s))", t->expr[j], ph, t->expr[j], ph,
           t->expr[j], ph);
  }
  sl_db_buf_add(&b, " FROM %s", t->from);
  return sl_db_buf_done(&b, e);
}

int sl_db_summary(const sl_db_table *t, sl_summary *s, size_t *levels, sl_error *e) {
  size_t m = t->d.n, nv = 1 + 4 * m;
  double *v = malloc((nv + 1 + 2 * m) * sizeof *v);
  sl_db_param *par = malloc((m + 1) * sizeof *par);
  char *sql = NULL;
  int status = !v || !par ? sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory") : SL_OK;
  if (status == SL_OK && !(sql = first_pass_sql(t, e))) status = e->code;
  if (status == SL_OK) status = sl_db_numbers(t, sql, NULL, 0, v, nv, e);
  free(sql);
  sql = NULL;
  size_t np = 0;
  double *w = v ? v + nv : NULL;
  if (status == SL_OK && !(sql = second_pass_sql(t, v, par, &np, e))) status = e->code;
  if (status == SL_OK && np > 0) status = sl_db_numbers(t, sql, par, np, w, 1 + 2 * np, e);
  free(sql);
  for (size_t j = 0, k = 0; status == SL_OK && j < m; j++) {
    const double *c = v + 1 + 4 * j;
    size_t n = (size_t)c[0];
    sl_summary *o = &s[j];
    o->n = n;
    o->missing = (size_t)v[0] - n;
    o->mean = o->sd = o->min = o->q1 = o->median = o->q3 = o->max = NAN;
    levels[j] = 0;
    if (t->d.types[j] != SL_NUMERIC) { levels[j] = (size_t)c[1]; continue; }
    if (n == 0) continue;
    o->min = c[2];
    o->max = c[3];
    o->mean = c[1];
    if (isfinite(c[1])) {   /* corrected two-pass moments, as frame.c's */
      double sd = w[1 + 2 * k], ss = w[2 + 2 * k];
      k++;
      o->mean = c[1] + sd / (double)n;
      o->sd = n > 1 ? sqrt(fmax(0, (ss - sd * sd / (double)n) / (double)(n - 1))) : NAN;
    }
    if ((status = quartile(t, j, n, 0.25, &o->q1, e)) != SL_OK) break;
    if ((status = quartile(t, j, n, 0.5, &o->median, e)) != SL_OK) break;
    status = quartile(t, j, n, 0.75, &o->q3, e);
  }
  free(v);
  free(par);
  return status;
}

/* ---- fetching rows ---- */

typedef struct fetch { sl_build *b; size_t head, limit, upto; int pass; const sl_db_table *t; } fetch;

/* One result row into the builder (pass 1), or the texts of numbers in
** columns that turned out categorical (pass 2). */
static int fetch_row(void *ctx, const sl_db_row *r, size_t i, sl_error *e) {
  fetch *f = ctx;
  const sl_db_ops *ops = r->db->ops;
  sl_build *b = f->b;
  if (f->pass == 2) {
    if (i >= f->upto) return SL_DB_STOP;
    for (size_t j = 0; j < b->ncol; j++) {
      if (!sl_build_wants(b, j, i)) continue;
      size_t len;
      const char *s = ops->text(r, (int)j, &len);
      if (!s) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
      if (sl_build_refill(b, j, i, s, len, e) != SL_OK) return e->code;
    }
    return SL_OK;
  }
  if (i >= f->head) return SL_DB_STOP;
  if (i >= f->limit)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "the table has more than %zu rows; give "
                        "{limit = ...} to read more, or summarise in the database", f->limit);
  if (sl_build_row(b, e) != SL_OK) return e->code;
  for (size_t j = 0; j < b->ncol; j++) {
    int kind = ops->kind(r, (int)j), st;
    if (kind == SL_DB_CELL_NULL) { sl_build_missing(b, j); continue; }
    if (kind == SL_DB_CELL_BLOB)
      return sl_error_set(e, SL_EARG, (int)i + 1, (int)j + 1, "row %zu, column '%s': a BLOB "
                          "value; query it as text (CAST(... AS TEXT)) or leave it out", i + 1,
                          b->col[j].name);
    double v = kind == SL_DB_CELL_NUMBER ? ops->number(r, (int)j) : 0;
    size_t len;
    const char *s = ops->text(r, (int)j, &len);
    if (!s) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    if (memchr(s, 0, len))
      return sl_error_set(e, SL_EARG, (int)i + 1, (int)j + 1, "row %zu, column '%s': the "
                          "text holds a NUL byte", i + 1, b->col[j].name);
    st = kind == SL_DB_CELL_TEXT ? sl_build_text(b, j, s, len, (int)i + 1, e)
                                 : sl_build_number(b, j, v, s, len, e);
    if (st != SL_OK) return st;
  }
  b->nrow++;
  return SL_OK;
}

/* A text column with no value among the rows read comes out of the builder
** as numbers; it is a category, as the table says (and as f:head keeps it). */
static int as_categories(const sl_db_table *t, sl_frame *fr, sl_error *e) {
  for (size_t j = 0; j < fr->ncol; j++) {
    sl_column *c = &fr->col[j];
    if (t->d.types[j] != SL_CATEGORICAL || c->type != SL_NUMERIC) continue;
    size_t i = 0;
    while (i < fr->nrow && isnan(c->x[i])) i++;
    if (i < fr->nrow) continue;   /* numbers in a text column: they tell */
    int32_t *code = malloc((fr->nrow ? fr->nrow : 1) * sizeof *code);
    if (!code) return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
    for (i = 0; i < fr->nrow; i++) code[i] = -1;
    free(c->x);
    c->x = NULL;
    c->code = code;
    c->type = SL_CATEGORICAL;
    c->levels = NULL;
    c->nlevels = 0;
  }
  return SL_OK;
}

sl_frame *sl_db_fetch(const sl_db_table *t, size_t head, size_t limit, sl_error *e) {
  if (limit == 0) limit = SL_DB_FETCH_MAX_ROWS;
  sl_db_buf q = {0};
  char ph[16];
  sl_db_buf_add(&q, "SELECT ");
  for (size_t j = 0; j < t->d.n; j++) sl_db_buf_add(&q, "%s%s", j ? ", " : "", t->expr[j]);
  sl_db_buf_add(&q, " FROM %s LIMIT %s", t->from, sl_db_placeholder(t->db, 1, ph));
  char *sql = sl_db_buf_done(&q, e);
  if (!sql) return NULL;
  /* one row past the limit tells that there are more */
  size_t want = head < limit ? head : limit < INT64_MAX ? limit + 1 : limit;
  sl_db_param par = {1, 0, want > INT64_MAX ? INT64_MAX : (int64_t)want, NULL};
  sl_build b;
  memset(&b, 0, sizeof b);
  sl_frame *fr = NULL;
  fetch f = {&b, head, limit, 0, 1, t};
  if (sl_build_init(&b, (const char *const *)t->d.names, t->d.n, e) != SL_OK) goto done;
  if (db_exec(t->db, sql, &par, 1, fetch_row, &f, e) != SL_OK) goto done;
  sl_build_decide(&b, SL_BUILD_SQL, 0, NULL);
  f.upto = sl_build_refill_rows(&b);
  f.pass = 2;
  if (f.upto > 0 && db_exec(t->db, sql, &par, 1, fetch_row, &f, e) != SL_OK) goto done;
  fr = sl_build_finish(&b, e);
  if (fr && as_categories(t, fr, e) != SL_OK) { sl_frame_free(fr); fr = NULL; }
done:
  sl_build_free(&b);
  free(sql);
  return fr;
}

/* ---- sums for the estimators ---- */

/* The query of sl_db_sums: the complete rows picked by WHERE in an inner
** query that gives each used value (centred when asked), the table's rows
** counted by a scalar subquery beside (a mask on every row instead was
** four times slower). */
static char *sums_sql(const sl_db_table *t, const int *cols, size_t p, int w,
                      const double *centre, sl_db_param *par, size_t *np, sl_error *e) {
  sl_db_buf b = {0};
  char ph[16];
  *np = 0;
  sl_db_buf_add(&b, "SELECT (SELECT COUNT(*) FROM %s), COUNT(*), SUM(sl_w)", t->from);
  for (size_t k = 0; k < p; k++) sl_db_buf_add(&b, ", SUM(sl_w * sl_x%zu)", k);
  for (size_t k = 0; k < p; k++)
    for (size_t l = k; l < p; l++) sl_db_buf_add(&b, ", SUM(sl_w * sl_x%zu * sl_x%zu)", k, l);
  sl_db_buf_add(&b, " FROM (SELECT %s AS sl_w", w >= 0 ? t->expr[w] : "CAST(1 AS DOUBLE PRECISION)");
  for (size_t k = 0; k < p; k++) {
    if (centre) {
      par[*np] = (sl_db_param){0, centre[k], 0, NULL};
      sl_db_placeholder(t->db, (int)++*np, ph);
      sl_db_buf_add(&b, ", %s - %s AS sl_x%zu", t->expr[cols[k]], ph, k);
    } else sl_db_buf_add(&b, ", %s AS sl_x%zu", t->expr[cols[k]], k);
  }
  sl_db_buf_add(&b, " FROM %s WHERE ", t->from);
  for (size_t k = 0; k < p; k++) sl_db_buf_add(&b, "%s IS NOT NULL AND ", t->expr[cols[k]]);
  if (w >= 0) sl_db_buf_add(&b, "%s IS NOT NULL AND ", t->expr[w]);
  sl_db_buf_add(&b, "1 = 1) AS sl_rows");
  return sl_db_buf_done(&b, e);
}

int sl_db_sums(const sl_db_table *t, const int *cols, size_t p, int w, const double *centre,
               double *sum, double *cross, sl_db_sums_out *out, sl_error *e) {
  if (p > SL_DB_MAX_SUMS)
    return sl_error_set(e, SL_ELIMIT, 0, 0, "%zu columns; at most %d in one query", p, SL_DB_MAX_SUMS);
  for (size_t k = 0; k <= p; k++) {
    int j = k < p ? cols[k] : w;
    if (k == p && w < 0) break;
    if (j < 0 || (size_t)j >= t->d.n)
      return sl_error_set(e, SL_EARG, 0, 0, "column %d is out of range", j + 1);
    if (t->d.types[j] != SL_NUMERIC)
      return sl_error_set(e, SL_EARG, 0, 0, "column '%s' is categorical, not a number",
                          t->d.names[j]);
  }
  sl_db_param par[SL_DB_MAX_SUMS];
  size_t np, nv = 3 + p + p * (p + 1) / 2;
  char *sql = sums_sql(t, cols, p, w, centre, par, &np, e);
  if (!sql) return e->code;
  double *v = malloc(nv * sizeof *v);
  int status = v ? sl_db_numbers(t, sql, par, np, v, nv, e) : sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  free(sql);
  if (status == SL_OK) {
    out->used = (uint64_t)v[1];
    out->dropped = (uint64_t)v[0] - out->used;
    out->wsum = out->used ? v[2] : 0;   /* SUM over no rows is NULL */
    size_t at = 3;
    for (size_t k = 0; k < p; k++) sum[k] = out->used ? v[at++] : (at++, 0);
    for (size_t k = 0; k < p; k++)
      for (size_t l = k; l < p; l++, at++)
        cross[k * p + l] = cross[l * p + k] = out->used ? v[at] : 0;
  }
  free(v);
  return status;
}
