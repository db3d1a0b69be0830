#!/usr/bin/python3
"""Reference check: DC operating points of bipolar-transistor circuits with the
Gummel-Poon DC model, solved independently in Python.

Usage: test_bjt_gummel_poon.py PATH_TO_STAGESIM

Model equations (the expected values are computed from these, nothing else):
  H. K. Gummel, H. C. Poon, Bell Syst. Tech. J. 49, 827-852, 1970, in the DC form and
  parameter names of L. W. Nagel (UCB/ERL M520, 1975) and I. Getreu ("Modeling the
  Bipolar Transistor", 1976) - equations from memory, as stated in docs/models.md
  section 3.2:
    IF = IS (exp(Vbe/(NF Vt)) - 1)          IR = IS (exp(Vbc/(NR Vt)) - 1)
    q1 = 1/(1 - Vbc/VAF - Vbe/VAR)          q2 = IF/IKF + IR/IKR
    qb = q1/2 (1 + sqrt(1 + 4 q2))
    IC = (IF - IR)/qb - IR/BR - ISC (exp(Vbc/(NC Vt)) - 1)
    IB = IF/BF + ISE (exp(Vbe/(NE Vt)) - 1) + IR/BR + ISC (exp(Vbc/(NC Vt)) - 1)
  plus GMIN = 1e-12 S across each internal junction (b'-e' and b'-c'): IB += GMIN (Vbe +
  Vbc), IC -= GMIN Vbc. RB, RE, RC are plain resistors to internal nodes; the area
  factor multiplies IS IKF IKR ISE ISC and divides RB RE RC. PNP: all junction voltages
  and terminal currents reversed.
  Temperature (Getreu 1976, as tabulated by P. Antognetti, G. Massobrio (eds.),
  McGraw-Hill, 2nd ed. 1993 - from memory; docs/models.md section 4), r = T/TNOM,
  Vt = kT/q at T (exact SI-2019 k, q):
    IS(T) = IS r^XTI exp((r-1) EG/Vt)   BF(T) = BF r^XTB   BR(T) = BR r^XTB
    ISE(T) = ISE r^-XTB (IS(T)/IS)^(1/NE)   ISC(T) likewise with NC.

Method: for each circuit the Kirchhoff current-law equations are written out by hand
below (one function per topology), and solved with scipy.optimize.root (method 'hybr',
xtol 1e-14) from a hand-estimated starting point; the KCL residual of the solution is
verified (< 1e-13 A) before anything is compared.

Quantities compared, for every circuit: v(node) for each node, i(V) of each source,
and per transistor ic, ib (currents into the terminals), vbe, vce (between the external
terminals b-e and c-e, i.e. including drops on RB/RE/RC) and gm.
gm is defined here as dIC/dVb'e' at fixed Vb'c' - the intrinsic transconductance at the
internal junctions - and the expected value is a central finite difference (step 1e-6 V)
of the model's collector current computed here; for a PNP it is dIC/dVBE, again positive.
Tolerances: rel 1e-4 with floors 1e-9 V / 1e-12 A / 1e-12 S (tighter floors in the
cut-off case, where GMIN currents are the whole answer).

Circuits (own scenarios, invented model cards):
  A  vibration-sensor front-end bias: NPN CE, divider bias, emitter resistor
  B  hydrophone buffer: NPN emitter follower, DC-fed through a source resistor
  C  photodiode amplifier: PNP CE stage, divider bias, emitter resistor to the supply
  D  geophone preamp: direct-coupled NPN CE + PNP CE with series feedback
  E  relay driver: NPN switch saturated (on) and cut off (off)
  F  line-driver device with every DC parameter set (NF NR VAF VAR IKF IKR ISE NE ISC NC
     BR RB RE RC), area 2: moderate current, high injection, saturation, inverted use
  G  outdoor-sensor preamp at .temp 60 and -25 with XTI XTB EG ISE ISC, and a model
     with TNOM 35 used at 27 degC
"""

import math
import sys

import numpy as np
from scipy.optimize import root

import refcommon as rc

