/*
** csv.c: reading CSV files into frames (Debian's libcsv) and writing
** frames as CSV.
**
** The file is read in chunks and handed to libcsv one line at a time, so
** that every callback knows the line of the file it is on: errors name
** rows as lines of the file (the header is row 1; a record whose quoted
** field spans lines is named by its first line).  Cells go straight into
** the column builder of frame_build.h; the text of the file is not kept.
** Type inference is described in frame.h.
*/
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <csv.h>
#include "frame_build.h"

#define CHUNK (256 * 1024)    /* bytes read at a time */
#define ROW_NOT_BEGUN 0       /* libcsv's parser state between records */
#define BLOCK_MIN (64 * 1024) /* least growth of libcsv's cell buffer */

typedef struct reader {
  const char *path;
  const sl_csv_opts *opts;
  sl_error *e;
  sl_build b;
  int pass;                 /* 1: everything; 2: refill texts of early rows */
  size_t refill_rows;       /* pass 2 stops after this many data rows */
  int failed, done;
  int line;                 /* line of the file being fed, 1-based */
  int at_line_start;
  int pending_line;         /* line where the next record starts */
  int rec_line;             /* line where the current record started */
  size_t field;             /* fields seen in the current record */
  size_t records;           /* records completed, the header included */
  char **names;             /* the header */
  size_t nnames, capnames;
  unsigned char delim;
} reader;

/* Record an error at a row and column of the file. */
static void fail_at(reader *r, int code, int line, int col, const char *fmt,
                    const char *a, const char *b) {
  char what[SL_MSG_MAX];
  snprintf(what, sizeof what, fmt, a, b);
  if (col > 0)
    sl_error_set(r->e, code, line, col, "%s, row %d, column %d%s", r->path, line, col, what);
  else
    sl_error_set(r->e, code, line, 0, "%s, row %d%s", r->path, line, what);
  r->failed = 1;
}

/* Whether a cell is one of the missing-value tokens. */
static int is_missing(const reader *r, const char *s, size_t n) {
  if (n == 0) return 1;
  if ((n == 2 && memcmp(s, "NA", 2) == 0) || (n == 3 && memcmp(s, "NaN", 3) == 0) ||
      (n == 1 && s[0] == '.'))
    return 1;
  if (r->opts)
    for (size_t k = 0; k < r->opts->nna; k++) {
      const char *t = r->opts->na[k];
      if (t && strlen(t) == n && memcmp(t, s, n) == 0) return 1;
    }
  return 0;
}

/* Exact powers of ten for the fast path. */
static const double pow10tab[] = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9,
  1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

/* Plain decimals ("-12.375"): with at most 15 digits and 22 decimals both
** the integer and the power of ten are exact doubles, so one division is
** correctly rounded, the same double strtod gives (Clinger 1990).  Returns
** 0 when the text needs strtod. */
static int fast_decimal(const char *s, size_t n, double *v) {
  size_t i = 0, digits = 0, decimals = 0;
  int neg = 0, seen = 0;
  uint64_t m = 0;
  if (i < n && (s[i] == '-' || s[i] == '+')) neg = s[i++] == '-';
  for (; i < n && s[i] >= '0' && s[i] <= '9'; i++, seen = 1)
    if (m || s[i] != '0') { m = m * 10 + (uint64_t)(s[i] - '0'); digits++; }
  if (i < n && s[i] == '.') {
    for (i++; i < n && s[i] >= '0' && s[i] <= '9'; i++, seen = 1) {
      if (m || s[i] != '0') { m = m * 10 + (uint64_t)(s[i] - '0'); digits++; }
      decimals++;
    }
  }
  if (i != n || !seen || digits > 15 || decimals > 22) return 0;
  double x = (double)m / pow10tab[decimals];
  *v = neg ? -x : x;
  return 1;
}

/* Whether a cell (NUL-terminated, n bytes) is a number beyond the range of
** a double ("1e400"), which strtod would turn into an infinity. */
static int too_large(const char *s, size_t n) {
  char c = s[0] == '-' || s[0] == '+' ? s[1] : s[0];
  if (!((c >= '0' && c <= '9') || c == '.') || memchr(s, 'x', n) || memchr(s, 'X', n))
    return 0;
  char *end;
  double v = strtod(s, &end);
  return end == s + n && isinf(v);
}

