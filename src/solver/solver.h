/* A solver context: everything that changes while a parsed circuit is solved. The circuit
 * (netlist/circuit.h) is read-only after parsing; a context made from it owns the current
 * element and model values (its own copies, changed by name through the values calls),
 * the temperature, the analysis requests a caller may change (stage, noise, large signal,
 * written nodes), the internal nodes, the MNA pattern and KLU objects, the operating point,
 * the work vectors and the AC cache. Several contexts of one circuit run in parallel threads:
 * none writes the circuit. */
#ifndef SS_SOLVER_H
#define SS_SOLVER_H

#include "netlist/circuit.h"

struct mna;

struct ss_solver {
    const struct ss_circuit *ckt;
    ss_arena arena; /* internal node names, device state, parameter and slot blocks */

    /* values: copies of the circuit's elements and models (the fields the parser filled are
     * the nominal values; the solver-only fields -- slots, state, internal nodes, branch --
     * are this context's), the global parameters' current values */
    element *elem;
    int n_elem;
    model **models;    /* copies of the circuit's models; elem[i].mod points to these */
    double *param_val; /* per global parameter */
    double *slot_val;  /* per subcircuit-parameter slot (expr_tape) */
    unsigned char *param_pin, *elem_pin, *model_pin; /* set by name (model: per parameter) */
    unsigned char *param_state;                      /* replay: 0 todo, 1 busy, 2 done */
    int values_dirty; /* a value was set: replay the tape before the next analysis */
    int n_pins;
    int fixed_conflict; /* the last replay failed on a value fixed after parsing */
    int recheck_structure; /* values changed: the next prepare checks the internal nodes */
    int load_set;          /* the stage's load was named on the context (ss_solver_set_load) */
    double temp_c;
    /* per element, its own model parameters (INSTANCE.PARAM, values.c): NULL until one of the
     * element's is set by name; kept (inactive) across resets, so a study allocates once */
    struct inst_model **inst;

    /* requests a caller may change per context */
    stage_spec stage;
    noise_spec noise;
    large_signal_spec ls;
    int *out_nodes; /* the nodes whose per-node results are written; NULL every netlist node */
    int n_out_nodes;
    /* what the report shows of the last stage run beyond stage_summary.csv (analysis/stage.c,
     * stage_own_zout): for the load comparison the element
     * drawn in the netlist as the named load + 1 (0: none found), and the mid-band output
     * impedance of the stage without it (ohm; the solved Zout when none was found) */
    int stage_load_elem1;
    double stage_zout_own_ohm;
    double stage_phase_mid_deg; /* the gain's phase at mid-band, (-180, 180] */
    int *dc_devices; /* the elements whose op.csv rows join the DC sweep's table; NULL none */
    int n_dc_devices;

    /* nodes: the circuit's, then the internal ones setup adds */
    const char **node_name;
    unsigned char *node_internal;
    int n_nodes, cap_nodes;

    /* solver state */
    struct mna *mna;
    int n_branches;
    int n_unknowns;
    int prepared;
    double temp_applied_k;
    int *temp_elems; /* elements with a temperature law */
    int n_temp_elems;
    double *x_op; /* operating point, n_unknowns; valid when have_op */
    int have_op;
    double *work_rhs, *work_x;  /* Newton work vectors, n_unknowns */
    double *x_refine;           /* saved solution during refinement, n_unknowns */
    double *work_esc;           /* unstable-equilibrium escape, 2 n_unknowns */
    unsigned char *work_bytes;  /* n_unknowns bytes (permutation parity) */
    double _Complex *work_zrhs; /* AC right-hand side, n_unknowns */
    double _Complex *work_zx;   /* AC second solution (output-impedance test) */
    double last_rcond;
    double last_kcl_residual;
    int op_serial; /* incremented by every new operating point */

