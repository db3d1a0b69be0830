/* Study plots: one panel per figure, stacked in one SVG document -- a histogram of a tolerance
 * run's values with its limits as vertical lines, or a sweep's values over the swept value with
 * the limit band shaded and the failing points marked. What to plot is the study's
 * (src/study/summary.c gathers it); the look follows the Bode and wave plots. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "output/output.h"
#include "output/svg.h"
#include "util/util.h"

#define PAGE_W 860.0
#define PLOT_X0 96.0
#define PLOT_X1 830.0
#define HEAD_H 56.0  /* the document title */
#define PANEL_H 262.0 /* one figure: its title, plot area, tick labels and axis title */
#define AREA_TOP 34.0 /* plot area within a panel */
#define AREA_BOTTOM 200.0
#define MAX_BINS 50
#define MIN_BINS 5
#define MAX_CURVE_POINTS 20000 /* a sweep's curves are drawn from at most this many points */

#define C_TEXT "#1f2630"
#define C_MUTED "#5b6472"
#define C_PANEL "#f6f8fb"
#define C_GRID "#d5dbe5"
#define C_FRAME "#7a8494"
#define C_BAR "#3d6fb6"
#define C_BAR_FAIL "#c8553d"
#define C_LIMIT "#b3261e"
#define C_BAND "#2e8b57"
#define C_CURVE "#3d6fb6"
#define MAX_LEGEND 8 /* curves told apart by colour and named; more share one colour */

static const char *const CURVE_COLOURS[MAX_LEGEND] = {"#3d6fb6", "#d07a1f", "#2e8b57", "#7a3fb0",
                                                      "#c8553d", "#1f8fa6", "#8a6d1f", "#5b6472"};

typedef struct axis {
    double lo, hi, step;
    int log; /* log10 scale */
} axis;

/* A tick label: plain decimals for everyday magnitudes, an SI prefix beyond them (750 u, not
 * 0.00075). */
static void tick_label(char *buf, size_t len, double v, double step)
{
    double a = fabs(v);
    if (a != 0.0 && (a < 1e-3 || a >= 1e6 || step < 1e-4))
        fmt_eng(buf, len, v, "");
    else
        svg_format_tick(buf, len, v, step);
}

/* A linear axis around [lo, hi] with about n_steps 1-2-5 steps. */
static void axis_lin(axis *ax, double lo, double hi, double n_steps, int from_zero)
{
    if (!(hi > lo)) {
        double d = lo != 0.0 ? 0.05 * fabs(lo) : 1.0;
        lo -= d;
        hi += d;
    }
    if (!from_zero) {
        double pad = 0.04 * (hi - lo);
        lo -= pad;
        hi += pad;
    }
    ax->log = 0;
    ax->step = svg_nice_step_125((hi - lo) / n_steps);
    ax->lo = from_zero ? 0.0 : floor(lo / ax->step) * ax->step;
    ax->hi = ceil(hi / ax->step) * ax->step;
}

static double frac_of(const axis *ax, double v)
{
    if (ax->log)
        return (log10(v) - log10(ax->lo)) / (log10(ax->hi) - log10(ax->lo));
    return (v - ax->lo) / (ax->hi - ax->lo);
}

static double px_x(const axis *ax, double v) { return PLOT_X0 + frac_of(ax, v) * (PLOT_X1 - PLOT_X0); }

static double px_y(const axis *ax, double y0, double v)
{
    return y0 + AREA_BOTTOM - frac_of(ax, v) * (AREA_BOTTOM - AREA_TOP);
}

/* The ticks of an axis into t (at most max); returns the count. */
static int axis_ticks(const axis *ax, double *t, int max)
{
    int n = 0;
    if (ax->log) {
        for (double d = ceil(log10(ax->lo) - 1e-9); d <= log10(ax->hi) + 1e-9 && n < max; d++)
            t[n++] = pow(10.0, d);
        return n;
    }
    for (double v = ax->lo; v <= ax->hi + 1e-9 * ax->step && n < max; v += ax->step)
        t[n++] = fabs(v) < 1e-12 * ax->step ? 0.0 : v;
    return n;
}

