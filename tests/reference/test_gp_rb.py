#!/usr/bin/python3
"""Reference check: the bias-dependent base resistance of the Gummel-Poon model (IRB, RBM)
in the operating point, the AC response and the noise, solved independently (gpref.py).

Usage: test_gp_rb.py PATH_TO_STAGESIM

Sources of the expected values: the base-resistance law of I. Getreu, "Modeling the Bipolar
Transistor" (1976), as given by P. Antognetti, G. Massobrio, "Semiconductor Device Modeling
with SPICE", 2nd ed. 1993, ch. 2 (from memory; docs/models.md section 3.2):
  rbb = RBM + 3 (RB - RBM) (tan z - z)/(z tan^2 z),
  z = (-1 + sqrt(1 + 144 ib/(pi^2 IRB))) / ((24/pi^2) sqrt(ib/IRB))   with IRB,
  rbb = RBM + (RB - RBM)/qb                                             without;
thermal noise 4kT/rbb (Johnson 1928, Nyquist 1928), shot noise 2q|I| (Schottky 1918).
The reference solves its own nodal equations (scipy.optimize.root), linearises them with
Richardson central differences and sums the noise of each source through its own transfer.

Circuits (own scenarios, invented cards): a strain-gauge bridge amplifier's input transistor
(NPN, DC-coupled, RB 300 ohm falling to 30 ohm, IRB 0.1 mA), the same with the qb form (no
IRB, IKF 20 mA so qb moves), and a PNP level shifter with IRB.
TF is left at 0 here (the diffusion charge is test_gp_charge.py's subject).
Tolerances: operating point 1e-9 relative (tight Newton options), AC node phasors 1e-6
relative, output noise density 1e-6 relative.
A closed-form check needs no solver at all: a base-current-driven NPN (VAF, IKF infinite,
ISE = ISC = 0, gmin 0) has V(b) - V(e) = Vt ln(1 + Ib BF/IS) + Ib rbb(Ib) with the rbb law
above, Vt = kT/q with the exact SI constants; 1e-9 relative over five decades of Ib.
"""

import math
import os
import shutil
import sys

import numpy as np

import gpref

PASS, FAIL = [0], [0]
TIGHT = ".options tol_rel=1e-12 tol_v=1e-12 tol_i=1e-16"


def check(name, got, want, rel, floor, src):
    err = abs(got - want)
    ok = err <= max(rel * abs(want), floor)
    (PASS if ok else FAIL)[0] += 1
    print("%s %s: got %.12g expected %.12g (rel %.3g)  [%s]" % (
        "PASS" if ok else "FAIL", name, got if not isinstance(got, complex) else abs(got),
        want if not isinstance(want, complex) else abs(want),
        err / abs(want) if want else err, src))


NPN_CARD = dict(IS=5e-16, BF=150, VAF=70, RB=300, RBM=30, IRB=1e-4, RE=2, RC=10,
                CJE=1e-12, CJC=0.5e-12)
SRC_RB = "Getreu 1976 / Antognetti-Massobrio 1993 rbb law, solved here (gpref.py)"


def card_text(name, kind, card):
    return ".model %s %s (%s)" % (name, kind, " ".join(
        "%s=%.17g" % (k, v) for k, v in card.items()))


def ce_case(label, card):
    text = "\n".join([
        "strain-gauge amplifier input, %s" % label,
        card_text("qx", "NPN", card),
        "VCC vcc 0 DC 9",
        "VIN in 0 DC 0.86 AC 1",
        "RS in b 1k",
        "RL vcc c 2k",
        "RE1 e 0 47",
        "Q1 c b e qx",
        ".ac dec 2 1k 10g",
        ".noise v(c) VIN",
        TIGHT, ".end", ""])
    dev = gpref.Gp(card)
    net = gpref.Net()
    net.vsrc("vcc", 9.0)
    net.vsrc("in", 0.86, ac=1.0)
    net.r("in", "b", 1e3)
    net.r("vcc", "c", 2e3)
    net.r("e", "0", 47.0)
    net.q("q1", "c", "b", "e", "0", dev)
    return text, dev, net


def initial(net, guess):
    return [guess.get(n, 0.5) for n in net.nodes]


def compare_op(tag, net, x, op, transistors):
    v = net.volts(x)
    for n in net.nodes:
        if "." in n:
            continue
        check("%s v(%s)" % (tag, n), op["v(%s)" % n], v[n], 1e-9, 1e-12, SRC_RB)
    for name, bj in transistors:
        vbe, vbc, _, _ = net._jv(bj, v)
        ic, ib = bj["dev"].currents(vbe, vbc)
        pol = bj["dev"].pol
        check("%s ic(%s)" % (tag, name), op["ic(%s)" % name], pol * ic, 1e-9, 1e-18, SRC_RB)
        check("%s ib(%s)" % (tag, name), op["ib(%s)" % name], pol * ib, 1e-9, 1e-18, SRC_RB)


