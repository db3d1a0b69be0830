/* Noise-density plot (noise.svg): the output and the input-referred noise density of a noise
 * run over a log frequency axis and a log density axis, one panel, decade grid lines with their
 * labels. The numbers come from the noise table (noise.csv); nothing is computed here. */
#define _POSIX_C_SOURCE 200809L

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/circuit.h"
#include "output/output.h"
#include "output/svg.h"
#include "solver/solver.h"
#include "util/table.h"

/* ---- page layout, in SVG user units (px) ------------------------------------------------- */
#define PAGE_W 860.0
#define PAGE_H 560.0
#define X0 96.0 /* the panel */
#define X1 830.0
#define Y0 78.0
#define Y1 470.0
#define TITLE_Y 30.0
#define SUBTITLE_Y 52.0
#define FREQ_LABEL_Y 488.0
#define FREQ_TITLE_Y 520.0
#define YTITLE_X 24.0
#define MAX_DECADES 14 /* the density axis shows at most this many decades below the top */

#define C_TEXT "#222a35"
#define C_MUTED "#5a6270"
#define C_PANEL "#f7f9fc"
#define C_GRID_MINOR "#e8ebf1"
#define C_GRID_MAJOR "#b9c1ce"
#define C_FRAME "#7d8796"
#define C_OUT "#1d5fa8"
#define C_IN "#b5452b"

#define U_MICRO "\xC2\xB5"
#define U_SQRT "\xE2\x88\x9A"

typedef struct loglog {
    double lx_lo, lx_hi; /* log10 of the frequency range */
    double ly_lo, ly_hi; /* log10 of the density range, whole decades */
} loglog;

static double x_of(const loglog *a, double f)
{
    return X0 + (log10(f) - a->lx_lo) / (a->lx_hi - a->lx_lo) * (X1 - X0);
}

static double y_of(const loglog *a, double v)
{
    return Y1 - (log10(v) - a->ly_lo) / (a->ly_hi - a->ly_lo) * (Y1 - Y0);
}

/* 10^k with an SI prefix: "1 k", "100 m", "10 n"; plain exponent beyond the prefixes. unit is
 * appended ("Hz") or nothing. */
static void decade_label(char *buf, size_t len, int k, const char *unit)
{
    static const char *const prefix[] = {"f", "p", "n", U_MICRO, "m", "", "k", "M", "G", "T"};
    int e3 = (int)floor(k / 3.0) * 3;
    if (e3 < -15 || e3 > 12) {
        snprintf(buf, len, "1e%d%s%s", k, unit[0] ? " " : "", unit);
        return;
    }
    int m = k - e3; /* 0, 1, 2 */
    snprintf(buf, len, "%s %s%s", m == 0 ? "1" : m == 1 ? "10" : "100", prefix[(e3 + 15) / 3],
             unit);
}

static void put_line(ss_strbuf *b, double xa, double ya, double xb, double yb)
{
    strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", xa, ya, xb, yb);
}

static int plottable(double f, double v) { return isfinite(f) && f > 0.0 && isfinite(v) && v > 0.0; }

/* One curve as a polyline; a point closer than 0.25 px in both directions to the last one
 * written adds nothing visible and is skipped (the last point is always written); points that
 * cannot be drawn on a log axis (empty, zero) and those below the axis are left out. */
static void draw_curve(ss_strbuf *b, const loglog *a, const double *f, const double *v, int n,
                       const char *id, const char *colour)
{
    strbuf_printf(b,
                  "<polyline id=\"%s\" fill=\"none\" stroke=\"%s\" stroke-width=\"2\" "
                  "stroke-linejoin=\"round\" stroke-linecap=\"round\" points=\"",
                  id, colour);
    double x_last = 0.0, y_last = 0.0;
    int written = 0;
    for (int i = 0; i < n; i++) {
        if (!plottable(f[i], v[i]) || log10(v[i]) < a->ly_lo)
            continue;
        double x = x_of(a, f[i]), y = y_of(a, v[i]);
        if (written && i < n - 1 && fabs(x - x_last) < 0.25 && fabs(y - y_last) < 0.25)
            continue;
        strbuf_printf(b, "%s%.2f,%.2f", written ? " " : "", x, y);
        x_last = x;
        y_last = y;
        written++;
    }
    svg_put(b, "\"/>\n");
}

