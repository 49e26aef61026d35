/*
** repl.h: the heart of the prompt, apart from how lines are read: it
** gathers lines into a chunk until Lua can compile it, runs it, and prints
** what an expression returns.
*/
#ifndef SLUICE_REPL_H
#define SLUICE_REPL_H

#include <stddef.h>
#include <lua.h>

#define REPL_PROMPT1 "sluice> "
#define REPL_PROMPT2 "   ...> "

typedef struct repl {
  lua_State *L;
  char *chunk;      /* the pending chunk, or the one just finished */
  size_t len, cap;
  int lines;        /* lines in chunk */
  int count;        /* chunks begun: chunk N is named "[input N]" */
  int done;         /* chunk is finished; the next line begins another */
  int format_ref;   /* sluice.print's format in the registry, or LUA_REFNIL */
  int expr;         /* the chunk compiled as "return chunk" */
  int record;       /* tell the session log of every input (log.h) */
} repl;

void repl_init(repl *R, lua_State *L);
void repl_free(repl *R);

/* What repl_take made of a line. */
enum repl_state {
  REPL_MORE,    /* the chunk needs more lines */
  REPL_READY,   /* the chunk compiled: its function is on the stack */
  REPL_FAILED   /* the chunk is wrong; the message is printed */
};

/* Take one line of input (no newline) and compile the chunk so far;
** returns an enum repl_state.  On REPL_READY call repl_run next. */
int repl_take(repl *R, const char *line);

/* Run the chunk that repl_take compiled and print its values. */
void repl_run(repl *R);

/* repl_take, then repl_run when the chunk is ready; 1 when the chunk
** needs more lines. */
int repl_feed(repl *R, const char *line);

/* The text of the pending or just finished chunk ("" when none). */
const char *repl_text(const repl *R);

/* The pending chunk, or NULL when the next line begins a new chunk. */
const char *repl_pending(const repl *R);

/* Drop the pending chunk. */
void repl_reset(repl *R);

/* The prompt for the next line. */
const char *repl_prompt(const repl *R);

/* The prompt over a standard input that is not a terminal: plain lines,
** no editing.  Returns at end of input. */
void repl_run_plain(repl *R);

#endif
