/* Time-varying source forms SIN, PULSE, PWL: parsing inside the parentheses, value at a time,
 * corners for the transient's step control. The integration itself is src/analysis/tran.c's. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/wave.h"

#define WAVE_MAX_ITEMS 200000 /* PWL values on one line; the tokenizer's line limit is lower */
#define WAVE_ITEM_BYTES 1024

static const char *const FORM_NAME[] = {"sin", "pulse", "pwl"}; /* ORDER WAVE_KIND */

static int form_kind(const char *tok, size_t *name_len)
{
    size_t n = 0;
    while (isalpha((unsigned char)tok[n]))
        n++;
    if (tok[n] != '(' && tok[n] != '\0')
        return -1;
    for (int k = 0; k < 3; k++)
        if (strlen(FORM_NAME[k]) == n && strncmp(tok, FORM_NAME[k], n) == 0) {
            *name_len = n;
            return k;
        }
    return -1;
}

int wave_is_form(const char *tok)
{
    size_t n;
    return tok && form_kind(tok, &n) >= 0;
}

/* Splits "(a b, {c*2} d)" into items (whitespace and commas separate, braces stay whole) and
 * evaluates each with pctx_value. Returns the count, or -1 with the error set. */
static int parse_items(pctx *p, const char *form, const char *args, double *vals, int max_vals)
{
    size_t len = strlen(args);
    if (len < 2 || args[0] != '(' || args[len - 1] != ')')
        return pctx_error(p, "%s: expected its values in parentheses, got '%.60s'", form, args);
    int n = 0;
    size_t i = 1, end = len - 1;
    while (i < end) {
        while (i < end && (isspace((unsigned char)args[i]) || args[i] == ','))
            i++;
        if (i >= end)
            break;
        size_t start = i;
        int brace = 0;
        while (i < end) {
            char c = args[i];
            if (c == '{')
                brace++;
            else if (c == '}')
                brace--;
            else if (brace <= 0 && (isspace((unsigned char)c) || c == ','))
                break;
            i++;
        }
        size_t item_len = i - start;
        if (item_len >= WAVE_ITEM_BYTES)
            return pctx_error(p, "%s: value %d is longer than %d characters", form, n + 1,
                              WAVE_ITEM_BYTES - 1);
        if (n >= max_vals)
            return pctx_error(p, "%s: more than %d values", form, max_vals);
        char item[WAVE_ITEM_BYTES];
        memcpy(item, args + start, item_len);
        item[item_len] = '\0';
        char what[64];
        snprintf(what, sizeof what, "%s value %d", form, n + 1);
        if (pctx_value(p, item, what, &vals[n]) != 0)
            return -1;
        n++;
    }
    return n;
}

static int check_sin(pctx *p, src_wave *w, int n)
{
    if (n < 3 || n > 6)
        return pctx_error(p, "sin(VO VA FREQ [TD [THETA [PHASE]]]) takes 3 to 6 values, got %d", n);
    if (!(w->p[WS_FREQ] >= 0.0))
        return pctx_error(p, "sin: frequency must not be negative, got %g", w->p[WS_FREQ]);
    if (w->p[WS_TD] < 0.0)
        return pctx_error(p, "sin: delay must not be negative, got %g", w->p[WS_TD]);
    /* every value is finite; what wave_value computes from them must be too */
    if (!isfinite(2.0 * SS_PI * w->p[WS_FREQ]))
        return pctx_error(p, "sin: frequency %g Hz is too large (2 pi f overflows)",
                          w->p[WS_FREQ]);
    if (!isfinite(fabs(w->p[WS_VO]) + fabs(w->p[WS_VA])))
        return pctx_error(p, "sin: offset %g and amplitude %g overflow when added", w->p[WS_VO],
                          w->p[WS_VA]);
    if (!isfinite(w->p[WS_PHASE] * SS_PI))
        return pctx_error(p, "sin: phase %g degrees is too large", w->p[WS_PHASE]);
    return 0;
}

static int check_pulse(pctx *p, src_wave *w, int n)
{
    if (n < 2 || n > 7)
        return pctx_error(p, "pulse(V1 V2 [TD [TR [TF [PW [PER]]]]]) takes 2 to 7 values, got %d",
                          n);
    static const char *const name[7] = {
        "", "", "delay", "rise time", "fall time", "pulse width", "period"};
    for (int k = WP_TD; k <= WP_PER; k++)
        if (w->p[k] < 0.0)
            return pctx_error(p, "pulse: %s must not be negative, got %g", name[k], w->p[k]);
    if (n <= WP_PW)
        w->p[WP_PW] = HUGE_VAL; /* left out: the pulse never ends */
    if (n <= WP_PER || w->p[WP_PER] == 0.0)
        w->p[WP_PER] = HUGE_VAL; /* left out or 0: a single pulse */
    if (!isfinite(w->p[WP_V2] - w->p[WP_V1]))
        return pctx_error(p, "pulse: the step from %g to %g overflows", w->p[WP_V1],
                          w->p[WP_V2]);
    double used = w->p[WP_TR] + w->p[WP_TF] + w->p[WP_PW];
    if (!isfinite(w->p[WP_TD] + used) && isfinite(w->p[WP_PW]))
        return pctx_error(p, "pulse: delay + rise time + width + fall time overflows");
    if (isfinite(w->p[WP_PER]) && used > w->p[WP_PER])
        return pctx_error(p, "pulse: rise time + width + fall time (%g s) exceed the period %g s",
                          used, w->p[WP_PER]);
    return 0;
}

