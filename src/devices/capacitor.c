/* Capacitor: open at DC (claims its slots so the pattern is the same in AC), admittance
 * jwC in AC, charge C v in a transient (integrated by the transient module). */
#include "devices/passive.h"

static int cap_parse(pctx *p, element *e) { return parse_two_node_value(p, e, "capacitance", 1); }

static void cap_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    claim_pair(e, sc, 0, e->node[0], e->node[1]);
}

static void cap_load_dc(element *e, dev_load_ctx *lc)
{
    (void)e; /* open circuit at DC */
    (void)lc;
}

static void cap_load_ac(const element *e, dev_ac_ctx *ac)
{
    zstamp_pair(ac->G, e->slot, SS_J * ac->omega * e->value);
}

static void cap_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)e; /* no current at DC */
    (void)x;
    (void)lc;
    (void)resid;
}

/* Charge q = C (Va - Vb); the integrator's current a0 q + hist flows from a to b. */
static void cap_load_tran(element *e, dev_tran_ctx *tc)
{
    double v = xv(tc->x, e->node[0]) - xv(tc->x, e->node[1]);
    double q = e->value * v;
    tc->q[0] = q;
    if (!tc->G)
        return;
    double g = tc->a0 * e->value;
    double ieq = tc->a0 * q + tc->hist[0] - g * v;
    stamp_pair(tc->G, e->slot, g);
    rhs_add(tc->rhs, e->node[0], -ieq);
    rhs_add(tc->rhs, e->node[1], ieq);
}

const dev_ops capacitor_ops = {
    .letter = 'c',
    .kind_name = "capacitor",
    .flags = DEV_CAPACITOR,
    .value_range = VALUE_NONNEG,
    .parse = cap_parse,
    .claim = cap_claim,
    .n_slot = 4,
    .load_dc = cap_load_dc,
    .kcl = cap_kcl,
    .load_ac = cap_load_ac,
    .load_tran = cap_load_tran,
    .n_charge = 1,
    .value_name = "capacitance",
};
