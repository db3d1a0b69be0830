/* The machinery the stage's large-signal figures share: the stage lookup, the large-signal
 * settings, and the periodic steady-state run (the stage source driven by a sine, every other
 * source at its DC value, run until the output's period no longer changes, its harmonics).
 * The figures are clip.c's and thd.c's; integration is tran.c's; docs/transient.md. */
#include <math.h>
#include <string.h>

#include "analysis/large_signal.h"
#include "devices/wave.h"

#define LS_FREQ_DEFAULT_HZ 1000.0 /* signal frequency when none is named */
#define THD_MAX_PERIODS 1000
/* Settled, twice in a row: for a swing, the estimated distance of the last period from the
 * periodic steady state -- the change still to come, from a two-mode model of the last
 * THD_FIT_DIFFS per-period changes -- is within THD_SETTLE_TOL of the period's peak-to-peak
 * output; for a THD, the THD's estimated error (what that change would still make of it) is
 * within THD_ERR_REL of it plus THD_ERR_ABS. The model is used while it fits the changes to
 * THD_FIT_RESID and its slowest mode decays by at least 1 - THD_RHO_MAX a period; changes
 * below Newton's tolerance are not resolved and count as settled, that tolerance standing for
 * the distance. */
#define THD_SETTLE_TOL 1e-5
#define THD_ERR_REL 1e-4 /* a tenth of the amplitude search's THD_TARGET_REL (thd.c) */
#define THD_ERR_ABS 1e-7
/* a run of the amplitude search only has to tell on which side of the target it is, and by
 * about how much: its THD's error may be up to this fraction of its distance from the target */
#define THD_GOAL_FRAC 0.1
/* the THD's error is estimated by the model only once the waveform is within this fraction
 * of its peak-to-peak of the steady state (where the period map is nearly linear) */
#define THD_LINEAR 1e-3
#define THD_FIT_DIFFS 5
#define THD_FIT_RESID 0.05
#define THD_RHO_MAX 0.9995
#define THD_TAIL_SAFETY 2.0 /* the distance claimed: twice the estimated tail (and THD change) */
#define THD_MIN_PERIODS (THD_FIT_DIFFS + 1)
#define THD_WAVE_PERIODS 3 /* periods kept for the waveform table */
/* Newton at each step of a large-signal run: tight, so solver error stays far below the
 * harmonics measured (they are differences of ~1e-5 of the signal and less) */
#define THD_NEWTON_TOL_REL 1e-9
#define THD_NEWTON_TOL_V 1e-10

/* ---- the stage and the settings ---------------------------------------------------------- */

ss_status ls_stage_lookup(ss_solver *sv, stage_ref *r, ss_error *err)
{
    if (!sv->stage.in || !sv->stage.out)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "large-signal figures need a stage: add `.stage in=SOURCE out=NODE` or "
                       "use --in/--out");
    int idx = circuit_find_elem(sv->ckt, sv->stage.in);
    int node = circuit_find_node(sv->ckt, sv->stage.out);
    if (idx < 0 || node <= 0)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "stage source or output not found");
    r->src = &sv->elem[idx];
    r->out_node = node;
    r->is_current = elem_is(r->src, DEV_DRIVES_CURRENT);
    return SS_OK;
}

double ls_freq(const ss_solver *sv)
{
    return sv->ls.freq_hz > 0.0 ? sv->ls.freq_hz : LS_FREQ_DEFAULT_HZ;
}

ss_status ss_solver_set_test_frequency(ss_solver *sv, double freq_hz, ss_error *err)
{
    if (!(freq_hz > 0.0) || !isfinite(freq_hz))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "large signal: frequency %g Hz must be positive and finite", freq_hz);
    sv->ls.freq_hz = freq_hz;
    sv->ls.want = 1;
    return SS_OK;
}

ss_status ss_solver_set_test_amplitude(ss_solver *sv, double amplitude, ss_error *err)
{
    if (!(amplitude > 0.0) || !isfinite(amplitude))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "large signal: amplitude %g must be positive and finite", amplitude);
    sv->ls.amp = amplitude;
    sv->ls.want = 1;
    return SS_OK;
}

