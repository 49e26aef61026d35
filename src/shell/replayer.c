/*
** replayer.c: the process that runs a replayed log.  The parent, which
** parsed the log and writes the report, forks a child; the child confines
** itself (confine.c) and runs the entries, sending what each printed as
** framed records (wire.c) on fd 3.  The child's standard output goes
** nowhere and its standard error reaches the terminal only with a prefix,
** so nothing it prints can pass for the report.  The parent waits for each
** record with a deadline, and a child that overstays, dies or breaks the
** framing is ended and reported as such.
*/
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/prctl.h>
#include <sys/socket.h>
#include <sys/statfs.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <lua.h>
#include <lauxlib.h>

#include "confine.h"
#include "frame_build.h"
#include "notation.h"
#include "replayer.h"
#include "wire.h"

#define HOOKS "sluice.hooks"
#define CHILD_META "sluice.replayer"
#define WIRE_FD 3
#define STDERR_RELAYED (64 << 10)   /* bytes of the child's stderr shown */
#define STDERR_PREFIX "replayed code: "

typedef struct child {
  pid_t pid;              /* 0 once reaped */
  int rfd, efd;           /* records; the child's standard error (-1: closed) */
  unsigned char *buf;     /* records read and not yet taken */
  size_t len, cap, taken;
  char line[512];         /* the child's stderr line being gathered */
  size_t linelen, relayed;
  int status;             /* wait status once reaped */
} child;

/* ---- the child's side ---- */

/* Write all of p, or end the child: a parent that stopped listening
** wants no more from it. */
static void write_all(int fd, const void *p, size_t n) {
  const char *s = p;
  while (n > 0) {
    ssize_t w = write(fd, s, n);
    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0)
      _exit(4);
    s += w;
    n -= (size_t)w;
  }
}

static void send_record(char kind, const void *p, size_t n) {
  unsigned char head[WIRE_HEAD];
  if (n > WIRE_MAX)
    n = WIRE_MAX;
  wire_head(head, kind, n);
  write_all(WIRE_FD, head, sizeof head);
  write_all(WIRE_FD, p, n);
}

/* Move fd to number to (or close it when to < 0), keeping it above 9
** while others are moved. */
static int high(int fd) {
  int h = fcntl(fd, F_DUPFD_CLOEXEC, 10);
  close(fd);
  return h;
}

/* In the child: standard input and output from and to /dev/null,
** standard error and fd 3 to the parent, every other descriptor closed. */
static void child_descriptors(int rfd, int efd) {
  int nul = high(open("/dev/null", O_RDWR));
  rfd = high(rfd);
  efd = high(efd);
  if (nul < 0 || rfd < 0 || efd < 0 || dup2(nul, 0) < 0 || dup2(nul, 1) < 0 ||
      dup2(efd, 2) < 0 || dup2(rfd, WIRE_FD) < 0)
    _exit(5);
  close_range(WIRE_FD + 1, ~0U, 0);
}

/* The child's start: descriptors, signals, then the confinement. */
static void child_start(lua_State *L, int rfd, int efd) {
  child_descriptors(rfd, efd);
  prctl(PR_SET_PDEATHSIG, SIGKILL);
  if (getppid() == 1)
    _exit(6);
  setsid();   /* no controlling terminal: /dev/tty cannot be opened */
  signal(SIGINT, SIG_IGN);    /* the parent decides what Ctrl-C stops */
  signal(SIGPIPE, SIG_DFL);
  if (!lua_toboolean(L, -1))
    return;
  confine_opts o;
  o.out_dir = lua_getfield(L, 1, "out") == LUA_TSTRING ? lua_tostring(L, -1) : NULL;
  /* the libraries' temporary files (PLplot's, SQLite's) go where the
  ** child may write: beneath --out, or nowhere */
  if (setenv("TMPDIR", o.out_dir != NULL ? o.out_dir : "/nonexistent", 1) != 0)
    _exit(5);
  lua_getfield(L, 1, "cpu");
  o.cpu_seconds = (unsigned long)lua_tointeger(L, -1);
  char why[512];
  if (confine_apply(&o, why, sizeof why) != 0) {
    char msg[600];
    int n = snprintf(msg, sizeof msg, "the sandbox could not be set up: %s", why);
    send_record('Q', msg, (size_t)n);
    _exit(3);
  }
}

