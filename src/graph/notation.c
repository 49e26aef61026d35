/*
** notation.c: the parser of the sluice graph notation.
**
**   text      = { statement (newline | ";") }
**   statement = "hidden" names | names { arrow names } | (nothing)
**   names     = name { "," name }
**   arrow     = "->" | "<-" | "<->"
**   name      = bare | quoted        (bare: letters, digits, "_", ".", UTF-8)
**   quoted    = '"' { char | '\"' | '\\' | '\u{' hex '}' } '"'
**
** A "#" starts a comment that runs to the end of the line.  Columns count
** UTF-8 characters from 1.  A bare name may not hold a character that
** prints as nothing or as a blank (invisible.c): two names differing by
** one would look the same.  Quoted names may, and \u{200B} writes one.
*/
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "notation.h"

enum tok { T_EOF, T_END, T_NAME, T_RIGHT, T_LEFT, T_BOTH, T_COMMA, T_HIDDEN };

typedef struct lexer {
  const char *p, *end;
  int line, col;            /* of *p */
  /* the current token */
  int tok, tline, tcol;
  const char *tstart;       /* bare names point into the text ... */
  size_t tlen;
  char *qbuf;               /* ... quoted ones are decoded here */
  size_t qcap;
  int quoted;
  sl_error *e;
} lexer;

static const char *tok_text(int t) {
  switch (t) {
    case T_EOF: return "end of text";
    case T_END: return "end of statement";
    case T_NAME: return "a name";
    case T_RIGHT: return "'->'";
    case T_LEFT: return "'<-'";
    case T_BOTH: return "'<->'";
    case T_COMMA: return "','";
    default: return "'hidden'";
  }
}

static int is_bare(unsigned char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
         c == '_' || c == '.' || c >= 0x80;
}

/* Move one byte forward, keeping line and column. */
static void step(lexer *L) {
  unsigned char c = (unsigned char)*L->p++;
  if (c == '\n') { L->line++; L->col = 1; }
  else if ((c & 0xC0) != 0x80) L->col++;
}

static int lex_error(lexer *L, int line, int col, const char *msg) {
  return sl_error_set(L->e, SL_ESYNTAX, line, col, "%s", msg);
}

/* Length of a valid UTF-8 sequence at p, or 0. */
static size_t utf8_len(const char *p, const char *end, uint32_t *cp) {
  return sl_utf8_decode(p, (size_t)(end - p), cp);
}

static int qput(lexer *L, char c) {
  if (L->tlen + 1 >= L->qcap) {
    size_t cap = L->qcap ? L->qcap * 2 : 64;
    char *q = realloc(L->qbuf, cap);
    if (!q) return sl_error_set(L->e, SL_ENOMEM, 0, 0, "out of memory");
    L->qbuf = q;
    L->qcap = cap;
  }
  L->qbuf[L->tlen++] = c;
  return SL_OK;
}

/* \u{hex} in a quoted name (L at the 'u'): the character, as UTF-8. */
static int lex_escape(lexer *L, int ecol) {
  static const char *const bad = "\\u{...} takes 1 to 6 hex digits naming a Unicode character "
                                 "(not a control character or a surrogate), e.g. \\u{200B}";
  step(L);
  if (L->p >= L->end || *L->p != '{') return lex_error(L, L->line, ecol, bad);
  step(L);
  uint32_t cp = 0;
  int digits = 0;
  for (; L->p < L->end && *L->p != '}'; step(L), digits++) {
    char h = *L->p;
    int v = h >= '0' && h <= '9' ? h - '0' : h >= 'a' && h <= 'f' ? h - 'a' + 10
          : h >= 'A' && h <= 'F' ? h - 'A' + 10 : -1;
    if (v < 0 || digits == 6) return lex_error(L, L->line, ecol, bad);
    cp = cp * 16 + (uint32_t)v;
  }
  if (L->p >= L->end || digits == 0 || cp < 0x20 || cp > 0x10FFFF ||
      (cp >= 0xD800 && cp <= 0xDFFF))
    return lex_error(L, L->line, ecol, bad);
  step(L);
  char u[4];
  size_t n = cp < 0x80 ? 1 : cp < 0x800 ? 2 : cp < 0x10000 ? 3 : 4;
  if (n == 1) u[0] = (char)cp;
  else {
    for (size_t i = n - 1; i > 0; i--) { u[i] = (char)(0x80 | (cp & 0x3F)); cp >>= 6; }
    u[0] = (char)((n == 2 ? 0xC0 : n == 3 ? 0xE0 : 0xF0) | cp);
  }
  for (size_t i = 0; i < n; i++) if (qput(L, u[i])) return L->e->code;
  return SL_OK;
}

