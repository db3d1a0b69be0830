/* Parameters and values: .param definitions, scopes and name lookups, expression values on a
 * line, `name = value` lists and the --set overrides. The expression grammar is expr.c's. */
#include <ctype.h>
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/parser_internal.h"

typedef struct lookup_ctx {
    parser *ps;
    const scope *sc;
} lookup_ctx;

static int scope_lookup(void *vctx, const char *name, double *out, char *msg, size_t msg_len)
{
    lookup_ctx *lc = vctx;
    for (const scope *s = lc->sc; s; s = s->parent) {
        for (int i = 0; i < s->n_params; i++) {
            if (strcmp(s->pnames[i], name) == 0) {
                *out = s->pvals[i];
                return 0;
            }
        }
    }
    int idx;
    if (strmap_get(&lc->ps->param_map, name, &idx)) {
        if (eval_global_param(lc->ps, idx, msg, msg_len) != 0)
            return -1;
        *out = lc->ps->params[idx].value;
        return 0;
    }
    if (strcmp(name, "pi") == 0) {
        *out = SS_PI;
        return 0;
    }
    snprintf(msg, msg_len, "unknown parameter '%s'", name);
    return -1;
}

/* Evaluates an expression text in a scope: {braces} optional. */
int eval_text(parser *ps, const scope *sc, const char *text, double *out, char *msg,
              size_t msg_len)
{
    lookup_ctx lc = {ps, sc};
    return expr_eval_value(text, &ps->expr_depth, scope_lookup, &lc, out, msg, msg_len);
}

int eval_global_param(parser *ps, int idx, char *msg, size_t msg_len)
{
    param_def *pd = &ps->params[idx];
    if (pd->state == 2)
        return 0;
    if (pd->state == 1) {
        snprintf(msg, msg_len, "parameter '%s' is defined in terms of itself", pd->name);
        return -1;
    }
    pd->state = 1;
    char inner[512] = "";
    double v;
    int rc = eval_text(ps, NULL, pd->text, &v, inner, sizeof inner);
    if (rc != 0) {
        /* report at the .param line (or the --set that replaced it): the first error recorded
         * wins, so the element line that used the parameter does not take the blame */
        if (pd->from_set)
            err_set(ps->err, SS_ERR_INPUT, NULL, 0, "--set %s=%s: %s", pd->name, pd->text,
                    inner);
        else
            err_set(ps->err, SS_ERR_INPUT, pd->file, pd->line, ".param %s: %s", pd->name, inner);
        snprintf(msg, msg_len, "%s", inner);
        pd->state = 0;
        return -1;
    }
    pd->value = v;
    pd->state = 2;
    return 0;
}

/* A value token on a line: number with suffix, or {expr}. */
int line_value(parser *ps, const logline *ll, const scope *sc, const char *tok,
                      const char *owner, const char *what, double *out)
{
    if (tok[0] == '{') {
        char msg[512];
        if (eval_text(ps, sc, tok, out, msg, sizeof msg) != 0) {
            line_error(ps, ll, "%s%s%s: %s", owner ? owner : "", owner ? ": " : "", what, msg);
            return -1;
        }
        return tape_value(ps, ll, sc, tok, out);
    }
    if (value_parse(tok, out) != 0) {
        double v;
        size_t n = value_scan(tok, &v);
        /* a very long token is shortened so the reason survives in the message */
        int shown = strlen(tok) > 40 ? 40 : (int)strlen(tok);
        const char *more = strlen(tok) > 40 ? "..." : "";
        if (n > 0 && !isfinite(v))
            line_error(ps, ll, "%s%sbad %s '%.*s%s': out of range", owner ? owner : "",
                       owner ? ": " : "", what, shown, tok, more);
        else
            line_error(ps, ll, "%s%sbad %s '%.*s%s': expected a number with an optional SI "
                               "suffix or a {expression}",
                       owner ? owner : "", owner ? ": " : "", what, shown, tok, more);
        return -1;
    }
    return 0;
}

/* Joins tokens [from, to) back into one expression text (for `name = 2 * x` forms). */
const char *join_tokens(parser *ps, const logline *ll, int from, int to)
{
    size_t len = 0;
    for (int i = from; i < to; i++)
        len += strlen(ll->tok[i]) + 1;
    char *s = arena_alloc(&ps->ckt->arena, len + 1);
    if (!s)
        return NULL;
    for (int i = from; i < to; i++) {
        if (i > from)
            strcat(s, " ");
        strcat(s, ll->tok[i]);
    }
    return s;
}

/* Parses `name = value` pairs from token `from`; calls back with each name and value text. */
int parse_assignments(parser *ps, const logline *ll, int from, assign_fn fn, void *ctx)
{
    int i = from;
    while (i < ll->n_tok) {
        const char *name = ll->tok[i];
        if (i + 2 > ll->n_tok || strcmp(ll->tok[i + 1], "=") != 0 ||
            !(isalpha((unsigned char)name[0]) || name[0] == '_'))
            return line_error(ps, ll, "expected name=value, got '%s'", name), -1;
        int j = i + 2;
        /* the value runs until the next `name =` or the end of the line */
        while (j < ll->n_tok && !(j + 1 < ll->n_tok && strcmp(ll->tok[j + 1], "=") == 0))
            j++;
        if (j == i + 2)
            return line_error(ps, ll, "missing value for '%s'", name), -1;
        const char *text = (j == i + 3) ? ll->tok[i + 2] : join_tokens(ps, ll, i + 2, j);
        if (!text)
            return nomem(ps), -1;
        if (fn(ps, ll, ctx, name, text) != 0)
            return -1;
        i = j;
    }
    return 0;
}

