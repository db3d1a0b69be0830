/* Device operations table: each device kind lives in one file and exports one ops table;
 * the solver only calls through these. Matrix storage itself is left to src/mna. */
#ifndef SS_DEVICE_H
#define SS_DEVICE_H

#include <complex.h>
#include <math.h>

#include "netlist/circuit.h"
#include "netlist/netlist.h"

/* the imaginary unit as a double complex (complex.h's I is a float constant) */
#define SS_J ((double complex)I)

/* Setup: create internal nodes and branch currents, then claim matrix slots. */
typedef struct dev_setup_ctx {
    void *owner;
    int (*new_node)(void *owner, const element *e, const char *suffix); /* node idx; -1 OOM */
    int (*new_branch)(void *owner);                                      /* local branch no. */
    int (*claim)(void *owner, int row_unknown, int col_unknown);         /* claim id; -1 ground */
    int failed; /* set by the callbacks on allocation failure */
} dev_setup_ctx;

enum load_mode {
    LOAD_NORMAL = 0, /* limit junction voltages against the last ones used */
    LOAD_INIT_JUNCTION,  /* first iteration from nothing: junctions start near conduction */
    LOAD_FROM_X          /* first iteration of a continuation: take voltages from x as they are */
};

/* One independent source's value in a solve, instead of its DC value: a .dc sweep point, a
 * transient time point, the quasi-static transfer's input. */
typedef struct dev_src_value {
    const element *elem;
    double value; /* V or A */
} dev_src_value;

/* Where the independent sources stand in a solve: each at its DC value (e->value) except the
 * n_set listed in set (the first entry for an element wins). The element values themselves
 * are never written for a solve, so a sweep or a transient leaves nothing to restore. */
typedef struct dev_src_drive {
    const dev_src_value *set;
    int n_set;
} dev_src_drive;

typedef struct dev_load_ctx {
    double *G;          /* real matrix values, indexed by slot */
    double *rhs;        /* right-hand side, indexed by unknown */
    const double *x;    /* present solution, indexed by unknown */
    double gmin_s;      /* junction gmin */
    double src_scale;   /* independent sources are multiplied by this (source stepping) */
    double vt_v;        /* thermal voltage at the circuit temperature */
    enum load_mode mode;
    int limited;        /* set when a device limited a junction voltage */
    const element *ckt_elem; /* the circuit's element array (controlled sources' controls) */
    const dev_src_drive *drive; /* the sources' present values; NULL: every one at its DC value */
} dev_load_ctx;

/* The present value of independent source e in the solve lc describes (before src_scale): its
 * entry in lc->drive, else its DC value. The V and I sources read their value only through
 * this, as they read their AC phasor through source_ac_phasor. */
static inline double source_value(const element *e, const dev_load_ctx *lc)
{
    const dev_src_drive *d = lc->drive;
    for (int k = 0; d && k < d->n_set; k++)
        if (d->set[k].elem == e)
            return d->set[k].value;
    return e->value;
}

typedef struct dev_ac_ctx {
    double complex *G;   /* complex matrix values, indexed by slot */
    double complex *rhs; /* indexed by unknown */
    const double *x_op;  /* operating point */
    double omega;        /* rad/s */
    double vt_v;
    double gmin_s;
    const element *only_src; /* when set, this source has AC 1 and all others AC 0 */
    int all_src_off;         /* every independent source AC 0 (output-impedance test) */
} dev_ac_ctx;

/* One row of op.csv: quantity name (e.g. "ic") applied to the element name. */
typedef void (*dev_report_fn)(void *sink, const char *quantity, const char *elem_name,
                              double value);


/* Noise: one independent noise current source of an element at the operating point, sitting
 * between circuit nodes a and b (0 is ground; internal nodes included). Its current's power
 * spectral density is white_a2_per_hz + flicker_a2 / f (A^2/Hz, f in Hz); the noise analysis
 * (src/analysis/noise.c) takes it from there. Sources of different entries are uncorrelated. */
typedef struct dev_noise_src {
    int node_a, node_b;
    double white_a2_per_hz; /* frequency-independent part, A^2/Hz */
    double flicker_a2;      /* 1/f part: PSD flicker_a2 / f, so A^2/Hz at 1 Hz */
    const char *what;       /* static text: "thermal", "collector shot", "rb thermal", ... */
} dev_noise_src;