/* An invisible character at L in a bare name: a caret error naming it. */
static int invisible_error(lexer *L, uint32_t cp) {
  return sl_error_set(L->e, SL_ESYNTAX, L->line, L->col,
                      "invisible character U+%04X (%s) in a name; quote the name if you mean it",
                      (unsigned)cp, sl_invisible_name(cp));
}

/* A quoted name: "..." with \", \\ and \u{hex} as escapes, on one line. */
static int lex_quoted(lexer *L) {
  int line = L->line, col = L->col;
  step(L);
  L->quoted = 1;
  L->tlen = 0;
  for (;;) {
    if (L->p >= L->end || *L->p == '\n' || *L->p == '\r')
      return lex_error(L, line, col, "unterminated quoted name (a name ends with '\"' on the same line)");
    unsigned char c = (unsigned char)*L->p;
    if (c == '"') { step(L); break; }
    if (c == '\\') {
      int ecol = L->col;
      step(L);
      if (L->p < L->end && (*L->p == '"' || *L->p == '\\')) {
        if (qput(L, *L->p)) return L->e->code;
        step(L);
        continue;
      }
      if (L->p < L->end && *L->p == 'u') {
        if (lex_escape(L, ecol)) return L->e->code;
        continue;
      }
      return lex_error(L, line, ecol, "unknown escape in a quoted name "
                       "(only \\\", \\\\ and \\u{hex} are allowed)");
    }
    uint32_t cp;
    size_t n = utf8_len(L->p, L->end, &cp);
    if (n == 0 || c < 0x20)
      return lex_error(L, L->line, L->col, n ? "control character in a quoted name"
                                               : "invalid UTF-8 in a quoted name");
    for (size_t i = 0; i < n; i++) { if (qput(L, *L->p)) return L->e->code; step(L); }
  }
  if (L->tlen == 0) return lex_error(L, line, col, "empty quoted name");
  if (L->tlen > SL_MAX_NAME) return lex_error(L, line, col, "name too long");
  L->tstart = L->qbuf;
  L->tok = T_NAME;
  return SL_OK;
}

