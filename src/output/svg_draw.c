/* SVG text primitives shared by the plot writers (svg.c: Bode plot, wave_svg.c: waveforms):
 * escaped text, <text> elements, tick steps and tick labels. Layout is each writer's own. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "output/output.h"
#include "output/svg.h"

#define U_MINUS "\xE2\x88\x92" /* the true minus sign (the documents declare UTF-8) */

void svg_put(ss_strbuf *b, const char *s) { strbuf_append(b, s, strlen(s)); }

/* & < > " become entities, control characters XML 1.0 does not allow become spaces, and
 * bytes that are not UTF-8 become U+FFFD, so any title keeps the file well-formed. */
void svg_put_escaped(ss_strbuf *b, const char *s) { xml_put_text(b, s); }

void svg_put_text(ss_strbuf *b, double x, double y, const char *anchor, const char *attrs,
                  const char *text)
{
    strbuf_printf(b, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"%s\"%s%s>", x, y, anchor,
                  attrs[0] ? " " : "", attrs);
    svg_put_escaped(b, text);
    svg_put(b, "</text>\n");
}

void svg_format_tick(char *buf, size_t buf_len, double v, double step)
{
    char digits[48];
    int dec = step >= 1.0 ? 0 : (int)ceil(-log10(step) - 1e-9);
    if (dec > 9)
        dec = 9;
    if (fabs(v) >= 1e7)
        snprintf(digits, sizeof digits, "%.3g", fabs(v));
    else
        snprintf(digits, sizeof digits, "%.*f", dec, fabs(v));
    int is_zero = strspn(digits, "0.") == strlen(digits);
    snprintf(buf, buf_len, "%s%s", v < 0.0 && !is_zero ? U_MINUS : "", digits);
}

double svg_closest_step(double raw, const double *cand, int n_cand, double unit)
{
    double best = cand[0] * unit;
    for (int i = 1; i < n_cand; i++)
        if (fabs(log(cand[i] * unit / raw)) < fabs(log(best / raw)))
            best = cand[i] * unit;
    return best;
}

double svg_nice_step_125(double raw)
{
    static const double mult[] = {1.0, 2.0, 5.0, 10.0};
    return svg_closest_step(raw, mult, 4, pow(10.0, floor(log10(raw))));
}

void svg_data_range(const double *v, int n, double *lo, double *hi)
{
    *lo = v[0];
    *hi = v[0];
    for (int i = 1; i < n; i++) {
        if (v[i] < *lo)
            *lo = v[i];
        if (v[i] > *hi)
            *hi = v[i];
    }
}
