/* The stage's output swing at the onset of clipping: the quasi-static transfer (every
 * capacitor and inductor either left as at DC or held at its operating point, as the signal
 * frequency sees it) followed from the bias until its slope falls, confirmed by the periodic
 * steady state of large_signal.c at each onset. docs/transient.md defines every figure. */
#include <complex.h>
#include <math.h>
#include <string.h>

#include "analysis/large_signal.h"

#define CLIP_GAIN_RATIO 0.9  /* onset of clipping: the slope falls to 90 % of its bias value */
#define CLIP_STEPS 100       /* march steps per (largest node voltage / |gain|) of input */
#define CLIP_BISECT_REL 1e-7 /* bracket of the onset, relative to its input excursion */
#define CLASS_TOL 0.05       /* a capacitor is a short (or open) if that moves |gain| <= 5 % */
#define CLASS_SCALE 1e6      /* short: C x 1e6; open: C / 1e6 (inductors the other way) */
#define FROZEN_G_S 1e3       /* a held capacitor: 1 mOhm to its operating-point voltage */
#define FROZEN_R_OHM 1e9     /* a held inductor: its current through 1 GOhm of compliance */
#define QS_GAIN_WARN 0.10    /* warn when the transfer's slope and the AC gain differ by 10 % */

/* ---- the quasi-static transfer ----------------------------------------------------------- */

/* Every element with stored charge is, for the quasi-static transfer, either left as at DC (a
 * capacitor open, an inductor shorted: the signal frequency sees it so) or held: a capacitor
 * at its operating-point voltage, an inductor at its operating-point current (the signal
 * frequency sees it as a short, or an open). A held element is loaded through its load_tran
 * with i = a0 q + hist = a0 (q - q_op), a0 chosen so a0 C = FROZEN_G_S (a0 L = FROZEN_R_OHM). */
typedef struct qs_ctx {
    ss_solver *sv;
    stage_ref sr;
    double *a0, *hist; /* per element; a0 0: not held */
    double *x;         /* the present point's solution */
    double u0;         /* the source's DC value */
    double vout0;
    dev_src_value u;      /* the source's present value: it reaches the source through the */
    dev_src_drive drive;  /* load context (drive), the element's own value stays the DC one */
    newton_cfg ncfg;      /* the transfer's Newton (qs_newton_cfg) */
} qs_ctx;

static double stage_gain_at(ss_solver *sv, const stage_ref *sr, double omega, ss_error *err,
                            ss_status *st)
{
    solver_lost_ac(sv); /* element values may have changed: rebuild the AC cache */
    *st = ac_solve_point(sv, omega, sr->src, 0, 0, err);
    return *st == SS_OK ? cabs(sv->work_zrhs[sr->out_node - 1]) : SS_NAN;
}

/* Decides, per capacitor and inductor, whether the signal frequency sees it as a short or an
 * open, from the stage's AC gain with the element scaled far up and far down. The scaled value
 * is written into the element itself -- this context's own copy (sv->elem), never the
 * circuit's -- and put back before the next element: the AC load context has no per-element
 * override for it, and nothing but these AC solves runs in between. */