/* hooks.replay_spawn{out=, confine=, cpu=}: in the parent a child
** object, in the child the string "child" (confined when asked). */
static int l_spawn(lua_State *L) {
  luaL_checktype(L, 1, LUA_TTABLE);
  lua_getfield(L, 1, "confine");
  /* sockets, not pipes: /proc/self/fd/N of a socket cannot be opened
  ** again, so code that escapes the Lua layer finds no second way in */
  int rp[2], ep[2];
  if (socketpair(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0, rp) != 0)
    return luaL_error(L, "replay: cannot make a channel: %s", strerror(errno));
  if (socketpair(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0, ep) != 0) {
    close(rp[0]); close(rp[1]);
    return luaL_error(L, "replay: cannot make a channel: %s", strerror(errno));
  }
  child *c = lua_newuserdatauv(L, sizeof *c, 0);
  memset(c, 0, sizeof *c);
  c->rfd = c->efd = -1;
  luaL_setmetatable(L, CHILD_META);
  fflush(NULL);
  pid_t pid = fork();
  if (pid < 0) {
    int err = errno;
    close(rp[0]); close(rp[1]); close(ep[0]); close(ep[1]);
    return luaL_error(L, "replay: cannot start the replay process: %s", strerror(err));
  }
  if (pid == 0) {
    close(rp[0]);
    close(ep[0]);
    lua_pop(L, 1);
    child_start(L, rp[1], ep[1]);
    lua_pushliteral(L, "child");
    return 1;
  }
  close(rp[1]);
  close(ep[1]);
  c->pid = pid;
  c->rfd = rp[0];
  c->efd = ep[0];
  return 1;
}

/* hooks.replay_send(kind, payload), in the child. */
static int l_send(lua_State *L) {
  size_t klen, n;
  const char *kind = luaL_checklstring(L, 1, &klen);
  const char *p = luaL_optlstring(L, 2, "", &n);
  luaL_argcheck(L, klen == 1 && strchr(WIRE_KINDS, kind[0]) != NULL, 1, "a record kind");
  send_record(kind[0], p, n);
  return 0;
}

/* hooks.replay_exit(status), in the child: leave at once, running no
** finaliser of the replayed code. */
static int l_exit(lua_State *L) {
  _exit((int)luaL_optinteger(L, 1, 0));
  return 0;
}

/* ---- the parent's side ---- */

static double now(void) {
  struct timespec t;
  clock_gettime(CLOCK_MONOTONIC, &t);
  return (double)t.tv_sec + (double)t.tv_nsec / 1e9;
}

static void close_fd(int *fd) {
  if (*fd >= 0)
    close(*fd);
  *fd = -1;
}

/* Show one line of the child's standard error, marked as its own. */
static void defang(char *s, size_t *len);

static void relay_line(child *c) {
  defang(c->line, &c->linelen);
  if (c->relayed < STDERR_RELAYED) {
    fflush(stdout);
    fprintf(stderr, "%s%.*s\n", STDERR_PREFIX, (int)c->linelen, c->line);
    if ((c->relayed += c->linelen + 1) >= STDERR_RELAYED)
      fprintf(stderr, "%s(the rest of its error output is not shown)\n", STDERR_PREFIX);
  }
  c->linelen = 0;
}

/* Read what the child wrote on its standard error and relay it by lines;
** control characters are shown as '?' so that it cannot rewrite the
** terminal. */
static void relay_stderr(child *c) {
  char buf[4096];
  ssize_t n = read(c->efd, buf, sizeof buf);
  if (n <= 0) {
    if (n == 0 || errno != EINTR) {
      if (c->linelen > 0)
        relay_line(c);
      close_fd(&c->efd);
    }
    return;
  }
  for (ssize_t i = 0; i < n; i++) {
    if (buf[i] == '\n' || c->linelen == sizeof c->line) {
      relay_line(c);
      if (buf[i] == '\n')
        continue;
    }
    c->line[c->linelen++] = buf[i];
  }
}

/* Make a line of the child's error output harmless on a terminal: each
** control byte, byte of broken UTF-8, C1 control and mark that reorders or
** hides text becomes '?'. */
static void defang(char *s, size_t *len) {
  size_t i = 0, o = 0;
  while (i < *len) {
    uint32_t cp;
    size_t k = sl_utf8_decode(s + i, *len - i, &cp);
    if (k == 0 || (cp < 32 && cp != '\t') || cp == 127 || (cp >= 0x80 && cp < 0xA0) ||
        sl_invisible_name(cp) != NULL) {
      s[o++] = '?';
      i += k ? k : 1;
    } else {
      memmove(s + o, s + i, k);
      o += k;
      i += k;
    }
  }
  *len = o;
}

