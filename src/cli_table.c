/* cli_table: the commands and their options (see cli_table.h). The texts are
 * plain ASCII except for the few characters cli_help.c knows how to write in
 * the manual (degree sign, pi, Greek omega). */
#include "loopwise/cli_table.h"

#include <string.h>

#define EVERY CMDS_ALL
#define B(c) CMD_BIT(CMD_##c)
/* the commands that draw a picture with -o */
#define DRAWING (B(GAIN) | B(SWEEP) | B(LOAD) | B(ROOTS) | B(POLAR) | B(RESPONSE) | B(MONTECARLO))
/* the commands that report numbers (every one but the two that only draw) */
#define NUMBERS (EVERY & ~(B(ROOTS) | B(POLAR)))
/* the refusal of a response's ends outside response and sweep */
#define ENDS_REFUSED "--to NODE, --from INPUT and --inject go with 'response' or 'sweep', not '%s'"

const cli_command cli_commands[CMD_COUNT] = {
    [CMD_CHECK] = { "check", "",
        "loops and signs, DC loop gain, margins, poles, zeros, closed-loop poles",
        "Declared loops and their signs, the DC loop gain, every crossover with its phase "
        "margin, the gain margin, the open-loop poles (owner node, one-pole-per-node "
        "estimate), the zeros, the closed-loop poles with the Nyquist count, where extra "
        "capacitance helps, and a verdict.",
        "the loop is unstable, or a --pm or --gm given is missed (or there is no crossover "
        "to compare with a --pm given)",
        "loopwise check cases/refcore.loop --pm 55" },
    [CMD_GAIN] = { "gain", "",
        "magnitude and phase of the loop gain over the band",
        "Magnitude and phase of the loop gain T over the band, as a table, CSV or JSON; -o "
        "draws its Bode plot with the margins marked.",
        "the loop is unstable, or a --pm or --gm given is missed",
        "loopwise gain cases/twostage.loop --points 41 --csv gain.csv" },
    [CMD_SIZE] = { "size", "--tune NAME",
        "the smallest value that meets the target margin",
        "The smallest value of a param or element (or NODE.r, NODE.c) within the range "
        "searched that meets the target phase margin (and --gm when given), with the margins "
        "it gives. --over corners: at every corner, naming the one that limits; --over "
        "montecarlo: for a yield; --tune twice: the smallest first value for which some "
        "second value meets the target, the second chosen there for the largest margin.",
        "no value in the range meets the target (--pm, 60 degrees by default, and --gm "
        "when given; over corners at every corner; over montecarlo the --yield bound)",
        "loopwise size cases/refcore.loop --tune ccomp --pm 60 --density 2fF/um2" },
    [CMD_SWEEP] = { "sweep", "--vary NAME --from A --to B",
        "margins and poles as one value changes, or a map of two",
        "Margins and poles as one value changes, and every value where the phase margin "
        "crosses the target. --vary twice (each followed by its own --from and --to) maps "
        "two values over N x N points with the boundary where the target is met. With --to "
        "NODE, also a closed-loop response's overshoot, 1% settling time and peak at every "
        "value (after --from and --to, a name is a node or an input, a number a bound of "
        "the range).",
        "any point is unstable, or misses a --pm or --gm given",
        "loopwise sweep cases/refcore.loop --vary rser --from 540 --to 54k --points 13" },
    [CMD_LOAD] = { "load", "--node N --cload LO..HI",
        "whether a node is inside the loop, and the load it takes",
        "Whether node N is inside the loop, the margin over the load added at N, and the "
        "largest load that still meets the target (for a node outside the loop, the loop's "
        "own margin).",
        "any load leaves the loop unstable, or misses a --pm or --gm given",
        "loopwise load cases/refcore.loop --node vref --cload 1p..1n" },
    [CMD_ROOTS] = { "roots", "-o PLOT",
        "the s-plane picture of poles, zeros and closed-loop poles",
        "Draws the s-plane on a logarithmic radius with the true angle: the open-loop "
        "poles (numbered as check numbers them, with a key of their nodes), the zeros, the "
        "closed-loop poles with the Q of complex pairs, and the path of each closed-loop "
        "pole from its open-loop pole.",
        "the loop is unstable, or a --pm or --gm given is missed",
        "loopwise roots cases/refcore.loop -o roots.png" },
    [CMD_POLAR] = { "polar", "-o PLOT",
        "the polar plot of the loop gain with the Nyquist count",
        "Draws T(j2\xCF\x80" "f) in the complex plane for f from -inf to +inf on a compressed "
        "radius, with -1, the unit circle, the crossings and the Nyquist count.",
        "the loop is unstable, or a --pm or --gm given is missed",
        "loopwise polar cases/refcore.loop -o polar.svg" },
    [CMD_RESPONSE] = { "response", "--to NODE",
        "the closed loop's response at a node to an input or a current",
        "The closed loop's response at NODE to an input's voltage (--from, or the file's "
        "only input) or to a current into a node (--inject): its DC value and rejection, "
        "peak, bandwidth, poles and zeros, a table over the band, and the exact step "
        "response (--step; JSON always has it). --inject each ranks every node by the step "
        "a current into it causes at NODE.",
        "the loop is unstable, or a --pm or --gm given is missed",
        "loopwise response cases/regulator.loop --to out --inject out --step" },
    [CMD_CORNERS] = { "corners", "",
        "the margin at every combination of the corner ranges",
        "The margin at every combination of the params' corner ranges (their ends, or "
        "--levels K values of each), worst first, with a command line that reproduces the "
        "worst. A --set pins a param: it is left out of the combinations.",
        "any corner is unstable, or misses a --pm or --gm given",
        "loopwise corners cases/refcore.loop --pm 45" },
    [CMD_MONTECARLO] = { "montecarlo", "--samples N | --merge PART.csv...",
        "margin distributions and yield under random spread",
        "Margin distributions and the yield (with its Clopper-Pearson interval) under the "
        "params' distributions, and the worst sample with a command line that reproduces "
        "it. A --set pins a param: it is not drawn. A large run splits into parts run "
        "anywhere (--part K/M --samples-out PART.csv) and merged at the end (--merge), "
        "giving exactly the report of one run.",
        "--yield P is given and the one-sided 95% lower bound of the yield is below P "
        "(unstable samples are failures inside the yield)",
        "loopwise montecarlo cases/refcore.loop --samples 2000 --seed 1 --yield 90%" },
};

