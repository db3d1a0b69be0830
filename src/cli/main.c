/* stagesim command line: the entry point, the commands' and options' tables, --help, argument
 * parsing and the dispatch to the commands (run.c, check.c, study.c; common.c their helpers). */
#define _POSIX_C_SOURCE 200809L
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <signal.h>

#include "cli.h"

static const char USAGE[] =
    "usage: stagesim run NETLIST [options]          operating point, sweeps, stage figures\n"
    "       stagesim check NETLIST [LIMITS] [options]\n"
    "                                                judge figures against limits\n"
    "       stagesim sweep NETLIST --vary NAME=SPEC... [options]\n"
    "       stagesim spread NETLIST [--trials N] [--seed S] [--tol NAME=SPEC]... [options]\n"
    "                                                tolerance (Monte Carlo) run\n"
    "       stagesim sensitivity NETLIST [--tol NAME=SPEC]... [options]\n"
    "       stagesim snap NETLIST --series E6|E12|E24|E48|E96|E192 [options]\n"
    "       stagesim merge [-o DIR] [--limits FILE] SHARD.csv...\n"
    "       stagesim refine NETLIST [--limits FILE] [corners] [options]\n"
    "                                                preferred values for the .choose values\n"
    "       stagesim draft KIND [requirements] [-o DIR]   a first design (docs/design.md)\n"
    "       stagesim --help | --version\n"
    "\n"
    "Each command's options, with an example: stagesim COMMAND --help (or stagesim help\n"
    "COMMAND). A command refuses the options it does not use.\n"
    "\n"
    "options (the commands that take them in parentheses):\n"
    "  -o DIR            output folder (default: current folder; created if missing)\n"
    "  --set NAME=VALUE  override a .param, an element value (R1=10k) or a model parameter\n"
    "                    (qgen.bf=250); repeatable, each NAME once (not merge)\n"
    "  --models DIR      a folder searched for .include files not found beside the netlist\n"
    "                    (repeatable, in order; then STAGESIM_MODELS, then the installed\n"
    "                    models) (not merge)\n"
    "  --in SRC --out NODE   the stage's source and output node (override .stage; not merge)\n"
    "  --load OHMS       (run) the load the stage drives, for the Zout check\n"
    "  --plot            (run) also write bode.svg (and wave.svg, thd_wave.svg);\n"
    "                    (sweep, spread) study.svg: the figures with their limits\n"
    "  --nodes A,B,...   (run) write only these nodes' voltages (op, dc, ac, tran tables and\n"
    "                    the report); default every node\n"
    "  --devices X,Y,... (run) add these elements' op.csv quantities (currents, terminal\n"
    "                    voltages, power) to dc.csv; default none\n"
    "  --ls-freq F --thd-amp A --thd-target PCT   (run) the large-signal test\n"
    "  --noise-band F1..F2   the noise analysis's own band (overrides .noise band=; not\n"
    "                    merge)\n"
    "  --noise-weight a|none   A-weighting (IEC 61672-1) of the noise figures (not merge)\n"
    "  --junit FILE      (check) the verdicts as JUnit-style XML\n"
    "  --html FILE       (all but merge) a self-contained HTML report (figures, verdicts,\n"
    "                    warnings, plots)\n"
    "  --quiet           no report on stdout\n"
    "  --strict          (check) fail (exit 1) on any sanity (lint) warning\n"
    "  --limits FILE     (all but run) a limits file (check: or its LIMITS argument)\n"
    "  --min-yield F     (sweep, spread, merge) exit 1 when the yield is below F (0..1)\n"
    "  --vary NAME=lin:START:STOP:N | log:START:STOP:N | list:V1,V2,...  (sweep, spread;\n"
    "                    NAME may be temp)\n"
    "  --tol NAME=PCT%[:gauss] | NAME=LO..HI[:gauss] | NAME=NOM+-D[:gauss]\n"
    "                    (spread, sensitivity; NAME may be INSTANCE.PARAM or temp)\n"
    "  --match A,B,...=RHO   (spread) draw these toleranced values correlated (0..1)\n"
    "  --trials N --seed S   (spread) tolerance trials (default 1000, seed 1)\n"
    "  --threads N       (sweep, spread) worker threads (default: all cores); results never\n"
    "                    depend on it\n"
    "  --shard K/N       (sweep, spread) run the K-th of N slices of the points\n"
    "  --temps LO,HI     (sensitivity) temperature extremes, default -40,85\n"
    "  --series E6|E12|E24|E48|E96|E192   (snap) the preferred-value series\n"
    "  --tol NAME=SPEC --trials N --seed S --min-yield F   (refine) score by yield\n"
    "  --beta-range LO,HI --supply-tol NAME=PCT% --max-candidates N   (refine) corners and\n"
    "                    the search's budget; refine also takes --temps and --threads\n"
    "  --series E6|E12|E24|E48|E96|E192   (snap, draft) the preferred-value series\n"
    "  --supply, --current, --swing, --gain, --zin, --load, --source, --f-low, --f-high,\n"
    "  --cap-series   (draft) the stage's requirements: stagesim draft --help\n"
    "  --cap-series E6|...|none  (snap) the capacitors' series (default E12)\n"
    "  --keep A,B,...    (snap) elements left as they are\n"
    "Real numbers take the netlist's SI suffixes (10k, 4.7meg, 100n; m is milli, a lone M\n"
    "is refused); counts are plain digits.\n"
    "\n"
    "exit: 0 ok, 1 a check failed, 2 bad input, 3 no convergence. docs/cli.md has it all.\n";

