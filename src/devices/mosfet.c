/* MOSFET (N- and P-channel), level 1: the Shichman-Hodges square law with body effect and
 * channel-length modulation, bulk junction diodes, overlap and Meyer gate capacitances, ohmic
 * RD/RS as internal nodes. Matrix storage is src/mna's.
 *
 * Sources: H. Shichman and D. A. Hodges, IEEE JSSC SC-3, 285, 1968 (drain current); the
 * SPICE2 level-1 formulation as documented by P. Antognetti and G. Massobrio, Semiconductor
 * Device Modeling with SPICE, 2nd ed., 1993, ch. 4 (parameters, defaults, bulk junctions,
 * overlap capacitances); J. E. Meyer, RCA Review 32, 42, 1971 (intrinsic gate capacitances).
 * docs/models.md has the equations.
 *
 * Polarity: every equation is written for an N-channel device; a P-channel device multiplies
 * the terminal voltages and currents by -1. VTO is written as the book writes it: the
 * gate-source voltage at threshold, so an enhancement PMOS has VTO < 0 (the equations use
 * -VTO in the N-channel sense). */
#include <math.h>
#include <string.h>

#include "devices/device.h"
#include "devices/junction.h"

/* ORDER MOS_PARAM (keep mos_params[] in step) */
enum {
    MP_LEVEL, MP_VTO, MP_KP, MP_GAMMA, MP_PHI, MP_LAMBDA, MP_RD, MP_RS, MP_IS, MP_PB, MP_CBD,
    MP_CBS, MP_CGSO, MP_CGDO, MP_CGBO, MP_TOX, MP_FC, MP_KF, MP_AF, MP_COUNT
};

/* Published names and defaults (Antognetti & Massobrio, table 4-1, from memory; VTO 0 and KP
 * 2e-5 A/V^2 as the classic defaults), ranges, units and uses: docs/models.md prints this
 * table. TOX defaults to infinite: no oxide capacitance, so no Meyer gate capacitances. */
#define ALL (DMP_USE_DC | DMP_USE_AC | DMP_USE_NOISE | DMP_USE_TRAN)
#define CAP (DMP_USE_AC | DMP_USE_TRAN)
#define POS 0.0, HUGE_VAL, DMP_MIN_OPEN
#define NONNEG 0.0, HUGE_VAL, 0
#define ANY -HUGE_VAL, HUGE_VAL, 0
/* ORDER MOS_PARAM */
static const dev_model_param mos_params[MP_COUNT] = {
    {"level", 1.0, 1.0, 1.0, 0, "", DMP_USE_DC,
     "model level (only the square law, 1, is built in)"},
    {"vto", 0.0, -HUGE_VAL, HUGE_VAL,
     DMP_CORNER | DMP_CORNER_SHIFT | DMP_CORNER_LOWERS | DMP_CORNER_POLAR, "V", ALL,
     "zero-bias threshold voltage (gate-source, < 0 for an enhancement PMOS)"},
    {"kp", 2e-5, 0.0, HUGE_VAL, DMP_MIN_OPEN | DMP_CORNER, "A/V^2", ALL,
     "transconductance parameter (mobility times Cox)"},
    {"gamma", 0.0, NONNEG, "V^0.5", ALL, "body-effect coefficient"},
    {"phi", 0.6, POS, "V", ALL, "surface potential (2 phi_F)"},
    {"lambda", 0.0, NONNEG, "1/V", ALL, "channel-length modulation"},
    {"rd", 0.0, NONNEG, "ohm", ALL, "drain resistance"},
    {"rs", 0.0, NONNEG, "ohm", ALL, "source resistance"},
    {"is", 1e-14, POS, "A", ALL | DMP_USE_TEMP, "bulk junction saturation current"},
    {"pb", 0.8, POS, "V", CAP | DMP_USE_TEMP, "bulk junction potential"},
    {"cbd", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "zero-bias bulk-drain junction capacitance"},
    {"cbs", 0.0, NONNEG, "F", CAP | DMP_USE_TEMP, "zero-bias bulk-source junction capacitance"},
    {"cgso", 0.0, NONNEG, "F/m", CAP, "gate-source overlap capacitance per metre of width"},
    {"cgdo", 0.0, NONNEG, "F/m", CAP, "gate-drain overlap capacitance per metre of width"},
    {"cgbo", 0.0, NONNEG, "F/m", CAP, "gate-bulk overlap capacitance per metre of length"},
    {"tox", HUGE_VAL, POS, "m", DMP_USE_AC | DMP_USE_NOISE,
     "oxide thickness (Meyer gate capacitances in AC, flicker normalisation)"},
    {"fc", 0.5, 0.0, 1.0, DMP_MAX_OPEN, "", CAP, "forward-bias depletion capacitance coefficient"},
    {"kf", 0.0, NONNEG, "", DMP_USE_NOISE, "flicker noise coefficient"},
    {"af", 1.0, POS, "", DMP_USE_NOISE, "flicker noise exponent"},
};
#undef ALL
#undef CAP
#undef POS
#undef NONNEG
#undef ANY

