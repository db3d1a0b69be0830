/* Noise analysis over the .ac frequencies, or over a band of its own (.noise band=, with its
 * own log grid and Simpson's rule): every element's noise currents (the devices' noise op)
 * carried to the output by one adjoint (transposed) solve per frequency, then input referral,
 * band integration, optional A-weighting, noise figure and ranked contributions. The device
 * noise models are the devices' own; docs/noise.md has every definition used here. */
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

ss_status ss_solver_set_noise_band(ss_solver *sv, double lo_hz, double hi_hz, int per_decade,
                                   ss_error *err)
{
    if (lo_hz == 0.0 && hi_hz == 0.0) {
        sv->noise.band_lo_hz = sv->noise.band_hi_hz = 0.0;
        sv->noise.per_decade = 0;
        return SS_OK;
    }
    if (!(lo_hz > 0.0 && hi_hz > lo_hz && isfinite(hi_hz)))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "noise band %g .. %g Hz: needs 0 < F1 < F2 (finite)", lo_hz, hi_hz);
    if (hi_hz / lo_hz > NOISE_BAND_MAX_RATIO)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "noise band %g .. %g Hz spans more than %g "
                       "decades", lo_hz, hi_hz, log10(NOISE_BAND_MAX_RATIO));
    if (per_decade != 0 && (per_decade < 2 || per_decade > NOISE_MAX_PER_DECADE))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "noise band: %d points a decade is outside 2 .. %d", per_decade,
                       NOISE_MAX_PER_DECADE);
    sv->noise.band_lo_hz = lo_hz;
    sv->noise.band_hi_hz = hi_hz;
    if (per_decade)
        sv->noise.per_decade = per_decade;
    return SS_OK;
}

ss_status ss_solver_set_noise_weight(ss_solver *sv, const char *weight, ss_error *err)
{
    if (weight && (strcmp(weight, "a") == 0 || strcmp(weight, "A") == 0))
        sv->noise.weight = NOISE_WEIGHT_A;
    else if (weight && strcmp(weight, "none") == 0)
        sv->noise.weight = NOISE_WEIGHT_NONE;
    else
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "noise weighting '%s': known are 'a' (A-weighting, IEC 61672-1) and "
                       "'none'",
                       weight ? weight : "");
    return SS_OK;
}

const char *ss_solver_noise_input_unit(const ss_solver *sv)
{
    int e = sv && sv->noise.src ? circuit_find_elem(sv->ckt, sv->noise.src) : -1;
    return e >= 0 && elem_is(&sv->elem[e], DEV_DRIVES_CURRENT) ? "A" : "V";
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
    double *wq;        /* per frequency, the band's quadrature weight in Hz (NULL: trapezoid) */
    double *aw2;       /* per frequency, the A-weighting's power gain (NULL: no weighting) */
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
    ss_free(w->wq);
    ss_free(w->aw2);
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

/* The integrated powers of a sweep, V^2 (input-referred: V^2 or A^2); the _w ones A-weighted */
typedef struct noise_pow {
    double out, in, out_w, in_w;
} noise_pow;

/* The sweep: per frequency one refactor and forward solve (the gain, as ss_stage_run defines
 * it) and one adjoint solve A^T y = e_out on the same factorization. A noise current i between
 * nodes a and b then gives v(out) = (y_a - y_b) i, so every source costs a subtraction, not a
 * solve (the adjoint network; docs/noise.md). Integration: with quadrature weights (a band of
 * its own) the weighted sum, else the trapezoid rule in f on the power spectral densities. No
 * allocation inside. Each frequency's row goes to the sink (begun by the caller) as it is
 * solved. */
static ss_status noise_sweep(ss_solver *sv, const element *src, int out_node, const double *freqs,
                             int nf, noise_work *w, ss_sink *sink, noise_pow *pw, ss_error *err)
{
    int n = sv->n_unknowns;
    double prev_f = 0.0, prev_out = 0.0, prev_in = 0.0, prev_out_w = 0.0, prev_in_w = 0.0;
    memset(pw, 0, sizeof *pw);
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
            if (w->wq)
                w->pow[i] += w->wq[k] * p;
            else if (k > 0)
                w->pow[i] += 0.5 * (p + w->psd_prev[i]) * (f - prev_f);
            w->psd_prev[i] = p;
            s_out += p;
        }
        double g2 = abs2(gain);
        /* no gain at this frequency: the input-referred noise is undefined (written empty) */
        double s_in = g2 > 0.0 ? s_out / g2 : SS_NAN;
        double a2 = w->aw2 ? w->aw2[k] : 0.0;
        if (w->wq) {
            pw->out += w->wq[k] * s_out;
            pw->in += w->wq[k] * s_in;
            pw->out_w += w->wq[k] * a2 * s_out;
            pw->in_w += w->wq[k] * a2 * s_in;
        } else if (k > 0) {
            pw->out += 0.5 * (s_out + prev_out) * (f - prev_f);
            pw->in += 0.5 * (s_in + prev_in) * (f - prev_f);
            pw->out_w += 0.5 * (a2 * s_out + prev_out_w) * (f - prev_f);
            pw->in_w += 0.5 * (a2 * s_in + prev_in_w) * (f - prev_f);
        }
        prev_f = f;
        prev_out = s_out;
        prev_in = s_in;
        prev_out_w = a2 * s_out;
        prev_in_w = a2 * s_in;
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
                              const noise_pow *pw, noise_work *w, ss_error *err)
{
    double pow_out = pw->out, pow_in = pw->in;
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
        /* only with a band of its own (the same integrals, under names that exist only then) */
        {"out_noise_band_rms_v", band ? sqrt(pow_out) : SS_NAN},
        {"in_noise_band_rms_v", band ? sqrt(pow_in) : SS_NAN},
        {"band_points", (double)nf},
        /* only with a weighting */
        {"out_noise_a_rms_v", band ? sqrt(pw->out_w) : SS_NAN},
        {"in_noise_a_rms_v", band ? sqrt(pw->in_w) : SS_NAN},
    };
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
        if ((i >= 7 && i < 10 && !w->wq) || (i >= 10 && !w->aw2))
            continue;
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

