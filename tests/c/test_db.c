/*
** test_db.c: the quoting of SQL names and the engine-neutral layer of
** src/stats/db.c on SQLite (db_sqlite.c); PostgreSQL is checked against a
** real server by tests/shell/postgres.sh.
**
** Where the expected values come from is said beside each check:
**   - quoting: the rule of SQL:2016 part 2, 5.2 <delimited identifier> (a
**     double quote inside is written twice), as PostgreSQL's quote_ident
**     and SQLite's "quoted identifier" apply it (from memory);
**   - the values 1..5 have mean 3 and sd sqrt(2.5) (sum of squares 10 over
**     n - 1 = 4); type-7 quartiles (Hyndman and Fan 1996, h = (n - 1) p)
**     of 1..5 are 2, 3, 4 and of 2, 4, 8 are 3, 4, 6 (worked by hand);
**   - sums and cross-products worked by hand from the rows written here.
*/
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <sqlite3.h>

#include "db.h"

#define HOSTILE "x\"; DROP TABLE y; --"

static char path[64];

/* A database file: t(a, b, c) with NULLs, y(a), a hostile table, a view. */
static int make_db(void **state) {
  (void)state;
  snprintf(path, sizeof path, "/tmp/sluice-test-db-XXXXXX");
  int fd = mkstemp(path);
  if (fd < 0) return -1;
  close(fd);
  sqlite3 *h;
  if (sqlite3_open(path, &h) != SQLITE_OK) return -1;
  const char *sql =
    "CREATE TABLE t (a INTEGER, b REAL, c TEXT, d);"
    "INSERT INTO t VALUES (1, 2.0, 'p', 10), (2, NULL, 'q', 'ten'), (3, 4.0, NULL, 12),"
    "  (4, 8.0, 'p', NULL), (5, NULL, 'r', 14);"
    "CREATE TABLE y (a INTEGER); INSERT INTO y VALUES (7);"
    "CREATE TABLE \"x\"\"; DROP TABLE y; --\" (\"a\"\"b\" REAL, \"ü c\" TEXT);"
    "INSERT INTO \"x\"\"; DROP TABLE y; --\" VALUES (0.5, 'u'), (1.5, NULL);"
    "CREATE VIEW v AS SELECT a * 2 AS twice, c FROM t;";
  int rc = sqlite3_exec(h, sql, NULL, NULL, NULL);
  sqlite3_close(h);
  return rc == SQLITE_OK ? 0 : -1;
}

static int drop_db(void **state) {
  (void)state;
  unlink(path);
  return 0;
}

static void test_quote(void **state) {
  (void)state;
  sl_error e;
  struct { const char *in, *out; } ok[] = {
    {"plots", "\"plots\""}, {"a\"b", "\"a\"\"b\""}, {"\"", "\"\"\"\""},
    {HOSTILE, "\"x\"\"; DROP TABLE y; --\""}, {"ünï cøde", "\"ünï cøde\""},
    {"a b;c'd", "\"a b;c'd\""},
  };
  for (size_t k = 0; k < sizeof ok / sizeof ok[0]; k++) {
    char *q = sl_db_quote_ident(ok[k].in, &e);
    assert_non_null(q);
    assert_string_equal(q, ok[k].out);
    free(q);
  }
  assert_null(sl_db_quote_ident("", &e));
  assert_non_null(strstr(e.msg, "empty"));
  assert_null(sl_db_quote_ident("bad \xff byte", &e));
  assert_non_null(strstr(e.msg, "UTF-8"));
  assert_null(sl_db_quote_ident("\xc0\xaf", &e));          /* an overlong '/' */
  assert_null(sl_db_quote_ident("\xed\xa0\x80", &e));      /* a surrogate */
  char *big = malloc(SL_DB_MAX_NAME + 2);
  memset(big, 'n', SL_DB_MAX_NAME + 1);
  big[SL_DB_MAX_NAME + 1] = 0;
  assert_null(sl_db_quote_ident(big, &e));
  assert_int_equal(e.code, SL_ELIMIT);
  big[SL_DB_MAX_NAME] = 0;
  char *q = sl_db_quote_ident(big, &e);
  assert_non_null(q);
  assert_int_equal(strlen(q), SL_DB_MAX_NAME + 2);
  free(q);
  free(big);
}

