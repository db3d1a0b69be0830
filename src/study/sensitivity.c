/* Sensitivities of every figure to every toleranced value, by central differences about the
 * nominal, and the transistors' operating points at the extremes of their kinds' spread
 * parameters (a BJT's BF, a FET's BETA or KP and VTO) and of temperature, each on a context of
 * the nominal circuit with its values changed in place. Solving is runner.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "study/study.h"

ss_status ss_study_sensitivity(ss_study *s, ss_table **out_sens, ss_error *err)
{
    if (s->n_tols == 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "sensitivities need toleranced values: .tolerance lines or --tol");
    ss_table *nom = NULL;
    ss_status st = ss_limits_check_names(s->limits, s->nominal_sv, err);
    ss_solver_reset_values(s->nominal_sv);
    if (st == SS_OK)
        st = ss_figures_compute(s->nominal_sv, s->limits, &nom, err);
    if (st != SS_OK)
        return st;
    ss_table *t = table_create(s->n_tols, "figure");
    int bad = !t;
    for (int j = 0; !bad && j < s->n_tols; j++)
        bad |= table_set_col(t, j, s->tols[j].name) != 0;
    for (int f = 0; !bad && f < nom->n_rows; f++)
        bad |= table_add_row(t, nom->row_labels[f]) == NULL;
    if (bad) {
        ss_table_destroy(&t);
        ss_table_destroy(&nom);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    /* central difference at +-1 % of each nominal value, the others at nominal */
    int saved_dims = s->n_dims;
    s->n_dims = 0;
    double *vals = ss_alloc((size_t)s->n_tols * sizeof *vals);
    ss_solver *sv = NULL;
    if (st == SS_OK && vals)
        st = study_context(s, &sv, err);
    for (int j = 0; vals && sv && j < s->n_tols && st == SS_OK; j++) {
        /* the temperature by its absolute value: +-1 % of the kelvins, per kelvin-relative */
        int is_temp = strcmp(s->tols[j].name, "temp") == 0;
        double off = is_temp ? SS_ZERO_C_IN_K : 0.0;
        double x0 = s->tols[j].nominal + off;
        ss_table *fp = NULL, *fm = NULL;
        for (int k = 0; k < s->n_tols; k++)
            vals[k] = s->tols[k].nominal;
        vals[j] = x0 * 1.01 - off;
        st = study_solve_point(s, sv, vals, s->n_tols, &fp, err);
        vals[j] = x0 * 0.99 - off;
        if (st == SS_OK)
            st = study_solve_point(s, sv, vals, s->n_tols, &fm, err);
        for (int f = 0; st == SS_OK && f < nom->n_rows; f++) {
            double f0 = figures_value(nom, f, nom->row_labels[f]);
            double dp = figures_value(fp, f, nom->row_labels[f]);
            double dm = figures_value(fm, f, nom->row_labels[f]);
            const char *name = nom->row_labels[f];
            size_t ln = strlen(name);
            int is_db = ln > 3 && strcmp(name + ln - 3, "_db") == 0;
            double sens;
            if (is_db) /* of the linear ratio: d(ln G) = d(dB) ln(10) / 20 */
                sens = (dp - dm) * log(10.0) / 20.0 / 0.02;
            else
                sens = f0 != 0.0 ? (dp - dm) / (0.02 * f0) : SS_NAN;
            t->data[(size_t)f * (size_t)t->n_cols + (size_t)j] = x0 != 0.0 ? sens : SS_NAN;
        }
        ss_table_destroy(&fp);
        ss_table_destroy(&fm);
    }
    s->n_dims = saved_dims;
    if (!vals)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ss_solver_destroy(&sv);
    ss_free(vals);
    ss_table_destroy(&nom);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_sens = t;
    return SS_OK;
}

/* ---- spread and temperature extremes ------------------------------------------------------ */

/* One spread parameter of one model: its value at the low-current and high-current extreme. */
typedef struct corner_value {
    char name[160]; /* MODEL.PARAM, as ss_solver_set_value takes it */
    double at[2];   /* [0] the low-current extreme, [1] the high-current one */
} corner_value;

/* Every model's corner parameters (the kind's table, DMP_CORNER) at their extremes: the
 * tolerance limits when the parameter has a tolerance, else the kind's default spread. A --set
 * value is the nominal the default spread is taken from. Returns how many (out may be NULL to
 * count). */
static int corner_values(const ss_study *s, corner_value *out)
{
    const ss_circuit *nom = s->nominal;
    int k = 0;
    for (int m = 0; m < nom->n_models; m++) {
        const model *md = nom->models[m];
        for (int i = 0; i < md->ops->n_model_params; i++) {
            double lo, hi;
            int dir = model_corner_spread(md, i, &lo, &hi);
            if (dir == 0)
                continue;
            if (out) {
                corner_value *cv = &out[k];
                snprintf(cv->name, sizeof cv->name, "%s.%s", md->name,
                         md->ops->model_params[i].name);
                for (int t = 0; t < s->n_tols; t++)
                    if (strcmp(s->tols[t].name, cv->name) == 0) {
                        lo = s->tols[t].lo;
                        hi = s->tols[t].hi;
                    }
                cv->at[0] = dir > 0 ? lo : hi;
                cv->at[1] = dir > 0 ? hi : lo;
            }
            k++;
        }
    }
    return k;
}

