/* stagesim: stage figures: the stage's source, output and load, its small-signal figures, the
 * large-signal test (THD, clipping)
 * Part of the public API; include "stagesim/stagesim.h" for all of it (docs/api.md). */
#ifndef STAGESIM_STAGE_H
#define STAGESIM_STAGE_H

#include "stagesim/core.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Names the stage's driving source and output node on a context (overrides a .stage line).
 * Returns SS_ERR_INPUT when the source or node does not exist. */
SS_API ss_status ss_solver_set_stage(ss_solver *sv, const char *in_source, const char *out_node,
                                     ss_error *err);
/* The stage's load in ohm (overrides .stage load=): positive and finite, else SS_ERR_INPUT. */
SS_API ss_status ss_solver_set_load(ss_solver *sv, double load_ohm, ss_error *err);

/* Stage figures over the .ac frequencies: out_stage (freq_hz, gain, gain_db, phase_deg,
 * zin_ohm, zout_ohm) and out_summary (metric,value). Corners are refined by extra solves. */
SS_API ss_status ss_stage_run(ss_solver *sv, ss_table **out_stage, ss_table **out_summary,
                              ss_error *err);
/* The same, the stage rows into a sink (sent once every figure is found) and the summary, when
 * out_summary is not NULL, into *out_summary (the caller's; written on success only). */
SS_API ss_status ss_stage_emit(ss_solver *sv, ss_sink *sink, ss_table **out_summary,
                               ss_error *err);

/* The stage's large-signal test on a context (each overrides its .large_signal setting and
 * turns the test on): the signal frequency (positive; default 1 kHz), the input amplitude THD is
 * computed at (V for a voltage source, A for a current source; positive; none by default) and
 * the THD in percent whose input amplitude is searched for (above 0, below 100; default 1 %).
 * SS_ERR_INPUT for a value outside its range. */
SS_API ss_status ss_solver_set_test_frequency(ss_solver *sv, double freq_hz, ss_error *err);
SS_API ss_status ss_solver_set_test_amplitude(ss_solver *sv, double amplitude, ss_error *err);
SS_API ss_status ss_solver_set_thd_target(ss_solver *sv, double thd_target_pct, ss_error *err);
/* The large-signal test in force, defaults applied: frequency (Hz), amplitude (0 when none is
 * named) and THD target (percent). Any output may be NULL. */
SS_API void ss_solver_large_signal(const ss_solver *sv, double *freq_hz, double *amplitude,
                                    double *thd_target_pct);

/* THD of the stage: its source driven by amplitude * sin(2 pi freq_hz t) around its DC value
 * (every other source at its DC value), run until the THD's estimated error from the distance
 * to the periodic steady state is within 1e-4 of it (docs/transient.md), then the first 10
 * harmonics of v(out) from a DFT over one whole period sampled at 256 points;
 * THD = sqrt(A2^2 + ... + A10^2) / A1, in percent.
 * Outputs (owned by the caller, written on success only; each may be NULL if not wanted):
 *   out_thd_pct   the THD in percent
 *   out_harmonics harmonic, freq_hz, amplitude_v, relative_pct (of A1), phase_deg (of a sine)
 *   out_wave      time_s, in(SOURCE) (its value: V or A), v(OUT): the last 3 periods
 * Returns SS_OK, SS_ERR_INPUT (no stage, amplitude or frequency not positive),
 * SS_ERR_NO_CONVERGENCE, SS_ERR_SINGULAR, SS_ERR_NOMEM. */
SS_API ss_status ss_stage_thd(ss_solver *sv, double amplitude, double freq_hz,
                              double *out_thd_pct, ss_table **out_harmonics, ss_table **out_wave,
                              ss_error *err);

/* The input amplitude at which the stage's THD at freq_hz reaches thd_target_pct (bracketing,
 * then regula falsi on log amplitude against log THD, to 0.1 % of the target). Returns SS_OK,
 * SS_ERR_INPUT, SS_ERR_NO_CONVERGENCE (also: the target is not reached below clipping),
 * SS_ERR_SINGULAR, SS_ERR_NOMEM. */
SS_API ss_status ss_stage_amplitude_at_thd(ss_solver *sv, double thd_target_pct,
                                           double freq_hz, double *out_amplitude, ss_error *err);

/* Output swing at the onset of clipping, both polarities: from the stage's quasi-static
 * transfer (its source's DC value swept with every capacitor the signal frequency sees as a
 * short held at its operating-point voltage), the output excursion from the bias where the
 * slope dV(out)/dV(in) has fallen to 90 % of its value at the bias; then confirmed by a
 * transient at the signal frequency with the input amplitude of each onset.
 * Output *out_summary (metric,value): ls_freq_hz, qs_gain, swing_pos_v, swing_neg_v,
 * vin_at_swing_pos_v, vin_at_swing_neg_v (iin_..._a for a current source), swing_pos_tran_v,
 * swing_neg_tran_v; a polarity that does not clip within four times the largest node voltage
 * is written empty. Returns as ss_stage_thd. */
SS_API ss_status ss_stage_clipping(ss_solver *sv, ss_table **out_summary, ss_error *err);

/* Every large-signal figure in one metric,value table: ss_stage_clipping's rows, then thd_pct
 * (at the .large_signal amplitude; empty without one) and thd_err_pct (its estimated error
 * from the distance to the periodic steady state, percentage points; empty when unknown),
 * thd_target_pct and vin_at_thd_v (iin_at_thd_a for a current source). Returns as
 * ss_stage_thd. */
SS_API ss_status ss_stage_large_signal(ss_solver *sv, ss_table **out_summary, ss_error *err);
/* The same table's labelled rows into a sink, once every figure is found. */
SS_API ss_status ss_stage_large_signal_emit(ss_solver *sv, ss_sink *sink, ss_error *err);

#ifdef __cplusplus
}
#endif
#endif
