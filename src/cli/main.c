/* stagesim command line: reads argv, calls the library, writes files, prints the report and
 * picks the exit code. All computation is the library's (include/stagesim only). */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "stagesim/stagesim.h"

enum { EXIT_OK = 0, EXIT_CHECK_FAILED = 1, EXIT_BAD_INPUT = 2, EXIT_NO_CONVERGENCE = 3 };

static const char USAGE[] =
    "usage: stagesim run NETLIST [-o DIR] [--set NAME=VALUE]... [--in SRC --out NODE]\n"
    "                            [--load OHMS] [--plot] [--quiet]\n"
    "       stagesim --help | --version\n"
    "\n"
    "run: solve the operating point of NETLIST and every analysis it asks for\n"
    "  -o DIR            write the CSV files into DIR (default: current folder; created if\n"
    "                    missing)\n"
    "  --set NAME=VALUE  override a .param, an element value (R1=10k) or a model parameter\n"
    "                    (qgen.bf=250); repeatable\n"
    "  --in SRC          the stage's driving source (overrides .stage in=)\n"
    "  --out NODE        the stage's output node (overrides .stage out=)\n"
    "  --load OHMS       the load the stage drives, for the Zout check\n"
    "  --plot            also write bode.svg (needs .ac and a stage)\n"
    "  --quiet           no report on stdout (errors and warnings still on stderr)\n"
    "\n"
    "files: op.csv, dc.csv (.dc), ac.csv (.ac), stage.csv and stage_summary.csv (.ac with a\n"
    "stage). exit: 0 ok, 1 a check failed, 2 bad input, 3 no convergence\n";

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

typedef struct run_args {
    const char *netlist;
    const char *out_dir;
    ss_override *sets;
    int n_sets;
    const char *in_src, *out_node;
    double load_ohm;
    int plot, quiet;
} run_args;

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

static int write_table(const ss_table *t, const char *dir, const char *name, ss_error *err)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    return ss_table_write_csv(t, path, err) == SS_OK ? 0 : -1;
}