    /* AC fast path (analysis/ac.c): every device's admittance is G + jwC, so the matrix is
     * A0 + jw A1 with A0, A1 fixed at the operating point; checked once per operating point */
    struct ac_wslot *ac_w; /* the slots with A1 != 0, the only ones that change with frequency */
    int n_ac_w;
    double _Complex *ac_rhs;
    int ac_serial; /* op_serial the cache was built for; 0 = none */
    int ac_affine; /* 1 when the check passed */
    const void *ac_rhs_src;
    int ac_rhs_all_off, ac_rhs_ok;

    /* the circuit's warnings, then the ones the analyses raised */
    const char **warnings;
    struct warning_lint *warning_lint;
    int n_warnings;
};

/* An element's own copy of its model: the shared model's values (as replayed) with the
 * parameters set on this instance by name in their place. While active, the element's mod
 * points to m. */
typedef struct inst_model {
    model m;
    const model *shared; /* the context's copy of the element's model card */
    double val[MODEL_MAX_PARAMS];
    unsigned char pin[MODEL_MAX_PARAMS];
    int active;
} inst_model;

struct ac_wslot {
    double a0, a1;
    int slot;
};
typedef struct ac_wslot ac_wslot;

/* The operating point and everything derived from it are stale (a value, the temperature or a
 * source changed): the one call that says so. */
SS_HIDDEN void solver_lost_op(ss_solver *sv);
/* The AC cache alone is stale (a capacitance or source changed; the operating point holds). */
SS_HIDDEN void solver_lost_ac(ss_solver *sv);
/* Replays the values set by name since the last analysis (values.c); the next analysis calls
 * it through solver_prepare. */
SS_HIDDEN ss_status solver_sync_values(ss_solver *sv, ss_error *err);
/* Values synced, internal nodes, branches, pattern and symbolic analysis built (once, or again
 * when a changed model parameter adds or removes an internal node). */
SS_HIDDEN ss_status solver_prepare(ss_solver *sv, ss_error *err);
/* Frees the structure (nodes past the netlist's, matrix, vectors) so the next prepare
 * rebuilds it. */
SS_HIDDEN void solver_unprepare(ss_solver *sv);

/* Adds internal node `name` (kept, not copied); its index, or -1 out of memory. */
SS_HIDDEN int solver_add_node(ss_solver *sv, const char *name);
/* Every model of the context scaled to its temperature: SS_ERR_INPUT naming the first whose
 * scaled parameters leave their range. */
SS_HIDDEN ss_status solver_check_temp(const ss_solver *sv, ss_error *err);
SS_HIDDEN void solver_warn(ss_solver *sv, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* A warning of lint check `check` naming `subject`. 0 added or already there, -1 no memory. */
SS_HIDDEN int solver_warn_lint(ss_solver *sv, int check, const char *subject, const char *fmt,
                               ...) __attribute__((format(printf, 4, 5)));
/* Name of an MNA unknown for messages: "node 'vb'" or "branch current of 'v1'". */
SS_HIDDEN void solver_unknown_name(const ss_solver *sv, int unknown, char *buf, size_t len);
/* The nodes whose per-node results are written, in order: the selection, or every netlist
 * node. */
static inline int solver_n_out_nodes(const ss_solver *sv)
{
    return sv->out_nodes ? sv->n_out_nodes : sv->ckt->n_netlist_nodes;
}
static inline int solver_out_node(const ss_solver *sv, int k)
{
    return sv->out_nodes ? sv->out_nodes[k] : k + 1;
}
/* How many op.csv rows element e has (its kind's report rows and its power row): the columns
 * it adds to the DC sweep's table when selected (ss_solver_select_devices). */
SS_HIDDEN int solver_device_n_rows(const element *e);
/* The error for element e whose model, scaled to the context's temperature, failed: why. */
SS_HIDDEN ss_status solver_temp_error(const ss_solver *sv, const element *e, const char *why,
                                      ss_error *err);

#endif
