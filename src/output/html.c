/* The HTML report: one self-contained page (inline CSS, the plots as inline SVG, no scripts, no
 * external resources) that a CI system keeps beside the CSV files and a reviewer opens in a
 * browser. Built from the same tables and solver context the CSV files and the text report
 * come from; every number cell carries its exact value (shortest round-trip text, as in the
 * CSV files) in data-v beside the rounded text shown. docs/cli.md, "The HTML report". */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/output.h"
#include "study/study.h"
#include "util/table.h"

#define HTML_MAX_NODE_ROWS 100 /* as the text report: op.csv has every node */
#define HTML_MAX_SVG_BYTES (64u << 20)

struct ss_html {
    char *title;
    char *subtitle;
    ss_strbuf banner;   /* verdict and yield lines */
    ss_strbuf warnings; /* <li> items */
    int n_warnings, n_lint;
    ss_strbuf body;  /* the sections, in the order added */
    ss_strbuf plots; /* the figures, in the order added */
    int n_plots;
    int n_limits, n_failed, judged; /* over every verdict table added */
    int failed_other;               /* ss_html_fail */
};

static ss_status nomem(ss_error *err) { return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory"); }

static void put(ss_strbuf *b, const char *s) { strbuf_append(b, s, strlen(s)); }

/* Text as HTML content or a quoted attribute value: & < > " as references, control characters
 * as spaces, bytes that are not UTF-8 as U+FFFD (xml.c), so the page stays valid UTF-8. */
static void put_text(ss_strbuf *b, const char *s) { xml_put_text(b, s ? s : ""); }

/* The report's device tables as preformatted blocks, one per kind (report_device_tables). */
typedef struct device_pre {
    ss_strbuf *b;
    int open;
} device_pre;

static void put_device_line(void *ctx, const char *heading, const char *line)
{
    device_pre *p = ctx;
    if (heading) {
        if (p->open)
            put(p->b, "</pre>\n");
        put(p->b, "<pre class=\"devices\">");
        put_text(p->b, heading);
        p->open = 1;
    }
    put_text(p->b, line);
    put(p->b, "\n");
}

/* ---- numbers ------------------------------------------------------------------------------ */

/* The unit of a figure from its name, as the CSV files name them: v(..), vbe(..) volts, i(..),
 * ic(..) amperes, gm(..) siemens; the suffixes _v, _a, _hz, _ohm, _db, _pct, _deg, _s, _w,
 * _c, _k. "" when none is known. A frequency after '@' is dropped first. */
static const char *unit_of(const char *name)
{
    char base[160];
    snprintf(base, sizeof base, "%s", name ? name : "");
    char *at = strchr(base, '@');
    if (at)
        *at = '\0';
    char *paren = strchr(base, '(');
    if (paren) {
        *paren = '\0';
        static const char *const volts[] = {"v", "vbe", "vce", "vbc", "vgs", "vds", "vd"};
        static const char *const amps[] = {"i", "ic", "ib", "ie", "id", "ig", "is"};
        for (size_t k = 0; k < sizeof volts / sizeof volts[0]; k++)
            if (strcmp(base, volts[k]) == 0)
                return "V";
        for (size_t k = 0; k < sizeof amps / sizeof amps[0]; k++)
            if (strcmp(base, amps[k]) == 0)
                return "A";
        if (strcmp(base, "gm") == 0 || strcmp(base, "gds") == 0 || strcmp(base, "go") == 0)
            return "S";
        if (strcmp(base, "p") == 0 || strcmp(base, "power") == 0)
            return "W";
        return "";
    }
    static const char *const sfx[][2] = {
        {"_hz", "Hz"}, {"_ohm", "\xCE\xA9"}, {"_db", "dB"}, {"_pct", "%"},     {"_deg", "\xC2\xB0"},
        {"_v", "V"},   {"_a", "A"},          {"_s", "s"},   {"_w", "W"},       {"_c", "\xC2\xB0" "C"},
        {"_k", "K"}};
    size_t n = strlen(base);
    for (size_t k = 0; k < sizeof sfx / sizeof sfx[0]; k++) {
        size_t m = strlen(sfx[k][0]);
        if (n > m && strcmp(base + n - m, sfx[k][0]) == 0)
            return sfx[k][1];
    }
    return "";
}

/* Units shown with an SI prefix (the others, dB, %, degrees, plain numbers, as they are). */
static int takes_prefix(const char *unit)
{
    static const char *const u[] = {"V", "A", "Hz", "\xCE\xA9", "S", "s", "W"};
    for (size_t k = 0; k < sizeof u / sizeof u[0]; k++)
        if (strcmp(unit, u[k]) == 0)
            return 1;
    return 0;
}

/* v rounded to 6 significant digits for reading: an SI prefix (f .. T, micro as U+00B5) when
 * the unit takes one, "-" for NaN. */
static void format_shown(char *buf, size_t len, double v, const char *unit)
{
    if (isnan(v)) {
        snprintf(buf, len, "-");
        return;
    }
    if (!isfinite(v)) {
        snprintf(buf, len, "%s%s%s", v > 0 ? "inf" : "-inf", unit[0] ? " " : "", unit);
        return;
    }
    if (!takes_prefix(unit) || v == 0.0) {
        double m = fabs(v);
        if (m == 0.0 || (m >= 1e-3 && m < 1e6)) /* dB, %, degrees, ratios: no exponent */
            snprintf(buf, len, "%.6g%s%s", v, unit[0] ? " " : "", unit);
        else if (m < 1e-3 && m >= 1e-9) {
            int dec = 5 - (int)floor(log10(m));
            snprintf(buf, len, "%.*f%s%s", dec > 15 ? 15 : dec, v, unit[0] ? " " : "", unit);
        } else
            snprintf(buf, len, "%.6g%s%s", v, unit[0] ? " " : "", unit);
        return;
    }
    static const char *const prefix[] = {"f", "p", "n", "\xC2\xB5", "m", "", "k", "M", "G", "T"};
    int e3 = (int)floor(log10(fabs(v)) / 3.0);
    e3 = e3 < -5 ? -5 : e3 > 4 ? 4 : e3;
    char tmp[48];
    snprintf(tmp, sizeof tmp, "%.6g", v / pow(10.0, 3.0 * e3));
    if (fabs(strtod(tmp, NULL)) >= 1000.0 && e3 < 4) /* rounding carried to 1000 */
        e3++;
    snprintf(buf, len, "%.6g %s%s", v / pow(10.0, 3.0 * e3), prefix[e3 + 5], unit);
}

/* A number cell: the rounded text shown, the exact value in data-v ("" for NaN). */
static void put_num_cell(ss_strbuf *b, double v, const char *unit)
{
    char exact[40], shown[64];
    output_format_double(exact, sizeof exact, v);
    format_shown(shown, sizeof shown, v, unit);
    strbuf_printf(b, "<td class=\"n\" data-v=\"%s\">", exact);
    put_text(b, shown);
    put(b, "</td>");
}

/* A fraction shown as a percentage; data-v keeps the fraction as the CSV has it. */
static void put_fraction_cell(ss_strbuf *b, double v)
{
    char exact[40];
    output_format_double(exact, sizeof exact, v);
    if (isnan(v))
        strbuf_printf(b, "<td class=\"n\" data-v=\"\">-</td>");
    else
        strbuf_printf(b, "<td class=\"n\" data-v=\"%s\">%.4g %%</td>", exact, 100.0 * v);
}

static void put_verdict_cell(ss_strbuf *b, double pass)
{
    char exact[40];
    output_format_double(exact, sizeof exact, pass);
    strbuf_printf(b, "<td class=\"%s\" data-v=\"%s\">%s</td>", pass != 0.0 ? "pass" : "fail",
                  exact, pass != 0.0 ? "pass" : "FAIL");
}

/* ---- the object --------------------------------------------------------------------------- */

ss_status ss_html_create(const char *title, const char *subtitle, ss_html **out, ss_error *err)
{
    ss_html *h = ss_alloc(sizeof *h);
    if (!h)
        return nomem(err);
    h->title = title ? ss_strdup(title) : NULL;
    h->subtitle = ss_strdup(subtitle ? subtitle : "");
    if ((title && !h->title) || !h->subtitle) {
        ss_html_destroy(&h);
        return nomem(err);
    }
    *out = h;
    return SS_OK;
}

void ss_html_destroy(ss_html **ph)
{
    if (!ph || !*ph)
        return;
    ss_html *h = *ph;
    ss_free(h->title);
    ss_free(h->subtitle);
    strbuf_clear(&h->banner);
    strbuf_clear(&h->warnings);
    strbuf_clear(&h->body);
    strbuf_clear(&h->plots);
    ss_free(h);
    *ph = NULL;
}

static ss_status status_of(const ss_html *h, ss_error *err)
{
    if (h->banner.failed || h->warnings.failed || h->body.failed || h->plots.failed)
        return nomem(err);
    return SS_OK;
}

ss_status ss_html_add_note(ss_html *h, const char *text, ss_error *err)
{
    put(&h->body, "<p class=\"note\">");
    put_text(&h->body, text);
    put(&h->body, "</p>\n");
    return status_of(h, err);
}

ss_status ss_html_fail(ss_html *h, const char *reason, ss_error *err)
{
    put(&h->banner, "<p class=\"reason\">");
    put_text(&h->banner, reason);
    put(&h->banner, "</p>\n");
    h->failed_other = 1;
    return status_of(h, err);
}

ss_status ss_html_add_warning(ss_html *h, const char *text, const char *check, ss_error *err)
{
    put(&h->warnings, "<li>");
    if (check) {
        put(&h->warnings, "<span class=\"tag\">lint ");
        put_text(&h->warnings, check);
        put(&h->warnings, "</span> ");
        h->n_lint++;
    }
    put_text(&h->warnings, text);
    put(&h->warnings, "</li>\n");
    h->n_warnings++;
    return status_of(h, err);
}

ss_status ss_html_add_warnings(ss_html *h, const ss_solver *sv, ss_error *err)
{
    ss_status st = SS_OK;
    for (int i = 0; st == SS_OK && ss_solver_warning(sv, i); i++)
        st = ss_html_add_warning(h, ss_solver_warning(sv, i), ss_solver_warning_lint(sv, i, NULL),
                                 err);
    return st;
}

/* The page's title from the circuit's, when none was given. */
static ss_status take_title(ss_html *h, const ss_circuit *ckt, ss_error *err)
{
    if (h->title)
        return SS_OK;
    h->title = ss_strdup(ckt && ckt->title ? ckt->title : "");
    return h->title ? SS_OK : nomem(err);
}

/* ---- tables ------------------------------------------------------------------------------- */

/* The columns whose values are in the unit of the row's figure (a figure's value, bounds,
 * statistics, shift). */
static int col_in_row_unit(const char *col)
{
    static const char *const c[] = {"value",    "measured", "lower", "upper", "margin",
                                    "min",      "max",      "mean",  "std",   "computed",
                                    "preferred", "shift",   "worst"};
    for (size_t k = 0; k < sizeof c / sizeof c[0]; k++)
        if (strcmp(col, c[k]) == 0)
            return 1;
    return 0;
}

static void put_cell(ss_strbuf *b, const char *row_label, const char *col, double v)
{
    if (strcmp(col, "pass") == 0 && !isnan(v))
        put_verdict_cell(b, v);
    else if (strcmp(col, "pass_fraction") == 0)
        put_fraction_cell(b, v);
    else
        put_num_cell(b, v, col_in_row_unit(col) ? unit_of(row_label) : unit_of(col));
}

static void section_start(ss_strbuf *b, const char *cls, const char *heading)
{
    strbuf_printf(b, "<section class=\"%s\">\n<h2>", cls);
    put_text(b, heading);
    put(b, "</h2>\n");
}

/* A table, its label column first; at most max_rows rows (0: all), then a line saying how many
 * more there are; rows labelled skip_label are left out (NULL: none). */
static void put_table(ss_strbuf *b, const ss_table *t, const char *table_class, int max_rows,
                      const char *skip_label)
{
    strbuf_printf(b, "<table class=\"%s\">\n<thead><tr>", table_class);
    if (t->has_labels) {
        put(b, "<th>");
        put_text(b, t->label_col ? t->label_col : "");
        put(b, "</th>");
    }
    for (int j = 0; j < t->n_cols; j++) {
        put(b, "<th>");
        put_text(b, t->col_names[j]);
        put(b, "</th>");
    }
    put(b, "</tr></thead>\n<tbody>\n");
    int shown = 0, total = 0;
    for (int i = 0; i < t->n_rows; i++) {
        const char *label = t->has_labels ? t->row_labels[i] : "";
        if (skip_label && strcmp(label, skip_label) == 0)
            continue;
        total++;
        if (max_rows > 0 && shown >= max_rows)
            continue;
        shown++;
        put(b, "<tr>");
        if (t->has_labels) {
            put(b, "<th scope=\"row\">");
            put_text(b, label);
            put(b, "</th>");
        }
        for (int j = 0; j < t->n_cols; j++)
            put_cell(b, label, t->col_names[j], t->data[(size_t)i * (size_t)t->n_cols + (size_t)j]);
        put(b, "</tr>\n");
    }
    put(b, "</tbody>\n</table>\n");
    if (shown < total)
        strbuf_printf(b, "<p class=\"more\">&hellip; and %d more rows (all in the CSV file)</p>\n",
                      total - shown);
}

ss_status ss_html_add_table(ss_html *h, const char *heading, const ss_table *t, int max_rows,
                            ss_error *err)
{
    if (!t)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "HTML report: no table for '%s'",
                       heading ? heading : "");
    section_start(&h->body, "table", heading);
    put_table(&h->body, t, "data", max_rows, NULL);
    put(&h->body, "</section>\n");
    return status_of(h, err);
}

