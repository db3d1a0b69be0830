/* Junction field-effect transistor (N- and P-channel): the Shichman-Hodges drain current with
 * the gate-source and gate-drain junctions as diodes, ohmic RD/RS as internal nodes, depletion
 * capacitances CGS/CGD, temperature and area scaling. Matrix storage is src/mna's.
 * Sources: H. Shichman, D. A. Hodges, IEEE JSSC SC-3, 1968 (the drain current); the
 * parameterisation of P. Antognetti, G. Massobrio, Semiconductor Device Modeling with SPICE,
 * 2nd ed., 1993, JFET chapter (docs/models.md). */
#include <math.h>
#include <string.h>

#include "devices/junction.h"
#include "devices/passive.h"

/* Parameter order of the model card: ORDER JFET_PARAM (keep jfet_params[] in step). */
enum {
    JP_VTO, JP_BETA, JP_LAMBDA, JP_RD, JP_RS, JP_CGS, JP_CGD, JP_PB, JP_IS, JP_N, JP_FC, JP_KF,
    JP_AF, JP_COUNT
};

/* Published names and defaults (Antognetti & Massobrio 1993, JFET chapter -- the defaults from
 * memory), the ranges the equations need and where each is used: docs/models.md prints this
 * table (and a test compares the two). */
#define ALL (DMP_USE_DC | DMP_USE_AC | DMP_USE_NOISE | DMP_USE_TRAN)
#define CAP (DMP_USE_AC | DMP_USE_TRAN)
#define POS 0.0, HUGE_VAL, DMP_MIN_OPEN /* > 0 */
#define NONNEG 0.0, HUGE_VAL, 0         /* >= 0 */
#define ANY -HUGE_VAL, HUGE_VAL, 0
/* ORDER JFET_PARAM */
static const dev_model_param jfet_params[JP_COUNT] = {
    {"vto", -2.0, -HUGE_VAL, HUGE_VAL, DMP_CORNER | DMP_CORNER_SHIFT | DMP_CORNER_LOWERS, "V",
     ALL, "threshold (pinch-off) voltage; negative for depletion"},
    {"beta", 1e-4, POS | DMP_CORNER, "A/V^2", ALL, "transconductance parameter"},
    {"lambda", 0.0, NONNEG, "1/V", ALL, "channel-length modulation"},
    {"rd", 0.0, NONNEG, "ohm", ALL, "drain resistance"},
    {"rs", 0.0, NONNEG, "ohm", ALL, "source resistance"},
    {"cgs", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "zero-bias gate-source depletion capacitance"},
    {"cgd", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "zero-bias gate-drain depletion capacitance"},
    {"pb", 1.0, POS, "V", CAP | DMP_USE_TEMP, "gate junction built-in potential"},
    {"is", 1e-14, POS, "A", ALL | DMP_USE_TEMP, "gate junction saturation current"},
    {"n", 1.0, POS, "", ALL | DMP_USE_TEMP, "gate junction emission coefficient"},
    {"fc", 0.5, 0.0, 1.0, DMP_MAX_OPEN, "", CAP, "forward-bias depletion capacitance coefficient"},
    {"kf", 0.0, NONNEG, "", DMP_USE_NOISE, "flicker noise coefficient"},
    {"af", 1.0, POS, "", DMP_USE_NOISE, "flicker noise exponent"},
};
#undef ALL
#undef CAP
#undef POS
#undef NONNEG
#undef ANY

/* Held constants of the classic formulation (no card parameters for them): the gate junctions'
 * grading coefficient, and the saturation-current temperature law's energy gap and exponent
 * (the diode's defaults) at the default nominal temperature. */
#define JFET_GRADING 0.5
#define JFET_EG_EV 1.11
#define JFET_XTI 3.0

/* Slot layout: the RD and RS pairs, then the 3x3 core on (d', g, s'). */
enum { SL_RD = 0, SL_RS = 4, SL_CORE = 8, SL_COUNT = 17 };
enum { TD = 0, TG = 1, TS = 2 };
/* state[] */
enum { ST_VGS = 0, ST_VGD = 1 };

/* model types: the index is the polarity (0 N-channel, 1 P-channel) */
enum { JFET_N = 0, JFET_P = 1 };
static const char *const JFET_TYPES[] = {"njf", "pjf", NULL};

static double polarity(const element *e) { return e->mod->type == JFET_P ? -1.0 : 1.0; }

