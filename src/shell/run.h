/*
** run.h: running Lua code under the shell's rules: Ctrl-C stops it, error
** objects become messages, script errors carry file and line.
*/
#ifndef SLUICE_RUN_H
#define SLUICE_RUN_H

#include <lua.h>

/* How an error message is prepared. */
enum run_mode {
  RUN_SCRIPT,   /* the message gains "file:line: " when it has no position */
  RUN_PROMPT,   /* the message is left as the code raised it */
  RUN_ENTRY     /* as RUN_PROMPT, and the place of the error is kept for
                ** run_entry_position */
};

/* Call the function below narg arguments on the stack, like lua_pcall,
** with nres results or the message on top. */
int run_call(lua_State *L, int narg, int nres, enum run_mode mode);

/* Print "sluice: message" on stderr and pop it when status is an error.
** Returns status. */
int run_report(lua_State *L, int status);

/* Run a string (chunkname as for lua_load); status as lua_pcall. */
int run_string(lua_State *L, const char *code, const char *chunkname);

/* Run the script file path (NULL: standard input) with the nargs strings
** of args as "...". */
int run_script(lua_State *L, const char *path, char **args, int nargs);

/* After a RUN_ENTRY call failed: push "where:123: ", the place of the
** innermost Lua function when the error was raised ("" when none). */
void run_entry_position(lua_State *L);

/* Put suggest_global (the prompt's suggestion of a misspelled function
** name) into the hooks table. */
void run_install(lua_State *L);

/* 1 when the first line of msg starts with a position "where:123: ". */
int run_has_position(const char *msg);

#endif
