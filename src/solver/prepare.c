/* Context preparation: device setup (internal nodes, branch currents), topology checks with
 * clear names, slot claims, the sparse pattern and klu_analyze -- once per context, again only
 * when a changed model parameter adds or removes an internal node or a matrix entry. */
#include <assert.h>
#include <stdio.h>
#include <string.h>

#include "analysis/analysis.h"

typedef struct setup_owner {
    ss_solver *sv;
    int n_branches;
    int failed;
} setup_owner;

/* An internal node named ELEMENT#SUFFIX (for messages), its name built straight in the arena:
 * a board of transistors makes tens of thousands of them. */
static int cb_new_node(void *owner, const element *e, const char *suffix)
{
    setup_owner *so = owner;
    size_t ln = strlen(e->name), ls = strlen(suffix);
    char *name = arena_alloc_raw(&so->sv->arena, ln + ls + 2, 1);
    int idx = -1;
    if (name) {
        memcpy(name, e->name, ln);
        name[ln] = '#';
        memcpy(name + ln + 1, suffix, ls + 1);
        idx = solver_add_node(so->sv, name);
    }
    if (idx < 0)
        so->failed = 1;
    return idx < 0 ? 0 : idx;
}

static int cb_new_branch(void *owner)
{
    setup_owner *so = owner;
    return so->n_branches++;
}

static int cb_claim(void *owner, int row, int col)
{
    return mna_claim(((setup_owner *)owner)->sv->mna, row, col);
}

/* ---- topology checks (union-find over nodes) ------------------------------------------- */

/* Union-find with path halving and union by rank: near-constant time per operation even on
 * a ladder of a million sections, where linking root to root in element order would build
 * one long chain. */
static int uf_find(int *parent, int a)
{
    while (parent[a] != a) {
        parent[a] = parent[parent[a]];
        a = parent[a];
    }
    return a;
}

static void uf_union(int *parent, unsigned char *rank, int a, int b)
{
    a = uf_find(parent, a);
    b = uf_find(parent, b);
    if (a == b)
        return;
    if (rank[a] < rank[b]) {
        int t = a;
        a = b;
        b = t;
    }
    parent[b] = a;
    if (rank[a] == rank[b])
        rank[a]++;
}

