/* Small-signal AC sweep: every device linearised at the operating point, one complex KLU
 * refactor + solve per frequency on the pattern analysed once. Stage figures are stage.c's. */
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/output.h"

ss_status ac_frequencies(const ss_circuit *ckt, double **out_freqs, int *out_n, ss_error *err)
{
    if (!ckt->want_ac)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0, "the netlist has no .ac sweep");
    double f1 = ckt->ac_fstart_hz, f2 = ckt->ac_fstop_hz;
    double count = ac_point_count(ckt->ac_type, ckt->ac_points, f1, f2);
    if (!(count <= AC_MAX_POINTS))
        return err_set(err, SS_ERR_LIMIT, ckt->file, 0, ".ac: more than %g frequencies",
                       (double)AC_MAX_POINTS);
    int n = (int)count;
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

/* Loads every device's AC stamps at omega into the matrix values and ckt->work_zrhs. */
static void load_ac_all(ss_circuit *ckt, double omega, const element *only_src, int all_src_off)
{
    mna *m = ckt->mna;
    double complex *G = mna_zvalues(m);
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(ckt->work_zrhs, 0, (size_t)ckt->n_unknowns * sizeof *ckt->work_zrhs);
    dev_ac_ctx ac = {G, ckt->work_zrhs, ckt->x_op, omega, analysis_vt(ckt), ckt->opt.gmin,
                     only_src, all_src_off};
    for (int i = 0; i < ckt->n_elem; i++) {
        const element *e = &ckt->elem[i];
        e->ops->load_ac(e, &ac);
    }
}

/* Checks once per operating point that every admittance is G + jwC, i.e. the matrix is
 * Y(w) = A0 + jw A1: loads Y(1) and Y(w_test) and compares. When it holds, the slots with
 * A1 = 0 keep their value at every frequency, so only the others are kept (slot, A0, A1) and
 * rewritten per point; the right-hand side of the source selection at hand is kept too. A
 * device whose admittance is not of that form turns the fast path off. Two passes over the
 * elements in all; Y(1) is held only while checking. */
