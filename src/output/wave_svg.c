/* Waveform plot SVG: the stage's input above its output over a shared linear time axis, from a
 * table whose first column is time. The waveforms themselves are the transient's (tran.c,
 * thd.c); the page follows the look of the Bode plot (svg.c) with a palette of its own. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/circuit.h"
#include "solver/solver.h"
#include "output/output.h"
#include "output/svg.h"
#include "util/table.h"

/* ---- page layout, in SVG user units (px) ------------------------------------------------- */
#define PAGE_W 860.0
#define PAGE_H 600.0
#define PLOT_X0 86.0
#define PLOT_X1 830.0
#define IN_Y0 76.0 /* input panel, top and bottom */
#define IN_Y1 236.0
#define OUT_Y0 262.0 /* output panel: taller, it is what the figures are about */
#define OUT_Y1 518.0
#define TITLE_Y 30.0
#define SUBTITLE_Y 54.0
#define TIME_LABEL_Y 536.0
#define TIME_TITLE_Y 566.0
#define YTITLE_X 24.0
#define GLYPH_EM 0.6 /* average sans-serif glyph width per em (rule of thumb, from memory) */
#define FONT_TICK 11.0
#define MAX_POINTS_DRAWN 4000 /* a longer table is thinned to this many points per trace */

/* colours of this plot */
#define C_TEXT "#1f2630"
#define C_MUTED "#5b6472"
#define C_PANEL "#f6f8fb"
#define C_GRID "#d5dbe5"
#define C_ZERO "#9aa3b2"
#define C_FRAME "#7a8494"
#define C_IN "#0f7c7a"
#define C_OUT "#7a3fb0"

#define U_MICRO "\xC2\xB5"

typedef struct wave_axis {
    double lo, hi, step;
} wave_axis;

typedef struct wave_panel {
    double y_top, y_bottom;
    wave_axis ax;
} wave_panel;

/* An axis around [lo, hi]: at least min_span wide, a little padding, about five steps. */
static void axis_fit(wave_axis *ax, double lo, double hi, double min_span)
{
    double need = fmax(min_span, 1e-9 * fmax(fabs(lo), fabs(hi)));
    if (hi - lo < need) {
        double mid = 0.5 * (lo + hi);
        lo = mid - 0.5 * need;
        hi = mid + 0.5 * need;
    }
    double pad = 0.05 * (hi - lo);
    lo -= pad;
    hi += pad;
    ax->step = svg_nice_step_125((hi - lo) / 5.0);
    ax->lo = floor(lo / ax->step) * ax->step;
    ax->hi = ceil(hi / ax->step) * ax->step;
}

static double y_of(const wave_panel *p, double v)
{
    return p->y_bottom - (v - p->ax.lo) / (p->ax.hi - p->ax.lo) * (p->y_bottom - p->y_top);
}

/* The time unit for a span: s, ms, us or ns, and its scale. */
static double time_unit(double span_s, const char **unit)
{
    static const char *const name[] = {"s", "ms", U_MICRO "s", "ns", "ps"};
    double scale = 1.0;
    int k = 0;
    while (k < 4 && span_s * scale < 1.0) {
        scale *= 1e3;
        k++;
    }
    *unit = name[k];
    return scale;
}

static void draw_value_panel(ss_strbuf *b, const wave_panel *p)
{
    strbuf_printf(
        b, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"" C_PANEL "\"/>\n",
        PLOT_X0, p->y_top, PLOT_X1 - PLOT_X0, p->y_bottom - p->y_top);
    int n_steps = (int)lround((p->ax.hi - p->ax.lo) / p->ax.step);
    if (n_steps > 40)
        n_steps = 40;
    svg_put(b, "<g stroke=\"" C_GRID "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int i = 1; i < n_steps; i++) {
        double y = y_of(p, p->ax.lo + i * p->ax.step);
        strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", PLOT_X0, y,
                      PLOT_X1, y);
    }
    svg_put(b, "</g>\n");
    if (p->ax.lo < 0.0 && p->ax.hi > 0.0)
        strbuf_printf(b,
                      "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_ZERO
                      "\" stroke-width=\"1\"/>\n",
                      PLOT_X0, y_of(p, 0.0), PLOT_X1, y_of(p, 0.0));
    svg_put(b, "<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    for (int i = 0; i <= n_steps; i++) {
        double v = p->ax.lo + i * p->ax.step;
        char label[64];
        svg_format_tick(label, sizeof label, v, p->ax.step);
        svg_put_text(b, PLOT_X0 - 7.0, y_of(p, v) + 3.8, "end", "", label);
    }
    svg_put(b, "</g>\n");
}

static void draw_frame(ss_strbuf *b, const wave_panel *p)
{
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"none\" "
                  "stroke=\"" C_FRAME "\" stroke-width=\"1\"/>\n",
                  PLOT_X0, p->y_top, PLOT_X1 - PLOT_X0, p->y_bottom - p->y_top);
}

typedef struct wave_input {
    const char *title, *subtitle;
    const double *t, *in, *out;
    int n;
    const char *in_label, *out_label; /* axis titles */
} wave_input;

