/*
** log.h: what the session log (lua/sluice/session.lua) needs from C: the
** services it cannot have in Lua (fsync, mkdir, realpath, Markdown to
** HTML), and the calls the prompt makes around every input.
*/
#ifndef SLUICE_LOG_H
#define SLUICE_LOG_H

#include <lua.h>

/* Put fsync, mkdir, realpath and markdown_html into the hooks table. */
void log_install(lua_State *L);

/* Tell the session layer the interactive session begins (capture set up). */
void log_session_start(lua_State *L);

/* Start the log at path (NULL: a new file under ./sluice-logs); say
** where it goes on standard output when say is set.  Returns 1 when the
** log is open.  When it cannot be, a path given (--log) is an error
** ("sluice: --log PATH: ..."), the default file costs a warning. */
int log_start(lua_State *L, const char *path, int say);

/* Around one input: begin (its number, its text, whether it was an
** expression), each text the prompt auto-prints, the end (msg: the error,
** or NULL; nres: the number of values, -1 after an error), and an input that did not compile. */
void log_begin(lua_State *L, int n, const char *text, int expr);
void log_out(lua_State *L, const char *s, size_t len);
void log_end(lua_State *L, const char *msg, int nres);
void log_skip(lua_State *L, int n, const char *text, const char *msg);

/* Compile one input of the session as lua_load does (status, and the
** function or the message on top), so that it sees the session's
** top-level locals and keeps its own (sluice.session's load_entry); plain
** luaL_loadbuffer when the session layer is missing. */
int log_load(lua_State *L, const char *code, size_t len, const char *name);

#endif
