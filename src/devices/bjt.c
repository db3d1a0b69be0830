/* Bipolar transistor (NPN/PNP): the Gummel-Poon model card, the element line (with an optional
 * substrate node), the DC equations with ohmic RE/RC and the bias-dependent base resistance
 * (IRB, RBM) on internal nodes, temperature and area scaling, noise and the report. The stored
 * charges (AC capacitances, excess phase, transient) are bjt_charge.c's. Matrix storage is
 * src/mna's. */
#include <math.h>
#include <string.h>

#include "devices/bjt.h"
#include "devices/junction.h"

/* Published names and defaults (Nagel 1975; Getreu 1976), the ranges the equations need, and
 * where each is used: docs/models.md prints this table (and a test compares the two). A card
 * value of 0 for VAF VAR IKF IKR means infinite (the term is absent). */
#define ALL (DMP_USE_DC | DMP_USE_AC | DMP_USE_NOISE | DMP_USE_TRAN)
#define CAP (DMP_USE_AC | DMP_USE_TRAN)
#define POS 0.0, HUGE_VAL, DMP_MIN_OPEN    /* > 0 */
#define NONNEG 0.0, HUGE_VAL, 0            /* >= 0 */
#define ANY -HUGE_VAL, HUGE_VAL, 0
#define GRADING 0.0, 1.0, DMP_MAX_OPEN /* 0 <= m < 1: the depletion charge divides by 1 - m */
/* ORDER BJT_PARAM */
static const dev_model_param bjt_params[BP_COUNT] = {
    {"is", 1e-16, POS, "A", ALL | DMP_USE_TEMP, "transport saturation current"},
    {"bf", 100.0, POS | DMP_CORNER, "", ALL | DMP_USE_TEMP, "ideal maximum forward beta"},
    {"nf", 1.0, POS, "", ALL, "forward emission coefficient"},
    {"vaf", HUGE_VAL, NONNEG | DMP_ZERO_INF, "V", ALL, "forward Early voltage"},
    {"ikf", HUGE_VAL, NONNEG | DMP_ZERO_INF, "A", ALL, "forward high-injection knee current"},
    {"ise", 0.0, NONNEG, "A", ALL | DMP_USE_TEMP, "base-emitter leakage saturation current"},
    {"ne", 1.5, POS, "", ALL | DMP_USE_TEMP, "base-emitter leakage emission coefficient"},
    {"br", 1.0, POS, "", ALL | DMP_USE_TEMP, "ideal maximum reverse beta"},
    {"nr", 1.0, POS, "", ALL, "reverse emission coefficient"},
    {"var", HUGE_VAL, NONNEG | DMP_ZERO_INF, "V", ALL, "reverse Early voltage"},
    {"ikr", HUGE_VAL, NONNEG | DMP_ZERO_INF, "A", ALL, "reverse high-injection knee current"},
    {"isc", 0.0, NONNEG, "A", ALL | DMP_USE_TEMP, "base-collector leakage saturation current"},
    {"nc", 2.0, POS, "", ALL | DMP_USE_TEMP, "base-collector leakage emission coefficient"},
    {"rb", 0.0, NONNEG, "ohm", ALL, "base resistance"},
    {"re", 0.0, NONNEG, "ohm", ALL, "emitter resistance"},
    {"rc", 0.0, NONNEG, "ohm", ALL, "collector resistance"},
    {"cje", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "base-emitter zero-bias depletion capacitance"},
    {"vje", 0.75, POS, "V", CAP | DMP_USE_TEMP, "base-emitter built-in potential"},
    {"mje", 0.33, GRADING, "", CAP | DMP_USE_TEMP, "base-emitter grading coefficient"},
    {"cjc", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP,
     "base-collector zero-bias depletion capacitance"},
    {"vjc", 0.75, POS, "V", CAP | DMP_USE_TEMP, "base-collector built-in potential"},
    {"mjc", 0.33, GRADING, "", CAP | DMP_USE_TEMP, "base-collector grading coefficient"},
    {"fc", 0.5, 0.0, 1.0, DMP_MAX_OPEN, "", CAP, "forward-bias depletion capacitance coefficient"},
    {"tf", 0.0, NONNEG, "s", CAP, "ideal forward transit time"},
    {"tr", 0.0, NONNEG, "s", CAP, "ideal reverse transit time"},
    {"xtb", 0.0, ANY, "", DMP_USE_TEMP, "beta temperature exponent"},
    {"xti", 3.0, ANY, "", DMP_USE_TEMP, "saturation current temperature exponent"},
    {"eg", 1.11, POS, "eV", DMP_USE_TEMP, "energy gap of the saturation current law"},
    {"tnom", SS_TNOM_DEFAULT_C, -SS_ZERO_C_IN_K, 1000.0, DMP_MIN_OPEN | DMP_CELSIUS, "C",
     DMP_USE_TEMP, "temperature the parameters were measured at"},
    {"kf", 0.0, NONNEG, "", DMP_USE_NOISE, "flicker noise coefficient"},
    {"af", 1.0, POS, "", DMP_USE_NOISE, "flicker noise exponent"},
    {"irb", HUGE_VAL, NONNEG | DMP_ZERO_INF, "A", ALL,
     "base current where the base resistance has fallen halfway to RBM (absent: RBM + (RB - "
     "RBM)/qb)"},
    {"rbm", HUGE_VAL, NONNEG, "ohm", ALL,
     "minimum base resistance at high current (the default \u221e stands for RB: a constant "
     "base resistance)"},
    {"xtf", 0.0, NONNEG, "", CAP, "coefficient of the bias dependence of TF"},
    {"vtf", HUGE_VAL, NONNEG | DMP_ZERO_INF, "V", CAP,
     "base-collector voltage scale of the TF dependence"},
    {"itf", 0.0, NONNEG, "A", CAP, "forward current scale of the TF dependence"},
    {"ptf", 0.0, NONNEG, "deg", DMP_USE_AC | DMP_USE_NOISE,
     "excess phase of the forward transport current at 1/(2 pi TF) (AC only)"},
    {"xcjc", 1.0, 0.0, 1.0, 0, "", CAP,
     "fraction of CJC at the internal base node (the rest from the external base)"},
    {"cjs", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "collector-substrate zero-bias capacitance"},
    {"vjs", 0.75, POS, "V", CAP | DMP_USE_TEMP, "collector-substrate built-in potential"},
    {"mjs", 0.0, GRADING, "", CAP | DMP_USE_TEMP, "collector-substrate grading coefficient"},
};
#undef ALL
#undef CAP
#undef POS
#undef NONNEG
#undef ANY
#undef GRADING

