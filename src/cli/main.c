/* stagesim command line: reads argv, calls the library, writes files, prints the report and
 * picks the exit code. All computation is the library's (include/stagesim only). */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <signal.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "stagesim/stagesim.h"

enum { EXIT_OK = 0, EXIT_CHECK_FAILED = 1, EXIT_BAD_INPUT = 2, EXIT_NO_CONVERGENCE = 3 };
#define SS_NAN_CLI ((double)NAN)

static const char USAGE[] =
    "usage: stagesim run NETLIST [options]          operating point, sweeps, stage figures\n"
    "       stagesim check NETLIST [LIMITS] [options]\n"
    "                                                judge figures against limits\n"
    "       stagesim sweep NETLIST --vary NAME=SPEC... [options]\n"
    "       stagesim spread NETLIST [--trials N] [--seed S] [--tol NAME=SPEC]... [options]\n"
    "                                                tolerance (Monte Carlo) run\n"
    "       stagesim sensitivity NETLIST [--tol NAME=SPEC]... [options]\n"
    "       stagesim snap NETLIST --series E12|E24|E96 [options]\n"
    "       stagesim merge [-o DIR] [--limits FILE] SHARD.csv...\n"
    "       stagesim --help | --version\n"
    "\n"
    "Each command's options, with an example: stagesim COMMAND --help (or stagesim help\n"
    "COMMAND). A command refuses the options it does not use.\n"
    "\n"
    "options (the commands that take them in parentheses):\n"
    "  -o DIR            output folder (default: current folder; created if missing)\n"
    "  --set NAME=VALUE  override a .param, an element value (R1=10k) or a model parameter\n"
    "                    (qgen.bf=250); repeatable, each NAME once (not merge)\n"
    "  --in SRC --out NODE   the stage's source and output node (override .stage; not merge)\n"
    "  --load OHMS       (run) the load the stage drives, for the Zout check\n"
    "  --plot            (run) also write bode.svg (and wave.svg, thd_wave.svg)\n"
    "  --nodes A,B,...   (run) write only these nodes' voltages (op, dc, ac, tran tables and\n"
    "                    the report); default every node\n"
    "  --ls-freq F --thd-amp A --thd-target PCT   (run) the large-signal test\n"
    "  --junit FILE      (check) the verdicts as JUnit-style XML\n"
    "  --quiet           no report on stdout\n"
    "  --strict          (check) fail (exit 1) on any sanity (lint) warning\n"
    "  --limits FILE     (all but run) a limits file (check: or its LIMITS argument)\n"
    "  --min-yield F     (sweep, spread, merge) exit 1 when the yield is below F (0..1)\n"
    "  --vary NAME=lin:START:STOP:N | log:START:STOP:N | list:V1,V2,...  (sweep, spread;\n"
    "                    NAME may be temp)\n"
    "  --tol NAME=PCT%[:gauss] | NAME=LO..HI[:gauss]   (spread, sensitivity)\n"
    "  --trials N --seed S   (spread) tolerance trials (default 1000, seed 1)\n"
    "  --threads N       (sweep, spread) worker threads (default: all cores); results never\n"
    "                    depend on it\n"
    "  --shard K/N       (sweep, spread) run the K-th of N slices of the points\n"
    "  --temps LO,HI     (sensitivity) temperature extremes, default -40,85\n"
    "  --series E12|E24|E96   (snap) the preferred-value series\n"
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
    C_ALL = (1 << 7) - 1,
    C_NETLIST = C_ALL & ~C_MERGE, /* the commands that read a netlist */
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
    {"snap", C_SNAP, "stagesim snap NETLIST --series E12|E24|E96 [options]",
     "Snaps every resistor to the nearest value of the series (IEC 60063) and shows how\n"
     "every figure shifts (snap_values.csv, snap_figures.csv).",
     "stagesim snap netlists/vibration_frontend.cir --series E24 -o out/snap"},
    {"merge", C_MERGE, "stagesim merge [options] SHARD.csv...",
     "Puts the study.csv files of a sharded sweep or spread back together (every point\n"
     "exactly once) and writes study.csv and study_summary.csv.",
     "stagesim merge -o out/all --limits netlists/vibration_frontend.limits \\\n"
     "      out/s1/study.csv out/s2/study.csv"},
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
    {"--in", NULL, "SRC", C_NETLIST, "the stage's driving source (with --out; overrides .stage)"},
    {"--out", NULL, "NODE", C_NETLIST, "the stage's output node (with --in)"},
    {"--load", NULL, "OHMS", C_RUN,
     "the load on the stage output, for the report's Zout warning (as .stage load=)"},
    {"--nodes", NULL, "A,B,...", C_RUN,
     "write only these nodes' voltages (op, dc, ac, tran tables, report)"},
    {"--plot", NULL, NULL, C_RUN, "also write bode.svg (and wave.svg, thd_wave.svg)"},
    {"--ls-freq", NULL, "HZ", C_RUN,
     "large-signal test frequency (overrides .large_signal; needs a stage)"},
    {"--thd-amp", NULL, "AMP", C_RUN,
     "input amplitude of thd_pct, V or A (overrides .large_signal)"},
    {"--thd-target", NULL, "PCT", C_RUN,
     "THD whose input amplitude is searched, 0 < PCT < 100 (default 1)"},
    {"--junit", NULL, "FILE", C_CHECK, "also write the verdicts as JUnit-style XML"},
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
     "PCT%[:gauss] or LO..HI[:gauss], added to the .tolerance lines; repeatable"},
    {"--trials", NULL, "N", C_SPREAD, "number of trials, 1 .. 100000000 (default 1000)"},
    {"--seed", NULL, "S", C_SPREAD, "random seed, 0 .. 18446744073709551615 (default 1)"},
    {"--threads", NULL, "N", C_SWEEP | C_SPREAD,
     "1 .. 256 worker threads (default: all cores); results do not depend on it"},
    {"--shard", NULL, "K/N", C_SWEEP | C_SPREAD,
     "run only the K-th of N slices of the points (merge joins them)"},
    {"--temps", NULL, "LO,HI", C_SENS,
     "corner temperatures in C, -273.15 < LO < HI <= 1000 (default -40,85)"},
    {"--series", NULL, "E12|E24|E96", C_SNAP, "the preferred-value series (required)"},
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

