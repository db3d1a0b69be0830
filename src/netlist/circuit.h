/* The circuit as parsed: nodes, elements, models, analyses and options, plus the solver state
 * that analyses attach to it. Shared by every module; filled by the parser. */
#ifndef SS_CIRCUIT_H
#define SS_CIRCUIT_H

#include "util/util.h"

struct dev_ops;
struct mna;

#define MODEL_MAX_PARAMS 48

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
    int inode[3]; /* internal nodes made by setup (BJT c' b' e', diode anode', MOSFET d' g s');
                   0 = none */
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
    /* what only some kinds have, overlaid (128 bytes per element in all): read these only
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
        struct { /* D, Q, M */
            const model *mod;
            double area;
            double w_m, l_m; /* M: channel width and length */
        };
    };
    /* tp and state live in the circuit's arena, sized once in analysis_prepare (tp:
     * MODEL_MAX_PARAMS doubles, state: ELEM_MAX_STATE doubles); slot holds exactly n_slot ints
     * (claim() may write up to ELEM_MAX_SLOTS) */
} element;

/* A warning the parser raised (the circuit keeps it, read-only; every solver context made from
 * the circuit starts with these): the text ("FILE:LINE: ... [CHECK]"), the stable name of what
 * raised it (a check of `check --strict`, "model_extras") and the model or element it names. */
typedef struct ckt_warning {
    const char *text, *check, *subject;
} ckt_warning;

/* Per warning, when the lint raised it (analysis/lint.c): its check (enum lint_check; -1 for
 * any other warning) and the element or node it names; for a warning of the parser (check -1),
 * `named` is the name of its check (ckt_warning.check), NULL for any other warning. */
struct warning_lint {
    int check;
    const char *subject;
    const char *named;
};

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

/* The expression tape: every value the parser computed from an {expression}, in the order it
 * computed them, with where the result went. A solver context replays it when a value it
 * depends on changes (src/solver/values.c), so a changed .param reaches every element, model
 * parameter and subcircuit parameter written in its terms without reading the text again. */
enum tape_target {
    TAPE_ELEM = 1, /* a double inside element `index`, at byte offset `field` */
    TAPE_MODEL,    /* parameter `field` of model `index` */
    TAPE_SCOPE,    /* subcircuit-instance parameter slot `field` (expr_tape.slot_name) */
    TAPE_STAGE_LOAD, /* the stage's load (.stage load=): a context's own request */
    TAPE_FIXED     /* an analysis setting, option or waveform value: fixed after parsing */
};
typedef struct tape_entry {
    const char *text; /* the expression as written ({braces} optional) */
    const char *file;
    int line;
    int scope;            /* the scope it is evaluated in: -1 the globals only */
    unsigned char target; /* enum tape_target */
    int index, field;
    double nominal; /* the value at parse time (what a TAPE_FIXED value must keep) */
} tape_entry;
typedef struct tape_scope {
    int first, n; /* its parameter slots: first .. first+n-1 */
} tape_scope;
typedef struct expr_tape {
    tape_entry *entry;
    int n_entry, cap_entry;
    tape_scope *scope;
    int n_scope, cap_scope;
    const char **slot_name; /* per slot, the parameter's name */
    int n_slot, cap_slot;
} expr_tape;

/* A global .param as written (its text replaced by a --set one), with its value at parse. */
typedef struct global_param {
    const char *name, *text, *file;
    int line;
    int from_set;
    double value;
} global_param;

/* The analysis requests, one struct per analysis, each with the line that asked for it. */
typedef struct ac_spec {
    int want;
    enum ac_sweep_type type;
    int points;
    double fstart_hz, fstop_hz;
    const char *file;
    int line;
} ac_spec;

typedef struct dc_spec {
    int n; /* 0, 1 or 2 nested sweeps */
    dc_sweep_spec sweep[2];
} dc_spec;

/* .tran TSTEP TSTOP [TSTART] (analysis/tran.c); .options tran_method, tran_tol_rel,
 * tran_tol_v */
typedef struct tran_spec {
    int want;
    double step_s, stop_s, start_s;
    const char *file;
    int line;
    int method; /* 0 trapezoidal, 1 second-order backward difference (gear2) */
    double tol_rel, tol_v;
} tran_spec;

typedef struct stage_spec {
    const char *in, *out; /* input source, output node; in NULL: no stage request */
    double load_ohm;
    const char *file;
    int line;
} stage_spec;

/* .noise v(OUT) SRC [rs=RNAME] [band=F1..F2] [per_decade=N] [weight=a]: the output node, the
 * input source and the resistor whose thermal noise is the noise figure's reference (NULL: the
 * one found in series with SRC, if any); checked after parsing. band_lo_hz 0: no band of its
 * own (the noise runs over the .ac frequencies); per_decade 0: the default (docs/noise.md);
 * weight NOISE_WEIGHT_NONE or NOISE_WEIGHT_A. */