/* per terminal (c, b, e): the slots of its ohmic resistor's pair and that resistor's
 * parameter; the resistor exists when the terminal has an internal node */
static const int pair_of[3] = {SL_RC, SL_RB, SL_RE};
static const int r_of[3] = {BP_RC, BP_RB, BP_RE};
_Static_assert(BP_COUNT <= MODEL_MAX_PARAMS, "the BJT card must fit a model record");
static const char *const BJT_TYPES[] = {"npn", "pnp", NULL};

static int bjt_parse(pctx *p, element *e)
{
    /* Qname c b e [s] model [area] */
    int n = pctx_ntok(p);
    if (n < 5)
        return pctx_error(p, "needs collector, base, emitter nodes and a model");
    int model_tok = -1;
    for (int i = 4; i < n && model_tok < 0; i++)
        if (pctx_is_model(p, pctx_tok(p, i)))
            model_tok = i;
    if (model_tok < 0) {
        /* no known model on the line: name the token where the model should be */
        double v;
        int guess = (n >= 6 && value_parse(pctx_tok(p, 5), &v) != 0) ? 5 : 4;
        return pctx_error(p, "unknown model '%s'", pctx_tok(p, guess));
    }
    if (model_tok > 5)
        return pctx_error(p,
                          "too many nodes before model '%s' (expected collector, base, emitter "
                          "and an optional substrate)",
                          pctx_tok(p, model_tok));
    /* the fourth node token is the model when it names one, else the substrate node (with
     * the model after it); without a substrate node the substrate is ground */
    for (int i = 1; i < model_tok; i++) {
        e->node[i - 1] = pctx_node(p, pctx_tok(p, i));
        if (e->node[i - 1] < 0)
            return -1;
    }
    e->n_node = (unsigned char)(model_tok - 1);
    e->mod = pctx_model(p, pctx_tok(p, model_tok), e->ops);
    if (!e->mod)
        return -1;
    e->area = 1.0;
    int next = model_tok + 1;
    if (next < n) {
        const char *t = pctx_tok(p, next);
        if (strcmp(t, "area") == 0 && next + 2 < n && strcmp(pctx_tok(p, next + 1), "=") == 0) {
            t = pctx_tok(p, next + 2);
            next += 3;
        } else {
            next += 1;
        }
        if (pctx_value(p, t, "area", &e->area) != 0)
            return -1;
        if (!(e->area > 0.0))
            return pctx_error(p, "area must be positive, got %g", e->area);
        if (next < n)
            return pctx_error(p, "unexpected '%s' after the area value", pctx_tok(p, next));
    }
    return 0;
}

