/* The stage's large-signal figures: output swing at the onset of clipping from the
 * quasi-static transfer (confirmed by a transient), THD of the periodic steady state at a
 * given amplitude, and the amplitude for a given THD. Integration is tran.c's; docs/transient.md
 * defines every figure. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/tran.h"
#include "devices/wave.h"

#define LS_FREQ_DEFAULT_HZ 1000.0     /* signal frequency when none is named */
#define LS_THD_TARGET_DEFAULT_PCT 1.0 /* THD whose input amplitude is searched by default */
#define THD_HARMONICS 10
#define THD_STEPS_PER_PERIOD 256 /* a multiple of 4: the sine's peaks fall on samples */
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
#define THD_ERR_REL 1e-4 /* a tenth of the amplitude search's THD_TARGET_REL */
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

#define CLIP_GAIN_RATIO 0.9  /* onset of clipping: the slope falls to 90 % of its bias value */
#define CLIP_STEPS 100       /* march steps per (largest node voltage / |gain|) of input */
#define CLIP_RANGE 4.0       /* search up to 4 x (largest node voltage) of output */
#define CLIP_BISECT_REL 1e-7 /* bracket of the onset, relative to its input excursion */
#define CLASS_TOL 0.05       /* a capacitor is a short (or open) if that moves |gain| <= 5 % */
#define CLASS_SCALE 1e6      /* short: C x 1e6; open: C / 1e6 (inductors the other way) */
#define FROZEN_G_S 1e3       /* a held capacitor: 1 mOhm to its operating-point voltage */
#define FROZEN_R_OHM 1e9     /* a held inductor: its current through 1 GOhm of compliance */
#define QS_GAIN_WARN 0.10    /* warn when the transfer's slope and the AC gain differ by 10 % */

#define THD_TARGET_REL 1e-3 /* vin_at_thd: |THD / target - 1| */
#define THD_SEARCH_MAX 40
#define THD_BRACKET_GROW 1.5 /* bracketing steps in amplitude */

typedef struct stage_ref {
    element *src;
    int out_node;
    int is_current; /* an I source: amplitudes in A */
} stage_ref;

static ss_status stage_lookup(ss_circuit *ckt, stage_ref *r, ss_error *err)
{
    if (!ckt->stage_in || !ckt->stage_out)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "large-signal figures need a stage: add `.stage in=SOURCE out=NODE` or "
                       "use --in/--out");
    int idx = circuit_find_elem(ckt, ckt->stage_in);
    int node = circuit_find_node(ckt, ckt->stage_out);
    if (idx < 0 || node <= 0)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0, "stage source or output not found");
    r->src = &ckt->elem[idx];
    r->out_node = node;
    r->is_current = elem_is(r->src, DEV_DRIVES_CURRENT);
    return SS_OK;
}

static double ls_freq(const ss_circuit *ckt)
{
    return ckt->ls_freq_hz > 0.0 ? ckt->ls_freq_hz : LS_FREQ_DEFAULT_HZ;
}

ss_status ss_circuit_set_large_signal(ss_circuit *ckt, double freq_hz, double amplitude,
                                      double thd_target_pct, ss_error *err)
{
    if (!isfinite(freq_hz) || !isfinite(amplitude) || !isfinite(thd_target_pct) ||
        thd_target_pct >= 100.0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "large signal: frequency %g Hz, amplitude %g and THD target %g %% must be "
                       "finite, the THD target below 100 %%",
                       freq_hz, amplitude, thd_target_pct);
    if (freq_hz > 0.0)
        ckt->ls_freq_hz = freq_hz;
    if (amplitude > 0.0)
        ckt->ls_amp = amplitude;
    if (thd_target_pct > 0.0)
        ckt->ls_thd_target_pct = thd_target_pct;
    ckt->want_large_signal = 1;
    return SS_OK;
}

void ss_circuit_large_signal(const ss_circuit *ckt, double *freq_hz, double *amplitude,
                             double *thd_target_pct)
{
    if (freq_hz)
        *freq_hz = ls_freq(ckt);
    if (amplitude)
        *amplitude = ckt->ls_amp > 0.0 ? ckt->ls_amp : 0.0;
    if (thd_target_pct)
        *thd_target_pct =
            ckt->ls_thd_target_pct > 0.0 ? ckt->ls_thd_target_pct : LS_THD_TARGET_DEFAULT_PCT;
}

/* ---- harmonic analysis ------------------------------------------------------------------- */

/* Amplitudes and sine phases of harmonics 1..n_harm of one period sampled at n uniform points
 * (x[j] at t = j T / n): the DFT bins A_k = 2 |X_k| / n, X_k = sum_j x_j exp(-2 pi i k j / n);
 * a component A sin(k w t + phi) gives X_k = -i A n / 2 exp(i phi), so phi = arg(i X_k).
 * amp[k], phase_deg[k] for k = 1..n_harm (index 0 unused). */
SS_HIDDEN void thd_harmonics(const double *x, int n, int n_harm, double *amp, double *phase_deg);
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
SS_HIDDEN double thd_ratio(const double *amp, int n_harm);
double thd_ratio(const double *amp, int n_harm)
{
    double s = 0.0;
    for (int k = 2; k <= n_harm; k++)
        s += amp[k] * amp[k];
    return amp[1] > 0.0 ? sqrt(s) / amp[1] : SS_NAN;
}

/* ---- a periodic steady-state run --------------------------------------------------------- */