/* the bulk junctions' grading coefficient: MJ is not a parameter here, 0.5 is the classic
 * default (abrupt junction) */
#define MOS_MJ 0.5
/* permittivity of SiO2: 3.9 eps0, F/m */
#define MOS_EPS_OX (3.9 * 8.854187817e-12)
/* the classic element defaults of W and L (from memory), m */
#define MOS_W_DEFAULT 1e-4
#define MOS_L_DEFAULT 1e-4

/* terminals: drain, gate, source, bulk (element node order) */
enum { TD = 0, TG = 1, TS = 2, TB = 3 };
/* Slot layout: the RD and RS pairs, then the 4x4 core on (d', g, s', b). */
enum { SL_RD = 0, SL_RS = 4, SL_CORE = 8, SL_COUNT = 24 };
/* state[]: the (limited) N-sense voltages of the last Newton load */
enum { ST_VGS = 0, ST_VDS = 1, ST_VBS = 2, ST_VBD = 3 };

enum { MOS_N = 0, MOS_P = 1 };
static const char *const MOS_TYPES[] = {"nmos", "pmos", NULL};

static double polarity(const element *e) { return e->mod->type == MOS_P ? -1.0 : 1.0; }

/* the circuit node of terminal t inside the resistors (d', g, s', b) */
static int tnode(const element *e, int t)
{
    return t == TD ? e->inode[0] : t == TS ? e->inode[2] : e->node[t];
}

static int mos_width_length(pctx *p, element *e, int at)
{
    int n = pctx_ntok(p);
    int have_w = 0, have_l = 0;
    while (at < n) {
        const char *name = pctx_tok(p, at);
        if (at + 2 >= n || strcmp(pctx_tok(p, at + 1), "=") != 0)
            return pctx_error(p, "unexpected '%s' after the model (expected w=... or l=...)",
                              name);
        double *dst;
        if (strcmp(name, "w") == 0 && !have_w) {
            dst = &e->w_m;
            have_w = 1;
        } else if (strcmp(name, "l") == 0 && !have_l) {
            dst = &e->l_m;
            have_l = 1;
        } else {
            return pctx_error(p, "unexpected '%s=' (expected w= and l=, once each)", name);
        }
        if (pctx_value(p, pctx_tok(p, at + 2), name[0] == 'w' ? "W" : "L", dst) != 0)
            return -1;
        if (!(*dst > 0.0))
            return pctx_error(p, "%s must be positive, got %g", name[0] == 'w' ? "W" : "L",
                              *dst);
        at += 3;
    }
    return 0;
}

static int mos_parse(pctx *p, element *e)
{
    /* Mname d g s b model [w=W] [l=L] */
    if (pctx_ntok(p) < 6)
        return pctx_error(p, "needs drain, gate, source and bulk nodes and a model");
    for (int i = 0; i < 4; i++) {
        e->node[i] = pctx_node(p, pctx_tok(p, 1 + i));
        if (e->node[i] < 0)
            return -1;
    }
    e->n_node = 4;
    e->mod = pctx_model(p, pctx_tok(p, 5), e->ops);
    if (!e->mod)
        return -1;
    e->area = 1.0;
    e->w_m = MOS_W_DEFAULT;
    e->l_m = MOS_L_DEFAULT;
    return mos_width_length(p, e, 6);
}

static void mos_setup(element *e, dev_setup_ctx *sc)
{
    const double *mp = e->mod->p;
    e->inode[0] = mp[MP_RD] > 0.0 ? sc->new_node(sc->owner, e, "d") : e->node[TD];
    e->inode[1] = e->node[TG];
    e->inode[2] = mp[MP_RS] > 0.0 ? sc->new_node(sc->owner, e, "s") : e->node[TS];
}

static void mos_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    for (int i = 0; i < SL_COUNT; i++)
        e->slot[i] = -1;
    if (e->inode[0] != e->node[TD])
        claim_pair(e, sc, SL_RD, e->node[TD], e->inode[0]);
    if (e->inode[2] != e->node[TS])
        claim_pair(e, sc, SL_RS, e->node[TS], e->inode[2]);
    for (int r = 0; r < 4; r++)
        for (int c = 0; c < 4; c++)
            e->slot[SL_CORE + 4 * r + c] =
                sc->claim(sc->owner, node_unknown(tnode(e, r)), node_unknown(tnode(e, c)));
}

/* IS and PB (with CBD, CBS) follow the junction laws the diode uses (docs/models.md) with the
 * diode's defaults XTI = 3, EG = 1.11 eV, measured at TNOM = 27 C; KP, VTO, GAMMA, PHI are
 * held at their card values. */
