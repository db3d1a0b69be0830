/* DC operating point: Newton-Raphson on the MNA system with junction limiting, then gmin
 * stepping and source stepping as fallbacks; KCL verification of the answer; op.csv rows. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"

/* KCL verification of a converged answer: allowed node residual KCL_ABS_A + KCL_REL times
 * the largest branch or source current; allowed branch-equation residual KCL_ABS_V + KCL_REL
 * times the largest node voltage */
#define KCL_ABS_A 1e-9
#define KCL_REL 1e-6
#define KCL_ABS_V 1e-9

/* after convergence, polish until the update is this fraction of the tolerance, at most
 * NEWTON_POLISH_MAX extra iterations */
#define NEWTON_POLISH_RATIO 1e-6
#define NEWTON_POLISH_MAX 4

static void load_all_dc(ss_solver *sv, dev_load_ctx *lc)
{
    for (int i = 0; i < sv->n_elem; i++) {
        element *e = &sv->elem[i];
        e->ops->load_dc(e, lc);
    }
}

ss_status newton_solve(ss_solver *sv, double *x, const newton_params *np, newton_result *res)
{
    mna *m = sv->mna;
    int n = sv->n_unknowns, nnz = mna_nnz(m);
    int n_node_unknowns = sv->n_nodes - 1;
    double *G = mna_values(m);
    double *rhs = sv->work_rhs;
    const ss_options_set *o = &sv->ckt->opt;
    memset(res, 0, sizeof *res);
    res->worst_unknown = -1;
    res->bad_unknown = -1;
    int polish = NEWTON_POLISH_MAX;
    /* the polish iterations come on top of max_iter, never instead of it; at most
     * NEWTON_POLISH_MAX of them, since an update that leaves the tolerance again while
     * polishing (a limited junction, an oscillation) must not keep the loop going for ever */
    for (int it = 0; it < np->max_iter || (polish < NEWTON_POLISH_MAX && polish > 0 &&
                                           it < np->max_iter + NEWTON_POLISH_MAX);
         it++) {
        memset(G, 0, (size_t)nnz * sizeof *G);
        memset(rhs, 0, (size_t)n * sizeof *rhs);
        dev_load_ctx lc = {G,
                           rhs,
                           x,
                           o->gmin,
                           np->src_scale,
                           analysis_vt(sv),
                           it == 0 ? np->first_mode : LOAD_NORMAL,
                           0,
                           sv->elem,
                           NULL};
        load_all_dc(sv, &lc);
        if (np->gmin_extra_s > 0.0)
            for (int u = 0; u < n_node_unknowns; u++)
                G[mna_diag_slot(m, u)] += np->gmin_extra_s;
        if (np->anchor)
            for (int u = 0; u < n_node_unknowns; u++) {
                double g = np->anchor_scale * np->anchor_g[u];
                G[mna_diag_slot(m, u)] += g;
                rhs[u] += g * np->anchor[u];
            }
        int bad;
        double rcond;
        ss_status st = mna_solve_real(m, rhs, &bad, &rcond);
        res->iterations = it + 1;
        sv->last_rcond = rcond;
        if (st != SS_OK) {
            res->bad_unknown = bad;
            return st;
        }
        /* convergence: every unknown moved less than tol_rel of its size plus the absolute
         * tolerance of its kind (volts for nodes, amperes for branch currents) */
        double worst = 0.0;
        int worst_u = -1, finite = 1;
        for (int u = 0; u < n; u++) {
            double xn = rhs[u], xo = x[u];
            if (!isfinite(xn)) {
                finite = 0;
                worst_u = u;
                break;
            }
            double tol = o->tol_rel * fmax(fabs(xn), fabs(xo)) +
                         (u < n_node_unknowns ? o->tol_v : o->tol_i);
            double ratio = fabs(xn - xo) / tol;
            if (ratio > worst) {
                worst = ratio;
                worst_u = u;
            }
        }
        res->worst_unknown = worst_u;
        res->worst_delta = finite && worst_u >= 0 ? fabs(rhs[worst_u] - x[worst_u]) : HUGE_VAL;
        if (!finite)
            return SS_ERR_NO_CONVERGENCE;
        memcpy(x, rhs, (size_t)n * sizeof *x);
        int within = worst <= 1.0 && !lc.limited && (it > 0 || np->first_mode == LOAD_FROM_X);
        if (within && (polish == 0 || worst <= NEWTON_POLISH_RATIO))
            return SS_OK;
        /* Met the tolerances: a few more iterations cost little (quadratic convergence) and
         * take the answer from "within tolerance" to machine precision, so an exponential
         * device current read off the solution is as accurate as the node voltages. */
        if (within && --polish == 0)
            return SS_OK;
    }
    return SS_ERR_NO_CONVERGENCE;
}

