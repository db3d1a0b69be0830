/* stagesim run: the operating point and every analysis the netlist asks for, their files and
 * the report. Which analyses there are, their order and their main files are the library's
 * table (ss_analysis_*); here is what run does around each beyond its rows. Parsing the options
 * and the output set are main.c's and common.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

#define SS_NAN_CLI ((double)NAN)
#define RUN_MAX_FILES 64

/* ---- run -------------------------------------------------------------------------------- */

/* One run: its options, context and files, and what an analysis leaves for a later step. */
typedef struct run_ctx {
    const cli_args *a;
    ss_solver *sv;
    ss_analysis_flags fl;
    /* every file run may write (each analysis's main file, then its extras' files), reserved
     * before the netlist is read; those written are the set */
    const char *names[RUN_MAX_FILES];
    const char *path[RUN_MAX_FILES]; /* where each is staged */
    int n_files;
    ss_op_stats stats;  /* of the operating point, for the report */
    ss_table *summary;  /* the stage summary, for the report (NULL without a stage) */
    ss_table *rows;     /* the analysis's rows, while its after step runs, when it keeps them */
    ss_table *nsum, *ncon; /* the noise summary and contributions */
    ss_html *html;         /* --html: the report, filled as the analyses go (NULL without) */
    const char *html_path; /* where it is staged */
} run_ctx;

/* The plots are drawn for --plot, and for --html, whose page shows them. */
static int draw_plots(const run_ctx *c) { return c->a->plot || c->a->html; }

/* A warning of run itself: on standard error, and in the HTML report. */
static void run_warn(const run_ctx *c, const char *text)
{
    fprintf(stderr, "stagesim: warning: %s\n", text);
    ss_error ignore = {0};
    if (c->html) /* out of memory shows when the page is written */
        ss_html_add_warning(c->html, text, NULL, &ignore);
}

static const char *run_path(const run_ctx *c, const char *name)
{
    for (int i = 0; i < c->n_files; i++)
        if (strcmp(c->names[i], name) == 0)
            return c->path[i];
    return NULL; /* every name asked for is reserved: not reached */
}

/* A plot that cannot be drawn (a gain that is infinite somewhere, fewer than two points) costs
 * the plot, not the run: warn and go on without the file. */
static int plot_result(const run_ctx *c, ss_status st, const ss_error *err, const char *name)
{
    if (st == SS_OK)
        return 0;
    if (st != SS_ERR_INPUT)
        return -1;
    char text[1400];
    snprintf(text, sizeof text, "no %s: %s", name, err->message);
    run_warn(c, text);
    return 0;
}

static void print_large_signal(const ss_table *ls, double f_hz)
{
    int col = ss_table_col_index(ls, "value");
    /* a V-driven stage's input in V, an I-driven one's in A (large_signal.csv's names) */
    int current = !isnan(ss_table_lookup(ls, "thd_amp_a", col));
    const char *in_unit = current ? "A" : "V";
    double amp = ss_table_lookup(ls, current ? "thd_amp_a" : "thd_amp_v", col);
    double target = ss_table_lookup(ls, "thd_target_pct", col);
    char a[48], b[48], lbl[96];
    printf("\nLarge signal at %s, test input amplitude %s\n", ss_format_eng(a, sizeof a, f_hz, "Hz"),
           ss_format_eng(b, sizeof b, amp, in_unit));
    const char *swing[][2] = {{"swing_pos_v", "output swing before clipping, +"},
                              {"swing_neg_v", "output swing before clipping, -"}};
    for (size_t k = 0; k < 2; k++) {
        double v = ss_table_lookup(ls, swing[k][0], col);
        if (!isnan(v))
            printf("  %-40s %s\n", swing[k][1], ss_format_eng(a, sizeof a, v, "V"));
    }
    double thd = ss_table_lookup(ls, "thd_pct", col);
    double thd_err = ss_table_lookup(ls, "thd_err_pct", col);
    snprintf(lbl, sizeof lbl, "THD at the %s test amplitude", ss_format_eng(b, sizeof b, amp, in_unit));
    if (!isnan(thd) && !isnan(thd_err) && thd_err > 0.0) {
        /* two significant digits in plain decimals (0.000045 %, not 4.5e-05 %) */
        int dec = (int)fmax(0.0, fmin(12.0, 1.0 - floor(log10(thd_err))));
        printf("  %-40s %.4g %% (estimated error %.*f %%)\n", lbl, thd, dec, thd_err);
    } else if (!isnan(thd) && !isnan(thd_err))
        printf("  %-40s %.4g %% (estimated error 0 %%)\n", lbl, thd);
    else if (!isnan(thd))
        printf("  %-40s %.4g %%\n", lbl, thd);
    double at = ss_table_lookup(ls, current ? "iin_at_thd_a" : "vin_at_thd_v", col);
    snprintf(lbl, sizeof lbl, "input amplitude for %.4g %% THD (target)", target);
    if (!isnan(at))
        printf("  %-40s %s\n", lbl, ss_format_eng(a, sizeof a, at, in_unit));
}