static int mos_temp(const element *e, double temp_k, double *tp, char *why, size_t why_len)
{
    const double *mp = e->mod->p;
    memcpy(tp, mp, MODEL_MAX_PARAMS * sizeof *tp);
    double tnom_k = SS_TNOM_DEFAULT_C + SS_ZERO_C_IN_K;
    double vt = thermal_voltage_v(temp_k);
    double r = temp_k / tnom_k;
    tp[MP_IS] = mp[MP_IS] * pow(r, 3.0) * exp((r - 1.0) * 1.11 / vt);
    double pb_d, pb_s;
    junction_temp_vj_cj(mp[MP_PB], mp[MP_CBD], MOS_MJ, temp_k, tnom_k, vt, &pb_d, &tp[MP_CBD]);
    junction_temp_vj_cj(mp[MP_PB], mp[MP_CBS], MOS_MJ, temp_k, tnom_k, vt, &pb_s, &tp[MP_CBS]);
    tp[MP_PB] = pb_d;
    if (temp_param_check("is", tp[MP_IS], 1, why, why_len) != 0 ||
        temp_param_check("cbd", tp[MP_CBD], 0, why, why_len) != 0 ||
        temp_param_check("cbs", tp[MP_CBS], 0, why, why_len) != 0 ||
        temp_param_check("pb", tp[MP_PB], tp[MP_CBD] > 0.0 || tp[MP_CBS] > 0.0, why,
                         why_len) != 0)
        return -1;
    return 0;
}

/* The channel at N-sense voltages with vds >= 0 (the caller swaps drain and source). */
typedef struct mos_chan {
    double id;            /* drain to source through the channel */
    double gm, gds, gmb;  /* dId/dvgs, dId/dvds, dId/dvbs */
    double vth, vdsat;    /* threshold with body effect; vgs - vth */
    int region;           /* 0 cut-off, 1 linear, 2 saturation */
} mos_chan;

static double mos_beta(const element *e) { return e->tp[MP_KP] * e->w_m / e->l_m; }

/* Threshold with body effect: Vth = VTO + GAMMA (sqrt(PHI - vbs) - sqrt(PHI)) (N sense) for
 * vbs <= 0; for a forward-biased source junction (vbs > 0) the square root continues as its
 * tangent sqrt(PHI) - vbs / (2 sqrt(PHI)), held at 0 (the classic code's continuation, from
 * memory). Writes -dVth/dvbs into *dvth. */
static double mos_vth(const double *tp, double vto_n, double vbs, double *dvth)
{
    double sphi = sqrt(tp[MP_PHI]), sarg;
    if (vbs <= 0.0) {
        sarg = sqrt(tp[MP_PHI] - vbs);
        *dvth = tp[MP_GAMMA] / (2.0 * sarg);
    } else {
        sarg = sphi - vbs / (2.0 * sphi);
        *dvth = tp[MP_GAMMA] / (2.0 * sphi);
        if (sarg < 0.0) {
            sarg = 0.0;
            *dvth = 0.0;
        }
    }
    return vto_n + tp[MP_GAMMA] * (sarg - sphi);
}

/* Shichman-Hodges (1968): cut-off vgs <= Vth; linear Id = beta (1 + LAMBDA vds)
 * (vgs - Vth - vds/2) vds; saturation Id = beta/2 (1 + LAMBDA vds) (vgs - Vth)^2, with
 * beta = KP W / L. */
static void mos_channel(const element *e, double vgs, double vds, double vbs, mos_chan *o)
{
    const double *tp = e->tp;
    double dvth;
    o->vth = mos_vth(tp, polarity(e) * tp[MP_VTO], vbs, &dvth);
    double vgst = vgs - o->vth, beta = mos_beta(e), lam = tp[MP_LAMBDA];
    o->vdsat = fmax(vgst, 0.0);
    if (vgst <= 0.0) {
        o->id = o->gm = o->gds = o->gmb = 0.0;
        o->region = 0;
        return;
    }
    double cl = 1.0 + lam * vds;
    if (vgst <= vds) {
        o->id = 0.5 * beta * vgst * vgst * cl;
        o->gm = beta * vgst * cl;
        o->gds = 0.5 * beta * vgst * vgst * lam;
        o->region = 2;
    } else {
        o->id = beta * (vgst - 0.5 * vds) * vds * cl;
        o->gm = beta * vds * cl;
        o->gds = beta * (vgst - vds) * cl + beta * lam * vds * (vgst - 0.5 * vds);
        o->region = 1;
    }
    o->gmb = o->gm * dvth;
}

/* The whole device at N-sense terminal voltages vgs, vds, vbs (vbd = vbs - vds): the channel
 * in the mode vds sets (source and drain exchanged for vds < 0) and the two bulk diodes. */
typedef struct mos_eval {
    mos_chan ch;     /* in the device's own frame (swapped when reversed) */
    int reversed;    /* vds < 0: the drain acts as the source */
    double ibd, gbd; /* bulk-drain diode (bulk to drain) with gmin */
    double ibs, gbs; /* bulk-source diode */
} mos_eval;

static void mos_evaluate(const element *e, double vt, double gmin, double vgs, double vds,
                         double vbs, double vbd, mos_eval *o)
{
    o->reversed = vds < 0.0;
    if (!o->reversed)
        mos_channel(e, vgs, vds, vbs, &o->ch);
    else
        mos_channel(e, vgs - vds, -vds, vbd, &o->ch);
    o->ibd = junction_current(e->tp[MP_IS], vbd, vt, &o->gbd) + gmin * vbd;
    o->gbd += gmin;
    o->ibs = junction_current(e->tp[MP_IS], vbs, vt, &o->gbs) + gmin * vbs;
    o->gbs += gmin;
}

