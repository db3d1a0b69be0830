/* Stage figures over the .ac frequencies: gain V(out)/EMF, Zin seen by the stage source,
 * Zout by a 1 A test current, mid-band and the half-power corners pinned by extra solves. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/sink.h"

/* relative width to which a corner is bracketed (0.01 %, well inside the 0.1 % promised) */
#define CORNER_REL_TOL 1e-4
/* log-frequency width to which the gain maximum is located */
#define PEAK_REL_TOL 1e-7
#define HALF_POWER 0.70710678118654752440 /* 1/sqrt(2): -10 log10(2) dB */

typedef struct stage_pt {
    double complex gain, zin, zout;
} stage_pt;

static ss_status stage_point(ss_solver *sv, const element *src, int out_node, double freq_hz,
                             stage_pt *pt, ss_error *err)
{
    ss_status st = ac_solve_point(sv, 2.0 * SS_PI * freq_hz, src, 0, 0, err);
    if (st != SS_OK)
        return st;
    const double complex *x = sv->work_zrhs;
    pt->gain = x[out_node - 1]; /* the source's own AC value is 1 */
    if (!elem_is(src, DEV_DRIVES_CURRENT)) {
        /* i(V) enters the + node through the source: the current it delivers is -i(V) */
        double complex i_del = -x[src->branch];
        pt->zin = 1.0 / i_del;
    } else {
        /* a current source drives its current out of n-: V across it as it delivers */
        double complex va = src->node[0] ? x[src->node[0] - 1] : 0.0;
        double complex vb = src->node[1] ? x[src->node[1] - 1] : 0.0;
        pt->zin = vb - va;
    }
    /* same matrix, every source at zero, 1 A into the output node */
    double complex *b = sv->work_zx;
    memset(b, 0, (size_t)sv->n_unknowns * sizeof *b);
    b[out_node - 1] = 1.0;
    st = mna_solve_complex_again(sv->mna, b);
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "AC solve failed");
    pt->zout = b[out_node - 1];
    return SS_OK;
}

/* Pins the frequency between fa and fb where |gain| crosses target, by bisection in log
 * frequency with real solves, then places it inside the final bracket by linear
 * interpolation of |gain| in dB against log frequency (exact to far below the bracket). */
static ss_status refine_corner(ss_solver *sv, const element *src, int out_node, double fa,
                               double fb, double target, double *out_f, ss_error *err)
{
    stage_pt pt = {0, 0, 0};
    ss_status st = stage_point(sv, src, out_node, fa, &pt, err);
    if (st != SS_OK)
        return st;
    double ga = cabs(pt.gain);
    if ((st = stage_point(sv, src, out_node, fb, &pt, err)) != SS_OK)
        return st;
    double gb = cabs(pt.gain);
    int a_above = ga >= target;
    for (int it = 0; it < 200 && fabs(fb - fa) > CORNER_REL_TOL * 0.5 * fmin(fa, fb); it++) {
        double fm = sqrt(fa * fb);
        st = stage_point(sv, src, out_node, fm, &pt, err);
        if (st != SS_OK)
            return st;
        double gm = cabs(pt.gain);
        if ((gm >= target) == a_above) {
            fa = fm;
            ga = gm;
        } else {
            fb = fm;
            gb = gm;
        }
    }
    double la = log(fa), lb = log(fb);
    double da = 20.0 * log10(ga), db = 20.0 * log10(gb), dt = 20.0 * log10(target);
    double t = (db != da) ? (dt - da) / (db - da) : 0.5;
    if (!(t >= 0.0 && t <= 1.0))
        t = 0.5;
    *out_f = exp(la + t * (lb - la));
    return SS_OK;
}

/* Golden-section search for the maximum of |gain| between fa and fb (log frequency), so a
 * sharp peak between grid points is not underestimated (which would widen the corners). */
