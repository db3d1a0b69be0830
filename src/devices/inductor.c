/* Inductor: a branch current unknown; a 0 V source at DC, V = jwL I in AC, flux L I in a
 * transient (integrated by the transient module). */
#include "devices/passive.h"

static int ind_parse(pctx *p, element *e) { return parse_two_node_value(p, e, "inductance", 1); }

static void ind_setup(element *e, dev_setup_ctx *sc) { e->branch = sc->new_branch(sc->owner); }

/* slots: (a,k) (b,k) (k,a) (k,b) (k,k) */
static void ind_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    int ua = node_unknown(e->node[0]), ub = node_unknown(e->node[1]), k = e->branch;
    e->slot[0] = sc->claim(sc->owner, ua, k);
    e->slot[1] = sc->claim(sc->owner, ub, k);
    e->slot[2] = sc->claim(sc->owner, k, ua);
    e->slot[3] = sc->claim(sc->owner, k, ub);
    e->slot[4] = sc->claim(sc->owner, k, k);
}

static void ind_load_dc(element *e, dev_load_ctx *lc)
{
    stamp_add(lc->G, e->slot[0], 1.0);
    stamp_add(lc->G, e->slot[1], -1.0);
    stamp_add(lc->G, e->slot[2], 1.0);
    stamp_add(lc->G, e->slot[3], -1.0);
}

static void ind_load_ac(const element *e, dev_ac_ctx *ac)
{
    zstamp_add(ac->G, e->slot[0], 1.0);
    zstamp_add(ac->G, e->slot[1], -1.0);
    zstamp_add(ac->G, e->slot[2], 1.0);
    zstamp_add(ac->G, e->slot[3], -1.0);
    zstamp_add(ac->G, e->slot[4], -SS_J * ac->omega * e->value);
}

static void ind_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)lc;
    rhs_add(resid, e->node[0], x[e->branch]);
    rhs_add(resid, e->node[1], -x[e->branch]);
    resid[e->branch] += xv(x, e->node[0]) - xv(x, e->node[1]);
}

/* Flux phi = L i; the branch row becomes Va - Vb - (a0 phi + hist) = 0. */
static void ind_load_tran(element *e, dev_tran_ctx *tc)
{
    double i = tc->x[e->branch];
    tc->q[0] = e->value * i;
    if (!tc->G)
        return;
    stamp_add(tc->G, e->slot[4], -tc->a0 * e->value);
    tc->rhs[e->branch] += tc->hist[0];
}

const dev_ops inductor_ops = {
    .letter = 'l',
    .kind_name = "inductor",
    .flags = DEV_INDUCTOR | DEV_FIXES_VOLTAGE,
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .value_range = VALUE_NONNEG,
    .parse = ind_parse,
    .setup = ind_setup,
    .claim = ind_claim,
    .n_slot = 5,
    .load_dc = ind_load_dc,
    .kcl = ind_kcl,
    .load_ac = ind_load_ac,
    .load_tran = ind_load_tran,
    .n_charge = 1,
    .value_name = "inductance",
};