static void n_voltages(const element *e, const double *x, double *vgs, double *vds,
                       double *vbs)
{
    double p = polarity(e), vs = xv(x, tnode(e, TS));
    *vgs = p * (xv(x, tnode(e, TG)) - vs);
    *vds = p * (xv(x, tnode(e, TD)) - vs);
    *vbs = p * (xv(x, tnode(e, TB)) - vs);
}

/* FET voltage limiting after the classic code (Nagel 1975; from memory): gate steps bounded
 * around the threshold, drain-source steps bounded by the present drain voltage. */
static double mos_fetlim(double vnew, double vold, double vto)
{
    double vtsthi = fabs(2.0 * (vold - vto)) + 2.0, vtstlo = vtsthi / 2.0 + 2.0;
    double vtox = vto + 3.5, delv = vnew - vold;
    if (vold >= vto) {
        if (vold >= vtox) {
            if (delv <= 0.0) {
                if (vnew >= vtox) {
                    if (-delv > vtstlo)
                        vnew = vold - vtstlo;
                } else {
                    vnew = fmax(vnew, vto + 2.0);
                }
            } else if (delv >= vtsthi) {
                vnew = vold + vtsthi;
            }
        } else {
            vnew = delv <= 0.0 ? fmax(vnew, vto - 0.5) : fmin(vnew, vto + 4.0);
        }
    } else if (delv <= 0.0) {
        if (-delv > vtsthi)
            vnew = vold - vtsthi;
    } else {
        double vtemp = vto + 0.5;
        if (vnew <= vtemp) {
            if (delv > vtstlo)
                vnew = vold + vtstlo;
        } else {
            vnew = vtemp;
        }
    }
    return vnew;
}

static double mos_limvds(double vnew, double vold)
{
    if (vold >= 3.5) {
        if (vnew > vold)
            return fmin(vnew, 3.0 * vold + 2.0);
        if (vnew < 3.5)
            return fmax(vnew, 2.0);
        return vnew;
    }
    return vnew > vold ? fmin(vnew, 4.0) : fmax(vnew, -0.5);
}

/* Limits (vgs, vds, vbs) against the last load's values in e->state. */
static void mos_limit(element *e, dev_load_ctx *lc, double *vgs, double *vds, double *vbs)
{
    const double *st = e->state;
    double vt = lc->vt_v, vcrit = junction_vcrit(vt, e->tp[MP_IS]);
    double dvth, von = mos_vth(e->tp, polarity(e) * e->tp[MP_VTO], st[ST_VBS], &dvth);
    double g0 = *vgs, d0 = *vds, b0 = *vbs;
    double vgd = *vgs - *vds, vgd_old = st[ST_VGS] - st[ST_VDS];
    /* a voltage the limits leave alone is kept exactly as it came: recomputing it as a
     * difference (vgs - vgd) changes its last bits, which would read as "limited" at every
     * iteration and never let Newton converge (a switch at Vds of a few nV, fully on) */
    if (st[ST_VDS] >= 0.0) {
        double vgs_l = mos_fetlim(*vgs, st[ST_VGS], von);
        double vds_l = vgs_l == *vgs ? *vds : vgs_l - vgd;
        *vgs = vgs_l;
        *vds = mos_limvds(vds_l, st[ST_VDS]);
    } else {
        double vgd_l = mos_fetlim(vgd, vgd_old, von);
        double vds_l = vgd_l == vgd ? *vds : *vgs - vgd_l;
        double lim = -mos_limvds(-vds_l, -st[ST_VDS]);
        if (vgd_l != vgd || lim != vds_l) {
            *vds = lim;
            *vgs = vgd_l + lim;
        }
    }
    if (*vds >= 0.0) {
        *vbs = junction_limit(*vbs, st[ST_VBS], vt, vcrit, &lc->limited);
    } else {
        double vbd = junction_limit(*vbs - *vds, st[ST_VBD], vt, vcrit, &lc->limited);
        *vbs = vbd + *vds;
    }
    if (*vgs != g0 || *vds != d0 || *vbs != b0)
        lc->limited = 1;
}

/* Adds the 4x4 Jacobian rows of the channel and the diodes (d', g, s', b columns) and their
 * equivalent currents; p the polarity. */
