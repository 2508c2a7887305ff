/* cli_parse: the command line read with the option table (cli_table.h):
 * which words are options, which take a value, which command takes which;
 * the combinations the commands refuse (each option's value is read in
 * cli_values.c). Every refusal is a usage error: exit code 2, one line
 * that says what is wrong and what to write, and where to find the help. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "loopwise/cli.h"
#include "loopwise/cli_help.h"
#include "loopwise/cli_table.h"
#include "loopwise/plot.h"

#include "cli_impl.h"


/* The command of the line when argv[1] names one (for the hint and the
 * suggestions), or -1. */
static int line_command(int argc, char **argv)
{
    return argc > 1 ? cli_command_find(argv[1]) : -1;
}

int cli_usage_error(int cmd, const char *fmt, const char *arg)
{
    fputs("loopwise: ", stderr);
    fprintf(stderr, fmt, arg);
    if (cmd >= 0)
        fprintf(stderr, "\nrun 'loopwise %s --help' for its options\n", cli_commands[cmd].name);
    else
        fputs("\nrun 'loopwise --help' for the commands and options\n", stderr);
    return 2;
}

int cli_arguments_check(int argc, char **argv)
{
    for (int k = 1; k < argc; k++) {
        char what[160];
        int kind;
        long off = text_find_bad_byte(argv[k], strlen(argv[k]), "the end of the argument", &kind,
                                      what, sizeof what);
        if (off < 0)
            continue;
        fprintf(stderr, "loopwise: argument %d", k);
        if (k > 1 && argv[k - 1][0] == '-')
            fprintf(stderr, " (after %s)", argv[k - 1]);
        fprintf(stderr, ", character %d: %s; expected UTF-8 text with no control character "
                "but tab\nrun 'loopwise --help' for the commands and options\n",
                text_col(argv[k], (int)off), what);
        return 2;
    }
    return 0;
}

/* The command names, for a suggestion. */
static const char *closest_command(const char *name)
{
    const char *names[CMD_COUNT];
    for (int c = 0; c < CMD_COUNT; c++)
        names[c] = cli_commands[c].name;
    return lw_closest(name, names, CMD_COUNT);
}

/* The names before issue 17 are refused, not aliased: a script that still
 * uses one should fail loudly and say what to write instead. */
static const char *renamed_to(const char *name)
{
    return !strcmp(name, "bode") ? "gain" : !strcmp(name, "polemap") ? "roots" : NULL;
}

static int unknown_command(const char *name)
{
    const char *best = closest_command(name), *now = renamed_to(name);
    char msg[300];
    if (now)
        snprintf(msg, sizeof msg, "the command '%s' is now called '%s' (renamed in version 0.2; "
                 "see the README, history of interface changes)", name, now);
    else if (best)
        snprintf(msg, sizeof msg, "unknown command '%.100s' (did you mean '%s'?)", name, best);
    else
        snprintf(msg, sizeof msg, "unknown command '%.100s'; expected check, gain, size, sweep, "
                 "load, roots, polar, response, corners or montecarlo", name);
    return cli_usage_error(-1, "%s", msg);
}

int cli_early(int argc, char **argv, int *code)
{
    if (argc > 1 && !strcmp(argv[1], "--complete")) {
        if (argc != 3) {
            *code = cli_usage_error(-1, "%s", "--complete takes the command line up to the "
                                   "cursor as one argument (it serves the bash completion)");
            return 1;
        }
        if (!(*code = cli_arguments_check(argc, argv)))
            cli_complete(stdout, argv[2]);
        return 1;
    }
    if (argc > 1 && !strcmp(argv[1], "help")) {
        int c = argc > 2 ? cli_command_find(argv[2]) : -1;
        *code = 0;
        if (argc > 3)
            *code = cli_usage_error(-1, "%s", "help takes one COMMAND");
        else if (argc == 3 && c < 0)
            *code = unknown_command(argv[2]);
        else if (c >= 0)
            cli_help_command(stdout, (cli_cmd)c);
        else
            cli_help_general(stdout);
        return 1;
    }
    for (int k = 1; k < argc; k++) {
        if (!strcmp(argv[k], "-h") || !strcmp(argv[k], "--help")) {
            int c = line_command(argc, argv);
            *code = 0;
            if (c >= 0)
                cli_help_command(stdout, (cli_cmd)c);
            else if (argv[1][0] != '-' && renamed_to(argv[1]))
                *code = unknown_command(argv[1]);
            else
                cli_help_general(stdout);
            return 1;
        }
        if (!strcmp(argv[k], "--version")) {
            printf("loopwise %s\n", LOOPWISE_VERSION);
            *code = 0;
            return 1;
        }
    }
    return 0;
}

/* An option nobody takes: the closest one the command takes (or any, when
 * the command is not known yet). */
