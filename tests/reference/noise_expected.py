"""Expected values for the noise unit tests (tests/unit/test_noise.c), computed independently
of the C code with numpy/scipy from the published noise formulas.

Run with Debian's interpreter:  /usr/bin/python3 tests/reference/noise_expected.py
It prints every value test_noise.c pastes, with the formula it came from, and cross-checks
each closed form against a small nodal analysis in numpy (one direct solve per noise source).

Formulas (docs/noise.md has the full citations):
  thermal noise of a resistance  S_i = 4kT/R  (A^2/Hz), S_v = 4kTR (V^2/Hz)
      H. Nyquist, Phys. Rev. 32, 110 (1928); J. B. Johnson, Phys. Rev. 32, 97 (1928)
  shot noise of a junction current  S_i = 2q|I|   W. Schottky, Ann. Phys. 57, 541 (1918)
  flicker noise  S_i = KF |I|^AF / f  (the KF, AF model-parameter form; common practice)
  RC low-pass: total output noise  v^2 = kT/C, independent of R (the kT/C result, e.g.
      Gray & Meyer, Analysis and Design of Analog ICs, ch. 11 -- from memory)
  BJT hybrid-pi noise model: collector shot 2qIc, base shot 2qIb, rb thermal 4kT rb;
      input-referred e_n^2 ~ 4kT (rb + 1/(2 gm)) (Gray & Meyer ch. 11 -- from memory)
Constants: exact 2019 SI k and q; 27 C = 300.15 K.
"""

import math

import numpy as np
from scipy.optimize import brentq

K = 1.380649e-23       # J/K, exact (SI 2019)
Q = 1.602176634e-19    # C, exact (SI 2019)
T = 300.15             # K (27 C)
VT = K * T / Q
GMIN = 1e-12           # the simulator's junction gmin (noiseless, stamped across junctions)


def ac_freqs_dec(points_per_decade, f1, f2):
    """The .ac dec grid: f1 * 10^(k/N), k = 0 .. floor(N log10(f2/f1))."""
    n = int(math.floor(math.log10(f2 / f1) * points_per_decade + 1e-9)) + 1
    return f1 * 10.0 ** (np.arange(n) / points_per_decade)


def trapezoid(y, x):
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(x)))


def resistor_open_circuit(r_ohm, temp_k=T):
    """Open-circuit noise density of a resistor: sqrt(4kTR) V/sqrt(Hz)."""
    return math.sqrt(4.0 * K * temp_k * r_ohm)


def rc_lowpass(r_ohm, c_f, freqs):
    """Output PSD of R in series from an ideal source, C to ground: 4kTR / (1 + (wRC)^2).
    Returns (trapezoid-integrated rms over freqs, sqrt(kT/C))."""
    w = 2.0 * math.pi * freqs
    psd = 4.0 * K * T * r_ohm / (1.0 + (w * r_ohm * c_f) ** 2)
    return math.sqrt(trapezoid(psd, freqs)), math.sqrt(K * T / c_f)


def diode_current_source(i_bias, is_a, n, kf, af, freqs):
    """Diode biased by an ideal current source: output PSD (2q Id + KF Id^AF / f) / g^2 with
    g = dId/dV + gmin. Returns (Vd, Id, densities)."""
    nvt = n * VT
    vd = brentq(lambda v: is_a * math.expm1(v / nvt) + GMIN * v - i_bias, 0.0, 1.5, xtol=1e-15)
    idd = is_a * math.expm1(vd / nvt)
    g = is_a * math.exp(vd / nvt) / nvt + GMIN
    psd = (2.0 * Q * idd + kf * idd ** af / freqs) / g ** 2
    return vd, idd, np.sqrt(psd)


def bjt_currents(vbe, vbc, is_a, bf, br):
    """Ebers-Moll transport form (the Gummel-Poon model with VAF, VAR, IKF, IKR infinite,
    ISE = ISC = 0): IC, IB without gmin, and gm = dIC/dVbe."""
    i_f = is_a * math.expm1(vbe / VT)
    i_r = is_a * math.expm1(vbc / VT)
    ic = i_f - i_r - i_r / br
    ib = i_f / bf + i_r / br
    gm = is_a * math.exp(vbe / VT) / VT
    return ic, ib, gm


def bjt_collector_shot(vb, vc, is_a, bf, br):
    """Base held by an ideal source, collector current read through a 1-ohm transresistance:
    output density sqrt(2 q Ic), input-referred sqrt(2 q Ic) / gm (= sqrt(4kT/(2gm)))."""
    ic, ib, gm = bjt_currents(vb, vb - vc, is_a, bf, br)
    out = math.sqrt(2.0 * Q * ic)
    return ic, gm, out, out / gm, math.sqrt(4.0 * K * T / (2.0 * gm))


