#!/usr/bin/python3
"""Reference check: a junction diode driven through a series resistor, against the exact
Lambert-W solution.

Usage: test_diode_lambertw.py PATH_TO_STAGESIM

Source of the expected values: T. C. Banwell, A. Jayakumar, "Exact analytical solution for
current flow through diode with series resistance", Electronics Letters 36(4):291-292,
2000: for V = I*R + N*Vt*ln(1 + I/IS),
    I = (N Vt/R) * W0( (IS R/(N Vt)) * exp((V + IS R)/(N Vt)) ) - IS,
W0 the principal Lambert-W branch (scipy.special.lambertw; Corless et al., Adv. Comput.
Math. 5, 1996); when the exponent would overflow, W0(exp(z)) = wrightomega(z)
(scipy.special.wrightomega).

The solver also puts GMIN = 1e-12 S across the diode junction (documented netlist
behaviour). The same method solves that case exactly (derived here, same steps as the
paper): with g = GMIN the junction carries IS*(exp(Vd/(N Vt)) - 1) + g*Vd, and
    I = c + (N Vt/R) * W0( IS R/(N Vt (1 + g R)) * exp((V - R c)/(N Vt)) ),
    c = (g V - IS)/(1 + g R),
which reduces to the paper's form at g = 0. The solver is compared with this GMIN-exact
form. GMIN matters only in the low-current cases (V = 0.3 V: 2.8e-4 relative; reverse
bias: it dominates); at mA currents it moves I by < 1e-9 relative.
A model RS is one more series resistance to the internal junction node, so R -> R + RS in
the formula, and v(anode) = V - I*R (RS is inside the device).

Cases (27 degC, Vt = kT/q with exact SI-2019 constants): V = 5 / 1 / 0.3 V, N = 1 and
N = 2, R = 1 kOhm, IS = 1e-14 A - check values computed from the paper's g = 0 formula in
double precision (scipy lambertw; a bisection of V = I R + N Vt ln(1 + I/IS) gives the same
12 digits) are reproduced first as "selfcheck" lines; then own cases with RS, a
high-current case, a case whose exponent overflows double (wrightomega) and a
reverse-biased case.
Each case is solved twice: with the default Newton tolerances, compared at rel 1e-6 on
current and voltage, and with tight tolerances (refcommon.TIGHT_OPTIONS), compared at
rel 1e-9 - the latter tests the equations alone (absolute floors 1e-15 A / 1e-9 V).
"""

import math
import sys

import numpy as np
from scipy.special import lambertw, wrightomega

import refcommon as rc

GMIN = 1e-12
# default Newton tolerances: rel 1e-6; tight ones (refcommon.TIGHT_OPTIONS): rel 1e-9
REL = dict(default=1e-6, tight=1e-9)
T27 = rc.kelvin(27.0)
SRC_BJ = "Banwell-Jayakumar Lambert-W closed form (scipy), incl. GMIN"


def diode_series_current(v, r, is_, n, temp_k, g=GMIN):
    """Current through source, R and diode (junction shunted by g), exact via Lambert W."""
    nvt = n * rc.vt(temp_k)
    c = (g * v - is_) / (1.0 + g * r)
    expo = (v - r * c) / nvt
    logpref = math.log(is_ * r / (nvt * (1.0 + g * r)))
    if expo < 600.0:
        w = lambertw(math.exp(logpref) * math.exp(expo), 0).real
    else:
        w = float(np.real(wrightomega(logpref + expo)))
    return c + nvt / r * w


