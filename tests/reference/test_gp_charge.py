#!/usr/bin/python3
"""Reference check: the charge parameters of the Gummel-Poon model - the bias-dependent
transit time (XTF VTF ITF), excess phase (PTF), the split of CJC (XCJC), the
collector-substrate capacitance on the fourth node (CJS VJS MJS), the reverse transit time
(TR) and the temperature laws of VJS/CJS - in the AC response (ac.csv), the stage figures
(stage.csv: gain, |Zin|, |Zout|) and the transient, solved independently (gpref.py).

Usage: test_gp_charge.py PATH_TO_STAGESIM

Sources of the expected values (from memory; docs/models.md sections 4-6): I. Getreu,
"Modeling the Bipolar Transistor" (1976) and P. Antognetti, G. Massobrio, "Semiconductor
Device Modeling with SPICE", 2nd ed. 1993, ch. 2:
  Qf = TF (1 + XTF (IF/(IF + ITF))^2 exp(Vbc/(1.44 VTF))) IF/qb,  Qr = TR IR,
  XCJC CJC at b', (1 - XCJC) CJC from b to c', CJS from s to c' (FC = 0),
  excess phase exp(-j w PTF (pi/180) TF) on d((IF - IR)/qb)/dVbe (AC only),
  VJ(T), CJ(T) after Getreu with EG(T) of Varshni 1967.
The reference builds its small-signal matrix from central differences of the charges and
currents it computes itself (charges in closed form, checked here against numerical
integration of the capacitance) and integrates the transient with its own fixed-step
trapezoidal rule.

Circuits (own scenarios, invented cards): the first stage of a 433 MHz receiver front end
(NPN with every charge parameter, the substrate at -2 V), the same transistor driven into
saturation (TR matters), and the front end at .temp 85 and -20; the transient also with RBM and IRB added.
Tolerances: AC node phasors and stage figures 1e-6 relative; transient: stagesim at tran_tol_rel 1e-9 against
a trapezoidal reference at 2 ps steps, |error| <= 1e-5 x the output swing + 1e-7 V at every
output time (both integrators' errors are far below that; measured values are printed).
"""

import math
import shutil
import sys

import numpy as np

import gpref

PASS, FAIL = [0], [0]
TIGHT = ".options tol_rel=1e-12 tol_v=1e-12 tol_i=1e-16"
SRC = "Getreu 1976 / Antognetti-Massobrio 1993 charges, solved here (gpref.py)"

CARD = dict(IS=4e-16, BF=110, VAF=45, IKF=0.03, RB=60, RE=1.5, RC=8, CJE=0.6e-12,
            VJE=0.8, MJE=0.38, CJC=0.35e-12, VJC=0.65, MJC=0.4, XCJC=0.4, CJS=0.5e-12,
            VJS=0.55, MJS=0.35, TF=25e-12, XTF=6, VTF=1.8, ITF=0.02, PTF=35, TR=3e-9)


def check(name, ok, detail, src=SRC):
    (PASS if ok else FAIL)[0] += 1
    print("%s %s: %s  [%s]" % ("PASS" if ok else "FAIL", name, detail, src))


def netlist(title, vin_dc, rl, extra):
    return "\n".join([
        title,
        ".model qrf NPN (%s)" % " ".join("%s=%.17g" % kv for kv in CARD.items()),
        "VCC vcc 0 DC 5",
        "VSUB sub 0 DC -2",
        "VIN in 0 DC %.17g AC 1" % vin_dc,
        "RS in b 50",
        "RL vcc c %.17g" % rl,
        "RE1 e 0 10",
        "Q1 c b e sub qrf"] + extra + [TIGHT, ".end", ""])


def reference(vin_dc, rl, temp_c=27.0, wave=None):
    net = gpref.Net(temp_c)
    net.vsrc("vcc", 5.0)
    net.vsrc("sub", -2.0)
    net.vsrc("in", vin_dc, ac=1.0, wave=wave)
    net.r("in", "b", 50.0)
    net.r("vcc", "c", rl)
    net.r("e", "0", 10.0)
    net.q("q1", "c", "b", "e", "sub", gpref.Gp(CARD, temp_c=temp_c))
    return net


def x0(net, vin_dc, vc=3.0):
    g = {"b": vin_dc, "q1.b": vin_dc, "e": vin_dc - 0.78, "q1.e": vin_dc - 0.78,
         "c": vc, "q1.c": vc}
    return [g.get(n, 0.5) for n in net.nodes]