/* ---- commands and their options ---------------------------------------------------------- */

enum {
    C_RUN = 1 << 0,
    C_CHECK = 1 << 1,
    C_SWEEP = 1 << 2,
    C_SPREAD = 1 << 3,
    C_SENS = 1 << 4,
    C_SNAP = 1 << 5,
    C_MERGE = 1 << 6,
    C_REFINE = 1 << 7,
    C_DRAFT = 1 << 8,
    C_ALL = (1 << 9) - 1,
    C_NETLIST = C_ALL & ~C_MERGE & ~C_DRAFT, /* the commands that read a netlist */
};

typedef struct cli_command {
    const char *name;
    unsigned bit;
    const char *synopsis;
    const char *what; /* one paragraph, wrapped */
    const char *example;
} cli_command;

static const cli_command COMMANDS[] = {
    {"run", C_RUN, "stagesim run NETLIST [options]",
     "Solves the operating point and every analysis the netlist asks for (.dc, .ac with the\n"
     "stage figures, .noise, .tran, .large_signal), writes the CSV files into the output\n"
     "folder and prints a report.",
     "stagesim run netlists/vibration_frontend.cir -o out/vib --set R1=51k --plot"},
    {"check", C_CHECK, "stagesim check NETLIST [LIMITS] [options]",
     "Judges the circuit's figures against the limits of its .expect lines and of the limits\n"
     "file LIMITS (or --limits FILE). Every limit's figure is checked to exist before\n"
     "anything is solved. Exit 0 every limit met, 1 one failed, 2 bad input, 3 no\n"
     "operating point.",
     "stagesim check netlists/vibration_frontend.cir netlists/vibration_frontend.limits \\\n"
     "      -o out/check --junit out/check.xml"},
    {"sweep", C_SWEEP, "stagesim sweep NETLIST --vary NAME=SPEC... [options]",
     "Solves the circuit at every point of a grid of swept values (several --vary make a\n"
     "grid, the first varying slowest); writes study.csv (one row per point, every figure)\n"
     "and study_summary.csv.",
     "stagesim sweep netlists/vibration_frontend.cir --vary temp=lin:-40:85:6 \\\n"
     "      --vary ss_npn.bf=list:100,200,300 -o out/sweep"},
    {"spread", C_SPREAD, "stagesim spread NETLIST [--tol NAME=SPEC]... [options]",
     "Tolerance (Monte Carlo) run: random trials over the --tol and .tolerance tolerances\n"
     "(at every point of a --vary grid, if given); study.csv, study_summary.csv and the\n"
     "yield against the limits. A tolerance on a --set name spreads around the --set value.",
     "stagesim spread netlists/vibration_frontend.cir --tol R1=5% --tol ss_npn.bf=100..300 \\\n"
     "      --trials 500 --limits netlists/vibration_frontend.limits --min-yield 0.9 -o out/mc"},
    {"sensitivity", C_SENS, "stagesim sensitivity NETLIST [--tol NAME=SPEC]... [options]",
     "Normalised sensitivity of every figure to every toleranced value (central differences\n"
     "of +-1 %), and every transistor's operating point at the beta and temperature\n"
     "extremes (sensitivity.csv, corners.csv).",
     "stagesim sensitivity netlists/vibration_frontend.cir --tol R1=5% --tol R2=5% \\\n"
     "      --temps -40,85 -o out/sens"},
    {"snap", C_SNAP, "stagesim snap NETLIST --series E6|E12|E24|E48|E96|E192 [options]",
     "Snaps every resistor to the nearest value of the series (IEC 60063) and every capacitor\n"
     "to --cap-series (default E12), but the --keep elements, shows how every figure shifts\n"
     "(snap_values.csv, snap_figures.csv) and judges the snapped circuit against the limits\n"
     "(exit 1 when it fails one).",
     "stagesim snap netlists/vibration_frontend.cir --series E24 -o out/snap"},
    {"merge", C_MERGE, "stagesim merge [options] SHARD.csv...",
     "Puts the study.csv files of a sharded sweep or spread back together (every point\n"
     "exactly once) and writes study.csv and study_summary.csv.",
     "stagesim merge -o out/all --limits netlists/vibration_frontend.limits \\\n"
     "      out/s1/study.csv out/s2/study.csv"},
    {"refine", C_REFINE, "stagesim refine NETLIST [--limits FILE] [options]",
     "Chooses preferred values (IEC 60063) for the netlist's .choose values so that every\n"
     "limit (.expect lines, --limits) holds with the largest normalised margin at the nominal\n"
     "point and at every corner named (--beta-range, --temps, --supply-tol); writes\n"
     "refined.cir (the netlist with the chosen values), design.csv, design_margins.csv and\n"
     "refine_path.csv (docs/refine.md). Exit 0 every limit met at every corner, 1 not (the\n"
     "failing limits named), 2 bad input, 3 no operating point for any candidate.",
     "stagesim refine netlists/geophone_preamp.cir --beta-range 0.5x,2x --temps -20,70 \\\n"
     "      --supply-tol vcc=10% -o out/refine"},
    {"draft", C_DRAFT, "stagesim draft KIND [requirements] [options]",
     "Writes a first design of a stage of KIND (follower, ce, ce-split, ce-follower,\n"
     "jfet-cs) for the requirements, by rules of thumb: draft.cir in the output folder, a\n"
     "commented netlist with its values on the E-series, the reasoning step by step and\n"
     ".expect limits from the requirements, ready for stagesim check. A starting point for\n"
     "the bench, not a verified product: ratings are not checked (docs/design.md).",
     "stagesim draft ce-split --supply 12 --gain 20 --source 600 --load 10k \\\n"
     "      --f-low 20 --f-high 20k -o out/mic"},
};
#define N_COMMANDS (sizeof COMMANDS / sizeof COMMANDS[0])

