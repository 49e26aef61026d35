/*
** replay.h: sluice --replay LOG [--out DIR] [--trust] [--update].
*/
#ifndef SLUICE_REPLAY_H
#define SLUICE_REPLAY_H

#include <lua.h>

#include "options.h"

/* Replay the log named in o; returns the exit status (0: every command
** matched; 1: a difference, an error, a blocked call or a bad log). */
int replay_run(lua_State *L, const sl_options *o);

#endif