static int verdict_cols_ok(const ss_table *v)
{
    static const char *const cols[] = {"measured", "lower", "upper", "margin", "pass"};
    if (!v || v->n_cols != 5)
        return 0;
    for (int j = 0; j < 5; j++)
        if (strcmp(v->col_names[j], cols[j]) != 0)
            return 0;
    return 1;
}

ss_status ss_html_add_verdicts(ss_html *h, const char *heading, const ss_table *v, ss_error *err)
{
    if (!verdict_cols_ok(v))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "HTML report: '%s' is not a verdict table (ss_check_evaluate)",
                       heading ? heading : "");
    int failed = 0;
    for (int i = 0; i < v->n_rows; i++)
        failed += v->data[(size_t)i * 5 + 4] == 0.0;
    h->n_limits += v->n_rows;
    h->n_failed += failed;
    h->judged = 1;
    section_start(&h->body, "verdicts", heading);
    strbuf_printf(&h->body, "<p class=\"count\">%d passed, %d failed</p>\n", v->n_rows - failed,
                  failed);
    put_table(&h->body, v, "data verdict", 0, NULL);
    put(&h->body, "</section>\n");
    return status_of(h, err);
}

/* ---- the run: operating point and stage ------------------------------------------------- */

typedef struct op_html_ctx {
    ss_strbuf *b;
    int shown, more, max_nodes;
} op_html_ctx;

