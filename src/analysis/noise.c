/* Noise analysis over the .ac frequencies: every element's noise currents (the devices' noise
 * op) carried to the output by one adjoint (transposed) solve per frequency, then input
 * referral, band integration, noise figure and ranked contributions. The device noise models
 * are the devices' own; docs/noise.md has every definition used here. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/sink.h"

ss_status noise_collect_sources(const ss_solver *sv, noise_src **out_src, int *out_n,
                                ss_error *err)
{
    dev_noise_ctx nc = {sv->x_op, sv->temp_c + SS_ZERO_C_IN_K, analysis_vt(sv), sv->ckt->opt.gmin};
    dev_noise_src buf[DEV_MAX_NOISE_SRC];
    int n = 0;
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (e->ops->noise)
            n += e->ops->noise(e, &nc, buf);
    }
    noise_src *s = NULL;
    if (n > 0) {
        s = ss_alloc((size_t)n * sizeof *s);
        if (!s)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        int k = 0;
        for (int i = 0; i < sv->n_elem; i++) {
            const element *e = &sv->elem[i];
            int m = e->ops->noise ? e->ops->noise(e, &nc, buf) : 0;
            for (int j = 0; j < m; j++) {
                s[k].src = buf[j];
                s[k].elem = i;
                k++;
            }
        }
    }
    *out_src = s;
    *out_n = n;
    return SS_OK;
}

static int elem_touches(const element *e, int node_idx)
{
    for (int k = 0; k < e->n_node; k++)
        if (e->node[k] == node_idx)
            return 1;
    return 0;
}

/* The source resistance the noise figure refers to, when rs= names none (docs/noise.md):
 * for a V source with one terminal grounded, the resistor that is the only other element on
 * its ungrounded node and does not go to ground itself (a source behind its series resistor);
 * for an I source, the only resistor across the same two nodes (its Norton resistance).
 * Returns the element index, or -1 when there is none or it is ambiguous. */
static int find_source_resistor(const ss_solver *sv, const element *src)
{
    int found = -1;
    if (!elem_is(src, DEV_DRIVES_CURRENT)) {
        int hot;
        if (src->node[1] == 0 && src->node[0] != 0)
            hot = src->node[0];
        else if (src->node[0] == 0 && src->node[1] != 0)
            hot = src->node[1];
        else
            return -1;
        for (int i = 0; i < sv->n_elem; i++) {
            const element *e = &sv->elem[i];
            if (e == src || !elem_touches(e, hot))
                continue;
            if (found >= 0 || !elem_is(e, DEV_RESISTOR) || e->node[0] == 0 || e->node[1] == 0)
                return -1;
            found = i;
        }
        return found;
    }
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (!elem_is(e, DEV_RESISTOR))
            continue;
        int same = (e->node[0] == src->node[0] && e->node[1] == src->node[1]) ||
                   (e->node[0] == src->node[1] && e->node[1] == src->node[0]);
        if (!same)
            continue;
        if (found >= 0)
            return -1;
        found = i;
    }
    return found;
}

ss_status ss_solver_set_noise(ss_solver *sv, const char *out_node, const char *in_source,
                               const char *rs_resistor, ss_error *err)
{
    char name[1024]; /* circuit names are at most 1023 characters (parser_internal.h) */
    name_lower_copy(out_node, name, sizeof name);
    int n = circuit_find_node(sv->ckt, name);
    if (n <= 0 || sv->node_internal[n])
        return err_set(err, SS_ERR_INPUT, NULL, 0, "noise output node '%s' %s", out_node,
                       n == 0 ? "is ground" : "does not exist");
    name_lower_copy(in_source, name, sizeof name);
    int s = circuit_find_elem(sv->ckt, name);
    if (s < 0 || !elem_is_source(&sv->elem[s]))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "noise input '%s' is not an independent source of the circuit", in_source);
    int r = -1;
    if (rs_resistor) {
        name_lower_copy(rs_resistor, name, sizeof name);
        r = circuit_find_elem(sv->ckt, name);
        if (r < 0 || !elem_is(&sv->elem[r], DEV_RESISTOR))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "noise source resistance '%s' is not a resistor of the circuit",
                           rs_resistor);
    }
    sv->noise.out = sv->node_name[n];
    sv->noise.src = sv->elem[s].name;
    sv->noise.rs = r >= 0 ? sv->elem[r].name : NULL;
    sv->noise.file = NULL;
    sv->noise.line = 0;
    sv->noise.want = 1;
    return SS_OK;
}

/* Everything the sweep needs, allocated before the first frequency. */
typedef struct noise_work {
    noise_src *src;
    int n_src;
    double complex *y; /* adjoint solution: transfer impedance from each unknown to v(out) */
    double *psd_prev;  /* per source, output PSD at the previous frequency, V^2/Hz */
    double *pow;       /* per source, output power integrated so far, V^2 */
    double *elem_pow;  /* per element, V^2 */
    int *order;        /* ranking of the sources */
    ss_table *summary, *contrib;
} noise_work;

