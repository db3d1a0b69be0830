#!/usr/bin/python3
"""Reference check: AC sweep and stage figures of passive first- and second-order networks
against their closed forms.

Usage: test_ac_passive.py PATH_TO_STAGESIM

Sources of the expected values (standard circuit theory, e.g. J. W. Nilsson, S. A. Riedel,
"Electric Circuits" - from memory; the numbers computed here in double precision from the
formulas):
  * first-order RC low-pass H = 1/(1 + j f/fc) and high-pass H = (j f/fc)/(1 + j f/fc),
    fc = 1/(2 pi R C): |H(fc)| = 1/sqrt(2) = -3.0103 dB, phase -45 / +45 deg;
    1 kOhm, 100 nF -> 1591.54943 Hz; 10 kOhm, 1 uF -> 15.9154943 Hz.
    Source and load impedances at fc: Zin = |R + 1/(j w C)| = sqrt(2) R,
    Zout = |R || 1/(j w C)| = R/sqrt(2).
  * series RLC band-pass (output across R): f0 = 1/(2 pi sqrt(L C)), Q = sqrt(L/C)/R,
    -3 dB bandwidth f0/Q = R/(2 pi L); corners f0 (sqrt(1 + 1/(4 Q^2)) -/+ 1/(2 Q));
    at f0 the gain is 1 at 0 deg, Zin = R, and the capacitor-side node carries sqrt(1 + Q^2)
    (the voltage magnification Q across C, plus the in-phase 1 V across R);
    10 mH, 100 nF, 10 Ohm -> f0 = 5032.92121 Hz, Q = 31.6227766, bandwidth 159.154943 Hz.
  * the project's stage definitions (docs/cli.md): mid-band = the largest |gain| on the sweep
    grid, corners where |gain| = mid-band/sqrt(2); a low-pass stage (DC gain within 3 dB of
    mid-band) has bandwidth = f_high; a corner outside the swept range is written empty.
    The exact corner for that definition on the grid used is also computed in closed form
    (low-pass: fc sqrt(1 + 2 (f1/fc)^2) for mid-band at the first grid point f1; high-pass:
    x^2 = (m/2)/(1 - m/2), m = |H(f_last)|^2) and compared to 0.01 %, the width to which
    the tool pins corners.
  * a two-section RC band-pass, for the bandwidth rule: swept from above its low corner
    the DC gain is 0, so f_low and bandwidth_hz are empty; swept across both corners the
    bandwidth is f_high - f_low (corners from the nodal solution of acref.py).
"""

import math

import numpy as np

import acref

SRC_RC = "first-order RC closed form (Nilsson & Riedel, from memory; computed)"
SRC_RLC = "series RLC closed form (Nilsson & Riedel, from memory; computed)"
SRC_DEF = "stage definitions of docs/cli.md, closed form computed"


def rc_netlist(kind, r, c, ac_line):
    if kind == "low-pass":
        body = "R1 in out %s\nC1 out 0 %s\n" % (acref.fmt(r), acref.fmt(c))
    else:
        body = "C1 in out %s\nR1 out 0 %s\n" % (acref.fmt(c), acref.fmt(r))
    return ("first-order RC %s\nV1 in 0 DC 0 AC 1\n%s%s\n.stage in=V1 out=out\n.end\n"
            % (kind, body, ac_line))