GMIN = 1e-12
INF = math.inf
# default Newton tolerances: rel 1e-4; tight tolerances (refcommon.TIGHT_OPTIONS): rel 1e-7
REL = dict(default=1e-4, tight=1e-7)
ABS_V, ABS_I, ABS_G = 1e-9, 1e-12, 1e-12
SRC = "Gummel-Poon DC equations, hand-written KCL solved with scipy.optimize.root"
SRC_GM = "central difference dIC/dVb'e' (Vb'c' fixed) of the Gummel-Poon IC, computed here"

DEFAULTS = dict(IS=1e-16, BF=100.0, NF=1.0, VAF=INF, IKF=INF, ISE=0.0, NE=1.5, BR=1.0,
                NR=1.0, VAR=INF, IKR=INF, ISC=0.0, NC=2.0, RB=0.0, RE=0.0, RC=0.0,
                XTB=0.0, XTI=3.0, EG=1.11, TNOM=27.0)


def _exp(x):
    """exp that stays finite (linear beyond 100) while the root finder explores."""
    return math.exp(x) if x < 100.0 else math.exp(100.0) * (1.0 + x - 100.0)


def _expm1(x):
    return math.expm1(x) if x < 100.0 else _exp(x) - 1.0


class Bjt:
    """Gummel-Poon DC model, scaled to temperature and area."""

    def __init__(self, kind, params, area=1.0, temp_c=27.0):
        self.kind = kind
        self.pol = 1.0 if kind == "NPN" else -1.0
        self.card = dict(params)
        p = dict(DEFAULTS)
        p.update(params)
        t = rc.kelvin(temp_c)
        r = t / rc.kelvin(p["TNOM"])
        self.vt = rc.vt(t)
        is_t = p["IS"] * r ** p["XTI"] * math.exp((r - 1.0) * p["EG"] / self.vt)
        ratio = is_t / p["IS"]
        self.IS = is_t * area
        self.BF = p["BF"] * r ** p["XTB"]
        self.BR = p["BR"] * r ** p["XTB"]
        self.ISE = p["ISE"] * r ** (-p["XTB"]) * ratio ** (1.0 / p["NE"]) * area
        self.ISC = p["ISC"] * r ** (-p["XTB"]) * ratio ** (1.0 / p["NC"]) * area
        self.IKF, self.IKR = p["IKF"] * area, p["IKR"] * area
        self.NF, self.NR, self.NE, self.NC = p["NF"], p["NR"], p["NE"], p["NC"]
        self.VAF, self.VAR = p["VAF"], p["VAR"]
        self.RB, self.RE, self.RC = p["RB"] / area, p["RE"] / area, p["RC"] / area

    def _npn(self, vbe, vbc):
        vt = self.vt
        i_f = self.IS * _expm1(vbe / (self.NF * vt))
        i_r = self.IS * _expm1(vbc / (self.NR * vt))
        q1 = 1.0 / (1.0 - vbc / self.VAF - vbe / self.VAR)
        q2 = i_f / self.IKF + i_r / self.IKR
        qb = 0.5 * q1 * (1.0 + math.sqrt(1.0 + 4.0 * q2))
        ibe2 = self.ISE * _expm1(vbe / (self.NE * vt))
        ibc2 = self.ISC * _expm1(vbc / (self.NC * vt))
        ic = (i_f - i_r) / qb - i_r / self.BR - ibc2 - GMIN * vbc
        ib = i_f / self.BF + ibe2 + i_r / self.BR + ibc2 + GMIN * (vbe + vbc)
        return ic, ib

    def currents(self, vbe, vbc):
        """Intrinsic (ic, ib) into the internal terminals for actual junction voltages."""
        s = self.pol
        ic, ib = self._npn(s * vbe, s * vbc)
        return s * ic, s * ib

    def gm(self, vbe, vbc, h=1e-6):
        return (self.currents(vbe + h, vbc)[0] - self.currents(vbe - h, vbc)[0]) / (2 * h)

    def model_line(self, name):
        items = " ".join("%s=%.17g" % (k, v) for k, v in self.card.items())
        return ".model %s %s (%s)" % (name, self.kind, items)


