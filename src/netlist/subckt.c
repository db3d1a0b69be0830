/* Subcircuits: .subckt headers (name, ports, parameter defaults), X lines expanded into their
 * bodies (counted first), and the ports an instance leaves unconnected. Bodies are pass 2's. */
#include <stdio.h>
#include <string.h>

#include "netlist/parser_internal.h"

int collect_subckt_header(parser *ps, const logline *ll, subckt_def *sd)
{
    if (ll->n_tok < 2)
        return line_error(ps, ll, ".subckt needs a name"), -1;
    sd->name = ll->tok[1];
    sd->file = ll->file;
    sd->line = ll->line;
    if (!name_start_ok(sd->name))
        return line_error(ps, ll, ".subckt '%.40s': not a valid subcircuit name: %s", sd->name,
                          NAME_START_RULE),
               -1;
    int i = 2;
    int first_param = ll->n_tok;
    for (int j = 2; j < ll->n_tok; j++) {
        if (j + 1 < ll->n_tok && strcmp(ll->tok[j + 1], "=") == 0) {
            first_param = j;
            break;
        }
    }
    sd->n_ports = first_param - i;
    sd->ports = (const char **)(ll->tok + i);
    for (int j = 0; j < sd->n_ports; j++) {
        const char *port = sd->ports[j];
        if (is_ground_name(port))
            return line_error(ps, ll, ".subckt %s: ground cannot be a port", sd->name), -1;
        if (port[strlen(port) - 1] == ':')
            return line_error(ps, ll,
                              ".subckt %s: port '%.40s' ends in ':'; parameter defaults are "
                              "written name=value after the ports",
                              sd->name, port),
                   -1;
        if (!valid_node_name(port) || !name_start_ok(port))
            return line_error(ps, ll, ".subckt %s: '%.40s' is not a valid port name: %s",
                              sd->name, port, NODE_NAME_RULE),
                   -1;
        /* a port listed twice would be two names for one node of the instance */
        for (int k = 0; k < j; k++)
            if (strcmp(sd->ports[k], port) == 0)
                return line_error(ps, ll, ".subckt %s: port '%s' is listed twice", sd->name,
                                  port),
                       -1;
    }
    /* defaults: name = text pairs (texts evaluated per instance) */
    int cap = ll->n_tok;
    sd->pnames = arena_alloc(&ps->ckt->arena, (size_t)cap * sizeof *sd->pnames);
    sd->ptexts = arena_alloc(&ps->ckt->arena, (size_t)cap * sizeof *sd->ptexts);
    if (!sd->pnames || !sd->ptexts)
        return nomem(ps), -1;
    int k = first_param;
    while (k < ll->n_tok) {
        if (k + 2 >= ll->n_tok || strcmp(ll->tok[k + 1], "=") != 0)
            return line_error(ps, ll, ".subckt %s: expected name=default, got '%s'", sd->name,
                              ll->tok[k]),
                   -1;
        const char *pname = ll->tok[k];
        if (!param_name_ok(pname))
            return line_error(ps, ll, ".subckt %s: '%.40s' is not a valid parameter name: %s",
                              sd->name, pname, PARAM_NAME_RULE),
                   -1;
        for (int q = 0; q < sd->n_params; q++)
            if (strcmp(sd->pnames[q], pname) == 0)
                return line_error(ps, ll, ".subckt %s: parameter '%s' given twice", sd->name,
                                  pname),
                       -1;
        int j = k + 2;
        while (j < ll->n_tok && !(j + 1 < ll->n_tok && strcmp(ll->tok[j + 1], "=") == 0))
            j++;
        const char *text = (j == k + 3) ? ll->tok[k + 2] : join_tokens(ps, ll, k + 2, j);
        if (!text)
            return nomem(ps), -1;
        sd->pnames[sd->n_params] = pname;
        sd->ptexts[sd->n_params] = text;
        sd->n_params++;
        k = j;
    }
    return 0;
}

typedef struct inst_ctx {
    const subckt_def *sd;
    const char **names;
    const char **texts;
    int n;
} inst_ctx;

static int collect_inst_param(parser *ps, const logline *ll, void *vctx, const char *name,
                              const char *text)
{
    inst_ctx *ic = vctx;
    int known = 0;
    for (int i = 0; i < ic->sd->n_params; i++)
        if (strcmp(ic->sd->pnames[i], name) == 0)
            known = 1;
    if (!known)
        return line_error(ps, ll, "%s: subcircuit '%s' has no parameter '%s'", ll->tok[0],
                          ic->sd->name, name),
               -1;
    /* each parameter once: the arrays hold one entry per parameter of the subcircuit */
    for (int j = 0; j < ic->n; j++)
        if (strcmp(ic->names[j], name) == 0)
            return line_error(ps, ll, "%s: parameter '%s' given twice", ll->tok[0], name), -1;
    ic->names[ic->n] = name;
    ic->texts[ic->n] = text;
    ic->n++;
    return 0;
}

