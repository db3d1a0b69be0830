/* DC operating point: Newton-Raphson (the loop of solver/newton.c) with junction limiting, then
 * gmin stepping and source stepping as fallbacks; KCL verification (newton.c) and refinement of
 * the answer; op.csv rows. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/analysis.h"
#include "output/sink.h"

/* One Newton solve of the operating point's fallbacks: the extra conductance from every node to
 * ground (gmin stepping), the source scale (source stepping), and the pseudo-transient anchor,
 * when set a conductance anchor_scale * anchor_g[u] from every node u to the voltage anchor[u]
 * (a backward-Euler step with node capacitances). */
typedef struct op_step {
    double gmin_extra_s;
    double src_scale;
    enum load_mode first_mode;
    const double *anchor;
    const double *anchor_g;
    double anchor_scale;
} op_step;

typedef struct op_extra_ctx {
    const ss_solver *sv;
    const op_step *np;
} op_extra_ctx;

/* newton_cfg.load_extra: the step's gmin and anchor conductances on the node diagonals. */
static void op_load_extra(void *vctx, double *G, double *rhs, const double *x)
{
    (void)x;
    const op_extra_ctx *c = vctx;
    const op_step *np = c->np;
    mna *m = c->sv->mna;
    int n_node_unknowns = c->sv->n_nodes - 1;
    if (np->gmin_extra_s > 0.0)
        for (int u = 0; u < n_node_unknowns; u++)
            G[mna_diag_slot(m, u)] += np->gmin_extra_s;
    if (np->anchor)
        for (int u = 0; u < n_node_unknowns; u++) {
            double g = np->anchor_scale * np->anchor_g[u];
            G[mna_diag_slot(m, u)] += g;
            rhs[u] += g * np->anchor[u];
        }
}

/* Newton from x (in/out) for the step np with the sources at drive: the operating point's
 * settings (newton_cfg_op) plus the step's extras. sv->last_rcond gets the last solve's pivot
 * ratio. Returns as newton_solve. */