static ss_status refine_peak(ss_solver *sv, const element *src, int out_node, double fa,
                             double fb, double *f_peak, stage_pt *peak, ss_error *err)
{
    const double invphi = 0.61803398874989484820;
    double a = log(fa), b = log(fb);
    double c = b - invphi * (b - a), d = a + invphi * (b - a);
    stage_pt pc = {0, 0, 0}, pd = {0, 0, 0};
    ss_status st = stage_point(sv, src, out_node, exp(c), &pc, err);
    if (st == SS_OK)
        st = stage_point(sv, src, out_node, exp(d), &pd, err);
    for (int it = 0; st == SS_OK && it < 100 && b - a > PEAK_REL_TOL; it++) {
        if (cabs(pc.gain) >= cabs(pd.gain)) {
            b = d;
            d = c;
            pd = pc;
            c = b - invphi * (b - a);
            st = stage_point(sv, src, out_node, exp(c), &pc, err);
        } else {
            a = c;
            c = d;
            pc = pd;
            d = a + invphi * (b - a);
            st = stage_point(sv, src, out_node, exp(d), &pd, err);
        }
    }
    if (st != SS_OK)
        return st;
    int use_c = cabs(pc.gain) >= cabs(pd.gain);
    if ((use_c ? cabs(pc.gain) : cabs(pd.gain)) > cabs(peak->gain)) {
        *f_peak = exp(use_c ? c : d);
        *peak = use_c ? pc : pd;
    }
    return SS_OK;
}

ss_status stage_at_frequency(ss_solver *sv, double freq_hz, double complex *gain,
                             double *zin_ohm, double *zout_ohm, ss_error *err)
{
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    const element *src = &sv->elem[circuit_find_elem(sv->ckt, sv->stage.in)];
    stage_pt pt = {0, 0, 0};
    st = stage_point(sv, src, circuit_find_node(sv->ckt, sv->stage.out), freq_hz, &pt, err);
    if (st != SS_OK)
        return st;
    *gain = pt.gain;
    *zin_ohm = cabs(pt.zin);
    *zout_ohm = cabs(pt.zout);
    return SS_OK;
}

static double phase_deg(double complex z) { return carg(z) * 180.0 / SS_PI; }

/* One stage run's sweep: the stage, the .ac frequencies and the points there, mid-band (the
 * largest gain, refined between grid points) and the half-power corners. */
typedef struct stage_sweep {
    const element *src;
    int out_node;
    double *freqs;
    int nf;
    stage_pt *pts;
    int k_mid; /* the grid point of largest gain */
    double f_mid, g_mid;
    stage_pt mid;
    double f_low, f_high; /* NaN: no corner in the sweep */
} stage_sweep;

/* stage_summary.csv's table, NULL when out of memory. */
static ss_table *stage_summary_table(void)
{
    ss_table *s = table_create(1, "metric");
    if (s && table_set_col(s, 0, "value") != 0)
        ss_table_destroy(&s);
    return s;
}

/* Every grid point, and mid-band: the grid point of largest gain, refined between its
 * neighbours. g_mid is 0 when a solve failed. */
static ss_status stage_mid(ss_solver *sv, stage_sweep *sw, ss_error *err)
{
    ss_status st = SS_OK;
    int k_mid = 0;
    for (int k = 0; k < sw->nf && st == SS_OK; k++) {
        st = stage_point(sv, sw->src, sw->out_node, sw->freqs[k], &sw->pts[k], err);
        if (st == SS_OK && cabs(sw->pts[k].gain) > cabs(sw->pts[k_mid].gain))
            k_mid = k;
    }
    sw->k_mid = k_mid;
    sw->f_mid = sw->freqs[k_mid];
    sw->mid = sw->pts[k_mid];
    if (st == SS_OK && k_mid > 0 && k_mid + 1 < sw->nf)
        st = refine_peak(sv, sw->src, sw->out_node, sw->freqs[k_mid - 1], sw->freqs[k_mid + 1],
                         &sw->f_mid, &sw->mid, err);
    sw->g_mid = st == SS_OK ? cabs(sw->mid.gain) : 0.0;
    return st;
}

/* The half-power corners either side of mid-band, pinned between the grid points where the
 * gain first falls below g_mid / sqrt(2). */