def rc_checks(chk, binary, kind, r, c, fc_quoted):
    fc = 1.0 / (2.0 * math.pi * r * c)
    tag = "RC %s %g ohm %g F" % (kind, r, c)
    chk.rel("%s: fc = 1/(2 pi R C) equals the quoted value" % tag, fc, fc_quoted, 1e-8, SRC_RC)

    # 1) a lin sweep whose middle point is fc: the response there
    text = rc_netlist(kind, r, c, ".ac lin 3 %s %s" % (acref.fmt(fc / 2), acref.fmt(1.5 * fc)))
    run = acref.run_tool(chk, binary, "rc_lin", text)
    if acref.expect_ok(chk, tag + " lin sweep", run, text):
        f = acref.column(run.ac, "freq_hz")
        chk.rel("%s: lin sweep middle frequency is fc" % tag, f[1], fc, 1e-12,
                "lin sweep: f1 + (f2 - f1) k/(N - 1) (common practice)")
        vm = acref.column(run.ac, "vm(out)")[1]
        vp = acref.column(run.ac, "vp(out)")[1]
        want_ph = -45.0 if kind == "low-pass" else 45.0
        chk.rel("%s: ac.csv 20 log10 vm(out) at fc [dB]" % tag, 20.0 * math.log10(vm),
                acref.HALF_POWER_DB, 0.0, SRC_RC, abs_=1e-6)
        chk.rel("%s: ac.csv vp(out) at fc [deg]" % tag, vp, want_ph, 0.0, SRC_RC, abs_=1e-6)
        st = run.stage
        chk.rel("%s: stage.csv gain_db at fc" % tag, acref.column(st, "gain_db")[1],
                acref.HALF_POWER_DB, 0.0, SRC_RC, abs_=1e-6)
        chk.rel("%s: stage.csv phase_deg at fc" % tag, acref.column(st, "phase_deg")[1],
                want_ph, 0.0, SRC_RC, abs_=1e-6)
        chk.rel("%s: stage.csv zin_ohm at fc = sqrt(2) R" % tag, acref.column(st, "zin_ohm")[1],
                math.sqrt(2.0) * r, 1e-9, SRC_RC)
        chk.rel("%s: stage.csv zout_ohm at fc = R/sqrt(2)" % tag, acref.column(st, "zout_ohm")[1],
                r / math.sqrt(2.0), 1e-9, SRC_RC)

    # 2) a wide log sweep: the corners of the stage summary
    f1, f2 = fc / 1e4, fc * 1e4
    text = rc_netlist(kind, r, c, ".ac dec 20 %s %s" % (acref.fmt(f1), acref.fmt(f2)))
    run = acref.run_tool(chk, binary, "rc_dec", text)
    if not acref.expect_ok(chk, tag + " dec sweep", run, text):
        return
    s = run.summary
    freqs = acref.column(run.ac, "freq_hz")
    if kind == "low-pass":
        x1 = freqs[0] / fc
        g_mid = 1.0 / math.sqrt(1.0 + x1 * x1)
        chk.rel("%s: f_high_hz = 1/(2 pi R C) within 0.1 %%" % tag, s.get("f_high_hz"), fc, 1e-3,
                SRC_RC)
        chk.rel("%s: f_high_hz, exact for mid-band at %g Hz" % (tag, freqs[0]), s.get("f_high_hz"),
                fc * math.sqrt(1.0 + 2.0 * x1 * x1), 1e-4, SRC_DEF)
        chk.true("%s: f_low_hz empty" % tag, s.get("f_low_hz", 0.0) is None,
                 "got %r" % (s.get("f_low_hz", "row missing"),), SRC_DEF)
        chk.rel("%s: bandwidth_hz = f_high (DC gain within 3 dB of mid-band)" % tag,
                s.get("bandwidth_hz"), fc * math.sqrt(1.0 + 2.0 * x1 * x1), 1e-4, SRC_DEF)
        chk.rel("%s: f_mid_hz = first sweep frequency" % tag, s.get("f_mid_hz"), freqs[0], 1e-12,
                SRC_DEF)
    else:
        x2 = freqs[-1] / fc
        m = x2 * x2 / (1.0 + x2 * x2)
        g_mid = math.sqrt(m)
        exact = fc * math.sqrt((m / 2.0) / (1.0 - m / 2.0))
        chk.rel("%s: f_low_hz = 1/(2 pi R C) within 0.1 %%" % tag, s.get("f_low_hz"), fc, 1e-3,
                SRC_RC)
        chk.rel("%s: f_low_hz, exact for mid-band at %g Hz" % (tag, freqs[-1]), s.get("f_low_hz"), exact,
                1e-4, SRC_DEF)
        for key in ("f_high_hz", "bandwidth_hz"):
            chk.true("%s: %s empty (no upper corner in range)" % (tag, key),
                     s.get(key, 0.0) is None, "got %r" % (s.get(key, "row missing"),), SRC_DEF)
        chk.rel("%s: f_mid_hz = last sweep frequency" % tag, s.get("f_mid_hz"), freqs[-1], 1e-12,
                SRC_DEF)
    chk.rel("%s: gain_mid_db" % tag, s.get("gain_mid_db"), 20.0 * math.log10(g_mid), 0.0,
            SRC_RC, abs_=1e-6)
    # the whole sweep against the closed form
    x = freqs / fc
    h = 1.0 / (1.0 + 1j * x) if kind == "low-pass" else 1j * x / (1.0 + 1j * x)
    z = acref.polar(acref.column(run.ac, "vm(out)"), acref.column(run.ac, "vp(out)"))
    err = np.abs(z - h) / np.abs(h)
    k = int(np.argmax(err))
    chk.worst("%s: ac.csv v(out) over the sweep (complex)" % tag, err[k], 1e-9,
              "%.6g Hz" % freqs[k], SRC_RC)


