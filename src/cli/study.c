/* stagesim's study commands: sweep, spread, sensitivity (with the corners), snap and merge.
 * The studies themselves run in the library; the output set is common.c's. */
#define _POSIX_C_SOURCE 200809L
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

int cmd_study(const cli_args *a, int spread)
{
    static const char *const names[2] = {"study.csv", "study_summary.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_start(a, names, 2, path, &set);
    if (rc != EXIT_OK)
        return rc;
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
    int status_col = ss_table_col_index(pts, "status");
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

int cmd_sensitivity(const cli_args *a)
{
    static const char *const names[2] = {"sensitivity.csv", "corners.csv"};
    const char *path[2];
    ss_outset *set = NULL;
    int rc = out_start(a, names, 2, path, &set);
    if (rc != EXIT_OK)
        return rc;
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
    int ic_col = ss_table_col_index(corners, "ic_a");
    int vce_col = ss_table_col_index(corners, "vce_v");
    int fa_col = ss_table_col_index(corners, "forward_active");
    for (int i = 0; i < ss_table_rows(corners); i++) {
        double fa = ss_table_get(corners, i, fa_col);
        n_out += fa != 1.0;
        char ic[48], vce[48];
        if (!a->quiet)
            printf("  %-36s %12s %12s  %s\n", ss_table_row_label(corners, i),
                   ss_format_eng(ic, sizeof ic, ss_table_get(corners, i, ic_col), "A"),
                   ss_format_eng(vce, sizeof vce, ss_table_get(corners, i, vce_col), "V"),
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
    int rc = out_start(a, names, 2, path, &set);
    if (rc != EXIT_OK)
        return rc;
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
        int v_col = ss_table_col_index(vals, "value");
        int e_col = ss_table_col_index(vals, "preferred");
        int c_col = ss_table_col_index(vals, "change_pct");
        for (int i = 0; i < ss_table_rows(vals); i++) {
            char v[48], e[48];
            printf("  %-16s %13s %13s %8.2f%%\n", ss_table_row_label(vals, i),
                   ss_format_eng(v, sizeof v, ss_table_get(vals, i, v_col), "ohm"),
                   ss_format_eng(e, sizeof e, ss_table_get(vals, i, e_col), "ohm"),
                   ss_table_get(vals, i, c_col));
        }
        printf("\nfigures that move\n  %-24s %13s %13s %13s %9s\n", "figure", "computed",
               "preferred", "shift", "shift");
        int fc_col = ss_table_col_index(figs, "computed");
        int fp_col = ss_table_col_index(figs, "preferred");
        int sh_col = ss_table_col_index(figs, "shift");
        int pct_col = ss_table_col_index(figs, "shift_pct");
        for (int i = 0; i < ss_table_rows(figs); i++) {
            double shift = ss_table_get(figs, i, sh_col), pct = ss_table_get(figs, i, pct_col);
            if (shift == 0.0 || isnan(shift))
                continue;
            const char *fig = ss_table_row_label(figs, i);
            printf("  %-24s", fig);
            print_figure(ss_table_get(figs, i, fc_col), fig);
            print_figure(ss_table_get(figs, i, fp_col), fig);
            print_figure(shift, fig);
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
