/* .model cards: the type, the parameters (published names, given once each) and the physical
 * ranges the equations need. Parameter tables and defaults are each device's (src/devices). */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/parser_internal.h"

/* ---- fields that are not model parameters ------------------------------------------------ */

/* Fields that published model files add to a card beside the parameters: ratings and the
 * maker's notes, read by people, not by any model equation (common practice, from memory of
 * such files). Only these are ignored under `.options model_extras=warn` (docs/netlist.md); no
 * name here is a parameter of any kind (tests/unit/test_device_tables.c). */
static const char *const MODEL_EXTRA_FIELDS[] = {
    "vceo",  /* collector-emitter breakdown rating, base open */
    "vcbo",  /* collector-base breakdown rating */
    "vebo",  /* emitter-base breakdown rating */
    "icrating", /* collector current rating */
    "iave",  /* a diode's average forward current rating */
    "vpk",   /* a diode's peak reverse voltage rating */
    "vds",   /* a FET's drain-source voltage rating */
    "ron",   /* a switching FET's on resistance as rated */
    "qg",    /* a FET's gate charge as rated */
    "mfg",   /* the maker */
    "type",  /* the maker's part class ("silicon", "zener", "switching") */
};
#define N_MODEL_EXTRA_FIELDS ((int)(sizeof MODEL_EXTRA_FIELDS / sizeof MODEL_EXTRA_FIELDS[0]))

const char *model_extra_field(int k)
{
    return k >= 0 && k < N_MODEL_EXTRA_FIELDS ? MODEL_EXTRA_FIELDS[k] : NULL;
}

static int is_model_extra_field(const char *name)
{
    for (int k = 0; k < N_MODEL_EXTRA_FIELDS; k++)
        if (strcmp(MODEL_EXTRA_FIELDS[k], name) == 0)
            return 1;
    return 0;
}

/* Edits (insert, delete or replace a character, or swap two neighbours) from a to b, counted
 * up to 9 (names longer than 31 characters count as 9 away from everything). */
int name_distance(const char *a, const char *b)
{
    enum { N = 32 };
    size_t la = strlen(a), lb = strlen(b);
    if (la >= N || lb >= N)
        return strcmp(a, b) == 0 ? 0 : 9;
    int d[N][N];
    for (size_t i = 0; i <= la; i++)
        d[i][0] = (int)i;
    for (size_t j = 0; j <= lb; j++)
        d[0][j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        for (size_t j = 1; j <= lb; j++) {
            int best = d[i - 1][j - 1] + (a[i - 1] != b[j - 1]);
            if (d[i - 1][j] + 1 < best)
                best = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < best)
                best = d[i][j - 1] + 1;
            if (i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] &&
                d[i - 2][j - 2] + 1 < best)
                best = d[i - 2][j - 2] + 1;
            d[i][j] = best;
        }
    }
    return d[la][lb] > 9 ? 9 : d[la][lb];
}

/* The parameter of ops nearest to name when close: at most 1 edit away for a name of up to 4
 * characters, 2 for a longer one; the first in table order on a tie; NULL when none is. */
static const char *nearest_param(const dev_ops *ops, const char *name)
{
    const char *best = NULL;
    int best_d = strlen(name) <= 4 ? 2 : 3;
    for (int i = 0; i < ops->n_model_params; i++) {
        int d = name_distance(name, ops->model_params[i].name);
        if (d < best_d) {
            best_d = d;
            best = ops->model_params[i].name;
        }
    }
    return best;
}

/* `.options model_extras=error|warn`, read before the model cards (pass 1): 0 ok, -1 with the
 * error set. set_option (pass 2) takes the option as known and checks it is given once. */
int model_extras_prescan(parser *ps)
{
    for (int i = 0; i < ps->n_lines; i++) {
        const logline *ll = &ps->lines[i];
        if (!is_directive(ll, ".options") && !is_directive(ll, ".option"))
            continue;
        for (int k = 1; k + 1 < ll->n_tok; k++) {
            if (strcmp(ll->tok[k], "model_extras") != 0 || strcmp(ll->tok[k + 1], "=") != 0)
                continue;
            const char *v = k + 2 < ll->n_tok ? ll->tok[k + 2] : "";
            if (strcmp(v, "warn") == 0)
                ps->model_extras_warn = 1;
            else if (strcmp(v, "error") != 0)
                return line_error(ps, ll, ".options: model_extras must be error or warn, got "
                                          "'%.40s'",
                                  v),
                       -1;
        }
    }
    return 0;
}

#define MODEL_MAX_UNKNOWN 32

