/* The stage's THD figures: THD of the periodic steady state at a given amplitude (its
 * harmonics and waveform), the amplitude for a given THD, and the large-signal summary that
 * adds both to the clipping rows of clip.c. The periodic run is large_signal.c's;
 * docs/transient.md defines every figure. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/large_signal.h"
#include "output/sink.h"

#define THD_TARGET_REL 1e-3 /* vin_at_thd: |THD / target - 1| */
#define THD_SEARCH_MAX 40
#define THD_BRACKET_GROW 1.5 /* bracketing steps in amplitude */

ss_status ss_stage_thd(ss_solver *sv, double amplitude, double freq_hz, double *out_thd_pct,
                       ss_table **out_harmonics, ss_table **out_wave, ss_error *err)
{
    stage_ref sr;
    ss_status st = ls_stage_lookup(sv, &sr, err);
    if (st != SS_OK)
        return st;
    if (!(amplitude > 0.0 && isfinite(amplitude)) || !(freq_hz > 0.0 && isfinite(freq_hz)))
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "THD: amplitude (%g) and frequency (%g Hz) must be positive", amplitude,
                       freq_hz);
    if ((st = ls_ensure_op(sv, err)) != SS_OK)
        return st;
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amplitude;
    r.freq_hz = freq_hz;
    st = thd_measure(sv, &sr, &r, out_wave != NULL, err);
    if (st != SS_OK)
        return st;
    if (!(r.a[1] > 0.0)) {
        ss_free(r.wave_t);
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "THD: no fundamental at the output '%s' (the stage does not pass %g Hz)",
                       sv->stage.out, freq_hz);
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
        snprintf(out_name, sizeof out_name, "v(%s)", sv->stage.out);
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
SS_HIDDEN ss_status thd_steady_state(ss_solver *sv, double amplitude, double freq_hz,
                                     int for_swing, double *last_period, double *thd,
                                     double *thd_err, double *dist_v, long *periods,
                                     ss_error *err);
ss_status thd_steady_state(ss_solver *sv, double amplitude, double freq_hz, int for_swing,
                           double *last_period, double *thd, double *thd_err, double *dist_v,
                           long *periods, ss_error *err)
{
    stage_ref sr;
    ss_status st = ls_stage_lookup(sv, &sr, err);
    if (st == SS_OK)
        st = ls_ensure_op(sv, err);
    if (st != SS_OK)
        return st;
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amplitude;
    r.freq_hz = freq_hz;
    r.for_swing = for_swing;
    if ((st = thd_measure(sv, &sr, &r, last_period != NULL, err)) != SS_OK)
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

/* ---- the amplitude for a THD ------------------------------------------------------------- */

/* The periodic state one THD run of a search ended in, for the next to start from: the
 * amplitudes it tries are close, and a stage with slow bias networks would otherwise settle
 * them afresh from the operating point every time. */
typedef struct thd_warm {
    double *state; /* every unknown (NULL: start every run from the operating point) */
    int have;
} thd_warm;

static ss_status thd_at(ss_solver *sv, const stage_ref *sr, double amp, double freq_hz,
                        double goal, thd_warm *warm, double *thd, ss_error *err)
{
    thd_run r;
    memset(&r, 0, sizeof r);
    r.amp = amp;
    r.freq_hz = freq_hz;
    r.goal = goal;
    r.state = warm->state;
    r.have_state = warm->have;
    ss_status st = thd_measure(sv, sr, &r, 0, err);
    warm->have = r.have_state;
    if (st == SS_OK && !(r.thd >= 0.0))
        st = err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                     "THD: no fundamental at the output '%s' at %g Hz", sv->stage.out, freq_hz);
    if (st == SS_OK)
        *thd = r.thd;
    return st;
}

/* The amplitude where THD = target (a ratio), searched from a_start and not above a_max.
 * *out_amp is NaN when THD stays below the target up to a_max. */