static int exit_code_for(ss_status st)
{
    switch (st) {
    case SS_OK: return EXIT_OK;
    case SS_ERR_NO_CONVERGENCE: return EXIT_NO_CONVERGENCE;
    default: return EXIT_BAD_INPUT;
    }
}

static int fail(const ss_error *err)
{
    char msg[1400];
    ss_error_format(err, msg, sizeof msg);
    fprintf(stderr, "%s\n", msg);
    return exit_code_for(err->code);
}

static int usage_error(const char *fmt, const char *arg)
{
    fprintf(stderr, "stagesim: ");
    fprintf(stderr, fmt, arg);
    fprintf(stderr, "\n%s", USAGE);
    return EXIT_BAD_INPUT;
}

static int usage_errorf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
static int usage_errorf(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "stagesim: ");
    vfprintf(stderr, fmt, ap);
    va_end(ap);
    fprintf(stderr, "\n%s", USAGE);
    return EXIT_BAD_INPUT;
}

typedef struct cli_args {
    const char *cmd;
    const char *netlist;
    const char *limits_path; /* check: second positional; others: --limits */
    const char *out_dir;
    int out_dir_given; /* -o was given (check writes its CSVs only then, `-o .` included) */
    ss_override *sets;
    int n_sets;
    const char *in_src, *out_node;
    double load_ohm;
    int plot, quiet;
    int strict; /* check --strict: a lint warning fails the check */
    const char *junit;
    const char **varies, **tols, **shards;
    int n_varies, n_tols, n_shards;
    long trials;
    unsigned long long seed;
    int threads;
    int shard_k, shard_n;
    double min_yield;
    int series;
    double temp_lo, temp_hi;
    double ls_freq, thd_amp, thd_target;
    const char **nodes; /* --nodes lists, each comma-separated */
    int n_nodes;
    char *cmdline; /* the arguments after the program name, for the run's manifest */
} cli_args;

/* mkdir -p: creates DIR and any missing parents. */
static int make_dirs(const char *dir)
{
    char path[4096];
    snprintf(path, sizeof path, "%s", dir);
    for (char *p = path + 1; *p; p++) {
        if (*p != '/')
            continue;
        *p = '\0';
        if (mkdir(path, 0777) != 0 && errno != EEXIST)
            return -1;
        *p = '/';
    }
    return mkdir(path, 0777) != 0 && errno != EEXIST ? -1 : 0;
}

/* Makes sure DIR exists and is writable before any computation. */
static int prepare_out_dir(const char *dir)
{
    struct stat sb;
    if (stat(dir, &sb) != 0) {
        if (errno != ENOENT || make_dirs(dir) != 0) {
            fprintf(stderr, "stagesim: output folder '%s': %s\n", dir, strerror(errno));
            return -1;
        }
    } else if (!S_ISDIR(sb.st_mode)) {
        fprintf(stderr, "stagesim: output folder '%s' is not a folder\n", dir);
        return -1;
    }
    if (access(dir, W_OK | X_OK) != 0) {
        fprintf(stderr, "stagesim: output folder '%s' is not writable: %s\n", dir,
                strerror(errno));
        return -1;
    }
    return 0;
}

static int write_table(const ss_table *t, const char *path, ss_error *err)
{
    return ss_table_write_csv(t, path, err) == SS_OK ? 0 : -1;
}

/* ---- output sets: the files of one run appear together (docs/cli.md, "Output sets") ------ */

/* Opens the output set in the run's folder (created if missing) and notes what the run is. */
static int out_open(const cli_args *a, ss_outset **set)
{
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_error err = {0};
    if (ss_outset_open(a->out_dir, set, &err) != SS_OK)
        return fail(&err);
    char tool[64];
    snprintf(tool, sizeof tool, "stagesim %s", ss_version());
    if (ss_outset_note(*set, "tool", tool, &err) != SS_OK ||
        ss_outset_note(*set, "command", a->cmd, &err) != SS_OK ||
        ss_outset_note(*set, "arguments", a->cmdline, &err) != SS_OK) {
        ss_outset_destroy(set);
        return fail(&err);
    }
    return EXIT_OK;
}

/* Reserves the files names[0 .. n-1] of the run's folder in the set, before any work: where
 * each is to be written goes into staged[]. */
static int out_reserve(ss_outset *set, const char *dir, const char *const *names, int n,
                       const char **staged)
{
    for (int i = 0; i < n; i++) {
        char path[4096];
        snprintf(path, sizeof path, "%s/%s", dir, names[i]);
        ss_error err = {0};
        if (ss_outset_add(set, path, names[i], &staged[i], &err) != SS_OK)
            return fail(&err);
    }
    return EXIT_OK;
}

/* Commits the set (the run succeeded); rc passes through unless the commit fails. */
static int out_commit(ss_outset *set, int rc)
{
    ss_error err = {0};
    if (ss_outset_commit(set, &err) != SS_OK)
        return fail(&err);
    return rc;
}

/* A plot that cannot be drawn (a gain that is infinite somewhere, fewer than two points) costs
 * the plot, not the run: warn and go on without the file. */
static int plot_result(ss_status st, const ss_error *err, const char *name)
{
    if (st == SS_OK)
        return 0;
    if (st != SS_ERR_INPUT)
        return -1;
    fprintf(stderr, "stagesim: warning: no %s: %s\n", name, err->message);
    return 0;
}

