/* Transient analysis: charge-based integration of every device's charges (trapezoidal, or
 * gear2 on request), Newton at each step on the pattern analysed once, truncation-error step
 * control, steps landing exactly on the output grid and on source corners. The devices'
 * charges are theirs (load_tran); tran.csv is tran_csv.c's, the stage figures built on this
 * large_signal.c's. */
#include <float.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis/tran.h"
#include "devices/wave.h"

#define TRAN_NEWTON_MAX 25    /* Newton iterations per step before the step is cut */
#define TRAN_NEWTON_CUT 0.125 /* step factor after a Newton failure */
#define TRAN_GROW_MAX 2.0     /* largest step growth from one step to the next */
#define TRAN_SHRINK_MIN 0.2   /* smallest factor an error rejection cuts the step by */
#define TRAN_SAFETY 0.9       /* aim the next step's estimated error below the limit */
#define TRAN_BP_CUT 0.1       /* after a source corner: step <= 0.1 x min(last, next corner) */
#define TRAN_FIRST_STEP 0.01  /* the first step: 0.01 x min(tstep, hmax, first corner) */
#define TRAN_HMIN_REL 1e-12   /* step floor, relative to the stop time */
/* Rounding, not truncation: Newton updates that shrink by less than TRAN_STALL_SHRINK per
 * iteration, or an error estimate that falls by less than TRAN_STALL_ERR when the step is at
 * least halved (truncation error would fall 8 times), TRAN_STALL_COUNT times in a row -- each
 * within the solve's rounding bound */
#define TRAN_STALL_SHRINK 0.25
#define TRAN_STALL_ERR 0.5
#define TRAN_STALL_COUNT 2
#define TRAN_MAX_STEPS 200000000L

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
    /* the start-up step: its results at the midpoint and the first-level extrapolation at
     * the end; the backward-Euler solutions it extrapolates from (xs) and their charges (qs) */
    double *x_mid, *q_mid, *x_full;
    double *xs[4], *qs[2];
    double rcond;                   /* the last solve's reciprocal pivot ratio (KLU) */
    /* the sources that follow a time-varying form in this run: their elements, forms, and
     * present values, which reach the devices through the load context as drive */
    int *src;
    const src_wave **wave;
    dev_src_value *src_val;
    int n_src;
    dev_src_drive drive;
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
    ss_free(w->x_full);
    ss_free(w->x_mid);
    ss_free(w->q_mid);
    for (int k = 0; k < 4; k++)
        ss_free(w->xs[k]);
    for (int k = 0; k < 2; k++)
        ss_free(w->qs[k]);
    ss_free(w->src);
    ss_free(w->wave);
    ss_free(w->src_val);
    memset(w, 0, sizeof *w);
}

/* The run's work space and its sources: every source with a form of its own, or only
 * cfg->only_src following cfg->only_wave. */
static ss_status ws_alloc(const ss_solver *sv, const tran_cfg *cfg, tran_ws *w, ss_error *err)
{
    memset(w, 0, sizeof *w);
    w->n = sv->n_unknowns;
    w->n_volt = sv->n_nodes - 1;
    int n_elem = sv->n_elem;
    w->q_off = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->q_off);
    w->src = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->src);
    w->wave = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->wave);
    w->src_val = ss_alloc((size_t)(n_elem ? n_elem : 1) * sizeof *w->src_val);
    if (!w->q_off || !w->src || !w->wave || !w->src_val) {
        ws_free(w);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    for (int i = 0; i < n_elem; i++) {
        const element *e = &sv->elem[i];
        w->q_off[i] = -1;
        if (e->ops->load_tran && e->ops->n_charge > 0) {
            w->q_off[i] = w->n_q;
            w->n_q += e->ops->n_charge;
        }
        const src_wave *f = NULL;
        if (cfg->only_src)
            f = e == cfg->only_src ? cfg->only_wave : NULL;
        else if (elem_is_source(e))
            f = e->wave;
        if (f) {
            w->src[w->n_src] = i;
            w->wave[w->n_src] = f;
            w->src_val[w->n_src].elem = e;
            w->src_val[w->n_src].value = e->value;
            w->n_src++;
        }
    }
    w->drive.set = w->src_val;
    w->drive.n_set = w->n_src;
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
    w->x_full = ss_alloc(nx * sizeof(double));
    w->x_mid = ss_alloc(nx * sizeof(double));
    w->q_mid = ss_alloc(nq * sizeof(double));
    int bad = 0;
    for (int k = 0; k < 4; k++)
        bad |= !(w->xs[k] = ss_alloc(nx * sizeof(double)));
    for (int k = 0; k < 2; k++)
        bad |= !(w->qs[k] = ss_alloc(nq * sizeof(double)));
    if (bad || !w->q_new || !w->q_n || !w->q_nm1 || !w->i_n || !w->hist || !w->x_new || !w->x_n ||
        !w->x_nm1 || !w->x_nm2 || !w->x_full || !w->x_mid || !w->q_mid) {
        ws_free(w);
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    }
    return SS_OK;
}

/* Every time-varying source's value at t_s into the run's drive. */
static void set_sources(tran_ws *w, double t_s, double tstep_s)
{
    for (int k = 0; k < w->n_src; k++)
        w->src_val[k].value = wave_value(w->wave[k], t_s, tstep_s);
}