static void noise_work_clear(noise_work *w)
{
    ss_free(w->src);
    ss_free(w->y);
    ss_free(w->psd_prev);
    ss_free(w->pow);
    ss_free(w->elem_pow);
    ss_free(w->order);
    ss_table_destroy(&w->summary);
    ss_table_destroy(&w->contrib);
}

static ss_status noise_work_init(ss_solver *sv, noise_work *w, ss_error *err)
{
    ss_status st = noise_collect_sources(sv, &w->src, &w->n_src, err);
    if (st != SS_OK)
        return st;
    size_t ns = (size_t)(w->n_src ? w->n_src : 1);
    w->y = ss_alloc((size_t)sv->n_unknowns * sizeof *w->y);
    w->psd_prev = ss_alloc(ns * sizeof *w->psd_prev);
    w->pow = ss_alloc(ns * sizeof *w->pow);
    w->elem_pow = ss_alloc((size_t)sv->n_elem * sizeof *w->elem_pow);
    w->order = ss_alloc(ns * sizeof *w->order);
    w->summary = table_create(1, "metric");
    w->contrib = table_create(3, "source");
    int bad = !w->y || !w->psd_prev || !w->pow || !w->elem_pow || !w->order || !w->summary ||
              !w->contrib;
    static const char *const contrib_cols[3] = {"out_noise_rms_v", "share_pct",
                                                "element_share_pct"};
    for (int j = 0; !bad && j < 3; j++)
        bad |= table_set_col(w->contrib, j, contrib_cols[j]);
    bad = bad || table_set_col(w->summary, 0, "value") != 0;
    return bad ? err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory") : SS_OK;
}

/* |z|^2 without the overflow guard of cabs: transfer impedances stay far below 1e150 */
static double abs2(double complex z) { return creal(z) * creal(z) + cimag(z) * cimag(z); }

/* The sweep: per frequency one refactor and forward solve (the gain, as ss_stage_run defines
 * it) and one adjoint solve A^T y = e_out on the same factorization. A noise current i between
 * nodes a and b then gives v(out) = (y_a - y_b) i, so every source costs a subtraction, not a
 * solve (the adjoint network; docs/noise.md). Integration is the trapezoid rule in f on the
 * power spectral densities. No allocation inside. Each frequency's row goes to the sink (begun
 * by the caller) as it is solved. */
static ss_status noise_sweep(ss_solver *sv, const element *src, int out_node, const double *freqs,
                             int nf, noise_work *w, ss_sink *sink, double *pow_out, double *pow_in,
                             ss_error *err)
{
    int n = sv->n_unknowns;
    double prev_f = 0.0, prev_out = 0.0, prev_in = 0.0;
    *pow_out = *pow_in = 0.0;
    for (int k = 0; k < nf; k++) {
        double f = freqs[k];
        ss_status st = ac_solve_point(sv, 2.0 * SS_PI * f, src, 0, 0, err);
        if (st != SS_OK)
            return st;
        double complex gain = sv->work_zrhs[out_node - 1]; /* the source's AC value is 1 */
        double complex *y = w->y;
        memset(y, 0, (size_t)n * sizeof *y);
        y[out_node - 1] = 1.0;
        if ((st = mna_solve_complex_transpose_again(sv->mna, y)) != SS_OK)
            return err_set(err, st, NULL, 0, "noise: adjoint solve failed at %.6g Hz", f);
        for (int u = 0; u < n; u++)
            if (!isfinite(creal(y[u])) || !isfinite(cimag(y[u]))) {
                char what[1200];
                solver_unknown_name(sv, u, what, sizeof what);
                return err_set(err, SS_ERR_SINGULAR, sv->ckt->file, 0,
                               "noise: transfer to the output is not finite from %s (%.6g Hz)",
                               what, f);
            }
        double s_out = 0.0;
        for (int i = 0; i < w->n_src; i++) {
            const dev_noise_src *d = &w->src[i].src;
            double complex z =
                (d->node_a > 0 ? y[d->node_a - 1] : 0.0) - (d->node_b > 0 ? y[d->node_b - 1] : 0.0);
            double p = abs2(z) * (d->white_a2_per_hz + d->flicker_a2 / f);
            if (k > 0)
                w->pow[i] += 0.5 * (p + w->psd_prev[i]) * (f - prev_f);
            w->psd_prev[i] = p;
            s_out += p;
        }
        double g2 = abs2(gain);
        /* no gain at this frequency: the input-referred noise is undefined (written empty) */
        double s_in = g2 > 0.0 ? s_out / g2 : SS_NAN;
        if (k > 0) {
            *pow_out += 0.5 * (s_out + prev_out) * (f - prev_f);
            *pow_in += 0.5 * (s_in + prev_in) * (f - prev_f);
        }
        prev_f = f;
        prev_out = s_out;
        prev_in = s_in;
        const double row[3] = {f, sqrt(s_out), sqrt(s_in)};
        if ((st = sink_row(sink, row, err)) != SS_OK)
            return st;
    }
    return SS_OK;
}

