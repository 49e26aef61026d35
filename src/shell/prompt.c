/*
** prompt.c: the prompt on a terminal.  Readline runs through its callback
** interface inside a poll loop, so that a signal can be dealt with between
** keystrokes:
**   - Ctrl-C at the prompt drops the line and any pending chunk and shows a
**     fresh prompt (the line handler is removed and installed again, which
**     resets all of Readline's line state);
**   - Ctrl-Z gives the terminal back in its own mode before stopping, and
**     takes it again when the shell continues;
**   - a window resize is passed on to Readline.
** While a line runs, Readline's handler is removed, so the terminal is in
** its normal mode and Ctrl-C stops the computation (see signals.c).
*/
#include <errno.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

#include <readline/readline.h>

#include "complete.h"
#include "history.h"
#include "pager.h"
#include "prompt.h"
#include "signals.h"

/* Readline's line handler takes no user pointer: it leaves its line here
** for prompt_run. */
static struct {
  char *line;   /* the line read, NULL at end of input */
  int ready;    /* a line (or the end) has arrived */
} got;

/* Readline's line handler: keep the line and step out of Readline. */
static void on_line(char *line) {
  got.line = line;
  got.ready = 1;
  rl_callback_handler_remove();
  sig_prompt(0);
}

/* Show the prompt the repl wants and let Readline read a line. */
static void install(repl *R) {
  fflush(stdout);
  fflush(stderr);
  complete_pending(repl_pending(R));
  sig_prompt(1);
  rl_callback_handler_install(repl_prompt(R), on_line);
}

/* Ctrl-C at the prompt: forget the line and any pending chunk. */
static void interrupt(repl *R) {
  rl_echo_signal_char(SIGINT);
  rl_free_line_state();
  rl_callback_sigcleanup();
  rl_callback_handler_remove();
  fputc('\n', stdout);
  repl_reset(R);
  install(R);
}

/* Ctrl-Z at the prompt: stop with the terminal restored, resume after. */
static void suspend(void) {
  rl_echo_signal_char(SIGTSTP);
  rl_cleanup_after_signal();
  sig_prompt(0);
  raise(SIGTSTP);
  sig_prompt(1);
  rl_reset_after_signal();
  rl_forced_update_display();
}

/* Deal with the signals that arrived at the prompt. */
static void take_signals(repl *R) {
  if (sig_take(SIGINT))
    interrupt(R);
  if (sig_take(SIGTSTP))
    suspend();
  if (sig_take(SIGWINCH))
    rl_resize_terminal();
}

/* A line arrived: save the chunk it ends, then run it.  0 at the end of
** input. */
static int take_line(repl *R, sl_history *h) {
  char *line = got.line;
  got.ready = 0;
  got.line = NULL;
  if (line == NULL) {
    fputc('\n', stdout);
    return 0;
  }
  int state = repl_take(R, line);
  free(line);
  if (state != REPL_MORE)   /* saved before it runs, in case it never ends */
    history_add(h, repl_text(R));
  if (state == REPL_READY)
    repl_run(R);
  install(R);
  return 1;
}

/* Wait for a key or a signal; 0 when the input is gone. */
static int wait_input(void) {
  struct pollfd p = { STDIN_FILENO, POLLIN, 0 };
  int n = poll(&p, 1, -1);
  if (n < 0)
    return errno == EINTR;
  if (p.revents & POLLNVAL)
    return 0;
  if (p.revents & (POLLIN | POLLHUP | POLLERR))
    rl_callback_read_char();
  return 1;
}

/* The prompt loop: wait, take signals, read keys, run lines. */
void prompt_run(repl *R) {
  sl_history h;
  rl_readline_name = "sluice";
  rl_instream = stdin;
  rl_outstream = stdout;
  rl_catch_signals = 0;     /* signals.c owns the signal handlers */
  rl_catch_sigwinch = 0;
  complete_install(R->L);
  pager_install(R->L);   /* only here: scripts and replays never page */
  history_open(&h);
  install(R);
  for (;;) {
    int alive = wait_input();
    if (got.ready && !take_line(R, &h))
      break;
    take_signals(R);
    if (!alive) {
      rl_callback_handler_remove();
      fputc('\n', stdout);
      break;
    }
  }
  sig_prompt(0);
  complete_pending(NULL);
  history_close(&h);
}
