/* Junction diode: Shockley law with series resistance RS (an internal node), temperature and
 * area scaling, depletion and diffusion capacitance in AC. Matrix storage is src/mna's. */
#include <math.h>
#include <string.h>

#include "devices/junction.h"
#include "devices/passive.h"

/* ORDER DIODE_PARAM (keep diode_params[] in step) */
enum { DP_IS, DP_N, DP_RS, DP_CJO, DP_VJ, DP_M, DP_FC, DP_TT, DP_XTI, DP_EG, DP_TNOM, DP_KF,
       DP_AF, DP_COUNT };

/* Published names and defaults (Nagel 1975), ranges, units and uses: docs/models.md prints
 * this table (and a test compares the two). */
#define ALL (DMP_USE_DC | DMP_USE_AC | DMP_USE_NOISE | DMP_USE_TRAN)
#define CAP (DMP_USE_AC | DMP_USE_TRAN)
#define POS 0.0, HUGE_VAL, DMP_MIN_OPEN
#define NONNEG 0.0, HUGE_VAL, 0
#define ANY -HUGE_VAL, HUGE_VAL, 0
#define GRADING 0.0, 1.0, DMP_MAX_OPEN /* 0 <= m < 1: the depletion charge divides by 1 - m */
/* ORDER DIODE_PARAM */
static const dev_model_param diode_params[DP_COUNT] = {
    {"is", 1e-14, POS, "A", ALL | DMP_USE_TEMP, "saturation current"},
    {"n", 1.0, POS, "", ALL | DMP_USE_TEMP, "emission coefficient"},
    {"rs", 0.0, NONNEG, "ohm", ALL, "series resistance"},
    {"cjo", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "zero-bias depletion capacitance"},
    {"vj", 1.0, POS, "V", CAP | DMP_USE_TEMP, "built-in potential"},
    {"m", 0.5, GRADING, "", CAP | DMP_USE_TEMP, "grading coefficient"},
    {"fc", 0.5, 0.0, 1.0, DMP_MAX_OPEN, "", CAP, "forward-bias depletion capacitance coefficient"},
    {"tt", 0.0, NONNEG, "s", CAP, "transit time"},
    {"xti", 3.0, ANY, "", DMP_USE_TEMP, "saturation current temperature exponent"},
    {"eg", 1.11, POS, "eV", DMP_USE_TEMP, "energy gap of the saturation current law"},
    {"tnom", SS_TNOM_DEFAULT_C, -SS_ZERO_C_IN_K, 1000.0, DMP_MIN_OPEN | DMP_CELSIUS, "C",
     DMP_USE_TEMP, "temperature the parameters were measured at"},
    {"kf", 0.0, NONNEG, "", DMP_USE_NOISE, "flicker noise coefficient"},
    {"af", 1.0, POS, "", DMP_USE_NOISE, "flicker noise exponent"},
};
#undef ALL
#undef CAP
#undef POS
#undef NONNEG
#undef ANY
#undef GRADING

enum { SL_RS = 0, SL_J = 4, SL_COUNT = 8 };

static const char *const DIODE_TYPES[] = {"d", NULL};

static int diode_parse(pctx *p, element *e)
{
    /* Dname anode cathode model [area] */
    if (parse_nodes(p, e, 2) != 0)
        return -1;
    if (pctx_ntok(p) < 4)
        return pctx_error(p, "missing model name");
    e->mod = pctx_model(p, pctx_tok(p, 3), e->ops);
    if (!e->mod)
        return -1;
    return parse_optional_area(p, e, 4);
}

static void diode_setup(element *e, dev_setup_ctx *sc)
{
    e->inode[0] = e->mod->p[DP_RS] > 0.0 ? sc->new_node(sc->owner, e, "a") : e->node[0];
}

static void diode_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    for (int i = 0; i < SL_COUNT; i++)
        e->slot[i] = -1;
    if (e->inode[0] != e->node[0])
        claim_pair(e, sc, SL_RS, e->node[0], e->inode[0]);
    claim_pair(e, sc, SL_J, e->inode[0], e->node[1]);
}