static void bjt_setup(element *e, dev_setup_ctx *sc)
{
    const double *mp = e->mod->p;
    e->inode[TC] = mp[BP_RC] > 0.0 ? sc->new_node(sc->owner, e, "c") : e->node[TC];
    e->inode[TB] = mp[BP_RB] > 0.0 ? sc->new_node(sc->owner, e, "b") : e->node[TB];
    e->inode[TE] = mp[BP_RE] > 0.0 ? sc->new_node(sc->owner, e, "e") : e->node[TE];
}

static void bjt_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    const double *mp = e->mod->p;
    for (int i = 0; i < SL_COUNT; i++)
        e->slot[i] = -1;
    for (int t = 0; t < 3; t++) {
        if (e->inode[t] != e->node[t])
            claim_pair(e, sc, pair_of[t], e->node[t], e->inode[t]);
    }
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            e->slot[SL_CORE + 3 * r + c] =
                sc->claim(sc->owner, node_unknown(e->inode[r]), node_unknown(e->inode[c]));
    int b = node_unknown(e->node[TB]), ci = node_unknown(e->inode[TC]);
    int vary = bjt_rb_varies(e), bx = bjt_has_bx(e);
    if (vary || bx)
        e->slot[SL_B_CI] = sc->claim(sc->owner, b, ci);
    if (vary)
        e->slot[SL_B_EI] = sc->claim(sc->owner, b, node_unknown(e->inode[TE]));
    if (bx)
        e->slot[SL_CI_B] = sc->claim(sc->owner, ci, b);
    if (mp[BP_CJS] > 0.0)
        claim_pair(e, sc, SL_CS, e->inode[TC], bjt_substrate(e));
}

static double inf_if_zero(double v) { return v == 0.0 ? HUGE_VAL : v; }

static int bjt_temp(const element *e, double temp_k, double *tp, char *why, size_t why_len)
{
    const double *mp = e->mod->p;
    memcpy(tp, mp, MODEL_MAX_PARAMS * sizeof *tp);
    double tnom_k = mp[BP_TNOM] + SS_ZERO_C_IN_K;
    double vt = thermal_voltage_v(temp_k);
    double r = temp_k / tnom_k;
    /* temperature laws: docs/models.md section 4 (Getreu 1976 as tabulated by Antognetti &
     * Massobrio), r = T/TNOM, Vt at T:
     *   IS(T) = IS r^XTI exp((r - 1) EG/Vt)
     *   BF(T) = BF r^XTB, BR(T) = BR r^XTB
     *   ISE(T) = ISE r^-XTB (IS(T)/IS)^(1/NE), ISC(T) = ISC r^-XTB (IS(T)/IS)^(1/NC)
     *   VJ(T) = VJ r - 3 Vt ln r - EG(TNOM) r + EG(T), CJ(T) = CJ (1 + M (4e-4 (T - TNOM) -
     *   VJ(T)/VJ + 1)) for (VJE CJE MJE), (VJC CJC MJC), (VJS CJS MJS): junction_temp_vj_cj */
    double is_ratio = pow(r, mp[BP_XTI]) * exp((r - 1.0) * mp[BP_EG] / vt);
    double beta_f = pow(r, mp[BP_XTB]);
    tp[BP_IS] = mp[BP_IS] * is_ratio;
    tp[BP_BF] = mp[BP_BF] * beta_f;
    tp[BP_BR] = mp[BP_BR] * beta_f;
    tp[BP_ISE] = mp[BP_ISE] / beta_f * pow(is_ratio, 1.0 / mp[BP_NE]);
    tp[BP_ISC] = mp[BP_ISC] / beta_f * pow(is_ratio, 1.0 / mp[BP_NC]);
    junction_temp_vj_cj(mp[BP_VJE], mp[BP_CJE], mp[BP_MJE], temp_k, tnom_k, vt, &tp[BP_VJE],
                        &tp[BP_CJE]);
    junction_temp_vj_cj(mp[BP_VJC], mp[BP_CJC], mp[BP_MJC], temp_k, tnom_k, vt, &tp[BP_VJC],
                        &tp[BP_CJC]);
    junction_temp_vj_cj(mp[BP_VJS], mp[BP_CJS], mp[BP_MJS], temp_k, tnom_k, vt, &tp[BP_VJS],
                        &tp[BP_CJS]);
    /* area scaling (docs/models.md) */
    double a = e->area;
    tp[BP_IS] *= a;
    tp[BP_ISE] *= a;
    tp[BP_ISC] *= a;
    tp[BP_IKF] = inf_if_zero(mp[BP_IKF]) * a;
    tp[BP_IKR] = inf_if_zero(mp[BP_IKR]) * a;
    tp[BP_CJE] *= a;
    tp[BP_CJC] *= a;
    tp[BP_RB] = mp[BP_RB] / a;
    tp[BP_RE] = mp[BP_RE] / a;
    tp[BP_RC] = mp[BP_RC] / a;
    /* RBM absent (infinite): the base resistance is RB throughout */
    tp[BP_RBM] = (isfinite(mp[BP_RBM]) ? mp[BP_RBM] : mp[BP_RB]) / a;
    tp[BP_IRB] = inf_if_zero(mp[BP_IRB]) * a;
    tp[BP_ITF] = mp[BP_ITF] * a;
    tp[BP_CJS] *= a;
    tp[BP_VTF] = inf_if_zero(mp[BP_VTF]);
    tp[BP_VAF] = inf_if_zero(mp[BP_VAF]);
    tp[BP_VAR] = inf_if_zero(mp[BP_VAR]);
    /* what the equations divide by or take logarithms of must survive the scaling (an extreme
     * XTB, EG or temperature can overflow or underflow them); a junction potential matters
     * only with its capacitance, and IKF, IKR, VAF, VAR are infinite when absent */
    static const struct {
        int idx, positive;
    } checks[] = {{BP_IS, 1},  {BP_BF, 1},  {BP_BR, 1},  {BP_ISE, 0}, {BP_ISC, 0},
                  {BP_CJE, 0}, {BP_CJC, 0}, {BP_RB, 0},  {BP_RE, 0},  {BP_RC, 0},
                  {BP_RBM, 0}, {BP_CJS, 0}};
    for (size_t k = 0; k < sizeof checks / sizeof checks[0]; k++)
        if (temp_param_check(bjt_params[checks[k].idx].name, tp[checks[k].idx],
                             checks[k].positive, why, why_len) != 0)
            return -1;
    if (temp_param_check("vje", tp[BP_VJE], tp[BP_CJE] > 0.0, why, why_len) != 0 ||
        temp_param_check("vjc", tp[BP_VJC], tp[BP_CJC] > 0.0, why, why_len) != 0 ||
        temp_param_check("vjs", tp[BP_VJS], tp[BP_CJS] > 0.0, why, why_len) != 0)
        return -1;
    return 0;
}

