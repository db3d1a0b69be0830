/* Bode-plot SVG writer: lays out gain and phase panels over a log frequency axis, picks grid and
 * tick labels, and writes the document atomically. The numbers plotted come from the analyses. */
#define _POSIX_C_SOURCE 200809L

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "output/output.h"
#include "output/svg.h"

/* ---- page layout, in SVG user units (px) ------------------------------------------------- */
#define PAGE_W 860.0
#define PAGE_H 640.0
#define PLOT_X0 86.0  /* left edge of both panels; the y tick labels sit in the margin */
#define PLOT_X1 830.0 /* right edge */
#define MAG_Y0 68.0   /* magnitude panel, top and bottom */
#define MAG_Y1 298.0
#define PHASE_Y0 326.0 /* phase panel */
#define PHASE_Y1 556.0
#define TITLE_Y 30.0
#define SUBTITLE_Y 52.0
#define FREQ_LABEL_Y 574.0 /* baseline of the frequency tick labels, below the phase panel */
#define FREQ_TITLE_Y 604.0
#define YTITLE_X 26.0 /* baseline x of the rotated axis titles */

#define FONT_TICK 11.0
#define FONT_NOTE 11.0
/* A sans-serif glyph is roughly 0.6 em wide on average (a rule of thumb, from memory); used
 * only to keep labels apart, and the rendered samples confirm it errs on the wide side. */
#define GLYPH_EM 0.6

/* Colours of our own scheme. */
#define C_TEXT "#222a35"
#define C_MUTED "#5a6270"
#define C_PANEL "#f7f9fc"
#define C_GRID_MINOR "#e8ebf1"
#define C_GRID_MAJOR "#b9c1ce"
#define C_ZERO "#98a1b0"
#define C_FRAME "#7d8796"
#define C_GAIN "#1d5fa8"
#define C_PHASE "#b5452b"
#define C_CORNER "#1e8a5e"

/* 20*log10(1/sqrt(2)) = -10*log10(2): the half-power level below mid-band (closed form;
 * the constant computed with Python decimal to 40 digits and rounded to double). */
#define HALF_POWER_DB (-3.010299956639812)

#define MAX_FREQ_LABELS 64

/* UTF-8 text pieces (the document declares UTF-8). */
#define U_MINUS "\xE2\x88\x92"
#define U_DEGREE "\xC2\xB0"
#define U_MICRO "\xC2\xB5"

/* A linear value axis: the range drawn, snapped to whole steps, and the tick spacing. */
typedef struct lin_axis {
    double lo, hi;
    double step;
} lin_axis;

/* One panel: its pixel rows and its value axis. */
typedef struct panel {
    double y_top, y_bottom;
    lin_axis ax;
} panel;

/* The shared frequency axis: the first and last frequency of the sweep, and their log10. */
typedef struct freq_axis {
    double f_lo_hz, f_hi_hz;
    double log_lo, log_hi;
} freq_axis;

/* ---- small helpers ------------------------------------------------------------------------ */

static double x_of_freq(const freq_axis *fa, double freq_hz)
{
    double t = (log10(freq_hz) - fa->log_lo) / (fa->log_hi - fa->log_lo);
    return PLOT_X0 + t * (PLOT_X1 - PLOT_X0);
}

static double y_of_value(const panel *p, double v)
{
    double t = (v - p->ax.lo) / (p->ax.hi - p->ax.lo);
    return p->y_bottom - t * (p->y_bottom - p->y_top);
}

/* Characters as displayed (UTF-8 continuation bytes do not count), for width estimates. */
static size_t visible_len(const char *s)
{
    size_t n = 0;
    for (; *s; s++)
        if (((unsigned char)*s & 0xC0) != 0x80)
            n++;
    return n;
}

static double text_width(const char *s, double font_px)
{
    return (double)visible_len(s) * GLYPH_EM * font_px;
}

static void put_line(ss_strbuf *b, double xa, double ya, double xb, double yb)
{
    strbuf_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\"/>\n", xa, ya, xb, yb);
}

/* Formats a frequency with an SI prefix and `sig` significant digits: "12.3 Hz", "1.59 MHz".
 * With trim, trailing zeros go ("1 kHz", "2.5 kHz"), as tick labels want. */
