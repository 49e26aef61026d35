/*
** test_confine.c: the kernel layer of the replay sandbox on its own,
** without the Lua-level checks in front of it.  Each case forks, confines
** the child and tries what a hostile log would try; the child exits 0 when
** every attempt failed as it must (and every allowed thing worked).  The
** expected errnos are the kernel's documented answers: EACCES from
** Landlock (Documentation/userspace-api/landlock.rst), EPERM from the
** SCMP_ACT_ERRNO(EPERM) rules of confine.c.
*/
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <pthread.h>
#include <signal.h>
#include <spawn.h>
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/ptrace.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#include <cmocka.h>

#include "../../src/shell/confine.h"

extern char **environ;
static char root[] = "/tmp/sluice-confine-XXXXXX";
static char out[256], outside[256];

/* In the child: stop at the first broken expectation, saying which. */
static void expect(int ok, const char *what) {
  if (!ok) {
    fprintf(stderr, "confine: %s (errno %d, %s)\n", what, errno, strerror(errno));
    _exit(1);
  }
}

/* Run check() in a confined child; assert that it exits 0. */
static void confined(void (*check)(void), const char *out_dir) {
  char why[512];
  if (!confine_available(why, sizeof why))
    skip();
  pid_t pid = fork();
  assert_true(pid >= 0);
  if (pid == 0) {
    confine_opts o = { out_dir, 60 };
    if (confine_apply(&o, why, sizeof why) != 0) {
      fprintf(stderr, "confine: %s\n", why);
      _exit(2);
    }
    check();
    _exit(0);
  }
  int status;
  assert_int_equal(waitpid(pid, &status, 0), pid);
  assert_true(WIFEXITED(status));
  assert_int_equal(WEXITSTATUS(status), 0);
}

static int write_file(const char *path) {
  int fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
  if (fd < 0)
    return -1;
  int ok = write(fd, "x", 1) == 1;
  close(fd);
  return ok ? 0 : -1;
}

static void files_check(void) {
  char p[512];
  snprintf(p, sizeof p, "%s/inside.txt", out);
  expect(write_file(p) == 0, "a file beneath --out can be written");
  snprintf(p, sizeof p, "%s/sub", out);
  expect(mkdir(p, 0755) == 0, "a folder beneath --out can be made");
  snprintf(p, sizeof p, "%s/new.txt", outside);
  expect(write_file(p) != 0 && errno == EACCES, "a new file outside is refused");
  snprintf(p, sizeof p, "%s/keep.txt", outside);
  expect(open(p, O_WRONLY) < 0 && errno == EACCES, "an existing file outside cannot be opened to write");
  expect(open(p, O_RDONLY) >= 0, "a file outside can be read");
  expect(unlink(p) != 0 && errno == EACCES, "a file outside cannot be removed");
  char q[512];
  snprintf(q, sizeof q, "%s/moved.txt", out);
  expect(rename(p, q) != 0, "a file outside cannot be moved in");
  snprintf(p, sizeof p, "%s/dangling", out);
  expect(write_file(p) != 0 && errno == EACCES, "a dangling link beneath --out cannot create its target");
  snprintf(p, sizeof p, "%s/linkdir/through.txt", out);
  expect(write_file(p) != 0 && errno == EACCES, "a link to a folder outside cannot be written through");
  expect(open("/tmp", O_RDONLY | O_TMPFILE, 0600) < 0, "no anonymous file in /tmp");
  expect(mkstemp((char[]){"/tmp/sluice-tmpXXXXXX"}) < 0, "os.tmpname's mkstemp fails");
}

static void test_files(void **state) {
  (void)state;
  confined(files_check, out);
  char p[512];
  snprintf(p, sizeof p, "%s/new.txt", outside);
  assert_int_equal(access(p, F_OK), -1);
  snprintf(p, sizeof p, "%s/keep.txt", outside);
  assert_int_equal(access(p, F_OK), 0);
  snprintf(p, sizeof p, "%s/inside.txt", out);
  assert_int_equal(access(p, F_OK), 0);
}