static void test_open_errors(void **state) {
  (void)state;
  sl_error e;
  assert_null(sl_db_open("", NULL, &e));
  assert_non_null(strstr(e.msg, "empty"));
  assert_null(sl_db_open("/nonexistent/x.db", NULL, &e));
  assert_non_null(strstr(e.msg, "no file '/nonexistent/x.db'"));
  assert_null(sl_db_open("/tmp", NULL, &e));
  assert_non_null(strstr(e.msg, "not a regular file"));
  assert_null(sl_db_open("postgresql://h/d?nosuch=1", NULL, &e));
  assert_non_null(strstr(e.msg, "invalid URI query parameter"));
}

static void test_table(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  assert_non_null(db);
  char buf[256];
  assert_non_null(strstr(sl_db_describe(db, buf, sizeof buf), "SQLite"));
  sl_db_table *t = sl_db_table_open(db, "t", &e);
  assert_non_null(t);
  assert_int_equal(sl_db_ncol(t), 4);
  assert_string_equal(sl_db_colname(t, 2), "c");
  assert_int_equal(sl_db_coltype(t, 0), SL_NUMERIC);
  assert_int_equal(sl_db_coltype(t, 1), SL_NUMERIC);
  assert_int_equal(sl_db_coltype(t, 2), SL_CATEGORICAL);
  assert_int_equal(sl_db_coltype(t, 3), SL_NUMERIC);   /* no declared type: its first value */
  uint64_t n;
  assert_int_equal(sl_db_count(t, &n, &e), SL_OK);
  assert_int_equal(n, 5);
  sl_frame *f = sl_db_fetch(t, SIZE_MAX, 0, &e);
  assert_non_null(f);
  assert_int_equal(f->nrow, 5);
  assert_true(isnan(f->col[1].x[1]));
  assert_int_equal(f->col[2].type, SL_CATEGORICAL);
  assert_int_equal(f->col[2].code[2], -1);
  assert_int_equal(f->col[3].type, SL_CATEGORICAL);     /* a text among numbers, as read_sql */
  sl_frame_free(f);
  f = sl_db_fetch(t, 2, 0, &e);
  assert_non_null(f);
  assert_int_equal(f->nrow, 2);
  sl_frame_free(f);
  assert_null(sl_db_fetch(t, SIZE_MAX, 4, &e));
  assert_int_equal(e.code, SL_ELIMIT);
  assert_non_null(strstr(e.msg, "more than 4 rows"));
  f = sl_db_fetch(t, SIZE_MAX, 5, &e);
  assert_non_null(f);
  sl_frame_free(f);
  sl_db_table_free(t);
  assert_null(sl_db_table_open(db, "tt", &e));
  assert_int_equal(e.code, SL_ENAME);
  assert_non_null(strstr(e.msg, "did you mean 't'?"));
  sl_db_close(db);
}

static void test_summary(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "t", &e);
  assert_non_null(t);
  sl_summary s[4];
  size_t lev[4];
  assert_int_equal(sl_db_summary(t, s, lev, &e), SL_OK);
  /* a = 1..5 */
  assert_int_equal(s[0].n, 5);
  assert_int_equal(s[0].missing, 0);
  assert_true(s[0].mean == 3);
  assert_true(fabs(s[0].sd - sqrt(2.5)) < 1e-15);
  assert_true(s[0].min == 1 && s[0].q1 == 2 && s[0].median == 3 && s[0].q3 == 4 && s[0].max == 5);
  /* b = 2, 4, 8 and two NULLs: mean 14/3, quartiles 3, 4, 6 */
  assert_int_equal(s[1].n, 3);
  assert_int_equal(s[1].missing, 2);
  assert_true(fabs(s[1].mean - 14.0 / 3) < 1e-15);
  assert_true(s[1].q1 == 3 && s[1].median == 4 && s[1].q3 == 6);
  /* c: p, q, p, r and a NULL */
  assert_int_equal(s[2].n, 4);
  assert_int_equal(s[2].missing, 1);
  assert_int_equal(lev[2], 3);
  assert_true(isnan(s[2].mean));
  sl_db_table_free(t);
  sl_db_close(db);
}