/* Read records into the buffer; 0 at the end of the stream. */
static int read_records(child *c) {
  if (c->taken > 0) {
    memmove(c->buf, c->buf + c->taken, c->len - c->taken);
    c->len -= c->taken;
    c->taken = 0;
  }
  if (c->cap - c->len < 65536) {
    size_t cap = c->cap ? c->cap * 2 : 131072;
    if (cap > 2 * (WIRE_MAX + WIRE_HEAD))
      cap = 2 * (WIRE_MAX + WIRE_HEAD);
    unsigned char *b = realloc(c->buf, cap);
    if (b == NULL)
      return -1;
    c->buf = b;
    c->cap = cap;
  }
  ssize_t n = read(c->rfd, c->buf + c->len, c->cap - c->len);
  if (n < 0)
    return errno == EINTR ? 1 : -1;
  c->len += (size_t)n;
  return n > 0;
}

/* Wait for the child to end, at most until deadline; 1 when it did. */
static int reap(child *c, double deadline) {
  while (c->pid > 0) {
    pid_t r = waitpid(c->pid, &c->status, WNOHANG);
    if (r == c->pid || (r < 0 && errno != EINTR)) {
      c->pid = 0;
      break;
    }
    if (now() >= deadline)
      return 0;
    struct timespec t = { 0, 10 * 1000 * 1000 };
    nanosleep(&t, NULL);
  }
  return 1;
}

/* End the child now. */
static void stop(child *c) {
  if (c->pid > 0) {
    kill(c->pid, SIGKILL);
    while (waitpid(c->pid, &c->status, 0) < 0 && errno == EINTR) {}
    c->pid = 0;
  }
  close_fd(&c->rfd);
  if (c->efd >= 0) {   /* what it said last */
    fcntl(c->efd, F_SETFL, O_NONBLOCK);
    while (c->efd >= 0)
      relay_stderr(c);
  }
}

/* How the child ended, in words. */
static void push_ending(lua_State *L, const child *c) {
  int s = c->status;
  if (WIFEXITED(s)) {
    lua_pushfstring(L, "the replay process exited with status %d", WEXITSTATUS(s));
  } else if (WIFSIGNALED(s)) {
    int sig = WTERMSIG(s);
    const char *why = sig == SIGXCPU ? " (the CPU time limit)"
                    : sig == SIGSYS ? " (a forbidden system call)"
                    : sig == SIGSEGV || sig == SIGBUS ? " (a crash)"
                    : sig == SIGABRT ? " (an abort)" : "";
    lua_pushfstring(L, "the replay process was killed by signal %d, SIG%s%s", sig,
                    sigabbrev_np(sig) ? sigabbrev_np(sig) : "?", why);
  } else {
    lua_pushliteral(L, "the replay process ended");
  }
}

/* child:recv(seconds): the next record as kind, payload; or nil and
** "timeout"; or nil, "ended" and how; or nil, "broken" and why. */
static int l_recv(lua_State *L) {
  child *c = luaL_checkudata(L, 1, CHILD_META);
  double deadline = now() + luaL_checknumber(L, 2);
  for (;;) {
    wire_record r;
    long took = c->len > c->taken ? wire_parse(c->buf + c->taken, c->len - c->taken, &r) : 0;
    if (took > 0) {
      c->taken += (size_t)took;
      lua_pushlstring(L, &r.kind, 1);
      lua_pushlstring(L, (const char *)r.payload, r.len);
      return 2;
    }
    if (took < 0) {
      stop(c);
      lua_pushnil(L);
      lua_pushliteral(L, "broken");
      lua_pushliteral(L, "the replay process sent a malformed record");
      return 3;
    }
    if (c->rfd < 0) {   /* the stream ended: the child is gone or going */
      if (!reap(c, deadline)) {
        stop(c);
        lua_pushnil(L);
        lua_pushliteral(L, "timeout");
        return 2;
      }
      stop(c);
      lua_pushnil(L);
      lua_pushliteral(L, "ended");
      push_ending(L, c);
      return 3;
    }
    double left = deadline - now();
    if (left <= 0) {
      stop(c);
      lua_pushnil(L);
      lua_pushliteral(L, "timeout");
      return 2;
    }
    struct pollfd p[2] = { { c->rfd, POLLIN, 0 }, { c->efd, POLLIN, 0 } };
    int np = c->efd >= 0 ? 2 : 1;
    int k = poll(p, (nfds_t)np, left > 1 ? 1000 : (int)(left * 1000) + 1);
    if (k < 0 && errno != EINTR)
      return luaL_error(L, "replay: poll: %s", strerror(errno));
    if (k <= 0)
      continue;
    if (np == 2 && p[1].revents)
      relay_stderr(c);
    if (p[0].revents) {
      int got = read_records(c);
      if (got < 0) {
        stop(c);
        lua_pushnil(L);
        lua_pushliteral(L, "broken");
        lua_pushliteral(L, "the replay process's records could not be read");
        return 3;
      }
      if (got == 0)
        close_fd(&c->rfd);
    }
  }
}

