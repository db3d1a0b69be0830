/* Transient engine shared by the .tran analysis (tran.c) and the stage's large-signal figures
 * (thd.c): charge-based trapezoidal / gear2 integration with local-truncation-error step
 * control, stepping exactly onto an output grid and onto source corners. docs/transient.md. */
#ifndef SS_TRAN_H
#define SS_TRAN_H

#include "analysis/analysis.h"

enum tran_method { TRAN_TRAP = 0, TRAN_GEAR2 = 1 };

/* defaults when the netlist leaves them out (.options tran_tol_rel, tran_tol_v) */
#define TRAN_TOL_REL_DEFAULT 1e-4
#define TRAN_TOL_V_DEFAULT 1e-6

/* Called at each output point k (time t_s = tstart + k tstep, exactly) with the solution x
 * (indexed by unknown). Return 0 to go on, 1 to stop the run there (not an error). */
typedef int (*tran_point_fn)(void *ctx, long k, double t_s, const double *x);

typedef struct tran_cfg {
    double tstep_s, tstop_s, tstart_s; /* output grid: tstart + k tstep <= tstop */
    double hmax_s;                     /* largest internal step; <= 0: tstop / 50 */
    enum tran_method method;
    double tol_rel, tol_v; /* LTE tolerances (<= 0: the defaults above) */
    /* Newton's update tolerances at each step (<= 0: a tenth of the smaller of the operating
     * point's and the LTE's, so the solver's error stays under the integration's) */
    double newton_tol_rel, newton_tol_v;
    tran_point_fn on_point;
    void *ctx;
    /* the state at t = 0, every unknown (NULL: the operating point with every source at its
     * t = 0 value): a periodic run continued from where a similar one ended */
    const double *x_start;
    /* when set, the run's only time-varying source: only_src follows only_wave and every
     * other source rests at its DC value (the large-signal drive); NULL: every source with a
     * form of its own (e->wave) follows it */
    const element *only_src;
    const struct src_wave *only_wave;
} tran_cfg;

typedef struct tran_stats {
    long steps;             /* accepted internal steps */
    long rejected_lte;      /* steps redone because the truncation error was too large */
    long rejected_newton;   /* steps redone because Newton did not converge */
    long newton_iterations; /* in all, rejected steps included */
    long points;            /* output points delivered */
    long allocs_in_loop;    /* allocations while stepping: 0 by design */
    double h_min_used_s, h_max_used_s;
} tran_stats;

/* Runs a transient from the DC operating point with every time-varying source at its t = 0
 * value (solved here, or reused when the circuit already holds it), or from cfg->x_start, to
 * the last output point.
 * Inputs: cfg (not modified); the sources' forms (e->wave, or cfg->only_wave), whose values in
 * time reach the devices through the load context: no element value is written.
 * Outputs: cfg->on_point per output point; stats (optional); sv->x_op keeps the t = 0
 * operating point.
 * Returns SS_OK, SS_ERR_NO_CONVERGENCE (initial point, or the step fell below the floor: the
 * message names the time and the worst unknown), SS_ERR_SINGULAR, SS_ERR_NOMEM. */
SS_HIDDEN ss_status tran_run(ss_solver *sv, const tran_cfg *cfg, tran_stats *stats,
                             ss_error *err);

#endif