double op_kcl_residual(ss_solver *sv, const double *x, int *worst)
{
    int n = sv->n_unknowns, n_node_unknowns = sv->n_nodes - 1;
    double *r = sv->work_x;
    memset(r, 0, (size_t)n * sizeof *r);
    dev_load_ctx lc = {NULL, NULL, x, sv->ckt->opt.gmin, 1.0, analysis_vt(sv), LOAD_FROM_X, 0,
                       sv->elem, NULL};
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
            i_scale = fmax(i_scale, fabs(sv->elem[i].value));
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

static ss_status nonconvergence_error(ss_solver *sv, const newton_result *r, int total_iters,
                                      ss_error *err)
{
    char what[1200] = "an unknown";
    if (r->worst_unknown >= 0)
        solver_unknown_name(sv, r->worst_unknown, what, sizeof what);
    if (r->bad_unknown >= 0) {
        solver_unknown_name(sv, r->bad_unknown, what, sizeof what);
        return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
                       "no DC operating point: the circuit matrix becomes singular at %s during "
                       "Newton (plain, gmin stepping and source stepping all tried); a part of "
                       "the circuit has lost every conduction path, e.g. a reverse-biased "
                       "junction with .options gmin=0, or a controlled source cancels itself",
                       what);
    }
    int is_node = r->worst_unknown >= 0 && r->worst_unknown < sv->n_nodes - 1;
    return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
                   "no DC operating point found after %d Newton iterations (plain Newton, gmin "
                   "stepping and source stepping all tried); worst: %s, last change %.3g %s. "
                   "Check the supply and bias values, or raise .options newton_iters",
                   total_iters, what, r->worst_delta, is_node ? "V" : "A");
}

/* Gmin stepping: a conductance from every node to ground, started large and cut tenfold per
 * step down to nothing, each solve starting from the last (docs/models.md). */
static ss_status gmin_stepping(ss_solver *sv, double *x, int *iters, int *steps,
                               newton_result *last)
{
    int n = sv->n_unknowns;
    memset(x, 0, (size_t)n * sizeof *x);
    newton_params np = {1e-2, 1.0, LOAD_INIT_JUNCTION, sv->ckt->opt.newton_iters, NULL, NULL, 0.0};
    double factor = 10.0;
    double *saved = sv->work_x;
    for (;;) {
        memcpy(saved, x, (size_t)n * sizeof *x);
        ss_status st = newton_solve(sv, x, &np, last);
        *iters += last->iterations;
        (*steps)++;
        if (st == SS_ERR_SINGULAR || st == SS_ERR_NOMEM)
            return st;
        if (st != SS_OK) {
            if (np.first_mode == LOAD_INIT_JUNCTION || factor < 1.01)
                return st;
            memcpy(x, saved, (size_t)n * sizeof *x);
            np.gmin_extra_s *= factor;  /* back to the last good value ... */
            factor = sqrt(factor);      /* ... and approach in smaller steps */
            np.gmin_extra_s /= factor;
            continue;
        }
        if (np.gmin_extra_s == 0.0)
            return SS_OK;
        np.first_mode = LOAD_FROM_X;
        np.gmin_extra_s /= factor;
        /* down to a hundredth of the junction gmin (or 1e-15 S when gmin is 0) */
        if (np.gmin_extra_s < fmax(sv->ckt->opt.gmin, 1e-13) * 1e-2)
            np.gmin_extra_s = 0.0;
        if (*steps > 200)
            return SS_ERR_NO_CONVERGENCE;
    }
}

/* Source stepping: every independent source scaled by lambda from 0 to 1, the step grown on
 * success and cut on failure (docs/models.md). */
