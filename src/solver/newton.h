/* The one Newton-Raphson loop every nonlinear solve runs (operating point, DC sweep, transient
 * step, quasi-static transfer) and the Kirchhoff check of a converged answer. What each caller
 * adds -- its tolerances, its polish policy, extra stamps, a rounding-floor rule -- comes in
 * through newton_cfg; the fallbacks and step control around the loop are the analyses'. */
#ifndef SS_NEWTON_H
#define SS_NEWTON_H

#include "devices/device.h"
#include "solver/solver.h"

/* How the loop picks an iteration's worst unknown (each caller keeps the rule its results
 * were always computed with). */
enum newton_worst {
    /* the largest |dx| / tol, chosen afresh every iteration (-1 when nothing moved) */
    NEWTON_WORST_RATIO,
    /* |dx| compared with the worst so far times tol; an iteration in which nothing moved
     * keeps the worst unknown of the one before */
    NEWTON_WORST_SCALED,
};

typedef struct newton_cfg {
    /* unknown u has converged when |x_new - x_old| <= tol_rel max(|x_new|, |x_old|) plus tol_v
     * (node voltages, V) or tol_i (branch currents, A) */
    double tol_rel, tol_v, tol_i;
    int max_iter;
    /* polishing: once the tolerances are met, up to polish_max more iterations (0: accept at
     * once), ended early by an update within polish_stop of the tolerance (0: never); up to
     * polish_past_max of them may run past max_iter */
    int polish_max;
    double polish_stop;
    int polish_past_max;
    enum load_mode first_mode; /* the first iteration's junctions; later ones LOAD_NORMAL */
    int first_may_converge;    /* the first iteration's update may count as converged */
    enum newton_worst worst_rule;
    double src_scale;           /* every independent source times this (source stepping) */
    const dev_src_drive *drive; /* the sources' present values (NULL: their DC values) */
    /* hooks, called with ctx; NULL when not wanted */
    void *ctx;
    /* extra stamps at the iterate x, after every element's load_dc: gmin stepping and the
     * pseudo-transient anchor, transient charge companions, held elements */
    void (*load_extra)(void *ctx, double *G, double *rhs, const double *x);
    /* called for an iteration that missed the tolerances (worst > 1): 1 when it may still be
     * accepted, because its update from x_old to x_new lies at the rounding floor. it: the
     * iteration (from 0); worst_prev: the iteration before's worst (HUGE_VAL for the first);
     * rcond: this solve's reciprocal pivot ratio */
    int (*at_floor)(void *ctx, int it, double worst, double worst_prev, const double *x_new,
                    const double *x_old, double rcond);
} newton_cfg;

typedef struct newton_result {
    int iterations;
    int worst_unknown;  /* by cfg->worst_rule; the unknown that became non-finite, if one did */
    double worst_delta; /* its last update (HUGE_VAL when none or not finite) */
    int bad_unknown;    /* the singular pivot when the linear solve failed, else -1 */
    int solve_failed;   /* the last linear solve failed: its status was returned */
    double rcond;       /* the last solve's reciprocal pivot ratio (0 when it had none) */
} newton_result;

/* The operating point's settings (op.c, dc.c): the .options tolerances and newton_iters, up to
 * four polish iterations past newton_iters ended at 1e-6 of the tolerance, the worst unknown
 * by ratio; the first iteration treats junctions by first_mode and may count as converged
 * when it starts from x as it is (LOAD_FROM_X). Source scale 1, no hooks. */
SS_HIDDEN newton_cfg newton_cfg_op(const ss_solver *sv, enum load_mode first_mode,
                                   const dev_src_drive *drive);

/* Newton from x on the prepared MNA system of sv.
 * Inputs: cfg (not modified). In/out: x, the first iterate, and the last one on return (also
 * on failure, except that an update that is not finite is not taken).
 * Outputs: res (always written); sv->work_rhs and the matrix values are used as work space.
 * Returns SS_OK; SS_ERR_NO_CONVERGENCE (iterations spent, or an update not finite); or the
 * failed linear solve's status (SS_ERR_SINGULAR with res->bad_unknown, SS_ERR_NOMEM, ...). */
SS_HIDDEN ss_status newton_solve(ss_solver *sv, double *x, const newton_cfg *cfg,
                                 newton_result *res);

/* One assembly of the system at x as the loop does it: matrix and right-hand side cleared,
 * every element's load_dc with the given mode, the sources as cfg says, then cfg's
 * load_extra. *limited: a device limited a junction voltage. */
SS_HIDDEN void newton_load(ss_solver *sv, const newton_cfg *cfg, const double *x,
                           enum load_mode mode, int *limited);

/* Kirchhoff check of a converged x: the largest residual of the devices' own equations (not
 * their Newton stamps), node rows in A and branch rows in V, as a multiple of the allowed
 * (1e-9 A + 1e-6 x the largest branch or source current; 1e-9 V + 1e-6 x the largest node
 * voltage). drive: the sources' values x was solved with (NULL: their DC values). *worst gets
 * the unknown (-1 when none), sv->last_kcl_residual its residual, sv->work_x every residual. */
SS_HIDDEN double newton_kcl_residual(ss_solver *sv, const double *x, const dev_src_drive *drive,
                                     int *worst);

/* The refusal of an answer the Kirchhoff check failed at unknown worst (sv->last_kcl_residual
 * the residual there): SS_ERR_NO_CONVERGENCE with the message naming it. */
SS_HIDDEN ss_status newton_kcl_error(const ss_solver *sv, int worst, ss_error *err);

#endif