static void op_row_html(void *sink, const char *quantity, const char *name, double value)
{
    op_html_ctx *c = sink;
    char label[1100];
    snprintf(label, sizeof label, "%s(%s)", quantity, name);
    if (strcmp(quantity, "v") == 0 && c->max_nodes > 0 && c->shown >= c->max_nodes) {
        c->more++;
        return;
    }
    if (strcmp(quantity, "v") == 0)
        c->shown++;
    put(c->b, "<tr><th scope=\"row\">");
    put_text(c->b, label);
    put(c->b, "</th>");
    put_num_cell(c->b, value, unit_of(label));
    put(c->b, "</tr>\n");
}

static void put_stage(ss_strbuf *b, const ss_solver *sv, const ss_table *summary)
{
    section_start(b, "stage", "Stage figures");
    put(b, "<p>input source <code>");
    put_text(b, sv->stage.in);
    put(b, "</code>, output node <code>");
    put_text(b, sv->stage.out);
    put(b, "</code>");
    if (sv->stage.load_ohm > 0.0) {
        char shown[64];
        format_shown(shown, sizeof shown, sv->stage.load_ohm, "\xCE\xA9");
        put(b, ", load ");
        put_text(b, shown);
    }
    put(b, "</p>\n");
    double g_db = ss_table_lookup(summary, "gain_mid_db", 0);
    if (!isnan(g_db))
        strbuf_printf(b, "<p class=\"headline\">mid-band gain <b>%.4g dB</b> (&times;%.4g)</p>\n",
                      g_db, pow(10.0, g_db / 20.0));
    put_table(b, summary, "data", 0, NULL);
    put(b, "</section>\n");
}

