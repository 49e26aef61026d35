/*
** confine.h: the kernel side of the replay sandbox.  A process that runs
** an untrusted session log confines itself, irreversibly, before the first
** line of the log runs: resource limits, no new privileges, no
** capabilities, Landlock (reads anywhere, writes only beneath one folder or
** nowhere) and a seccomp filter (no exec, no new processes, no sockets, no
** tracing, no signals to other processes, no terminal injection).
*/
#ifndef SLUICE_CONFINE_H
#define SLUICE_CONFINE_H

#include <stddef.h>

/* Documented limits of a confined replay. */
#define CONFINE_MEMORY   (8ULL << 30)   /* address space: 8 GiB */
#define CONFINE_FILESIZE (1ULL << 30)   /* largest file written: 1 GiB */
#define CONFINE_FILES    512            /* open files */

typedef struct confine_opts {
  const char *out_dir;     /* the one folder writes may go beneath, or NULL */
  unsigned long cpu_seconds;   /* CPU time for the whole replay, 0: none */
} confine_opts;

/* Can this kernel confine a process?  1, or 0 with the reason in why. */
int confine_available(char *why, size_t n);

/* Confine the calling process for good.  0, or -1 with the reason in why
** (the process must then not run the log). */
int confine_apply(const confine_opts *o, char *why, size_t n);

#endif