/* child:stop(): end the child (if it runs) and return how it ended. */
static int l_stop(lua_State *L) {
  child *c = luaL_checkudata(L, 1, CHILD_META);
  stop(c);
  push_ending(L, c);
  return 1;
}

static int l_gc(lua_State *L) {
  child *c = luaL_checkudata(L, 1, CHILD_META);
  stop(c);
  close_fd(&c->efd);
  free(c->buf);
  c->buf = NULL;
  return 0;
}

/* ---- files, as the parent sees them ---- */

static const char *kind_of(mode_t m) {
  return S_ISREG(m) ? "regular" : S_ISDIR(m) ? "directory" : S_ISFIFO(m) ? "fifo"
       : S_ISCHR(m) || S_ISBLK(m) ? "device" : S_ISSOCK(m) ? "socket"
       : S_ISLNK(m) ? "link" : "other";
}

/* hooks.file_kind(path [, nofollow]): "regular", "directory", "fifo",
** "device", "socket", "link" (only with nofollow) or nil when absent. */
static int l_file_kind(lua_State *L) {
  const char *path = luaL_checkstring(L, 1);
  struct stat st;
  int r = lua_toboolean(L, 2) ? lstat(path, &st) : stat(path, &st);
  if (r != 0) {
    luaL_pushfail(L);
    lua_pushstring(L, strerror(errno));
    return 2;
  }
  lua_pushstring(L, kind_of(st.st_mode));
  lua_pushinteger(L, (lua_Integer)st.st_size);
  return 2;
}

/* Is fd on a file system whose "regular files" are the kernel's own
** (endless, blocking or with side effects when read)? */
static int pseudo_fs(int fd) {
  static const long magic[] = {
    0x9fa0,       /* proc */      0x62656572,   /* sysfs */
    0x64626720,   /* debugfs */   0x73636673,   /* securityfs */
    0x74726163,   /* tracefs */   0x27e0eb,     /* cgroup */
    0x63677270,   /* cgroup2 */   0xcafe4a11,   /* bpf */
    0x62656570,   /* configfs */  0x6165676c,   /* pstore */
    0xde5e81e4,   /* efivarfs */  0x1cd1,       /* devpts */
  };
  struct statfs sf;
  if (fstatfs(fd, &sf) != 0)
    return 1;
  for (size_t i = 0; i < sizeof magic / sizeof magic[0]; i++)
    if ((long)sf.f_type == magic[i])
      return 1;
  return 0;
}

/* Open path for reading only if it is a regular file: opened first (never
** blocking, never a terminal), then checked, so that nothing can swap a
** pipe or a device in between.  The descriptor, or -1 with why. */
static int open_regular(const char *path, struct stat *st, const char **why) {
  int fd = open(path, O_RDONLY | O_NONBLOCK | O_NOCTTY | O_CLOEXEC);
  if (fd < 0) {
    *why = strerror(errno);
    return -1;
  }
  if (fstat(fd, st) != 0 || !S_ISREG(st->st_mode)) {
    *why = S_ISDIR(st->st_mode) ? "a directory, not a file" : "not a regular file";
    close(fd);
    return -1;
  }
  if (pseudo_fs(fd)) {
    *why = "a file of the kernel (/proc, /sys ...), not data";
    close(fd);
    return -1;
  }
  return fd;
}

