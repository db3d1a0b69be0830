/* Netlist parser: the parser's state over the two passes (pass 1: .param, .subckt, .model;
 * pass 2: elements, X instances, directives), the checks after them and the public entry
 * points. Reading lines is reader.c's, values params.c's, subcircuits subckt.c's, directives
 * directives.c's, models models.c's; device syntax is each device's own parse (pctx.c). */
#include <string.h>

#include "devices/device.h"
#include "netlist/circuit.h"
#include "netlist/netlist.h"
#include "netlist/parser_internal.h"

ss_status nomem(parser *ps)
{
    ps->nomem = 1;
    return err_set(ps->err, SS_ERR_NOMEM, ps->ckt->file, 0, "out of memory while parsing");
}

ss_status line_error(parser *ps, const logline *ll, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    err_vset(ps->err, SS_ERR_INPUT, ll ? ll->file : ps->ckt->file, ll ? ll->line : 0, fmt, ap);
    va_end(ap);
    return SS_ERR_INPUT;
}

/* ---- pass 1: subcircuit bodies, parameters, models --------------------------------------- */

static ss_status pass1(parser *ps)
{
    int depth = 0, n_model_lines = 0;
    int open_idx[NETLIST_MAX_SUBCKT_DEPTH] = {0};
    for (int i = 0; i < ps->n_lines; i++) {
        logline *ll = &ps->lines[i];
        if (is_directive(ll, ".end") && depth == 0) {
            ps->n_lines = i; /* everything after .end is ignored */
            break;
        }
        if (is_directive(ll, ".subckt")) {
            if (depth >= NETLIST_MAX_SUBCKT_DEPTH)
                return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                               ".subckt definitions nested deeper than %d",
                               NETLIST_MAX_SUBCKT_DEPTH);
            if (depth > 0)
                return line_error(ps, ll,
                                  ".subckt inside .subckt %s: define subcircuits one after "
                                  "another",
                                  ps->subckts[open_idx[depth - 1]].name);
            if (ps->n_subckts == ps->cap_subckts) {
                int ncap = ps->cap_subckts ? ps->cap_subckts * 2 : 8;
                subckt_def *ns = ss_realloc(ps->subckts, (size_t)ncap * sizeof *ns);
                if (!ns)
                    return nomem(ps);
                ps->subckts = ns;
                ps->cap_subckts = ncap;
            }
            subckt_def *sd = &ps->subckts[ps->n_subckts];
            memset(sd, 0, sizeof *sd);
            if (collect_subckt_header(ps, ll, sd) != 0)
                return ps->err->code;
            if (strmap_get(&ps->subckt_map, sd->name, NULL))
                return line_error(ps, ll, ".subckt %s defined twice", sd->name);
            if (strmap_put(&ps->subckt_map, sd->name, ps->n_subckts) != 0)
                return nomem(ps);
            sd->body_first = i + 1;
            open_idx[depth++] = ps->n_subckts++;
            continue;
        }
        if (is_directive(ll, ".ends")) {
            if (depth == 0)
                return line_error(ps, ll, ".ends without .subckt");
            subckt_def *sd = &ps->subckts[open_idx[--depth]];
            if (ll->n_tok > 1 && strcmp(ll->tok[1], sd->name) != 0)
                return line_error(ps, ll, ".ends %s closes .subckt %s", ll->tok[1], sd->name);
            sd->body_end = i;
            continue;
        }
        if (is_directive(ll, ".model")) {
            n_model_lines++; /* defined below, once every global parameter is known */
            continue;
        }
        if (depth == 0 && is_directive(ll, ".param")) {
            if (ll->n_tok < 2)
                return line_error(ps, ll, ".param needs name=value");
            if (parse_assignments(ps, ll, 1, add_global_param, NULL) != 0)
                return ps->err->code;
        }
    }
    if (depth > 0) {
        subckt_def *sd = &ps->subckts[open_idx[depth - 1]];
        return err_set(ps->err, SS_ERR_INPUT, sd->file, sd->line,
                       ".subckt %s has no matching .ends", sd->name);
    }
    /* model cards see every global parameter, wherever its .param line stands (parameters
     * are order-free), and the .options line that says how to take fields that are not
     * parameters, wherever it stands */
    if (n_model_lines > 0 && model_extras_prescan(ps) != 0)
        return ps->err->code;
    for (int i = 0; i < ps->n_lines && n_model_lines > 0; i++) {
        if (is_directive(&ps->lines[i], ".model")) {
            n_model_lines--;
            if (define_model(ps, &ps->lines[i]) != 0)
                return ps->err->code;
        }
    }
    return SS_OK;
}