typedef struct thd_run {
    double amp, freq_hz;
    /* out */
    double a[THD_HARMONICS + 1], ph[THD_HARMONICS + 1];
    double thd;     /* ratio */
    double thd_err; /* estimated error of thd from the distance to the steady state (ratio);
                       NaN when the distance could not be estimated */
    double dist_v;  /* estimated distance of the last period from the steady state (V, the
                       largest over its samples); HUGE_VAL when it could not be estimated */
    double vmax, vmin;
    long periods;
    int settled;
    int for_swing; /* in: settle on the waveform's distance (swings), else on the THD's error */
    double goal;   /* in: the THD (ratio) a search looks for (0: none; see THD_GOAL_FRAC) */
    /* in/out (may be NULL): every unknown at the start of a period of a similar run, to start
     * from when have_state; gets this run's, at the start of its last period */
    double *state;
    int have_state;
    /* waveform of the last THD_WAVE_PERIODS periods (when wanted): time and output */
    double *wave_t, *wave_out;
    int n_wave;
} thd_run;

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

/* Drives the stage source with r->amp sin(2 pi f t) around its DC value (every other
 * time-varying source held at its DC value), runs to the periodic steady state and analyses
 * the last complete period. want_wave: keep the last periods for a plot (caller frees
 * r->wave_t / r->wave_out with ss_free). */