static int check_pwl(pctx *p, src_wave *w, double *vals, int n)
{
    if (n < 2 || n % 2 != 0)
        return pctx_error(p, "pwl(T1 V1 T2 V2 ...) takes time-value pairs, got %d value%s", n,
                          n == 1 ? "" : "s");
    for (int k = 0; k < n / 2; k++) {
        double t = vals[2 * k];
        if (t < 0.0)
            return pctx_error(p, "pwl: time %d is negative (%g s)", k + 1, t);
        if (k > 0 && !(t > vals[2 * k - 2]))
            return pctx_error(p, "pwl: time %d (%g s) is not after time %d (%g s)", k + 1, t, k,
                              vals[2 * k - 2]);
        if (k > 0 && !isfinite(vals[2 * k + 1] - vals[2 * k - 1]))
            return pctx_error(p, "pwl: the step from value %d (%g) to value %d (%g) overflows", k,
                              vals[2 * k - 1], k + 1, vals[2 * k + 1]);
    }
    w->pwl = vals;
    w->n_pwl = n / 2;
    return 0;
}

int wave_parse(pctx *p, int tok_index, src_wave **out)
{
    const char *tok = pctx_tok(p, tok_index);
    size_t name_len = 0;
    int kind = form_kind(tok, &name_len);
    if (kind < 0)
        return pctx_error(p, "'%s' is not a source form (sin, pulse, pwl)", tok);
    int used = 1;
    const char *args = tok + name_len;
    if (*args == '\0') { /* `sin (0 1 1k)`: the parentheses are the next token */
        args = pctx_tok(p, tok_index + 1);
        if (!args || args[0] != '(')
            return pctx_error(p, "%s: expected its values in parentheses", FORM_NAME[kind]);
        used = 2;
    }
    /* an upper bound of the item count: separators + 1 */
    int max_items = 1;
    for (const char *c = args; *c; c++)
        max_items += isspace((unsigned char)*c) || *c == ',';
    if (max_items > WAVE_MAX_ITEMS)
        max_items = WAVE_MAX_ITEMS;
    src_wave *w = pctx_alloc(p, sizeof *w);
    double *vals = pctx_alloc(p, (size_t)max_items * sizeof *vals);
    if (!w || !vals)
        return -1;
    int n = parse_items(p, FORM_NAME[kind], args, vals, max_items);
    if (n < 0)
        return -1;
    w->kind = (enum wave_kind)kind;
    if (kind != WAVE_PWL)
        for (int k = 0; k < n && k < 7; k++)
            w->p[k] = vals[k];
    int rc = kind == WAVE_SIN     ? check_sin(p, w, n)
             : kind == WAVE_PULSE ? check_pulse(p, w, n)
                                  : check_pwl(p, w, vals, n);
    if (rc != 0)
        return -1;
    *out = w;
    return used;
}

int wave_check_until(const src_wave *w, double t_end_s, char *why, size_t why_len)
{
    if (w->kind != WAVE_SIN)
        return 0; /* PULSE and PWL stay between values already checked */
    const double *q = w->p;
    double span = t_end_s - q[WS_TD];
    if (!(span > 0.0))
        return 0;
    if (!isfinite(2.0 * SS_PI * q[WS_FREQ] * span)) {
        snprintf(why, why_len, "sin: the phase 2 pi f t overflows before %g s (frequency %g Hz)",
                 t_end_s, q[WS_FREQ]);
        return -1;
    }
    /* a negative THETA makes the sine grow as exp(-THETA t) */
    if (q[WS_THETA] < 0.0 && q[WS_VA] != 0.0 &&
        !isfinite(fabs(q[WS_VO]) + fabs(q[WS_VA]) * exp(-q[WS_THETA] * span))) {
        snprintf(why, why_len, "sin: with theta %g 1/s the sine grows past any number before %g s",
                 q[WS_THETA], t_end_s);
        return -1;
    }
    return 0;
}

/* ---- evaluation ------------------------------------------------------------------------- */

static double edge_time(double given_s, double tstep_s)
{
    return given_s > 0.0 ? given_s : tstep_s;
}

static double pulse_value(const double *q, double t, double tstep_s)
{
    double v1 = q[WP_V1], v2 = q[WP_V2];
    if (t < q[WP_TD])
        return v1;
    double tr = edge_time(q[WP_TR], tstep_s), tf = edge_time(q[WP_TF], tstep_s);
    double tt = t - q[WP_TD];
    if (isfinite(q[WP_PER]))
        tt -= floor(tt / q[WP_PER]) * q[WP_PER];
    if (tt < tr)
        return v1 + (v2 - v1) * tt / tr;
    tt -= tr;
    if (tt < q[WP_PW])
        return v2;
    tt -= q[WP_PW];
    if (tt < tf)
        return v2 + (v1 - v2) * tt / tf;
    return v1;
}