static void mos_stamp(const element *e, const mos_eval *o, double p, double vgs, double vds,
                      double vbs, double *G, double *rhs)
{
    const int *core = &e->slot[SL_CORE];
    /* channel: current p Id into x (drain, or source when reversed), out of y */
    int x = o->reversed ? TS : TD, y = o->reversed ? TD : TS;
    const mos_chan *c = &o->ch;
    double j[4] = {0.0, 0.0, 0.0, 0.0}; /* d i_x / d v(col) */
    j[TG] += c->gm;
    j[x] += c->gds;
    j[TB] += c->gmb;
    j[y] -= c->gm + c->gds + c->gmb;
    /* the N-sense frame voltages of the channel's own linearisation */
    double fgs = o->reversed ? vgs - vds : vgs, fds = o->reversed ? -vds : vds;
    double fbs = o->reversed ? vbs - vds : vbs;
    double ieq = p * (c->id - c->gm * fgs - c->gds * fds - c->gmb * fbs);
    for (int k = 0; k < 4; k++) {
        stamp_add(G, core[4 * x + k], j[k]);
        stamp_add(G, core[4 * y + k], -j[k]);
    }
    rhs_add(rhs, tnode(e, x), -ieq);
    rhs_add(rhs, tnode(e, y), ieq);
    /* bulk diodes: current into b, out of d' (s') */
    double vbd = vbs - vds;
    double ieq_bd = p * (o->ibd - o->gbd * vbd), ieq_bs = p * (o->ibs - o->gbs * vbs);
    stamp_add(G, core[4 * TB + TB], o->gbd + o->gbs);
    stamp_add(G, core[4 * TB + TD], -o->gbd);
    stamp_add(G, core[4 * TB + TS], -o->gbs);
    stamp_add(G, core[4 * TD + TD], o->gbd);
    stamp_add(G, core[4 * TD + TB], -o->gbd);
    stamp_add(G, core[4 * TS + TS], o->gbs);
    stamp_add(G, core[4 * TS + TB], -o->gbs);
    rhs_add(rhs, tnode(e, TB), -(ieq_bd + ieq_bs));
    rhs_add(rhs, tnode(e, TD), ieq_bd);
    rhs_add(rhs, tnode(e, TS), ieq_bs);
}

static void mos_load_dc(element *e, dev_load_ctx *lc)
{
    double p = polarity(e), vgs, vds, vbs;
    n_voltages(e, lc->x, &vgs, &vds, &vbs);
    if (lc->mode == LOAD_INIT_JUNCTION) {
        /* the classic start: gate at threshold, no drain voltage, bulk reverse-biased */
        vgs = p * e->tp[MP_VTO];
        vds = 0.0;
        vbs = -1.0;
    } else if (lc->mode == LOAD_NORMAL) {
        mos_limit(e, lc, &vgs, &vds, &vbs);
    }
    e->state[ST_VGS] = vgs;
    e->state[ST_VDS] = vds;
    e->state[ST_VBS] = vbs;
    e->state[ST_VBD] = vbs - vds;
    mos_eval o;
    mos_evaluate(e, lc->vt_v, lc->gmin_s, vgs, vds, vbs, vbs - vds, &o);
    mos_stamp(e, &o, p, vgs, vds, vbs, lc->G, lc->rhs);
    if (e->inode[0] != e->node[TD])
        stamp_pair(lc->G, &e->slot[SL_RD], 1.0 / e->tp[MP_RD]);
    if (e->inode[2] != e->node[TS])
        stamp_pair(lc->G, &e->slot[SL_RS], 1.0 / e->tp[MP_RS]);
}

/* Terminal currents from the model equations alone (not the Newton stamps). */
static void mos_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    double p = polarity(e), vgs, vds, vbs;
    n_voltages(e, x, &vgs, &vds, &vbs);
    mos_eval o;
    mos_evaluate(e, lc->vt_v, lc->gmin_s, vgs, vds, vbs, vbs - vds, &o);
    double id = o.reversed ? -o.ch.id : o.ch.id; /* drain to source, N sense */
    rhs_add(resid, tnode(e, TD), p * (id - o.ibd));
    rhs_add(resid, tnode(e, TS), p * (-id - o.ibs));
    rhs_add(resid, tnode(e, TB), p * (o.ibd + o.ibs));
    static const int r_idx[2] = {MP_RD, MP_RS};
    for (int k = 0; k < 2; k++) {
        int t = k == 0 ? TD : TS;
        if (e->inode[2 * k] == e->node[t])
            continue;
        double i_r = (xv(x, e->node[t]) - xv(x, e->inode[2 * k])) / e->tp[r_idx[k]];
        rhs_add(resid, e->node[t], i_r);
        rhs_add(resid, e->inode[2 * k], -i_r);
    }
}

/* Meyer's intrinsic gate capacitances (Meyer 1971, as Antognetti & Massobrio tabulate them)
 * at the frame's vgs, vds >= 0, with cox = COX W L: accumulation Cgb = cox; depletion
 * Cgb = -cox vgst/PHI; weak inversion Cgs = 2/3 cox (1 + 2 vgst/PHI); saturation
 * Cgs = 2/3 cox; linear Cgs = 2/3 cox (1 - ((vdsat - vds)/(2 vdsat - vds))^2),
 * Cgd = 2/3 cox (1 - (vdsat/(2 vdsat - vds))^2). */