static int jfet_parse(pctx *p, element *e)
{
    /* Jname d g s model [area] */
    if (pctx_ntok(p) < 5)
        return pctx_error(p, "needs drain, gate, source nodes and a model");
    if (parse_nodes(p, e, 3) != 0)
        return -1;
    e->mod = pctx_model(p, pctx_tok(p, 4), e->ops);
    if (!e->mod)
        return -1;
    return parse_optional_area(p, e, 5);
}

static void jfet_setup(element *e, dev_setup_ctx *sc)
{
    const double *mp = e->mod->p;
    e->inode[TD] = mp[JP_RD] > 0.0 ? sc->new_node(sc->owner, e, "d") : e->node[TD];
    e->inode[TG] = e->node[TG];
    e->inode[TS] = mp[JP_RS] > 0.0 ? sc->new_node(sc->owner, e, "s") : e->node[TS];
}

static void jfet_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    for (int i = 0; i < SL_COUNT; i++)
        e->slot[i] = -1;
    if (e->inode[TD] != e->node[TD])
        claim_pair(e, sc, SL_RD, e->node[TD], e->inode[TD]);
    if (e->inode[TS] != e->node[TS])
        claim_pair(e, sc, SL_RS, e->node[TS], e->inode[TS]);
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            e->slot[SL_CORE + 3 * r + c] =
                sc->claim(sc->owner, node_unknown(e->inode[r]), node_unknown(e->inode[c]));
}

static int jfet_temp(const element *e, double temp_k, double *tp, char *why, size_t why_len)
{
    const double *mp = e->mod->p;
    memcpy(tp, mp, MODEL_MAX_PARAMS * sizeof *tp);
    double tnom_k = SS_TNOM_DEFAULT_C + SS_ZERO_C_IN_K;
    double vt = thermal_voltage_v(temp_k);
    double r = temp_k / tnom_k;
    /* IS(T) = IS r^(XTI/N) exp((r - 1) EG / (N Vt)), the diode's law with XTI = 3, EG = 1.11 eV
     * held; PB and CGS, CGD after the junction law (grading 0.5): docs/models.md. VTO, BETA
     * and LAMBDA are held (the classic formulation has no temperature coefficients for them). */
    tp[JP_IS] = mp[JP_IS] * pow(r, JFET_XTI / mp[JP_N]) *
                exp((r - 1.0) * JFET_EG_EV / (mp[JP_N] * vt));
    double pb_t;
    junction_temp_vj_cj(mp[JP_PB], mp[JP_CGS], JFET_GRADING, temp_k, tnom_k, vt, &pb_t,
                        &tp[JP_CGS]);
    junction_temp_vj_cj(mp[JP_PB], mp[JP_CGD], JFET_GRADING, temp_k, tnom_k, vt, &tp[JP_PB],
                        &tp[JP_CGD]);
    /* area scaling (docs/models.md) */
    double a = e->area;
    tp[JP_BETA] = mp[JP_BETA] * a;
    tp[JP_IS] *= a;
    tp[JP_CGS] *= a;
    tp[JP_CGD] *= a;
    tp[JP_RD] = mp[JP_RD] / a;
    tp[JP_RS] = mp[JP_RS] / a;
    /* what the equations divide by or take logarithms of must survive the scaling; the
     * junction potential matters only with a capacitance */
    if (temp_param_check("is", tp[JP_IS], 1, why, why_len) != 0 ||
        temp_param_check("beta", tp[JP_BETA], 1, why, why_len) != 0 ||
        temp_param_check("cgs", tp[JP_CGS], 0, why, why_len) != 0 ||
        temp_param_check("cgd", tp[JP_CGD], 0, why, why_len) != 0 ||
        temp_param_check("rd", tp[JP_RD], 0, why, why_len) != 0 ||
        temp_param_check("rs", tp[JP_RS], 0, why, why_len) != 0 ||
        temp_param_check("pb", tp[JP_PB], tp[JP_CGS] > 0.0 || tp[JP_CGD] > 0.0, why, why_len) !=
            0)
        return -1;
    return 0;
}

/* Model currents (N-channel sense) and their derivatives at the internal gate-source and
 * gate-drain voltages. */
typedef struct jfet_eval_out {
    double ids;          /* channel current d' -> s' */
    double igs, igd;     /* gate junction currents, gmin included */
    double gm, gds;      /* dids/dvgs at fixed vds, dids/dvds at fixed vgs */
    double ggs, ggd;     /* digs/dvgs, digd/dvgd, gmin included */
    const char *region;
} jfet_eval_out;

