/* stagesim's study commands: sweep, spread, sensitivity (with the corners), snap and merge.
 * The studies themselves run in the library; the output set is common.c's. */
#define _POSIX_C_SOURCE 200809L
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "cli.h"

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
    int n_dirs = 0;
    const char **dirs = model_search_path(a, &n_dirs);
    if (!dirs) {
        fprintf(stderr, "stagesim: out of memory\n");
        return EXIT_BAD_INPUT;
    }
    ss_status st = ss_study_create_models(a->netlist, a->sets, a->n_sets, dirs, n_dirs, &s, &err);
    free(dirs);
    if (st != SS_OK)
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
    if (a->noise_lo_hz > 0.0 &&
        ss_study_set_noise_band(s, a->noise_lo_hz, a->noise_hi_hz, 0, &err) != SS_OK)
        goto bad;
    if (a->noise_weight && ss_study_set_noise_weight(s, a->noise_weight, &err) != SS_OK)
        goto bad;
    for (int i = 0; i < a->n_varies; i++)
        if (ss_study_add_vary(s, a->varies[i], &err) != SS_OK)
            goto bad;
    for (int i = 0; i < a->n_tols; i++)
        if (ss_study_add_tolerance(s, a->tols[i], &err) != SS_OK)
            goto bad;
    for (int i = 0; i < a->n_matches; i++)
        if (ss_study_add_match(s, a->matches[i], &err) != SS_OK)
            goto bad;
    if (a->limits_path) {
        if (ss_limits_create(lim, &err) != SS_OK ||
            ss_limits_add_file(*lim, a->limits_path, &err) != SS_OK ||
            ss_study_add_limits(s, *lim, &err) != SS_OK)
            goto bad;
    }
    if (ss_study_set_threads(s, a->threads > 0 ? a->threads : ss_cpu_count(), &err) != SS_OK)
        goto bad;
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
    double yield =
        ss_table_lookup(summary, "all_limits", ss_table_col_index(summary, "pass_fraction"));
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
    static const char *const stats[] = {"min", "max", "mean", "std"};
    int n_col = ss_table_col_index(summary, "n");
    int pf_col = ss_table_col_index(summary, "pass_fraction");
    for (int i = 0; i < ss_table_rows(summary); i++) {
        const char *name = ss_table_row_label(summary, i);
        if (strcmp(name, "all_limits") == 0)
            continue;
        printf("  %-24s %8.0f", name, ss_table_get(summary, i, n_col));
        for (int j = 0; j < 4; j++)
            print_figure(ss_table_get(summary, i, ss_table_col_index(summary, stats[j])), name);
        double pf = ss_table_get(summary, i, pf_col);
        if (isnan(pf))
            printf(" %8s\n", "-");
        else
            printf(" %7.2f%%\n", 100.0 * pf);
    }
}

/* For every limited figure some point fails: its worst point and the swept and sampled values
 * there (study_summary.csv's worst_* columns), so a failing run says which combination failed. */
static void print_worst(const ss_table *summary)
{
    int wp = ss_table_col_index(summary, "worst_point");
    if (wp < 0)
        return;
    int pf = ss_table_col_index(summary, "pass_fraction");
    int wv = ss_table_col_index(summary, "worst_value");
    int header = 0;
    for (int i = 0; i < ss_table_rows(summary); i++) {
        const char *name = ss_table_row_label(summary, i);
        double frac = ss_table_get(summary, i, pf);
        if (strcmp(name, "all_limits") == 0 || isnan(frac) || frac >= 1.0)
            continue;
        if (!header++)
            printf("\nworst point of each failing figure\n");
        double v = ss_table_get(summary, i, wv);
        printf("  %-24s point %.0f: ", name, ss_table_get(summary, i, wp));
        if (isnan(v))
            printf("unsolved");
        else
            printf("%.6g", v);
        for (int j = wp + 3; j < ss_table_cols(summary); j++)
            printf("%s %s=%.6g", j == wp + 3 ? " at" : ",", ss_table_col_name(summary, j) + 6,
                   ss_table_get(summary, i, j));
        printf("\n");
    }
}