typedef struct cli_option {
    const char *name, *alias; /* alias NULL when none */
    const char *arg;          /* the value's placeholder; NULL for a flag */
    unsigned cmds;            /* the commands this line is for */
    const char *help;         /* one line */
} cli_option;

/* One line per option and command group: an option is accepted by the commands of all its
 * lines, and each command's help lists exactly its lines. */
static const cli_option OPTIONS[] = {
    {"-o", "--out-dir", "DIR", C_ALL & ~C_CHECK,
     "output folder (default: the current folder; created if missing)"},
    {"-o", "--out-dir", "DIR", C_CHECK, "write check.csv and figures.csv into DIR"},
    {"--set", NULL, "NAME=VALUE", C_NETLIST,
     "set a .param, element value (R1=10k) or MODEL.PARAM; repeatable, each NAME once"},
    {"--models", NULL, "DIR", C_NETLIST & ~C_REFINE,
     "a folder for .include files not beside the netlist; repeatable, searched in order"},
    {"--in", NULL, "SRC", C_NETLIST, "the stage's driving source (with --out; overrides .stage)"},
    {"--out", NULL, "NODE", C_NETLIST, "the stage's output node (with --in)"},
    {"--noise-band", NULL, "F1..F2", C_NETLIST & ~C_REFINE,
     "the noise analysis's own band in Hz (overrides .noise band=; needs .noise)"},
    {"--noise-weight", NULL, "a|none", C_NETLIST & ~C_REFINE,
     "weight the noise: a = A-weighting of IEC 61672-1 (overrides .noise weight=)"},
    {"--load", NULL, "OHMS", C_RUN,
     "the load on the stage output, for the report's Zout warning (as .stage load=)"},
    {"--nodes", NULL, "A,B,...", C_RUN,
     "write only these nodes' voltages (op, dc, ac, tran tables, report)"},
    {"--devices", NULL, "X,Y,...", C_RUN,
     "add these elements' op.csv quantities to dc.csv, after the node voltages"},
    {"--plot", NULL, NULL, C_RUN, "also write bode.svg (and wave.svg, thd_wave.svg)"},
    {"--plot", NULL, NULL, C_SWEEP | C_SPREAD,
     "also write study.svg: per limited figure its values over the swept value (sweep) or "
     "their histogram (spread), the limits drawn"},
    {"--ls-freq", NULL, "HZ", C_RUN,
     "large-signal test frequency (overrides .large_signal; needs a stage)"},
    {"--thd-amp", NULL, "AMP", C_RUN,
     "input amplitude of thd_pct, V or A (overrides .large_signal)"},
    {"--thd-target", NULL, "PCT", C_RUN,
     "THD whose input amplitude is searched, 0 < PCT < 100 (default 1)"},
    {"--junit", NULL, "FILE", C_CHECK, "also write the verdicts as JUnit-style XML"},
    {"--html", NULL, "FILE", C_RUN,
     "also write a one-file HTML report: figures, warnings, the plots (drawn as --plot)"},
    {"--html", NULL, "FILE", C_CHECK,
     "also write a one-file HTML report: verdicts with margins, figures, warnings"},
    {"--html", NULL, "FILE", C_SWEEP | C_SPREAD,
     "also write a one-file HTML report: yield, worst case per limit, summary"},
    {"--html", NULL, "FILE", C_SENS | C_SNAP,
     "also write a one-file HTML report of the tables and warnings"},
    {"--strict", NULL, NULL, C_CHECK,
     "fail (exit 1) on any sanity (lint) warning, as a failing JUnit testcase each"},
    {"--limits", NULL, "FILE", C_CHECK, "the limits file (instead of the LIMITS argument)"},
    {"--limits", NULL, "FILE", C_SWEEP | C_SPREAD,
     "limits for the pass fractions and the yield (with the .expect lines)"},
    {"--limits", NULL, "FILE", C_SENS | C_SNAP,
     "limits whose figures (QUANTITY@FREQ, large-signal) join the table"},
    {"--limits", NULL, "FILE", C_MERGE, "limits for the pass fractions and the yield"},
    {"--min-yield", NULL, "F", C_SWEEP | C_SPREAD | C_MERGE,
     "exit 1 when the yield is below F (0 .. 1)"},
    {"--vary", NULL, "NAME=SPEC", C_SWEEP,
     "lin:START:STOP:N, log:START:STOP:N or list:V1,...; NAME as --set or temp"},
    {"--vary", NULL, "NAME=SPEC", C_SPREAD, "a grid of swept values (as sweep), trials at each"},
    {"--tol", NULL, "NAME=SPEC", C_SPREAD | C_SENS,
     "PCT%[:gauss], LO..HI[:gauss] or NOM+-D[:gauss], added to the .tolerance lines; NAME "
     "as --set, q1.bf (that transistor's own) or temp; repeatable"},
    {"--match", NULL, "A,B,...=RHO", C_SPREAD,
     "draw these toleranced values correlated (RHO 0 .. 1, e.g. q1.bf,q2.bf=0.95); repeatable"},
    {"--trials", NULL, "N", C_SPREAD, "number of trials, 1 .. 100000000 (default 1000)"},
    {"--seed", NULL, "S", C_SPREAD, "random seed, 0 .. 18446744073709551615 (default 1)"},
    {"--threads", NULL, "N", C_SWEEP | C_SPREAD,
     "1 .. 256 worker threads (default: all cores); results do not depend on it"},
    {"--shard", NULL, "K/N", C_SWEEP | C_SPREAD,
     "run only the K-th of N slices of the points (merge joins them)"},
    {"--temps", NULL, "LO,HI", C_SENS,
     "corner temperatures in C, -273.15 < LO < HI <= 1000 (default -40,85)"},
    {"--series", NULL, "E6|E12|E24|E48|E96|E192", C_SNAP, "the preferred-value series (required)"},
    {"--limits", NULL, "FILE", C_REFINE, "limits to meet (with the .expect lines)"},
    {"--beta-range", NULL, "LO,HI", C_REFINE,
     "beta corners: factors of each BF (0.5x,2x) or BF values (50,400)"},
    {"--temps", NULL, "LO,HI", C_REFINE, "temperature corners in C, -273.15 < LO < HI <= 1000"},
    {"--supply-tol", NULL, "NAME=PCT%", C_REFINE,
     "supply corners: NAME (a source or .param) PCT % below and above; repeatable"},
    {"--threads", NULL, "N", C_REFINE,
     "1 .. 256 worker threads (default: all cores); results do not depend on it"},
    {"--max-candidates", NULL, "N", C_REFINE,
     "the most candidate designs solved, 10 .. 10000000 (default 20000)"},
    {"--tol", NULL, "NAME=SPEC", C_REFINE,
     "as spread's (with the .tolerance lines): choose by yield over the trials; repeatable"},
    {"--trials", NULL, "N", C_REFINE, "trials per candidate with --tol, 1 .. 1000000 (default 200)"},
    {"--seed", NULL, "S", C_REFINE, "the trials' seed with --tol (default 1), as spread's"},
    {"--min-yield", NULL, "F", C_REFINE,
     "with --tol: the target yield (0 .. 1); exit 1 when the chosen design falls short"},
    DRAFT_OPTIONS(C_DRAFT),
    {"--cap-series", NULL, "E6|E12|E24|E48|E96|E192|none", C_SNAP,
     "the capacitors' series (default E12); none leaves capacitors as they are"},
    {"--keep", NULL, "A,B,...", C_SNAP,
     "elements left as they are (a sensor's source resistance, the load)"},
    {"--quiet", "-q", NULL, C_ALL, "no report on standard output"},
    {"--help", "-h", NULL, C_ALL, "print this help and exit"},
};
#define N_OPTIONS (sizeof OPTIONS / sizeof OPTIONS[0])

