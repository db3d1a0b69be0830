#!/usr/bin/python3
"""Reference check: mid-band stage figures of single-transistor stages against the classic
hybrid-pi closed forms.

Usage: test_ac_hybrid_pi.py PATH_TO_STAGESIM

Sources (from memory): P. R. Gray, R. G. Meyer et
al., "Analysis and Design of Analog Integrated Circuits", ch. 1 (hybrid-pi model);
A. S. Sedra, K. C. Smith, "Microelectronic Circuits" (stage formulas):
  gm, beta, r_pi = beta/gm, re = alpha/gm, alpha = beta/(beta + 1), ro = (VAF - VBC)/IC;
  common emitter with unbypassed RE: Av ~ -gm RC/(1 + gm RE), alpha-exact
  -alpha RC/(re + RE); resistance into the base (beta + 1)(re + RE); Zout ~ RC;
  emitter follower: Zin ~ (beta + 1)(re + RE) || bias network, Zout ~ re + Rs/(beta + 1)
  (in parallel with RE), gain just below 1.
gm, beta (= IC/IB) and IC are taken from the tool's own op.csv, so these checks test the
AC linearisation and stage figures, not the bias point. The closed forms neglect ro, the
source and load resistance where stated, GMIN, and the difference between the DC beta and
the small-signal beta; so the tolerances are a few per cent, stated per check. For the
stage with a finite VAF the same hybrid-pi model is also solved by hand with ro kept
(ro = (VAF - VBC)/IC, the model's own Early law with q1 = 1/(1 - Vbc/VAF)), to 1 %.
Facts of the trade (common practice, no single source): a follower's gain is just below 1;
a follower divides the source resistance by about beta and its Zout is roughly beta times
lower than its Zin (checked as an order of magnitude, beta/10 .. 10 beta).

The models carry no capacitances and the circuits no capacitors, so the response is flat
and any frequency is mid-band. Circuits are own scenarios with invented model cards.
"""


import acref

SRC_GM = "hybrid-pi closed form (Gray & Meyer ch. 1; Sedra & Smith; from memory)"
SRC_TRADE = "common practice (facts of the trade)"
AC = ".ac dec 1 1k 100k"


def run_stage(chk, binary, name, text):
    run = acref.run_tool(chk, binary, name, text)
    if not acref.expect_ok(chk, name, run, text):
        return None
    return run


def op_small_signal(run, q="q1"):
    op = run.op
    ic, ib, gm = op["ic(%s)" % q], op["ib(%s)" % q], op["gm(%s)" % q]
    beta = ic / ib
    alpha = beta / (beta + 1.0)
    return dict(ic=ic, ib=ib, gm=gm, beta=beta, alpha=alpha, re=alpha / gm, rpi=beta / gm)


def par(*rs):
    return 1.0 / sum(1.0 / r for r in rs)


def ce_degenerated(chk, binary):
    """Bridge-sensor amplifier: base driven straight from the source (Rs = 0), VAF infinite."""
    rc, re = 4.7e3, 1e3
    text = ("bridge-sensor amplifier, CE with unbypassed emitter resistor\n"
            "VCC vcc 0 DC 12\nVS b 0 DC 2.0 AC 1\nQ1 c b e nce\nRC vcc c %s\nRE e 0 %s\n"
            ".model nce NPN (IS=1e-14 BF=150)\n%s\n.stage in=VS out=c\n.end\n"
            % (acref.fmt(rc), acref.fmt(re), AC))
    run = run_stage(chk, binary, "ce_rs0", text)
    if not run:
        return
    s = op_small_signal(run)
    gain = acref.column(run.stage, "gain")[0]
    ph = acref.column(run.stage, "phase_deg")[0]
    tag = "CE, RE unbypassed, Rs 0 (IC %.3g mA, beta %.1f)" % (s["ic"] * 1e3, s["beta"])
    chk.rel("%s: |gain| ~ gm RC/(1 + gm RE), 3 %% (alpha ~ 1 assumed)" % tag, gain,
            s["gm"] * rc / (1.0 + s["gm"] * re), 0.03, SRC_GM)
    chk.rel("%s: |gain| ~ alpha RC/(re + RE), 1 %%" % tag, gain,
            s["alpha"] * rc / (s["re"] + re), 0.01, SRC_GM)
    chk.rel("%s: |gain| ~ RC/RE for gm RE >> 1, 10 %%" % tag, gain, rc / re, 0.10, SRC_GM)
    chk.rel("%s: |phase - 180 deg| (inverting)" % tag, abs(acref.wrap_deg(ph - 180.0)), 0.0, 0.0,
            SRC_GM, abs_=0.01)
    chk.rel("%s: Zin = resistance into the base (beta + 1)(re + RE), 1 %%" % tag,
            acref.column(run.stage, "zin_ohm")[0], (s["beta"] + 1.0) * (s["re"] + re), 0.01,
            SRC_GM)
    chk.rel("%s: Zout ~ RC (ro infinite), 1 %%" % tag, acref.column(run.stage, "zout_ohm")[0],
            rc, 0.01, SRC_GM)