/* The first source corner strictly after t_s + eps (HUGE_VAL when none). */
static double next_corner(const tran_ws *w, double t_s, double eps, double tstep_s)
{
    double best = HUGE_VAL;
    for (int k = 0; k < w->n_src; k++) {
        double c = wave_next_break(w->wave[k], t_s + eps, tstep_s);
        if (c < best)
            best = c;
    }
    return best;
}

/* The longest step every source's form still allows from t_s on (HUGE_VAL: no limit). */
static double source_step_cap(const tran_ws *w, double t_s)
{
    double cap = HUGE_VAL;
    for (int k = 0; k < w->n_src; k++)
        cap = fmin(cap, wave_max_step(w->wave[k], t_s));
    return cap;
}

/* The steps the sources ask for up to tstop at the least, for the source asking most (*which,
 * its place in w->src): the span of a SIN over its largest step, two for the start after each
 * corner. */
static double source_steps_needed(const tran_ws *w, double tstop, int *which)
{
    double most = 0.0;
    *which = -1;
    for (int k = 0; k < w->n_src; k++) {
        const src_wave *f = w->wave[k];
        double need = 2.0 * wave_corners_until(f, tstop);
        double h = wave_max_step(f, HUGE_VAL);
        if (f->kind == WAVE_SIN && isfinite(h) && f->p[WS_TD] < tstop)
            need += (tstop - f->p[WS_TD]) / h;
        if (need > most) {
            most = need;
            *which = k;
        }
    }
    return most;
}

/* The charges of every element at the solution x, into q. */
static void eval_charges(ss_solver *sv, const tran_ws *w, const double *x, double *q)
{
    dev_tran_ctx tc = {.G = NULL, .x = x, .vt_v = analysis_vt(sv)};
    for (int i = 0; i < sv->n_elem; i++) {
        if (w->q_off[i] < 0)
            continue;
        element *e = &sv->elem[i];
        tc.q = q + w->q_off[i];
        tc.hist = w->hist + w->q_off[i];
        e->ops->load_tran(e, &tc);
    }
}

/* Puts every device's Newton state (junction voltages) back to the solution x, after a failed
 * step left it wherever the failed iterations went. */
static void reset_device_state(ss_solver *sv, const tran_ws *w, const double *x)
{
    mna *m = sv->mna;
    double *G = mna_values(m);
    memset(G, 0, (size_t)mna_nnz(m) * sizeof *G);
    memset(sv->work_rhs, 0, (size_t)sv->n_unknowns * sizeof *sv->work_rhs);
    dev_load_ctx lc = {.G = G,
                       .rhs = sv->work_rhs,
                       .x = x,
                       .gmin_s = sv->ckt->opt.gmin,
                       .src_scale = 1.0,
                       .vt_v = analysis_vt(sv),
                       .mode = LOAD_FROM_X,
                       .ckt_elem = sv->elem,
                       .drive = &w->drive};
    for (int i = 0; i < sv->n_elem; i++)
        sv->elem[i].ops->load_dc(&sv->elem[i], &lc);
}

/* The rounding bound of a solve's node voltages: eps / rcond times the largest of them, a
 * forward-error bound with KLU's reciprocal pivot ratio standing for the condition number
 * (G. H. Golub, C. F. Van Loan, Matrix Computations, 3rd ed., 1996, sec. 2.7 -- from memory).
 * It grows as the step shrinks under a large charge: a charge current a0 (q - q_n) keeps only
 * the digits that a0 q has beyond it. */
static double rounding_bound(const tran_ws *w, const double *x, double rcond)
{
    double big = 0.0;
    for (int u = 0; u < w->n_volt; u++)
        big = fmax(big, fabs(x[u]));
    return rcond > 0.0 ? DBL_EPSILON / rcond * big : HUGE_VAL;
}

/* Newton at one time point (the loop of solver/newton.c): every device's DC companion, then its
 * charges' companion with the step's coefficient a0 and history terms (tran_load_charges).
 * Converged when an update is within the tolerances, nothing was limited, and at least two
 * iterations were made (the first one is measured from the predictor) -- or, when the
 * tolerances lie below what double precision resolves in this step's system, at the rounding
 * floor (tran_at_floor). No polishing. */
typedef struct tran_newton_ctx {
    ss_solver *sv;
    tran_ws *w;
    double a0;             /* 1/s: the new charge's weight in i = a0 q + hist */
    double vt_v;           /* thermal voltage */
    double tol_rel, tol_v; /* Newton's tolerances */
} tran_newton_ctx;

/* newton_cfg.load_extra: every charge's companion at x, its charges into w->q_new. */
static void tran_load_charges(void *vctx, double *G, double *rhs, const double *x)
{
    const tran_newton_ctx *c = vctx;
    ss_solver *sv = c->sv;
    tran_ws *w = c->w;
    dev_tran_ctx tc = {.G = G, .rhs = rhs, .x = x, .vt_v = c->vt_v, .a0 = c->a0};
    for (int i = 0; i < sv->n_elem; i++) {
        if (w->q_off[i] < 0)
            continue;
        tc.q = w->q_new + w->q_off[i];
        tc.hist = w->hist + w->q_off[i];
        sv->elem[i].ops->load_tran(&sv->elem[i], &tc);
    }
}

