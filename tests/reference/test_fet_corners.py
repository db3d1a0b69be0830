#!/usr/bin/python3
"""Reference check: the spread and temperature corners of `stagesim sensitivity` (corners.csv)
for FET stages -- an N- and a P-channel JFET and an N- and a P-channel MOSFET, each a
common-source stage with a source resistor -- against the square law solved here with scipy,
sharing no code with the C solver.

Usage: test_fet_corners.py PATH_TO_STAGESIM

What the corners are (docs/studies.md): every spread parameter of a model at the end that
lowers the transistor's drain current (the low corner) or raises it (the high corner): BETA
and KP halved and doubled, VTO moved by 50 % of its magnitude -- or, when a parameter has a
tolerance, its tolerance limits -- each at the two corner temperatures.

Equations, N-channel sense (H. Shichman, D. A. Hodges, IEEE J. Solid-State Circuits SC-3(3),
285-289, 1968; the JFET and level-1 MOSFET parameterisations of P. Antognetti, G. Massobrio,
Semiconductor Device Modeling with SPICE, 2nd ed., McGraw-Hill 1993 -- as docs/models.md
sections 10 and 11 write them), LAMBDA = 0, u = Vgs - VTO:
    JFET    saturation (0 < u <= Vds): Id = BETA u^2,  linear: Id = BETA Vds (2u - Vds)
    MOSFET  saturation (0 < u <= Vds): Id = KP W/L / 2 u^2,  linear: Id = KP W/L (u - Vds/2) Vds
A P-channel device is the N-channel one with every voltage and current negated; the JFET's
VTO is written in N-channel sense for both types, the MOSFET's in its own terminal sign.
Neither model has a temperature law for VTO, BETA or KP, so both temperatures give the same
drain current (the gate and bulk junctions' leakage is below 1e-10 of it). With the gate at a
fixed voltage and Vgs = VG - Id RS, Vds = VDD - Id (RD + RS), Kirchhoff's voltage law leaves
one equation in Id, monotonic, solved by scipy.optimize.brentq; the saturated cases are also
checked against the closed form of the quadratic, Id from a u^2 + u - (VG - VTO) = 0 with
a = RS BETA (JFET) or RS KP W/L / 2 (MOSFET). Tolerance 1e-4 relative.

The second part checks the columns: a circuit of BJTs alone keeps the BJT's columns, a
mixed circuit has the BJT's and the FETs' side by side, each row filled in its own kind's.
"""

import csv
import math
import os
import subprocess
import sys
import tempfile

try:
    from scipy.optimize import brentq
except ImportError:
    print("0 passed, 0 failed, 1 skipped (needs python3-scipy)")
    sys.exit(77)

import refcommon as rc

BIN = rc.binary_from_argv()
TEMPS = (-40.0, 85.0)
SRC_SQ = "Shichman-Hodges square law, scipy brentq"
SRC_CF = "quadratic in u, closed form"

NETLIST = """FET stages for the spread corners (our own bias points)
VDD1 dd1 0 15
RD1 dd1 d1 2.2k
J1 d1 g1 s1 jn
RS1 s1 0 1k
VG1 g1 0 0
.model jn njf(vto=-2 beta=1.3m)
VDD2 dd2 0 12
RD2 dd2 d2 10k
M1 d2 g2 s2 s2 mn w=100u l=10u
RS2 s2 0 470
VG2 g2 0 3
.model mn nmos(level=1 vto=1.2 kp=50u)
VDD3 dd3 0 12
RS3 dd3 s3 470
M2 d3 g3 s3 s3 mp w=100u l=10u
RD3 d3 0 4.7k
VG3 g3 0 9
.model mp pmos(level=1 vto=-1.2 kp=50u)
VDD4 dd4 0 15
RS4 dd4 s4 1k
J2 d4 g4 s4 jp
RD4 d4 0 2.2k
VG4 g4 0 15
.model jp pjf(vto=-2 beta=1.3m)
.tolerance mn.vto 1.0 .. 1.5
.tolerance mp.vto -1.5 .. -1.0
.op
.end
"""