def rlc_checks(chk, binary):
    r, l, c = 10.0, 10e-3, 100e-9
    f0 = 1.0 / (2.0 * math.pi * math.sqrt(l * c))
    q = math.sqrt(l / c) / r
    bw = f0 / q
    tag = "series RLC 10 mH 100 nF 10 ohm"
    chk.rel("%s: f0 equals the quoted 5032.92121 Hz" % tag, f0, 5032.92121, 1e-9, SRC_RLC)
    chk.rel("%s: Q equals the quoted 31.6227766" % tag, q, 31.6227766, 1e-9, SRC_RLC)
    chk.rel("%s: f0/Q equals the quoted 159.154943 Hz" % tag, bw, 159.154943, 1e-9, SRC_RLC)
    text = ("series RLC band-pass\nV1 in 0 DC 0 AC 1\nL1 in m %s\nC1 m out %s\nR1 out 0 %s\n"
            ".ac lin 401 %s %s\n.stage in=V1 out=out\n.end\n"
            % (acref.fmt(l), acref.fmt(c), acref.fmt(r), acref.fmt(f0 - 2000.0),
               acref.fmt(f0 + 2000.0)))
    run = acref.run_tool(chk, binary, "rlc", text)
    if not acref.expect_ok(chk, tag, run, text):
        return
    s = run.summary
    chk.rel("%s: f_mid_hz = f0 (the sweep's middle point)" % tag, s.get("f_mid_hz"), f0, 1e-9,
            SRC_RLC)
    chk.rel("%s: gain_mid_db = 0 dB at resonance" % tag, s.get("gain_mid_db"), 0.0, 0.0, SRC_RLC,
            abs_=1e-6)
    fl, fh = s.get("f_low_hz"), s.get("f_high_hz")
    if fl is None or fh is None:
        chk.true("%s: both corners found" % tag, False, "f_low %r f_high %r" % (fl, fh), SRC_RLC)
        return
    chk.rel("%s: bandwidth f_high - f_low = f0/Q within 0.5 %%" % tag, fh - fl, bw, 5e-3, SRC_RLC)
    chk.rel("%s: bandwidth_hz column = f0/Q within 0.5 %%" % tag, s.get("bandwidth_hz"), bw, 5e-3,
            SRC_RLC)
    chk.rel("%s: Q = f0/(f_high - f_low) within 0.5 %%" % tag, f0 / (fh - fl), q, 5e-3, SRC_RLC)
    a = math.sqrt(1.0 + 1.0 / (4.0 * q * q))
    chk.rel("%s: f_low_hz = f0 (sqrt(1 + 1/4Q^2) - 1/2Q)" % tag, fl, f0 * (a - 0.5 / q), 1e-4,
            SRC_RLC)
    chk.rel("%s: f_high_hz = f0 (sqrt(1 + 1/4Q^2) + 1/2Q)" % tag, fh, f0 * (a + 0.5 / q), 1e-4,
            SRC_RLC)
    chk.rel("%s: zin_mid_ohm = R at resonance" % tag, s.get("zin_mid_ohm"), r, 1e-9, SRC_RLC)
    chk.range("%s: zout_mid_ohm ~ 0 at resonance (LC branch a short)" % tag,
              s.get("zout_mid_ohm"), 0.0, 1e-6, SRC_RLC)
    freqs = acref.column(run.ac, "freq_hz")
    k = int(np.argmin(np.abs(freqs - f0)))
    chk.rel("%s: stage.csv phase_deg = 0 at f0" % tag, acref.column(run.stage, "phase_deg")[k],
            0.0, 0.0, SRC_RLC, abs_=1e-6)
    chk.rel("%s: ac.csv vm(m) = sqrt(1 + Q^2) at f0" % tag, acref.column(run.ac, "vm(m)")[k],
            math.sqrt(1.0 + q * q), 1e-9, SRC_RLC)
    # the whole sweep against H = R/(R + j w L + 1/(j w C))
    w = 2.0 * math.pi * freqs
    h = r / (r + 1j * w * l + 1.0 / (1j * w * c))
    z = acref.polar(acref.column(run.ac, "vm(out)"), acref.column(run.ac, "vp(out)"))
    err = np.abs(z - h) / np.abs(h)
    j = int(np.argmax(err))
    chk.worst("%s: ac.csv v(out) over the sweep (complex)" % tag, err[j], 1e-9,
              "%.6g Hz" % freqs[j], SRC_RLC)