static void draw_trace(ss_strbuf *b, const wave_input *w, const double *v, const wave_panel *p,
                       double t0, double t1, const char *colour)
{
    strbuf_printf(b,
                  "<polyline fill=\"none\" stroke=\"%s\" stroke-width=\"1.8\" "
                  "stroke-linejoin=\"round\" points=\"",
                  colour);
    int stride = w->n > MAX_POINTS_DRAWN ? (w->n + MAX_POINTS_DRAWN - 1) / MAX_POINTS_DRAWN : 1;
    for (int i = 0; i < w->n; i += stride) {
        double x = PLOT_X0 + (w->t[i] - t0) / (t1 - t0) * (PLOT_X1 - PLOT_X0);
        strbuf_printf(b, "%s%.2f,%.2f", i ? " " : "", x, y_of(p, v[i]));
    }
    if ((w->n - 1) % stride != 0) {
        double x = PLOT_X1;
        strbuf_printf(b, " %.2f,%.2f", x, y_of(p, v[w->n - 1]));
    }
    svg_put(b, "\"/>\n");
}

static void render(ss_strbuf *b, const wave_input *w)
{
    double t0 = w->t[0], t1 = w->t[w->n - 1];
    wave_panel pin = {IN_Y0, IN_Y1, {0.0, 1.0, 1.0}}, pout = {OUT_Y0, OUT_Y1, {0.0, 1.0, 1.0}};
    double lo, hi;
    svg_data_range(w->in, w->n, &lo, &hi);
    axis_fit(&pin.ax, lo, hi, 1e-6);
    svg_data_range(w->out, w->n, &lo, &hi);
    axis_fit(&pout.ax, lo, hi, 1e-6);

    svg_put(b, "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n");
    strbuf_printf(b,
                  "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" "
                  "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\">\n",
                  PAGE_W, PAGE_H, PAGE_W, PAGE_H);
    svg_put(b, "<g font-family=\"DejaVu Sans, Helvetica, Arial, sans-serif\">\n");
    strbuf_printf(b, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n",
                  PAGE_W, PAGE_H);
    draw_value_panel(b, &pin);
    draw_value_panel(b, &pout);

    /* the time axis: 1-2-5 steps in a unit that keeps the numbers short */
    const char *unit;
    double scale = time_unit(t1 - t0, &unit);
    double step = svg_nice_step_125((t1 - t0) * scale / 8.0);
    double first = ceil(t0 * scale / step - 1e-9) * step;
    svg_put(b, "<g stroke=\"" C_GRID "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (double v = first; v <= t1 * scale * (1.0 + 1e-12); v += step) {
        double x = PLOT_X0 + (v / scale - t0) / (t1 - t0) * (PLOT_X1 - PLOT_X0);
        strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", x, IN_Y0, x,
                      IN_Y1);
        strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", x, OUT_Y0, x,
                      OUT_Y1);
    }
    svg_put(b, "</g>\n<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    double right_edge = -1e300;
    for (double v = first; v <= t1 * scale * (1.0 + 1e-12); v += step) {
        double x = PLOT_X0 + (v / scale - t0) / (t1 - t0) * (PLOT_X1 - PLOT_X0);
        char label[64];
        svg_format_tick(label, sizeof label, v, step);
        double half = 0.5 * strlen(label) * GLYPH_EM * FONT_TICK;
        if (x - half < right_edge + 8.0)
            continue;
        right_edge = x + half;
        svg_put_text(b, x, TIME_LABEL_Y, "middle", "", label);
    }
    svg_put(b, "</g>\n");

    draw_trace(b, w, w->in, &pin, t0, t1, C_IN);
    draw_trace(b, w, w->out, &pout, t0, t1, C_OUT);
    draw_frame(b, &pin);
    draw_frame(b, &pout);

    svg_put(b, "<g font-size=\"13\" fill=\"" C_TEXT "\">\n");
    char attrs[96], ttl[160];
    double in_mid = 0.5 * (IN_Y0 + IN_Y1), out_mid = 0.5 * (OUT_Y0 + OUT_Y1);
    snprintf(attrs, sizeof attrs, "transform=\"rotate(-90 %.2f %.2f)\" fill=\"" C_IN "\"", YTITLE_X,
             in_mid);
    svg_put_text(b, YTITLE_X, in_mid, "middle", attrs, w->in_label);
    snprintf(attrs, sizeof attrs, "transform=\"rotate(-90 %.2f %.2f)\" fill=\"" C_OUT "\"",
             YTITLE_X, out_mid);
    svg_put_text(b, YTITLE_X, out_mid, "middle", attrs, w->out_label);
    snprintf(ttl, sizeof ttl, "Time (%s)", unit);
    svg_put_text(b, 0.5 * (PLOT_X0 + PLOT_X1), TIME_TITLE_Y, "middle", "", ttl);
    svg_put(b, "</g>\n");
    if (w->title)
        svg_put_text(b, PLOT_X0, TITLE_Y, "start",
                 "font-size=\"17\" font-weight=\"bold\" fill=\"" C_TEXT "\"", w->title);
    if (w->subtitle)
        svg_put_text(b, PLOT_X0, SUBTITLE_Y, "start", "font-size=\"12\" fill=\"" C_MUTED "\"",
                 w->subtitle);
    svg_put(b, "</g>\n</svg>\n");
}

