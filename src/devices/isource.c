/* Independent current source: the current flows from n+ through the source to n-, so it
 * leaves n+ and enters n-. Only the right-hand side is touched. */
#include "devices/passive.h"

static int isrc_parse(pctx *p, element *e) { return parse_source_spec(p, e); }

static void isrc_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)e;
    (void)elems;
    (void)sc;
}

static void isrc_load_dc(element *e, dev_load_ctx *lc)
{
    double i_a = source_value(e, lc) * lc->src_scale;
    rhs_add(lc->rhs, e->node[0], -i_a);
    rhs_add(lc->rhs, e->node[1], i_a);
}

static void isrc_load_ac(const element *e, dev_ac_ctx *ac)
{
    double complex i_a = source_ac_phasor(e, ac);
    zrhs_add(ac->rhs, e->node[0], -i_a);
    zrhs_add(ac->rhs, e->node[1], i_a);
}

static void isrc_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)x;
    double i_a = source_value(e, lc) * lc->src_scale;
    rhs_add(resid, e->node[0], i_a);
    rhs_add(resid, e->node[1], -i_a);
}

const dev_ops isource_ops = {
    .letter = 'i',
    .kind_name = "current source",
    .flags = DEV_SOURCE | DEV_DRIVES_CURRENT,
    .parse = isrc_parse,
    .claim = isrc_claim,
    .n_slot = 0,
    .load_dc = isrc_load_dc,
    .kcl = isrc_kcl,
    .load_ac = isrc_load_ac,
    .value_name = "DC value",
};
