/*
** confine.c: confining the process that replays an untrusted log.  Each
** layer holds on its own: Landlock stops writes outside --out even if the
** Lua-level checks are fooled; seccomp stops programs and connections even
** if a library is; the limits stop a log that only wants to exhaust the
** machine.  The order matters: limits and capabilities first, then
** no_new_privs (which Landlock and seccomp need), then Landlock, then the
** filter, which also forbids undoing any of it.
*/
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <sched.h>
#include <signal.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/ioctl.h>
#include <sys/prctl.h>
#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <linux/capability.h>
#include <linux/landlock.h>
#include <linux/seccomp.h>
#include <seccomp.h>

#include "confine.h"

/* Access rights of later Landlock ABIs, for headers older than the kernel. */
#ifndef LANDLOCK_ACCESS_FS_REFER
#define LANDLOCK_ACCESS_FS_REFER (1ULL << 13)
#endif
#define LL_FS_TRUNCATE     (1ULL << 14)   /* ABI 3 */
#define LL_FS_IOCTL_DEV    (1ULL << 15)   /* ABI 5 */
#define LL_NET_BIND_TCP    (1ULL << 0)    /* ABI 4 */
#define LL_NET_CONNECT_TCP (1ULL << 1)
#define LL_SCOPE_UNIX      (1ULL << 0)    /* ABI 6 */
#define LL_SCOPE_SIGNAL    (1ULL << 1)

/* The ruleset attribute as the newest ABI we know has it; older kernels
** get a prefix of it (the size tells the kernel which). */
typedef struct ll_ruleset {
  uint64_t fs, net, scoped;
} ll_ruleset;

/* Every right that changes the file system (reads stay unhandled: free). */
#define LL_WRITES (LANDLOCK_ACCESS_FS_WRITE_FILE | LANDLOCK_ACCESS_FS_REMOVE_DIR | \
  LANDLOCK_ACCESS_FS_REMOVE_FILE | LANDLOCK_ACCESS_FS_MAKE_CHAR |                   \
  LANDLOCK_ACCESS_FS_MAKE_DIR | LANDLOCK_ACCESS_FS_MAKE_REG |                       \
  LANDLOCK_ACCESS_FS_MAKE_SOCK | LANDLOCK_ACCESS_FS_MAKE_FIFO |                     \
  LANDLOCK_ACCESS_FS_MAKE_BLOCK | LANDLOCK_ACCESS_FS_MAKE_SYM)
/* What a replay may do beneath --out: files, folders and links, no devices. */
#define LL_OUT (LANDLOCK_ACCESS_FS_WRITE_FILE | LANDLOCK_ACCESS_FS_REMOVE_DIR |     \
  LANDLOCK_ACCESS_FS_REMOVE_FILE | LANDLOCK_ACCESS_FS_MAKE_DIR |                    \
  LANDLOCK_ACCESS_FS_MAKE_REG | LANDLOCK_ACCESS_FS_MAKE_SYM)

/* A test may pretend that the kernel lacks a layer, to check the refusal. */
static int pretend_missing(const char *layer) {
  const char *v = getenv("SLUICE_TEST_NO_KERNEL_SANDBOX");
  return v != NULL && strstr(v, layer) != NULL;
}

static int landlock_abi(void) {
  if (pretend_missing("landlock"))
    return -1;
  return (int)syscall(SYS_landlock_create_ruleset, NULL, 0,
                      LANDLOCK_CREATE_RULESET_VERSION);
}

/* Filters are supported when installing a NULL one fails with EFAULT. */
static int seccomp_filters(void) {
  if (pretend_missing("seccomp"))
    return 0;
  return prctl(PR_SET_SECCOMP, SECCOMP_MODE_FILTER, NULL, 0, 0) == -1 &&
         errno == EFAULT;
}

int confine_available(char *why, size_t n) {
  int abi = landlock_abi();
  if (abi < 1) {
    snprintf(why, n, "this kernel has no Landlock (Linux 5.13 or later with "
             "Landlock enabled), which keeps a replay from writing outside --out");
    return 0;
  }
  if (!seccomp_filters()) {
    snprintf(why, n, "this kernel has no seccomp filters, which keep a replay "
             "from running programs or opening connections");
    return 0;
  }
  return 1;
}

/* Fail with a message naming the step and the system's reason. */
static int fail(char *why, size_t n, const char *step) {
  snprintf(why, n, "%s: %s", step, strerror(errno));
  return -1;
}