/* Whether a cell (NUL-terminated, n bytes) reads fully as a number within
** the range of a double: "inf" is a number, "1e400" is not (a text, so
** that it is kept as written or named in an error, never read as inf). */
static int parse_number(const char *s, size_t n, double *v) {
  if (fast_decimal(s, n, v)) return 1;
  char c = s[0] == '-' || s[0] == '+' ? s[1] : s[0];
  if (!((c >= '0' && c <= '9') || c == '.' || c == 'i' || c == 'I' || c == 'n' || c == 'N'))
    return 0;
  if (memchr(s, 'x', n) || memchr(s, 'X', n)) return 0;   /* no hexadecimal */
  char *end;
  *v = strtod(s, &end);
  return end == s + n && !(isinf(*v) && c != 'i' && c != 'I');
}

/* Add a header name. */
static void add_name(reader *r, const char *s, size_t n) {
  if (r->nnames == SL_FRAME_MAX_COLS) {
    char lim[32];
    snprintf(lim, sizeof lim, "%d", SL_FRAME_MAX_COLS);
    fail_at(r, SL_ELIMIT, 1, 0, ": more than %s columns%s", lim, "");
    return;
  }
  if (r->nnames == r->capnames) {
    size_t nc = r->capnames ? r->capnames * 2 : 16;
    char **nm = realloc(r->names, nc * sizeof *nm);
    if (!nm) { sl_error_set(r->e, SL_ENOMEM, 0, 0, "out of memory"); r->failed = 1; return; }
    r->names = nm;
    r->capnames = nc;
  }
  char *t = malloc(n + 1);
  if (!t) { sl_error_set(r->e, SL_ENOMEM, 0, 0, "out of memory"); r->failed = 1; return; }
  memcpy(t, s, n);
  t[n] = '\0';
  r->names[r->nnames++] = t;
}

/* The header is complete: check its names and start the builder.  The
** first fault from the left is reported: an empty name, or the second use
** of a name (found by sorting: comparing every pair was quadratic in the
** number of columns). */
static void end_header(reader *r) {
  size_t empty = 0, k = 0, j = 0;
  while (empty < r->nnames && r->names[empty][0]) empty++;
  int dup = sl_names_duplicate((const char *const *)r->names, r->nnames, &k, &j, r->e);
  if (dup < 0) { r->failed = 1; return; }
  if (empty < r->nnames && (!dup || empty <= j))
    fail_at(r, SL_EARG, 1, (int)empty + 1, ": the header has an empty name%s%s", "", "");
  else if (dup) {
    char both[SL_MSG_MAX];
    snprintf(both, sizeof both, "%zu and %zu", k + 1, j + 1);
    fail_at(r, SL_EARG, 1, (int)j + 1, ": columns %s are both named '%s'", both, r->names[j]);
  }
  if (!r->failed && r->pass == 1 &&
      sl_build_init(&r->b, (const char *const *)r->names, r->nnames, r->e) != SL_OK)
    r->failed = 1;
}

/* One data cell, pass 1. */
static void data_cell(reader *r, size_t j, const char *s, size_t n) {
  sl_build *b = &r->b;
  sl_error *e = r->e;
  double v;
  int rc;
  if (j == 0 && sl_build_row(b, e) != SL_OK) { r->failed = 1; return; }
  if (is_missing(r, s, n)) rc = sl_build_missing(b, j);
  else if (memchr(s, '\0', n)) {
    fail_at(r, SL_EARG, r->rec_line, (int)j + 1, " ('%s'): a cell holds a NUL byte "
            "(is this a text file?)%s", r->names[j], "");
    return;
  } else if (parse_number(s, n, &v)) rc = sl_build_number(b, j, v, s, n, e);
  else rc = sl_build_text(b, j, s, n, r->rec_line, e);
  if (rc != SL_OK) r->failed = 1;
}