/* The noise block of the report: the band, the integrated figures and the largest single
 * sources, ranked by their own share (noise_contrib.csv keeps each element's rows together;
 * ranking rows there would let an element of many small sources push a larger single one off
 * the list), each with its element's total beside it. */
static void print_noise(const ss_solver *sv, const ss_table *nsum, const ss_table *ncon)
{
    /* input-referred to a current source: A rms (the CSV's _v names stay as they are) */
    const char *in_unit = ss_solver_noise_input_unit(sv);
    int col = ss_table_col_index(nsum, "value");
    double points = ss_table_lookup(nsum, "band_points", col);
    char f1[48], f2[48];
    ss_format_eng(f1, sizeof f1, ss_table_lookup(nsum, "f_start_hz", col), "Hz");
    ss_format_eng(f2, sizeof f2, ss_table_lookup(nsum, "f_stop_hz", col), "Hz");
    if (isnan(points))
        printf("\nNoise over the .ac band (%s .. %s)\n", f1, f2);
    else
        printf("\nNoise over its own band (%s .. %s, %.0f points)\n", f1, f2, points);
    printf("  output noise    %.4g uV rms\n",
           1e6 * ss_table_lookup(nsum, "out_noise_rms_v", col));
    printf("  input-referred  %.4g u%s rms\n", 1e6 * ss_table_lookup(nsum, "in_noise_rms_v", col),
           in_unit);
    double a_out = ss_table_lookup(nsum, "out_noise_a_rms_v", col);
    if (!isnan(a_out)) {
        printf("  A-weighted output noise    %.4g uV rms\n", 1e6 * a_out);
        printf("  A-weighted input-referred  %.4g u%s rms\n",
               1e6 * ss_table_lookup(nsum, "in_noise_a_rms_v", col), in_unit);
    }
    double nf = ss_table_lookup(nsum, "noise_figure_db", col);
    if (!isnan(nf))
        printf("  noise figure    %.3f dB\n", nf);
    int rms_col = ss_table_col_index(ncon, "out_noise_rms_v");
    int share_col = ss_table_col_index(ncon, "share_pct");
    int elem_col = ss_table_col_index(ncon, "element_share_pct");
    enum { SHOWN = 5 };
    int top[SHOWN], n_top = 0;
    /* the SHOWN largest shares, largest first; equal shares keep the file's order */
    for (int i = 0; i < ss_table_rows(ncon); i++) {
        double v = ss_table_get(ncon, i, share_col);
        int j = n_top < SHOWN ? n_top++ : SHOWN;
        while (j > 0 && (v > ss_table_get(ncon, top[j - 1], share_col) ||
                         isnan(ss_table_get(ncon, top[j - 1], share_col)))) {
            if (j < SHOWN)
                top[j] = top[j - 1];
            j--;
        }
        if (j < SHOWN)
            top[j] = i;
    }
    printf("  largest single sources (element total beside):\n");
    for (int k = 0; k < n_top; k++) {
        const char *label = ss_table_row_label(ncon, top[k]);
        size_t elem_len = strcspn(label, " ");
        printf("    %-28s %10.4g uV rms  %6.2f %%   %.*s %.2f %%\n", label,
               1e6 * ss_table_get(ncon, top[k], rms_col), ss_table_get(ncon, top[k], share_col),
               (int)elem_len, label, ss_table_get(ncon, top[k], elem_col));
    }
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

/* ---- what run does around each analysis -------------------------------------------------- */

static ss_status emit_op(run_ctx *c, ss_sink *sink, ss_error *err)
{
    return ss_op_emit(c->sv, sink, &c->stats, err);
}

static int after_op(run_ctx *c, int ran, ss_error *err)
{
    return ran && ss_lint_run(c->sv, NULL, err) != SS_OK ? -1 : 0;
}

static int after_ac(run_ctx *c, int ran, ss_error *err)
{
    (void)err;
    if (!ran && c->fl.stage)
        run_warn(c, "a stage is named but the netlist has no .ac sweep; no stage figures "
                    "computed");
    return 0;
}

static int keep_stage(const run_ctx *c) { return draw_plots(c); }

static ss_status emit_stage(run_ctx *c, ss_sink *sink, ss_error *err)
{
    return ss_stage_emit(c->sv, sink, &c->summary, err);
}

/* The report closes the analyses at the operating point: it shows the stage summary (when
 * there is one) and every warning so far, before .dc moves the operating point. */
static void print_report(const run_ctx *c)
{
    if (c->a->quiet)
        return;
    ss_report_write(c->sv, c->summary, stdout);
    printf("operating point: %d Newton iterations", c->stats.newton_iterations);
    if (c->stats.gmin_steps)
        printf(", %d gmin steps", c->stats.gmin_steps);
    if (c->stats.source_steps)
        printf(", %d source steps", c->stats.source_steps);
    printf("\n");
}

/* stage_summary.csv and the Bode plot, then the report. */
static int after_stage(run_ctx *c, int ran, ss_error *err)
{
    if (!ran && draw_plots(c))
        run_warn(c, c->a->plot ? "--plot needs an .ac sweep and a stage; no plot"
                               : "no Bode plot in the HTML report: it needs an .ac sweep and "
                                 "a stage");
    if (ran && write_table(c->summary, run_path(c, "stage_summary.csv"), err) != 0)
        return -1;
    if (ran && draw_plots(c)) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_bode(c->sv, c->rows, c->summary,
                                          run_path(c, "bode.svg"), &perr);
        if (plot_result(c, st, &perr, "bode.svg") != 0) {
            *err = perr;
            return -1;
        }
    }
    print_report(c);
    /* the page's operating point is the report's: before .dc moves it */
    if (c->html && ss_html_add_run(c->html, c->sv, c->summary, err) != SS_OK)
        return -1;
    return 0;
}