/* The plot area with its grid, frame hooks and tick labels; the mapping in data attributes. */
static void draw_area(ss_strbuf *b, double y0, const axis *ax_x, const axis *ax_y,
                      const char *x_title, const char *y_title)
{
    strbuf_printf(b,
                  "<rect class=\"plot-area\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" "
                  "fill=\"" C_PANEL "\" data-x=\"%.17g %.17g\" data-y=\"%.17g %.17g\" "
                  "data-x-scale=\"%s\"/>\n",
                  PLOT_X0, y0 + AREA_TOP, PLOT_X1 - PLOT_X0, AREA_BOTTOM - AREA_TOP, ax_x->lo,
                  ax_x->hi, ax_y->lo, ax_y->hi, ax_x->log ? "log" : "lin");
    double tx[64], ty[64];
    int nx = axis_ticks(ax_x, tx, 64), ny = axis_ticks(ax_y, ty, 64);
    svg_put(b, "<g stroke=\"" C_GRID "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int i = 0; i < nx; i++)
        strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n",
                      px_x(ax_x, tx[i]), y0 + AREA_TOP, px_x(ax_x, tx[i]), y0 + AREA_BOTTOM);
    for (int i = 0; i < ny; i++)
        strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", PLOT_X0,
                      px_y(ax_y, y0, ty[i]), PLOT_X1, px_y(ax_y, y0, ty[i]));
    svg_put(b, "</g>\n<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    for (int i = 0; i < nx; i++) {
        char l[64];
        tick_label(l, sizeof l, tx[i], ax_x->log ? tx[i] : ax_x->step);
        svg_put_text(b, px_x(ax_x, tx[i]), y0 + AREA_BOTTOM + 15.0, "middle", "", l);
    }
    for (int i = 0; i < ny; i++) {
        char l[64];
        tick_label(l, sizeof l, ty[i], ax_y->step);
        svg_put_text(b, PLOT_X0 - 7.0, px_y(ax_y, y0, ty[i]) + 3.8, "end", "", l);
    }
    svg_put(b, "</g>\n");
    svg_put_text(b, 0.5 * (PLOT_X0 + PLOT_X1), y0 + AREA_BOTTOM + 36.0, "middle",
                 "font-size=\"12\" fill=\"" C_MUTED "\"", x_title);
    char rot[96];
    snprintf(rot, sizeof rot, "font-size=\"12\" fill=\"" C_MUTED "\" transform=\"rotate(-90 %.2f %.2f)\"",
             24.0, y0 + 0.5 * (AREA_TOP + AREA_BOTTOM));
    svg_put_text(b, 24.0, y0 + 0.5 * (AREA_TOP + AREA_BOTTOM), "middle", rot, y_title);
}

static void draw_frame(ss_strbuf *b, double y0)
{
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"none\" "
                  "stroke=\"" C_FRAME "\" stroke-width=\"1\"/>\n",
                  PLOT_X0, y0 + AREA_TOP, PLOT_X1 - PLOT_X0, AREA_BOTTOM - AREA_TOP);
}

static int passes(const svg_study_panel *p, double v) { return v >= p->lo && v <= p->hi; }