/* Lower a limit to v (never raise it: a user's own lower limit stands). */
static int set_limit(int resource, rlim_t v) {
  struct rlimit r;
  if (getrlimit(resource, &r) != 0)
    return -1;
  if (r.rlim_max != RLIM_INFINITY && r.rlim_max < v)
    v = r.rlim_max;
  r.rlim_cur = r.rlim_max = v;
  return setrlimit(resource, &r);
}

/* Memory, CPU, file size and open files.  AddressSanitizer reserves
** terabytes of address space, so a sanitizer build keeps no memory limit. */
static int limit_resources(const confine_opts *o, char *why, size_t n) {
#ifndef __SANITIZE_ADDRESS__
  if (set_limit(RLIMIT_AS, CONFINE_MEMORY) != 0)
    return fail(why, n, "the memory limit");
#endif
  if (o->cpu_seconds > 0 && set_limit(RLIMIT_CPU, o->cpu_seconds) != 0)
    return fail(why, n, "the CPU limit");
  if (set_limit(RLIMIT_FSIZE, CONFINE_FILESIZE) != 0)
    return fail(why, n, "the file size limit");
  if (set_limit(RLIMIT_NOFILE, CONFINE_FILES) != 0)
    return fail(why, n, "the open files limit");
  if (set_limit(RLIMIT_CORE, 0) != 0)
    return fail(why, n, "the core file limit");
  signal(SIGXFSZ, SIG_IGN);   /* a write past the limit fails; no kill */
  return 0;
}

/* Drop every capability: a root user keeps no power over the system. */
static int drop_capabilities(char *why, size_t n) {
  struct __user_cap_header_struct h = { _LINUX_CAPABILITY_VERSION_3, 0 };
  struct __user_cap_data_struct d[2];
  memset(d, 0, sizeof d);
  if (syscall(SYS_capset, &h, d) != 0)
    return fail(why, n, "dropping capabilities");
  return 0;
}

/* The Landlock ruleset for this ABI: writes handled everywhere, allowed
** beneath out_dir only. */
static int landlock(const char *out_dir, char *why, size_t n) {
  int abi = landlock_abi();
  if (abi < 1) {
    errno = ENOSYS;
    return fail(why, n, "Landlock");
  }
  ll_ruleset rs = { LL_WRITES | LANDLOCK_ACCESS_FS_EXECUTE, 0, 0 };
  size_t size = sizeof rs.fs;
  uint64_t out = LL_OUT;
  if (abi >= 2) { rs.fs |= LANDLOCK_ACCESS_FS_REFER; out |= LANDLOCK_ACCESS_FS_REFER; }
  if (abi >= 3) { rs.fs |= LL_FS_TRUNCATE; out |= LL_FS_TRUNCATE; }
  if (abi >= 4) { rs.net = LL_NET_BIND_TCP | LL_NET_CONNECT_TCP; size = 2 * sizeof rs.fs; }
  if (abi >= 5) rs.fs |= LL_FS_IOCTL_DEV;
  if (abi >= 6) { rs.scoped = LL_SCOPE_UNIX | LL_SCOPE_SIGNAL; size = sizeof rs; }
  int fd = (int)syscall(SYS_landlock_create_ruleset, &rs, size, 0);
  if (fd < 0)
    return fail(why, n, "Landlock ruleset");
  if (out_dir != NULL) {
    struct landlock_path_beneath_attr pb;
    pb.allowed_access = out;
    pb.parent_fd = open(out_dir, O_PATH | O_CLOEXEC | O_DIRECTORY);
    if (pb.parent_fd < 0) {
      close(fd);
      return fail(why, n, "opening --out");
    }
    int r = (int)syscall(SYS_landlock_add_rule, fd, LANDLOCK_RULE_PATH_BENEATH, &pb, 0);
    close(pb.parent_fd);
    if (r != 0) {
      close(fd);
      return fail(why, n, "Landlock rule for --out");
    }
  }
  int r = (int)syscall(SYS_landlock_restrict_self, fd, 0);
  close(fd);
  return r == 0 ? 0 : fail(why, n, "Landlock");
}

