/* stagesim command line: reads argv, calls the library, writes files, prints the report and
 * picks the exit code. All computation is the library's (include/stagesim only). */
#define _POSIX_C_SOURCE 200809L
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "stagesim/stagesim.h"

enum { EXIT_OK = 0, EXIT_CHECK_FAILED = 1, EXIT_BAD_INPUT = 2, EXIT_NO_CONVERGENCE = 3 };
#define SS_NAN_CLI ((double)NAN)

static const char USAGE[] =
    "usage: stagesim run NETLIST [options]          operating point, sweeps, stage figures\n"
    "       stagesim check NETLIST [LIMITS] [options] [--junit FILE]\n"
    "                                                judge figures against limits\n"
    "       stagesim sweep NETLIST --vary NAME=SPEC... [options]\n"
    "       stagesim spread NETLIST [--trials N] [--seed S] [--tol NAME=SPEC]... [options]\n"
    "                                                tolerance (Monte Carlo) run\n"
    "       stagesim sensitivity NETLIST [--tol NAME=SPEC]... [options]\n"
    "       stagesim snap NETLIST --series E12|E24|E96 [options]\n"
    "       stagesim merge -o DIR [--limits FILE] SHARD.csv...\n"
    "       stagesim --help | --version\n"
    "\n"
    "options:\n"
    "  -o DIR            output folder (default: current folder; created if missing)\n"
    "  --set NAME=VALUE  override a .param, an element value (R1=10k) or a model parameter\n"
    "                    (qgen.bf=250); repeatable\n"
    "  --in SRC --out NODE   the stage's source and output node (override .stage)\n"
    "  --load OHMS       the load the stage drives, for the Zout check\n"
    "  --plot            (run) also write bode.svg (and wave.svg, thd_wave.svg)\n"
    "  --nodes A,B,...   (run) write only these nodes' voltages (op, dc, ac, tran tables and\n"
    "                    the report); default every node\n"
    "  --ls-freq F --thd-amp A --thd-target PCT   (run) the large-signal test\n"
    "  --quiet           no report on stdout\n"
    "  --limits FILE     (sweep, spread, merge) limits for pass fractions and yield\n"
    "  --min-yield F     (sweep, spread) exit 1 when the yield is below F (0..1)\n"
    "  --vary NAME=lin:START:STOP:N | log:START:STOP:N | list:V1,V2,...  (NAME may be temp)\n"
    "  --tol NAME=PCT%[:gauss] | NAME=LO..HI[:gauss]\n"
    "  --trials N --seed S   tolerance trials (default 1000, seed 1)\n"
    "  --threads N       worker threads (default: all cores); results never depend on it\n"
    "  --shard K/N       run the K-th of N slices of the points (merge them with merge)\n"
    "  --temps LO,HI     (sensitivity) temperature extremes, default -40,85\n"
    "\n"
    "exit: 0 ok, 1 a check failed, 2 bad input, 3 no convergence. docs/cli.md has it all.\n";

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

typedef struct cli_args {
    const char *cmd;
    const char *netlist;
    const char *limits_path; /* check: second positional; others: --limits */
    const char *out_dir;
    ss_override *sets;
    int n_sets;
    const char *in_src, *out_node;
    double load_ohm;
    int plot, quiet;
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

static int write_table(const ss_table *t, const char *dir, const char *name, ss_error *err)
{
    char path[4096];
    snprintf(path, sizeof path, "%s/%s", dir, name);
    return ss_table_write_csv(t, path, err) == SS_OK ? 0 : -1;
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

/* Parses the netlist and applies --in/--out/--load/--nodes. */
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
    } else if (a->load_ohm > 0.0) {
        ss_circuit_set_stage(ckt, NULL, NULL, a->load_ohm, &err);
    }
    if (a->n_nodes > 0 && select_nodes(ckt, a) != EXIT_OK) {
        ss_circuit_destroy(&ckt);
        return EXIT_BAD_INPUT;
    }
    *out = ckt;
    return EXIT_OK;
}

/* ---- run -------------------------------------------------------------------------------- */

