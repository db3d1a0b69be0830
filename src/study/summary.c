/* Study statistics: per figure of a points table its count, range, mean, spread and the
 * fraction of points within its limit, and the yield over all limits. Running is runner.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "output/svg.h"
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
    for (int k = 0; k < n_lim; k++) {
        double x = limit_judged(lim[k], v);
        m = fmin(m, fmin(x - lim[k]->lo, lim[k]->hi - x));
    }
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
                           l->items[k].label);
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

/* ---- plots ------------------------------------------------------------------------------ */

#define PLOT_MAX_PANELS 40
#define PLOT_MAX_CURVES 64

/* 1 when the distinct values of x (in the order met) are spaced evenly in log, not in lin. */
static int looks_log(const double *x, int n)
{
    double d[3];
    int k = 0;
    for (int i = 0; i < n && k < 3; i++) {
        int seen = 0;
        for (int j = 0; j < k; j++)
            seen |= d[j] == x[i];
        if (!seen)
            d[k++] = x[i];
    }
    if (k < 3 || !(d[0] > 0.0 && d[1] > 0.0 && d[2] > 0.0))
        return 0;
    double r1 = d[1] / d[0], r2 = d[2] / d[1];
    return fabs(r1 - r2) < 1e-6 * r1 && fabs((d[1] - d[0]) - (d[2] - d[1])) > 1e-6 * fabs(d[1] - d[0]);
}

ss_status ss_study_write_plot(const ss_table *pts, const ss_limits *l, int histogram,
                              const char *title, const char *path, ss_error *err)
{
    int f0 = study_first_figure_col(pts);
    int status_col = ss_table_col_index(pts, "status");
    if (f0 < 0 || status_col < 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "not a study points table (no status column)");
    int n = pts->n_rows, nc = pts->n_cols;
    if (n < 1)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "study plot: no points");
    if (!histogram && status_col < 2)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "study plot: no swept value to plot over");
    int limited = l && l->n > 0;
    svg_study_panel *panels = ss_alloc(PLOT_MAX_PANELS * sizeof *panels);
    double *vals = ss_alloc((size_t)PLOT_MAX_PANELS * (size_t)n * sizeof *vals);
    double *x = ss_alloc((size_t)n * sizeof *x);
    int *curve = ss_alloc((size_t)n * sizeof *curve);
    if (!panels || !vals || !x || !curve) {
        ss_free(panels);
        ss_free(vals);
        ss_free(x);
        ss_free(curve);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    /* the figures with limits; without limits, every figure that moves */
    int np = 0;
    for (int j = f0; j < nc && np < PLOT_MAX_PANELS; j++) {
        svg_study_panel *p = &panels[np];
        p->figure = pts->col_names[j];
        p->lo = -HUGE_VAL;
        p->hi = HUGE_VAL;
        p->has_limit = 0;
        /* a band on the magnitude (abs(...)) is not a band on the plotted signed values */
        for (int k = 0; limited && k < l->n; k++)
            if (strcmp(l->items[k].quantity, p->figure) == 0 && !l->items[k].magnitude) {
                p->lo = fmax(p->lo, l->items[k].lo);
                p->hi = fmin(p->hi, l->items[k].hi);
                p->has_limit = 1;
            }
        double *v = vals + (size_t)np * (size_t)n, mn = HUGE_VAL, mx = -HUGE_VAL;
        for (int i = 0; i < n; i++) {
            v[i] = pts->data[(size_t)i * (size_t)nc + (size_t)j];
            if (!isnan(v[i])) {
                mn = fmin(mn, v[i]);
                mx = fmax(mx, v[i]);
            }
        }
        p->v = v;
        if (limited ? p->has_limit : mx > mn)
            np++;
    }
    /* sweeps: over the first swept value, one curve per combination of the others */
    int n_curves = 0, curve_first[PLOT_MAX_CURVES];
    for (int i = 0; !histogram && i < n; i++) {
        const double *row = pts->data + (size_t)i * (size_t)nc;
        x[i] = row[1];
        curve[i] = -1;
        for (int c = 0; c < n_curves && curve[i] < 0; c++) {
            const double *r0 = pts->data + (size_t)curve_first[c] * (size_t)nc;
            int same = 1;
            for (int d = 2; d < status_col && same; d++)
                same = r0[d] == row[d];
            if (same)
                curve[i] = c;
        }
        if (curve[i] < 0 && n_curves < PLOT_MAX_CURVES) {
            curve_first[n_curves] = i;
            curve[i] = n_curves++;
        }
    }
    /* each curve named by its other swept values ("ss_npn.bf=200") */
    char label_buf[8][128];
    const char *labels[8];
    for (int c = 0; c < n_curves && c < 8; c++) {
        const double *r0 = pts->data + (size_t)curve_first[c] * (size_t)nc;
        size_t used = 0;
        label_buf[c][0] = '\0';
        for (int d = 2; d < status_col && used < sizeof label_buf[c]; d++)
            used += (size_t)snprintf(label_buf[c] + used, sizeof label_buf[c] - used, "%s%s=%.4g",
                                     d > 2 ? " " : "", pts->col_names[d], r0[d]);
        labels[c] = label_buf[c];
    }
    svg_study_input in = {title,         histogram, x,     histogram ? NULL : pts->col_names[1],
                          !histogram && looks_log(x, n), curve, n_curves,
                          n_curves <= 8 ? labels : NULL, n, panels, np};
    ss_status st = np == 0 ? err_set(err, SS_ERR_INPUT, NULL, 0,
                                      "study plot: no figure to plot (no limits, and no "
                                      "figure varies)")
                           : svg_write_study(path, &in, err);
    ss_free(panels);
    ss_free(vals);
    ss_free(x);
    ss_free(curve);
    return st;
}
