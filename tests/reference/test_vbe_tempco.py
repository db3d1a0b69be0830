#!/usr/bin/python3
"""Reference check: base-emitter voltage of an NPN at fixed collector current across
temperature (.temp 0, 27, 50 degC).

Usage: test_vbe_tempco.py PATH_TO_STAGESIM

Two arrangements (own scenarios, invented model cards):
  * "temperature-sensor transistor": diode-connected NPN fed by a 100 uA current source.
    With base tied to collector Vbc = 0, so IR = 0 and q1 = 1 (VAF, IKF infinite), and
    XTB = 0 keeps BF fixed: the source current is IF (1 + 1/BF) + GMIN Vbe, i.e. the
    collector current is fixed.
  * "transdiode servo": a 10 uA current source into the collector and a high-gain
    VCVS (gain 1e4) driving the base so that the collector sits at 2 V; the collector
    current is the source current (less GMIN x 1.4 V on the b'-c' junction). This model
    has VAF = 100 V, XTI = 3.5, EG = 1.15 eV, ISE/NE set.

Expected values:
  1. Vbe at each temperature from this script's own solution of the Gummel-Poon DC
     equations with the temperature laws (I. Getreu, Modeling the Bipolar Transistor,
     1976, as tabulated by P. Antognetti, G. Massobrio (eds.), McGraw-Hill, 2nd ed.
     1993 -- from memory; stated in docs/models.md section 4):
     IS(T) = IS r^XTI exp((r-1) EG/Vt(T)),
     ISE(T) = ISE r^-XTB (IS(T)/IS)^(1/NE), r = T/TNOM, Vt = kT/q with exact SI-2019 k, q;
     GMIN = 1e-12 S across each junction included. The one-unknown equation is solved
     with scipy.optimize.brentq (xtol 1e-15). For the diode-connected case the closed
     form Vbe = NF Vt ln(IF/IS(T) + 1), IF = (I - GMIN Vbe) BF/(BF+1), is checked too.
     Each netlist is solved with the default Newton tolerances (compared at rel 1e-4,
     floor 1e-9 V / 1e-12 A, also on the slope) and with tight ones
     (refcommon.TIGHT_OPTIONS, compared at rel 1e-7).
  2. The slope (Vbe(50 C) - Vbe(0 C))/50 K lies between -2.5 and -1.5 mV/K: "Vbe falls
     about 2 mV per kelvin at fixed collector current" - common practice (P. Horowitz,
     W. Hill, The Art of Electronics, 2nd ed., Cambridge 1989, ch. 2, quote about
     -2.1 mV/degC -- from memory).
"""

import math
import sys

from scipy.optimize import brentq

import refcommon as rc

GMIN = 1e-12
TEMPS = (0.0, 27.0, 50.0)
# default Newton tolerances: rel 1e-4; tight ones (refcommon.TIGHT_OPTIONS): rel 1e-7
REL = dict(default=1e-4, tight=1e-7)
SRC = "own solve of Gummel-Poon DC + temperature laws (scipy brentq)"


def scaled(card, temp_c):
    p = dict(IS=1e-16, BF=100.0, NF=1.0, VAF=math.inf, ISE=0.0, NE=1.5, BR=1.0, NR=1.0,
             XTB=0.0, XTI=3.0, EG=1.11, TNOM=27.0)
    p.update(card)
    t = rc.kelvin(temp_c)
    vt = rc.vt(t)
    r = t / rc.kelvin(p["TNOM"])
    is_t = p["IS"] * r ** p["XTI"] * math.exp((r - 1.0) * p["EG"] / vt)
    return dict(p, vt=vt, IS_T=is_t, BF_T=p["BF"] * r ** p["XTB"], BR_T=p["BR"] * r ** p["XTB"],
                ISE_T=p["ISE"] * r ** (-p["XTB"]) * (is_t / p["IS"]) ** (1.0 / p["NE"]))


def npn(s, vbe, vbc):
    """Gummel-Poon DC (IKF, IKR, VAR infinite; ISC 0) + GMIN across both junctions."""
    vt = s["vt"]
    i_f = s["IS_T"] * math.expm1(vbe / (s["NF"] * vt))
    i_r = s["IS_T"] * math.expm1(vbc / (s["NR"] * vt))
    qb = 1.0 / (1.0 - vbc / s["VAF"])
    ibe2 = s["ISE_T"] * math.expm1(vbe / (s["NE"] * vt))
    ic = (i_f - i_r) / qb - i_r / s["BR_T"] - GMIN * vbc
    ib = i_f / s["BF_T"] + ibe2 + i_r / s["BR_T"] + GMIN * (vbe + vbc)
    return ic, ib


