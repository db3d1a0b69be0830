/* Current-controlled current source F: gain * i(Vctrl) flows from a through the source to b;
 * the controlling source's branch current is an unknown already. */
#include "devices/passive.h"

static int cccs_parse(pctx *p, element *e)
{
    if (parse_nodes(p, e, 2) != 0)
        return -1;
    if (pctx_ntok(p) != 5)
        return pctx_error(p, "expects `F n+ n- Vcontrol gain`");
    e->ctrl_elem = -1;
    e->ctrl_name = pctx_scoped_name(p, pctx_tok(p, 3));
    if (!e->ctrl_name)
        return -1;
    return pctx_value(p, pctx_tok(p, 4), "gain", &e->value);
}

/* (a,m) +gain, (b,m) -gain with m the controlling branch */
static void cccs_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    int m = elems[e->ctrl_elem].branch;
    e->slot[0] = sc->claim(sc->owner, node_unknown(e->node[0]), m);
    e->slot[1] = sc->claim(sc->owner, node_unknown(e->node[1]), m);
}

static void cccs_load_dc(element *e, dev_load_ctx *lc)
{
    stamp_add(lc->G, e->slot[0], e->value);
    stamp_add(lc->G, e->slot[1], -e->value);
}

static void cccs_load_ac(const element *e, dev_ac_ctx *ac)
{
    zstamp_add(ac->G, e->slot[0], e->value);
    zstamp_add(ac->G, e->slot[1], -e->value);
}

static void cccs_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)lc;
    double i_a = e->value * x[lc->ckt_elem[e->ctrl_elem].branch];
    rhs_add(resid, e->node[0], i_a);
    rhs_add(resid, e->node[1], -i_a);
}

const dev_ops cccs_ops = {
    .letter = 'f',
    .kind_name = "current-controlled current source",
    .flags = DEV_CONTROLLED,
    .parse = cccs_parse,
    .claim = cccs_claim,
    .n_slot = 2,
    .load_dc = cccs_load_dc,
    .kcl = cccs_kcl,
    .load_ac = cccs_load_ac,
    .value_name = "gain",
};
