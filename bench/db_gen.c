/*
** db_gen.c: the invented farm trial of bench/bench_db.sh, N rows x 8
** columns, the same rows for a seed whichever way they are written.
**
**   db_gen csv N SEED          CSV with a header line on stdout (for COPY)
**   db_gen sqlite N SEED FILE  a new SQLite file with the table farm
**
** Columns: id (1..N), irrigated (0/1), yield_t (t/ha) and five covariates:
** soil_ph, rain_mm, slope (degrees), elevation (m), plot_age (years).
** Dry, steep, high and acid plots are irrigated more often (a logistic
** model in the covariates); the yield is linear in irrigation and the
** covariates, with an effect of irrigation of 0.8 t/ha, plus normal noise.
** Each real value is a whole number of hundredths (or tenths), so the CSV
** text and the double bound into SQLite are the same number.  Prints
** "rows=N sum_yield=S" on stderr, S summed in row order.
*/
#include <math.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bench_rng.h"

typedef struct Row {
  long id, irrigated, plot_age;
  double yield_t, soil_ph, rain_mm, slope, elevation;
} Row;

/* Uniform in (0, 1): 53 random bits, never 0. */
static double unif(void) { return ((double)(next_u64() >> 11) + 0.5) * 0x1p-53; }

/* Standard normal by Box-Muller (one of the pair). */
static double normal(void) {
  double u1 = unif(), u2 = unif();
  return sqrt(-2.0 * log(u1)) * cos(6.283185307179586 * u2);
}

/* x rounded to a whole number of 1/scale: the double nearest that decimal. */
static double decimal(double x, double scale) { return (double)llround(x * scale) / scale; }

/* The next row of the trial. */
static void draw(Row *r, long id) {
  r->id = id;
  r->soil_ph = decimal(6.5 + 0.6 * normal(), 100);
  r->rain_mm = decimal(700 + 120 * normal(), 10);
  r->slope = decimal(12 * unif(), 100);
  r->elevation = decimal(300 + 80 * normal(), 10);
  r->plot_age = 1 + (long)below(40);
  double lp = -0.3 - 1.0 * (r->rain_mm - 700) / 120 + 0.5 * (r->slope - 6) / 3.5
              - 0.4 * (r->soil_ph - 6.5) / 0.6 + 0.3 * (r->elevation - 300) / 80
              + 0.01 * (r->plot_age - 20);
  r->irrigated = unif() < 1 / (1 + exp(-lp));
  r->yield_t = decimal(2.0 + 0.8 * r->irrigated + 0.9 * (r->soil_ph - 6.5)
                       + 0.002 * (r->rain_mm - 700) - 0.05 * r->slope
                       - 0.001 * (r->elevation - 300) + 0.01 * r->plot_age
                       + 0.7 * normal(), 1000);
}

static int die(const char *what, sqlite3 *db) {
  fprintf(stderr, "db_gen: %s: %s\n", what, db ? sqlite3_errmsg(db) : "failed");
  return 1;
}

static int to_csv(long n) {
  Row r;
  double sum = 0;
  printf("id,irrigated,yield_t,soil_ph,rain_mm,slope,elevation,plot_age\n");
  for (long i = 1; i <= n; i++) {
    draw(&r, i);
    sum += r.yield_t;
    printf("%ld,%ld,%.3f,%.2f,%.1f,%.2f,%.1f,%ld\n", r.id, r.irrigated, r.yield_t,
           r.soil_ph, r.rain_mm, r.slope, r.elevation, r.plot_age);
  }
  if (fflush(stdout) != 0 || ferror(stdout)) { perror("db_gen: stdout"); return 1; }
  fprintf(stderr, "rows=%ld sum_yield=%.17g\n", n, sum);
  return 0;
}

static int to_sqlite(long n, const char *path) {
  sqlite3 *db = NULL;
  sqlite3_stmt *st = NULL;
  Row r;
  double sum = 0;
  remove(path);
  if (sqlite3_open(path, &db) != SQLITE_OK) return die(path, db);
  /* a throw-away file: no journal, no syncs, one transaction */
  if (sqlite3_exec(db, "PRAGMA journal_mode = OFF; PRAGMA synchronous = OFF; BEGIN;"
                   "CREATE TABLE farm (id INTEGER PRIMARY KEY, irrigated INTEGER NOT NULL,"
                   " yield_t REAL, soil_ph REAL, rain_mm REAL, slope REAL, elevation REAL,"
                   " plot_age INTEGER)", NULL, NULL, NULL) != SQLITE_OK)
    return die("create table farm", db);
  if (sqlite3_prepare_v2(db, "INSERT INTO farm VALUES (?, ?, ?, ?, ?, ?, ?, ?)", -1, &st,
                         NULL) != SQLITE_OK)
    return die("prepare insert", db);
  for (long i = 1; i <= n; i++) {
    draw(&r, i);
    sum += r.yield_t;
    sqlite3_bind_int64(st, 1, r.id);
    sqlite3_bind_int64(st, 2, r.irrigated);
    sqlite3_bind_double(st, 3, r.yield_t);
    sqlite3_bind_double(st, 4, r.soil_ph);
    sqlite3_bind_double(st, 5, r.rain_mm);
    sqlite3_bind_double(st, 6, r.slope);
    sqlite3_bind_double(st, 7, r.elevation);
    sqlite3_bind_int64(st, 8, r.plot_age);
    if (sqlite3_step(st) != SQLITE_DONE) return die("insert", db);
    sqlite3_reset(st);
  }
  sqlite3_finalize(st);
  if (sqlite3_exec(db, "COMMIT; ANALYZE", NULL, NULL, NULL) != SQLITE_OK) return die("commit", db);
  if (sqlite3_close(db) != SQLITE_OK) return die("close", db);
  fprintf(stderr, "rows=%ld sum_yield=%.17g\n", n, sum);
  return 0;
}

int main(int argc, char **argv) {
  long n = argc > 2 ? strtol(argv[2], NULL, 10) : 0;
  int csv = argc == 4 && strcmp(argv[1], "csv") == 0;
  int lite = argc == 5 && strcmp(argv[1], "sqlite") == 0;
  if (n < 1 || (!csv && !lite)) {
    fprintf(stderr, "usage: db_gen csv N SEED | db_gen sqlite N SEED FILE\n");
    return 2;
  }
  rng_state = strtoull(argv[3], NULL, 10);
  return csv ? to_csv(n) : to_sqlite(n, argv[4]);
}
