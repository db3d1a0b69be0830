/* .model cards: the type, the parameters (published names, given once each) and the physical
 * ranges the equations need. Parameter tables and defaults are each device's (src/devices). */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/parser_internal.h"

typedef struct model_ctx {
    model *m;
    const char *text[MODEL_MAX_PARAMS]; /* each parameter's value as written on the card */
} model_ctx;

static int set_model_param(parser *ps, const logline *ll, void *vctx, const char *name,
                           const char *text)
{
    model_ctx *mc = vctx;
    model *m = mc->m;
    int idx = model_param_index(m->ops, name);
    if (idx < 0)
        return line_error(ps, ll, "model '%s': unknown parameter '%s' for a %s model", m->name,
                          name, m->ops->model_kind),
               -1;
    /* one card, one value per parameter: a second one (often on a continuation line) is a
     * mistake either way it is read */
    if (mc->text[idx])
        return line_error(ps, ll, "model '%s': parameter %s given twice (%s=%.40s, then %s=%.40s)",
                          m->name, name, name, mc->text[idx], name, text),
               -1;
    mc->text[idx] = text;
    double v;
    char what[64];
    snprintf(what, sizeof what, "parameter %s", name);
    ps->tape_model = ps->ckt->n_models; /* the index the model gets once read */
    ps->tape_param = idx;
    int rc = line_value(ps, ll, NULL, text, m->name, what, &v);
    ps->tape_model = -1;
    if (rc != 0)
        return -1;
    m->p[idx] = v;
    m->given[idx] = 1;
    return 0;
}

/* Checks the physical ranges the equations need (divisions, logarithms), as the kind's
 * parameter table states them. */
int model_range_check(const model *m, char *msg, size_t msg_len)
{
    const dev_ops *ops = m->ops;
    for (int i = 0; i < ops->n_model_params; i++) {
        const dev_model_param *pd = &ops->model_params[i];
        const char *n = pd->name;
        double v = m->p[i];
        int lo_ok = pd->flags & DMP_MIN_OPEN ? v > pd->min : v >= pd->min;
        int hi_ok = pd->flags & DMP_MAX_OPEN ? v < pd->max : v <= pd->max;
        if (isinf(v) && v > 0 && pd->flags & DMP_ZERO_INF) /* the default of an absent term */
            lo_ok = hi_ok = 1;
        if (lo_ok && hi_ok)
            continue;
        if (pd->flags & DMP_CELSIUS)
            snprintf(msg, msg_len, "model '%s': %s %g C is outside %g .. %g C", m->name, n, v,
                     pd->min, pd->max);
        else if (!isfinite(pd->max) && pd->min == 0.0 && pd->flags & DMP_MIN_OPEN)
            snprintf(msg, msg_len, "model '%s': %s must be positive, got %g", m->name, n, v);
        else if (!isfinite(pd->max) && pd->min == 0.0)
            snprintf(msg, msg_len, "model '%s': %s must not be negative, got %g", m->name, n, v);
        else
            snprintf(msg, msg_len, "model '%s': %s must be in %c%g, %g%c, got %g", m->name, n,
                     pd->flags & DMP_MIN_OPEN ? '(' : '[', pd->min, pd->max,
                     pd->flags & DMP_MAX_OPEN ? ')' : ']', v);
        return -1;
    }
    return 0;
}

int check_model(parser *ps, const logline *ll, const model *m)
{
    char msg[512];
    if (model_range_check(m, msg, sizeof msg) == 0)
        return 0;
    line_error(ps, ll, "%s", msg);
    return -1;
}

int define_model(parser *ps, const logline *ll)
{
    /* .model name type [(] p=v ... [)]  -- parentheses were taken apart below */
    char all_types[256];
    model_types_text(NULL, all_types, sizeof all_types);
    if (ll->n_tok < 3)
        return line_error(ps, ll, ".model needs a name and a type (%s)", all_types), -1;
    const char *name = ll->tok[1];
    if (!name_start_ok(name))
        return line_error(ps, ll, ".model '%.40s': not a valid model name: %s", name,
                          NAME_START_RULE),
               -1;
    char type_tok[64];
    snprintf(type_tok, sizeof type_tok, "%s", ll->tok[2]);
    char *paren = strchr(type_tok, '(');
    if (paren)
        *paren = '\0';
    int t;
    const dev_ops *ops = device_for_model_type(type_tok, &t);
    if (!ops)
        return line_error(ps, ll, "model '%s': unknown type '%s' (expected %s)", name, type_tok,
                          all_types),
               -1;
    int first;
    if (strmap_get(&ps->ckt->model_map, name, &first))
        return line_error(ps, ll, "model '%s' defined twice (first at %s:%d)", name,
                          ps->ckt->models[first]->file, ps->ckt->models[first]->line),
               -1;
    model *m = arena_alloc(&ps->ckt->arena, sizeof *m);
    if (!m)
        return nomem(ps), -1;
    m->name = name;
    m->ops = ops;
    m->type = t;
    m->file = ll->file;
    m->line = ll->line;
    for (int i = 0; i < ops->n_model_params; i++)
        m->p[i] = ops->model_params[i].def;

    /* Re-split the parameter text with parentheses as separators. */
    logline sub = *ll;
    const char *rest = join_tokens(ps, ll, 2, ll->n_tok);
    if (!rest)
        return nomem(ps), -1;
    char *copy = arena_strdup(&ps->ckt->arena, rest);
    if (!copy)
        return nomem(ps), -1;
    char *s = copy; /* skip the type word */
    while (*s && !isspace((unsigned char)*s) && *s != '(')
        s++;
    int depth = 0;
    for (char *q = s; *q; q++) {
        if (*q == '{')
            depth++;
        else if (*q == '}')
            depth--;
        else if (depth == 0 && (*q == '(' || *q == ')'))
            *q = ' ';
    }
    if (tokenize(ps, &sub, s) != SS_OK)
        return -1;
    model_ctx mc;
    memset(&mc, 0, sizeof mc);
    mc.m = m;
    if (parse_assignments(ps, &sub, 0, set_model_param, &mc) != 0)
        return -1;
    if (check_model(ps, ll, m) != 0)
        return -1;
    ss_circuit *ckt = ps->ckt;
    if (ckt->n_models == ckt->cap_models) {
        int ncap = ckt->cap_models ? ckt->cap_models * 2 : 16;
        model **nm = ss_realloc(ckt->models, (size_t)ncap * sizeof *nm);
        if (!nm)
            return nomem(ps), -1;
        ckt->models = nm;
        ckt->cap_models = ncap;
    }
    if (strmap_put(&ckt->model_map, name, ckt->n_models) != 0)
        return nomem(ps), -1;
    ckt->models[ckt->n_models++] = m;
    return 0;
}
