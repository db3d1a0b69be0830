/* The draft's text: values on the preferred-value series, the reasoning, the warnings, the
 * element lines and the limits, put together into one netlist (docs/design.md shows one). */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "design/draft.h"
#include "output/output.h"
#include "stagesim/study.h"

const char *draft_fmt_value(char *buf, size_t len, double v)
{
    static const struct { double scale; const char *suffix; } SI[] = {
        {1e9, "g"}, {1e6, "meg"}, {1e3, "k"}, {1.0, ""},
        {1e-3, "m"}, {1e-6, "u"}, {1e-9, "n"}, {1e-12, "p"}};
    size_t k = 0;
    while (k + 1 < sizeof SI / sizeof SI[0] && fabs(v) < SI[k].scale * 0.9999995)
        k++;
    snprintf(buf, len, "%.4g%s", v / SI[k].scale, SI[k].suffix);
    return buf;
}

static double nearest(int series, double v)
{
    ss_error e = {0};
    double s = v;
    if (ss_eseries_nearest(series, v, &s, &e) != SS_OK)
        return v; /* v was checked finite and > 0 by the caller's rules */
    return s;
}

/* The least member of the series not below v: the nearest, else the members above it. */
static double snap_up(int series, double v)
{
    double s = nearest(series, v);
    for (int k = 1; s < v * (1.0 - 1e-9) && k < 8; k++)
        s = nearest(series, s * pow(10.0, 0.75 * k / series));
    return s;
}

double draft_snap_r(const draft_ctx *c, double v)
{
    return nearest(c->rq.series, v);
}

double draft_snap_r_up(const draft_ctx *c, double v)
{
    return snap_up(c->rq.series, v);
}

double draft_snap_c_up(const draft_ctx *c, double v)
{
    return snap_up(c->rq.cap_series, v);
}

static void vline(ss_strbuf *b, const char *lead, const char *fmt, va_list ap)
{
    char line[512];
    vsnprintf(line, sizeof line, fmt, ap);
    strbuf_printf(b, "%s%s\n", lead, line);
}

void draft_why(draft_ctx *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vline(&c->why, "*      ", fmt, ap);
    va_end(ap);
}

void draft_step(draft_ctx *c, const char *fmt, ...)
{
    char lead[16];
    snprintf(lead, sizeof lead, "* %2d. ", ++c->step);
    va_list ap;
    va_start(ap, fmt);
    vline(&c->why, lead, fmt, ap);
    va_end(ap);
}