static int ranks_before(const noise_work *w, int i, int j)
{
    double ei = w->elem_pow[w->src[i].elem], ej = w->elem_pow[w->src[j].elem];
    if (ei != ej)
        return ei > ej;
    if (w->src[i].elem != w->src[j].elem)
        return w->src[i].elem < w->src[j].elem;
    return w->pow[i] > w->pow[j];
}

/* Summary and ranked contributions from the integrated powers (docs/noise.md). */
static ss_status noise_tables(const ss_solver *sv, const double *freqs, int nf, int rs_elem,
                              double pow_out, double pow_in, noise_work *w, ss_error *err)
{
    int band = nf >= 2; /* one frequency has no band to integrate over */
    for (int i = 0; i < w->n_src; i++)
        w->elem_pow[w->src[i].elem] += w->pow[i];
    double nf_db = SS_NAN;
    if (band && rs_elem >= 0 && w->elem_pow[rs_elem] > 0.0)
        nf_db = 10.0 * log10(pow_out / w->elem_pow[rs_elem]);
    const struct {
        const char *name;
        double v;
    } rows[] = {
        {"f_start_hz", freqs[0]},
        {"f_stop_hz", freqs[nf - 1]},
        {"out_noise_rms_v", band ? sqrt(pow_out) : SS_NAN},
        {"in_noise_rms_v", band ? sqrt(pow_in) : SS_NAN},
        {"noise_figure_db", nf_db},
        {"source_res_ohm", rs_elem >= 0 ? sv->elem[rs_elem].value : SS_NAN},
        {"temp_k", sv->temp_c + SS_ZERO_C_IN_K},
    };
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
        double *row = table_add_row(w->summary, rows[i].name);
        if (!row)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        row[0] = rows[i].v;
    }
    /* rank: elements by their total, then each element's sources by theirs (insertion sort:
     * stable, and the source count is small) */
    for (int i = 0; i < w->n_src; i++) {
        int j = i;
        while (j > 0 && ranks_before(w, i, w->order[j - 1])) {
            w->order[j] = w->order[j - 1];
            j--;
        }
        w->order[j] = i;
    }
    if (table_reserve(w->contrib, w->n_src) != 0)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int r = 0; r < w->n_src; r++) {
        const noise_src *s = &w->src[w->order[r]];
        char label[1200];
        snprintf(label, sizeof label, "%s %s", sv->elem[s->elem].name, s->src.what);
        double *row = table_add_row(w->contrib, label);
        if (!row)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        double p = w->pow[w->order[r]];
        row[0] = band ? sqrt(p) : SS_NAN;
        row[1] = band && pow_out > 0.0 ? 100.0 * p / pow_out : SS_NAN;
        row[2] = band && pow_out > 0.0 ? 100.0 * w->elem_pow[s->elem] / pow_out : SS_NAN;
    }
    return SS_OK;
}

ss_status ss_noise_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary,
                        ss_table **out_contrib, ss_error *err)
{
    if (!sv->noise.out || !sv->noise.src)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "no noise analysis named: add `.noise v(OUT) SRC` to the netlist");
    if (!sv->ckt->ac.want)
        return err_set(err, SS_ERR_INPUT, sv->noise.file ? sv->noise.file : sv->ckt->file,
                       sv->noise.line,
                       ".noise: the netlist has no .ac sweep (noise is computed over the .ac "
                       "frequencies)");
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    const element *src = &sv->elem[circuit_find_elem(sv->ckt, sv->noise.src)];
    int out_node = circuit_find_node(sv->ckt, sv->noise.out);
    int rs_elem =
        sv->noise.rs ? circuit_find_elem(sv->ckt, sv->noise.rs) : find_source_resistor(sv, src);
    double *freqs = NULL;
    int nf = 0;
    if ((st = ac_frequencies(sv, &freqs, &nf, err)) != SS_OK)
        return st;
    noise_work w;
    memset(&w, 0, sizeof w);
    double pow_out = 0.0, pow_in = 0.0;
    static const char *const cols[3] = {"freq_hz", "out_noise_v_rthz", "in_noise_v_rthz"};
    st = noise_work_init(sv, &w, err);
    if (st == SS_OK)
        st = sink_begin(sink, 3, cols, nf, err);
    if (st == SS_OK) {
        st = noise_sweep(sv, src, out_node, freqs, nf, &w, sink, &pow_out, &pow_in, err);
        if (st == SS_OK)
            st = noise_tables(sv, freqs, nf, rs_elem, pow_out, pow_in, &w, err);
        st = sink_end(sink, st, err);
    }
    ss_free(freqs);
    if (st == SS_OK) {
        if (out_summary) {
            *out_summary = w.summary;
            w.summary = NULL;
        }
        if (out_contrib) {
            *out_contrib = w.contrib;
            w.contrib = NULL;
        }
    }
    noise_work_clear(&w);
    return st;
}

ss_status ss_noise_run(ss_solver *sv, ss_table **out_noise, ss_table **out_summary,
                       ss_table **out_contrib, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_noise_emit(sv, sink, out_summary, out_contrib, err);
    if (st == SS_OK && out_noise)
        *out_noise = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}