int cmd_study(const cli_args *a, int spread)
{
    static const char *const names[3] = {"study.csv", "study_summary.csv", "study.svg"};
    const char *path[3];
    ss_outset *set = NULL;
    ss_html *html = NULL;
    const char *html_path = NULL;
    int want_plot = a->plot || a->html; /* the page shows the plot */
    int rc = out_start(a, names, want_plot ? 3 : 2, path, &set);
    if (rc == EXIT_OK)
        rc = html_start(a, set, &html, &html_path);
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    if (rc == EXIT_OK)
        rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_html_destroy(&html);
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
    if (want_plot) {
        char title[512];
        snprintf(title, sizeof title, "%s %s", spread ? "spread" : "sweep", a->netlist);
        if (ss_study_write_plot(pts, ss_study_limits(s), spread, title, path[2], &err) != SS_OK) {
            rc = fail(&err);
            goto done;
        }
    }
    int n_bad = 0, n = ss_table_rows(pts);
    int status_col = ss_table_col_index(pts, "status");
    for (int i = 0; i < n; i++)
        n_bad += ss_table_get(pts, i, status_col) != 0.0;
    if (!a->quiet) {
        printf("%s %s: %d points%s, %d without an operating point\n\n",
               spread ? "spread" : "sweep", a->netlist, n, a->shard_n > 1 ? " (this shard)" : "",
               n_bad);
        print_summary(summary);
        print_worst(summary);
    }
    char warn[160] = "";
    if (n_bad) {
        snprintf(warn, sizeof warn, "%d point%s did not solve (status column; figures left "
                                    "empty)", n_bad, n_bad == 1 ? "" : "s");
        fprintf(stderr, "stagesim: warning: %s\n", warn);
    }
    rc = print_yield(summary, a->min_yield, a->quiet);
    if (html) {
        char note[200], why[120];
        snprintf(note, sizeof note, "%d points%s, %d without an operating point", n,
                 a->shard_n > 1 ? " (this shard)" : "", n_bad);
        snprintf(why, sizeof why, "the yield is below the required %.4g %% (--min-yield)",
                 100.0 * a->min_yield);
        if (ss_html_add_note(html, note, &err) != SS_OK ||
            (n_bad && ss_html_add_warning(html, warn, NULL, &err) != SS_OK) ||
            (rc == EXIT_CHECK_FAILED && ss_html_fail(html, why, &err) != SS_OK) ||
            ss_html_add_study(html, s, pts, summary, &err) != SS_OK ||
            html_finish(html, set, html_path, &err) != 0) {
            rc = fail(&err);
            goto done;
        }
    }
    rc = out_commit(set, rc);
done:
    ss_table_destroy(&pts);
    ss_table_destroy(&summary);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_html_destroy(&html);
    ss_outset_destroy(&set);
    return rc;
}