static ss_status qs_classify(qs_ctx *c, double freq_hz, double *gain_ac, ss_error *err)
{
    ss_solver *sv = c->sv;
    double omega = 2.0 * SS_PI * freq_hz;
    ss_status st;
    double g_nom = stage_gain_at(sv, &c->sr, omega, err, &st);
    if (st != SS_OK)
        return st;
    *gain_ac = g_nom;
    double q[2];
    dev_tran_ctx tc = {.G = NULL, .x = sv->x_op, .vt_v = analysis_vt(sv), .q = q};
    for (int i = 0; i < sv->n_elem && st == SS_OK; i++) {
        element *e = &sv->elem[i];
        int is_c = elem_is(e, DEV_CAPACITOR);
        if ((!is_c && !elem_is(e, DEV_INDUCTOR)) || !(e->value > 0.0))
            continue;
        double v0 = e->value;
        e->value = v0 * CLASS_SCALE;
        double g_big = stage_gain_at(sv, &c->sr, omega, err, &st);
        e->value = v0 / CLASS_SCALE;
        double g_small = st == SS_OK ? stage_gain_at(sv, &c->sr, omega, err, &st) : SS_NAN;
        e->value = v0;
        if (st != SS_OK)
            break;
        /* a capacitor made large is a short; an inductor made small is */
        double d_short = fabs((is_c ? g_big : g_small) - g_nom);
        double d_open = fabs((is_c ? g_small : g_big) - g_nom);
        int hold = is_c ? d_short <= d_open : d_open <= d_short;
        if (fmin(d_short, d_open) > CLASS_TOL * g_nom)
            solver_warn(sv,
                         "large signal: %s is neither a short nor an open at %g Hz (the gain "
                         "moves %.0f %% / %.0f %% with it shorted / opened); the quasi-static "
                         "transfer takes it as %s",
                         e->name, freq_hz, 100.0 * d_short / g_nom, 100.0 * d_open / g_nom,
                         d_short <= d_open ? "a short" : "an open");
        if (!hold)
            continue;
        e->ops->load_tran(e, &tc);
        c->a0[i] = (is_c ? FROZEN_G_S : FROZEN_R_OHM) / v0;
        c->hist[i] = -c->a0[i] * q[0];
    }
    solver_lost_ac(sv);
    return st;
}

/* newton_cfg.load_extra: the held elements' companions at x (every DC companion is the loop's). */
static void qs_load_held(void *vctx, double *G, double *rhs, const double *x)
{
    const qs_ctx *c = vctx;
    ss_solver *sv = c->sv;
    double q[2];
    dev_tran_ctx tc = {.G = G, .rhs = rhs, .x = x, .vt_v = analysis_vt(sv), .q = q};
    for (int i = 0; i < sv->n_elem; i++) {
        if (c->a0[i] == 0.0)
            continue;
        tc.a0 = c->a0[i];
        tc.hist = &c->hist[i];
        sv->elem[i].ops->load_tran(&sv->elem[i], &tc);
    }
}

/* The transfer's Newton (the loop of solver/newton.c) into c->ncfg: tolerances a thousandth of
 * the operating point's (volts and relative; tol_i as it is), newton_iters + 2 iterations, two
 * polish iterations after the tolerances are met (within them), no early acceptance of the
 * first iteration; the held elements as its extra stamps. */
static void qs_newton_cfg(qs_ctx *c)
{
    const ss_options_set *o = &c->sv->ckt->opt;
    newton_cfg cfg = {.tol_rel = o->tol_rel * 1e-3,
                      .tol_v = o->tol_v * 1e-3,
                      .tol_i = o->tol_i,
                      .max_iter = o->newton_iters + 2,
                      .polish_max = 2,
                      .polish_stop = 0.0,
                      .polish_past_max = 0,
                      .first_mode = LOAD_NORMAL,
                      .first_may_converge = 0,
                      .worst_rule = NEWTON_WORST_RATIO,
                      .src_scale = 1.0,
                      .drive = &c->drive,
                      .ctx = c,
                      .load_extra = qs_load_held};
    c->ncfg = cfg;
}

/* Newton for the quasi-static system at the source's present value, from c->x. */
static ss_status qs_newton(qs_ctx *c)
{
    newton_result r;
    return newton_solve(c->sv, c->x, &c->ncfg, &r);
}

/* dV(out)/du at the solution c->x: one solve of the system linearised there with the source's
 * derivative as the right-hand side (exact for the discretised equations). */
static ss_status qs_slope(qs_ctx *c, double *slope)
{
    ss_solver *sv = c->sv;
    int limited;
    newton_load(sv, &c->ncfg, c->x, LOAD_FROM_X, &limited);
    double *b = sv->work_rhs;
    memset(b, 0, (size_t)sv->n_unknowns * sizeof *b);
    const element *e = c->sr.src;
    if (c->sr.is_current) { /* the source's current leaves n+ and enters n- */
        if (e->node[0] > 0)
            b[e->node[0] - 1] = -1.0;
        if (e->node[1] > 0)
            b[e->node[1] - 1] = 1.0;
    } else {
        b[e->branch] = 1.0;
    }
    int bad;
    ss_status st = mna_solve_real(sv->mna, b, &bad, NULL);
    if (st != SS_OK)
        return st;
    *slope = b[c->sr.out_node - 1];
    return isfinite(*slope) ? SS_OK : SS_ERR_NO_CONVERGENCE;
}