void draft_warn(draft_ctx *c, const char *fmt, ...)
{
    char line[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(line, sizeof line, fmt, ap);
    va_end(ap);
    if (c->d->n_warnings >= DRAFT_MAX_WARNINGS)
        return;
    char *w = ss_strdup(line);
    if (!w) {
        c->oom = 1;
        return;
    }
    c->d->warnings[c->d->n_warnings++] = w;
    strbuf_printf(&c->why, "*      WARNING: %s\n", line);
}

void draft_elem(draft_ctx *c, const char *name, const char *n1, const char *n2, double value,
                const char *what)
{
    char v[32];
    draft_fmt_value(v, sizeof v, value);
    strbuf_printf(&c->body, "%-6s %-5s %-5s %-8s ; %s\n", name, n1, n2, v, what);
    if (c->d->n_parts < DRAFT_MAX_PARTS) {
        draft_part *p = &c->d->parts[c->d->n_parts++];
        snprintf(p->name, sizeof p->name, "%s", name);
        p->value = value;
        snprintf(p->text, sizeof p->text, "%s", v);
        snprintf(p->what, sizeof p->what, "%s", what);
    }
}

void draft_line(draft_ctx *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vline(&c->body, "", fmt, ap);
    va_end(ap);
}

void draft_expect(draft_ctx *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vline(&c->expect, ".expect ", fmt, ap);
    va_end(ap);
}

/* The requirement as given, or "(not given)". */
static void req_line(ss_strbuf *b, const char *name, double v, const char *unit, const char *dflt)
{
    char t[48];
    if (isnan(v)) {
        strbuf_printf(b, "*   %-11s %s\n", name, dflt);
        return;
    }
    strbuf_printf(b, "*   %-11s %s\n", name, fmt_eng(t, sizeof t, v, unit));
}

ss_status draft_assemble(draft_ctx *c, const char *title, const char *card, double ac_lo_hz,
                         double ac_hi_hz, const char *load_field, const char *rating,
                         ss_error *err)
{
    const ss_draft_req *r = &c->rq;
    ss_strbuf t = {0};
    char lo[32], hi[32];
    strbuf_printf(&t, "%s\n*\n", title);
    strbuf_printf(&t,
                  "* Drafted by `stagesim draft %s` from rules of thumb (docs/design.md).\n"
                  "*\n"
                  "* CAUTION: a design found this way is a starting point for the bench, not a\n"
                  "* verified product. Power, voltage and temperature ratings are NOT checked\n"
                  "* unless you write limits for them (see the suggested ones at the end).\n"
                  "* Mains or high-voltage stages follow local codes and licensed practice.\n"
                  "*\n* Requirements\n",
                  ss_draft_kind_name((int)r->kind));
    req_line(&t, "supply", r->supply_v, "V", "");
    req_line(&t, "current", r->current_a, "A", "(not given: chosen below)");
    req_line(&t, "swing", r->swing_v, "V", "(not given)");
    if (isnan(r->gain))
        strbuf_printf(&t, "*   %-11s (not given)\n", "gain");
    else
        strbuf_printf(&t, "*   %-11s %.6g V/V (%.2f dB)\n", "gain", r->gain, 20.0 * log10(r->gain));
    req_line(&t, "zin", r->zin_ohm, "ohm", "(not given)");
    req_line(&t, "load", r->load_ohm, "ohm", "(none)");
    req_line(&t, "source", r->source_ohm, "ohm", "");
    strbuf_printf(&t, "*   %-11s %s .. %s\n", "band", fmt_eng(lo, sizeof lo, r->f_low_hz, "Hz"),
                  fmt_eng(hi, sizeof hi, r->f_high_hz, "Hz"));
    strbuf_printf(&t, "*   %-11s resistors E%d, capacitors E%d (IEC 60063)\n", "series",
                  r->series, r->cap_series);
    strbuf_printf(&t, "*\n* Reasoning, step by step (each rule is common practice, "
                      "docs/design.md)\n");
    strbuf_append(&t, c->why.data ? c->why.data : "", c->why.len);
    if (c->d->n_warnings) {
        strbuf_printf(&t, "*\n* Warnings: requirements these rules could not meet\n");
        for (int k = 0; k < c->d->n_warnings; k++)
            strbuf_printf(&t, "*   - %s\n", c->d->warnings[k]);
    }
    strbuf_printf(&t, "*\n%s\n", card);
    strbuf_append(&t, c->body.data ? c->body.data : "", c->body.len);
    strbuf_printf(&t, "\n.op\n.ac dec 20 %s %s\n.stage in=vsrc out=out%s\n",
                  draft_fmt_value(lo, sizeof lo, ac_lo_hz), draft_fmt_value(hi, sizeof hi, ac_hi_hz),
                  load_field);
    strbuf_printf(&t, "\n* Limits from the requirements: `stagesim check` judges them\n");
    strbuf_append(&t, c->expect.data ? c->expect.data : "", c->expect.len);
    strbuf_printf(&t, "*\n* Suggested rating limits: fill in the ratings of the parts you fit and\n"
                      "* uncomment (stagesim does not know them), e.g.\n%s"
                      ".end\n",
                  rating);
    if (t.failed || c->oom || c->why.failed || c->body.failed || c->expect.failed) {
        strbuf_clear(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory drafting the stage");
    }
    c->d->text = t.data;
    return SS_OK;
}

ss_status ss_draft_write(const ss_draft *d, const char *path, ss_error *err)
{
    if (!d || !d->text || !path)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "no draft or no path to write it to");
    return output_write_atomic(path, d->text, strlen(d->text), err);
}
