#!/usr/bin/python3
"""Reference check: a self-biased N-channel JFET common-source stage (source resistor, drain
resistor, gate returned to the input through RG), solved here with scipy from the published
equations, sharing no code with the C solver.

Usage: test_jfet_shichman_hodges.py PATH_TO_STAGESIM

Equations (N-channel sense; H. Shichman, D. A. Hodges, "Modeling and simulation of
insulated-gate field-effect transistor switching circuits", IEEE J. Solid-State Circuits
SC-3(3), 1968, in the JFET parameterisation of P. Antognetti, G. Massobrio, Semiconductor
Device Modeling with SPICE, 2nd ed., McGraw-Hill 1993, JFET chapter):
    Vgs - VTO <= 0:            Ids = 0
    0 <= Vds < Vgs - VTO:      Ids = BETA (1 + LAMBDA Vds) Vds (2 (Vgs - VTO) - Vds)
    0 < Vgs - VTO <= Vds:      Ids = BETA (1 + LAMBDA Vds) (Vgs - VTO)^2
    Vds < 0:                   Ids = -f(Vgd, -Vds)   (drain and source exchanged)
gate junctions (W. Shockley, Bell Syst. Tech. J. 28, 1949) with GMIN = 1e-12 S across each:
    Igs = IS (exp(Vgs/(N Vt)) - 1) + GMIN Vgs,  Igd likewise at Vgd,
RD and RS as resistors to internal drain and source nodes; area multiplies BETA and IS and
divides RD, RS. Kirchhoff's current law at every node is solved with scipy.optimize.root
(MINPACK 'hybr'), Jacobian by central differences; the mid-band gain is the solution of the
linearised node equations (numpy.linalg.solve), the Jacobian taken by complex-step
differentiation (J. N. Lyness, C. B. Moler, SIAM J. Numer. Anal. 4(2), 1967 -- from memory).

Where the textbook form applies (LAMBDA = 0, RD = RS = 0 in the model, gate current
negligible), the gain is also checked against -gm RD / (1 + gm RS) with gm = 2 sqrt(BETA Id)
(A. S. Sedra, K. C. Smith, Microelectronic Circuits, Oxford, FET chapter -- from memory).

Cases: (A) the textbook case, (B) LAMBDA 0.01, RD 20 ohm, RS 10 ohm in the model, area 2,
(C) a P-channel mirror image of (B) from a negative supply. Each is run with tight Newton
tolerances (refcommon.TIGHT_OPTIONS) and compared at rel 1e-9 (op.csv) and 1e-9 (gain).
"""

import csv
import math
import os

import numpy as np
from scipy.optimize import root

import refcommon as rc

GMIN = 1e-12
T27 = rc.kelvin(27.0)
VT = rc.vt(T27)
SRC_SH = "scipy solve of Shichman-Hodges + Shockley gate junctions"
SRC_LIN = "numpy solve of the linearised node equations (complex step)"
SRC_TXT = "-gm RD/(1 + gm RS), gm = 2 sqrt(BETA Id) (Sedra & Smith, from memory)"


def sh(beta, lam, vto, vgs, vds):
    vgst = vgs - vto
    if vgst.real <= 0.0:
        return 0.0 * vgs
    if vds.real < vgst.real:
        return beta * (1.0 + lam * vds) * vds * (2.0 * vgst - vds)
    return beta * (1.0 + lam * vds) * vgst * vgst


def jfet_currents(m, vg, vdi, vsi):
    """(drain, gate, source) currents into the device at the internal nodes, N sense."""
    vgs, vgd = vg - vsi, vg - vdi
    vds = vgs - vgd
    beta, is_ = m["beta"] * m["area"], m["is"] * m["area"]
    if vds.real >= 0.0:
        ids = sh(beta, m["lambda"], m["vto"], vgs, vds)
    else:
        ids = -sh(beta, m["lambda"], m["vto"], vgd, -vds)
    igs = is_ * np.expm1(vgs / VT) + GMIN * vgs
    igd = is_ * np.expm1(vgd / VT) + GMIN * vgd
    return ids - igd, igs + igd, -(ids + igs)


def residual(c, x, vin=0.0):
    """KCL at g, d, s, d', s' (x in that order; N sense: P-channel reverses voltages)."""
    p = c["pol"]
    m = c["model"]
    vg, vd, vs, xdi, xsi = x
    rd, rs = m["rd"] / m["area"], m["rs"] / m["area"]
    vdi = xdi if rd > 0.0 else vd
    vsi = xsi if rs > 0.0 else vs
    i_d, i_g, i_s = jfet_currents(m, p * vg, p * vdi, p * vsi)
    i_d, i_g, i_s = p * i_d, p * i_g, p * i_s
    r = [(vin - vg) / c["rg"] - i_g]
    if rd > 0.0:
        r += [(c["vdd"] - vd) / c["rdx"] - (vd - vdi) / rd]
    else:
        r += [(c["vdd"] - vd) / c["rdx"] - i_d]
    if rs > 0.0:
        r += [(vsi - vs) / rs - vs / c["rsx"]]
    else:
        r += [-i_s - vs / c["rsx"]]
    r += [(vd - vdi) / rd - i_d if rd > 0.0 else xdi - vd]
    r += [-i_s - (vsi - vs) / rs if rs > 0.0 else xsi - vs]
    return np.array(r)