def diode_connected(exe, mode, options):
    card = dict(IS=5e-16, BF=200.0)
    ibias = 100e-6
    rel = REL[mode]
    got, ref = {}, {}
    for t in TEMPS:
        net = ("temperature-sensor transistor, diode-connected at %g C\n"
               "IBIAS 0 d DC 100u\n"
               "Q1 d d 0 qsense\n"
               ".model qsense NPN (IS=5e-16 BF=200)\n"
               ".temp %g\n"
               ".op\n.end\n" % (t, t))
        op = rc.run_op(exe, "tempco_diode_%g_%s" % (t, mode), net, options=options)
        s = scaled(card, t)

        def f(v, s=s):
            ic, ib = npn(s, v, 0.0)
            return ic + ib - ibias
        vbe = brentq(f, 0.2, 1.0, xtol=1e-15, rtol=1e-15)
        # closed form with the GMIN current taken at the solved Vbe (one fixed point pass)
        i_f = (ibias - GMIN * vbe) * s["BF_T"] / (s["BF_T"] + 1.0)
        vbe_cf = s["NF"] * s["vt"] * math.log1p(i_f / s["IS_T"])
        if mode == "default":
            rc.check("selfcheck: diode-connected %g C closed form" % t, vbe_cf, vbe, 1e-12,
                     0.0, "Vbe = NF Vt ln(IF/IS(T) + 1) vs brentq solve")
        g = rc.get(op, "vbe(q1)")
        tag = "diode-connected[%s] %g C" % (mode, t)
        rc.check(tag + " vbe(q1)", g, vbe, rel, 1e-9, SRC)
        rc.check(tag + " v(d)", rc.get(op, "v(d)"), vbe, rel, 1e-9, SRC)
        ic, _ = npn(s, vbe, 0.0)
        rc.check(tag + " ic(q1)", rc.get(op, "ic(q1)"), ic, rel, 1e-12, SRC + "; I BF/(BF+1)")
        got[t], ref[t] = g, vbe
    slope_tests(got, ref, "diode-connected[%s]" % mode, rel, mode == "default")


def servo(exe, mode, options):
    card = dict(IS=1.2e-15, BF=250.0, VAF=100.0, XTI=3.5, EG=1.15, ISE=1e-15, NE=1.8)
    ibias, vset, gain = 10e-6, 2.0, 1e4
    rel = REL[mode]
    got, ref = {}, {}
    for t in TEMPS:
        net = ("transdiode servo, collector current held at 10 uA, %g C\n"
               "ICOL 0 c DC 10u\n"
               "VSET set 0 DC 2\n"
               "ESERVO b 0 c set 1e4\n"
               "Q1 c b 0 qservo\n"
               ".model qservo NPN (IS=1.2e-15 BF=250 VAF=100 XTI=3.5 EG=1.15 ISE=1e-15 NE=1.8)\n"
               ".temp %g\n"
               ".op\n.end\n" % (t, t))
        op = rc.run_op(exe, "tempco_servo_%g_%s" % (t, mode), net, options=options)
        s = scaled(card, t)

        # vb = gain (vc - vset)  ->  vc = vset + vb/gain; KCL at c: ic(vb, vb - vc) = I
        def f(vb, s=s):
            vc = vset + vb / gain
            return npn(s, vb, vb - vc)[0] - ibias
        vbe = brentq(f, 0.2, 1.0, xtol=1e-15, rtol=1e-15)
        vc = vset + vbe / gain
        tag = "servo[%s] %g C" % (mode, t)
        rc.check(tag + " vbe(q1)", rc.get(op, "vbe(q1)"), vbe, rel, 1e-9, SRC)
        rc.check(tag + " v(c)", rc.get(op, "v(c)"), vc, rel, 1e-9, SRC)
        # the collector node holds only the source and Q1: KCL (GMIN x 1.4 V is 1.4e-12 A)
        rc.check(tag + " ic(q1)", rc.get(op, "ic(q1)"), npn(s, vbe, vbe - vc)[0], rel, 1e-12,
                 "KCL at the collector: the source current")
        got[t], ref[t] = rc.get(op, "vbe(q1)"), vbe
    slope_tests(got, ref, "servo[%s]" % mode, rel, mode == "default")


def slope_tests(got, ref, tag, rel, selfcheck):
    ref_slope = (ref[50.0] - ref[0.0]) / 50.0
    if selfcheck:
        rc.check_range("selfcheck: %s reference slope in common-practice band" % tag,
                       ref_slope, -2.5e-3, -1.5e-3, "common practice: about -2 mV/K")
    if any(got[t] is None for t in TEMPS):
        rc.check("%s slope dVbe/dT (V/K)" % tag, None, ref_slope, rel, 1e-9, SRC)
        return
    slope = (got[50.0] - got[0.0]) / 50.0
    rc.check_range("%s slope dVbe/dT (V/K) within -2.5..-1.5 mV/K" % tag, slope,
                   -2.5e-3, -1.5e-3, "common practice (Vbe falls about 2 mV/K)")
    rc.check("%s slope dVbe/dT (V/K)" % tag, slope, ref_slope, rel, 1e-9, SRC)
    # monotone fall across the three temperatures
    rc.check_range("%s Vbe(0) > Vbe(27) > Vbe(50)" % tag,
                   1.0 if got[0.0] > got[27.0] > got[50.0] else 0.0, 1.0, 1.0,
                   "common practice: Vbe falls with temperature")


def main():
    exe = rc.binary_from_argv()
    for mode, options in rc.MODES:
        diode_connected(exe, mode, options)
        servo(exe, mode, options)
    rc.finish()


if __name__ == "__main__":
    sys.exit(main())
