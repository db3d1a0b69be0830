/* Circuit bookkeeping: nodes and their names, element and model lookup, warnings, and the
 * public accessors and destructor. Parsing is parser.c's; solving is src/analysis's. */
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/circuit.h"
#include "devices/device.h"
#include "mna/mna.h"

int circuit_find_node(const struct ss_circuit *ckt, const char *name)
{
    int idx;
    return strmap_get(&ckt->node_map, name, &idx) ? idx : -1;
}

int circuit_find_elem(const struct ss_circuit *ckt, const char *name)
{
    int idx;
    return strmap_get(&ckt->elem_map, name, &idx) ? idx : -1;
}

int circuit_add_node(struct ss_circuit *ckt, const char *name, int internal)
{
    char *copy = arena_strdup(&ckt->arena, name);
    return copy ? circuit_add_node_borrowed(ckt, copy, internal) : -1;
}

int circuit_add_node_borrowed(struct ss_circuit *ckt, const char *copy, int internal)
{
    if (ckt->n_nodes == ckt->cap_nodes) {
        int ncap = ckt->cap_nodes ? ckt->cap_nodes * 2 : 64;
        const char **nn = ss_realloc(ckt->node_name, (size_t)ncap * sizeof *nn);
        if (!nn)
            return -1;
        ckt->node_name = nn;
        unsigned char *ni = ss_realloc(ckt->node_internal, (size_t)ncap);
        if (!ni)
            return -1;
        ckt->node_internal = ni;
        ckt->cap_nodes = ncap;
    }
    int idx = ckt->n_nodes;
    /* internal nodes (a BJT's base behind RB, "q1#b") are nobody's to look up by name: kept out
     * of the table, where one could shadow a netlist node spelled the same way */
    if (!internal && strmap_put(&ckt->node_map, copy, idx) != 0)
        return -1;
    ckt->node_name[idx] = copy;
    ckt->node_internal[idx] = (unsigned char)internal;
    ckt->n_nodes++;
    if (!internal && idx > 0) { /* internal nodes come only after the netlist's (prepare) */
        assert(idx == ckt->n_netlist_nodes + 1);
        ckt->n_netlist_nodes = idx;
    }
    return idx;
}

ss_status ss_circuit_select_nodes(ss_circuit *ckt, const char *const *names, int n,
                                  ss_error *err)
{
    if (!names || n <= 0) {
        ss_free(ckt->out_nodes);
        ckt->out_nodes = NULL;
        ckt->n_out_nodes = 0;
        return SS_OK;
    }
    int *sel = ss_alloc((size_t)n * sizeof *sel);
    unsigned char *taken = ss_alloc((size_t)ckt->n_nodes);
    if (!sel || !taken) {
        ss_free(sel);
        ss_free(taken);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    int count = 0;
    for (int k = 0; k < n; k++) {
        char low[1024]; /* a name that does not fit is no node: never cut it to one that is */
        int node = names[k] && name_lower_copy(names[k], low, sizeof low)
                       ? (strcmp(low, "gnd") == 0 ? 0 : circuit_find_node(ckt, low))
                       : -1;
        if (node == 0) {
            ss_free(sel);
            ss_free(taken);
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "node '%s' is ground: its voltage is 0 by definition", names[k]);
        }
        if (node < 0 || ckt->node_internal[node]) {
            ss_free(sel);
            ss_free(taken);
            return err_set(err, SS_ERR_INPUT, NULL, 0, "'%s' is no node of the circuit",
                           names[k] ? names[k] : "(null)");
        }
        if (!taken[node]) {
            taken[node] = 1;
            sel[count++] = node;
        }
    }
    ss_free(taken);
    ss_free(ckt->out_nodes);
    ckt->out_nodes = sel;
    ckt->n_out_nodes = count;
    return SS_OK;
}

void circuit_unknown_name(const struct ss_circuit *ckt, int unknown, char *buf, size_t len)
{
    int n_node_unknowns = ckt->n_nodes - 1;
    if (unknown < n_node_unknowns) {
        int node = unknown + 1;
        if (ckt->node_internal[node])
            snprintf(buf, len, "internal node '%s'", ckt->node_name[node]);
        else
            snprintf(buf, len, "node '%s'", ckt->node_name[node]);
        return;
    }
    for (int i = 0; i < ckt->n_elem; i++) {
        if (ckt->elem[i].branch == unknown) {
            snprintf(buf, len, "branch current of '%s'", ckt->elem[i].name);
            return;
        }
    }
    snprintf(buf, len, "unknown #%d", unknown);
}