static ss_status thd_measure(ss_circuit *ckt, const stage_ref *sr, thd_run *r, int want_wave,
                             ss_error *err)
{
    const int n = THD_STEPS_PER_PERIOD;
    double period = 1.0 / r->freq_hz;
    thd_sink s;
    memset(&s, 0, sizeof s);
    s.n = n;
    s.out_u = sr->out_node - 1;
    double *buf = ss_alloc((size_t)((THD_RING + 4) * n) * sizeof *buf);
    double *ring = want_wave ? ss_alloc((size_t)(2 * THD_WAVE_PERIODS * n) * sizeof *ring) : NULL;
    void **saved_wave = ss_alloc((size_t)(ckt->n_elem ? ckt->n_elem : 1) * sizeof *saved_wave);
    if (!buf || (want_wave && !ring) || !saved_wave) {
        ss_free(buf);
        ss_free(ring);
        ss_free(saved_wave);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    s.per = buf;
    s.tail = buf + THD_RING * n; /* and n more after it for thd_error */
    s.cs = buf + (THD_RING + 2) * n;
    s.sn = buf + (THD_RING + 3) * n;
    for (int j = 0; j < n; j++) {
        s.cs[j] = cos(2.0 * SS_PI * j / n);
        s.sn[j] = sin(2.0 * SS_PI * j / n);
    }
    s.dist_v = HUGE_VAL;
    s.thd_err = SS_NAN;
    s.for_swing = r->for_swing;
    s.goal = r->goal;
    s.n_unknowns = ckt->n_unknowns;
    if (r->state) {
        s.start = ss_alloc((size_t)(3 * ckt->n_unknowns) * sizeof *s.start);
        if (!s.start) {
            ss_free(buf);
            ss_free(ring);
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
    }
    if (ring) {
        s.ring_t = ring;
        s.ring_out = ring + THD_WAVE_PERIODS * n;
    }
    /* the test signal replaces the stage source's own form; other forms rest */
    for (int i = 0; i < ckt->n_elem; i++) {
        element *e = &ckt->elem[i];
        saved_wave[i] = elem_is_source(e) ? e->wave : NULL;
        if (elem_is_source(e))
            e->wave = NULL;
    }
    src_wave sine;
    memset(&sine, 0, sizeof sine);
    sine.kind = WAVE_SIN;
    sine.p[WS_VO] = sr->src->value;
    sine.p[WS_VA] = r->amp;
    sine.p[WS_FREQ] = r->freq_hz;
    sr->src->wave = &sine;
    tran_cfg cfg = {.tstep_s = period / n,
                    .tstop_s = THD_MAX_PERIODS * period,
                    .tstart_s = 0.0,
                    .hmax_s = period / n,
                    .method = ckt->tran_method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = ckt->tran_tol_rel,
                    .tol_v = ckt->tran_tol_v,
                    .newton_tol_rel = THD_NEWTON_TOL_REL,
                    .newton_tol_v = THD_NEWTON_TOL_V,
                    .on_point = thd_point,
                    .ctx = &s,
                    .x_start = r->state && r->have_state ? r->state : NULL};
    ss_status st = tran_run(ckt, &cfg, NULL, err);
    if (r->state && st == SS_OK && s.starts > 0) {
        /* the periodic state for the next run: the latest period start, taken on to the limit
         * with the last model that held (the same modes move every unknown) */
        long l = s.starts - 1;
        const double *y0 = s.start + (size_t)(l % 3) * (size_t)s.n_unknowns;
        const double *y1 = s.start + (size_t)((l + 2) % 3) * (size_t)s.n_unknowns;
        const double *y2 = s.start + (size_t)((l + 1) % 3) * (size_t)s.n_unknowns;
        int extrapolate = s.fit_ok && l >= 2;
        double a = s.fit_a, b = s.fit_b;
        for (int u = 0; u < s.n_unknowns; u++)
            r->state[u] = y0[u] + (extrapolate ? ((a + b) * (y0[u] - y1[u]) +
                                                  b * (y1[u] - y2[u])) / (1.0 - a - b)
                                               : 0.0);
        r->have_state = 1;
    } else if (r->state) {
        r->have_state = 0;
    }
    ss_free(s.start);
    for (int i = 0; i < ckt->n_elem; i++)
        if (elem_is_source(&ckt->elem[i]))
            ckt->elem[i].wave = saved_wave[i];
    ss_free(saved_wave);
    if (st == SS_OK && s.periods < 1)
        st = err_set(err, SS_ERR_INTERNAL, ckt->file, 0, "THD: no complete period");
    if (st == SS_OK) {
        const double *x_last = period_of(&s, s.periods - 1);
        r->periods = s.periods;
        r->settled = s.settled;
        thd_harmonics(x_last, n, THD_HARMONICS, r->a, r->ph);
        r->thd = thd_ratio(r->a, THD_HARMONICS);
        r->vmax = r->vmin = x_last[0];
        for (int j = 0; j < n; j++) {
            r->vmax = fmax(r->vmax, x_last[j]);
            r->vmin = fmin(r->vmin, x_last[j]);
        }
        r->dist_v = s.dist_v;
        r->thd_err = s.for_swing ? thd_error(&s, x_last) : s.thd_err;
        if (!s.settled)
            circuit_warn(ckt,
                         "large signal: the output at %g Hz, amplitude %g, still changes from "
                         "one period to the next after %d periods; the figures use the last",
                         r->freq_hz, r->amp, THD_MAX_PERIODS);
        if (ring) { /* unroll the ring: the last complete periods in time order */
            long last = s.periods * n - 1; /* index of the last sample of the last period */
            long first = last - (long)THD_WAVE_PERIODS * n + 1;
            if (first < 0)
                first = 0;
            int m = (int)(last - first + 1);
            double *wt = ss_alloc((size_t)(2 * m) * sizeof *wt);
            if (!wt) {
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            } else {
                for (int i = 0; i < m; i++) {
                    long k = (first + i) % ((long)THD_WAVE_PERIODS * n);
                    wt[i] = s.ring_t[k];
                    wt[m + i] = s.ring_out[k];
                }
                r->wave_t = wt;
                r->wave_out = wt + m;
                r->n_wave = m;
            }
        }
    }
    ss_free(buf);
    ss_free(ring);
    return st;
}

static ss_status ensure_op(ss_circuit *ckt, ss_error *err)
{
    if (ckt->have_op)
        return SS_OK;
    return op_solve_into(ckt, NULL, err);
}

ss_status ss_stage_thd(ss_circuit *ckt, double amplitude, double freq_hz, double *out_thd_pct,
                       ss_table **out_harmonics, ss_table **out_wave, ss_error *err)
{
    stage_ref sr;
    ss_status st = stage_lookup(ckt, &sr, err);
    if (st != SS_OK)
        return st;
    if (!(amplitude > 0.0 && isfinite(amplitude)) || !(freq_hz > 0.0 && isfinite(freq_hz)))
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "THD: amplitude (%g) and frequency (%g Hz) must be positive", amplitude,
                       freq_hz);
    if ((st = ensure_op(ckt, err)) != SS_OK)
        return st;
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amplitude;
    r.freq_hz = freq_hz;
    st = thd_measure(ckt, &sr, &r, out_wave != NULL, err);
    if (st != SS_OK)
        return st;
    if (!(r.a[1] > 0.0)) {
        ss_free(r.wave_t);
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "THD: no fundamental at the output '%s' (the stage does not pass %g Hz)",
                       ckt->stage_out, freq_hz);
    }
    ss_table *h = NULL, *w = NULL;
    int bad = 0;
    if (out_harmonics) {
        static const char *const cols[] = {"harmonic", "freq_hz", "amplitude_v", "relative_pct",
                                           "phase_deg"};
        h = table_create(5, NULL);
        bad |= !h;
        for (int c = 0; !bad && c < 5; c++)
            bad |= table_set_col(h, c, cols[c]);
        for (int k = 1; !bad && k <= THD_HARMONICS; k++) {
            double *row = table_add_row(h, NULL);
            if (!row) {
                bad = 1;
                break;
            }
            row[0] = k;
            row[1] = k * freq_hz;
            row[2] = r.a[k];
            row[3] = 100.0 * r.a[k] / r.a[1];
            row[4] = r.ph[k];
        }
    }
    if (out_wave && !bad) {
        w = table_create(3, NULL);
        bad |= !w;
        char in_name[1100], out_name[1100];
        snprintf(in_name, sizeof in_name, "in(%s)", sr.src->name);
        snprintf(out_name, sizeof out_name, "v(%s)", ckt->stage_out);
        if (!bad)
            bad |= table_set_col(w, 0, "time_s") | table_set_col(w, 1, in_name) |
                   table_set_col(w, 2, out_name);
        for (int i = 0; !bad && i < r.n_wave; i++) {
            double *row = table_add_row(w, NULL);
            if (!row) {
                bad = 1;
                break;
            }
            double t = r.wave_t[i];
            row[0] = t;
            row[1] = sr.src->value + amplitude * sin(2.0 * SS_PI * freq_hz * t);
            row[2] = r.wave_out[i];
        }
    }
    ss_free(r.wave_t);
    if (bad) {
        ss_table_destroy(&h);
        ss_table_destroy(&w);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    if (out_thd_pct)
        *out_thd_pct = 100.0 * r.thd;
    if (out_harmonics)
        *out_harmonics = h;
    if (out_wave)
        *out_wave = w;
    return SS_OK;
}

/* One large-signal run with what it knows of its own accuracy, for the tests: settled as for
 * a swing (for_swing) or for a THD; the last period's THD_STEPS_PER_PERIOD output samples
 * (last_period, may be NULL), the THD and its estimated error (ratios), the estimated distance
 * of that period from the periodic steady state (V; HUGE_VAL when unknown) and the periods
 * run. Returns as ss_stage_thd. */
SS_HIDDEN ss_status thd_steady_state(ss_circuit *ckt, double amplitude, double freq_hz,
                                     int for_swing, double *last_period, double *thd,
                                     double *thd_err, double *dist_v, long *periods,
                                     ss_error *err);
ss_status thd_steady_state(ss_circuit *ckt, double amplitude, double freq_hz, int for_swing,
                           double *last_period, double *thd, double *thd_err, double *dist_v,
                           long *periods, ss_error *err)
{
    stage_ref sr;
    ss_status st = stage_lookup(ckt, &sr, err);
    if (st == SS_OK)
        st = ensure_op(ckt, err);
    if (st != SS_OK)
        return st;
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amplitude;
    r.freq_hz = freq_hz;
    r.for_swing = for_swing;
    if ((st = thd_measure(ckt, &sr, &r, last_period != NULL, err)) != SS_OK)
        return st;
    if (last_period) /* the wave's last THD_STEPS_PER_PERIOD samples */
        memcpy(last_period, r.wave_out + r.n_wave - THD_STEPS_PER_PERIOD,
               THD_STEPS_PER_PERIOD * sizeof *last_period);
    ss_free(r.wave_t);
    *thd = r.thd;
    *thd_err = r.thd_err;
    *dist_v = r.dist_v;
    *periods = r.periods;
    return SS_OK;
}

/* ---- the quasi-static transfer ----------------------------------------------------------- */

/* Every element with stored charge is, for the quasi-static transfer, either left as at DC (a
 * capacitor open, an inductor shorted: the signal frequency sees it so) or held: a capacitor
 * at its operating-point voltage, an inductor at its operating-point current (the signal
 * frequency sees it as a short, or an open). A held element is loaded through its load_tran
 * with i = a0 q + hist = a0 (q - q_op), a0 chosen so a0 C = FROZEN_G_S (a0 L = FROZEN_R_OHM). */
typedef struct qs_ctx {
    ss_circuit *ckt;
    stage_ref sr;
    double *a0, *hist; /* per element; a0 0: not held */
    double *x;         /* the present point's solution */
    double u0;         /* the source's DC value */
    double vout0;
} qs_ctx;

static double stage_gain_at(ss_circuit *ckt, const stage_ref *sr, double omega, ss_error *err,
                            ss_status *st)
{
    ckt->ac_serial = 0; /* element values may have changed: rebuild the AC cache */
    *st = ac_solve_point(ckt, omega, sr->src, 0, 0, err);
    return *st == SS_OK ? cabs(ckt->work_zrhs[sr->out_node - 1]) : SS_NAN;
}

/* Decides, per capacitor and inductor, whether the signal frequency sees it as a short or an
 * open, from the stage's AC gain with the element scaled far up and far down. */
static ss_status qs_classify(qs_ctx *c, double freq_hz, double *gain_ac, ss_error *err)
{
    ss_circuit *ckt = c->ckt;
    double omega = 2.0 * SS_PI * freq_hz;
    ss_status st;
    double g_nom = stage_gain_at(ckt, &c->sr, omega, err, &st);
    if (st != SS_OK)
        return st;
    *gain_ac = g_nom;
    double q[2];
    dev_tran_ctx tc = {.G = NULL, .x = ckt->x_op, .vt_v = analysis_vt(ckt), .q = q};
    for (int i = 0; i < ckt->n_elem && st == SS_OK; i++) {
        element *e = &ckt->elem[i];
        int is_c = elem_is(e, DEV_CAPACITOR);
        if ((!is_c && !elem_is(e, DEV_INDUCTOR)) || !(e->value > 0.0))
            continue;
        double v0 = e->value;
        e->value = v0 * CLASS_SCALE;
        double g_big = stage_gain_at(ckt, &c->sr, omega, err, &st);
        e->value = v0 / CLASS_SCALE;
        double g_small = st == SS_OK ? stage_gain_at(ckt, &c->sr, omega, err, &st) : SS_NAN;
        e->value = v0;
        if (st != SS_OK)
            break;
        /* a capacitor made large is a short; an inductor made small is */
        double d_short = fabs((is_c ? g_big : g_small) - g_nom);
        double d_open = fabs((is_c ? g_small : g_big) - g_nom);
        int hold = is_c ? d_short <= d_open : d_open <= d_short;
        if (fmin(d_short, d_open) > CLASS_TOL * g_nom)
            circuit_warn(ckt,
                         "large signal: %s is neither a short nor an open at %g Hz (the gain "
                         "moves %.0f %% / %.0f %% with it shorted / opened); the quasi-static "
                         "transfer takes it as %s",
                         e->name, freq_hz, 100.0 * d_short / g_nom, 100.0 * d_open / g_nom,
                         d_short <= d_open ? "a short" : "an open");
        if (!hold)
            continue;
        e->ops->load_tran(e, &tc);
        c->a0[i] = (is_c ? FROZEN_G_S : FROZEN_R_OHM) / v0;
        c->hist[i] = -c->a0[i] * q[0];
    }
    ckt->ac_serial = 0;
    return st;
}

/* Loads the quasi-static system at x: every DC companion plus the held elements. */
static void qs_load(qs_ctx *c, const double *x, enum load_mode mode, int *limited)
{
    ss_circuit *ckt = c->ckt;
    mna *m = ckt->mna;
    double *G = mna_values(m);
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(ckt->work_rhs, 0, (size_t)ckt->n_unknowns * sizeof *ckt->work_rhs);
    double vt = analysis_vt(ckt);
    dev_load_ctx lc = {.G = G,
                       .rhs = ckt->work_rhs,
                       .x = x,
                       .gmin_s = ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = vt,
                       .mode = mode,
                       .ckt_elem = ckt->elem};
    for (int i = 0; i < ckt->n_elem; i++)
        ckt->elem[i].ops->load_dc(&ckt->elem[i], &lc);
    double q[2];
    dev_tran_ctx tc = {.G = G, .rhs = ckt->work_rhs, .x = x, .vt_v = vt, .q = q};
    for (int i = 0; i < ckt->n_elem; i++) {
        if (c->a0[i] == 0.0)
            continue;
        tc.a0 = c->a0[i];
        tc.hist = &c->hist[i];
        ckt->elem[i].ops->load_tran(&ckt->elem[i], &tc);
    }
    *limited = lc.limited;
}

/* Newton for the quasi-static system at the source's present value, from c->x. */
static ss_status qs_newton(qs_ctx *c)
{
    ss_circuit *ckt = c->ckt;
    int n = ckt->n_unknowns, n_volt = ckt->n_nodes - 1;
    const ss_options_set *o = &ckt->opt;
    double *x = c->x, *rhs = ckt->work_rhs;
    int polish = 2; /* a couple of extra iterations after the tolerances are met */
    for (int it = 0; it < o->newton_iters + 2; it++) {
        int limited;
        qs_load(c, x, LOAD_NORMAL, &limited);
        int bad;
        ss_status st = mna_solve_real(ckt->mna, rhs, &bad, NULL);
        if (st != SS_OK)
            return st;
        double worst = 0.0;
        for (int u = 0; u < n; u++) {
            if (!isfinite(rhs[u]))
                return SS_ERR_NO_CONVERGENCE;
            double tol = o->tol_rel * 1e-3 * fmax(fabs(rhs[u]), fabs(x[u])) +
                         (u < n_volt ? o->tol_v * 1e-3 : o->tol_i);
            worst = fmax(worst, fabs(rhs[u] - x[u]) / tol);
        }
        memcpy(x, rhs, (size_t)n * sizeof *x);
        if (worst <= 1.0 && !limited && it > 0 && --polish <= 0)
            return SS_OK;
    }
    return SS_ERR_NO_CONVERGENCE;
}

/* dV(out)/du at the solution c->x: one solve of the system linearised there with the source's
 * derivative as the right-hand side (exact for the discretised equations). */
static ss_status qs_slope(qs_ctx *c, double *slope)
{
    ss_circuit *ckt = c->ckt;
    int limited;
    qs_load(c, c->x, LOAD_FROM_X, &limited);
    double *b = ckt->work_rhs;
    memset(b, 0, (size_t)ckt->n_unknowns * sizeof *b);
    const element *e = c->sr.src;
    if (c->sr.is_current) { /* the source's current leaves n+ and enters n- */
        if (e->node[0] > 0)
            b[e->node[0] - 1] = -1.0;
        if (e->node[1] > 0)
            b[e->node[1] - 1] = 1.0;
    } else {
        b[e->branch] = 1.0;
    }
    int bad;
    ss_status st = mna_solve_real(ckt->mna, b, &bad, NULL);
    if (st != SS_OK)
        return st;
    *slope = b[c->sr.out_node - 1];
    return isfinite(*slope) ? SS_OK : SS_ERR_NO_CONVERGENCE;
}

/* Solves the transfer at u (from c->x as it is): output voltage and slope. */
static ss_status qs_point(qs_ctx *c, double u, double *vout, double *slope)
{
    c->sr.src->value = u;
    ss_status st = qs_newton(c);
    if (st == SS_OK)
        st = qs_slope(c, slope);
    if (st == SS_OK)
        *vout = c->x[c->sr.out_node - 1];
    return st;
}

typedef struct clip_side {
    double du;    /* input excursion at the onset (signed) */
    double dvout; /* output excursion there (signed) */
    int found;
} clip_side;

/* Marches the input away from its bias in direction dir until |slope| <= 0.9 |g0|, then
 * bisects the bracket. Newton failures halve the march step. */
static ss_status clip_search(qs_ctx *c, double dir, double g0, double v_scale, double *work,
                             clip_side *out)
{
    ss_circuit *ckt = c->ckt;
    int n = ckt->n_unknowns;
    memset(out, 0, sizeof *out);
    memcpy(c->x, ckt->x_op, (size_t)n * sizeof *c->x);
    double step = v_scale / fabs(g0) / CLIP_STEPS, limit = CLIP_RANGE * v_scale / fabs(g0);
    double target = CLIP_GAIN_RATIO * fabs(g0);
    double du_lo = 0.0, du_hi = 0.0;
    double *x_lo = work; /* solution at the inner end of the bracket */
    memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
    int bracketed = 0, halvings = 0;
    double vout, slope;
    while (!bracketed && fabs(du_lo) < limit) {
        double du = du_lo + dir * step;
        ss_status st = qs_point(c, c->u0 + du, &vout, &slope);
        if (st == SS_ERR_NOMEM)
            return st;
        if (st != SS_OK) {
            memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
            step *= 0.5;
            if (++halvings > 40)
                return SS_OK; /* the transfer cannot be followed further: no onset found */
            continue;
        }
        if (fabs(slope) <= target) {
            du_hi = du;
            bracketed = 1;
        } else {
            du_lo = du;
            memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
        }
    }
    if (!bracketed)
        return SS_OK;
    for (int it = 0; it < 200 && fabs(du_hi - du_lo) > CLIP_BISECT_REL * fabs(du_hi); it++) {
        double du = 0.5 * (du_lo + du_hi);
        memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
        ss_status st = qs_point(c, c->u0 + du, &vout, &slope);
        if (st != SS_OK)
            return st == SS_ERR_NOMEM ? st : SS_OK;
        if (fabs(slope) <= target) {
            du_hi = du;
        } else {
            du_lo = du;
            memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
        }
    }
    /* the onset: the outer end of the bracket, within CLIP_BISECT_REL of it */
    memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
    ss_status st = qs_point(c, c->u0 + du_hi, &vout, &slope);
    if (st != SS_OK)
        return st == SS_ERR_NOMEM ? st : SS_OK;
    out->du = du_hi;
    out->dvout = vout - c->vout0;
    out->found = 1;
    return SS_OK;
}

typedef struct clip_result {
    double freq_hz, qs_gain, gain_ac;
    double swing_pos, swing_neg; /* output, V (NaN: none found) */
    double in_pos, in_neg;       /* input amplitude at each onset (NaN: none) */
    double swing_pos_tran, swing_neg_tran;
} clip_result;

static ss_status clipping_compute(ss_circuit *ckt, const stage_ref *sr, clip_result *res,
                                  ss_error *err)
{
    ss_status st = ensure_op(ckt, err);
    if (st != SS_OK)
        return st;
    int n = ckt->n_unknowns;
    qs_ctx c;
    memset(&c, 0, sizeof c);
    c.ckt = ckt;
    c.sr = *sr;
    c.u0 = sr->src->value;
    c.vout0 = ckt->x_op[sr->out_node - 1];
    c.a0 = ss_alloc((size_t)(ckt->n_elem ? ckt->n_elem : 1) * sizeof *c.a0);
    c.hist = ss_alloc((size_t)(ckt->n_elem ? ckt->n_elem : 1) * sizeof *c.hist);
    c.x = ss_alloc((size_t)n * sizeof *c.x);
    double *work = ss_alloc((size_t)n * sizeof *work);
    if (!c.a0 || !c.hist || !c.x || !work) {
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        goto done;
    }
    res->freq_hz = ls_freq(ckt);
    res->gain_ac = SS_NAN;
    int has_storage = 0;
    for (int i = 0; i < ckt->n_elem; i++)
        has_storage |= elem_is(&ckt->elem[i], DEV_CAPACITOR | DEV_INDUCTOR);
    if (has_storage && (st = qs_classify(&c, res->freq_hz, &res->gain_ac, err)) != SS_OK)
        goto done;
    memcpy(c.x, ckt->x_op, (size_t)n * sizeof *c.x);
    double g0 = 0.0;
    if ((st = qs_slope(&c, &g0)) != SS_OK) {
        st = err_set(err, st, ckt->file, 0,
                     "large signal: the transfer's slope at the bias "
                     "cannot be solved");
        goto done;
    }
    res->qs_gain = g0;
    double v_scale = 1.0;
    for (int u = 0; u < ckt->n_nodes - 1; u++)
        v_scale = fmax(v_scale, fabs(ckt->x_op[u]));
    if (!(fabs(g0) > 1e-9 * v_scale)) {
        st = err_set(err, SS_ERR_INPUT, ckt->file, 0,
                     "large signal: the stage passes nothing from '%s' to '%s' at the bias "
                     "(quasi-static gain %g)",
                     sr->src->name, ckt->stage_out, g0);
        goto done;
    }
    if (isfinite(res->gain_ac) && fabs(fabs(g0) - res->gain_ac) > QS_GAIN_WARN * res->gain_ac)
        circuit_warn(ckt,
                     "large signal: the quasi-static transfer's gain %.4g differs from the AC "
                     "gain %.4g at %g Hz; the swing figures assume the signal frequency is in "
                     "the stage's mid-band",
                     fabs(g0), res->gain_ac, res->freq_hz);
    res->swing_pos = res->swing_neg = res->in_pos = res->in_neg = SS_NAN;
    res->swing_pos_tran = res->swing_neg_tran = SS_NAN;
    for (int d = 0; d < 2 && st == SS_OK; d++) {
        clip_side side;
        st = clip_search(&c, d == 0 ? 1.0 : -1.0, g0, v_scale, work, &side);
        if (st != SS_OK || !side.found)
            continue;
        if (side.dvout > 0.0 && isnan(res->swing_pos)) {
            res->swing_pos = side.dvout;
            res->in_pos = fabs(side.du);
        } else if (side.dvout < 0.0 && isnan(res->swing_neg)) {
            res->swing_neg = -side.dvout;
            res->in_neg = fabs(side.du);
        }
    }
    sr->src->value = c.u0;
    if (st != SS_OK) {
        err_set(err, st, NULL, 0, "large signal: %s while following the transfer",
                ss_status_name(st));
        goto done;
    }
    if (isnan(res->swing_pos) || isnan(res->swing_neg))
        circuit_warn(ckt,
                     "large signal: the output of '%s' does not clip %s within %g V of input "
                     "excursion; that swing is left empty",
                     ckt->stage_out,
                     isnan(res->swing_pos) && isnan(res->swing_neg) ? "either way"
                     : isnan(res->swing_pos)                        ? "upwards"
                                                                    : "downwards",
                     CLIP_RANGE * v_scale / fabs(g0));
    /* confirmation in the transient: the periodic output's peak at each onset amplitude */
    for (int d = 0; d < 2 && st == SS_OK; d++) {
        double amp = d == 0 ? res->in_pos : res->in_neg;
        if (isnan(amp))
            continue;
        thd_run r;
        memset(&r, 0, sizeof r);
        r.amp = amp;
        r.freq_hz = res->freq_hz;
        r.for_swing = 1;
        st = thd_measure(ckt, sr, &r, 0, err);
        if (st != SS_OK)
            break;
        if (d == 0)
            res->swing_pos_tran = r.vmax - c.vout0;
        else
            res->swing_neg_tran = c.vout0 - r.vmin;
    }
done:
    sr->src->value = c.u0;
    ss_free(c.a0);
    ss_free(c.hist);
    ss_free(c.x);
    ss_free(work);
    return st;
}

/* ---- the amplitude for a THD ------------------------------------------------------------- */

/* The periodic state one THD run of a search ended in, for the next to start from: the
 * amplitudes it tries are close, and a stage with slow bias networks would otherwise settle
 * them afresh from the operating point every time. */
typedef struct thd_warm {
    double *state; /* every unknown (NULL: start every run from the operating point) */
    int have;
} thd_warm;

static ss_status thd_at(ss_circuit *ckt, const stage_ref *sr, double amp, double freq_hz,
                        double goal, thd_warm *warm, double *thd, ss_error *err)
{
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amp;
    r.freq_hz = freq_hz;
    r.goal = goal;
    r.state = warm->state;
    r.have_state = warm->have;
    ss_status st = thd_measure(ckt, sr, &r, 0, err);
    warm->have = r.have_state;
    if (st == SS_OK && !(r.thd >= 0.0))
        st = err_set(err, SS_ERR_INPUT, ckt->file, 0,
                     "THD: no fundamental at the output '%s' at %g Hz", ckt->stage_out, freq_hz);
    if (st == SS_OK)
        *thd = r.thd;
    return st;
}

/* The amplitude where THD = target (a ratio), searched from a_start and not above a_max.
 * *out_amp is NaN when THD stays below the target up to a_max. */
static ss_status amplitude_at_thd(ss_circuit *ckt, const stage_ref *sr, double target,
                                  double freq_hz, double a_start, double a_max, thd_warm *warm,
                                  double *out_amp, ss_error *err)
{
    /* bracket [a_lo, a_hi] with THD(a_lo) < target <= THD(a_hi), by factors of two */
    double a = fmin(a_start, a_max), thd = 0.0;
    ss_status st = thd_at(ckt, sr, a, freq_hz, target, warm, &thd, err);
    if (st != SS_OK)
        return st;
    double a_lo = 0.0, t_lo = 0.0, a_hi = 0.0, t_hi = 0.0;
    if (thd < target) {
        a_lo = a;
        t_lo = thd;
        for (int k = 0; k < 40 && st == SS_OK && a < a_max; k++) {
            a = fmin(THD_BRACKET_GROW * a, a_max);
            st = thd_at(ckt, sr, a, freq_hz, target, warm, &thd, err);
            if (st == SS_OK && thd >= target) {
                a_hi = a;
                t_hi = thd;
                break;
            }
            if (st == SS_OK) {
                a_lo = a;
                t_lo = thd;
            }
        }
    } else {
        a_hi = a;
        t_hi = thd;
        for (int k = 0; k < 80 && st == SS_OK; k++) {
            a /= THD_BRACKET_GROW;
            st = thd_at(ckt, sr, a, freq_hz, target, warm, &thd, err);
            if (st == SS_OK && thd < target) {
                a_lo = a;
                t_lo = thd;
                break;
            }
            if (st == SS_OK) {
                a_hi = a;
                t_hi = thd;
            }
        }
    }
    if (st != SS_OK)
        return st;
    if (!(a_hi > 0.0)) { /* below the target all the way up */
        *out_amp = SS_NAN;
        return SS_OK;
    }
    if (!(a_lo > 0.0))
        return err_set(err, SS_ERR_NO_CONVERGENCE, ckt->file, 0,
                       "THD stays above %g %% down to amplitude %g (%g %% there): the stage "
                       "distorts even small signals, or the output is mostly noise",
                       100.0 * target, a, 100.0 * thd);
    /* regula falsi on (log a, log THD) with the Illinois halving (Dowell & Jarratt, BIT 11,
     * 168, 1971 -- from memory); THD at small amplitudes grows like a power of it, so the
     * log-log line is nearly straight */
    double la = log(a_lo), lb = log(a_hi);
    double fa = log(fmax(t_lo, 1e-300) / target), fb = log(t_hi / target);
    int side = 0;
    double best = a_hi, best_err = fabs(t_hi / target - 1.0);
    for (int it = 0; it < THD_SEARCH_MAX && best_err > THD_TARGET_REL && lb - la > 1e-6; it++) {
        double lm = (fb - fa) != 0.0 ? lb - fb * (lb - la) / (fb - fa) : 0.5 * (la + lb);
        if (!(lm > la && lm < lb))
            lm = 0.5 * (la + lb);
        st = thd_at(ckt, sr, exp(lm), freq_hz, target, warm, &thd, err);
        if (st != SS_OK)
            return st;
        double fm = log(thd / target);
        if (fabs(thd / target - 1.0) < best_err) {
            best_err = fabs(thd / target - 1.0);
            best = exp(lm);
        }
        if (fm < 0.0) {
            la = lm;
            fa = fm;
            if (side == -1)
                fb *= 0.5;
            side = -1;
        } else {
            lb = lm;
            fb = fm;
            if (side == 1)
                fa *= 0.5;
            side = 1;
        }
    }
    *out_amp = best;
    return SS_OK;
}

ss_status ss_stage_amplitude_at_thd(ss_circuit *ckt, double thd_target_pct, double freq_hz,
                                    double *out_amplitude, ss_error *err)
{
    stage_ref sr;
    ss_status st = stage_lookup(ckt, &sr, err);
    if (st != SS_OK)
        return st;
    if (!(thd_target_pct > 0.0 && thd_target_pct < 100.0) || !(freq_hz > 0.0 && isfinite(freq_hz)))
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "THD target %g %% must be between 0 and 100, frequency %g Hz positive",
                       thd_target_pct, freq_hz);
    if ((st = ensure_op(ckt, err)) != SS_OK)
        return st;
    /* start where a tenth of the largest node voltage comes out at the AC gain */
    double v_scale = 1.0;
    for (int u = 0; u < ckt->n_nodes - 1; u++)
        v_scale = fmax(v_scale, fabs(ckt->x_op[u]));
    double complex g;
    double zin, zout;
    if ((st = stage_at_frequency(ckt, freq_hz, &g, &zin, &zout, err)) != SS_OK)
        return st;
    if (!(cabs(g) > 0.0))
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "THD: the stage passes nothing to '%s' at %g Hz", ckt->stage_out, freq_hz);
    double a0 = 0.1 * v_scale / cabs(g), a_max = CLIP_RANGE * v_scale / cabs(g), a;
    thd_warm warm = {ss_alloc((size_t)ckt->n_unknowns * sizeof(double)), 0};
    if (!warm.state)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    st = amplitude_at_thd(ckt, &sr, thd_target_pct / 100.0, freq_hz, a0, a_max, &warm, &a, err);
    ss_free(warm.state);
    if (st == SS_OK && isnan(a))
        return err_set(err, SS_ERR_NO_CONVERGENCE, ckt->file, 0,
                       "THD stays below %g %% up to amplitude %g (output %g V peak at the AC "
                       "gain)",
                       thd_target_pct, a_max, CLIP_RANGE * v_scale);
    if (st == SS_OK)
        *out_amplitude = a;
    return st;
}