/* Solves the transfer at u (from c->x as it is): output voltage and slope. */
static ss_status qs_point(qs_ctx *c, double u, double *vout, double *slope)
{
    c->u.value = u;
    ss_status st = qs_newton(c);
    if (st == SS_OK)
        st = qs_slope(c, slope);
    if (st == SS_OK)
        *vout = c->x[c->sr.out_node - 1];
    return st;
}

typedef struct clip_side {
    double du;    /* input excursion at the onset (signed) */
    double dvout; /* output excursion there (signed) */
    int found;
} clip_side;

/* Marches the input away from its bias in direction dir until |slope| <= 0.9 |g0|, then
 * bisects the bracket. Newton failures halve the march step. */
static ss_status clip_search(qs_ctx *c, double dir, double g0, double v_scale, double *work,
                             clip_side *out)
{
    ss_solver *sv = c->sv;
    int n = sv->n_unknowns;
    memset(out, 0, sizeof *out);
    memcpy(c->x, sv->x_op, (size_t)n * sizeof *c->x);
    double step = v_scale / fabs(g0) / CLIP_STEPS, limit = CLIP_RANGE * v_scale / fabs(g0);
    double target = CLIP_GAIN_RATIO * fabs(g0);
    double du_lo = 0.0, du_hi = 0.0;
    double *x_lo = work; /* solution at the inner end of the bracket */
    memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
    int bracketed = 0, halvings = 0;
    double vout, slope;
    while (!bracketed && fabs(du_lo) < limit) {
        double du = du_lo + dir * step;
        ss_status st = qs_point(c, c->u0 + du, &vout, &slope);
        if (st == SS_ERR_NOMEM)
            return st;
        if (st != SS_OK) {
            memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
            step *= 0.5;
            if (++halvings > 40)
                return SS_OK; /* the transfer cannot be followed further: no onset found */
            continue;
        }
        if (fabs(slope) <= target) {
            du_hi = du;
            bracketed = 1;
        } else {
            du_lo = du;
            memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
        }
    }
    if (!bracketed)
        return SS_OK;
    for (int it = 0; it < 200 && fabs(du_hi - du_lo) > CLIP_BISECT_REL * fabs(du_hi); it++) {
        double du = 0.5 * (du_lo + du_hi);
        memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
        ss_status st = qs_point(c, c->u0 + du, &vout, &slope);
        if (st != SS_OK)
            return st == SS_ERR_NOMEM ? st : SS_OK;
        if (fabs(slope) <= target) {
            du_hi = du;
        } else {
            du_lo = du;
            memcpy(x_lo, c->x, (size_t)n * sizeof *x_lo);
        }
    }
    /* the onset: the outer end of the bracket, within CLIP_BISECT_REL of it */
    memcpy(c->x, x_lo, (size_t)n * sizeof *c->x);
    ss_status st = qs_point(c, c->u0 + du_hi, &vout, &slope);
    if (st != SS_OK)
        return st == SS_ERR_NOMEM ? st : SS_OK;
    out->du = du_hi;
    out->dvout = vout - c->vout0;
    out->found = 1;
    return SS_OK;
}

/* The transfer's slope g0 at the bias into *g0_out and res->qs_gain, with the largest node
 * voltage there (1 V at the least) into *v_scale_out; res->freq_hz, and res->gain_ac (the AC
 * gain there, NaN without capacitors and inductors); every held element into c. Returns SS_OK,
 * SS_ERR_INPUT (the stage passes nothing) or the status of the solve that failed. */