static void mos_meyer(double cox, double phi, double vgst, double vds, double *cgs,
                      double *cgd, double *cgb)
{
    *cgs = *cgd = *cgb = 0.0;
    if (cox == 0.0)
        return;
    if (vgst <= -phi) {
        *cgb = cox;
    } else if (vgst <= -0.5 * phi) {
        *cgb = -cox * vgst / phi;
    } else if (vgst <= 0.0) {
        *cgb = -cox * vgst / phi;
        *cgs = 2.0 / 3.0 * cox * (1.0 + 2.0 * vgst / phi);
    } else if (vds >= vgst) {
        *cgs = 2.0 / 3.0 * cox;
    } else {
        double d = 2.0 * vgst - vds, a = (vgst - vds) / d, b = vgst / d;
        *cgs = 2.0 / 3.0 * cox * (1.0 - a * a);
        *cgd = 2.0 / 3.0 * cox * (1.0 - b * b);
    }
}

static double mos_cox_f(const element *e)
{
    double tox = e->tp[MP_TOX];
    return isfinite(tox) ? MOS_EPS_OX / tox * e->w_m * e->l_m : 0.0;
}

/* The small-signal capacitances at the operating point: gate-source, gate-drain, gate-bulk
 * (overlap + Meyer, in terminal terms), bulk-drain and bulk-source depletion. */
static void mos_caps(const element *e, const mos_eval *o, double vgs, double vds, double vbs,
                     double c[5])
{
    const double *tp = e->tp;
    double cgs, cgd, cgb;
    double fgs = o->reversed ? vgs - vds : vgs, fds = o->reversed ? -vds : vds;
    mos_meyer(mos_cox_f(e), tp[MP_PHI], fgs - o->ch.vth, fds, &cgs, &cgd, &cgb);
    if (o->reversed) {
        double t = cgs;
        cgs = cgd;
        cgd = t;
    }
    c[0] = cgs + tp[MP_CGSO] * e->w_m;
    c[1] = cgd + tp[MP_CGDO] * e->w_m;
    c[2] = cgb + tp[MP_CGBO] * e->l_m;
    c[3] = junction_depletion_cap(vbs - vds, tp[MP_CBD], tp[MP_PB], MOS_MJ, tp[MP_FC]);
    c[4] = junction_depletion_cap(vbs, tp[MP_CBS], tp[MP_PB], MOS_MJ, tp[MP_FC]);
}

/* the terminal pairs of the five capacitances / charges: (g, s') (g, d') (g, b) (b, d')
 * (b, s') */
static const int CAP_PAIR[5][2] = {{TG, TS}, {TG, TD}, {TG, TB}, {TB, TD}, {TB, TS}};

static void mos_load_ac(const element *e, dev_ac_ctx *ac)
{
    double vgs, vds, vbs;
    n_voltages(e, ac->x_op, &vgs, &vds, &vbs);
    mos_eval o;
    mos_evaluate(e, ac->vt_v, ac->gmin_s, vgs, vds, vbs, vbs - vds, &o);
    double complex y[4][4] = {{0}};
    int x = o.reversed ? TS : TD, s = o.reversed ? TD : TS;
    double j[4] = {0.0, 0.0, 0.0, 0.0};
    j[TG] += o.ch.gm;
    j[x] += o.ch.gds;
    j[TB] += o.ch.gmb;
    j[s] -= o.ch.gm + o.ch.gds + o.ch.gmb;
    for (int k = 0; k < 4; k++) {
        y[x][k] += j[k];
        y[s][k] -= j[k];
    }
    y[TB][TB] += o.gbd + o.gbs;
    y[TB][TD] -= o.gbd;
    y[TD][TB] -= o.gbd;
    y[TD][TD] += o.gbd;
    y[TB][TS] -= o.gbs;
    y[TS][TB] -= o.gbs;
    y[TS][TS] += o.gbs;
    double c[5];
    mos_caps(e, &o, vgs, vds, vbs, c);
    for (int k = 0; k < 5; k++) {
        double complex yc = SS_J * ac->omega * c[k];
        int a = CAP_PAIR[k][0], b = CAP_PAIR[k][1];
        y[a][a] += yc;
        y[b][b] += yc;
        y[a][b] -= yc;
        y[b][a] -= yc;
    }
    const int *core = &e->slot[SL_CORE];
    for (int r = 0; r < 4; r++)
        for (int k = 0; k < 4; k++)
            zstamp_add(ac->G, core[4 * r + k], y[r][k]);
    if (e->inode[0] != e->node[TD])
        zstamp_pair(ac->G, &e->slot[SL_RD], 1.0 / e->tp[MP_RD]);
    if (e->inode[2] != e->node[TS])
        zstamp_pair(ac->G, &e->slot[SL_RS], 1.0 / e->tp[MP_RS]);
}

/* Operating point in terminal terms: Id into the drain, the terminal voltages, the threshold
 * (in the book's sign: negative for an enhancement PMOS) and the small-signal conductances. */
typedef struct mos_op_info {
    double id_a, vgs_v, vds_v, vbs_v, vth_v, gm_s, gds_s, gmb_s;
    int region;
} mos_op_info;

static const char *const REGION_NAME[3] = {"cut-off", "linear", "saturation"};

