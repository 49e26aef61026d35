/*
** bind_frame.h: data frames in Lua (userdata "sluice.frame"), for the
** bindings of the estimators.
*/
#ifndef SL_BIND_FRAME_H
#define SL_BIND_FRAME_H

#include <lua.h>
#include "frame.h"

#define SL_FRAME_MT   "sluice.frame"
#define SL_COLUMN_MT  "sluice.column"
#define SL_SUMMARY_MT "sluice.summary"

/* Registers read_csv and read_sql in the module table on top. */
int sl_open_frame(lua_State *L);
/* The frame at argument arg, or an argument error. */
sl_frame *sl_bind_checkframe(lua_State *L, int arg);
/* Push f as a new frame userdata that owns it (no fingerprint). */
void sl_bind_pushframe(lua_State *L, sl_frame *f);

#endif
