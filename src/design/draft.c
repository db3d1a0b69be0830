/* A first design of a transistor stage from its kind and requirements, by the rules of thumb
 * of docs/design.md (each one common practice, stated where it is used and in the netlist's
 * reasoning). The kinds: emitter follower, common emitter (bypassed; split emitter), common
 * emitter + follower, JFET common source. draft_text.c writes the text. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "design/draft.h"

/* ---- the rules' numbers (common practice; docs/design.md) ------------------------------- */
#define VBE_V 0.65          /* base-emitter voltage of a small silicon BJT in use */
#define BETA 100.0          /* design current gain (a small-signal NPN's typical floor) */
#define BETA_MIN 50.0       /* lowest current gain of the spread: sizes the bias divider */
#define VT_V 0.02585        /* kT/q at 27 C: re = VT / Ic */
#define VE_FRAC 0.10        /* emitter at 10 % of the supply: bias stability */
#define DIV_FACTOR 10.0     /* divider current 10 x the base current at BETA_MIN */
#define VSAT_MARGIN_V 0.5   /* kept between collector and emitter at the swing's extreme */
#define SWING_MARGIN 1.25   /* current with 25 % to spare for the swing into the load */
#define DEFAULT_IC_A 1e-3   /* a small-signal stage's current when nothing asks for more */
#define BLEED_OHM 1e6       /* with no load: holds the output at 0 V DC */
#define COUPLE_DIV 10.0     /* coupling capacitor: its pole a decade below f_low */
#define BYPASS_DIV 3.0      /* bypass capacitor: its pole at a third of f_low */
#define IMP_RATIO 10.0      /* source : input and output : load impedances 1 : 10 */
#define BIG_CAP_F 1e-3      /* above this a capacitor is a large electrolytic: a warning */
#define PDISS_WARN_W 0.25   /* the generic small card's part dissipates a few 100 mW */
/* from the inline cards (the generic invented cards of models/) */
#define NPN_CMU_F 2e-12     /* collector-base capacitance at a few volts (CJC=4p) */
#define NPN_CPI_F 20e-12    /* forward-biased base-emitter depletion part (CJE=10p) */
#define NPN_TF_S 0.4e-9     /* forward transit time: diffusion capacitance gm * TF */
#define NJF_VTO_V (-1.5)
#define NJF_BETA 2e-3       /* A/V^2: IDSS = BETA * VTO^2 = 4.5 mA */
#define NJF_RS_OHM 5.0      /* the card's source ohmic resistance */
#define NJF_CGS_F 3e-12     /* reverse-biased gate-source capacitance (CGS=4p) */
#define NJF_CGD_F 1e-12     /* reverse-biased gate-drain capacitance (CGD=1.5p) */

static const char NPN_CARD[] =
    "* The generic invented NPN card of models/npn_small.lib (no vendor's part): replace it\n"
    "* with a card characterised for the part you fit.\n"
    ".model ss_npn NPN (IS=8e-15 BF=200 NF=1 VAF=80 IKF=0.1 ISE=4e-15 NE=1.5\n"
    "+ BR=3 NR=1 VAR=25 IKR=0.03 RB=30 RE=0.5 RC=1\n"
    "+ CJE=10p VJE=0.72 MJE=0.35 CJC=4p VJC=0.7 MJC=0.33 FC=0.5\n"
    "+ TF=0.4n TR=40n XTB=1.5 XTI=3 EG=1.11)\n";
static const char NJF_CARD[] =
    "* The generic invented N-channel JFET card of models/njf_small.lib (no vendor's part):\n"
    "* replace it with a card characterised for the part you fit.\n"
    ".model ss_njf NJF (VTO=-1.5 BETA=2m LAMBDA=2m RD=5 RS=5 CGS=4p CGD=1.5p\n"
    "+ PB=0.8 IS=5e-15 N=1 FC=0.5 KF=2e-18 AF=1)\n";
static const char NPN_RATING[] =
    "*   .expect vce(q1) <= 0.8 * VCEO_RATING_V\n"
    "*   .expect ic(q1) <= DISSIPATION_RATING_W / VCE_AT_REST_V\n";
static const char NPN2_RATING[] =
    "*   .expect vce(q2) <= 0.8 * VCEO_RATING_V\n"
    "*   .expect ic(q2) <= DISSIPATION_RATING_W / VCE_AT_REST_V\n";
static const char NJF_RATING[] =
    "*   .expect vds(j1) <= 0.8 * VDS_RATING_V\n"
    "*   .expect id(j1) <= DISSIPATION_RATING_W / VDS_AT_REST_V\n";

static const char *const KIND_NAMES[SS_DRAFT_N_KINDS] = {"follower", "ce", "ce-split",
                                                         "ce-follower", "jfet-cs"};

/* engineering text of a value, for the reasoning (a fresh buffer per use in one statement) */
#define ENG(v, unit) fmt_eng((char[40]){0}, 40, (v), (unit))
#define VAL(v) draft_fmt_value((char[32]){0}, 32, (v))

static double par(double a, double b)
{
    if (isinf(a))
        return b;
    if (isinf(b))
        return a;
    return a * b / (a + b);
}

/* the capacitor whose pole with r lies at f */
static double pole_cap(double r, double f)
{
    return 1.0 / (2.0 * SS_PI * f * r);
}

/* v to 3 significant digits */
static double round_sig3(double v)
{
    double mag = pow(10.0, floor(log10(v)) - 2.0);
    return round(v / mag) * mag;
}

static double db(double g)
{
    return 20.0 * log10(g);
}

/* ---- pieces several kinds share --------------------------------------------------------- */

static double load_eff(const draft_ctx *c)
{
    return isnan(c->rq.load_ohm) ? BLEED_OHM : c->rq.load_ohm;
}

/* A value as given, in the netlist's SI form when that form is exact, else in full
 * (a fresh buffer per use in one statement). */
#define exact_value(v) exact_text((char[40]){0}, 40, (v))
static const char *exact_text(char *buf, size_t len, double v)
{
    draft_fmt_value(buf, len, v);
    double back = NAN;
    ss_error e = {0};
    if (ss_value_parse(buf, &back, &e) != SS_OK || back != v)
        snprintf(buf, len, "%.10g", v);
    return buf;
}

/* The supply, the source (its EMF Vsrc, AC 1, and its resistance) and the input node "in". */
static void supply_and_source(draft_ctx *c)
{
    draft_line(c, "VCC    vcc   0     DC %-5s ; supply", exact_value(c->rq.supply_v));
    if (c->rq.source_ohm > 0.0) {
        draft_line(c, "Vsrc   src   0     DC 0 AC 1 ; the source's EMF (the stage source)");
        draft_line(c, "RSRC   src   in    %-8s ; the source's own resistance (as given)",
                   exact_value(c->rq.source_ohm));
    } else {
        draft_line(c, "Vsrc   in    0     DC 0 AC 1 ; the source's EMF (the stage source)");
    }
}

/* The output: the load, or a bleed resistor holding the output at 0 V DC. */
static void output_load(draft_ctx *c)
{
    if (isnan(c->rq.load_ohm))
        draft_line(c, "RBL    out   0     1meg     ; no load given: holds the output at 0 V DC");
    else
        draft_line(c, "RL     out   0     %-8s ; the load (as given)",
                   exact_value(c->rq.load_ohm));
}

/* Quiescent current for a peak swing vpk into rl, when the current's resistor drops vr at
 * rest: Ic * (vr/Ic || rl) >= vpk, so Ic >= vpk * vr / (rl * (vr - vpk)), with 25 % to spare
 * (common practice). vpk < vr. */