def solve(fun, x0, scale=1e3):
    """Roots of the KCL residual fun(x) (amperes); residual scaled to mA for hybr."""
    f = lambda x: np.asarray(fun(x)) * scale
    sol = root(f, np.asarray(x0, dtype=float), method="hybr",
               options={"xtol": 1e-14, "maxfev": 20000})
    x = sol.x
    res = np.max(np.abs(fun(x)))
    if not np.all(np.isfinite(x)) or res > 1e-13:
        # fallback: Levenberg-Marquardt to get close, then hybr again to polish
        lm = root(f, np.asarray(x0, dtype=float), method="lm",
                  options={"xtol": 1e-14, "maxiter": 20000})
        sol = root(f, lm.x, method="hybr", options={"xtol": 1e-14, "maxfev": 20000})
        x = sol.x
        res = np.max(np.abs(fun(x)))
    if not np.all(np.isfinite(x)) or res > 1e-13:
        raise RuntimeError("reference solve failed: %s, max |KCL residual| %.3g A"
                           % (sol.message, res))
    return x


def compare(exe, name, tag, net, nodes, sources, devices):
    """Runs the netlist in both modes and compares.
    nodes: {name: V}; sources: {name: A}; devices: {name: dict(ic, ib, vbe, vce, gm)}."""
    for mode, options in rc.MODES:
        op = rc.run_op(exe, "%s_%s" % (name, mode), net, options=options)
        _compare("%s[%s]" % (tag, mode), op, REL[mode], nodes, sources, devices)


def _compare(tag, op, rel, nodes, sources, devices):
    for n, v in nodes.items():
        rc.check("%s v(%s)" % (tag, n), rc.get(op, "v(%s)" % n), v, rel, ABS_V, SRC)
    for n, i in sources.items():
        rc.check("%s i(%s)" % (tag, n), rc.get(op, "i(%s)" % n), i, rel, ABS_I, SRC)
    for q, d in devices.items():
        abs_i = d.get("abs_i", ABS_I)
        for key in ("ic", "ib"):
            rc.check("%s %s(%s)" % (tag, key, q), rc.get(op, "%s(%s)" % (key, q)), d[key],
                     rel, abs_i, SRC)
        for key in ("vbe", "vce"):
            rc.check("%s %s(%s)" % (tag, key, q), rc.get(op, "%s(%s)" % (key, q)), d[key],
                     rel, ABS_V, SRC + " (external terminals)")
        rc.check("%s gm(%s)" % (tag, q), rc.get(op, "gm(%s)" % q), d["gm"], rel,
                 d.get("abs_g", ABS_G), SRC_GM)


def devinfo(dev, vb, vc, ve, vbi, vci, vei, **extra):
    ic, ib = dev.currents(vbi - vei, vbi - vci)
    d = dict(ic=ic, ib=ib, vbe=vb - ve, vce=vc - ve, gm=dev.gm(vbi - vei, vbi - vci))
    d.update(extra)
    return d


# ---- A: vibration-sensor front-end bias (NPN CE, divider, RE) ------------------------------
def ce_divider_npn(dev, vcc, r1, r2, rcl, rel):
    """Nodes vcc (source), b, c, e: R1 vcc-b, R2 b-0, RC vcc-c, RE e-0, Q c b e (no RB/RE/RC
    in the model). Unknowns [vb, vc, ve]."""
    def kcl(x):
        vb, vc, ve = x
        ic, ib = dev.currents(vb - ve, vb - vc)
        return [(vcc - vb) / r1 - vb / r2 - ib,       # node b
                (vcc - vc) / rcl - ic,                 # node c
                ic + ib - ve / rel]                    # node e
    vb0 = vcc * r2 / (r1 + r2) * 0.95
    ve0 = max(vb0 - 0.65, 0.05)
    vc0 = max(vcc - ve0 / rel * rcl, 0.2 + ve0)
    vb, vc, ve = solve(kcl, [vb0, vc0, ve0])
    ivcc = -((vcc - vb) / r1 + (vcc - vc) / rcl)
    return vb, vc, ve, ivcc