/* hooks.fingerprint(path, max, deadline): the SHA-256 in hex and the size
** of a regular file, or nil and why.  Reading stops past max bytes (the
** size is then max + 1 and the digest of no use) and at the deadline
** (hooks.now() seconds): nil, "timeout". */
static int l_fingerprint(lua_State *L) {
  const char *path = luaL_checkstring(L, 1), *why = NULL;
  lua_Integer max = luaL_optinteger(L, 2, LUA_MAXINTEGER);
  double deadline = luaL_optnumber(L, 3, 1e300);
  struct stat st;
  int fd = open_regular(path, &st, &why);
  if (fd < 0) {
    luaL_pushfail(L);
    lua_pushstring(L, why);
    return 2;
  }
  sl_sha256 h;
  sl_error e;
  memset(&e, 0, sizeof e);
  if (sl_sha256_init(&h, &e) != SL_OK) {
    close(fd);
    luaL_pushfail(L);
    lua_pushstring(L, e.msg);
    return 2;
  }
  unsigned char buf[1 << 16], sha[32];
  ssize_t n;
  while ((n = read(fd, buf, sizeof buf)) > 0 || (n < 0 && errno == EINTR)) {
    if (n > 0)
      sl_sha256_update(&h, buf, (size_t)n);
    if (h.bytes > (uint64_t)max)
      break;
    if (now() > deadline) {
      close(fd);
      luaL_pushfail(L);
      lua_pushliteral(L, "timeout");
      return 2;
    }
  }
  int err = errno;
  close(fd);
  if (n < 0) {
    luaL_pushfail(L);
    lua_pushstring(L, strerror(err));
    return 2;
  }
  char hex[65];
  sl_sha256_final(&h, sha);
  lua_pushstring(L, sl_fingerprint_hex(sha, hex));
  lua_pushinteger(L, (lua_Integer)h.bytes);
  return 2;
}

/* hooks.read_regular(path, max): the bytes of a regular file of at most
** max bytes and its identity "device:inode", or nil and why. */
static int l_read_regular(lua_State *L) {
  const char *path = luaL_checkstring(L, 1), *why = NULL;
  lua_Integer max = luaL_checkinteger(L, 2);
  struct stat st;
  int fd = open_regular(path, &st, &why);
  if (fd < 0) {
    luaL_pushfail(L);
    lua_pushstring(L, why);
    return 2;
  }
  if (st.st_size > max) {
    close(fd);
    luaL_pushfail(L);
    lua_pushfstring(L, "larger than %I bytes", max);
    return 2;
  }
  luaL_Buffer b;
  luaL_buffinit(L, &b);
  ssize_t n;
  char buf[1 << 16];
  lua_Integer total = 0;
  while ((n = read(fd, buf, sizeof buf)) != 0) {
    if (n < 0 && errno == EINTR)
      continue;
    if (n < 0 || (total += n) > max)
      break;
    luaL_addlstring(&b, buf, (size_t)n);
  }
  int err = errno;
  close(fd);
  if (n != 0) {
    luaL_pushfail(L);
    lua_pushstring(L, n < 0 ? strerror(err) : "it grew while being read");
    return 2;
  }
  luaL_pushresult(&b);
  lua_pushfstring(L, "%I:%I", (lua_Integer)st.st_dev, (lua_Integer)st.st_ino);
  return 2;
}

/* hooks.file_id(path): "device:inode" of path itself (a link is not
** followed) and its kind, or nil. */
static int l_file_id(lua_State *L) {
  struct stat st;
  if (lstat(luaL_checkstring(L, 1), &st) != 0) {
    luaL_pushfail(L);
    return 1;
  }
  lua_pushfstring(L, "%I:%I", (lua_Integer)st.st_dev, (lua_Integer)st.st_ino);
  lua_pushstring(L, kind_of(st.st_mode));
  return 2;
}

/* hooks.now(): seconds on a clock that only moves forward. */
static int l_now(lua_State *L) {
  lua_pushnumber(L, now());
  return 1;
}

/* hooks.sandbox_available(): true, or false and why. */
static int l_available(lua_State *L) {
  char why[512];
  if (confine_available(why, sizeof why)) {
    lua_pushboolean(L, 1);
    return 1;
  }
  lua_pushboolean(L, 0);
  lua_pushstring(L, why);
  return 2;
}

void replayer_install(lua_State *L) {
  static const luaL_Reg hooks[] = {
    {"replay_spawn", l_spawn}, {"replay_send", l_send}, {"replay_exit", l_exit},
    {"file_kind", l_file_kind}, {"fingerprint", l_fingerprint},
    {"read_regular", l_read_regular}, {"file_id", l_file_id}, {"now", l_now},
    {"sandbox_available", l_available}, {NULL, NULL}
  };
  static const luaL_Reg methods[] = {
    {"recv", l_recv}, {"stop", l_stop}, {NULL, NULL}
  };
  if (luaL_newmetatable(L, CHILD_META)) {
    luaL_newlib(L, methods);
    lua_setfield(L, -2, "__index");
    lua_pushcfunction(L, l_gc);
    lua_setfield(L, -2, "__gc");
  }
  lua_pop(L, 1);
  if (lua_getfield(L, LUA_REGISTRYINDEX, HOOKS) == LUA_TTABLE)
    luaL_setfuncs(L, hooks, 0);
  lua_pop(L, 1);
}
