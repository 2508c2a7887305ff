/* cli_table: the one table of the commands and of the options each takes.
 * Everything about the command line is read from it: the option parser
 * (cli_parse.c: which options take a value, which command takes which),
 * the help texts (cli_help.c: `loopwise COMMAND --help`, `loopwise help
 * COMMAND`, the general `--help`, the manual's COMMANDS section), the bash
 * completion (cli_complete.c) and the tests that every help names every
 * option its command accepts. Nothing else lists options.
 *
 * An option may have several entries, one per meaning (`--points` counts
 * frequencies for gain and values for sweep): the entries of one name share
 * its id and whether it takes a value; the commands that accept it are the
 * union of its entries' commands.
 *
 * Ownership: everything here is static data. */
#ifndef LOOPWISE_CLI_TABLE_H
#define LOOPWISE_CLI_TABLE_H

/* The commands, in the order the help lists them; keep in step with
 * cli_commands in cli_table.c. */
typedef enum {
    CMD_CHECK, CMD_GAIN, CMD_SIZE, CMD_SWEEP, CMD_LOAD, CMD_ROOTS, CMD_POLAR, CMD_RESPONSE,
    CMD_CORNERS, CMD_MONTECARLO, CMD_COUNT
} cli_cmd;

#define CMD_BIT(c) (1u << (c))
#define CMDS_ALL ((1u << CMD_COUNT) - 1u)

typedef struct cli_command {
    const char *name;
    const char *needs;     /* what its synopsis requires after FILE ("" when nothing) */
    const char *summary;   /* one line for the list of commands */
    const char *about;     /* what it answers, a paragraph */
    const char *exit1;     /* when it exits 1 (SPEC section 5) */
    const char *example;   /* one command line, on a case under cases/ */
} cli_command;

/* What an option's value is, for completion and for the parser's shape. */
typedef enum {
    VAL_NONE,        /* a flag */
    VAL_NUMBER,      /* a number or expression: nothing to complete */
    VAL_TEXT,        /* free text (WxH, K/M, a density) */
    VAL_PATH,        /* a file to write or read */
    VAL_PATHS,       /* one or more files: every following word not starting with '-' */
    VAL_DIR,         /* a directory */
    VAL_ASSIGN,      /* NAME=EXPR: a param, an element, NODE.r or NODE.c */
    VAL_TARGET,      /* NAME: a param, an element, NODE.r or NODE.c */
    VAL_NODE,        /* a node of the file */
    VAL_INPUT,       /* an input of the file */
    VAL_CHOICE       /* one of the words in choices */
} cli_value;

/* Keep in step with the parser's switch (cli_parse.c). */
typedef enum {
    OPT_HELP, OPT_VERSION, OPT_SET, OPT_PM, OPT_GM, OPT_FMIN, OPT_FMAX, OPT_JSON, OPT_CSV,
    OPT_POINTS, OPT_LIN, OPT_TUNE, OPT_WITHIN, OPT_DENSITY, OPT_OVER, OPT_LEVELS, OPT_VARY,
    OPT_FROM, OPT_TO, OPT_INJECT, OPT_STEP, OPT_NODE, OPT_CLOAD, OPT_SAMPLES, OPT_SEED,
    OPT_YIELD, OPT_PART, OPT_SAMPLES_OUT, OPT_MERGE, OPT_PLOT, OPT_EACH, OPT_SIZE,
    OPT_KEEP_SCRIPT, OPT_COUNT
} cli_opt_id;

typedef struct cli_option {
    const char *name;      /* "--pm", "-o" */
    const char *alias;     /* another spelling ("-h"), or NULL */
    cli_opt_id id;
    const char *metavar;   /* "DEG"; NULL for a flag */
    cli_value value;
    const char *choices;   /* VAL_CHOICE (and words a VAL_NODE may also be): space-separated */
    unsigned commands;     /* CMD_BIT()s of the commands this entry is for; 0: no command
                            * (loopwise --version) */
    const char *deflt;     /* the default in words, or NULL */
    const char *help;      /* what it does */
    const char *refusal;   /* the message when a command does not take it ('%s' stands for
                            * the command), or NULL for the plain "goes with 'a' or 'b'" */
} cli_option;

extern const cli_command cli_commands[CMD_COUNT];
extern const cli_option cli_options[];
extern const int cli_noptions;

/* The command called name, or -1. */
int cli_command_find(const char *name);
/* The first entry of the option spelled name (its name or its alias), or
 * NULL. */
const cli_option *cli_option_find(const char *name);
/* The commands that accept option id: the union of its entries. */
unsigned cli_option_commands(cli_opt_id id);
/* The entry of option id that describes it for command cmd, or NULL when
 * cmd does not take it. */
const cli_option *cli_option_for(cli_opt_id id, cli_cmd cmd);

#endif