# per transistor, in N-channel sense: kind, polarity, VDD, RD, RS, VG - (source supply), the
# low- and high-current (beta, vto) of the corners
STAGES = {
    # nominal BETA 1.3m, VTO -2: BETA halved / doubled, VTO -2 +- 1 (the end nearer 0 conducts
    # less)
    "j1": ("jfet", 1, 15.0, 2.2e3, 1e3, 0.0, [(0.65e-3, -1.0), (2.6e-3, -3.0)]),
    # the P-channel JFET: VTO in N-channel sense as for J1, the same corners
    "j2": ("jfet", -1, 15.0, 2.2e3, 1e3, 0.0, [(0.65e-3, -1.0), (2.6e-3, -3.0)]),
    # KP W/L = 50u * 10 halved / doubled; VTO from its tolerance 1.0 .. 1.5 (1.5 conducts less)
    "m1": ("mos", 1, 12.0, 10e3, 470.0, 3.0, [(2.5e-4, 1.5), (1e-3, 1.0)]),
    # the PMOS: VTO -1.5 .. -1.0 in its own sign, magnitude 1.5 conducts less
    "m2": ("mos", -1, 12.0, 4.7e3, 470.0, 3.0, [(2.5e-4, 1.5), (1e-3, 1.0)]),
}


def channel(kind, beta, vto, vgs, vds):
    """Drain current (N sense, Vds >= 0) and whether in saturation."""
    u = vgs - vto
    if u <= 0:
        return 0.0, False
    if kind == "jfet":
        return (beta * u * u, True) if vds >= u else (beta * vds * (2 * u - vds), False)
    return (beta / 2 * u * u, True) if vds >= u else (beta * (u - vds / 2) * vds, False)


def solve(stage, corner):
    kind, _, vdd, rd, rs, vg, spread = stage
    beta, vto = spread[corner]

    def f(i):
        return i - channel(kind, beta, vto, vg - i * rs, vdd - i * (rd + rs))[0]

    i = brentq(f, 0.0, vdd / (rd + rs), xtol=1e-18, rtol=1e-14, maxiter=500)
    vds = vdd - i * (rd + rs)
    sat = channel(kind, beta, vto, vg - i * rs, vds)[1]
    return i, vds, sat


def closed_form(stage, corner):
    kind, _, _, _, rs, vg, spread = stage
    beta, vto = spread[corner]
    a = rs * beta if kind == "jfet" else rs * beta / 2
    u = (-1 + math.sqrt(1 + 4 * a * (vg - vto))) / (2 * a)
    return beta * u * u if kind == "jfet" else beta / 2 * u * u


def sensitivity(name, text):
    d = tempfile.mkdtemp(prefix="ssref_%s_" % name)
    rc._tmpdirs.append(d)
    cir = os.path.join(d, name + ".cir")
    with open(cir, "w") as f:
        f.write(text)
    p = subprocess.run([BIN, "sensitivity", cir, "-o", os.path.join(d, "out"), "-q",
                        "--temps", "%g,%g" % TEMPS], capture_output=True, text=True,
                       timeout=120)
    path = os.path.join(d, "out", "corners.csv")
    if p.returncode != 0 or not os.path.isfile(path):
        rc.check("%s: sensitivity ran (exit %d: %s)" % (name, p.returncode, p.stderr.strip()),
                 None, 0.0, 0, 0, "exit 0")
        return None, {}
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], {r[0]: r[1:] for r in rows[1:]}


def num(cell):
    return float(cell) if cell != "" else float("nan")


