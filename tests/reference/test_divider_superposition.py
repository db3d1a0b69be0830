#!/usr/bin/python3
"""Reference check: linear DC circuits - resistor dividers, superposition of several
sources, and the four controlled sources E (VCVS), F (CCCS), G (VCCS), H (CCVS).

Usage: test_divider_superposition.py PATH_TO_STAGESIM

Every expected value is computed here, independently of the solver, with standard
circuit theory (Kirchhoff's laws, Ohm's law, the superposition theorem; e.g. J. W.
Nilsson, S. A. Riedel, "Electric Circuits" - from memory): either a closed form derived
by hand, or numpy.linalg.solve of nodal / modified-nodal equations written out by hand
for that one circuit (MNA: Ho, Ruehli, Brennan, IEEE Trans. Circuits Syst. 22(6), 1975).
Where both exist they are compared with each other first ("selfcheck" lines).

Sign conventions checked (netlist language as documented): i(Vx) is the current entering
the source's + node and flowing through the source; an I, F or G source drives its current
from its n+ node through itself to its n- node; E: V(n+)-V(n-) = gain*(V(nc+)-V(nc-));
H: V(n+)-V(n-) = r*i(Vctrl).

The circuits are linear, so the solver's Newton loop has no reason to be inexact:
tolerance rel 1e-9 with an absolute floor of 1e-12 (V or A).
"""

import sys

import numpy as np

import refcommon as rc

REL, ABS = 1e-9, 1e-12
SRC_CF = "closed form by hand (KCL/Ohm)"
SRC_NP = "numpy.linalg.solve of hand-written nodal equations"
SRC_SUP = "superposition theorem (sum of single-source solver runs)"


def divider(exe):
    # strain-gauge excitation divider
    v1, r1, r2 = 10.0, 10e3, 4.7e3
    net = ("strain-gauge excitation divider\n"
           "VEXC exc 0 DC 10\n"
           "R1 exc mid 10k\n"
           "R2 mid 0 4.7kOhm\n"
           ".op\n.end\n")
    op = rc.run_op(exe, "divider", net)
    vmid = v1 * r2 / (r1 + r2)
    rc.check("divider v(exc)", rc.get(op, "v(exc)"), v1, REL, ABS, "source value")
    rc.check("divider v(mid)", rc.get(op, "v(mid)"), vmid, REL, ABS, SRC_CF + ": V R2/(R1+R2)")
    rc.check("divider i(vexc)", rc.get(op, "i(vexc)"), -v1 / (r1 + r2), REL, ABS,
             SRC_CF + ": -V/(R1+R2), current into + node")