enum { NOISE_WEIGHT_NONE = 0, NOISE_WEIGHT_A = 1 };
#define NOISE_BAND_MAX_RATIO 1e15 /* a band spans at most 15 decades */
#define NOISE_MAX_PER_DECADE 10000
#define NOISE_DEFAULT_PER_DECADE 100
#define NOISE_BAND_MAX_POINTS 1000000
typedef struct noise_spec {
    int want;
    const char *out, *src, *rs;
    double band_lo_hz, band_hi_hz;
    int per_decade;
    int weight;
    const char *file;
    int line;
} noise_spec;

/* .large_signal freq= amp= thd_target_pct= (analysis/thd.c) */
typedef struct large_signal_spec {
    int want;
    double freq_hz, amp, thd_target_pct; /* 0 / NaN when not given */
} large_signal_spec;

/* The circuit as parsed, read-only afterwards: solver contexts (src/solver) are made from it
 * and own everything that changes. */
struct ss_circuit {
    ss_arena arena;
    const char *title;
    const char *file; /* top-level netlist name, for messages */

    /* nodes: 0 is ground, then the netlist's in order of first use (internal nodes belong to
     * each solver context) */
    const char **node_name;
    unsigned char *node_internal; /* all 0 here; kept for the parser's checks */
    int n_nodes, cap_nodes;
    int n_netlist_nodes; /* nodes 1 .. n_netlist_nodes */
    ss_strmap node_map;

    element *elem; /* nominal values; the solver-only fields stay zero */
    int n_elem, cap_elem;
    ss_strmap elem_map;

    model **models;
    int n_models, cap_models;
    ss_strmap model_map;

    ss_options_set opt;
    double temp_c;

    /* analyses */
    int want_op;
    dc_spec dc;
    ac_spec ac;
    tran_spec tran;
    stage_spec stage;
    noise_spec noise;
    large_signal_spec ls;
    /* study directives kept as text for src/study and src/design: .expect (limits),
     * .tolerance, .choose (a free value for refine) */
    struct study_line {
        const char *file;
        int line;
        const char *text; /* the line after the directive word, lower case */
        int is_tolerance;
        int is_choice;
    } *study_lines;
    int n_study_lines;
    /* global .param definitions and values as evaluated (after --set) */
    global_param *params;
    int n_params;
    expr_tape tape;

    /* the files read, the netlist first, then each .include as read, with the SHA-256 of the
     * bytes parsed (ss_circuit_input; a run's manifest records them) */
    struct ckt_input {
        const char *path;
        char sha256[65];
    } *inputs;
    int n_inputs;
    /* bit k set: lint check k silenced by `.options lint_off=NAME,...` */
    unsigned lint_off;
    /* the parser's warnings (fields of a .model card ignored under .options model_extras=warn),
     * in the order raised; strings in the arena */
    ckt_warning *warnings;
    int n_warnings;
};


/* Adds a parse-time warning (text copied to the arena; check and subject kept as given, they
 * must live as long as the circuit). 0 ok, -1 no memory. */
SS_HIDDEN int circuit_warn(struct ss_circuit *ckt, const char *check, const char *subject,
                           const char *text);

/* Unknown index of a node: ground is -1 (its row and column are dropped). */
static inline int node_unknown(int node_idx) { return node_idx - 1; }

/* Every model's parameters scaled to temp_c (area 1): SS_ERR_INPUT at the first model card
 * whose scaled parameters leave their range, naming the parameter, temperature and value. */
/* Model m's parameters inside the ranges its kind's table states: 0, or -1 with the message
 * ("model 'qn': bf must be positive, got 0") in msg. */
SS_HIDDEN int model_range_check(const model *m, char *msg, size_t msg_len);
/* The same for models[0 .. n_models-1] (a solver context's copies). */
SS_HIDDEN ss_status models_check_temp(model *const *models, int n_models, double temp_c,
                                      ss_error *err);
SS_HIDDEN ss_status circuit_check_temp(const struct ss_circuit *ckt, double temp_c,
                                       ss_error *err);
/* The stage's input source and output node checked and found: their names as the circuit
 * keeps them. SS_ERR_INPUT when the source is no independent source or the node is ground or
 * none of the circuit's. */
SS_HIDDEN ss_status circuit_stage_names(const struct ss_circuit *ckt, const char *in_source,
                                        const char *out_node, const char **in_name,
                                        const char **out_name, ss_error *err);
SS_HIDDEN int circuit_find_node(const struct ss_circuit *ckt, const char *name);
SS_HIDDEN int circuit_find_elem(const struct ss_circuit *ckt, const char *name);
/* Adds a node (name copied to the arena); returns its index or -1 on allocation failure. */
SS_HIDDEN int circuit_add_node(struct ss_circuit *ckt, const char *name, int internal);
/* The same with a name that already lives in the circuit's arena (not copied). */
SS_HIDDEN int circuit_add_node_borrowed(struct ss_circuit *ckt, const char *name, int internal);

#endif