static int diode_temp(const element *e, double temp_k, double *tp, char *why, size_t why_len)
{
    const double *mp = e->mod->p;
    memcpy(tp, mp, MODEL_MAX_PARAMS * sizeof *tp);
    double tnom_k = mp[DP_TNOM] + SS_ZERO_C_IN_K;
    double vt = thermal_voltage_v(temp_k);
    double r = temp_k / tnom_k;
    /* IS(T) = IS r^(XTI/N) exp((r - 1) EG / (N Vt)): docs/models.md */
    tp[DP_IS] = mp[DP_IS] * pow(r, mp[DP_XTI] / mp[DP_N]) *
                exp((r - 1.0) * mp[DP_EG] / (mp[DP_N] * vt)) * e->area;
    junction_temp_vj_cj(mp[DP_VJ], mp[DP_CJO], mp[DP_M], temp_k, tnom_k, vt, &tp[DP_VJ],
                        &tp[DP_CJO]);
    tp[DP_CJO] *= e->area;
    tp[DP_RS] = mp[DP_RS] / e->area;
    /* what the equations divide by or take logarithms of must survive the scaling; the
     * junction potential matters only with its capacitance */
    if (temp_param_check("is", tp[DP_IS], 1, why, why_len) != 0 ||
        temp_param_check("cjo", tp[DP_CJO], 0, why, why_len) != 0 ||
        temp_param_check("rs", tp[DP_RS], 0, why, why_len) != 0 ||
        temp_param_check("vj", tp[DP_VJ], tp[DP_CJO] > 0.0, why, why_len) != 0)
        return -1;
    return 0;
}

static void diode_load_dc(element *e, dev_load_ctx *lc)
{
    const double *tp = e->tp;
    double nvt = tp[DP_N] * lc->vt_v;
    double vd = xv(lc->x, e->inode[0]) - xv(lc->x, e->node[1]);
    double vcrit = junction_vcrit(nvt, tp[DP_IS]);
    if (lc->mode == LOAD_INIT_JUNCTION)
        vd = vcrit;
    else if (lc->mode == LOAD_NORMAL)
        vd = junction_limit(vd, e->state[0], nvt, vcrit, &lc->limited);
    e->state[0] = vd;
    double gd;
    double id = junction_current(tp[DP_IS], vd, nvt, &gd) + lc->gmin_s * vd;
    gd += lc->gmin_s;
    stamp_pair(lc->G, &e->slot[SL_J], gd);
    double ieq = id - gd * vd;
    rhs_add(lc->rhs, e->inode[0], -ieq);
    rhs_add(lc->rhs, e->node[1], ieq);
    if (e->inode[0] != e->node[0])
        stamp_pair(lc->G, &e->slot[SL_RS], 1.0 / tp[DP_RS]);
}

static void diode_load_ac(const element *e, dev_ac_ctx *ac)
{
    const double *tp = e->tp;
    double vd = xv(ac->x_op, e->inode[0]) - xv(ac->x_op, e->node[1]);
    double gd;
    junction_current(tp[DP_IS], vd, tp[DP_N] * ac->vt_v, &gd);
    /* depletion (FC extension) plus diffusion TT gd: docs/models.md */
    double cd = junction_depletion_cap(vd, tp[DP_CJO], tp[DP_VJ], tp[DP_M], tp[DP_FC]) +
                tp[DP_TT] * gd;
    zstamp_pair(ac->G, &e->slot[SL_J], gd + ac->gmin_s + SS_J * ac->omega * cd);
    if (e->inode[0] != e->node[0])
        zstamp_pair(ac->G, &e->slot[SL_RS], 1.0 / tp[DP_RS]);
}

static void diode_report(const element *e, const double *x, double vt_v, double gmin_s,
                         dev_report_fn fn, void *sink)
{
    double id = SS_NAN;
    if (x) {
        double vd = xv(x, e->inode[0]) - xv(x, e->node[1]);
        double gd;
        id = junction_current(e->tp[DP_IS], vd, e->tp[DP_N] * vt_v, &gd) + gmin_s * vd;
    }
    fn(sink, "id", e->name, id);
}

static const char DIODE_REPORT_HEADING[] =
    "\nDiodes\n  name                  Id         Vd       power\n";

static void diode_report_line(const element *e, const double *x, double vt_v, double gmin_s,
                              double power_w, char *buf, size_t len)
{
    char a[48], b[48], c[48];
    double vd = xv(x, e->node[0]) - xv(x, e->node[1]);
    /* the diode current exactly as op.csv has it */
    double vdi = xv(x, e->inode[0]) - xv(x, e->node[1]), gd;
    double id = junction_current(e->tp[DP_IS], vdi, e->tp[DP_N] * vt_v, &gd) + gmin_s * vdi;
    snprintf(buf, len, "  %-12s %11s %10s %11s", e->name, fmt_eng(a, sizeof a, id, "A"),
             fmt_eng(b, sizeof b, vd, "V"), fmt_eng(c, sizeof c, power_w, "W"));
}