static double swing_current(double vpk, double vr, double rl)
{
    return SWING_MARGIN * vpk * vr / (rl * (vr - vpk));
}

typedef struct bias {
    double r1, r2, rth, vth;
} bias;

/* The divider feeding a base at vb for a collector current ic: the bottom resistor carries
 * 10 x the base current at the lowest beta, the top one that plus the base current at the
 * design beta (common practice). Snapped to the series. */
static bias divider(draft_ctx *c, double vb, double ic)
{
    double vcc = c->rq.supply_v;
    double idiv = DIV_FACTOR * ic / BETA_MIN;
    double r2 = vb / idiv, r1 = (vcc - vb) / (idiv + ic / BETA);
    bias b;
    b.r1 = draft_snap_r(c, r1);
    b.r2 = draft_snap_r(c, r2);
    b.rth = par(b.r1, b.r2);
    b.vth = vcc * b.r2 / (b.r1 + b.r2);
    draft_step(c, "Bias divider: base at Vb = Ve + Vbe = %s. The bottom resistor carries",
               ENG(vb, "V"));
    draft_why(c, "10 x the base current at the lowest beta (%g): Idiv = 10 * Ic / %g = %s;",
              BETA_MIN, BETA_MIN, ENG(idiv, "A"));
    draft_why(c, "R2 = Vb / Idiv = %s -> %s; R1 = (Vcc - Vb) / (Idiv + Ic/%g) = %s -> %s.",
              ENG(r2, "ohm"), VAL(b.r2), BETA, ENG(r1, "ohm"), VAL(b.r1));
    draft_why(c, "Thevenin: Vth = %s, Rth = R1 || R2 = %s.", ENG(b.vth, "V"),
              ENG(b.rth, "ohm"));
    return b;
}

/* The emitter current the divider gives through an emitter resistance re_tot. */
static double bias_current(const bias *b, double re_tot)
{
    return (b->vth - VBE_V) / (re_tot + b->rth / (BETA + 1.0));
}

static void big_cap_check(draft_ctx *c, const char *name, double v)
{
    if (v > BIG_CAP_F)
        draft_warn(c, "%s comes out at %s, a large electrolytic: a higher f-low, a higher "
                      "impedance at that node or a DC-coupled design keeps it small",
                   name, ENG(v, "F"));
}

static void swing_check(draft_ctx *c, double avail_v, const char *why)
{
    if (!isnan(c->rq.swing_v) && c->rq.swing_v > avail_v)
        draft_warn(c, "swing: the %s peak asked is more than this design swings (about %s: %s)",
                   ENG(c->rq.swing_v, "V"), ENG(avail_v, "V"), why);
}

static void power_check(draft_ctx *c, const char *dev, double v, double i)
{
    double p = v * i;
    draft_why(c, "%s dissipates about %s at rest (its rating is yours to check).", dev,
              ENG(p, "W"));
    if (p > PDISS_WARN_W)
        draft_warn(c, "%s dissipates about %s at rest: more than a small-signal part "
                      "carries; choose a part rated for it and write its limit",
                   dev, ENG(p, "W"));
}

static void source_ratio_check(draft_ctx *c, double zin)
{
    double rs = c->rq.source_ohm;
    if (!isnan(c->rq.zin_ohm) && zin < c->rq.zin_ohm)
        draft_warn(c, "zin: the estimate %s is below the %s asked", ENG(zin, "ohm"),
                   ENG(c->rq.zin_ohm, "ohm"));
    else if (rs > 0.0 && zin < IMP_RATIO * rs)
        draft_warn(c, "source: Zin %s is less than 10 x the source's %s (the 10:1 rule): the "
                      "source's resistance costs %.1f dB and its spread moves the gain",
                   ENG(zin, "ohm"), ENG(rs, "ohm"), -db(zin / (zin + rs)));
}

/* The 10:1 rule at the output: a warning for a stage whose task is to drive the load (the
 * followers); a note for an amplifier, whose gain above is already worked out with the load. */
static void load_ratio_check(draft_ctx *c, double zo, int drives)
{
    if (isnan(c->rq.load_ohm) || zo <= c->rq.load_ohm / IMP_RATIO)
        return;
    if (drives)
        draft_warn(c, "load: the output impedance %s is more than a tenth of the %s load "
                      "(the 10:1 rule): the load costs gain and its spread moves it",
                   ENG(zo, "ohm"), ENG(c->rq.load_ohm, "ohm"));
    else
        draft_why(c, "Note: Zout %s is more than a tenth of the %s load (the 10:1 rule); the "
                     "gain above counts the load, but its spread moves the gain: a follower "
                     "after the stage (ce-follower) isolates it.",
                  ENG(zo, "ohm"), ENG(c->rq.load_ohm, "ohm"));
}

static void fhigh_check(draft_ctx *c, double f_est)
{
    draft_why(c, "Upper corner estimate (input pole with the Miller capacitance of the card): "
                 "about %s.", ENG(f_est, "Hz"));
    if (f_est < c->rq.f_high_hz)
        draft_warn(c, "f-high: the upper corner estimate %s is below the %s asked: a lower "
                      "source impedance or less gain per stage widens it",
                   ENG(f_est, "Hz"), ENG(c->rq.f_high_hz, "Hz"));
}

/* The band's geometric centre as a netlist number: where the mid-band impedances are judged
 * (a low-frequency bump of a few hundredths of a dB must not move them to a corner). */
static const char *band_centre(char *buf, size_t len, const ss_draft_req *r)
{
    return draft_fmt_value(buf, len, round_sig3(sqrt(r->f_low_hz * r->f_high_hz)));
}

/* The output impedance at mid-band, RL included, a tenth of the load (the 10:1 rule). */
static void zout_limit(draft_ctx *c)
{
    char f[32];
    draft_expect(c, "zout_ohm @ %s <= %.4g   ; mid-band: a tenth of the load (10:1), RL included",
                 band_centre(f, sizeof f, &c->rq), c->rq.load_ohm / IMP_RATIO);
}

/* The limits every kind writes: the gain window, zin, the band edges. g_lo_db: the gain's
 * lower bound (dB); g_hi_db NaN for none. */
static void band_limits(draft_ctx *c, double g_lo_db, double g_hi_db)
{
    char f[32];
    if (isnan(g_hi_db))
        draft_expect(c, "gain_mid_db >= %.2f", g_lo_db);
    else
        draft_expect(c, "gain_mid_db %.2f .. %.2f", g_lo_db, g_hi_db);
    if (!isnan(c->rq.zin_ohm))
        draft_expect(c, "zin_ohm @ %s >= %.6g   ; mid-band: the zin asked plus the source's %.6g",
                     band_centre(f, sizeof f, &c->rq), c->rq.zin_ohm + c->rq.source_ohm,
                     c->rq.source_ohm);
    draft_expect(c, "f_low_hz <= %s", draft_fmt_value(f, sizeof f, c->rq.f_low_hz));
    draft_expect(c, "gain_db @ %s >= %.2f   ; the band's top edge within 3 dB",
                 draft_fmt_value(f, sizeof f, c->rq.f_high_hz), g_lo_db - 3.0);
}

/* ---- the kinds ---------------------------------------------------------------------------- */

