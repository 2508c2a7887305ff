/* manpage: writes loopwise(1) from its source page and the option table.
 *
 *   manpage TEMPLATE > loopwise.1
 *
 * Copies TEMPLATE (man/loopwise.1.in, written in the man macros) and puts,
 * in place of its line '.\" @COMMANDS@', the OPTIONS and COMMANDS sections
 * written from the table the parser and the help read (cli_help_roff), so
 * that the manual lists exactly the options the program takes. '@VERSION@'
 * becomes the library's version. Built and run by the Makefile. */
#include <stdio.h>
#include <string.h>

#include "loopwise/cli_help.h"
#include "loopwise/loopwise.h"

int main(int argc, char **argv)
{
    if (argc != 2) {
        fputs("usage: manpage TEMPLATE\n", stderr);
        return 2;
    }
    FILE *in = fopen(argv[1], "r");
    if (!in) {
        perror(argv[1]);
        return 1;
    }
    char line[4096];
    int rc = 0, placed = 0;
    while (fgets(line, sizeof line, in)) {
        if (!strcmp(line, ".\\\" @COMMANDS@\n")) {
            rc |= cli_help_roff(stdout);
            placed = 1;
            continue;
        }
        char *v = strstr(line, "@VERSION@");
        if (v) {
            *v = '\0';
            printf("%s%s%s", line, LOOPWISE_VERSION, v + strlen("@VERSION@"));
        } else {
            fputs(line, stdout);
        }
    }
    fclose(in);
    if (!placed) {
        fprintf(stderr, "manpage: %s has no '.\\\" @COMMANDS@' line\n", argv[1]);
        return 1;
    }
    if (rc || fflush(stdout) || ferror(stdout))
        return 1;
    return 0;
}