static ss_status check_topology(ss_solver *sv, ss_error *err)
{
    int n = sv->n_nodes;
    int *vloop = ss_alloc((size_t)n * sizeof *vloop);
    int *dcpath = ss_alloc((size_t)n * sizeof *dcpath);
    unsigned char *vrank = ss_alloc((size_t)n), *dcrank = ss_alloc((size_t)n);
    if (!vloop || !dcpath || !vrank || !dcrank) {
        ss_free(vloop);
        ss_free(dcpath);
        ss_free(vrank);
        ss_free(dcrank);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (int i = 0; i < n; i++)
        vloop[i] = dcpath[i] = i;
    ss_status st = SS_OK;
    for (int i = 0; i < sv->n_elem && st == SS_OK; i++) {
        const element *e = &sv->elem[i];
        if (elem_is(e, DEV_FIXES_VOLTAGE)) { /* a loop of these has no DC solution */
            int a = e->node[0], b = e->node[1];
            if (uf_find(vloop, a) == uf_find(vloop, b))
                st = err_set(err, SS_ERR_SINGULAR, e->file, e->line,
                             "%s: closes a loop of voltage sources and inductors between nodes "
                             "'%s' and '%s' (the loop's current is undetermined at DC)",
                             e->name, sv->node_name[a], sv->node_name[b]);
            uf_union(vloop, vrank, a, b);
        }
        for (int k = 0; k < e->ops->n_dc_pairs; k++) /* the terminals that conduct at DC */
            uf_union(dcpath, dcrank, e->node[e->ops->dc_pairs[k][0]],
                     e->node[e->ops->dc_pairs[k][1]]);
    }
    int ground = uf_find(dcpath, 0);
    for (int node = 1; node < n && st == SS_OK; node++) {
        if (sv->node_internal[node] || uf_find(dcpath, node) == ground)
            continue;
        /* name an element on the node for the location (the parser refuses a netlist node
         * that no element connects to, naming the X line that brought it in, so there is one) */
        const element *on = NULL;
        for (int i = 0; i < sv->n_elem && !on; i++)
            for (int k = 0; k < sv->elem[i].n_node; k++)
                if (sv->elem[i].node[k] == node)
                    on = &sv->elem[i];
        st = err_set(err, SS_ERR_SINGULAR, on ? on->file : sv->ckt->file, on ? on->line : 0,
                     "node '%s' has no DC path to ground (it connects only through "
                     "capacitors, current sources or controlling inputs%s%s)",
                     sv->node_name[node], on ? "; see " : "", on ? on->name : "");
    }
    ss_free(vloop);
    ss_free(dcpath);
    ss_free(vrank);
    ss_free(dcrank);
    return st;
}

double analysis_vt(const ss_solver *sv)
{
    return thermal_voltage_v(sv->temp_c + SS_ZERO_C_IN_K);
}

ss_status analysis_apply_temp(ss_solver *sv, ss_error *err)
{
    double temp_k = sv->temp_c + SS_ZERO_C_IN_K;
    /* only the elements with a temperature law (listed in prepare), not every resistor */
    for (int k = 0; k < sv->n_temp_elems; k++) {
        element *e = &sv->elem[sv->temp_elems[k]];
        char why[200];
        if (e->ops->temp(e, temp_k, e->tp, why, sizeof why) != 0)
            return solver_temp_error(sv, e, why, err);
    }
    sv->temp_applied_k = temp_k;
    return SS_OK;
}

static int probe_node(void *owner, const element *e, const char *suffix)
{
    (void)owner, (void)e, (void)suffix;
    return -2;
}

static int probe_branch(void *owner)
{
    (void)owner;
    return 0;
}

static int probe_claim(void *owner, int row, int col)
{
    (void)owner;
    return row < 0 || col < 0 ? -1 : 0;
}

/* 1 when an element's setup or claims at the present values would make another layout than
 * it has: other internal nodes (a series resistance set to or from zero) or other matrix
 * entries (a model parameter that adds the entries of a term only some cards use, such as the
 * BJT's varying base resistance, its external CJC part or its substrate capacitance). */
static int structure_changed(const ss_solver *sv)
{
    dev_setup_ctx pc = {NULL, probe_node, probe_branch, probe_claim, 0};
    int probe_slot[ELEM_MAX_SLOTS];
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (!elem_has_model(e))
            continue;
        element probe = *e;
        if (e->ops->setup) {
            e->ops->setup(&probe, &pc);
            for (int k = 0; k < 3; k++)
                if ((probe.inode[k] == -2) != (e->inode[k] != e->node[k]))
                    return 1;
        }
        /* the same internal nodes: which slots the claims fill now */
        probe = *e;
        probe.slot = probe_slot;
        e->ops->claim(&probe, sv->elem, &pc);
        for (int k = 0; k < e->n_slot; k++)
            if ((probe_slot[k] >= 0) != (e->slot[k] >= 0))
                return 1;
    }
    return 0;
}