/* newton_cfg.at_floor: from the third iteration on, the updates have stopped shrinking (by less
 * than TRAN_STALL_SHRINK from one iteration to the next) and every node voltage's is within its
 * tolerance plus the solve's rounding bound (branch currents are not judged there: at given
 * node voltages they follow from them). */
static int tran_at_floor(void *vctx, int it, double worst, double worst_prev,
                         const double *x_new, const double *x_old, double rcond)
{
    const tran_newton_ctx *c = vctx;
    if (!(it >= 2 && worst > TRAN_STALL_SHRINK * worst_prev))
        return 0;
    double bound = rounding_bound(c->w, x_new, rcond);
    int at_floor = 1;
    for (int u = 0; u < c->w->n_volt && at_floor; u++)
        at_floor = fabs(x_new[u] - x_old[u]) <=
                   c->tol_rel * fmax(fabs(x_new[u]), fabs(x_old[u])) + c->tol_v + bound;
    return at_floor;
}

/* Newton at one time point. x: the predictor in, the solution out; *iters counts the
 * iterations, *worst_unknown gets the unknown judged worst (the singular pivot when a solve
 * failed), w->rcond the last solve's pivot ratio. */
static ss_status step_newton(ss_solver *sv, tran_ws *w, double a0, double tol_rel, double tol_v,
                             double *x, int *iters, int *worst_unknown)
{
    tran_newton_ctx c = {sv, w, a0, analysis_vt(sv), tol_rel, tol_v};
    newton_cfg cfg = {.tol_rel = tol_rel,
                      .tol_v = tol_v,
                      .tol_i = sv->ckt->opt.tol_i,
                      .max_iter = TRAN_NEWTON_MAX,
                      .polish_max = 0,
                      .first_mode = LOAD_NORMAL,
                      .first_may_converge = 0,
                      .worst_rule = NEWTON_WORST_SCALED,
                      .src_scale = 1.0,
                      .drive = &w->drive,
                      .ctx = &c,
                      .load_extra = tran_load_charges,
                      .at_floor = tran_at_floor};
    newton_result r;
    ss_status st = newton_solve(sv, x, &cfg, &r);
    *iters += r.iterations;
    w->rcond = r.rcond;
    *worst_unknown = r.solve_failed ? r.bad_unknown : r.worst_unknown;
    return st;
}

/* Estimated local truncation error of the step to t0 over the allowed error, the worst node
 * (*worst_unknown) and its estimate in volts (*worst_v): C h^3 |x'''| with
 * x''' = 6 x[t0,t1,t2,t3], the third divided difference of each node voltage over the new
 * point and the three before it (Nagel 1975; Lambert 1991 -- from memory). Allowed:
 * tol_rel max(|x0|, |x1|) + tol_v. *weight_sum: the sum of the four points' |weights| (what
 * the estimate makes of an error in each point). */
static double lte_ratio(const tran_ws *w, const double *t, double c_lte, double h, double tol_rel,
                        double tol_v, int *worst_unknown, double *worst_v, double *weight_sum)
{
    const double *x0 = w->x_new, *x1 = w->x_n, *x2 = w->x_nm1, *x3 = w->x_nm2;
    /* x[t0,t1,t2,t3] = sum_i x_i / prod_{j != i} (t_i - t_j): the same weights for every node,
     * times the error constant, h^3 and 6 */
    double wt[4];
    *weight_sum = 0.0;
    for (int i = 0; i < 4; i++) {
        double p = 1.0;
        for (int j = 0; j < 4; j++)
            if (j != i)
                p *= t[i] - t[j];
        wt[i] = c_lte * h * h * h * 6.0 / p;
        *weight_sum += fabs(wt[i]);
    }
    double worst = 0.0;
    *worst_unknown = -1;
    *worst_v = 0.0;
    for (int u = 0; u < w->n_volt; u++) {
        double lte = fabs(wt[0] * x0[u] + wt[1] * x1[u] + wt[2] * x2[u] + wt[3] * x3[u]);
        double allowed = tol_rel * fmax(fabs(x0[u]), fabs(x1[u])) + tol_v;
        if (lte > worst * allowed) {
            worst = lte / allowed;
            *worst_unknown = u;
            *worst_v = lte;
        }
    }
    return worst;
}

/* The largest |a - b| of a node voltage over its allowed error tol_rel max(|a|, |b|) + tol_v,
 * the node (*worst_unknown) and the difference there (*worst_v). */