static ss_status amplitude_at_thd(ss_solver *sv, const stage_ref *sr, double target,
                                  double freq_hz, double a_start, double a_max, thd_warm *warm,
                                  double *out_amp, ss_error *err)
{
    /* bracket [a_lo, a_hi] with THD(a_lo) < target <= THD(a_hi), by factors of two */
    double a = fmin(a_start, a_max), thd = 0.0;
    ss_status st = thd_at(sv, sr, a, freq_hz, target, warm, &thd, err);
    if (st != SS_OK)
        return st;
    double a_lo = 0.0, t_lo = 0.0, a_hi = 0.0, t_hi = 0.0;
    if (thd < target) {
        a_lo = a;
        t_lo = thd;
        for (int k = 0; k < 40 && st == SS_OK && a < a_max; k++) {
            a = fmin(THD_BRACKET_GROW * a, a_max);
            st = thd_at(sv, sr, a, freq_hz, target, warm, &thd, err);
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
            st = thd_at(sv, sr, a, freq_hz, target, warm, &thd, err);
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
        return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
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
        st = thd_at(sv, sr, exp(lm), freq_hz, target, warm, &thd, err);
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

ss_status ss_stage_amplitude_at_thd(ss_solver *sv, double thd_target_pct, double freq_hz,
                                    double *out_amplitude, ss_error *err)
{
    stage_ref sr;
    ss_status st = ls_stage_lookup(sv, &sr, err);
    if (st != SS_OK)
        return st;
    if (!(thd_target_pct > 0.0 && thd_target_pct < 100.0) || !(freq_hz > 0.0 && isfinite(freq_hz)))
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "THD target %g %% must be between 0 and 100, frequency %g Hz positive",
                       thd_target_pct, freq_hz);
    if ((st = ls_ensure_op(sv, err)) != SS_OK)
        return st;
    /* start where a tenth of the largest node voltage comes out at the AC gain */
    double v_scale = 1.0;
    for (int u = 0; u < sv->n_nodes - 1; u++)
        v_scale = fmax(v_scale, fabs(sv->x_op[u]));
    double complex g;
    double zin, zout;
    if ((st = stage_at_frequency(sv, freq_hz, &g, &zin, &zout, err)) != SS_OK)
        return st;
    if (!(cabs(g) > 0.0))
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "THD: the stage passes nothing to '%s' at %g Hz", sv->stage.out, freq_hz);
    double a0 = 0.1 * v_scale / cabs(g), a_max = CLIP_RANGE * v_scale / cabs(g), a;
    thd_warm warm = {ss_alloc((size_t)sv->n_unknowns * sizeof(double)), 0};
    if (!warm.state)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    st = amplitude_at_thd(sv, &sr, thd_target_pct / 100.0, freq_hz, a0, a_max, &warm, &a, err);
    ss_free(warm.state);
    if (st == SS_OK && isnan(a))
        return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
                       "THD stays below %g %% up to amplitude %g (output %g V peak at the AC "
                       "gain)",
                       thd_target_pct, a_max, CLIP_RANGE * v_scale);
    if (st == SS_OK)
        *out_amplitude = a;
    return st;
}

/* The large-signal summary: clip.c's rows, then the THD's. */
static ss_status large_signal_table(ss_solver *sv, ss_table **out_summary, ss_error *err)
{
    stage_ref sr;
    clip_result res;
    ss_table *t = NULL;
    ss_status st = clipping_summary(sv, &sr, &t, &res, err);
    if (st != SS_OK)
        return st;
    double f = ls_freq(sv);
    double thd_pct = SS_NAN, thd_err_pct = SS_NAN;
    thd_warm warm = {ss_alloc((size_t)sv->n_unknowns * sizeof(double)), 0};
    if (!warm.state)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK && sv->ls.amp > 0.0) {
        thd_run r;
        memset(&r, 0, sizeof r);
        r.amp = sv->ls.amp;
        r.freq_hz = f;
        r.state = warm.state; /* from the operating point; the search goes on from its end */
        st = thd_measure(sv, &sr, &r, 0, err);
        warm.have = r.have_state;
        if (st == SS_OK && !(r.a[1] > 0.0))
            st = err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                         "THD: no fundamental at the output '%s' (the stage does not pass %g Hz)",
                         sv->stage.out, f);
        thd_pct = 100.0 * r.thd;
        thd_err_pct = 100.0 * r.thd_err;
    }
    double target =
        sv->ls.thd_target_pct > 0.0 ? sv->ls.thd_target_pct : LS_THD_TARGET_DEFAULT_PCT;
    double a_thd = SS_NAN;
    if (st == SS_OK) {
        /* start the search at the smaller clipping onset, where THD is usually near 1 % */
        double a0 = fmin(isnan(res.in_pos) ? HUGE_VAL : res.in_pos,
                         isnan(res.in_neg) ? HUGE_VAL : res.in_neg);
        double v_scale = 1.0;
        for (int u = 0; u < sv->n_nodes - 1; u++)
            v_scale = fmax(v_scale, fabs(sv->x_op[u]));
        double a_max = CLIP_RANGE * v_scale / fabs(res.qs_gain);
        if (!isfinite(a0))
            a0 = 0.1 * a_max;
        st = amplitude_at_thd(sv, &sr, target / 100.0, f, a0, a_max, &warm, &a_thd, err);
        if (st == SS_OK && isnan(a_thd))
            solver_warn(sv,
                         "large signal: THD stays below %g %% up to input amplitude %g; "
                         "vin_at_thd is left empty",
                         target, a_max);
    }
    if (st == SS_OK) {
        const struct {
            const char *name;
            double v;
        } rows[] = {{sr.is_current ? "thd_amp_a" : "thd_amp_v",
                     sv->ls.amp > 0.0 ? sv->ls.amp : SS_NAN},
                    {"thd_pct", thd_pct},
                    {"thd_err_pct", thd_err_pct},
                    {"thd_target_pct", target},
                    {sr.is_current ? "iin_at_thd_a" : "vin_at_thd_v", a_thd}};
        for (size_t i = 0; i < sizeof rows / sizeof rows[0] && st == SS_OK; i++)
            if (ls_add_metric(t, rows[i].name, rows[i].v) != 0)
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

/* The summary is a handful of figures, each a search of its own: made whole, then sent. */
ss_status ss_stage_large_signal_emit(ss_solver *sv, ss_sink *sink, ss_error *err)
{
    ss_table *t = NULL;
    ss_status st = large_signal_table(sv, &t, err);
    if (st == SS_OK)
        st = sink_send_table(sink, t, err);
    ss_table_destroy(&t);
    return st;
}

ss_status ss_stage_large_signal(ss_solver *sv, ss_table **out_summary, ss_error *err)
{
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_stage_large_signal_emit(sv, sink, err);
    if (st == SS_OK)
        *out_summary = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}
