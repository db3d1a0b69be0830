/* Transient analysis: charge-based integration of every device's charges (trapezoidal, or
 * gear2 on request), Newton at each step on the pattern analysed once, truncation-error step
 * control, steps landing exactly on the output grid and on source corners; tran.csv rows.
 * The devices' charges are theirs (load_tran); the stage figures built on this are thd.c's. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/tran.h"
#include "devices/wave.h"

#define TRAN_NEWTON_MAX 25    /* Newton iterations per step before the step is cut */
#define TRAN_NEWTON_CUT 0.125 /* step factor after a Newton failure */
#define TRAN_GROW_MAX 2.0     /* largest step growth from one step to the next */
#define TRAN_SHRINK_MIN 0.2   /* smallest factor an LTE rejection cuts the step by */
#define TRAN_SAFETY 0.9       /* aim the next step's estimated error at 0.9^3 of the limit */
#define TRAN_BP_CUT 0.1       /* after a source corner: step <= 0.1 x min(last, next corner) */
#define TRAN_FIRST_STEP 0.01  /* the first step: 0.01 x min(tstep, hmax, first corner) */
#define TRAN_HMIN_REL 1e-12   /* step floor, relative to the stop time */
#define TRAN_MAX_STEPS 200000000L
#define TRAN_MAX_CELLS 1e8 /* tran.csv values held in memory (800 MB) */

/* Truncation-error constants C of x(t_n+1) - x_n+1 = C h^3 x'''(t) for constant steps:
 * trapezoidal -1/12, two-step backward difference -2/9 (J. D. Lambert, Numerical Methods for
 * Ordinary Differential Systems, Wiley 1991, ch. 3 -- from memory; docs/transient.md). */
#define LTE_C_TRAP (1.0 / 12.0)
#define LTE_C_GEAR2 (2.0 / 9.0)

enum step_form { FORM_BE, FORM_TRAP, FORM_GEAR2 };

typedef struct tran_ws {
    int n;                       /* unknowns */
    int n_volt;                  /* node unknowns (the LTE is judged on these) */
    int n_q;                     /* charge slots in all */
    int *q_off;                  /* per element: first charge slot, -1 when it has none */
    double *q_new, *q_n, *q_nm1; /* charges: trial, at t_n, at t_n-1 */
    double *i_n;                 /* dq/dt at t_n as the integration formula gave it */
    double *hist;                /* the history term of this step's formula */
    double *x_new, *x_n, *x_nm1, *x_nm2;
    int *src;       /* elements with a time-varying form */
    double *src_dc; /* their DC values, restored at the end */
    int n_src;
} tran_ws;

static void ws_free(tran_ws *w)
{
    ss_free(w->q_off);
    ss_free(w->q_new);
    ss_free(w->q_n);
    ss_free(w->q_nm1);
    ss_free(w->i_n);
    ss_free(w->hist);
    ss_free(w->x_new);
    ss_free(w->x_n);
    ss_free(w->x_nm1);
    ss_free(w->x_nm2);
    ss_free(w->src);
    ss_free(w->src_dc);
    memset(w, 0, sizeof *w);
}

