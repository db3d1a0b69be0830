/* {expression} evaluation for .param and values: + - * / ^, unary minus, parentheses,
 * functions and parameter names. Name resolution is left to the caller's lookup function. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/netlist.h"

typedef struct expr_parser {
    const char *s;
    size_t pos;
    int *depth; /* nesting so far, shared with the evaluations of parameters it refers to */
    expr_lookup_fn lookup;
    void *ctx;
    char *msg;
    size_t msg_len;
    int failed;
} expr_parser;

static double parse_sum(expr_parser *p);

static double fail(expr_parser *p, const char *fmt, const char *arg)
{
    if (!p->failed) {
        p->failed = 1;
        snprintf(p->msg, p->msg_len, fmt, arg);
    }
    return 0.0;
}

static void skip_ws(expr_parser *p)
{
    while (isspace((unsigned char)p->s[p->pos]))
        p->pos++;
}

static int accept(expr_parser *p, char c)
{
    skip_ws(p);
    if (p->s[p->pos] == c) {
        p->pos++;
        return 1;
    }
    return 0;
}

typedef struct expr_func {
    const char *name;
    int n_args;
    double (*f1)(double);
    double (*f2)(double, double);
} expr_func;

static double fn_min(double a, double b) { return a < b ? a : b; }
static double fn_max(double a, double b) { return a > b ? a : b; }

static const expr_func FUNCS[] = {
    {"sqrt", 1, sqrt, NULL}, {"exp", 1, exp, NULL},   {"ln", 1, log, NULL},
    {"log", 1, log, NULL},   {"log10", 1, log10, NULL}, {"abs", 1, fabs, NULL},
    {"min", 2, NULL, fn_min}, {"max", 2, NULL, fn_max}, {"pow", 2, NULL, pow},
};

static double call_func(expr_parser *p, const char *name)
{
    const expr_func *fn = NULL;
    for (size_t i = 0; i < sizeof FUNCS / sizeof FUNCS[0]; i++)
        if (strcmp(FUNCS[i].name, name) == 0)
            fn = &FUNCS[i];
    if (!fn)
        return fail(p, "unknown function '%s'", name);
    double a = parse_sum(p), b = 0.0;
    if (fn->n_args == 2) {
        if (!accept(p, ','))
            return fail(p, "function '%s' takes two arguments", name);
        b = parse_sum(p);
    }
    if (!accept(p, ')'))
        return fail(p, "missing ')' after the arguments of '%s'", name);
    return fn->n_args == 1 ? fn->f1(a) : fn->f2(a, b);
}

static double parse_primary(expr_parser *p)
{
    if (p->failed)
        return 0.0;
    if (++*p->depth > EXPR_MAX_DEPTH)
        return fail(p, "expression nested too deeply (limit %s)", EXPR_MAX_DEPTH_TEXT);
    skip_ws(p);
    const char *at = p->s + p->pos;
    double v = 0.0;
    if (*at == '(') {
        p->pos++;
        v = parse_sum(p);
        if (!accept(p, ')'))
            fail(p, "missing ')'%s", "");
    } else if (isdigit((unsigned char)*at) || (*at == '.' && isdigit((unsigned char)at[1]))) {
        size_t n = value_scan(at, &v);
        if (n == 0)
            fail(p, "bad number at '%s'", at);
        p->pos += n;
    } else if (isalpha((unsigned char)*at) || *at == '_') {
        char name[EXPR_MAX_NAME];
        size_t n = 0;
        while (isalnum((unsigned char)at[n]) || at[n] == '_' || at[n] == '.') {
            if (n + 1 >= sizeof name)
                return fail(p, "name too long in expression at '%s'", at);
            name[n] = (char)tolower((unsigned char)at[n]);
            n++;
        }
        name[n] = '\0';
        p->pos += n;
        if (accept(p, '(')) {
            v = call_func(p, name);
        } else {
            char lmsg[256] = "";
            if (p->lookup(p->ctx, name, &v, lmsg, sizeof lmsg) != 0) {
                if (!p->failed) {
                    p->failed = 1;
                    snprintf(p->msg, p->msg_len, "%s", lmsg[0] ? lmsg : "unknown parameter");
                }
            }
        }
    } else if (*at == '\0') {
        fail(p, "expression ends too early%s", "");
    } else {
        fail(p, "unexpected character '%.1s' in expression", at);
    }
    (*p->depth)--;
    return v;
}