static int keep_tran(const run_ctx *c) { return draw_plots(c) && c->fl.stage; }

static int after_tran(run_ctx *c, int ran, ss_error *err)
{
    if (!ran || !keep_tran(c))
        return 0;
    ss_error perr = {0};
    ss_status st = ss_plot_write_wave(c->sv, c->rows, NULL, NULL, run_path(c, "wave.svg"), &perr);
    if (plot_result(c, st, &perr, "wave.svg") != 0) {
        *err = perr;
        return -1;
    }
    return 0;
}

static int keep_always(const run_ctx *c)
{
    (void)c;
    return 1;
}

/* The THD at the test amplitude (harmonics.csv, its waveform plot), then the figures. The
 * large-signal options were applied with the stage (load_circuit). */
static int after_large_signal(run_ctx *c, int ran, ss_error *err)
{
    if (!ran) {
        if (c->fl.large_signal)
            run_warn(c, ".large_signal needs a stage; no large-signal figures");
        return 0;
    }
    ss_table *harm = NULL, *wave = NULL;
    double f_hz, amp, target;
    ss_solver_large_signal(c->sv, &f_hz, &amp, &target);
    double thd = SS_NAN_CLI;
    int bad = 0;
    if (amp > 0.0) {
        bad = ss_stage_thd(c->sv, amp, f_hz, &thd, &harm, &wave, err) != SS_OK ||
              write_table(harm, run_path(c, "harmonics.csv"), err) != 0;
        if (!bad && draw_plots(c)) {
            ss_error perr = {0};
            ss_status st =
                ss_plot_write_wave(c->sv, wave, NULL, NULL, run_path(c, "thd_wave.svg"), &perr);
            if (plot_result(c, st, &perr, "thd_wave.svg") != 0) {
                *err = perr;
                bad = 1;
            }
        }
    }
    if (!bad && !c->a->quiet)
        print_large_signal(c->rows, f_hz);
    if (!bad && c->html && ss_html_add_table(c->html, "Large signal", c->rows, 0, err) != SS_OK)
        bad = 1;
    ss_table_destroy(&harm);
    ss_table_destroy(&wave);
    return bad ? -1 : 0;
}