/* Gummel-Poon DC equations: docs/models.md sec. BJT, after Gummel & Poon 1970 and the
 * parameterisation of Nagel 1975 / Getreu 1976. gmin sits across each internal junction. */
void bjt_eval(const double *tp, double vt, double gmin, double vbe, double vbc,
              bjt_eval_out *o)
{
    double gif, gir, gbe2 = 0.0, gbc2 = 0.0, ibe2 = 0.0, ibc2 = 0.0;
    double i_f = junction_current(tp[BP_IS], vbe, tp[BP_NF] * vt, &gif);
    double i_r = junction_current(tp[BP_IS], vbc, tp[BP_NR] * vt, &gir);
    if (tp[BP_ISE] > 0.0)
        ibe2 = junction_current(tp[BP_ISE], vbe, tp[BP_NE] * vt, &gbe2);
    if (tp[BP_ISC] > 0.0)
        ibc2 = junction_current(tp[BP_ISC], vbc, tp[BP_NC] * vt, &gbc2);

    /* base charge: q1 = 1/(1 - vbc/VAF - vbe/VAR), q2 = IF/IKF + IR/IKR,
     * qb = q1/2 (1 + sqrt(1 + 4 q2)) */
    double inv_vaf = 1.0 / tp[BP_VAF], inv_var = 1.0 / tp[BP_VAR];
    double den = 1.0 - vbc * inv_vaf - vbe * inv_var;
    double dq1_dvbe = 0.0, dq1_dvbc = 0.0, q1;
    if (den < 1e-4) { /* far outside the model's range: hold q1 so the step stays finite */
        q1 = 1e4;
    } else {
        q1 = 1.0 / den;
        dq1_dvbe = q1 * q1 * inv_var;
        dq1_dvbc = q1 * q1 * inv_vaf;
    }
    double inv_ikf = 1.0 / tp[BP_IKF], inv_ikr = 1.0 / tp[BP_IKR];
    double q2 = i_f * inv_ikf + i_r * inv_ikr;
    double s = sqrt(fmax(1.0 + 4.0 * q2, 1e-12));
    double qb = 0.5 * q1 * (1.0 + s);
    double dqb_dvbe = dq1_dvbe * qb / q1 + q1 * gif * inv_ikf / s;
    double dqb_dvbc = dq1_dvbc * qb / q1 + q1 * gir * inv_ikr / s;

    double ict = (i_f - i_r) / qb; /* transport current */
    double br = tp[BP_BR], bf = tp[BP_BF];
    o->ic = ict - i_r / br - ibc2 - gmin * vbc;
    o->ib = i_f / bf + ibe2 + i_r / br + ibc2 + gmin * (vbe + vbc);
    o->gce = gif / qb - ict / qb * dqb_dvbe;
    o->gcc = -gir / qb - ict / qb * dqb_dvbc - gir / br - gbc2 - gmin;
    o->gbe = gif / bf + gbe2 + gmin;
    o->gbc = gir / br + gbc2 + gmin;
    o->if_a = i_f;
    o->qb = qb;
    o->dqb_dvbe = dqb_dvbe;
    o->dqb_dvbc = dqb_dvbc;
    o->gif = gif;
}