/* Read the next token into L. */
static int lex(lexer *L) {
  for (;;) {   /* skip blanks and comments, but not newlines */
    while (L->p < L->end && (*L->p == ' ' || *L->p == '\t' || *L->p == '\r' ||
                             *L->p == '\f' || *L->p == '\v'))
      step(L);
    if (L->p < L->end && *L->p == '#') {
      while (L->p < L->end && *L->p != '\n') step(L);
      continue;
    }
    break;
  }
  L->tline = L->line;
  L->tcol = L->col;
  L->quoted = 0;
  if (L->p >= L->end) { L->tok = T_EOF; return SL_OK; }
  const char *s = L->p;
  size_t left = (size_t)(L->end - s);
  unsigned char c = (unsigned char)*s;
  if (c == '\n' || c == ';') { step(L); L->tok = T_END; return SL_OK; }
  if (c == ',') { step(L); L->tok = T_COMMA; return SL_OK; }
  if (left >= 3 && memcmp(s, "<->", 3) == 0) { step(L); step(L); step(L); L->tok = T_BOTH; return SL_OK; }
  if (left >= 2 && memcmp(s, "->", 2) == 0) { step(L); step(L); L->tok = T_RIGHT; return SL_OK; }
  if (left >= 2 && memcmp(s, "<-", 2) == 0) { step(L); step(L); L->tok = T_LEFT; return SL_OK; }
  if (c == '"') return lex_quoted(L);
  if (is_bare(c)) {
    while (L->p < L->end && is_bare((unsigned char)*L->p)) {
      if ((unsigned char)*L->p >= 0x80) {
        uint32_t cp;
        size_t n = utf8_len(L->p, L->end, &cp);
        if (n == 0) return lex_error(L, L->line, L->col, "invalid UTF-8 in a name");
        if (sl_invisible_name(cp)) return invisible_error(L, cp);
        for (size_t i = 0; i < n; i++) step(L);
      } else step(L);
    }
    L->tstart = s;
    L->tlen = (size_t)(L->p - s);
    if (L->tlen > SL_MAX_NAME) return lex_error(L, L->tline, L->tcol, "name too long");
    L->tok = (L->tlen == 6 && memcmp(s, "hidden", 6) == 0) ? T_HIDDEN : T_NAME;
    return SL_OK;
  }
  if (c == '-' || c == '<' || c == '=' || c == '>')
    return lex_error(L, L->line, L->col,
                     "unknown arrow: write '->', '<-' or '<->'");
  char msg[96];
  if (c < 0x20 || c == 0x7f)
    snprintf(msg, sizeof msg, "unexpected control character (byte 0x%02x)", c);
  else
    snprintf(msg, sizeof msg, "unexpected character '%c' (quote names that hold it)", c);
  return lex_error(L, L->line, L->col, msg);
}

typedef struct parser {
  lexer L;
  sl_builder *b;
  int32_t *left, *right;    /* the node lists on each side of an arrow */
  size_t nleft, nright, capleft, capright;
} parser;

static int push(parser *P, int32_t **list, size_t *n, size_t *cap, int32_t v) {
  if (*n == *cap) {
    size_t c = *cap ? *cap * 2 : 16;
    int32_t *l = realloc(*list, c * sizeof *l);
    if (!l) return sl_error_set(P->L.e, SL_ENOMEM, 0, 0, "out of memory");
    *list = l;
    *cap = c;
  }
  (*list)[(*n)++] = v;
  return SL_OK;
}

static int expect_name(parser *P, const char *after) {
  lexer *L = &P->L;
  if (L->tok == T_NAME) return SL_OK;
  if (L->tok == T_HIDDEN)
    return lex_error(L, L->tline, L->tcol, "'hidden' is a keyword: quote it (\"hidden\") to use it as a name");
  char msg[128];
  snprintf(msg, sizeof msg, "expected a node name %s, found %s", after, tok_text(L->tok));
  return lex_error(L, L->tline, L->tcol, msg);
}

/* names = name { "," name }, into the right-hand list. */
static int parse_names(parser *P, const char *after) {
  lexer *L = &P->L;
  P->nright = 0;
  for (;;) {
    if (expect_name(P, after)) return L->e->code;
    int32_t v = sl_builder_node(P->b, L->tstart, L->tlen, L->e);
    if (v < 0) { L->e->line = L->tline; L->e->col = L->tcol; return L->e->code; }
    if (push(P, &P->right, &P->nright, &P->capright, v)) return L->e->code;
    if (lex(L)) return L->e->code;
    if (L->tok != T_COMMA) return SL_OK;
    if (lex(L)) return L->e->code;
    after = "after ','";
  }
}

static int connect(parser *P, int arrow, int line, int col) {
  for (size_t i = 0; i < P->nleft; i++)
    for (size_t j = 0; j < P->nright; j++) {
      int32_t a = P->left[i], b = P->right[j];
      int rc = arrow == T_LEFT ? sl_builder_edge(P->b, b, a, SL_DIRECTED, line, col, P->L.e)
             : sl_builder_edge(P->b, a, b, arrow == T_RIGHT ? SL_DIRECTED : SL_BIDIRECTED,
                               line, col, P->L.e);
      if (rc) return rc;
    }
  return SL_OK;
}