static ss_status draft_follower(draft_ctx *c, ss_error *err)
{
    const ss_draft_req *r = &c->rq;
    double vcc = r->supply_v, rs = r->source_ohm, rl = load_eff(c);
    double ve = vcc / 2.0, ic;
    draft_step(c, "Emitter at half the supply for symmetric swing: Ve = %s.", ENG(ve, "V"));
    if (!isnan(r->current_a)) {
        ic = r->current_a;
        draft_step(c, "Collector current as asked: Ic = %s.", ENG(ic, "A"));
    } else {
        ic = DEFAULT_IC_A;
        if (!isnan(r->swing_v)) {
            double vpk = fmin(r->swing_v, 0.9 * ve);
            double need = swing_current(vpk, ve, rl);
            draft_step(c, "Current for the swing: Ie * (RE || RL) >= peak with RE = Ve/Ie, "
                          "25 %% to spare: Ic >= %s.", ENG(need, "A"));
            ic = fmax(ic, need);
        } else {
            draft_step(c, "No current or swing asked: a small-signal %s.", ENG(ic, "A"));
        }
    }
    double re_r = draft_snap_r(c, ve / ic);
    draft_step(c, "Emitter resistor RE = Ve / Ic = %s -> %s.", ENG(ve / ic, "ohm"), VAL(re_r));
    bias b = divider(c, ve + VBE_V, ic);
    double ie = bias_current(&b, re_r);
    double re_d = VT_V / ie, rle = par(re_r, rl);
    draft_step(c, "Operating point: Ie = (Vth - Vbe) / (RE + Rth/(beta+1)) = %s, Ve = %s, "
                  "re = 25.85 mV / Ie = %s.", ENG(ie, "A"), ENG(ie * re_r, "V"), ENG(re_d, "ohm"));
    power_check(c, "Q1", vcc - ie * re_r, ie);
    double zin_plain = par(b.rth, (BETA + 1.0) * (re_d + rle));
    double target = isnan(r->zin_ohm) ? IMP_RATIO * rs : r->zin_ohm;
    int boot = target > zin_plain;
    double zin, av, rb = 0.0, cb = 0.0;
    draft_step(c, "Input: Zin = Rth || (beta+1)(re + RE||RL) = %s; wanted %s (%s).",
               ENG(zin_plain, "ohm"), ENG(target, "ohm"),
               isnan(r->zin_ohm) ? "10 x the source, the 10:1 rule" : "as asked");
    if (boot) {
        rb = draft_snap_r(c, b.rth);
        double rle2 = par(rle, b.rth); /* the divider hangs on the emitter through CB */
        av = rle2 / (re_d + rle2);
        zin = par(rb / (1.0 - av), (BETA + 1.0) * (re_d + rle2));
        cb = draft_snap_c_up(c, pole_cap(b.rth, r->f_low_hz / COUPLE_DIV));
        draft_why(c, "Not enough: bootstrap. RB = Rth -> %s from the divider's tap to the base,",
                  VAL(rb));
        draft_why(c, "CB from the emitter to the tap: RB then looks like RB / (1 - Av) and");
        draft_why(c, "Zin = RB/(1-Av) || (beta+1)(re + RE||RL||Rth) = %s.", ENG(zin, "ohm"));
        draft_why(c, "CB: pole with Rth a decade below f-low -> %s.", VAL(cb));
    } else {
        av = rle / (re_d + rle);
        zin = zin_plain;
    }
    if (!isnan(r->zin_ohm) && zin < r->zin_ohm)
        draft_warn(c, "zin: the estimate %s is below the %s asked: (beta+1)(RE || RL) = %s "
                      "limits a follower at beta %g; a lighter load or a compound follower helps",
                   ENG(zin, "ohm"), ENG(r->zin_ohm, "ohm"), ENG((BETA + 1.0) * rle, "ohm"), BETA);
    else
        source_ratio_check(c, zin);
    double gain = zin / (zin + rs) * av;
    double zo = par(re_r, re_d + (boot ? rs : par(rs, b.rth)) / (BETA + 1.0));
    draft_step(c, "Gain = Zin/(Zin + Rs) * (RE||RL)/(re + RE||RL) = %.4f (%.2f dB); "
                  "Zout = re + Rs'/(beta+1) = %s.", gain, db(gain), ENG(zo, "ohm"));
    load_ratio_check(c, zo, 1);
    if (!isnan(r->gain) && gain < r->gain)
        draft_warn(c, "gain: the estimate %.3f is below the %.3f asked", gain, r->gain);
    swing_check(c, fmin(ie * rle, vcc - ie * re_r - VSAT_MARGIN_V),
                "Ie * (RE || RL) down, the collector-emitter headroom up");
    /* a bootstrap fades at low frequency: C1 is sized for the input without it, else C1 and
     * the bootstrap peak the response near f-low */
    double c1 = draft_snap_c_up(c, pole_cap(rs + zin_plain, r->f_low_hz / COUPLE_DIV));
    double c2 = draft_snap_c_up(c, pole_cap(zo + rl, r->f_low_hz / COUPLE_DIV));
    draft_step(c, "Coupling capacitors: each one's pole a decade below f-low (reactance at "
                  "f-low a tenth of the resistance it works into):");
    draft_why(c, "C1 with Rs + Zin%s -> %s; C2 with Zout + RL -> %s.",
              boot ? " without the bootstrap (which fades at low frequency: sized with the "
                     "bootstrapped Zin, C1 and CB peak the response)"
                   : "",
              VAL(c1), VAL(c2));
    big_cap_check(c, "C2", c2);
    fhigh_check(c, 1.0 / (2.0 * SS_PI * fmax(par(rs, zin), 30.0) * NPN_CMU_F));

    supply_and_source(c);
    draft_elem(c, "C1", "in", "b", c1, "input coupling");
    draft_elem(c, "R1", "vcc", boot ? "bs" : "b", b.r1, "bias divider, top");
    draft_elem(c, "R2", boot ? "bs" : "b", "0", b.r2, "bias divider, bottom");
    if (boot) {
        draft_elem(c, "RB", "bs", "b", rb, "base feed, bootstrapped");
        draft_elem(c, "CB", "e", "bs", cb, "bootstrap capacitor");
    }
    draft_line(c, "Q1     vcc   b     e     ss_npn   ; the follower");
    draft_elem(c, "RE", "e", "0", re_r, "emitter resistor");
    draft_elem(c, "C2", "e", "out", c2, "output coupling");
    output_load(c);

    draft_expect(c, "ic(q1) = %.4g +- 25%%", ie);
    draft_expect(c, "vce(q1) >= %.3g", isnan(r->swing_v) ? 1.0 : r->swing_v + VSAT_MARGIN_V);
    double lo = isnan(r->gain) ? db(gain) - 1.0 : db(r->gain);
    band_limits(c, lo, SS_NAN);
    if (!isnan(r->load_ohm))
        zout_limit(c);
    char title[160];
    snprintf(title, sizeof title, "Draft: emitter follower%s, %.4g V, Ic %s",
             boot ? " (bootstrapped)" : "", vcc, ENG(ie, "A"));
    char lf[48] = "";
    if (!isnan(r->load_ohm))
        snprintf(lf, sizeof lf, " load=%s", exact_value(r->load_ohm));
    return draft_assemble(c, title, NPN_CARD, r->f_low_hz / 100.0, r->f_high_hz * 10.0, lf,
                          NPN_RATING, err);
}

/* The unbypassed emitter resistor for a stage gain: gain = rload / (re + RE1) at the stage,
 * the source's divider Zin/(Zin + Rs) in front (Zin depends on RE1: a few fixed-point
 * passes). Returns RE1 before snapping (<= 0 when the gain is more than gm * rload). */