ss_status ss_html_add_run(ss_html *h, const ss_solver *sv, const ss_table *summary,
                          ss_error *err)
{
    ss_strbuf *b = &h->body;
    ss_status st = take_title(h, sv->ckt, err);
    if (st != SS_OK)
        return st;
    if (summary && sv->stage.in)
        put_stage(b, sv, summary);
    section_start(b, "op", "Operating point");
    strbuf_printf(b, "<p>temperature %.2f &deg;C</p>\n", sv->temp_c);
    if (sv->have_op) {
        /* the op.csv rows, from the same walk that writes them */
        put(b, "<table class=\"data\">\n<thead><tr><th>quantity</th><th>value</th></tr></thead>"
               "\n<tbody>\n");
        op_html_ctx c = {b, 0, 0, sv->out_nodes ? 0 : HTML_MAX_NODE_ROWS};
        op_rows(sv, sv->x_op, op_row_html, &c);
        put(b, "</tbody>\n</table>\n");
        if (c.more)
            strbuf_printf(b, "<p class=\"more\">&hellip; and %d more node voltages (all in op.csv)"
                             "</p>\n", c.more);
        /* the device tables of the text report */
        device_pre pre = {b, 0};
        report_device_tables(sv, put_device_line, &pre);
        if (pre.open)
            put(b, "</pre>\n");
    } else {
        put(b, "<p>no operating point</p>\n");
    }
    put(b, "</section>\n");
    return status_of(h, err);
}