static int unknown_option(int cmd, const char *a)
{
    const char *names[2 * 64];
    int n = 0;
    for (int k = 0; k < cli_noptions && n < (int)(sizeof names / sizeof *names); k++) {
        const cli_option *o = &cli_options[k];
        if (cmd >= 0 && o->commands && !(cli_option_commands(o->id) & CMD_BIT(cmd)))
            continue;
        if (cli_option_find(o->name) == o)
            names[n++] = o->name;
    }
    const char *best = lw_closest(a, names, n);
    char msg[300];
    if (best)
        snprintf(msg, sizeof msg, "unknown option '%.100s' (did you mean '%s'?)", a, best);
    else
        snprintf(msg, sizeof msg, "unknown option '%.100s'", a);
    return cli_usage_error(cmd, "%s", msg);
}

/* "'gain', 'sweep' or 'response'" */
static void command_list(unsigned cmds, char *buf, size_t n)
{
    int total = 0, seen = 0;
    for (int c = 0; c < CMD_COUNT; c++)
        total += (cmds & CMD_BIT(c)) != 0;
    buf[0] = '\0';
    for (int c = 0; c < CMD_COUNT; c++) {
        if (!(cmds & CMD_BIT(c)))
            continue;
        size_t l = strlen(buf);
        snprintf(buf + l, n - l, "%s'%s'", seen == 0 ? "" : seen == total - 1 ? " or " : ", ",
                 cli_commands[c].name);
        seen++;
    }
}

/* An option the command does not take: the table's own refusal, or
 * "--csv goes with 'gain', 'sweep' or 'response', not 'check'". */
static int not_taken(int cmd, const cli_option *o)
{
    char msg[512], list[256];
    const char *refusal = NULL;
    for (int k = 0; k < cli_noptions && !refusal; k++)
        if (cli_options[k].id == o->id)
            refusal = cli_options[k].refusal;
    if (refusal) {
        const char *at = strstr(refusal, "%s");
        if (at)
            snprintf(msg, sizeof msg, "%.*s%s%s", (int)(at - refusal), refusal,
                     cli_commands[cmd].name, at + 2);
        else
            snprintf(msg, sizeof msg, "%s", refusal);
    } else {
        command_list(cli_option_commands(o->id), list, sizeof list);
        snprintf(msg, sizeof msg, "%s goes with %s, not '%s'", o->name, list,
                 cli_commands[cmd].name);
    }
    return cli_usage_error(cmd, "%s", msg);
}

void cli_options_init(options *o)
{
    memset(o, 0, sizeof *o);
    o->pm = 60.0;
    o->width = 960;
    o->height = 720;
}

/* The combinations the commands refuse, once every option is known to go
 * with the command. */
static int combinations(const options *o, int cmd)
{
    int resp = cmd == CMD_RESPONSE, swp = cmd == CMD_SWEEP, size = cmd == CMD_SIZE;
    int mc = cmd == CMD_MONTECARLO;
    if (o->step && !resp)
        return cli_usage_error(cmd, "%s", "--step goes with 'response'");
    if (resp && !o->to_node)
        return cli_usage_error(cmd, "%s", "response needs --to NODE: the node whose response is "
                              "read");
    if (o->inject && o->from_node)
        return cli_usage_error(cmd, "%s", "--from INPUT and --inject NODE both name the source; "
                              "give one");
    if (swp && o->inject && !strcmp(o->inject, "each"))
        return cli_usage_error(cmd, "%s", "sweep takes one source: --inject NODE, not each");
    if (swp && (o->from_node || o->inject) && !o->to_node)
        return cli_usage_error(cmd, "%s", "sweep --from INPUT or --inject NODE needs --to NODE as "
                              "well");
    if (swp && o->to_node && o->nvary == MAX_AXES)
        return cli_usage_error(cmd, "%s", "sweep --to NODE reads a response along one --vary, not "
                              "over a map of two");
    int mc_over = size && o->over && o->over[0] == 'm';
    if (o->yield_given && size && !mc_over)
        return cli_usage_error(cmd, "--yield goes with 'montecarlo' or 'size --over montecarlo', "
                              "not '%s'", o->command);
    if ((o->samples || o->seed_given) && size && !mc_over)
        return cli_usage_error(cmd, "%s", "--samples and --seed go with 'montecarlo' or 'size "
                              "--over montecarlo'");
    if (o->over && o->ntune > 1)
        return cli_usage_error(cmd, "%s", "--over sizes one value: give one --tune");
    if (mc_over && (o->samples < 1 || !o->yield_given))
        return cli_usage_error(cmd, "%s", "size --over montecarlo needs --samples N, --seed S and "
                              "--yield P");
    if (o->levels && size && !(o->over && o->over[0] == 'c'))
        return cli_usage_error(cmd, "%s", "--levels goes with 'corners' or 'size --over corners'");
    if (o->nwithin > o->ntune)
        return cli_usage_error(cmd, "%s", "more --within than --tune: the k-th --within is the "
                              "range of the k-th --tune");
    if (mc && o->nmerge && o->part_m)
        return cli_usage_error(cmd, "%s", "--merge reports on parts already run; --part runs one: "
                              "give one of them");
    if (mc && o->part_m && !o->samples_out)
        return cli_usage_error(cmd, "%s", "--part K/M runs one part for a later --merge: give "
                              "--samples-out PATH for its samples");
    if (mc && !o->nmerge && o->samples < 1)
        return cli_usage_error(cmd, "%s", "montecarlo needs --samples N (1 or more) and --seed S");
    if (mc && o->part_m > o->samples && !o->nmerge) {
        char msg[200];
        snprintf(msg, sizeof msg, "--part %d/%d: %d parts of %d samples leave parts empty; give "
                 "M at most %d", o->part_k, o->part_m, o->part_m, o->samples, o->samples);
        return cli_usage_error(cmd, "%s", msg);
    }
    if (o->plot) {
        const char *dot = strrchr(o->plot, '.');
        if (!dot || (strcmp(dot, ".png") && strcmp(dot, ".svg")))
            return cli_usage_error(cmd, "-o '%s': the plot file must end in .png or .svg", o->plot);
    }
    int picture = cmd == CMD_ROOTS || cmd == CMD_POLAR;
    if (picture && !o->plot)
        return cli_usage_error(cmd, "%s draws a picture: give -o FILE.png or FILE.svg", o->command);
    if (o->keep_script && !o->plot)
        return cli_usage_error(cmd, "%s", "--keep-script goes with -o");
    lw_error kerr;
    if (o->keep_script && plot_keep_dir_check(o->keep_script, &kerr))
        return cli_usage_error(cmd, "%s", kerr.msg);
    if (size && !o->ntune)
        return cli_usage_error(cmd, "%s", "size needs --tune NAME (and --pm DEG)");
    if (swp && (!o->nvary || !o->from[0] || !o->to[0]))
        return cli_usage_error(cmd, "%s", "sweep needs --vary NAME --from A --to B");
    if (swp && o->nvary == 2 && (!o->from[1] || !o->to[1]))
        return cli_usage_error(cmd, "the second --vary %s needs its own --from and --to after it",
                              o->vary[1]);
    if (cmd == CMD_LOAD && (!o->node || !o->cload))
        return cli_usage_error(cmd, "%s", "load needs --node N --cload LO..HI");
    return 0;
}

