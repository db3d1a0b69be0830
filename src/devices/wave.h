/* Time-varying forms of independent sources -- SIN, PULSE, PWL: parsing what is inside the
 * form's parentheses, the value at a time, the corners a transient must step onto and the time
 * scales it must follow. Integrating the circuit is src/analysis/tran.c's. */
#ifndef SS_WAVE_H
#define SS_WAVE_H

#include "devices/device.h"

enum wave_kind { WAVE_SIN = 0, WAVE_PULSE = 1, WAVE_PWL = 2 };

/* Parameter positions. SIN(VO VA FREQ [TD [THETA [PHASE]]]), PULSE(V1 V2 [TD [TR [TF [PW
 * [PER]]]]]), PWL(T1 V1 T2 V2 ...). docs/transient.md gives the formulas. */
enum { WS_VO, WS_VA, WS_FREQ, WS_TD, WS_THETA, WS_PHASE };
enum { WP_V1, WP_V2, WP_TD, WP_TR, WP_TF, WP_PW, WP_PER };

typedef struct src_wave {
    enum wave_kind kind;
    double p[7];       /* SIN / PULSE parameters, defaults filled in */
    const double *pwl; /* PWL: t0 v0 t1 v1 ... (2 n_pwl values, times strictly increasing) */
    int n_pwl;
} src_wave;

/* 1 when tok starts a form ("sin(...)", "pulse", "pwl(...)"): letters then '(' or the end. */
SS_HIDDEN int wave_is_form(const char *tok);

/* Parses a form from the element line: tok is the token holding the form's name (and, in the
 * one-token spelling `sin(0 1 1k)`, its parenthesised arguments); when the name stands alone
 * the arguments are the next token `(...)`. Writes an arena-allocated src_wave into *out.
 * Returns the number of tokens used (1 or 2), or -1 with the error set naming the element. */
SS_HIDDEN int wave_parse(pctx *p, int tok_index, src_wave **out);

/* The form stays computable (finite) from t = 0 to t_end_s: a SIN's phase 2 pi f t and its
 * growth exp(-THETA t) for a negative THETA. (The values themselves, the SIN frequency at
 * t = 0 and the steps of PULSE and PWL are checked by wave_parse.) 0 ok; -1 with the reason in
 * why. */
SS_HIDDEN int wave_check_until(const src_wave *w, double t_end_s, char *why, size_t why_len);

/* The source value at time t_s (t < 0 is taken as 0). tstep_s: the transient's output step,
 * which stands for a PULSE rise or fall time given as 0 or left out (common practice); with
 * tstep_s 0 such an edge is a jump. */
SS_HIDDEN double wave_value(const src_wave *w, double t_s, double tstep_s);

/* The first corner of the waveform strictly after t_s (PULSE edges, PWL points, a SIN's
 * delay), or HUGE_VAL when there is none. */
SS_HIDDEN double wave_next_break(const src_wave *w, double t_s, double tstep_s);

/* Steps per period a SIN needs at least for the transient to follow it (our choice: enough
 * for the truncation-error estimate to see its curvature, which then sets the step). */
#define WAVE_SIN_STEPS 20

/* The longest internal step that still follows the form from time t_s on: a SIN's period /
 * WAVE_SIN_STEPS from its delay on; HUGE_VAL before the delay, for a frequency of 0, and for
 * PULSE and PWL, whose every corner the steps land on. */
SS_HIDDEN double wave_max_step(const src_wave *w, double t_s);

/* The form's repetition period: 1 / FREQ of a SIN, PER of a periodic PULSE; HUGE_VAL when it
 * does not repeat. */
SS_HIDDEN double wave_period(const src_wave *w);

/* About how many corners (wave_next_break) the form has in (0, t_s]. */
SS_HIDDEN double wave_corners_until(const src_wave *w, double t_s);

#endif
