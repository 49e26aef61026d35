/*
** options.h: the command line of sluice, parsed before any Lua state
** exists.
*/
#ifndef SLUICE_OPTIONS_H
#define SLUICE_OPTIONS_H

typedef struct sl_options {
  int help;             /* -h, --help */
  int version;          /* --version */
  int interactive;      /* -i: the prompt after the script or -e code */
  int quiet;            /* -q: no banner */
  const char **exec;    /* the -e code, in the order given */
  int nexec;
  const char *log_path; /* --log PATH: where the session log goes */
  int no_log;           /* --no-log: no session log */
  const char *replay;   /* --replay LOG: replay a session log */
  const char *out_dir;  /* --out DIR: where a replay may write */
  int trust;            /* --trust: replay without the sandbox */
  int update;           /* --update: rewrite the log's recorded outputs */
  double limit;         /* --limit SECONDS: wall clock per replayed entry, 0: default */
  int script;           /* argv index of the script, 0 when there is none */
  int script_stdin;     /* the script is "-": standard input */
} sl_options;

/* Fill o from argv.  Returns 0, or 2 after printing a usage error (the
** exit status for it).  Free with options_free. */
int options_parse(sl_options *o, int argc, char **argv);
void options_free(sl_options *o);

/* The texts of --help and --version. */
void options_usage(const char *progname);
void options_version(void);

#endif
