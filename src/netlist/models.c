/* .model cards: the type, the parameters (published names, given once each) and the physical
 * ranges the equations need. Parameter tables and defaults are each device's (src/devices). */
#include <ctype.h>
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
    int idx = model_param_index(m->type, name);
    if (idx < 0)
        return line_error(ps, ll, "model '%s': unknown parameter '%s' for a %s model", m->name,
                          name, m->type == MODEL_D ? "diode" : "BJT"),
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
    if (line_value(ps, ll, NULL, text, m->name, what, &v) != 0)
        return -1;
    m->p[idx] = v;
    m->given[idx] = 1;
    return 0;
}

/* Checks the physical ranges the equations need (divisions, logarithms). */
int check_model(parser *ps, const logline *ll, const model *m)
{
    const dev_ops *ops = device_for_model_type(m->type);
    for (int i = 0; i < ops->n_model_params; i++) {
        const char *n = ops->model_params[i].name;
        double v = m->p[i];
        int positive = strcmp(n, "is") == 0 || strcmp(n, "n") == 0 || strcmp(n, "nf") == 0 ||
                       strcmp(n, "nr") == 0 || strcmp(n, "ne") == 0 || strcmp(n, "nc") == 0 ||
                       strcmp(n, "bf") == 0 || strcmp(n, "br") == 0 || strcmp(n, "vje") == 0 ||
                       strcmp(n, "vjc") == 0 || strcmp(n, "vj") == 0;
        int nonneg = strcmp(n, "rb") == 0 || strcmp(n, "re") == 0 || strcmp(n, "rc") == 0 ||
                     strcmp(n, "rs") == 0 || strcmp(n, "ise") == 0 || strcmp(n, "isc") == 0 ||
                     strcmp(n, "cje") == 0 || strcmp(n, "cjc") == 0 || strcmp(n, "cjo") == 0 ||
                     strcmp(n, "tf") == 0 || strcmp(n, "tr") == 0 || strcmp(n, "tt") == 0 ||
                     strcmp(n, "vaf") == 0 || strcmp(n, "var") == 0 || strcmp(n, "ikf") == 0 ||
                     strcmp(n, "ikr") == 0;
        if (positive && !(v > 0.0))
            return line_error(ps, ll, "model '%s': %s must be positive, got %g", m->name, n, v),
                   -1;
        if (nonneg && v < 0.0)
            return line_error(ps, ll, "model '%s': %s must not be negative, got %g", m->name, n,
                              v),
                   -1;
        if (strcmp(n, "tnom") == 0 && !(v > -SS_ZERO_C_IN_K && v <= 1000.0))
            return line_error(ps, ll, "model '%s': tnom %g C is outside -273.15 .. 1000 C",
                              m->name, v),
                   -1;
        if ((strcmp(n, "fc") == 0) && !(v >= 0.0 && v < 1.0))
            return line_error(ps, ll, "model '%s': fc must be in [0, 1), got %g", m->name, v), -1;
    }
    return 0;
}

int define_model(parser *ps, const logline *ll)
{
    /* .model name type [(] p=v ... [)]  -- parentheses were taken apart below */
    if (ll->n_tok < 3)
        return line_error(ps, ll, ".model needs a name and a type (npn, pnp or d)"), -1;
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
    enum model_type t;
    if (strcmp(type_tok, "npn") == 0)
        t = MODEL_NPN;
    else if (strcmp(type_tok, "pnp") == 0)
        t = MODEL_PNP;
    else if (strcmp(type_tok, "d") == 0)
        t = MODEL_D;
    else
        return line_error(ps, ll, "model '%s': unknown type '%s' (expected npn, pnp or d)", name,
                          type_tok),
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
    m->type = t;
    m->file = ll->file;
    m->line = ll->line;
    const dev_ops *ops = device_for_model_type(t);
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