def circuit_a(exe):
    dev = Bjt("NPN", dict(IS=2e-15, BF=180.0, VAF=90.0))
    net = ("vibration-sensor front-end bias\n"
           "VCC vcc 0 DC 12\n"
           "R1 vcc base 82k\n"
           "R2 base 0 18k\n"
           "RC vcc coll 6.8k\n"
           "RE emit 0 1.5k\n"
           "Q1 coll base emit qvib\n"
           "%s\n.op\n.end\n" % dev.model_line("qvib"))
    vb, vc, ve, ivcc = ce_divider_npn(dev, 12.0, 82e3, 18e3, 6.8e3, 1.5e3)
    compare(exe, "bjt_a", "A", net, dict(vcc=12.0, base=vb, coll=vc, emit=ve),
            dict(vcc=ivcc), dict(q1=devinfo(dev, vb, vc, ve, vb, vc, ve)))


# ---- B: hydrophone buffer (NPN emitter follower) --------------------------------------------
def circuit_b(exe):
    dev = Bjt("NPN", dict(IS=5e-15, BF=120.0, VAF=60.0, VAR=25.0, BR=2.0))
    vcc, vsig, rs, rel = 9.0, 4.5, 10e3, 2.7e3
    net = ("hydrophone buffer, DC-coupled emitter follower\n"
           "VCC vcc 0 DC 9\n"
           "VSIG sig 0 DC 4.5\n"
           "RS sig b 10k\n"
           "Q1 vcc b e qbuf\n"
           "RE e 0 2.7k\n"
           "%s\n.op\n.end\n" % dev.model_line("qbuf"))

    def kcl(x):
        vb, ve = x
        ic, ib = dev.currents(vb - ve, vb - vcc)
        return [(vsig - vb) / rs - ib,                 # node b
                ic + ib - ve / rel]                    # node e
    vb, ve = solve(kcl, [4.45, 3.8])
    ic, ib = dev.currents(vb - ve, vb - vcc)
    compare(exe, "bjt_b", "B", net, dict(vcc=vcc, sig=vsig, b=vb, e=ve),
            dict(vcc=-ic, vsig=-(vsig - vb) / rs),
            dict(q1=devinfo(dev, vb, vcc, ve, vb, vcc, ve)))


# ---- C: photodiode amplifier (PNP CE) -------------------------------------------------------
def circuit_c(exe):
    dev = Bjt("PNP", dict(IS=3e-15, BF=150.0, VAF=70.0, BR=1.5))
    vcc, r1, r2, rel, rcl = 15.0, 39e3, 100e3, 2.2e3, 4.7e3
    net = ("photodiode amplifier, PNP gain stage bias\n"
           "VCC vcc 0 DC 15\n"
           "R1 vcc b 39k\n"
           "R2 b 0 100k\n"
           "RE vcc e 2.2k\n"
           "RC c 0 4.7k\n"
           "Q1 c b e qpd\n"
           "%s\n.op\n.end\n" % dev.model_line("qpd"))

    def kcl(x):
        vb, vc, ve = x
        ic, ib = dev.currents(vb - ve, vb - vc)
        return [(vcc - vb) / r1 - vb / r2 - ib,        # node b
                -vc / rcl - ic,                        # node c
                (vcc - ve) / rel + ic + ib]            # node e (ie = -(ic+ib) into e)
    vb, vc, ve = solve(kcl, [10.7, 7.4, 11.35])
    ivcc = -((vcc - vb) / r1 + (vcc - ve) / rel)
    compare(exe, "bjt_c", "C", net, dict(vcc=vcc, b=vb, e=ve, c=vc), dict(vcc=ivcc),
            dict(q1=devinfo(dev, vb, vc, ve, vb, vc, ve)))