/* ---- studies ----------------------------------------------------------------------------- */

ss_status ss_html_add_study(ss_html *h, const ss_study *s, const ss_table *pts,
                            const ss_table *summary, ss_error *err)
{
    ss_status st = take_title(h, s->nominal, err);
    if (st == SS_OK)
        st = ss_html_add_warnings(h, s->nominal_sv, err);
    if (st != SS_OK || !pts)
        return st;
    if (!summary)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "HTML report: a study's points without "
                                                   "their summary");
    const ss_limits *limits = s->limits;
    ss_strbuf *b = &h->body;
    long n_points = pts->n_rows;
    double yield = ss_table_lookup(summary, "all_limits", ss_table_col_index(summary,
                                                                             "pass_fraction"));
    if (!isnan(yield))
        strbuf_printf(&h->banner, "<p class=\"yield\">yield against the limits: <b data-v=\"%.17g\">"
                                  "%.4g %%</b> of %ld points</p>\n",
                      yield, 100.0 * yield, n_points);
    int n_lim = limits ? limits->n : 0;
    if (n_lim > 0) {
        /* the worst point of each limit: the smallest margin, a point without the figure
         * (not solved) first of all */
        section_start(b, "verdicts", "Worst cases against the limits");
        put(b, "<table class=\"data verdict\">\n<thead><tr><th>quantity</th><th>point</th>"
               "<th>measured</th><th>lower</th><th>upper</th><th>margin</th>"
               "<th>pass_fraction</th><th>pass</th></tr></thead>\n<tbody>\n");
        int point_col = ss_table_col_index(pts, "point");
        int failed = 0;
        for (int k = 0; k < n_lim; k++) {
            const limit *lim = &limits->items[k];
            int col = ss_table_col_index(pts, lim->quantity);
            long worst = -1, pass = 0;
            double worst_m = HUGE_VAL;
            for (long i = 0; col >= 0 && i < n_points; i++) {
                double v = pts->data[(size_t)i * (size_t)pts->n_cols + (size_t)col];
                double x = limit_judged(lim, v);
                double m = isnan(v) ? -HUGE_VAL : fmin(x - lim->lo, lim->hi - x);
                pass += !isnan(v) && m >= 0.0;
                if (worst < 0 || m < worst_m) {
                    worst = i;
                    worst_m = m;
                }
            }
            double v = worst >= 0 ? pts->data[(size_t)worst * (size_t)pts->n_cols + (size_t)col]
                                  : SS_NAN;
            double m = isnan(v) ? SS_NAN : worst_m;
            int ok = worst >= 0 && !isnan(v) && worst_m >= 0.0;
            failed += !ok;
            put(b, "<tr><th scope=\"row\">");
            put_text(b, lim->quantity);
            put(b, "</th>");
            double pt = worst < 0 ? SS_NAN
                        : point_col >= 0
                            ? pts->data[(size_t)worst * (size_t)pts->n_cols + (size_t)point_col]
                            : (double)worst;
            put_num_cell(b, pt, "");
            const char *u = unit_of(lim->quantity);
            put_num_cell(b, v, u);
            put_num_cell(b, isfinite(lim->lo) ? lim->lo : SS_NAN, u);
            put_num_cell(b, isfinite(lim->hi) ? lim->hi : SS_NAN, u);
            put_num_cell(b, m, u);
            put_fraction_cell(b, n_points > 0 ? (double)pass / (double)n_points : SS_NAN);
            put_verdict_cell(b, ok);
            put(b, "</tr>\n");
        }
        put(b, "</tbody>\n</table>\n</section>\n");
        h->n_limits += n_lim;
        h->n_failed += failed;
        h->judged = 1;
    }
    section_start(b, "summary", "Study summary");
    strbuf_printf(b, "<p>%ld points</p>\n", n_points);
    put_table(b, summary, "data", 0, "all_limits");
    put(b, "</section>\n");
    return status_of(h, err);
}