int cmd_sensitivity(const cli_args *a)
{
    static const char *const names[2] = {"sensitivity.csv", "corners.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    ss_html *html = NULL;
    const char *html_path = NULL;
    int rc = out_start(a, names, 2, path, &set);
    if (rc == EXIT_OK)
        rc = html_start(a, set, &html, &html_path);
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    if (rc == EXIT_OK)
        rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_html_destroy(&html);
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
    }
    /* the columns after temp_c and beta_corner come in threes, one three per transistor kind:
     * current, voltage, in the amplifying region (ss_study_corners) */
    int n_groups = (ss_table_cols(corners) - 2) / 3;
    char cur_head[16] = "I", volt_head[16] = "V", region[64] = "amplifying region";
    if (n_groups == 1) { /* "ic_a" -> "Ic", "vce_v" -> "Vce", "forward_active" */
        snprintf(cur_head, sizeof cur_head, "%s", ss_table_col_name(corners, 2));
        snprintf(volt_head, sizeof volt_head, "%s", ss_table_col_name(corners, 3));
        snprintf(region, sizeof region, "%s", ss_table_col_name(corners, 4));
        char *cut[2] = {strchr(cur_head, '_'), strchr(volt_head, '_')};
        for (int k = 0; k < 2; k++)
            if (cut[k])
                *cut[k] = '\0';
        cur_head[0] = (char)toupper((unsigned char)cur_head[0]);
        volt_head[0] = (char)toupper((unsigned char)volt_head[0]);
        for (char *c = region; *c; c++)
            if (*c == '_')
                *c = ' ';
    }
    char leaves[80];
    snprintf(leaves, sizeof leaves, "LEAVES %s", region);
    for (char *c = leaves; *c; c++)
        *c = (char)toupper((unsigned char)*c);
    if (!a->quiet) {
        printf("\noperating point at the spread and temperature extremes\n");
        printf("  %-36s %12s %12s  %s\n", "transistor and corner", cur_head, volt_head,
               "region");
    }
    int n_out = 0;
    for (int i = 0; i < ss_table_rows(corners); i++) {
        int g = 0; /* the row's kind: the three columns it has values in */
        for (int k = 0; k < n_groups; k++)
            if (!isnan(ss_table_get(corners, i, 4 + 3 * k)))
                g = k;
        double fa = ss_table_get(corners, i, 4 + 3 * g);
        n_out += fa != 1.0;
        char ic[48], vce[48];
        if (!a->quiet)
            printf("  %-36s %12s %12s  %s\n", ss_table_row_label(corners, i),
                   ss_format_eng(ic, sizeof ic, ss_table_get(corners, i, 2 + 3 * g), "A"),
                   ss_format_eng(vce, sizeof vce, ss_table_get(corners, i, 3 + 3 * g), "V"),
                   isnan(fa) ? "NO OPERATING POINT" : fa == 1.0 ? region : leaves);
    }
    for (char *c = region; *c; c++)
        if (*c == ' ')
            *c = '-';
    char warn[160] = "";
    if (n_out) { /* "outside forward-active operation" */
        snprintf(warn, sizeof warn, "%d transistor corner%s outside %s%s (corners.csv)", n_out,
                 n_out == 1 ? "" : "s", n_groups == 1 ? region : "their amplifying region",
                 n_groups == 1 ? " operation" : "");
        fprintf(stderr, "stagesim: warning: %s\n", warn);
    }
    if (html && (ss_html_add_study(html, s, NULL, NULL, &err) != SS_OK ||
                 (n_out && ss_html_add_warning(html, warn, NULL, &err) != SS_OK) ||
                 ss_html_add_note(html, "normalised sensitivities: % change of the figure per % "
                                        "change of the value", &err) != SS_OK ||
                 ss_html_add_table(html, "Sensitivities", sens, 0, &err) != SS_OK ||
                 ss_html_add_table(html, "Operating point at the spread and temperature extremes",
                                   corners, 0, &err) != SS_OK ||
                 html_finish(html, set, html_path, &err) != 0)) {
        rc = fail(&err);
        goto done;
    }
    rc = out_commit(set, EXIT_OK);
done:
    ss_table_destroy(&corners);
    ss_table_destroy(&sens);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_html_destroy(&html);
    ss_outset_destroy(&set);
    return rc;
}

/* ---- merge -------------------------------------------------------------------------------- */

