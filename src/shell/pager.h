/*
** pager.h: long text at the prompt through the terminal's pager.  The
** prompt installs hooks.page(fn): fn runs with standard output going to a
** temporary file, whose text the pager ($PAGER, default "less -R") then
** shows.  Only the prompt installs it, so scripts and replays never page.
*/
#ifndef SLUICE_PAGER_H
#define SLUICE_PAGER_H

#include <lua.h>

/* The pager command when none is set in the environment. */
#define PAGER_DEFAULT "less -R"

/* Put hooks.page into the hooks table of L. */
void pager_install(lua_State *L);

#endif