#define CORNER_MAX_KINDS 8

/* The kinds with corner names that have an element in the circuit, in the device table's
 * order (the first kind with corner names when the circuit has no transistor, so the file
 * always has its columns), into kinds[], each with its column group in group[]: kinds whose
 * three column names are the same (the JFET's and the MOSFET's) share one. Returns how many
 * kinds; *n_groups the groups. */
static int corner_kinds(const ss_circuit *ckt, const dev_ops **kinds, int *group, int cap,
                        int *n_groups)
{
    int n = 0, first = -1;
    for (int d = 0; d < device_count() && n < cap; d++) {
        const dev_ops *ops = device_at(d);
        if (!ops->corner || !ops->op_point)
            continue;
        if (first < 0)
            first = d;
        for (int i = 0; i < ckt->n_elem; i++)
            if (ckt->elem[i].ops == ops) {
                kinds[n++] = ops;
                break;
            }
    }
    if (n == 0 && first >= 0)
        kinds[n++] = device_at(first);
    *n_groups = 0;
    for (int k = 0; k < n; k++) {
        int g = 0;
        while (g < k && !(strcmp(kinds[g]->corner->current_col, kinds[k]->corner->current_col) ==
                              0 &&
                          strcmp(kinds[g]->corner->voltage_col, kinds[k]->corner->voltage_col) ==
                              0 &&
                          strcmp(kinds[g]->amplifying_region, kinds[k]->amplifying_region) == 0))
            g++;
        group[k] = g < k ? group[g] : (*n_groups)++;
    }
    return n;
}

ss_status ss_study_corners(ss_study *s, double temp_lo_c, double temp_hi_c, ss_table **out,
                           ss_error *err)
{
    if (!temp_in_range(temp_lo_c) || !temp_in_range(temp_hi_c) || !(temp_lo_c < temp_hi_c))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "corner temperatures %g and %g C: need -273.15 < LO < HI <= 1000 C",
                       temp_lo_c, temp_hi_c);
    const ss_circuit *nom = s->nominal;
    const dev_ops *kinds[CORNER_MAX_KINDS];
    int group[CORNER_MAX_KINDS], n_groups;
    int n_kinds = corner_kinds(nom, kinds, group, CORNER_MAX_KINDS, &n_groups);
    int n_cols = 2 + 3 * n_groups;
    ss_table *t = table_create(n_cols, "corner");
    ss_status st = SS_OK;
    if (t && (table_set_col(t, 0, "temp_c") != 0 || table_set_col(t, 1, "beta_corner") != 0))
        st = SS_ERR_NOMEM;
    for (int k = 0; t && st == SS_OK && k < n_kinds; k++) {
        int g = group[k];
        char flag[64];
        snprintf(flag, sizeof flag, "%s", kinds[k]->amplifying_region);
        for (char *c = flag; *c; c++)
            if (*c == ' ')
                *c = '_';
        if (table_set_col(t, 2 + 3 * g, kinds[k]->corner->current_col) != 0 ||
            table_set_col(t, 3 + 3 * g, kinds[k]->corner->voltage_col) != 0 ||
            table_set_col(t, 4 + 3 * g, flag) != 0)
            st = SS_ERR_NOMEM;
    }
    int n_values = corner_values(s, NULL);
    corner_value *cv = ss_alloc((size_t)(n_values + 1) * sizeof *cv);
    ss_solver *sv = NULL;
    if (!t || !cv || st != SS_OK)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK) {
        corner_values(s, cv);
        st = study_context(s, &sv, err);
    }
    const double temps[2] = {temp_lo_c, temp_hi_c};
    for (int bc = 0; st == SS_OK && bc < 2; bc++) {
        for (int tc = 0; st == SS_OK && tc < 2; tc++) {
            ss_error e2 = {0};
            ss_solver_reset_values(sv);
            ss_status pst = SS_OK;
            for (int b = 0; b < n_values && pst == SS_OK; b++)
                pst = ss_solver_set_value(sv, cv[b].name, cv[b].at[bc], &e2);
            if (pst == SS_OK)
                pst = ss_solver_set_temp(sv, temps[tc], &e2);
            if (pst == SS_OK)
                pst = op_solve_into(sv, NULL, &e2);
            for (int i = 0; i < sv->n_elem && st == SS_OK; i++) {
                const element *e = &sv->elem[i];
                int k = 0;
                while (k < n_kinds && kinds[k] != e->ops)
                    k++;
                if (k == n_kinds)
                    continue;
                int g = group[k];
                char label[300];
                snprintf(label, sizeof label, "%s %s %s, %g C", e->name,
                         e->ops->corner->extreme, bc ? "high" : "low", temps[tc]);
                double *row = table_add_row(t, label);
                if (!row) {
                    st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
                    break;
                }
                row[0] = temps[tc];
                row[1] = bc ? 1.0 : -1.0;
                if (pst == SS_OK) {
                    dev_op_point op;
                    e->ops->op_point(e, sv->x_op, analysis_vt(sv), sv->ckt->opt.gmin, &op);
                    row[2 + 3 * g] = op.i_a;
                    row[3 + 3 * g] = op.v_v;
                    row[4 + 3 * g] = op.amplifying;
                }
            }
        }
    }
    ss_solver_destroy(&sv);
    ss_free(cv);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}