static void test_hostile(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, HOSTILE, &e);
  assert_non_null(t);
  assert_string_equal(sl_db_colname(t, 0), "a\"b");
  assert_string_equal(sl_db_colname(t, 1), "ü c");
  sl_frame *f = sl_db_fetch(t, SIZE_MAX, 0, &e);
  assert_non_null(f);
  assert_true(f->col[0].x[0] == 0.5 && f->col[0].x[1] == 1.5);
  sl_frame_free(f);
  sl_summary s[2];
  size_t lev[2];
  assert_int_equal(sl_db_summary(t, s, lev, &e), SL_OK);
  assert_true(s[0].mean == 1);
  assert_int_equal(lev[1], 1);
  sl_db_table_free(t);
  sl_db_table *y = sl_db_table_open(db, "y", &e);
  uint64_t n = 0;
  assert_non_null(y);
  assert_int_equal(sl_db_count(y, &n, &e), SL_OK);
  assert_int_equal(n, 1);
  sl_db_table_free(y);
  sl_db_close(db);
}

static void test_read_only(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  assert_null(sl_db_query_open(db, "DELETE FROM y", &e));
  assert_null(sl_db_query_open(db, "SELECT * FROM y; DROP TABLE y", &e));
  assert_null(sl_db_query_open(db, "SELECT 1) AS a; DROP TABLE y; --", &e));
  assert_null(sl_db_query_open(db, "  ;; ", &e));
  assert_non_null(strstr(e.msg, "empty"));
  sl_db_table *q = sl_db_query_open(db, "SELECT a FROM y -- a final comment", &e);
  assert_non_null(q);
  uint64_t n = 0;
  assert_int_equal(sl_db_count(q, &n, &e), SL_OK);
  assert_int_equal(n, 1);
  sl_db_table_free(q);
  q = sl_db_query_open(db, "SELECT nosuch FROM y", &e);
  assert_null(q);
  assert_non_null(strstr(e.msg, "SQLite: no such column: nosuch"));
  sl_db_close(db);
}

static void test_sums(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "t", &e);
  assert_non_null(t);
  /* (a, b) over rows with both: (1, 2), (3, 4), (4, 8) */
  int cols[2] = {0, 1};
  double sum[2], cross[4];
  sl_db_sums_out o;
  assert_int_equal(sl_db_sums(t, cols, 2, -1, NULL, sum, cross, &o, &e), SL_OK);
  assert_int_equal(o.used, 3);
  assert_int_equal(o.dropped, 2);
  assert_true(o.wsum == 3);
  assert_true(sum[0] == 8 && sum[1] == 14);
  assert_true(cross[0] == 26 && cross[1] == 46 && cross[2] == 46 && cross[3] == 84);
  /* weighted by a: weights 1, 3, 4 */
  assert_int_equal(sl_db_sums(t, cols + 1, 1, 0, NULL, sum, cross, &o, &e), SL_OK);
  assert_true(o.wsum == 8 && sum[0] == 46 && cross[0] == 1 * 4 + 3 * 16 + 4 * 64);
  /* centred at (3, 5): (-2, -3), (0, -1), (1, 3) */
  double c[2] = {3, 5};
  assert_int_equal(sl_db_sums(t, cols, 2, -1, c, sum, cross, &o, &e), SL_OK);
  assert_true(sum[0] == -1 && sum[1] == -1);
  assert_true(cross[0] == 5 && cross[1] == 9 && cross[3] == 19);
  int cat = 2;
  assert_int_not_equal(sl_db_sums(t, &cat, 1, -1, NULL, sum, cross, &o, &e), SL_OK);
  assert_non_null(strstr(e.msg, "categorical"));
  sl_db_table_free(t);
  sl_db_close(db);
}

static void test_closed(void **state) {
  (void)state;
  sl_error e;
  sl_db *db = sl_db_open(path, NULL, &e);
  sl_db_table *t = sl_db_table_open(db, "v", &e);
  assert_non_null(t);
  assert_int_equal(sl_db_coltype(t, 0), SL_NUMERIC);   /* an expression: its first value */
  sl_db_disconnect(db);
  uint64_t n;
  assert_int_not_equal(sl_db_count(t, &n, &e), SL_OK);
  assert_non_null(strstr(e.msg, "connection is closed"));
  assert_null(sl_db_fetch(t, 1, 0, &e));
  char buf[256];
  assert_non_null(strstr(sl_db_describe(db, buf, sizeof buf), "(closed)"));
  sl_db_table_free(t);
  sl_db_close(db);
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_quote),
    cmocka_unit_test(test_open_errors),
    cmocka_unit_test(test_table),
    cmocka_unit_test(test_summary),
    cmocka_unit_test(test_hostile),
    cmocka_unit_test(test_read_only),
    cmocka_unit_test(test_sums),
    cmocka_unit_test(test_closed),
  };
  return cmocka_run_group_tests(tests, make_db, drop_db);
}
