/*
** history.h: the prompt's history, kept across sessions in
** $XDG_STATE_HOME/sluice/history (by default ~/.local/state/sluice/history).
** A history that cannot be read or written costs one warning, never the
** session.
*/
#ifndef SLUICE_HISTORY_H
#define SLUICE_HISTORY_H

#define HISTORY_MAX 1000   /* entries kept in memory and in the file */

typedef struct sl_history {
  char *path;   /* NULL when there is no usable file */
  int warned;   /* a warning was already printed */
} sl_history;

/* Find (and create) the file and read what it holds. */
void history_open(sl_history *h);

/* Remember one finished input (several lines make one entry). */
void history_add(sl_history *h, const char *entry);

/* Trim the file to its last HISTORY_MAX lines and let go of it. */
void history_close(sl_history *h);

#endif
