#!/usr/bin/python3
"""Reference check: level-1 MOSFET stages solved here from the equations alone.

Usage: test_mosfet_square_law.py PATH_TO_STAGESIM

Source of the equations: H. Shichman and D. A. Hodges, "Modeling and simulation of
insulated-gate field-effect transistor switching circuits", IEEE J. Solid-State Circuits
SC-3(3):285-289, 1968 (the square law), with the body-effect threshold and channel-length
modulation as P. Antognetti and G. Massobrio, Semiconductor Device Modeling with SPICE,
2nd ed., McGraw-Hill 1993, ch. 4, write them:
    Vth = VTO + GAMMA (sqrt(PHI - Vbs) - sqrt(PHI))
    saturation (Vds >= Vgs - Vth): Id = KP/2 W/L (1 + LAMBDA Vds) (Vgs - Vth)^2
    linear: Id = KP W/L (1 + LAMBDA Vds) (Vgs - Vth - Vds/2) Vds
The bulk junctions are ideal diodes IS (exp(V/Vt) - 1) with GMIN = 1e-12 S across each
(docs/models.md, sections 7 and 10); at these biases they are reverse-biased and move the
answers by ~1e-8 relative, so they are included to compare at 1e-9.

Cases (27 degC):
  * a source follower: drain at 10 V, gate at 5 V, source to ground through 10 kOhm, bulk
    grounded (so the body effect acts): the one unknown v(s) by brentq on its KCL;
  * a common-source stage: 10 V through RD = 10 kOhm to the drain, gate at 2.5 V, source
    grounded, bulk at -1 V: the unknown v(d);
  * the PMOS mirror image of the follower (every voltage negated, VTO -> -VTO).
Each is compared to op.csv at tight Newton tolerances (rel 1e-9). The follower's mid-band
gain is compared with the small-signal form vs/vg = gm RS'/(1 + (gm + gmb) RS'),
1/RS' = 1/RS + gds + gbs (the source node's KCL with the hybrid model; e.g. P. R. Gray,
P. J. Hurst, S. H. Lewis, R. G. Meyer, Analysis and Design of Analog Integrated Circuits,
5th ed., 2009, sec. 3.3.7 -- from memory), with gm, gmb, gds the derivatives of the
equations above at the operating point solved here.
"""

import math
import os
import sys

from scipy.optimize import brentq

import refcommon as rc

GMIN = 1e-12
VT = rc.vt(rc.kelvin(rc.TNOM_C))
M = dict(vto=1.0, kp=2e-5, gamma=0.5, phi=0.6, lam=0.02, is_=1e-14)
W, L = 100e-6, 10e-6
CARD = "vto=1 kp=2e-5 gamma=0.5 phi=0.6 lambda=0.02 is=1e-14"


def vth(vbs):
    return M["vto"] + M["gamma"] * (math.sqrt(M["phi"] - vbs) - math.sqrt(M["phi"]))


def ids(vgs, vds, vbs):
    """Channel current drain to source (N sense, vds >= 0) with gm, gds, gmb."""
    beta = M["kp"] * W / L
    vgst = vgs - vth(vbs)
    if vgst <= 0:
        return 0.0, 0.0, 0.0, 0.0
    cl = 1 + M["lam"] * vds
    if vds >= vgst:
        i = beta / 2 * vgst ** 2 * cl
        gm = beta * vgst * cl
        gds = beta / 2 * vgst ** 2 * M["lam"]
    else:
        i = beta * (vgst - vds / 2) * vds * cl
        gm = beta * vds * cl
        gds = beta * (vgst - vds) * cl + beta * M["lam"] * vds * (vgst - vds / 2)
    gmb = gm * M["gamma"] / (2 * math.sqrt(M["phi"] - vbs))
    return i, gm, gds, gmb


def diode(v):
    """Bulk junction current (bulk to drain or source) with GMIN, and its conductance."""
    e = math.expm1(v / VT)
    return M["is_"] * e + GMIN * v, M["is_"] * (e + 1) / VT + GMIN