static double pwl_value(const src_wave *w, double t)
{
    const double *v = w->pwl;
    int n = w->n_pwl;
    if (t <= v[0])
        return v[1];
    if (t >= v[2 * (n - 1)])
        return v[2 * (n - 1) + 1];
    int lo = 0, hi = n - 1; /* v[2 lo] <= t < v[2 hi] */
    while (hi - lo > 1) {
        int mid = (lo + hi) / 2;
        if (v[2 * mid] <= t)
            lo = mid;
        else
            hi = mid;
    }
    double ta = v[2 * lo], tb = v[2 * hi];
    return v[2 * lo + 1] + (v[2 * hi + 1] - v[2 * lo + 1]) * (t - ta) / (tb - ta);
}

double wave_value(const src_wave *w, double t_s, double tstep_s)
{
    double t = t_s > 0.0 ? t_s : 0.0;
    const double *q = w->p;
    switch (w->kind) {
    case WAVE_SIN: {
        /* before the delay the value holds where the sine will start (continuous at TD) */
        double ph = q[WS_PHASE] * SS_PI / 180.0;
        if (t < q[WS_TD])
            return q[WS_VO] + q[WS_VA] * sin(ph);
        double tt = t - q[WS_TD];
        return q[WS_VO] +
               q[WS_VA] * exp(-q[WS_THETA] * tt) * sin(2.0 * SS_PI * q[WS_FREQ] * tt + ph);
    }
    case WAVE_PULSE:
        return pulse_value(q, t, tstep_s);
    case WAVE_PWL:
        return pwl_value(w, t);
    }
    return q[0];
}

double wave_next_break(const src_wave *w, double t_s, double tstep_s)
{
    const double *q = w->p;
    switch (w->kind) {
    case WAVE_SIN:
        return q[WS_TD] > t_s ? q[WS_TD] : HUGE_VAL;
    case WAVE_PULSE: {
        double td = q[WP_TD];
        if (t_s < td)
            return td;
        double tr = edge_time(q[WP_TR], tstep_s), tf = edge_time(q[WP_TF], tstep_s);
        double off[4] = {0.0, tr, tr + q[WP_PW], tr + q[WP_PW] + tf};
        double per = q[WP_PER];
        double k = isfinite(per) ? floor((t_s - td) / per) : 0.0;
        for (int cyc = 0; cyc < 2; cyc++) {
            double base = td + (k + cyc) * (isfinite(per) ? per : 0.0);
            for (int j = 0; j < 4; j++) {
                double c = base + off[j];
                if (isfinite(c) && c > t_s)
                    return c;
            }
            if (!isfinite(per))
                break;
        }
        return HUGE_VAL;
    }
    case WAVE_PWL: {
        const double *v = w->pwl;
        int lo = 0, hi = w->n_pwl; /* first point with time > t_s */
        while (lo < hi) {
            int mid = (lo + hi) / 2;
            if (v[2 * mid] > t_s)
                hi = mid;
            else
                lo = mid + 1;
        }
        return lo < w->n_pwl ? v[2 * lo] : HUGE_VAL;
    }
    }
    return HUGE_VAL;
}

/* ---- time scales ------------------------------------------------------------------------- */

double wave_max_step(const src_wave *w, double t_s)
{
    const double *q = w->p;
    if (w->kind == WAVE_SIN && q[WS_FREQ] > 0.0 && t_s >= q[WS_TD])
        return 1.0 / (q[WS_FREQ] * WAVE_SIN_STEPS);
    return HUGE_VAL;
}

double wave_period(const src_wave *w)
{
    const double *q = w->p;
    if (w->kind == WAVE_SIN)
        return q[WS_FREQ] > 0.0 ? 1.0 / q[WS_FREQ] : HUGE_VAL;
    if (w->kind == WAVE_PULSE)
        return q[WP_PER]; /* HUGE_VAL for a single pulse */
    return HUGE_VAL;
}

double wave_corners_until(const src_wave *w, double t_s)
{
    const double *q = w->p;
    switch (w->kind) {
    case WAVE_SIN:
        return q[WS_TD] > 0.0 && q[WS_TD] <= t_s ? 1.0 : 0.0;
    case WAVE_PULSE:
        if (t_s < q[WP_TD])
            return 0.0;
        if (!isfinite(q[WP_PER]))
            return 5.0;
        return 1.0 + 4.0 * floor((t_s - q[WP_TD]) / q[WP_PER] + 1.0);
    case WAVE_PWL: {
        int lo = 0, hi = w->n_pwl; /* points with time <= t_s */
        while (lo < hi) {
            int mid = (lo + hi) / 2;
            if (w->pwl[2 * mid] <= t_s)
                lo = mid + 1;
            else
                hi = mid;
        }
        return (double)lo;
    }
    }
    return 0.0;
}