def ac_case(binary, keep, tag, vin_dc, rl, temp_c=27.0):
    extra = [".ac dec 4 1meg 20g", ".stage in=VIN out=c"]
    if temp_c != 27.0:
        extra.append(".temp %g" % temp_c)
    out = gpref.run(binary, tag, netlist("433 MHz front end, " + tag, vin_dc, rl, extra), keep)
    net = reference(vin_dc, rl, temp_c)
    x = net.op(x0(net, vin_dc, 3.0 if rl < 1e3 else vin_dc - 0.7))
    v = net.volts(x)
    vbe, vbc, _, _ = net._jv(net.bjts[0], v)
    print("     (%s: Vb'e' %.4f V, Vb'c' %.4f V)" % (tag, vbe, vbc))
    ac = gpref.read_csv(out + "/ac.csv")
    ref = net.ac(x, ac["freq_hz"])
    for node in ("b", "c", "e"):
        got = ac["vm(%s)" % node] * np.exp(1j * np.radians(ac["vp(%s)" % node]))
        worst = float(np.max(np.abs(got - ref[node]) / np.abs(ref[node])))
        check("%s ac v(%s), %d points 1 MHz-20 GHz" % (tag, node, len(got)), worst <= 1e-6,
              "worst relative error %.3g (tol 1e-6)" % worst)
    # the stage figures: gain = v(c)/EMF, Zin = EMF / the current the source delivers
    # through RS, Zout = v(c) per 1 A injected into c with the sources' AC values 0
    st = gpref.read_csv(out + "/stage.csv")
    zout = net.ac(x, st["freq_hz"], inject="c")["c"]
    ref_st = net.ac(x, st["freq_hz"])
    gain = st["gain"] * np.exp(1j * np.radians(st["phase_deg"]))
    zin = 1.0 / ((1.0 - ref_st["b"]) / 50.0)
    for what, got, want in (("gain", gain, ref_st["c"]), ("|zin|", st["zin_ohm"], np.abs(zin)),
                            ("|zout|", st["zout_ohm"], np.abs(zout))):
        worst = float(np.max(np.abs(got - want) / np.abs(want)))
        check("%s stage %s, %d points" % (tag, what, len(got)), worst <= 1e-6,
              "worst relative error %.3g (tol 1e-6)" % worst)
    return net, x


def tran_case(binary, keep, tag="tran"):
    vin_dc, rl, amp, f = 0.86, 470.0, 0.01, 200e6
    extra = [".tran 0.1n 10n", ".options tran_tol_rel=1e-9 tran_tol_v=1e-11"]
    text = netlist("433 MHz front end, transient", vin_dc, rl, extra)
    text = text.replace("VIN in 0 DC %.17g AC 1" % vin_dc,
                        "VIN in 0 DC %.17g AC 1 SIN(%.17g %g %g)" % (vin_dc, vin_dc, amp, f))
    out = gpref.run(binary, tag, text, keep)
    wave = lambda t: vin_dc + amp * math.sin(2 * math.pi * f * t)
    net = reference(vin_dc, rl, wave=wave)
    x = net.op(x0(net, vin_dc))
    ts, xs = net.tran(x, 10e-9, 2e-12)
    tr = gpref.read_csv(out + "/tran.csv")
    ic = net.nodes.index("c")
    ref_c = np.interp(tr["time_s"], ts, xs[:, ic])
    swing = float(np.max(ref_c) - np.min(ref_c))
    err = float(np.max(np.abs(tr["v(c)"] - ref_c)))
    tol = 1e-5 * swing + 1e-7
    check("%s v(c), %d output times" % (tag, len(ref_c)), err <= tol,
          "largest error %.3g V, swing %.4g V (tol %.3g V)" % (err, swing, tol),
          SRC + ", trapezoidal reference at 2 ps")


def main():
    if len(sys.argv) < 2:
        print("usage: test_gp_charge.py STAGESIM")
        return 2
    binary = sys.argv[1]
    keep = []
    try:
        # the closed-form depletion charges of the reference against numerical integration
        dep = gpref.Gp.depletion
        quad = gpref.Gp.depletion_by_quad
        worst = max(abs(dep(v, 1e-12, 0.7, m, fc) - quad(v, 1e-12, 0.7, m, fc)) / 1e-12
                    for v in (-3.0, -0.2, 0.2, 0.5, 0.9) for m in (0.0, 0.33, 0.5)
                    for fc in (0.0, 0.5))
        check("reference depletion charge closed form vs quad", worst < 1e-12,
              "worst difference %.3g C per F of CJ" % worst, "scipy.integrate.quad")
        ac_case(binary, keep, "active", 0.86, 470.0)
        ac_case(binary, keep, "saturated", 0.95, 4.7e3)
        ac_case(binary, keep, "hot", 0.80, 470.0, temp_c=85.0)
        ac_case(binary, keep, "cold", 0.92, 470.0, temp_c=-20.0)
        tran_case(binary, keep)
        CARD.update(RBM=12.0, IRB=2e-4)  # the falling base resistance in the transient too
        tran_case(binary, keep, "tran with irb")
    finally:
        for d in keep:
            shutil.rmtree(d, ignore_errors=True)
    print("%d passed, %d failed" % (PASS[0], FAIL[0]))
    return 1 if FAIL[0] else 0


if __name__ == "__main__":
    sys.exit(main())