static const char *override_for(parser *ps, const char *name)
{
    for (int i = 0; i < ps->n_overrides; i++) {
        if (strcasecmp_ascii_eq(ps->overrides[i].name, name)) {
            ps->override_used[i] = 1;
            return ps->overrides[i].value;
        }
    }
    return NULL;
}

int add_global_param(parser *ps, const logline *ll, void *ctx, const char *name,
                            const char *text)
{
    (void)ctx;
    int idx;
    if (strmap_get(&ps->param_map, name, &idx))
        return line_error(ps, ll, "parameter '%s' defined twice (first at %s:%d)", name,
                          ps->params[idx].file, ps->params[idx].line),
               -1;
    if (ps->n_params == ps->cap_params) {
        int ncap = ps->cap_params ? ps->cap_params * 2 : 32;
        param_def *np = ss_realloc(ps->params, (size_t)ncap * sizeof *np);
        if (!np)
            return nomem(ps), -1;
        ps->params = np;
        ps->cap_params = ncap;
    }
    param_def *pd = &ps->params[ps->n_params];
    memset(pd, 0, sizeof *pd);
    pd->name = name;
    const char *ov = override_for(ps, name);
    pd->text = ov ? ov : text;
    pd->from_set = ov != NULL;
    pd->file = ll->file;
    pd->line = ll->line;
    if (strmap_put(&ps->param_map, name, ps->n_params) != 0)
        return nomem(ps), -1;
    ps->n_params++;
    return 0;
}

/* A --set applied after building: replayed last, as it was applied last. */
static int tape_late(parser *ps, const char *vtext, int target, int index, int field)
{
    const char *text = arena_strdup(&ps->ckt->arena, vtext);
    if (!text)
        return nomem(ps), -1;
    tape_entry te = {text, ps->ckt->file, 0, -1, (unsigned char)target, index, field, 0.0};
    return tape_record(ps, &te);
}

ss_status apply_late_overrides(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    for (int i = 0; i < ps->n_overrides; i++) {
        if (ps->override_used[i])
            continue;
        const ss_override *ov = &ps->overrides[i];
        char name[512];
        char vtext[512];
        /* a name or value that does not fit is refused, never cut to something else */
        if (!name_lower_copy(ov->name, name, sizeof name) ||
            !name_lower_copy(ov->value, vtext, sizeof vtext))
            return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                           "--set: name or value longer than %zu characters", sizeof name - 1);
        double v;
        char msg[512];
        if (eval_text(ps, NULL, vtext, &v, msg, sizeof msg) != 0)
            return err_set(ps->err, SS_ERR_INPUT, NULL, 0, "--set %s=%s: %s", ov->name,
                           ov->value, msg);
        int e = circuit_find_elem(ckt, name);
        if (e >= 0) {
            element *el = &ckt->elem[e];
            if (!el->ops->value_name)
                return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                               "--set %s: a %s has no single value to set (set its model's "
                               "parameters as MODEL.PARAM)",
                               ov->name, el->ops->kind_name);
            if (el->ops->value_range == VALUE_POSITIVE && !(v > 0.0))
                return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                               "--set %s: %s must be positive, got %g", ov->name,
                               el->ops->value_name, v);
            if (el->ops->value_range == VALUE_NONNEG && v < 0.0)
                return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                               "--set %s: %s must not be negative, got %g", ov->name,
                               el->ops->value_name, v);
            el->value = v;
            el->value_si_exp = (signed char)value_si_exp(vtext);
            if (tape_late(ps, vtext, TAPE_ELEM, e, (int)offsetof(element, value)) != 0)
                return SS_ERR_NOMEM;
            continue;
        }
        char *dot = strrchr(name, '.');
        if (dot) {
            *dot = '\0';
            int mi;
            if (strmap_get(&ckt->model_map, name, &mi)) {
                model *m = ckt->models[mi];
                int pi = model_param_index(m->ops, dot + 1);
                if (pi < 0)
                    return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                                   "--set %s: model '%s' has no parameter '%s'", ov->name, name,
                                   dot + 1);
                m->p[pi] = v;
                m->given[pi] = 1;
                if (tape_late(ps, vtext, TAPE_MODEL, mi, pi) != 0)
                    return SS_ERR_NOMEM;
                logline here = {m->file, m->line, NULL, 0};
                if (check_model(ps, &here, m) != 0)
                    return SS_ERR_INPUT;
                continue;
            }
        }
        return err_set(ps->err, SS_ERR_INPUT, NULL, 0,
                       "--set %s: no parameter, element or model parameter of that name",
                       ov->name);
    }
    return SS_OK;
}

/* A --set NAME given twice (in any case) is refused: one of its values would be dropped. */
ss_status check_overrides_once(parser *ps)
{
    if (ps->n_overrides < 2)
        return SS_OK;
    ss_strmap seen = {0};
    ss_status st = SS_OK;
    for (int i = 0; i < ps->n_overrides && st == SS_OK; i++) {
        const ss_override *ov = &ps->overrides[i];
        char *key = arena_strdup(&ps->scratch, ov->name);
        int j;
        if (!key)
            st = nomem(ps);
        for (char *c = key; c && *c; c++)
            *c = (char)tolower((unsigned char)*c);
        if (st == SS_OK && strmap_get(&seen, key, &j))
            st = err_set(ps->err, SS_ERR_INPUT, NULL, 0, "--set %s: set twice (%s=%s, then %s=%s)",
                         ov->name, ps->overrides[j].name, ps->overrides[j].value, ov->name,
                         ov->value);
        else if (st == SS_OK && strmap_put(&seen, key, i) != 0)
            st = nomem(ps);
    }
    strmap_clear(&seen);
    return st;
}
