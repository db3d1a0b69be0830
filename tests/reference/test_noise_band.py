#!/usr/bin/python3
"""Reference check: the noise analysis's own band (.noise band=F1..F2) and its A-weighting,
against closed forms and scipy quadrature computed here, sharing no code with the C solver.

Usage: test_noise_band.py PATH_TO_STAGESIM

Sources:
  * thermal noise of a resistor, S = 4kTR V^2/Hz open circuit (J. B. Johnson, Phys. Rev. 32,
    97 (1928); H. Nyquist, Phys. Rev. 32, 110 (1928));
  * an RC low-pass seen from its capacitor: S(f) = 4kTR / (1 + (f/fc)^2), fc = 1/(2 pi R C),
    whose integral over f1 .. f2 is 4kTR fc (atan(f2/fc) - atan(f1/fc)) and over 0 .. inf
    kT/C (common closed form);
  * the A-weighting of IEC 61672-1:2013, annex E (pole frequencies 20.6 Hz, 107.7 Hz,
    737.9 Hz, 12194 Hz, +2.00 dB normalisation at 1 kHz; from memory), integrated with
    scipy.integrate.quad.

Our own scenario: a geophone's coil resistance (4.7 kOhm) with a 22 nF filter capacitor in
front of a preamp input, and the 1 Hz .. 1 kHz band a seismic survey records.
"""

import csv
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import integrate

import refcommon as rc

K = rc.K_BOLTZMANN
T = rc.kelvin(rc.TNOM_C)
SRC_RC = "Johnson 1928 / Nyquist 1928, RC band integral 4kTR fc (atan(f2/fc) - atan(f1/fc))"
SRC_A = "IEC 61672-1:2013 annex E A-weighting, scipy.integrate.quad"


def a_weight(f):
    """IEC 61672-1:2013 (E.6) as an amplitude ratio, normalised by +2.00 dB at 1 kHz."""
    f1, f2, f3, f4 = 20.6, 107.7, 737.9, 12194.0
    f = np.asarray(f, dtype=float)
    num = f4 ** 2 * f ** 4
    den = (f ** 2 + f1 ** 2) * np.sqrt(f ** 2 + f2 ** 2) * np.sqrt(f ** 2 + f3 ** 2) \
        * (f ** 2 + f4 ** 2)
    return num / den * 10 ** (2.0 / 20.0)


def run(exe, name, text, extra=()):
    d = tempfile.mkdtemp(prefix="ssref_%s_" % name)
    rc._tmpdirs.append(d)
    cir = os.path.join(d, name + ".cir")
    out = os.path.join(d, "out")
    with open(cir, "w") as f:
        f.write(text)
    p = subprocess.run([exe, "run", cir, "-o", out, "-q"] + list(extra), capture_output=True,
                       text=True, timeout=120)
    if p.returncode != 0:
        rc._fail_run(name, "exit %d: %s" % (p.returncode, p.stderr.strip()), text)
        return {}, []
    with open(os.path.join(out, "noise_summary.csv")) as f:
        summary = {r["metric"]: float(r["value"]) if r["value"] else float("nan")
                   for r in csv.DictReader(f)}
    with open(os.path.join(out, "noise.csv")) as f:
        rows = [(float(r["freq_hz"]), float(r["out_noise_v_rthz"]), float(r["in_noise_v_rthz"]))
                for r in csv.DictReader(f)]
    return summary, rows


R, C = 4.7e3, 22e-9
FC = 1.0 / (2 * math.pi * R * C)
GEOPHONE = ("geophone coil with filter capacitor\n"
            "vg coil 0 ac 1\n"
            "rcoil coil out 4.7k\n"
            "cf out 0 22n\n"
            ".ac dec 10 10k 1meg\n"   # far from the band on purpose: the band is its own
            ".noise v(out) vg %s\n")


def rc_band(f1, f2):
    return 4 * K * T * R * FC * (math.atan(f2 / FC) - math.atan(f1 / FC))