static void render(ss_strbuf *b, const char *title, const char *subtitle, const char *y_title,
                   const char *in_name, const double *f, const double *out, const double *in,
                   int n)
{
    loglog a;
    a.lx_lo = log10(f[0]);
    a.lx_hi = log10(f[n - 1]);
    double lo = HUGE_VAL, hi = -HUGE_VAL;
    for (int i = 0; i < n; i++)
        for (int c = 0; c < 2; c++) {
            double v = c ? in[i] : out[i];
            if (plottable(f[i], v)) {
                lo = fmin(lo, log10(v));
                hi = fmax(hi, log10(v));
            }
        }
    a.ly_hi = ceil(hi + 1e-9);
    a.ly_lo = floor(lo - 1e-9);
    if (a.ly_hi - a.ly_lo < 1.0)
        a.ly_lo = a.ly_hi - 1.0;
    if (a.ly_hi - a.ly_lo > MAX_DECADES)
        a.ly_lo = a.ly_hi - MAX_DECADES;

    svg_put(b, "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n");
    strbuf_printf(b,
                  "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" "
                  "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\">\n",
                  PAGE_W, PAGE_H, PAGE_W, PAGE_H);
    svg_put(b, "<g font-family=\"DejaVu Sans, Helvetica, Arial, sans-serif\">\n");
    strbuf_printf(b, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n",
                  PAGE_W, PAGE_H);
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"" C_PANEL
                  "\"/>\n",
                  X0, Y0, X1 - X0, Y1 - Y0);

    /* grid: the multiples 2..9 of each decade light, the decades darker, both axes */
    int kx_lo = (int)floor(a.lx_lo), kx_hi = (int)ceil(a.lx_hi);
    double decade_px = (X1 - X0) / (a.lx_hi - a.lx_lo);
    double ydecade_px = (Y1 - Y0) / (a.ly_hi - a.ly_lo);
    svg_put(b, "<g stroke=\"" C_GRID_MINOR "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int k = kx_lo; decade_px >= 30.0 && k <= kx_hi; k++)
        for (int m = 2; m <= 9; m++) {
            double lf = log10(m * pow(10.0, k));
            if (lf > a.lx_lo && lf < a.lx_hi) {
                double x = X0 + (lf - a.lx_lo) / (a.lx_hi - a.lx_lo) * (X1 - X0);
                put_line(b, x, Y0, x, Y1);
            }
        }
    for (int k = (int)a.ly_lo; ydecade_px >= 30.0 && k < (int)a.ly_hi; k++)
        for (int m = 2; m <= 9; m++) {
            double y = Y1 - (log10(m) + k - a.ly_lo) / (a.ly_hi - a.ly_lo) * (Y1 - Y0);
            put_line(b, X0, y, X1, y);
        }
    svg_put(b, "</g>\n");
    int every = decade_px >= 40.0 ? 1 : (int)ceil(40.0 / decade_px);
    int yevery = ydecade_px >= 22.0 ? 1 : (int)ceil(22.0 / ydecade_px);
    svg_put(b, "<g stroke=\"" C_GRID_MAJOR "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int k = kx_lo; k <= kx_hi; k++)
        if (k >= a.lx_lo - 1e-9 && k <= a.lx_hi + 1e-9 && ((k % every) + every) % every == 0) {
            double x = X0 + (k - a.lx_lo) / (a.lx_hi - a.lx_lo) * (X1 - X0);
            put_line(b, x, Y0, x, Y1);
        }
    for (int k = (int)a.ly_lo; k <= (int)a.ly_hi; k++)
        if (((k % yevery) + yevery) % yevery == 0) {
            double y = Y1 - (k - a.ly_lo) / (a.ly_hi - a.ly_lo) * (Y1 - Y0);
            put_line(b, X0, y, X1, y);
        }
    svg_put(b, "</g>\n");

    /* tick labels: every drawn decade, the frequency range's ends when it spans no decade */
    char label[64];
    svg_put(b, "<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    int n_xlabels = 0;
    for (int k = kx_lo; k <= kx_hi; k++)
        if (k >= a.lx_lo - 1e-9 && k <= a.lx_hi + 1e-9 && ((k % every) + every) % every == 0) {
            decade_label(label, sizeof label, k, "Hz");
            svg_put_text(b, X0 + (k - a.lx_lo) / (a.lx_hi - a.lx_lo) * (X1 - X0), FREQ_LABEL_Y,
                         "middle", "", label);
            n_xlabels++;
        }
    if (n_xlabels < 2) {
        snprintf(label, sizeof label, "%.4g Hz", f[0]);
        svg_put_text(b, X0, FREQ_LABEL_Y, "middle", "", label);
        snprintf(label, sizeof label, "%.4g Hz", f[n - 1]);
        svg_put_text(b, X1, FREQ_LABEL_Y, "middle", "", label);
    }
    for (int k = (int)a.ly_lo; k <= (int)a.ly_hi; k++)
        if (((k % yevery) + yevery) % yevery == 0) {
            decade_label(label, sizeof label, k, "");
            double y = Y1 - (k - a.ly_lo) / (a.ly_hi - a.ly_lo) * (Y1 - Y0);
            svg_put_text(b, X0 - 7.0, y + 3.8, "end", "", label);
        }
    svg_put(b, "</g>\n");

    draw_curve(b, &a, f, out, n, "out_noise", C_OUT);
    draw_curve(b, &a, f, in, n, "in_noise", C_IN);
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"none\" "
                  "stroke=\"" C_FRAME "\" stroke-width=\"1\"/>\n",
                  X0, Y0, X1 - X0, Y1 - Y0);

    /* legend, top right inside the panel */
    double lx = X1 - 250.0, ly = Y0 + 10.0;
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"240\" height=\"44\" fill=\"#ffffff\" "
                  "fill-opacity=\"0.85\" stroke=\"" C_GRID_MAJOR "\"/>\n",
                  lx, ly);
    svg_put(b, "<g stroke-width=\"2\">\n");
    strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_OUT
                  "\"/>\n", lx + 8.0, ly + 15.0, lx + 32.0, ly + 15.0);
    strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_IN
                  "\"/>\n", lx + 8.0, ly + 33.0, lx + 32.0, ly + 33.0);
    svg_put(b, "</g>\n<g font-size=\"12\" fill=\"" C_TEXT "\">\n");
    svg_put_text(b, lx + 40.0, ly + 19.0, "start", "", "output");
    char in_label[1200];
    snprintf(in_label, sizeof in_label, "input-referred (at %s)", in_name);
    svg_put_text(b, lx + 40.0, ly + 37.0, "start", "", in_label);
    svg_put(b, "</g>\n");

    svg_put(b, "<g font-size=\"13\" fill=\"" C_TEXT "\">\n");
    char attrs[96];
    double ymid = 0.5 * (Y0 + Y1);
    snprintf(attrs, sizeof attrs, "transform=\"rotate(-90 %.2f %.2f)\"", YTITLE_X, ymid);
    svg_put_text(b, YTITLE_X, ymid, "middle", attrs, y_title);
    svg_put_text(b, 0.5 * (X0 + X1), FREQ_TITLE_Y, "middle", "", "Frequency");
    svg_put(b, "</g>\n");
    svg_put_text(b, X0, TITLE_Y, "start",
                 "font-size=\"17\" font-weight=\"bold\" fill=\"" C_TEXT "\"", title);
    svg_put_text(b, X0, SUBTITLE_Y, "start", "font-size=\"12\" fill=\"" C_MUTED "\"", subtitle);
    svg_put(b, "</g>\n</svg>\n");
}