/* Shichman-Hodges (1968) in normal mode (vds >= 0): f(vgs, vds) and its two partials. */
static double sh_current(const double *tp, double vgs, double vds, double *fg, double *fv,
                         const char **region)
{
    double beta = tp[JP_BETA], lambda = tp[JP_LAMBDA];
    double vgst = vgs - tp[JP_VTO];
    if (vgst <= 0.0) {
        *fg = *fv = 0.0;
        *region = "cut-off";
        return 0.0;
    }
    double clm = 1.0 + lambda * vds;
    if (vds < vgst) { /* linear: BETA (1 + LAMBDA vds) vds (2 vgst - vds) */
        *fg = 2.0 * beta * clm * vds;
        *fv = 2.0 * beta * clm * (vgst - vds) + beta * lambda * vds * (2.0 * vgst - vds);
        *region = "linear";
        return beta * clm * vds * (2.0 * vgst - vds);
    }
    /* saturation: BETA (1 + LAMBDA vds) vgst^2 */
    *fg = 2.0 * beta * clm * vgst;
    *fv = beta * lambda * vgst * vgst;
    *region = "saturation";
    return beta * clm * vgst * vgst;
}

static void jfet_eval(const double *tp, double vt, double gmin, double vgs, double vgd,
                      jfet_eval_out *o)
{
    double nvt = tp[JP_N] * vt;
    o->igs = junction_current(tp[JP_IS], vgs, nvt, &o->ggs) + gmin * vgs;
    o->igd = junction_current(tp[JP_IS], vgd, nvt, &o->ggd) + gmin * vgd;
    o->ggs += gmin;
    o->ggd += gmin;
    double vds = vgs - vgd, fg, fv;
    if (vds >= 0.0) {
        o->ids = sh_current(tp, vgs, vds, &fg, &fv, &o->region);
        o->gm = fg;
        o->gds = fv;
    } else {
        /* inverse mode: the drain acts as the source (source/drain symmetry) */
        o->ids = -sh_current(tp, vgd, -vds, &fg, &fv, &o->region);
        /* ids = -f(vgd, vsd) with vgd = vgs - vds, vsd = -vds: at fixed vds, vgd moves with
         * vgs (dids/dvgs = -fg); at fixed vgs, dids/dvds = fg + fv */
        o->gm = -fg;
        o->gds = fg + fv;
    }
}

static void gate_voltages(const element *e, const double *x, double *vgs, double *vgd)
{
    double p = polarity(e);
    double vg = xv(x, e->inode[TG]);
    *vgs = p * (vg - xv(x, e->inode[TS]));
    *vgd = p * (vg - xv(x, e->inode[TD]));
}

/* The 3x3 Jacobian rows (currents into d', g; s' is minus their sum) on columns (d', g, s').
 * With vgs = vg - vs', vgd = vg - vd' and vds = vgs - vgd. */
static void jfet_jacobian(const jfet_eval_out *o, double jd[3], double jg[3])
{
    /* i_d = ids - igd: d/dvgs = gm + gds, d/dvgd = -gds - ggd */
    double d_vgs = o->gm + o->gds, d_vgd = -o->gds - o->ggd;
    jd[TD] = -d_vgd;
    jd[TG] = d_vgs + d_vgd;
    jd[TS] = -d_vgs;
    /* i_g = igs + igd */
    jg[TD] = -o->ggd;
    jg[TG] = o->ggs + o->ggd;
    jg[TS] = -o->ggs;
}