static ss_status clip_bias_slope(qs_ctx *c, clip_result *res, double *g0_out, double *v_scale_out,
                                 ss_error *err)
{
    ss_solver *sv = c->sv;
    const stage_ref *sr = &c->sr;
    int n = sv->n_unknowns;
    ss_status st = SS_OK;
    res->freq_hz = ls_freq(sv);
    res->gain_ac = SS_NAN;
    int has_storage = 0;
    for (int i = 0; i < sv->n_elem; i++)
        has_storage |= elem_is(&sv->elem[i], DEV_CAPACITOR | DEV_INDUCTOR);
    if (has_storage && (st = qs_classify(c, res->freq_hz, &res->gain_ac, err)) != SS_OK)
        return st;
    memcpy(c->x, sv->x_op, (size_t)n * sizeof *c->x);
    double g0 = 0.0;
    if ((st = qs_slope(c, &g0)) != SS_OK)
        return err_set(err, st, sv->ckt->file, 0,
                       "large signal: the transfer's slope at the bias "
                       "cannot be solved");
    res->qs_gain = g0;
    double v_scale = 1.0;
    for (int u = 0; u < sv->n_nodes - 1; u++)
        v_scale = fmax(v_scale, fabs(sv->x_op[u]));
    if (!(fabs(g0) > 1e-9 * v_scale))
        return err_set(err, SS_ERR_INPUT, sv->ckt->file, 0,
                       "large signal: the stage passes nothing from '%s' to '%s' at the bias "
                       "(quasi-static gain %g)",
                       sr->src->name, sv->stage.out, g0);
    if (isfinite(res->gain_ac) && fabs(fabs(g0) - res->gain_ac) > QS_GAIN_WARN * res->gain_ac)
        solver_warn(sv,
                     "large signal: the quasi-static transfer's gain %.4g differs from the AC "
                     "gain %.4g at %g Hz; the swing figures assume the signal frequency is in "
                     "the stage's mid-band",
                     fabs(g0), res->gain_ac, res->freq_hz);
    *g0_out = g0;
    *v_scale_out = v_scale;
    return SS_OK;
}

/* The onset of clipping each way from the bias (slope g0, node voltages up to v_scale) into
 * res's swings and input amplitudes, NaN where the transfer shows none (with a warning); the
 * source back at its bias value after. work: n_unknowns doubles. */
static ss_status clip_onsets(qs_ctx *c, clip_result *res, double g0, double v_scale, double *work,
                             ss_error *err)
{
    ss_solver *sv = c->sv;
    ss_status st = SS_OK;
    res->swing_pos = res->swing_neg = res->in_pos = res->in_neg = SS_NAN;
    res->swing_pos_tran = res->swing_neg_tran = SS_NAN;
    for (int d = 0; d < 2 && st == SS_OK; d++) {
        clip_side side;
        st = clip_search(c, d == 0 ? 1.0 : -1.0, g0, v_scale, work, &side);
        if (st != SS_OK || !side.found)
            continue;
        if (side.dvout > 0.0 && isnan(res->swing_pos)) {
            res->swing_pos = side.dvout;
            res->in_pos = fabs(side.du);
        } else if (side.dvout < 0.0 && isnan(res->swing_neg)) {
            res->swing_neg = -side.dvout;
            res->in_neg = fabs(side.du);
        }
    }
    c->u.value = c->u0;
    if (st != SS_OK)
        return err_set(err, st, NULL, 0, "large signal: %s while following the transfer",
                       ss_status_name(st));
    if (isnan(res->swing_pos) || isnan(res->swing_neg))
        solver_warn(sv,
                     "large signal: the output of '%s' does not clip %s within %g V of input "
                     "excursion; that swing is left empty",
                     sv->stage.out,
                     isnan(res->swing_pos) && isnan(res->swing_neg) ? "either way"
                     : isnan(res->swing_pos)                        ? "upwards"
                                                                    : "downwards",
                     CLIP_RANGE * v_scale / fabs(g0));
    return SS_OK;
}

/* Confirmation in the transient: the periodic output's peak at each onset amplitude, as an
 * excursion from the bias output vout0, into res->swing_pos_tran and res->swing_neg_tran. */
static ss_status clip_confirm(ss_solver *sv, const stage_ref *sr, double vout0, clip_result *res,
                              ss_error *err)
{
    ss_status st = SS_OK;
    for (int d = 0; d < 2 && st == SS_OK; d++) {
        double amp = d == 0 ? res->in_pos : res->in_neg;
        if (isnan(amp))
            continue;
        thd_run r;
        memset(&r, 0, sizeof r);
        r.amp = amp;
        r.freq_hz = res->freq_hz;
        r.for_swing = 1;
        st = thd_measure(sv, sr, &r, 0, err);
        if (st != SS_OK)
            break;
        if (d == 0)
            res->swing_pos_tran = r.vmax - vout0;
        else
            res->swing_neg_tran = vout0 - r.vmin;
    }
    return st;
}