def jacobian_cs(c, x, vin=0.0):
    """Jacobian and d(residual)/d(vin) by complex step (exact to rounding)."""
    n, h = len(x), 1e-30
    J = np.zeros((n, n))
    for k in range(n):
        xc = np.array(x, dtype=complex)
        xc[k] += 1j * h
        J[:, k] = residual(c, xc, vin).imag / h
    b = residual(c, np.array(x, dtype=complex), vin + 1j * h).imag / h
    return J, b


def solve(c):
    p = c["pol"]
    x0 = np.array([0.0, c["vdd"] / 2, p * 1.0, c["vdd"] / 2, p * 1.0])
    sol = root(lambda y: residual(c, y) * 1e3, x0, method="hybr", options={"xtol": 1e-15})
    x = sol.x
    for _ in range(5):  # Newton polish with the exact Jacobian
        J, _b = jacobian_cs(c, x)
        x = x - np.linalg.solve(J, residual(c, x))
    return x


def quantities(c, x):
    p, m = c["pol"], c["model"]
    vg, vd, vs, vdi, vsi = x
    if m["rd"] == 0.0:
        vdi = vd
    if m["rs"] == 0.0:
        vsi = vs
    i_d, i_g, _ = jfet_currents(m, p * vg, p * vdi, p * vsi)
    vgs_i, vds_i = p * (vg - vsi), p * (vdi - vsi)
    h = 1e-30
    ids = lambda a, b: sh(m["beta"] * m["area"], m["lambda"], m["vto"], a, b)
    gm = ids(vgs_i + 1j * h, vds_i + 0j).imag / h
    gds = ids(vgs_i + 0j, vds_i + 1j * h).imag / h
    return {"v(g)": vg, "v(d)": vd, "v(s)": vs, "id(j1)": p * i_d, "ig(j1)": p * i_g,
            "vgs(j1)": vg - vs, "vds(j1)": vd - vs, "gm(j1)": gm, "gds(j1)": gds,
            "ids": ids(vgs_i, vds_i)}


def netlist(c):
    m = c["model"]
    typ = "pjf" if c["pol"] < 0 else "njf"
    return ("jfet self-biased common source\n"
            f".model jm {typ} vto={m['vto']!r} beta={m['beta']!r} lambda={m['lambda']!r} "
            f"rd={m['rd']!r} rs={m['rs']!r} is={m['is']!r}\n"
            f"vdd dd 0 {c['vdd']!r}\n"
            "vin in 0 dc 0 ac 1\n"
            f"rg in g {c['rg']!r}\n"
            f"rdx dd d {c['rdx']!r}\n"
            f"rsx s 0 {c['rsx']!r}\n"
            f"j1 d g s jm {m['area']!r}\n"
            ".ac dec 1 1k 10k\n"
            ".stage in=vin out=d\n"
            ".end\n")


def run_case(binary, name, c):
    text = netlist(c)
    op = rc.run_op(binary, name, text, options=rc.TIGHT_OPTIONS)
    x = solve(c)
    ref = quantities(c, x)
    for k in ("v(g)", "v(d)", "v(s)", "id(j1)", "vgs(j1)", "vds(j1)", "gm(j1)", "gds(j1)"):
        rc.check(f"{name} {k}", rc.get(op, k), ref[k], 1e-9, 1e-12, SRC_SH)
    rc.check(f"{name} ig(j1)", rc.get(op, "ig(j1)"), ref["ig(j1)"], 1e-6, 1e-18, SRC_SH)
    # small-signal gain dv(d)/dvin from the linearised equations
    J, b = jacobian_cs(c, x)
    dx = np.linalg.solve(J, -b)
    gain_ref = dx[1]
    ac_path = os.path.join(rc._tmpdirs[-1], "out", "ac.csv")
    with open(ac_path, newline="") as f:
        rows = list(csv.reader(f))
    hdr = rows[0]
    mag = float(rows[1][hdr.index("vm(d)")])
    ph = float(rows[1][hdr.index("vp(d)")])
    gain = mag * math.cos(math.radians(ph))
    rc.check(f"{name} gain v(d)/vin at 1 kHz", gain, gain_ref, 1e-9, 0.0, SRC_LIN)
    return ref, gain


def main():
    binary = rc.binary_from_argv()
    base = dict(vdd=15.0, rg=1e3, rdx=4.7e3, rsx=1e3, pol=1.0)
    # (A) textbook: LAMBDA 0, no internal RD/RS
    a = dict(base, model={"vto": -2.0, "beta": 1e-3, "lambda": 0.0, "rd": 0.0, "rs": 0.0,
                          "is": 1e-14, "area": 1.0})
    ref, gain = run_case(binary, "A", a)
    gm_txt = 2.0 * math.sqrt(1e-3 * ref["ids"])
    rc.check("A gm = 2 sqrt(BETA Id)", ref["gm(j1)"], gm_txt, 1e-12, 0.0,
             "Shichman-Hodges, LAMBDA 0")
    rc.check("A gain against the textbook form", gain,
             -gm_txt * a["rdx"] / (1.0 + gm_txt * a["rsx"]), 1e-6, 0.0, SRC_TXT)
    # (B) LAMBDA, internal RD and RS, area 2
    b = dict(base, model={"vto": -2.0, "beta": 1e-3, "lambda": 0.01, "rd": 20.0, "rs": 10.0,
                          "is": 1e-14, "area": 2.0})
    run_case(binary, "B", b)
    # (C) the P-channel mirror image of (B)
    cc = dict(b, vdd=-15.0, pol=-1.0)
    run_case(binary, "C", cc)
    rc.finish()


if __name__ == "__main__":
    main()