static double split_re1(double g, double rload, double re_d, double rth, double rs)
{
    double re1 = 0.0;
    for (int k = 0; k < 30; k++) {
        double zin = par(rth, (BETA + 1.0) * (re_d + fmax(re1, 0.0)));
        double g_stage = g * (zin + rs) / zin;
        re1 = rload / g_stage - re_d;
    }
    return re1;
}

static ss_status draft_ce(draft_ctx *c, int split, ss_error *err)
{
    const ss_draft_req *r = &c->rq;
    double vcc = r->supply_v, rs = r->source_ohm, rl = load_eff(c);
    double ve = VE_FRAC * vcc, vrc = (vcc - ve) / 2.0, ic;
    draft_step(c, "Emitter at 10 %% of the supply for bias stability: Ve = %s.", ENG(ve, "V"));
    draft_step(c, "Collector at half the remaining headroom for symmetric swing: "
                  "VRC = (Vcc - Ve)/2 = %s.", ENG(vrc, "V"));
    if (!isnan(r->current_a)) {
        ic = r->current_a;
        draft_step(c, "Collector current as asked: Ic = %s.", ENG(ic, "A"));
    } else {
        ic = DEFAULT_IC_A;
        if (!isnan(r->swing_v) && r->swing_v < 0.9 * vrc) {
            double need = swing_current(r->swing_v, vrc, rl);
            draft_step(c, "Current for the swing: Ic * (RC || RL) >= peak with RC = VRC/Ic, "
                          "25 %% to spare: Ic >= %s.", ENG(need, "A"));
            ic = fmax(ic, need);
        } else {
            draft_step(c, "No current asked: a small-signal %s.", ENG(ic, "A"));
        }
    }
    double rc = draft_snap_r(c, vrc / ic), re_tot = ve / ic;
    draft_step(c, "RC = VRC / Ic = %s -> %s; emitter total RE = Ve / Ic = %s.",
               ENG(vrc / ic, "ohm"), VAL(rc), ENG(re_tot, "ohm"));
    bias b = divider(c, ve + VBE_V, ic);
    double re_d = VT_V / ic, rload = par(rc, rl), re1 = 0.0, re2 = re_tot;
    if (split) {
        double g_db_goal = db(r->gain);
        double re1_raw = split_re1(r->gain, rload, re_d, b.rth, rs);
        draft_step(c, "Gain = Zin/(Zin + Rs) * (RC||RL) / (re + RE1), re = 25.85 mV / Ic = %s:",
                   ENG(re_d, "ohm"));
        if (re1_raw <= 1.0) {
            draft_warn(c, "gain: %.4g (%.1f dB) is more than this stage gives at %s and %s: "
                          "about gm * (RC || RL) = %.4g with the emitter fully bypassed; more "
                          "supply, a lighter load or two stages give more",
                       r->gain, g_db_goal, ENG(ic, "A"), ENG(vcc, "V"), rload / re_d);
            re1 = 0.0;
            draft_why(c, "no unbypassed part is left: the emitter is fully bypassed.");
        } else {
            re1 = draft_snap_r(c, re1_raw);
            draft_why(c, "RE1 (unbypassed) = %s -> %s.", ENG(re1_raw, "ohm"), VAL(re1));
        }
        re2 = re_tot - re1;
        if (re2 < 0.05 * re_tot) {
            draft_why(c, "RE1 takes the whole emitter: no bypassed part (Ve rises to %s).",
                      ENG(re1 * ic, "V"));
            re2 = 0.0;
        } else {
            double r2raw = re2;
            re2 = draft_snap_r(c, r2raw);
            draft_why(c, "RE2 (bypassed) = RE - RE1 = %s -> %s.", ENG(r2raw, "ohm"), VAL(re2));
        }
    } else {
        re2 = draft_snap_r(c, re_tot);
        draft_step(c, "Emitter resistor RE = %s, fully bypassed: gain = gm * (RC || RL).",
                   VAL(re2));
    }
    double ie = bias_current(&b, re1 + re2);
    re_d = VT_V / ie;
    double vce = vcc - ie * rc - ie * (re1 + re2);
    draft_step(c, "Operating point: Ie = %s, Vc = %s, Vce = %s, re = %s.", ENG(ie, "A"),
               ENG(vcc - ie * rc, "V"), ENG(vce, "V"), ENG(re_d, "ohm"));
    power_check(c, "Q1", vce, ie);
    double zin = par(b.rth, (BETA + 1.0) * (re_d + re1));
    double gain = zin / (zin + rs) * rload / (re_d + re1);
    draft_step(c, "Zin = Rth || (beta+1)(re + RE1) = %s; gain = %.4g (%.2f dB), inverting; "
                  "Zout = RC = %s.", ENG(zin, "ohm"), gain, db(gain), VAL(rc));
    source_ratio_check(c, zin);
    load_ratio_check(c, rc, 0);
    if (!split && !isnan(r->gain) && gain < r->gain)
        draft_warn(c, "gain: the estimate %.4g is below the %.4g asked: the bypassed stage "
                      "gives gm * (RC || RL); more supply or a lighter load gives more",
                   gain, r->gain);
    swing_check(c, fmin(ie * rload, vce - VSAT_MARGIN_V),
                "Ic * (RC || RL) up, Vce less the saturation margin down");
    double c1 = draft_snap_c_up(c, pole_cap(rs + zin, r->f_low_hz / COUPLE_DIV));
    double c2 = draft_snap_c_up(c, pole_cap(rc + rl, r->f_low_hz / COUPLE_DIV));
    double ce = 0.0;
    draft_step(c, "Coupling capacitors: each one's pole a decade below f-low: C1 with Rs + Zin "
                  "-> %s, C2 with RC + RL -> %s.", VAL(c1), VAL(c2));
    if (re2 > 0.0) {
        double rseen = par(re2, re1 + re_d + par(rs, b.rth) / (BETA + 1.0));
        ce = draft_snap_c_up(c, pole_cap(rseen, r->f_low_hz / BYPASS_DIV));
        draft_step(c, "Bypass capacitor: its pole at a third of f-low with the %s it sees "
                      "(RE2 || (RE1 + re + Rs'/(beta+1))) -> %s.", ENG(rseen, "ohm"), VAL(ce));
        big_cap_check(c, "CE", ce);
    }
    double a_mill = rload / (re_d + re1);
    double cin = (ie / VT_V * NPN_TF_S + NPN_CPI_F) / (1.0 + ie / VT_V * re1) +
                 NPN_CMU_F * (1.0 + a_mill);
    fhigh_check(c, 1.0 / (2.0 * SS_PI * fmax(par(rs, b.rth), 30.0) * cin));

    supply_and_source(c);
    draft_elem(c, "C1", "in", "b", c1, "input coupling");
    draft_elem(c, "R1", "vcc", "b", b.r1, "bias divider, top");
    draft_elem(c, "R2", "b", "0", b.r2, "bias divider, bottom");
    draft_line(c, "Q1     c     b     e     ss_npn   ; the amplifier");
    draft_elem(c, "RC", "vcc", "c", rc, "collector resistor");
    if (split && re1 > 0.0 && re2 > 0.0) {
        draft_elem(c, "RE1", "e", "e2", re1, "unbypassed: sets the gain");
        draft_elem(c, "RE2", "e2", "0", re2, "bypassed: DC stability only");
        draft_elem(c, "CE", "e2", "0", ce, "emitter bypass");
    } else if (split && re1 > 0.0) {
        draft_elem(c, "RE1", "e", "0", re1, "unbypassed emitter: sets the gain");
    } else {
        draft_elem(c, "RE", "e", "0", re2, "emitter resistor, bypassed");
        draft_elem(c, "CE", "e", "0", ce, "emitter bypass");
    }
    draft_elem(c, "C2", "c", "out", c2, "output coupling");
    output_load(c);

    draft_expect(c, "ic(q1) = %.4g +- 25%%", ie);
    draft_expect(c, "vce(q1) >= %.3g", isnan(r->swing_v) ? 1.0 : r->swing_v + VSAT_MARGIN_V);
    if (split)
        band_limits(c, db(r->gain) - 1.0, db(r->gain) + 1.0);
    else {
        /* the bypassed stage's gain is what it is: a gain asked is a least one */
        double lo = isnan(r->gain) ? db(gain) - 3.0 : db(r->gain);
        band_limits(c, lo, fmax(db(gain) + 3.0, lo + 3.0));
    }
    char title[160];
    snprintf(title, sizeof title, "Draft: common-emitter stage, %s, %.4g V, Ic %s",
             split ? "split emitter" : "bypassed emitter", vcc, ENG(ie, "A"));
    char lf[48] = "";
    if (!isnan(r->load_ohm))
        snprintf(lf, sizeof lf, " load=%s", exact_value(r->load_ohm));
    return draft_assemble(c, title, NPN_CARD, r->f_low_hz / 100.0, r->f_high_hz * 10.0, lf,
                          NPN_RATING, err);
}

