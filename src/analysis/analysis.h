/* Analyses on a parsed circuit: preparation (internal nodes, pattern, KLU analysis), the
 * Newton operating point with its fallbacks, DC sweeps, AC sweeps, stage figures and noise. */
#ifndef SS_ANALYSIS_H
#define SS_ANALYSIS_H

#include "devices/device.h"
#include "mna/mna.h"
#include "netlist/circuit.h"
#include "solver/newton.h"
#include "solver/solver.h"
#include "util/table.h"

/* Builds internal nodes, branch unknowns, the matrix pattern and the symbolic analysis once.
 * Checks the topology first (no DC path to ground, loops of voltage sources). */
SS_HIDDEN ss_status solver_prepare(ss_solver *sv, ss_error *err);
/* Applies the circuit temperature to every device's parameters; SS_ERR_INPUT names the model
 * whose scaled parameters leave their range. */
SS_HIDDEN ss_status analysis_apply_temp(ss_solver *sv, ss_error *err);
SS_HIDDEN double analysis_vt(const ss_solver *sv);
/* The column names of a per-node table (columns.c): lead[0..n_lead-1], then one per written
 * node and format ("v(%s)"), the formats of a node side by side. Output: the names in one
 * block the caller frees with ss_free (NULL: out of memory), *n_cols their count. */
SS_HIDDEN const char **analysis_col_names(const ss_solver *sv, const char *const *lead,
                                          int n_lead, const char *const *fmts, int n_fmts,
                                          int *n_cols);

/* Full operating point with fallbacks into sv->x_op; stats optional. */
SS_HIDDEN ss_status op_solve_into(ss_solver *sv, ss_op_stats *stats, ss_error *err);
/* The same with the sources at drive (a .dc sweep point, a transient's t = 0; NULL: their DC
 * values); the Kirchhoff check judges the answer with those values. */
SS_HIDDEN ss_status op_solve_driven(ss_solver *sv, const dev_src_drive *drive,
                                    ss_op_stats *stats, ss_error *err);
/* The rows of op.csv through fn(sink, quantity, name, value), in op.csv's order: v(NODE) per
 * written node, then kind by kind (the registry's order) each element's report rows followed by
 * its power(NAME) row. x is the solution; NULL
 * names the same rows with NaN values before anything is solved. */
SS_HIDDEN void op_rows(const ss_solver *sv, const double *x, dev_report_fn fn, void *sink);
/* Power at the solution x (device_power_w with the sources at their DC values): op_power_begin
 * clears the context's scratch vector (work_x, idle between analyses) and returns it;
 * op_power_w gives element e's power (W, NaN for a kind without a power row) and leaves the
 * scratch clear for the next element. */
SS_HIDDEN double *op_power_begin(const ss_solver *sv);
SS_HIDDEN double op_power_w(const ss_solver *sv, const element *e, const double *x,
                            double *scratch);
/* Formats a singular-matrix error naming the unknown. */
SS_HIDDEN ss_status report_singular(ss_solver *sv, int bad_unknown, const char *during,
                                    ss_error *err);

/* AC: one complex solve at omega with the given source selection; result in sv->work_zrhs. */
SS_HIDDEN ss_status ac_solve_point(ss_solver *sv, double omega, const element *only_src,
                                   int all_src_off, int inject_node, ss_error *err);
/* The sweep's frequencies (ac_point_count of them, at most AC_MAX_POINTS: circuit.h). */
SS_HIDDEN ss_status ac_frequencies(const ss_solver *sv, double **out_freqs, int *out_n,
                                   ss_error *err);

/* Noise (noise.c): every element's noise current sources at the operating point, in element
 * order. Output *out_src (n entries, caller frees with ss_free; NULL when n is 0), written on
 * success. Needs the operating point. Returns SS_OK or SS_ERR_NOMEM. */
typedef struct noise_src {
    dev_noise_src src; /* nodes, white and 1/f parts, static label */
    int elem;          /* index into sv->elem */
} noise_src;
SS_HIDDEN ss_status noise_collect_sources(const ss_solver *sv, noise_src **out_src, int *out_n,
                                          ss_error *err);
/* The A-weighting of IEC 61672-1:2013 as an amplitude ratio, 1 at 1 kHz (noise.c) */
SS_HIDDEN double noise_a_weight(double f_hz);
/* The noise has a band of its own (.noise band=, ss_solver_set_noise_band) */
SS_HIDDEN int noise_has_band(const ss_solver *sv);
/* A noise analysis is named and has frequencies to run over (.ac or a band of its own) */
SS_HIDDEN int noise_runs(const ss_solver *sv);

/* Stage figures at one frequency: complex gain, |Zin|, |Zout| (solves the op if needed). */
SS_HIDDEN ss_status stage_at_frequency(ss_solver *sv, double freq_hz, double _Complex *gain,
                                       double *zin_ohm, double *zout_ohm, ss_error *err);

/* Lint (lint.c): the sanity checks by their stable names (docs/cli.md), in the order they run
 * and their warnings are listed. */
enum lint_check { /* ORDER LINT_CHECK */
    LINT_MILLI_SUFFIX,
    LINT_FEMTO_SUFFIX,
    LINT_RESISTOR_RANGE,
    LINT_ONE_CONNECTION,
    LINT_COUPLING_CAP_TINY,
    LINT_STAGE_NOT_ACTIVE,
    LINT_HUGE_CURRENT,
    LINT_CHECK_COUNT
};
/* "one_connection" for LINT_ONE_CONNECTION; NULL out of range. */
SS_HIDDEN const char *lint_check_name(int check);
/* The check of that name, -1 when there is none. */
SS_HIDDEN int lint_check_by_name(const char *name);

#endif
