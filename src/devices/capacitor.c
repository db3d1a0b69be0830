/* Capacitor: open at DC (claims its slots so the pattern is the same in AC), admittance
 * jwC in AC. Transient charge is left to the transient module. */
#include "devices/passive.h"

static int cap_parse(pctx *p, element *e) { return parse_two_node_value(p, e, "capacitance", 1); }

static void cap_claim(element *e, const struct ss_circuit *ckt, dev_setup_ctx *sc)
{
    (void)ckt;
    e->n_slot = 4;
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

const dev_ops capacitor_ops = {
    .letter = 'c',
    .kind_name = "capacitor",
    .parse = cap_parse,
    .claim = cap_claim,
    .load_dc = cap_load_dc,
    .kcl = cap_kcl,
    .load_ac = cap_load_ac,
    .value_name = "capacitance",
};