static void format_freq(char *buf, size_t buf_len, double freq_hz, int sig, int trim)
{
    static const char *const prefix[] = {"p", "n", U_MICRO, "m", "", "k", "M", "G", "T"};
    if (freq_hz < 1e-12 || freq_hz >= 999.5e12) { /* beyond the prefixes: plain exponent */
        snprintf(buf, buf_len, "%.*g Hz", sig, freq_hz);
        return;
    }
    int e3 = (int)floor(log10(freq_hz) / 3.0) * 3;
    if (e3 < -12)
        e3 = -12;
    if (e3 > 12)
        e3 = 12;
    double m = freq_hz / pow(10.0, e3);
    int dec = 0;
    for (int pass = 0; pass < 2; pass++) {
        int mag = (int)floor(log10(m));
        dec = sig - 1 - mag;
        if (dec < 0)
            dec = 0;
        if (dec > 12)
            dec = 12;
        double scale = pow(10.0, dec);
        double rounded = round(m * scale) / scale;
        if (rounded >= 1000.0 && e3 < 12) { /* 999.7 rounds to the next prefix: 1.00 k */
            e3 += 3;
            m = rounded / 1000.0;
            continue;
        }
        m = rounded;
        break;
    }
    char num[64];
    snprintf(num, sizeof num, "%.*f", dec, m);
    if (trim && strchr(num, '.')) {
        char *end = num + strlen(num) - 1;
        while (*end == '0')
            *end-- = '\0';
        if (*end == '.')
            *end = '\0';
    }
    snprintf(buf, buf_len, "%s %sHz", num, prefix[(e3 + 12) / 3]);
}

/* ---- value axes ---------------------------------------------------------------------------- */

/* Tick step for angles: 1-2-5 below a degree, then steps that land on 45 and 90 degrees. */
static double nice_step_deg(double raw)
{
    static const double deg[] = {1.0, 2.0, 5.0, 10.0, 15.0, 30.0, 45.0, 90.0, 180.0};
    if (raw < 1.0)
        return svg_nice_step_125(raw);
    if (raw > 180.0)
        return 90.0 * svg_nice_step_125(raw / 90.0);
    return svg_closest_step(raw, deg, 9, 1.0);
}

/* Fits an axis around data in [lo, hi]: at least min_span wide (so a flat curve gets a sensible
 * scale instead of magnified rounding noise), a little padding, about five to eight ticks. */
static void axis_fit(lin_axis *ax, double lo, double hi, double min_span, int degrees)
{
    double need = fmax(min_span, 1e-9 * fmax(fabs(lo), fabs(hi)));
    if (hi - lo < need) {
        double mid = 0.5 * (lo + hi);
        lo = mid - 0.5 * need;
        hi = mid + 0.5 * need;
    }
    double pad = 0.04 * (hi - lo); /* keeps the curve off the frame */
    lo -= pad;
    hi += pad;
    double raw = (hi - lo) / 5.0;
    ax->step = degrees ? nice_step_deg(raw) : svg_nice_step_125(raw);
    ax->lo = floor(lo / ax->step) * ax->step;
    ax->hi = ceil(hi / ax->step) * ax->step;
}

/* ---- drawing ----------------------------------------------------------------------------- */

static void draw_panel_background(ss_strbuf *b, const panel *p)
{
    strbuf_printf(
        b, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"" C_PANEL "\"/>\n",
        PLOT_X0, p->y_top, PLOT_X1 - PLOT_X0, p->y_bottom - p->y_top);
}

static void draw_panel_frame(ss_strbuf *b, const panel *p)
{
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"none\" "
                  "stroke=\"" C_FRAME "\" stroke-width=\"1\"/>\n",
                  PLOT_X0, p->y_top, PLOT_X1 - PLOT_X0, p->y_bottom - p->y_top);
}

