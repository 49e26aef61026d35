/*
** replayer.h: the process that runs a replayed log, apart from the
** parent that judges it.  replayer_install adds to the hooks table:
** replay_spawn, replay_send, replay_exit (the child and its records),
** file_kind, fingerprint (files as the parent sees them) and
** sandbox_available (can the kernel confine a replay here?).
*/
#ifndef SLUICE_REPLAYER_H
#define SLUICE_REPLAYER_H

#include <lua.h>

void replayer_install(lua_State *L);

#endif