static const cli_command *find_command(const char *name)
{
    for (size_t k = 0; k < N_COMMANDS; k++)
        if (strcmp(name, COMMANDS[k].name) == 0)
            return &COMMANDS[k];
    return NULL;
}

/* The first line of option o (by name or alias), NULL when unknown; *cmds gets the commands
 * of all its lines. */
static const cli_option *find_option(const char *o, unsigned *cmds)
{
    const cli_option *first = NULL;
    *cmds = 0;
    for (size_t k = 0; k < N_OPTIONS; k++)
        if (strcmp(o, OPTIONS[k].name) == 0 ||
            (OPTIONS[k].alias && strcmp(o, OPTIONS[k].alias) == 0)) {
            if (!first)
                first = &OPTIONS[k];
            *cmds |= OPTIONS[k].cmds;
        }
    return first;
}

static void print_command_help(const cli_command *c, FILE *f)
{
    fprintf(f, "usage: %s\n\n%s\n\noptions:\n", c->synopsis, c->what);
    for (size_t k = 0; k < N_OPTIONS; k++) {
        const cli_option *o = &OPTIONS[k];
        if (!(o->cmds & c->bit))
            continue;
        char spec[64];
        snprintf(spec, sizeof spec, "%s%s%s%s%s", o->name, o->alias ? ", " : "",
                 o->alias ? o->alias : "", o->arg ? " " : "", o->arg ? o->arg : "");
        fprintf(f, "  %-20s %s\n", spec, o->help);
    }
    fprintf(f, "\nReal numbers take the netlist's SI suffixes (10k, 4.7meg, 100n; m is milli, a\n"
               "lone M is refused); counts are plain digits.\n\nexample:\n  %s\n",
            c->example);
}