# ---- D: geophone preamp (direct-coupled NPN CE + PNP CE, series feedback) ------------------
def circuit_d(exe):
    q1 = Bjt("NPN", dict(IS=4e-15, BF=200.0, VAF=100.0))
    q2 = Bjt("PNP", dict(IS=6e-15, BF=90.0, VAF=50.0))
    vcc, r1, r2, rc1, re1, rf, re2, rc2 = 12.0, 100e3, 22e3, 4.7e3, 1e3, 10e3, 1e3, 2.2e3
    net = ("geophone preamp, direct-coupled two-transistor stage\n"
           "VCC vcc 0 DC 12\n"
           "R1 vcc b1 100k\n"
           "R2 b1 0 22k\n"
           "RC1 vcc c1 4.7k\n"
           "RE1 e1 0 1k\n"
           "Q1 c1 b1 e1 qgeo1\n"
           "RE2 vcc e2 1k\n"
           "Q2 c2 c1 e2 qgeo2\n"
           "RC2 c2 0 2.2k\n"
           "RF c2 e1 10k\n"
           "%s\n%s\n.op\n.end\n" % (q1.model_line("qgeo1"), q2.model_line("qgeo2")))

    def kcl(x):
        vb1, vc1, ve1, ve2, vc2 = x
        ic1, ib1 = q1.currents(vb1 - ve1, vb1 - vc1)
        ic2, ib2 = q2.currents(vc1 - ve2, vc1 - vc2)
        return [(vcc - vb1) / r1 - vb1 / r2 - ib1,             # b1
                (vcc - vc1) / rc1 - ic1 - ib2,                 # c1 (= base of Q2)
                ic1 + ib1 - ve1 / re1 + (vc2 - ve1) / rf,      # e1
                (vcc - ve2) / re2 + ic2 + ib2,                 # e2
                -vc2 / rc2 - ic2 - (vc2 - ve1) / rf]           # c2
    vb1, vc1, ve1, ve2, vc2 = solve(kcl, [2.0, 9.5, 1.35, 10.2, 3.9])
    ivcc = -((vcc - vb1) / r1 + (vcc - vc1) / rc1 + (vcc - ve2) / re2)
    compare(exe, "bjt_d", "D", net, dict(vcc=vcc, b1=vb1, c1=vc1, e1=ve1, e2=ve2, c2=vc2),
            dict(vcc=ivcc),
            dict(q1=devinfo(q1, vb1, vc1, ve1, vb1, vc1, ve1),
                 q2=devinfo(q2, vc1, vc2, ve2, vc1, vc2, ve2)))
    return dict(q1=(vb1 - ve1, vc1 - ve1), q2=(vc1 - ve2, vc2 - ve2))


# ---- E: relay driver switch, on (saturated) and off (cut off) ------------------------------
def circuit_e(exe):
    dev = Bjt("NPN", dict(IS=1e-14, BF=80.0, BR=3.0, VAF=50.0))
    vcc, rbs, rl = 12.0, 4.7e3, 1e3
    out = {}
    for state, vin in (("on", 5.0), ("off", 0.0)):
        net = ("relay driver switch, drive %s\n"
               "VCC vcc 0 DC 12\n"
               "VIN in 0 DC %g\n"
               "RBS in b 4.7k\n"
               "RL vcc c 1k\n"
               "Q1 c b 0 qsw\n"
               "%s\n.op\n.end\n" % (state, vin, dev.model_line("qsw")))

        def kcl(x, vin=vin):
            vb, vc = x
            ic, ib = dev.currents(vb, vb - vc)
            return [(vin - vb) / rbs - ib,                 # node b
                    (vcc - vc) / rl - ic]                  # node c
        x0 = [0.78, 0.08] if vin > 0 else [0.0, 12.0]
        vb, vc = solve(kcl, x0)
        ic, ib = dev.currents(vb, vb - vc)
        extra = {} if vin > 0 else dict(abs_i=1e-14, abs_g=1e-14)
        nodes = dict(vcc=vcc, b=vb, c=vc)
        nodes["in"] = vin
        compare(exe, "bjt_e_" + state, "E-" + state, net, nodes,
                dict(vcc=-ic, vin=-(vin - vb) / rbs),
                dict(q1=devinfo(dev, vb, vc, 0.0, vb, vc, 0.0, **extra)))
        out[state] = (vb, vc)
    return out