static ss_status stage_corners(ss_solver *sv, stage_sweep *sw, ss_error *err)
{
    ss_status st = SS_OK;
    const stage_pt *pts = sw->pts;
    const double *freqs = sw->freqs;
    double target = sw->g_mid * HALF_POWER;
    for (int k = sw->k_mid; k > 0 && st == SS_OK; k--)
        if (cabs(pts[k - 1].gain) < target) {
            st = refine_corner(sv, sw->src, sw->out_node, freqs[k], freqs[k - 1], target,
                               &sw->f_low, err);
            break;
        }
    for (int k = sw->k_mid; k + 1 < sw->nf && st == SS_OK; k++)
        if (cabs(pts[k + 1].gain) < target) {
            st = refine_corner(sv, sw->src, sw->out_node, freqs[k], freqs[k + 1], target,
                               &sw->f_high, err);
            break;
        }
    return st;
}

/* stage.csv's rows into the sink, begin to end: the phase unwrapped along the sweep, then
 * shifted so mid-band lies in (-180, 180]. Returns SS_OK, SS_ERR_NOMEM or the sink's error. */
static ss_status stage_rows(ss_sink *sink, const stage_sweep *sw, ss_error *err)
{
    static const char *const cols[] = {"freq_hz",   "gain",    "gain_db",
                                       "phase_deg", "zin_ohm", "zout_ohm"};
    const int nf = sw->nf, k_mid = sw->k_mid;
    const stage_pt *pts = sw->pts;
    double *ph = ss_alloc((size_t)nf * sizeof *ph);
    if (!ph)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int k = 0; k < nf; k++) {
        ph[k] = phase_deg(pts[k].gain);
        if (k > 0)
            ph[k] -= 360.0 * round((ph[k] - ph[k - 1]) / 360.0);
    }
    double shift = 360.0 * round((ph[k_mid] - phase_deg(pts[k_mid].gain)) / 360.0);
    ss_status st = sink_begin(sink, 6, cols, nf, err);
    if (st != SS_OK) {
        ss_free(ph);
        return st;
    }
    for (int k = 0; k < nf && st == SS_OK; k++) {
        double gm = cabs(pts[k].gain);
        const double row[6] = {sw->freqs[k],     gm, 20.0 * log10(gm), ph[k] - shift,
                               cabs(pts[k].zin), cabs(pts[k].zout)};
        st = sink_row(sink, row, err);
    }
    ss_free(ph);
    return sink_end(sink, st, err);
}

/* stage_summary.csv's rows into s. */
static ss_status stage_summary_rows(ss_solver *sv, ss_table *s, const stage_sweep *sw,
                                    ss_error *err)
{
    ss_status st = SS_OK;
    const double g_mid = sw->g_mid, f_low = sw->f_low, f_high = sw->f_high;
    /* a low-pass stage (no low corner in range) counts its bandwidth from DC when the
     * small-signal gain at 0 Hz is itself within 3 dB of mid-band */
    double bw = SS_NAN;
    if (!isnan(f_low) && !isnan(f_high)) {
        bw = f_high - f_low;
    } else if (isnan(f_low) && !isnan(f_high)) {
        stage_pt dc = {0, 0, 0};
        st = stage_point(sv, sw->src, sw->out_node, 0.0, &dc, err);
        if (st == SS_OK && cabs(dc.gain) >= g_mid * HALF_POWER)
            bw = f_high;
    }
    const struct {
        const char *name;
        double v;
    } rows[] = {
        {"gain_mid_db", 20.0 * log10(g_mid)}, {"f_mid_hz", sw->f_mid},
        {"f_low_hz", f_low},                  {"f_high_hz", f_high},
        {"bandwidth_hz", bw},                 {"zin_mid_ohm", cabs(sw->mid.zin)},
        {"zout_mid_ohm", cabs(sw->mid.zout)},
    };
    for (size_t i = 0; st == SS_OK && i < sizeof rows / sizeof rows[0]; i++) {
        double *row = table_add_row(s, rows[i].name);
        if (!row)
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        else
            row[0] = rows[i].v;
    }
    return st;
}

