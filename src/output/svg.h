/* Bode-plot SVG writer: draws a gain/phase sweep as an SVG 1.1 document (two stacked panels
 * over a log frequency axis). Computing the sweep, corners and mid-band gain is left to others. */
#ifndef SS_OUTPUT_SVG_H
#define SS_OUTPUT_SVG_H

#include "util/util.h"

typedef struct svg_bode_input {
    const char *title;       /* plot title, may be NULL; escape & < > " in all text */
    const double *freq_hz;   /* n points, ascending, > 0 */
    const double *gain_db;   /* n */
    const double *phase_deg; /* n */
    int n;
    double f_low_hz, f_high_hz; /* -3 dB corners; NaN when absent (then no marker) */
    double gain_mid_db;         /* mid-band gain; NaN when unknown */
} svg_bode_input;

/* Writes an SVG 1.1 document with two stacked panels (magnitude in dB, phase in degrees) over a
 * log frequency axis spanning exactly the first to the last frequency.
 * Inputs (not modified): path; in (title is UTF-8 text; the arrays hold in->n points each).
 *   A corner that is NaN, or outside the sweep, gets no marker; a finite gain_mid_db adds the
 *   dashed line 3.01 dB below it. Phase is plotted as given (no unwrapping).
 * Output: the file at path, written atomically (a temporary file in the same folder, then
 *   renamed over path); nothing is left behind on failure.
 * Returns SS_OK, SS_ERR_INPUT (n < 2, non-positive or non-ascending frequency, NaN or infinite
 * data or corner), SS_ERR_IO, SS_ERR_NOMEM; err names path and the offending point. */
SS_HIDDEN ss_status svg_write_bode(const char *path, const svg_bode_input *in, ss_error *err);

/* Same, into a caller-owned string buffer (for tests).
 * Output: the document appended to *out on success; on failure *out is as it was.
 * Returns SS_OK, SS_ERR_INPUT, SS_ERR_NOMEM (also when *out had already failed). */
SS_HIDDEN ss_status svg_render_bode(ss_strbuf *out, const svg_bode_input *in, ss_error *err);

/* ---- study plots (study_svg.c) ----------------------------------------------------------- */

/* One figure of a study: its value at every point and its limit band. */
typedef struct svg_study_panel {
    const char *figure;
    const double *v; /* n values; NaN for a point that did not solve (not drawn) */
    double lo, hi;   /* the band every limit on it leaves; -HUGE_VAL / HUGE_VAL when open */
    int has_limit;
} svg_study_panel;

typedef struct svg_study_input {
    const char *title; /* may be NULL */
    int histogram;     /* 1: a histogram per figure (tolerance runs); 0: curves over x (sweeps) */
    const double *x;   /* curves: the swept value of each point */
    const char *x_name;
    int x_log;        /* curves: a log x axis (every x > 0) */
    const int *curve; /* curves: each point's curve (the other swept values), 0 .. n_curves-1 */
    int n_curves;
    const char *const *curve_label; /* n_curves labels ("bf=200"), or NULL */
    int n; /* points */
    const svg_study_panel *panels;
    int n_panels;
} svg_study_input;

/* An SVG 1.1 document with one panel per figure, stacked: a histogram of its values (bars with
 * data-count, the limits as vertical lines) or its curves over the swept value (polylines, the
 * limit band shaded, failing points marked). Each panel's plot area is a rect of class
 * plot-area whose data-x / data-y give the axis ranges (data-x-scale lin or log), so a reader
 * can map every coordinate back to its value. Atomic write; SS_ERR_INPUT when there is no
 * panel or no point. */
SS_HIDDEN ss_status svg_write_study(const char *path, const svg_study_input *in, ss_error *err);
SS_HIDDEN ss_status svg_render_study(ss_strbuf *out, const svg_study_input *in, ss_error *err);

/* ---- primitives shared by the plot writers (svg_draw.c) ---------------------------------- */

SS_HIDDEN void svg_put(ss_strbuf *b, const char *s);
/* Text for element content or an attribute: & < > " as entities, control characters XML 1.0
 * does not allow as spaces. */
SS_HIDDEN void svg_put_escaped(ss_strbuf *b, const char *s);
/* A <text> element at (x, y); anchor "start", "middle" or "end"; attrs "" or more attributes. */
SS_HIDDEN void svg_put_text(ss_strbuf *b, double x, double y, const char *anchor,
                            const char *attrs, const char *text);
/* A tick label: as many decimals as the step needs (%.3g from 1e7 up), a true minus sign, no
 * sign on a value that prints as zero. */
SS_HIDDEN void svg_format_tick(char *buf, size_t buf_len, double v, double step);
/* The candidate times unit closest to raw on a log scale. */
SS_HIDDEN double svg_closest_step(double raw, const double *cand, int n_cand, double unit);
/* Tick step from the 1-2-5 series (common practice). */
SS_HIDDEN double svg_nice_step_125(double raw);
/* Smallest and largest of v[0 .. n-1], n >= 1. */
SS_HIDDEN void svg_data_range(const double *v, int n, double *lo, double *hi);

#endif
