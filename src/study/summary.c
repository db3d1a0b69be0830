/* Study statistics: per figure of a points table its count, range, mean, spread and the
 * fraction of points within its limit, and the yield over all limits. Running is runner.c's. */
#include <math.h>
#include <string.h>

#include "study/study.h"

/* The first figure column of a points table: right after `status`. */
int study_first_figure_col(const ss_table *pts)
{
    int status_col = ss_table_col_index(pts, "status");
    return status_col < 0 ? -1 : status_col + 1;
}

ss_status ss_study_summarize(const ss_table *pts, const ss_limits *l, ss_table **out_summary,
                             ss_error *err)
{
    int f0 = study_first_figure_col(pts);
    if (f0 < 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "not a study points table (no status column)");
    /* a limit on a figure the table does not have would pass every point unseen */
    for (int k = 0; l && k < l->n; k++) {
        int found = 0;
        for (int j = f0; j < pts->n_cols && !found; j++)
            found = strcmp(pts->col_names[j], l->items[k].quantity) == 0;
        if (!found)
            return err_set(err, SS_ERR_INPUT, l->items[k].file, l->items[k].line,
                           "limit on '%s': the points have no such figure (a typo, or a figure "
                           "this study did not compute)",
                           l->items[k].label);
    }
    static const char *const cols[] = {"n", "min", "max", "mean", "std", "pass_fraction"};
    ss_table *t = table_create(6, "figure");
    int bad = !t;
    for (int j = 0; !bad && j < 6; j++)
        bad |= table_set_col(t, j, cols[j]) != 0;
    /* a point passes all limits when it converged and every limited figure is in range */
    long n_pass_all = 0, n_points = pts->n_rows;
    unsigned char *fails = ss_alloc((size_t)(n_points ? n_points : 1));
    const limit **on_fig = ss_alloc((size_t)(l && l->n ? l->n : 1) * sizeof *on_fig);
    bad |= !fails || !on_fig;
    for (int j = f0; !bad && j < pts->n_cols; j++) {
        const char *name = pts->col_names[j];
        /* every limit on this figure counts (a plain one and an abs(...) one may share it) */
        int has_lim = 0;
        for (int k = 0; l && k < l->n; k++)
            if (strcmp(l->items[k].quantity, name) == 0)
                on_fig[has_lim++] = &l->items[k];
        /* Welford's running mean and variance (numerically stable) */
        double n = 0, mean = 0, m2 = 0, mn = HUGE_VAL, mx = -HUGE_VAL;
        long pass = 0;
        for (long i = 0; i < n_points; i++) {
            double v = pts->data[(size_t)i * (size_t)pts->n_cols + (size_t)j];
            int ok = !isnan(v);
            if (ok) {
                n += 1.0;
                double d = v - mean;
                mean += d / n;
                m2 += d * (v - mean);
                mn = fmin(mn, v);
                mx = fmax(mx, v);
            }
            if (has_lim) {
                int in = ok;
                for (int k = 0; in && k < has_lim; k++) {
                    double m = on_fig[k]->magnitude ? fabs(v) : v; /* abs(...): magnitude */
                    in = m >= on_fig[k]->lo && m <= on_fig[k]->hi;
                }
                pass += in;
                if (!in)
                    fails[i] = 1;
            }
        }
        double *row = table_add_row(t, name);
        if (!row) {
            bad = 1;
            break;
        }
        row[0] = n;
        row[1] = n > 0 ? mn : SS_NAN;
        row[2] = n > 0 ? mx : SS_NAN;
        row[3] = n > 0 ? mean : SS_NAN;
        row[4] = n > 1 ? sqrt(m2 / (n - 1.0)) : SS_NAN;
        row[5] = has_lim && n_points > 0 ? (double)pass / (double)n_points : SS_NAN;
    }
    if (!bad && l && l->n > 0) {
        int status_col = f0 - 1;
        for (long i = 0; i < n_points; i++)
            n_pass_all += !fails[i] &&
                          pts->data[(size_t)i * (size_t)pts->n_cols + (size_t)status_col] == 0.0;
        double *row = table_add_row(t, "all_limits");
        if (!row)
            bad = 1;
        else {
            row[0] = (double)n_points;
            row[5] = n_points > 0 ? (double)n_pass_all / (double)n_points : SS_NAN;
        }
    }
    ss_free(fails);
    ss_free(on_fig);
    if (bad) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out_summary = t;
    return SS_OK;
}