ss_status ss_html_add_study_verdicts(ss_html *h, const ss_study *s, const char *heading,
                                     const ss_table *figures, const char *column, ss_error *err)
{
    int col = ss_table_col_index(figures, column);
    if (col < 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "HTML report: the figures have no column '%s'",
                       column);
    if (!s->limits || s->limits->n == 0)
        return SS_OK;
    ss_table *vals = table_create(1, "metric");
    ss_status st = vals && table_set_col(vals, 0, "value") == 0 ? SS_OK : nomem(err);
    for (int i = 0; st == SS_OK && i < figures->n_rows; i++) {
        double *row = table_add_row(vals, figures->row_labels[i]);
        if (!row)
            st = nomem(err);
        else
            row[0] = figures->data[(size_t)i * (size_t)figures->n_cols + (size_t)col];
    }
    ss_table *verdicts = NULL;
    int n_failed = 0;
    if (st == SS_OK)
        st = ss_check_evaluate(s->limits, vals, &verdicts, &n_failed, err);
    if (st == SS_OK)
        st = ss_html_add_verdicts(h, heading, verdicts, err);
    ss_table_destroy(&verdicts);
    ss_table_destroy(&vals);
    return st;
}

/* ---- plots -------------------------------------------------------------------------------- */

ss_status ss_html_add_svg(ss_html *h, const char *caption, const char *svg, size_t len,
                          ss_error *err)
{
    /* the document's root element on: the XML declaration and any doctype have no place in
     * an HTML page */
    const char *root = NULL;
    for (size_t i = 0; svg && i + 4 <= len; i++)
        if (memcmp(svg + i, "<svg", 4) == 0) {
            root = svg + i;
            break;
        }
    if (!root)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "HTML report: plot '%s' is not an SVG document",
                       caption ? caption : "");
    size_t n = len - (size_t)(root - svg);
    while (n > 0 && (root[n - 1] == '\n' || root[n - 1] == ' ' || root[n - 1] == '\0'))
        n--;
    put(&h->plots, "<figure>\n");
    strbuf_append(&h->plots, root, n);
    put(&h->plots, "\n<figcaption>");
    put_text(&h->plots, caption);
    put(&h->plots, "</figcaption>\n</figure>\n");
    h->n_plots++;
    return status_of(h, err);
}

