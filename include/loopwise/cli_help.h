/* cli_help: the help texts, written from the one table of commands and
 * options (cli_table.h): the general help (`loopwise --help`), a command's
 * help (`loopwise COMMAND --help`, `loopwise help COMMAND`: its synopsis,
 * what it answers, every option it takes with its default, when it exits 1,
 * one example), the same as man-page source for the manual's COMMANDS
 * section, and the bash completion's candidates (cli_complete.c).
 *
 * Ownership: nothing is allocated that outlives a call. */
#ifndef LOOPWISE_CLI_HELP_H
#define LOOPWISE_CLI_HELP_H

#include <stdio.h>

#include "loopwise/cli_table.h"

void cli_help_general(FILE *f);
void cli_help_command(FILE *f, cli_cmd c);
/* The OPTIONS (those every command takes) and COMMANDS sections of
 * loopwise(1) in the man macros.
 * Returns 0, or -1 when a text holds a character the page cannot carry
 * (the table is then to be fixed). */
int cli_help_roff(FILE *f);

/* Bash completion (cli_complete.c). line is the command line up to the
 * cursor ("loopwise sweep amp.loop --va"); prints the candidates for the
 * word under the cursor, one per line: commands, options, and the names of
 * nodes, inputs, params and elements read from the file on the line. Two
 * lines stand for what the shell completes itself: "@files" (file names)
 * and "@dirs" (directories). A candidate ending in '=' takes no space after
 * it. */
void cli_complete(FILE *f, const char *line);

#endif
