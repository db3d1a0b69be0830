/* What the stagesim command's files share: the parsed arguments, the exit codes and the helpers
 * more than one command uses. Private to src/cli; like the rest of it, it needs only the public
 * header. */
#ifndef SS_CLI_H
#define SS_CLI_H

#include "stagesim/stagesim.h"

enum { EXIT_OK = 0, EXIT_CHECK_FAILED = 1, EXIT_BAD_INPUT = 2, EXIT_NO_CONVERGENCE = 3 };

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
    const char *html; /* --html FILE */
    const char **varies, **tols, **shards, **matches;
    int n_varies, n_tols, n_shards, n_matches;
    long trials;
    unsigned long long seed;
    int seed_given;
    int threads;
    int shard_k, shard_n;
    double min_yield;
    int series;
    int cap_series; /* snap: the capacitors' series, 0 none (default 12) */
    const char *keep; /* snap: elements left as they are */
    double temp_lo, temp_hi;
    double ls_freq, thd_amp, thd_target;
    double noise_lo_hz, noise_hi_hz; /* --noise-band; 0 when not given */
    const char *noise_weight;        /* --noise-weight; NULL when not given */
    ss_draft_req draft; /* draft's requirements (draft.c); load and series are a's own */
    const char **nodes; /* --nodes lists, each comma-separated */
    int n_nodes;
    int temps_given;               /* --temps was given (refine's temperature corners) */
    const char *beta_range;        /* refine --beta-range LO,HI */
    const char **supply_tols;      /* refine --supply-tol NAME=PCT% */
    int n_supply_tols;
    long max_candidates;           /* refine --max-candidates; 0 the default */
    const char **devices; /* --devices lists, each comma-separated */
    int n_devices;
    const char **models; /* --models folders, in order */
    int n_models;
    char *cmdline; /* the arguments after the program name, for the run's manifest */
} cli_args;

/* ---- main.c: usage errors -------------------------------------------------------------------- */

/* "stagesim: " and the message on stderr, then the --help text; return EXIT_BAD_INPUT. */
/* The folders .include files are looked for in after the netlist's own: --models in order,
 * then STAGESIM_MODELS (colon-separated), then the installed models folder found from the
 * program's own location (when it exists). Returns the list (free with free(); its strings
 * in the same block), *n its length; NULL when out of memory. */
const char **model_search_path(const cli_args *a, int *n);
int usage_error(const char *fmt, const char *arg);
int usage_errorf(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* ---- common.c: option values, errors, output sets, the circuit ------------------------------- */

/* Prints the library's error (FILE:LINE: message) and returns its exit code (3 for no
 * convergence, else 2). */
int fail(const ss_error *err);
/* parse_count, parse_real: option values (comments at the definitions) */
int parse_count(const char *s, unsigned long long max, unsigned long long *out);
int parse_real(const char *opt, const char *text, double lo, int lo_open, double hi, int hi_open,
               const char *needs, double *out);
/* 0 when the table is written to path as CSV, -1 with *err filled */
int write_table(const ss_table *t, const char *path, ss_error *err);
int out_open(const cli_args *a, ss_outset **set);
int out_reserve(ss_outset *set, const char *dir, const char *const *names, int n,
                const char **staged);
int out_start(const cli_args *a, const char *const *names, int n, const char **staged,
              ss_outset **set);
int out_commit(ss_outset *set, int rc);
/* --html: reserves its file in the set and makes the report (*h NULL without --html). */
int html_start(const cli_args *a, ss_outset *set, ss_html **h, const char **staged);
/* The report's last parts, then its file: the plots the set has written, the page written to
 * staged. 0, or -1 with *err filled. Without a report nothing. */
int html_finish(ss_html *h, const ss_outset *set, const char *staged, ss_error *err);
/* " %13.6g", or "-" right-aligned for NaN: a table cell of the report */
/* One cell of a figure table: v in engineering notation with the unit of figure `name`
 * (ss_format_figure), right-aligned in 13 columns; "-" for NaN. */
void print_figure(double v, const char *name);
int load_circuit(const cli_args *a, ss_circuit **out_ckt, ss_solver **out_sv);

/* ---- the commands: each returns the program's exit code -------------------------------------- */

int cmd_run(const cli_args *a);               /* run.c */
int cmd_check(const cli_args *a);             /* check.c */
int cmd_study(const cli_args *a, int spread); /* study.c: sweep (0) or spread (1) */
int cmd_sensitivity(const cli_args *a);       /* study.c */
int cmd_snap(const cli_args *a);              /* study.c */
int cmd_merge(const cli_args *a);             /* study.c */
int cmd_refine(const cli_args *a);            /* refine.c */
/* refine's own options (refine.c): EXIT_OK, EXIT_BAD_INPUT, or -1 for another option */
int parse_refine_option(const char *n, const char *next, cli_args *a);
int cmd_draft(const cli_args *a);             /* draft.c */

/* ---- draft.c: its options ------------------------------------------------------------------ */

/* The option-table lines of draft's own options, for the commands cmds (main.c's OPTIONS). */
#define DRAFT_OPTIONS(cmds)                                                                      \
    {"--supply", NULL, "VOLTS", cmds, "supply voltage, 3 .. 1000 V (default 12)"},                 \
    {"--current", NULL, "AMPS", cmds, "quiescent current of the output device, 0 < A <= 10"},    \
    {"--swing", NULL, "VOLTS", cmds, "peak output swing wanted at the load, 0 < V < supply/2"},  \
    {"--gain", NULL, "GAIN", cmds, "|voltage gain| from the source EMF to the output, V/V"},     \
    {"--zin", NULL, "OHMS", cmds, "least input impedance of the stage (source not included)"},  \
    {"--load", NULL, "OHMS", cmds, "the load's resistance (default none: a 1 Mohm bleed)"},      \
    {"--source", NULL, "OHMS", cmds, "the source's resistance, >= 0 (default 0)"},              \
    {"--f-low", NULL, "HZ", cmds, "lowest frequency of the band (default 20)"},                  \
    {"--f-high", NULL, "HZ", cmds, "highest frequency of the band, above f-low (default 20k)"},  \
    {"--series", NULL, "E6|E12|E24|E48|E96|E192", cmds, "the resistors' series (default E24)"},  \
    {"--cap-series", NULL, "E6|E12|E24|E48|E96|E192", cmds,                                      \
     "the capacitors' series (default E12)"}
/* Reads draft's option n (o as given, next its value) into a->draft; -1 when n is not one of
 * draft's own (--load and --series are read with run's and snap's). */
int parse_draft_option(const char *n, const char *o, const char *next, cli_args *a);

#endif