/* The load a stage names (.stage load=, --load) is a resistor the netlist usually draws too;
 * the solved Zout then includes it. The element drawn as the load: a resistor from the output
 * node to ground whose value is the named load (to 1e-6); -1 when there is none. */
static int stage_drawn_load(const ss_solver *sv, int out_node)
{
    double r_load = sv->stage.load_ohm;
    for (int i = 0; r_load > 0.0 && i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (!elem_is(e, DEV_RESISTOR))
            continue;
        int a = e->node[0], b = e->node[1];
        if (((a == out_node && b == 0) || (a == 0 && b == out_node)) &&
            fabs(e->value - r_load) <= 1e-6 * r_load)
            return i;
    }
    return -1;
}

/* The stage's own mid-band output impedance, what the load is compared with: the solved Zout
 * (a driving-point impedance from the output node to ground) with the drawn load's admittance
 * taken out, 1 / (1/Zout - 1/R) -- exact, since a resistor from that node to ground adds 1/R to
 * the driving-point admittance (Ohm's and Kirchhoff's laws); the solved Zout when the netlist
 * draws no such load. Kept on the context for the report. */
static void stage_own_zout(ss_solver *sv, const stage_sweep *sw)
{
    int k = stage_drawn_load(sv, sw->out_node);
    sv->stage_load_elem1 = k + 1;
    sv->stage_zout_own_ohm = cabs(sw->mid.zout);
    sv->stage_phase_mid_deg = phase_deg(sw->mid.gain);
    if (k < 0)
        return;
    double complex y = 1.0 / sw->mid.zout - 1.0 / sv->elem[k].value;
    sv->stage_zout_own_ohm = cabs(y) > 0.0 ? 1.0 / cabs(y) : HUGE_VAL;
}

/* The summary is made before the rows are sent, so a sink sees the rows of a run that
 * succeeded only. */
ss_status ss_stage_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary, ss_error *err)
{
    if (!sv->stage.in)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "no stage named: add `.stage in=SOURCE out=NODE` or use --in/--out");
    ss_status st;
    if (!sv->have_op && (st = op_solve_into(sv, NULL, err)) != SS_OK)
        return st;
    stage_sweep sw;
    memset(&sw, 0, sizeof sw);
    sw.src = &sv->elem[circuit_find_elem(sv->ckt, sv->stage.in)];
    sw.out_node = circuit_find_node(sv->ckt, sv->stage.out);
    if ((st = ac_frequencies(sv, &sw.freqs, &sw.nf, err)) != SS_OK)
        return st;
    ss_table *s = stage_summary_table();
    sw.pts = ss_alloc((size_t)sw.nf * sizeof *sw.pts);
    if (!s || !sw.pts) {
        ss_free(sw.freqs);
        ss_free(sw.pts);
        ss_table_destroy(&s);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    st = stage_mid(sv, &sw, err);
    sw.f_low = sw.f_high = SS_NAN;
    if (st == SS_OK && sw.g_mid > 0.0)
        st = stage_corners(sv, &sw, err);
    if (st == SS_OK)
        st = stage_summary_rows(sv, s, &sw, err);
    if (st == SS_OK)
        stage_own_zout(sv, &sw);
    if (st == SS_OK)
        st = stage_rows(sink, &sw, err);
    ss_free(sw.freqs);
    ss_free(sw.pts);
    if (st == SS_OK && out_summary)
        *out_summary = s;
    else
        ss_table_destroy(&s);
    return st;
}

ss_status ss_stage_run(ss_solver *sv, ss_table **out_stage, ss_table **out_summary,
                       ss_error *err)
{
    ss_sink *sink = NULL;
    ss_table *summary = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_stage_emit(sv, sink, &summary, err);
    if (st == SS_OK) {
        *out_stage = ss_sink_take_table(sink);
        *out_summary = summary;
    }
    ss_sink_destroy(&sink);
    return st;
}
