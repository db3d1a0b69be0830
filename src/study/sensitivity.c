/* Sensitivities of every figure to every toleranced value, by central differences about the
 * nominal, and the BJT operating points at beta and temperature extremes, each on a context of
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

/* ---- beta and temperature extremes -------------------------------------------------------- */

ss_status ss_study_corners(ss_study *s, double temp_lo_c, double temp_hi_c, ss_table **out,
                           ss_error *err)
{
    if (!temp_in_range(temp_lo_c) || !temp_in_range(temp_hi_c) || !(temp_lo_c < temp_hi_c))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "corner temperatures %g and %g C: need -273.15 < LO < HI <= 1000 C",
                       temp_lo_c, temp_hi_c);
    const ss_circuit *nom = s->nominal;
    /* every BJT model's BF at its toleranced extremes, or halved / doubled (beta spreads 2-3x
     * within one type: common practice) */
    int n_models = 0;
    for (int m = 0; m < nom->n_models; m++)
        n_models += model_corner_param(nom->models[m]) >= 0;
    static const char *const cols[] = {"temp_c", "beta_corner", "ic_a", "vce_v", "forward_active"};
    ss_table *t = table_create(5, "corner");
    ss_status st = SS_OK;
    for (int j = 0; t && j < 5; j++)
        if (table_set_col(t, j, cols[j]) != 0)
            st = SS_ERR_NOMEM;
    char(*names)[160] = ss_alloc((size_t)(n_models + 1) * sizeof *names);
    double *beta = ss_alloc((size_t)(n_models + 1) * sizeof *beta);
    ss_solver *sv = NULL;
    if (!t || !names || !beta || st != SS_OK)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK)
        st = study_context(s, &sv, err);
    const double temps[2] = {temp_lo_c, temp_hi_c};
    for (int bc = 0; st == SS_OK && bc < 2; bc++) {
        int k = 0;
        for (int m = 0; m < nom->n_models; m++) {
            const model *md = nom->models[m];
            int cp = model_corner_param(md);
            if (cp < 0)
                continue;
            snprintf(names[k], sizeof names[k], "%s.%s", md->name,
                     md->ops->model_params[cp].name);
            double bf = md->p[cp]; /* a --set BF is the nominal the corners are taken from */
            double v = bc == 0 ? bf * 0.5 : bf * 2.0;
            for (int i = 0; i < s->n_tols; i++)
                if (strcmp(s->tols[i].name, names[k]) == 0)
                    v = bc == 0 ? s->tols[i].lo : s->tols[i].hi;
            beta[k++] = v;
        }
        for (int tc = 0; st == SS_OK && tc < 2; tc++) {
            ss_error e2 = {0};
            ss_solver_reset_values(sv);
            ss_status pst = SS_OK;
            for (int b = 0; b < k && pst == SS_OK; b++)
                pst = ss_solver_set_value(sv, names[b], beta[b], &e2);
            if (pst == SS_OK)
                pst = ss_solver_set_temp(sv, temps[tc], &e2);
            if (pst == SS_OK)
                pst = op_solve_into(sv, NULL, &e2);
            for (int i = 0; i < sv->n_elem && st == SS_OK; i++) {
                const element *e = &sv->elem[i];
                if (!e->ops->op_point)
                    continue;
                char label[300];
                snprintf(label, sizeof label, "%s beta %s, %g C", e->name, bc ? "high" : "low",
                         temps[tc]);
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
                    row[2] = op.i_a;
                    row[3] = op.v_v;
                    row[4] = op.amplifying;
                }
            }
        }
    }
    ss_solver_destroy(&sv);
    ss_free(beta);
    ss_free(names);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}