/* libcsv: a field ended. */
static void on_field(void *field, size_t n, void *data) {
  reader *r = data;
  if (r->failed || r->done) return;
  const char *s = field ? field : "";
  if (r->field == 0) r->rec_line = r->pending_line;
  size_t j = r->field++;
  if (r->records == 0 && memchr(s, '\0', n)) {   /* it would cut the name short */
    fail_at(r, SL_EARG, r->rec_line, (int)j + 1, ": a NUL byte in the header (is this a "
            "text file?)%s%s", "", "");
    return;
  }
  if (r->records == 0) { add_name(r, s, n); return; }
  if (j >= r->nnames) return;           /* ragged: counted, reported at the end */
  if (r->pass == 1) { data_cell(r, j, s, n); return; }
  size_t row = r->records - 1;
  if (!is_missing(r, s, n) && sl_build_wants(&r->b, j, row) &&
      sl_build_refill(&r->b, j, row, s, n, r->e) != SL_OK)
    r->failed = 1;
}

/* libcsv: a record ended. */
static void on_record(int c, void *data) {
  reader *r = data;
  (void)c;
  if (r->failed || r->done) return;
  if (r->records == 0) end_header(r);
  else if (r->field != r->nnames) {
    char got[64], want[64];
    snprintf(got, sizeof got, "%zu field%s", r->field, r->field == 1 ? "" : "s");
    snprintf(want, sizeof want, "%zu", r->nnames);
    fail_at(r, SL_EARG, r->rec_line, 0, ": %s, the header has %s", got, want);
    return;
  } else if (r->pass == 1) r->b.nrow++;
  else if (r->records >= r->refill_rows) r->done = 1;
  r->records++;
  r->field = 0;
}

/* The delimiter the header line uses most (outside quotes): comma,
** semicolon or tab, in that order on a tie; comma when none. */
static unsigned char detect_delim(const char *s, size_t n) {
  size_t count[3] = {0, 0, 0};
  int quoted = 0;
  for (size_t i = 0; i < n; i++) {
    char c = s[i];
    if (c == '"') quoted = !quoted;
    else if (!quoted && (c == '\n' || c == '\r')) break;
    else if (!quoted && c == ',') count[0]++;
    else if (!quoted && c == ';') count[1]++;
    else if (!quoted && c == '\t') count[2]++;
  }
  if (count[1] > count[0] && count[1] >= count[2]) return ';';
  if (count[2] > count[0] && count[2] > count[1]) return '\t';
  return ',';
}

/* How often c occurs in the header line (the first line, outside quotes). */
static size_t header_count(const char *s, size_t n, char c) {
  size_t k = 0;
  int quoted = 0;
  for (size_t i = 0; i < n; i++) {
    if (s[i] == '"') quoted = !quoted;
    else if (!quoted && (s[i] == '\n' || s[i] == '\r')) break;
    else if (!quoted && s[i] == c) k++;
  }
  return k;
}

/* A delimiter as the user writes it in the delim option. */
static const char *delim_name(char c) {
  switch (c) {
  case '\t': return "tab";
  case ' ': return "space";
  case ',': return "','";
  case ';': return "';'";
  default: return "'|'";
  }
}

/* A given delimiter the header line lacks while it holds another: reading
** on would give one column silently, so say which one the file seems to use. */
static int check_given_delim(reader *r, const char *s, size_t n) {
  static const char others[] = {',', ';', '\t', '|'};
  char d = (char)r->delim, best = 0;
  size_t most = 0;
  if (header_count(s, n, d) > 0) return 0;
  for (size_t i = 0; i < sizeof others; i++) {
    size_t k = others[i] == d ? 0 : header_count(s, n, others[i]);
    if (k > most) { most = k; best = others[i]; }
  }
  if (!best) return 0;   /* one column and no delimiter at all: nothing to say */
  fail_at(r, SL_EARG, 1, 0, ": delim = %s does not occur in the header line, which seems to "
          "use %s (give that delimiter, or leave delim out to detect it)", delim_name(d),
          delim_name(best));
  return 1;
}