def noise_density(net, x, out_node, freqs):
    """Output noise density (V/sqrt(Hz)) at out_node, every source uncorrelated."""
    v = net.volts(x)
    t = net.bjts[0]["dev"].t
    srcs = []  # (node a, node b, A^2/Hz)
    for a, b, ohm in net.res:
        srcs.append((a, b, 4 * gpref.K * t / ohm))
    for bj in net.bjts:
        dev, p = bj["dev"], bj["dev"].p
        c, bb, e, s = bj["ext"]
        ci, bi, ei = bj["intn"]
        vbe, vbc, _, _ = net._jv(bj, v)
        ic, ib = dev.currents(vbe, vbc, 0.0)
        srcs.append((ci, ei, 2 * gpref.Q * abs(ic)))
        srcs.append((bi, ei, 2 * gpref.Q * abs(ib)))
        if p["RB"] > 0:
            srcs.append((bb, bi, 4 * gpref.K * t / dev.rbb(vbe, vbc)))
        for ext, inn, r in ((c, ci, p["RC"]), (e, ei, p["RE"])):
            if r > 0:
                srcs.append((ext, inn, 4 * gpref.K * t / r))
    g = net.jac(net.current, x)
    cm = net.jac(net.charge, x, h=1e-4)
    idx = dict((n, i) for i, n in enumerate(net.nodes))
    out = []
    for f in freqs:
        y = g + 2j * math.pi * f * cm
        yinv = np.linalg.inv(y)
        total = 0.0
        for a, b, s in srcs:
            z = (yinv[idx[out_node], idx[a]] if a in idx else 0.0) - (
                yinv[idx[out_node], idx[b]] if b in idx else 0.0)
            total += abs(z) ** 2 * s
        out.append(math.sqrt(total))
    return np.array(out)


def run_ce(binary, keep, label, card):
    text, dev, net = ce_case(label, card)
    out = gpref.run(binary, "ce_" + label.replace(" ", "_"), text, keep)
    x = net.op(initial(net, {"b": 0.8, "q1.b": 0.78, "c": 4.0, "q1.c": 4.0, "e": 0.07,
                             "q1.e": 0.07}))
    compare_op(label, net, x, gpref.read_op(out), [("q1", net.bjts[0])])
    v = net.volts(x)
    vbe, vbc, _, _ = net._jv(net.bjts[0], v)
    print("     (%s: rbb at the operating point %.6g ohm, RB %g, RBM %g)" % (
        label, dev.rbb(vbe, vbc), card["RB"], card["RBM"]))
    ac = gpref.read_csv(out + "/ac.csv")
    freqs = ac["freq_hz"]
    ref = net.ac(x, freqs)
    for node in ("b", "c", "e"):
        got = ac["vm(%s)" % node] * np.exp(1j * np.radians(ac["vp(%s)" % node]))
        worst = np.max(np.abs(got - ref[node]) / np.abs(ref[node]))
        check("%s ac v(%s) over %d points, worst" % (label, node, len(freqs)), 1.0 + worst, 1.0,
              1e-6, 0.0, SRC_RB + ", AC")
    nz = gpref.read_csv(out + "/noise.csv")
    want = noise_density(net, x, "c", nz["freq_hz"])
    worst = np.max(np.abs(nz["out_noise_v_rthz"] - want) / want)
    check("%s output noise density over %d points, worst" % (label, len(want)), 1.0 + worst,
          1.0, 1e-6, 0.0, SRC_RB + ", noise (4kT/rbb, 2q|I|)")


def run_pnp(binary, keep):
    card = dict(IS=3e-16, BF=90, VAF=40, RB=500, RBM=50, IRB=2e-5, RE=3, RC=20)
    text = "\n".join([
        "PNP level shifter with a falling base resistance",
        card_text("qp", "PNP", card),
        "VEE vee 0 DC 6",
        "VB bias 0 DC 5.1",
        "RS bias b 4.7k",
        "RE1 vee e 330",
        "RL c 0 3.3k",
        "Q2 c b e qp",
        TIGHT, ".end", ""])
    net = gpref.Net()
    net.vsrc("vee", 6.0)
    net.vsrc("bias", 5.1)
    net.r("bias", "b", 4.7e3)
    net.r("vee", "e", 330.0)
    net.r("c", "0", 3.3e3)
    net.q("q2", "c", "b", "e", "0", gpref.Gp(card, npn=False))
    out = gpref.run(binary, "pnp_irb", text, keep)
    x = net.op(initial(net, {"b": 5.05, "q2.b": 5.05, "e": 5.75, "q2.e": 5.75, "c": 2.0,
                             "q2.c": 2.0}))
    compare_op("pnp", net, x, gpref.read_op(out), [("q2", net.bjts[0])])


SI = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "k": 1e3}


def library_card(path):
    """The parameters of the one .model card in a models/ library file."""
    text = " ".join(l[1:] if l.startswith("+") else l for l in open(path).read().splitlines()
                    if l.strip() and not l.startswith("*"))
    body = text[text.index("(") + 1:text.rindex(")")]
    card = {}
    for item in body.split():
        k, v = item.split("=")
        card[k.upper()] = float(v[:-1]) * SI[v[-1]] if v[-1] in SI else float(v)
    return card