static void jfet_load_dc(element *e, dev_load_ctx *lc)
{
    const double *tp = e->tp;
    double p = polarity(e), nvt = tp[JP_N] * lc->vt_v;
    double vgs, vgd;
    gate_voltages(e, lc->x, &vgs, &vgd);
    double vcrit = junction_vcrit(nvt, tp[JP_IS]);
    if (lc->mode == LOAD_INIT_JUNCTION) {
        vgs = 0.0; /* gate junctions unbiased, the channel open at vds = 0 */
        vgd = 0.0;
    } else if (lc->mode == LOAD_NORMAL) {
        vgs = junction_limit(vgs, e->state[ST_VGS], nvt, vcrit, &lc->limited);
        vgd = junction_limit(vgd, e->state[ST_VGD], nvt, vcrit, &lc->limited);
    }
    e->state[ST_VGS] = vgs;
    e->state[ST_VGD] = vgd;

    jfet_eval_out o;
    jfet_eval(tp, lc->vt_v, lc->gmin_s, vgs, vgd, &o);
    double jd[3], jg[3];
    jfet_jacobian(&o, jd, jg);
    double d_vgs = o.gm + o.gds, d_vgd = -o.gds - o.ggd;
    double id = o.ids - o.igd, ig = o.igs + o.igd;
    /* the polarity squares away in the conductances and stays in the equivalent currents */
    double ieq_d = p * (id - d_vgs * vgs - d_vgd * vgd);
    double ieq_g = p * (ig - o.ggs * vgs - o.ggd * vgd);
    const int *core = &e->slot[SL_CORE];
    for (int c = 0; c < 3; c++) {
        stamp_add(lc->G, core[3 * TD + c], jd[c]);
        stamp_add(lc->G, core[3 * TG + c], jg[c]);
        stamp_add(lc->G, core[3 * TS + c], -(jd[c] + jg[c]));
    }
    rhs_add(lc->rhs, e->inode[TD], -ieq_d);
    rhs_add(lc->rhs, e->inode[TG], -ieq_g);
    rhs_add(lc->rhs, e->inode[TS], ieq_d + ieq_g);
    if (e->inode[TD] != e->node[TD])
        stamp_pair(lc->G, &e->slot[SL_RD], 1.0 / tp[JP_RD]);
    if (e->inode[TS] != e->node[TS])
        stamp_pair(lc->G, &e->slot[SL_RS], 1.0 / tp[JP_RS]);
}

/* Terminal currents from the model equations alone (not the Newton stamps). */
static void jfet_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    double vgs, vgd;
    gate_voltages(e, x, &vgs, &vgd);
    jfet_eval_out o;
    jfet_eval(e->tp, lc->vt_v, lc->gmin_s, vgs, vgd, &o);
    double p = polarity(e);
    rhs_add(resid, e->inode[TD], p * (o.ids - o.igd));
    rhs_add(resid, e->inode[TG], p * (o.igs + o.igd));
    rhs_add(resid, e->inode[TS], -p * (o.ids + o.igs));
    static const int r_of[3] = {JP_RD, -1, JP_RS};
    for (int t = 0; t < 3; t += 2) {
        if (e->inode[t] == e->node[t])
            continue;
        double i_r = (xv(x, e->node[t]) - xv(x, e->inode[t])) / e->tp[r_of[t]];
        rhs_add(resid, e->node[t], i_r);
        rhs_add(resid, e->inode[t], -i_r);
    }
}

static void jfet_load_ac(const element *e, dev_ac_ctx *ac)
{
    const double *tp = e->tp;
    double vgs, vgd;
    gate_voltages(e, ac->x_op, &vgs, &vgd);
    jfet_eval_out o;
    jfet_eval(tp, ac->vt_v, ac->gmin_s, vgs, vgd, &o);
    double jd[3], jg[3];
    jfet_jacobian(&o, jd, jg);
    /* depletion capacitances with the FC extension, grading 0.5 (docs/models.md) */
    double cgs = junction_depletion_cap(vgs, tp[JP_CGS], tp[JP_PB], JFET_GRADING, tp[JP_FC]);
    double cgd = junction_depletion_cap(vgd, tp[JP_CGD], tp[JP_PB], JFET_GRADING, tp[JP_FC]);
    double complex y[3][3];
    for (int c = 0; c < 3; c++) {
        y[TD][c] = jd[c];
        y[TG][c] = jg[c];
        y[TS][c] = -(jd[c] + jg[c]);
    }
    double complex ygs = SS_J * ac->omega * cgs, ygd = SS_J * ac->omega * cgd;
    y[TG][TG] += ygs + ygd;
    y[TS][TS] += ygs;
    y[TG][TS] -= ygs;
    y[TS][TG] -= ygs;
    y[TD][TD] += ygd;
    y[TG][TD] -= ygd;
    y[TD][TG] -= ygd;
    const int *core = &e->slot[SL_CORE];
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            zstamp_add(ac->G, core[3 * r + c], y[r][c]);
    if (e->inode[TD] != e->node[TD])
        zstamp_pair(ac->G, &e->slot[SL_RD], 1.0 / tp[JP_RD]);
    if (e->inode[TS] != e->node[TS])
        zstamp_pair(ac->G, &e->slot[SL_RS], 1.0 / tp[JP_RS]);
}

/* Operating-point details for the report and op.csv: terminal currents into the device,
 * terminal voltages, and the channel's gm and gds at the internal nodes. */