ss_status ss_solver_set_thd_target(ss_solver *sv, double thd_target_pct, ss_error *err)
{
    if (!(thd_target_pct > 0.0 && thd_target_pct < 100.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "large signal: THD target %g %% must be above 0 and below 100 %%",
                       thd_target_pct);
    sv->ls.thd_target_pct = thd_target_pct;
    sv->ls.want = 1;
    return SS_OK;
}

void ss_solver_large_signal(const ss_solver *sv, double *freq_hz, double *amplitude,
                             double *thd_target_pct)
{
    if (freq_hz)
        *freq_hz = ls_freq(sv);
    if (amplitude)
        *amplitude = sv->ls.amp > 0.0 ? sv->ls.amp : 0.0;
    if (thd_target_pct)
        *thd_target_pct =
            sv->ls.thd_target_pct > 0.0 ? sv->ls.thd_target_pct : LS_THD_TARGET_DEFAULT_PCT;
}

/* ---- harmonic analysis ------------------------------------------------------------------- */

/* Amplitudes and sine phases of harmonics 1..n_harm of one period sampled at n uniform points
 * (x[j] at t = j T / n): the DFT bins A_k = 2 |X_k| / n, X_k = sum_j x_j exp(-2 pi i k j / n);
 * a component A sin(k w t + phi) gives X_k = -i A n / 2 exp(i phi), so phi = arg(i X_k).
 * amp[k], phase_deg[k] for k = 1..n_harm (index 0 unused). */
void thd_harmonics(const double *x, int n, int n_harm, double *amp, double *phase_deg)
{
    for (int k = 1; k <= n_harm; k++) {
        double re = 0.0, im = 0.0;
        for (int j = 0; j < n; j++) {
            /* the angle reduced exactly in integers before the trigonometry */
            double th = 2.0 * SS_PI * (double)((long)k * j % n) / n;
            re += x[j] * cos(th);
            im -= x[j] * sin(th);
        }
        amp[k] = 2.0 * hypot(re, im) / n;
        /* i X = i (re + i im) = -im + i re */
        phase_deg[k] = atan2(re, -im) * 180.0 / SS_PI;
    }
}

/* THD from amplitudes amp[1..n_harm]: sqrt(sum_{k>=2} A_k^2) / A_1 (a ratio, not percent). */
double thd_ratio(const double *amp, int n_harm)
{
    double s = 0.0;
    for (int k = 2; k <= n_harm; k++)
        s += amp[k] * amp[k];
    return amp[1] > 0.0 ? sqrt(s) / amp[1] : SS_NAN;
}

/* ---- a periodic steady-state run --------------------------------------------------------- */

#define THD_RING (THD_FIT_DIFFS + 2) /* periods kept: the fitted ones and the one filling */

typedef struct thd_sink {
    int n;                     /* samples per period */
    int out_u;                 /* unknown of the output node */
    double *per;               /* THD_RING periods of samples; period p at (p % THD_RING) n */
    double *tail;              /* n: the estimated change still to come of each sample */
    double *cs, *sn;           /* n: cos and sin of 2 pi j / n, for the harmonics */
    int for_swing;             /* settle on the distance, else on the THD's error */
    double goal;               /* the THD a search looks for (0: none) */
    /* every unknown at the start of the last three periods, period p's at (p % 3) n_unknowns
     * (NULL: not kept), and the number of period starts seen */
    double *start;
    int n_unknowns;
    long starts;
    double fit_a, fit_b; /* the model of the last fit that held (fit_ok) */
    int fit_ok;
    double *ring_t, *ring_out; /* the last THD_WAVE_PERIODS periods (NULL: not kept) */
    long periods;              /* complete periods */
    int settled;
    int settled_run; /* consecutive settled periods */
    double dist_v;   /* the last complete period's estimated distance (HUGE_VAL: unknown) */
    double thd, thd_err; /* the last complete period's THD and its estimated error (ratios) */
} thd_sink;

static double *period_of(const thd_sink *s, long p)
{
    return s->per + (size_t)(p % THD_RING) * (size_t)s->n;
}

/* The change still to come after the last complete period P, from the changes
 * d_m = x_m - x_(m-1) of the last THD_FIT_DIFFS periods, into s->tail; returns the distance
 * claimed for P, THD_TAIL_SAFETY times the tail's largest magnitude, or HUGE_VAL when the
 * model does not hold.
 * Model: near a periodic steady state the period map is linear, so every sample's change is
 * a sum of the same decaying modes, d_(m+1) = a d_m + b d_(m-1) with a and b shared by all
 * samples -- two modes, which is what an AC-coupled stage shows (its coupling and bypass
 * capacitors settle at rates as close as 0.976 and 0.991 a period, with opposite signs, so
 * that their sum can all but vanish for a while). a and b are fitted by least squares over
 * every sample and period (the minimal-polynomial idea of vector extrapolation: S. Cabay,
 * L. W. Jackson, SIAM J. Numer. Anal. 13, 1976; for periodic steady states, S. Skelboe, IEEE
 * Trans. Circuits Syst. 27, 1980 -- both from memory); when the changes are proportional
 * (one mode) b = 0. Summing the recurrence, the tail S = sum_(m>P) d_m solves
 * S = a (d_P + S) + b (d_(P-1) + d_P + S):
 *     S = ((a + b) d_P + b d_(P-1)) / (1 - a - b),
 * the geometric tail d_P a / (1 - a) for one mode. */
static double steady_state_tail(thd_sink *s)
{
    const int n = s->n;
    const long p_last = s->periods - 1;
    /* sums over the triples (d_(m-1), d_m, d_(m+1)) */
    double s00 = 0.0, s01 = 0.0, s11 = 0.0, s20 = 0.0, s21 = 0.0, s22 = 0.0;
    for (long m = p_last - THD_FIT_DIFFS + 2; m <= p_last - 1; m++) {
        const double *x_mm2 = period_of(s, m - 2), *x_mm1 = period_of(s, m - 1);
        const double *x_m = period_of(s, m), *x_mp1 = period_of(s, m + 1);
        for (int j = 0; j < n; j++) {
            double d0 = x_mm1[j] - x_mm2[j], d1 = x_m[j] - x_mm1[j], d2 = x_mp1[j] - x_m[j];
            s00 += d0 * d0;
            s01 += d0 * d1;
            s11 += d1 * d1;
            s20 += d2 * d0;
            s21 += d2 * d1;
            s22 += d2 * d2;
        }
    }
    if (!(s11 > 0.0) || !(s00 > 0.0))
        return HUGE_VAL;
    double a, b;
    double det = s11 * s00 - s01 * s01;
    if (det > 1e-6 * s11 * s00) { /* two modes: the normal equations */
        a = (s21 * s00 - s20 * s01) / det;
        b = (s20 * s11 - s21 * s01) / det;
    } else { /* the changes are proportional: one mode */
        a = s21 / s11;
        b = 0.0;
    }
    /* how well the model fits: residual over the changes it predicts */
    double resid = s22 - 2.0 * a * s21 - 2.0 * b * s20 + a * a * s11 + 2.0 * a * b * s01 +
                   b * b * s00;
    if (!(resid <= THD_FIT_RESID * THD_FIT_RESID * s22))
        return HUGE_VAL;
    /* the slowest mode: the larger root of z^2 - a z - b */
    double disc = a * a + 4.0 * b;
    double rho = disc >= 0.0 ? 0.5 * (fabs(a) + sqrt(disc)) : sqrt(-b);
    if (!(rho < THD_RHO_MAX) || !(1.0 - a - b > 0.0))
        return HUGE_VAL;
    s->fit_a = a;
    s->fit_b = b;
    s->fit_ok = 1;
    const double *x_p = period_of(s, p_last), *x_pm1 = period_of(s, p_last - 1);
    const double *x_pm2 = period_of(s, p_last - 2);
    double dist = 0.0;
    for (int j = 0; j < n; j++) {
        double d_p = x_p[j] - x_pm1[j], d_pm1 = x_pm1[j] - x_pm2[j];
        s->tail[j] = ((a + b) * d_p + b * d_pm1) / (1.0 - a - b);
        dist = fmax(dist, fabs(s->tail[j]));
    }
    return THD_TAIL_SAFETY * dist;
}

/* THD (a ratio) of one period x of n samples, and its fundamental's amplitude (*a1): as
 * thd_harmonics and thd_ratio, with the angles from the table of s->cs, s->sn. */
static double period_thd(const thd_sink *s, const double *x, double *a1)
{
    const int n = s->n;
    double sum2 = 0.0;
    *a1 = 0.0;
    for (int k = 1; k <= THD_HARMONICS; k++) {
        double re = 0.0, im = 0.0;
        for (int j = 0; j < n; j++) {
            int idx = (int)((long)k * j % n);
            re += x[j] * s->cs[idx];
            im -= x[j] * s->sn[idx];
        }
        double a = 2.0 * hypot(re, im) / n;
        if (k == 1)
            *a1 = a;
        else
            sum2 += a * a;
    }
    return *a1 > 0.0 ? sqrt(sum2) / *a1 : SS_NAN;
}

/* The estimated error of the THD of the last period x (ratio) from its distance to the steady
 * state: THD_TAIL_SAFETY times the THD change the estimated tail would still make (the limit
 * is x plus the tail); where the change was below Newton's tolerance (no tail), the most a
 * change of that size in every sample can move it, (2 d / A1) (3 + THD) (each harmonic by 2 d
 * at most, the nine of the THD together by 3 x 2 d); NaN when no distance could be
 * estimated. Sets s->thd too. Uses s->tail's room after it. */
static double thd_error(thd_sink *s, const double *x)
{
    double a1;
    s->thd = period_thd(s, x, &a1);
    if (!isfinite(s->dist_v) || !(a1 > 0.0))
        return SS_NAN;
    int zero_tail = 1;
    for (int j = 0; j < s->n && zero_tail; j++)
        zero_tail = s->tail[j] == 0.0;
    if (zero_tail)
        return 2.0 * s->dist_v / a1 * (3.0 + s->thd);
    double *lim = s->tail + s->n;
    for (int j = 0; j < s->n; j++)
        lim[j] = x[j] + s->tail[j];
    return THD_TAIL_SAFETY * fabs(period_thd(s, lim, &a1) - s->thd);
}

static int thd_point(void *vctx, long k, double t_s, const double *x)
{
    thd_sink *s = vctx;
    int j = (int)(k % s->n);
    double v = x[s->out_u];
    double *cur = period_of(s, s->periods);
    cur[j] = v;
    if (j == 0 && s->start) {
        memcpy(s->start + (size_t)(s->starts % 3) * (size_t)s->n_unknowns, x,
               (size_t)s->n_unknowns * sizeof *s->start);
        s->starts++;
    }
    if (s->ring_t) {
        long r = k % ((long)THD_WAVE_PERIODS * s->n);
        s->ring_t[r] = t_s;
        s->ring_out[r] = v;
    }
    if (j != s->n - 1)
        return 0;
    /* a period is complete: its change from the one before, and the change still to come */
    const double *prev = s->periods > 0 ? period_of(s, s->periods - 1) : cur;
    double lo = cur[0], hi = cur[0], delta = 0.0, big = 0.0;
    for (int i = 0; i < s->n; i++) {
        lo = fmin(lo, cur[i]);
        hi = fmax(hi, cur[i]);
        big = fmax(big, fabs(cur[i]));
        delta = fmax(delta, fabs(cur[i] - prev[i]));
    }
    s->periods++;
    double scale = fmax(hi - lo, 1e-12 * big);
    /* below Newton's tolerance a change is not resolved */
    double unresolved = THD_NEWTON_TOL_REL * big + THD_NEWTON_TOL_V;
    s->dist_v = HUGE_VAL;
    s->fit_ok = 0;
    if (s->periods >= 2 && delta <= unresolved) {
        memset(s->tail, 0, (size_t)s->n * sizeof *s->tail);
        s->dist_v = unresolved;
    } else if (s->periods > THD_FIT_DIFFS) {
        s->dist_v = steady_state_tail(s);
    }
    int now;
    if (s->for_swing) {
        now = s->dist_v <= THD_SETTLE_TOL * scale;
    } else {
        s->thd_err = thd_error(s, cur);
        now = s->dist_v <= THD_LINEAR * scale &&
              s->thd_err <= fmax(THD_ERR_REL * s->thd + THD_ERR_ABS,
                                 s->goal > 0.0 ? THD_GOAL_FRAC * fabs(s->thd - s->goal) : 0.0);
    }
    s->settled_run = now ? s->settled_run + 1 : 0;
    s->settled = s->settled_run >= 2;
    return s->periods >= THD_MIN_PERIODS && s->settled;
}

/* The sink of one run of r: its samples' buffer (s->per starts it: the periods, the tail and
 * the angle table), the waveform ring (s->ring_t, when want_wave) and the period starts
 * (s->start, when r keeps a state). Returns SS_OK or SS_ERR_NOMEM. */
static ss_status thd_sink_init(ss_solver *sv, const stage_ref *sr, const thd_run *r,
                               int want_wave, thd_sink *s, ss_error *err)
{
    const int n = THD_STEPS_PER_PERIOD;
    memset(s, 0, sizeof *s);
    s->n = n;
    s->out_u = sr->out_node - 1;
    double *buf = ss_alloc((size_t)((THD_RING + 4) * n) * sizeof *buf);
    double *ring = want_wave ? ss_alloc((size_t)(2 * THD_WAVE_PERIODS * n) * sizeof *ring) : NULL;
    if (!buf || (want_wave && !ring)) {
        ss_free(buf);
        ss_free(ring);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    s->per = buf;
    s->tail = buf + THD_RING * n; /* and n more after it for thd_error */
    s->cs = buf + (THD_RING + 2) * n;
    s->sn = buf + (THD_RING + 3) * n;
    for (int j = 0; j < n; j++) {
        s->cs[j] = cos(2.0 * SS_PI * j / n);
        s->sn[j] = sin(2.0 * SS_PI * j / n);
    }
    s->dist_v = HUGE_VAL;
    s->thd_err = SS_NAN;
    s->for_swing = r->for_swing;
    s->goal = r->goal;
    s->n_unknowns = sv->n_unknowns;
    if (r->state) {
        s->start = ss_alloc((size_t)(3 * sv->n_unknowns) * sizeof *s->start);
        if (!s->start) {
            ss_free(buf);
            ss_free(ring);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
    }
    if (ring) {
        s->ring_t = ring;
        s->ring_out = ring + THD_WAVE_PERIODS * n;
    }
    return SS_OK;
}

/* The transient of one run: the stage source driven by r->amp sin(2 pi f t) around its DC
 * value, every other source resting at its DC value (tran_cfg.only_src: no element's form or
 * value is touched), until the sink s finds the output settled or THD_MAX_PERIODS have passed.
 * Returns as tran_run. */
static ss_status thd_drive(ss_solver *sv, const stage_ref *sr, const thd_run *r, thd_sink *s,
                           ss_error *err)
{
    const int n = THD_STEPS_PER_PERIOD;
    double period = 1.0 / r->freq_hz;
    /* the test signal replaces the stage source's own form; other forms rest */
    src_wave sine;
    memset(&sine, 0, sizeof sine);
    sine.kind = WAVE_SIN;
    sine.p[WS_VO] = sr->src->value;
    sine.p[WS_VA] = r->amp;
    sine.p[WS_FREQ] = r->freq_hz;
    tran_cfg cfg = {.tstep_s = period / n,
                    .tstop_s = THD_MAX_PERIODS * period,
                    .tstart_s = 0.0,
                    .hmax_s = period / n,
                    .method = sv->ckt->tran.method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = sv->ckt->tran.tol_rel,
                    .tol_v = sv->ckt->tran.tol_v,
                    .newton_tol_rel = THD_NEWTON_TOL_REL,
                    .newton_tol_v = THD_NEWTON_TOL_V,
                    .on_point = thd_point,
                    .ctx = s,
                    .x_start = r->state && r->have_state ? r->state : NULL,
                    .only_src = sr->src,
                    .only_wave = &sine};
    return tran_run(sv, &cfg, NULL, err);
}

/* After a run that ended in st: r->state (when kept) for the next run, and r->have_state. */
static void thd_next_state(const thd_sink *s, thd_run *r, ss_status st)
{
    if (r->state && st == SS_OK && s->starts > 0) {
        /* the periodic state for the next run: the latest period start, taken on to the limit
         * with the last model that held (the same modes move every unknown) */
        long l = s->starts - 1;
        const double *y0 = s->start + (size_t)(l % 3) * (size_t)s->n_unknowns;
        const double *y1 = s->start + (size_t)((l + 2) % 3) * (size_t)s->n_unknowns;
        const double *y2 = s->start + (size_t)((l + 1) % 3) * (size_t)s->n_unknowns;
        int extrapolate = s->fit_ok && l >= 2;
        double a = s->fit_a, b = s->fit_b;
        for (int u = 0; u < s->n_unknowns; u++)
            r->state[u] = y0[u] + (extrapolate ? ((a + b) * (y0[u] - y1[u]) +
                                                  b * (y1[u] - y2[u])) / (1.0 - a - b)
                                               : 0.0);
        r->have_state = 1;
    } else if (r->state) {
        r->have_state = 0;
    }
}

/* Unrolls the ring: the last complete periods in time order, into r->wave_t and r->wave_out
 * (one allocation, freed through r->wave_t). Returns SS_OK or SS_ERR_NOMEM. */
static ss_status thd_unroll_wave(const thd_sink *s, thd_run *r, ss_error *err)
{
    const int n = THD_STEPS_PER_PERIOD;
    long last = s->periods * n - 1; /* index of the last sample of the last period */
    long first = last - (long)THD_WAVE_PERIODS * n + 1;
    if (first < 0)
        first = 0;
    int m = (int)(last - first + 1);
    double *wt = ss_alloc((size_t)(2 * m) * sizeof *wt);
    if (!wt)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int i = 0; i < m; i++) {
        long k = (first + i) % ((long)THD_WAVE_PERIODS * n);
        wt[i] = s->ring_t[k];
        wt[m + i] = s->ring_out[k];
    }
    r->wave_t = wt;
    r->wave_out = wt + m;
    r->n_wave = m;
    return SS_OK;
}

/* The figures of a run's last complete period into r, and its waveform when the sink kept
 * one. Returns SS_OK or SS_ERR_NOMEM. */
static ss_status thd_results(ss_solver *sv, thd_sink *s, thd_run *r, ss_error *err)
{
    const int n = THD_STEPS_PER_PERIOD;
    const double *x_last = period_of(s, s->periods - 1);
    r->periods = s->periods;
    r->settled = s->settled;
    thd_harmonics(x_last, n, THD_HARMONICS, r->a, r->ph);
    r->thd = thd_ratio(r->a, THD_HARMONICS);
    r->vmax = r->vmin = x_last[0];
    for (int j = 0; j < n; j++) {
        r->vmax = fmax(r->vmax, x_last[j]);
        r->vmin = fmin(r->vmin, x_last[j]);
    }
    r->dist_v = s->dist_v;
    r->thd_err = s->for_swing ? thd_error(s, x_last) : s->thd_err;
    if (!s->settled)
        solver_warn(sv,
                     "large signal: the output at %g Hz, amplitude %g, still changes from "
                     "one period to the next after %d periods; the figures use the last",
                     r->freq_hz, r->amp, THD_MAX_PERIODS);
    if (s->ring_t)
        return thd_unroll_wave(s, r, err);
    return SS_OK;
}

ss_status thd_measure(ss_solver *sv, const stage_ref *sr, thd_run *r, int want_wave,
                      ss_error *err)
{
    thd_sink s;
    ss_status st = thd_sink_init(sv, sr, r, want_wave, &s, err);
    if (st != SS_OK)
        return st;
    st = thd_drive(sv, sr, r, &s, err);
    thd_next_state(&s, r, st);
    ss_free(s.start);
    if (st == SS_OK && s.periods < 1)
        st = err_set(err, SS_ERR_INTERNAL, sv->ckt->file, 0, "THD: no complete period");
    if (st == SS_OK)
        st = thd_results(sv, &s, r, err);
    ss_free(s.per);    /* the samples' buffer */
    ss_free(s.ring_t); /* the waveform ring (NULL when not kept) */
    return st;
}

ss_status ls_ensure_op(ss_solver *sv, ss_error *err)
{
    if (sv->have_op)
        return SS_OK;
    return op_solve_into(sv, NULL, err);
}

int ls_add_metric(ss_table *t, const char *label, double v)
{
    double *row = table_add_row(t, label);
    if (!row)
        return -1;
    row[0] = v;
    return 0;
}