static ss_status ac_cache_build(ss_circuit *ckt, const element *only_src, int all_src_off,
                                ss_error *err)
{
    mna *m = ckt->mna;
    int nnz = mna_nnz(m), n = ckt->n_unknowns;
    if (!ckt->ac_rhs && !(ckt->ac_rhs = ss_alloc((size_t)n * sizeof *ckt->ac_rhs)))
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    double complex *y1 = ss_alloc((size_t)nnz * sizeof *y1);
    if (!y1)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    const double complex *G = mna_zvalues(m);
    const double complex *rhs = ckt->work_zrhs;
    load_ac_all(ckt, 1.0, only_src, all_src_off);
    memcpy(y1, G, (size_t)nnz * sizeof *y1);
    memcpy(ckt->ac_rhs, rhs, (size_t)n * sizeof *rhs);
    const double w_test = 2.0 * SS_PI * 12345.678;
    load_ac_all(ckt, w_test, only_src, all_src_off);
    int affine = 1, n_w = 0;
    for (int k = 0; k < nnz && affine; k++) { /* |difference| <= 1e-12 |value|, in L1 norms */
        double d_re = creal(y1[k]) - creal(G[k]), d_im = w_test * cimag(y1[k]) - cimag(G[k]);
        double scale = fabs(creal(G[k])) + fabs(cimag(G[k])) + 1e-300;
        affine = fabs(d_re) + fabs(d_im) <= 1e-12 * scale;
        n_w += cimag(y1[k]) != 0.0;
    }
    for (int u = 0; u < n && affine; u++)
        affine = rhs[u] == ckt->ac_rhs[u];
    ss_free(ckt->ac_w);
    ckt->ac_w = NULL;
    ckt->n_ac_w = 0;
    if (affine) {
        ckt->ac_w = ss_alloc((size_t)(n_w ? n_w : 1) * sizeof *ckt->ac_w);
        if (!ckt->ac_w) {
            ss_free(y1);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
        for (int k = 0; k < nnz; k++)
            if (cimag(y1[k]) != 0.0)
                ckt->ac_w[ckt->n_ac_w++] = (ac_wslot){creal(y1[k]), cimag(y1[k]), k};
    }
    ss_free(y1);
    ckt->ac_affine = affine;
    ckt->ac_rhs_src = only_src;
    ckt->ac_rhs_all_off = all_src_off;
    ckt->ac_rhs_ok = 1;
    ckt->ac_serial = ckt->op_serial;
    return SS_OK;
}

ss_status ac_solve_point(ss_circuit *ckt, double omega, const element *only_src, int all_src_off,
                         int inject_node, ss_error *err)
{
    mna *m = ckt->mna;
    int n = ckt->n_unknowns;
    double complex *G = mna_zvalues(m);
    double complex *rhs = ckt->work_zrhs;
    ss_status st;
    if (ckt->ac_serial != ckt->op_serial &&
        (st = ac_cache_build(ckt, only_src, all_src_off, err)) != SS_OK)
        return st;
    if (!ckt->ac_affine) {
        load_ac_all(ckt, omega, only_src, all_src_off);
    } else {
        /* the sources' phasors do not depend on frequency: cache them per selection */
        if (!ckt->ac_rhs_ok || ckt->ac_rhs_src != (const void *)only_src ||
            ckt->ac_rhs_all_off != all_src_off) {
            load_ac_all(ckt, 0.0, only_src, all_src_off);
            memcpy(ckt->ac_rhs, rhs, (size_t)n * sizeof *rhs);
            ckt->ac_rhs_src = only_src;
            ckt->ac_rhs_all_off = all_src_off;
            ckt->ac_rhs_ok = 1;
        }
        /* every load since the cache build left the other slots at their (frequency-
         * independent) value */
        const ac_wslot *w = ckt->ac_w;
        for (int j = 0; j < ckt->n_ac_w; j++)
            G[w[j].slot] = w[j].a0 + SS_J * (omega * w[j].a1);
        memcpy(rhs, ckt->ac_rhs, (size_t)n * sizeof *rhs);
    }
    if (inject_node > 0)
        rhs[inject_node - 1] += 1.0; /* 1 A into the node */
    int bad;
    double rcond;
    st = mna_solve_complex(m, rhs, &bad, &rcond);
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
    /* x * 0 is 0 for every finite x and NaN otherwise: one vectorisable sum says whether all
     * is finite, and only then is the culprit looked for */
    const double *rv = (const double *)rhs;
    double probe = 0.0;
    for (int u = 0; u < 2 * n; u++)
        probe += rv[u] * 0.0;
    for (int u = 0; u < n && probe != 0.0; u++) /* probe is 0.0 or NaN */
        if (!isfinite(creal(rhs[u])) || !isfinite(cimag(rhs[u]))) {
            char what[1200];
            circuit_unknown_name(ckt, u, what, sizeof what);
            return err_set(err, SS_ERR_SINGULAR, ckt->file, 0,
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
static ss_status ac_sweep_begin(ss_circuit *ckt, double **freqs, int *nf, ss_error *err)
{
    ss_status st;
    if (!ckt->have_op && (st = op_solve_into(ckt, NULL, err)) != SS_OK)
        return st;
    if (ckt->mna)
        mna_reset_complex(ckt->mna);
    return ac_frequencies(ckt, freqs, nf, err);
}

ss_status ss_ac_sweep_run(ss_circuit *ckt, ss_table **out_ac, ss_error *err)
{
    double *freqs = NULL;
    int nf = 0;
    ss_status st = ac_sweep_begin(ckt, &freqs, &nf, err);
    if (st != SS_OK)
        return st;
    ss_table *t = table_create(1 + 2 * circuit_n_out_nodes(ckt), NULL);
    static const char *const fmts[] = {"vm(%s)", "vp(%s)"};
    int bad = !t || table_set_col(t, 0, "freq_hz") != 0 || analysis_node_cols(t, ckt, 1, fmts, 2);
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
        for (int j = 0, c = 1; j < circuit_n_out_nodes(ckt); j++, c += 2)
            mag_phase(x[node_unknown(circuit_out_node(ckt, j))], &row[c], &row[c + 1]);
    }
    ss_free(freqs);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_ac = t;
    return SS_OK;
}

/* ---- ac.csv written while the sweep runs ------------------------------------------------ */

/* Rows go from the solving thread to a writing thread through AC_RING slots, each holding the
 * written nodes' complex voltages at one frequency: the magnitudes, phases and their text of
 * one point are made while the next point is solved. Below AC_THREAD_MIN values in all the
 * thread is not worth its start and one thread does both. */
#define AC_RING 4
#define AC_THREAD_MIN 100000.0

typedef struct ac_stream {
    pthread_mutex_t mu;
    pthread_cond_t cv;
    double complex *x[AC_RING];
    double freq[AC_RING];
    long produced, consumed;
    int done;
    int n_out;
    csv_out *o;
} ac_stream;

static void ac_stream_row(csv_out *o, double freq, const double complex *x, int n_out)
{
    csv_number(o, freq, 0);
    for (int j = 0; j < n_out; j++) {
        double mag, deg;
        mag_phase(x[j], &mag, &deg);
        csv_number(o, mag, 1);
        csv_number(o, deg, 1);
    }
    csv_char(o, '\n');
}

static void *ac_stream_writer(void *arg)
{
    ac_stream *s = arg;
    for (;;) {
        pthread_mutex_lock(&s->mu);
        while (s->consumed == s->produced && !s->done)
            pthread_cond_wait(&s->cv, &s->mu);
        int have = s->consumed < s->produced;
        pthread_mutex_unlock(&s->mu);
        if (!have)
            return NULL;
        int slot = (int)(s->consumed % AC_RING);
        ac_stream_row(s->o, s->freq[slot], s->x[slot], s->n_out);
        pthread_mutex_lock(&s->mu);
        s->consumed++;
        pthread_cond_broadcast(&s->cv);
        pthread_mutex_unlock(&s->mu);
    }
}

ss_status ss_ac_sweep_write(ss_circuit *ckt, const char *path, ss_error *err)
{
    double *freqs = NULL;
    int nf = 0;
    ss_status st = ac_sweep_begin(ckt, &freqs, &nf, err);
    if (st != SS_OK)
        return st;
    int n_out = circuit_n_out_nodes(ckt);
    ac_stream s;
    memset(&s, 0, sizeof s);
    s.n_out = n_out;
    int ring = (double)nf * n_out >= AC_THREAD_MIN ? AC_RING : 1;
    for (int r = 0; r < ring; r++)
        if (!(s.x[r] = ss_alloc((size_t)(n_out ? n_out : 1) * sizeof *s.x[r])))
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    csv_out o;
    if (st == SS_OK && (st = csv_open(&o, path, err)) == SS_OK) {
        s.o = &o;
        csv_field(&o, "freq_hz");
        for (int j = 0; j < n_out; j++) {
            char name[1200];
            const char *node = ckt->node_name[circuit_out_node(ckt, j)];
            snprintf(name, sizeof name, "vm(%s)", node);
            csv_char(&o, ',');
            csv_field(&o, name);
            snprintf(name, sizeof name, "vp(%s)", node);
            csv_char(&o, ',');
            csv_field(&o, name);
        }
        csv_char(&o, '\n');
        pthread_t writer;
        int threaded = ring > 1;
        if (threaded) {
            pthread_mutex_init(&s.mu, NULL);
            pthread_cond_init(&s.cv, NULL);
            if (pthread_create(&writer, NULL, ac_stream_writer, &s) != 0) {
                pthread_mutex_destroy(&s.mu);
                pthread_cond_destroy(&s.cv);
                threaded = 0;
            }
        }
        for (int k = 0; k < nf && st == SS_OK; k++) {
            st = ac_solve_point(ckt, 2.0 * SS_PI * freqs[k], NULL, 0, 0, err);
            if (st != SS_OK)
                break;
            if (threaded) { /* wait for a free slot */
                pthread_mutex_lock(&s.mu);
                while (s.produced - s.consumed == AC_RING)
                    pthread_cond_wait(&s.cv, &s.mu);
                pthread_mutex_unlock(&s.mu);
            }
            int slot = threaded ? (int)(s.produced % AC_RING) : 0;
            const double complex *x = ckt->work_zrhs;
            for (int j = 0; j < n_out; j++)
                s.x[slot][j] = x[node_unknown(circuit_out_node(ckt, j))];
            s.freq[slot] = freqs[k];
            if (threaded) {
                pthread_mutex_lock(&s.mu);
                s.produced++;
                pthread_cond_broadcast(&s.cv);
                pthread_mutex_unlock(&s.mu);
            } else {
                ac_stream_row(&o, freqs[k], s.x[0], n_out);
            }
        }
        if (threaded) {
            pthread_mutex_lock(&s.mu);
            s.done = 1;
            pthread_cond_broadcast(&s.cv);
            pthread_mutex_unlock(&s.mu);
            pthread_join(writer, NULL);
            pthread_mutex_destroy(&s.mu);
            pthread_cond_destroy(&s.cv);
        }
        if (st == SS_OK)
            st = csv_commit(&o, err);
        else
            csv_abort(&o);
    }
    for (int r = 0; r < ring; r++)
        ss_free(s.x[r]);
    ss_free(freqs);
    return st;
}
