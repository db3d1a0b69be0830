/* Bipolar transistor: the stored charges of the Gummel-Poon model and what follows from them,
 * the small-signal capacitances (with the excess phase of the transport current) and the
 * transient companions. The DC model is bjt.c's. Equations: docs/models.md (BJT charges),
 * after I. Getreu, "Modeling the Bipolar Transistor" (1976) and P. Antognetti, G. Massobrio
 * (eds.), "Semiconductor Device Modeling with SPICE", 2nd ed. (1993), ch. 2.
 *
 * Four charges, NPN sense (the polarity turns voltages and currents for a PNP):
 *   q_be between b' and e': the CJE depletion charge + the forward diffusion charge
 *        Qf = TF_eff IF/qb, TF_eff = TF (1 + XTF (IF/(IF + ITF))^2 exp(Vbc/(1.44 VTF)));
 *   q_bc between b' and c': the depletion charge of XCJC CJC + the reverse diffusion charge
 *        Qr = TR IR;
 *   q_bx between b and c': the depletion charge of (1 - XCJC) CJC at Vbx = Vb - Vc' (only
 *        with a base resistance; without one all of CJC is at b');
 *   q_cs between s and c': the CJS depletion charge at Vsc = Vs - Vc', with the linear
 *        continuation from zero bias up (FC = 0: C = CJS (1 + MJS Vsc/VJS) there).
 * Depletion charges are the integrals of the FC-extended capacitances
 * (junction_depletion_charge), so each capacitance is exactly its charge's derivative. */
#include <math.h>

#include "devices/bjt.h"
#include "devices/junction.h"

/* The forward diffusion charge Qf and its derivatives dQf/dvbe (*c11) and dQf/dvbc (*c12). */
static double forward_charge(const double *tp, const bjt_eval_out *o, double vbc, double *c11,
                             double *c12)
{
    double tf = tp[BP_TF], i_f = o->if_a, qb = o->qb;
    if (tp[BP_XTF] == 0.0) { /* TF_eff = TF */
        *c11 = tf * (o->gif / qb - i_f / (qb * qb) * o->dqb_dvbe);
        *c12 = -tf * i_f / (qb * qb) * o->dqb_dvbc;
        return tf * i_f / qb;
    }
    /* w = IF/(IF + ITF) (1 with ITF = 0; 0 for IF <= 0, where the term has vanished) */
    double itf = tp[BP_ITF], w = 1.0, dw_dif = 0.0;
    if (itf > 0.0) {
        w = i_f > 0.0 ? i_f / (i_f + itf) : 0.0;
        dw_dif = i_f > 0.0 ? itf / ((i_f + itf) * (i_f + itf)) : 0.0;
    }
    double k = 1.0 / (1.44 * tp[BP_VTF]); /* 0 when VTF is infinite */
    double ev = exp(fmin(vbc * k, JUNCTION_EXP_ARG_MAX));
    double a = 1.0 + tp[BP_XTF] * w * w * ev; /* TF_eff / TF */
    double da_dvbe = tp[BP_XTF] * ev * 2.0 * w * dw_dif * o->gif;
    double da_dvbc = tp[BP_XTF] * w * w * ev * k;
    *c11 = tf * (da_dvbe * i_f / qb + a * (o->gif / qb - i_f / (qb * qb) * o->dqb_dvbe));
    *c12 = tf * (da_dvbc * i_f / qb - a * i_f / (qb * qb) * o->dqb_dvbc);
    return tf * a * i_f / qb;
}

/* the CJC at b': all of it, or XCJC of it when the rest sits at the external base */
static double cjc_internal(const element *e)
{
    return bjt_has_bx(e) ? e->tp[BP_XCJC] * e->tp[BP_CJC] : e->tp[BP_CJC];
}

/* NPN-sense Vbx = Vb - Vc' and Vsc = Vs - Vc' at x */
static void outer_voltages(const element *e, const double *x, double *vbx, double *vsc)
{
    double p = bjt_polarity(e), vci = xv(x, e->inode[TC]);
    *vbx = p * (xv(x, e->node[TB]) - vci);
    *vsc = p * (xv(x, bjt_substrate(e)) - vci);
}

/* the excess phase makes the admittance exp(-jw td): not of the form G + jwC */
int bjt_ac_not_affine(const element *e) { return e->tp[BP_PTF] > 0.0 && e->tp[BP_TF] > 0.0; }