ss_status ss_html_add_outset_plots(ss_html *h, const ss_outset *set, ss_error *err)
{
    const char *name, *staged;
    for (int i = 0; outset_written(set, i, &name, &staged) >= 0; i++) {
        if (!staged)
            continue;
        size_t n = strlen(name);
        if (n < 4 || strcmp(name + n - 4, ".svg") != 0)
            continue;
        ss_strbuf doc = {0};
        int sys_errno = 0;
        int rc = strbuf_read_file(&doc, staged, HTML_MAX_SVG_BYTES, &sys_errno);
        ss_status st = SS_OK;
        if (rc != SS_READ_OK)
            st = rc == SS_READ_NOMEM ? nomem(err)
                                     : err_set(err, SS_ERR_IO, name, 0,
                                               "cannot read the plot for the HTML report: %s",
                                               strbuf_read_error_text(rc, sys_errno));
        else
            st = ss_html_add_svg(h, name, doc.data ? doc.data : "", doc.len, err);
        strbuf_clear(&doc);
        if (st != SS_OK)
            return st;
    }
    return SS_OK;
}

/* ---- the page ----------------------------------------------------------------------------- */

static const char CSS[] =
    "body{font-family:'DejaVu Sans',Helvetica,Arial,sans-serif;color:#1b1b1b;background:#fff;"
    "margin:0 auto;max-width:1180px;padding:16px 24px;line-height:1.4}\n"
    "h1{font-size:1.5em;margin:0.2em 0}h2{font-size:1.2em;border-bottom:1px solid #ccd;"
    "padding-bottom:2px;margin-top:1.6em}\n"
    ".sub{color:#555;margin:0 0 0.8em 0}\n"
    ".banner{border-radius:6px;padding:8px 14px;margin:10px 0;font-size:1.1em}\n"
    ".banner.ok{background:#e3f4e6;border:1px solid #3c8d4a}\n"
    ".banner.bad{background:#fbe4e2;border:1px solid #c0392b}\n"
    ".banner.info{background:#eef1f7;border:1px solid #8a94a8}\n"
    ".banner p{margin:2px 0}\n"
    ".warnings{background:#fff6dc;border:1px solid #d8a400;border-radius:6px;padding:4px 14px}\n"
    ".warnings h2{margin-top:0.5em}.warnings li{margin:3px 0}.tag{background:#d8a400;color:#fff;border-radius:3px;"
    "padding:0 5px;font-size:0.85em}\n"
    "table.data{border-collapse:collapse;margin:6px 0;font-size:0.92em}\n"
    "table.data th,table.data td{border:1px solid #c8ccd4;padding:3px 9px;text-align:left}\n"
    "table.data thead th{background:#e9ecf2}\n"
    "table.data tbody tr:nth-child(even){background:#f6f7fa}\n"
    "table.data td.n{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
    "table.data td.pass{color:#1e7b34;font-weight:bold}\n"
    "table.data td.fail{color:#fff;background:#c0392b;font-weight:bold}\n"
    "pre.devices{background:#f6f7fa;border:1px solid #c8ccd4;padding:6px;overflow-x:auto;"
    "font-size:0.85em}\n"
    "figure{margin:12px 0;border:1px solid #c8ccd4;padding:8px;display:inline-block;"
    "max-width:100%;box-sizing:border-box}\n"
    "figure svg{max-width:100%;height:auto;display:block}\n"
    "figcaption{color:#555;font-size:0.9em;margin-top:4px}\n"
    "footer{color:#666;font-size:0.85em;margin-top:2em;border-top:1px solid #ccd;"
    "padding-top:6px}\n";