/* f(z) = 3 (tan z - z) / (z tan^2 z) and df/du with u = z^2: how the base resistance falls
 * with the base current (below). f(0) = 1; f falls to 0 as z nears pi/2. For small z the
 * quotient of the two Taylor series (tan z = z + z^3/3 + 2 z^5/15 + 17 z^7/315 + 62 z^9/2835),
 * f = (1 + 2u/5 + 17u^2/105 + 62u^3/945) / (1 + 2u/3 + 17u^2/45 + 62u^3/315), which the
 * direct form would lose to cancellation in tan z - z. */
static double rbb_shape(double z, double *df_du)
{
    double u = z * z;
    if (z < 0.02) { /* truncation O(u^4) < 1e-15 */
        double n = 1.0 + u * (2.0 / 5.0 + u * (17.0 / 105.0 + u * 62.0 / 945.0));
        double d = 1.0 + u * (2.0 / 3.0 + u * (17.0 / 45.0 + u * 62.0 / 315.0));
        double dn = 2.0 / 5.0 + u * (34.0 / 105.0 + u * 62.0 / 315.0);
        double dd = 2.0 / 3.0 + u * (34.0 / 45.0 + u * 62.0 / 105.0);
        *df_du = (dn * d - n * dd) / (d * d);
        return n / d;
    }
    double t = tan(z), num = t - z, den = z * t * t;
    double dnum = t * t, dden = t * t + 2.0 * z * t * (1.0 + t * t);
    *df_du = 3.0 * (dnum * den - num * dden) / (den * den) / (2.0 * z);
    return 3.0 * num / den;
}

/* The base resistance between b and b' (Getreu 1976; Antognetti & Massobrio 1993, ch. 2):
 *   with IRB:    rbb = RBM + 3 (RB - RBM) (tan z - z) / (z tan^2 z),
 *                z = (-1 + sqrt(1 + 144 ib/(pi^2 IRB))) / ((24/pi^2) sqrt(ib/IRB)),
 *                computed as z = 6 sqrt(x) / (1 + sqrt(1 + 144 x/pi^2)), x = ib/IRB (the same
 *                number without the cancellation at small x; x <= 0 counts as 0: rbb = RB);
 *   without IRB: rbb = RBM + (RB - RBM)/qb.
 * ib is the intrinsic base current without the (numerical) junction gmin. The Newton
 * Jacobian gets d(1/rbb)/dvbe and d(1/rbb)/dvbc through ib and qb. */
void bjt_base_resistance(const double *tp, const bjt_eval_out *o, double gmin, double vbe,
                         double vbc, bjt_rbb *out)
{
    double rb = tp[BP_RB], rbm = tp[BP_RBM];
    out->varies = rbm != rb;
    out->dg_dvbe = out->dg_dvbc = 0.0;
    if (!out->varies) {
        out->g = 1.0 / rb;
        return;
    }
    double rbb, dr_dvbe, dr_dvbc;
    if (isfinite(tp[BP_IRB])) {
        double ib = o->ib - gmin * (vbe + vbc);
        double x = ib / tp[BP_IRB], du_dx = 0.0, df_du;
        double z = 0.0;
        if (x > 0.0) {
            double w = sqrt(1.0 + 144.0 * x / (SS_PI * SS_PI));
            z = 6.0 * sqrt(x) / (1.0 + w);
            /* u = z^2 = 36 x / (1 + w)^2: du/dx = 36 ((1 + w) - 144 x / (pi^2 w)) / (1 + w)^3 */
            du_dx = 36.0 * ((1.0 + w) - 144.0 * x / (SS_PI * SS_PI * w)) /
                    ((1.0 + w) * (1.0 + w) * (1.0 + w));
        }
        double f = rbb_shape(z, &df_du);
        rbb = rbm + (rb - rbm) * f;
        double dr_dib = (rb - rbm) * df_du * du_dx / tp[BP_IRB];
        dr_dvbe = dr_dib * (o->gbe - gmin);
        dr_dvbc = dr_dib * (o->gbc - gmin);
    } else {
        rbb = rbm + (rb - rbm) / o->qb;
        double dr_dqb = -(rb - rbm) / (o->qb * o->qb);
        dr_dvbe = dr_dqb * o->dqb_dvbe;
        dr_dvbc = dr_dqb * o->dqb_dvbc;
    }
    out->g = 1.0 / rbb;
    out->dg_dvbe = -out->g * out->g * dr_dvbe;
    out->dg_dvbc = -out->g * out->g * dr_dvbc;
}