/* Spaces libcsv trims around unquoted fields: with a tab delimiter, only
** the space (otherwise libcsv's own test, space and tab, applies). */
static int space_only(unsigned char c) { return c == ' '; }

/* libcsv grows the buffer of a cell by a fixed block (128 bytes unless
** set), so a cell of n bytes cost n / 128 reallocations, each a copy under
** a sanitizer: quadratic.  A block as large as the buffer makes the growth
** geometric. */
static void grow_block(struct csv_parser *p) {
  csv_set_blk_size(p, p->entry_size > BLOCK_MIN ? p->entry_size : BLOCK_MIN);
}

/* Feed bytes to libcsv a line at a time, keeping the line count. */
static void feed(reader *r, struct csv_parser *p, const char *s, size_t n) {
  while (n > 0 && !r->failed && !r->done) {
    const char *nl = memchr(s, '\n', n);
    size_t k = nl ? (size_t)(nl - s) + 1 : n;
    if (r->at_line_start && p->pstate == ROW_NOT_BEGUN) r->pending_line = r->line;
    grow_block(p);
    size_t used = csv_parse(p, s, k, on_field, on_record, r);
    if (r->failed || r->done) return;
    if (used != k) {
      int col = (int)r->field + 1;
      if (csv_error(p) == CSV_EPARSE)
        fail_at(r, SL_EARG, r->line, col, ": a quote inside a field that is not quoted, or "
                "text after a closing quote (quote the whole field and double the quotes "
                "inside it)%s%s", "", "");
      else {
        sl_error_set(r->e, SL_ENOMEM, 0, 0, "%s: %s", r->path, csv_strerror(csv_error(p)));
        r->failed = 1;
      }
      return;
    }
    if (p->entry_pos > SL_CSV_MAX_CELL) {
      char lim[32];
      snprintf(lim, sizeof lim, "%u MiB", SL_CSV_MAX_CELL >> 20);
      fail_at(r, SL_ELIMIT, r->pending_line, (int)r->field + 1, ": a cell of more than %s "
              "(is this a CSV file?)%s", lim, "");
      return;
    }
    r->at_line_start = nl != NULL;
    if (nl && r->line == SL_CSV_MAX_LINES) {
      sl_error_set(r->e, SL_ELIMIT, 0, 0, "%s has more than %d lines", r->path,
                   SL_CSV_MAX_LINES);
      r->failed = 1;
      return;
    }
    if (nl) r->line++;
    s += k;
    n -= k;
  }
}

/* Whether the caller asked the read to stop (Ctrl-C): then an error. */
static int stopped(reader *r) {
  if (!r->opts || !r->opts->stop || !*r->opts->stop) return 0;
  sl_error_set(r->e, SL_ELIMIT, 0, 0, "interrupted");
  r->failed = 1;
  return 1;
}

/* One pass over the file; fills sha with the digest of its bytes. */
static int read_pass(reader *r, unsigned char sha[32], uint64_t *bytes) {
  FILE *fp = sl_data_open(r->path, r->e);
  if (!fp) return r->e->code;
  char *buf = malloc(CHUNK);
  sl_sha256 h;
  struct csv_parser p;
  if (!buf || csv_init(&p, CSV_STRICT | CSV_STRICT_FINI | CSV_APPEND_NULL) != 0) {
    free(buf);
    fclose(fp);
    return sl_error_set(r->e, SL_ENOMEM, 0, 0, "out of memory");
  }
  if (sl_sha256_init(&h, r->e) != SL_OK) {
    free(buf); fclose(fp); csv_free(&p);
    return r->e->code;
  }
  r->line = r->pending_line = r->rec_line = 1;
  r->at_line_start = 1;
  r->field = r->records = 0;
  int first = 1;
  size_t n;
  while ((n = fread(buf, 1, CHUNK, fp)) > 0) {
    if (r->failed || stopped(r)) break;
    sl_sha256_update(&h, buf, n);
    if (r->done) continue;   /* pass 2: the fingerprint still covers the whole file */
    const char *s = buf;
    if (first) {
      if (n >= 3 && memcmp(s, "\xEF\xBB\xBF", 3) == 0) { s += 3; n -= 3; }
      r->delim = r->opts && r->opts->delim ? (unsigned char)r->opts->delim
                                           : detect_delim(s, n);
      csv_set_delim(&p, r->delim);
      if (r->delim == '\t') csv_set_space_func(&p, space_only);
      first = 0;
      if (r->opts && r->opts->delim && check_given_delim(r, s, n)) break;
    }
    feed(r, &p, s, n);
  }
  int rerr = ferror(fp) ? errno : 0;
  fclose(fp);
  free(buf);
  if (rerr) {
    csv_free(&p);
    return sl_error_set(r->e, SL_EIO, 0, 0, "cannot read '%s': %s", r->path, strerror(rerr));
  }
  if (!r->failed && !r->done && csv_fini(&p, on_field, on_record, r) != 0 && !r->failed)
    fail_at(r, SL_EARG, r->pending_line, (int)r->field + 1,
            ": a quoted field is never closed (a '\"' is missing)%s%s", "", "");
  csv_free(&p);
  sl_sha256_final(&h, sha);
  *bytes = h.bytes;
  return r->failed ? r->e->code : SL_OK;
}