static ss_status draft_ce_follower(draft_ctx *c, ss_error *err)
{
    const ss_draft_req *r = &c->rq;
    double vcc = r->supply_v, rs = r->source_ohm, rl = load_eff(c);
    double ve1 = VE_FRAC * vcc, vrc = (vcc - ve1) / 2.0, ic1 = DEFAULT_IC_A;
    double vc1 = vcc - vrc, ve2 = vc1 - VBE_V, ic2;
    draft_step(c, "First stage (Q1): emitter at 10 %% of the supply, Ve1 = %s; collector at "
                  "half the remaining headroom, Vc1 = %s; a small-signal Ic1 = %s.",
               ENG(ve1, "V"), ENG(vc1, "V"), ENG(ic1, "A"));
    draft_step(c, "Follower (Q2) direct-coupled to Q1's collector: Ve2 = Vc1 - Vbe = %s.",
               ENG(ve2, "V"));
    if (!isnan(r->current_a)) {
        ic2 = r->current_a;
        draft_why(c, "Q2's current as asked: %s.", ENG(ic2, "A"));
    } else {
        ic2 = DEFAULT_IC_A;
        if (!isnan(r->swing_v) && r->swing_v < 0.9 * ve2) {
            double need = swing_current(r->swing_v, ve2, rl);
            draft_why(c, "Q2's current for the swing: Ie2 * (RE3 || RL) >= peak, 25 %% to "
                         "spare: Ic2 >= %s.", ENG(need, "A"));
            ic2 = fmax(ic2, need);
        }
        draft_why(c, "Q2's current: %s.", ENG(ic2, "A"));
    }
    double re3 = draft_snap_r(c, ve2 / ic2);
    double rc_raw = vrc / (ic1 + ic2 / BETA);
    double rc = draft_snap_r(c, rc_raw);
    double re_tot = ve1 / ic1;
    draft_step(c, "RE3 = Ve2 / Ic2 -> %s; RC = VRC / (Ic1 + Ic2/beta) = %s -> %s (Q2's base "
                  "current flows in RC too); emitter total RE = Ve1/Ic1 = %s.",
               VAL(re3), ENG(rc_raw, "ohm"), VAL(rc), ENG(re_tot, "ohm"));
    bias b = divider(c, ve1 + VBE_V, ic1);
    double re_d1 = VT_V / ic1, re_d2 = VT_V / ic2, rle = par(re3, rl);
    double zin2 = (BETA + 1.0) * (re_d2 + rle), av2 = rle / (re_d2 + rle);
    double rload = par(rc, zin2);
    draft_step(c, "Q2 loads Q1 with (beta+1)(re2 + RE3||RL) = %s and gives Av2 = %.4f.",
               ENG(zin2, "ohm"), av2);
    if (zin2 < IMP_RATIO * rc)
        draft_warn(c, "the follower's input %s is less than 10 x RC = %s: Q2 loads the first "
                      "stage (more current in Q2 or a lighter load helps)",
                   ENG(zin2, "ohm"), VAL(rc));
    double re1_raw = split_re1(r->gain / av2, rload, re_d1, b.rth, rs), re1 = 0.0, re2;
    draft_step(c, "Gain = Zin/(Zin+Rs) * (RC || Zin2)/(re1 + RE1) * Av2, re1 = %s:",
               ENG(re_d1, "ohm"));
    if (re1_raw <= 1.0) {
        draft_warn(c, "gain: %.4g (%.1f dB) is more than this pair gives at %s: about "
                      "gm1 * (RC || Zin2) * Av2 = %.4g; more supply or three stages give more",
                   r->gain, db(r->gain), ENG(vcc, "V"), rload / re_d1 * av2);
        draft_why(c, "no unbypassed part is left: Q1's emitter is fully bypassed.");
    } else {
        re1 = draft_snap_r(c, re1_raw);
        draft_why(c, "RE1 (unbypassed) = %s -> %s.", ENG(re1_raw, "ohm"), VAL(re1));
    }
    re2 = re_tot - re1;
    if (re2 < 0.05 * re_tot) {
        draft_why(c, "RE1 takes the whole emitter: no bypassed part.");
        re2 = 0.0;
    } else {
        double raw = re2;
        re2 = draft_snap_r(c, raw);
        draft_why(c, "RE2 (bypassed) = RE - RE1 = %s -> %s.", ENG(raw, "ohm"), VAL(re2));
    }
    double ie1 = bias_current(&b, re1 + re2);
    re_d1 = VT_V / ie1;
    double vc1_est = vcc - rc * (ie1 + ic2 / BETA);
    double ie2 = (vc1_est - VBE_V) / re3;
    re_d2 = VT_V / ie2;
    draft_step(c, "Operating point: Ie1 = %s, Vc1 = %s, Ie2 = %s, Vce2 = %s.", ENG(ie1, "A"),
               ENG(vc1_est, "V"), ENG(ie2, "A"), ENG(vcc - ie2 * re3, "V"));
    power_check(c, "Q2", vcc - ie2 * re3, ie2);
    double zin = par(b.rth, (BETA + 1.0) * (re_d1 + re1));
    double gain = zin / (zin + rs) * par(rc, zin2) / (re_d1 + re1) * av2;
    double zo = par(re3, re_d2 + rc / (BETA + 1.0));
    draft_step(c, "Zin = %s; gain = %.4g (%.2f dB), inverting; Zout = re2 + RC/(beta+1) = %s.",
               ENG(zin, "ohm"), gain, db(gain), ENG(zo, "ohm"));
    source_ratio_check(c, zin);
    load_ratio_check(c, zo, 1);
    swing_check(c, fmin(ie2 * rle, vcc - ie2 * re3 - VSAT_MARGIN_V),
                "Ie2 * (RE3 || RL) down, Q2's headroom up");
    double c1 = draft_snap_c_up(c, pole_cap(rs + zin, r->f_low_hz / COUPLE_DIV));
    double c2 = draft_snap_c_up(c, pole_cap(zo + rl, r->f_low_hz / COUPLE_DIV));
    draft_step(c, "Coupling capacitors a decade below f-low: C1 -> %s, C2 (with Zout + RL) -> %s.",
               VAL(c1), VAL(c2));
    double ce = 0.0;
    if (re2 > 0.0) {
        double rseen = par(re2, re1 + re_d1 + par(rs, b.rth) / (BETA + 1.0));
        ce = draft_snap_c_up(c, pole_cap(rseen, r->f_low_hz / BYPASS_DIV));
        draft_step(c, "Bypass capacitor at a third of f-low with %s -> %s.", ENG(rseen, "ohm"),
                   VAL(ce));
        big_cap_check(c, "CE", ce);
    }
    big_cap_check(c, "C2", c2);
    double a1 = par(rc, zin2) / (re_d1 + re1);
    double cin = (ie1 / VT_V * NPN_TF_S + NPN_CPI_F) / (1.0 + ie1 / VT_V * re1) +
                 NPN_CMU_F * (1.0 + a1);
    double f1 = 1.0 / (2.0 * SS_PI * fmax(par(rs, b.rth), 30.0) * cin);
    double f2 = 1.0 / (2.0 * SS_PI * rc * NPN_CMU_F * 2.0);
    fhigh_check(c, fmin(f1, f2));

    supply_and_source(c);
    draft_elem(c, "C1", "in", "b", c1, "input coupling");
    draft_elem(c, "R1", "vcc", "b", b.r1, "bias divider, top");
    draft_elem(c, "R2", "b", "0", b.r2, "bias divider, bottom");
    draft_line(c, "Q1     c     b     e     ss_npn   ; the amplifier");
    draft_elem(c, "RC", "vcc", "c", rc, "collector resistor");
    if (re1 > 0.0 && re2 > 0.0) {
        draft_elem(c, "RE1", "e", "e2", re1, "unbypassed: sets the gain");
        draft_elem(c, "RE2", "e2", "0", re2, "bypassed: DC stability only");
        draft_elem(c, "CE", "e2", "0", ce, "emitter bypass");
    } else if (re1 > 0.0) {
        draft_elem(c, "RE1", "e", "0", re1, "unbypassed emitter: sets the gain");
    } else {
        draft_elem(c, "RE2", "e", "0", re2, "emitter resistor, bypassed");
        draft_elem(c, "CE", "e", "0", ce, "emitter bypass");
    }
    draft_line(c, "Q2     vcc   c     e3    ss_npn   ; the follower");
    draft_elem(c, "RE3", "e3", "0", re3, "follower's emitter resistor");
    draft_elem(c, "C2", "e3", "out", c2, "output coupling");
    output_load(c);

    draft_expect(c, "ic(q1) = %.4g +- 25%%", ie1);
    draft_expect(c, "ic(q2) = %.4g +- 25%%", ie2);
    draft_expect(c, "vce(q1) >= 1");
    draft_expect(c, "vce(q2) >= %.3g", isnan(r->swing_v) ? 1.0 : r->swing_v + VSAT_MARGIN_V);
    band_limits(c, db(r->gain) - 1.0, db(r->gain) + 1.0);
    if (!isnan(r->load_ohm))
        zout_limit(c);
    char title[160];
    snprintf(title, sizeof title, "Draft: common emitter + emitter follower, %.4g V, Ic %s + %s",
             vcc, ENG(ie1, "A"), ENG(ie2, "A"));
    char lf[48] = "";
    if (!isnan(r->load_ohm))
        snprintf(lf, sizeof lf, " load=%s", exact_value(r->load_ohm));
    return draft_assemble(c, title, NPN_CARD, r->f_low_hz / 100.0, r->f_high_hz * 10.0, lf,
                          NPN2_RATING, err);
}