static int cmd_run(const cli_args *a)
{
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    int rc = load_circuit(a, &ckt);
    if (rc != EXIT_OK)
        return rc;
    ss_table *op = NULL, *dc = NULL, *stage = NULL, *summary = NULL;
    ss_analysis_flags fl;
    ss_circuit_analyses(ckt, &fl);
    ss_op_stats stats;
    if (ss_op_solve(ckt, &op, &stats, &err) != SS_OK ||
        write_table(op, a->out_dir, "op.csv", &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    if (fl.ac) {
        char ac_path[4096];
        snprintf(ac_path, sizeof ac_path, "%s/ac.csv", a->out_dir);
        if (ss_ac_sweep_write(ckt, ac_path, &err) != SS_OK) {
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
    if (fl.tran) {
        ss_table *tran = NULL;
        int bad = ss_tran_run(ckt, &tran, &err) != SS_OK ||
                  write_table(tran, a->out_dir, "tran.csv", &err) != 0;
        if (!bad && a->plot && fl.stage) {
            char path[4096];
            snprintf(path, sizeof path, "%s/wave.svg", a->out_dir);
            bad = ss_plot_write_wave(ckt, tran, NULL, NULL, path, &err) != SS_OK;
        }
        ss_table_destroy(&tran);
        if (bad) {
            rc = fail(&err);
            goto done;
        }
    }
    if (fl.large_signal && fl.stage) {
        if (a->ls_freq > 0.0 || a->thd_amp > 0.0 || a->thd_target > 0.0)
            ss_circuit_set_large_signal(ckt, a->ls_freq, a->thd_amp, a->thd_target, &err);
        ss_table *ls = NULL, *harm = NULL, *wave = NULL;
        int bad = ss_stage_large_signal(ckt, &ls, &err) != SS_OK ||
                  write_table(ls, a->out_dir, "large_signal.csv", &err) != 0;
        double f_hz, amp, target;
        ss_circuit_large_signal(ckt, &f_hz, &amp, &target);
        double thd = SS_NAN_CLI;
        if (!bad && amp > 0.0) {
            bad = ss_stage_thd(ckt, amp, f_hz, &thd, &harm, &wave, &err) != SS_OK ||
                  write_table(harm, a->out_dir, "harmonics.csv", &err) != 0;
            if (!bad && a->plot) {
                char path[4096];
                snprintf(path, sizeof path, "%s/thd_wave.svg", a->out_dir);
                bad = ss_plot_write_wave(ckt, wave, NULL, NULL, path, &err) != SS_OK;
            }
        }
        if (!bad && !a->quiet) {
            printf("\nLarge signal at %.4g Hz\n", f_hz);
            const char *rows[][2] = {{"swing_pos_v", "output swing before clipping, +"},
                                     {"swing_neg_v", "output swing before clipping, -"},
                                     {"thd_pct", "THD at the test amplitude (%)"},
                                     {"vin_at_thd_v", "input amplitude for the THD target"},
                                     {"iin_at_thd_a", "input amplitude for the THD target"}};
            for (size_t k = 0; k < sizeof rows / sizeof rows[0]; k++) {
                double v = ss_table_lookup(ls, rows[k][0], 0);
                double e = strcmp(rows[k][0], "thd_pct") == 0
                               ? ss_table_lookup(ls, "thd_err_pct", 0)
                               : SS_NAN_CLI;
                if (!isnan(v) && !isnan(e))
                    printf("  %-40s %.5g (estimated error %.2g)\n", rows[k][1], v, e);
                else if (!isnan(v))
                    printf("  %-40s %.5g\n", rows[k][1], v);
            }
        }
        ss_table_destroy(&ls);
        ss_table_destroy(&harm);
        ss_table_destroy(&wave);
        if (bad) {
            rc = fail(&err);
            goto done;
        }
    } else if (fl.large_signal) {
        fprintf(stderr, "stagesim: warning: .large_signal needs a stage; no large-signal figures\n");
    }
    if (fl.noise) {
        ss_table *noise = NULL, *nsum = NULL, *ncon = NULL;
        int bad = ss_noise_run(ckt, &noise, &nsum, &ncon, &err) != SS_OK ||
                  write_table(noise, a->out_dir, "noise.csv", &err) != 0 ||
                  write_table(nsum, a->out_dir, "noise_summary.csv", &err) != 0 ||
                  write_table(ncon, a->out_dir, "noise_contrib.csv", &err) != 0;
        if (!bad && !a->quiet) {
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
        ss_table_destroy(&noise);
        ss_table_destroy(&nsum);
        ss_table_destroy(&ncon);
        if (bad) {
            rc = fail(&err);
            goto done;
        }
    }
    for (int i = 0; ss_circuit_warning(ckt, i); i++)
        fprintf(stderr, "stagesim: warning: %s\n", ss_circuit_warning(ckt, i));
done:
    ss_table_destroy(&op);
    ss_table_destroy(&dc);
    ss_table_destroy(&stage);
    ss_table_destroy(&summary);
    ss_circuit_destroy(&ckt);
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
    if (a->junit || strcmp(a->out_dir, ".") != 0) {
        if (prepare_out_dir(a->out_dir) != 0)
            return EXIT_BAD_INPUT;
    }
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    ss_limits *lim = NULL;
    ss_table *figs = NULL, *verdicts = NULL;
    int rc = load_circuit(a, &ckt);
    if (rc != EXIT_OK)
        return rc;
    int n_failed = 0;
    if (ss_limits_create(&lim, &err) != SS_OK || ss_limits_add_circuit(lim, ckt, &err) != SS_OK ||
        (a->limits_path && ss_limits_add_file(lim, a->limits_path, &err) != SS_OK)) {
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
        ss_check_evaluate(lim, figs, &verdicts, &n_failed, &err) != SS_OK) {
        rc = fail(&err);
        goto done;
    }
    if (strcmp(a->out_dir, ".") != 0 && (write_table(verdicts, a->out_dir, "check.csv", &err) != 0 ||
                                         write_table(figs, a->out_dir, "figures.csv", &err) != 0)) {
        rc = fail(&err);
        goto done;
    }
    if (a->junit && ss_check_write_junit(verdicts, a->netlist, a->junit, &err) != SS_OK) {
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
    }
    rc = n_failed ? EXIT_CHECK_FAILED : EXIT_OK;
done:
    ss_table_destroy(&figs);
    ss_table_destroy(&verdicts);
    ss_limits_destroy(&lim);
    ss_circuit_destroy(&ckt);
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
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    int rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK)
        return rc;
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
    if (ss_study_run(s, &pts, &err) != SS_OK ||
        ss_study_summarize(pts, ss_study_limits(s), &summary, &err) != SS_OK ||
        write_table(pts, a->out_dir, "study.csv", &err) != 0 ||
        write_table(summary, a->out_dir, "study_summary.csv", &err) != 0) {
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
    rc = print_yield(summary, a->min_yield, a->quiet);
done:
    ss_table_destroy(&pts);
    ss_table_destroy(&summary);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    return rc;
}

static int cmd_sensitivity(const cli_args *a)
{
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    int rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK)
        return rc;
    ss_error err = {0};
    ss_table *sens = NULL, *corners = NULL;
    if (ss_study_sensitivity(s, &sens, &err) != SS_OK ||
        write_table(sens, a->out_dir, "sensitivity.csv", &err) != 0 ||
        ss_study_corners(s, a->temp_lo, a->temp_hi, &corners, &err) != SS_OK ||
        write_table(corners, a->out_dir, "corners.csv", &err) != 0) {
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
    rc = EXIT_OK;
done:
    ss_table_destroy(&corners);
    ss_table_destroy(&sens);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    return rc;
}

/* ---- merge -------------------------------------------------------------------------------- */

static int cmd_merge(const cli_args *a)
{
    if (a->n_shards == 0)
        return usage_error("%s", "merge needs the shard CSV files");
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_error err = {0};
    ss_table **shards = calloc((size_t)a->n_shards, sizeof *shards);
    ss_table *merged = NULL, *summary = NULL;
    ss_limits *lim = NULL;
    int rc = EXIT_OK;
    if (!shards)
        return EXIT_BAD_INPUT;
    for (int i = 0; i < a->n_shards && rc == EXIT_OK; i++)
        if (ss_table_read_csv(a->shards[i], &shards[i], &err) != SS_OK)
            rc = fail(&err);
    if (rc == EXIT_OK && a->limits_path &&
        (ss_limits_create(&lim, &err) != SS_OK ||
         ss_limits_add_file(lim, a->limits_path, &err) != SS_OK))
        rc = fail(&err);
    if (rc == EXIT_OK && (ss_study_merge(shards, a->n_shards, &merged, &err) != SS_OK ||
                          ss_study_summarize(merged, lim, &summary, &err) != SS_OK ||
                          write_table(merged, a->out_dir, "study.csv", &err) != 0 ||
                          write_table(summary, a->out_dir, "study_summary.csv", &err) != 0))
        rc = fail(&err);
    if (rc == EXIT_OK && !a->quiet)
        printf("merged %d shard%s: %d points\n", a->n_shards, a->n_shards == 1 ? "" : "s",
               ss_table_rows(merged));
    if (rc == EXIT_OK)
        rc = print_yield(summary, a->min_yield, a->quiet);
    for (int i = 0; i < a->n_shards; i++)
        ss_table_destroy(&shards[i]);
    free(shards);
    ss_table_destroy(&merged);
    ss_table_destroy(&summary);
    ss_limits_destroy(&lim);
    return rc;
}

/* ---- argument parsing --------------------------------------------------------------------- */

static int parse_long(const char *s, long *out)
{
    char *end;
    errno = 0;
    long v = strtol(s, &end, 10);
    if (!*s || *end || errno)
        return -1;
    *out = v;
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
    int is_merge = strcmp(a->cmd, "merge") == 0;
    for (int i = 2; i < argc; i++) {
        const char *o = argv[i];
        const char *next = i + 1 < argc ? argv[i + 1] : NULL;
        /* options that take a value */
        static const char *const with_value[] = {
            "-o",       "--out-dir", "--set",   "--in",     "--out",   "--load",   "--junit",
            "--limits", "--vary",    "--tol",   "--trials", "--seed",  "--threads", "--shard",
            "--min-yield", "--series", "--temps", "--ls-freq", "--thd-amp", "--thd-target",
            "--nodes"};
        int takes = 0;
        for (size_t k = 0; k < sizeof with_value / sizeof with_value[0]; k++)
            takes |= strcmp(o, with_value[k]) == 0;
        if (takes && !next) {
            if (strcmp(o, "--set") == 0)
                return usage_error("--set needs NAME=VALUE, got '%s'", "");
            if (strcmp(o, "-o") == 0 || strcmp(o, "--out-dir") == 0)
                return usage_error("%s needs a folder", o);
            if (strcmp(o, "--in") == 0)
                return usage_error("%s needs a source name", o);
            if (strcmp(o, "--out") == 0)
                return usage_error("%s needs a node name", o);
            if (strcmp(o, "--load") == 0)
                return usage_error("--load needs a positive resistance in ohms, got '%s'", "");
            return usage_error("%s needs a value", o);
        }
        if (strcmp(o, "-o") == 0 || strcmp(o, "--out-dir") == 0) {
            a->out_dir = next;
        } else if (strcmp(o, "--set") == 0) {
            char *eq = strchr(next, '=');
            if (!eq || eq == next || !eq[1])
                return usage_error("--set needs NAME=VALUE, got '%s'", next);
            *eq = '\0';
            a->sets[a->n_sets].name = next;
            a->sets[a->n_sets].value = eq + 1;
            a->n_sets++;
        } else if (strcmp(o, "--in") == 0) {
            a->in_src = next;
        } else if (strcmp(o, "--out") == 0) {
            a->out_node = next;
        } else if (strcmp(o, "--load") == 0) {
            char *end = NULL;
            a->load_ohm = strtod(next, &end);
            if (!end || *end || !(a->load_ohm > 0.0))
                return usage_error("--load needs a positive resistance in ohms, got '%s'", next);
        } else if (strcmp(o, "--junit") == 0) {
            a->junit = next;
        } else if (strcmp(o, "--limits") == 0) {
            a->limits_path = next;
        } else if (strcmp(o, "--vary") == 0) {
            a->varies[a->n_varies++] = next;
        } else if (strcmp(o, "--tol") == 0) {
            a->tols[a->n_tols++] = next;
        } else if (strcmp(o, "--trials") == 0) {
            if (parse_long(next, &a->trials) != 0 || a->trials < 1)
                return usage_error("--trials needs a whole number >= 1, got '%s'", next);
        } else if (strcmp(o, "--seed") == 0) {
            long v;
            if (parse_long(next, &v) != 0 || v < 0)
                return usage_error("--seed needs a whole number >= 0, got '%s'", next);
            a->seed = (unsigned long long)v;
        } else if (strcmp(o, "--threads") == 0) {
            long v;
            if (parse_long(next, &v) != 0 || v < 1 || v > 256)
                return usage_error("--threads needs a number from 1 to 256, got '%s'", next);
            a->threads = (int)v;
        } else if (strcmp(o, "--shard") == 0) {
            char tail;
            if (sscanf(next, "%d/%d%c", &a->shard_k, &a->shard_n, &tail) != 2 ||
                a->shard_n < 1 || a->shard_k < 1 || a->shard_k > a->shard_n)
                return usage_error("--shard needs K/N with 1 <= K <= N, got '%s'", next);
        } else if (strcmp(o, "--min-yield") == 0) {
            char *end = NULL;
            a->min_yield = strtod(next, &end);
            if (!end || *end || !(a->min_yield >= 0.0 && a->min_yield <= 1.0))
                return usage_error("--min-yield needs a fraction from 0 to 1, got '%s'", next);
        } else if (strcmp(o, "--series") == 0) {
            const char *v = (next[0] == 'E' || next[0] == 'e') ? next + 1 : next;
            a->series = atoi(v);
            if (a->series != 12 && a->series != 24 && a->series != 96)
                return usage_error("--series needs E12, E24 or E96, got '%s'", next);
        } else if (strcmp(o, "--temps") == 0) {
            if (sscanf(next, "%lf,%lf", &a->temp_lo, &a->temp_hi) != 2)
                return usage_error("--temps needs LO,HI in degrees C, got '%s'", next);
        } else if (strcmp(o, "--ls-freq") == 0 || strcmp(o, "--thd-amp") == 0 ||
                   strcmp(o, "--thd-target") == 0) {
            char *end = NULL;
            double v = strtod(next, &end);
            if (!end || *end || !(v > 0.0))
                return usage_error("%s needs a positive number", o);
            if (o[2] == 'l')
                a->ls_freq = v;
            else if (strcmp(o, "--thd-amp") == 0)
                a->thd_amp = v;
            else
                a->thd_target = v;
        } else if (strcmp(o, "--nodes") == 0) {
            a->nodes[a->n_nodes++] = next;
        } else if (strcmp(o, "--plot") == 0) {
            a->plot = 1;
        } else if (strcmp(o, "--quiet") == 0 || strcmp(o, "-q") == 0) {
            a->quiet = 1;
        } else if (o[0] == '-' && o[1] != '\0') {
            return usage_error("unknown option '%s'", o);
        } else if (is_merge) {
            a->shards[a->n_shards++] = o;
            continue;
        } else if (!a->netlist) {
            a->netlist = o;
            continue;
        } else if (strcmp(a->cmd, "check") == 0 && !a->limits_path) {
            a->limits_path = o;
            continue;
        } else {
            return usage_error("more than one netlist given ('%s')", o);
        }
        if (takes)
            i++;
    }
    if (!is_merge && !a->netlist)
        return usage_error("%s needs a NETLIST", a->cmd);
    if (a->n_nodes > 0 && strcmp(a->cmd, "run") != 0)
        return usage_error("--nodes belongs to run (the per-node tables), not %s", a->cmd);
    return EXIT_OK;
}

static int cmd_snap(const cli_args *a);

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
    static const char *const commands[] = {"run",         "check", "sweep", "spread",
                                           "sensitivity", "snap",  "merge"};
    int known = 0;
    for (size_t k = 0; k < sizeof commands / sizeof commands[0]; k++)
        known |= strcmp(argv[1], commands[k]) == 0;
    if (!known)
        return usage_error("unknown command '%s'", argv[1]);
    cli_args a;
    memset(&a, 0, sizeof a);
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
    return rc;
}

/* ---- snap: preferred values ------------------------------------------------------------ */

static int cmd_snap(const cli_args *a)
{
    if (a->series == 0)
        return usage_error("%s", "snap needs --series E12, E24 or E96");
    if (prepare_out_dir(a->out_dir) != 0)
        return EXIT_BAD_INPUT;
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    int rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK)
        return rc;
    ss_error err = {0};
    ss_table *vals = NULL, *figs = NULL;
    if (ss_study_snap(s, a->series, "r", &vals, &figs, &err) != SS_OK ||
        write_table(vals, a->out_dir, "snap_values.csv", &err) != 0 ||
        write_table(figs, a->out_dir, "snap_figures.csv", &err) != 0) {
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
done:
    ss_table_destroy(&vals);
    ss_table_destroy(&figs);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    return rc;
}