/* Renders the plot into *out (appended) after checking the data. Returns SS_OK, SS_ERR_INPUT
 * (fewer than 2 points, time not increasing, a value not finite), SS_ERR_NOMEM. */
static ss_status svg_render_wave(ss_strbuf *out, const wave_input *w, const char *file,
                                 ss_error *err)
{
    if (w->n < 2)
        return err_set(err, SS_ERR_INPUT, file, 0, "waveform plot: needs at least 2 points, got %d",
                       w->n);
    for (int i = 0; i < w->n; i++) {
        if (!isfinite(w->t[i]) || !isfinite(w->in[i]) || !isfinite(w->out[i]))
            return err_set(err, SS_ERR_INPUT, file, 0,
                           "waveform plot: point %d of %d is not finite", i + 1, w->n);
        if (i > 0 && !(w->t[i] > w->t[i - 1]))
            return err_set(err, SS_ERR_INPUT, file, 0,
                           "waveform plot: time at point %d (%.17g s) is not after point %d", i + 1,
                           w->t[i], i);
    }
    if (out->failed)
        return err_set(err, SS_ERR_NOMEM, file, 0, "waveform plot: out of memory");
    size_t start = out->len;
    render(out, w);
    if (out->failed) {
        out->failed = 0;
        out->len = start;
        if (out->data)
            out->data[start] = '\0';
        return err_set(err, SS_ERR_NOMEM, file, 0, "waveform plot: out of memory while drawing");
    }
    return SS_OK;
}

static int find_col(const ss_table *t, const char *name)
{
    for (int c = 0; c < t->n_cols; c++)
        if (strcmp(t->col_names[c], name) == 0)
            return c;
    return -1;
}

ss_status ss_plot_write_wave(const ss_solver *sv, const ss_table *wave, const char *in_col,
                             const char *out_col, const char *path, ss_error *err)
{
    if (!path || !path[0])
        return err_set(err, SS_ERR_INPUT, NULL, 0, "waveform plot: no output path given");
    if (!wave || wave->n_cols < 2 || strcmp(wave->col_names[0], "time_s") != 0)
        return err_set(err, SS_ERR_INPUT, path, 0,
                       "waveform plot: the table's first column must be time_s");
    char in_name[1100] = "", out_name[1100] = "";
    if (in_col) {
        snprintf(in_name, sizeof in_name, "%s", in_col);
    } else if (sv->stage.in) {
        snprintf(in_name, sizeof in_name, "in(%s)", sv->stage.in);
        int e = circuit_find_elem(sv->ckt, sv->stage.in);
        if (find_col(wave, in_name) < 0 && e >= 0 && sv->elem[e].node[0] > 0)
            snprintf(in_name, sizeof in_name, "v(%s)", sv->node_name[sv->elem[e].node[0]]);
    }
    if (out_col)
        snprintf(out_name, sizeof out_name, "%s", out_col);
    else if (sv->stage.out)
        snprintf(out_name, sizeof out_name, "v(%s)", sv->stage.out);
    int ci = find_col(wave, in_name), co = find_col(wave, out_name);
    if (ci < 0 || co < 0)
        return err_set(err, SS_ERR_INPUT, path, 0,
                       "waveform plot: no column '%s' in the table (name the input and output "
                       "columns, or a stage with --in/--out)",
                       ci < 0 ? in_name : out_name);
    int n = wave->n_rows;
    double *buf = ss_alloc((size_t)(3 * (n ? n : 1)) * sizeof *buf);
    if (!buf)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int r = 0; r < n; r++) {
        const double *row = wave->data + (size_t)r * (size_t)wave->n_cols;
        buf[r] = row[0];
        buf[n + r] = row[ci];
        buf[2 * n + r] = row[co];
    }
    char title[512], in_label[1200], out_label[1200];
    const char *t = sv->ckt->title && sv->ckt->title[0] ? sv->ckt->title : "stage";
    snprintf(title, sizeof title, "%.60s%s", t, strlen(t) > 60 ? "..." : "");
    int src = sv->stage.in ? circuit_find_elem(sv->ckt, sv->stage.in) : -1;
    /* an in(SOURCE) column of a current source is in amperes */
    int is_current = in_name[0] == 'i' && src >= 0 && elem_is(&sv->elem[src], DEV_DRIVES_CURRENT);
    snprintf(in_label, sizeof in_label, "%.80s (%s)", in_name, is_current ? "A" : "V");
    snprintf(out_label, sizeof out_label, "%.80s (V)", out_name);
    wave_input w = {title,    "input above, output below", buf, buf + n, buf + 2 * n, n, in_label,
                    out_label};
    ss_strbuf doc = {0};
    ss_status st = svg_render_wave(&doc, &w, path, err);
    if (st == SS_OK)
        st = output_write_atomic(path, doc.data, doc.len, err);
    strbuf_clear(&doc);
    ss_free(buf);
    return st;
}
