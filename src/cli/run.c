/* stagesim run: the operating point and every analysis the netlist asks for, their files and
 * the report. Parsing the options and the output set are main.c's and common.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

#define SS_NAN_CLI ((double)NAN)

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

static void print_large_signal(const ss_table *ls, double f_hz)
{
    printf("\nLarge signal at %.4g Hz\n", f_hz);
    const char *rows[][2] = {{"swing_pos_v", "output swing before clipping, +"},
                             {"swing_neg_v", "output swing before clipping, -"},
                             {"thd_pct", "THD at the test amplitude (%)"},
                             {"vin_at_thd_v", "input amplitude for the THD target"},
                             {"iin_at_thd_a", "input amplitude for the THD target"}};
    int col = ss_table_col_index(ls, "value");
    for (size_t k = 0; k < sizeof rows / sizeof rows[0]; k++) {
        double v = ss_table_lookup(ls, rows[k][0], col);
        double e = strcmp(rows[k][0], "thd_pct") == 0 ? ss_table_lookup(ls, "thd_err_pct", col)
                                                      : SS_NAN_CLI;
        if (!isnan(v) && !isnan(e))
            printf("  %-40s %.5g (estimated error %.2g)\n", rows[k][1], v, e);
        else if (!isnan(v))
            printf("  %-40s %.5g\n", rows[k][1], v);
    }
}

static void print_noise(const ss_table *nsum, const ss_table *ncon)
{
    int col = ss_table_col_index(nsum, "value");
    printf("\nNoise over the .ac band (%.4g Hz .. %.4g Hz)\n",
           ss_table_lookup(nsum, "f_start_hz", col), ss_table_lookup(nsum, "f_stop_hz", col));
    printf("  output noise    %.4g uV rms\n",
           1e6 * ss_table_lookup(nsum, "out_noise_rms_v", col));
    printf("  input-referred  %.4g uV rms\n", 1e6 * ss_table_lookup(nsum, "in_noise_rms_v", col));
    double nf = ss_table_lookup(nsum, "noise_figure_db", col);
    if (!isnan(nf))
        printf("  noise figure    %.3f dB\n", nf);
    printf("  largest contributions:\n");
    int rms_col = ss_table_col_index(ncon, "out_noise_rms_v");
    int share_col = ss_table_col_index(ncon, "share_pct");
    for (int i = 0; i < ss_table_rows(ncon) && i < 5; i++)
        printf("    %-28s %10.4g uV rms  %6.2f %%\n", ss_table_row_label(ncon, i),
               1e6 * ss_table_get(ncon, i, rms_col), ss_table_get(ncon, i, share_col));
}

/* AC sweep, stage figures and the Bode plot (the stage tables are kept for the report). */
static int run_ac(ss_solver *sv, const cli_args *a, const char *const *path,
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
    if (ss_ac_sweep_write(sv, path[F_AC], err) != SS_OK)
        return -1;
    if (!fl->stage) {
        if (a->plot)
            fprintf(stderr, "stagesim: warning: --plot needs an .ac sweep and a stage; no plot\n");
        return 0;
    }
    if (ss_stage_run(sv, stage, summary, err) != SS_OK ||
        write_table(*stage, path[F_STAGE], err) != 0 ||
        write_table(*summary, path[F_SUMMARY], err) != 0)
        return -1;
    if (a->plot) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_bode(sv, *stage, *summary, path[F_BODE], &perr);
        if (plot_result(st, &perr, "bode.svg") != 0) {
            *err = perr;
            return -1;
        }
    }
    return 0;
}

static int run_tran(ss_solver *sv, const cli_args *a, const char *const *path,
                    const ss_analysis_flags *fl, ss_error *err)
{
    ss_table *tran = NULL;
    int bad = ss_tran_run(sv, &tran, err) != SS_OK || write_table(tran, path[F_TRAN], err) != 0;
    if (!bad && a->plot && fl->stage) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_wave(sv, tran, NULL, NULL, path[F_WAVE], &perr);
        if (plot_result(st, &perr, "wave.svg") != 0) {
            *err = perr;
            bad = 1;
        }
    }
    ss_table_destroy(&tran);
    return bad ? -1 : 0;
}

