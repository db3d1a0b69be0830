/* Circuit bookkeeping: nodes and their names, element and model lookup, warnings, and the
 * public accessors and destructor. Parsing is parser.c's; solving is src/analysis's. */
#include <assert.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "netlist/circuit.h"
#include "devices/device.h"

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

int circuit_warn(struct ss_circuit *ckt, const char *check, const char *subject, const char *text)
{
    for (int i = 0; i < ckt->n_warnings; i++) /* each warning once */
        if (strcmp(ckt->warnings[i].text, text) == 0)
            return 0;
    char *copy = arena_strdup(&ckt->arena, text);
    if (!copy)
        return -1;
    ckt_warning *nw = ss_realloc(ckt->warnings, (size_t)(ckt->n_warnings + 1) * sizeof *nw);
    if (!nw)
        return -1;
    ckt->warnings = nw;
    nw[ckt->n_warnings++] = (ckt_warning){copy, check, subject};
    return 0;
}

void ss_circuit_analyses(const ss_circuit *ckt, ss_analysis_flags *f)
{
    f->op = ckt->want_op;
    f->dc = ckt->dc.n > 0;
    f->ac = ckt->ac.want;
    f->stage = ckt->stage.in != NULL;
    f->tran = ckt->tran.want;
    f->noise = ckt->noise.want;
    f->large_signal = ckt->ls.want;
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


ss_status circuit_check_temp(const struct ss_circuit *ckt, double temp_c, ss_error *err)
{
    return models_check_temp(ckt->models, ckt->n_models, temp_c, err);
}

ss_status models_check_temp(model *const *models, int n_models, double temp_c, ss_error *err)
{
    for (int m = 0; m < n_models; m++) {
        const model *md = models[m];
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


ss_status ss_circuit_get_value(const ss_circuit *ckt, const char *name, double *out_value,
                               ss_error *err)
{
    char low[1024]; /* a name that does not fit is not found, never cut short to another */
    name_lower_copy(name, low, sizeof low);
    for (int k = 0; k < ckt->n_params; k++)
        if (strcmp(ckt->params[k].name, low) == 0) {
            *out_value = ckt->params[k].value;
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
        /* INSTANCE.PARAM: the element's model's value, the nominal of its own */
        int ei = circuit_find_elem(ckt, low);
        if (ei >= 0 && elem_has_model(&ckt->elem[ei])) {
            int pi = model_param_index(ckt->elem[ei].mod->ops, dot + 1);
            if (pi >= 0) {
                *out_value = ckt->elem[ei].mod->p[pi];
                return SS_OK;
            }
        }
        *dot = '.';
    }
    return err_set(err, SS_ERR_INPUT, NULL, 0,
                   "'%s' is no parameter, element value or model parameter of the circuit", name);
}


void ss_circuit_destroy(ss_circuit **pckt)
{
    if (!pckt || !*pckt)
        return;
    ss_circuit *ckt = *pckt;
    ss_free(ckt->node_name);
    ss_free(ckt->node_internal);
    strmap_clear(&ckt->node_map);
    ss_free(ckt->elem);
    strmap_clear(&ckt->elem_map);
    ss_free(ckt->models);
    strmap_clear(&ckt->model_map);
    ss_free(ckt->inputs);
    ss_free(ckt->study_lines);
    ss_free(ckt->params);
    ss_free(ckt->tape.entry);
    ss_free(ckt->tape.scope);
    ss_free(ckt->tape.slot_name);
    ss_free(ckt->warnings);
    arena_clear(&ckt->arena);
    ss_free(ckt);
    *pckt = NULL;
}

ss_status circuit_stage_names(const ss_circuit *ckt, const char *in_source, const char *out_node,
                              const char **in_name, const char **out_name, ss_error *err)
{
    char name[1024]; /* a name that does not fit exists nowhere: never cut it to one that does */
    int e = name_lower_copy(in_source, name, sizeof name) ? circuit_find_elem(ckt, name) : -1;
    if (e < 0 || !elem_is_source(&ckt->elem[e]))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "stage input '%s' is not an independent source of the circuit",
                       in_source);
    int n = name_lower_copy(out_node, name, sizeof name) ? circuit_find_node(ckt, name) : -1;
    if (n <= 0)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "stage output node '%s' %s", out_node,
                       n == 0 ? "is ground" : "does not exist");
    *in_name = ckt->elem[e].name;
    *out_name = ckt->node_name[n];
    return SS_OK;
}
