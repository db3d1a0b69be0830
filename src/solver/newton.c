/* The Newton-Raphson loop of every nonlinear solve, configured per caller (newton.h), and the
 * Kirchhoff check of a converged answer; fallbacks, sweeps and step control are the analyses'. */
#include <math.h>
#include <string.h>

#include "analysis/analysis.h"
#include "solver/newton.h"

/* KCL verification of a converged answer: allowed node residual KCL_ABS_A + KCL_REL times
 * the largest branch or source current; allowed branch-equation residual KCL_ABS_V + KCL_REL
 * times the largest node voltage */
#define KCL_ABS_A 1e-9
#define KCL_REL 1e-6
#define KCL_ABS_V 1e-9

/* the operating point's polish: after convergence, until the update is this fraction of the
 * tolerance, at most NEWTON_POLISH_MAX extra iterations */
#define NEWTON_POLISH_RATIO 1e-6
#define NEWTON_POLISH_MAX 4

newton_cfg newton_cfg_op(const ss_solver *sv, enum load_mode first_mode,
                         const dev_src_drive *drive)
{
    const ss_options_set *o = &sv->ckt->opt;
    /* the polish iterations come on top of max_iter, never instead of it; at most
     * NEWTON_POLISH_MAX of them, since an update that leaves the tolerance again while
     * polishing (a limited junction, an oscillation) must not keep the loop going for ever.
     * They cost little (quadratic convergence) and take the answer from "within tolerance" to
     * machine precision, so an exponential device current read off the solution is as
     * accurate as the node voltages. */
    newton_cfg c = {.tol_rel = o->tol_rel,
                    .tol_v = o->tol_v,
                    .tol_i = o->tol_i,
                    .max_iter = o->newton_iters,
                    .polish_max = NEWTON_POLISH_MAX,
                    .polish_stop = NEWTON_POLISH_RATIO,
                    .polish_past_max = NEWTON_POLISH_MAX,
                    .first_mode = first_mode,
                    .first_may_converge = first_mode == LOAD_FROM_X,
                    .worst_rule = NEWTON_WORST_RATIO,
                    .src_scale = 1.0,
                    .drive = drive};
    return c;
}

void newton_load(ss_solver *sv, const newton_cfg *cfg, const double *x, enum load_mode mode,
                 int *limited)
{
    mna *m = sv->mna;
    double *G = mna_values(m);
    double *rhs = sv->work_rhs;
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(rhs, 0, (size_t)sv->n_unknowns * sizeof *rhs);
    dev_load_ctx lc = {.G = G,
                       .rhs = rhs,
                       .x = x,
                       .gmin_s = sv->ckt->opt.gmin,
                       .src_scale = cfg->src_scale,
                       .vt_v = analysis_vt(sv),
                       .mode = mode,
                       .ckt_elem = sv->elem,
                       .drive = cfg->drive};
    for (int i = 0; i < sv->n_elem; i++) {
        element *e = &sv->elem[i];
        e->ops->load_dc(e, &lc);
    }
    if (cfg->load_extra)
        cfg->load_extra(cfg->ctx, G, rhs, x);
    *limited = lc.limited;
}

/* The update from x_old to x_new measured against the tolerances: the worst |dx| / tol into
 * *worst, its unknown into *worst_u (by cfg->worst_rule). Returns 0 when an x_new is not
 * finite (*worst_u that unknown), 1 otherwise. */
static int measure_update(const newton_cfg *cfg, int n, int n_volt, const double *x_new,
                          const double *x_old, double *worst_out, int *worst_u)
{
    double worst = 0.0;
    if (cfg->worst_rule == NEWTON_WORST_RATIO)
        *worst_u = -1;
    for (int u = 0; u < n; u++) {
        double xn = x_new[u], xo = x_old[u];
        if (!isfinite(xn)) {
            *worst_u = u;
            return 0;
        }
        /* every unknown within tol_rel of its size plus the absolute tolerance of its kind
         * (volts for nodes, amperes for branch currents) */
        double tol =
            cfg->tol_rel * fmax(fabs(xn), fabs(xo)) + (u < n_volt ? cfg->tol_v : cfg->tol_i);
        double d = fabs(xn - xo);
        if (cfg->worst_rule == NEWTON_WORST_RATIO) {
            double ratio = d / tol;
            if (ratio > worst) {
                worst = ratio;
                *worst_u = u;
            }
        } else if (d > worst * tol) {
            worst = d / tol;
            *worst_u = u;
        }
    }
    *worst_out = worst;
    return 1;
}