static int run_large_signal(ss_solver *sv, const cli_args *a, const char *const *path,
                            ss_error *err)
{
    /* the large-signal options were applied with the stage (load_circuit) */
    ss_table *ls = NULL, *harm = NULL, *wave = NULL;
    int bad = ss_stage_large_signal(sv, &ls, err) != SS_OK ||
              write_table(ls, path[F_LS], err) != 0;
    double f_hz, amp, target;
    ss_solver_large_signal(sv, &f_hz, &amp, &target);
    double thd = SS_NAN_CLI;
    if (!bad && amp > 0.0) {
        bad = ss_stage_thd(sv, amp, f_hz, &thd, &harm, &wave, err) != SS_OK ||
              write_table(harm, path[F_HARM], err) != 0;
        if (!bad && a->plot) {
            ss_error perr = {0};
            ss_status st = ss_plot_write_wave(sv, wave, NULL, NULL, path[F_THD_WAVE], &perr);
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

static int run_noise(ss_solver *sv, const cli_args *a, const char *const *path, ss_error *err)
{
    ss_table *noise = NULL, *nsum = NULL, *ncon = NULL;
    int bad = ss_noise_run(sv, &noise, &nsum, &ncon, err) != SS_OK ||
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
static ss_status check_expect_lines(const ss_circuit *ckt, const ss_solver *sv,
                                     ss_error *err)
{
    ss_limits *lim = NULL;
    ss_status st = ss_limits_create(&lim, err);
    if (st == SS_OK)
        st = ss_limits_add_circuit(lim, ckt, err);
    if (st == SS_OK)
        st = ss_limits_check_names(lim, sv, err);
    ss_limits_destroy(&lim);
    return st;
}

int cmd_run(const cli_args *a)
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
    ss_solver *sv = NULL;
    rc = load_circuit(a, &ckt, &sv);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_table *op = NULL, *dc = NULL, *stage = NULL, *summary = NULL;
    ss_analysis_flags fl;
    ss_solver_analyses(sv, &fl);
    ss_op_stats stats;
    int bad = check_expect_lines(ckt, sv, &err) != SS_OK ||
              ss_outset_note_circuit(set, ckt, &err) != SS_OK ||
              ss_op_solve(sv, &op, &stats, &err) != SS_OK ||
              write_table(op, path[F_OP], &err) != 0 || ss_lint_run(sv, NULL, &err) != SS_OK ||
              run_ac(sv, a, path, &fl, &stage, &summary, &err) != 0;
    if (!bad && !a->quiet) {
        ss_report_write(sv, summary, stdout);
        printf("operating point: %d Newton iterations", stats.newton_iterations);
        if (stats.gmin_steps)
            printf(", %d gmin steps", stats.gmin_steps);
        if (stats.source_steps)
            printf(", %d source steps", stats.source_steps);
        printf("\n");
    }
    /* .dc last of the DC analyses: it moves the circuit's operating point */
    if (!bad && fl.dc)
        bad = ss_dc_sweep_run(sv, &dc, &err) != SS_OK || write_table(dc, path[F_DC], &err) != 0;
    if (!bad && fl.tran)
        bad = run_tran(sv, a, path, &fl, &err) != 0;
    if (!bad && fl.large_signal && fl.stage)
        bad = run_large_signal(sv, a, path, &err) != 0;
    else if (!bad && fl.large_signal)
        fprintf(stderr, "stagesim: warning: .large_signal needs a stage; no large-signal "
                        "figures\n");
    if (!bad && fl.noise)
        bad = run_noise(sv, a, path, &err) != 0;
    if (bad) {
        rc = fail(&err); /* nothing of this run becomes visible */
    } else {
        for (int i = 0; ss_solver_warning(sv, i); i++)
            fprintf(stderr, "stagesim: warning: %s\n", ss_solver_warning(sv, i));
        rc = out_commit(set, EXIT_OK);
    }
    ss_table_destroy(&op);
    ss_table_destroy(&dc);
    ss_table_destroy(&stage);
    ss_table_destroy(&summary);
    ss_solver_destroy(&sv);
    ss_circuit_destroy(&ckt);
    ss_outset_destroy(&set);
    return rc;
}