ss_status ss_plot_write_noise(const ss_solver *sv, const ss_table *noise, const char *path,
                              ss_error *err)
{
    int n = noise ? ss_table_rows(noise) : 0;
    int cf = noise ? ss_table_col_index(noise, "freq_hz") : -1;
    int co = noise ? ss_table_col_index(noise, "out_noise_v_rthz") : -1;
    int ci = noise ? ss_table_col_index(noise, "in_noise_v_rthz") : -1;
    if (cf < 0 || co < 0 || ci < 0)
        return err_set(err, SS_ERR_INPUT, path, 0,
                       "noise plot: the table has no freq_hz, out_noise_v_rthz and "
                       "in_noise_v_rthz columns");
    if (n < 2)
        return err_set(err, SS_ERR_INPUT, path, 0,
                       "noise plot: needs at least 2 frequency points, got %d", n);
    int any = 0;
    for (int k = 0; k < n; k++) {
        double f = ss_table_get(noise, k, cf);
        if (!(isfinite(f) && f > 0.0) || (k > 0 && !(f > ss_table_get(noise, k - 1, cf))))
            return err_set(err, SS_ERR_INPUT, path, 0,
                           "noise plot: frequency at point %d of %d is not positive and above "
                           "the one before",
                           k + 1, n);
        any |= plottable(f, ss_table_get(noise, k, co)) || plottable(f, ss_table_get(noise, k, ci));
    }
    if (!any)
        return err_set(err, SS_ERR_INPUT, path, 0,
                       "noise plot: no density above zero to draw on a log axis");
    double *buf = ss_alloc((size_t)(3 * n) * sizeof *buf);
    if (!buf)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int k = 0; k < n; k++) {
        buf[k] = ss_table_get(noise, k, cf);
        buf[n + k] = ss_table_get(noise, k, co);
        buf[2 * n + k] = ss_table_get(noise, k, ci);
    }
    const char *t = sv->ckt->title && sv->ckt->title[0] ? sv->ckt->title : "noise";
    int max_title = 60;
    char title[512], subtitle[2300];
    snprintf(title, sizeof title, "%.*s%s", max_title, t, (int)strlen(t) > max_title ? "..." : "");
    int e = circuit_find_elem(sv->ckt, sv->noise.src);
    int current = e >= 0 && elem_is(&sv->elem[e], DEV_DRIVES_CURRENT);
    snprintf(subtitle, sizeof subtitle, "noise density at v(%s), input-referred to %s, %g K",
             sv->noise.out, sv->noise.src, sv->temp_c + SS_ZERO_C_IN_K);
    const char *y_title = current ? "Noise density (V/" U_SQRT "Hz; input-referred A/" U_SQRT "Hz)"
                                  : "Noise density (V/" U_SQRT "Hz)";
    ss_strbuf doc = {0};
    render(&doc, title, subtitle, y_title, sv->noise.src, buf, buf + n, buf + 2 * n, n);
    ss_free(buf);
    ss_status st = doc.failed ? err_set(err, SS_ERR_NOMEM, path, 0,
                                        "noise plot: out of memory while drawing")
                              : output_write_atomic(path, doc.data, doc.len, err);
    strbuf_clear(&doc);
    return st;
}