def superposition(exe):
    # dual-rail sensor summing node: two voltage sources and a current source
    V1, V2, I1 = 5.0, -3.0, 200e-6
    R1, R2, R3, R4, R5 = 2.2e3, 3.3e3, 1e3, 4.7e3, 6.8e3

    def netlist(v1, v2, i1):
        return ("dual-rail sensor summing node\n"
                "VP a 0 DC %.17g\n"
                "VN b 0 DC %.17g\n"
                "IOFS 0 x DC %.17g\n"
                "R1 a x 2.2k\n"
                "R2 b x 3.3k\n"
                "R3 x 0 1k\n"
                "R4 x y 4.7k\n"
                "R5 y 0 6.8k\n"
                ".op\n.end\n" % (v1, v2, i1))

    def nodal(v1, v2, i1):
        # unknowns [vx, vy]; rows: KCL at x and y (currents leaving = injections)
        G = np.array([[1 / R1 + 1 / R2 + 1 / R3 + 1 / R4, -1 / R4],
                      [-1 / R4, 1 / R4 + 1 / R5]])
        b = np.array([v1 / R1 + v2 / R2 + i1, 0.0])
        return np.linalg.solve(G, b)

    full = nodal(V1, V2, I1)
    parts = [nodal(V1, 0, 0), nodal(0, V2, 0), nodal(0, 0, I1)]
    summed = sum(parts)
    # closed form for vx: Millman's theorem with the R4+R5 branch as one resistor
    gsum = 1 / R1 + 1 / R2 + 1 / R3 + 1 / (R4 + R5)
    vx_cf = (V1 / R1 + V2 / R2 + I1) / gsum
    rc.check("selfcheck: superposition vx", summed[0], full[0], 1e-13, 1e-15,
             "sum of single-source numpy solves vs full solve")
    rc.check("selfcheck: Millman vx", vx_cf, full[0], 1e-13, 1e-15,
             "Millman closed form vs numpy solve")

    op = rc.run_op(exe, "superpos_full", netlist(V1, V2, I1))
    vx, vy = full
    rc.check("superpos v(x)", rc.get(op, "v(x)"), vx, REL, ABS, SRC_NP)
    rc.check("superpos v(y)", rc.get(op, "v(y)"), vy, REL, ABS, SRC_NP)
    rc.check("superpos v(a)", rc.get(op, "v(a)"), V1, REL, ABS, "source value")
    rc.check("superpos v(b)", rc.get(op, "v(b)"), V2, REL, ABS, "source value")
    rc.check("superpos i(vp)", rc.get(op, "i(vp)"), -(V1 - vx) / R1, REL, ABS,
             SRC_NP + " + Ohm on R1")
    rc.check("superpos i(vn)", rc.get(op, "i(vn)"), -(V2 - vx) / R2, REL, ABS,
             SRC_NP + " + Ohm on R2")

    # the solver's own single-source runs must add up to its full run
    singles = [rc.run_op(exe, "superpos_v1", netlist(V1, 0, 0)),
               rc.run_op(exe, "superpos_v2", netlist(0, V2, 0)),
               rc.run_op(exe, "superpos_i1", netlist(0, 0, I1))]
    for k, part in enumerate(parts):
        nm = ("v1", "v2", "i1")[k]
        rc.check("superpos only-%s v(x)" % nm, rc.get(singles[k], "v(x)"), part[0], REL, ABS,
                 SRC_NP)
    for node in ("x", "y"):
        vals = [rc.get(s, "v(%s)" % node) for s in singles]
        got = None if any(v is None for v in vals) else sum(vals)
        ref = rc.get(op, "v(%s)" % node)
        rc.check("superpos sum of runs v(%s)" % node, got,
                 ref if ref is not None else float("nan"), REL, ABS, SRC_SUP)


def bridge(exe):
    # load-cell Wheatstone bridge with a meter resistance between the two midpoints
    V, R1, R2, R3, R4, RM = 5.0, 350.0, 351.2, 350.0, 348.9, 10e3
    net = ("load-cell bridge with detector\n"
           "VEXC exc 0 DC 5\n"
           "R1 exc p 350\n"
           "R2 p 0 351.2\n"
           "R3 exc n 350\n"
           "R4 n 0 348.9\n"
           "RM p n 10k\n"
           ".op\n.end\n")
    G = np.array([[1 / R1 + 1 / R2 + 1 / RM, -1 / RM],
                  [-1 / RM, 1 / R3 + 1 / R4 + 1 / RM]])
    vp, vn = np.linalg.solve(G, np.array([V / R1, V / R3]))
    # closed form: Thevenin of each half, then a divider through RM
    th_p, th_n = V * R2 / (R1 + R2), V * R4 / (R3 + R4)
    rp, rn = R1 * R2 / (R1 + R2), R3 * R4 / (R3 + R4)
    im = (th_p - th_n) / (rp + RM + rn)
    rc.check("selfcheck: bridge Thevenin v(p)-v(n)", im * RM, vp - vn, 1e-11, 1e-15,
             "Thevenin closed form vs numpy solve")
    op = rc.run_op(exe, "bridge", net)
    rc.check("bridge v(p)", rc.get(op, "v(p)"), vp, REL, ABS, SRC_NP)
    rc.check("bridge v(n)", rc.get(op, "v(n)"), vn, REL, ABS, SRC_NP)
    gp, gn = rc.get(op, "v(p)"), rc.get(op, "v(n)")
    rc.check("bridge v(p)-v(n)", None if gp is None or gn is None else gp - gn, vp - vn,
             1e-7, 1e-12, SRC_CF + ": Thevenin halves through RM")
    itot = (V - vp) / R1 + (V - vn) / R3
    rc.check("bridge i(vexc)", rc.get(op, "i(vexc)"), -itot, REL, ABS, SRC_NP + " + Ohm")