/* Appends msg (copied) with its lint check (-1 none) and subject, unless the very text is
 * there already (each warning once). 0 ok, -1 no memory. */
static int warn_add(struct ss_circuit *ckt, const char *msg, int check, const char *subject)
{
    for (int i = 0; i < ckt->n_warnings; i++)
        if (strcmp(ckt->warnings[i], msg) == 0)
            return 0;
    size_t n = (size_t)ckt->n_warnings + 1;
    const char **nw = ss_realloc(ckt->warnings, n * sizeof *nw);
    if (!nw)
        return -1;
    ckt->warnings = nw;
    struct warning_lint *nl = ss_realloc(ckt->warning_lint, n * sizeof *nl);
    if (!nl)
        return -1;
    ckt->warning_lint = nl;
    char *copy = arena_strdup(&ckt->arena, msg);
    if (!copy)
        return -1;
    nl[ckt->n_warnings] = (struct warning_lint){check, subject};
    ckt->warnings[ckt->n_warnings++] = copy;
    return 0;
}

void circuit_warn(struct ss_circuit *ckt, const char *fmt, ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    warn_add(ckt, msg, -1, NULL);
}

int circuit_warn_lint(struct ss_circuit *ckt, int check, const char *subject, const char *fmt,
                      ...)
{
    char msg[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    return warn_add(ckt, msg, check, subject);
}

const char *ss_circuit_warning(const ss_circuit *ckt, int index)
{
    return (ckt && index >= 0 && index < ckt->n_warnings) ? ckt->warnings[index] : NULL;
}

void ss_circuit_analyses(const ss_circuit *ckt, ss_analysis_flags *f)
{
    f->op = ckt->want_op;
    f->dc = ckt->n_dc > 0;
    f->ac = ckt->want_ac;
    f->stage = ckt->stage_in != NULL;
    f->tran = ckt->want_tran;
    f->noise = ckt->want_noise;
    f->large_signal = ckt->want_large_signal;
}

double ss_circuit_temp_c(const ss_circuit *ckt) { return ckt->temp_c; }

const char *ss_circuit_input(const ss_circuit *ckt, int index, const char **out_sha256)
{
    if (!ckt || index < 0 || index >= ckt->n_inputs)
        return NULL;
    if (out_sha256)
        *out_sha256 = ckt->inputs[index].sha256;
    return ckt->inputs[index].path;
}

ss_status circuit_temp_error(const struct ss_circuit *ckt, const element *e, const char *why,
                             ss_error *err)
{
    if (e->area != 1.0)
        return err_set(err, SS_ERR_INPUT, e->mod->file, e->mod->line,
                       "model '%s': at %g C with the area %g of %s, %s", e->mod->name,
                       ckt->temp_c, e->area, e->name, why);
    return err_set(err, SS_ERR_INPUT, e->mod->file, e->mod->line, "model '%s': at %g C, %s",
                   e->mod->name, ckt->temp_c, why);
}

ss_status circuit_check_temp(const struct ss_circuit *ckt, double temp_c, ss_error *err)
{
    for (int m = 0; m < ckt->n_models; m++) {
        const model *md = ckt->models[m];
        element probe; /* what the temperature law reads: the model and an area of 1 */
        memset(&probe, 0, sizeof probe);
        probe.ops = md->ops;
        probe.mod = md;
        probe.area = 1.0;
        double tp[MODEL_MAX_PARAMS];
        char why[200];
        if (probe.ops->temp &&
            probe.ops->temp(&probe, temp_c + SS_ZERO_C_IN_K, tp, why, sizeof why) != 0)
            return err_set(err, SS_ERR_INPUT, md->file, md->line, "model '%s': at %g C, %s",
                           md->name, temp_c, why);
    }
    return SS_OK;
}

ss_status ss_circuit_set_temp(ss_circuit *ckt, double temp_c, ss_error *err)
{
    if (!(temp_c > -SS_ZERO_C_IN_K && temp_c <= 1000.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "temperature %g C is outside -273.15 .. 1000 C", temp_c);
    ss_status st = circuit_check_temp(ckt, temp_c, err);
    if (st != SS_OK)
        return st;
    ckt->temp_c = temp_c;
    ckt->have_op = 0;
    return SS_OK;
}

ss_status ss_circuit_get_value(const ss_circuit *ckt, const char *name, double *out_value,
                               ss_error *err)
{
    char low[1024]; /* a name that does not fit is not found, never cut short to another */
    name_lower_copy(name, low, sizeof low);
    for (int k = 0; k < ckt->n_params; k++)
        if (strcmp(ckt->param_name[k], low) == 0) {
            *out_value = ckt->param_value[k];
            return SS_OK;
        }
    int e = circuit_find_elem(ckt, low);
    if (e >= 0 && ckt->elem[e].ops->value_name) {
        *out_value = ckt->elem[e].value;
        return SS_OK;
    }
    char *dot = strrchr(low, '.');
    if (dot) {
        *dot = '\0';
        int mi;
        if (strmap_get(&ckt->model_map, low, &mi)) {
            int pi = model_param_index(ckt->models[mi]->ops, dot + 1);
            if (pi >= 0) {
                *out_value = ckt->models[mi]->p[pi];
                return SS_OK;
            }
        }
        *dot = '.';
    }
    return err_set(err, SS_ERR_INPUT, NULL, 0,
                   "'%s' is no parameter, element value or model parameter of the circuit", name);
}

ss_status ss_circuit_set_stage(ss_circuit *ckt, const char *in_source, const char *out_node,
                               double load_ohm, ss_error *err)
{
    char name[1024]; /* a name that does not fit exists nowhere: never cut it to one that does */
    if (!in_source || !out_node) { /* only the load changes */
        if (load_ohm > 0.0)
            ckt->stage_load_ohm = load_ohm;
        return SS_OK;
    }
    int e = name_lower_copy(in_source, name, sizeof name) ? circuit_find_elem(ckt, name) : -1;
    if (e < 0 || !elem_is_source(&ckt->elem[e]))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "stage input '%s' is not an independent source of the circuit",
                       in_source);
    const char *in_copy = ckt->elem[e].name;
    int n = name_lower_copy(out_node, name, sizeof name) ? circuit_find_node(ckt, name) : -1;
    if (n <= 0 || ckt->node_internal[n])
        return err_set(err, SS_ERR_INPUT, NULL, 0, "stage output node '%s' %s", out_node,
                       n == 0 ? "is ground" : "does not exist");
    ckt->stage_in = in_copy;
    ckt->stage_out = ckt->node_name[n];
    ckt->stage_load_ohm = load_ohm > 0.0 ? load_ohm : ckt->stage_load_ohm;
    return SS_OK;
}

void ss_circuit_destroy(ss_circuit **pckt)
{
    if (!pckt || !*pckt)
        return;
    ss_circuit *ckt = *pckt;
    mna_destroy(&ckt->mna);
    ss_free(ckt->x_op);
    ss_free(ckt->work_rhs);
    ss_free(ckt->work_x);
    ss_free(ckt->x_refine);
    ss_free(ckt->work_esc);
    ss_free(ckt->work_bytes);
    ss_free(ckt->work_zrhs);
    ss_free(ckt->work_zx);
    ss_free(ckt->ac_w);
    ss_free(ckt->ac_rhs);
    ss_free(ckt->out_nodes);
    ss_free(ckt->node_name);
    ss_free(ckt->node_internal);
    strmap_clear(&ckt->node_map);
    ss_free(ckt->elem);
    strmap_clear(&ckt->elem_map);
    ss_free(ckt->models);
    strmap_clear(&ckt->model_map);
    ss_free(ckt->warnings);
    ss_free(ckt->inputs);
    ss_free(ckt->warning_lint);
    ss_free(ckt->study_lines);
    ss_free(ckt->param_name);
    ss_free(ckt->param_value);
    arena_clear(&ckt->arena);
    ss_free(ckt);
    *pckt = NULL;
}