ss_status solver_prepare(ss_solver *sv, ss_error *err)
{
    ss_status st = solver_sync_values(sv, err);
    if (st != SS_OK)
        return st;
    int recheck = sv->recheck_structure;
    sv->recheck_structure = 0;
    if (sv->prepared && (!recheck || !structure_changed(sv)))
        return SS_OK;
    if (sv->prepared)
        solver_unprepare(sv);
    st = check_topology(sv, err);
    if (st != SS_OK)
        return st;
    setup_owner so = {sv, 0, 0};
    dev_setup_ctx sc = {&so, cb_new_node, cb_new_branch, cb_claim, 0};
    int n_temp = 0;
    size_t n_slots = 0;
    for (int i = 0; i < sv->n_elem; i++) {
        element *e = &sv->elem[i];
        e->branch = sv->ckt->elem[i].branch; /* as parsed: setup numbers the branches */
        if (elem_has_model(e)) { /* only they keep parameters and Newton state */
            e->state = arena_alloc(&sv->arena, ELEM_MAX_STATE * sizeof *e->state);
            e->tp = arena_alloc(&sv->arena, MODEL_MAX_PARAMS * sizeof *e->tp);
            if (!e->state || !e->tp)
                return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
        }
        e->inode[0] = e->node[0];
        e->inode[1] = e->node[1];
        e->inode[2] = e->node[2];
        if (e->ops->setup)
            e->ops->setup(e, &sc);
        n_temp += e->ops->temp != NULL;
        n_slots += (size_t)e->ops->n_slot;
    }
    if (so.failed)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    sv->temp_elems = arena_alloc(&sv->arena, (size_t)(n_temp ? n_temp : 1) * sizeof(int));
    if (!sv->temp_elems)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int n_node_unknowns = sv->n_nodes - 1;
    sv->n_temp_elems = 0;
    for (int i = 0; i < sv->n_elem; i++) {
        element *e = &sv->elem[i];
        if (e->branch >= 0)
            e->branch += n_node_unknowns;
        if (e->ops->temp)
            sv->temp_elems[sv->n_temp_elems++] = i;
    }
    sv->n_branches = so.n_branches;
    sv->n_unknowns = n_node_unknowns + so.n_branches;
    if (sv->n_unknowns <= 0)
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0, "the circuit has no nodes besides ground");
    size_t n = (size_t)sv->n_unknowns;
    sv->mna = mna_create(sv->n_unknowns);
    sv->x_op = ss_alloc(n * sizeof *sv->x_op);
    sv->work_rhs = ss_alloc(n * sizeof *sv->work_rhs);
    sv->work_x = ss_alloc(n * sizeof *sv->work_x);
    sv->x_refine = ss_alloc(n * sizeof *sv->x_refine);
    sv->work_esc = ss_alloc(2 * n * sizeof *sv->work_esc);
    sv->work_bytes = ss_alloc(n);
    sv->work_zrhs = ss_alloc(n * sizeof *sv->work_zrhs);
    sv->work_zx = ss_alloc(n * sizeof *sv->work_zx);
    if (!sv->mna || !sv->x_op || !sv->work_rhs || !sv->work_x || !sv->x_refine ||
        !sv->work_esc || !sv->work_bytes || !sv->work_zrhs || !sv->work_zx)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    /* every element's slots in one block, each kind claiming its fixed number */
    int *slot_block = arena_alloc_raw(&sv->arena, (n_slots ? n_slots : 1) * sizeof(int),
                                      _Alignof(int));
    int *slots = slot_block;
    if (!slots || mna_reserve_claims(sv->mna, n_slots + n) != 0)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    for (int i = 0; i < sv->n_elem; i++) {
        element *e = &sv->elem[i];
        assert(e->ops->n_slot <= ELEM_MAX_SLOTS);
        e->slot = slots;
        e->n_slot = (unsigned char)e->ops->n_slot;
        slots += e->n_slot;
        e->ops->claim(e, sv->elem, &sc);
    }
    if (mna_claim_failed(sv->mna))
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    int bad = -1;
    st = mna_finalize(sv->mna, &bad);
    if (st == SS_ERR_SINGULAR)
        return report_singular(sv, bad, "setting up", err);
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "matrix setup failed: %s", ss_status_name(st));
    for (size_t k = 0; k < n_slots; k++) /* claim ids to value slots */
        slot_block[k] = mna_slot(sv->mna, slot_block[k]);
    mna_release_claims(sv->mna);
    sv->prepared = 1;
    return SS_OK;
}

ss_status report_singular(ss_solver *sv, int bad_unknown, const char *during, ss_error *err)
{
    char what[1200] = "an unknown";
    if (bad_unknown >= 0 && bad_unknown < sv->n_unknowns)
        solver_unknown_name(sv, bad_unknown, what, sizeof what);
    return err_set(err, SS_ERR_SINGULAR, sv->ckt->file, 0,
                   "the circuit matrix is singular at %s while %s: check for a floating node, a "
                   "loop of voltage sources or a controlled source that cancels itself",
                   what, during);
}