typedef struct jfet_op_info {
    double id_a, ig_a, vgs_v, vds_v, gm_s, gds_s;
    const char *region;
} jfet_op_info;

static void jfet_op_details(const element *e, const double *x, double vt_v, double gmin_s,
                            jfet_op_info *out)
{
    double vgs_i, vgd_i;
    gate_voltages(e, x, &vgs_i, &vgd_i);
    jfet_eval_out o;
    jfet_eval(e->tp, vt_v, gmin_s, vgs_i, vgd_i, &o);
    double p = polarity(e);
    out->id_a = p * (o.ids - o.igd);
    out->ig_a = p * (o.igs + o.igd);
    out->vgs_v = xv(x, e->node[TG]) - xv(x, e->node[TS]);
    out->vds_v = xv(x, e->node[TD]) - xv(x, e->node[TS]);
    out->gm_s = o.gm;
    out->gds_s = o.gds;
    out->region = o.region;
}

static void jfet_op_point(const element *e, const double *x, double vt_v, double gmin_s,
                          dev_op_point *out)
{
    jfet_op_info info;
    jfet_op_details(e, x, vt_v, gmin_s, &info);
    out->i_a = info.id_a;
    out->v_v = info.vds_v;
    out->region = info.region;
    out->amplifying = strcmp(info.region, "saturation") == 0;
    snprintf(out->detail, sizeof out->detail, "Vgs = %.4g V, Vds = %.4g V, Id = %.4g A",
             info.vgs_v, info.vds_v, info.id_a);
}

static const char JFET_REPORT_HEADING[] =
    "\nJFETs\n  name         type          Id          Ig        Vgs        Vds          gm"
    "         gds       power  region\n";

static void jfet_report_line(const element *e, const double *x, double vt_v, double gmin_s,
                             double power_w, char *buf, size_t len)
{
    char a[48], b[48], c[48], d[48], f[48], g[48], h[48];
    jfet_op_info info;
    jfet_op_details(e, x, vt_v, gmin_s, &info);
    snprintf(buf, len, "  %-12s %-4s %11s %11s %10s %10s %11s %11s %11s  %s", e->name,
             JFET_TYPES[e->mod->type], fmt_eng(a, sizeof a, info.id_a, "A"),
             fmt_eng(b, sizeof b, info.ig_a, "A"), fmt_eng(c, sizeof c, info.vgs_v, "V"),
             fmt_eng(d, sizeof d, info.vds_v, "V"), fmt_eng(f, sizeof f, info.gm_s, "S"),
             fmt_eng(g, sizeof g, info.gds_s, "S"), fmt_eng(h, sizeof h, power_w, "W"),
             info.region);
}

static void jfet_report(const element *e, const double *x, double vt_v, double gmin_s,
                        dev_report_fn fn, void *sink)
{
    jfet_op_info info = {SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, NULL};
    if (x)
        jfet_op_details(e, x, vt_v, gmin_s, &info);
    fn(sink, "id", e->name, info.id_a);
    fn(sink, "ig", e->name, info.ig_a);
    fn(sink, "vgs", e->name, info.vgs_v);
    fn(sink, "vds", e->name, info.vds_v);
    fn(sink, "gm", e->name, info.gm_s);
    fn(sink, "gds", e->name, info.gds_s);
}

/* Noise (docs/noise.md): channel thermal noise (8/3) k T |gm| and flicker KF |Id|^AF / f
 * between d' and s' (the classic JFET noise model, Antognetti & Massobrio 1993 -- from
 * memory), shot noise 2 q |I| of each gate junction, thermal noise of RD and RS. The currents
 * are the model's without the (noiseless) junction gmin. */