def follower(sign):
    rs = 10e3
    # KCL at s (N sense): Id + Ibs = vs / RS; vgs = 5 - vs, vds = 10 - vs, vbs = -vs
    f = lambda vs: ids(5 - vs, 10 - vs, -vs)[0] + diode(-vs)[0] - vs / rs
    vs = brentq(f, 0.0, 5.0, xtol=1e-15, rtol=1e-15)
    netlist = ("mos follower\n.model mm %s (%s)\nvdd dd 0 %g\nvin g 0 %g ac 1\n"
               "m1 dd g s 0 mm w=100u l=10u\nrs s 0 10k\n.ac dec 1 1k 1k\n"
               ".stage in=vin out=s\n"
               % ("nmos" if sign > 0 else "pmos",
                  CARD if sign > 0 else CARD.replace("vto=1", "vto=-1"), 10 * sign, 5 * sign))
    return vs, netlist


def main():
    binary = rc.binary_from_argv()
    src = "Shichman-Hodges 1968; Antognetti-Massobrio 1993 ch. 4; solved by brentq"
    for sign, name in ((1, "nmos"), (-1, "pmos")):
        vs, text = follower(sign)
        op = rc.run_op(binary, "follower_" + name, text, options=rc.TIGHT_OPTIONS)
        rc.check("%s follower v(s)" % name, rc.get(op, "v(s)"), sign * vs, 1e-9, 1e-12, src)
        i, gm, gds, gmb = ids(5 - vs, 10 - vs, -vs)
        # id(m1) is the drain terminal's current: the channel less the bulk-drain junction's
        # (Vbd = -10 V: -IS - 10 GMIN)
        rc.check("%s follower id(m1)" % name, rc.get(op, "id(m1)"),
                 sign * (i - diode(-10.0)[0]), 1e-9, 1e-18, src)
        rc.check("%s follower vth(m1)" % name, rc.get(op, "vth(m1)"), sign * vth(-vs), 1e-12,
                 0, src)
        rc.check("%s follower gm(m1)" % name, rc.get(op, "gm(m1)"), gm, 1e-9, 0, src)
        rc.check("%s follower gmb(m1)" % name, rc.get(op, "gmb(m1)"), gmb, 1e-9, 0, src)
        rc.check("%s follower gds(m1)" % name, rc.get(op, "gds(m1)"), gds, 1e-9, 0, src)
        gbs = diode(-vs)[1]
        rsp = 1 / (1 / 10e3 + gds + gbs)
        gain = gm * rsp / (1 + (gm + gmb) * rsp)
        outdir = os.path.join(rc._tmpdirs[-1], "out")
        summary = {}
        with open(os.path.join(outdir, "stage_summary.csv")) as f:
            for line in f.read().splitlines()[1:]:
                k, v = line.split(",")
                summary[k] = float(v) if v else float("nan")
        rc.check("%s follower gain_mid_db" % name, summary.get("gain_mid_db"),
                 20 * math.log10(gain), 1e-7, 0,
                 "gm RS'/(1 + (gm + gmb) RS') from the derivatives of the square law")

    # common source: KCL at d: (10 - vd)/RD = Id - Ibd, vgs = 2.5, vbs = -1, vbd = -1 - vd
    rd = 10e3
    f = lambda vd: (10 - vd) / rd - ids(2.5, vd, -1.0)[0] + diode(-1.0 - vd)[0]
    vd = brentq(f, 0.0, 10.0, xtol=1e-15, rtol=1e-15)
    text = ("mos common source\n.model mm nmos (%s)\nvdd dd 0 10\nvg g 0 2.5\nvb b 0 -1\n"
            "rd dd d 10k\nm1 d g 0 b mm w=100u l=10u\n" % CARD)
    op = rc.run_op(binary, "common_source", text, options=rc.TIGHT_OPTIONS)
    rc.check("common source v(d)", rc.get(op, "v(d)"), vd, 1e-9, 1e-12, src)
    i, gm, gds, gmb = ids(2.5, vd, -1.0)
    rc.check("common source gm(m1)", rc.get(op, "gm(m1)"), gm, 1e-9, 0, src)
    rc.check("common source region(m1)", rc.get(op, "region(m1)"),
             2.0 if vd >= 2.5 - vth(-1.0) else 1.0, 0, 0, "saturation when Vds >= Vgs - Vth")
    rc.finish()


if __name__ == "__main__":
    main()