void bjt_junction_voltages(const element *e, const double *x, double *vbe, double *vbc)
{
    double p = bjt_polarity(e);
    double vb = xv(x, e->inode[TB]);
    *vbe = p * (vb - xv(x, e->inode[TE]));
    *vbc = p * (vb - xv(x, e->inode[TC]));
}

/* The varying base resistance's Newton companion: i = g(vbe, vbc) (vb - vb') from b to b',
 * linearised in (vb - vb', vbe, vbc) about the present point; vbe and vbc are the (limited)
 * junction voltages the core was stamped at, vb - vb' is x's. The polarity squares away in
 * the conductances: vbe = p (vb' - ve'), vbc = p (vb' - vc'), and g is even in p. */
static void stamp_base_resistance(const element *e, double *G, double *rhs, const double *x,
                                  const bjt_eval_out *o, double gmin, double vbe, double vbc)
{
    bjt_rbb r;
    bjt_base_resistance(e->tp, o, gmin, vbe, vbc, &r);
    double p = bjt_polarity(e);
    double vrb = xv(x, e->node[TB]) - xv(x, e->inode[TB]);
    double kbe = vrb * r.dg_dvbe * p, kbc = vrb * r.dg_dvbc * p; /* d i / d(vb' - ve'), ... */
    /* di/dvb = g; di/dvb' = -g + kbe + kbc; di/dvc' = -kbc; di/dve' = -kbe */
    stamp_pair(G, &e->slot[SL_RB], r.g);
    const int *core = &e->slot[SL_CORE];
    /* row b (current into b from the node): columns b', c', e' */
    stamp_add(G, e->slot[SL_RB + 2], kbe + kbc);
    stamp_add(G, e->slot[SL_B_CI], -kbc);
    stamp_add(G, e->slot[SL_B_EI], -kbe);
    /* row b' gets the negative */
    stamp_add(G, core[3 * TB + TB], -(kbe + kbc));
    stamp_add(G, core[3 * TB + TC], kbc);
    stamp_add(G, core[3 * TB + TE], kbe);
    /* i = g vrb + kbe' (vbe - vbe0) + kbc' (vbc - vbc0), kbe' = vrb0 dg/dvbe: the constant */
    double ieq = -vrb * (r.dg_dvbe * vbe + r.dg_dvbc * vbc);
    rhs_add(rhs, e->node[TB], -ieq);
    rhs_add(rhs, e->inode[TB], ieq);
}

static void bjt_load_dc(element *e, dev_load_ctx *lc)
{
    const double *tp = e->tp;
    double p = bjt_polarity(e), vt = lc->vt_v;
    double vbe, vbc;
    bjt_junction_voltages(e, lc->x, &vbe, &vbc);
    double vcrit_be = junction_vcrit(tp[BP_NF] * vt, tp[BP_IS]);
    double vcrit_bc = junction_vcrit(tp[BP_NR] * vt, tp[BP_IS]);
    if (lc->mode == LOAD_INIT_JUNCTION) {
        vbe = vcrit_be; /* start the emitter junction near conduction, collector off */
        vbc = 0.0;
    } else if (lc->mode == LOAD_NORMAL) {
        vbe = junction_limit(vbe, e->state[ST_VBE], tp[BP_NF] * vt, vcrit_be, &lc->limited);
        vbc = junction_limit(vbc, e->state[ST_VBC], tp[BP_NR] * vt, vcrit_bc, &lc->limited);
    }
    e->state[ST_VBE] = vbe;
    e->state[ST_VBC] = vbc;

    bjt_eval_out o;
    bjt_eval(tp, vt, lc->gmin_s, vbe, vbc, &o);

    /* terminal rows c', b', e' (currents into the device); columns Vc', Vb', Ve'.
     * The polarity squares away in the conductances and stays in the equivalent currents. */
    double jc[3] = {-o.gcc, o.gce + o.gcc, -o.gce};
    double jb[3] = {-o.gbc, o.gbe + o.gbc, -o.gbe};
    double ieq_c = p * (o.ic - o.gce * vbe - o.gcc * vbc);
    double ieq_b = p * (o.ib - o.gbe * vbe - o.gbc * vbc);
    const int *core = &e->slot[SL_CORE];
    for (int c = 0; c < 3; c++) {
        stamp_add(lc->G, core[3 * TC + c], jc[c]);
        stamp_add(lc->G, core[3 * TB + c], jb[c]);
        stamp_add(lc->G, core[3 * TE + c], -(jc[c] + jb[c]));
    }
    rhs_add(lc->rhs, e->inode[TC], -ieq_c);
    rhs_add(lc->rhs, e->inode[TB], -ieq_b);
    rhs_add(lc->rhs, e->inode[TE], ieq_c + ieq_b);

    for (int t = 0; t < 3; t++)
        if (e->inode[t] != e->node[t] && !(t == TB && bjt_rb_varies(e)))
            stamp_pair(lc->G, &e->slot[pair_of[t]], 1.0 / tp[r_of[t]]);
    if (e->inode[TB] != e->node[TB] && bjt_rb_varies(e))
        stamp_base_resistance(e, lc->G, lc->rhs, lc->x, &o, lc->gmin_s, vbe, vbc);
}

