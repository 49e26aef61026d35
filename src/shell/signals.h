/*
** signals.h: what the shell does on Ctrl-C, Ctrl-Z and window resizes.
** While Lua code runs, Ctrl-C stops it with the error "interrupted"; at the
** prompt each signal only raises a flag that the prompt loop takes.
*/
#ifndef SLUICE_SIGNALS_H
#define SLUICE_SIGNALS_H

#include <lua.h>

/* Install the handlers for SIGINT and SIGWINCH. */
void sig_init(void);

/* From now until sig_run_end, Ctrl-C interrupts the Lua code of L (and a
** Ctrl-C still pending from before interrupts it at once). */
void sig_run_begin(lua_State *L);
void sig_run_end(lua_State *L);

/* While on, Ctrl-Z at the prompt raises a flag instead of stopping. */
void sig_prompt(int on);

/* 1 when sig (SIGINT, SIGTSTP or SIGWINCH) arrived since the last call. */
int sig_take(int sig);

#endif