/* The drain current a self-biasing source resistor rs gives (square law with the card's VTO
 * and BETA, the card's own RS in series): BETA (|VTO| - Id rs)^2 = Id, the root below
 * pinch-off. */
static double jfet_self_bias_id(double rs)
{
    double k = NJF_BETA * rs, vp = -NJF_VTO_V;
    double u = (-1.0 + sqrt(1.0 + 4.0 * k * vp)) / (2.0 * k); /* Vgs - VTO */
    return NJF_BETA * u * u;
}

/* gm (RD || RL) at a drain current id, RD for the drain at half the remaining headroom: the
 * most gain the self-biased stage gives with its source fully bypassed. */
static double jfet_most_gain(double id, double vcc, double rl)
{
    double u = sqrt(id / NJF_BETA), vs = -(NJF_VTO_V + u);
    return 2.0 * NJF_BETA * u * par((vcc - vs) / (2.0 * id), rl);
}

static ss_status draft_jfet(draft_ctx *c, ss_error *err)
{
    const ss_draft_req *r = &c->rq;
    double vcc = r->supply_v, rs = r->source_ohm, rl = load_eff(c);
    double idss = NJF_BETA * NJF_VTO_V * NJF_VTO_V, id;
    double rg = draft_snap_r_up(c, fmax(isnan(r->zin_ohm) ? 0.0 : r->zin_ohm, 1e6));
    draft_step(c, "The card's square law: Id = BETA (Vgs - VTO)^2, BETA = %s A/V^2, VTO = %g V: "
                  "IDSS = %s.", VAL(NJF_BETA), NJF_VTO_V, ENG(idss, "A"));
    draft_step(c, "Gate to ground through RG = %s (1 Mohm, or the zin asked): Zin = RG.",
               VAL(rg));
    double frac = rg / (rg + rs);
    if (!isnan(r->current_a)) {
        id = r->current_a;
        draft_step(c, "Drain current as asked: Id = %s.", ENG(id, "A"));
    } else {
        id = idss / 4.0;
        draft_step(c, "Id = IDSS/4 = %s (Vgs = VTO/2: gm half its peak, room either side).",
                   ENG(id, "A"));
        if (!isnan(r->gain)) {
            /* unloaded, gm * RD grows as 1/sqrt(Id): lower Id until the gain asked is two
             * thirds of the most the stage gives, while lowering it still helps (a heavy load
             * caps RD || RL), and not below IDSS/400 */
            for (int k = 0; k < 40 && id > idss / 400.0; k++) {
                double gmax = jfet_most_gain(id, vcc, rl) * frac;
                if (gmax >= 1.5 * r->gain || jfet_most_gain(0.8 * id, vcc, rl) * frac <= gmax)
                    break;
                id *= 0.8;
            }
            draft_why(c, "For the gain asked (two thirds of gm * (RD || RL) at most): Id = %s.",
                      ENG(id, "A"));
        }
    }
    double u = sqrt(id / NJF_BETA), vgs = NJF_VTO_V + u;
    double rs_tot_raw = -vgs / id - NJF_RS_OHM;
    draft_step(c, "Vgs = VTO + sqrt(Id/BETA) = %s; self-bias source resistance -Vgs/Id less "
                  "the card's RS = %s.", ENG(vgs, "V"), ENG(rs_tot_raw, "ohm"));
    if (rs_tot_raw < 1.0)
        rs_tot_raw = 1.0;
    double rs_tot = draft_snap_r(c, rs_tot_raw);
    id = jfet_self_bias_id(rs_tot + NJF_RS_OHM);
    u = sqrt(id / NJF_BETA);
    double vs = id * (rs_tot + NJF_RS_OHM);
    double rd_raw = (vcc - vs) / (2.0 * id), rd = draft_snap_r(c, rd_raw);
    double gm = 2.0 * NJF_BETA * u, rload = par(rd, rl);
    draft_step(c, "RS -> %s gives Id = %s (Vs = %s); drain at half the remaining headroom: "
                  "RD = (Vdd - Vs)/(2 Id) = %s -> %s; gm = 2 BETA (Vgs - VTO) = %s.",
               VAL(rs_tot), ENG(id, "A"), ENG(vs, "V"), ENG(rd_raw, "ohm"), VAL(rd),
               ENG(gm, "S"));
    double vds = vcc - id * rd - vs;
    double rs1 = 0.0, rs2 = rs_tot;
    if (!isnan(r->gain)) {
        double g_stage = r->gain / frac;
        double raw = rload / g_stage - 1.0 / gm - NJF_RS_OHM;
        draft_step(c, "Gain = RG/(RG+Rs) * (RD||RL) / (1/gm + RS1 + the card's RS): RS1 "
                      "(unbypassed) = %s.", ENG(raw, "ohm"));
        if (raw <= 1.0) {
            draft_warn(c, "gain: %.4g (%.1f dB) is more than this stage gives at %s and %s: "
                          "gm * (RD || RL) = %.4g with the source fully bypassed; a lower Id, "
                          "more supply or a lighter load gives more",
                       r->gain, db(r->gain), ENG(id, "A"), ENG(vcc, "V"), gm * rload * frac);
        } else if (raw >= 0.95 * rs_tot) {
            /* the self-bias resistor is all the degeneration there is: the drain resistor
             * comes down instead (the drain sits above mid-way) */
            rs1 = rs_tot;
            rs2 = 0.0;
            double x = g_stage * (1.0 / gm + rs1 + NJF_RS_OHM);
            double rd_raw2 = x < 0.999 * rl ? 1.0 / (1.0 / x - 1.0 / rl) : rd;
            rd = draft_snap_r(c, rd_raw2);
            rload = par(rd, rl);
            draft_why(c, "More than the self-bias RS: RS1 = RS unbypassed, and RD comes down to "
                         "%s -> %s for the gain (the drain sits above mid-way, Vd = %s).",
                      ENG(rd_raw2, "ohm"), VAL(rd), ENG(vcc - id * rd, "V"));
        } else {
            rs1 = draft_snap_r(c, raw);
            rs2 = draft_snap_r(c, rs_tot - rs1);
            draft_why(c, "RS1 -> %s; RS2 (bypassed) = RS - RS1 -> %s.", VAL(rs1), VAL(rs2));
        }
    } else {
        draft_step(c, "No gain asked: the source resistor fully bypassed, gain = gm (RD||RL).");
    }
    vds = vcc - id * rd - vs;
    if (vds < u + VSAT_MARGIN_V)
        draft_warn(c, "the JFET is near its linear region (Vds %s, Vgs - VTO %s): a higher "
                      "supply or a smaller RD keeps it saturated",
                   ENG(vds, "V"), ENG(u, "V"));
    power_check(c, "J1", vds, id);
    double gain = frac * rload / (1.0 / gm + rs1 + NJF_RS_OHM);
    draft_step(c, "Gain = %.4g (%.2f dB), inverting; Zin = RG = %s; Zout = RD = %s.", gain,
               db(gain), VAL(rg), VAL(rd));
    source_ratio_check(c, rg);
    load_ratio_check(c, rd, 0);
    swing_check(c, fmin(id * rload, vds - u - VSAT_MARGIN_V),
                "Id * (RD || RL) up, Vds less Vgs - VTO down");
    double c1 = draft_snap_c_up(c, pole_cap(rs + rg, r->f_low_hz / COUPLE_DIV));
    double c2 = draft_snap_c_up(c, pole_cap(rd + rl, r->f_low_hz / COUPLE_DIV));
    draft_step(c, "Coupling capacitors a decade below f-low: C1 with Rs + RG -> %s, C2 with "
                  "RD + RL -> %s.", VAL(c1), VAL(c2));
    double cs = 0.0;
    if (rs2 > 0.0) {
        double rseen = par(rs2, rs1 + NJF_RS_OHM + 1.0 / gm);
        cs = draft_snap_c_up(c, pole_cap(rseen, r->f_low_hz / BYPASS_DIV));
        draft_step(c, "Source bypass at a third of f-low with %s -> %s.", ENG(rseen, "ohm"),
                   VAL(cs));
        big_cap_check(c, "CS", cs);
    }
    double cin = NJF_CGS_F / (1.0 + gm * rs1) + NJF_CGD_F * (1.0 + rload / (1.0 / gm + rs1));
    fhigh_check(c, 1.0 / (2.0 * SS_PI * fmax(par(rs, rg), 10.0) * cin));

    supply_and_source(c);
    draft_elem(c, "C1", "in", "g", c1, "input coupling");
    draft_elem(c, "RG", "g", "0", rg, "gate to ground: sets Zin");
    draft_line(c, "J1     d     g     s     ss_njf   ; the amplifier");
    draft_elem(c, "RD", "vcc", "d", rd, "drain resistor");
    if (rs1 > 0.0 && rs2 > 0.0) {
        draft_elem(c, "RS1", "s", "s2", rs1, "unbypassed: sets the gain");
        draft_elem(c, "RS2", "s2", "0", rs2, "bypassed: bias only");
        draft_elem(c, "CS", "s2", "0", cs, "source bypass");
    } else if (rs1 > 0.0) {
        draft_elem(c, "RS1", "s", "0", rs1, "unbypassed source resistor: sets the gain");
    } else {
        draft_elem(c, "RS", "s", "0", rs2, "self-bias source resistor, bypassed");
        draft_elem(c, "CS", "s", "0", cs, "source bypass");
    }
    draft_elem(c, "C2", "d", "out", c2, "output coupling");
    output_load(c);

    draft_expect(c, "id(j1) = %.4g +- 25%%", id);
    draft_expect(c, "vds(j1) >= %.3g", u + (isnan(r->swing_v) ? 1.0 : r->swing_v));
    if (isnan(r->gain))
        band_limits(c, db(gain) - 3.0, db(gain) + 3.0);
    else
        band_limits(c, db(r->gain) - 1.0, db(r->gain) + 1.0);
    char title[160];
    snprintf(title, sizeof title, "Draft: JFET common-source preamp, %.4g V, Id %s", vcc,
             ENG(id, "A"));
    char lf[48] = "";
    if (!isnan(r->load_ohm))
        snprintf(lf, sizeof lf, " load=%s", exact_value(r->load_ohm));
    return draft_assemble(c, title, NJF_CARD, r->f_low_hz / 100.0, r->f_high_hz * 10.0, lf,
                          NJF_RATING, err);
}