int usage_error(const char *fmt, const char *arg)
{
    fprintf(stderr, "stagesim: ");
    fprintf(stderr, fmt, arg);
    fprintf(stderr, "\n%s", USAGE);
    return EXIT_BAD_INPUT;
}

int usage_errorf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "stagesim: ");
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fprintf(stderr, "\n%s", USAGE);
    return EXIT_BAD_INPUT;
}

/* ---- argument parsing --------------------------------------------------------------------- */

/* The commands of a bit set, for messages: "spread and sensitivity". */
static void command_list(unsigned cmds, char *buf, size_t len)
{
    int n = 0, total = 0;
    for (size_t k = 0; k < N_COMMANDS; k++)
        total += (cmds & COMMANDS[k].bit) != 0;
    buf[0] = '\0';
    for (size_t k = 0; k < N_COMMANDS; k++) {
        if (!(cmds & COMMANDS[k].bit))
            continue;
        size_t used = strlen(buf);
        snprintf(buf + used, len - used, "%s%s", n == 0 ? "" : n == total - 1 ? " and " : ", ",
                 COMMANDS[k].name);
        n++;
    }
}

/* -h or --help anywhere among the options (not as another option's value). */
static int help_asked(int argc, char **argv)
{
    for (int i = 2; i < argc; i++) {
        unsigned cmds;
        const cli_option *o = find_option(argv[i], &cmds);
        if (o && !o->arg && strcmp(o->name, "--help") == 0)
            return 1;
        if (o && o->arg)
            i++;
    }
    return 0;
}

/* What an option family's parser returns for an option that is not one of its own. */
enum { OPT_OTHER = -1 };

/* The defaults, and room for every repeatable value (argc of each is enough). */
static int parse_args_init(int argc, char **argv, cli_args *a)
{
    a->cmd = argv[1];
    a->out_dir = ".";
    a->seed = 1;
    a->min_yield = -1.0;
    a->temp_lo = -40.0;
    a->temp_hi = 85.0;
    ss_draft_req_init(&a->draft, SS_DRAFT_FOLLOWER);
    a->cap_series = 12;
    a->sets = calloc((size_t)argc, sizeof *a->sets);
    a->varies = calloc((size_t)argc, sizeof *a->varies);
    a->tols = calloc((size_t)argc, sizeof *a->tols);
    a->matches = calloc((size_t)argc, sizeof *a->matches);
    a->shards = calloc((size_t)argc, sizeof *a->shards);
    a->nodes = calloc((size_t)argc, sizeof *a->nodes);
    a->supply_tols = calloc((size_t)argc, sizeof *a->supply_tols);
    a->devices = calloc((size_t)argc, sizeof *a->devices);
    a->models = calloc((size_t)argc, sizeof *a->models);
    if (!a->sets || !a->varies || !a->tols || !a->matches || !a->shards || !a->nodes ||
        !a->supply_tols || !a->devices || !a->models)
        return EXIT_BAD_INPUT;
    return EXIT_OK;
}

/* The word o of the command line (next: the word after it, NULL at the end) before any value
 * is read: an option must be known, be the command's, come once unless it adds up, and have
 * its value. *opt_out gets the option's first line, NULL when o is not an option. */
static int check_option(const char *o, const char *next, const cli_command *cmd,
                        unsigned char *seen, const cli_option **opt_out)
{
    unsigned cmds = 0;
    const cli_option *opt = o[0] == '-' && o[1] != '\0' ? find_option(o, &cmds) : NULL;
    if (!opt && o[0] == '-' && o[1] != '\0')
        return usage_error("unknown option '%s'", o);
    if (opt && !(cmds & cmd->bit)) {
        char list[128];
        command_list(cmds, list, sizeof list);
        return usage_errorf("%s belongs to %s, not %s", o, list, cmd->name);
    }
    /* a value given twice would drop the first; only these options add up */
    if (opt && opt->arg && strcmp(opt->name, "--set") != 0 && strcmp(opt->name, "--vary") != 0 &&
        strcmp(opt->name, "--tol") != 0 && strcmp(opt->name, "--nodes") != 0 &&
        strcmp(opt->name, "--match") != 0 && strcmp(opt->name, "--limits") != 0 &&
        strcmp(opt->name, "--supply-tol") != 0 && strcmp(opt->name, "--devices") != 0 &&
        strcmp(opt->name, "--models") != 0) {
        if (seen[opt - OPTIONS])
            return usage_errorf("%s given twice", o);
        seen[opt - OPTIONS] = 1;
    }
    if (opt && opt->arg && !next) {
        if (strcmp(o, "--set") == 0)
            return usage_error("--set needs NAME=VALUE, got '%s'", "");
        if (strcmp(o, "-o") == 0 || strcmp(o, "--out-dir") == 0)
            return usage_error("%s needs a folder", o);
        if (strcmp(o, "--in") == 0)
            return usage_error("%s needs a source name", o);
        if (strcmp(o, "--out") == 0)
            return usage_error("%s needs a node name", o);
        return usage_error("%s needs a value", o);
    }
    *opt_out = opt;
    return EXIT_OK;
}

