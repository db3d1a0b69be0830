/* What a caller may change on a context besides values: the stage's input and output, the
 * nodes whose results are written. */
#include <math.h>
#include <string.h>

#include "devices/device.h"
#include "solver/solver.h"

ss_status ss_solver_select_nodes(ss_solver *sv, const char *const *names, int n,
                                  ss_error *err)
{
    if (!names || n <= 0) {
        ss_free(sv->out_nodes);
        sv->out_nodes = NULL;
        sv->n_out_nodes = 0;
        return SS_OK;
    }
    int *sel = ss_alloc((size_t)n * sizeof *sel);
    unsigned char *taken = ss_alloc((size_t)sv->ckt->n_nodes);
    if (!sel || !taken) {
        ss_free(sel);
        ss_free(taken);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    int count = 0;
    for (int k = 0; k < n; k++) {
        char low[1024]; /* a name that does not fit is no node: never cut it to one that is */
        int node = names[k] && name_lower_copy(names[k], low, sizeof low)
                       ? (strcmp(low, "gnd") == 0 ? 0 : circuit_find_node(sv->ckt, low))
                       : -1;
        if (node == 0) {
            ss_free(sel);
            ss_free(taken);
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "node '%s' is ground: its voltage is 0 by definition", names[k]);
        }
        if (node < 0 || sv->node_internal[node]) {
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
    ss_free(sv->out_nodes);
    sv->out_nodes = sel;
    sv->n_out_nodes = count;
    return SS_OK;
}

/* op.csv rows counted (the element's rows with x NULL) */
static void count_row(void *vn, const char *quantity, const char *elem_name, double value)
{
    (void)quantity;
    (void)elem_name;
    (void)value;
    (*(int *)vn)++;
}

int solver_device_n_rows(const element *e)
{
    int n = 0;
    if (e->ops->report)
        e->ops->report(e, NULL, 0.0, 0.0, count_row, &n);
    return n + elem_has_power(e);
}

ss_status ss_solver_select_devices(ss_solver *sv, const char *const *names, int n,
                                   ss_error *err)
{
    if (!names || n <= 0) {
        ss_free(sv->dc_devices);
        sv->dc_devices = NULL;
        sv->n_dc_devices = 0;
        return SS_OK;
    }
    int *sel = ss_alloc((size_t)n * sizeof *sel);
    if (!sel)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int count = 0;
    for (int k = 0; k < n; k++) {
        char low[1024]; /* a name that does not fit is no element: never cut it to one that is */
        int idx = names[k] && name_lower_copy(names[k], low, sizeof low)
                      ? circuit_find_elem(sv->ckt, low)
                      : -1;
        if (idx < 0) {
            ss_free(sel);
            return err_set(err, SS_ERR_INPUT, NULL, 0, "'%s' is no element of the circuit",
                           names[k] ? names[k] : "(null)");
        }
        if (solver_device_n_rows(&sv->elem[idx]) == 0) {
            ss_free(sel);
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "'%s' (a %s) has no DC quantities to write (no op.csv rows)",
                           names[k], sv->elem[idx].ops->kind_name);
        }
        int dup = 0;
        for (int j = 0; j < count; j++)
            dup |= sel[j] == idx;
        if (!dup)
            sel[count++] = idx;
    }
    ss_free(sv->dc_devices);
    sv->dc_devices = sel;
    sv->n_dc_devices = count;
    return SS_OK;
}

ss_status ss_solver_set_stage(ss_solver *sv, const char *in_source, const char *out_node,
                              ss_error *err)
{
    if (!in_source || !out_node)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "a stage needs its input source and output node");
    const char *in, *out;
    ss_status st = circuit_stage_names(sv->ckt, in_source, out_node, &in, &out, err);
    if (st != SS_OK)
        return st;
    sv->stage.in = in;
    sv->stage.out = out;
    solver_lost_ac(sv);
    return SS_OK;
}

ss_status ss_solver_set_load(ss_solver *sv, double load_ohm, ss_error *err)
{
    if (!(load_ohm > 0.0) || !isfinite(load_ohm))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "stage load %g ohm: a load is a positive, finite resistance", load_ohm);
    sv->stage.load_ohm = load_ohm;
    sv->load_set = 1;
    return SS_OK;
}