/* ---- the API ------------------------------------------------------------------------------- */

void ss_draft_req_init(ss_draft_req *req, ss_draft_kind kind)
{
    req->kind = kind;
    req->supply_v = req->current_a = req->swing_v = req->gain = SS_NAN;
    req->zin_ohm = req->load_ohm = req->source_ohm = SS_NAN;
    req->f_low_hz = req->f_high_hz = SS_NAN;
    req->series = 24;
    req->cap_series = 12;
}

int ss_draft_kind_parse(const char *name)
{
    for (int k = 0; name && k < SS_DRAFT_N_KINDS; k++)
        if (strcmp(name, KIND_NAMES[k]) == 0)
            return k;
    return -1;
}

const char *ss_draft_kind_name(int kind)
{
    return kind >= 0 && kind < SS_DRAFT_N_KINDS ? KIND_NAMES[kind] : NULL;
}

static int series_ok(int s)
{
    return s == 6 || s == 12 || s == 24 || s == 48 || s == 96 || s == 192;
}

/* A requirement not given (NaN) or within lo .. hi (lo open when lo_open). */
static int given_in(double v, double lo, int lo_open, double hi)
{
    return isnan(v) || (isfinite(v) && (lo_open ? v > lo : v >= lo) && v <= hi);
}

/* The requirement's ranges, its defaults, and what is impossible for the kind. */
static ss_status check_req(ss_draft_req *q, ss_error *err)
{
    if ((int)q->kind < 0 || q->kind >= SS_DRAFT_N_KINDS)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "kind: unknown (follower, ce, ce-split, ce-follower or jfet-cs)");
    if (isnan(q->supply_v))
        q->supply_v = 12.0;
    if (isnan(q->source_ohm))
        q->source_ohm = 0.0;
    if (isnan(q->f_low_hz))
        q->f_low_hz = 20.0;
    if (isnan(q->f_high_hz))
        q->f_high_hz = 20e3;
    if (!given_in(q->supply_v, 0.0, 1, 1000.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "supply: needs a voltage above 0 and at most 1000 V, got %g", q->supply_v);
    if (q->supply_v < 3.0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "supply: %g V is too low to bias the stage: these rules need at least "
                       "3 V (Vbe or Vgs, the emitter's 10 %%, the collector's headroom)",
                       q->supply_v);
    if (!given_in(q->current_a, 0.0, 1, 10.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "current: needs a current above 0 and at most 10 A, got %g", q->current_a);
    if (!given_in(q->swing_v, 0.0, 1, 1000.0))
        return err_set(err, SS_ERR_INPUT, NULL, 0, "swing: needs a peak voltage above 0, got %g",
                       q->swing_v);
    if (!isnan(q->swing_v) && q->swing_v >= q->supply_v / 2.0)
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "swing: a %g V peak needs more than twice that of supply (%g V given): "
                       "a single-supply stage swings less than half its supply either way",
                       q->swing_v, q->supply_v);
    if (!given_in(q->gain, 0.0, 1, 1e6))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "gain: needs a voltage gain (V/V) above 0 and at most 1e6, got %g", q->gain);
    if (!given_in(q->zin_ohm, 0.0, 1, 1e12))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "zin: needs a resistance above 0 and at most 1e12 ohm, got %g", q->zin_ohm);
    if (!given_in(q->load_ohm, 0.0, 1, 1e12))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "load: needs a resistance above 0 and at most 1e12 ohm, got %g",
                       q->load_ohm);
    if (!given_in(q->source_ohm, 0.0, 0, 1e12))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "source: needs a resistance of 0 or more (at most 1e12 ohm), got %g",
                       q->source_ohm);
    if (!given_in(q->f_low_hz, 0.0, 1, 1e9))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "f-low: needs a frequency above 0 and at most 1 GHz, got %g", q->f_low_hz);
    if (!given_in(q->f_high_hz, 0.0, 1, 1e9) || !(q->f_high_hz > q->f_low_hz))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "f-high: needs a frequency above f-low (%g Hz) and at most 1 GHz, got %g Hz",
                       q->f_low_hz, q->f_high_hz);
    if (!series_ok(q->series))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "series: E%d is not an IEC 60063 series (E6, E12, E24, E48, E96, E192)",
                       q->series);
    if (!series_ok(q->cap_series))
        return err_set(err, SS_ERR_INPUT, NULL, 0,
                       "cap-series: E%d is not an IEC 60063 series (E6, E12, E24, E48, E96, "
                       "E192)",
                       q->cap_series);
    switch (q->kind) {
    case SS_DRAFT_FOLLOWER:
        if (!isnan(q->gain) && q->gain >= 1.0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "gain: a follower's gain is below 1 (about 0.9 .. 0.99), got %g: "
                           "ce-split or ce-follower amplify",
                           q->gain);
        break;
    case SS_DRAFT_CE_SPLIT:
    case SS_DRAFT_CE_FOLLOWER:
        if (isnan(q->gain))
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "gain: %s sets its gain from the one asked: give it",
                           KIND_NAMES[q->kind]);
        /* fall through */
    case SS_DRAFT_CE:
    case SS_DRAFT_JFET_CS:
        if (!isnan(q->gain) && q->gain < 1.0)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "gain: %s amplifies (a gain of 1 or more), got %g: a follower "
                           "buffers without gain",
                           KIND_NAMES[q->kind], q->gain);
        if (q->kind == SS_DRAFT_JFET_CS && !isnan(q->current_a) &&
            q->current_a >= 0.9 * NJF_BETA * NJF_VTO_V * NJF_VTO_V)
            return err_set(err, SS_ERR_INPUT, NULL, 0,
                           "current: a self-biased JFET runs below IDSS = BETA * VTO^2 = 4.5 mA "
                           "of the card (at most 90 %% of it here), got %g A",
                           q->current_a);
        break;
    default:
        break;
    }
    return SS_OK;
}