# ---- F: every DC parameter, area 2, internal nodes -----------------------------------------
QLD = dict(IS=8e-16, BF=150.0, NF=1.005, VAF=75.0, IKF=15e-3, ISE=3e-14, NE=1.6, BR=4.0,
           NR=1.01, VAR=12.0, IKR=4e-3, ISC=1e-13, NC=1.9, RB=80.0, RE=1.2, RC=15.0)


def ce_divider_parasitic(dev, vcc, r1, r2, rcl, rel, inverted, x0):
    """R1 vcc-b, R2 b-0, RC vcc-c, RE e-0; device base at b. Normal: device collector at
    node c, emitter at node e; inverted: device collector at e, emitter at c. The model's
    RB/RE/RC lead to internal nodes bi, ci, ei. Unknowns [vb, vc, ve, vbi, vci, vei]."""
    def kcl(x):
        vb, vc, ve, vbi, vci, vei = x
        vcol, vemi = (ve, vc) if inverted else (vc, ve)   # external node of device C / E
        ic, ib = dev.currents(vbi - vei, vbi - vci)
        i_rb = (vb - vbi) / dev.RB                         # into the device base
        i_rc = (vcol - vci) / dev.RC                       # into the device collector
        i_re = (vei - vemi) / dev.RE                       # out of the device emitter
        i_at_c = -i_re if inverted else i_rc               # current into device at node c
        i_at_e = i_rc if inverted else -i_re               # current into device at node e
        return [(vcc - vb) / r1 - vb / r2 - i_rb,          # node b
                (vcc - vc) / rcl - i_at_c,                 # node c
                -ve / rel - i_at_e,                        # node e
                i_rb - ib,                                 # internal b'
                i_rc - ic,                                 # internal c'
                ic + ib - i_re]                            # internal e'
    return solve(kcl, x0)


def circuit_f(exe):
    dev = Bjt("NPN", QLD, area=2.0)
    cases = [  # tag, scenario, VCC, R1, R2, RC, RE, inverted, start
        ("F1", "line driver, class-A bias at a few mA", 15.0, 33e3, 10e3, 1.5e3, 1e3, False,
         [3.3, 11.0, 2.6, 3.3, 11.0, 2.6]),
        ("F2", "line driver, high-injection bias near 80 mA", 15.0, 3.3e3, 1e3, 100.0, 33.0,
         False, [3.4, 7.0, 2.5, 3.3, 7.5, 2.5]),
        ("F3", "line driver output transistor driven hard into saturation", 10.0, 2.2e3,
         100e3, 1e3, 10.0, False, [1.1, 0.32, 0.14, 0.93, 0.25, 0.15]),
        ("F4", "line driver, transistor fitted inverted (reverse active)", 15.0, 33e3, 10e3,
         1.5e3, 1e3, True, [1.8, 13.68, 1.1, 1.79, 1.108, 13.68]),
    ]
    for tag, scen, vcc, r1, r2, rcl, rel, inv, x0 in cases:
        q_line = "Q1 %s b %s qld 2" % (("e", "c") if inv else ("c", "e"))
        net = ("%s\n"
               "VCC vcc 0 DC %g\n"
               "R1 vcc b %.17g\n"
               "R2 b 0 %.17g\n"
               "RC vcc c %.17g\n"
               "RE e 0 %.17g\n"
               "%s\n"
               "%s\n.op\n.end\n" % (scen, vcc, r1, r2, rcl, rel, q_line,
                                    dev.model_line("qld")))
        vb, vc, ve, vbi, vci, vei = ce_divider_parasitic(dev, vcc, r1, r2, rcl, rel, inv, x0)
        ivcc = -((vcc - vb) / r1 + (vcc - vc) / rcl)
        vcol, vemi = (ve, vc) if inv else (vc, ve)
        compare(exe, "bjt_" + tag, tag, net, dict(vcc=vcc, b=vb, c=vc, e=ve), dict(vcc=ivcc),
                dict(q1=devinfo(dev, vb, vcol, vemi, vbi, vci, vei)))


# ---- G: temperature --------------------------------------------------------------------------
QHOT = dict(IS=1e-15, BF=160.0, VAF=80.0, XTI=3.5, XTB=1.6, EG=1.16, ISE=2e-14, NE=1.45,
            ISC=5e-14, NC=2.0, BR=2.0)