typedef struct local_param_ctx {
    scope *inner;
    int room;
    const char *xname, *subname;
} local_param_ctx;

static int add_local_param(parser *ps, const logline *ll, void *vctx, const char *name,
                           const char *text)
{
    local_param_ctx *lp = vctx;
    if (lp->room-- <= 0)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       "more than 64 local parameters in subcircuit %s", lp->subname),
               -1;
    char msg[512];
    double v;
    if (eval_text(ps, lp->inner, text, &v, msg, sizeof msg) != 0)
        return line_error(ps, ll, "%s: .param %s: %s", lp->xname, name, msg), -1;
    if (tape_scope_param(ps, ll, lp->inner->tape_id, name, text, lp->inner->tape_id) != 0)
        return -1;
    lp->inner->pnames[lp->inner->n_params] = name;
    lp->inner->pvals[lp->inner->n_params] = v;
    lp->inner->n_params++;
    return 0;
}

/* The subcircuit an X line names (the token before its first name=value), -1 when unknown;
 * *first_assign gets that first name=value's token index (n_tok when none). */
static int x_line_subckt(const parser *ps, const logline *ll, int *first_assign)
{
    *first_assign = ll->n_tok;
    for (int j = 1; j < ll->n_tok; j++)
        if (j + 1 < ll->n_tok && strcmp(ll->tok[j + 1], "=") == 0) {
            *first_assign = j;
            break;
        }
    int idx;
    if (*first_assign < 2 || !strmap_get(&ps->subckt_map, ll->tok[*first_assign - 1], &idx))
        return -1;
    return idx;
}

/* What one instance of subcircuit idx expands to, at nesting depth `depth` (1 for an
 * instance at the top level), counted from the bodies before anything is built (as doubles:
 * ten levels of ten instances is 1e10): elements into *n_elem, instances into *n_inst. Each
 * subcircuit is counted once. An X line nested deeper than the limit is reported here, at the
 * line where the expansion would have stopped (the recursion follows the lines in the same
 * order), so that a deep or self-instantiating subcircuit is not half built first. 0 ok, -1
 * with the error set. */
static int subckt_expansion(parser *ps, int idx, int depth, double *n_elem, double *n_inst)
{
    subckt_def *sd = &ps->subckts[idx];
    if (!sd->counted || depth + sd->height > NETLIST_MAX_SUBCKT_DEPTH) {
        double ne = 0.0, ni = 0.0;
        int height = 0;
        for (int i = sd->body_first; i < sd->body_end; i++) {
            const logline *bl = &ps->lines[i];
            char c = bl->tok[0][0];
            if (c == '.')
                continue;
            if (c != 'x') {
                ne += 1.0;
                continue;
            }
            int first_assign;
            int sub = x_line_subckt(ps, bl, &first_assign);
            if (sub < 0)
                continue; /* reported when the line is built */
            if (depth + 1 > NETLIST_MAX_SUBCKT_DEPTH)
                return err_set(ps->err, SS_ERR_LIMIT, bl->file, bl->line,
                               "%s: subcircuits nested deeper than %d (is '%s' instantiating "
                               "itself?)",
                               bl->tok[0], NETLIST_MAX_SUBCKT_DEPTH, ps->subckts[sub].name),
                       -1;
            double se, si;
            if (subckt_expansion(ps, sub, depth + 1, &se, &si) != 0)
                return -1;
            ne += se;
            ni += 1.0 + si;
            if (ps->subckts[sub].height + 1 > height)
                height = ps->subckts[sub].height + 1;
        }
        sd->n_elem = ne;
        sd->n_inst = ni;
        sd->height = height;
        sd->counted = 1;
    }
    *n_elem = sd->n_elem;
    *n_inst = sd->n_inst;
    return 0;
}

static int note_unused_port(parser *ps, const logline *ll, const scope *inner,
                            const subckt_def *sd, int port)
{
    if (ps->n_notes == ps->cap_notes) {
        int ncap = ps->cap_notes ? ps->cap_notes * 2 : 16;
        port_note *nn = ss_realloc(ps->notes, (size_t)ncap * sizeof *nn);
        if (!nn)
            return nomem(ps), -1;
        ps->notes = nn;
        ps->cap_notes = ncap;
    }
    port_note *pn = &ps->notes[ps->n_notes++];
    pn->node = inner->port_nodes[port];
    pn->at = ll;
    pn->prefix = inner->prefix;
    pn->subckt = sd->name;
    pn->port = sd->ports[port];
    return 0;
}

