/* Small-signal AC sweep: every device linearised at the operating point, one complex KLU
 * refactor + solve per frequency on the pattern analysed once. Stage figures are stage.c's. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/sink.h"
#include "output/output.h"

ss_status ac_frequencies(const ss_solver *sv, double **out_freqs, int *out_n, ss_error *err)
{
    if (!sv->ckt->ac.want)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "the netlist has no .ac sweep");
    double f1 = sv->ckt->ac.fstart_hz, f2 = sv->ckt->ac.fstop_hz;
    double count = ac_point_count(sv->ckt->ac.type, sv->ckt->ac.points, f1, f2);
    if (!(count <= AC_MAX_POINTS))
        return err_set(err, SS_ERR_LIMIT, sv->ckt->file, 0, ".ac: more than %g frequencies",
                       (double)AC_MAX_POINTS);
    int n = (int)count;
    double *f = ss_alloc((size_t)n * sizeof *f);
    if (!f)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int k = 0; k < n; k++) {
        if (sv->ckt->ac.type == AC_LIN)
            f[k] = n == 1 ? f1 : f1 + (f2 - f1) * k / (n - 1);
        else if (sv->ckt->ac.type == AC_DEC)
            f[k] = f1 * pow(10.0, (double)k / sv->ckt->ac.points);
        else
            f[k] = f1 * pow(2.0, (double)k / sv->ckt->ac.points);
    }
    *out_freqs = f;
    *out_n = n;
    return SS_OK;
}

/* Loads every device's AC stamps at omega into the matrix values and sv->work_zrhs. */
static void load_ac_all(ss_solver *sv, double omega, const element *only_src, int all_src_off)
{
    mna *m = sv->mna;
    double complex *G = mna_zvalues(m);
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(sv->work_zrhs, 0, (size_t)sv->n_unknowns * sizeof *sv->work_zrhs);
    dev_ac_ctx ac = {G, sv->work_zrhs, sv->x_op, omega, analysis_vt(sv), sv->ckt->opt.gmin,
                     only_src, all_src_off};
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        e->ops->load_ac(e, &ac);
    }
}

/* Checks once per operating point that every admittance is G + jwC, i.e. the matrix is
 * Y(w) = A0 + jw A1: loads Y(1) and Y(w_test) and compares. When it holds, the slots with
 * A1 = 0 keep their value at every frequency, so only the others are kept (slot, A0, A1) and
 * rewritten per point; the right-hand side of the source selection at hand is kept too. A
 * device whose admittance is not of that form turns the fast path off. Two passes over the
 * elements in all; Y(1) is held only while checking. */
static ss_status ac_cache_build(ss_solver *sv, const element *only_src, int all_src_off,
                                ss_error *err)
{
    mna *m = sv->mna;
    int nnz = mna_nnz(m), n = sv->n_unknowns;
    if (!sv->ac_rhs && !(sv->ac_rhs = ss_alloc((size_t)n * sizeof *sv->ac_rhs)))
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    double complex *y1 = ss_alloc((size_t)nnz * sizeof *y1);
    if (!y1)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    const double complex *G = mna_zvalues(m);
    const double complex *rhs = sv->work_zrhs;
    load_ac_all(sv, 1.0, only_src, all_src_off);
    memcpy(y1, G, (size_t)nnz * sizeof *y1);
    memcpy(sv->ac_rhs, rhs, (size_t)n * sizeof *rhs);
    const double w_test = 2.0 * SS_PI * 12345.678;
    load_ac_all(sv, w_test, only_src, all_src_off);
    int affine = 1, n_w = 0;
    for (int i = 0; i < sv->n_elem && affine; i++) /* one the test may not see (a delay) */
        if (sv->elem[i].ops->ac_not_affine && sv->elem[i].ops->ac_not_affine(&sv->elem[i]))
            affine = 0;
    for (int k = 0; k < nnz && affine; k++) { /* |difference| <= 1e-12 |value|, in L1 norms */
        double d_re = creal(y1[k]) - creal(G[k]), d_im = w_test * cimag(y1[k]) - cimag(G[k]);
        double scale = fabs(creal(G[k])) + fabs(cimag(G[k])) + 1e-300;
        affine = fabs(d_re) + fabs(d_im) <= 1e-12 * scale;
        n_w += cimag(y1[k]) != 0.0;
    }
    for (int u = 0; u < n && affine; u++)
        affine = rhs[u] == sv->ac_rhs[u];
    ss_free(sv->ac_w);
    sv->ac_w = NULL;
    sv->n_ac_w = 0;
    if (affine) {
        sv->ac_w = ss_alloc((size_t)(n_w ? n_w : 1) * sizeof *sv->ac_w);
        if (!sv->ac_w) {
            ss_free(y1);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
        for (int k = 0; k < nnz; k++)
            if (cimag(y1[k]) != 0.0)
                sv->ac_w[sv->n_ac_w++] = (ac_wslot){creal(y1[k]), cimag(y1[k]), k};
    }
    ss_free(y1);
    sv->ac_affine = affine;
    sv->ac_rhs_src = only_src;
    sv->ac_rhs_all_off = all_src_off;
    sv->ac_rhs_ok = 1;
    sv->ac_serial = sv->op_serial;
    return SS_OK;
}

ss_status ac_solve_point(ss_solver *sv, double omega, const element *only_src, int all_src_off,
                         int inject_node, ss_error *err)
{
    mna *m = sv->mna;
    int n = sv->n_unknowns;
    double complex *G = mna_zvalues(m);
    double complex *rhs = sv->work_zrhs;
    ss_status st;
    if (sv->ac_serial != sv->op_serial &&
        (st = ac_cache_build(sv, only_src, all_src_off, err)) != SS_OK)
        return st;
    if (!sv->ac_affine) {
        load_ac_all(sv, omega, only_src, all_src_off);
    } else {
        /* the sources' phasors do not depend on frequency: cache them per selection */
        if (!sv->ac_rhs_ok || sv->ac_rhs_src != (const void *)only_src ||
            sv->ac_rhs_all_off != all_src_off) {
            load_ac_all(sv, 0.0, only_src, all_src_off);
            memcpy(sv->ac_rhs, rhs, (size_t)n * sizeof *rhs);
            sv->ac_rhs_src = only_src;
            sv->ac_rhs_all_off = all_src_off;
            sv->ac_rhs_ok = 1;
        }
        /* every load since the cache build left the other slots at their (frequency-
         * independent) value */
        const ac_wslot *w = sv->ac_w;
        for (int j = 0; j < sv->n_ac_w; j++)
            G[w[j].slot] = w[j].a0 + SS_J * (omega * w[j].a1);
        memcpy(rhs, sv->ac_rhs, (size_t)n * sizeof *rhs);
    }
    if (inject_node > 0)
        rhs[inject_node - 1] += 1.0; /* 1 A into the node */
    int bad;
    double rcond;
    st = mna_solve_complex(m, rhs, &bad, &rcond);
    if (st == SS_ERR_SINGULAR) {
        char during[64];
        snprintf(during, sizeof during, "solving AC at %.6g Hz", omega / (2.0 * SS_PI));
        return report_singular(sv, bad, during, err);
    }
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "AC solve failed: %s", ss_status_name(st));
    if (rcond < MNA_RCOND_WARN)
        solver_warn(sv,
                     "AC: the matrix is nearly singular near %.4g Hz (reciprocal condition "
                     "%.2g); results there may be inaccurate",
                     omega / (2.0 * SS_PI), rcond);
    /* x * 0 is 0 for every finite x and NaN otherwise: one vectorisable sum says whether all
     * is finite, and only then is the culprit looked for */
    const double *rv = (const double *)rhs;
    double probe = 0.0;
    for (int u = 0; u < 2 * n; u++)
        probe += rv[u] * 0.0;
    for (int u = 0; u < n && probe != 0.0; u++) /* probe is 0.0 or NaN */
        if (!isfinite(creal(rhs[u])) || !isfinite(cimag(rhs[u]))) {
            char what[1200];
            solver_unknown_name(sv, u, what, sizeof what);
            return err_set(err, SS_ERR_SINGULAR, sv->ckt->file, 0,
                           "AC solution is not finite at %s (%.6g Hz)", what,
                           omega / (2.0 * SS_PI));
        }
    return SS_OK;
}