/* ---- summary tables ---------------------------------------------------------------------- */

static int add_metric(ss_table *t, const char *label, double v)
{
    double *row = table_add_row(t, label);
    if (!row)
        return -1;
    row[0] = v;
    return 0;
}

static ss_status clipping_rows(ss_circuit *ckt, const stage_ref *sr, ss_table *t, clip_result *res,
                               ss_error *err)
{
    ss_status st = clipping_compute(ckt, sr, res, err);
    if (st != SS_OK)
        return st;
    const char *in_pos = sr->is_current ? "iin_at_swing_pos_a" : "vin_at_swing_pos_v";
    const char *in_neg = sr->is_current ? "iin_at_swing_neg_a" : "vin_at_swing_neg_v";
    /* one row after the other: the operands of | may be evaluated in any order, and the rows'
     * order is large_signal.csv's */
    const struct {
        const char *name;
        double v;
    } rows[] = {{"ls_freq_hz", res->freq_hz},
                {"qs_gain", res->qs_gain},
                {"swing_pos_v", res->swing_pos},
                {"swing_neg_v", res->swing_neg},
                {in_pos, res->in_pos},
                {in_neg, res->in_neg},
                {"swing_pos_tran_v", res->swing_pos_tran},
                {"swing_neg_tran_v", res->swing_neg_tran}};
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
        if (add_metric(t, rows[i].name, rows[i].v) != 0)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    return SS_OK;
}

