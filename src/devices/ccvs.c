/* Current-controlled voltage source H: branch k with V(a) - V(b) - r i(Vctrl) = 0. */
#include "devices/passive.h"

static int ccvs_parse(pctx *p, element *e)
{
    if (parse_nodes(p, e, 2) != 0)
        return -1;
    if (pctx_ntok(p) != 5)
        return pctx_error(p, "expects `H n+ n- Vcontrol transresistance`");
    e->ctrl_elem = -1;
    e->ctrl_name = pctx_scoped_name(p, pctx_tok(p, 3));
    if (!e->ctrl_name)
        return -1;
    return pctx_value(p, pctx_tok(p, 4), "transresistance", &e->value);
}

static void ccvs_setup(element *e, dev_setup_ctx *sc) { e->branch = sc->new_branch(sc->owner); }

/* slots: (a,k) (b,k) (k,a) (k,b) (k,m) */
static void ccvs_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    int k = e->branch, m = elems[e->ctrl_elem].branch;
    e->slot[0] = sc->claim(sc->owner, node_unknown(e->node[0]), k);
    e->slot[1] = sc->claim(sc->owner, node_unknown(e->node[1]), k);
    e->slot[2] = sc->claim(sc->owner, k, node_unknown(e->node[0]));
    e->slot[3] = sc->claim(sc->owner, k, node_unknown(e->node[1]));
    e->slot[4] = sc->claim(sc->owner, k, m);
}

static void ccvs_load_dc(element *e, dev_load_ctx *lc)
{
    static const double unit[4] = {1.0, -1.0, 1.0, -1.0};
    for (int i = 0; i < 4; i++)
        stamp_add(lc->G, e->slot[i], unit[i]);
    stamp_add(lc->G, e->slot[4], -e->value);
}

static void ccvs_load_ac(const element *e, dev_ac_ctx *ac)
{
    static const double unit[4] = {1.0, -1.0, 1.0, -1.0};
    for (int i = 0; i < 4; i++)
        zstamp_add(ac->G, e->slot[i], unit[i]);
    zstamp_add(ac->G, e->slot[4], -e->value);
}

static void ccvs_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    rhs_add(resid, e->node[0], x[e->branch]);
    rhs_add(resid, e->node[1], -x[e->branch]);
    resid[e->branch] += xv(x, e->node[0]) - xv(x, e->node[1]) -
                        e->value * x[lc->ckt_elem[e->ctrl_elem].branch];
}

const dev_ops ccvs_ops = {
    .letter = 'h',
    .kind_name = "current-controlled voltage source",
    .flags = DEV_FIXES_VOLTAGE | DEV_CONTROLLED,
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .parse = ccvs_parse,
    .setup = ccvs_setup,
    .claim = ccvs_claim,
    .n_slot = 5,
    .load_dc = ccvs_load_dc,
    .kcl = ccvs_kcl,
    .load_ac = ccvs_load_ac,
    .value_name = "transresistance",
};