/* A limit bound as a dashed vertical (histogram) or horizontal (curves) line, labelled. */
static void draw_bound(ss_strbuf *b, double y0, const axis *ax, double v, int vertical,
                       const char *side)
{
    if (!isfinite(v) || frac_of(ax, v) < -1e-9 || frac_of(ax, v) > 1.0 + 1e-9)
        return;
    char l[96], num[48];
    double a = fabs(v);
    if (a != 0.0 && (a < 1e-3 || a >= 1e6))
        fmt_eng(num, sizeof num, v, "");
    else
        snprintf(num, sizeof num, "%.6g", v);
    snprintf(l, sizeof l, "%s %s", side, num);
    if (vertical) {
        double x = px_x(ax, v);
        strbuf_printf(b,
                      "<line class=\"limit\" data-value=\"%.17g\" x1=\"%.2f\" y1=\"%.2f\" "
                      "x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_LIMIT "\" stroke-width=\"1.6\" "
                      "stroke-dasharray=\"6 4\"/>\n",
                      v, x, y0 + AREA_TOP, x, y0 + AREA_BOTTOM);
        svg_put_text(b, x + (side[0] == 'l' ? 4.0 : -4.0), y0 + AREA_TOP + 12.0,
                     side[0] == 'l' ? "start" : "end", "font-size=\"11\" fill=\"" C_LIMIT "\"", l);
    } else {
        double y = px_y(ax, y0, v);
        strbuf_printf(b,
                      "<line class=\"limit\" data-value=\"%.17g\" x1=\"%.2f\" y1=\"%.2f\" "
                      "x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_LIMIT "\" stroke-width=\"1.4\" "
                      "stroke-dasharray=\"6 4\"/>\n",
                      v, PLOT_X0, y, PLOT_X1, y);
        svg_put_text(b, PLOT_X1 - 4.0, y + (side[0] == 'l' ? 13.0 : -4.0), "end",
                     "font-size=\"11\" fill=\"" C_LIMIT "\"", l);
    }
}

static void panel_title(ss_strbuf *b, double y0, const svg_study_panel *p, long n_ok,
                        long n_pass)
{
    char t[512];
    if (p->has_limit)
        snprintf(t, sizeof t, "%s: %ld points, %ld pass the limits (%.4g %%)", p->figure, n_ok,
                 n_pass, n_ok ? 100.0 * (double)n_pass / (double)n_ok : 0.0);
    else
        snprintf(t, sizeof t, "%s: %ld points, no limit", p->figure, n_ok);
    svg_put_text(b, PLOT_X0, y0 + 20.0, "start", "font-size=\"14\" font-weight=\"bold\" fill=\"" C_TEXT "\"", t);
}

static void draw_histogram(ss_strbuf *b, double y0, const svg_study_input *in,
                           const svg_study_panel *p)
{
    long n_ok = 0, n_pass = 0;
    double dlo = HUGE_VAL, dhi = -HUGE_VAL;
    for (int i = 0; i < in->n; i++)
        if (isfinite(p->v[i])) {
            n_ok++;
            n_pass += passes(p, p->v[i]);
            dlo = fmin(dlo, p->v[i]);
            dhi = fmax(dhi, p->v[i]);
        }
    panel_title(b, y0, p, n_ok, n_pass);
    if (n_ok == 0)
        return;
    /* bins: the square-root rule within 5 .. 50 (common practice) over the data's range */
    int k = (int)ceil(sqrt((double)n_ok));
    k = k < MIN_BINS ? MIN_BINS : k > MAX_BINS ? MAX_BINS : k;
    double w = (dhi - dlo) / k;
    if (!(w > 0.0)) { /* every value the same: one bar */
        k = 1;
        w = dlo != 0.0 ? 0.02 * fabs(dlo) : 1.0;
        dlo -= 0.5 * w;
    }
    long count[MAX_BINS] = {0}, most = 0;
    for (int i = 0; i < in->n; i++)
        if (isfinite(p->v[i])) {
            int j = (int)floor((p->v[i] - dlo) / w);
            j = j < 0 ? 0 : j >= k ? k - 1 : j;
            count[j]++;
        }
    for (int j = 0; j < k; j++)
        most = count[j] > most ? count[j] : most;
    /* the x axis shows the limits too, so the margin is seen */
    double xlo = dlo, xhi = dlo + k * w;
    if (isfinite(p->lo))
        xlo = fmin(xlo, p->lo), xhi = fmax(xhi, p->lo);
    if (isfinite(p->hi))
        xlo = fmin(xlo, p->hi), xhi = fmax(xhi, p->hi);
    axis ax_x, ax_y;
    axis_lin(&ax_x, xlo, xhi, 8.0, 0);
    axis_lin(&ax_y, 0.0, (double)most, 4.0, 1);
    if (ax_y.step < 1.0) {
        ax_y.step = 1.0;
        ax_y.hi = ceil(ax_y.hi);
    }
    draw_area(b, y0, &ax_x, &ax_y, p->figure, "points per bin");
    svg_put(b, "<g stroke=\"#ffffff\" stroke-width=\"0.5\">\n");
    for (int j = 0; j < k; j++) {
        double a = dlo + j * w, c = a + w;
        double x0 = px_x(&ax_x, a), x1 = px_x(&ax_x, c);
        double ytop = px_y(&ax_y, y0, (double)count[j]), ybot = px_y(&ax_y, y0, 0.0);
        strbuf_printf(b,
                      "<rect class=\"bar\" data-count=\"%ld\" data-from=\"%.17g\" "
                      "data-to=\"%.17g\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" "
                      "fill=\"%s\"/>\n",
                      count[j], a, c, x0, ytop, x1 - x0, ybot - ytop,
                      passes(p, 0.5 * (a + c)) ? C_BAR : C_BAR_FAIL);
    }
    svg_put(b, "</g>\n");
    if (p->has_limit) {
        draw_bound(b, y0, &ax_x, p->lo, 1, "low");
        draw_bound(b, y0, &ax_x, p->hi, 1, "high");
    }
    draw_frame(b, y0);
}