header, rows = sensitivity("fet_corners", NETLIST)
if header is not None:
    rc.check("FET circuit: corners.csv columns "
             + ",".join(header), float(header == ["corner", "temp_c", "beta_corner", "id_a",
                                                  "vds_v", "saturation"]), 1.0, 0, 0,
             "docs/studies.md")
    for name, st in STAGES.items():
        pol = st[1]
        for corner, word in ((0, "low"), (1, "high")):
            i_ref, vds_ref, sat_ref = solve(st, corner)
            for t in TEMPS:
                label = "%s current %s, %g C" % (name, word, t)
                r = rows.get(label)
                if r is None:
                    rc.check(label + ": row present", None, 1.0, 0, 0, "corners.csv")
                    continue
                rc.check(label + ": beta_corner", num(r[1]), 1.0 if corner else -1.0, 0, 0,
                         "docs/studies.md")
                rc.check(label + ": id_a", num(r[2]), pol * i_ref, 1e-4, 0, SRC_SQ)
                rc.check(label + ": vds_v", num(r[3]), pol * vds_ref, 1e-4, 0, SRC_SQ)
                rc.check(label + ": saturation", num(r[4]), 1.0 if sat_ref else 0.0, 0, 0,
                         "Vds >= Vgs - VTO")
            if sat_ref:
                rc.check("%s %s: closed form agrees with the root" % (name, word),
                         i_ref, closed_form(st, corner), 1e-10, 0, SRC_CF)
    # the high corner of M1 pulls it out of saturation: the flag must say so
    rc.check("m1 current high: out of saturation by the reference", float(solve(
        STAGES["m1"], 1)[2]), 0.0, 0, 0, SRC_SQ)

# a circuit of BJTs alone: the columns corners.csv always had
BJT_ONLY = """BJT stage (our own)
VCC c 0 10
RC c col 4.7k
RB c b 1meg
Q1 col b 0 qn
.model qn npn(is=1e-15 bf=150)
.tolerance rc 5%
.end
"""
header, rows = sensitivity("bjt_corners", BJT_ONLY)
if header is not None:
    rc.check("BJT circuit: corners.csv columns " + ",".join(header),
             float(header == ["corner", "temp_c", "beta_corner", "ic_a", "vce_v",
                              "forward_active"]), 1.0, 0, 0, "unchanged for BJT circuits")
    rc.check("BJT circuit: row labels", float(sorted(rows) == sorted(
        "q1 beta %s, %g C" % (w, t) for w in ("low", "high") for t in TEMPS)), 1.0, 0, 0,
        "unchanged for BJT circuits")

# mixed: the BJT's columns, then the FETs' (one set for both FET kinds); each row in its own
MIXED = BJT_ONLY.replace(".end\n", "VDD dd 0 15\nRD dd d 2.2k\nJ1 d 0 s jn\nRS s 0 1k\n"
                         ".model jn njf(vto=-2 beta=1.3m)\nVG2 g2 0 3\nRD2 c d2 10k\n"
                         "M1 d2 g2 s2 s2 mn w=100u l=10u\nRS2 s2 0 470\n"
                         ".model mn nmos(level=1 vto=1.2 kp=50u)\n.end\n")
header, rows = sensitivity("mixed_corners", MIXED)
if header is not None:
    rc.check("mixed circuit: corners.csv columns " + ",".join(header),
             float(header == ["corner", "temp_c", "beta_corner", "ic_a", "vce_v",
                              "forward_active", "id_a", "vds_v", "saturation"]), 1.0, 0, 0,
             "docs/studies.md")
    q = rows.get("q1 beta low, -40 C", [""] * 8)
    j = rows.get("j1 current high, 85 C", [""] * 8)
    m = rows.get("m1 current low, 85 C", [""] * 8)
    rc.check("mixed: the BJT row fills only its own columns",
             float(q[2] != "" and all(c == "" for c in q[5:8])), 1.0, 0, 0, "docs/studies.md")
    rc.check("mixed: the FET rows fill only theirs",
             float(all(c == "" for c in j[2:5] + m[2:5]) and j[5] != "" and m[5] != ""), 1.0,
             0, 0, "docs/studies.md")
    i_ref = solve(STAGES["j1"], 1)[0]
    rc.check("mixed: j1 current high id_a", num(j[5]), i_ref, 1e-4, 0, SRC_SQ)

rc.finish()