/* --nodes a,b --nodes c: the nodes whose per-node results run writes. */
static int select_nodes(ss_circuit *ckt, const cli_args *a)
{
    size_t total = 0;
    for (int i = 0; i < a->n_nodes; i++)
        total += strlen(a->nodes[i]) + 1;
    char *buf = malloc(total);
    const char **names = calloc(total, sizeof *names);
    if (!buf || !names) {
        free(buf);
        free(names);
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    int n = 0;
    char *w = buf;
    for (int i = 0; i < a->n_nodes; i++) {
        size_t len = strlen(a->nodes[i]);
        memcpy(w, a->nodes[i], len + 1);
        for (char *tok = strtok(w, ","); tok; tok = strtok(NULL, ","))
            names[n++] = tok;
        w += len + 1;
    }
    ss_error err = {0};
    int rc = EXIT_OK;
    if (n == 0)
        rc = usage_error("%s", "--nodes needs node names separated by commas");
    else if (ss_circuit_select_nodes(ckt, names, n, &err) != SS_OK) {
        fprintf(stderr, "stagesim: --nodes: %s\n", err.message);
        rc = EXIT_BAD_INPUT;
    }
    free(buf);
    free(names);
    return rc;
}

/* --load and the large-signal options act on the stage: without one they would be dropped. */
static int apply_stage_options(ss_circuit *ckt, const cli_args *a)
{
    const char *ls_opt = a->ls_freq > 0.0      ? "--ls-freq"
                         : a->thd_amp > 0.0    ? "--thd-amp"
                         : a->thd_target > 0.0 ? "--thd-target"
                                               : NULL;
    if (!(a->load_ohm > 0.0) && !ls_opt)
        return EXIT_OK;
    ss_analysis_flags fl;
    ss_circuit_analyses(ckt, &fl);
    ss_error err = {0};
    if (a->load_ohm > 0.0) {
        if (!fl.stage) {
            fprintf(stderr, "stagesim: --load: the circuit has no stage to load (name one with "
                            ".stage or --in/--out)\n");
            return EXIT_BAD_INPUT;
        }
        if (ss_circuit_set_stage(ckt, NULL, NULL, a->load_ohm, &err) != SS_OK) {
            fprintf(stderr, "stagesim: --load: %s\n", err.message);
            return EXIT_BAD_INPUT;
        }
    }
    if (ls_opt) {
        if (!fl.stage) {
            fprintf(stderr, "stagesim: %s: the large-signal test needs a stage (name one with "
                            ".stage or --in/--out)\n",
                    ls_opt);
            return EXIT_BAD_INPUT;
        }
        if (ss_circuit_set_large_signal(ckt, a->ls_freq, a->thd_amp, a->thd_target, &err) !=
            SS_OK) {
            fprintf(stderr, "stagesim: %s: %s\n", ls_opt, err.message);
            return EXIT_BAD_INPUT;
        }
    }
    return EXIT_OK;
}

/* Parses the netlist and applies --in/--out/--load/--nodes and the large-signal options. */
static int load_circuit(const cli_args *a, ss_circuit **out)
{
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    if (ss_circuit_parse_file(a->netlist, a->sets, a->n_sets, &ckt, &err) != SS_OK)
        return fail(&err);
    if (a->in_src || a->out_node) {
        if (!a->in_src || !a->out_node) {
            fprintf(stderr, "stagesim: --in and --out go together\n");
            ss_circuit_destroy(&ckt);
            return EXIT_BAD_INPUT;
        }
        if (ss_circuit_set_stage(ckt, a->in_src, a->out_node, a->load_ohm, &err) != SS_OK) {
            ss_circuit_destroy(&ckt);
            return fail(&err);
        }
    }
    int rc = apply_stage_options(ckt, a);
    if (rc == EXIT_OK && a->n_nodes > 0)
        rc = select_nodes(ckt, a);
    if (rc != EXIT_OK) {
        ss_circuit_destroy(&ckt);
        return rc;
    }
    *out = ckt;
    return EXIT_OK;
}

/* ---- run -------------------------------------------------------------------------------- */

enum {
    F_OP, F_AC, F_STAGE, F_SUMMARY, F_BODE, F_DC, F_TRAN, F_WAVE, F_LS, F_HARM, F_THD_WAVE,
    F_NOISE, F_NOISE_SUM, F_NOISE_CON, F_RUN_COUNT
};
/* every file run may write: reserved before the netlist is read; those written are the set */
static const char *const RUN_FILES[F_RUN_COUNT] = {
    "op.csv",          "ac.csv",          "stage.csv",    "stage_summary.csv", "bode.svg",
    "dc.csv",          "tran.csv",        "wave.svg",     "large_signal.csv",  "harmonics.csv",
    "thd_wave.svg",    "noise.csv",       "noise_summary.csv", "noise_contrib.csv"};

static void print_large_signal(const ss_table *ls, double f_hz)
{
    printf("\nLarge signal at %.4g Hz\n", f_hz);
    const char *rows[][2] = {{"swing_pos_v", "output swing before clipping, +"},
                             {"swing_neg_v", "output swing before clipping, -"},
                             {"thd_pct", "THD at the test amplitude (%)"},
                             {"vin_at_thd_v", "input amplitude for the THD target"},
                             {"iin_at_thd_a", "input amplitude for the THD target"}};
    for (size_t k = 0; k < sizeof rows / sizeof rows[0]; k++) {
        double v = ss_table_lookup(ls, rows[k][0], 0);
        double e = strcmp(rows[k][0], "thd_pct") == 0 ? ss_table_lookup(ls, "thd_err_pct", 0)
                                                      : SS_NAN_CLI;
        if (!isnan(v) && !isnan(e))
            printf("  %-40s %.5g (estimated error %.2g)\n", rows[k][1], v, e);
        else if (!isnan(v))
            printf("  %-40s %.5g\n", rows[k][1], v);
    }
}

static void print_noise(const ss_table *nsum, const ss_table *ncon)
{
    printf("\nNoise over the .ac band (%.4g Hz .. %.4g Hz)\n",
           ss_table_lookup(nsum, "f_start_hz", 0), ss_table_lookup(nsum, "f_stop_hz", 0));
    printf("  output noise    %.4g uV rms\n", 1e6 * ss_table_lookup(nsum, "out_noise_rms_v", 0));
    printf("  input-referred  %.4g uV rms\n", 1e6 * ss_table_lookup(nsum, "in_noise_rms_v", 0));
    double nf = ss_table_lookup(nsum, "noise_figure_db", 0);
    if (!isnan(nf))
        printf("  noise figure    %.3f dB\n", nf);
    printf("  largest contributions:\n");
    for (int i = 0; i < ss_table_rows(ncon) && i < 5; i++)
        printf("    %-28s %10.4g uV rms  %6.2f %%\n", ss_table_row_label(ncon, i),
               1e6 * ss_table_get(ncon, i, 0), ss_table_get(ncon, i, 1));
}

/* AC sweep, stage figures and the Bode plot (the stage tables are kept for the report). */
static int run_ac(ss_circuit *ckt, const cli_args *a, const char *const *path,
                  const ss_analysis_flags *fl, ss_table **stage, ss_table **summary,
                  ss_error *err)
{
    if (!fl->ac) {
        if (fl->stage)
            fprintf(stderr, "stagesim: warning: a stage is named but the netlist has no .ac "
                            "sweep; no stage figures computed\n");
        if (a->plot)
            fprintf(stderr, "stagesim: warning: --plot needs an .ac sweep and a stage; no plot\n");
        return 0;
    }
    if (ss_ac_sweep_write(ckt, path[F_AC], err) != SS_OK)
        return -1;
    if (!fl->stage) {
        if (a->plot)
            fprintf(stderr, "stagesim: warning: --plot needs an .ac sweep and a stage; no plot\n");
        return 0;
    }
    if (ss_stage_run(ckt, stage, summary, err) != SS_OK ||
        write_table(*stage, path[F_STAGE], err) != 0 ||
        write_table(*summary, path[F_SUMMARY], err) != 0)
        return -1;
    if (a->plot) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_bode(ckt, *stage, *summary, path[F_BODE], &perr);
        if (plot_result(st, &perr, "bode.svg") != 0) {
            *err = perr;
            return -1;
        }
    }
    return 0;
}