/* IEC 61672-1:2013, Electroacoustics - Sound level meters - Part 1: Specifications, annex E
 * (equations E.6 and the pole frequencies of E.4): the A-weighting as an amplitude ratio,
 *   A(f) = f4^2 f^4 / ((f^2 + f1^2) sqrt(f^2 + f2^2) sqrt(f^2 + f3^2) (f^2 + f4^2)),
 * normalised to 0 dB at 1 kHz by the standard's constant A1000 = -2.000 dB. */
double noise_a_weight(double f_hz)
{
    const double f1 = 20.6, f2 = 107.7, f3 = 737.9, f4 = 12194.0, a1000_db = -2.0;
    double f2z = f_hz * f_hz;
    double r = f4 * f4 * f2z * f2z /
               ((f2z + f1 * f1) * sqrt(f2z + f2 * f2) * sqrt(f2z + f3 * f3) * (f2z + f4 * f4));
    return r * pow(10.0, -a1000_db / 20.0);
}

/* A band of its own: n_int = per_decade * decades intervals (at least 2, rounded up to an even
 * number) equally spaced in ln f from lo to hi, and Simpson's rule in u = ln f on S(f) f:
 * int S df = int S(e^u) e^u du (docs/noise.md gives its error). */
static ss_status noise_band_grid(const noise_spec *ns, double **out_f, double **out_wq, int *out_n,
                                 ss_error *err)
{
    double lo = ns->band_lo_hz, hi = ns->band_hi_hz;
    int per_decade = ns->per_decade > 0 ? ns->per_decade : NOISE_DEFAULT_PER_DECADE;
    double span = log(hi / lo);
    long n_int = (long)ceil(per_decade * log10(hi / lo) - 1e-9);
    if (n_int < 2)
        n_int = 2;
    n_int += n_int % 2;
    if (n_int > NOISE_BAND_MAX_POINTS)
        return err_set(err, SS_ERR_LIMIT, ns->file, ns->line,
                       ".noise: the band %.6g .. %.6g Hz at %d points a decade needs more than "
                       "%d points",
                       lo, hi, per_decade, NOISE_BAND_MAX_POINTS);
    int n = (int)n_int + 1;
    double *f = ss_alloc((size_t)n * sizeof *f);
    double *wq = ss_alloc((size_t)n * sizeof *wq);
    if (!f || !wq) {
        ss_free(f);
        ss_free(wq);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    double h = span / (double)n_int;
    for (int k = 0; k < n; k++) {
        f[k] = k == 0 ? lo : k == n - 1 ? hi : lo * exp(h * (double)k);
        double c = k == 0 || k == n - 1 ? 1.0 : k % 2 ? 4.0 : 2.0;
        wq[k] = h / 3.0 * c * f[k];
    }
    *out_f = f;
    *out_wq = wq;
    *out_n = n;
    return SS_OK;
}

int noise_has_band(const ss_solver *sv) { return sv->noise.band_lo_hz > 0.0; }

int noise_runs(const ss_solver *sv)
{
    return sv->noise.want && (sv->ckt->ac.want || noise_has_band(sv));
}

ss_status ss_noise_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary,
                        ss_table **out_contrib, ss_error *err)
{
    if (!sv->noise.out || !sv->noise.src)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "no noise analysis named: add `.noise v(OUT) SRC` to the netlist");
    if (!noise_runs(sv))
        return err_set(err, SS_ERR_INPUT, sv->noise.file ? sv->noise.file : sv->ckt->file,
                       sv->noise.line,
                       ".noise: the netlist has no .ac sweep and the noise no band of its own "
                       "(band=F1..F2)");
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    const element *src = &sv->elem[circuit_find_elem(sv->ckt, sv->noise.src)];
    int out_node = circuit_find_node(sv->ckt, sv->noise.out);
    int rs_elem =
        sv->noise.rs ? circuit_find_elem(sv->ckt, sv->noise.rs) : find_source_resistor(sv, src);
    noise_work w;
    memset(&w, 0, sizeof w);
    double *freqs = NULL;
    int nf = 0;
    if (noise_has_band(sv))
        st = noise_band_grid(&sv->noise, &freqs, &w.wq, &nf, err);
    else
        st = ac_frequencies(sv, &freqs, &nf, err);
    if (st != SS_OK)
        return st;
    if (sv->noise.weight == NOISE_WEIGHT_A) {
        w.aw2 = ss_alloc((size_t)nf * sizeof *w.aw2);
        if (!w.aw2)
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        for (int k = 0; w.aw2 && k < nf; k++) {
            double a = noise_a_weight(freqs[k]);
            w.aw2[k] = a * a;
        }
    }
    noise_pow pw;
    memset(&pw, 0, sizeof pw);
    static const char *const cols[3] = {"freq_hz", "out_noise_v_rthz", "in_noise_v_rthz"};
    if (st == SS_OK)
        st = noise_work_init(sv, &w, err);
    if (st == SS_OK)
        st = sink_begin(sink, 3, cols, nf, err);
    if (st == SS_OK) {
        st = noise_sweep(sv, src, out_node, freqs, nf, &w, sink, &pw, err);
        if (st == SS_OK)
            st = noise_tables(sv, freqs, nf, rs_elem, &pw, &w, err);
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