static ss_status source_stepping(ss_solver *sv, double *x, int *iters, int *steps,
                                 newton_result *last)
{
    int n = sv->n_unknowns;
    memset(x, 0, (size_t)n * sizeof *x);
    /* at lambda = 0 every source is off and x = 0 is the answer: start there as it is */
    newton_params np = {0.0, 0.0, LOAD_FROM_X, sv->ckt->opt.newton_iters, NULL, NULL, 0.0};
    ss_status st = newton_solve(sv, x, &np, last);
    *iters += last->iterations;
    if (st != SS_OK)
        return st;
    double lambda = 0.0, step = 0.05;
    double *saved = sv->work_x;
    while (lambda < 1.0) {
        double next = fmin(1.0, lambda + step);
        memcpy(saved, x, (size_t)n * sizeof *x);
        np.src_scale = next;
        np.first_mode = LOAD_FROM_X;
        st = newton_solve(sv, x, &np, last);
        *iters += last->iterations;
        (*steps)++;
        if (st == SS_ERR_SINGULAR || st == SS_ERR_NOMEM)
            return st;
        if (st == SS_OK) {
            lambda = next;
            step = fmin(step * 2.0, 0.25);
        } else {
            memcpy(x, saved, (size_t)n * sizeof *x);
            step /= 4.0;
            if (step < 1e-7 || *steps > 2000)
                return SS_ERR_NO_CONVERGENCE;
        }
    }
    return SS_OK;
}

/* The refusal of an answer that fails Kirchhoff's law (no silent wrong number); ratio and
 * worst come from op_kcl_residual. */
static ss_status kcl_error(ss_solver *sv, int worst, ss_error *err)
{
    char what[1200] = "a node";
    if (worst >= 0)
        solver_unknown_name(sv, worst, what, sizeof what);
    return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->file, 0,
                   "the operating point fails Kirchhoff's law at %s by %.3g %s (device equations "
                   "and their Newton stamps disagree); refusing to report it",
                   what, sv->last_kcl_residual, worst < sv->n_nodes - 1 ? "A" : "V");
}

/* Is x a stable equilibrium? For the MNA Jacobian a stable DC solution has
 * sign(det J) = (-1)^(number of branch unknowns) (each voltage-defined branch adds one sign
 * through its Schur complement); the opposite sign means an odd number of growing modes, as
 * at the balanced point of a latch. Used only as a trigger: the escape below decides. */
static int looks_unstable(ss_solver *sv)
{
    int s = mna_det_sign(sv->mna, sv->work_bytes);
    int expect = (sv->n_branches % 2) ? -1 : 1;
    return s != 0 && s != expect;
}

/* Pseudo-transient escape from an unstable equilibrium: nudge every node by a millivolt-sized
 * deterministic pattern and follow backward-Euler steps of a circuit with a capacitance at
 * every node (a conductance proportional to the node's own, shrinking by 30 % per step;
 * pseudo-transient continuation after Kelley & Keyes, SIAM J. Numer. Anal. 35(2), 1998 --
 * from memory) until the state settles, then solve exactly from there. Returns 1 when it
 * reached a different operating point (in x), 0 when it came back or failed (x unchanged). */