def band_checks(exe):
    s, rows = run(exe, "geo_band", GEOPHONE % "band=1..1k")
    exp_out = math.sqrt(rc_band(1.0, 1e3))
    exp_in = math.sqrt(4 * K * T * R * (1e3 - 1.0))  # input-referred: flat 4kTR
    rc.check("RC band 1 Hz..1 kHz: out_noise_band_rms_v", s.get("out_noise_band_rms_v"),
             exp_out, 1e-8, 0, SRC_RC)
    rc.check("RC band 1 Hz..1 kHz: in_noise_band_rms_v", s.get("in_noise_band_rms_v"),
             exp_in, 1e-8, 0, "Johnson/Nyquist 4kTR (f2 - f1)")
    rc.check("RC band: out_noise_rms_v is the band's", s.get("out_noise_rms_v"), exp_out, 1e-8, 0,
             SRC_RC)
    rc.check("RC band: 3 decades at 100 a decade", s.get("band_points"), 301, 0, 0,
             "documented grid")
    rc.check("RC band: first frequency", rows[0][0] if rows else None, 1.0, 0, 0, "band edge")
    rc.check("RC band: last frequency", rows[-1][0] if rows else None, 1e3, 0, 0, "band edge")
    for f, out, _ in rows[::60]:
        rc.check("RC density at %.4g Hz" % f, out, math.sqrt(4 * K * T * R / (1 + (f / FC) ** 2)),
                 1e-9, 0, "Johnson/Nyquist through the RC divider")

    # a band far wider than the corner: the integral tends to kT/C
    f1, f2 = FC * 1e-4, FC * 1e4
    s, _ = run(exe, "geo_wide", GEOPHONE % ("band=%.17g..%.17g" % (f1, f2)))
    rc.check("RC wide band: closed form", s.get("out_noise_band_rms_v"),
             math.sqrt(rc_band(f1, f2)), 1e-8, 0, SRC_RC)
    rc.check("RC wide band: kT/C", s.get("out_noise_band_rms_v"), math.sqrt(K * T / C), 1e-4, 0,
             "kT/C (common closed form); band truncation 6.4e-5 in the rms")

    # the documented error of Simpson's rule in ln f against the point density
    for pd, tol in ((5, 3e-5), (10, 2e-7), (20, 2e-9), (50, 2e-10)):
        s, _ = run(exe, "geo_pd%d" % pd,
                   GEOPHONE % ("band=%.17g..%.17g per_decade=%d" % (FC * 1e-3, FC * 1e3, pd)))
        rc.check("RC 6 decades at %d a decade" % pd, s.get("out_noise_band_rms_v"),
                 math.sqrt(rc_band(FC * 1e-3, FC * 1e3)), tol, 0, SRC_RC)

    # the CLI option gives the same band as the line
    s2, _ = run(exe, "geo_cli", GEOPHONE % "", ["--noise-band", "1..1k"])
    rc.check("--noise-band 1..1k = band=1..1k", s2.get("out_noise_band_rms_v"), exp_out, 1e-8, 0,
             SRC_RC)


def weighting_checks(exe):
    # a resistor fed by a noiseless current source: flat 4kTR at the output
    net = ("listening-channel load resistor\n"
           "isig 0 out ac 1\n"
           "rl out 0 10k\n"
           ".noise v(out) isig band=20..20k weight=a\n")
    s, _ = run(exe, "a_white", net)
    sw = 4 * K * T * 10e3
    val, _ = integrate.quad(lambda f: sw * a_weight(f) ** 2, 20.0, 20e3, limit=400,
                            epsabs=0, epsrel=1e-12, points=[100, 1e3, 1e4])
    rc.check("white 20 Hz..20 kHz: out_noise_a_rms_v", s.get("out_noise_a_rms_v"),
             math.sqrt(val), 1e-6, 0, SRC_A)
    rc.check("white 20 Hz..20 kHz: unweighted", s.get("out_noise_band_rms_v"),
             math.sqrt(sw * (20e3 - 20.0)), 1e-8, 0, "Johnson/Nyquist 4kTR (f2 - f1)")
    # the RC: weighted output and input-referred
    s, _ = run(exe, "a_rc", GEOPHONE % "band=20..20k weight=a")
    val, _ = integrate.quad(lambda f: 4 * K * T * R / (1 + (f / FC) ** 2) * a_weight(f) ** 2,
                            20.0, 20e3, limit=400, epsabs=0, epsrel=1e-12,
                            points=[100, 1e3, FC, 1e4])
    rc.check("RC 20 Hz..20 kHz: out_noise_a_rms_v", s.get("out_noise_a_rms_v"), math.sqrt(val),
             1e-6, 0, SRC_A)
    val, _ = integrate.quad(lambda f: 4 * K * T * R * a_weight(f) ** 2, 20.0, 20e3, limit=400,
                            epsabs=0, epsrel=1e-12, points=[100, 1e3, 1e4])
    rc.check("RC 20 Hz..20 kHz: in_noise_a_rms_v", s.get("in_noise_a_rms_v"), math.sqrt(val),
             1e-6, 0, SRC_A)


def main():
    exe = rc.binary_from_argv()
    band_checks(exe)
    weighting_checks(exe)
    rc.finish()


if __name__ == "__main__":
    main()