/* Terminal currents from the device equations alone (not the Newton stamps). */
static void diode_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    const double *tp = e->tp;
    double vd = xv(x, e->inode[0]) - xv(x, e->node[1]);
    double gd;
    double id = junction_current(tp[DP_IS], vd, tp[DP_N] * lc->vt_v, &gd) + lc->gmin_s * vd;
    rhs_add(resid, e->inode[0], id);
    rhs_add(resid, e->node[1], -id);
    if (e->inode[0] != e->node[0]) {
        double i_rs = (xv(x, e->node[0]) - xv(x, e->inode[0])) / tp[DP_RS];
        rhs_add(resid, e->node[0], i_rs);
        rhs_add(resid, e->inode[0], -i_rs);
    }
}

/* Noise (docs/noise.md): shot noise 2q|Id| and flicker KF |Id|^AF / f across the junction,
 * thermal noise of RS. Id is the junction's own current without gmin (a noiseless aid). */
static int diode_noise(const element *e, const dev_noise_ctx *nc, dev_noise_src *out)
{
    const double *tp = e->tp;
    double vd = xv(nc->x_op, e->inode[0]) - xv(nc->x_op, e->node[1]);
    double gd;
    double id = junction_current(tp[DP_IS], vd, tp[DP_N] * nc->vt_v, &gd);
    int n = 0;
    out[n++] = (dev_noise_src){e->inode[0], e->node[1], noise_shot_a2_per_hz(id), 0.0, "shot"};
    if (tp[DP_KF] > 0.0)
        out[n++] = (dev_noise_src){e->inode[0], e->node[1], 0.0,
                                   noise_flicker_a2(tp[DP_KF], tp[DP_AF], id), "flicker"};
    if (e->inode[0] != e->node[0])
        out[n++] = (dev_noise_src){e->node[0], e->inode[0],
                                   noise_thermal_a2_per_hz(nc->temp_k, tp[DP_RS]), 0.0,
                                   "rs thermal"};
    return n;
}

/* Junction charge for the transient: the depletion charge (the integral of the FC-extended
 * depletion capacitance, junction_depletion_charge) plus the diffusion charge TT Id, with Id
 * the Shockley current without gmin (docs/transient.md). */
static void diode_load_tran(element *e, dev_tran_ctx *tc)
{
    const double *tp = e->tp;
    double vd = tc->G ? e->state[0] : xv(tc->x, e->inode[0]) - xv(tc->x, e->node[1]);
    double c;
    double q = junction_depletion_charge(vd, tp[DP_CJO], tp[DP_VJ], tp[DP_M], tp[DP_FC], &c);
    if (tp[DP_TT] > 0.0) {
        double gd;
        q += tp[DP_TT] * junction_current(tp[DP_IS], vd, tp[DP_N] * tc->vt_v, &gd);
        c += tp[DP_TT] * gd;
    }
    tc->q[0] = q;
    if (!tc->G)
        return;
    double g = tc->a0 * c;
    double ieq = tc->a0 * q + tc->hist[0] - g * vd;
    stamp_pair(tc->G, &e->slot[SL_J], g);
    rhs_add(tc->rhs, e->inode[0], -ieq);
    rhs_add(tc->rhs, e->node[1], ieq);
}

const dev_ops diode_ops = {
    .letter = 'd',
    .kind_name = "diode",
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .parse = diode_parse,
    .setup = diode_setup,
    .claim = diode_claim,
    .n_slot = SL_COUNT,
    .temp = diode_temp,
    .load_dc = diode_load_dc,
    .kcl = diode_kcl,
    .load_ac = diode_load_ac,
    .report = diode_report,
    .report_heading = DIODE_REPORT_HEADING,
    .report_line = diode_report_line,
    .noise = diode_noise,
    .load_tran = diode_load_tran,
    .n_charge = 1,
    .model_types = DIODE_TYPES,
    .model_kind = "diode",
    .model_params = diode_params,
    .n_model_params = DP_COUNT,
};