ss_status ss_draft_create(const ss_draft_req *req, ss_draft **out, ss_error *err)
{
    *out = NULL;
    if (!req)
        return err_set(err, SS_ERR_INPUT, NULL, 0, "kind: no requirements given");
    draft_ctx c;
    memset(&c, 0, sizeof c);
    c.rq = *req;
    ss_status st = check_req(&c.rq, err);
    if (st != SS_OK)
        return st;
    c.d = ss_alloc(sizeof *c.d);
    if (!c.d)
        return err_set(err, SS_ERR_NOMEM, NULL, 0, "out of memory drafting the stage");
    switch (c.rq.kind) {
    case SS_DRAFT_FOLLOWER: st = draft_follower(&c, err); break;
    case SS_DRAFT_CE: st = draft_ce(&c, 0, err); break;
    case SS_DRAFT_CE_SPLIT: st = draft_ce(&c, 1, err); break;
    case SS_DRAFT_CE_FOLLOWER: st = draft_ce_follower(&c, err); break;
    default: st = draft_jfet(&c, err); break;
    }
    strbuf_clear(&c.why);
    strbuf_clear(&c.body);
    strbuf_clear(&c.expect);
    if (st != SS_OK) {
        ss_draft_destroy(c.d);
        return st;
    }
    *out = c.d;
    return SS_OK;
}

void ss_draft_destroy(ss_draft *d)
{
    if (!d)
        return;
    for (int k = 0; k < d->n_warnings; k++)
        ss_free(d->warnings[k]);
    ss_free(d->text);
    ss_free(d);
}

const char *ss_draft_netlist(const ss_draft *d)
{
    return d ? d->text : NULL;
}

int ss_draft_warning_count(const ss_draft *d)
{
    return d ? d->n_warnings : 0;
}

const char *ss_draft_warning(const ss_draft *d, int k)
{
    return d && k >= 0 && k < d->n_warnings ? d->warnings[k] : NULL;
}

int ss_draft_part_count(const ss_draft *d)
{
    return d ? d->n_parts : 0;
}

int ss_draft_part(const ss_draft *d, int k, const char **name, double *value,
                  const char **written, const char **what)
{
    if (!d || k < 0 || k >= d->n_parts)
        return -1;
    if (name)
        *name = d->parts[k].name;
    if (value)
        *value = d->parts[k].value;
    if (written)
        *written = d->parts[k].text;
    if (what)
        *what = d->parts[k].what;
    return 0;
}