/* The most noise sources one element reports (a BJT: rb, re, rc thermal, collector shot,
 * base shot, flicker). */
#define DEV_MAX_NOISE_SRC 8

typedef struct dev_noise_ctx {
    const double *x_op; /* operating point */
    double temp_k;      /* circuit temperature */
    double vt_v;        /* k T / q at temp_k */
    double gmin_s;      /* junction gmin (a numerical aid: noiseless) */
} dev_noise_ctx;

/* Transient (src/analysis/tran.c, docs/transient.md): an element with stored charge keeps
 * n_charge charges (a capacitor's charge, junction depletion and diffusion charges) or fluxes
 * (an inductor's). load_tran evaluates each q_k at the present bias into q[k]; the integrator
 * turns charge k into the current i_k = a0 q_k + hist[k] (trapezoidal, gear2 or backward-Euler
 * coefficients: the device need not know which) and the device stamps it linearised, a0 dq/dv
 * as conductances and the remainder as a current, like load_dc's companion. Called right after
 * every element's load_dc in the same Newton iteration, so a junction device takes its
 * (limited) junction voltages from e->state as load_dc left them. With G NULL it only writes
 * q[] at the voltages of x (no limiting): the charges of an accepted solution. */
typedef struct dev_tran_ctx {
    double *G;          /* real matrix values, indexed by slot; NULL: evaluate q[] only */
    double *rhs;        /* indexed by unknown */
    const double *x;    /* present solution, indexed by unknown */
    double vt_v;        /* thermal voltage at the circuit temperature */
    double a0;          /* 1/s: weight of the new charge in i = a0 q + hist */
    const double *hist; /* this element's n_charge history terms (A; V for a flux) */
    double *q;          /* out: this element's n_charge charges (C) or fluxes (Wb) */
} dev_tran_ctx;

/* One model parameter: its published name and default, the range the equations need, its unit
 * and where it is used. Parsing (unknown names), the card's checks, --set, tolerances and the
 * parameter tables of docs/models.md are all driven by these tables. */
enum {
    DMP_MIN_OPEN = 1u << 0,  /* value > min (else >= min) */
    DMP_MAX_OPEN = 1u << 1,  /* value < max (else <= max) */
    DMP_ZERO_INF = 1u << 2,  /* 0 on a card means infinite (VAF, IKF, ...) */
    DMP_CORNER = 1u << 3,    /* a parameter the spread/temperature corners spread: halved and
                                doubled when it has no tolerance (BF, BETA, KP) */
    DMP_CELSIUS = 1u << 4,   /* a temperature in degrees C (TNOM) */
    /* with DMP_CORNER: spread by +-50 % of its magnitude instead (a threshold: VTO) */
    DMP_CORNER_SHIFT = 1u << 5,
    /* with DMP_CORNER: a larger value lowers the main current of the kind's first model type
     * (VTO of an N channel); without it a larger value raises it (BF, BETA, KP) */
    DMP_CORNER_LOWERS = 1u << 6,
    /* with DMP_CORNER: the direction flips for the kind's second model type (a P channel's
     * VTO is written in its own sign) */
    DMP_CORNER_POLAR = 1u << 7,
};
/* where a parameter is used (dev_model_param.uses) */
enum {
    DMP_USE_DC = 1u << 0,
    DMP_USE_AC = 1u << 1,
    DMP_USE_NOISE = 1u << 2,
    DMP_USE_TRAN = 1u << 3,
    DMP_USE_TEMP = 1u << 4,
};
typedef struct dev_model_param {
    const char *name;
    double def;
    double min, max; /* valid range (flags say open or closed); -HUGE_VAL / HUGE_VAL: none */
    unsigned flags;
    const char *unit; /* "A", "V", "ohm", "F", "s", "eV", "C", "1/V", "" */
    unsigned uses;
    const char *meaning; /* one line, for the docs */
} dev_model_param;

/* What a kind is (dev_ops.flags): the facts code outside src/devices asks of an element, instead
 * of testing its letter. */
