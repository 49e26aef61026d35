/*
** bench_start.c: start-up time of a program.
**
**   bench_start RUNS PROGRAM [ARGS...]
**
** Runs the program RUNS times with its output sent to /dev/null and prints
** "median_ms=T" (wall time from fork to exit).  Exit status 3 when a run
** exits non-zero (status=S printed), 4 when one dies from a signal.
*/
#include <fcntl.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>
#include "bench_common.h"

static int cmp_double(const void *a, const void *b) {
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

int main(int argc, char **argv) {
  if (argc < 3) { fprintf(stderr, "usage: bench_start RUNS PROGRAM [ARGS...]\n"); return 2; }
  int runs = atoi(argv[1]);
  if (runs < 1) runs = 1;
  double *t = malloc((size_t)runs * sizeof *t);
  if (!t) return 1;
  for (int i = 0; i < runs; i++) {
    double t0 = now();
    pid_t pid = fork();
    if (pid < 0) { perror("fork"); return 1; }
    if (pid == 0) {
      int fd = open("/dev/null", O_RDWR);
      if (fd >= 0) { dup2(fd, 0); dup2(fd, 1); dup2(fd, 2); }
      execvp(argv[2], argv + 2);
      _exit(127);
    }
    int st;
    if (waitpid(pid, &st, 0) < 0) { perror("waitpid"); return 1; }
    t[i] = now() - t0;
    if (WIFSIGNALED(st)) { printf("signal=%d\n", WTERMSIG(st)); return 4; }
    if (WEXITSTATUS(st) != 0) { printf("status=%d\n", WEXITSTATUS(st)); return 3; }
  }
  qsort(t, (size_t)runs, sizeof *t, cmp_double);
  double med = runs % 2 ? t[runs / 2] : (t[runs / 2 - 1] + t[runs / 2]) / 2;
  printf("median_ms=%.3f\n", med * 1e3);
  free(t);
  return 0;
}