static int is_near_hidden(const char *s, size_t n) {
  char w[16];
  if (n >= sizeof w) return 0;
  memcpy(w, s, n);
  w[n] = '\0';
  const char *k = "hidden";
  return sl_closest(w, &k, 1) != NULL;
}

static int parse_statement(parser *P) {
  lexer *L = &P->L;
  if (L->tok == T_HIDDEN) {
    if (lex(L)) return L->e->code;
    if (parse_names(P, "after 'hidden'")) return L->e->code;
    for (size_t i = 0; i < P->nright; i++) sl_builder_hidden(P->b, P->right[i]);
    if (L->tok != T_END && L->tok != T_EOF) {
      char msg[160];
      snprintf(msg, sizeof msg, "'hidden' takes names separated by ',' only, found %s; "
               "write edges in a statement of their own", tok_text(L->tok));
      return lex_error(L, L->tline, L->tcol, msg);
    }
  } else {
    if (L->tok == T_RIGHT || L->tok == T_LEFT || L->tok == T_BOTH)
      return lex_error(L, L->tline, L->tcol, "an arrow needs a node name before it");
    if (L->tok == T_COMMA)
      return lex_error(L, L->tline, L->tcol, "expected a node name before ','");
    int line = L->tline, col = L->tcol;
    const char *first = L->tstart;
    size_t firstlen = L->tlen;
    int firstquoted = L->quoted;
    if (parse_names(P, "")) return L->e->code;
    if (L->tok == T_NAME && P->nright == 1 && !firstquoted && is_near_hidden(first, firstlen))
      return lex_error(L, line, col, "unknown keyword; did you mean 'hidden'?");
    while (L->tok == T_RIGHT || L->tok == T_LEFT || L->tok == T_BOTH) {
      int arrow = L->tok, aline = L->tline, acol = L->tcol;
      int32_t *t = P->left; P->left = P->right; P->right = t;
      size_t c = P->capleft; P->capleft = P->capright; P->capright = c;
      P->nleft = P->nright;
      if (lex(L)) return L->e->code;
      if (parse_names(P, arrow == T_RIGHT ? "after '->'" : arrow == T_LEFT ? "after '<-'"
                                                                             : "after '<->'"))
        return L->e->code;
      if (connect(P, arrow, aline, acol)) return L->e->code;
    }
  }
  if (L->tok == T_END || L->tok == T_EOF) return SL_OK;
  char msg[160];
  snprintf(msg, sizeof msg, "expected an arrow, ',' or the end of the statement, found %s",
           tok_text(L->tok));
  return lex_error(L, L->tline, L->tcol, msg);
}

int sl_notation_parse(sl_builder *b, const char *text, size_t len, sl_error *e) {
  parser P;
  memset(&P, 0, sizeof P);
  P.b = b;
  P.L.p = text;
  P.L.end = text + len;
  P.L.line = P.L.col = 1;
  P.L.e = e;
  int rc = SL_OK;
  /* a UTF-8 byte-order mark is allowed at the very start */
  if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) P.L.p += 3;
  if ((rc = lex(&P.L)) == SL_OK)
    while (P.L.tok != T_EOF) {
      if (P.L.tok == T_END) { if ((rc = lex(&P.L))) break; continue; }
      if ((rc = parse_statement(&P))) break;
      if (P.L.tok == T_END && (rc = lex(&P.L))) break;
    }
  free(P.L.qbuf); free(P.left); free(P.right);
  return rc;
}

sl_graph *sl_graph_parse(const char *text, size_t len, sl_error *e) {
  sl_builder *b = sl_builder_alloc();
  if (!b) { sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); return NULL; }
  sl_graph *g = NULL;
  if (sl_notation_parse(b, text, len, e) == SL_OK) g = sl_builder_finish(b, e);
  sl_builder_free(b);
  return g;
}