/* A word that is not an option: merge's shard files, else the netlist, then check's limits. */
static int take_positional(const char *o, const cli_command *cmd, cli_args *a)
{
    int is_merge = cmd->bit == C_MERGE;
    if (is_merge)
        a->shards[a->n_shards++] = o;
    else if (!a->netlist)
        a->netlist = o;
    else if (cmd->bit == C_CHECK && !a->limits_path)
        a->limits_path = o;
    else if (cmd->bit == C_CHECK)
        return usage_error("check takes one limits file, got a second ('%s')", o);
    else if (cmd->bit == C_DRAFT)
        return usage_error("draft takes one KIND, got a second ('%s')", o);
    else
        return usage_error("more than one netlist given ('%s')", o);
    return EXIT_OK;
}

/* The options several commands share: -o, --set, --models, --in, --out, --noise-band,
 * --noise-weight, --junit, --html, --limits, --strict, --quiet. n is the option's name, next its
 * value. */
static int parse_shared_option(const char *n, const char *next, cli_args *a)
{
    if (strcmp(n, "-o") == 0) {
        a->out_dir = next;
        a->out_dir_given = 1;
    } else if (strcmp(n, "--set") == 0) {
        char *eq = strchr(next, '=');
        if (!eq || eq == next || !eq[1])
            return usage_error("--set needs NAME=VALUE, got '%s'", next);
        *eq = '\0';
        a->sets[a->n_sets].name = next;
        a->sets[a->n_sets].value = eq + 1;
        a->n_sets++;
    } else if (strcmp(n, "--models") == 0) {
        a->models[a->n_models++] = next;
    } else if (strcmp(n, "--in") == 0) {
        a->in_src = next;
    } else if (strcmp(n, "--out") == 0) {
        a->out_node = next;
    } else if (strcmp(n, "--noise-band") == 0) {
        static const char needs[] = "F1..F2, two frequencies in Hz with 0 < F1 < F2";
        char buf[256];
        char *dots = strlen(next) < sizeof buf ? strstr(strcpy(buf, next), "..") : NULL;
        ss_error err = {0};
        if (!dots)
            return usage_errorf("--noise-band needs %s, got '%s'", needs, next);
        *dots = '\0';
        if (ss_value_parse(buf, &a->noise_lo_hz, &err) != SS_OK ||
            ss_value_parse(dots + 2, &a->noise_hi_hz, &err) != SS_OK)
            return usage_errorf("--noise-band needs %s: %s", needs, err.message);
        if (!(a->noise_lo_hz > 0.0 && a->noise_hi_hz > a->noise_lo_hz))
            return usage_errorf("--noise-band needs %s, got '%s'", needs, next);
    } else if (strcmp(n, "--noise-weight") == 0) {
        if (strcmp(next, "a") != 0 && strcmp(next, "A") != 0 && strcmp(next, "none") != 0)
            return usage_error("--noise-weight needs a (A-weighting) or none, got '%s'", next);
        a->noise_weight = next;
    } else if (strcmp(n, "--junit") == 0) {
        a->junit = next;
    } else if (strcmp(n, "--html") == 0) {
        a->html = next;
    } else if (strcmp(n, "--limits") == 0) {
        if (a->limits_path)
            return usage_error("--limits: one limits file only, got a second ('%s')", next);
        a->limits_path = next;
    } else if (strcmp(n, "--strict") == 0) {
        a->strict = 1;
    } else if (strcmp(n, "--quiet") == 0) {
        a->quiet = 1;
    } else {
        return OPT_OTHER;
    }
    return EXIT_OK;
}

/* run's options: --load, --ls-freq, --thd-amp, --thd-target, --nodes, --devices, --plot (o as
 * given). */
static int parse_run_option(const char *n, const char *o, const char *next, cli_args *a)
{
    int rc = EXIT_OK;
    if (strcmp(n, "--load") == 0) {
        rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "a resistance in ohms above 0", &a->load_ohm);
    } else if (strcmp(n, "--ls-freq") == 0) {
        rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "a frequency in Hz above 0", &a->ls_freq);
    } else if (strcmp(n, "--thd-amp") == 0) {
        rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "an amplitude above 0 (V or A)", &a->thd_amp);
    } else if (strcmp(n, "--thd-target") == 0) {
        rc = parse_real(o, next, 0.0, 1, 100.0, 1, "a THD in percent, 0 < PCT < 100",
                        &a->thd_target);
    } else if (strcmp(n, "--nodes") == 0) {
        a->nodes[a->n_nodes++] = next;
    } else if (strcmp(n, "--devices") == 0) {
        a->devices[a->n_devices++] = next;
    } else if (strcmp(n, "--plot") == 0) {
        a->plot = 1;
    } else {
        return OPT_OTHER;
    }
    return rc;
}