static void draw_curves(ss_strbuf *b, double y0, const svg_study_input *in,
                        const svg_study_panel *p)
{
    long n_ok = 0, n_pass = 0;
    double ylo = HUGE_VAL, yhi = -HUGE_VAL, xlo = HUGE_VAL, xhi = -HUGE_VAL;
    for (int i = 0; i < in->n; i++) {
        xlo = fmin(xlo, in->x[i]);
        xhi = fmax(xhi, in->x[i]);
        if (isfinite(p->v[i])) {
            n_ok++;
            n_pass += passes(p, p->v[i]);
            ylo = fmin(ylo, p->v[i]);
            yhi = fmax(yhi, p->v[i]);
        }
    }
    panel_title(b, y0, p, n_ok, n_pass);
    if (n_ok == 0)
        return;
    if (isfinite(p->lo))
        ylo = fmin(ylo, p->lo), yhi = fmax(yhi, p->lo);
    if (isfinite(p->hi))
        ylo = fmin(ylo, p->hi), yhi = fmax(yhi, p->hi);
    axis ax_x, ax_y;
    if (in->x_log && xhi > xlo) {
        ax_x.log = 1;
        ax_x.lo = xlo;
        ax_x.hi = xhi;
        ax_x.step = 0.0;
    } else {
        axis_lin(&ax_x, xlo, xhi, 8.0, 0);
        if (xhi > xlo) { /* the swept range exactly: no padding to either side */
            ax_x.lo = xlo;
            ax_x.hi = xhi;
        }
    }
    axis_lin(&ax_y, ylo, yhi, 4.0, 0);
    draw_area(b, y0, &ax_x, &ax_y, in->x_name, p->figure);
    if (p->has_limit) { /* the band the limits leave, clipped to the plot area */
        double top = isfinite(p->hi) ? fmin(p->hi, ax_y.hi) : ax_y.hi;
        double bot = isfinite(p->lo) ? fmax(p->lo, ax_y.lo) : ax_y.lo;
        if (top > bot)
            strbuf_printf(b,
                          "<rect class=\"limit-band\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" "
                          "height=\"%.2f\" fill=\"" C_BAND "\" fill-opacity=\"0.13\"/>\n",
                          PLOT_X0, px_y(&ax_y, y0, top), PLOT_X1 - PLOT_X0,
                          px_y(&ax_y, y0, bot) - px_y(&ax_y, y0, top));
        draw_bound(b, y0, &ax_y, p->lo, 0, "low");
        draw_bound(b, y0, &ax_y, p->hi, 0, "high");
    }
    int legend = in->n_curves > 1 && in->n_curves <= MAX_LEGEND && in->curve_label;
    for (int c = 0; legend && c < in->n_curves; c++) {
        double lx = PLOT_X1 - (in->n_curves - c) * 124.0;
        strbuf_printf(b,
                      "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"%s\" "
                      "stroke-width=\"3\"/>\n",
                      lx, y0 + 16.0, lx + 14.0, y0 + 16.0, CURVE_COLOURS[c]);
        svg_put_text(b, lx + 18.0, y0 + 20.0, "start", "font-size=\"11\" fill=\"" C_TEXT "\"",
                     in->curve_label[c]);
    }
    for (int c = 0; c < in->n_curves; c++) {
        strbuf_printf(b,
                      "<polyline class=\"curve\" data-curve=\"%d\" fill=\"none\" stroke=\"%s\" "
                      "stroke-opacity=\"%.2f\" stroke-width=\"1.8\" stroke-linejoin=\"round\" "
                      "points=\"",
                      c, legend ? CURVE_COLOURS[c] : C_CURVE, in->n_curves > 1 && !legend ? 0.6 : 1.0);
        int first = 1;
        for (int i = 0; i < in->n && i < MAX_CURVE_POINTS; i++)
            if (in->curve[i] == c && isfinite(p->v[i])) {
                strbuf_printf(b, "%s%.2f,%.2f", first ? "" : " ", px_x(&ax_x, in->x[i]),
                              px_y(&ax_y, y0, p->v[i]));
                first = 0;
            }
        svg_put(b, "\"/>\n");
    }
    if (p->has_limit)
        for (int i = 0; i < in->n && i < MAX_CURVE_POINTS; i++)
            if (isfinite(p->v[i]) && !passes(p, p->v[i]))
                strbuf_printf(b,
                              "<circle class=\"fail-point\" cx=\"%.2f\" cy=\"%.2f\" r=\"3.2\" "
                              "fill=\"" C_LIMIT "\"/>\n",
                              px_x(&ax_x, in->x[i]), px_y(&ax_y, y0, p->v[i]));
    draw_frame(b, y0);
}