static int cmd_run(const run_args *a)
{
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    if (ss_circuit_parse_file(a->netlist, a->sets, a->n_sets, &ckt, &err) != SS_OK)
        return fail(&err);
    int rc = EXIT_OK;
    ss_table *op = NULL, *dc = NULL, *ac = NULL, *stage = NULL, *summary = NULL;
    ss_analysis_flags fl;
    ss_circuit_analyses(ckt, &fl);
    if (a->in_src || a->out_node) {
        ss_status st;
        if (!a->in_src || !a->out_node) {
            fprintf(stderr, "stagesim: --in and --out go together\n");
            rc = EXIT_BAD_INPUT;
            goto done;
        }
        st = ss_circuit_set_stage(ckt, a->in_src, a->out_node, a->load_ohm, &err);
        if (st != SS_OK) {
            rc = fail(&err);
            goto done;
        }
        fl.stage = 1;
    } else if (a->load_ohm > 0.0 && fl.stage) {
        ss_circuit_set_stage(ckt, NULL, NULL, a->load_ohm, &err);
    }
    ss_op_stats stats;
    if (ss_op_solve(ckt, &op, &stats, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (write_table(op, a->out_dir, "op.csv", &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    if (fl.ac) {
        if (ss_ac_sweep_run(ckt, &ac, &err) != SS_OK ||
            write_table(ac, a->out_dir, "ac.csv", &err) != 0) {
            rc = fail(&err);
            goto done;
        }
        if (fl.stage) {
            if (ss_stage_run(ckt, &stage, &summary, &err) != SS_OK ||
                write_table(stage, a->out_dir, "stage.csv", &err) != 0 ||
                write_table(summary, a->out_dir, "stage_summary.csv", &err) != 0) {
                rc = fail(&err);
                goto done;
            }
            if (a->plot) {
                char path[4096];
                snprintf(path, sizeof path, "%s/bode.svg", a->out_dir);
                if (ss_plot_write_bode(ckt, stage, summary, path, &err) != SS_OK) {
                    rc = fail(&err);
                    goto done;
                }
            }
        }
    } else if (fl.stage) {
        fprintf(stderr, "stagesim: warning: a stage is named but the netlist has no .ac sweep; "
                        "no stage figures computed\n");
    }
    if (a->plot && !(fl.ac && fl.stage))
        fprintf(stderr, "stagesim: warning: --plot needs an .ac sweep and a stage; no plot\n");
    if (!a->quiet) {
        ss_report_write(ckt, summary, stdout);
        printf("operating point: %d Newton iterations", stats.newton_iterations);
        if (stats.gmin_steps)
            printf(", %d gmin steps", stats.gmin_steps);
        if (stats.source_steps)
            printf(", %d source steps", stats.source_steps);
        printf("\n");
    }
    /* .dc last: it moves the circuit's operating point */
    if (fl.dc) {
        if (ss_dc_sweep_run(ckt, &dc, &err) != SS_OK ||
            write_table(dc, a->out_dir, "dc.csv", &err) != 0) {
            rc = fail(&err);
            goto done;
        }
    }
    if (fl.tran)
        fprintf(stderr, "stagesim: warning: .tran is not computed in this version\n");
    if (fl.noise)
        fprintf(stderr, "stagesim: warning: .noise is not computed in this version\n");
    for (int i = 0; ss_circuit_warning(ckt, i); i++)
        fprintf(stderr, "stagesim: warning: %s\n", ss_circuit_warning(ckt, i));
done:
    ss_table_destroy(&op);
    ss_table_destroy(&dc);
    ss_table_destroy(&ac);
    ss_table_destroy(&stage);
    ss_table_destroy(&summary);
    ss_circuit_destroy(&ckt);
    return rc;
}

int main(int argc, char **argv)
{
    if (argc < 2) {
        fputs(USAGE, stderr);
        return EXIT_BAD_INPUT;
    }
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
        strcmp(argv[1], "help") == 0) {
        fputs(USAGE, stdout);
        return EXIT_OK;
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("stagesim %s\n", ss_version());
        return EXIT_OK;
    }
    if (strcmp(argv[1], "run") != 0)
        return usage_error("unknown command '%s'", argv[1]);
    run_args a = {0};
    a.out_dir = ".";
    a.sets = calloc((size_t)argc, sizeof *a.sets);
    if (!a.sets)
        return EXIT_BAD_INPUT;
    int rc = EXIT_OK;
    for (int i = 2; i < argc && rc == EXIT_OK; i++) {
        const char *o = argv[i];
        const char *next = i + 1 < argc ? argv[i + 1] : NULL;
        if (strcmp(o, "-o") == 0 || strcmp(o, "--out-dir") == 0) {
            if (!next)
                rc = usage_error("%s needs a folder", o);
            a.out_dir = next;
            i++;
        } else if (strcmp(o, "--set") == 0) {
            char *eq = next ? strchr(next, '=') : NULL;
            if (!eq || eq == next || !eq[1]) {
                rc = usage_error("--set needs NAME=VALUE, got '%s'", next ? next : "");
                break;
            }
            *eq = '\0';
            a.sets[a.n_sets].name = next;
            a.sets[a.n_sets].value = eq + 1;
            a.n_sets++;
            i++;
        } else if (strcmp(o, "--in") == 0) {
            if (!next)
                rc = usage_error("%s needs a source name", o);
            a.in_src = next;
            i++;
        } else if (strcmp(o, "--out") == 0) {
            if (!next)
                rc = usage_error("%s needs a node name", o);
            a.out_node = next;
            i++;
        } else if (strcmp(o, "--load") == 0) {
            char *end = NULL;
            a.load_ohm = next ? strtod(next, &end) : 0.0;
            if (!next || !end || *end || !(a.load_ohm > 0.0))
                rc = usage_error("--load needs a positive resistance in ohms, got '%s'",
                                 next ? next : "");
            i++;
        } else if (strcmp(o, "--plot") == 0) {
            a.plot = 1;
        } else if (strcmp(o, "--quiet") == 0 || strcmp(o, "-q") == 0) {
            a.quiet = 1;
        } else if (o[0] == '-' && o[1] != '\0') {
            rc = usage_error("unknown option '%s'", o);
        } else if (!a.netlist) {
            a.netlist = o;
        } else {
            rc = usage_error("more than one netlist given ('%s')", o);
        }
    }
    if (rc == EXIT_OK && !a.netlist)
        rc = usage_error("%s", "run needs a NETLIST");
    if (rc == EXIT_OK)
        rc = cmd_run(&a);
    free(a.sets);
    return rc;
}