static ss_status ws_alloc(const ss_circuit *ckt, tran_ws *w, ss_error *err)
{
    memset(w, 0, sizeof *w);
    w->n = ckt->n_unknowns;
    w->n_volt = ckt->n_nodes - 1;
    int n_elem = ckt->n_elem;
    w->q_off = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->q_off);
    w->src = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->src);
    w->src_dc = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->src_dc);
    if (!w->q_off || !w->src || !w->src_dc) {
        ws_free(w);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (int i = 0; i < n_elem; i++) {
        const element *e = &ckt->elem[i];
        w->q_off[i] = -1;
        if (e->ops->load_tran && e->ops->n_charge > 0) {
            w->q_off[i] = w->n_q;
            w->n_q += e->ops->n_charge;
        }
        if (elem_is_source(e) && e->wave) {
            w->src[w->n_src] = i;
            w->src_dc[w->n_src] = e->value;
            w->n_src++;
        }
    }
    size_t nq = (size_t)(w->n_q ? w->n_q : 1), nx = (size_t)w->n;
    w->q_new = ss_alloc(nq * sizeof(double));
    w->q_n = ss_alloc(nq * sizeof(double));
    w->q_nm1 = ss_alloc(nq * sizeof(double));
    w->i_n = ss_alloc(nq * sizeof(double));
    w->hist = ss_alloc(nq * sizeof(double));
    w->x_new = ss_alloc(nx * sizeof(double));
    w->x_n = ss_alloc(nx * sizeof(double));
    w->x_nm1 = ss_alloc(nx * sizeof(double));
    w->x_nm2 = ss_alloc(nx * sizeof(double));
    if (!w->q_new || !w->q_n || !w->q_nm1 || !w->i_n || !w->hist || !w->x_new || !w->x_n ||
        !w->x_nm1 || !w->x_nm2) {
        ws_free(w);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    return SS_OK;
}

static void set_sources(ss_circuit *ckt, const tran_ws *w, double t_s, double tstep_s)
{
    for (int k = 0; k < w->n_src; k++) {
        element *e = &ckt->elem[w->src[k]];
        e->value = wave_value(e->wave, t_s, tstep_s);
    }
}

static void restore_sources(ss_circuit *ckt, const tran_ws *w)
{
    for (int k = 0; k < w->n_src; k++)
        ckt->elem[w->src[k]].value = w->src_dc[k];
}

/* The first source corner strictly after t_s + eps (HUGE_VAL when none). */
static double next_corner(const ss_circuit *ckt, const tran_ws *w, double t_s, double eps,
                          double tstep_s)
{
    double best = HUGE_VAL;
    for (int k = 0; k < w->n_src; k++) {
        const element *e = &ckt->elem[w->src[k]];
        double c = wave_next_break(e->wave, t_s + eps, tstep_s);
        if (c < best)
            best = c;
    }
    return best;
}

/* The charges of every element at the solution x, into q. */
static void eval_charges(ss_circuit *ckt, const tran_ws *w, const double *x, double *q)
{
    dev_tran_ctx tc = {.G = NULL, .x = x, .vt_v = analysis_vt(ckt)};
    for (int i = 0; i < ckt->n_elem; i++) {
        if (w->q_off[i] < 0)
            continue;
        element *e = &ckt->elem[i];
        tc.q = q + w->q_off[i];
        tc.hist = w->hist + w->q_off[i];
        e->ops->load_tran(e, &tc);
    }
}

/* Puts every device's Newton state (junction voltages) back to the solution x, after a failed
 * step left it wherever the failed iterations went. */
static void reset_device_state(ss_circuit *ckt, const double *x)
{
    mna *m = ckt->mna;
    double *G = mna_values(m);
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(ckt->work_rhs, 0, (size_t)ckt->n_unknowns * sizeof *ckt->work_rhs);
    dev_load_ctx lc = {.G = G,
                       .rhs = ckt->work_rhs,
                       .x = x,
                       .gmin_s = ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = analysis_vt(ckt),
                       .mode = LOAD_FROM_X,
                       .ckt_elem = ckt->elem};
    for (int i = 0; i < ckt->n_elem; i++)
        ckt->elem[i].ops->load_dc(&ckt->elem[i], &lc);
}

/* Newton at one time point: every device's DC companion, then its charges' companion with
 * the step's coefficient a0 and history terms. x: the predictor in, the solution out.
 * Converged when an update is within the operating point's tolerances, nothing was limited,
 * and at least two iterations were made (the first one is measured from the predictor). */
static ss_status step_newton(ss_circuit *ckt, tran_ws *w, double a0, double tol_rel, double tol_v,
                             double *x, int *iters, int *worst_unknown)
{
    mna *m = ckt->mna;
    int n = w->n, nnz = mna_nnz(m);
    double *G = mna_values(m);
    double *rhs = ckt->work_rhs;
    const ss_options_set *o = &ckt->opt;
    double vt = analysis_vt(ckt);
    *worst_unknown = -1;
    for (int it = 0; it < TRAN_NEWTON_MAX; it++) {
        memset(G, 0, (size_t)nnz * sizeof *G);
        memset(rhs, 0, (size_t)n * sizeof *rhs);
        dev_load_ctx lc = {.G = G,
                           .rhs = rhs,
                           .x = x,
                           .gmin_s = o->gmin,
                           .src_scale = 1.0,
                           .vt_v = vt,
                           .mode = LOAD_NORMAL,
                           .ckt_elem = ckt->elem};
        for (int i = 0; i < ckt->n_elem; i++)
            ckt->elem[i].ops->load_dc(&ckt->elem[i], &lc);
        dev_tran_ctx tc = {.G = G, .rhs = rhs, .x = x, .vt_v = vt, .a0 = a0};
        for (int i = 0; i < ckt->n_elem; i++) {
            if (w->q_off[i] < 0)
                continue;
            tc.q = w->q_new + w->q_off[i];
            tc.hist = w->hist + w->q_off[i];
            ckt->elem[i].ops->load_tran(&ckt->elem[i], &tc);
        }
        int bad;
        double rcond;
        ss_status st = mna_solve_real(m, rhs, &bad, &rcond);
        (*iters)++;
        if (st != SS_OK) {
            *worst_unknown = bad;
            return st;
        }
        double worst = 0.0;
        for (int u = 0; u < n; u++) {
            double xn = rhs[u], xo = x[u];
            if (!isfinite(xn)) {
                *worst_unknown = u;
                return SS_ERR_NO_CONVERGENCE;
            }
            double tol = tol_rel * fmax(fabs(xn), fabs(xo)) + (u < w->n_volt ? tol_v : o->tol_i);
            double d = fabs(xn - xo);
            if (d > worst * tol) {
                worst = d / tol;
                *worst_unknown = u;
            }
        }
        memcpy(x, rhs, (size_t)n * sizeof *x);
        if (worst <= 1.0 && !lc.limited && it > 0)
            return SS_OK;
    }
    return SS_ERR_NO_CONVERGENCE;
}

/* Estimated local truncation error of the step to t0 over the allowed error, the worst node
 * (*worst_unknown): C h^3 |x'''| with x''' = 6 x[t0,t1,t2,t3], the third divided difference of
 * each node voltage over the new point and the three before it (Nagel 1975; Lambert 1991 --
 * from memory). Allowed: tol_rel max(|x0|, |x1|) + tol_v. */
static double lte_ratio(const tran_ws *w, const double *t, double c_lte, double h, double tol_rel,
                        double tol_v, int *worst_unknown)
{
    const double *x0 = w->x_new, *x1 = w->x_n, *x2 = w->x_nm1, *x3 = w->x_nm2;
    /* x[t0,t1,t2,t3] = sum_i x_i / prod_{j != i} (t_i - t_j): the same weights for every node,
     * times the error constant, h^3 and 6 */
    double wt[4];
    for (int i = 0; i < 4; i++) {
        double p = 1.0;
        for (int j = 0; j < 4; j++)
            if (j != i)
                p *= t[i] - t[j];
        wt[i] = c_lte * h * h * h * 6.0 / p;
    }
    double worst = 0.0;
    *worst_unknown = -1;
    for (int u = 0; u < w->n_volt; u++) {
        double lte = fabs(wt[0] * x0[u] + wt[1] * x1[u] + wt[2] * x2[u] + wt[3] * x3[u]);
        double allowed = tol_rel * fmax(fabs(x0[u]), fabs(x1[u])) + tol_v;
        if (lte > worst * allowed) {
            worst = lte / allowed;
            *worst_unknown = u;
        }
    }
    return worst;
}

static void rotate(double **a, double **b)
{
    double *t = *a;
    *a = *b;
    *b = t;
}

static ss_status step_floor_error(ss_circuit *ckt, double t_s, double h_s, int worst_unknown,
                                  int newton_failed, ss_error *err)
{
    char what[1200] = "an unknown";
    if (worst_unknown >= 0 && worst_unknown < ckt->n_unknowns)
        circuit_unknown_name(ckt, worst_unknown, what, sizeof what);
    return err_set(
        err, SS_ERR_NO_CONVERGENCE, ckt->tran_file ? ckt->tran_file : ckt->file, ckt->tran_line,
        "transient: the time step fell to %.3g s at t = %.9g s (%s at %s); the "
        "circuit may switch faster than the model can follow, or a source has a "
        "jump: give its edges a rise time",
        h_s, t_s, newton_failed ? "Newton does not converge" : "truncation error stays too large",
        what);
}

ss_status tran_run(ss_circuit *ckt, const tran_cfg *cfg, tran_stats *stats, ss_error *err)
{
    tran_stats s;
    memset(&s, 0, sizeof s);
    if (!(cfg->tstep_s > 0.0) || !(cfg->tstop_s > cfg->tstart_s) || !(cfg->tstart_s >= 0.0))
        return err_set(err, SS_ERR_INPUT, ckt->file, 0,
                       "transient: bad time grid (step %g s, start %g s, stop %g s)", cfg->tstep_s,
                       cfg->tstart_s, cfg->tstop_s);
    ss_status st = analysis_prepare(ckt, err);
    if (st != SS_OK)
        return st;
    tran_ws w;
    if ((st = ws_alloc(ckt, &w, err)) != SS_OK)
        return st;
    const double tstep = cfg->tstep_s, tstop = cfg->tstop_s, tstart = cfg->tstart_s;
    const double hmax = cfg->hmax_s > 0.0 ? cfg->hmax_s : tstop / 50.0;
    const double hmin = TRAN_HMIN_REL * tstop;
    /* times closer than this are one time (grid points and corners computed by different
     * sums differ by rounding): far above the rounding of t, far below any step */
    const double eps_t = 64.0 * DBL_EPSILON * tstop;
    const double tol_rel = cfg->tol_rel > 0.0 ? cfg->tol_rel : TRAN_TOL_REL_DEFAULT;
    const double tol_v = cfg->tol_v > 0.0 ? cfg->tol_v : TRAN_TOL_V_DEFAULT;
    const double c_lte = cfg->method == TRAN_GEAR2 ? LTE_C_GEAR2 : LTE_C_TRAP;
    const double ntol_rel =
        cfg->newton_tol_rel > 0.0 ? cfg->newton_tol_rel : 0.1 * fmin(ckt->opt.tol_rel, tol_rel);
    const double ntol_v =
        cfg->newton_tol_v > 0.0 ? cfg->newton_tol_v : 0.1 * fmin(ckt->opt.tol_v, tol_v);

    /* the initial condition: the operating point with every source at its t = 0 value */
    int need_op = !ckt->have_op, moved = 0;
    for (int k = 0; k < w.n_src; k++) {
        element *e = &ckt->elem[w.src[k]];
        double v0 = wave_value(e->wave, 0.0, tstep);
        moved |= v0 != e->value;
        e->value = v0;
    }
    if (need_op || moved) {
        ss_error e2 = {0};
        st = op_solve_into(ckt, NULL, &e2);
        if (st != SS_OK) {
            restore_sources(ckt, &w);
            ws_free(&w);
            return err_set(err, st, e2.file, e2.line, "transient: no operating point at t = 0: %s",
                           e2.message);
        }
    }
    memcpy(w.x_n, ckt->x_op, (size_t)w.n * sizeof *w.x_n);
    eval_charges(ckt, &w, w.x_n, w.q_n); /* at rest: i_n = 0 (ss_alloc zeroed it) */

    long k_last = (long)floor((tstop - tstart) / tstep + 1e-9);
    long k_next = 0;
    int stop = 0;
    if (tstart == 0.0) {
        s.points++;
        stop = cfg->on_point(cfg->ctx, 0, 0.0, w.x_n);
        k_next = 1;
    }
    double t = 0.0, h_prev = 0.0;
    double t_hist[3] = {0.0, 0.0, 0.0}; /* t_n, t_n-1, t_n-2 */
    double next_bp = next_corner(ckt, &w, 0.0, eps_t, tstep);
    double h = TRAN_FIRST_STEP * fmin(fmin(tstep, hmax), next_bp);
    int pts_since_bp = 1; /* accepted points since the last corner, the corner included */
    long alloc_mark = ss_alloc_count();
    s.h_min_used_s = HUGE_VAL;

    while (!stop && k_next <= k_last && st == SS_OK) {
        if (s.steps + s.rejected_lte + s.rejected_newton > TRAN_MAX_STEPS) {
            st = err_set(err, SS_ERR_LIMIT, ckt->tran_file ? ckt->tran_file : ckt->file,
                         ckt->tran_line, "transient: more than %ld steps at t = %.6g s",
                         TRAN_MAX_STEPS, t);
            break;
        }
        double t_grid = tstart + (double)k_next * tstep;
        if (t_grid - t <= eps_t) { /* an output time on the point just reached */
            s.points++;
            stop = cfg->on_point(cfg->ctx, k_next, t_grid, w.x_n);
            k_next++;
            continue;
        }
        double target = fmin(t_grid, next_bp);
        double h_prop = fmin(h, hmax);
        double h_try = h_prop;
        int lands = 0;
        if (target - t <= h_try * (1.0 + 1e-9)) {
            h_try = target - t;
            lands = 1;
        } else if (target - t < 2.0 * h_try) {
            h_try = 0.5 * (target - t); /* two even steps rather than a long and a tiny one */
        }
        double t_new = lands ? target : t + h_try;
        h_try = t_new - t;

        /* the formula: backward Euler for the first step after a corner (the old derivative
         * belongs to the other side of it), else the chosen method */
        enum step_form form = pts_since_bp < 2            ? FORM_BE
                              : cfg->method == TRAN_GEAR2 ? FORM_GEAR2
                                                          : FORM_TRAP;
        double a0, a1 = 0.0, a2 = 0.0;
        if (form == FORM_BE) {
            a0 = 1.0 / h_try;
            a1 = -a0;
        } else if (form == FORM_TRAP) {
            a0 = 2.0 / h_try;
            a1 = -a0;
        } else { /* variable-step BDF2 on t_n+1, t_n, t_n-1 (Lambert 1991 -- from memory) */
            double r = h_try / h_prev;
            a0 = (1.0 + 2.0 * r) / (h_try * (1.0 + r));
            a1 = -(1.0 + r) / h_try;
            a2 = r * r / (h_try * (1.0 + r));
        }
        for (int q = 0; q < w.n_q; q++)
            w.hist[q] = a1 * w.q_n[q] + a2 * w.q_nm1[q] - (form == FORM_TRAP ? w.i_n[q] : 0.0);

        set_sources(ckt, &w, t_new, tstep);
        /* predictor: the line through the last two points */
        if (pts_since_bp >= 2 && h_prev > 0.0) {
            double f = h_try / h_prev;
            for (int u = 0; u < w.n; u++)
                w.x_new[u] = w.x_n[u] + f * (w.x_n[u] - w.x_nm1[u]);
        } else {
            memcpy(w.x_new, w.x_n, (size_t)w.n * sizeof *w.x_new);
        }
        int iters = 0, worst_u = -1;
        ss_status nst = step_newton(ckt, &w, a0, ntol_rel, ntol_v, w.x_new, &iters, &worst_u);
        s.newton_iterations += iters;
        if (nst == SS_ERR_NOMEM) {
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            break;
        }
        if (nst != SS_OK) {
            s.rejected_newton++;
            reset_device_state(ckt, w.x_n);
            h = h_try * TRAN_NEWTON_CUT;
            if (h < hmin)
                st = step_floor_error(ckt, t, h, worst_u, 1, err);
            continue;
        }
        double h_next = TRAN_GROW_MAX * h_try;
        if (form != FORM_BE && pts_since_bp >= 3) {
            double tt[4] = {t_new, t_hist[0], t_hist[1], t_hist[2]};
            int lte_u;
            double r = lte_ratio(&w, tt, c_lte, h_try, tol_rel, tol_v, &lte_u);
            double f = r > 0.0 ? TRAN_SAFETY * pow(r, -1.0 / 3.0) : TRAN_GROW_MAX;
            if (r > 1.0) {
                s.rejected_lte++;
                reset_device_state(ckt, w.x_n);
                h = h_try * fmax(TRAN_SHRINK_MIN, f);
                if (h < hmin)
                    st = step_floor_error(ckt, t, h, lte_u, 0, err);
                continue;
            }
            h_next = h_try * fmin(TRAN_GROW_MAX, f);
        }

        /* accepted: the charges at the solution, the formula's current, the histories */
        eval_charges(ckt, &w, w.x_new, w.q_new);
        for (int q = 0; q < w.n_q; q++)
            w.i_n[q] = a0 * w.q_new[q] + w.hist[q];
        rotate(&w.q_nm1, &w.q_n); /* q_nm1 <- q_n */
        rotate(&w.q_n, &w.q_new); /* q_n <- q_new; q_new gets the oldest buffer */
        rotate(&w.x_nm2, &w.x_nm1);
        rotate(&w.x_nm1, &w.x_n);
        rotate(&w.x_n, &w.x_new);
        t_hist[2] = t_hist[1];
        t_hist[1] = t_hist[0];
        t_hist[0] = t_new;
        h_prev = h_try;
        t = t_new;
        s.steps++;
        pts_since_bp++;
        s.h_min_used_s = fmin(s.h_min_used_s, h_try);
        s.h_max_used_s = fmax(s.h_max_used_s, h_try);
        if (h_try < h_prop) /* cut short to land: the step asked for still stands */
            h_next = fmax(h_next, h_prop);

        if (lands && fabs(t - t_grid) <= eps_t) {
            s.points++;
            stop = cfg->on_point(cfg->ctx, k_next, t_grid, w.x_n);
            k_next++;
        }
        if (lands && fabs(t - next_bp) <= eps_t) {
            pts_since_bp = 1;
            next_bp = next_corner(ckt, &w, t, eps_t, tstep);
            h_next = TRAN_BP_CUT * fmin(h_prop, next_bp - t);
        }
        h = fmin(h_next, hmax);
    }
    s.allocs_in_loop = ss_alloc_count() - alloc_mark;
    restore_sources(ckt, &w);
    if (moved) /* x_op holds the t = 0 point, not the DC one */
        ckt->have_op = 0;
    ws_free(&w);
    if (stats)
        *stats = s;
    return st;
}

/* ---- the .tran analysis: tran.csv -------------------------------------------------------- */

typedef struct tran_sink {
    const ss_circuit *ckt;
    ss_table *t;
} tran_sink;

static int sink_point(void *vctx, long k, double t_s, const double *x)
{
    (void)k;
    tran_sink *s = vctx;
    double *row = table_add_row(s->t, NULL); /* reserved: no allocation */
    if (!row)
        return 1;
    int c = 0;
    row[c++] = t_s;
    for (int j = 0; j < circuit_n_out_nodes(s->ckt); j++)
        row[c++] = x[node_unknown(circuit_out_node(s->ckt, j))];
    return 0;
}

ss_status ss_tran_run(ss_circuit *ckt, ss_table **out_tran, ss_error *err)
{
    if (!ckt->want_tran)
        return err_set(err, SS_ERR_INPUT, ckt->file, 0, "the netlist has no .tran analysis");
    ss_status st = analysis_prepare(ckt, err);
    if (st != SS_OK)
        return st;
    int n_user = circuit_n_out_nodes(ckt);
    ss_table *t = table_create(1 + n_user, NULL);
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    static const char *const fmt[] = {"v(%s)"};
    int bad = table_set_col(t, 0, "time_s") | analysis_node_cols(t, ckt, 1, fmt, 1);
    long n_rows = (long)floor((ckt->tran_stop_s - ckt->tran_start_s) / ckt->tran_step_s + 1e-9) + 1;
    if ((double)n_rows * (1.0 + n_user) > TRAN_MAX_CELLS) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_LIMIT, ckt->tran_file, ckt->tran_line,
                       ".tran: %ld rows of %d columns exceed the table limit of %.0e values; "
                       "use a larger step or a later start",
                       n_rows, 1 + n_user, TRAN_MAX_CELLS);
    }
    if (bad || table_reserve(t, (int)n_rows) != 0) {
        ss_table_destroy(&t);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    tran_sink sink = {ckt, t};
    tran_cfg cfg = {.tstep_s = ckt->tran_step_s,
                    .tstop_s = ckt->tran_stop_s,
                    .tstart_s = ckt->tran_start_s,
                    .method = ckt->tran_method == 1 ? TRAN_GEAR2 : TRAN_TRAP,
                    .tol_rel = ckt->tran_tol_rel,
                    .tol_v = ckt->tran_tol_v,
                    .on_point = sink_point,
                    .ctx = &sink};
    st = tran_run(ckt, &cfg, NULL, err);
    if (st == SS_OK && ss_table_rows(t) != n_rows)
        st = err_set(err, SS_ERR_INTERNAL, ckt->file, 0, "transient: %d rows written, %ld expected",
                     ss_table_rows(t), n_rows);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out_tran = t;
    return SS_OK;
}