/* System calls a replay never needs: programs, processes, tracing,
** networking, the kernel's administration.  Denied with EPERM so that
** the Lua code sees an ordinary failure. */
static const int denied[] = {
  SCMP_SYS(execve), SCMP_SYS(execveat), SCMP_SYS(fork), SCMP_SYS(vfork),
  SCMP_SYS(ptrace), SCMP_SYS(process_vm_readv), SCMP_SYS(process_vm_writev),
  SCMP_SYS(socket), SCMP_SYS(socketpair), SCMP_SYS(mount), SCMP_SYS(umount2),
  SCMP_SYS(pivot_root), SCMP_SYS(chroot), SCMP_SYS(unshare), SCMP_SYS(setns),
  SCMP_SYS(bpf), SCMP_SYS(perf_event_open), SCMP_SYS(keyctl), SCMP_SYS(add_key),
  SCMP_SYS(request_key), SCMP_SYS(userfaultfd), SCMP_SYS(io_uring_setup),
  SCMP_SYS(io_uring_enter), SCMP_SYS(io_uring_register), SCMP_SYS(init_module),
  SCMP_SYS(finit_module), SCMP_SYS(delete_module), SCMP_SYS(kexec_load),
  SCMP_SYS(kexec_file_load), SCMP_SYS(reboot), SCMP_SYS(swapon), SCMP_SYS(swapoff),
  SCMP_SYS(syslog), SCMP_SYS(acct), SCMP_SYS(settimeofday), SCMP_SYS(clock_settime),
  SCMP_SYS(sethostname), SCMP_SYS(setdomainname), SCMP_SYS(iopl), SCMP_SYS(ioperm),
  SCMP_SYS(mknod), SCMP_SYS(mknodat), SCMP_SYS(quotactl), SCMP_SYS(open_by_handle_at),
  SCMP_SYS(name_to_handle_at), SCMP_SYS(fanotify_init), SCMP_SYS(pidfd_open),
  SCMP_SYS(pidfd_getfd), SCMP_SYS(pidfd_send_signal), SCMP_SYS(kcmp),
  SCMP_SYS(move_mount), SCMP_SYS(open_tree), SCMP_SYS(fsopen), SCMP_SYS(fsmount),
  SCMP_SYS(fspick), SCMP_SYS(mount_setattr), SCMP_SYS(tkill), SCMP_SYS(personality),
};

/* The seccomp filter.  Threads stay allowed (the bootstrap and BLAS use
** them): clone only with CLONE_THREAD, and clone3, whose flags a filter
** cannot read, answers ENOSYS so that the C library falls back to clone.
** Signals go to this process only. */
static int filter(char *why, size_t n) {
  scmp_filter_ctx ctx = seccomp_init(SCMP_ACT_ALLOW);
  if (ctx == NULL) {
    errno = ENOMEM;
    return fail(why, n, "seccomp");
  }
  int r = 0;
  scmp_datum_t self = (scmp_datum_t)getpid();
  for (size_t i = 0; i < sizeof denied / sizeof denied[0] && r == 0; i++)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), denied[i], 0);
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(clone), 1,
                         SCMP_A0(SCMP_CMP_MASKED_EQ, CLONE_THREAD, 0));
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(ENOSYS), SCMP_SYS(clone3), 0);
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(kill), 1,
                         SCMP_A0(SCMP_CMP_NE, self));
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(tgkill), 1,
                         SCMP_A0(SCMP_CMP_NE, self));
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(rt_sigqueueinfo), 1,
                         SCMP_A0(SCMP_CMP_NE, self));
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(rt_tgsigqueueinfo), 1,
                         SCMP_A0(SCMP_CMP_NE, self));
  if (r == 0)   /* typing into the user's terminal */
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(ioctl), 1,
                         SCMP_A1(SCMP_CMP_MASKED_EQ, 0xffffffffu, TIOCSTI));
  if (r == 0)
    r = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), SCMP_SYS(ioctl), 1,
                         SCMP_A1(SCMP_CMP_MASKED_EQ, 0xffffffffu, TIOCLINUX));
  if (r == 0)
    r = seccomp_load(ctx);
  seccomp_release(ctx);
  if (r != 0) {
    errno = -r;
    return fail(why, n, "seccomp");
  }
  return 0;
}

int confine_apply(const confine_opts *o, char *why, size_t n) {
  if (!confine_available(why, n))
    return -1;
  if (limit_resources(o, why, n) != 0 || drop_capabilities(why, n) != 0)
    return -1;
  if (prctl(PR_SET_NO_NEW_PRIVS, 1, 0, 0, 0) != 0)
    return fail(why, n, "no_new_privs");
  if (landlock(o->out_dir, why, n) != 0 || filter(why, n) != 0)
    return -1;
  return 0;
}