def circuit_g(exe):
    cases = [("G60", "outdoor-sensor preamp bias, hot enclosure", 60.0, QHOT),
             ("Gm25", "outdoor-sensor preamp bias, winter night", -25.0, QHOT),
             ("Gtnom", "outdoor-sensor preamp, model characterised at 35 C", 27.0,
              dict(QHOT, TNOM=35.0))]
    for tag, scen, temp_c, card in cases:
        dev = Bjt("NPN", card, temp_c=temp_c)
        net = ("%s\n"
               "VCC vcc 0 DC 12\n"
               "R1 vcc base 82k\n"
               "R2 base 0 18k\n"
               "RC vcc coll 6.8k\n"
               "RE emit 0 1.5k\n"
               "Q1 coll base emit qhot\n"
               "%s\n"
               "%s.op\n.end\n" % (scen, dev.model_line("qhot"),
                                  "" if temp_c == 27.0 else ".temp %g\n" % temp_c))
        vb, vc, ve, ivcc = ce_divider_npn(dev, 12.0, 82e3, 18e3, 6.8e3, 1.5e3)
        compare(exe, "bjt_" + tag, tag, net, dict(vcc=12.0, base=vb, coll=vc, emit=ve),
                dict(vcc=ivcc), dict(q1=devinfo(dev, vb, vc, ve, vb, vc, ve)))


def selfchecks():
    # the temperature law reproduces the check value IS(350.15 K) of docs/models.md section 4
    # (computed there from the same law in double precision)
    d = Bjt("NPN", dict(IS=1e-14), temp_c=77.0)
    rc.check("selfcheck: IS(350.15 K)", d.IS, 7.28045000e-12, 1e-8, 0.0,
             "docs/models.md s.4 check value vs temperature law here")
    # finite-difference gm equals the closed form for the plain Ebers-Moll case
    e = Bjt("NPN", dict(IS=1e-14, BF=100.0))
    vbe = 0.65
    gm_cf = e.IS / e.vt * math.exp(vbe / e.vt)
    rc.check("selfcheck: gm finite difference (Ebers-Moll, Vbc=-2.05)", e.gm(vbe, vbe - 2.7),
             gm_cf, 1e-9, 0.0, "d/dVbe of IS exp(Vbe/Vt), closed form; the central "
             "difference's truncation error is (h/Vt)^2/6 = 2.5e-10")
    # with VAF only, the model's ro closed form: dIC/dVCE = IC/(VAF - VBC) at fixed Vbe
    f = Bjt("NPN", dict(IS=1e-14, VAF=100.0))
    vbc = -4.35
    h = 1e-4
    go = -(f.currents(vbe, vbc + h)[0] - f.currents(vbe, vbc - h)[0]) / (2 * h)
    ic = f.currents(vbe, vbc)[0]
    rc.check("selfcheck: ro = (VAF - Vbc)/IC", 1.0 / go, (100.0 - vbc) / ic, 1e-6, 0.0,
             "docs/models.md s.3.2: the model's own q1 gives ro = (VAF - VBC)/IC")


def main():
    exe = rc.binary_from_argv()
    selfchecks()
    circuit_a(exe)
    circuit_b(exe)
    circuit_c(exe)
    d = circuit_d(exe)
    e = circuit_e(exe)
    circuit_f(exe)
    circuit_g(exe)
    # region sanity of the reference solutions themselves (the scenarios are what they
    # claim to be): D both forward active, E-on saturated
    rc.check_range("selfcheck: D Q1 vce > 0.3 (forward active)", d["q1"][1], 0.3, 1e3,
                   "reference solution region")
    rc.check_range("selfcheck: D Q2 vce < -0.3 (forward active PNP)", d["q2"][1], -1e3, -0.3,
                   "reference solution region")
    rc.check_range("selfcheck: E-on vc < 0.2 V (saturated)", e["on"][1], 0.0, 0.2,
                   "reference solution region")
    rc.finish()


if __name__ == "__main__":
    sys.exit(main())