def ce_with_source(chk, binary):
    """Strain-gauge preamp: source resistance, finite VAF (ro neglected by the forms)."""
    rs, rc, re, vaf = 2.2e3, 3.3e3, 680.0, 60.0
    text = ("strain-gauge preamp, CE with source resistance and Early effect\n"
            "VCC vcc 0 DC 10\nVS src 0 DC 1.9 AC 1\nRS src b %s\nQ1 c b e nce\nRC vcc c %s\n"
            "RE e 0 %s\n.model nce NPN (IS=5e-15 BF=120 VAF=%s)\n%s\n.stage in=VS out=c\n.end\n"
            % (acref.fmt(rs), acref.fmt(rc), acref.fmt(re), acref.fmt(vaf), AC))
    run = run_stage(chk, binary, "ce_rs", text)
    if not run:
        return
    s = op_small_signal(run)
    tag = "CE, Rs 2.2k, VAF 60 (IC %.3g mA, beta %.1f)" % (s["ic"] * 1e3, s["beta"])
    beta, rpi = s["beta"], s["rpi"]
    ro = (vaf + run.op["vce(q1)"] - run.op["vbe(q1)"]) / s["ic"]
    zin_t = acref.column(run.stage, "zin_ohm")[0]
    gain_t = acref.column(run.stage, "gain")[0]
    zout_t = acref.column(run.stage, "zout_ohm")[0]
    # textbook forms, ro neglected
    rin_b = (beta + 1.0) * (s["re"] + re)
    av = s["alpha"] * rc / (s["re"] + re)
    chk.rel("%s: |gain| ~ alpha RC/(re + RE) x Rin/(Rs + Rin), 3 %% (ro neglected)" % tag,
            gain_t, av * rin_b / (rs + rin_b), 0.03, SRC_GM)
    chk.rel("%s: Zout ~ RC, 3 %% (ro = %.3g kohm, degenerated, neglected)" % (tag, ro / 1e3),
            zout_t, rc, 0.03, SRC_GM)
    chk.rel("%s: Zin ~ Rs + (beta + 1)(re + RE), 12 %% (ro neglected: ro/(ro + RC + RE) "
            "alone is %.3f here)" % (tag, ro / (ro + rc + re)), zin_t, rs + rin_b, 0.12, SRC_GM)
    # the same hybrid-pi model with ro = (VAF - VBC)/IC kept (node equations solved by hand:
    # ib = vbe/r_pi, ic = gm vbe + vce/ro, ve = RE (ib + ic), vc = -RC ic); 1 %% covers the
    # gm of op.csv (taken at fixed Vbc) versus the hybrid-pi gm (at fixed Vce), ~Vt/VAF
    rin_ro = rpi + re * ((beta + 1.0) * ro + rc) / (ro + rc + re)
    chk.rel("%s: Zin = Rs + r_pi + RE((beta + 1) ro + RC)/(ro + RC + RE), 1 %%" % tag, zin_t,
            rs + rin_ro, 0.01, SRC_GM + "; derived with ro")
    av_ro = rc * (beta * ro - re) / ((ro + rc + re) * rin_ro)
    chk.rel("%s: |gain| = RC (beta ro - RE)/((ro + RC + RE) Rin) x Rin/(Rs + Rin), 1 %%" % tag,
            gain_t, av_ro * rin_ro / (rs + rin_ro), 0.01, SRC_GM + "; derived with ro")
    rp = par(re, rs + rpi)
    chk.rel("%s: Zout = RC || (ro (1 + beta R'/(Rs + r_pi)) + R'), R' = RE || (Rs + r_pi), 1 %%"
            % tag, zout_t, par(rc, ro * (1.0 + beta * rp / (rs + rpi)) + rp), 0.01,
            SRC_GM + "; derived with ro")