enum {
    DEV_SOURCE = 1u << 0,         /* an independent source (V, I): a DC value, an AC phasor, a
                                     waveform; a stage or noise input, a .dc sweep variable */
    DEV_DRIVES_CURRENT = 1u << 1, /* its value is a current (I): input amplitudes in A */
    DEV_FIXES_VOLTAGE = 1u << 2,  /* fixes the voltage between its first two nodes at DC (V, E,
                                     H, L): a loop of such elements has no DC solution */
    DEV_CURRENT_PROBE = 1u << 3,  /* its branch current may control an F or H (V) */
    DEV_RESISTOR = 1u << 4,       /* a plain resistance between its two nodes (R) */
    DEV_CAPACITOR = 1u << 5,      /* a plain capacitance (C): a short as its value grows */
    DEV_INDUCTOR = 1u << 6,       /* a plain inductance (L): an open as its value grows */
    DEV_CONTROLLED = 1u << 7,     /* controlled by another element's branch current (F, H) */
};

/* What the corners (src/study/sensitivity.c, corners.csv) call a transistor kind's extremes
 * and operating point: the word of the row labels ("beta": "q1 beta low, 85 C") and the
 * columns of its main current and voltage ("ic_a", "vce_v"); the column of the flag is the
 * kind's amplifying_region with '_' for ' ' ("forward_active"). */
typedef struct dev_corner_names {
    const char *extreme;
    const char *current_col, *voltage_col;
} dev_corner_names;

/* A transistor-like element's operating point in the terms the corners, the report and the
 * sanity checks share (dev_ops.op_point). */
typedef struct dev_op_point {
    double i_a;         /* the main current into the main terminal (Ic, Id), A */
    double v_v;         /* the main voltage (Vce, Vds), V */
    const char *region; /* "forward active", "saturation", ... (static text) */
    int amplifying;     /* 1 in the region an amplifying stage works in */
    char detail[128];   /* the terminal voltages and current in the kind's own terms */
} dev_op_point;

enum { VALUE_ANY = 0, VALUE_POSITIVE, VALUE_NONNEG };

/* the single pair of two-terminal kinds that conduct at DC (common.c) */
SS_HIDDEN extern const unsigned char DC_PAIR_AB[1][2];