typedef struct model_ctx {
    model *m;
    const char *text[MODEL_MAX_PARAMS]; /* each parameter's value as written on the card */
    /* the names on the card that are none of the kind's parameters, in order (at most
     * MODEL_MAX_UNKNOWN kept; n_unknown counts them all) */
    const char *unknown[MODEL_MAX_UNKNOWN];
    int n_unknown;
} model_ctx;

/* Appends ", " (after the first) and the text to buf[len]. */
static void list_add(char *buf, size_t len, int first, const char *fmt, const char *a,
                     const char *b)
{
    size_t used = strlen(buf);
    if (used + 1 >= len)
        return;
    if (!first) {
        snprintf(buf + used, len - used, ", ");
        used = strlen(buf);
    }
    snprintf(buf + used, len - used, fmt, a, b);
}

/* The card's names that are no parameter of its kind: an error naming them all, or (each a
 * known extra field, and .options model_extras=warn) one warning for the card. 0 ok, -1 with
 * the error set. */
static int judge_unknown(parser *ps, const logline *ll, const model_ctx *mc)
{
    const model *m = mc->m;
    int n = mc->n_unknown;
    if (n == 0)
        return 0;
    if (mc->n_unknown > MODEL_MAX_UNKNOWN) /* not all of them judged: none is ignored */
        return line_error(ps, ll, "model '%s': %d fields that are not %s model parameters "
                                  "(more than %d)",
                          m->name, mc->n_unknown, m->ops->model_kind, MODEL_MAX_UNKNOWN),
               -1;
    char bad[768] = "", extra[512] = "";
    int n_bad = 0, n_extra = 0;
    for (int i = 0; i < n; i++) {
        const char *name = mc->unknown[i];
        if (is_model_extra_field(name)) {
            list_add(extra, sizeof extra, n_extra++ == 0, "%s%s", name, "");
            continue;
        }
        const char *near = nearest_param(m->ops, name);
        if (near)
            list_add(bad, sizeof bad, n_bad++ == 0, "'%s' (did you mean %s?)", name, near);
        else
            list_add(bad, sizeof bad, n_bad++ == 0, "'%s'%s", name, "");
    }
    const char *kind = m->ops->model_kind;
    if (n_bad > 0 && (n_extra == 0 || ps->model_extras_warn))
        return line_error(ps, ll, "model '%s': unknown parameter%s %s for a %s model", m->name,
                          n_bad > 1 ? "s" : "", bad, kind),
               -1;
    if (n_bad > 0)
        return line_error(ps, ll,
                          "model '%s': unknown parameter%s %s for a %s model; not parameters "
                          "either: %s (ratings or maker's notes: .options model_extras=warn "
                          "ignores such fields with a warning)",
                          m->name, n_bad > 1 ? "s" : "", bad, kind, extra),
               -1;
    int plural = n_extra > 1;
    if (!ps->model_extras_warn)
        return line_error(ps, ll,
                          "model '%s': %s %s %s model parameter%s (ratings or maker's "
                          "notes? .options model_extras=warn ignores such fields with a "
                          "warning)",
                          m->name, extra, plural ? "are not" : "is not a", kind,
                          plural ? "s" : ""),
               -1;
    char msg[1024];
    snprintf(msg, sizeof msg,
             "%s:%d: model '%s': ignored %s: not %s%s model parameter%s (.options "
             "model_extras=warn) [model_extras]",
             ll->file, ll->line, m->name, extra, plural ? "" : "a ", kind,
             plural ? "s" : "");
    if (circuit_warn(ps->ckt, "model_extras", m->name, msg) != 0)
        return nomem(ps), -1;
    return 0;
}

static int set_model_param(parser *ps, const logline *ll, void *vctx, const char *name,
                           const char *text)
{
    model_ctx *mc = vctx;
    model *m = mc->m;
    int idx = model_param_index(m->ops, name);
    if (idx < 0) { /* judged once the whole card is read (judge_unknown) */
        for (int i = 0; i < mc->n_unknown && i < MODEL_MAX_UNKNOWN; i++)
            if (strcmp(mc->unknown[i], name) == 0)
                return 0;
        if (mc->n_unknown < MODEL_MAX_UNKNOWN)
            mc->unknown[mc->n_unknown] = name;
        mc->n_unknown++;
        return 0;
    }
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
        else if (pd->min == pd->max) /* a switch with one supported setting: LEVEL=1 */
            snprintf(msg, msg_len, "model '%s': %s %g is not supported (only %s=%g is)", m->name,
                     n, v, n, pd->min);
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
    if (judge_unknown(ps, ll, &mc) != 0)
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