def vcvs(exe):
    # non-inverting buffer modelled by a finite-gain amplifier (E) with resistive feedback
    VIN, A, RF, RG = 0.25, 2e5, 90e3, 10e3  # RL 2k: an ideal E output is load-independent
    net = ("accelerometer buffer, finite-gain amplifier model\n"
           "VIN in 0 DC 0.25\n"
           "EAMP out 0 in fb 2e5\n"
           "RF out fb 90k\n"
           "RG fb 0 10k\n"
           "RL out 0 2k\n"
           ".op\n.end\n")
    beta = RG / (RF + RG)
    vout = A * VIN / (1 + A * beta)
    op = rc.run_op(exe, "vcvs", net)
    rc.check("vcvs v(out)", rc.get(op, "v(out)"), vout, REL, ABS,
             SRC_CF + ": A Vin/(1 + A RG/(RF+RG))")
    rc.check("vcvs v(fb)", rc.get(op, "v(fb)"), vout * beta, REL, ABS, SRC_CF + ": divider")
    rc.check("vcvs i(vin)", rc.get(op, "i(vin)"), 0.0, REL, ABS,
             "E input draws no current")


def cccs(exe):
    # current-mirror model: a sense source measures a reference current, F copies it x3
    VS, RS, K, RL = 9.0, 4.7e3, 3.0, 2.2e3
    net = ("bias current mirror model (CCCS)\n"
           "VSUP sup 0 DC 9\n"
           "RSET sup s 4.7k\n"
           "VSENSE s 0 DC 0\n"
           "FMIR 0 load VSENSE 3\n"
           "RL load sup 2.2k\n"
           ".op\n.end\n")
    iref = VS / RS
    # KCL at load: K*iref enters from F, leaves through RL to sup
    vload = VS + K * iref * RL
    op = rc.run_op(exe, "cccs", net)
    rc.check("cccs i(vsense)", rc.get(op, "i(vsense)"), iref, REL, ABS, SRC_CF + ": V/RSET")
    rc.check("cccs v(load)", rc.get(op, "v(load)"), vload, REL, ABS,
             SRC_CF + ": Vsup + K iref RL")
    # supply delivers iref through RSET and absorbs K*iref back from RL
    rc.check("cccs i(vsup)", rc.get(op, "i(vsup)"), -iref + K * iref, REL, ABS,
             SRC_CF + ": KCL at sup")


def vccs(exe):
    # transconductance block of a hydrophone preamp model
    VIN, GM, RL, VB = 0.1, 25e-3, 3.3e3, 6.0
    net = ("hydrophone preamp transconductance model (VCCS)\n"
           "VIN in 0 DC 0.1\n"
           "RIN in 0 10k\n"
           "GTR out 0 in 0 25m\n"
           "RL out vb 3.3k\n"
           "VB vb 0 DC 6\n"
           ".op\n.end\n")
    vout = VB - GM * VIN * RL
    op = rc.run_op(exe, "vccs", net)
    rc.check("vccs v(out)", rc.get(op, "v(out)"), vout, REL, ABS,
             SRC_CF + ": Vb - gm Vin RL (G current leaves n+)")
    rc.check("vccs i(vb)", rc.get(op, "i(vb)"), (vout - VB) / RL, REL, ABS,
             SRC_CF + ": RL current enters VB's + node")
    rc.check("vccs i(vin)", rc.get(op, "i(vin)"), -VIN / 10e3, REL, ABS, SRC_CF + ": RIN only")


def ccvs(exe):
    # photodiode transimpedance model: photocurrent sensed by a 0 V source, H converts it
    IPH, RT, VREF, RL = 5e-6, -200e3, 2.5, 10e3
    net = ("photodiode transimpedance model (CCVS)\n"
           "IPH 0 pd DC 5u\n"
           "VSENSE pd 0 DC 0\n"
           "RSH pd 0 1meg\n"
           "HTIA out ref VSENSE -200k\n"
           "VREF ref 0 DC 2.5\n"
           "RL out 0 10k\n"
           ".op\n.end\n")
    vout = VREF + RT * IPH
    op = rc.run_op(exe, "ccvs", net)
    rc.check("ccvs i(vsense)", rc.get(op, "i(vsense)"), IPH, REL, ABS,
             SRC_CF + ": all photocurrent through the 0 V sense source")
    rc.check("ccvs v(pd)", rc.get(op, "v(pd)"), 0.0, REL, ABS, "0 V source")
    rc.check("ccvs v(out)", rc.get(op, "v(out)"), vout, REL, ABS, SRC_CF + ": Vref + r i")
    rc.check("ccvs i(vref)", rc.get(op, "i(vref)"), -vout / RL, REL, ABS,
             SRC_CF + ": RL current returns through H into ref")