/* The error for a column of numbers with a few texts among them. */
static void type_error(reader *r, size_t j) {
  const sl_bcol *c = &r->b.col[j];
  if (too_large(c->first_text, strlen(c->first_text)))
    fail_at(r, SL_EARG, c->first_line, (int)j + 1, " ('%s'): '%s' is beyond the range of a "
            "number (about 1.8e308; write inf for an infinity, or use {coerce = true} to read "
            "it as missing)", c->name, c->first_text);
  else
    fail_at(r, SL_EARG, c->first_line, (int)j + 1, " ('%s'): expected a number, found '%s' "
            "(use {coerce = true} to read it as missing)", c->name, c->first_text);
}

/* Free what the reader holds. */
static void reader_clear(reader *r) {
  for (size_t j = 0; j < r->nnames; j++) free(r->names[j]);
  free(r->names);
  sl_build_free(&r->b);
}

sl_frame *sl_csv_read(const char *path, const sl_csv_opts *opts, sl_read_report *rep,
                      sl_error *e) {
  sl_read_report own;
  if (!rep) rep = &own;
  memset(rep, 0, sizeof *rep);
  reader r;
  memset(&r, 0, sizeof r);
  r.path = path;
  r.opts = opts;
  r.e = e;
  r.pass = 1;
  if (opts && opts->delim && opts->delim != ',' && opts->delim != ';' &&
      opts->delim != '\t' && opts->delim != '|' && opts->delim != ' ') {
    sl_error_set(e, SL_EARG, 0, 0, "the delimiter must be one of , ; | tab or space");
    return NULL;
  }
  sl_frame *f = NULL;
  if (read_pass(&r, rep->sha256, &rep->bytes) != SL_OK) goto done;
  if (r.records == 0) { sl_error_set(e, SL_EARG, 0, 0, "%s is empty", path); goto done; }
  if (r.records == 1) {
    sl_error_set(e, SL_EARG, 0, 0, "%s has a header but no rows", path);
    goto done;
  }
  int bad = sl_build_decide(&r.b, SL_BUILD_CSV, opts && opts->coerce, rep);
  if (bad >= 0) { type_error(&r, (size_t)bad); goto done; }
  r.refill_rows = sl_build_refill_rows(&r.b);
  if (r.refill_rows > 0) {   /* categorical columns that began with numbers */
    unsigned char sha2[32];
    uint64_t bytes2;
    r.pass = 2;
    for (size_t j = 0; j < r.nnames; j++) free(r.names[j]);
    r.nnames = 0;
    if (read_pass(&r, sha2, &bytes2) != SL_OK) goto done;
    if (bytes2 != rep->bytes || memcmp(sha2, rep->sha256, 32) != 0) {
      sl_error_set(e, SL_EIO, 0, 0, "%s changed while it was being read", path);
      goto done;
    }
  }
  f = sl_build_finish(&r.b, e);
done:
  reader_clear(&r);
  return f;
}