/* vm and vp of ac.csv: sqrt of the sum of squares is exact enough here (no node voltage comes
 * near 1e154) and much cheaper than hypot/cabs; the phase in degrees */
static void mag_phase(double complex x, double *mag, double *deg)
{
    double re = creal(x), im = cimag(x);
    *mag = sqrt(re * re + im * im);
    *deg = atan2(im, re) * (180.0 / SS_PI);
}

/* What both forms of the sweep start with: the operating point (solved if missing), the .ac
 * frequencies, and a fresh complex factorization at the first point -- so a sweep gives the
 * same bits whatever was solved before it (refactoring on older pivots rounds differently). */
static ss_status ac_sweep_begin(ss_solver *sv, double **freqs, int *nf, ss_error *err)
{
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    if (sv->mna)
        mna_reset_complex(sv->mna);
    return ac_frequencies(sv, freqs, nf, err);
}

ss_status ss_ac_sweep_emit(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    double *freqs = NULL;
    int nf = 0, n_cols = 0;
    ss_status st = ac_sweep_begin(sv, &freqs, &nf, err);
    if (st != SS_OK)
        return st;
    static const char *const lead[] = {"freq_hz"};
    static const char *const fmts[] = {"vm(%s)", "vp(%s)"};
    const char **names = analysis_col_names(sv, lead, 1, fmts, 2, &n_cols);
    double *row = ss_alloc((size_t)n_cols * sizeof *row);
    if (!names || !row)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK)
        st = sink_begin(sink, n_cols, names, nf, err);
    if (st == SS_OK) {
        for (int k = 0; k < nf && st == SS_OK; k++) {
            st = ac_solve_point(sv, 2.0 * SS_PI * freqs[k], NULL, 0, 0, err);
            if (st != SS_OK)
                break;
            row[0] = freqs[k];
            const double complex *x = sv->work_zrhs;
            for (int j = 0, c = 1; j < solver_n_out_nodes(sv); j++, c += 2)
                mag_phase(x[node_unknown(solver_out_node(sv, j))], &row[c], &row[c + 1]);
            st = sink_row(sink, row, err);
        }
        st = sink_end(sink, st, err);
    }
    ss_free(names);
    ss_free(row);
    ss_free(freqs);
    return st;
}

ss_status ss_ac_sweep_run(ss_solver *sv, ss_table **out_ac, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_ac_sweep_emit(sv, sink, err);
    if (st == SS_OK)
        *out_ac = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}

ss_status ss_ac_sweep_write(ss_solver *sv, const char *path, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_csv(path, &sink, err);
    if (st == SS_OK)
        st = ss_ac_sweep_emit(sv, sink, err);
    ss_sink_destroy(&sink);
    return st;
}
