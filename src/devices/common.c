/* Helpers shared by the device files: claiming and stamping two-terminal admittances and
 * controlled-source blocks, and parsing the common `Xname n+ n- value` line shape. */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "devices/passive.h"
#include "devices/wave.h"

int temp_param_check(const char *name, double v, int positive, char *why, size_t why_len)
{
    if (isfinite(v) && (positive ? v > 0.0 : v >= 0.0))
        return 0;
    snprintf(why, why_len, "%s becomes %g (it must stay finite and %s)", name, v,
             positive ? "> 0" : ">= 0");
    return -1;
}

const unsigned char DC_PAIR_AB[1][2] = {{0, 1}};

double device_power_w(const element *e, const double *x, const dev_load_ctx *lc, double *scratch)
{
    if (!x || !elem_has_power(e))
        return SS_NAN;
    e->ops->kcl(e, x, lc, scratch);
    /* P = sum of V * I over the terminals (Tellegen's theorem applied to the element alone;
     * currents into internal nodes cancel at a solution). Terminals on one node count once:
     * scratch holds their summed current. */
    double p_w = 0.0;
    for (int t = 0; t < e->n_node; t++) {
        int n = e->node[t], seen = 0;
        for (int u = 0; u < t; u++)
            seen |= e->node[u] == n;
        if (!seen && n > 0)
            p_w += x[n - 1] * scratch[n - 1];
    }
    /* back to all zero: every entry a kcl writes (terminals, internal nodes, its branch) */
    for (int t = 0; t < e->n_node; t++)
        if (e->node[t] > 0)
            scratch[e->node[t] - 1] = 0.0;
    for (int k = 0; k < 3; k++)
        if (e->inode[k] > 0)
            scratch[e->inode[k] - 1] = 0.0;
    if (e->branch >= 0)
        scratch[e->branch] = 0.0;
    return p_w;
}

void claim_pair(element *e, dev_setup_ctx *sc, int first, int a, int b)
{
    int ua = node_unknown(a), ub = node_unknown(b);
    e->slot[first + 0] = sc->claim(sc->owner, ua, ua);
    e->slot[first + 1] = sc->claim(sc->owner, ub, ub);
    e->slot[first + 2] = sc->claim(sc->owner, ua, ub);
    e->slot[first + 3] = sc->claim(sc->owner, ub, ua);
}

void claim_quad(element *e, dev_setup_ctx *sc, int first, int a, int b, int c, int d)
{
    int ua = node_unknown(a), ub = node_unknown(b), uc = node_unknown(c), ud = node_unknown(d);
    e->slot[first + 0] = sc->claim(sc->owner, ua, uc);
    e->slot[first + 1] = sc->claim(sc->owner, ua, ud);
    e->slot[first + 2] = sc->claim(sc->owner, ub, uc);
    e->slot[first + 3] = sc->claim(sc->owner, ub, ud);
}

void stamp_pair(double *G, const int *slot4, double g)
{
    stamp_add(G, slot4[0], g);
    stamp_add(G, slot4[1], g);
    stamp_add(G, slot4[2], -g);
    stamp_add(G, slot4[3], -g);
}

void zstamp_pair(double complex *G, const int *slot4, double complex y)
{
    zstamp_add(G, slot4[0], y);
    zstamp_add(G, slot4[1], y);
    zstamp_add(G, slot4[2], -y);
    zstamp_add(G, slot4[3], -y);
}

int parse_nodes(pctx *p, element *e, int n_nodes)
{
    if (pctx_ntok(p) < 1 + n_nodes)
        return pctx_error(p, "needs %d nodes, got %d", n_nodes, pctx_ntok(p) - 1);
    for (int i = 0; i < n_nodes; i++) {
        e->node[i] = pctx_node(p, pctx_tok(p, 1 + i));
        if (e->node[i] < 0)
            return -1;
    }
    e->n_node = n_nodes;
    return 0;
}