const cli_option cli_options[] = {
    /* size */
    { "--tune", NULL, OPT_TUNE, "NAME", VAL_TARGET, NULL, B(SIZE), NULL,
      "the param, element, NODE.r or NODE.c to size; twice: the one that costs area first, "
      "then the one chosen for the largest margin", NULL },
    { "--within", NULL, OPT_WITHIN, "LO..HI", VAL_TEXT, NULL, B(SIZE),
      "value/100 .. value*100",
      "the range searched (the k-th --within goes with the k-th --tune)", NULL },
    { "--density", NULL, OPT_DENSITY, "D", VAL_TEXT, NULL, B(SIZE), NULL,
      "capacitance per area, e.g. 2fF/um2, to report the area of the capacitor sized", NULL },
    { "--over", NULL, OPT_OVER, "corners|montecarlo", VAL_CHOICE, "corners montecarlo", B(SIZE),
      NULL, "size for every corner, or for a Monte Carlo yield (with --samples, --seed, --yield)",
      NULL },
    { "--levels", NULL, OPT_LEVELS, "K", VAL_NUMBER, NULL, B(SIZE), "2, the ends",
      "with --over corners: values of each corner range, evenly spaced, ends included, 2 to "
      "100", "--levels goes with 'corners' or 'size --over corners'" },
    { "--samples", NULL, OPT_SAMPLES, "N", VAL_NUMBER, NULL, B(SIZE), NULL,
      "with --over montecarlo: samples to draw, 1 to 10000000", NULL },
    { "--seed", NULL, OPT_SEED, "S", VAL_NUMBER, NULL, B(SIZE), "1",
      "with --over montecarlo: seed of the draws", NULL },
    { "--yield", NULL, OPT_YIELD, "P", VAL_NUMBER, NULL, B(SIZE), NULL,
      "with --over montecarlo: the target yield as 0.99 or 99%, which the one-sided 95% lower "
      "bound of the yield must reach", NULL },
    /* corners */
    { "--levels", NULL, OPT_LEVELS, "K", VAL_NUMBER, NULL, B(CORNERS), "2, the ends",
      "values of each corner range, evenly spaced, ends included, 2 to 100 (at most 4096 "
      "corners in all)", NULL },
    /* sweep */
    { "--vary", NULL, OPT_VARY, "NAME", VAL_TARGET, NULL, B(SWEEP), NULL,
      "the param, element, NODE.r or NODE.c to vary; twice for a map of two values", NULL },
    { "--from", NULL, OPT_FROM, "A", VAL_NUMBER, NULL, B(SWEEP), NULL,
      "start of the range of the --vary before it", ENDS_REFUSED },
    { "--to", NULL, OPT_TO, "B", VAL_NUMBER, NULL, B(SWEEP), NULL,
      "end of the range of the --vary before it", ENDS_REFUSED },
    { "--lin", NULL, OPT_LIN, NULL, VAL_NONE, NULL, B(SWEEP), "logarithmic spacing",
      "space the values linearly", NULL },
    /* responses */
    { "--to", NULL, OPT_TO, "NODE", VAL_NODE, NULL, B(RESPONSE), NULL,
      "the node whose response is read", NULL },
    { "--to", NULL, OPT_TO, "NODE", VAL_NODE, NULL, B(SWEEP), NULL,
      "also read a closed-loop response at NODE at every value", NULL },
    { "--from", NULL, OPT_FROM, "INPUT", VAL_INPUT, NULL, B(RESPONSE) | B(SWEEP),
      "the file's only input", "the input whose voltage drives the response", NULL },
    { "--inject", NULL, OPT_INJECT, "NODE|each", VAL_NODE, "each", B(RESPONSE), NULL,
      "a current into NODE drives the response instead of an input; each: every node in turn, "
      "ranked by the step it causes", ENDS_REFUSED },
    { "--inject", NULL, OPT_INJECT, "NODE", VAL_NODE, NULL, B(SWEEP), NULL,
      "a current into NODE drives the response read with --to", NULL },
    { "--step", NULL, OPT_STEP, NULL, VAL_NONE, NULL, B(RESPONSE), NULL,
      "show the step response in the text (and draw it with -o); JSON always has it", NULL },
    /* load */
    { "--node", NULL, OPT_NODE, "N", VAL_NODE, NULL, B(LOAD), NULL, "the node that takes the load",
      NULL },
    { "--cload", NULL, OPT_CLOAD, "LO..HI", VAL_TEXT, NULL, B(LOAD), NULL,
      "the capacitance added at the node, e.g. 1p..1n", NULL },
    /* Monte Carlo */
    { "--samples", NULL, OPT_SAMPLES, "N", VAL_NUMBER, NULL, B(MONTECARLO), NULL,
      "samples to draw, 1 to 10000000 (with --merge: taken from the parts)", NULL },
    { "--seed", NULL, OPT_SEED, "S", VAL_NUMBER, NULL, B(MONTECARLO), "1",
      "seed of the draws: a seed gives the same samples on any machine and thread count "
      "(with --merge: taken from the parts)", NULL },
    { "--yield", NULL, OPT_YIELD, "P", VAL_NUMBER, NULL, B(MONTECARLO), "none",
      "target yield as 0.99 or 99%: the one-sided 95% lower bound of the yield must reach it",
      "--yield goes with 'montecarlo' or 'size --over montecarlo', not '%s'" },
    { "--part", NULL, OPT_PART, "K/M", VAL_TEXT, NULL, B(MONTECARLO), "the whole run",
      "evaluate only part K of M: the samples whose index i (from 0) has i mod M = K - 1; "
      "needs --samples-out", NULL },
    { "--samples-out", NULL, OPT_SAMPLES_OUT, "PATH", VAL_PATH, NULL, B(MONTECARLO), NULL,
      "write one CSV row per sample evaluated (its index, drawn values and margins), for "
      "--merge (- for standard output, instead of the report)", NULL },
    { "--merge", NULL, OPT_MERGE, "PART.csv...", VAL_PATHS, NULL, B(MONTECARLO), NULL,
      "report on the samples of these --samples-out files (every index once) exactly as one "
      "run over all of them would; every word after it up to the next option is a file", NULL },
    /* tables and pictures */
    { "--csv", NULL, OPT_CSV, "PATH", VAL_PATH, NULL, B(GAIN) | B(SWEEP) | B(RESPONSE), NULL,
      "also write the table as CSV to PATH (- for standard output, instead of the text)", NULL },
    { "--points", NULL, OPT_POINTS, "N", VAL_NUMBER, NULL, B(GAIN) | B(RESPONSE), "121",
      "frequencies in the table, log-spaced over the band", NULL },
    { "--points", NULL, OPT_POINTS, "N", VAL_NUMBER, NULL, B(SWEEP), "25",
      "values along the range (a map: on each axis, at most 200)", NULL },
    { "--points", NULL, OPT_POINTS, "N", VAL_NUMBER, NULL, B(LOAD), "25",
      "loads, log-spaced over the range", NULL },
    /* pictures */
    { "-o", NULL, OPT_PLOT, "PLOT", VAL_PATH, NULL, DRAWING, NULL,
      "draw a picture into PLOT, a .png or .svg file", NULL },
    { "--each", NULL, OPT_EACH, NULL, VAL_NONE, NULL, B(GAIN), NULL,
      "with -o: overlay each declared loop's own gain", "--each goes with 'gain -o'" },
    { "--size", NULL, OPT_SIZE, "WxH", VAL_TEXT, NULL, DRAWING, "960x720",
      "picture size in pixels", NULL },
    { "--keep-script", NULL, OPT_KEEP_SCRIPT, "DIR", VAL_DIR, NULL, DRAWING, NULL,
      "with -o: leave the picture's data and gnuplot script in DIR for restyling", NULL },
    /* every command */
    { "--set", NULL, OPT_SET, "NAME=EXPR", VAL_ASSIGN, NULL, EVERY, NULL,
      "override a param (every value that depends on it follows), an element's value, or a "
      "node's field as NODE.r / NODE.c; repeatable", NULL },
    { "--pm", NULL, OPT_PM, "DEG", VAL_NUMBER, NULL, EVERY & ~B(SIZE),
      "none; 60 is the reference the text measures against, never a reason to exit 1",
      "target phase margin in degrees", NULL },
    { "--pm", NULL, OPT_PM, "DEG", VAL_NUMBER, NULL, B(SIZE), "60",
      "target phase margin in degrees", NULL },
    { "--gm", NULL, OPT_GM, "DB", VAL_NUMBER, NULL, EVERY, "none",
      "target gain margin in dB (a loop whose phase never reaches -180 has an unbounded gain "
      "margin and meets it)", NULL },
    { "--fmin", NULL, OPT_FMIN, "F", VAL_NUMBER, NULL, EVERY,
      "1/1000 of the smallest pole or zero", "lower end of the analysis band in Hz", NULL },
    { "--fmax", NULL, OPT_FMAX, "F", VAL_NUMBER, NULL, EVERY,
      "1000 times the largest pole or zero", "upper end of the analysis band in Hz", NULL },
    { "--json", NULL, OPT_JSON, NULL, VAL_NONE, NULL, NUMBERS, NULL,
      "machine-readable output on standard output",
      "--json goes with the commands that report numbers, not '%s' (check --json gives the "
      "poles, the margins and the Nyquist count)" },
    /* help */
    { "--help", "-h", OPT_HELP, NULL, VAL_NONE, NULL, EVERY, NULL, "this help", NULL },
    { "--version", NULL, OPT_VERSION, NULL, VAL_NONE, NULL, 0, NULL, "the version", NULL },
};

const int cli_noptions = (int)(sizeof cli_options / sizeof *cli_options);

int cli_command_find(const char *name)
{
    for (int c = 0; c < CMD_COUNT; c++)
        if (!strcmp(cli_commands[c].name, name))
            return c;
    return -1;
}

const cli_option *cli_option_find(const char *name)
{
    for (int k = 0; k < cli_noptions; k++)
        if (!strcmp(cli_options[k].name, name) ||
            (cli_options[k].alias && !strcmp(cli_options[k].alias, name)))
            return &cli_options[k];
    return NULL;
}

unsigned cli_option_commands(cli_opt_id id)
{
    unsigned u = 0;
    for (int k = 0; k < cli_noptions; k++)
        if (cli_options[k].id == id)
            u |= cli_options[k].commands;
    return u;
}

const cli_option *cli_option_for(cli_opt_id id, cli_cmd cmd)
{
    for (int k = 0; k < cli_noptions; k++)
        if (cli_options[k].id == id && (cli_options[k].commands & CMD_BIT(cmd)))
            return &cli_options[k];
    return NULL;
}
