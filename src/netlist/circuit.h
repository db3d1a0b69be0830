/* The circuit as parsed: nodes, elements, models, analyses and options, plus the solver state
 * that analyses attach to it. Shared by every module; filled by the parser. */
#ifndef SS_CIRCUIT_H
#define SS_CIRCUIT_H

#include "util/util.h"

struct dev_ops;
struct mna;

#define MODEL_MAX_PARAMS 40

typedef struct model {
    const char *name;
    const struct dev_ops *ops; /* the kind whose model this is */
    int type;                  /* its index in ops->model_types (a BJT's polarity) */
    const char *file;
    int line;
    double p[MODEL_MAX_PARAMS];
    unsigned char given[MODEL_MAX_PARAMS];
} model;

#define ELEM_MAX_NODES 4
#define ELEM_MAX_SLOTS 40
#define ELEM_MAX_STATE 8

typedef struct element {
    /* the fields the Newton, AC and transient loops read first, together */
    const struct dev_ops *ops;
    int *slot;     /* matrix value slots (claim ids until mna_finalize); n_slot of them */
    double *state; /* device-private Newton state (junction voltages); model devices only */
    double *tp;    /* model parameters adjusted for area and temperature; model devices only */
    double value;  /* R ohm, C farad, L henry, source DC value, controlled-source gain */
    int node[ELEM_MAX_NODES]; /* circuit node indices, 0 is ground */
    int inode[3]; /* internal nodes made by setup (BJT c' b' e', diode anode'); 0 = none */
    int branch;   /* unknown index of the element's own branch current; -1 none */
    /* names and where the element was written */
    const char *name; /* lower case; hierarchical inside subcircuits: x1.q2 */
    const char *file;
    int line;
    unsigned char n_node;
    unsigned char n_slot;
    /* power of ten of the SI suffix written on the main value's token (-3 for `m`, -15 for
     * `f`, 6 for `meg`; 0 for none, `mil` or an {expression}): the lint's suffix checks */
    signed char value_si_exp;
    /* what only some kinds have, overlaid (120 bytes per element in all): read these only
     * through the kind they belong to (elem_is_source / elem_has_model / the F and H files) */
    union {
        struct { /* V, I */
            double ac_mag, ac_phase_deg;
            void *wave; /* time-varying form (struct src_wave, devices/wave.h, arena); NULL none */
        };
        struct {                   /* F, H */
            const char *ctrl_name; /* the controlling voltage source */
            int ctrl_elem;         /* its element index, resolved after parsing */
        };
        struct { /* D, Q */
            const model *mod;
            double area;
        };
    };
    /* tp and state live in the circuit's arena, sized once in analysis_prepare (tp:
     * MODEL_MAX_PARAMS doubles, state: ELEM_MAX_STATE doubles); slot holds exactly n_slot ints
     * (claim() may write up to ELEM_MAX_SLOTS) */
} element;

typedef struct ss_options_set {
    double tol_rel;
    double tol_v;
    double tol_i;
    double gmin;
    int newton_iters;
} ss_options_set;

enum ac_sweep_type { AC_DEC, AC_OCT, AC_LIN };
/* Most frequencies an .ac sweep may have (docs/netlist.md, limits). */
#define AC_MAX_POINTS 1000000
/* Number of frequencies of a sweep of `points` per decade or octave (lin: in all) from f1 to
 * f2 Hz, 0 < f1 <= f2, as a double: it may be astronomically large. The parser's limit and
 * the sweep's own frequency list (ac_frequencies) both count with it. */
SS_HIDDEN double ac_point_count(int type, int points, double f1, double f2);

typedef struct dc_sweep_spec {
    const char *src;
    double start, stop, step;
    const char *file;
    int line;
} dc_sweep_spec;

struct ss_circuit {
    ss_arena arena;
    const char *title;
    const char *file; /* top-level netlist name, for messages */

    /* nodes: 0 is ground; netlist nodes first (in order of first use), then internal ones */
    const char **node_name;
    unsigned char *node_internal;
    int n_nodes, cap_nodes;
    int n_netlist_nodes; /* nodes 1 .. n_netlist_nodes are the netlist's, the rest internal */
    ss_strmap node_map;

    element *elem;
    int n_elem, cap_elem;
    ss_strmap elem_map;

    model **models;
    int n_models, cap_models;
    ss_strmap model_map;

    ss_options_set opt;
    double temp_c;

    /* analyses */
    int want_op;
    int n_dc; /* 0, 1 or 2 nested sweeps */
    dc_sweep_spec dc[2];
    int want_ac;
    enum ac_sweep_type ac_type;
    int ac_points;
    double ac_fstart_hz, ac_fstop_hz;
    int want_tran, want_noise;
    /* .tran TSTEP TSTOP [TSTART] (analysis/tran.c); .options tran_method, tran_tol_rel,
     * tran_tol_v; .large_signal freq= amp= thd_target_pct= (analysis/thd.c) */
    double tran_step_s, tran_stop_s, tran_start_s;
    const char *tran_file;
    int tran_line;
    int tran_method; /* 0 trapezoidal, 1 second-order backward difference (gear2) */
    double tran_tol_rel, tran_tol_v;
    double ls_freq_hz, ls_amp, ls_thd_target_pct; /* 0 / NaN when not given */
    int want_large_signal;
    /* study directives kept as text for src/study: .expect (limits), .tolerance */
    struct study_line {
        const char *file;
        int line;
        const char *text; /* the line after the directive word, lower case */
        int is_tolerance;
    } *study_lines;
    int n_study_lines;
    /* global .param values as evaluated (after --set), for studies and lookups */
    const char **param_name;
    double *param_value;
    int n_params;
    const char *stage_in, *stage_out;
    double stage_load_ohm;
    const char *stage_file;
    int stage_line;
    /* .noise v(OUT) SRC [rs=RNAME] (or ss_circuit_set_noise): the output node, the input
     * source and the resistor whose thermal noise is the noise figure's reference (NULL: the
     * one found in series with SRC, if any); checked after parsing */
    const char *noise_out, *noise_src, *noise_rs;
    const char *noise_file;
    int noise_line;

