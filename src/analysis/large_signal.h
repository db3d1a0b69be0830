/* What the stage's large-signal figures share (clip.c: the swing at the onset of clipping;
 * thd.c: THD and the amplitude for a THD): the stage, the periodic steady-state run of
 * large_signal.c, and the clipping summary both public summaries start with. */
#ifndef SS_LARGE_SIGNAL_H
#define SS_LARGE_SIGNAL_H

#include "analysis/tran.h"

#define LS_THD_TARGET_DEFAULT_PCT 1.0 /* THD whose input amplitude is searched by default */
#define THD_HARMONICS 10
#define THD_STEPS_PER_PERIOD 256 /* a multiple of 4: the sine's peaks fall on samples */
#define CLIP_RANGE 4.0           /* search up to 4 x (largest node voltage) of output */

typedef struct stage_ref {
    element *src;
    int out_node;
    int is_current; /* an I source: amplitudes in A */
} stage_ref;

/* The stage source and output node the circuit names (.stage or --in/--out), into *r.
 * Returns SS_OK or SS_ERR_INPUT (no stage named, or its source or node not found). */
SS_HIDDEN ss_status ls_stage_lookup(ss_solver *sv, stage_ref *r, ss_error *err);
/* The signal frequency: the circuit's, or the default when it names none. */
SS_HIDDEN double ls_freq(const ss_solver *sv);
/* Solves the operating point unless the circuit holds it; returns as op_solve_into. */
SS_HIDDEN ss_status ls_ensure_op(ss_solver *sv, ss_error *err);
/* Appends the row label = v to a one-column metric table; 0 ok, -1 no memory. */
SS_HIDDEN int ls_add_metric(ss_table *t, const char *label, double v);

/* Harmonics 1..n_harm of one period of n uniform samples x: amp[k] and the sine phase
 * phase_deg[k] (index 0 unused); the DFT behind them is at the definition. */
SS_HIDDEN void thd_harmonics(const double *x, int n, int n_harm, double *amp, double *phase_deg);
/* THD from amplitudes amp[1..n_harm]: sqrt(sum_{k>=2} A_k^2) / A_1 (a ratio, not percent). */
SS_HIDDEN double thd_ratio(const double *amp, int n_harm);

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

/* Drives the stage source with r->amp sin(2 pi f t) around its DC value (every other
 * time-varying source held at its DC value), runs to the periodic steady state and analyses
 * the last complete period. want_wave: keep the last periods for a plot (caller frees
 * r->wave_t / r->wave_out with ss_free). */
SS_HIDDEN ss_status thd_measure(ss_solver *sv, const stage_ref *sr, thd_run *r, int want_wave,
                                ss_error *err);

/* ---- the clipping summary (clip.c) ------------------------------------------------------- */

typedef struct clip_result {
    double freq_hz, qs_gain, gain_ac;
    double swing_pos, swing_neg; /* output, V (NaN: none found) */
    double in_pos, in_neg;       /* input amplitude at each onset (NaN: none) */
    double swing_pos_tran, swing_neg_tran;
} clip_result;

/* The stage, a fresh metric table and its clipping rows: what both public entries start with.
 * Outputs written on success only. */
SS_HIDDEN ss_status clipping_summary(ss_solver *sv, stage_ref *sr, ss_table **out,
                                     clip_result *res, ss_error *err);

#endif