static ss_status emit_noise(run_ctx *c, ss_sink *sink, ss_error *err)
{
    return ss_noise_emit(c->sv, sink, &c->nsum, &c->ncon, err);
}

static int keep_noise(const run_ctx *c) { return draw_plots(c); }

/* noise_summary.csv, noise_contrib.csv and, with --plot or --html, noise.svg; then the noise
 * report. */
static int after_noise(run_ctx *c, int ran, ss_error *err)
{
    if (!ran)
        return 0;
    if (write_table(c->nsum, run_path(c, "noise_summary.csv"), err) != 0 ||
        write_table(c->ncon, run_path(c, "noise_contrib.csv"), err) != 0)
        return -1;
    if (draw_plots(c)) {
        ss_error perr = {0};
        ss_status st = ss_plot_write_noise(c->sv, c->rows, run_path(c, "noise.svg"), &perr);
        if (plot_result(c, st, &perr, "noise.svg") != 0) {
            *err = perr;
            return -1;
        }
    }
    if (!c->a->quiet)
        print_noise(c->sv, c->nsum, c->ncon);
    if (c->html && (ss_html_add_table(c->html, "Noise", c->nsum, 0, err) != SS_OK ||
                    ss_html_add_table(c->html, "Noise contributions", c->ncon, 12, err) != SS_OK))
        return -1;
    return 0;
}

/* What is not a row stream, per analysis name: its other files, whether its after step needs
 * its rows, its own emit when it gives more than rows (the op statistics, the summaries), and
 * the step after it -- or in its place, with ran 0, when it is not wanted. An analysis without
 * an entry just has its rows written. */
typedef struct run_extra {
    const char *analysis;
    const char *files[4]; /* NULL-terminated */
    int (*keep_rows)(const run_ctx *c);
    ss_status (*emit)(run_ctx *c, ss_sink *sink, ss_error *err);
    int (*after)(run_ctx *c, int ran, ss_error *err); /* 0 ok, -1 with *err filled */
} run_extra;

static const run_extra EXTRAS[] = {
    {"op", {NULL}, NULL, emit_op, after_op},
    {"ac", {NULL}, NULL, NULL, after_ac},
    {"stage", {"stage_summary.csv", "bode.svg", NULL}, keep_stage, emit_stage, after_stage},
    {"tran", {"wave.svg", NULL}, keep_tran, NULL, after_tran},
    {"large_signal", {"harmonics.csv", "thd_wave.svg", NULL}, keep_always, NULL,
     after_large_signal},
    {"noise", {"noise_summary.csv", "noise_contrib.csv", "noise.svg", NULL}, keep_noise, emit_noise,
     after_noise},
};

