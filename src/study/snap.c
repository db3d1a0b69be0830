/* Preferred values: every element of the chosen kinds snapped to the nearest E-series value,
 * and the figures solved again to show what the snapping shifts. The series are eseries.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

ss_status ss_study_snap(ss_study *s, int series, const char *kinds, ss_table **out_values,
                        ss_table **out_figures, ss_error *err)
{
    const int *tab;
    double scale;
    if (eseries_table(series, &tab, &scale) == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "unknown series E%d (use E6, E12, E24, E48, E96 or E192)", series);
    const ss_circuit *nom = s->nominal;
    int n_snap = 0;
    for (int i = 0; i < nom->n_elem; i++)
        n_snap += strchr(kinds, nom->elem[i].ops->letter) != NULL && nom->elem[i].value > 0.0;
    if (n_snap == 0)
        return err_set(err, SS_ERR_INPUT, nom->file, 0, "no element of kind '%s' to snap", kinds);
    ss_status lst = ss_limits_check_names(s->limits, s->nominal_sv, err);
    if (lst != SS_OK)
        return lst;
    const char **snap_name = ss_alloc((size_t)n_snap * sizeof *snap_name);
    double *snap_value = ss_alloc((size_t)n_snap * sizeof *snap_value);
    ss_table *vals = table_create(3, "element");
    ss_table *nfig = NULL, *sfig = NULL, *figs = NULL;
    ss_status st = SS_OK;
    if (!snap_name || !snap_value || !vals || table_set_col(vals, 0, "value") != 0 ||
        table_set_col(vals, 1, "preferred") != 0 || table_set_col(vals, 2, "change_pct") != 0)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int k = 0;
    for (int i = 0; st == SS_OK && i < nom->n_elem; i++) {
        const element *e = &nom->elem[i];
        if (!strchr(kinds, e->ops->letter) || !(e->value > 0.0))
            continue;
        double p;
        st = ss_eseries_nearest(series, e->value, &p, err);
        double *row = st == SS_OK ? table_add_row(vals, e->name) : NULL;
        if (st == SS_OK && !row)
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        if (st != SS_OK)
            break;
        row[0] = e->value;
        row[1] = p;
        row[2] = 100.0 * (p / e->value - 1.0);
        snap_name[k] = e->name;
        snap_value[k] = p;
        k++;
    }
    if (st == SS_OK) {
        ss_solver_reset_values(s->nominal_sv);
        st = ss_figures_compute(s->nominal_sv, s->limits, &nfig, err);
    }
    if (st == SS_OK) {
        /* an element given with --set is snapped from its --set value and takes the snapped
         * one; the other --set values stay (the nominal circuit has them) */
        ss_solver *sv = NULL;
        st = study_context(s, &sv, err);
        for (int j = 0; st == SS_OK && j < k; j++)
            st = ss_solver_set_value(sv, snap_name[j], snap_value[j], err);
        if (st == SS_OK)
            st = ss_figures_compute(sv, s->limits, &sfig, err);
        ss_solver_destroy(&sv);
    }
    if (st == SS_OK) {
        static const char *const cols[] = {"computed", "preferred", "shift", "shift_pct"};
        figs = table_create(4, "figure");
        for (int j = 0; figs && j < 4; j++)
            if (table_set_col(figs, j, cols[j]) != 0)
                st = SS_ERR_NOMEM;
        for (int f = 0; figs && st == SS_OK && f < nfig->n_rows; f++) {
            double a = figures_value(nfig, f, nfig->row_labels[f]);
            double b = figures_value(sfig, f, nfig->row_labels[f]);
            double *row = table_add_row(figs, nfig->row_labels[f]);
            if (!row) {
                st = SS_ERR_NOMEM;
                break;
            }
            row[0] = a;
            row[1] = b;
            row[2] = b - a;
            row[3] = a != 0.0 ? 100.0 * (b - a) / fabs(a) : SS_NAN;
        }
        if (!figs || st != SS_OK)
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    ss_free(snap_name);
    ss_free(snap_value);
    ss_table_destroy(&nfig);
    ss_table_destroy(&sfig);
    if (st != SS_OK) {
        ss_table_destroy(&vals);
        ss_table_destroy(&figs);
        return st;
    }
    *out_values = vals;
    *out_figures = figs;
    return SS_OK;
}
