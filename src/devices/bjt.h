/* What the bipolar transistor's two files share: bjt.c (the card, parsing, the DC model, the
 * base resistance, noise, the report) and bjt_charge.c (the stored charges: the AC
 * capacitances, excess phase and the transient companions). Not used outside them. */
#ifndef SS_BJT_H
#define SS_BJT_H

#include <math.h>

#include "devices/device.h"

/* Parameter order of the model card: ORDER BJT_PARAM (keep bjt_params[] in bjt.c in step).
 * New parameters go at the end, so the earlier ones keep their places. */
enum {
    BP_IS, BP_BF, BP_NF, BP_VAF, BP_IKF, BP_ISE, BP_NE, BP_BR, BP_NR, BP_VAR, BP_IKR, BP_ISC,
    BP_NC, BP_RB, BP_RE, BP_RC, BP_CJE, BP_VJE, BP_MJE, BP_CJC, BP_VJC, BP_MJC, BP_FC, BP_TF,
    BP_TR, BP_XTB, BP_XTI, BP_EG, BP_TNOM, BP_KF, BP_AF, BP_IRB, BP_RBM, BP_XTF, BP_VTF,
    BP_ITF, BP_PTF, BP_XCJC, BP_CJS, BP_VJS, BP_MJS, BP_COUNT
};

/* Slot layout: three resistor pairs, the 3x3 core on (c', b', e'), then what the extended
 * model needs only when a card uses it (-1 otherwise, so the matrix of a circuit without
 * those parameters is what it always was): (b, c') and (b, e') for the base resistance's
 * dependence on the junction voltages and the external part of CJC, (c', b) for the latter,
 * and the pair (c', s) of the collector-substrate capacitance. */
enum {
    SL_RC = 0, SL_RB = 4, SL_RE = 8, SL_CORE = 12,
    SL_B_CI = 21, SL_B_EI = 22, SL_CI_B = 23, SL_CS = 24,
    SL_COUNT = 28
};
enum { TC = 0, TB = 1, TE = 2 };
/* state[] */
enum { ST_VBE = 0, ST_VBC = 1 };
/* model types: the index is the polarity (0 NPN, 1 PNP) */
enum { BJT_NPN = 0, BJT_PNP = 1 };

static inline double bjt_polarity(const element *e) { return e->mod->type == BJT_PNP ? -1.0 : 1.0; }

/* the substrate node (0: ground, also when the line names none) */
static inline int bjt_substrate(const element *e) { return e->n_node > 3 ? e->node[3] : 0; }

/* What the model values make of the structure (with the internal nodes, they decide the
 * matrix entries bjt_claim makes; a context whose values change them prepares again, as for a
 * series resistance set to or from zero): the base resistance varies when RBM is given and
 * differs from RB (and RB > 0 made b'); part of CJC sits at the external base when XCJC < 1
 * with CJC and b'; CJS > 0 adds the collector-substrate pair. */
static inline int bjt_rb_varies(const element *e)
{
    const double *mp = e->mod->p;
    return e->inode[TB] != e->node[TB] && isfinite(mp[BP_RBM]) && mp[BP_RBM] != mp[BP_RB];
}
static inline int bjt_has_bx(const element *e)
{
    const double *mp = e->mod->p;
    return e->inode[TB] != e->node[TB] && mp[BP_XCJC] < 1.0 && mp[BP_CJC] > 0.0;
}

/* Model currents (NPN sense) and their derivatives at internal junction voltages. */
typedef struct bjt_eval_out {
    double ic, ib;       /* into collector and base */
    double gce, gcc;     /* dic/dvbe, dic/dvbc */
    double gbe, gbc;     /* dib/dvbe, dib/dvbc */
    double if_a, qb;     /* forward diffusion current and base charge (for diffusion cap) */
    double dqb_dvbe, dqb_dvbc;
    double gif;
} bjt_eval_out;

/* Gummel-Poon DC equations at the internal junction voltages (bjt.c). */
SS_HIDDEN void bjt_eval(const double *tp, double vt, double gmin, double vbe, double vbc,
                        bjt_eval_out *o);
/* The NPN-sense junction voltages b'-e' and b'-c' at x. */
SS_HIDDEN void bjt_junction_voltages(const element *e, const double *x, double *vbe,
                                     double *vbc);

/* The base resistance between b and b' (bjt.c): its value rbb and the derivatives of the
 * conductance 1/rbb with respect to the NPN-sense vbe and vbc (0 when it is constant). */
typedef struct bjt_rbb {
    double g;              /* 1/rbb, S */
    double dg_dvbe, dg_dvbc;
    int varies;            /* RBM differs from RB: the Jacobian has the two derivatives */
} bjt_rbb;
SS_HIDDEN void bjt_base_resistance(const double *tp, const bjt_eval_out *o, double gmin,
                                   double vbe, double vbc, bjt_rbb *out);

/* bjt_charge.c */
SS_HIDDEN void bjt_load_ac(const element *e, dev_ac_ctx *ac);
SS_HIDDEN void bjt_load_tran(element *e, dev_tran_ctx *tc);
SS_HIDDEN int bjt_ac_not_affine(const element *e);
/* the number of charges load_tran keeps: b'-e', b'-c', b-c' (external CJC part), c'-s */
#define BJT_N_CHARGE 4

#endif