static double diff_ratio(const tran_ws *w, const double *a, const double *b, double tol_rel,
                         double tol_v, int *worst_unknown, double *worst_v)
{
    double worst = 0.0;
    *worst_unknown = -1;
    *worst_v = 0.0;
    for (int u = 0; u < w->n_volt; u++) {
        double d = fabs(a[u] - b[u]);
        double allowed = tol_rel * fmax(fabs(a[u]), fabs(b[u])) + tol_v;
        if (d > worst * allowed) {
            worst = d / allowed;
            *worst_unknown = u;
            *worst_v = d;
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

typedef struct step_tols {
    double n_rel, n_v; /* Newton's tolerances */
    double tstep_s;    /* the output step (PULSE edges given as 0 stand for it) */
} step_tols;

/* The coefficients of a formula for the step h (h_prev: the step before), and the history
 * term of every charge into w->hist from the accepted charges q_n (and w->q_nm1, w->i_n).
 * Returns a0: the step's charge currents are a0 q + hist. */
static double set_history(tran_ws *w, enum step_form form, double h, double h_prev,
                          const double *q_n)
{
    double a0, a1, a2 = 0.0;
    if (form == FORM_BE) {
        a0 = 1.0 / h;
        a1 = -a0;
    } else if (form == FORM_TRAP) {
        a0 = 2.0 / h;
        a1 = -a0;
    } else { /* variable-step BDF2 on t_n+1, t_n, t_n-1 (Lambert 1991 -- from memory) */
        double r = h / h_prev;
        a0 = (1.0 + 2.0 * r) / (h * (1.0 + r));
        a1 = -(1.0 + r) / h;
        a2 = r * r / (h * (1.0 + r));
    }
    for (int q = 0; q < w->n_q; q++)
        w->hist[q] = a1 * q_n[q] + a2 * w->q_nm1[q] - (form == FORM_TRAP ? w->i_n[q] : 0.0);
    return a0;
}

/* Newton for one step to t_new with a0 and w->hist set; x holds the predictor and gets the
 * solution. */
static ss_status solve_point(ss_solver *sv, tran_ws *w, const step_tols *tl, double a0,
                             double t_new, double *x, tran_stats *s, int *worst_u)
{
    set_sources(w, t_new, tl->tstep_s);
    int iters = 0;
    ss_status st = step_newton(sv, w, a0, tl->n_rel, tl->n_v, x, &iters, worst_u);
    s->newton_iterations += iters;
    return st;
}

/* The first step from a corner (or from t = 0), where no point on this side of it is known
 * yet, so no derivative either: backward Euler over the step h in 1, 2 and 4 equal steps,
 * extrapolated (local Richardson extrapolation of the implicit Euler method: E. Hairer,
 * G. Wanner, Solving Ordinary Differential Equations II, 2nd ed., Springer 1996, sec. IV.9 --
 * from memory). With s the sub-step, a backward-Euler solution at a fixed time is
 * x + a s + b s^2 + ..., so R1 = 2 x(h/2) - x(h) and R2 = 2 x(h/4) - x(h/2) are second-order
 * (errors -b h^2 / 2 and -b h^2 / 8, b of order h x'''), and (R2 - R1) / 3 estimates R2's error.
 * R2 goes to w->x_new and, from the sub-steps that pass it, the midpoint's to w->x_mid; R1 to
 * w->x_full. Seven Newton solves. */
static ss_status startup_step(ss_solver *sv, tran_ws *w, const step_tols *tl, double t,
                              double t_new, tran_stats *s, int *worst_u)
{
    const int n = w->n;
    const double h = t_new - t;
    double *x1 = w->x_full, *xa = w->xs[0], *xb = w->xs[1], *xc = w->xs[2], *xcm = w->xs[3];
    double *qa = w->qs[0], *qc = w->qs[1];
    double rcond = HUGE_VAL;
    /* one step of h */
    memcpy(x1, w->x_n, (size_t)n * sizeof *x1);
    double a0 = set_history(w, FORM_BE, h, 0.0, w->q_n);
    ss_status st = solve_point(sv, w, tl, a0, t_new, x1, s, worst_u);
    /* two of h / 2 */
    if (st == SS_OK) {
        rcond = fmin(rcond, w->rcond);
        for (int u = 0; u < n; u++)
            xa[u] = 0.5 * (w->x_n[u] + x1[u]);
        a0 = set_history(w, FORM_BE, 0.5 * h, 0.0, w->q_n);
        st = solve_point(sv, w, tl, a0, t + 0.5 * h, xa, s, worst_u);
    }
    if (st == SS_OK) {
        rcond = fmin(rcond, w->rcond);
        eval_charges(sv, w, xa, qa);
        memcpy(xb, x1, (size_t)n * sizeof *xb);
        a0 = set_history(w, FORM_BE, 0.5 * h, 0.0, qa);
        st = solve_point(sv, w, tl, a0, t_new, xb, s, worst_u);
    }
    /* four of h / 4, each guessed on the line through the half steps' points */
    for (int k = 1; k <= 4 && st == SS_OK; k++) {
        rcond = fmin(rcond, w->rcond);
        const double *lo = k <= 2 ? w->x_n : xa, *hi = k <= 2 ? xa : xb;
        double f = k % 2 ? 0.5 : 1.0;
        for (int u = 0; u < n; u++)
            xc[u] = lo[u] + f * (hi[u] - lo[u]);
        a0 = set_history(w, FORM_BE, 0.25 * h, 0.0, k == 1 ? w->q_n : qc);
        st = solve_point(sv, w, tl, a0, k == 4 ? t_new : t + 0.25 * k * h, xc, s, worst_u);
        if (st == SS_OK)
            eval_charges(sv, w, xc, qc);
        if (k == 2)
            memcpy(xcm, xc, (size_t)n * sizeof *xcm);
    }
    if (st != SS_OK)
        return st;
    w->rcond = fmin(rcond, w->rcond);
    for (int u = 0; u < n; u++) {
        w->x_mid[u] = 2.0 * xcm[u] - xa[u];
        w->x_new[u] = 2.0 * xc[u] - xb[u];
        x1[u] = 2.0 * xb[u] - x1[u];
    }
    return SS_OK;
}

/* Makes the solution x (charges q; x is w->x_new or w->x_mid, q w->q_new or w->q_mid) at t_s
 * the newest accepted point: the histories move back one place and the buffer x came from
 * gets the oldest one. */
static void accept_point(tran_ws *w, double *x, double *q, double *t_hist, double t_s)
{
    rotate(&w->x_nm2, &w->x_nm1);
    rotate(&w->x_nm1, &w->x_n); /* x_n now holds the oldest point: free */
    rotate(&w->q_nm1, &w->q_n); /* q_n likewise */
    double *x_free = w->x_n, *q_free = w->q_n;
    w->x_n = x;
    w->q_n = q;
    if (x == w->x_new)
        w->x_new = x_free;
    else
        w->x_mid = x_free;
    if (q == w->q_new)
        w->q_new = q_free;
    else
        w->q_mid = q_free;
    t_hist[2] = t_hist[1];
    t_hist[1] = t_hist[0];
    t_hist[0] = t_s;
}

static ss_status step_floor_error(ss_solver *sv, double t_s, double h_s, int worst_unknown,
                                  int newton_failed, ss_error *err)
{
    char what[1200] = "an unknown";
    if (worst_unknown >= 0 && worst_unknown < sv->n_unknowns)
        solver_unknown_name(sv, worst_unknown, what, sizeof what);
    return err_set(
        err, SS_ERR_NO_CONVERGENCE, sv->ckt->tran.file ? sv->ckt->tran.file : sv->ckt->file, sv->ckt->tran.line,
        "transient: the time step fell to %.3g s at t = %.9g s (%s at %s); the "
        "circuit may switch faster than the model can follow, or a source has a "
        "jump: give its edges a rise time",
        h_s, t_s, newton_failed ? "Newton does not converge" : "truncation error stays too large",
        what);
}

/* The error estimate at node worst_unknown stays at err_v as the step is cut to h_s: rounding,
 * not truncation, so the tolerances ask for more digits than double precision holds there. */
static ss_status rounding_error(ss_solver *sv, double t_s, double h_s, int worst_unknown,
                                double err_v, double tol_rel, double tol_v, ss_error *err)
{
    char what[1200] = "an unknown";
    if (worst_unknown >= 0 && worst_unknown < sv->n_unknowns)
        solver_unknown_name(sv, worst_unknown, what, sizeof what);
    return err_set(err, SS_ERR_NO_CONVERGENCE, sv->ckt->tran.file ? sv->ckt->tran.file : sv->ckt->file,
                   sv->ckt->tran.line,
                   "transient: tran_tol_rel=%g and tran_tol_v=%g cannot be held at t = %.9g s: "
                   "the error estimate at %s stays at %.2g V as the step is cut to %.3g s, the "
                   "rounding level of double precision there; loosen tran_tol_v or tran_tol_rel",
                   tol_rel, tol_v, t_s, what, err_v, h_s);
}

/* The run's constants, from its configuration, and where its stepping has got to: tran_run's,
 * handed to each of its steps. */
typedef struct tran_march {
    double tstep, tstop, tstart, hmax, hmin;
    /* times closer than this are one time (grid points and corners computed by different
     * sums differ by rounding): far above the rounding of t, far below any step */
    double eps_t;
    double tol_rel, tol_v; /* the truncation error's */
    step_tols tols;
    long k_last, k_next; /* the last output point, the next one due */
    int stop;            /* on_point asked to stop */
    double t, h_prev;
    double t_hist[3]; /* t_n, t_n-1, t_n-2 */
    double next_bp;   /* the next source corner */
    double h_src;     /* the sources' own limit from here on */
    double h;         /* the step proposed next */
    int pts_since_bp; /* accepted points since the last corner, the corner included */
    double rej_r, rej_h; /* the last error rejection from t: its ratio and step */
    int stalls;          /* rejections in a row whose estimate did not fall */
} tran_march;

/* One step as tried: where it goes, how, and what its solve and error estimate found. */
typedef struct step_try {
    double t_grid;  /* the output time due next */
    double h_prop;  /* the step proposed before landing on a grid point or corner */
    double h_try, t_new;
    int lands;      /* on the grid point or corner: the step was cut to reach it */
    int startup;    /* the first step from a corner */
    int worst_u, err_u;
    double r, err_v, a0, err_gain;
} step_try;

static void march_init(const ss_solver *sv, const tran_cfg *cfg, tran_march *m)
{
    memset(m, 0, sizeof *m);
    m->tstep = cfg->tstep_s;
    m->tstop = cfg->tstop_s;
    m->tstart = cfg->tstart_s;
    m->hmax = cfg->hmax_s > 0.0 ? cfg->hmax_s : m->tstop / 50.0;
    m->hmin = TRAN_HMIN_REL * m->tstop;
    m->eps_t = 64.0 * DBL_EPSILON * m->tstop;
    m->tol_rel = cfg->tol_rel > 0.0 ? cfg->tol_rel : TRAN_TOL_REL_DEFAULT;
    m->tol_v = cfg->tol_v > 0.0 ? cfg->tol_v : TRAN_TOL_V_DEFAULT;
    m->tols.n_rel = cfg->newton_tol_rel > 0.0 ? cfg->newton_tol_rel
                                               : 0.1 * fmin(sv->ckt->opt.tol_rel, m->tol_rel);
    m->tols.n_v =
        cfg->newton_tol_v > 0.0 ? cfg->newton_tol_v : 0.1 * fmin(sv->ckt->opt.tol_v, m->tol_v);
    m->tols.tstep_s = m->tstep;
}

/* The initial condition into w->x_n and its charges: the operating point with every source at
 * its t = 0 value (*moved: that differs from the DC one), or cfg->x_start. Returns SS_OK or
 * SS_ERR_NO_CONVERGENCE etc. from the operating point, the message saying so. */
static ss_status initial_point(ss_solver *sv, const tran_cfg *cfg, tran_ws *w, double tstep,
                               int *moved, ss_error *err)
{
    int need_op = !sv->have_op;
    for (int k = 0; k < w->n_src; k++) {
        double v0 = wave_value(w->wave[k], 0.0, tstep);
        *moved |= v0 != w->src_val[k].elem->value;
        w->src_val[k].value = v0;
    }
    if (cfg->x_start) {
        *moved = 0; /* x_op is left as it is */
    } else if (need_op || *moved) {
        ss_error e2 = {0};
        ss_status st = op_solve_driven(sv, &w->drive, NULL, &e2);
        if (st != SS_OK)
            return err_set(err, st, e2.file, e2.line, "transient: no operating point at t = 0: %s",
                           e2.message);
    }
    memcpy(w->x_n, cfg->x_start ? cfg->x_start : sv->x_op, (size_t)w->n * sizeof *w->x_n);
    if (cfg->x_start)
        reset_device_state(sv, w, w->x_n);
    /* at rest: i_n = 0 (ss_alloc zeroed it); from x_start the start after t = 0 needs none */
    eval_charges(sv, w, w->x_n, w->q_n);
    return SS_OK;
}

/* SS_ERR_LIMIT naming the source when the sources ask for more than TRAN_MAX_STEPS steps up to
 * tstop; SS_OK otherwise. */
static ss_status check_source_steps(const ss_solver *sv, const tran_ws *w, double tstop,
                                    ss_error *err)
{
    int busiest;
    double needed = source_steps_needed(w, tstop, &busiest);
    if (needed > (double)TRAN_MAX_STEPS) {
        const element *e = &sv->elem[w->src[busiest]];
        char why[64] = "two at each of its corners";
        if (w->wave[busiest]->kind == WAVE_SIN)
            snprintf(why, sizeof why, "%d a period of its sine", WAVE_SIN_STEPS);
        return err_set(err, SS_ERR_LIMIT, sv->ckt->tran.file ? sv->ckt->tran.file : sv->ckt->file,
                       sv->ckt->tran.line,
                       "transient: %s needs %.3g steps or more up to %g s (%s), more than the "
                       "limit of %.3g steps: shorten the run or slow the source",
                       e->name, needed, tstop, why, (double)TRAN_MAX_STEPS);
    }
    return SS_OK;
}

/* The step from m->t toward the output time a->t_grid: at most the proposed step, landing
 * exactly on the grid point or the next corner when it is within reach. */
static void plan_step(const tran_march *m, step_try *a)
{
    double target = fmin(a->t_grid, m->next_bp);
    a->h_prop = fmin(m->h, fmin(m->hmax, m->h_src));
    double h_try = a->h_prop;
    a->lands = 0;
    if (target - m->t <= h_try * (1.0 + 1e-9)) {
        h_try = target - m->t;
        a->lands = 1;
    } else if (target - m->t < 2.0 * h_try) {
        h_try = 0.5 * (target - m->t); /* two even steps rather than a long and a tiny one */
    }
    a->t_new = a->lands ? target : m->t + h_try;
    a->h_try = a->t_new - m->t;
}

/* Solves the step a plans and estimates its error: a->r over the allowed (with the node
 * a->err_u, its estimate a->err_v and a->err_gain, what the estimate makes of the solutions'
 * rounding), a->worst_u the unknown Newton judged worst. Returns the solve's status. */
static ss_status solve_step(ss_solver *sv, const tran_cfg *cfg, tran_ws *w, const tran_march *m,
                            tran_stats *s, step_try *a)
{
    /* the first step from a corner: extrapolated backward Euler (it needs no derivative
     * from before the corner); the next two gear2 (nor does it); then the chosen method */
    a->startup = m->pts_since_bp == 1;
    enum step_form form = a->startup                                          ? FORM_BE
                          : m->pts_since_bp < 4 || cfg->method == TRAN_GEAR2 ? FORM_GEAR2
                                                                              : FORM_TRAP;
    a->worst_u = -1;
    a->err_u = -1;
    a->r = 0.0;
    a->err_v = 0.0;
    a->a0 = 0.0;
    ss_status nst;
    if (a->startup) {
        nst = startup_step(sv, w, &m->tols, m->t, a->t_new, s, &a->worst_u);
        if (nst == SS_OK) { /* (R2 - R1) / 3 */
            a->r = diff_ratio(w, w->x_full, w->x_new, m->tol_rel, m->tol_v, &a->err_u,
                              &a->err_v) /
                   3.0;
            a->err_v /= 3.0;
        }
        /* (R2 - R1) / 3 = (2 x(h/4) - 3 x(h/2) + x(h)) / 3: the solutions' rounding, twice */
        a->err_gain = 2.0;
    } else {
        a->a0 = set_history(w, form, a->h_try, m->h_prev, w->q_n);
        /* predictor: the line through the last two points */
        double f = a->h_try / m->h_prev;
        for (int u = 0; u < w->n; u++)
            w->x_new[u] = w->x_n[u] + f * (w->x_n[u] - w->x_nm1[u]);
        nst = solve_point(sv, w, &m->tols, a->a0, a->t_new, w->x_new, s, &a->worst_u);
        double tt[4] = {a->t_new, m->t_hist[0], m->t_hist[1], m->t_hist[2]};
        if (nst == SS_OK)
            a->r = lte_ratio(w, tt, form == FORM_TRAP ? LTE_C_TRAP : LTE_C_GEAR2, a->h_try,
                             m->tol_rel, m->tol_v, &a->err_u, &a->err_v, &a->err_gain);
    }
    return nst;
}

/* A step whose error estimate a->r exceeds the allowed: the next try is shorter by f (at the
 * least TRAN_SHRINK_MIN). Returns SS_ERR_NO_CONVERGENCE when the estimate is rounding, not
 * truncation, or the step fell below its floor; SS_OK to try again. */
static ss_status reject_step(ss_solver *sv, tran_ws *w, tran_march *m, tran_stats *s,
                             const step_try *a, double f, ss_error *err)
{
    s->rejected_lte++;
    reset_device_state(sv, w, w->x_n);
    /* an estimate within what the solutions' rounding can make of it that does not
     * fall when the step is at least halved, or that drove the step to its floor, is
     * rounding, not truncation */
    int rounding = a->err_v <= a->err_gain * rounding_bound(w, w->x_new, w->rcond);
    int stalled = rounding && m->rej_r > 0.0 && a->h_try <= 0.5 * m->rej_h &&
                  a->r > TRAN_STALL_ERR * m->rej_r;
    m->stalls = stalled ? m->stalls + 1 : 0;
    m->rej_r = a->r;
    m->rej_h = a->h_try;
    m->h = a->h_try * fmax(TRAN_SHRINK_MIN, f);
    if (m->stalls >= TRAN_STALL_COUNT || (m->h < m->hmin && rounding))
        return rounding_error(sv, m->t, a->h_try, a->err_u, a->err_v, m->tol_rel, m->tol_v, err);
    if (m->h < m->hmin)
        return step_floor_error(sv, m->t, m->h, a->err_u, 0, err);
    return SS_OK;
}

/* The start-up step a accepted: its midpoint first, then its end point with the second-order
 * backward difference's derivative over the corner, the midpoint and the end. Returns the
 * next step (f: the growth its error estimate allows). */
static double accept_startup(ss_solver *sv, tran_ws *w, tran_march *m, tran_stats *s,
                             const step_try *a, double f)
{
    double hh = 0.5 * a->h_try;
    eval_charges(sv, w, w->x_mid, w->q_mid);
    accept_point(w, w->x_mid, w->q_mid, m->t_hist, m->t + hh);
    s->steps++;
    m->pts_since_bp++;
    m->h_prev = hh;
    s->h_min_used_s = fmin(s->h_min_used_s, hh);
    s->h_max_used_s = fmax(s->h_max_used_s, hh);
    /* the next step, gear2, grows from the half step by at most TRAN_GROW_MAX */
    double h_next = hh * fmin(TRAN_GROW_MAX, 2.0 * f);
    eval_charges(sv, w, w->x_new, w->q_new);
    for (int q = 0; q < w->n_q; q++)
        w->i_n[q] = (3.0 * w->q_new[q] - 4.0 * w->q_n[q] + w->q_nm1[q]) / a->h_try;
    accept_point(w, w->x_new, w->q_new, m->t_hist, a->t_new);
    reset_device_state(sv, w, w->x_n); /* the extrapolated point, not the last solve */
    return h_next;
}

/* The step a accepted: the charges at the solution, the formula's current, the histories; the
 * output point when it landed on one, and the restart after a corner it landed on. f: the
 * growth its error estimate allows. */
static void accept_step(ss_solver *sv, const tran_cfg *cfg, tran_ws *w, tran_march *m,
                        tran_stats *s, const step_try *a, double f)
{
    double h_next;
    if (a->startup) {
        h_next = accept_startup(sv, w, m, s, a, f);
    } else {
        m->h_prev = a->h_try;
        s->h_min_used_s = fmin(s->h_min_used_s, a->h_try);
        s->h_max_used_s = fmax(s->h_max_used_s, a->h_try);
        h_next = a->h_try * fmin(TRAN_GROW_MAX, f);
        if (a->h_try < a->h_prop) /* cut short to land: the step asked for still stands */
            h_next = fmax(h_next, a->h_prop);
        eval_charges(sv, w, w->x_new, w->q_new);
        for (int q = 0; q < w->n_q; q++)
            w->i_n[q] = a->a0 * w->q_new[q] + w->hist[q];
        accept_point(w, w->x_new, w->q_new, m->t_hist, a->t_new);
    }
    m->t = a->t_new;
    s->steps++;
    m->pts_since_bp++;

    if (a->lands && fabs(m->t - a->t_grid) <= m->eps_t) {
        s->points++;
        m->stop = cfg->on_point(cfg->ctx, m->k_next, a->t_grid, w->x_n);
        m->k_next++;
    }
    if (a->lands && fabs(m->t - m->next_bp) <= m->eps_t) {
        m->pts_since_bp = 1;
        m->next_bp = next_corner(w, m->t, m->eps_t, m->tstep);
        m->h_src = source_step_cap(w, m->t);
        h_next = TRAN_BP_CUT * fmin(fmin(a->h_prop, m->h_src), m->next_bp - m->t);
    }
    m->h = fmin(h_next, m->hmax);
}

/* Steps from the initial point in w->x_n to the last output point (or until on_point stops
 * the run), delivering every output point. Returns SS_OK, SS_ERR_LIMIT, SS_ERR_NOMEM or
 * SS_ERR_NO_CONVERGENCE (the step fell below its floor, or rounding). */
static ss_status march(ss_solver *sv, const tran_cfg *cfg, tran_ws *w, tran_march *m,
                       tran_stats *s, ss_error *err)
{
    ss_status st = SS_OK;
    m->k_last = (long)floor((m->tstop - m->tstart) / m->tstep + 1e-9);
    m->k_next = 0;
    m->stop = 0;
    if (m->tstart == 0.0) {
        s->points++;
        m->stop = cfg->on_point(cfg->ctx, 0, 0.0, w->x_n);
        m->k_next = 1;
    }
    m->t = 0.0;
    m->h_prev = 0.0;
    m->next_bp = next_corner(w, 0.0, m->eps_t, m->tstep);
    m->h_src = source_step_cap(w, 0.0);
    m->h = TRAN_FIRST_STEP * fmin(fmin(fmin(m->tstep, m->hmax), m->h_src), m->next_bp);
    m->pts_since_bp = 1;
    long alloc_mark = ss_alloc_count();
    s->h_min_used_s = HUGE_VAL;

    while (!m->stop && m->k_next <= m->k_last && st == SS_OK) {
        if (s->steps + s->rejected_lte + s->rejected_newton > TRAN_MAX_STEPS) {
            st = err_set(err, SS_ERR_LIMIT, sv->ckt->tran.file ? sv->ckt->tran.file : sv->ckt->file,
                         sv->ckt->tran.line, "transient: more than %ld steps at t = %.6g s",
                         TRAN_MAX_STEPS, m->t);
            break;
        }
        step_try a;
        a.t_grid = m->tstart + (double)m->k_next * m->tstep;
        if (a.t_grid - m->t <= m->eps_t) { /* an output time on the point just reached */
            s->points++;
            m->stop = cfg->on_point(cfg->ctx, m->k_next, a.t_grid, w->x_n);
            m->k_next++;
            continue;
        }
        plan_step(m, &a);
        ss_status nst = solve_step(sv, cfg, w, m, s, &a);
        if (nst == SS_ERR_NOMEM) {
            st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
            break;
        }
        if (nst != SS_OK) {
            s->rejected_newton++;
            reset_device_state(sv, w, w->x_n);
            m->h = a.h_try * TRAN_NEWTON_CUT;
            if (m->h < m->hmin)
                st = step_floor_error(sv, m->t, m->h, a.worst_u, 1, err);
            continue;
        }
        /* every error estimate goes as h^3 */
        double f = a.r > 0.0 ? TRAN_SAFETY * pow(a.r, -1.0 / 3.0) : TRAN_GROW_MAX;
        if (a.r > 1.0) {
            st = reject_step(sv, w, m, s, &a, f, err);
            continue;
        }
        m->rej_r = m->rej_h = 0.0;
        m->stalls = 0;
        accept_step(sv, cfg, w, m, s, &a, f);
    }
    s->allocs_in_loop = ss_alloc_count() - alloc_mark;
    return st;
}

ss_status tran_run(ss_solver *sv, const tran_cfg *cfg, tran_stats *stats, ss_error *err)
{
    tran_stats s;
    memset(&s, 0, sizeof s);
    if (!(cfg->tstep_s > 0.0) || !(cfg->tstop_s > cfg->tstart_s) || !(cfg->tstart_s >= 0.0))
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "transient: bad time grid (step %g s, start %g s, stop %g s)", cfg->tstep_s,
                       cfg->tstart_s, cfg->tstop_s);
    ss_status st = solver_prepare(sv, err);
    if (st != SS_OK)
        return st;
    tran_ws w;
    if ((st = ws_alloc(sv, cfg, &w, err)) != SS_OK)
        return st;
    tran_march m;
    march_init(sv, cfg, &m);
    int moved = 0; /* the t = 0 operating point differs from the DC one */
    st = initial_point(sv, cfg, &w, m.tstep, &moved, err);
    if (st == SS_OK)
        st = check_source_steps(sv, &w, m.tstop, err);
    if (st != SS_OK) {
        ws_free(&w);
        return st;
    }
    st = march(sv, cfg, &w, &m, &s, err);
    if (moved) /* x_op holds the t = 0 point, not the DC one */
        solver_lost_op(sv);
    ws_free(&w);
    if (stats)
        *stats = s;
    return st;
}