int cmd_merge(const cli_args *a)
{
    if (a->n_shards == 0)
        return usage_error("%s", "merge needs the shard CSV files");
    static const char *const names[2] = {"study.csv", "study_summary.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_start(a, names, 2, path, &set);
    if (rc != EXIT_OK)
        return rc;
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

/* ---- snap: preferred values ------------------------------------------------------------ */

int cmd_snap(const cli_args *a)
{
    if (a->series == 0)
        return usage_error("%s", "snap needs --series E6, E12, E24, E48, E96 or E192");
    static const char *const names[2] = {"snap_values.csv", "snap_figures.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    ss_html *html = NULL;
    const char *html_path = NULL;
    int rc = out_start(a, names, 2, path, &set);
    if (rc == EXIT_OK)
        rc = html_start(a, set, &html, &html_path);
    ss_study *s = NULL;
    ss_limits *lim = NULL;
    if (rc == EXIT_OK)
        rc = make_study(a, &s, &lim);
    if (rc != EXIT_OK) {
        ss_html_destroy(&html);
        ss_outset_destroy(&set);
        return rc;
    }
    ss_error err = {0};
    ss_table *vals = NULL, *figs = NULL;
    ss_snap_opts opts = {a->series, a->cap_series, a->keep};
    int n_failed = 0;
    if (ss_study_note_identity(s, "snap", set, &err) != SS_OK ||
        ss_study_snap_with(s, &opts, &vals, &figs, &n_failed, &err) != SS_OK ||
        write_table(vals, path[0], &err) != 0 || write_table(figs, path[1], &err) != 0) {
        rc = fail(&err);
        goto done;
    }
    int pass_col = ss_table_col_index(figs, "pass");
    if (!a->quiet) {
        if (a->cap_series)
            printf("resistors snapped to E%d, capacitors to E%d", a->series, a->cap_series);
        else
            printf("resistors snapped to E%d", a->series);
        printf("%s%s\n  %-16s %13s %13s %9s\n", a->keep ? "; kept as they are: " : "",
               a->keep ? a->keep : "", "element", "value", "E value", "change");
        int v_col = ss_table_col_index(vals, "value");
        int e_col = ss_table_col_index(vals, "preferred");
        int c_col = ss_table_col_index(vals, "change_pct");
        for (int i = 0; i < ss_table_rows(vals); i++) {
            char v[48], e[48];
            const char *el = ss_table_row_label(vals, i);
            /* an element's first letter is its kind (the netlist's rule): C is a capacitor */
            const char *unit = (el[0] == 'c' || el[0] == 'C') ? "F" : "ohm";
            printf("  %-16s %13s %13s %8.2f%%\n", el,
                   ss_format_eng(v, sizeof v, ss_table_get(vals, i, v_col), unit),
                   ss_format_eng(e, sizeof e, ss_table_get(vals, i, e_col), unit),
                   ss_table_get(vals, i, c_col));
        }
        printf("\nfigures that move\n  %-24s %13s %13s %13s %9s%s\n", "figure", "computed",
               "preferred", "shift", "shift", pass_col >= 0 ? "  limits" : "");
        int fc_col = ss_table_col_index(figs, "computed");
        int fp_col = ss_table_col_index(figs, "preferred");
        int sh_col = ss_table_col_index(figs, "shift");
        int pct_col = ss_table_col_index(figs, "shift_pct");
        for (int i = 0; i < ss_table_rows(figs); i++) {
            double shift = ss_table_get(figs, i, sh_col), pct = ss_table_get(figs, i, pct_col);
            double ok = pass_col >= 0 ? ss_table_get(figs, i, pass_col) : (double)NAN;
            if ((shift == 0.0 || isnan(shift)) && !(ok == 0.0))
                continue;
            const char *name = ss_table_row_label(figs, i);
            const char *at = strchr(name, '@');
            size_t base = at ? (size_t)(at - name) : strlen(name);
            int is_db = base > 3 && strncmp(name + base - 3, "_db", 3) == 0;
            printf("  %-24s", name);
            print_figure(ss_table_get(figs, i, fc_col), name);
            print_figure(ss_table_get(figs, i, fp_col), name);
            print_figure(shift, name);
            /* a dB figure moves by dB, not by a percentage of its dB value */
            if (is_db) /* the shift column is already in dB */
                printf(" %9s", "");
            else if (isnan(pct))
                printf(" %9s", "-");
            else
                printf(" %8.3f%%", pct);
            printf("%s\n", isnan(ok) ? "" : ok == 1.0 ? "  pass" : "  FAIL");
        }
        if (pass_col >= 0)
            printf("\nsnapped circuit against the limits: %s\n",
                   n_failed ? "FAILS" : "every limit passes");
    }
    if (n_failed)
        fprintf(stderr, "stagesim: the snapped circuit fails %d limit%s (snap_figures.csv)\n",
                n_failed, n_failed == 1 ? "" : "s");
    if (html) {
        char head[96];
        if (a->cap_series)
            snprintf(head, sizeof head, "Resistors snapped to E%d, capacitors to E%d", a->series,
                     a->cap_series);
        else
            snprintf(head, sizeof head, "Resistors snapped to E%d", a->series);
        if (ss_html_add_study(html, s, NULL, NULL, &err) != SS_OK ||
            ss_html_add_study_verdicts(html, s, "Limits at the preferred values", figs,
                                       "preferred", &err) != SS_OK ||
            ss_html_add_table(html, head, vals, 0, &err) != SS_OK ||
            ss_html_add_table(html, "Figures at the preferred values", figs, 0, &err) !=
                SS_OK ||
            html_finish(html, set, html_path, &err) != 0) {
            rc = fail(&err);
            goto done;
        }
    }
    rc = out_commit(set, n_failed ? EXIT_CHECK_FAILED : EXIT_OK);
done:
    ss_table_destroy(&vals);
    ss_table_destroy(&figs);
    ss_limits_destroy(&lim);
    ss_study_destroy(&s);
    ss_html_destroy(&html);
    ss_outset_destroy(&set);
    return rc;
}
