/* Studies on top of the analyses: limits and checks, figure collection, sweeps and tolerance
 * (Monte Carlo) runs, preferred values. The solving itself is src/analysis's. */
#ifndef SS_STUDY_H
#define SS_STUDY_H

#include <math.h>

#include "analysis/analysis.h"
#include "netlist/netlist.h"

typedef struct limit {
    char quantity[128]; /* the figure judged, lower case; "gain_db@1000" style when at a
                           frequency: the name figures, points and lookups go by */
    char label[136];    /* the limit as reports name it: quantity, or abs(QUANTITY) */
    int magnitude;      /* abs(...): the bounds apply to the figure's magnitude */
    char base[64];      /* the quantity without its frequency */
    int at_freq;
    double freq_hz;
    double lo, hi; /* -HUGE_VAL / HUGE_VAL when open */
    const char *file;
    int line;
} limit;

/* The number a limit's bounds apply to: the figure, or its magnitude for abs(...). */
static inline double limit_judged(const limit *lim, double v) { return lim->magnitude ? fabs(v) : v; }

struct ss_limits {
    limit *items;
    int n, cap;
    ss_arena arena;
    char sha256[65]; /* over the texts added (file and text limits), chained; "" when none */
};

/* ---- the study object: set up and run by runner.c; sensitivity.c and snap.c work from it ----- */

#define STUDY_MAX_POINTS 100000000L
#define STUDY_MAX_DIMS 16

typedef struct vary_dim {
    const char *name; /* lower case; "temp" for temperature */
    double *values;
    int n;
} vary_dim;

typedef struct tol_spec {
    const char *name;
    double nominal;
    double lo, hi; /* absolute range */
    int gauss;
    int group; /* its correlation group (ss_study_add_match), -1 none */
    /* an instance's own model parameter (`q1.bf`) whose card's parameter (`qn.bf`) is sampled
     * too: the index of that tolerance, the instance's draw scaled by its ratio to its nominal
     * (set when the run starts); -1 none */
    int scale_by;
} tol_spec;

#define STUDY_MAX_GROUPS 64

typedef struct match_group {
    double rho; /* the correlation of the standard normal draws of its members, 0 .. 1 */
    int n;      /* members: the tolerances whose group is this one */
} match_group;

struct ss_study {
    ss_arena arena;
    const char *netlist;
    ss_override *sets;
    int n_sets;
    const char *stage_in, *stage_out;
    /* the noise band and weighting given to the study (ss_study_set_noise_band/_weight):
     * noise_set 0 when not, else applied to every context */
    int noise_band_set, noise_weight_set;
    double noise_lo_hz, noise_hi_hz;
    int noise_per_decade;
    const char *noise_weight;
    vary_dim dims[STUDY_MAX_DIMS];
    int n_dims;
    tol_spec *tols;
    int n_tols, cap_tols;
    match_group groups[STUDY_MAX_GROUPS];
    int n_groups;
    long trials;
    unsigned long long seed;
    int threads;
    int shard_k, shard_n;
    const ss_limits *limits; /* == own_limits: the netlist's .expect lines plus any added */
    ss_limits *own_limits;
    ss_progress_fn progress;
    void *progress_ctx;
    ss_circuit *nominal;     /* parsed once, with the --set values */
    ss_solver *nominal_sv;   /* its context, with the stage: the nominal figures and names */
    char limits_sha256[65]; /* of the limits added (ss_study_add_limits), "" when none */
};

/* 1 when one of ov[0 .. n-1] names `name` (case-insensitive): that override replaces it. */
static inline int shadowed_by(const ss_override *ov, int n, const char *name)
{
    for (int j = 0; j < n; j++)
        if (strcasecmp_ascii_eq(ov[j].name, name))
            return 1;
    return 0;
}

/* A temperature a study may set, in degrees C: above absolute zero, at most 1000 C. */
static inline int temp_in_range(double t) { return t > -SS_ZERO_C_IN_K && t <= 1000.0; }

/* Solves one point on context sv (study_context): the nominal values (the study's --set ones
 * included) and, in place of them where they name the same value, vals[0 .. n_dims-1] for the
 * swept names and vals[n_dims .. n_dims+n_vals_tol-1] for the first n_vals_tol tolerances;
 * then its figures (*out_figs, the caller's to destroy). (runner.c; sensitivity.c uses it.) */
SS_HIDDEN ss_status study_solve_point(ss_study *s, ss_solver *sv, const double *vals,
                                      int n_vals_tol, ss_table **out_figs, ss_error *err);
/* A new context on the study's nominal circuit, with its stage (the caller destroys it). */
SS_HIDDEN ss_status study_context(const ss_study *s, ss_solver **out, ss_error *err);

/* Per-frequency stage quantities a limit may name with `@ FREQ`. */
SS_HIDDEN int study_is_point_quantity(const char *base);
/* The value of figure label in a figures table, looked for first at row_hint; NaN if absent. */
SS_HIDDEN double figures_value(const ss_table *figs, int row_hint, const char *label);
/* The labels of ss_figures_compute's table for ckt and limits, in its order, without solving:
 * fn(sink, quantity, name, NaN) per figure, name the element or node of an op.csv row
 * ("ic", "q1": ic(q1)) and NULL for the others. */
SS_HIDDEN void figures_names(const ss_solver *sv, const ss_limits *limits, dev_report_fn fn,
                             void *sink);
/* Parses one limit line (no comment); 0 ok, else the error set with file:line. */
SS_HIDDEN ss_status limits_parse_line(ss_limits *l, const char *text, const char *file, int line,
                                      ss_error *err);

/* The canonical text of everything that decides a study's points (inputs by SHA-256,
 * overrides, stage, swept values, tolerances, trials, seed, limits), appended to text; and this
 * shard's point range [first, end) of total. (runner.c; shards.c hashes it.) */
SS_HIDDEN ss_status study_identity(const ss_study *s, ss_strbuf *text, long *first, long *end,
                                   long *total, ss_error *err);
/* Tolerance trials drawn for another search (src/design/search.c's yield): the values of
 * every tolerance in trial `trial` (0-based) of the seed set with ss_study_set_trials -- the
 * very draws spread makes for that trial -- into vals[0 .. study_n_tols-1]; the study has no
 * swept values. The tolerances' names (lower case; "temp") and nominal values. */
SS_HIDDEN void study_trial_values(ss_study *s, long trial, double *vals);
SS_HIDDEN int study_n_tols(const ss_study *s);
SS_HIDDEN const char *study_tol_name(const ss_study *s, int t);
SS_HIDDEN double study_tol_nominal(const ss_study *s, int t);
/* The first figure column of a study's points table (right after `status`); -1 when none. */
SS_HIDDEN int study_first_figure_col(const ss_table *pts);
SS_HIDDEN const ss_circuit *study_nominal(const ss_study *s);
SS_HIDDEN void study_shard(const ss_study *s, int *k, int *n, unsigned long long *seed,
                           long *trials);

/* The significands of series E12/E24/E96 (times *scale); returns the count, 0 if unknown. */
SS_HIDDEN int eseries_table(int series, const int **values, double *scale);
/* The series as a lattice (eseries.c): value of index k (k = 0 is 1, k = n is 10, k - 1 the
 * next lower preferred value; NaN for an unknown series) and the index nearest value (> 0) on
 * a logarithmic scale (0, or -1 for an unknown series or a value not positive and finite). */
SS_HIDDEN double eseries_lattice_value(int series, long k);
SS_HIDDEN int eseries_lattice_index(int series, double value, long *out_k);

#endif