/* ---- pass 2: elements and analysis directives -------------------------------------------- */

static ss_status add_element(parser *ps, const logline *ll, const scope *sc)
{
    ss_circuit *ckt = ps->ckt;
    const char *tok0 = ll->tok[0];
    const dev_ops *ops = device_by_letter(tok0[0]);
    if (!ops)
        return line_error(ps, ll, "%s: unknown element type '%c'", tok0, tok0[0]);
    if (ckt->n_elem >= NETLIST_MAX_ELEMENTS)
        return err_set(ps->err, SS_ERR_LIMIT, ll->file, ll->line,
                       "more than %d elements", NETLIST_MAX_ELEMENTS);
    /* at the top level the token itself (already lower case, in the arena) is the name */
    char buf[SCOPED_NAME_BYTES];
    const char *name = tok0;
    if (sc->prefix[0]) {
        if (scoped_name(ps, ll, tok0, buf, sc->prefix, tok0, "") != 0)
            return SS_ERR_LIMIT;
        name = buf;
    }
    int dup;
    if (strmap_get(&ckt->elem_map, name, &dup))
        return line_error(ps, ll, "%s: element name used twice (first at %s:%d)", name,
                          ckt->elem[dup].file, ckt->elem[dup].line);
    if (ckt->n_elem == ckt->cap_elem) {
        int ncap = ckt->cap_elem ? ckt->cap_elem * 2 : 64;
        element *ne = ss_realloc(ckt->elem, (size_t)ncap * sizeof *ne);
        if (!ne)
            return nomem(ps);
        ckt->elem = ne;
        ckt->cap_elem = ncap;
    }
    element *e = &ckt->elem[ckt->n_elem];
    memset(e, 0, sizeof *e);
    e->ops = ops;
    e->name = name == tok0 ? tok0 : arena_strdup(&ckt->arena, name);
    if (!e->name)
        return nomem(ps);
    e->file = ll->file;
    e->line = ll->line;
    e->branch = -1;
    pctx p = {ps, ll, sc, e->name};
    if (ops->parse(&p, e) != 0)
        return ps->err->code ? ps->err->code : SS_ERR_INPUT;
    if (strmap_put(&ckt->elem_map, e->name, ckt->n_elem) != 0)
        return nomem(ps);
    ckt->n_elem++;
    return SS_OK;
}

/* Lines ahead of the one being built: their element and first node names are looked up in
 * tables of up to millions of entries, each lookup a cache miss; asking for those buckets a
 * few lines early lets the misses overlap instead of waiting for each in turn. */
#define PREFETCH_AHEAD 8

static void prefetch_line(const parser *ps, const logline *ll)
{
    const char *t = ll->tok[0];
    if (t[0] == '.' || t[0] == 'x')
        return;
    strmap_prefetch(&ps->ckt->elem_map, t);
    for (int k = 1; k < ll->n_tok && k < 3; k++)
        strmap_prefetch(&ps->ckt->node_map, ll->tok[k]);
}

ss_status build_lines(parser *ps, const scope *sc, int first, int end)
{
    for (int i = first; i < end; i++) {
        const logline *ll = &ps->lines[i];
        if (!sc->prefix[0] && i + PREFETCH_AHEAD < end)
            prefetch_line(ps, &ps->lines[i + PREFETCH_AHEAD]);
        const char *t = ll->tok[0];
        ss_status st;
        if (t[0] == '.') {
            if (strcmp(t, ".subckt") == 0) { /* skip the body: instantiated by X lines */
                int idx;
                if (strmap_get(&ps->subckt_map, ll->tok[1], &idx))
                    i = ps->subckts[idx].body_end;
                continue;
            }
            st = directive(ps, ll, sc);
        } else if (t[0] == 'x') {
            st = expand_instance(ps, ll, sc);
        } else {
            st = add_element(ps, ll, sc);
        }
        if (st != SS_OK)
            return ps->err->code ? ps->err->code : st;
    }
    return SS_OK;
}

