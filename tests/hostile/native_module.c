/*
** native_module.c: a shared library that native_module.log tries to load
** into the replay (package.loadlib, the C searcher, require through
** package.cpath).  Loading it runs the constructor, which first leaves a
** mark inside --out (so a loaded library is seen even where the kernel
** stops the rest) and then tries what the confinement forbids: writes,
** removals and renames outside --out, a socket, a new process, a program.
** CASE (the replay's folder) and OUTSIDE (the canary folder) are given on
** the compiler's command line.
*/
#define _GNU_SOURCE
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

/* Leave the marker CASE/out/ran-native-WHAT: --out is writable, so only
** a refusal to load or to do WHAT keeps it away. */
static void mark(const char *what) {
  char p[4096];
  snprintf(p, sizeof p, "%s/out/ran-native-%s", CASE, what);
  int fd = open(p, O_CREAT | O_WRONLY, 0644);
  if (fd >= 0)
    close(fd);
}

/* Each step on its own: a step the kernel refuses must not stop the next. */
__attribute__((constructor)) static void attack(void) {
  mark("loaded");
  int fd = open(OUTSIDE "/native-wrote.txt", O_CREAT | O_WRONLY, 0644);
  if (fd >= 0) {
    if (write(fd, "x", 1) != 1)
      mark("short-write");
    close(fd);
  }
  unlink(OUTSIDE "/canary.txt");
  chmod(OUTSIDE "/canary/inner.txt", 0777);
  mkdir(OUTSIDE "/native-dir", 0755);
  rename(OUTSIDE "/canary", OUTSIDE "/canary-moved");
  fd = socket(AF_INET, SOCK_STREAM, 0);
  if (fd >= 0) {
    mark("socket");
    close(fd);
  }
  pid_t p = fork();
  if (p == 0) {
    mark("fork");
    _exit(0);
  }
  if (p > 0)
    waitpid(p, NULL, 0);
  if (system("touch " CASE "/out/ran-native-system") == 0)
    mark("system-returned");
}

/* The entry points the C searcher and require look for. */
int luaopen_out_nat_b(void *L) { (void)L; return 0; }
int luaopen_nat_c(void *L) { (void)L; return 0; }