static int run_tran(ss_circuit *ckt, const cli_args *a, const char *const *path,
                    const ss_analysis_flags *fl, ss_error *err)
{
    ss_table *tran = NULL;
    int bad = ss_tran_run(ckt, &tran, err) != SS_OK || write_table(tran, path[F_TRAN], err) != 0;
    if (!bad && a->plot && fl->stage) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_wave(ckt, tran, NULL, NULL, path[F_WAVE], &perr);
        if (plot_result(st, &perr, "wave.svg") != 0) {
            *err = perr;
            bad = 1;
        }
    }
    ss_table_destroy(&tran);
    return bad ? -1 : 0;
}

static int run_large_signal(ss_circuit *ckt, const cli_args *a, const char *const *path,
                            ss_error *err)
{
    /* the large-signal options were applied with the stage (load_circuit) */
    ss_table *ls = NULL, *harm = NULL, *wave = NULL;
    int bad = ss_stage_large_signal(ckt, &ls, err) != SS_OK ||
              write_table(ls, path[F_LS], err) != 0;
    double f_hz, amp, target;
    ss_circuit_large_signal(ckt, &f_hz, &amp, &target);
    double thd = SS_NAN_CLI;
    if (!bad && amp > 0.0) {
        bad = ss_stage_thd(ckt, amp, f_hz, &thd, &harm, &wave, err) != SS_OK ||
              write_table(harm, path[F_HARM], err) != 0;
        if (!bad && a->plot) {
            ss_error perr = {0};
            ss_status st = ss_plot_write_wave(ckt, wave, NULL, NULL, path[F_THD_WAVE], &perr);
            if (plot_result(st, &perr, "thd_wave.svg") != 0) {
                *err = perr;
                bad = 1;
            }
        }
    }
    if (!bad && !a->quiet)
        print_large_signal(ls, f_hz);
    ss_table_destroy(&ls);
    ss_table_destroy(&harm);
    ss_table_destroy(&wave);
    return bad ? -1 : 0;
}

static int run_noise(ss_circuit *ckt, const cli_args *a, const char *const *path, ss_error *err)
{
    ss_table *noise = NULL, *nsum = NULL, *ncon = NULL;
    int bad = ss_noise_run(ckt, &noise, &nsum, &ncon, err) != SS_OK ||
              write_table(noise, path[F_NOISE], err) != 0 ||
              write_table(nsum, path[F_NOISE_SUM], err) != 0 ||
              write_table(ncon, path[F_NOISE_CON], err) != 0;
    if (!bad && !a->quiet)
        print_noise(nsum, ncon);
    ss_table_destroy(&noise);
    ss_table_destroy(&nsum);
    ss_table_destroy(&ncon);
    return bad ? -1 : 0;
}

/* run does not judge the netlist's .expect lines (check does), but a limit that cannot be
 * read or names no figure is still an error: it would fail the check that comes later. */
static ss_status check_expect_lines(const ss_circuit *ckt, ss_error *err)
{
    ss_limits *lim = NULL;
    ss_status st = ss_limits_create(&lim, err);
    if (st == SS_OK)
        st = ss_limits_add_circuit(lim, ckt, err);
    if (st == SS_OK)
        st = ss_limits_check_names(lim, ckt, err);
    ss_limits_destroy(&lim);
    return st;
}