/* Builds the body of one instance (expand_instance has checked the line and laid out inner's
 * arrays): the port nodes, the parameters, the local .param lines, the body's lines; then
 * which of the caller's ports are used through it, and the ports it leaves unconnected. */
static ss_status build_instance(parser *ps, const logline *ll, const scope *sc,
                                const subckt_def *sd, scope *inner, inst_ctx *ic,
                                int first_assign, int *port_nodes, int *outer_port,
                                unsigned char *made)
{
    const char *xname = ll->tok[0];
    int n_nodes = inner->n_ports;
    pctx p = {ps, ll, sc, xname};
    for (int i = 0; i < n_nodes; i++) {
        int n_before = ps->ckt->n_nodes;
        port_nodes[i] = scope_node(&p, ll->tok[1 + i], &outer_port[i]);
        if (port_nodes[i] < 0)
            return ps->err->code;
        made[i] = port_nodes[i] >= n_before;
    }
    /* parameters: instance values (evaluated in the caller's scope), else the defaults */
    if (parse_assignments(ps, ll, first_assign, collect_inst_param, ic) != 0)
        return ps->err->code;
    for (int i = 0; i < sd->n_params; i++) {
        const char *text = sd->ptexts[i];
        const scope *eval_scope = NULL; /* defaults: globals only */
        for (int j = 0; j < ic->n; j++)
            if (strcmp(ic->names[j], sd->pnames[i]) == 0) {
                text = ic->texts[j];
                eval_scope = sc;
            }
        char msg[512];
        double v;
        if (eval_text(ps, eval_scope, text, &v, msg, sizeof msg) != 0)
            return line_error(ps, ll, "%s: parameter %s: %s", xname, sd->pnames[i], msg);
        if (tape_scope_param(ps, ll, inner->tape_id, sd->pnames[i], text,
                             eval_scope ? eval_scope->tape_id : -1) != 0)
            return ps->err->code;
        inner->pnames[inner->n_params] = sd->pnames[i];
        inner->pvals[inner->n_params] = v;
        inner->n_params++;
    }
    /* local .param lines in the body, in order, each seeing the ones before it */
    local_param_ctx lp = {inner, 64, xname, sd->name};
    for (int i = sd->body_first; i < sd->body_end; i++) {
        const logline *bl = &ps->lines[i];
        if (is_directive(bl, ".param") && parse_assignments(ps, bl, 1, add_local_param, &lp) != 0)
            return ps->err->code;
    }
    ss_status st = build_lines(ps, inner, sd->body_first, sd->body_end);
    if (st != SS_OK)
        return st;
    for (int i = 0; i < n_nodes; i++) {
        if (inner->port_used[i]) {
            if (outer_port[i] >= 0) /* the caller's port is connected through this instance */
                sc->port_used[outer_port[i]] = 1;
        } else if (made[i] && port_nodes[i] > 0 && note_unused_port(ps, ll, inner, sd, i) != 0) {
            return ps->err->code;
        }
    }
    return SS_OK;
}