static double parse_unary(expr_parser *p);

/* power is right-associative and binds tighter than unary minus: 2^3^2 = 2^9, -2^2 = -4,
 * 2^-1 = 0.5 (the usual mathematical reading) */
static double parse_power(expr_parser *p)
{
    double base = parse_primary(p);
    if (accept(p, '^')) {
        /* each '^' nests (right-associative): counted, so a long chain cannot exhaust the
         * stack */
        if (++*p->depth > EXPR_MAX_DEPTH)
            return fail(p, "expression nested too deeply (limit %s)", EXPR_MAX_DEPTH_TEXT);
        double e = parse_unary(p);
        (*p->depth)--;
        return pow(base, e);
    }
    return base;
}

static double parse_unary(expr_parser *p)
{
    skip_ws(p);
    char c = p->s[p->pos];
    if (c == '-' || c == '+') {
        if (++*p->depth > EXPR_MAX_DEPTH)
            return fail(p, "expression nested too deeply (limit %s)", EXPR_MAX_DEPTH_TEXT);
        p->pos++;
        double v = parse_unary(p);
        (*p->depth)--;
        return c == '-' ? -v : v;
    }
    return parse_power(p);
}

static double parse_product(expr_parser *p)
{
    double v = parse_unary(p);
    for (;;) {
        if (p->failed)
            return 0.0;
        if (accept(p, '*')) {
            v *= parse_unary(p);
        } else if (accept(p, '/')) {
            double d = parse_unary(p);
            if (d == 0.0 && !p->failed)
                return fail(p, "division by zero%s", "");
            v /= d;
        } else {
            return v;
        }
    }
}

static double parse_sum(expr_parser *p)
{
    double v = parse_product(p);
    for (;;) {
        if (p->failed)
            return 0.0;
        if (accept(p, '+'))
            v += parse_product(p);
        else if (accept(p, '-'))
            v -= parse_product(p);
        else
            return v;
    }
}

int expr_eval_nested(const char *text, int *depth, expr_lookup_fn lookup, void *ctx,
                     double *out, char *msg, size_t msg_len)
{
    int depth_in = *depth;
    expr_parser p = {text, 0, depth, lookup, ctx, msg, msg_len, 0};
    double v = parse_sum(&p);
    *depth = depth_in; /* an early failure returns without unwinding the count */
    skip_ws(&p);
    if (!p.failed && p.s[p.pos] != '\0')
        fail(&p, "unexpected '%s' in expression", p.s + p.pos);
    if (!p.failed && !isfinite(v))
        fail(&p, "expression value is not finite%s", "");
    if (p.failed)
        return -1;
    *out = v;
    return 0;
}

int expr_eval(const char *text, expr_lookup_fn lookup, void *ctx, double *out, char *msg,
              size_t msg_len)
{
    int depth = 0;
    return expr_eval_nested(text, &depth, lookup, ctx, out, msg, msg_len);
}

int expr_eval_value(const char *text, int *depth, expr_lookup_fn lookup, void *ctx, double *out,
                    char *msg, size_t msg_len)
{
    size_t n = strlen(text);
    char buf[4096];
    const char *t = text;
    if (n >= 2 && text[0] == '{' && text[n - 1] == '}') {
        if (n - 2 >= sizeof buf) {
            snprintf(msg, msg_len, "expression too long");
            return -1;
        }
        memcpy(buf, text + 1, n - 2);
        buf[n - 2] = '\0';
        t = buf;
    }
    return expr_eval_nested(t, depth, lookup, ctx, out, msg, msg_len);
}