def run_library_card(binary, keep):
    """models/npn_rf.lib (an invented card using every new parameter) in a CE stage whose
    substrate is written as node 0: operating point, AC and noise against the reference."""
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "models",
                        "npn_rf.lib")
    card = library_card(path)
    text, dev, net = ce_case("npn_rf.lib", card)
    text = text.replace(card_text("qx", "NPN", card), ".include %s" % path).replace(
        "Q1 c b e qx", "Q1 c b e 0 ss_npn_rf")
    keep_text = text
    out = gpref.run(binary, "rf_card", keep_text, keep)
    x = net.op(initial(net, {"b": 0.8, "q1.b": 0.78, "c": 4.0, "q1.c": 4.0, "e": 0.07,
                             "q1.e": 0.07}))
    compare_op("npn_rf.lib", net, x, gpref.read_op(out), [("q1", net.bjts[0])])
    ac = gpref.read_csv(out + "/ac.csv")
    ref = net.ac(x, ac["freq_hz"])
    got = ac["vm(c)"] * np.exp(1j * np.radians(ac["vp(c)"]))
    worst = np.max(np.abs(got - ref["c"]) / np.abs(ref["c"]))
    check("npn_rf.lib ac v(c) over %d points, worst" % len(got), 1.0 + worst, 1.0, 1e-6, 0.0,
          SRC_RB + ", AC with every charge parameter")


# ---- closed form: V(b) - V(e) of a base-current-driven NPN -------------------------------
# Constants: the exact 2019 SI values k = 1.380649e-23 J/K and q = 1.602176634e-19 C (CODATA
# 2018), 0 C = 273.15 K, the same numbers the C uses (src/util/util.h).
K_B, Q_E, ZERO_C = 1.380649e-23, 1.602176634e-19, 273.15
SRC_CLOSED = ("closed form: Vbe = Vt ln(1 + Ib BF/IS) (Gummel-Poon with VAF, IKF infinite and "
              "ISE = 0; Gummel & Poon 1970) + Ib rbb(Ib), the SPICE2 Gummel-Poon base "
              "resistance law as given by Antognetti & Massobrio 1993")


def rbb_closed(ib, rb, rbm, irb):
    """rbb = RBM + 3 (RB - RBM)(tan z - z)/(z tan^2 z), z as published (written out here, not
    the C's rearranged form)."""
    z = (-1.0 + math.sqrt(1.0 + 144.0 * ib / (math.pi ** 2 * irb))) / (
        (24.0 / math.pi ** 2) * math.sqrt(ib / irb))
    return rbm + 3.0 * (rb - rbm) * (math.tan(z) - z) / (z * math.tan(z) ** 2)


def run_closed_form(binary, keep):
    """A current source drives Ib into the base, the emitter is grounded and the collector held
    at 5 V. With VAF and IKF not given (infinite), ISE = ISC = 0 and gmin 0, IB = IF/BF + IR/BR;
    the collector junction is reverse-biased, so IR = -IS and IR/BR shifts IF by IS BF/BR,
    below 1e-9 of BF Ib here (IS/(BR Ib) <= 1e-9 with IS 1e-16, BR 1, Ib >= 0.1 uA): its effect
    on V(b) is under Vt 1e-9, some 5e-11 relative. Ib over five decades, with the base
    resistance from near RB to near RBM."""
    card = dict(IS=1e-16, BF=120, RB=250, RBM=15, IRB=40e-6, BR=1)
    temp_c = 27.0
    vt = K_B * (temp_c + ZERO_C) / Q_E
    for ib in (1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2):
        text = "\n".join([
            "bridge sensor bias transistor, base current %g A" % ib,
            card_text("qx", "NPN", card),
            "VC c 0 DC 5",
            "IB 0 b DC %.17g" % ib,
            "Q1 c b 0 qx",
            ".op",
            TIGHT + " gmin=0", ".end", ""])
        out = gpref.run(binary, "closed_%g" % ib, text, keep)
        got = gpref.read_op(out)["v(b)"]
        rbb = rbb_closed(ib, card["RB"], card["RBM"], card["IRB"])
        want = vt * math.log(1.0 + ib * card["BF"] / card["IS"]) + ib * rbb
        check("closed form V(b) at Ib = %g A (rbb %.6g ohm)" % (ib, rbb), got, want, 1e-9,
              0.0, SRC_CLOSED)


def main():
    if len(sys.argv) < 2:
        print("usage: test_gp_rb.py STAGESIM")
        return 2
    binary = sys.argv[1]
    keep = []
    try:
        run_ce(binary, keep, "irb", NPN_CARD)
        qb_card = dict(NPN_CARD)
        del qb_card["IRB"]
        qb_card["IKF"] = 0.02
        run_ce(binary, keep, "qb form", qb_card)
        run_pnp(binary, keep)
        run_library_card(binary, keep)
        run_closed_form(binary, keep)
    finally:
        for d in keep:
            shutil.rmtree(d, ignore_errors=True)
    print("%d passed, %d failed" % (PASS[0], FAIL[0]))
    return 1 if FAIL[0] else 0


if __name__ == "__main__":
    sys.exit(main())