def follower_biased(chk, binary):
    """Piezo-pickup buffer: emitter follower with a bias divider and source resistance."""
    rs, rb1, rb2, re = 1e3, 470e3, 470e3, 2.2e3
    text = ("piezo-pickup buffer, emitter follower\n"
            "VCC vcc 0 DC 9\nVS src 0 DC 4.5 AC 1\nRS src b %s\nRB1 vcc b %s\nRB2 b 0 %s\n"
            "Q1 vcc b e nef\nRE e 0 %s\n.model nef NPN (IS=2e-14 BF=110)\n%s\n"
            ".stage in=VS out=e\n.end\n"
            % (acref.fmt(rs), acref.fmt(rb1), acref.fmt(rb2), acref.fmt(re), AC))
    run = run_stage(chk, binary, "ef_bias", text)
    if not run:
        return
    s = op_small_signal(run)
    tag = "follower, bias 470k/470k, Rs 1k (IC %.3g mA, beta %.1f)" % (s["ic"] * 1e3, s["beta"])
    zin = rs + par((s["beta"] + 1.0) * (s["re"] + re), rb1, rb2)
    zout = par(s["re"] + par(rs, rb1, rb2) / (s["beta"] + 1.0), re)
    gain = acref.column(run.stage, "gain")[0]
    chk.rel("%s: Zin ~ Rs + (beta + 1)(re + RE) || bias, 2 %%" % tag,
            acref.column(run.stage, "zin_ohm")[0], zin, 0.02, SRC_GM)
    chk.rel("%s: Zout ~ (re + Rs'/(beta + 1)) || RE, Rs' = Rs || bias, 2 %%" % tag,
            acref.column(run.stage, "zout_ohm")[0], zout, 0.02, SRC_GM)
    chk.range("%s: gain just below 1" % tag, gain, 0.9, 1.0, SRC_TRADE)
    rin_b = par((s["beta"] + 1.0) * (s["re"] + re), rb1, rb2)
    chk.rel("%s: gain ~ RE/(re + RE) x Rin/(Rs + Rin), 2 %%" % tag, gain,
            re / (s["re"] + re) * rin_b / (rs + rin_b), 0.02, SRC_GM)
    chk.rel("%s: |phase| (non-inverting)" % tag,
            abs(acref.wrap_deg(acref.column(run.stage, "phase_deg")[0])), 0.0, 0.0, SRC_GM,
            abs_=0.01)


def follower_high_rs(chk, binary):
    """Electrode buffer: follower fed from a 100 kOhm source, impedance transformation."""
    rs, re = 100e3, 1e3
    text = ("electrode buffer, emitter follower from a high-impedance source\n"
            "VCC vcc 0 DC 9\nVS src 0 DC 6 AC 1\nRS src b %s\nQ1 vcc b e nef\nRE e 0 %s\n"
            ".model nef NPN (IS=2e-14 BF=100)\n%s\n.stage in=VS out=e\n.end\n"
            % (acref.fmt(rs), acref.fmt(re), AC))
    run = run_stage(chk, binary, "ef_highrs", text)
    if not run:
        return
    s = op_small_signal(run)
    beta = s["beta"]
    tag = "follower, Rs 100k (IC %.3g mA, beta %.1f)" % (s["ic"] * 1e3, beta)
    zin = acref.column(run.stage, "zin_ohm")[0]
    zout = acref.column(run.stage, "zout_ohm")[0]
    chk.rel("%s: Zin ~ Rs + (beta + 1)(re + RE), 2 %%" % tag, zin,
            rs + (beta + 1.0) * (s["re"] + re), 0.02, SRC_GM)
    chk.rel("%s: Zout ~ (re + Rs/(beta + 1)) || RE, 2 %%" % tag, zout,
            par(s["re"] + rs / (beta + 1.0), re), 0.02, SRC_GM)
    chk.range("%s: Zin/Zout roughly beta (order of magnitude, beta/10 .. 10 beta)" % tag,
              zin / zout, beta / 10.0, beta * 10.0, SRC_TRADE)
    chk.range("%s: Rs seen at the emitter divided by about beta: Rs/(Zout - re) in "
              "beta/3 .. 3 beta" % tag, rs / (1.0 / (1.0 / zout - 1.0 / re) - s["re"]),
              beta / 3.0, beta * 3.0, SRC_TRADE)


def main():
    binary = acref.binary_from_argv()
    chk = acref.Checker()
    for body in (ce_degenerated, ce_with_source, follower_biased, follower_high_rs):
        chk.guard(body, chk, binary)
    chk.finish()


if __name__ == "__main__":
    main()