static void mos_op_details(const element *e, const double *x, double vt_v, double gmin_s,
                           mos_op_info *out)
{
    double p = polarity(e), vgs, vds, vbs;
    n_voltages(e, x, &vgs, &vds, &vbs);
    mos_eval o;
    mos_evaluate(e, vt_v, gmin_s, vgs, vds, vbs, vbs - vds, &o);
    double id = o.reversed ? -o.ch.id : o.ch.id;
    out->id_a = p * (id - o.ibd);
    out->vgs_v = xv(x, e->node[TG]) - xv(x, e->node[TS]);
    out->vds_v = xv(x, e->node[TD]) - xv(x, e->node[TS]);
    out->vbs_v = xv(x, e->node[TB]) - xv(x, e->node[TS]);
    out->vth_v = p * o.ch.vth;
    out->gm_s = o.ch.gm;
    out->gds_s = o.ch.gds;
    out->gmb_s = o.ch.gmb;
    out->region = o.ch.region;
}

static void mos_op_point(const element *e, const double *x, double vt_v, double gmin_s,
                         dev_op_point *out)
{
    mos_op_info info;
    mos_op_details(e, x, vt_v, gmin_s, &info);
    out->i_a = info.id_a;
    out->v_v = info.vds_v;
    out->region = REGION_NAME[info.region];
    out->amplifying = info.region == 2;
    snprintf(out->detail, sizeof out->detail, "Vgs = %.4g V, Vds = %.4g V, Id = %.4g A",
             info.vgs_v, info.vds_v, info.id_a);
}

/* op.csv rows; region is 0 cut-off, 1 linear, 2 saturation (docs/cli.md) */
static void mos_report(const element *e, const double *x, double vt_v, double gmin_s,
                       dev_report_fn fn, void *sink)
{
    mos_op_info info = {SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, SS_NAN, 0};
    if (x)
        mos_op_details(e, x, vt_v, gmin_s, &info);
    fn(sink, "id", e->name, info.id_a);
    fn(sink, "vgs", e->name, info.vgs_v);
    fn(sink, "vds", e->name, info.vds_v);
    fn(sink, "vbs", e->name, info.vbs_v);
    fn(sink, "vth", e->name, info.vth_v);
    fn(sink, "gm", e->name, info.gm_s);
    fn(sink, "gds", e->name, info.gds_s);
    fn(sink, "gmb", e->name, info.gmb_s);
    fn(sink, "region", e->name, x ? (double)info.region : SS_NAN);
}

static const char MOS_REPORT_HEADING[] =
    "\nMOSFETs\n  name         type           Id        Vgs        Vds        Vth          gm"
    "         gds       power  region\n";

static void mos_report_line(const element *e, const double *x, double vt_v, double gmin_s,
                            double power_w, char *buf, size_t len)
{
    char a[48], b[48], c[48], d[48], f[48], g[48], h[48];
    mos_op_info info;
    mos_op_details(e, x, vt_v, gmin_s, &info);
    snprintf(buf, len, "  %-12s %-4s %11s %10s %10s %10s %11s %11s %11s  %s", e->name,
             MOS_TYPES[e->mod->type], fmt_eng(a, sizeof a, info.id_a, "A"),
             fmt_eng(b, sizeof b, info.vgs_v, "V"), fmt_eng(c, sizeof c, info.vds_v, "V"),
             fmt_eng(d, sizeof d, info.vth_v, "V"), fmt_eng(f, sizeof f, info.gm_s, "S"),
             fmt_eng(g, sizeof g, info.gds_s, "S"), fmt_eng(h, sizeof h, power_w, "W"),
             REGION_NAME[info.region]);
}

/* Noise (docs/noise.md): channel thermal noise (8/3) k T gm between d' and s' (the saturation
 * form, after A. van der Ziel, Noise in Solid State Devices and Circuits, 1986 -- from
 * memory); flicker KF |Id|^AF / (f COX L^2) with COX = eps_ox/TOX per unit area (the classic
 * normalisation), KF |Id|^AF / f when TOX is not given; thermal noise of RD and RS; shot noise
 * 2q|I| of each bulk junction (without the noiseless gmin). */