def ce_input_noise(v_in, rs, rb, is_a, bf, br, vc):
    """Common-emitter transistor, base driven from v_in through rs and the model's rb, emitter
    grounded, collector held at vc (current read through a 1-ohm transresistance). Hybrid-pi
    at the operating point: gpi = dIB/dVbe + gmin (+ the b'-c gmin), gm_eff = dIC/dVb'.
    Closed form of the input-referred PSD (derivation in docs/noise.md):
      S_in = 4kT (rs + rb) + 2q Ib (rs + rb)^2 + 2q Ic (1 + (rs + rb) gpi)^2 / gm_eff^2
    Returns a dict."""
    rt = rs + rb

    def kcl(vbe):
        vbc = vbe - vc
        ic, ib, gm = bjt_currents(vbe, vbc, is_a, bf, br)
        return (v_in - vbe) / rt - (ib + GMIN * (vbe + vbc))

    vbe = brentq(kcl, 0.3, v_in, xtol=1e-15)
    vbc = vbe - vc
    ic, ib, gm = bjt_currents(vbe, vbc, is_a, bf, br)
    gir = is_a * math.exp(vbc / VT) / VT
    gpi = is_a * math.exp(vbe / VT) / VT / bf + GMIN + gir / br + GMIN
    gm_eff = gm - gir - gir / br - GMIN  # dIC/dVbe + dIC/dVbc, both follow Vb'
    h = gm_eff / (1.0 + rt * gpi)         # v_in -> collector current
    s_rs = 4.0 * K * T * rs
    s_in = (s_rs + 4.0 * K * T * rb + 2.0 * Q * ib * rt ** 2
            + 2.0 * Q * ic * (1.0 + rt * gpi) ** 2 / gm_eff ** 2)

    if rs > 0.0:
        nodal_cross_check(rs, rb, gpi, gm_eff, ib, ic, h, s_in)
    gray_meyer = 4.0 * K * T * (rb + 1.0 / (2.0 * gm))
    return dict(vbe=vbe, ic=ic, ib=ib, gm=gm, gpi=gpi, h=h, in_density=math.sqrt(s_in),
                out_density=math.sqrt(s_in) * h,
                nf_db=10.0 * math.log10(s_in / s_rs) if rs > 0.0 else float("nan"),
                gray_meyer_en=math.sqrt(gray_meyer))


def nodal_cross_check(rs, rb, gpi, gm_eff, ib, ic, h, s_in):
    """The closed form again by nodal analysis on nodes (b, b'), every noise source solved
    on its own (sum of squares), as a check of the algebra."""
    y = np.array([[1.0 / rs + 1.0 / rb, -1.0 / rb],
                  [-1.0 / rb, 1.0 / rb + gpi]])

    def ic_from(inj):  # injected currents into (b, b') -> collector current
        v = np.linalg.solve(y, inj)
        return gm_eff * v[1]
    s_out = (ic_from(np.array([1.0, 0.0])) ** 2 * 4 * K * T / rs       # rs: Norton at b
             + ic_from(np.array([1.0, -1.0])) ** 2 * 4 * K * T / rb    # rb: b -> b'
             + ic_from(np.array([0.0, 1.0])) ** 2 * 2 * Q * ib         # base shot
             + 2 * Q * ic)                                             # collector shot
    h_nodal = ic_from(np.array([1.0 / rs, 0.0]))                        # v_in = 1 V
    assert abs(s_out / h_nodal ** 2 / s_in - 1.0) < 1e-12
    assert abs(h_nodal / h - 1.0) < 1e-12


def main():
    print("# resistor open-circuit noise sqrt(4kTR), T = 300.15 K (Nyquist 1928)")
    print("1k: %.17g V/rtHz   1k at 273.15 K: %.17g" % (resistor_open_circuit(1e3),
                                                         resistor_open_circuit(1e3, 273.15)))
    print("current density of 1k, sqrt(4kT/R): %.17g A/rtHz" % math.sqrt(4 * K * T / 1e3))

    f = ac_freqs_dec(100, 1.0, 1e9)
    for r in (1e3, 1e5):
        rms, ktc = rc_lowpass(r, 1e-9, f)
        print("# RC low-pass R = %g, C = 1 nF, .ac dec 100 1 1g (%d points)" % (r, len(f)))
        print("trapezoid rms %.17g V   sqrt(kT/C) %.17g V   ratio %.6f" % (rms, ktc, rms / ktc))

    fd = np.array([1.0, 10.0, 100.0, 1000.0])
    vd, idd, dens = diode_current_source(1e-3, 1e-14, 1.0, 3.2e-17, 1.0, fd)
    print("# diode IS 1e-14, N 1, KF 3.2e-17, AF 1, fed 1 mA by an ideal current source")
    print("Vd %.17g  Id %.17g" % (vd, idd))
    for fk, d in zip(fd, dens):
        print("f %g Hz: out %.17g V/rtHz" % (fk, d))

    ic, gm, out, inref, gm_form = bjt_collector_shot(0.7, 5.0, 1e-15, 100.0, 1.0)
    print("# BJT IS 1e-15 BF 100, Vbe 0.7 V ideal, Vce 5 V; collector read through 1 ohm")
    print("Ic %.17g  gm %.17g" % (ic, gm))
    print("out sqrt(2qIc) %.17g   in %.17g   sqrt(4kT/(2gm)) %.17g" % (out, inref, gm_form))

    for rs, rb in ((1e3, 100.0), (0.0, 10.0)):
        d = ce_input_noise(0.72, rs, rb, 1e-15, 100.0, 1.0, 5.0)
        print("# CE: vin dc 0.72, rs %g, model rb %g, IS 1e-15, BF 100, Vc 5 V" % (rs, rb))
        for k in ("vbe", "ic", "ib", "gm", "h", "in_density", "out_density", "nf_db",
                  "gray_meyer_en"):
            print("%s %.17g" % (k, d[k]))


if __name__ == "__main__":
    main()