static ss_status clipping_compute(ss_solver *sv, const stage_ref *sr, clip_result *res,
                                  ss_error *err)
{
    ss_status st = ls_ensure_op(sv, err);
    if (st != SS_OK)
        return st;
    int n = sv->n_unknowns;
    qs_ctx c;
    memset(&c, 0, sizeof c);
    c.sv = sv;
    c.sr = *sr;
    c.u0 = sr->src->value;
    c.vout0 = sv->x_op[sr->out_node - 1];
    c.u.elem = sr->src;
    c.u.value = c.u0;
    c.drive.set = &c.u;
    c.drive.n_set = 1;
    qs_newton_cfg(&c);
    c.a0 = ss_alloc((size_t)(sv->n_elem ? sv->n_elem : 1) * sizeof *c.a0);
    c.hist = ss_alloc((size_t)(sv->n_elem ? sv->n_elem : 1) * sizeof *c.hist);
    c.x = ss_alloc((size_t)n * sizeof *c.x);
    double *work = ss_alloc((size_t)n * sizeof *work);
    double g0 = 0.0, v_scale = 1.0;
    if (!c.a0 || !c.hist || !c.x || !work)
        st = err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    if (st == SS_OK)
        st = clip_bias_slope(&c, res, &g0, &v_scale, err);
    if (st == SS_OK)
        st = clip_onsets(&c, res, g0, v_scale, work, err);
    if (st == SS_OK)
        st = clip_confirm(sv, sr, c.vout0, res, err);
    ss_free(c.a0);
    ss_free(c.hist);
    ss_free(c.x);
    ss_free(work);
    return st;
}

/* ---- summary tables ---------------------------------------------------------------------- */

static ss_status clipping_rows(ss_solver *sv, const stage_ref *sr, ss_table *t, clip_result *res,
                               ss_error *err)
{
    ss_status st = clipping_compute(sv, sr, res, err);
    if (st != SS_OK)
        return st;
    const char *in_pos = sr->is_current ? "iin_at_swing_pos_a" : "vin_at_swing_pos_v";
    const char *in_neg = sr->is_current ? "iin_at_swing_neg_a" : "vin_at_swing_neg_v";
    /* one row after the other: the operands of | may be evaluated in any order, and the rows'
     * order is large_signal.csv's */
    const struct {
        const char *name;
        double v;
    } rows[] = {{"ls_freq_hz", res->freq_hz},
                {"qs_gain", res->qs_gain},
                {"swing_pos_v", res->swing_pos},
                {"swing_neg_v", res->swing_neg},
                {in_pos, res->in_pos},
                {in_neg, res->in_neg},
                {"swing_pos_tran_v", res->swing_pos_tran},
                {"swing_neg_tran_v", res->swing_neg_tran}};
    for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++)
        if (ls_add_metric(t, rows[i].name, rows[i].v) != 0)
            return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    return SS_OK;
}

static ss_table *metric_table(void)
{
    ss_table *t = table_create(1, "metric");
    if (t && table_set_col(t, 0, "value") != 0)
        ss_table_destroy(&t);
    return t;
}

ss_status clipping_summary(ss_solver *sv, stage_ref *sr, ss_table **out, clip_result *res,
                           ss_error *err)
{
    ss_status st = ls_stage_lookup(sv, sr, err);
    if (st != SS_OK)
        return st;
    ss_table *t = metric_table();
    if (!t)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory");
    memset(res, 0, sizeof *res);
    st = clipping_rows(sv, sr, t, res, err);
    if (st != SS_OK) {
        ss_table_destroy(&t);
        return st;
    }
    *out = t;
    return SS_OK;
}

ss_status ss_stage_clipping(ss_solver *sv, ss_table **out_summary, ss_error *err)
{
    stage_ref sr;
    clip_result res;
    return clipping_summary(sv, &sr, out_summary, &res, err);
}
