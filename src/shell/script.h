/*
** script.h: running a script, -e code or a session log the way the prompt
** runs what is typed: one top-level statement at a time, each an entry of
** the session.
*/
#ifndef SLUICE_SCRIPT_H
#define SLUICE_SCRIPT_H

#include <stddef.h>
#include <lua.h>

/* Run text (chunkname as for lua_load: "@path", "=stdin", "=(command
** line)"; shown names it in messages) with the nargs strings of args as
** "...".  Entries are numbered on from *count, which is left at the last.
** A session log (its first line says so) runs its entries; an error the
** log recorded is shown as the prompt showed it and the run goes on.
** Returns LUA_OK, or the status of the failure, already reported. */
int script_run(lua_State *L, int *count, const char *text, size_t len,
               const char *chunkname, const char *shown, char **args, int nargs);

/* Read the file path (NULL: standard input) and script_run it. */
int script_run_file(lua_State *L, int *count, const char *path, char **args,
                    int nargs);

#endif