def bandpass_checks(chk, binary):
    """A two-section RC band-pass: the bandwidth rule when the lower corner lies below the
    sweep (the DC gain is 0, so no bandwidth can be stated) and when both corners are in."""
    tag = "RC band-pass 1 uF/10k + 100k/100 pF"
    src = "stage definitions of docs/cli.md; corners computed with numpy/scipy (acref.py)"
    for f1, f2, what in ((100.0, 1e6, "swept above its low corner"),
                         (0.1, 1e6, "swept across both corners")):
        c = acref.Circuit("two-section RC band-pass")
        c.V("v1", "in", "0", 0.0, ac=1.0)
        c.C("c1", "in", "a", 1e-6)
        c.R("r1", "a", "0", 10e3)
        c.R("r2", "a", "out", 100e3)
        c.C("c2", "out", "0", 100e-12)
        c.set_ac("dec", 20, f1, f2)
        c.set_stage("v1", "out")
        text = c.netlist()
        run = acref.run_tool(chk, binary, "bandpass", text)
        if not acref.expect_ok(chk, "%s %s" % (tag, what), run, text):
            continue
        c.solve_op()
        ref, _ = c.stage_summary(list(acref.column(run.ac, "freq_hz")))
        s = run.summary
        chk.rel("%s %s: f_high_hz" % (tag, what), s.get("f_high_hz"), ref["f_high_hz"], 1e-4,
                src)
        if f1 > 20.0:
            for key in ("f_low_hz", "bandwidth_hz"):
                chk.true("%s %s: %s empty (DC gain 0, not within 3 dB)" % (tag, what, key),
                         s.get(key, 0.0) is None, "got %r" % (s.get(key, "row missing"),), src)
        else:
            chk.rel("%s %s: f_low_hz" % (tag, what), s.get("f_low_hz"), ref["f_low_hz"], 1e-4,
                    src)
            chk.rel("%s %s: bandwidth_hz = f_high - f_low" % (tag, what),
                    s.get("bandwidth_hz"), ref["f_high_hz"] - ref["f_low_hz"], 1e-4, src)


def main():
    binary = acref.binary_from_argv()
    chk = acref.Checker()
    for r, c, fq in ((1e3, 100e-9, 1591.54943), (10e3, 1e-6, 15.9154943)):
        for kind in ("low-pass", "high-pass"):
            chk.guard(rc_checks, chk, binary, kind, r, c, fq)
    chk.guard(rlc_checks, chk, binary)
    chk.guard(bandpass_checks, chk, binary)
    chk.finish()


if __name__ == "__main__":
    main()