/* The study commands' options: --vary, --tol, --trials, --seed, --threads, --shard,
 * --min-yield, --series, --temps (o as given). */
static int parse_study_option(const char *n, const char *o, const char *next, cli_args *a)
{
    int rc = EXIT_OK;
    if (strcmp(n, "--vary") == 0) {
        a->varies[a->n_varies++] = next;
    } else if (strcmp(n, "--tol") == 0) {
        a->tols[a->n_tols++] = next;
    } else if (strcmp(n, "--match") == 0) {
        a->matches[a->n_matches++] = next;
    } else if (strcmp(n, "--trials") == 0) {
        unsigned long long v;
        if (parse_count(next, 100000000ull, &v) != 0 || v < 1)
            return usage_error("--trials needs a whole number from 1 to 100000000, got '%s'", next);
        a->trials = (long)v;
    } else if (strcmp(n, "--seed") == 0) {
        a->seed_given = 1;
        if (parse_count(next, ULLONG_MAX, &a->seed) != 0)
            return usage_error("--seed needs a whole number from 0 to "
                               "18446744073709551615, got '%s'",
                               next);
    } else if (strcmp(n, "--threads") == 0) {
        unsigned long long v;
        if (parse_count(next, 256, &v) != 0 || v < 1)
            return usage_error("--threads needs a whole number from 1 to 256, got '%s'", next);
        a->threads = (int)v;
    } else if (strcmp(n, "--shard") == 0) {
        char buf[64];
        unsigned long long k, m;
        char *slash = strlen(next) < sizeof buf ? strchr(strcpy(buf, next), '/') : NULL;
        if (slash)
            *slash = '\0';
        if (!slash || parse_count(buf, 100000000ull, &k) != 0 ||
            parse_count(slash + 1, 100000000ull, &m) != 0 || k < 1 || k > m)
            return usage_error("--shard needs K/N, whole numbers with 1 <= K <= N <= "
                               "100000000, got '%s'",
                               next);
        a->shard_k = (int)k;
        a->shard_n = (int)m;
    } else if (strcmp(n, "--min-yield") == 0) {
        rc = parse_real(o, next, 0.0, 0, 1.0, 0, "a fraction from 0 to 1", &a->min_yield);
    } else if (strcmp(n, "--series") == 0 || strcmp(n, "--cap-series") == 0) {
        int cap = n[2] == 'c';
        const char *v = (next[0] == 'E' || next[0] == 'e') ? next + 1 : next;
        static const int known[] = {6, 12, 24, 48, 96, 192};
        int got = 0;
        for (size_t i = 0; i < sizeof known / sizeof known[0]; i++) {
            char txt[8];
            snprintf(txt, sizeof txt, "%d", known[i]);
            if (strcmp(v, txt) == 0)
                got = known[i];
        }
        if (cap && strcmp(next, "none") == 0) {
            a->cap_series = 0;
            return EXIT_OK;
        }
        if (!got)
            return usage_errorf("%s needs E6, E12, E24, E48, E96 or E192%s, got '%s'", n,
                                cap ? " (or none)" : "", next);
        *(cap ? &a->cap_series : &a->series) = got;
    } else if (strcmp(n, "--keep") == 0) {
        a->keep = next;
    } else if (strcmp(n, "--temps") == 0) {
        static const char needs[] = "LO,HI in degrees C with -273.15 < LO < HI <= 1000";
        char buf[256];
        char *comma = strlen(next) < sizeof buf ? strchr(strcpy(buf, next), ',') : NULL;
        ss_error err = {0};
        if (!comma)
            return usage_errorf("--temps needs %s, got '%s'", needs, next);
        *comma = '\0';
        if (ss_value_parse(buf, &a->temp_lo, &err) != SS_OK ||
            ss_value_parse(comma + 1, &a->temp_hi, &err) != SS_OK)
            return usage_errorf("--temps needs %s: %s", needs, err.message);
        if (!(a->temp_lo > -273.15 && a->temp_lo < a->temp_hi && a->temp_hi <= 1000.0))
            return usage_errorf("--temps needs %s, got '%s'", needs, next);
        a->temps_given = 1;
    } else {
        return OPT_OTHER;
    }
    return rc;
}

/* Reads option opt's value next (or sets its flag); o is the option as given. */
static int parse_option(const cli_option *opt, const char *o, const char *next, cli_args *a)
{
    const char *n = opt->name;
    int rc = parse_shared_option(n, next, a);
    if (rc == OPT_OTHER)
        rc = parse_run_option(n, o, next, a);
    if (rc == OPT_OTHER)
        rc = parse_study_option(n, o, next, a);
    if (rc == OPT_OTHER)
        rc = parse_refine_option(n, next, a);
    if (rc == OPT_OTHER)
        rc = parse_draft_option(n, o, next, a);
    return rc == OPT_OTHER ? EXIT_OK : rc; /* --help: main answered it before parsing */
}