static ss_status op_newton(ss_solver *sv, double *x, const op_step *np,
                           const dev_src_drive *drive, newton_result *res)
{
    op_extra_ctx xc = {sv, np};
    newton_cfg cfg = newton_cfg_op(sv, np->first_mode, drive);
    cfg.src_scale = np->src_scale;
    cfg.ctx = &xc;
    cfg.load_extra = op_load_extra;
    ss_status st = newton_solve(sv, x, &cfg, res);
    if (res->iterations > 0)
        sv->last_rcond = res->rcond;
    return st;
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
static ss_status gmin_stepping(ss_solver *sv, const dev_src_drive *drive, double *x, int *iters,
                               int *steps, newton_result *last)
{
    int n = sv->n_unknowns;
    memset(x, 0, (size_t)n * sizeof *x);
    op_step np = {1e-2, 1.0, LOAD_INIT_JUNCTION, NULL, NULL, 0.0};
    double factor = 10.0;
    double *saved = sv->work_x;
    for (;;) {
        memcpy(saved, x, (size_t)n * sizeof *x);
        ss_status st = op_newton(sv, x, &np, drive, last);
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
static ss_status source_stepping(ss_solver *sv, const dev_src_drive *drive, double *x,
                                 int *iters, int *steps, newton_result *last)
{
    int n = sv->n_unknowns;
    memset(x, 0, (size_t)n * sizeof *x);
    /* at lambda = 0 every source is off and x = 0 is the answer: start there as it is */
    op_step np = {0.0, 0.0, LOAD_FROM_X, NULL, NULL, 0.0};
    ss_status st = op_newton(sv, x, &np, drive, last);
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
        st = op_newton(sv, x, &np, drive, last);
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
static int escape_unstable(ss_solver *sv, const dev_src_drive *drive, double *x, int *iters)
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
    op_step np = {0.0, 1.0, LOAD_FROM_X, prev, g, 10.0};
    newton_result r;
    memcpy(x, prev, (size_t)n * sizeof *x);
    int ok = 1, retries = 0;
    double last_move = 0.0, last_signed = 0.0;
    int last_u = -1;
    for (int step = 0; step < 300 && np.anchor_scale > 1e-9; step++) {
        ss_status est = op_newton(sv, x, &np, drive, &r);
        *iters += r.iterations;
        if (est != SS_OK) {
            /* too long a pseudo-time step: back to the last state, a shorter step */
            if (est != SS_ERR_NO_CONVERGENCE || ++retries > 20) {
                /* from the last state reached, the exact solve below may still get there */
                memcpy(x, prev, (size_t)n * sizeof *x);
                ok = est == SS_ERR_NO_CONVERGENCE;
                break;
            }
            memcpy(x, prev, (size_t)n * sizeof *x);
            np.anchor_scale *= 4.0;
            last_move = 0.0;
            continue;
        }
        double move = 0.0;
        int mu = -1;
        for (int u = 0; u < nn; u++)
            if (fabs(x[u] - prev[u]) > move) {
                move = fabs(x[u] - prev[u]);
                mu = u;
            }
        /* the node that moved most the step before now moves back: the step overshot (a
         * backward-Euler step longer than the growing mode's time constant flips it) */
        int reversed = last_u >= 0 && last_move > 1e-9 &&
                       (x[last_u] - prev[last_u]) * last_signed < 0.0 &&
                       fabs(x[last_u] - prev[last_u]) > 0.5 * last_move;
        double signed_move = mu >= 0 ? x[mu] - prev[mu] : 0.0;
        memcpy(prev, x, (size_t)n * sizeof *x);
        /* While the state leaves the equilibrium faster step by step, the growing mode
         * dominates: its growth per backward-Euler step is rho = 1 / (1 - s/G) (s its rate, G
         * the anchor), so s/G = 1 - 1/rho, and the anchor is brought towards G = 2 s (at most
         * halved a step): the mode then doubles each step until the circuit's nonlinearity
         * stops it. Shrinking the anchor by a fixed factor instead, faster than the mode grew,
         * let the long steps pull the state back to the equilibrium (backward Euler damps a
         * growing mode once s/G > 2): a symmetric latch of square-law devices, whose loop gain
         * stays high far from the balanced point, came back that way. Once the movement slows
         * down the anchor shrinks by 30 % a step to the end. */
        double rho = last_move > 1e-9 ? move / last_move : 0.0;
        if (reversed)
            np.anchor_scale *= 4.0;
        else if (rho > 1.02)
            np.anchor_scale *= fmin(1.0, fmax(0.5, 2.0 * (1.0 - 1.0 / rho)));
        else
            np.anchor_scale *= 0.7;
        last_move = move;
        last_u = mu;
        last_signed = signed_move;
    }
    if (ok) {
        op_step fin = {0.0, 1.0, LOAD_FROM_X, NULL, NULL, 0.0};
        ok = op_newton(sv, x, &fin, drive, &r) == SS_OK;
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
    ok = source_stepping(sv, drive, x, iters, &steps, &r) == SS_OK;
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
static double refine_solution(ss_solver *sv, const dev_src_drive *drive, double *x,
                              double before, int *worst)
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
    double after = newton_kcl_residual(sv, x, drive, &worst_after);
    if (!(after < before)) {
        memcpy(x, saved, (size_t)n * sizeof *x);
        return before;
    }
    *worst = worst_after;
    return after;
}

ss_status op_solve_driven(ss_solver *sv, const dev_src_drive *drive, ss_op_stats *stats,
                          ss_error *err)
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
    op_step np = {0.0, 1.0, LOAD_INIT_JUNCTION, NULL, NULL, 0.0};
    st = op_newton(sv, x, &np, drive, &r);
    s.newton_iterations += r.iterations;
    /* the topology was checked in prepare, so a singular matrix here is numerical (a junction
     * that stopped conducting): the fallbacks may well get past it */
    int singular_seen = st == SS_ERR_SINGULAR;
    int bad_unknown = r.bad_unknown;
    if (st == SS_ERR_NO_CONVERGENCE || st == SS_ERR_SINGULAR)
        st = gmin_stepping(sv, drive, x, &s.newton_iterations, &s.gmin_steps, &r);
    if (st == SS_ERR_NO_CONVERGENCE || st == SS_ERR_SINGULAR)
        st = source_stepping(sv, drive, x, &s.newton_iterations, &s.source_steps, &r);
    solver_lost_op(sv);
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
        if (escape_unstable(sv, drive, x, &s.newton_iterations))
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
    double ratio = newton_kcl_residual(sv, x, drive, &worst);
    if (ratio > 1.0)
        return newton_kcl_error(sv, worst, err);
    ratio = refine_solution(sv, drive, x, ratio, &worst);
    if (ratio > 1.0)
        return newton_kcl_error(sv, worst, err);
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

ss_status op_solve_into(ss_solver *sv, ss_op_stats *stats, ss_error *err)
{
    return op_solve_driven(sv, NULL, stats, err);
}

/* ---- op.csv rows ----------------------------------------------------------------------- */

typedef struct op_emit_ctx {
    ss_sink *sink;
    ss_status st; /* the first refusal of the sink */
    ss_error *err;
} op_emit_ctx;

static void op_row_to_sink(void *vc, const char *quantity, const char *elem_name, double value)
{
    op_emit_ctx *c = vc;
    if (c->st != SS_OK)
        return;
    char label[1200];
    snprintf(label, sizeof label, "%s(%s)", quantity, elem_name);
    c->st = sink_row_labelled(c->sink, label, &value, c->err);
}

double *op_power_begin(const ss_solver *sv)
{
    double *scratch = sv->work_x;
    memset(scratch, 0, (size_t)sv->n_unknowns * sizeof *scratch);
    return scratch;
}

double op_power_w(const ss_solver *sv, const element *e, const double *x, double *scratch)
{
    dev_load_ctx lc = {.x = x,
                       .gmin_s = sv->ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = analysis_vt(sv),
                       .mode = LOAD_FROM_X,
                       .ckt_elem = sv->elem};
    return device_power_w(e, x, &lc, scratch);
}

void op_rows(const ss_solver *sv, const double *x, dev_report_fn fn, void *sink)
{
    for (int j = 0; j < solver_n_out_nodes(sv); j++) {
        int node = solver_out_node(sv, j);
        fn(sink, "v", sv->node_name[node], x ? x[node - 1] : SS_NAN);
    }
    /* the element rows kind by kind, in the registry's order: its own rows, then its power */
    double vt = analysis_vt(sv);
    double *scratch = x ? op_power_begin(sv) : NULL;
    for (int k = 0; k < device_count(); k++) {
        const dev_ops *ops = device_at(k);
        for (int i = 0; i < sv->n_elem; i++) {
            const element *e = &sv->elem[i];
            if (e->ops != ops)
                continue;
            if (ops->report)
                ops->report(e, x, vt, sv->ckt->opt.gmin, fn, sink);
            if (elem_has_power(e))
                fn(sink, "power", e->name, x ? op_power_w(sv, e, x, scratch) : SS_NAN);
        }
    }
}

ss_status ss_op_emit(ss_solver *sv, ss_sink *sink, ss_op_stats *stats, ss_error *err)
{
    ss_status st = op_solve_into(sv, stats, err);
    if (st != SS_OK)
        return st;
    static const char *const cols[] = {"value"};
    st = sink_begin_labelled(sink, "quantity", 1, cols, 0, err);
    if (st != SS_OK)
        return st;
    op_emit_ctx c = {sink, SS_OK, err};
    op_rows(sv, sv->x_op, op_row_to_sink, &c);
    return sink_end(sink, c.st, err);
}

ss_status ss_op_solve(ss_solver *sv, ss_table **out_op, ss_op_stats *stats, ss_error *err)
{
    if (!out_op)
        return op_solve_into(sv, stats, err);
    ss_sink *sink = NULL;
    ss_status st = ss_sink_table(&sink, err);
    if (st == SS_OK)
        st = ss_op_emit(sv, sink, stats, err);
    if (st == SS_OK)
        *out_op = ss_sink_take_table(sink);
    ss_sink_destroy(&sink);
    return st;
}