typedef struct dev_ops {
    char letter;
    const char *kind_name;
    unsigned flags; /* DEV_ facts */
    /* the terminal pairs that conduct at DC (a DC path to ground runs through them) */
    const unsigned char (*dc_pairs)[2];
    int n_dc_pairs;
    /* parse the element line (tokens via pctx); fill e. 0 ok, -1 error set */
    int (*parse)(pctx *p, element *e);
    /* internal nodes and branches; NULL when none */
    void (*setup)(element *e, dev_setup_ctx *sc);
    /* claim matrix slots into e->slot (after all branches are numbered); elems: every element
     * of the context (a controlled source reads its control's branch) */
    void (*claim)(element *e, const element *elems, dev_setup_ctx *sc);
    /* how many slots claim() fills (e->n_slot; at most ELEM_MAX_SLOTS) */
    int n_slot;
    /* temperature and area adjustment of the model parameters into tp[MODEL_MAX_PARAMS] (e->tp
     * when solving); NULL when none. 0 ok; -1 when a scaled parameter is not finite or leaves
     * its range, with what happened written into why ("bf becomes inf (it must stay finite
     * and > 0)") */
    int (*temp)(const element *e, double temp_k, double *tp, char *why, size_t why_len);
    void (*load_dc)(element *e, dev_load_ctx *lc);
    /* adds the element's terminal currents at x (into the device, from its own equations,
     * not its Newton stamps) to resid[node unknown], and its branch equation's residual to
     * resid[branch]: the independent check of a converged answer */
    void (*kcl)(const element *e, const double *x, const dev_load_ctx *lc, double *resid);
    void (*load_ac)(const element *e, dev_ac_ctx *ac);
    /* 1 when this element's admittance is not G + jwC (a BJT's excess phase, exp(-jw td)),
     * so the AC analysis must load it at every frequency; NULL: always G + jwC */
    int (*ac_not_affine)(const element *e);
    /* op.csv rows at the solution x; NULL when none. With x NULL (no solution yet) it names
     * the same rows with NaN values and reads nothing else: the figures a limit may name */
    void (*report)(const element *e, const double *x, double vt_v, double gmin_s,
                   dev_report_fn fn, void *sink);
    /* the element's noise current sources at the operating point into out[0 ..
     * DEV_MAX_NOISE_SRC-1]; returns how many. NULL for a noiseless element (ideal sources,
     * capacitors, inductors, controlled sources). docs/noise.md has the models. */
    int (*noise)(const element *e, const dev_noise_ctx *nc, dev_noise_src *out);
    /* transient charges (see dev_tran_ctx); NULL and n_charge 0 for an element without */
    void (*load_tran)(element *e, dev_tran_ctx *tc);
    int n_charge;
    /* the main value's name for --set and messages ("resistance"), NULL if none */
    const char *value_name;
    /* what the main value may be: VALUE_ANY, VALUE_POSITIVE (> 0), VALUE_NONNEG (>= 0) */
    int value_range;
    /* the .model types this kind takes, NULL-terminated ({"npn", "pnp", NULL}); NULL when it
     * takes no model. A model's type is its index here (a BJT's polarity). */
    const char *const *model_types;
    const char *model_kind; /* how messages name its models: "a BJT needs a model of ..." */
    /* the model parameter table (NULL when the kind takes no model) */
    const dev_model_param *model_params;
    int n_model_params;
    /* the operating point's main current, voltage and region (transistors); NULL otherwise */
    void (*op_point)(const element *e, const double *x, double vt_v, double gmin_s,
                     dev_op_point *out);
    /* the corners' names for its extremes and operating point (with op_point); NULL none */
    const dev_corner_names *corner;
    /* the terminal a bypass capacitor decouples to AC ground (a BJT's emitter); -1 none */
    int bypass_terminal;
    /* the name of the region an amplifying stage works in ("forward active", "saturation"):
     * what the sanity check says a stage transistor should be in; NULL for other kinds */
    const char *amplifying_region;
    /* this kind's table in the text report (src/output/report.c): heading lines, then one line
     * per element at the operating point x written into buf, with the element's power (W,
     * device_power_w: the op.csv power row) to show; NULL when none */
    const char *report_heading;
    void (*report_line)(const element *e, const double *x, double vt_v, double gmin_s,
                        double power_w, char *buf, size_t len);
} dev_ops;

/* registry.c: the kinds in a fixed order -- the order of their rows in op.csv and of their
 * tables in the report */
SS_HIDDEN int device_count(void);
SS_HIDDEN const dev_ops *device_at(int index);
SS_HIDDEN const dev_ops *device_by_letter(char letter);
/* The kind taking .model type `name` ("npn"), with the type's index in *type; NULL if none. */
SS_HIDDEN const dev_ops *device_for_model_type(const char *name, int *type);
/* "npn, pnp or d" (every kind, ops NULL) or one kind's types ("npn or pnp") into buf. */
SS_HIDDEN void model_types_text(const dev_ops *ops, char *buf, size_t len);
/* "a" or "an" before an initialism (a type name read letter by letter: "an npn", "a pnp"). */
SS_HIDDEN const char *initialism_article(const char *name);
/* The index of a parameter in ops's table, -1 when it has none of that name. */
SS_HIDDEN int model_param_index(const dev_ops *ops, const char *name);
/* The model parameter table of a kind as docs/models.md prints it (markdown), appended to out. */
SS_HIDDEN void device_param_table_md(const dev_ops *ops, ss_strbuf *out);
/* The corner parameters of a model (DMP_CORNER): *lo and *hi the extremes of parameter i
 * without a tolerance (halved and doubled, or +-50 % of the magnitude with DMP_CORNER_SHIFT),
 * and the return value +1 when the lower value gives the lower main current, -1 when the
 * higher one does (DMP_CORNER_LOWERS, flipped by DMP_CORNER_POLAR on the second type); 0 when
 * parameter i is no corner parameter. */
SS_HIDDEN int model_corner_spread(const model *m, int i, double *lo, double *hi);