/* ---- after parsing: controls, then the public entry points ------------------------------- */

static ss_status resolve_controls(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    for (int i = 0; i < ckt->n_elem; i++) {
        element *e = &ckt->elem[i];
        if (!elem_is_controlled(e))
            continue;
        int c = circuit_find_elem(ckt, e->ctrl_name);
        if (c < 0 || !elem_is(&ckt->elem[c], DEV_CURRENT_PROBE))
            return err_set(ps->err, SS_ERR_INPUT, e->file, e->line,
                           "%s: controlling source '%s' is not a voltage source of the circuit",
                           e->name, e->ctrl_name);
        e->ctrl_elem = c;
    }
    return SS_OK;
}

static void parser_clear(parser *ps)
{
    ss_free(ps->lines);
    ss_free(ps->params);
    strmap_clear(&ps->param_map);
    ss_free(ps->subckts);
    strmap_clear(&ps->subckt_map);
    ss_free(ps->override_used);
    ss_free(ps->node_plen);
    strmap_clear(&ps->inst_map);
    ss_free(ps->notes);
    arena_clear(&ps->scratch);
}

/* Reads the netlist, the file at path or else text[text_len], into ps->lines. */
static ss_status read_netlist(parser *ps, const char *path, const char *text, size_t text_len)
{
    ss_circuit *ckt = ps->ckt;
    if (path)
        return read_file(ps, path, NULL, 1);
    ps->inc_stack[ps->inc_depth++] = ckt->file;
    if (text_len > NETLIST_MAX_TEXT_BYTES)
        return err_set(ps->err, SS_ERR_LIMIT, ckt->file, 0, "the netlist is larger than %s",
                       NETLIST_MAX_TEXT_TEXT);
    ps->text_bytes = text_len;
    return read_text(ps, text, text_len, ckt->file, 1);
}

/* Sizes the element array and the name tables for the lines at hand: no doubling (and no
 * transient double copy) on large netlists; subcircuit expansion may still grow them. */
static ss_status reserve_for_lines(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    element *ne = ss_realloc(ckt->elem, (size_t)ps->n_lines * sizeof *ne);
    if (!ne || strmap_reserve(&ckt->elem_map, (size_t)ps->n_lines) != 0 ||
        strmap_reserve(&ckt->node_map, (size_t)ps->n_lines / 2) != 0) {
        if (ne)
            ckt->elem = ne;
        return nomem(ps);
    }
    ckt->elem = ne;
    ckt->cap_elem = ps->n_lines;
    return SS_OK;
}

/* Evaluates every global parameter, so an unused broken one is still reported, and keeps
 * their names and values in the circuit. */
static ss_status keep_params(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    for (int i = 0; i < ps->n_params; i++) {
        char msg[512];
        if (eval_global_param(ps, i, msg, sizeof msg) != 0)
            return ps->err->code;
    }
    if (ps->n_params == 0)
        return SS_OK;
    ss_status st = SS_OK;
    ckt->params = ss_alloc((size_t)ps->n_params * sizeof *ckt->params);
    if (!ckt->params)
        st = nomem(ps);
    for (int i = 0; st == SS_OK && i < ps->n_params; i++) {
        const param_def *pd = &ps->params[i];
        ckt->params[i] = (global_param){pd->name, pd->text, pd->file, pd->line, pd->from_set,
                                        pd->value};
    }
    ckt->n_params = ps->n_params;
    return st;
}

