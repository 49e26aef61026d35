/*
** poisson_weight.h: the Poisson bootstrap's row weights (Hanley and
** MacGibbon 2006; Chamandy, Muralidharan, Najmi and Naidu 2012).  Row
** with integer key k gets, in replicate r, a Poisson(1) draw that is a
** function of (k, seed, r) alone, so that a database can compute it
** beside the data, and C the same number for a frame.
**
** The draw is an integer hash h in [0, M), M the prime SL_POIS_M, put
** against the integer thresholds floor(M F(j)) of the Poisson(1) CDF F;
** so it is exact integer arithmetic end to end, in C and in SQL, with no
** floating point comparison that two engines could make differently.
** The hash (poisson_weight.c) is ten rounds x = (x (v + a) + b) mod M,
** each taking in one input v: the replicate r, or one of three pieces of
** the key; a and b come from the seed.  Every value stays below 2^62.
**
** The SQL uses +, -, *, /, %, CAST(... AS BIGINT) and CASE WHEN only:
** no function, no extension; SQLite and PostgreSQL give the C value bit
** for bit (tests/c/test_poisson_weight.c, tests/lua/db_pois.lua).
*/
#ifndef SL_POISSON_WEIGHT_H
#define SL_POISSON_WEIGHT_H

#include <stddef.h>
#include <stdint.h>
#include "db.h"

#define SL_POIS_M      1073741789   /* the prime 2^30 - 35 */
#define SL_POIS_ROUNDS 10
/* The largest draw: P(X >= 12) = 8.3e-10 for X ~ Poisson(1), below the
** hash's resolution 1/M = 9.3e-10, so 12 stands for "12 or more". */
#define SL_POIS_MAX    12

/* The seed's constants, for drawing many weights. */
typedef struct sl_pois { int64_t x0, a[SL_POIS_ROUNDS], b[SL_POIS_ROUNDS]; } sl_pois;
void sl_pois_init(sl_pois *p, uint64_t seed);
/* The hash, in [0, SL_POIS_M), and the draw (0 .. SL_POIS_MAX) it gives. */
int64_t sl_pois_hash(const sl_pois *p, int64_t key, uint32_t r);
int sl_pois_draw(int64_t h);
int sl_pois_at(const sl_pois *p, int64_t key, uint32_t r);

/* The Poisson(1) draw of (key, seed, r), 0 .. SL_POIS_MAX.  Replicates r
** and r + SL_POIS_M share weights: number them from 1. */
int sl_pois_weight(int64_t key, uint64_t seed, uint32_t r);

/* Append to b (db_internal.h) one SQL expression, in parentheses, whose
** value is sl_pois_weight(k, seed, r) for a row where the SQL expressions
** key_sql and r_sql are k and r (r from 0 to 2^32 - 1); both are taken
** through CAST(... AS BIGINT).  Only the seed's constants are written into
** the text, as integer literals.  About 9 kB for a short key_sql: the
** hash is written once per threshold, since SQL has no variables; where
** the hash can be a column of an inner SELECT, sl_pois_sql_hash gives it
** and sl_pois_sql_draw the weight from that column (the same value). */
typedef struct sl_db_buf sl_db_buf;
void sl_pois_sql(sl_db_buf *b, const char *key_sql, const char *r_sql, uint64_t seed);
void sl_pois_sql_hash(sl_db_buf *b, const char *key_sql, const char *r_sql, uint64_t seed);
void sl_pois_sql_draw(sl_db_buf *b, const char *h_sql);

/* The weights of replicate r computed by the database, for the rows of t
** whose column key is not NULL, in the order of the key: *w (to free)
** gets *n draws.  For tests of the SQL against the C. */
int sl_pois_db(const sl_db_table *t, size_t key, uint64_t seed, uint32_t r, int **w,
               size_t *n, sl_error *e);

#endif
