/*
** prompt.h: the interactive prompt on a terminal, with Readline.
*/
#ifndef SLUICE_PROMPT_H
#define SLUICE_PROMPT_H

#include "repl.h"

/* Read, run and print until Ctrl-D on an empty line. */
void prompt_run(repl *R);

#endif
