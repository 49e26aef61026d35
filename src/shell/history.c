/*
** history.c: the history file.  Each entry is appended as soon as it is
** entered, so a session that ends abruptly loses nothing.  Entries are
** written with time stamps, which lets Readline read an input of several
** lines back as one entry.
*/
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <readline/history.h>

#include "history.h"

/* Print one warning per session about the history file. */
static void warn(sl_history *h, const char *what, const char *path, int err) {
  if (!h->warned)
    fprintf(stderr, "sluice: warning: history not saved: %s %s: %s\n",
            what, path, strerror(err));
  h->warned = 1;
}

/* The file name from the environment, malloc'ed; NULL when none. */
static char *history_path(void) {
  const char *state = getenv("XDG_STATE_HOME"), *home = getenv("HOME");
  const char *tail = "/sluice/history";
  const char *mid = "";
  if (state == NULL || state[0] != '/') {   /* unset, empty or relative */
    if (home == NULL || home[0] == '\0')
      return NULL;
    state = home;
    mid = "/.local/state";
  }
  size_t n = strlen(state) + strlen(mid) + strlen(tail) + 1;
  char *path = malloc(n);
  if (path != NULL)
    snprintf(path, n, "%s%s%s", state, mid, tail);
  return path;
}

/* Create every directory above the file; 0, or -1 after a warning that
** names the directory. */
static int make_parents(sl_history *h, char *path) {
  for (char *p = strchr(path + 1, '/'); p != NULL; p = strchr(p + 1, '/')) {
    *p = '\0';
    int failed = mkdir(path, 0700) != 0 && errno != EEXIST;
    if (failed)
      warn(h, "cannot create", path, errno);
    *p = '/';
    if (failed)
      return -1;
  }
  return 0;
}

/* Make sure the file exists, since appending to it does not create it. */
static int touch(const char *path) {
  int fd = open(path, O_WRONLY | O_CREAT | O_APPEND, 0600);
  if (fd < 0)
    return errno;
  close(fd);
  return 0;
}

/* Set Readline's history up and load the file. */
void history_open(sl_history *h) {
  h->warned = 0;
  history_comment_char = '#';
  history_write_timestamps = 1;
  history_multiline_entries = 1;
  stifle_history(HISTORY_MAX);
  h->path = history_path();
  if (h->path == NULL) {
    fprintf(stderr, "sluice: warning: history not saved: "
            "neither XDG_STATE_HOME nor HOME is set\n");
    h->warned = 1;
    return;
  }
  int err = 0;
  if (make_parents(h, h->path) != 0 || (err = touch(h->path)) != 0) {
    if (err != 0)
      warn(h, "cannot create", h->path, err);
    free(h->path);
    h->path = NULL;
    return;
  }
  err = read_history(h->path);
  if (err != 0)
    warn(h, "cannot read", h->path, err);
}

/* Is entry the same as the newest entry? */
static int repeats_last(const char *entry) {
  HIST_ENTRY *last = history_get(history_base + history_length - 1);
  return last != NULL && strcmp(last->line, entry) == 0;
}

/* Add a non-blank, non-repeated entry, in memory and in the file. */
void history_add(sl_history *h, const char *entry) {
  if (entry[strspn(entry, " \t\n")] == '\0' || repeats_last(entry))
    return;
  add_history(entry);
  if (h->path == NULL)
    return;
  int err = append_history(1, h->path);
  if (err != 0) {
    warn(h, "cannot write", h->path, err);
    free(h->path);
    h->path = NULL;
  }
}

/* Trim the file and free the history. */
void history_close(sl_history *h) {
  if (h->path != NULL)
    history_truncate_file(h->path, HISTORY_MAX);
  free(h->path);
  h->path = NULL;
  clear_history();
}
