/* Small-signal AC sweep: every device linearised at the operating point, one complex KLU
 * refactor + solve per frequency on the pattern analysed once. Stage figures are stage.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"

ss_status ac_frequencies(const ss_circuit *ckt, double **out_freqs, int *out_n, ss_error *err)
{
    if (!ckt->want_ac)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0, "the netlist has no .ac sweep");
    double f1 = ckt->ac_fstart_hz, f2 = ckt->ac_fstop_hz;
    int n;
    if (ckt->ac_type == AC_LIN) {
        n = ckt->ac_points;
    } else {
        double per = ckt->ac_type == AC_DEC ? log10(f2 / f1) : log2(f2 / f1);
        n = (int)floor(per * ckt->ac_points + 1e-9) + 1;
    }
    if (n > 10000000)
        return err_set(err, SS_ERR_LIMIT, ckt->file, 0, ".ac: more than 1e7 frequencies");
    double *f = ss_alloc((size_t)n * sizeof *f);
    if (!f)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int k = 0; k < n; k++) {
        if (ckt->ac_type == AC_LIN)
            f[k] = n == 1 ? f1 : f1 + (f2 - f1) * k / (n - 1);
        else if (ckt->ac_type == AC_DEC)
            f[k] = f1 * pow(10.0, (double)k / ckt->ac_points);
        else
            f[k] = f1 * pow(2.0, (double)k / ckt->ac_points);
    }
    *out_freqs = f;
    *out_n = n;
    return SS_OK;
}

ss_status ac_solve_point(ss_circuit *ckt, double omega, const element *only_src, int all_src_off,
                         int inject_node, ss_error *err)
{
    mna *m = ckt->mna;
    int n = ckt->n_unknowns;
    double complex *G = mna_zvalues(m);
    double complex *rhs = ckt->work_zrhs;
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(rhs, 0, (size_t)n * sizeof *rhs);
    dev_ac_ctx ac = {G, rhs, ckt->x_op, omega, analysis_vt(ckt), ckt->opt.gmin, only_src,
                     all_src_off};
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        e->ops->load_ac(e, &ac);
    }
    if (inject_node > 0)
        rhs[inject_node - 1] += 1.0; /* 1 A into the node */
    int bad;
    double rcond;
    ss_status st = mna_solve_complex(m, rhs, &bad, &rcond);
    if (st == SS_ERR_SINGULAR) {
        char during[64];
        snprintf(during, sizeof during, "solving AC at %.6g Hz", omega / (2.0 * SS_PI));
        return report_singular(ckt, bad, during, err);
    }
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "AC solve failed: %s", ss_status_name(st));
    if (rcond < MNA_RCOND_WARN)
        circuit_warn(ckt,
                     "AC: the matrix is nearly singular near %.4g Hz (reciprocal condition "
                     "%.2g); results there may be inaccurate",
                     omega / (2.0 * SS_PI), rcond);
    for (int u = 0; u < n; u++)
        if (!isfinite(creal(rhs[u])) || !isfinite(cimag(rhs[u]))) {
            char what[1200];
            circuit_unknown_name(ckt, u, what, sizeof what);
            return err_set(err, SS_ERR_SINGULAR, ckt->file, 0,
                           "AC solution is not finite at %s (%.6g Hz)", what,
                           omega / (2.0 * SS_PI));
        }
    return SS_OK;
}

ss_status ss_ac_sweep_run(ss_circuit *ckt, ss_table **out_ac, ss_error *err)
{
    ss_status st;
    if (!ckt->have_op && (st = op_solve_into(ckt, NULL, err)) != SS_OK)
        return st;
    double *freqs = NULL;
    int nf = 0;
    if ((st = ac_frequencies(ckt, &freqs, &nf, err)) != SS_OK)
        return st;
    int n_user = 0;
    for (int node = 1; node < ckt->n_nodes; node++)
        n_user += !ckt->node_internal[node];
    ss_table *t = table_create(1 + 2 * n_user, NULL);
    int bad = !t || table_set_col(t, 0, "freq_hz") != 0;
    for (int node = 1, c = 1; !bad && node < ckt->n_nodes; node++) {
        if (ckt->node_internal[node])
            continue;
        char name[1200];
        snprintf(name, sizeof name, "vm(%s)", ckt->node_name[node]);
        bad |= table_set_col(t, c++, name);
        snprintf(name, sizeof name, "vp(%s)", ckt->node_name[node]);
        bad |= table_set_col(t, c++, name);
    }
    if (bad || table_reserve(t, nf) != 0) {
        ss_free(freqs);
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (int k = 0; k < nf; k++) {
        st = ac_solve_point(ckt, 2.0 * SS_PI * freqs[k], NULL, 0, 0, err);
        if (st != SS_OK)
            break;
        double *row = table_add_row(t, NULL);
        row[0] = freqs[k];
        const double complex *x = ckt->work_zrhs;
        for (int node = 1, c = 1; node < ckt->n_nodes; node++) {
            if (ckt->node_internal[node])
                continue;
            double complex v = x[node - 1];
            row[c++] = cabs(v);
            row[c++] = carg(v) * 180.0 / SS_PI;
        }
    }
    ss_free(freqs);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_ac = t;
    return SS_OK;
}