ss_status svg_render_study(ss_strbuf *out, const svg_study_input *in, ss_error *err)
{
    if (in->n_panels < 1 || in->n < 1)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "study plot: no figure or no point to plot");
    if (!in->histogram) {
        if (!in->x || !in->curve)
            return err_set(err, SS_ERR_INPUT, NULL, 0, "study plot: no swept value");
        for (int i = 0; i < in->n; i++)
            if (!isfinite(in->x[i]) || (in->x_log && !(in->x[i] > 0.0)))
                return err_set(err, SS_ERR_INPUT, NULL, 0,
                               "study plot: swept value %d is not plottable", i);
    }
    ss_strbuf b = {0};
    double h = HEAD_H + PANEL_H * in->n_panels;
    strbuf_printf(&b,
                  "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
                  "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" "
                  "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\" font-family=\"sans-serif\">\n"
                  "<rect width=\"100%%\" height=\"100%%\" fill=\"#ffffff\"/>\n",
                  PAGE_W, h, PAGE_W, h);
    svg_put_text(&b, PLOT_X0, 32.0, "start", "font-size=\"16\" font-weight=\"bold\" fill=\"" C_TEXT "\"",
                 in->title ? in->title : "study");
    for (int k = 0; k < in->n_panels; k++) {
        double y0 = HEAD_H + PANEL_H * k;
        svg_put(&b, "<g class=\"panel\" data-figure=\"");
        svg_put_escaped(&b, in->panels[k].figure);
        svg_put(&b, "\">\n");
        if (in->histogram)
            draw_histogram(&b, y0, in, &in->panels[k]);
        else
            draw_curves(&b, y0, in, &in->panels[k]);
        svg_put(&b, "</g>\n");
    }
    svg_put(&b, "</svg>\n");
    if (b.failed) {
        strbuf_clear(&b);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    strbuf_append(out, b.data, b.len);
    strbuf_clear(&b);
    return out->failed ? err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory") : SS_OK;
}

ss_status svg_write_study(const char *path, const svg_study_input *in, ss_error *err)
{
    ss_strbuf doc = {0};
    ss_status st = svg_render_study(&doc, in, err);
    if (st == SS_OK)
        st = output_write_atomic(path, doc.data, doc.len, err);
    strbuf_clear(&doc);
    return st;
}
