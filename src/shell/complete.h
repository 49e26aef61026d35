/*
** complete.h: Tab completion at the prompt.  In code it completes global
** names, fields after "." and methods after ":" (for a data frame: its
** columns after ".", its methods after ":", a column's methods after
** f.col:); inside a string it completes the column names of a frame
** indexed as f["..., the node names of the graphs held in globals, and
** file names when no node name fits.  It calls no Lua function.
*/
#ifndef SLUICE_COMPLETE_H
#define SLUICE_COMPLETE_H

#include <lua.h>

/* Hook completion into Readline, looking up names in L. */
void complete_install(lua_State *L);

/* The lines of a pending chunk above the current one (NULL when none),
** so that a string opened there is known to be open. */
void complete_pending(const char *chunk);

#endif
