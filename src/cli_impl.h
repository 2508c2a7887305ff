/* cli_impl: what the command-line files share (cli_parse.c, cli_values.c). */
#ifndef LOOPWISE_CLI_IMPL_H
#define LOOPWISE_CLI_IMPL_H

#include "loopwise/cli.h"
#include "loopwise/cli_table.h"

/* Prints "loopwise: " fmt (one %s: arg) and the hint to the help of the
 * command cmd (or of the program when cmd < 0); returns the exit code 2. */
int cli_usage_error(int cmd, const char *fmt, const char *arg);
/* Reads the value val of option a (the table's entry opt) into o; returns 0
 * or the exit code 2 after printing why. */
int cli_option_value(const cli_option *opt, const char *a, const char *val, options *o, int cmd);

#endif