/* Operating-point details for the report and op.csv (currents into the terminals). */
typedef struct bjt_op_info {
    double ic_a, ib_a, ie_a, vbe_v, vce_v, vbc_v, gm_s;
    const char *region;
} bjt_op_info;

static void bjt_op_details(const element *e, const double *x, double vt_v, double gmin_s,
                           bjt_op_info *out)
{
    double vbe_i, vbc_i;
    bjt_junction_voltages(e, x, &vbe_i, &vbc_i);
    bjt_eval_out o;
    bjt_eval(e->tp, vt_v, gmin_s, vbe_i, vbc_i, &o);
    double p = bjt_polarity(e);
    out->ic_a = p * o.ic;
    out->ib_a = p * o.ib;
    out->ie_a = -(out->ic_a + out->ib_a);
    out->vbe_v = xv(x, e->node[TB]) - xv(x, e->node[TE]);
    out->vce_v = xv(x, e->node[TC]) - xv(x, e->node[TE]);
    out->vbc_v = xv(x, e->node[TB]) - xv(x, e->node[TC]);
    out->gm_s = o.gce;
    /* regions by the (polarity-corrected) terminal junction voltages; a junction counts as
     * forward-biased above 0.4 V (reporting threshold, docs/cli.md) */
    int be_on = p * out->vbe_v > 0.4, bc_on = p * out->vbc_v > 0.4;
    out->region = be_on ? (bc_on ? "saturation" : "forward active")
                        : (bc_on ? "reverse active" : "cut-off");
}

static void bjt_op_point(const element *e, const double *x, double vt_v, double gmin_s,
                         dev_op_point *out)
{
    bjt_op_info info;
    bjt_op_details(e, x, vt_v, gmin_s, &info);
    out->i_a = info.ic_a;
    out->v_v = info.vce_v;
    out->region = info.region;
    out->amplifying = strcmp(info.region, "forward active") == 0;
    snprintf(out->detail, sizeof out->detail, "Vbe = %.4g V, Vce = %.4g V, Ic = %.4g A",
             info.vbe_v, info.vce_v, info.ic_a);
}

static const char BJT_REPORT_HEADING[] =
    "\nTransistors\n  name         type          Ic          Ib        Vbe        Vce     beta"
    "          gm       power  region\n";

static void bjt_report_line(const element *e, const double *x, double vt_v, double gmin_s,
                            double power_w, char *buf, size_t len)
{
    char a[48], b[48], c[48], d[48], f[48], g[48];
    bjt_op_info info;
    bjt_op_details(e, x, vt_v, gmin_s, &info);
    double beta = info.ib_a != 0.0 ? info.ic_a / info.ib_a : SS_NAN;
    snprintf(buf, len, "  %-12s %-4s %11s %11s %10s %10s %8.1f %11s %11s  %s", e->name,
             BJT_TYPES[e->mod->type], fmt_eng(a, sizeof a, info.ic_a, "A"),
             fmt_eng(b, sizeof b, info.ib_a, "A"), fmt_eng(c, sizeof c, info.vbe_v, "V"),
             fmt_eng(d, sizeof d, info.vce_v, "V"), beta, fmt_eng(f, sizeof f, info.gm_s, "S"),
             fmt_eng(g, sizeof g, power_w, "W"), info.region);
}

static void bjt_report(const element *e, const double *x, double vt_v, double gmin_s,
                       dev_report_fn fn, void *sink)
{
    bjt_op_info info = {SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, NULL};
    if (x)
        bjt_op_details(e, x, vt_v, gmin_s, &info);
    fn(sink, "ic", e->name, info.ic_a);
    fn(sink, "ib", e->name, info.ib_a);
    fn(sink, "vbe", e->name, info.vbe_v);
    fn(sink, "vce", e->name, info.vce_v);
    fn(sink, "gm", e->name, info.gm_s);
}

