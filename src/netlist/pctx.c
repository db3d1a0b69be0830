/* The device-facing parse API (pctx_*): an element line's tokens, values, models and nodes,
 * node and element names inside subcircuit instances. Each device's syntax is its own parse. */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "devices/device.h"
#include "netlist/parser_internal.h"

const char *pctx_tok(const pctx *p, int i)
{
    return (i >= 0 && i < p->ll->n_tok) ? p->ll->tok[i] : NULL;
}

int pctx_ntok(const pctx *p) { return p->ll->n_tok; }

int pctx_error(pctx *p, const char *fmt, ...)
{
    char msg[640];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    line_error(p->ps, p->ll, "%s: %s", p->elem_name, msg);
    return -1;
}

const char *pctx_strdup(pctx *p, const char *s)
{
    const char *d = arena_strdup(&p->ps->ckt->arena, s);
    if (!d)
        nomem(p->ps);
    return d;
}

void *pctx_alloc(pctx *p, size_t size)
{
    void *d = arena_alloc(&p->ps->ckt->arena, size);
    if (!d)
        nomem(p->ps);
    return d;
}

/* Writes prefix + tok + suffix into buf[SCOPED_NAME_BYTES]; 0 ok, -1 with the error set
 * (naming `who` at line ll) when the name does not fit. */
int scoped_name(parser *ps, const logline *ll, const char *who, char *buf,
                       const char *prefix, const char *tok, const char *suffix)
{
    int n = snprintf(buf, SCOPED_NAME_BYTES, "%s%s%s", prefix, tok, suffix);
    if (n >= 0 && n < SCOPED_NAME_BYTES)
        return 0;
    if (!prefix[0])
        err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                "%.60s...: the name is longer than %d characters", tok, SCOPED_NAME_BYTES - 1);
    else
        err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                "%.60s: the name of '%.60s' inside the subcircuit instance '%.60s...' is longer "
                "than %d characters",
                who, tok, prefix, SCOPED_NAME_BYTES - 1);
    return -1;
}

/* Records the prefix length a new node was named with. 0 ok, -1 out of memory (set). */
int note_node_prefix(parser *ps, int idx, int prefix_len)
{
    if ((size_t)idx >= ps->cap_node_plen) {
        size_t ncap = ps->cap_node_plen ? ps->cap_node_plen : 256;
        while (ncap <= (size_t)idx)
            ncap *= 2;
        unsigned short *np = ss_realloc(ps->node_plen, ncap * sizeof *np);
        if (!np)
            return nomem(ps), -1;
        ps->node_plen = np;
        ps->cap_node_plen = ncap;
    }
    ps->node_plen[idx] = (unsigned short)prefix_len;
    return 0;
}

/* "the top-level node 'x1.mid'" or "node 'mid' of instance x1 (F:L)" for the node named full
 * with a prefix of prefix_len characters; with_where adds, for a top-level node, an element
 * that uses it. */
static void describe_node(parser *ps, int idx, const char *full, int prefix_len, int with_where,
                          char *buf, size_t len)
{
    if (prefix_len == 0) {
        int n = snprintf(buf, len, "the top-level node '%s'", full);
        const element *on = NULL;
        for (int i = 0; with_where && i < ps->ckt->n_elem && !on; i++)
            for (int k = 0; k < ps->ckt->elem[i].n_node; k++)
                if (ps->ckt->elem[i].node[k] == idx)
                    on = &ps->ckt->elem[i];
        if (on && n >= 0 && (size_t)n < len)
            snprintf(buf + n, len - (size_t)n, " (%s:%d, %s)", on->file, on->line, on->name);
        return;
    }
    char prefix[SCOPED_NAME_BYTES];
    snprintf(prefix, sizeof prefix, "%.*s", prefix_len, full);
    int at;
    if (strmap_get(&ps->inst_map, prefix, &at))
        snprintf(buf, len, "node '%s' of instance %.*s (%s:%d)", full + prefix_len,
                 prefix_len - 1, full, ps->lines[at].file, ps->lines[at].line);
    else
        snprintf(buf, len, "node '%s' of instance %.*s", full + prefix_len, prefix_len - 1, full);
}

/* The node for tok in p's scope; *port gets the index of the scope's port it names, or -1. */
int scope_node(pctx *p, const char *tok, int *port)
{
    *port = -1;
    if (!tok)
        return pctx_error(p, "missing node");
    if (is_ground_name(tok))
        return 0;
    if (!valid_node_name(tok) || !name_start_ok(tok))
        return pctx_error(p, "'%.40s' is not a valid node name: %s", tok, NODE_NAME_RULE);
    for (int i = 0; i < p->sc->n_ports; i++)
        if (strcmp(p->sc->port_names[i], tok) == 0) {
            *port = i;
            return p->sc->port_nodes[i];
        }
    parser *ps = p->ps;
    char buf[SCOPED_NAME_BYTES];
    const char *name = tok; /* top level: the arena token itself */
    if (p->sc->prefix[0]) {
        if (scoped_name(ps, p->ll, p->ll->tok[0], buf, p->sc->prefix, tok, "") != 0)
            return -1;
        name = buf;
    }
    int idx = circuit_find_node(ps->ckt, name);
    if (idx >= 0) {
        if (ps->node_plen[idx] == p->sc->prefix_len)
            return idx;
        char here[1400], other[1400];
        describe_node(ps, idx, name, p->sc->prefix_len, 0, here, sizeof here);
        describe_node(ps, idx, name, ps->node_plen[idx], 1, other, sizeof other);
        return pctx_error(p, "%s is spelled like %s: the two would be one node; rename one",
                          here, other);
    }
    idx = name == tok ? circuit_add_node_borrowed(ps->ckt, tok, 0)
                      : circuit_add_node(ps->ckt, name, 0);
    if (idx < 0)
        return nomem(ps), -1;
    if (note_node_prefix(ps, idx, p->sc->prefix_len) != 0)
        return -1;
    return idx;
}

int pctx_node(pctx *p, const char *tok)
{
    int port;
    int idx = scope_node(p, tok, &port);
    if (port >= 0)
        p->sc->port_used[port] = 1;
    return idx;
}

int pctx_value(pctx *p, const char *tok, const char *what, double *out)
{
    if (!tok)
        return pctx_error(p, "missing %s", what);
    return line_value(p->ps, p->ll, p->sc, tok, p->elem_name, what, out);
}

int pctx_is_model(const pctx *p, const char *name)
{
    return name && strmap_get(&p->ps->ckt->model_map, name, NULL);
}

const model *pctx_model(pctx *p, const char *name, const struct dev_ops *ops)
{
    int idx;
    if (!name) {
        pctx_error(p, "missing model name");
        return NULL;
    }
    if (!strmap_get(&p->ps->ckt->model_map, name, &idx)) {
        pctx_error(p, "unknown model '%s'", name);
        return NULL;
    }
    const model *m = p->ps->ckt->models[idx];
    if (m->ops != ops) {
        const char *type = m->ops->model_types[m->type];
        char types[128];
        model_types_text(ops, types, sizeof types);
        pctx_error(p, "model '%s' is %s %s model; a %s needs a model of type %s", name,
                   initialism_article(type), type, ops->model_kind, types);
        return NULL;
    }
    return m;
}

const char *pctx_scoped_name(pctx *p, const char *tok)
{
    char name[SCOPED_NAME_BYTES];
    if (scoped_name(p->ps, p->ll, p->ll->tok[0], name, p->sc->prefix, tok, "") != 0)
        return NULL;
    return pctx_strdup(p, name);
}