def main():
    exe = rc.binary_from_argv()

    # ---- reproduce the check values of the paper's formula (g = 0) ----------------------
    for v, n, i_tab, vd_tab in ((5.0, 1.0, 4.30711216762e-3, 0.692887832),
                                (1.0, 1.0, 3.70559089479e-4, 0.629440911),
                                (5.0, 2.0, 3.62316938285e-3, 1.376830617),
                                (0.3, 1.0, 1.08952518939e-9, None)):
        i0 = diode_series_current(v, 1e3, 1e-14, n, T27, g=0.0)
        rc.check("selfcheck: V=%g N=%g I (g=0)" % (v, n), i0, i_tab, 1e-10, 0.0,
                 "Banwell-Jayakumar g = 0 value (double precision) vs formula here")
        if vd_tab is not None:
            rc.check("selfcheck: V=%g N=%g Vd (g=0)" % (v, n), v - i0 * 1e3, vd_tab, 1e-8, 0.0,
                     "Banwell-Jayakumar g = 0 value (double precision) vs formula here")
    # the two evaluation routes agree where both are finite
    nvt = rc.vt(T27)
    z = math.log(1e-14 * 1e3 / nvt) + (5.0 + 1e-14 * 1e3) / nvt
    rc.check("selfcheck: wrightomega(z) = W0(exp z)", float(np.real(wrightomega(z))),
             lambertw(math.exp(z), 0).real, 1e-13, 0.0, "identity W0(e^z) = omega(z)")
    # GMIN-exact formula satisfies its own equations (residual check)
    for v in (0.3, 5.0, -5.0):
        i = diode_series_current(v, 1e3, 1e-14, 1.0, T27)
        vd = v - i * 1e3
        resid = 1e-14 * math.expm1(vd / nvt) + GMIN * vd - i
        rc.check("selfcheck: KCL residual V=%g" % v, resid, 0.0, 0.0, 1e-9 * abs(i) + 1e-25,
                 "formula substituted back into the junction equation")

    # ---- solver cases ---------------------------------------------------------------------
    # (name, scenario, V, R, IS, N, RS)
    cases = [
        ("v5n1", "sensor-supply polarity diode, 5 V", 5.0, 1e3, 1e-14, 1.0, 0.0),
        ("v1n1", "sensor-supply polarity diode, 1 V", 1.0, 1e3, 1e-14, 1.0, 0.0),
        ("v03n1", "sensor-supply polarity diode, 0.3 V", 0.3, 1e3, 1e-14, 1.0, 0.0),
        ("v5n2", "two-junction stack model N=2, 5 V", 5.0, 1e3, 1e-14, 2.0, 0.0),
        ("v1n2", "two-junction stack model N=2, 1 V", 1.0, 1e3, 1e-14, 2.0, 0.0),
        ("rs25", "indicator diode with bulk resistance RS=25", 5.0, 1e3, 1e-14, 1.0, 25.0),
        ("rs10n2", "indicator diode N=1.8, RS=10", 3.3, 470.0, 4e-12, 1.8, 10.0),
        ("hicur", "clamp diode at 100 mA, RS=2", 2.0, 10.0, 2e-13, 1.05, 2.0),
        ("huge", "overvoltage clamp, 30 V through 1k (exponent overflows)", 30.0, 1e3,
         1e-14, 1.0, 0.0),
        ("rev", "reverse-biased protection diode, -5 V", -5.0, 1e3, 1e-14, 1.0, 0.0),
    ]
    for tag, scen, v, r, is_, n, rs in cases:
        model = "IS=%.17g N=%.17g" % (is_, n)
        if rs:
            model += " RS=%.17g" % rs
        net = ("%s\n"
               "VS in 0 DC %.17g\n"
               "RSER in a %.17g\n"
               "D1 a 0 dx\n"
               ".model dx D (%s)\n"
               ".op\n.end\n" % (scen, v, r, model))
        i = diode_series_current(v, r + rs, is_, n, T27)
        abs_i = 1e-15
        for mode, options in rc.MODES:
            op = rc.run_op(exe, "diode_%s_%s" % (tag, mode), net, options=options)
            rel = REL[mode]
            t = "%s[%s]" % (tag, mode)
            rc.check("%s id(d1)" % t, rc.get(op, "id(d1)"), i, rel, abs_i, SRC_BJ)
            rc.check("%s i(vs)" % t, rc.get(op, "i(vs)"), -i, rel, abs_i,
                     SRC_BJ + "; source delivers it (current into + is -I)")
            rc.check("%s v(a)" % t, rc.get(op, "v(a)"), v - i * r, rel, 1e-9,
                     SRC_BJ + "; v(a) = V - I R")

    rc.finish()


if __name__ == "__main__":
    sys.exit(main())