sl_graph *sl_graph_read(const char *path, sl_error *e) {
  FILE *f = fopen(path, "rb");
  if (!f) { sl_error_set(e, SL_EIO, 0, 0, "cannot open '%s': %s", path, strerror(errno)); return NULL; }
  sl_buf b;
  sl_buf_init(&b);
  char chunk[65536];
  size_t n;
  while ((n = fread(chunk, 1, sizeof chunk, f)) > 0) sl_buf_add(&b, chunk, n);
  int bad = ferror(f);
  fclose(f);
  sl_graph *g = NULL;
  if (bad) sl_error_set(e, SL_EIO, 0, 0, "cannot read '%s'", path);
  else if (b.failed) sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory reading '%s'", path);
  else g = sl_graph_parse(b.data ? b.data : "", b.len, e);
  sl_buf_free(&b);
  return g;
}

/* ---- removal texts for g:without ---- */

int sl_removal_parse(const sl_graph *g, const char *text, size_t len,
                     sl_removal *r, sl_error *e) {
  memset(r, 0, sizeof *r);
  sl_builder *b = sl_builder_alloc();
  size_t n = sl_graph_nnodes(g);
  r->drop_node = calloc(n ? n : 1, 1);
  if (!b || !r->drop_node) {
    sl_builder_free(b);
    return sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory");
  }
  int rc = sl_notation_parse(b, text, len, e);
  sl_graph *d = rc == SL_OK ? sl_builder_finish(b, e) : NULL;
  if (!d) { sl_builder_free(b); sl_removal_free(r); return e->code; }
  rc = SL_OK;
  size_t nd = sl_graph_ndirected(d) + sl_graph_nbidirected(d);
  r->edges = malloc((nd ? nd : 1) * sizeof *r->edges);
  sl_edge *de = malloc((nd ? nd : 1) * sizeof *de);
  unsigned char *touched = calloc(sl_graph_nnodes(d) ? sl_graph_nnodes(d) : 1, 1);
  if (!r->edges || !de || !touched) { rc = sl_error_set(e, SL_ENOMEM, 0, 0, "out of memory"); goto done; }
  if (sl_graph_nbidirected(d) || sl_graph_ndirected(d)) sl_graph_edges(d, de);
  for (size_t i = 0; i < nd; i++) {
    const char *fa = sl_graph_name(d, de[i].from), *ta = sl_graph_name(d, de[i].to);
    int32_t f = sl_graph_lookup(g, fa, strlen(fa), e);
    int32_t t = f < 0 ? -1 : sl_graph_lookup(g, ta, strlen(ta), e);
    if (f < 0 || t < 0) { rc = SL_ENAME; goto done; }
    touched[de[i].from] = touched[de[i].to] = 1;
    size_t k, cnt;
    const int32_t *adj = de[i].kind == SL_DIRECTED ? sl_graph_children(g, f, &cnt)
                                                   : sl_graph_siblings(g, f, &cnt);
    for (k = 0; k < cnt && adj[k] != t; k++) {}
    if (k == cnt) {
      rc = sl_error_set(e, SL_ENAME, 0, 0, "no edge %s %s %s in the graph", fa,
                        de[i].kind == SL_DIRECTED ? "->" : "<->", ta);
      goto done;
    }
    r->edges[r->nedges++] = (sl_edge){f, t, de[i].kind};
  }
  for (size_t v = 0; v < sl_graph_nnodes(d); v++) {
    if (touched[v]) continue;   /* a name alone removes the node */
    const char *nm = sl_graph_name(d, (int32_t)v);
    int32_t w = sl_graph_lookup(g, nm, strlen(nm), e);
    if (w < 0) { rc = SL_ENAME; goto done; }
    r->drop_node[w] = 1;
  }
done:
  free(de); free(touched);
  sl_graph_free(d);
  sl_builder_free(b);
  if (rc) sl_removal_free(r);
  return rc;
}

void sl_removal_free(sl_removal *r) {
  free(r->drop_node);
  free(r->edges);
  memset(r, 0, sizeof *r);
}