    /* solver state (analysis module) */
    struct mna *mna;
    int n_branches;
    int n_unknowns;
    int prepared;
    double temp_applied_k;
    int *temp_elems; /* elements with a temperature law (arena), set in prepare */
    int n_temp_elems;
    double *x_op; /* operating point, n_unknowns; valid when have_op */
    int have_op;
    double *work_rhs, *work_x;    /* Newton work vectors, n_unknowns */
    double *x_refine;             /* saved solution during refinement, n_unknowns */
    double *work_esc;             /* unstable-equilibrium escape, 2 n_unknowns */
    unsigned char *work_bytes;    /* n_unknowns bytes (permutation parity) */
    double _Complex *work_zrhs;   /* AC right-hand side, n_unknowns */
    double _Complex *work_zx;     /* AC second solution (output-impedance test) */
    double last_rcond;
    double last_kcl_residual;
    int op_serial; /* incremented by every new operating point */

    /* AC fast path (analysis/ac.c): every device's admittance is G + jwC, so the matrix is
     * A0 + jw A1 with A0, A1 fixed at the operating point; checked once per operating point */
    struct ac_wslot {
        double a0, a1;
        int slot;
    } *ac_w; /* the slots with A1 != 0, the only ones that change with frequency */
    int n_ac_w;
    double _Complex *ac_rhs;
    int ac_serial;   /* op_serial the cache was built for; 0 = none */
    int ac_affine;   /* 1 when the check passed */
    const void *ac_rhs_src;
    int ac_rhs_all_off, ac_rhs_ok;

    /* the nodes whose per-node results are written (ss_circuit_select_nodes): out_nodes[0 ..
     * n_out_nodes-1], node indices; NULL = every netlist node (circuit_out_node) */
    int *out_nodes;
    int n_out_nodes;

    const char **warnings;
    int n_warnings;

    /* the files read, the netlist first, then each .include as read, with the SHA-256 of the
     * bytes parsed (ss_circuit_input; a run's manifest records them) */
    struct ckt_input {
        const char *path;
        char sha256[65];
    } *inputs;
    int n_inputs;
    /* per warning, when the lint raised it (analysis/lint.c): its check (enum lint_check; -1
     * for any other warning) and the element or node it names */
    struct warning_lint {
        int check;
        const char *subject;
    } *warning_lint;
    /* bit k set: lint check k silenced by `.options lint_off=NAME,...` */
    unsigned lint_off;
};

typedef struct ac_wslot ac_wslot;

/* Unknown index of a node: ground is -1 (its row and column are dropped). */
static inline int node_unknown(int node_idx) { return node_idx - 1; }

/* Every model's parameters scaled to temp_c (area 1): SS_ERR_INPUT at the first model card
 * whose scaled parameters leave their range, naming the parameter, temperature and value. */
SS_HIDDEN ss_status circuit_check_temp(const struct ss_circuit *ckt, double temp_c,
                                       ss_error *err);
/* The error for element e whose model, scaled to the circuit temperature, failed: why. */
SS_HIDDEN ss_status circuit_temp_error(const struct ss_circuit *ckt, const element *e,
                                       const char *why, ss_error *err);
SS_HIDDEN void circuit_warn(struct ss_circuit *ckt, const char *fmt, ...)
    __attribute__((format(printf, 2, 3)));
/* A warning of lint check `check` naming `subject` (an element or node name that outlives
 * the circuit). 0 added or already there, -1 no memory. */
SS_HIDDEN int circuit_warn_lint(struct ss_circuit *ckt, int check, const char *subject,
                                const char *fmt, ...) __attribute__((format(printf, 4, 5)));
SS_HIDDEN int circuit_find_node(const struct ss_circuit *ckt, const char *name);
SS_HIDDEN int circuit_find_elem(const struct ss_circuit *ckt, const char *name);
/* Adds a node (name copied to the arena); returns its index or -1 on allocation failure. */
SS_HIDDEN int circuit_add_node(struct ss_circuit *ckt, const char *name, int internal);
/* The same with a name that already lives in the circuit's arena (not copied). */
SS_HIDDEN int circuit_add_node_borrowed(struct ss_circuit *ckt, const char *name, int internal);
/* The nodes whose per-node results are written, in order: the selection, or every netlist
 * node. Netlist nodes are 1 .. n (their count); internal nodes are numbered after them. */
static inline int circuit_n_out_nodes(const struct ss_circuit *ckt)
{
    return ckt->out_nodes ? ckt->n_out_nodes : ckt->n_netlist_nodes;
}
static inline int circuit_out_node(const struct ss_circuit *ckt, int k)
{
    return ckt->out_nodes ? ckt->out_nodes[k] : k + 1;
}
/* Name of an MNA unknown for messages: "node 'vb'" or "branch current of 'v1'". */
SS_HIDDEN void circuit_unknown_name(const struct ss_circuit *ckt, int unknown, char *buf,
                                    size_t len);

#endif