static ss_table *metric_table(void)
{
    ss_table *t = table_create(1, "metric");
    if (t && table_set_col(t, 0, "value") != 0)
        ss_table_destroy(&t);
    return t;
}

/* The stage, a fresh metric table and its clipping rows: what both public entries start with.
 * Outputs written on success only. */
static ss_status clipping_summary(ss_circuit *ckt, stage_ref *sr, ss_table **out,
                                  clip_result *res, ss_error *err)
{
    ss_status st = stage_lookup(ckt, sr, err);
    if (st != SS_OK)
        return st;
    ss_table *t = metric_table();
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    memset(res, 0, sizeof *res);
    st = clipping_rows(ckt, sr, t, res, err);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}

ss_status ss_stage_clipping(ss_circuit *ckt, ss_table **out_summary, ss_error *err)
{
    stage_ref sr;
    clip_result res;
    return clipping_summary(ckt, &sr, out_summary, &res, err);
}

ss_status ss_stage_large_signal(ss_circuit *ckt, ss_table **out_summary, ss_error *err)
{
    stage_ref sr;
    clip_result res;
    ss_table *t = NULL;
    ss_status st = clipping_summary(ckt, &sr, &t, &res, err);
    if (st != SS_OK)
        return st;
    double f = ls_freq(ckt);
    double thd_pct = SS_NAN, thd_err_pct = SS_NAN;
    thd_warm warm = {ss_alloc((size_t)ckt->n_unknowns * sizeof(double)), 0};
    if (!warm.state)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK && ckt->ls_amp > 0.0) {
        thd_run r;
        memset(&r, 0, sizeof r);
        r.amp = ckt->ls_amp;
        r.freq_hz = f;
        r.state = warm.state; /* from the operating point; the search goes on from its end */
        st = thd_measure(ckt, &sr, &r, 0, err);
        warm.have = r.have_state;
        if (st == SS_OK && !(r.a[1] > 0.0))
            st = err_set(err, SS_ERR_INPUT, ckt->file, 0,
                         "THD: no fundamental at the output '%s' (the stage does not pass %g Hz)",
                         ckt->stage_out, f);
        thd_pct = 100.0 * r.thd;
        thd_err_pct = 100.0 * r.thd_err;
    }
    double target =
        ckt->ls_thd_target_pct > 0.0 ? ckt->ls_thd_target_pct : LS_THD_TARGET_DEFAULT_PCT;
    double a_thd = SS_NAN;
    if (st == SS_OK) {
        /* start the search at the smaller clipping onset, where THD is usually near 1 % */
        double a0 = fmin(isnan(res.in_pos) ? HUGE_VAL : res.in_pos,
                         isnan(res.in_neg) ? HUGE_VAL : res.in_neg);
        double v_scale = 1.0;
        for (int u = 0; u < ckt->n_nodes - 1; u++)
            v_scale = fmax(v_scale, fabs(ckt->x_op[u]));
        double a_max = CLIP_RANGE * v_scale / fabs(res.qs_gain);
        if (!isfinite(a0))
            a0 = 0.1 * a_max;
        st = amplitude_at_thd(ckt, &sr, target / 100.0, f, a0, a_max, &warm, &a_thd, err);
        if (st == SS_OK && isnan(a_thd))
            circuit_warn(ckt,
                         "large signal: THD stays below %g %% up to input amplitude %g; "
                         "vin_at_thd is left empty",
                         target, a_max);
    }
    if (st == SS_OK) {
        const struct {
            const char *name;
            double v;
        } rows[] = {{sr.is_current ? "thd_amp_a" : "thd_amp_v",
                     ckt->ls_amp > 0.0 ? ckt->ls_amp : SS_NAN},
                    {"thd_pct", thd_pct},
                    {"thd_err_pct", thd_err_pct},
                    {"thd_target_pct", target},
                    {sr.is_current ? "iin_at_thd_a" : "vin_at_thd_v", a_thd}};
        for (size_t i = 0; i < sizeof rows / sizeof rows[0] && st == SS_OK; i++)
            if (add_metric(t, rows[i].name, rows[i].v) != 0)
                st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    ss_free(warm.state);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_summary = t;
    return SS_OK;
}
