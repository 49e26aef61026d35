/*
** options.c: parsing the command line.  Options come first; the first
** argument that is not one is the script, and everything after it belongs
** to the script.
*/
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <lua.h>

#include "options.h"

#define PROGNAME "sluice"

#ifndef SLUICE_VERSION
#define SLUICE_VERSION "(unversioned)"
#endif

/* Report a usage error and return its exit status. */
static int usage_error(const char *fmt, const char *what) {
  fprintf(stderr, "%s: ", PROGNAME);
  fprintf(stderr, fmt, what);
  fprintf(stderr, " (see '%s --help')\n", PROGNAME);
  return 2;
}

/* Handle "--NAME PATH" and "--NAME=PATH" into *dst; i moves past a
** separate PATH. */
static int take_path(const char *name, const char **dst, int argc, char **argv,
                     int *i) {
  const char *a = argv[*i];
  size_t n = strlen(name);
  if (a[n] == '=') {
    *dst = a + n + 1;
  } else if (*i + 1 < argc) {
    *dst = argv[++*i];
  } else {
    return usage_error("option '%s' needs a path", name);
  }
  if ((*dst)[0] == '\0')
    return usage_error("option '%s' needs a path", name);
  return 0;
}

/* Does a name "--NAME" or "--NAME=..."? */
static int is_opt(const char *a, const char *name) {
  size_t n = strlen(name);
  return strncmp(a, name, n) == 0 && (a[n] == '\0' || a[n] == '=');
}

/* Handle "-e CODE" and "-eCODE"; i moves past a separate CODE. */
static int take_exec(sl_options *o, int argc, char **argv, int *i) {
  const char *a = argv[*i];
  if (a[2] != '\0')
    o->exec[o->nexec++] = a + 2;
  else if (*i + 1 < argc)
    o->exec[o->nexec++] = argv[++*i];
  else
    return usage_error("option '%s' needs Lua code as its argument", "-e");
  return 0;
}

/* Handle "--limit SECONDS": a positive number of seconds, at most a day. */
static int take_limit(sl_options *o, int argc, char **argv, int *i) {
  const char *v;
  int status = take_path("--limit", &v, argc, argv, i);
  if (status != 0)
    return status;
  char *end;
  errno = 0;
  double s = strtod(v, &end);
  if (errno != 0 || *end != '\0' || end == v || !(s > 0 && s <= 86400))
    return usage_error("option '--limit' needs seconds between 0 and 86400, not '%s'", v);
  o->limit = s;
  return 0;
}

/* Handle one option at argv[*i]; returns 0 or the usage-error status. */
static int take_option(sl_options *o, int argc, char **argv, int *i) {
  const char *a = argv[*i];
  if (strcmp(a, "-h") == 0 || strcmp(a, "--help") == 0)
    o->help = 1;
  else if (strcmp(a, "--version") == 0)
    o->version = 1;
  else if (strcmp(a, "-i") == 0)
    o->interactive = 1;
  else if (strcmp(a, "-q") == 0)
    o->quiet = 1;
  else if (strcmp(a, "--no-log") == 0)
    o->no_log = 1;
  else if (strcmp(a, "--trust") == 0)
    o->trust = 1;
  else if (strcmp(a, "--update") == 0)
    o->update = 1;
  else if (is_opt(a, "--log"))
    return take_path("--log", &o->log_path, argc, argv, i);
  else if (is_opt(a, "--replay"))
    return take_path("--replay", &o->replay, argc, argv, i);
  else if (is_opt(a, "--out"))
    return take_path("--out", &o->out_dir, argc, argv, i);
  else if (is_opt(a, "--limit"))
    return take_limit(o, argc, argv, i);
  else if (strncmp(a, "-e", 2) == 0)
    return take_exec(o, argc, argv, i);
  else
    return usage_error("unknown option '%s'", a);
  return 0;
}

