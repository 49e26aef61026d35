/*
** main.c: the program sluice.  It reads the command line, sets up a Lua
** state with the sluice module, and then runs, in this order, the -e code,
** the script, and the prompt.  The shape follows lua.c: all the work runs
** inside one protected call (pmain).
*/
#include <stdio.h>
#include <string.h>
#include <unistd.h>

#include <lua.h>
#include <lauxlib.h>
#include <lualib.h>

#include "log.h"
#include "options.h"
#include "prompt.h"
#include "replay.h"
#include "replayer.h"
#include "repl.h"
#include "run.h"
#include "script.h"
#include "signals.h"

#define PROGNAME "sluice"

extern int luaopen_sluice(lua_State *L);

/* What pmain needs from main. */
typedef struct job {
  int argc;
  char **argv;
  sl_options *opt;
  int status;   /* the exit status */
} job;

/* Load the module and copy its public fields (no leading "_") into the
** globals, so that graph, help and the rest are at hand. */
static void open_sluice(lua_State *L) {
  luaL_requiref(L, "sluice", luaopen_sluice, 0);
  if (!lua_istable(L, -1)) {
    lua_pop(L, 1);
    return;
  }
  lua_pushglobaltable(L);
  lua_pushnil(L);
  while (lua_next(L, -3) != 0) {   /* module, globals, key, value */
    if (lua_type(L, -2) == LUA_TSTRING && lua_tostring(L, -2)[0] != '_') {
      lua_pushvalue(L, -2);
      lua_insert(L, -2);
      lua_settable(L, -4);
    } else {
      lua_pop(L, 1);
    }
  }
  lua_pop(L, 2);
}

/* The global table arg, as lua.c builds it: the script at index 0, its
** arguments at 1, 2, ..., the program and its options below 0. */
static void create_arg(lua_State *L, char **argv, int argc, int script) {
  int narg = argc - (script + 1);
  lua_createtable(L, narg > 0 ? narg : 0, script + 1);
  for (int i = 0; i < argc; i++) {
    lua_pushstring(L, argv[i]);
    lua_rawseti(L, -2, i - script);
  }
  lua_setglobal(L, "arg");
}

/* The lines printed when the prompt starts. */
static void banner(void) {
  printf("%s %s -- type help() for the list of functions, Ctrl-D to leave\n"
         "Caution: estimates rest on the assumed graph and are no substitute\n"
         "for qualified epidemiological or clinical judgement.\n",
         PROGNAME, SLUICE_VERSION);
}

/* Run the -e code in order, each piece entry by entry like a script; 0
** at the first that fails. */
static int run_exec(lua_State *L, const sl_options *o, int *count) {
  for (int i = 0; i < o->nexec; i++) {
    const char *code = o->exec[i];
    if (script_run(L, count, code, strlen(code), "=(command line)",
                   "(command line)", NULL, 0) != LUA_OK)
      return 0;
  }
  return 1;
}

/* Run the script named on the command line, or standard input when
** path is NULL; 0 when it fails. */
static int run_file(lua_State *L, int *count, const char *path, char **args,
                    int nargs) {
  return script_run_file(L, count, path, args, nargs) == LUA_OK;
}

/* Open the session log before anything runs, so that it holds the -e
** code and the script as well as the prompt: where --log says, or by
** default when the prompt runs on a terminal.  0 when --log cannot be
** honoured. */
static int open_log(lua_State *L, const sl_options *o, int prompt, int tty) {
  if (o->no_log)
    return 1;
  if (o->log_path != NULL)
    return log_start(L, o->log_path, prompt);
  if (prompt && tty)
    log_start(L, NULL, 1);   /* the default file: a failure is a warning */
  return 1;
}

/* The prompt: Readline on a terminal, plain lines otherwise.  Its inputs
** are numbered on from the entries of the -e code and the script. */
static void interact(lua_State *L, int tty, int count) {
  repl R;
  repl_init(&R, L);
  R.record = 1;
  R.count = count;
  if (tty)
    prompt_run(&R);
  else
    repl_run_plain(&R);
  repl_free(&R);
}

/* Everything, inside one protected call.  The -e code, the script and
** the prompt are one session: every input an entry, in one log. */
static int pmain(lua_State *L) {
  job *j = lua_touserdata(L, 1);
  const sl_options *o = j->opt;
  int script = o->script, tty = isatty(STDIN_FILENO);
  luaL_checkversion(L);
  luaL_openlibs(L);
  open_sluice(L);
  create_arg(L, j->argv, j->argc, script);
  lua_gc(L, LUA_GCRESTART);
  lua_gc(L, LUA_GCGEN, 0, 0);
  sig_init();
  log_install(L);
  run_install(L);
  replayer_install(L);
  if (o->replay != NULL) {
    j->status = replay_run(L, o);
    return 0;
  }
  int alone = script == 0 && o->nexec == 0;
  int prompt = o->interactive || (alone && tty);
  if (prompt && !o->quiet)
    banner();
  log_session_start(L);
  if (!open_log(L, o, prompt, tty)) {
    j->status = 1;
    return 0;
  }
  int count = 0;
  int ok = run_exec(L, o, &count);
  if (ok && script > 0)
    ok = run_file(L, &count, o->script_stdin ? NULL : j->argv[script],
                  j->argv + script + 1, j->argc - script - 1);
  if (prompt) {
    interact(L, tty, count);
    ok = 1;
  } else if (alone) {
    ok = run_file(L, &count, NULL, NULL, 0);
  }
  j->status = ok ? 0 : 1;
  return 0;
}

/* Parse the options, then run pmain in a fresh Lua state. */
int main(int argc, char **argv) {
  sl_options o;
  int status = options_parse(&o, argc, argv);
  if (status != 0 || o.help || o.version) {
    if (status == 0 && o.help)
      options_usage(PROGNAME);
    else if (status == 0)
      options_version();
    options_free(&o);
    return status;
  }
  lua_State *L = luaL_newstate();
  if (L == NULL) {
    fprintf(stderr, "%s: cannot create the Lua state: not enough memory\n",
            PROGNAME);
    options_free(&o);
    return 1;
  }
  job j = { argc, argv, &o, 1 };
  lua_gc(L, LUA_GCSTOP);   /* no collection while the libraries load */
  lua_pushcfunction(L, pmain);
  lua_pushlightuserdata(L, &j);
  if (run_report(L, lua_pcall(L, 1, 0, 0)) != LUA_OK)
    j.status = 1;
  lua_close(L);
  options_free(&o);
  return j.status;
}