/* Once every line is built: what needs the whole circuit, in this order. */
static ss_status finish_circuit(parser *ps)
{
    ss_circuit *ckt = ps->ckt;
    ss_status st = check_unused_ports(ps);
    if (st == SS_OK)
        st = check_waves(ps);
    if (st == SS_OK)
        st = keep_params(ps);
    if (st == SS_OK)
        st = resolve_controls(ps);
    if (st == SS_OK)
        st = check_dc_sources(ps);
    if (st == SS_OK)
        st = check_noise(ps);
    if (st == SS_OK)
        st = apply_late_overrides(ps);
    if (st == SS_OK)
        st = circuit_check_temp(ckt, ckt->temp_c, ps->err);
    if (st == SS_OK && ckt->n_elem == 0)
        st = err_set(ps->err, SS_ERR_INPUT, ckt->file, 0, "the netlist has no elements");
    if (st == SS_OK)
        st = check_stage(ps);
    return st;
}

static ss_status parse_common(const char *path, const char *text, size_t text_len,
                              const char *name, const ss_override *overrides, int n_overrides,
                              const char *const *model_dirs, int n_model_dirs,
                              ss_circuit **out_ckt, ss_error *err)
{
    ss_error local = {0};
    if (!err)
        err = &local;
    memset(err, 0, sizeof *err);
    ss_circuit *ckt = ss_alloc(sizeof *ckt);
    if (!ckt)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    ckt->opt.tol_rel = 1e-3;
    ckt->opt.tol_v = 1e-6;
    ckt->opt.tol_i = 1e-12;
    ckt->opt.gmin = 1e-12;
    ckt->opt.newton_iters = 150;
    ckt->temp_c = SS_TNOM_DEFAULT_C;
    ckt->file = arena_strdup(&ckt->arena, path ? path : (name ? name : "<netlist>"));
    parser ps = {0};
    ps.ckt = ckt;
    ps.err = err;
    ps.overrides = overrides;
    ps.n_overrides = n_overrides;
    ps.model_dirs = model_dirs;
    ps.n_model_dirs = model_dirs && n_model_dirs > 0 ? n_model_dirs : 0;
    ps.tape_model = -1;
    ss_status st = SS_OK;
    if (!ckt->file || circuit_add_node(ckt, "0", 0) != 0 || note_node_prefix(&ps, 0, 0) != 0)
        st = nomem(&ps);
    if (st == SS_OK && n_overrides > 0) {
        ps.override_used = ss_alloc((size_t)n_overrides);
        if (!ps.override_used)
            st = nomem(&ps);
    }
    if (st == SS_OK)
        st = check_overrides_once(&ps);
    if (st == SS_OK)
        st = read_netlist(&ps, path, text, text_len);
    if (st == SS_OK && !ckt->title)
        st = err_set(err, SS_ERR_INPUT, ckt->file, 0, "empty netlist (no title line)");
    if (st == SS_OK)
        st = pass1(&ps);
    if (st == SS_OK && ps.n_lines > 64)
        st = reserve_for_lines(&ps);
    if (st == SS_OK) {
        scope top;
        memset(&top, 0, sizeof top);
        top.prefix = "";
        top.tape_id = -1;
        st = build_lines(&ps, &top, 0, ps.n_lines);
    }
    if (st == SS_OK)
        st = finish_circuit(&ps);
    parser_clear(&ps);
    if (st != SS_OK) {
        if (err->code == SS_OK)
            err_set(err, st, ckt->file, 0, "parse failed");
        ss_circuit_destroy(&ckt);
        return err->code;
    }
    *out_ckt = ckt;
    return SS_OK;
}

ss_status ss_circuit_parse_file(const char *path, const ss_override *overrides, int n_overrides,
                                ss_circuit **out_ckt, ss_error *err)
{
    return parse_common(path, NULL, 0, NULL, overrides, n_overrides, NULL, 0, out_ckt, err);
}

ss_status ss_circuit_parse_file_models(const char *path, const ss_override *overrides,
                                       int n_overrides, const char *const *model_dirs,
                                       int n_model_dirs, ss_circuit **out_ckt, ss_error *err)
{
    return parse_common(path, NULL, 0, NULL, overrides, n_overrides, model_dirs, n_model_dirs,
                        out_ckt, err);
}

ss_status ss_circuit_parse_text(const char *text, size_t text_len, const char *name,
                                const ss_override *overrides, int n_overrides,
                                ss_circuit **out_ckt, ss_error *err)
{
    return parse_common(NULL, text, text_len, name, overrides, n_overrides, NULL, 0, out_ckt,
                        err);
}