/* ---- writing ---- */

/* Write text as a CSV field, quoted when it must be: a delimiter, quote or
** line end inside, a space libcsv would trim at an edge, or a byte-order
** mark at the start, which the reader drops at the start of a file. */
static void put_text(FILE *fp, const char *s) {
  size_t n = strlen(s);
  int quote = n > 0 && (s[0] == ' ' || s[0] == '\t' || s[n - 1] == ' ' || s[n - 1] == '\t');
  if (!quote) quote = strpbrk(s, ",;\t\"\r\n") != NULL || strncmp(s, "\xEF\xBB\xBF", 3) == 0;
  if (!quote) { fputs(s, fp); return; }
  fputc('"', fp);
  for (; *s; s++) {
    if (*s == '"') fputc('"', fp);
    fputc(*s, fp);
  }
  fputc('"', fp);
}

/* The shortest of %.15g, %.16g, %.17g that reads back to x. */
static void put_number(FILE *fp, double x) {
  char buf[40];
  for (int prec = 15; prec <= 17; prec++) {
    snprintf(buf, sizeof buf, "%.*g", prec, x);
    if (strtod(buf, NULL) == x) break;
  }
  fputs(buf, fp);
}

/* Whether the reader takes text s for a missing value: an empty cell, a
** missing-value token, or a spelling of NaN that strtod reads. */
static int reads_missing(const char *s) {
  reader none;
  memset(&none, 0, sizeof none);
  size_t n = strlen(s);
  double v;
  return is_missing(&none, s, n) || (parse_number(s, n, &v) && isnan(v));
}

/* A text that would come back as a missing value cannot be written: the
** error names its column and first row. */
static int check_texts(const sl_frame *f, sl_error *e) {
  for (size_t j = 0; j < f->ncol; j++) {
    const sl_column *c = &f->col[j];
    size_t bad = 0;
    for (size_t k = 0; c->type == SL_CATEGORICAL && k < c->nlevels; k++)
      bad += reads_missing(c->levels[k]) != 0;
    for (size_t i = 0; bad > 0 && i < f->nrow; i++) {   /* the first row using one */
      if (c->code[i] < 0 || !reads_missing(c->levels[c->code[i]])) continue;
      char cell[64];
      const char *t = c->levels[c->code[i]];
      sl_cell_excerpt(t, strlen(t), cell, sizeof cell);
      return sl_error_set(e, SL_EARG, (int)(i + 1 < INT_MAX ? i + 1 : 0), (int)j + 1,
                          "column '%s', row %zu: the text '%s' would read back as a missing "
                          "value (empty, NA, NaN and . are missing in a CSV file)", c->name,
                          i + 1, cell);
    }
  }
  return SL_OK;
}

int sl_csv_write(const sl_frame *f, const char *path, sl_error *e) {
  if (check_texts(f, e) != SL_OK) return e->code;
  FILE *fp = fopen(path, "wb");
  if (!fp) return sl_error_set(e, SL_EIO, 0, 0, "cannot write '%s': %s", path, strerror(errno));
  for (size_t j = 0; j < f->ncol; j++) {
    if (j) fputc(',', fp);
    put_text(fp, f->col[j].name);
  }
  fputc('\n', fp);
  for (size_t i = 0; i < f->nrow; i++) {
    for (size_t j = 0; j < f->ncol; j++) {
      const sl_column *c = &f->col[j];
      if (j) fputc(',', fp);
      if (c->type == SL_NUMERIC && !isnan(c->x[i])) put_number(fp, c->x[i]);
      else if (c->type == SL_CATEGORICAL && c->code[i] >= 0)
        put_text(fp, c->levels[c->code[i]]);
      else if (f->ncol == 1) fputs("\"\"", fp);   /* a blank line would be skipped */
    }
    fputc('\n', fp);
  }
  int err = ferror(fp) ? errno : 0;
  if (fclose(fp) != 0 && !err) err = errno ? errno : EIO;
  if (err) return sl_error_set(e, SL_EIO, 0, 0, "cannot write '%s': %s", path, strerror(err));
  return SL_OK;
}
