/* Preferred values: every resistor (and capacitor) but the kept ones snapped to the nearest
 * value of its E-series, the figures solved again to show what the snapping shifts, and the
 * snapped circuit judged against the limits. The series are eseries.c's. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

/* 1 when element name is in the comma list keep (case-insensitive). */
static int kept(const char *keep, const char *name)
{
    size_t n = strlen(name);
    for (const char *p = keep; p && *p;) {
        const char *c = strchr(p, ',');
        size_t len = c ? (size_t)(c - p) : strlen(p);
        if (len == n) {
            size_t i = 0;
            while (i < n && tolower((unsigned char)p[i]) == tolower((unsigned char)name[i]))
                i++;
            if (i == n)
                return 1;
        }
        p = c ? c + 1 : p + len;
    }
    return 0;
}

/* The series element e snaps to: its kind's series, 0 when it stays. */
static int series_of(const ss_snap_opts *o, const element *e)
{
    if (!(e->value > 0.0) || kept(o->keep, e->name))
        return 0;
    return e->ops->letter == 'r' ? o->series_r : e->ops->letter == 'c' ? o->series_c : 0;
}

/* Every name of the keep list is a resistor or capacitor of the circuit. */
static ss_status check_keep(const ss_circuit *nom, const char *keep, ss_error *err)
{
    for (const char *p = keep; p && *p;) {
        const char *c = strchr(p, ',');
        size_t len = c ? (size_t)(c - p) : strlen(p);
        char one[256];
        snprintf(one, sizeof one, "%.*s", (int)(len < sizeof one ? len : sizeof one - 1), p);
        int found = 0;
        for (int i = 0; i < nom->n_elem && !found && len > 0 && len < sizeof one; i++) {
            const element *e = &nom->elem[i];
            found = kept(one, e->name) && (e->ops->letter == 'r' || e->ops->letter == 'c');
        }
        if (!found)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "--keep %.*s: no resistor or capacitor of that name in the circuit",
                           (int)len, p);
        p = c ? c + 1 : p + len;
    }
    return SS_OK;
}

/* The figures table: computed, preferred, shift, shift_pct and (with limits) pass. */
static ss_status shift_table(const ss_table *nfig, const ss_table *sfig, const ss_table *verdicts,
                             ss_table **out, ss_error *err)
{
    static const char *const cols[] = {"computed", "preferred", "shift", "shift_pct", "pass"};
    int n_cols = verdicts ? 5 : 4;
    ss_table *figs = table_create(n_cols, "figure");
    int bad = !figs;
    for (int j = 0; !bad && j < n_cols; j++)
        bad |= table_set_col(figs, j, cols[j]) != 0;
    int pass_col = verdicts ? ss_table_col_index(verdicts, "pass") : -1;
    for (int f = 0; !bad && f < nfig->n_rows; f++) {
        const char *name = nfig->row_labels[f];
        double a = figures_value(nfig, f, name);
        double b = figures_value(sfig, f, name);
        double *row = table_add_row(figs, name);
        if (!row) {
            bad = 1;
            break;
        }
        size_t ln = strlen(name);
        const char *at = strchr(name, '@');
        size_t base = at ? (size_t)(at - name) : ln;
        int is_db = base > 3 && strncmp(name + base - 3, "_db", 3) == 0;
        row[0] = a;
        row[1] = b;
        row[2] = b - a;
        row[3] = a != 0.0 && !is_db ? 100.0 * (b - a) / fabs(a) : SS_NAN;
        for (int r = 0; verdicts && r < verdicts->n_rows; r++)
            if (strcmp(verdicts->row_labels[r], name) == 0) {
                double ok = ss_table_get(verdicts, r, pass_col);
                row[4] = isnan(row[4]) ? ok : fmin(row[4], ok);
            }
    }
    if (bad) {
        ss_table_destroy(&figs);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out = figs;
    return SS_OK;
}

ss_status ss_study_snap_with(ss_study *s, const ss_snap_opts *o, ss_table **out_values,
                             ss_table **out_figures, int *n_failed, ss_error *err)
{
    const int *tab;
    double scale;
    if (o->series_r != 0 && eseries_table(o->series_r, &tab, &scale) == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "unknown series E%d (use E6, E12, E24, E48, E96 or E192)", o->series_r);
    if (o->series_c != 0 && eseries_table(o->series_c, &tab, &scale) == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "unknown capacitor series E%d (use E6, E12, E24, E48, E96 or E192)",
                       o->series_c);
    const ss_circuit *nom = s->nominal;
    ss_status st = check_keep(nom, o->keep, err);
    if (st != SS_OK)
        return st;
    int n_snap = 0;
    for (int i = 0; i < nom->n_elem; i++)
        n_snap += series_of(o, &nom->elem[i]) != 0;
    if (n_snap == 0)
        return err_set(err, SS_ERR_INPUT, nom->file, 0, "no element to snap");
    st = ss_limits_check_names(s->limits, s->nominal_sv, err);
    if (st != SS_OK)
        return st;
    const char **snap_name = ss_alloc((size_t)n_snap * sizeof *snap_name);
    double *snap_value = ss_alloc((size_t)n_snap * sizeof *snap_value);
    ss_table *vals = table_create(4, "element");
    ss_table *nfig = NULL, *sfig = NULL, *figs = NULL, *verdicts = NULL;
    if (!snap_name || !snap_value || !vals || table_set_col(vals, 0, "value") != 0 ||
        table_set_col(vals, 1, "preferred") != 0 || table_set_col(vals, 2, "change_pct") != 0 ||
        table_set_col(vals, 3, "series") != 0)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int k = 0;
    for (int i = 0; st == SS_OK && i < nom->n_elem; i++) {
        const element *e = &nom->elem[i];
        int series = series_of(o, e);
        if (!series)
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
        row[3] = series;
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
    int failed = 0;
    if (st == SS_OK && s->limits && s->limits->n > 0)
        st = ss_check_evaluate(s->limits, sfig, &verdicts, &failed, err);
    if (st == SS_OK)
        st = shift_table(nfig, sfig, verdicts, &figs, err);
    ss_free(snap_name);
    ss_free(snap_value);
    ss_table_destroy(&nfig);
    ss_table_destroy(&sfig);
    ss_table_destroy(&verdicts);
    if (st != SS_OK) {
        ss_table_destroy(&vals);
        ss_table_destroy(&figs);
        return st;
    }
    if (n_failed)
        *n_failed = failed;
    *out_values = vals;
    *out_figures = figs;
    return SS_OK;
}

ss_status ss_study_snap(ss_study *s, int series, const char *kinds, ss_table **out_values,
                        ss_table **out_figures, ss_error *err)
{
    ss_snap_opts o = {strchr(kinds, 'r') ? series : 0, strchr(kinds, 'c') ? series : 0, NULL};
    if (!o.series_r && !o.series_c)
        return err_set(err, SS_ERR_INPUT, s->nominal->file, 0, "no element of kind '%s' to snap",
                       kinds);
    return ss_study_snap_with(s, &o, out_values, out_figures, NULL, err);
}