/* Horizontal grid lines and tick labels of one panel; the zero line is a shade darker. */
static void draw_value_grid(ss_strbuf *b, const panel *p)
{
    int n_steps = (int)lround((p->ax.hi - p->ax.lo) / p->ax.step);
    if (n_steps > 40) /* axis_fit gives about 8; a guard, not a limit users meet */
        n_steps = 40;
    svg_put(b, "<g stroke=\"" C_GRID_MAJOR "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int i = 1; i < n_steps; i++) {
        double y = y_of_value(p, p->ax.lo + i * p->ax.step);
        put_line(b, PLOT_X0, y, PLOT_X1, y);
    }
    svg_put(b, "</g>\n");
    if (p->ax.lo < 0.0 && p->ax.hi > 0.0) {
        double y = y_of_value(p, 0.0);
        svg_put(b, "<g stroke=\"" C_ZERO "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
        put_line(b, PLOT_X0, y, PLOT_X1, y);
        svg_put(b, "</g>\n");
    }
    svg_put(b, "<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    for (int i = 0; i <= n_steps; i++) {
        double v = p->ax.lo + i * p->ax.step;
        char label[64];
        svg_format_tick(label, sizeof label, v, p->ax.step);
        svg_put_text(b, PLOT_X0 - 7.0, y_of_value(p, v) + 3.8, "end", "", label);
    }
    svg_put(b, "</g>\n");
}

/* Does freq_hz lie on the axis? The slack, a millionth of the axis, absorbs rounding in log10
 * (a decade tick exactly at the sweep's end) without admitting points visibly outside. */
static int on_axis(const freq_axis *fa, double freq_hz)
{
    double l = log10(freq_hz), slack = 1e-6 * (fa->log_hi - fa->log_lo);
    return l >= fa->log_lo - slack && l <= fa->log_hi + slack;
}

static double clamp_x(double x) { return x < PLOT_X0 ? PLOT_X0 : (x > PLOT_X1 ? PLOT_X1 : x); }

/* One vertical line through every panel. */
static void put_vline(ss_strbuf *b, double x, const panel *panels, int n_panels)
{
    for (int i = 0; i < n_panels; i++)
        put_line(b, x, panels[i].y_top, x, panels[i].y_bottom);
}

typedef struct freq_label {
    double freq_hz;
    double x;
    char text[48];
} freq_label;

#define LABEL_GAP 10.0 /* px kept free between neighbouring tick labels */

/* Appends the label for f unless it is off the axis or would crowd the label before it
 * (whose right edge is *right_edge). */
static void add_freq_label(const freq_axis *fa, double f, int sig, freq_label *out, int *n_out,
                           int max_out, double *right_edge)
{
    if (*n_out >= max_out || !on_axis(fa, f))
        return;
    freq_label *l = &out[*n_out];
    l->freq_hz = f;
    l->x = clamp_x(x_of_freq(fa, f));
    format_freq(l->text, sizeof l->text, f, sig, 1);
    double half = 0.5 * text_width(l->text, FONT_TICK);
    if (l->x - half < *right_edge + LABEL_GAP || l->x - half < 2.0 || l->x + half > PAGE_W - 2.0)
        return;
    *right_edge = l->x + half;
    (*n_out)++;
}

/* Chooses the labelled frequencies: decades when at least three fall in the sweep (every n-th
 * decade when they would crowd), else the 1-2-5 multiples, else every integer multiple, else,
 * for a sweep narrower than that, evenly spaced values on a 1-2-5 step (a log axis that short
 * is nearly linear). Returns how many labels were made. */
static int pick_freq_labels(const freq_axis *fa, freq_label *out, int max_out)
{
    static const double set_decade[] = {1.0};
    static const double set_125[] = {1.0, 2.0, 5.0};
    static const double set_all[] = {1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0};
    static const double *const sets[] = {set_decade, set_125, set_all};
    static const int set_len[] = {1, 3, 9};
    int k_lo = (int)floor(fa->log_lo), k_hi = (int)ceil(fa->log_hi);

    int chosen = -1;
    for (int s = 0; s < 3 && chosen < 0; s++) {
        int count = 0;
        for (int k = k_lo; k <= k_hi; k++)
            for (int j = 0; j < set_len[s]; j++)
                count += on_axis(fa, sets[s][j] * pow(10.0, k));
        if (count >= 3)
            chosen = s;
    }

    int n_out = 0;
    double right_edge = -1e300;
    if (chosen == 0) { /* one stride for all decades keeps the labels evenly spaced */
        double decade_px = (PLOT_X1 - PLOT_X0) / (fa->log_hi - fa->log_lo);
        double widest = 0.0;
        char text[48];
        for (int k = k_lo; k <= k_hi; k++) {
            format_freq(text, sizeof text, pow(10.0, k), 3, 1);
            widest = fmax(widest, text_width(text, FONT_TICK));
        }
        int stride = (int)ceil((widest + LABEL_GAP) / decade_px);
        if (stride < 1)
            stride = 1;
        for (int k = k_lo; k <= k_hi; k++)
            if (((k % stride) + stride) % stride == 0)
                add_freq_label(fa, pow(10.0, k), 3, out, &n_out, max_out, &right_edge);
    } else if (chosen > 0) {
        for (int k = k_lo; k <= k_hi; k++)
            for (int j = 0; j < set_len[chosen]; j++)
                add_freq_label(fa, sets[chosen][j] * pow(10.0, k), 3, out, &n_out, max_out,
                               &right_edge);
    } else {
        double f_lo = fa->f_lo_hz, f_hi = fa->f_hi_hz;
        double step = svg_nice_step_125((f_hi - f_lo) / 5.0);
        /* digits enough to tell neighbouring labels apart */
        int sig = (int)floor(log10(f_hi)) - (int)floor(log10(step)) + 1;
        sig = sig < 3 ? 3 : (sig > 12 ? 12 : sig);
        double first = ceil(f_lo / step - 1e-9); /* in steps; the axis holds about five */
        for (int j = 0; j <= 12; j++)
            add_freq_label(fa, (first + j) * step, sig, out, &n_out, max_out, &right_edge);
    }
    if (n_out < 2) { /* nothing fitted: label the two ends of the sweep */
        n_out = 0;
        right_edge = -1e300;
        add_freq_label(fa, fa->f_lo_hz, 6, out, &n_out, max_out, &right_edge);
        add_freq_label(fa, fa->f_hi_hz, 6, out, &n_out, max_out, &right_edge);
    }
    return n_out;
}

/* Vertical grid: decade lines and labelled frequencies darker, the multiples 2..9 of each
 * decade lighter (only 2 and 5 where a decade is narrow, none where it is very narrow). */
static void draw_freq_grid(ss_strbuf *b, const freq_axis *fa, const panel *panels, int n_panels)
{
    double decade_px = (PLOT_X1 - PLOT_X0) / (fa->log_hi - fa->log_lo);
    int k_lo = (int)floor(fa->log_lo), k_hi = (int)ceil(fa->log_hi);

    svg_put(b, "<g stroke=\"" C_GRID_MINOR "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    if (decade_px >= 12.0) {
        for (int k = k_lo; k <= k_hi; k++) {
            for (int m = 2; m <= 9; m++) {
                if (decade_px < 40.0 && m != 2 && m != 5)
                    continue;
                double f = m * pow(10.0, k);
                if (on_axis(fa, f))
                    put_vline(b, clamp_x(x_of_freq(fa, f)), panels, n_panels);
            }
        }
    }
    svg_put(b, "</g>\n");

    freq_label labels[MAX_FREQ_LABELS];
    int n_labels = pick_freq_labels(fa, labels, MAX_FREQ_LABELS);

    /* decades every `every` (more than one only for sweeps of very many decades) */
    int every = decade_px >= 6.0 ? 1 : (int)ceil(6.0 / decade_px);
    svg_put(b, "<g stroke=\"" C_GRID_MAJOR "\" stroke-width=\"1\" shape-rendering=\"crispEdges\">\n");
    for (int k = k_lo; k <= k_hi; k++) {
        double f = pow(10.0, k);
        if (((k % every) + every) % every == 0 && on_axis(fa, f))
            put_vline(b, clamp_x(x_of_freq(fa, f)), panels, n_panels);
    }
    for (int i = 0; i < n_labels; i++) {
        double lg = log10(labels[i].freq_hz);
        if (fabs(lg - round(lg)) > 1e-9) /* decades are drawn above */
            put_vline(b, labels[i].x, panels, n_panels);
    }
    svg_put(b, "</g>\n");

    svg_put(b, "<g font-size=\"11\" fill=\"" C_TEXT "\">\n");
    for (int i = 0; i < n_labels; i++)
        svg_put_text(b, labels[i].x, FREQ_LABEL_Y, "middle", "", labels[i].text);
    svg_put(b, "</g>\n");
}

/* The curve as one polyline. A point closer than CURVE_STEP_PX to the last one written, in
 * both directions, adds nothing visible and is skipped, so dense sweeps stay small files. */
#define CURVE_STEP_PX 0.25
static void draw_curve(ss_strbuf *b, const freq_axis *fa, const panel *p, const double *freq_hz,
                       const double *v, int n, const char *colour)
{
    strbuf_printf(b,
                  "<polyline fill=\"none\" stroke=\"%s\" stroke-width=\"2\" "
                  "stroke-linejoin=\"round\" stroke-linecap=\"round\" points=\"",
                  colour);
    double x_last = 0.0, y_last = 0.0;
    for (int i = 0; i < n; i++) {
        double x = x_of_freq(fa, freq_hz[i]), y = y_of_value(p, v[i]);
        if (i > 0 && i < n - 1 && fabs(x - x_last) < CURVE_STEP_PX &&
            fabs(y - y_last) < CURVE_STEP_PX)
            continue;
        strbuf_printf(b, "%s%.2f,%.2f", i ? " " : "", x, y);
        x_last = x;
        y_last = y;
    }
    svg_put(b, "\"/>\n");
}

/* ---- annotation labels: placed where they hide neither the curve nor each other ----------- */

typedef struct box {
    double left, top, right, bottom;
} box;

/* A label's anchor point; anchor is "start", "middle" or "end" as in SVG. */
typedef struct label_spot {
    double x, y;
    const char *anchor;
} label_spot;

/* What labels in the magnitude panel must keep clear of: the gain curve, the corner markers
 * and the labels placed before them. */
typedef struct label_room {
    const freq_axis *fa;
    const panel *p;
    const svg_bode_input *in;
    double marker_x[2];
    int n_markers;
    box placed[4];
    int n_placed;
} label_room;

/* The light box drawn behind a label of width w. */
static box spot_box(label_spot s, double w)
{
    double left = strcmp(s.anchor, "start") == 0 ? s.x
                  : strcmp(s.anchor, "end") == 0 ? s.x - w
                                                 : s.x - 0.5 * w;
    box bx = {left - 3.0, s.y - FONT_NOTE, left + w + 3.0, s.y + 4.0};
    return bx;
}

/* Pixels between the box and the gain curve, 0 when they touch; capped at 100. */
static double curve_clearance(const label_room *r, box bx)
{
    double best = 100.0;
    for (int i = 0; i + 1 < r->in->n; i++) {
        double xa = x_of_freq(r->fa, r->in->freq_hz[i]);
        double xb = x_of_freq(r->fa, r->in->freq_hz[i + 1]);
        if (xb < bx.left || xa > bx.right)
            continue;
        double ya = y_of_value(r->p, r->in->gain_db[i]);
        double yb = y_of_value(r->p, r->in->gain_db[i + 1]);
        if (xb > xa) { /* the part of the segment within the box's columns */
            double t_a = fmax(0.0, (bx.left - xa) / (xb - xa));
            double t_b = fmin(1.0, (bx.right - xa) / (xb - xa));
            double ya_clip = ya + t_a * (yb - ya), yb_clip = ya + t_b * (yb - ya);
            ya = ya_clip;
            yb = yb_clip;
        }
        double y_min = fmin(ya, yb), y_max = fmax(ya, yb);
        double d = y_min > bx.bottom ? y_min - bx.bottom : (y_max < bx.top ? bx.top - y_max : 0.0);
        best = fmin(best, d);
    }
    return best;
}

/* -1 when the box leaves the panel, crosses a marker other than its own (own_marker, -1 for
 * none) or overlaps a placed label; else its clearance from the curve. */
static double spot_score(const label_room *r, box bx, int own_marker)
{
    if (bx.left < PLOT_X0 + 1.0 || bx.right > PLOT_X1 - 1.0 || bx.top < r->p->y_top + 1.0 ||
        bx.bottom > r->p->y_bottom - 1.0)
        return -1.0;
    for (int i = 0; i < r->n_markers; i++)
        if (i != own_marker && r->marker_x[i] >= bx.left - 2.0 && r->marker_x[i] <= bx.right + 2.0)
            return -1.0;
    for (int i = 0; i < r->n_placed; i++) {
        const box *o = &r->placed[i];
        if (bx.left < o->right + 3.0 && o->left < bx.right + 3.0 && bx.top < o->bottom + 2.0 &&
            o->top < bx.bottom + 2.0)
            return -1.0;
    }
    return curve_clearance(r, bx);
}

/* Takes the first candidate a few pixels clear of everything, else the clearest one, and
 * records its box so later labels avoid it. */
static label_spot choose_spot(label_room *r, const label_spot *cand, int n_cand, double w,
                              int own_marker)
{
    int best = 0;
    double best_score = -2.0;
    for (int i = 0; i < n_cand; i++) {
        double s = spot_score(r, spot_box(cand[i], w), own_marker);
        if (s >= 4.0) {
            best = i;
            break;
        }
        if (s > best_score) {
            best_score = s;
            best = i;
        }
    }
    if (r->n_placed < 4)
        r->placed[r->n_placed++] = spot_box(cand[best], w);
    return cand[best];
}

/* A label with a light box behind it so it stays readable over the grid. */
static void put_boxed_label(ss_strbuf *b, label_spot s, const char *colour, const char *text)
{
    box bx = spot_box(s, text_width(text, FONT_NOTE));
    strbuf_printf(b,
                  "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" rx=\"2\" "
                  "fill=\"#ffffff\" fill-opacity=\"0.88\"/>\n",
                  bx.left, bx.top, bx.right - bx.left, bx.bottom - bx.top);
    char attrs[64];
    snprintf(attrs, sizeof attrs, "font-size=\"11\" fill=\"%s\"", colour);
    svg_put_text(b, s.x, s.y, s.anchor, attrs, text);
}

/* The corners that get a marker: named, on the sweep. */
typedef struct corner {
    char text[96]; /* "f_low 12.3 Hz" */
    double x;
    int prefer_right; /* label on the passband side of the marker first */
} corner;

static int find_corners(const freq_axis *fa, const svg_bode_input *in, corner out[2])
{
    const char *name[2] = {"f_low", "f_high"};
    const double freq_hz[2] = {in->f_low_hz, in->f_high_hz};
    int n = 0;
    for (int i = 0; i < 2; i++) {
        if (isnan(freq_hz[i]) || !on_axis(fa, freq_hz[i]))
            continue;
        char num[64];
        format_freq(num, sizeof num, freq_hz[i], 3, 0);
        snprintf(out[n].text, sizeof out[n].text, "%s %s", name[i], num);
        out[n].x = clamp_x(x_of_freq(fa, freq_hz[i]));
        out[n].prefer_right = i == 0;
        n++;
    }
    return n;
}

static void draw_corner_markers(ss_strbuf *b, const corner *cs, int n_corners, const panel *panels)
{
    if (n_corners == 0)
        return;
    svg_put(b, "<g stroke=\"" C_CORNER "\" stroke-width=\"1.4\" stroke-dasharray=\"3 3\">\n");
    for (int i = 0; i < n_corners; i++)
        put_vline(b, cs[i].x, panels, 2);
    svg_put(b, "</g>\n");
}

/* Corner labels go beside their marker, near the foot of the magnitude panel first (beside a
 * corner the passband keeps the curve high), then higher up, on whichever side is clear. */
static void draw_corner_labels(ss_strbuf *b, label_room *room, const corner *cs, int n_corners)
{
    const double rows[3] = {MAG_Y1 - 8.0, MAG_Y1 - 28.0, MAG_Y0 + 17.0};
    for (int i = 0; i < n_corners; i++) {
        label_spot cand[6];
        int n_cand = 0;
        for (int r = 0; r < 3; r++)
            for (int side = 0; side < 2; side++) {
                int right = side == 0 ? cs[i].prefer_right : !cs[i].prefer_right;
                cand[n_cand].x = right ? cs[i].x + 5.0 : cs[i].x - 5.0;
                cand[n_cand].y = rows[r];
                cand[n_cand].anchor = right ? "start" : "end";
                n_cand++;
            }
        label_spot s = choose_spot(room, cand, n_cand, text_width(cs[i].text, FONT_NOTE), i);
        put_boxed_label(b, s, C_CORNER, cs[i].text);
    }
}

/* 20*log10(1/sqrt(2)) below mid-band: the level the corners are defined at. */
static double half_power_level_db(const svg_bode_input *in)
{
    return in->gain_mid_db + HALF_POWER_DB;
}

static void draw_half_power_line(ss_strbuf *b, const panel *p, const svg_bode_input *in)
{
    double y = y_of_value(p, half_power_level_db(in));
    strbuf_printf(b,
                  "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"" C_MUTED
                  "\" stroke-width=\"1.2\" stroke-dasharray=\"7 4\"/>\n",
                  PLOT_X0, y, PLOT_X1, y);
}

/* The half-power line's label: at either end of the line or over the peak, just below or
 * just above the line, wherever the curve and the corner labels leave room. */
static void draw_half_power_label(ss_strbuf *b, label_room *room)
{
    const svg_bode_input *in = room->in;
    double y = y_of_value(room->p, half_power_level_db(in));
    int i_max = 0;
    for (int i = 1; i < in->n; i++)
        if (in->gain_db[i] > in->gain_db[i_max])
            i_max = i;
    double x_peak = x_of_freq(room->fa, in->freq_hz[i_max]);
    const label_spot cand[6] = {
        {PLOT_X1 - 6.0, y + 15.0, "end"},   {PLOT_X1 - 6.0, y - 6.0, "end"},
        {PLOT_X0 + 6.0, y + 15.0, "start"}, {PLOT_X0 + 6.0, y - 6.0, "start"},
        {x_peak, y + 15.0, "middle"},       {x_peak, y - 6.0, "middle"},
    };
    const char *text = U_MINUS "3.01 dB";
    label_spot s = choose_spot(room, cand, 6, text_width(text, FONT_NOTE), -1);
    put_boxed_label(b, s, C_MUTED, text);
}

/* The plot title in at most max_w px: whole when its estimated width fits, else cut at a
 * character boundary with an ellipsis (U+2026) so the estimate, ellipsis included, fits. Bold
 * glyphs run wider than GLYPH_EM; TITLE_EM is a margin of our own on the safe side. */
#define FONT_TITLE 17.0
#define TITLE_EM 0.66
static void fit_title(const char *t, char *buf, size_t len, double max_w)
{
    size_t max_chars = (size_t)(max_w / (TITLE_EM * FONT_TITLE));
    if (visible_len(t) <= max_chars) {
        snprintf(buf, len, "%s", t);
        return;
    }
    /* keep max_chars - 1 characters (the ellipsis is the last one), whole UTF-8 sequences */
    size_t bytes = 0, chars = 0;
    while (t[bytes] && bytes + 8 < len) {
        if (((unsigned char)t[bytes] & 0xC0) != 0x80) {
            if (chars + 1 >= max_chars)
                break;
            chars++;
        }
        bytes++;
    }
    while (bytes > 0 && ((unsigned char)t[bytes] & 0xC0) == 0x80) /* a whole sequence */
        bytes--;
    while (bytes > 0 && t[bytes - 1] == ' ')
        bytes--;
    snprintf(buf, len, "%.*s\xE2\x80\xA6", (int)bytes, t);
}

static void draw_axis_titles(ss_strbuf *b, const svg_bode_input *in)
{
    svg_put(b, "<g font-size=\"13\" fill=\"" C_TEXT "\">\n");
    double mag_mid = 0.5 * (MAG_Y0 + MAG_Y1), phase_mid = 0.5 * (PHASE_Y0 + PHASE_Y1);
    char attrs[96];
    snprintf(attrs, sizeof attrs, "transform=\"rotate(-90 %.2f %.2f)\"", YTITLE_X, mag_mid);
    svg_put_text(b, YTITLE_X, mag_mid, "middle", attrs, "Gain (dB)");
    snprintf(attrs, sizeof attrs, "transform=\"rotate(-90 %.2f %.2f)\"", YTITLE_X, phase_mid);
    svg_put_text(b, YTITLE_X, phase_mid, "middle", attrs, "Phase (" U_DEGREE ")");
    svg_put_text(b, 0.5 * (PLOT_X0 + PLOT_X1), FREQ_TITLE_Y, "middle", "", "Frequency");
    svg_put(b, "</g>\n");

    if (in->title) {
        char title[512];
        fit_title(in->title, title, sizeof title, PLOT_X1 - PLOT_X0);
        svg_put_text(b, PLOT_X0, TITLE_Y, "start",
                     "font-size=\"17\" font-weight=\"bold\" fill=\"" C_TEXT "\"", title);
    }
    if (!isnan(in->gain_mid_db)) {
        char num[64], note[96];
        svg_format_tick(num, sizeof num, in->gain_mid_db, 0.1);
        snprintf(note, sizeof note, "mid-band gain %s dB", num);
        svg_put_text(b, PLOT_X0, SUBTITLE_Y, "start", "font-size=\"12\" fill=\"" C_MUTED "\"", note);
    }
}

/* ---- input checks ------------------------------------------------------------------------ */

static ss_status check_series(const double *v, int n, const char *what, const char *file,
                              ss_error *err)
{
    for (int i = 0; i < n; i++)
        if (!isfinite(v[i]))
            return err_set(err, SS_ERR_INPUT, file, 0, "Bode plot: %s at point %d of %d is %s",
                           what, i + 1, n, isnan(v[i]) ? "NaN" : "infinite");
    return SS_OK;
}

static ss_status check_input(const svg_bode_input *in, const char *file, ss_error *err)
{
    if (!in || !in->freq_hz || !in->gain_db || !in->phase_deg)
        return err_set(err, SS_ERR_INPUT, file, 0, "Bode plot: no data given");
    if (in->n < 2)
        return err_set(err, SS_ERR_INPUT, file, 0,
                       "Bode plot: needs at least 2 frequency points, got %d", in->n);
    ss_status st = check_series(in->freq_hz, in->n, "frequency", file, err);
    if (st == SS_OK)
        st = check_series(in->gain_db, in->n, "gain", file, err);
    if (st == SS_OK)
        st = check_series(in->phase_deg, in->n, "phase", file, err);
    if (st != SS_OK)
        return st;
    for (int i = 0; i < in->n; i++) {
        if (in->freq_hz[i] <= 0.0)
            return err_set(err, SS_ERR_INPUT, file, 0,
                           "Bode plot: frequency at point %d of %d is %g Hz, not positive", i + 1,
                           in->n, in->freq_hz[i]);
        if (i > 0 && in->freq_hz[i] <= in->freq_hz[i - 1])
            return err_set(err, SS_ERR_INPUT, file, 0,
                           "Bode plot: frequency at point %d (%.17g Hz) is not above point %d "
                           "(%.17g Hz)",
                           i + 1, in->freq_hz[i], i, in->freq_hz[i - 1]);
    }
    const double corner_hz[2] = {in->f_low_hz, in->f_high_hz};
    const char *corner_name[2] = {"f_low", "f_high"};
    for (int i = 0; i < 2; i++)
        if (!isnan(corner_hz[i]) && !(isfinite(corner_hz[i]) && corner_hz[i] > 0.0))
            return err_set(err, SS_ERR_INPUT, file, 0,
                           "Bode plot: corner %s is %g Hz; expected a positive frequency or NaN",
                           corner_name[i], corner_hz[i]);
    if (isinf(in->gain_mid_db))
        return err_set(err, SS_ERR_INPUT, file, 0,
                       "Bode plot: mid-band gain is infinite; expected a finite value or NaN");
    return SS_OK;
}

/* ---- the document ------------------------------------------------------------------------ */

/* Renders into b (which may fail part-way: the caller checks b->failed). */
static void render(ss_strbuf *b, const svg_bode_input *in)
{
    double f_first = in->freq_hz[0], f_last = in->freq_hz[in->n - 1];
    freq_axis fa = {f_first, f_last, log10(f_first), log10(f_last)};
    panel panels[2] = {{MAG_Y0, MAG_Y1, {0.0, 0.0, 1.0}}, {PHASE_Y0, PHASE_Y1, {0.0, 0.0, 1.0}}};

    double lo, hi;
    svg_data_range(in->gain_db, in->n, &lo, &hi);
    if (!isnan(in->gain_mid_db)) { /* keep the half-power line on the panel */
        lo = fmin(lo, in->gain_mid_db + HALF_POWER_DB);
        hi = fmax(hi, in->gain_mid_db);
    }
    axis_fit(&panels[0].ax, lo, hi, 2.0, 0);
    svg_data_range(in->phase_deg, in->n, &lo, &hi);
    axis_fit(&panels[1].ax, lo, hi, 10.0, 1);

    svg_put(b, "<?xml version=\"1.0\" encoding=\"UTF-8\" standalone=\"no\"?>\n");
    strbuf_printf(b,
                  "<svg xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\" width=\"%.0f\" "
                  "height=\"%.0f\" viewBox=\"0 0 %.0f %.0f\">\n",
                  PAGE_W, PAGE_H, PAGE_W, PAGE_H);
    svg_put(b, "<g font-family=\"DejaVu Sans, Helvetica, Arial, sans-serif\">\n");
    strbuf_printf(b, "<rect x=\"0\" y=\"0\" width=\"%.0f\" height=\"%.0f\" fill=\"#ffffff\"/>\n",
                  PAGE_W, PAGE_H);
    for (int i = 0; i < 2; i++)
        draw_panel_background(b, &panels[i]);
    draw_freq_grid(b, &fa, panels, 2);
    for (int i = 0; i < 2; i++)
        draw_value_grid(b, &panels[i]);
    corner cs[2];
    int n_corners = find_corners(&fa, in, cs);
    if (!isnan(in->gain_mid_db))
        draw_half_power_line(b, &panels[0], in);
    draw_corner_markers(b, cs, n_corners, panels);
    draw_curve(b, &fa, &panels[0], in->freq_hz, in->gain_db, in->n, C_GAIN);
    draw_curve(b, &fa, &panels[1], in->freq_hz, in->phase_deg, in->n, C_PHASE);
    for (int i = 0; i < 2; i++)
        draw_panel_frame(b, &panels[i]);

    /* labels last, so nothing is drawn over them */
    label_room room = {&fa, &panels[0], in, {0.0, 0.0}, n_corners, {{0.0, 0.0, 0.0, 0.0}}, 0};
    for (int i = 0; i < n_corners; i++)
        room.marker_x[i] = cs[i].x;
    draw_corner_labels(b, &room, cs, n_corners);
    if (!isnan(in->gain_mid_db))
        draw_half_power_label(b, &room);
    draw_axis_titles(b, in);
    svg_put(b, "</g>\n</svg>\n");
}

static ss_status render_checked(ss_strbuf *out, const svg_bode_input *in, const char *file,
                                ss_error *err)
{
    if (out->failed)
        return err_set(err, SS_ERR_NOMEM, file, 0, "Bode plot: output buffer already failed");
    ss_status st = check_input(in, file, err);
    if (st != SS_OK)
        return st;
    size_t start_len = out->len;
    render(out, in);
    if (out->failed) { /* put the caller's buffer back as it was */
        out->failed = 0;
        out->len = start_len;
        if (out->data)
            out->data[start_len] = '\0';
        return err_set(err, SS_ERR_NOMEM, file, 0, "Bode plot: out of memory while drawing");
    }
    return SS_OK;
}

ss_status svg_render_bode(ss_strbuf *out, const svg_bode_input *in, ss_error *err)
{
    return render_checked(out, in, NULL, err);
}

ss_status svg_write_bode(const char *path, const svg_bode_input *in, ss_error *err)
{
    if (!path || !path[0])
        return err_set(err, SS_ERR_INPUT, NULL, 0, "Bode plot: no output path given");
    ss_strbuf doc = {0};
    ss_status st = render_checked(&doc, in, path, err);
    if (st == SS_OK)
        st = output_write_atomic(path, doc.data, doc.len, err);
    strbuf_clear(&doc);
    return st;
}
