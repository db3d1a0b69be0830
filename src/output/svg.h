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
