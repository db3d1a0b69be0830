/* Voltage-controlled voltage source E: branch k with V(a) - V(b) - gain (V(c) - V(d)) = 0. */
#include "devices/passive.h"

static int vcvs_parse(pctx *p, element *e)
{
    if (parse_nodes(p, e, 4) != 0)
        return -1;
    if (pctx_ntok(p) != 6)
        return pctx_error(p, "expects `E n+ n- nc+ nc- gain`");
    return pctx_value(p, pctx_tok(p, 5), "gain", &e->value);
}

static void vcvs_setup(element *e, dev_setup_ctx *sc) { e->branch = sc->new_branch(sc->owner); }

/* slots: (a,k) (b,k) (k,a) (k,b) (k,c) (k,d) */
static void vcvs_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    int k = e->branch;
    e->slot[0] = sc->claim(sc->owner, node_unknown(e->node[0]), k);
    e->slot[1] = sc->claim(sc->owner, node_unknown(e->node[1]), k);
    e->slot[2] = sc->claim(sc->owner, k, node_unknown(e->node[0]));
    e->slot[3] = sc->claim(sc->owner, k, node_unknown(e->node[1]));
    e->slot[4] = sc->claim(sc->owner, k, node_unknown(e->node[2]));
    e->slot[5] = sc->claim(sc->owner, k, node_unknown(e->node[3]));
}

static void vcvs_load_dc(element *e, dev_load_ctx *lc)
{
    static const double unit[4] = {1.0, -1.0, 1.0, -1.0};
    for (int i = 0; i < 4; i++)
        stamp_add(lc->G, e->slot[i], unit[i]);
    stamp_add(lc->G, e->slot[4], -e->value);
    stamp_add(lc->G, e->slot[5], e->value);
}

static void vcvs_load_ac(const element *e, dev_ac_ctx *ac)
{
    static const double unit[4] = {1.0, -1.0, 1.0, -1.0};
    for (int i = 0; i < 4; i++)
        zstamp_add(ac->G, e->slot[i], unit[i]);
    zstamp_add(ac->G, e->slot[4], -e->value);
    zstamp_add(ac->G, e->slot[5], e->value);
}

static void vcvs_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)lc;
    rhs_add(resid, e->node[0], x[e->branch]);
    rhs_add(resid, e->node[1], -x[e->branch]);
    resid[e->branch] += xv(x, e->node[0]) - xv(x, e->node[1]) -
                        e->value * (xv(x, e->node[2]) - xv(x, e->node[3]));
}

const dev_ops vcvs_ops = {
    .letter = 'e',
    .kind_name = "voltage-controlled voltage source",
    .flags = DEV_FIXES_VOLTAGE,
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .parse = vcvs_parse,
    .setup = vcvs_setup,
    .claim = vcvs_claim,
    .n_slot = 6,
    .load_dc = vcvs_load_dc,
    .kcl = vcvs_kcl,
    .load_ac = vcvs_load_ac,
    .value_name = "gain",
};
