/*
** pager.c: hooks.page(fn), the shell's side of help()'s pager.  A process
** is the shell's business, not the library's: the Lua layer only asks.
** fn runs with file descriptor 1 pointing at an unlinked temporary file,
** so that whatever it prints still passes through the session's capture
** (the log records the text as if printed); then the pager reads that
** file as its standard input.  Writing to a file rather than a pipe means
** no SIGPIPE when the user leaves the pager early and no deadlock on a
** long text.  While the pager runs, the shell ignores Ctrl-C and Ctrl-\
** as system(3) does: they are the pager's.
*/
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include <lua.h>
#include <lauxlib.h>

#include "pager.h"

#define HOOKS "sluice.hooks"
#define EXIT_NOT_RUN 127   /* sh -c: the command was not found */
#define EXIT_NOT_EXEC 126  /* sh -c: found but not executable */

/* The pager command, or NULL for none: $PAGER when set ("" and "cat"
** mean none), else PAGER_DEFAULT. */
static const char *pager_command(void) {
  const char *p = getenv("PAGER");
  if (p == NULL)
    return PAGER_DEFAULT;
  if (p[strspn(p, " \t")] == '\0' || strcmp(p, "cat") == 0)
    return NULL;
  return p;
}

/* An unlinked temporary file in $TMPDIR (else /tmp); -1 on failure. */
static int temp_fd(void) {
  const char *dir = getenv("TMPDIR");
  char path[4096];
  if (dir == NULL || dir[0] == '\0')
    dir = "/tmp";
  if (snprintf(path, sizeof path, "%s/sluice-page.XXXXXX", dir) >= (int)sizeof path)
    return -1;
  int fd = mkstemp(path);
  if (fd >= 0)
    unlink(path);
  return fd;
}

/* Copy what fd holds from its start to standard output. */
static void copy_out(int fd) {
  char buf[8192];
  ssize_t n;
  if (lseek(fd, 0, SEEK_SET) < 0)
    return;
  while ((n = read(fd, buf, sizeof buf)) > 0 || (n < 0 && errno == EINTR))
    if (n > 0 && fwrite(buf, 1, (size_t)n, stdout) != (size_t)n)
      break;
  fflush(stdout);
}

/* In the child: the default signal dispositions, fd as standard input,
** then the pager through the shell. */
static void child_exec(int fd, const char *cmd) {
  sigset_t none;
  sigemptyset(&none);
  sigprocmask(SIG_SETMASK, &none, NULL);
  signal(SIGINT, SIG_DFL);
  signal(SIGQUIT, SIG_DFL);
  signal(SIGPIPE, SIG_DFL);
  signal(SIGTSTP, SIG_DFL);
  if (lseek(fd, 0, SEEK_SET) < 0 || dup2(fd, STDIN_FILENO) < 0)
    _exit(EXIT_NOT_RUN);
  close(fd);
  execl("/bin/sh", "sh", "-c", cmd, (char *)NULL);
  _exit(EXIT_NOT_RUN);
}

/* Run the pager on the text in fd and wait for it; 0 when it could not
** be started. */
static int run_pager(int fd, const char *cmd) {
  struct sigaction ign, old_int, old_quit;
  memset(&ign, 0, sizeof ign);
  ign.sa_handler = SIG_IGN;
  sigemptyset(&ign.sa_mask);
  sigaction(SIGINT, &ign, &old_int);
  sigaction(SIGQUIT, &ign, &old_quit);
  fflush(stderr);
  pid_t pid = fork();
  if (pid == 0)
    child_exec(fd, cmd);
  int status = 0;
  while (pid > 0 && waitpid(pid, &status, 0) < 0 && errno == EINTR)
    ;
  sigaction(SIGINT, &old_int, NULL);
  sigaction(SIGQUIT, &old_quit, NULL);
  if (pid < 0)
    return 0;
  return !(WIFEXITED(status) && (WEXITSTATUS(status) == EXIT_NOT_RUN ||
                                 WEXITSTATUS(status) == EXIT_NOT_EXEC));
}

/* Point standard output at fd; the saved descriptor, or -1. */
static int redirect_out(int fd) {
  fflush(stdout);
  int saved = dup(STDOUT_FILENO);
  if (saved >= 0 && dup2(fd, STDOUT_FILENO) < 0) {
    close(saved);
    return -1;
  }
  return saved;
}

/* Give standard output back its own descriptor. */
static void restore_out(int saved) {
  fflush(stdout);
  clearerr(stdout);
  dup2(saved, STDOUT_FILENO);
  close(saved);
}

/* hooks.page(fn): run fn with its output shown through the pager; false
** (and fn not run) when standard input or output is no terminal or no
** pager is wanted.  An error of fn is raised again once the output is
** back.  When the pager cannot be started, the text goes to the terminal
** with a warning. */
static int l_page(lua_State *L) {
  luaL_checktype(L, 1, LUA_TFUNCTION);
  const char *cmd = pager_command();
  int fd = -1, saved = -1;
  if (cmd == NULL || !isatty(STDIN_FILENO) || !isatty(STDOUT_FILENO) ||
      (fd = temp_fd()) < 0 || (saved = redirect_out(fd)) < 0) {
    if (fd >= 0)
      close(fd);
    lua_pushboolean(L, 0);
    return 1;
  }
  lua_pushvalue(L, 1);
  int st = lua_pcall(L, 0, 0, 0);
  restore_out(saved);
  if (st != LUA_OK) {
    close(fd);
    return lua_error(L);
  }
  if (!run_pager(fd, cmd)) {
    fprintf(stderr, "warning: the pager '%s' could not be started; set PAGER to one "
            "that can (PAGER=cat for none)\n", cmd);
    copy_out(fd);
  }
  close(fd);
  lua_pushboolean(L, 1);
  return 1;
}

void pager_install(lua_State *L) {
  if (lua_getfield(L, LUA_REGISTRYINDEX, HOOKS) == LUA_TTABLE) {
    lua_pushcfunction(L, l_page);
    lua_setfield(L, -2, "page");
  }
  lua_pop(L, 1);
}