ss_status newton_solve(ss_solver *sv, double *x, const newton_cfg *cfg, newton_result *res)
{
    int n = sv->n_unknowns, n_volt = sv->n_nodes - 1;
    double *rhs = sv->work_rhs;
    memset(res, 0, sizeof *res);
    res->worst_unknown = -1;
    res->bad_unknown = -1;
    int polish = cfg->polish_max;
    double worst_prev = HUGE_VAL;
    for (int it = 0; it < cfg->max_iter || (polish < cfg->polish_max && polish > 0 &&
                                            it < cfg->max_iter + cfg->polish_past_max);
         it++) {
        int limited;
        newton_load(sv, cfg, x, it == 0 ? cfg->first_mode : LOAD_NORMAL, &limited);
        int bad;
        double rcond = 0.0;
        ss_status st = mna_solve_real(sv->mna, rhs, &bad, &rcond);
        res->iterations = it + 1;
        res->rcond = rcond;
        if (st != SS_OK) {
            res->bad_unknown = bad;
            res->solve_failed = 1;
            return st;
        }
        double worst = 0.0;
        int finite = measure_update(cfg, n, n_volt, rhs, x, &worst, &res->worst_unknown);
        int wu = res->worst_unknown;
        res->worst_delta = finite && wu >= 0 ? fabs(rhs[wu] - x[wu]) : HUGE_VAL;
        if (!finite)
            return SS_ERR_NO_CONVERGENCE;
        int at_floor = worst > 1.0 && cfg->at_floor &&
                       cfg->at_floor(cfg->ctx, it, worst, worst_prev, rhs, x, rcond);
        memcpy(x, rhs, (size_t)n * sizeof *x);
        int within =
            !limited && (it > 0 || cfg->first_may_converge) && (worst <= 1.0 || at_floor);
        if (within && (polish == 0 || (cfg->polish_stop > 0.0 && worst <= cfg->polish_stop)))
            return SS_OK;
        if (within && --polish == 0)
            return SS_OK;
        worst_prev = worst;
    }
    return SS_ERR_NO_CONVERGENCE;
}

double newton_kcl_residual(ss_solver *sv, const double *x, const dev_src_drive *drive, int *worst)
{
    int n = sv->n_unknowns, n_node_unknowns = sv->n_nodes - 1;
    double *r = sv->work_x;
    memset(r, 0, (size_t)n * sizeof *r);
    dev_load_ctx lc = {.x = x,
                       .gmin_s = sv->ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = analysis_vt(sv),
                       .mode = LOAD_FROM_X,
                       .ckt_elem = sv->elem,
                       .drive = drive};
    for (int i = 0; i < sv->n_elem; i++) {
        const element *e = &sv->elem[i];
        if (e->ops->kcl)
            e->ops->kcl(e, x, &lc, r);
    }
    /* the current scale of the circuit: its largest branch or source current */
    double i_scale = 0.0;
    for (int u = n_node_unknowns; u < n; u++)
        i_scale = fmax(i_scale, fabs(x[u]));
    for (int i = 0; i < sv->n_elem; i++)
        if (elem_is(&sv->elem[i], DEV_SOURCE) && elem_is(&sv->elem[i], DEV_DRIVES_CURRENT))
            i_scale = fmax(i_scale, fabs(source_value(&sv->elem[i], &lc)));
    /* residuals as multiples of what is allowed: node rows in amperes, branch rows (the
     * voltage equations of sources) in volts */
    double v_scale = 0.0;
    for (int u = 0; u < n_node_unknowns; u++)
        v_scale = fmax(v_scale, fabs(x[u]));
    double allowed_a = KCL_ABS_A + KCL_REL * i_scale;
    double allowed_v = KCL_ABS_V + KCL_REL * v_scale;
    double max = 0.0;
    *worst = -1;
    for (int u = 0; u < n; u++) {
        double v = fabs(r[u]) / (u < n_node_unknowns ? allowed_a : allowed_v);
        if (!isfinite(v))
            v = HUGE_VAL;
        if (v > max) {
            max = v;
            *worst = u;
        }
    }
    sv->last_kcl_residual = *worst >= 0 ? r[*worst] : 0.0;
    return max;
}

ss_status newton_kcl_error(const ss_solver *sv, int worst, ss_error *err)
{
    char what[1200] = "a node";
    if (worst >= 0)
        solver_unknown_name(sv, worst, what, sizeof what);
    return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
                   "the operating point fails Kirchhoff's law at %s by %.3g %s (device equations "
                   "and their Newton stamps disagree); refusing to report it",
                   what, sv->last_kcl_residual, worst < sv->n_nodes - 1 ? "A" : "V");
}