int parse_two_node_value(pctx *p, element *e, const char *what, int allow_zero)
{
    if (parse_nodes(p, e, 2) != 0)
        return -1;
    if (pctx_ntok(p) < 4)
        return pctx_error(p, "missing %s value", what);
    if (pctx_ntok(p) > 4)
        return pctx_error(p, "unexpected '%s' after the %s value", pctx_tok(p, 4), what);
    if (pctx_value(p, pctx_tok(p, 3), what, &e->value) != 0)
        return -1;
    e->value_si_exp = (signed char)value_si_exp(pctx_tok(p, 3));
    if (e->value < 0.0 || (!allow_zero && e->value == 0.0))
        return pctx_error(p, "%s must be %s, got %g", what, allow_zero ? "zero or positive" : "positive",
                          e->value);
    return 0;
}

int parse_optional_area(pctx *p, element *e, int first)
{
    e->area = 1.0;
    int n = pctx_ntok(p);
    if (n <= first)
        return 0;
    const char *t = pctx_tok(p, first);
    if (strcmp(t, "area") == 0 && n == first + 3 && strcmp(pctx_tok(p, first + 1), "=") == 0)
        t = pctx_tok(p, first + 2);
    else if (n > first + 1)
        return pctx_error(p, "unexpected '%s' after the area", pctx_tok(p, first + 1));
    if (pctx_value(p, t, "area", &e->area) != 0)
        return -1;
    if (!(e->area > 0.0))
        return pctx_error(p, "area must be positive, got %g", e->area);
    return 0;
}

int parse_source_spec(pctx *p, element *e)
{
    /* Xname n+ n- [DC] value [AC mag [phase_deg]] [SIN(...) | PULSE(...) | PWL(...)] */
    if (parse_nodes(p, e, 2) != 0)
        return -1;
    int n = pctx_ntok(p), i = 3, have_dc = 0;
    e->ac_mag = 0.0;
    e->ac_phase_deg = 0.0;
    while (i < n) {
        const char *t = pctx_tok(p, i);
        if (strcmp(t, "dc") == 0) {
            if (i + 1 >= n)
                return pctx_error(p, "missing value after 'dc'");
            if (pctx_value(p, pctx_tok(p, i + 1), "DC value", &e->value) != 0)
                return -1;
            have_dc = 1;
            i += 2;
        } else if (strcmp(t, "ac") == 0) {
            e->ac_mag = 1.0; /* `AC` alone means magnitude 1 (common practice) */
            i++;
            if (i < n && pctx_tok(p, i)[0] != '\0' && strcmp(pctx_tok(p, i), "dc") != 0 &&
                !wave_is_form(pctx_tok(p, i))) {
                if (pctx_value(p, pctx_tok(p, i), "AC magnitude", &e->ac_mag) != 0)
                    return -1;
                i++;
                if (i < n && strcmp(pctx_tok(p, i), "dc") != 0 && !wave_is_form(pctx_tok(p, i))) {
                    if (pctx_value(p, pctx_tok(p, i), "AC phase", &e->ac_phase_deg) != 0)
                        return -1;
                    i++;
                }
            }
        } else if (wave_is_form(t)) {
            if (e->wave)
                return pctx_error(p, "a second time-varying form '%s' (one per source)", t);
            src_wave *w = NULL;
            int used = wave_parse(p, i, &w);
            if (used < 0)
                return -1;
            e->wave = w;
            i += used;
        } else if (strchr(t, '(') && isalpha((unsigned char)t[0])) {
            return pctx_error(p, "unknown source form '%s' (known: sin, pulse, pwl)", t);
        } else if (!have_dc && i == 3) {
            if (pctx_value(p, t, "DC value", &e->value) != 0)
                return -1;
            have_dc = 1;
            i++;
        } else {
            return pctx_error(p, "unexpected '%s' in the source specification", t);
        }
    }
    /* a source with a time-varying form and no DC value sits at its t = 0 value at DC */
    if (e->wave && !have_dc)
        e->value = wave_value(e->wave, 0.0, 0.0);
    return 0;
}

double complex source_ac_phasor(const element *e, const dev_ac_ctx *ac)
{
    if (ac->all_src_off)
        return 0.0;
    if (ac->only_src)
        return ac->only_src == e ? 1.0 : 0.0;
    double ph = e->ac_phase_deg * SS_PI / 180.0;
    return e->ac_mag * (cos(ph) + SS_J * sin(ph));
}