static int parse_args(int argc, char **argv, cli_args *a)
{
    int rc = parse_args_init(argc, argv, a);
    if (rc != EXIT_OK)
        return rc;
    const cli_command *cmd = find_command(a->cmd);
    int is_merge = cmd->bit == C_MERGE;
    unsigned char seen[N_OPTIONS] = {0};
    for (int i = 2; i < argc; i++) {
        const char *o = argv[i];
        const char *next = i + 1 < argc ? argv[i + 1] : NULL;
        const cli_option *opt = NULL;
        rc = check_option(o, next, cmd, seen, &opt);
        if (rc == EXIT_OK)
            rc = opt ? parse_option(opt, o, next, a) : take_positional(o, cmd, a);
        if (rc != EXIT_OK)
            return rc;
        if (opt && opt->arg)
            i++;
    }
    if (cmd->bit == C_DRAFT && !a->netlist)
        return usage_error("draft needs a KIND (%s)", "follower, ce, ce-split, ce-follower or "
                                                      "jfet-cs");
    if (!is_merge && !a->netlist)
        return usage_error("%s needs a NETLIST", a->cmd);
    return EXIT_OK;
}

/* SIGINT, SIGTERM, SIGHUP: the run's temporary and staged files go, then the signal takes
 * its course (the exit status still says which signal ended the run). */
static void on_fatal_signal(int sig)
{
    ss_output_remove_temporaries();
    signal(sig, SIG_DFL);
    raise(sig);
}

static void install_signal_handlers(void)
{
    static const int sigs[] = {SIGINT, SIGTERM, SIGHUP};
    for (size_t i = 0; i < sizeof sigs / sizeof sigs[0]; i++) {
        struct sigaction sa;
        memset(&sa, 0, sizeof sa);
        sa.sa_handler = on_fatal_signal;
        sigemptyset(&sa.sa_mask);
        sigaction(sigs[i], &sa, NULL);
    }
}

/* argv[1..] as one line, each argument shell-quoted where it needs it. */
static char *join_args(int argc, char **argv)
{
    size_t len = 1;
    for (int i = 1; i < argc; i++)
        len += 4 * strlen(argv[i]) + 3;
    char *s = malloc(len), *w = s;
    if (!s)
        return NULL;
    for (int i = 1; i < argc; i++) {
        const char *t = argv[i];
        int plain = *t && strspn(t, "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"
                                    "0123456789_-+=/.,:%@") == strlen(t);
        if (i > 1)
            *w++ = ' ';
        if (plain) {
            w += sprintf(w, "%s", t);
            continue;
        }
        *w++ = '\'';
        for (; *t; t++) {
            if (*t == '\'')
                w += sprintf(w, "'\\''");
            else
                *w++ = *t;
        }
        *w++ = '\'';
    }
    *w = '\0';
    return s;
}

int main(int argc, char **argv)
{
    ss_klu_use_library_memory(); /* the tool owns its process: KLU gets the big-block memory */
    if (argc < 2) {
        fputs(USAGE, stderr);
        return EXIT_BAD_INPUT;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        (strcmp(argv[1], "help") == 0 && argc == 2)) {
        fputs(USAGE, stdout);
        return EXIT_OK;
    }
    if (strcmp(argv[1], "help") == 0) {
        const cli_command *c = find_command(argv[2]);
        if (!c || argc > 3)
            return argc > 3 ? usage_error("help takes one command name, got '%s' after it",
                                          argv[3])
                            : usage_error("unknown command '%s'", argv[2]);
        print_command_help(c, stdout);
        return EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("stagesim %s\n", ss_version());
        return EXIT_OK;
    }
    const cli_command *command = find_command(argv[1]);
    if (!command)
        return usage_error("unknown command '%s'", argv[1]);
    if (help_asked(argc, argv)) {
        print_command_help(command, stdout);
        return EXIT_OK;
    }
    cli_args a;
    memset(&a, 0, sizeof a);
    install_signal_handlers();
    a.cmdline = join_args(argc, argv);
    if (!a.cmdline) {
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    int rc = parse_args(argc, argv, &a);
    if (rc == EXIT_OK) {
        if (strcmp(a.cmd, "run") == 0)
            rc = cmd_run(&a);
        else if (strcmp(a.cmd, "check") == 0)
            rc = cmd_check(&a);
        else if (strcmp(a.cmd, "sweep") == 0)
            rc = cmd_study(&a, 0);
        else if (strcmp(a.cmd, "spread") == 0)
            rc = cmd_study(&a, 1);
        else if (strcmp(a.cmd, "sensitivity") == 0)
            rc = cmd_sensitivity(&a);
        else if (strcmp(a.cmd, "snap") == 0)
            rc = cmd_snap(&a);
        else if (strcmp(a.cmd, "refine") == 0)
            rc = cmd_refine(&a);
        else if (strcmp(a.cmd, "draft") == 0)
            rc = cmd_draft(&a);
        else
            rc = cmd_merge(&a);
    }
    free(a.sets);
    free(a.varies);
    free(a.tols);
    free(a.matches);
    free(a.shards);
    free(a.nodes);
    free(a.supply_tols);
    free(a.devices);
    free(a.models);
    free(a.cmdline);
    return rc;
}