/* Terminal currents from the model equations alone (not the Newton stamps). */
static void bjt_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    double vbe, vbc;
    bjt_junction_voltages(e, x, &vbe, &vbc);
    bjt_eval_out o;
    bjt_eval(e->tp, lc->vt_v, lc->gmin_s, vbe, vbc, &o);
    double p = bjt_polarity(e);
    rhs_add(resid, e->inode[TC], p * o.ic);
    rhs_add(resid, e->inode[TB], p * o.ib);
    rhs_add(resid, e->inode[TE], -p * (o.ic + o.ib));
    for (int t = 0; t < 3; t++) {
        if (e->inode[t] == e->node[t])
            continue;
        double v_r = xv(x, e->node[t]) - xv(x, e->inode[t]), i_r;
        if (t == TB && bjt_rb_varies(e)) {
            bjt_rbb r;
            bjt_base_resistance(e->tp, &o, lc->gmin_s, vbe, vbc, &r);
            i_r = v_r * r.g;
        } else {
            i_r = v_r / e->tp[r_of[t]];
        }
        rhs_add(resid, e->node[t], i_r);
        rhs_add(resid, e->inode[t], -i_r);
    }
}

/* Noise (docs/noise.md; hybrid-pi noise model after Gray & Meyer, ch. 11 -- from memory):
 * collector shot 2q|Ic| between c' and e', base shot 2q|Ib| and flicker KF |Ib|^AF / f between
 * b' and e', thermal noise of RB (4kT/rbb at the operating point when it varies), RE and RC. Ic and Ib are the model's currents at the
 * operating point without the (noiseless) junction gmin. */
static int bjt_noise(const element *e, const dev_noise_ctx *nc, dev_noise_src *out)
{
    const double *tp = e->tp;
    double vbe, vbc;
    bjt_junction_voltages(e, nc->x_op, &vbe, &vbc);
    bjt_eval_out o;
    bjt_eval(tp, nc->vt_v, 0.0, vbe, vbc, &o);
    int n = 0;
    out[n++] = (dev_noise_src){e->inode[TC], e->inode[TE], noise_shot_a2_per_hz(o.ic), 0.0,
                               "collector shot"};
    out[n++] = (dev_noise_src){e->inode[TB], e->inode[TE], noise_shot_a2_per_hz(o.ib), 0.0,
                               "base shot"};
    if (tp[BP_KF] > 0.0)
        out[n++] = (dev_noise_src){e->inode[TB], e->inode[TE], 0.0,
                                   noise_flicker_a2(tp[BP_KF], tp[BP_AF], o.ib), "flicker"};
    static const char *const label[3] = {"rc thermal", "rb thermal", "re thermal"};
    for (int t = 0; t < 3; t++) {
        if (e->inode[t] == e->node[t])
            continue;
        double r_ohm = tp[r_of[t]];
        if (t == TB && bjt_rb_varies(e)) {
            /* the varying base resistance: 4 k T / rbb at its operating-point value */
            bjt_rbb r;
            bjt_base_resistance(tp, &o, 0.0, vbe, vbc, &r);
            r_ohm = 1.0 / r.g;
        }
        out[n++] = (dev_noise_src){e->node[t], e->inode[t],
                                   noise_thermal_a2_per_hz(nc->temp_k, r_ohm), 0.0, label[t]};
    }
    return n;
}

/* corners.csv: "q1 beta low, 85 C" with ic_a, vce_v, forward_active */
static const dev_corner_names BJT_CORNER = {"beta", "ic_a", "vce_v"};

/* collector-base and collector-emitter: every terminal is on one DC path */
static const unsigned char BJT_DC_PAIRS[2][2] = {{0, 1}, {0, 2}};

const dev_ops bjt_ops = {
    .letter = 'q',
    .kind_name = "bipolar transistor",
    .dc_pairs = BJT_DC_PAIRS,
    .n_dc_pairs = 2,
    .op_point = bjt_op_point,
    .bypass_terminal = 2,
    .amplifying_region = "forward active",
    .corner = &BJT_CORNER,
    .report_heading = BJT_REPORT_HEADING,
    .report_line = bjt_report_line,
    .parse = bjt_parse,
    .setup = bjt_setup,
    .claim = bjt_claim,
    .n_slot = SL_COUNT,
    .temp = bjt_temp,
    .load_dc = bjt_load_dc,
    .kcl = bjt_kcl,
    .load_ac = bjt_load_ac,
    .ac_not_affine = bjt_ac_not_affine,
    .report = bjt_report,
    .noise = bjt_noise,
    .load_tran = bjt_load_tran,
    .n_charge = BJT_N_CHARGE,
    .value_name = NULL,
    .model_types = BJT_TYPES,
    .model_kind = "BJT",
    .model_params = bjt_params,
    .n_model_params = BP_COUNT,
};