void bjt_load_ac(const element *e, dev_ac_ctx *ac)
{
    const double *tp = e->tp;
    double vbe, vbc;
    bjt_junction_voltages(e, ac->x_op, &vbe, &vbc);
    bjt_eval_out o;
    bjt_eval(tp, ac->vt_v, ac->gmin_s, vbe, vbc, &o);

    /* capacitances: depletion with the FC extension, diffusion dQf/dVbe, the cross term
     * dQf/dVbc (Qf depends on Vbc through qb and through VTF: the transient's charge,
     * linearised) and TR dIR/dVbc */
    double cbe = junction_depletion_cap(vbe, tp[BP_CJE], tp[BP_VJE], tp[BP_MJE], tp[BP_FC]);
    double cbc = junction_depletion_cap(vbc, cjc_internal(e), tp[BP_VJC], tp[BP_MJC], tp[BP_FC]);
    double cx = 0.0; /* dQf/dVbc */
    if (tp[BP_TF] > 0.0) {
        double c11, c12;
        forward_charge(tp, &o, vbc, &c11, &c12);
        cbe += c11;
        cx = c12;
    }
    if (tp[BP_TR] > 0.0) {
        double gir;
        junction_current(tp[BP_IS], vbc, tp[BP_NR] * ac->vt_v, &gir);
        cbc += tp[BP_TR] * gir;
    }
    /* local 3x3 admittance on (c', b', e'): the DC Jacobian, then the capacitors */
    double complex y[3][3] = {{-o.gcc, o.gce + o.gcc, -o.gce}, {-o.gbc, o.gbe + o.gbc, -o.gbe}};
    if (tp[BP_PTF] > 0.0 && tp[BP_TF] > 0.0) {
        /* excess phase: the forward transport transconductance dIct/dVbe is delayed by
         * td = PTF (in radians) TF, a phase of PTF at 1/(2 pi TF) */
        double td = tp[BP_PTF] * (SS_PI / 180.0) * tp[BP_TF];
        double complex gm = o.gce * cexp(-SS_J * ac->omega * td);
        y[TC][TB] = gm + o.gcc;
        y[TC][TE] = -gm;
    }
    for (int c = 0; c < 3; c++)
        y[TE][c] = -(y[TC][c] + y[TB][c]);
    double complex ybe = SS_J * ac->omega * cbe, ybc = SS_J * ac->omega * cbc;
    y[TB][TB] += ybe + ybc;
    y[TE][TE] += ybe;
    y[TB][TE] -= ybe;
    y[TE][TB] -= ybe;
    y[TC][TC] += ybc;
    y[TB][TC] -= ybc;
    y[TC][TB] -= ybc;
    if (cx != 0.0) { /* i_be += j w cx vbc: into b', out of e' */
        double complex yx = SS_J * ac->omega * cx;
        y[TB][TB] += yx;
        y[TB][TC] -= yx;
        y[TE][TB] -= yx;
        y[TE][TC] += yx;
    }
    const int *core = &e->slot[SL_CORE];
    for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++)
            zstamp_add(ac->G, core[3 * r + c], y[r][c]);
    for (int t = 0; t < 3; t++) {
        if (e->inode[t] == e->node[t])
            continue;
        static const int pair_of[3] = {SL_RC, SL_RB, SL_RE};
        static const int r_of[3] = {BP_RC, BP_RB, BP_RE};
        if (t == TB && bjt_rb_varies(e)) {
            /* the varying base resistance, linearised as in the DC Newton step */
            bjt_rbb r;
            bjt_base_resistance(tp, &o, ac->gmin_s, vbe, vbc, &r);
            double p = bjt_polarity(e);
            double vrb = xv(ac->x_op, e->node[TB]) - xv(ac->x_op, e->inode[TB]);
            double kbe = vrb * r.dg_dvbe * p, kbc = vrb * r.dg_dvbc * p;
            zstamp_pair(ac->G, &e->slot[SL_RB], r.g);
            zstamp_add(ac->G, e->slot[SL_RB + 2], kbe + kbc);
            zstamp_add(ac->G, e->slot[SL_B_CI], -kbc);
            zstamp_add(ac->G, e->slot[SL_B_EI], -kbe);
            zstamp_add(ac->G, core[3 * TB + TB], -(kbe + kbc));
            zstamp_add(ac->G, core[3 * TB + TC], kbc);
            zstamp_add(ac->G, core[3 * TB + TE], kbe);
            continue;
        }
        zstamp_pair(ac->G, &e->slot[pair_of[t]], 1.0 / tp[r_of[t]]);
    }
    double vbx, vsc;
    outer_voltages(e, ac->x_op, &vbx, &vsc);
    if (bjt_has_bx(e)) { /* (1 - XCJC) CJC between b and c' */
        double cbx = junction_depletion_cap(vbx, (1.0 - tp[BP_XCJC]) * tp[BP_CJC], tp[BP_VJC],
                                            tp[BP_MJC], tp[BP_FC]);
        double complex yx = SS_J * ac->omega * cbx;
        zstamp_add(ac->G, e->slot[SL_RB], yx); /* (b, b) */
        zstamp_add(ac->G, core[3 * TC + TC], yx);
        zstamp_add(ac->G, e->slot[SL_B_CI], -yx);
        zstamp_add(ac->G, e->slot[SL_CI_B], -yx);
    }
    if (tp[BP_CJS] > 0.0) {
        double ccs = junction_depletion_cap(vsc, tp[BP_CJS], tp[BP_VJS], tp[BP_MJS], 0.0);
        zstamp_pair(ac->G, &e->slot[SL_CS], SS_J * ac->omega * ccs);
    }
}

/* One two-terminal charge q(v) between nodes a and b (v = p (va - vb), NPN sense) with
 * dq/dv = c: its companion i = a0 q + hist into a, out of b, linearised about v; slots4 in
 * claim_pair's order ((a,a) (b,b) (a,b) (b,a)). */