int cli_parse(int argc, char **argv, options *o)
{
    int cmd = line_command(argc, argv);
    int first[OPT_COUNT] = { 0 };  /* argv index of each option's first use */
    for (int k = 1; k < argc; k++) {
        const char *a = argv[k];
        if (a[0] != '-' || !a[1]) {
            if (!o->command)
                o->command = a;
            else if (!o->file)
                o->file = a;
            else
                return cli_usage_error(cmd, "unexpected argument '%s'", a);
            continue;
        }
        const cli_option *opt = cli_option_find(a);
        if (!opt)
            return unknown_option(cmd, a);
        if (!first[opt->id])
            first[opt->id] = k;
        /* with the command first on the line, an option it does not take
         * is the error, whatever follows */
        if (cmd >= 0 && opt->commands != 0 && !(cli_option_commands(opt->id) & CMD_BIT(cmd)))
            return not_taken(cmd, opt);
        if (opt->value == VAL_PATHS) {
            /* --merge PART.csv ...: every word up to the next option */
            int n = 0;
            while (k + 1 < argc && (argv[k + 1][0] != '-' || !argv[k + 1][1])) {
                if (o->nmerge == MAX_PARTS)
                    return cli_usage_error(cmd, "--merge takes at most %s files", "10000");
                o->merge[o->nmerge++] = argv[++k];
                n++;
            }
            if (!n)
                return cli_usage_error(cmd, "%s needs the parts' files: --merge PART.csv ...", a);
            continue;
        }
        const char *val = NULL;
        if (opt->metavar) {
            if (k + 1 >= argc)
                return cli_usage_error(cmd, "option '%s' needs a value", a);
            val = argv[++k];
        }
        int rc = cli_option_value(opt, a, val, o, cmd);
        if (rc)
            return rc;
    }
    if (!o->command)
        return cli_usage_error(-1, "%s", "missing COMMAND");
    if (renamed_to(o->command))
        return unknown_command(o->command);
    cmd = cli_command_find(o->command);
    if (cmd < 0)
        return unknown_command(o->command);
    /* every option the command does not take, in the order given */
    for (int k = 1; k < argc; k++)
        for (int id = 0; id < OPT_COUNT; id++)
            if (first[id] == k && !(cli_option_commands((cli_opt_id)id) & CMD_BIT(cmd)))
                return not_taken(cmd, cli_option_find(argv[k]));
    if (!o->file && o->nmerge)
        return cli_usage_error(cmd, "%s", "missing FILE: give it before --merge (every word after "
                              "--merge is a part's file), e.g. loopwise montecarlo amp.loop "
                              "--merge part*.csv");
    if (!o->file)
        return cli_usage_error(cmd, "missing FILE after '%s'", o->command);
    return combinations(o, cmd);
}