/* The replay options belong together, and --log is never ignored: with
** --no-log or --replay it would be, so each pairing is refused. */
static int check_replay(sl_options *o) {
  if (o->replay == NULL && (o->out_dir || o->trust || o->update || o->limit > 0))
    return usage_error("%s go with --replay LOG", "--out, --trust, --update and --limit");
  if (o->replay != NULL && (o->script || o->nexec || o->interactive))
    return usage_error("%s takes no script, -e or -i", "--replay");
  if (o->log_path != NULL && o->no_log)
    return usage_error("%s: give one or the other", "--log PATH and --no-log contradict each other");
  if (o->replay != NULL && (o->log_path != NULL || o->no_log))
    return usage_error("%s", "--replay keeps no session log: --log and --no-log do not go with it");
  return 0;
}

/* Walk the options up to the script, "-" or "--". */
int options_parse(sl_options *o, int argc, char **argv) {
  memset(o, 0, sizeof *o);
  o->exec = malloc((size_t)(argc > 0 ? argc : 1) * sizeof *o->exec);
  if (o->exec == NULL) {
    fprintf(stderr, "%s: not enough memory\n", PROGNAME);
    return 2;
  }
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (a[0] != '-' || strcmp(a, "-") == 0) {
      o->script = i;
      o->script_stdin = strcmp(a, "-") == 0;
      return check_replay(o);
    }
    if (strcmp(a, "--") == 0) {
      if (i + 1 < argc)
        o->script = i + 1;
      return check_replay(o);
    }
    int status = take_option(o, argc, argv, &i);
    if (status != 0)
      return status;
  }
  return check_replay(o);
}

/* Free what options_parse allocated. */
void options_free(sl_options *o) {
  free(o->exec);
  o->exec = NULL;
}

/* The text of --help, on stdout. */
void options_usage(const char *progname) {
  printf(
    "usage: %s [options] [script [args]]\n"
    "A causal-analysis shell: a prompt for Lua with the sluice functions,\n"
    "or a runner for sluice scripts.\n"
    "\n"
    "  -e CODE      run the Lua code CODE (may be given several times)\n"
    "  -i           enter the prompt after the script or the -e code\n"
    "  -q           start the prompt without the banner\n"
    "  -            run standard input as the script\n"
    "  --           stop handling options; the next argument is the script\n"
    "  --log PATH   write the session log to PATH: the -e code, the script and\n"
    "               the prompt, each top-level statement an entry (the prompt on\n"
    "               a terminal logs by default to a new file in ./sluice-logs)\n"
    "  --no-log     keep no session log\n"
    "  --replay LOG re-run a session log and compare every output with it\n"
    "  --out DIR    with --replay: where the replayed code's writes go (relative\n"
    "               paths land in DIR)\n"
    "  --trust      with --replay: run the log without the sandbox\n"
    "  --limit S    with --replay: stop an entry that runs longer than S seconds\n"
    "               (default 600)\n"
    "  --update     with --replay: rewrite the recorded outputs (old log: LOG.bak)\n"
    "  -h, --help   print this help and leave\n"
    "  --version    print the version and leave\n"
    "\n"
    "With no script and no -e, %s starts the prompt when standard input\n"
    "is a terminal, and otherwise runs standard input as a script.  A script\n"
    "sees its arguments in the table 'arg' and as '...'.  It runs one top-level\n"
    "statement at a time, as the prompt runs inputs: report() and the log hold\n"
    "each one.  A session log given as the script re-runs its entries; the\n"
    "errors it recorded are shown and the run goes on.\n"
    "Exit status: 0 on success; 1 when the -e code or the script fails (in a\n"
    "log: an error the log did not record), when --log PATH cannot be\n"
    "written, or when a replay differs; 2 on a usage error.  A script's\n"
    "os.exit(n) leaves with n.  At the prompt, type help() for the list of functions.\n",
    progname, progname);
}

/* The text of --version, on stdout. */
void options_version(void) {
  printf("%s %s\n", PROGNAME, SLUICE_VERSION);
  printf("built with %s; licence GPL-3.0-or-later\n", LUA_RELEASE);
}