def mixed(exe):
    # sensor conditioning chain model with all four controlled sources
    V1, R1, R2, MU = 1.2, 1e3, 2e3, 3.0
    R3, R4, GM, R5, KF, R6, RH, R7 = 1.5e3, 2.2e3, 2e-3, 3.3e3, 4.0, 1e3, 500.0, 4.7e3
    net = ("sensor conditioning chain model, E F G H together\n"
           "V1 in 0 DC 1.2\n"
           "R1 in a 1k\n"
           "R2 a 0 2k\n"
           "E1 b 0 a 0 3\n"
           "R3 b c 1.5k\n"
           "VS c d DC 0\n"
           "R4 d 0 2.2k\n"
           "G1 0 e a d 2m\n"
           "R5 e 0 3.3k\n"
           "F1 0 f VS 4\n"
           "R6 f e 1k\n"
           "H1 g 0 VS 500\n"
           "R7 g e 4.7k\n"
           ".op\n.end\n")
    # hand-written MNA: x = [vin va vb vc vd ve vf vg iV1 iE1 iVS iH1]
    n = 12
    A = np.zeros((n, n))
    z = np.zeros(n)
    IN, VA, VB, VC, VD, VE, VF, VG, JV1, JE1, JVS, JH1 = range(n)
    g1, g2, g3, g4, g5, g6, g7 = 1 / R1, 1 / R2, 1 / R3, 1 / R4, 1 / R5, 1 / R6, 1 / R7
    # KCL rows: sum of currents leaving the node = 0
    A[IN, [IN, VA, JV1]] = [g1, -g1, 1]                  # in: R1, V1 branch
    A[VA, [VA, IN]] = [g1 + g2, -g1]                     # a: R1, R2
    A[VB, [VB, VC, JE1]] = [g3, -g3, 1]                  # b: R3, E1 branch
    A[VC, [VC, VB, JVS]] = [g3, -g3, 1]                  # c: R3, VS branch
    A[VD, [VD, JVS]] = [g4, -1]                          # d: R4, VS branch enters
    A[VE, [VE, VF, VG]] = [g5 + g6 + g7, -g6, -g7]       # e: R5, R6, R7 ...
    A[VE, VA] += -GM                                     # ... G1 injects gm (va - vd)
    A[VE, VD] += GM
    A[VF, [VF, VE, JVS]] = [g6, -g6, -KF]                # f: R6, F1 injects KF iVS
    A[VG, [VG, VE, JH1]] = [g7, -g7, 1]                  # g: R7, H1 branch
    # branch equations
    A[JV1, IN] = 1
    z[JV1] = V1                                          # vin = V1
    A[JE1, [VB, VA]] = [1, -MU]                          # vb = mu va
    A[JVS, [VC, VD]] = [1, -1]                           # vc = vd
    A[JH1, [VG, JVS]] = [1, -RH]                         # vg = r iVS
    x = np.linalg.solve(A, z)
    # closed form, eliminating by hand
    va = V1 * R2 / (R1 + R2)
    vb = MU * va
    i = vb / (R3 + R4)
    vd = i * R4
    vg = RH * i
    ve = (GM * (va - vd) + KF * i + vg / R7) / (1 / R5 + 1 / R7)
    vf = ve + KF * i * R6
    for k, v in ((VA, va), (VB, vb), (VD, vd), (VE, ve), (VF, vf), (VG, vg), (JVS, i)):
        rc.check("selfcheck: mixed unknown %d" % k, x[k], v, 1e-12, 1e-15,
                 "closed form vs numpy MNA solve")
    op = rc.run_op(exe, "mixed", net)
    for name, k in (("in", IN), ("a", VA), ("b", VB), ("c", VC), ("d", VD), ("e", VE),
                    ("f", VF), ("g", VG)):
        rc.check("mixed v(%s)" % name, rc.get(op, "v(%s)" % name), x[k], REL, ABS,
                 "numpy.linalg.solve of hand-written MNA equations")
    rc.check("mixed i(v1)", rc.get(op, "i(v1)"), x[JV1], REL, ABS,
             "numpy.linalg.solve of hand-written MNA equations")
    rc.check("mixed i(vs)", rc.get(op, "i(vs)"), x[JVS], REL, ABS,
             "numpy.linalg.solve of hand-written MNA equations")


def main():
    exe = rc.binary_from_argv()
    divider(exe)
    superposition(exe)
    bridge(exe)
    vcvs(exe)
    cccs(exe)
    vccs(exe)
    ccvs(exe)
    mixed(exe)
    rc.finish()


if __name__ == "__main__":
    sys.exit(main())