static void stamp_charge2(dev_tran_ctx *tc, const int *slot4, int a, int b, double p, double q,
                          double c, double v, double hist)
{
    double a0 = tc->a0;
    stamp_pair(tc->G, slot4, a0 * c);
    double ieq = p * (a0 * q + hist - a0 * c * v);
    rhs_add(tc->rhs, a, -ieq);
    rhs_add(tc->rhs, b, ieq);
}

/* Transient charges (docs/transient.md): the four charges above. The forward diffusion
 * charge depends on vbc through qb (and through VTF), so q_be has a vbc derivative too.
 * Excess phase (PTF) is not modelled here: it is an AC quantity only (docs/models.md). */
void bjt_load_tran(element *e, dev_tran_ctx *tc)
{
    const double *tp = e->tp;
    double p = bjt_polarity(e), vbe, vbc;
    if (tc->G) {
        vbe = e->state[ST_VBE];
        vbc = e->state[ST_VBC];
    } else {
        bjt_junction_voltages(e, tc->x, &vbe, &vbc);
    }
    double c11, c12 = 0.0, c22; /* dq_be/dvbe, dq_be/dvbc, dq_bc/dvbc */
    double q_be = junction_depletion_charge(vbe, tp[BP_CJE], tp[BP_VJE], tp[BP_MJE], tp[BP_FC],
                                            &c11);
    double q_bc = junction_depletion_charge(vbc, cjc_internal(e), tp[BP_VJC], tp[BP_MJC],
                                            tp[BP_FC], &c22);
    if (tp[BP_TF] > 0.0) {
        bjt_eval_out o;
        bjt_eval(tp, tc->vt_v, 0.0, vbe, vbc, &o);
        double d11;
        q_be += forward_charge(tp, &o, vbc, &d11, &c12);
        c11 += d11;
    }
    if (tp[BP_TR] > 0.0) {
        double gir;
        q_bc += tp[BP_TR] * junction_current(tp[BP_IS], vbc, tp[BP_NR] * tc->vt_v, &gir);
        c22 += tp[BP_TR] * gir;
    }
    double vbx, vsc, cbx = 0.0, ccs = 0.0, q_bx = 0.0, q_cs = 0.0;
    outer_voltages(e, tc->x, &vbx, &vsc);
    if (bjt_has_bx(e))
        q_bx = junction_depletion_charge(vbx, (1.0 - tp[BP_XCJC]) * tp[BP_CJC], tp[BP_VJC],
                                         tp[BP_MJC], tp[BP_FC], &cbx);
    if (tp[BP_CJS] > 0.0)
        q_cs = junction_depletion_charge(vsc, tp[BP_CJS], tp[BP_VJS], tp[BP_MJS], 0.0, &ccs);
    tc->q[0] = q_be;
    tc->q[1] = q_bc;
    tc->q[2] = q_bx;
    tc->q[3] = q_cs;
    if (!tc->G)
        return;
    /* linearised about (vbe, vbc); the polarity squares away in the conductances */
    double a0 = tc->a0;
    double ieq_be = p * (a0 * q_be + tc->hist[0] - a0 * c11 * vbe - a0 * c12 * vbc);
    double ieq_bc = p * (a0 * q_bc + tc->hist[1] - a0 * c22 * vbc);
    const int *core = &e->slot[SL_CORE];
    /* i_be: into b', out of e'; depends on vb - ve (c11) and vb - vc (c12) */
    double jbe[3] = {-a0 * c12, a0 * (c11 + c12), -a0 * c11}; /* columns c', b', e' */
    double jbc[3] = {-a0 * c22, a0 * c22, 0.0};
    for (int c = 0; c < 3; c++) {
        stamp_add(tc->G, core[3 * TB + c], jbe[c] + jbc[c]);
        stamp_add(tc->G, core[3 * TE + c], -jbe[c]);
        stamp_add(tc->G, core[3 * TC + c], -jbc[c]);
    }
    rhs_add(tc->rhs, e->inode[TB], -(ieq_be + ieq_bc));
    rhs_add(tc->rhs, e->inode[TE], ieq_be);
    rhs_add(tc->rhs, e->inode[TC], ieq_bc);
    if (bjt_has_bx(e)) {
        /* (b, c') in claim_pair's order: (b,b) (c',c') (b,c') (c',b) */
        const int s4[4] = {e->slot[SL_RB], core[3 * TC + TC], e->slot[SL_B_CI],
                           e->slot[SL_CI_B]};
        stamp_charge2(tc, s4, e->node[TB], e->inode[TC], p, q_bx, cbx, vbx, tc->hist[2]);
    }
    if (tp[BP_CJS] > 0.0) {
        /* the pair was claimed as (c', s): in (s, c') order its slots are 1 0 3 2 */
        const int *cs = &e->slot[SL_CS];
        const int s4[4] = {cs[1], cs[0], cs[3], cs[2]};
        stamp_charge2(tc, s4, bjt_substrate(e), e->inode[TC], p, q_cs, ccs, vsc, tc->hist[3]);
    }
}