static int cmd_run(const cli_args *a)
{
    ss_outset *set = NULL;
    const char *path[F_RUN_COUNT];
    int rc = out_open(a, &set);
    if (rc == EXIT_OK)
        rc = out_reserve(set, a->out_dir, RUN_FILES, F_RUN_COUNT, path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    rc = load_circuit(a, &ckt);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_table *op = NULL, *dc = NULL, *stage = NULL, *summary = NULL;
    ss_analysis_flags fl;
    ss_circuit_analyses(ckt, &fl);
    ss_op_stats stats;
    int bad = check_expect_lines(ckt, &err) != SS_OK ||
              ss_outset_note_circuit(set, ckt, &err) != SS_OK ||
              ss_op_solve(ckt, &op, &stats, &err) != SS_OK ||
              write_table(op, path[F_OP], &err) != 0 || ss_lint_run(ckt, NULL, &err) != SS_OK ||
              run_ac(ckt, a, path, &fl, &stage, &summary, &err) != 0;
    if (!bad && !a->quiet) {
        ss_report_write(ckt, summary, stdout);
        printf("operating point: %d Newton iterations", stats.newton_iterations);
        if (stats.gmin_steps)
            printf(", %d gmin steps", stats.gmin_steps);
        if (stats.source_steps)
            printf(", %d source steps", stats.source_steps);
        printf("\n");
    }
    /* .dc last of the DC analyses: it moves the circuit's operating point */
    if (!bad && fl.dc)
        bad = ss_dc_sweep_run(ckt, &dc, &err) != SS_OK || write_table(dc, path[F_DC], &err) != 0;
    if (!bad && fl.tran)
        bad = run_tran(ckt, a, path, &fl, &err) != 0;
    if (!bad && fl.large_signal && fl.stage)
        bad = run_large_signal(ckt, a, path, &err) != 0;
    else if (!bad && fl.large_signal)
        fprintf(stderr, "stagesim: warning: .large_signal needs a stage; no large-signal "
                        "figures\n");
    if (!bad && fl.noise)
        bad = run_noise(ckt, a, path, &err) != 0;
    if (bad) {
        rc = fail(&err); /* nothing of this run becomes visible */
    } else {
        for (int i = 0; ss_circuit_warning(ckt, i); i++)
            fprintf(stderr, "stagesim: warning: %s\n", ss_circuit_warning(ckt, i));
        rc = out_commit(set, EXIT_OK);
    }
    ss_table_destroy(&op);
    ss_table_destroy(&dc);
    ss_table_destroy(&stage);
    ss_table_destroy(&summary);
    ss_circuit_destroy(&ckt);
    ss_outset_destroy(&set);
    return rc;
}

/* ---- check ------------------------------------------------------------------------------ */

static void print_bound(double v)
{
    if (isnan(v))
        printf(" %13s", "-");
    else
        printf(" %13.6g", v);
}

static int cmd_check(const cli_args *a)
{
    /* the CSVs go to a folder only with -o; the JUnit report anywhere: both are reserved (and
     * checked against each other) before the netlist is read */
    int has_dir = a->out_dir_given;
    ss_outset *set = NULL;
    ss_error err = {0};
    const char *path[2] = {NULL, NULL}, *junit = NULL;
    static const char *const names[2] = {"check.csv", "figures.csv"};
    int rc = EXIT_OK;
    if (has_dir) {
        rc = out_open(a, &set);
        if (rc == EXIT_OK)
            rc = out_reserve(set, a->out_dir, names, 2, path);
    } else if (a->junit && ss_outset_open(NULL, &set, &err) != SS_OK) {
        rc = fail(&err);
    }
    if (rc == EXIT_OK && a->junit && ss_outset_add(set, a->junit, "--junit", &junit, &err) != SS_OK)
        rc = fail(&err);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_circuit *ckt = NULL;
    ss_limits *lim = NULL;
    ss_table *figs = NULL, *verdicts = NULL;
    rc = load_circuit(a, &ckt);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    int n_failed = 0, n_lint = 0;
    if (ss_limits_create(&lim, &err) != SS_OK || ss_limits_add_circuit(lim, ckt, &err) != SS_OK ||
        (a->limits_path && ss_limits_add_file(lim, a->limits_path, &err) != SS_OK) ||
        (has_dir && ss_outset_note_circuit(set, ckt, &err) != SS_OK)) {
        rc = fail(&err);
        goto done;
    }
    if (ss_limits_check_names(lim, ckt, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (ss_limits_count(lim) == 0) {
        fprintf(stderr, "stagesim: %s: no limits to check: add .expect lines to the netlist or "
                        "give a limits file\n",
                a->netlist);
        rc = EXIT_BAD_INPUT;
        goto done;
    }
    if (ss_figures_compute(ckt, lim, &figs, &err) != SS_OK ||
        ss_check_evaluate(lim, figs, &verdicts, &n_failed, &err) != SS_OK ||
        ss_lint_run(ckt, &n_lint, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (has_dir && (write_table(verdicts, path[0], &err) != 0 ||
                    write_table(figs, path[1], &err) != 0)) {
        rc = fail(&err);
        goto done;
    }
    if (a->junit && ss_check_write_junit_strict(verdicts, a->strict ? ckt : NULL, a->netlist,
                                                junit, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    int n = ss_table_rows(verdicts);
    if (!a->quiet) {
        printf("check %s: %d limit%s\n\n", a->netlist, n, n == 1 ? "" : "s");
        printf("  %-24s %13s %13s %13s %13s  %s\n", "quantity", "measured", "lower", "upper",
               "margin", "verdict");
        for (int i = 0; i < n; i++) {
            printf("  %-24s", ss_table_row_label(verdicts, i));
            for (int j = 0; j < 4; j++)
                print_bound(ss_table_get(verdicts, i, j));
            printf("  %s\n", ss_table_get(verdicts, i, 4) != 0.0 ? "pass" : "FAIL");
        }
        printf("\n%d passed, %d failed\n", n - n_failed, n_failed);
        if (a->strict && n_lint)
            printf("%d sanity warning%s (lint): --strict fails the check\n", n_lint,
                   n_lint == 1 ? "" : "s");
    }
    for (int i = 0; ss_circuit_warning(ckt, i); i++)
        fprintf(stderr, "stagesim: warning: %s\n", ss_circuit_warning(ckt, i));
    rc = n_failed || (a->strict && n_lint) ? EXIT_CHECK_FAILED : EXIT_OK;
    if (set)
        rc = out_commit(set, rc);
done:
    ss_table_destroy(&figs);
    ss_table_destroy(&verdicts);
    ss_limits_destroy(&lim);
    ss_circuit_destroy(&ckt);
    ss_outset_destroy(&set);
    return rc;
}

/* ---- sweep, spread, sensitivity ---------------------------------------------------------- */

typedef struct progress_state {
    int on;
    time_t last;
} progress_state;

static void show_progress(void *ctx, long done, long total)
{
    progress_state *ps = ctx;
    time_t now = time(NULL);
    if (!ps->on || (now == ps->last && done != total))
        return;
    ps->last = now;
    fprintf(stderr, "\rstagesim: %ld/%ld points", done, total);
    if (done == total)
        fprintf(stderr, "\n");
}

static int make_study(const cli_args *a, ss_study **out, ss_limits **lim)
{
    ss_error err = {0};
    ss_study *s = NULL;
    if (ss_study_create(a->netlist, a->sets, a->n_sets, &s, &err) != SS_OK)
        return fail(&err);
    if (a->in_src || a->out_node) {
        if (!a->in_src || !a->out_node) {
            fprintf(stderr, "stagesim: --in and --out go together\n");
            ss_study_destroy(&s);
            return EXIT_BAD_INPUT;
        }
        if (ss_study_set_stage(s, a->in_src, a->out_node, &err) != SS_OK)
            goto bad;
    }
    for (int i = 0; i < a->n_varies; i++)
        if (ss_study_add_vary(s, a->varies[i], &err) != SS_OK)
            goto bad;
    for (int i = 0; i < a->n_tols; i++)
        if (ss_study_add_tolerance(s, a->tols[i], &err) != SS_OK)
            goto bad;
    if (a->limits_path) {
        if (ss_limits_create(lim, &err) != SS_OK ||
            ss_limits_add_file(*lim, a->limits_path, &err) != SS_OK ||
            ss_study_add_limits(s, *lim, &err) != SS_OK)
            goto bad;
    }
    ss_study_set_threads(s, a->threads);
    if (a->shard_n > 0 && ss_study_set_shard(s, a->shard_k, a->shard_n, &err) != SS_OK)
        goto bad;
    *out = s;
    return EXIT_OK;
bad:
    ss_study_destroy(&s);
    return fail(&err);
}

static int print_yield(const ss_table *summary, double min_yield, int quiet)
{
    double yield = ss_table_lookup(summary, "all_limits", 5);
    if (isnan(yield))
        return EXIT_OK;
    if (!quiet)
        printf("yield against the limits: %.4g %%\n", 100.0 * yield);
    if (min_yield >= 0.0 && yield < min_yield) {
        fprintf(stderr, "stagesim: yield %.4g %% is below the required %.4g %%\n", 100.0 * yield,
                100.0 * min_yield);
        return EXIT_CHECK_FAILED;
    }
    return EXIT_OK;
}

static void print_summary(const ss_table *summary)
{
    printf("  %-24s %8s %13s %13s %13s %13s %8s\n", "figure", "n", "min", "max", "mean", "std",
           "pass");
    for (int i = 0; i < ss_table_rows(summary); i++) {
        const char *name = ss_table_row_label(summary, i);
        if (strcmp(name, "all_limits") == 0)
            continue;
        printf("  %-24s %8.0f", name, ss_table_get(summary, i, 0));
        for (int j = 1; j <= 4; j++)
            print_bound(ss_table_get(summary, i, j));
        double pf = ss_table_get(summary, i, 5);
        if (isnan(pf))
            printf(" %8s\n", "-");
        else
            printf(" %7.2f%%\n", 100.0 * pf);
    }
}

static int cmd_study(const cli_args *a, int spread)
{
    static const char *const names[2] = {"study.csv", "study_summary.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_open(a, &set);
    if (rc == EXIT_OK)
        rc = out_reserve(set, a->out_dir, names, 2, path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_table *pts = NULL, *summary = NULL;
    if (spread && ss_study_set_trials(s, a->trials > 0 ? a->trials : 1000, a->seed, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (!spread && a->n_varies == 0) {
        rc = usage_error("%s", "sweep needs at least one --vary NAME=SPEC");
        goto done;
    }
    progress_state ps = {isatty(2) && !a->quiet, 0};
    ss_study_set_progress(s, show_progress, &ps);
    if (ss_study_note_identity(s, spread ? "spread" : "sweep", set, &err) != SS_OK ||
        ss_study_run(s, &pts, &err) != SS_OK ||
        ss_study_summarize(pts, ss_study_limits(s), &summary, &err) != SS_OK ||
        write_table(pts, path[0], &err) != 0 || write_table(summary, path[1], &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    int n_bad = 0, n = ss_table_rows(pts);
    int status_col = -1;
    for (int j = 0; j < ss_table_cols(pts); j++)
        if (strcmp(ss_table_col_name(pts, j), "status") == 0)
            status_col = j;
    for (int i = 0; i < n; i++)
        n_bad += ss_table_get(pts, i, status_col) != 0.0;
    if (!a->quiet) {
        printf("%s %s: %d points%s, %d without an operating point\n\n",
               spread ? "spread" : "sweep", a->netlist, n, a->shard_n > 1 ? " (this shard)" : "",
               n_bad);
        print_summary(summary);
    }
    if (n_bad)
        fprintf(stderr, "stagesim: warning: %d point%s did not solve (status column; figures "
                        "left empty)\n",
                n_bad, n_bad == 1 ? "" : "s");
    rc = out_commit(set, print_yield(summary, a->min_yield, a->quiet));
done:
    ss_table_destroy(&pts);
    ss_table_destroy(&summary);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_outset_destroy(&set);
    return rc;
}

static int cmd_sensitivity(const cli_args *a)
{
    static const char *const names[2] = {"sensitivity.csv", "corners.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_open(a, &set);
    if (rc == EXIT_OK)
        rc = out_reserve(set, a->out_dir, names, 2, path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_table *sens = NULL, *corners = NULL;
    if (ss_study_note_identity(s, "sensitivity", set, &err) != SS_OK ||
        ss_study_sensitivity(s, &sens, &err) != SS_OK ||
        write_table(sens, path[0], &err) != 0 ||
        ss_study_corners(s, a->temp_lo, a->temp_hi, &corners, &err) != SS_OK ||
        write_table(corners, path[1], &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    if (!a->quiet) {
        printf("normalised sensitivities (%% change of the figure per %% change of the value), "
               "largest first\n");
        for (int i = 0; i < ss_table_rows(sens); i++) {
            /* rank this figure's sensitivities by magnitude */
            int nc = ss_table_cols(sens), order[64];
            int m = nc < 64 ? nc : 64;
            for (int j = 0; j < m; j++)
                order[j] = j;
            for (int x = 0; x < m; x++)
                for (int y = x + 1; y < m; y++)
                    if (fabs(ss_table_get(sens, i, order[y])) >
                        fabs(ss_table_get(sens, i, order[x]))) {
                        int t = order[x];
                        order[x] = order[y];
                        order[y] = t;
                    }
            int shown = 0;
            for (int j = 0; j < m && shown < 4; j++) {
                double v = ss_table_get(sens, i, order[j]);
                if (isnan(v) || fabs(v) < 1e-6)
                    continue;
                if (!shown++)
                    printf("  %-24s", ss_table_row_label(sens, i));
                printf("  %s %+.3g", ss_table_col_name(sens, order[j]), v);
            }
            if (shown)
                printf("\n");
        }
        printf("\noperating point at the beta and temperature extremes\n");
        printf("  %-36s %12s %12s  %s\n", "transistor and corner", "Ic", "Vce", "region");
    }
    int n_out = 0;
    for (int i = 0; i < ss_table_rows(corners); i++) {
        double fa = ss_table_get(corners, i, 4);
        n_out += fa != 1.0;
        if (!a->quiet)
            printf("  %-36s %12.4g %12.4g  %s\n", ss_table_row_label(corners, i),
                   ss_table_get(corners, i, 2), ss_table_get(corners, i, 3),
                   isnan(fa) ? "NO OPERATING POINT" : fa == 1.0 ? "forward active"
                                                                : "LEAVES FORWARD ACTIVE");
    }
    if (n_out)
        fprintf(stderr, "stagesim: warning: %d transistor corner%s outside forward-active "
                        "operation (corners.csv)\n",
                n_out, n_out == 1 ? "" : "s");
    rc = out_commit(set, EXIT_OK);
done:
    ss_table_destroy(&corners);
    ss_table_destroy(&sens);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_outset_destroy(&set);
    return rc;
}

/* ---- merge -------------------------------------------------------------------------------- */

static int cmd_merge(const cli_args *a)
{
    if (a->n_shards == 0)
        return usage_error("%s", "merge needs the shard CSV files");
    static const char *const names[2] = {"study.csv", "study_summary.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_open(a, &set);
    if (rc == EXIT_OK)
        rc = out_reserve(set, a->out_dir, names, 2, path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_table *merged = NULL, *summary = NULL;
    ss_limits *lim = NULL;
    if (a->limits_path &&
        (ss_limits_create(&lim, &err) != SS_OK ||
         ss_limits_add_file(lim, a->limits_path, &err) != SS_OK))
        rc = fail(&err);
    /* every shard is checked against the manifest its run wrote beside it: the same study,
     * every one of the N there once, each file as its run wrote it */
    if (rc == EXIT_OK &&
        (ss_study_merge_files(a->shards, a->n_shards, set, &merged, &err) != SS_OK ||
         ss_study_summarize(merged, lim, &summary, &err) != SS_OK ||
         write_table(merged, path[0], &err) != 0 || write_table(summary, path[1], &err) != 0))
        rc = fail(&err);
    if (rc == EXIT_OK && !a->quiet)
        printf("merged %d shard%s: %d points\n", a->n_shards, a->n_shards == 1 ? "" : "s",
               ss_table_rows(merged));
    if (rc == EXIT_OK)
        rc = out_commit(set, print_yield(summary, a->min_yield, a->quiet));
    ss_table_destroy(&merged);
    ss_table_destroy(&summary);
    ss_limits_destroy(&lim);
    ss_outset_destroy(&set);
    return rc;
}

/* ---- argument parsing --------------------------------------------------------------------- */

/* A whole number written in decimal digits only (no sign, no suffix), at most max. */
static int parse_count(const char *s, unsigned long long max, unsigned long long *out)
{
    if (!*s)
        return -1;
    for (const char *c = s; *c; c++)
        if (*c < '0' || *c > '9')
            return -1;
    errno = 0;
    char *end;
    unsigned long long v = strtoull(s, &end, 10);
    if (errno || *end || v > max)
        return -1;
    *out = v;
    return 0;
}

/* A real option value (ss_value_parse: SI suffixes, nothing after) within lo .. hi, each end
 * open or closed; on failure the message names the option, what it needs and the text. */
static int parse_real(const char *opt, const char *text, double lo, int lo_open, double hi,
                      int hi_open, const char *needs, double *out)
{
    ss_error err = {0};
    double v;
    if (ss_value_parse(text, &v, &err) != SS_OK)
        return usage_errorf("%s needs %s: %s", opt, needs, err.message);
    if (v < lo || (lo_open && v == lo) || v > hi || (hi_open && v == hi))
        return usage_errorf("%s needs %s, got '%s'", opt, needs, text);
    *out = v;
    return EXIT_OK;
}

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

static int parse_args(int argc, char **argv, cli_args *a)
{
    a->cmd = argv[1];
    a->out_dir = ".";
    a->seed = 1;
    a->min_yield = -1.0;
    a->temp_lo = -40.0;
    a->temp_hi = 85.0;
    a->sets = calloc((size_t)argc, sizeof *a->sets);
    a->varies = calloc((size_t)argc, sizeof *a->varies);
    a->tols = calloc((size_t)argc, sizeof *a->tols);
    a->shards = calloc((size_t)argc, sizeof *a->shards);
    a->nodes = calloc((size_t)argc, sizeof *a->nodes);
    if (!a->sets || !a->varies || !a->tols || !a->shards || !a->nodes)
        return EXIT_BAD_INPUT;
    const cli_command *cmd = find_command(a->cmd);
    int is_merge = cmd->bit == C_MERGE;
    unsigned char seen[N_OPTIONS] = {0};
    for (int i = 2; i < argc; i++) {
        const char *o = argv[i];
        const char *next = i + 1 < argc ? argv[i + 1] : NULL;
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
        if (opt && opt->arg && strcmp(opt->name, "--set") != 0 &&
            strcmp(opt->name, "--vary") != 0 && strcmp(opt->name, "--tol") != 0 &&
            strcmp(opt->name, "--nodes") != 0 && strcmp(opt->name, "--limits") != 0) {
            if (seen[opt - OPTIONS])
                return usage_errorf("%s given twice", o);
            seen[opt - OPTIONS] = 1;
        }
        int rc = EXIT_OK;
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
        if (!opt) {
            if (is_merge)
                a->shards[a->n_shards++] = o;
            else if (!a->netlist)
                a->netlist = o;
            else if (cmd->bit == C_CHECK && !a->limits_path)
                a->limits_path = o;
            else if (cmd->bit == C_CHECK)
                return usage_error("check takes one limits file, got a second ('%s')", o);
            else
                return usage_error("more than one netlist given ('%s')", o);
            continue;
        }
        const char *n = opt->name;
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
        } else if (strcmp(n, "--in") == 0) {
            a->in_src = next;
        } else if (strcmp(n, "--out") == 0) {
            a->out_node = next;
        } else if (strcmp(n, "--load") == 0) {
            rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "a resistance in ohms above 0",
                            &a->load_ohm);
        } else if (strcmp(n, "--junit") == 0) {
            a->junit = next;
        } else if (strcmp(n, "--limits") == 0) {
            if (a->limits_path)
                return usage_error("--limits: one limits file only, got a second ('%s')", next);
            a->limits_path = next;
        } else if (strcmp(n, "--vary") == 0) {
            a->varies[a->n_varies++] = next;
        } else if (strcmp(n, "--tol") == 0) {
            a->tols[a->n_tols++] = next;
        } else if (strcmp(n, "--trials") == 0) {
            unsigned long long v;
            if (parse_count(next, 100000000ull, &v) != 0 || v < 1)
                return usage_error("--trials needs a whole number from 1 to 100000000, got '%s'",
                                   next);
            a->trials = (long)v;
        } else if (strcmp(n, "--seed") == 0) {
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
        } else if (strcmp(n, "--series") == 0) {
            const char *v = (next[0] == 'E' || next[0] == 'e') ? next + 1 : next;
            a->series = strcmp(v, "12") == 0 ? 12 : strcmp(v, "24") == 0 ? 24
                        : strcmp(v, "96") == 0                          ? 96
                                                                        : 0;
            if (!a->series)
                return usage_error("--series needs E12, E24 or E96, got '%s'", next);
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
        } else if (strcmp(n, "--ls-freq") == 0) {
            rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "a frequency in Hz above 0",
                            &a->ls_freq);
        } else if (strcmp(n, "--thd-amp") == 0) {
            rc = parse_real(o, next, 0.0, 1, HUGE_VAL, 1, "an amplitude above 0 (V or A)",
                            &a->thd_amp);
        } else if (strcmp(n, "--thd-target") == 0) {
            rc = parse_real(o, next, 0.0, 1, 100.0, 1, "a THD in percent, 0 < PCT < 100",
                            &a->thd_target);
        } else if (strcmp(n, "--nodes") == 0) {
            a->nodes[a->n_nodes++] = next;
        } else if (strcmp(n, "--plot") == 0) {
            a->plot = 1;
        } else if (strcmp(n, "--strict") == 0) {
            a->strict = 1;
        } else if (strcmp(n, "--quiet") == 0) {
            a->quiet = 1;
        }
        if (rc != EXIT_OK)
            return rc;
        if (opt->arg)
            i++;
    }
    if (!is_merge && !a->netlist)
        return usage_error("%s needs a NETLIST", a->cmd);
    return EXIT_OK;
}

static int cmd_snap(const cli_args *a);

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
        else
            rc = cmd_merge(&a);
    }
    free(a.sets);
    free(a.varies);
    free(a.tols);
    free(a.shards);
    free(a.nodes);
    free(a.cmdline);
    return rc;
}

/* ---- snap: preferred values ------------------------------------------------------------ */

static int cmd_snap(const cli_args *a)
{
    if (a->series == 0)
        return usage_error("%s", "snap needs --series E12, E24 or E96");
    static const char *const names[2] = {"snap_values.csv", "snap_figures.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_open(a, &set);
    if (rc == EXIT_OK)
        rc = out_reserve(set, a->out_dir, names, 2, path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_table *vals = NULL, *figs = NULL;
    if (ss_study_note_identity(s, "snap", set, &err) != SS_OK ||
        ss_study_snap(s, a->series, "r", &vals, &figs, &err) != SS_OK ||
        write_table(vals, path[0], &err) != 0 || write_table(figs, path[1], &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    if (!a->quiet) {
        printf("resistors snapped to E%d\n  %-16s %13s %13s %9s\n", a->series, "element",
               "value", "E value", "change");
        for (int i = 0; i < ss_table_rows(vals); i++)
            printf("  %-16s %13.6g %13.6g %8.2f%%\n", ss_table_row_label(vals, i),
                   ss_table_get(vals, i, 0), ss_table_get(vals, i, 1), ss_table_get(vals, i, 2));
        printf("\nfigures that move\n  %-24s %13s %13s %13s %9s\n", "figure", "computed",
               "preferred", "shift", "shift");
        for (int i = 0; i < ss_table_rows(figs); i++) {
            double shift = ss_table_get(figs, i, 2), pct = ss_table_get(figs, i, 3);
            if (shift == 0.0 || isnan(shift))
                continue;
            printf("  %-24s %13.6g %13.6g %13.4g", ss_table_row_label(figs, i),
                   ss_table_get(figs, i, 0), ss_table_get(figs, i, 1), shift);
            if (isnan(pct))
                printf(" %9s\n", "-");
            else
                printf(" %8.3f%%\n", pct);
        }
    }
    rc = out_commit(set, EXIT_OK);
done:
    ss_table_destroy(&vals);
    ss_table_destroy(&figs);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_outset_destroy(&set);
    return rc;
}