static int escape_unstable(ss_solver *sv, double *x, int *iters)
{
    int n = sv->n_unknowns, nn = sv->n_nodes - 1;
    double *G = mna_values(sv->mna);
    double *g = sv->x_refine, *prev = sv->work_esc, *orig = sv->work_esc + n;
    memcpy(orig, x, (size_t)n * sizeof *x);
    /* each node's pseudo-capacitance in proportion to the sum of |row| of the Jacobian
     * (Gershgorin): the anchored system stays diagonally dominant however strong the
     * transconductances around the loop are */
    for (int u = 0; u < nn; u++)
        g[u] = sv->ckt->opt.gmin + 1e-12;
    const int *Ap = mna_colptr(sv->mna), *Ai = mna_rowidx(sv->mna);
    for (int j = 0; j < n; j++)
        for (int q = Ap[j]; q < Ap[j + 1]; q++)
            if (Ai[q] < nn)
                g[Ai[q]] += fabs(G[q]);
    memcpy(prev, x, (size_t)n * sizeof *x);
    for (int u = 0; u < nn; u++)
        prev[u] += 1e-3 * ((u * 2654435761u) % 7 - 3.0) / 3.0 + 1e-4;
    newton_params np = {0.0, 1.0, LOAD_FROM_X, sv->ckt->opt.newton_iters, prev, g, 10.0};
    newton_result r;
    memcpy(x, prev, (size_t)n * sizeof *x);
    int ok = 1, retries = 0;
    for (int step = 0; step < 300 && np.anchor_scale > 1e-9; step++) {
        ss_status est = newton_solve(sv, x, &np, &r);
        *iters += r.iterations;
        if (est != SS_OK) {
            /* too long a pseudo-time step: back to the last state, a shorter step */
            if (est != SS_ERR_NO_CONVERGENCE || ++retries > 20) {
                ok = 0;
                break;
            }
            memcpy(x, prev, (size_t)n * sizeof *x);
            np.anchor_scale *= 4.0;
            continue;
        }
        memcpy(prev, x, (size_t)n * sizeof *x);
        np.anchor_scale *= 0.7;
    }
    if (ok) {
        newton_params fin = {0.0, 1.0, LOAD_FROM_X, sv->ckt->opt.newton_iters, NULL, NULL, 0.0};
        ok = newton_solve(sv, x, &fin, &r) == SS_OK;
        *iters += r.iterations;
    }
    double moved = 0.0;
    for (int u = 0; ok && u < nn; u++)
        moved = fmax(moved, fabs(x[u] - orig[u]) / (1e-3 + 1e-3 * fabs(orig[u])));
    if (ok && moved > 1.0 && !looks_unstable(sv))
        return 1;
    /* second try: ramp every source up from zero, the way a circuit powers up; a latch then
     * settles in the state its power-up favours */
    int steps = 0;
    ok = source_stepping(sv, x, iters, &steps, &r) == SS_OK;
    moved = 0.0;
    for (int u = 0; ok && u < nn; u++)
        moved = fmax(moved, fabs(x[u] - orig[u]) / (1e-3 + 1e-3 * fabs(orig[u])));
    if (ok && moved > 1.0 && !looks_unstable(sv))
        return 1;
    memcpy(x, orig, (size_t)n * sizeof *x);
    return 0;
}

/* Iterative refinement on the element-by-element residual: Newton re-solves the assembled
 * matrix for x, so a conductance lost to rounding on a much larger diagonal (1e-12 S beside
 * 1e3 S) stays lost; solving J dx = -f(x) with f from each device's own equations recovers
 * it. Kept only when it lowers the residual. */
static double refine_solution(ss_solver *sv, double *x, double before, int *worst)
{
    /* sv->work_x holds f(x) from the verification just before */
    int n = sv->n_unknowns, worst_after;
    double *dx = sv->work_rhs, *saved = sv->x_refine;
    for (int u = 0; u < n; u++)
        dx[u] = -sv->work_x[u];
    if (mna_solve_real_again(sv->mna, dx) != SS_OK)
        return before;
    memcpy(saved, x, (size_t)n * sizeof *x);
    for (int u = 0; u < n; u++)
        x[u] += dx[u];
    double after = op_kcl_residual(sv, x, &worst_after);
    if (!(after < before)) {
        memcpy(x, saved, (size_t)n * sizeof *x);
        return before;
    }
    *worst = worst_after;
    return after;
}