static int mos_noise(const element *e, const dev_noise_ctx *nc, dev_noise_src *out)
{
    const double *tp = e->tp;
    double vgs, vds, vbs;
    n_voltages(e, nc->x_op, &vgs, &vds, &vbs);
    mos_eval o;
    mos_evaluate(e, nc->vt_v, 0.0, vgs, vds, vbs, vbs - vds, &o);
    int d = e->inode[0], s = e->inode[2], b = e->node[TB];
    int n = 0;
    out[n++] = (dev_noise_src){d, s, 8.0 / 3.0 * SS_BOLTZMANN_J_PER_K * nc->temp_k * o.ch.gm, 0.0,
                               "channel thermal"};
    if (tp[MP_KF] > 0.0) {
        double norm = isfinite(tp[MP_TOX]) ? MOS_EPS_OX / tp[MP_TOX] * e->l_m * e->l_m : 1.0;
        out[n++] = (dev_noise_src){d, s, 0.0, noise_flicker_a2(tp[MP_KF], tp[MP_AF], o.ch.id) /
                                                  norm, "flicker"};
    }
    if (d != e->node[TD])
        out[n++] = (dev_noise_src){e->node[TD], d, noise_thermal_a2_per_hz(nc->temp_k, tp[MP_RD]),
                                   0.0, "rd thermal"};
    if (s != e->node[TS])
        out[n++] = (dev_noise_src){e->node[TS], s, noise_thermal_a2_per_hz(nc->temp_k, tp[MP_RS]),
                                   0.0, "rs thermal"};
    out[n++] = (dev_noise_src){b, d, noise_shot_a2_per_hz(o.ibd), 0.0, "bulk-drain shot"};
    out[n++] = (dev_noise_src){b, s, noise_shot_a2_per_hz(o.ibs), 0.0, "bulk-source shot"};
    return n;
}

/* Transient charges (docs/transient.md), in terminal terms: the overlap charges CGSO W vgs,
 * CGDO W vgd, CGBO L vgb (linear), and the bulk-drain and bulk-source depletion charges (the
 * integrals of the FC-extended capacitances, junction_depletion_charge, at the limited
 * junction voltages of load_dc). Meyer's intrinsic capacitances are not charges of the
 * terminal voltages, so the transient leaves them out (docs/models.md says so). */
static void mos_load_tran(element *e, dev_tran_ctx *tc)
{
    const double *tp = e->tp;
    double p = polarity(e), vbd_n, vbs_n;
    if (tc->G) {
        vbd_n = e->state[ST_VBD];
        vbs_n = e->state[ST_VBS];
    } else {
        double vgs, vds;
        n_voltages(e, tc->x, &vgs, &vds, &vbs_n);
        vbd_n = vbs_n - vds;
    }
    double c[5], v[5], q[5];
    const double *x = tc->x;
    c[0] = tp[MP_CGSO] * e->w_m;
    c[1] = tp[MP_CGDO] * e->w_m;
    c[2] = tp[MP_CGBO] * e->l_m;
    for (int k = 0; k < 3; k++) {
        v[k] = xv(x, tnode(e, CAP_PAIR[k][0])) - xv(x, tnode(e, CAP_PAIR[k][1]));
        q[k] = c[k] * v[k];
    }
    /* junction charges in terminal terms: q = p Q(p v) has dq/dv = C(p v) */
    q[3] = p * junction_depletion_charge(vbd_n, tp[MP_CBD], tp[MP_PB], MOS_MJ, tp[MP_FC], &c[3]);
    q[4] = p * junction_depletion_charge(vbs_n, tp[MP_CBS], tp[MP_PB], MOS_MJ, tp[MP_FC], &c[4]);
    v[3] = p * vbd_n;
    v[4] = p * vbs_n;
    for (int k = 0; k < 5; k++)
        tc->q[k] = q[k];
    if (!tc->G)
        return;
    const int *core = &e->slot[SL_CORE];
    for (int k = 0; k < 5; k++) {
        int a = CAP_PAIR[k][0], b = CAP_PAIR[k][1];
        double g = tc->a0 * c[k];
        double ieq = tc->a0 * q[k] + tc->hist[k] - g * v[k];
        stamp_add(tc->G, core[4 * a + a], g);
        stamp_add(tc->G, core[4 * b + b], g);
        stamp_add(tc->G, core[4 * a + b], -g);
        stamp_add(tc->G, core[4 * b + a], -g);
        rhs_add(tc->rhs, tnode(e, a), -ieq);
        rhs_add(tc->rhs, tnode(e, b), ieq);
    }
}

/* corners.csv: "m1 current low, 85 C" with id_a, vds_v, saturation */
static const dev_corner_names MOS_CORNER = {"current", "id_a", "vds_v"};

/* drain-source through the channel, drain-bulk and source-bulk through the junctions' gmin */
static const unsigned char MOS_DC_PAIRS[3][2] = {{0, 2}, {0, 3}, {2, 3}};

const dev_ops mosfet_ops = {
    .letter = 'm',
    .kind_name = "MOSFET",
    .dc_pairs = MOS_DC_PAIRS,
    .n_dc_pairs = 3,
    .op_point = mos_op_point,
    .bypass_terminal = 2,
    .amplifying_region = "saturation",
    .corner = &MOS_CORNER,
    .report_heading = MOS_REPORT_HEADING,
    .report_line = mos_report_line,
    .parse = mos_parse,
    .setup = mos_setup,
    .claim = mos_claim,
    .n_slot = SL_COUNT,
    .temp = mos_temp,
    .load_dc = mos_load_dc,
    .kcl = mos_kcl,
    .load_ac = mos_load_ac,
    .report = mos_report,
    .noise = mos_noise,
    .load_tran = mos_load_tran,
    .n_charge = 5,
    .value_name = NULL,
    .model_types = MOS_TYPES,
    .model_kind = "MOSFET",
    .model_params = mos_params,
    .n_model_params = MP_COUNT,
};