static const run_extra *extra_of(const char *analysis)
{
    for (size_t k = 0; k < sizeof EXTRAS / sizeof EXTRAS[0]; k++)
        if (strcmp(EXTRAS[k].analysis, analysis) == 0)
            return &EXTRAS[k];
    return NULL;
}

/* Every file run may write, in the analyses' order: each main file, then its extras'. */
static void run_files(run_ctx *c)
{
    for (int i = 0; i < ss_analysis_count() && c->n_files < RUN_MAX_FILES; i++) {
        c->names[c->n_files++] = ss_analysis_output(i);
        const run_extra *ex = extra_of(ss_analysis_name(i));
        for (int k = 0; ex && ex->files[k] && c->n_files < RUN_MAX_FILES; k++)
            c->names[c->n_files++] = ex->files[k];
    }
}

/* Analysis i: its rows into its CSV file (and a table beside it when its after step reads
 * them), then its after step; only the after step when it is not wanted. */
static int run_analysis(run_ctx *c, int i, ss_error *err)
{
    const run_extra *ex = extra_of(ss_analysis_name(i));
    if (!ss_analysis_wanted(c->sv, i))
        return ex && ex->after ? ex->after(c, 0, err) : 0;
    ss_sink *csv = NULL, *kept = NULL, *tee = NULL;
    ss_status st = ss_sink_csv(run_path(c, ss_analysis_output(i)), &csv, err);
    if (st == SS_OK && ex && ex->keep_rows && ex->keep_rows(c)) {
        st = ss_sink_table(&kept, err);
        if (st == SS_OK)
            st = ss_sink_tee(csv, kept, &tee, err);
    }
    ss_sink *sink = tee ? tee : csv;
    if (st == SS_OK)
        st = ex && ex->emit ? ex->emit(c, sink, err) : ss_analysis_emit(c->sv, i, sink, err);
    if (st == SS_OK && kept)
        c->rows = ss_sink_take_table(kept);
    ss_sink_destroy(&tee);
    ss_sink_destroy(&kept);
    ss_sink_destroy(&csv);
    int bad = st != SS_OK || (ex && ex->after && ex->after(c, 1, err) != 0);
    ss_table_destroy(&c->rows);
    return bad ? -1 : 0;
}

int cmd_run(const cli_args *a)
{
    ss_outset *set = NULL;
    run_ctx c;
    memset(&c, 0, sizeof c);
    c.a = a;
    run_files(&c);
    int rc = out_start(a, c.names, c.n_files, c.path, &set);
    if (rc == EXIT_OK)
        rc = html_start(a, set, &c.html, &c.html_path);
    if (rc != EXIT_OK) {
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_circuit *ckt = NULL;
    rc = load_circuit(a, &ckt, &c.sv);
    if (rc != EXIT_OK) {
        ss_html_destroy(&c.html);
        ss_outset_destroy(&set);
        return rc;
    }
    ss_solver_analyses(c.sv, &c.fl);
    int bad = check_expect_lines(ckt, c.sv, &err) != SS_OK ||
              ss_outset_note_circuit(set, ckt, &err) != SS_OK;
    for (int i = 0; !bad && i < ss_analysis_count(); i++)
        bad = run_analysis(&c, i, &err) != 0;
    if (!bad && c.html)
        bad = ss_html_add_warnings(c.html, c.sv, &err) != SS_OK ||
              html_finish(c.html, set, c.html_path, &err) != 0;
    if (bad) {
        rc = fail(&err); /* nothing of this run becomes visible */
    } else {
        for (int i = 0; ss_solver_warning(c.sv, i); i++)
            fprintf(stderr, "stagesim: warning: %s\n", ss_solver_warning(c.sv, i));
        rc = out_commit(set, EXIT_OK);
    }
    ss_table_destroy(&c.summary);
    ss_table_destroy(&c.nsum);
    ss_table_destroy(&c.ncon);
    ss_html_destroy(&c.html);
    ss_solver_destroy(&c.sv);
    ss_circuit_destroy(&ckt);
    ss_outset_destroy(&set);
    return rc;
}