ss_status expand_instance(parser *ps, const logline *ll, const scope *sc)
{
    /* Xname node... subckt [name=value ...] */
    const char *xname = ll->tok[0];
    int first_assign;
    int idx = x_line_subckt(ps, ll, &first_assign);
    if (first_assign < 2)
        return line_error(ps, ll, "%s: needs nodes and a subcircuit name", xname);
    if (idx < 0)
        return line_error(ps, ll, "%s: unknown subcircuit '%s'", xname,
                          ll->tok[first_assign - 1]);
    const subckt_def *sd = &ps->subckts[idx];
    int n_nodes = first_assign - 2;
    if (n_nodes != sd->n_ports)
        return line_error(ps, ll, "%s: subcircuit '%s' has %d ports, %d nodes given", xname,
                          sd->name, sd->n_ports, n_nodes);
    if (sc->depth + 1 > NETLIST_MAX_SUBCKT_DEPTH)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       "%s: subcircuits nested deeper than %d (is '%s' instantiating itself?)",
                       xname, NETLIST_MAX_SUBCKT_DEPTH, sd->name);
    if (sc->depth == 0) {
        /* refuse an expansion past the element limit here, before building any of it */
        double n_elem, n_inst;
        if (subckt_expansion(ps, idx, 1, &n_elem, &n_inst) != 0)
            return ps->err->code;
        if ((double)ps->ckt->n_elem + n_elem > NETLIST_MAX_ELEMENTS)
            return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                           "%s: subcircuit '%s' expands to %.3g elements: the circuit would "
                           "have more than %d elements",
                           xname, sd->name, n_elem, NETLIST_MAX_ELEMENTS);
        if ((double)ps->n_instances + 1.0 + n_inst > NETLIST_MAX_ELEMENTS)
            return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                           "%s: subcircuit '%s' expands to %.3g subcircuit instances: the "
                           "circuit would have more than %d",
                           xname, sd->name, n_inst, NETLIST_MAX_ELEMENTS);
    }
    scope inner;
    memset(&inner, 0, sizeof inner);
    inner.parent = NULL; /* subcircuit bodies see their own parameters, then the globals */
    inner.depth = sc->depth + 1;
    inner.tape_id = tape_new_scope(ps);
    if (inner.tape_id < 0)
        return SS_ERR_NOMEM;
    char prefix[SCOPED_NAME_BYTES];
    if (scoped_name(ps, ll, xname, prefix, sc->prefix, xname, ".") != 0)
        return SS_ERR_LIMIT;
    inner.prefix = arena_strdup(&ps->ckt->arena, prefix); /* kept: inst_map's key */
    inner.prefix_len = (int)strlen(prefix);
    if (!inner.prefix)
        return nomem(ps);
    /* one instance per full name: two X lines named alike would share their nodes */
    int first;
    if (strmap_get(&ps->inst_map, inner.prefix, &first))
        return line_error(ps, ll, "%.*s: instance name used twice (first at %s:%d)",
                          inner.prefix_len - 1, inner.prefix, ps->lines[first].file,
                          ps->lines[first].line);
    if (strmap_put(&ps->inst_map, inner.prefix, (int)(ll - ps->lines)) != 0)
        return nomem(ps);
    ps->n_instances++;
    /* what only the expansion needs, in one block freed after it (not in the circuit's arena:
     * a million instances would keep a GB): the parameters' values and names, the instance's
     * name=value pairs, per port its node, the caller's port it connects to (-1: none),
     * whether this line made the node and whether the body uses it */
    size_t n_par = (size_t)sd->n_params + 1, n_local = n_par + 64, n_port = (size_t)n_nodes;
    size_t bytes = n_local * (sizeof(double) + sizeof(char *)) + 2 * n_par * sizeof(char *) +
                   n_port * (2 * sizeof(int) + 2);
    char *block = ss_alloc(bytes);
    if (!block)
        return nomem(ps);
    char *w = block;
    inner.pvals = (double *)(void *)w;
    w += n_local * sizeof(double);
    inner.pnames = (const char **)(void *)w;
    w += n_local * sizeof(char *);
    inst_ctx ic = {sd, (const char **)(void *)w, NULL, 0};
    w += n_par * sizeof(char *);
    ic.texts = (const char **)(void *)w;
    w += n_par * sizeof(char *);
    int *port_nodes = (int *)(void *)w;
    int *outer_port = port_nodes + n_port;
    w += 2 * n_port * sizeof(int);
    unsigned char *made = (unsigned char *)w;
    inner.port_used = made + n_port;
    inner.port_names = sd->ports;
    inner.port_nodes = port_nodes;
    inner.n_ports = n_nodes;
    ss_status st =
        build_instance(ps, ll, sc, sd, &inner, &ic, first_assign, port_nodes, outer_port, made);
    ss_free(block);
    return st;
}

/* A node that an X line brought in through a port its subcircuit leaves unconnected, and that
 * no element connects to either: it has no DC path to ground and no element to name, so the X
 * line is named. */
ss_status check_unused_ports(parser *ps)
{
    if (ps->n_notes == 0)
        return SS_OK;
    ss_circuit *ckt = ps->ckt;
    unsigned char *touched = ss_alloc((size_t)ckt->n_nodes);
    if (!touched)
        return nomem(ps);
    for (int i = 0; i < ckt->n_elem; i++)
        for (int k = 0; k < ckt->elem[i].n_node; k++)
            touched[ckt->elem[i].node[k]] = 1;
    ss_status st = SS_OK;
    for (int k = 0; k < ps->n_notes && st == SS_OK; k++) {
        const port_note *pn = &ps->notes[k];
        if (!touched[pn->node])
            st = err_set(ps->err, SS_ERR_INPUT, pn->at->file, pn->at->line,
                         "%.*s: node '%s' connects to nothing: its port '%s' of subcircuit '%s' "
                         "is used by no element inside, so the node has no DC path to ground",
                         (int)strlen(pn->prefix) - 1, pn->prefix, ckt->node_name[pn->node],
                         pn->port, pn->subckt);
    }
    ss_free(touched);
    return st;
}
