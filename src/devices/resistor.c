/* Resistor: a conductance 1/R between two nodes, at DC and in AC, and its thermal noise
 * source (the noise analysis itself is src/analysis/noise.c's). */
#include "devices/passive.h"

static int res_parse(pctx *p, element *e) { return parse_two_node_value(p, e, "resistance", 0); }

static void res_claim(element *e, const element *elems, dev_setup_ctx *sc)
{
    (void)elems;
    claim_pair(e, sc, 0, e->node[0], e->node[1]);
}

static void res_load_dc(element *e, dev_load_ctx *lc) { stamp_pair(lc->G, e->slot, 1.0 / e->value); }

static void res_load_ac(const element *e, dev_ac_ctx *ac)
{
    zstamp_pair(ac->G, e->slot, 1.0 / e->value);
}

static void res_kcl(const element *e, const double *x, const dev_load_ctx *lc, double *resid)
{
    (void)lc;
    double i_a = (xv(x, e->node[0]) - xv(x, e->node[1])) / e->value;
    rhs_add(resid, e->node[0], i_a);
    rhs_add(resid, e->node[1], -i_a);
}

/* Thermal (Johnson-Nyquist) noise 4kT/R as a current across the resistor (docs/noise.md). */
static int res_noise(const element *e, const dev_noise_ctx *nc, dev_noise_src *out)
{
    out[0] = (dev_noise_src){e->node[0], e->node[1],
                             noise_thermal_a2_per_hz(nc->temp_k, e->value), 0.0, "thermal"};
    return 1;
}

const dev_ops resistor_ops = {
    .letter = 'r',
    .kind_name = "resistor",
    .flags = DEV_RESISTOR,
    .dc_pairs = DC_PAIR_AB,
    .n_dc_pairs = 1,
    .value_range = VALUE_POSITIVE,
    .parse = res_parse,
    .claim = res_claim,
    .n_slot = 4,
    .load_dc = res_load_dc,
    .kcl = res_kcl,
    .load_ac = res_load_ac,
    .noise = res_noise,
    .value_name = "resistance",
};