static void nowhere_check(void) {
  char p[512];
  snprintf(p, sizeof p, "%s/nowhere.txt", out);
  expect(write_file(p) != 0 && errno == EACCES, "without --out nothing can be written");
}

static void test_nowhere(void **state) {
  (void)state;
  confined(nowhere_check, NULL);
}

static void programs_check(void) {
  char *argv[] = { "/bin/true", NULL };
  expect(execve("/bin/true", argv, environ) != 0 && errno == EPERM, "execve is refused");
  pid_t p = fork();
  if (p == 0)
    _exit(0);
  expect(p < 0 && errno == EPERM, "fork is refused");
  pid_t sp;
  expect(posix_spawn(&sp, "/bin/true", NULL, NULL, argv, environ) != 0, "posix_spawn is refused");
  expect(system("true") != 0, "system() runs nothing");
  expect(socket(AF_INET, SOCK_STREAM, 0) < 0 && errno == EPERM, "no internet socket");
  expect(socket(AF_UNIX, SOCK_STREAM, 0) < 0 && errno == EPERM, "no local socket");
  expect(ptrace(PTRACE_ATTACH, getppid(), 0, 0) != 0, "no tracing of the parent");
  expect(kill(getppid(), 0) != 0 && errno == EPERM, "no signal to the parent");
  expect(kill(0, 0) != 0 && errno == EPERM, "no signal to the process group");
  expect(kill(getpid(), 0) == 0, "a signal to itself is allowed");
}

static void test_programs(void **state) {
  (void)state;
  confined(programs_check, out);
}

static void *thread_body(void *arg) {
  *(int *)arg = 42;
  return NULL;
}

static void threads_check(void) {
  pthread_t t;
  int v = 0;
  expect(pthread_create(&t, NULL, thread_body, &v) == 0, "threads can be made");
  expect(pthread_join(t, NULL) == 0 && v == 42, "a thread runs and ends");
#ifndef __SANITIZE_ADDRESS__
  void *big = malloc(CONFINE_MEMORY + (1ULL << 30));
  expect(big == NULL, "more memory than the limit is refused");
#endif
}

static void test_threads_and_memory(void **state) {
  (void)state;
  confined(threads_check, out);
}

static void test_pretend_missing(void **state) {
  (void)state;
  char why[512];
  setenv("SLUICE_TEST_NO_KERNEL_SANDBOX", "landlock", 1);
  assert_int_equal(confine_available(why, sizeof why), 0);
  assert_non_null(strstr(why, "Landlock"));
  setenv("SLUICE_TEST_NO_KERNEL_SANDBOX", "seccomp", 1);
  if (confine_available(why, sizeof why) == 0)
    assert_non_null(strstr(why, "seccomp"));
  unsetenv("SLUICE_TEST_NO_KERNEL_SANDBOX");
}

static int setup(void **state) {
  (void)state;
  if (mkdtemp(root) == NULL)
    return -1;
  snprintf(out, sizeof out, "%s/out", root);
  snprintf(outside, sizeof outside, "%s/outside", root);
  char p[512];
  if (mkdir(out, 0755) != 0 || mkdir(outside, 0755) != 0)
    return -1;
  snprintf(p, sizeof p, "%s/keep.txt", outside);
  if (write_file(p) != 0)
    return -1;
  char link[512], target[512];
  snprintf(link, sizeof link, "%s/dangling", out);
  snprintf(target, sizeof target, "%s/made-through-link.txt", outside);
  if (symlink(target, link) != 0)
    return -1;
  snprintf(link, sizeof link, "%s/linkdir", out);
  return symlink(outside, link);
}

static int teardown(void **state) {
  (void)state;
  char cmd[600];
  snprintf(cmd, sizeof cmd, "rm -rf '%s'", root);
  return system(cmd) == 0 ? 0 : -1;
}

int main(void) {
  const struct CMUnitTest tests[] = {
    cmocka_unit_test(test_files),
    cmocka_unit_test(test_nowhere),
    cmocka_unit_test(test_programs),
    cmocka_unit_test(test_threads_and_memory),
    cmocka_unit_test(test_pretend_missing),
  };
  return cmocka_run_group_tests(tests, setup, teardown);
}