static int jfet_noise(const element *e, const dev_noise_ctx *nc, dev_noise_src *out)
{
    const double *tp = e->tp;
    double vgs, vgd;
    gate_voltages(e, nc->x_op, &vgs, &vgd);
    jfet_eval_out o;
    jfet_eval(tp, nc->vt_v, 0.0, vgs, vgd, &o);
    int n = 0;
    out[n++] = (dev_noise_src){e->inode[TD], e->inode[TS],
                               8.0 / 3.0 * SS_BOLTZMANN_J_PER_K * nc->temp_k * fabs(o.gm), 0.0,
                               "channel thermal"};
    if (tp[JP_KF] > 0.0)
        out[n++] = (dev_noise_src){e->inode[TD], e->inode[TS], 0.0,
                                   noise_flicker_a2(tp[JP_KF], tp[JP_AF], o.ids), "flicker"};
    out[n++] = (dev_noise_src){e->inode[TG], e->inode[TS], noise_shot_a2_per_hz(o.igs), 0.0,
                               "gate-source shot"};
    out[n++] = (dev_noise_src){e->inode[TG], e->inode[TD], noise_shot_a2_per_hz(o.igd), 0.0,
                               "gate-drain shot"};
    if (e->inode[TD] != e->node[TD])
        out[n++] = (dev_noise_src){e->node[TD], e->inode[TD],
                                   noise_thermal_a2_per_hz(nc->temp_k, tp[JP_RD]), 0.0,
                                   "rd thermal"};
    if (e->inode[TS] != e->node[TS])
        out[n++] = (dev_noise_src){e->node[TS], e->inode[TS],
                                   noise_thermal_a2_per_hz(nc->temp_k, tp[JP_RS]), 0.0,
                                   "rs thermal"};
    return n;
}

/* Transient charges (docs/transient.md), N-channel sense: q_gs, the CGS depletion charge
 * between g and s', and q_gd, the CGD depletion charge between g and d' (the integrals of the
 * FC-extended capacitances, junction_depletion_charge). */
static void jfet_load_tran(element *e, dev_tran_ctx *tc)
{
    const double *tp = e->tp;
    double p = polarity(e), vgs, vgd;
    if (tc->G) {
        vgs = e->state[ST_VGS];
        vgd = e->state[ST_VGD];
    } else {
        gate_voltages(e, tc->x, &vgs, &vgd);
    }
    double cgs, cgd;
    double q_gs =
        junction_depletion_charge(vgs, tp[JP_CGS], tp[JP_PB], JFET_GRADING, tp[JP_FC], &cgs);
    double q_gd =
        junction_depletion_charge(vgd, tp[JP_CGD], tp[JP_PB], JFET_GRADING, tp[JP_FC], &cgd);
    tc->q[0] = q_gs;
    tc->q[1] = q_gd;
    if (!tc->G)
        return;
    double a0 = tc->a0;
    double ieq_gs = p * (a0 * q_gs + tc->hist[0] - a0 * cgs * vgs);
    double ieq_gd = p * (a0 * q_gd + tc->hist[1] - a0 * cgd * vgd);
    const int *core = &e->slot[SL_CORE];
    /* i_gs: into g, out of s'; i_gd: into g, out of d' (columns d', g, s') */
    double jgs[3] = {0.0, a0 * cgs, -a0 * cgs};
    double jgd[3] = {-a0 * cgd, a0 * cgd, 0.0};
    for (int c = 0; c < 3; c++) {
        stamp_add(tc->G, core[3 * TG + c], jgs[c] + jgd[c]);
        stamp_add(tc->G, core[3 * TS + c], -jgs[c]);
        stamp_add(tc->G, core[3 * TD + c], -jgd[c]);
    }
    rhs_add(tc->rhs, e->inode[TG], -(ieq_gs + ieq_gd));
    rhs_add(tc->rhs, e->inode[TS], ieq_gs);
    rhs_add(tc->rhs, e->inode[TD], ieq_gd);
}

/* corners.csv: "j1 current low, 85 C" with id_a, vds_v, saturation */
static const dev_corner_names JFET_CORNER = {"current", "id_a", "vds_v"};

/* drain-source through the channel, gate-source through the gate junction */
static const unsigned char JFET_DC_PAIRS[2][2] = {{0, 2}, {1, 2}};

const dev_ops jfet_ops = {
    .letter = 'j',
    .kind_name = "junction field-effect transistor",
    .dc_pairs = JFET_DC_PAIRS,
    .n_dc_pairs = 2,
    .op_point = jfet_op_point,
    .bypass_terminal = 2,
    .amplifying_region = "saturation",
    .corner = &JFET_CORNER,
    .report_heading = JFET_REPORT_HEADING,
    .report_line = jfet_report_line,
    .parse = jfet_parse,
    .setup = jfet_setup,
    .claim = jfet_claim,
    .n_slot = SL_COUNT,
    .temp = jfet_temp,
    .load_dc = jfet_load_dc,
    .kcl = jfet_kcl,
    .load_ac = jfet_load_ac,
    .report = jfet_report,
    .noise = jfet_noise,
    .load_tran = jfet_load_tran,
    .n_charge = 2,
    .value_name = NULL,
    .model_types = JFET_TYPES,
    .model_kind = "JFET",
    .model_params = jfet_params,
    .n_model_params = JP_COUNT,
};