ss_status op_solve_into(ss_solver *sv, ss_op_stats *stats, ss_error *err)
{
    ss_status st = solver_prepare(sv, err);
    if (st != SS_OK)
        return st;
    st = analysis_apply_temp(sv, err);
    if (st != SS_OK)
        return st;
    int n = sv->n_unknowns;
    double *x = sv->x_op;
    ss_op_stats s = {0, 0, 0};
    newton_result r;
    memset(x, 0, (size_t)n * sizeof *x);
    newton_params np = {0.0, 1.0, LOAD_INIT_JUNCTION, sv->ckt->opt.newton_iters, NULL, NULL, 0.0};
    st = newton_solve(sv, x, &np, &r);
    s.newton_iterations += r.iterations;
    /* the topology was checked in prepare, so a singular matrix here is numerical (a junction
     * that stopped conducting): the fallbacks may well get past it */
    int singular_seen = st == SS_ERR_SINGULAR;
    int bad_unknown = r.bad_unknown;
    if (st == SS_ERR_NO_CONVERGENCE || st == SS_ERR_SINGULAR)
        st = gmin_stepping(sv, x, &s.newton_iterations, &s.gmin_steps, &r);
    if (st == SS_ERR_NO_CONVERGENCE || st == SS_ERR_SINGULAR)
        st = source_stepping(sv, x, &s.newton_iterations, &s.source_steps, &r);
    sv->have_op = 0;
    if (st == SS_ERR_SINGULAR || (st == SS_ERR_NO_CONVERGENCE && singular_seen)) {
        if (r.bad_unknown < 0)
            r.bad_unknown = bad_unknown;
        st = SS_ERR_NO_CONVERGENCE;
    } else {
        r.bad_unknown = -1;
    }
    if (st == SS_ERR_NOMEM)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st != SS_OK)
        return nonconvergence_error(sv, &r, s.newton_iterations, err);
    /* an unstable equilibrium (the balanced point of a latch) is not an operating point a
     * circuit can sit at: move to a stable one, and say so */
    if (looks_unstable(sv)) {
        if (escape_unstable(sv, x, &s.newton_iterations))
            solver_warn(sv, "operating point: Newton first found an unstable equilibrium "
                              "(e.g. the balanced point of a latch); reporting the stable state "
                              "reached from it. A circuit with several stable states settles "
                              "in one of them depending on its history");
        else
            solver_warn(sv, "operating point: this may be an unstable equilibrium (the sign "
                              "of the circuit's Jacobian determinant says so); a real circuit "
                              "would not stay there");
    }
    /* verify Newton's own answer against the device equations first, so refinement cannot hide
     * a stamp that disagrees with its device equation; then refine (reusing that residual) and
     * judge the refined answer by its own residual */
    int worst;
    double ratio = op_kcl_residual(sv, x, &worst);
    if (ratio > 1.0)
        return kcl_error(sv, worst, err);
    ratio = refine_solution(sv, x, ratio, &worst);
    if (ratio > 1.0)
        return kcl_error(sv, worst, err);
    if (sv->last_rcond < MNA_RCOND_WARN)
        solver_warn(sv,
                     "operating point: the matrix is nearly singular (reciprocal condition "
                     "%.2g); look for very large next to very small resistances or an almost "
                     "floating node",
                     sv->last_rcond);
    sv->have_op = 1;
    sv->op_serial++;
    if (stats)
        *stats = s;
    return SS_OK;
}

/* ---- op.csv rows ----------------------------------------------------------------------- */

typedef struct op_sink {
    ss_table *t;
    int failed;
} op_sink;

static void sink_row(void *vs, const char *quantity, const char *elem_name, double value)
{
    op_sink *s = vs;
    char label[1200];
    snprintf(label, sizeof label, "%s(%s)", quantity, elem_name);
    double *row = table_add_row(s->t, label);
    if (!row)
        s->failed = 1;
    else
        row[0] = value;
}

void op_rows(const ss_solver *sv, const double *x, dev_report_fn fn, void *sink)
{
    for (int j = 0; j < solver_n_out_nodes(sv); j++) {
        int node = solver_out_node(sv, j);
        fn(sink, "v", sv->node_name[node], x ? x[node - 1] : SS_NAN);
    }
    /* the element rows kind by kind, in the registry's order */
    double vt = analysis_vt(sv);
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *ops = device_at(k);
        for (int i = 0; ops->report && i < sv->n_elem; i++) {
            const element *e = &sv->elem[i];
            if (e->ops == ops)
                e->ops->report(e, x, vt, sv->ckt->opt.gmin, fn, sink);
        }
    }
}

static ss_status op_table(ss_solver *sv, ss_table **out, ss_error *err)
{
    ss_table *t = table_create(1, "quantity");
    if (!t || table_set_col(t, 0, "value") != 0) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    op_sink s = {t, 0};
    op_rows(sv, sv->x_op, sink_row, &s);
    if (s.failed) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    *out = t;
    return SS_OK;
}

ss_status ss_op_solve(ss_solver *sv, ss_table **out_op, ss_op_stats *stats, ss_error *err)
{
    ss_status st = op_solve_into(sv, stats, err);
    if (st != SS_OK || !out_op)
        return st;
    return op_table(sv, out_op, err);
}