/* ---- stamping helpers -------------------------------------------------------------------- */
/* Which overlaid part of an element (circuit.h) its kind uses. */
static inline int elem_is_source(const element *e) { return (e->ops->flags & DEV_SOURCE) != 0; }
static inline int elem_is_controlled(const element *e)
{
    return (e->ops->flags & DEV_CONTROLLED) != 0;
}
/* kind facts by flag */
static inline int elem_is(const element *e, unsigned flag) { return (e->ops->flags & flag) != 0; }
static inline int elem_has_model(const element *e) { return e->ops->model_params != NULL; }

static inline double xv(const double *x, int node_idx)
{
    return node_idx > 0 ? x[node_idx - 1] : 0.0;
}
static inline void stamp_add(double *G, int slot, double v)
{
    if (slot >= 0)
        G[slot] += v;
}
static inline void rhs_add(double *rhs, int node_idx, double v)
{
    if (node_idx > 0)
        rhs[node_idx - 1] += v;
}
static inline void zstamp_add(double complex *G, int slot, double complex v)
{
    if (slot >= 0)
        G[slot] += v;
}
static inline void zrhs_add(double complex *rhs, int node_idx, double complex v)
{
    if (node_idx > 0)
        rhs[node_idx - 1] += v;
}

/* ---- noise helpers (docs/noise.md) ------------------------------------------------------ */
/* Thermal noise current of a resistance r_ohm at temp_k, as a Norton source across it:
 * 4 k T / R in A^2/Hz (H. Nyquist, Phys. Rev. 32, 110, 1928; J. B. Johnson, Phys. Rev. 32, 97,
 * 1928). */
static inline double noise_thermal_a2_per_hz(double temp_k, double r_ohm)
{
    return 4.0 * SS_BOLTZMANN_J_PER_K * temp_k / r_ohm;
}
/* Shot noise of a DC current i_a crossing a junction: 2 q |I| in A^2/Hz (W. Schottky, Ann.
 * Phys. 57, 541, 1918). */
static inline double noise_shot_a2_per_hz(double i_a)
{
    return 2.0 * SS_ELEMENTARY_CHARGE_C * fabs(i_a);
}
/* Flicker noise KF |I|^AF / f: the coefficient KF |I|^AF in A^2 (the empirical form of the
 * KF, AF model parameters, common practice); 0 when KF is 0. */
static inline double noise_flicker_a2(double kf, double af, double i_a)
{
    return kf > 0.0 ? kf * pow(fabs(i_a), af) : 0.0;
}

/* A model parameter after temperature and area scaling (name as on the card): finite and > 0
 * (positive set) or >= 0. 0 ok; -1 with the reason in why. */
SS_HIDDEN int temp_param_check(const char *name, double v, int positive, char *why,
                               size_t why_len);

/* ---- power at the operating point --------------------------------------------------------- */
/* Whether an element has a power(NAME) row: every kind with terminal currents at DC except the
 * plain storage elements (a capacitor carries no DC current; an inductor has no DC voltage). */
static inline int elem_has_power(const element *e)
{
    return e->ops->kcl && !elem_is(e, DEV_CAPACITOR | DEV_INDUCTOR);
}
/* The power element e absorbs at the solution x, W (negative: it delivers power): the sum over
 * its distinct terminal nodes of V(node) * I(into the element at that node), the currents from
 * the kind's kcl (its own equations, not the Newton stamps). The one computation behind op.csv's
 * power rows, the power limits and the report's power column. scratch: one double per unknown,
 * all zero on entry and left all zero. NaN when x is NULL or e has no power row. */
SS_HIDDEN double device_power_w(const element *e, const double *x, const dev_load_ctx *lc,
                                double *scratch);

/* Claims the four slots of a two-terminal admittance between nodes a and b into
 * e->slot[first..first+3] in the order (a,a) (b,b) (a,b) (b,a). */
SS_HIDDEN void claim_pair(element *e, dev_setup_ctx *sc, int first, int a, int b);
SS_HIDDEN void stamp_pair(double *G, const int *slot4, double g);
SS_HIDDEN void zstamp_pair(double complex *G, const int *slot4, double complex y);
/* Claims (row,col) for the 2x2 block of a controlled source: rows a,b x cols c,d. */
SS_HIDDEN void claim_quad(element *e, dev_setup_ctx *sc, int first, int a, int b, int c, int d);

#endif
