/*
** signals.c: the shell's signal handlers.  The only global state of the
** program lives here, because a signal handler can reach nothing else: the
** state whose Lua code Ctrl-C must stop, and one flag per signal for the
** prompt loop.  The technique for stopping Lua is the one of lua.c: the
** handler sets a hook, and the hook raises the error at the next call,
** return or instruction.
*/
#include <signal.h>
#include <string.h>

#include <lua.h>

#include "bind.h"
#include "signals.h"

static lua_State *volatile running = NULL;
static volatile sig_atomic_t seen_int, seen_tstp, seen_winch;

/* The hook set by Ctrl-C: clear itself and stop the computation. */
static void stop_hook(lua_State *L, lua_Debug *ar) {
  (void)ar;
  lua_sethook(L, NULL, 0, 0);
  lua_pushliteral(L, "interrupted");
  lua_error(L);
}

/* Make L stop at its next call, return or instruction. */
static void arm(lua_State *L) {
  lua_sethook(L, stop_hook, LUA_MASKCALL | LUA_MASKRET | LUA_MASKCOUNT, 1);
}

/* The handler of all three signals: async-signal-safe work only. */
static void on_signal(int sig) {
  lua_State *L = running;
  if (sig == SIGINT && L != NULL) {
    arm(L);
    sl_bind_stop = 1;   /* and the library loops that poll it */
  }
  else if (sig == SIGINT)
    seen_int = 1;
  else if (sig == SIGTSTP)
    seen_tstp = 1;
  else if (sig == SIGWINCH)
    seen_winch = 1;
}

/* Point sig at handler; SA_RESTART keeps a resize from failing a read. */
static void set_handler(int sig, void (*handler)(int)) {
  struct sigaction sa;
  memset(&sa, 0, sizeof sa);
  sa.sa_handler = handler;
  sa.sa_flags = SA_RESTART;
  sigemptyset(&sa.sa_mask);
  sigaction(sig, &sa, NULL);
}

/* Ctrl-C and window resizes go to on_signal from now on. */
void sig_init(void) {
  set_handler(SIGINT, on_signal);
  set_handler(SIGWINCH, on_signal);
}

/* Ctrl-C now stops L.  A Ctrl-C that came while no code ran and no prompt
** took it (just after Enter, or while a script loaded) stops L at once. */
void sig_run_begin(lua_State *L) {
  running = L;
  if (seen_int) {
    seen_int = 0;
    arm(L);
  }
}

/* Stop watching L, and drop a hook that a late Ctrl-C may have set (but
** not one that the user's own code set with debug.sethook). */
void sig_run_end(lua_State *L) {
  running = NULL;
  if (lua_gethook(L) == stop_hook)
    lua_sethook(L, NULL, 0, 0);
}

/* Catch Ctrl-Z (at the prompt), or let it stop the process. */
void sig_prompt(int on) {
  set_handler(SIGTSTP, on ? on_signal : SIG_DFL);
}

/* Read and clear the flag of one signal. */
int sig_take(int sig) {
  volatile sig_atomic_t *flag = sig == SIGINT ? &seen_int
                              : sig == SIGTSTP ? &seen_tstp : &seen_winch;
  int was = *flag != 0;
  *flag = 0;
  return was;
}
