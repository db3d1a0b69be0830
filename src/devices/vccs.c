/* Voltage-controlled current source G: gm (V(c) - V(d)) flows from a through the source to b. */
#include "devices/passive.h"

static int vccs_parse(pctx *p, element *e)
{
    if (parse_nodes(p, e, 4) != 0)
        return -1;
    if (pctx_ntok(p) != 6)
        return pctx_error(p, "expects `G n+ n- nc+ nc- transconductance`");
    return pctx_value(p, pctx_tok(p, 5), "transconductance", &e->value);
}

static void vccs_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    claim_quad(e, sc, 0, e->node[0], e->node[1], e->node[2], e->node[3]);
}

/* (a,c) +g, (a,d) -g, (b,c) -g, (b,d) +g */
static void vccs_load_dc(element *e, dev_load_ctx *lc)
{
    double g = e->value;
    stamp_add(lc->G, e->slot[0], g);
    stamp_add(lc->G, e->slot[1], -g);
    stamp_add(lc->G, e->slot[2], -g);
    stamp_add(lc->G, e->slot[3], g);
}

static void vccs_load_ac(const element *e, dev_ac_ctx *ac)
{
    double g = e->value;
    zstamp_add(ac->G, e->slot[0], g);
    zstamp_add(ac->G, e->slot[1], -g);
    zstamp_add(ac->G, e->slot[2], -g);
    zstamp_add(ac->G, e->slot[3], g);
}

static void vccs_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)lc;
    double i_a = e->value * (xv(x, e->node[2]) - xv(x, e->node[3]));
    rhs_add(resid, e->node[0], i_a);
    rhs_add(resid, e->node[1], -i_a);
}

const dev_ops vccs_ops = {
    .letter = 'g',
    .kind_name = "voltage-controlled current source",
    .parse = vccs_parse,
    .claim = vccs_claim,
    .n_slot = 4,
    .load_dc = vccs_load_dc,
    .kcl = vccs_kcl,
    .load_ac = vccs_load_ac,
    .value_name = "transconductance",
};
