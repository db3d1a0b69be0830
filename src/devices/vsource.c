/* Independent voltage source: a branch current unknown; i(V) is the current entering the +
 * node through the source. Its present value (source_value: DC, or a sweep's or a transient's)
 * scaled for source stepping; AC phasor in sweeps. */
#include "devices/passive.h"

static int vsrc_parse(pctx *p, element *e) { return parse_source_spec(p, e); }

static void vsrc_setup(element *e, dev_setup_ctx *sc) { e->branch = sc->new_branch(sc->owner); }

/* MNA voltage-source stamp (Ho, Ruehli & Brennan 1975): (a,k) +1, (b,k) -1, (k,a) +1,
 * (k,b) -1, rhs[k] = V. */
static void vsrc_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    int ua = node_unknown(e->node[0]), ub = node_unknown(e->node[1]), k = e->branch;
    e->slot[0] = sc->claim(sc->owner, ua, k);
    e->slot[1] = sc->claim(sc->owner, ub, k);
    e->slot[2] = sc->claim(sc->owner, k, ua);
    e->slot[3] = sc->claim(sc->owner, k, ub);
}

static void vsrc_load_dc(element *e, dev_load_ctx *lc)
{
    stamp_add(lc->G, e->slot[0], 1.0);
    stamp_add(lc->G, e->slot[1], -1.0);
    stamp_add(lc->G, e->slot[2], 1.0);
    stamp_add(lc->G, e->slot[3], -1.0);
    lc->rhs[e->branch] += source_value(e, lc) * lc->src_scale;
}

static void vsrc_load_ac(const element *e, dev_ac_ctx *ac)
{
    zstamp_add(ac->G, e->slot[0], 1.0);
    zstamp_add(ac->G, e->slot[1], -1.0);
    zstamp_add(ac->G, e->slot[2], 1.0);
    zstamp_add(ac->G, e->slot[3], -1.0);
    ac->rhs[e->branch] += source_ac_phasor(e, ac);
}

static void vsrc_report(const element *e, const double *x, double vt_v, double gmin_s,
                        dev_report_fn fn, void *sink)
{
    (void)vt_v;
    (void)gmin_s;
    fn(sink, "i", e->name, x ? x[e->branch] : SS_NAN);
}

static void vsrc_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    rhs_add(resid, e->node[0], x[e->branch]);
    rhs_add(resid, e->node[1], -x[e->branch]);
    resid[e->branch] += xv(x, e->node[0]) - xv(x, e->node[1]) - source_value(e, lc) * lc->src_scale;
}

const dev_ops vsource_ops = {
    .letter = 'v',
    .kind_name = "voltage source",
    .flags = DEV_SOURCE | DEV_FIXES_VOLTAGE | DEV_CURRENT_PROBE,
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .parse = vsrc_parse,
    .setup = vsrc_setup,
    .claim = vsrc_claim,
    .n_slot = 4,
    .load_dc = vsrc_load_dc,
    .kcl = vsrc_kcl,
    .load_ac = vsrc_load_ac,
    .report = vsrc_report,
    .value_name = "DC value",
};