static void render_page(const ss_html *h, ss_strbuf *b)
{
    put(b, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
           "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
           "<meta name=\"generator\" content=\"stagesim ");
    put_text(b, ss_version());
    put(b, "\">\n<title>");
    const char *title = h->title && h->title[0] ? h->title : "(untitled netlist)";
    put_text(b, title);
    put(b, "</title>\n<style>\n");
    put(b, CSS);
    put(b, "</style>\n</head>\n<body>\n<header>\n<h1>");
    put_text(b, title);
    put(b, "</h1>\n");
    if (h->subtitle[0]) {
        put(b, "<p class=\"sub\">");
        put_text(b, h->subtitle);
        put(b, "</p>\n");
    }
    put(b, "</header>\n");
    int fails = h->n_failed || h->failed_other;
    const char *cls = fails ? "bad" : !h->judged ? "info" : "ok";
    strbuf_printf(b, "<div class=\"banner %s\" id=\"verdict\">\n", cls);
    if (h->judged)
        strbuf_printf(b, "<p><b>%s</b>: %d of %d limits met, %d failed</p>\n",
                      fails ? "FAIL" : "PASS", h->n_limits - h->n_failed, h->n_limits,
                      h->n_failed);
    else
        strbuf_printf(b, "<p>%sno limits judged</p>\n", fails ? "<b>FAIL</b>: " : "");
    strbuf_append(b, h->banner.data ? h->banner.data : "", h->banner.len);
    strbuf_printf(b, "<p>%d warning%s (%d from lint)</p>\n</div>\n", h->n_warnings,
                  h->n_warnings == 1 ? "" : "s", h->n_lint);
    if (h->n_warnings) {
        put(b, "<section class=\"warnings\">\n<h2>Warnings</h2>\n<ul>\n");
        strbuf_append(b, h->warnings.data, h->warnings.len);
        put(b, "</ul>\n</section>\n");
    }
    strbuf_append(b, h->body.data ? h->body.data : "", h->body.len);
    if (h->n_plots) {
        put(b, "<section class=\"plots\">\n<h2>Plots</h2>\n");
        strbuf_append(b, h->plots.data, h->plots.len);
        put(b, "</section>\n");
    }
    put(b, "<footer>Written by stagesim ");
    put_text(b, ss_version());
    put(b, ". Numbers are shown rounded; each cell's data-v attribute holds the value as the CSV "
           "files have it. Simulation does not replace bench verification; ratings and limits "
           "are the user's.</footer>\n</body>\n</html>\n");
}

ss_status ss_html_write(const ss_html *h, const char *path, ss_error *err)
{
    if (!path || !path[0])
        return err_set(err, SS_ERR_INPUT, NULL, 0, "HTML report: no output path given");
    ss_status st = status_of(h, err);
    if (st != SS_OK)
        return st;
    ss_strbuf b = {0};
    render_page(h, &b);
    return output_write_strbuf(&b, path, err);
}
