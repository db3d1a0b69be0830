/* Study statistics: per figure of a points table its count, range, mean, spread and the
 * fraction of points within its limit, and the yield over all limits. Running is runner.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

/* The first figure column of a points table: right after `status`. */
int study_first_figure_col(const ss_table *pts)
{
    int status_col = ss_table_col_index(pts, "status");
    if (status_col < 0)
        return -1;
    /* a judged run's `pass` column (limits given) follows `status` */
    return status_col + 1 < pts->n_cols && strcmp(pts->col_names[status_col + 1], "pass") == 0
               ? status_col + 2
               : status_col + 1;
}

/* The distance of v to the nearest bound of every limit on its figure, lim[0 .. n_lim-1]:
 * negative when v fails one of them; -HUGE_VAL for a point without a value (unsolved). */
static double figure_margin(double v, const limit *const *lim, int n_lim)
{
    if (isnan(v))
        return -HUGE_VAL;
    double m = HUGE_VAL;
    for (int k = 0; k < n_lim; k++)
        m = fmin(m, fmin(v - lim[k]->lo, lim[k]->hi - v));
    return m;
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
                           l->items[k].quantity);
    }
    int status_col = ss_table_col_index(pts, "status");
    /* with limits: per limited figure its worst point (the smallest margin to its limits),
     * that point's value, margin and the swept and sampled values there (the columns between
     * `point` and `status`) */
    int limited = l && l->n > 0;
    int n_varied = status_col - 1;
    int n_cols = 6 + (limited ? 3 + n_varied : 0);
    static const char *const cols[] = {"n",           "min",         "max",         "mean",
                                       "std",         "pass_fraction", "worst_point", "worst_value",
                                       "worst_margin"};
    ss_table *t = table_create(n_cols, "figure");
    int bad = !t;
    for (int j = 0; !bad && j < (limited ? 9 : 6); j++)
        bad |= table_set_col(t, j, cols[j]) != 0;
    for (int v = 0; !bad && limited && v < n_varied; v++) {
        char name[300];
        snprintf(name, sizeof name, "worst_%s", pts->col_names[1 + v]);
        bad |= table_set_col(t, 9 + v, name) != 0;
    }
    /* a point passes all limits when it converged and every limited figure is in range */
    long n_pass_all = 0, n_points = pts->n_rows;
    unsigned char *fails = ss_alloc((size_t)(n_points ? n_points : 1));
    const limit **lims = ss_alloc((size_t)(limited ? l->n : 1) * sizeof *lims);
    bad |= !fails || !lims;
    for (int j = f0; !bad && j < pts->n_cols; j++) {
        const char *name = pts->col_names[j];
        int n_lim = 0;
        for (int k = 0; limited && k < l->n; k++)
            if (strcmp(l->items[k].quantity, name) == 0)
                lims[n_lim++] = &l->items[k];
        /* Welford's running mean and variance (numerically stable) */
        double n = 0, mean = 0, m2 = 0, mn = HUGE_VAL, mx = -HUGE_VAL;
        long pass = 0, worst = -1;
        double worst_margin = HUGE_VAL;
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
            if (n_lim) {
                double m = figure_margin(v, lims, n_lim);
                int in = m >= 0.0;
                pass += in;
                if (!in)
                    fails[i] = 1;
                if (worst < 0 || m < worst_margin) {
                    worst = i;
                    worst_margin = m;
                }
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
        row[5] = n_lim && n_points > 0 ? (double)pass / (double)n_points : SS_NAN;
        if (worst >= 0) {
            const double *w = pts->data + (size_t)worst * (size_t)pts->n_cols;
            row[6] = w[0];
            row[7] = w[j];
            row[8] = isinf(worst_margin) ? SS_NAN : worst_margin;
            for (int v = 0; v < n_varied; v++)
                row[9 + v] = w[1 + v];
        }
    }
    if (!bad && limited) {
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
    ss_free(lims);
    if (bad) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out_summary = t;
    return SS_OK;
}
