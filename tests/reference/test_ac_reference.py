#!/usr/bin/python3
"""Reference check: the small-signal AC sweep and the stage figures of four circuits,
against an independent solution in Python to 1e-6 relative.

Usage: test_ac_reference.py PATH_TO_STAGESIM

Expected values: computed with numpy/scipy by acref.py, which shares no code with the tool:
  * the DC operating point from hand-written Kirchhoff current-law residuals of the
    Gummel-Poon / Shockley models (equations and sources in acref.py's docstring: Gummel &
    Poon 1970, Nagel 1975, Getreu 1976, Shockley 1949, GMIN 1e-12 S across every junction)
    solved with scipy.optimize.root and polished by Newton steps with an exact
    (complex-step) Jacobian;
  * the small-signal model: that Jacobian at the operating point (the hybrid-pi
    linearisation, Gray & Meyer ch. 1) plus j*omega times the capacitances (depletion with
    the FC extension, diffusion TF d(IF/qb)/dVbe, TR dIR/dVbc, diode TT gd), assembled as
    a dense complex nodal matrix (modified nodal analysis, Ho, Ruehli & Brennan 1975)
    and solved with numpy.linalg.solve at every frequency of the tool's ac.csv;
  * the stage figures by the project's definitions (docs/cli.md): gain = V(out) with the
    stage source at AC 1 and all others at 0, Zin = V across / current delivered by the
    stage source, Zout = V(out) for 1 A into out with all sources at zero; mid-band =
    the maximum of |gain| (grid maximum refined between its grid neighbours with
    scipy.optimize.minimize_scalar); corners = where |gain| = mid-band / sqrt(2), found
    here with scipy.optimize.brentq to 1e-14.

Tolerances: 1e-6 relative on every complex AC quantity (|z_tool - z_ref| / |z_ref|; this
bounds the magnitude error and the phase error in radians alike); corners 1e-4 (0.01 %,
the width to which the tool pins them). The tool's Newton tolerances are tightened in these
netlists (.options tol_rel/tol_v/tol_i) so the comparison tests the linearisation and the
AC solve, not where the DC iteration happened to stop; a second pass with the default
tolerances compares the same quantities to 1e-4. The frequency of the gain maximum
(f_mid_hz) is compared to 0.1 % only: at the top of a flat band ln|gain| is nearly
constant in ln f, so rounding alone moves the located maximum by ~sqrt(1e-16 / curvature);
gain_mid_db, zin_mid_ohm and zout_mid_ohm are compared to 1e-6 with the reference
evaluated at the tool's own f_mid. Before any comparison the reference is checked on its
own against published check values and closed forms (depletion capacitance, temperature
laws, Ebers-Moll gm, RC and RLC networks).

Circuits (own scenarios, invented model cards):
  A  vibration-sensor front-end: NPN common-emitter stage, divider bias, partly bypassed
     emitter resistor, coupling capacitors, a model with every DC parameter and RB RE RC,
     CJE CJC TF TR; the supply carries AC ripple 0.01 V at 90 deg and the stage source is
     AC 2 at 10 deg (ac.csv uses them, the stage figures must not)
  B  hydrophone buffer: NPN emitter follower, area 2, at .temp 40 with XTB, `oct` sweep
  C  photodiode amplifier: photodiode current (I source) into an NPN CE stage
     direct-coupled to a PNP CE stage with series feedback, a supply choke (L) and
     decoupling, at .temp 60
  D  detector / varactor network: a forward-biased diode with RS, CJO, TT, N and area and a
     reverse-biased varactor fed through 1 GOhm (there GMIN changes the answer by ~1e-5),
     a bias current source, at .temp 0
"""

import math

import numpy as np

import acref
from acref import Circuit

TIGHT = ".options tol_rel=1e-9 tol_v=1e-12 tol_i=1e-15"
SRC_REF = "computed with numpy/scipy, own op + hybrid-pi MNA (acref.py)"
SRC_DEF = "stage definitions of docs/cli.md, computed with numpy/scipy (acref.py)"


def circuit_a():
    c = Circuit("vibration-sensor front-end, NPN common emitter")
    c.V("vcc", "vcc", "0", 12.0, ac=0.01, ac_deg=90.0)
    c.V("vs", "src", "0", 0.0, ac=2.0, ac_deg=10.0)
    c.R("rs", "src", "a", 600.0)
    c.C("c1", "a", "b", 2.2e-6)
    c.R("r1", "vcc", "b", 56e3)
    c.R("r2", "b", "0", 12e3)
    c.Q("q1", "c", "b", "e", "nqa")
    c.R("rc", "vcc", "c", 4.7e3)
    c.R("re1", "e", "e2", 150.0)
    c.R("re2", "e2", "0", 820.0)
    c.C("ce", "e2", "0", 47e-6)
    c.C("c2", "c", "out", 1e-6)
    c.R("rl", "out", "0", 47e3)
    c.model("nqa", "npn", IS=2e-15, BF=180, NF=1.005, VAF=80, IKF=0.08, ISE=5e-14, NE=1.6,
            BR=3, NR=1.01, VAR=25, IKR=0.04, ISC=1e-13, NC=1.9, RB=120, RE=0.8, RC=2.5,
            CJE=12e-12, VJE=0.72, MJE=0.35, CJC=5e-12, VJC=0.6, MJC=0.4, FC=0.5, TF=0.4e-9,
            TR=40e-9)
    c.set_ac("dec", 10, 1.0, 1e9)
    c.set_stage("vs", "out")
    c.guess = {"vcc": 12.0, "b": 2.0, "e": 1.35, "e2": 1.15, "c": 5.5}
    return c


def circuit_b():
    c = Circuit("hydrophone buffer, NPN emitter follower")
    c.V("vcc", "vcc", "0", 9.0)
    c.V("vs", "src", "0", 0.0, ac=1.0)
    c.R("rs", "src", "a", 10e3)
    c.C("c1", "a", "b", 100e-9)
    c.R("r1", "vcc", "b", 1e6)
    c.R("r2", "b", "0", 1.2e6)
    c.Q("q1", "vcc", "b", "e", "nqb", area=2.0)
    c.R("re", "e", "0", 4.7e3)
    c.C("c2", "e", "out", 10e-6)
    c.R("rl", "out", "0", 10e3)
    c.model("nqb", "npn", IS=5e-16, BF=250, VAF=120, IKF=0.05, ISE=1e-15, NE=1.5, RB=200,
            RE=1.5, RC=10, CJE=6e-12, VJE=0.7, MJE=0.33, CJC=3e-12, VJC=0.55, MJC=0.38,
            TF=0.3e-9, TR=60e-9, XTB=1.5, XTI=3, EG=1.11)
    c.temp_c = 40.0
    c.set_ac("oct", 3, 0.1, 1e9)
    c.set_stage("vs", "out")
    c.guess = {"vcc": 9.0, "b": 4.6, "e": 4.0}
    return c


def circuit_c():
    c = Circuit("photodiode amplifier, NPN CE into PNP CE with series feedback")
    c.V("vcc", "vcc", "0", 15.0)
    c.L("lch", "vcc", "vr", 100e-6)
    c.C("cdec", "vr", "0", 10e-6)
    c.I("ipd", "0", "b1", 0.0, ac=1.0)
    c.C("cpd", "b1", "0", 5e-12)
    c.R("r1", "vr", "b1", 82e3)
    c.R("r2", "b1", "0", 15e3)
    c.Q("q1", "c1", "b1", "e1", "nqc")
    c.R("rc1", "vr", "c1", 1.5e3)
    c.R("re1a", "e1", "e1b", 100.0)
    c.R("re1b", "e1b", "0", 1.1e3)
    c.C("ce1", "e1b", "0", 22e-6)
    c.Q("q2", "c2", "c1", "e2", "pqc")
    c.R("re2", "vr", "e2", 470.0)
    c.R("rc2", "c2", "0", 3.9e3)
    c.R("rf", "c2", "e1", 22e3)
    c.C("cf", "c2", "c1", 2e-12)
    c.C("c3", "c2", "out", 4.7e-6)
    c.R("rl", "out", "0", 22e3)
    c.model("nqc", "npn", IS=3e-15, BF=150, VAF=90, IKF=0.1, ISE=2e-14, NE=1.55, BR=4,
            RB=60, RE=0.5, RC=3, CJE=10e-12, VJE=0.7, MJE=0.34, CJC=4e-12, VJC=0.58,
            MJC=0.36, TF=0.35e-9, TR=50e-9, XTB=1.7, XTI=3.5, EG=1.12)
    c.model("pqc", "pnp", IS=1e-15, BF=120, VAF=50, IKF=0.06, ISE=2e-14, NE=1.7, BR=2,
            VAR=15, IKR=0.02, ISC=5e-14, NC=1.8, RB=80, RE=1, RC=4, CJE=15e-12, VJE=0.75,
            MJE=0.36, CJC=8e-12, VJC=0.62, MJC=0.42, FC=0.6, TF=0.6e-9, TR=80e-9, XTB=1.2)
    c.temp_c = 60.0
    c.set_ac("dec", 10, 1.0, 1e9)
    c.set_stage("ipd", "out")
    c.guess = {"vcc": 15.0, "vr": 15.0, "b1": 2.2, "e1": 1.6, "e1b": 1.5, "c1": 13.0,
               "e2": 13.7, "c2": 9.0}
    return c


def circuit_d():
    c = Circuit("detector and varactor network")
    c.V("vs", "in", "0", 1.5, ac=1.0)
    c.R("r1", "in", "a", 1e3)
    c.D("d1", "a", "k", "df", area=2.0)
    c.R("r2", "k", "0", 220.0)
    c.C("c1", "k", "0", 10e-9)
    c.V("vb", "vb", "0", -4.0)
    c.R("r3", "vb", "t", 1e9)
    c.D("d2", "t", "k", "dv")
    c.I("i1", "0", "k", 0.5e-3)
    c.model("df", "d", IS=2e-14, N=1.8, RS=5, CJO=4e-12, VJ=0.7, M=0.4, FC=0.5, TT=10e-9,
            XTI=3, EG=1.11)
    c.model("dv", "d", IS=1e-15, N=1.05, CJO=30e-12, VJ=0.8, M=0.5)
    c.temp_c = 0.0
    c.set_ac("dec", 10, 1e3, 10e9)
    c.set_stage("vs", "k")
    c.guess = {"in": 1.5, "a": 1.0, "k": 0.2, "vb": -4.0, "t": -4.0}
    return c


def cplx_err(zt, zr, floor):
    """Relative error of complex values, with an absolute floor for values near zero."""
    return np.abs(zt - zr) / np.maximum(np.abs(zr), floor)


def compare(chk, binary, label, ckt, options, tol, corner_tol, stats):
    text = ckt.netlist(extra_lines=[options] if options else [])
    run = acref.run_tool(chk, binary, label.replace(" ", "_"), text)
    if not acref.expect_ok(chk, label, run, text):
        return
    x = ckt.x_op

    # operating point (user nodes and voltage-source currents), a precondition
    worst, where = 0.0, ""
    for nd in ckt.user_nodes:
        got = run.op.get("v(%s)" % nd)
        ref = x[ckt.node_index[nd]]
        e = abs(got - ref) / max(abs(ref), 1e-3) if got is not None else math.inf
        if e > worst:
            worst, where = e, "v(%s)" % nd
    for el in ckt.elems:
        if el["kind"] == "v":
            got = run.op.get("i(%s)" % el["name"])
            ref = x[el["k"]]
            e = abs(got - ref) / max(abs(ref), 1e-9) if got is not None else math.inf
            if e > worst:
                worst, where = e, "i(%s)" % el["name"]
    chk.worst("%s: op.csv node voltages and source currents" % label, worst, tol, where,
              SRC_REF + ": scipy.optimize.root on hand-written KCL")
    stats["op"] = max(stats.get("op", 0.0), worst)

    # ac.csv: every user node, every frequency, all sources at their netlist AC values
    head, data = run.ac
    freqs = data[:, 0]
    ref = np.array([ckt.ac_solution(f) for f in freqs])
    scale = max(np.max(np.abs(ref[:, :ckt.n_nodes])), 1e-30)
    vm_worst = vp_worst = 0.0
    vm_where = vp_where = ""
    for nd in ckt.user_nodes:
        u = ckt.node_index[nd]
        if "vm(%s)" % nd not in head:
            chk.true("%s: ac.csv has vm(%s)" % (label, nd), False, "column missing", SRC_REF)
            continue
        vm = acref.column(run.ac, "vm(%s)" % nd)
        vp = acref.column(run.ac, "vp(%s)" % nd)
        zr = ref[:, u]
        err = cplx_err(acref.polar(vm, vp), zr, 1e-9 * scale)
        k = int(np.argmax(err))
        chk.worst("%s: ac.csv v(%s) (vm, vp as a complex value)" % (label, nd), err[k], tol,
                  "%.6g Hz" % freqs[k], SRC_REF)
        stats["ac v"] = max(stats.get("ac v", 0.0), err[k])
        me = np.abs(vm - np.abs(zr)) / np.maximum(np.abs(zr), 1e-9 * scale)
        if me.max() > vm_worst:
            vm_worst, vm_where = me.max(), "vm(%s) %.6g Hz" % (nd, freqs[int(np.argmax(me))])
        live = np.abs(zr) > 1e-9 * scale
        if live.any():
            pe = np.abs(acref.wrap_deg(vp - np.degrees(np.angle(zr))))[live]
            if pe.max() > vp_worst:
                vp_worst = pe.max()
                vp_where = "vp(%s) %.6g Hz" % (nd, freqs[live][int(np.argmax(pe))])
    chk.worst("%s: ac.csv vm (magnitudes)" % label, vm_worst, tol, vm_where, SRC_REF)
    chk.worst("%s: ac.csv vp (phase, wrap-aware; tol = %g rad)" % (label, tol),
              vp_worst, math.degrees(tol), vp_where, SRC_REF, what="error in degrees")
    stats["ac vm"] = max(stats.get("ac vm", 0.0), vm_worst)
    stats["ac vp deg"] = max(stats.get("ac vp deg", 0.0), vp_worst)

    # ac.csv frequency grid: `dec`/`oct` N = N log-spaced points per decade/octave from
    # fstart up to fstop; `lin` N = N points fstart..fstop (common practice)
    kind, n, f1, f2 = ckt.ac
    if kind == "lin":
        grid = f1 + (f2 - f1) * np.arange(n) / max(n - 1, 1)
    else:
        per = {"dec": 10.0, "oct": 2.0}[kind]
        count = int(math.floor(n * math.log(f2 / f1) / math.log(per) + 1e-9)) + 1
        grid = f1 * per ** (np.arange(count) / n)
    ok = len(grid) == len(freqs) and np.allclose(freqs, grid, rtol=1e-12, atol=0.0)
    chk.true("%s: ac.csv frequencies are %s %d from %g to %g Hz" % (label, kind, n, f1, f2), ok,
             "%d points, first %.9g last %.9g" % (len(freqs), freqs[0], freqs[-1]),
             "sweep grid: N points per decade / octave from fstart, or N evenly spaced "
             "(common practice)")

    # stage.csv: every frequency
    sh, sd = run.stage
    sf = sd[:, 0]
    pts = [ckt.stage_point(f) for f in sf]
    g = np.array([p[0] for p in pts])
    zin = np.array([p[1] for p in pts])
    zout = np.array([p[2] for p in pts])
    gain = acref.column(run.stage, "gain")
    gdb = acref.column(run.stage, "gain_db")
    ph = acref.column(run.stage, "phase_deg")
    rows = [
        ("gain and phase_deg as a complex gain", cplx_err(acref.polar(gain, ph), g, 0.0), tol),
        ("gain (magnitude)", np.abs(gain - np.abs(g)) / np.abs(g), tol),
        ("gain_db (error in dB / 8.686, i.e. relative)",
         np.abs(gdb - 20.0 * np.log10(np.abs(g))) / (20.0 / math.log(10.0)), tol),
        ("phase_deg (wrap-aware; tol = %g rad)" % tol,
         np.abs(acref.wrap_deg(ph - np.degrees(np.angle(g)))), math.degrees(tol)),
        ("zin_ohm", np.abs(acref.column(run.stage, "zin_ohm") - np.abs(zin)) / np.abs(zin), tol),
        ("zout_ohm", np.abs(acref.column(run.stage, "zout_ohm") - np.abs(zout)) / np.abs(zout),
         tol),
    ]
    for what, err, t in rows:
        k = int(np.argmax(err))
        chk.worst("%s: stage.csv %s" % (label, what), err[k], t, "%.6g Hz" % sf[k], SRC_DEF,
                  what="error in degrees" if what.startswith("phase") else "relative error")
        key = "stage " + what.split(" ")[0]
        if what.startswith("gain and"):
            key = "stage complex gain"
        stats[key] = max(stats.get(key, 0.0), err[k])
    # phase_deg is unwrapped along the sweep and shifted so that the grid point of largest
    # gain reads in (-180, 180] (docs/cli.md)
    jumps = np.abs(np.diff(ph))
    chk.true("%s: stage.csv phase_deg unwrapped (no step of 180 deg or more)" % label,
             jumps.size == 0 or jumps.max() < 180.0,
             "largest step %.6g deg" % (jumps.max() if jumps.size else 0.0),
             "docs/cli.md: phase_deg unwrapped along the sweep")
    kg = int(np.argmax(np.abs(g)))
    chk.true("%s: stage.csv phase_deg at the grid maximum in (-180, 180]" % label,
             -180.0 < ph[kg] <= 180.0, "%.9g deg at %.6g Hz" % (ph[kg], sf[kg]),
             "docs/cli.md: shifted so the mid-band value lies in (-180, 180]")
    chk.true("%s: stage.csv has the ac.csv frequencies" % label,
             len(sf) == len(freqs) and np.array_equal(sf, freqs), "%d rows" % len(sf),
             "docs/cli.md: one stage.csv row per .ac frequency")

    # stage_summary.csv
    summ, _ = ckt.stage_summary(list(sf))
    s = run.summary
    chk.rel("%s: gain_mid_db (as |gain|)" % label,
            10 ** (s["gain_mid_db"] / 20.0) if s.get("gain_mid_db") is not None else None,
            10 ** (summ["gain_mid_db"] / 20.0), tol, SRC_DEF)
    if s.get("gain_mid_db") is not None:
        stats["summary gain_mid"] = max(stats.get("summary gain_mid", 0.0), abs(
            10 ** ((s["gain_mid_db"] - summ["gain_mid_db"]) / 20.0) - 1.0))
    # the peak of a flat band is located only to about sqrt(rounding / curvature of
    # ln|gain| in ln f), so f_mid is compared loosely, and the mid-band impedances are
    # compared with the reference evaluated at the tool's own f_mid
    f_mid = s.get("f_mid_hz")
    chk.rel("%s: f_mid_hz (peak location, 0.1 %%)" % label, f_mid, summ["f_mid_hz"], 1e-3,
            SRC_DEF)
    if f_mid is not None:
        stats["summary f_mid_hz"] = max(stats.get("summary f_mid_hz", 0.0),
                                        abs(f_mid / summ["f_mid_hz"] - 1.0))
        g_at, zin_at, zout_at = ckt.stage_point(f_mid)
        chk.rel("%s: gain_mid_db is |gain| at f_mid" % label,
                10 ** (s["gain_mid_db"] / 20.0) if s.get("gain_mid_db") is not None else None,
                abs(g_at), tol, SRC_DEF)
        for key, ref_z in (("zin_mid_ohm", abs(zin_at)), ("zout_mid_ohm", abs(zout_at))):
            chk.rel("%s: %s (at the tool's f_mid)" % (label, key), s.get(key), ref_z, tol,
                    SRC_DEF)
            if s.get(key) is not None:
                stats["summary " + key] = max(stats.get("summary " + key, 0.0),
                                              abs(s[key] / ref_z - 1.0))
    for key in ("f_low_hz", "f_high_hz", "bandwidth_hz"):
        exp = summ[key]
        if exp is None:
            chk.true("%s: %s empty (no half-power point in the swept range)" % (label, key),
                     s.get(key, 0.0) is None, "got %r" % (s.get(key, "row missing"),), SRC_DEF)
            continue
        if key == "bandwidth_hz" and summ["f_low_hz"] is not None:
            chk.rel("%s: %s = f_high - f_low" % (label, key), s.get(key), exp, 0.0, SRC_DEF,
                    abs_=corner_tol * (summ["f_low_hz"] + summ["f_high_hz"]))
        else:
            chk.rel("%s: %s" % (label, key), s.get(key), exp, corner_tol, SRC_DEF)
        if s.get(key) is not None:
            stats["summary " + key] = max(stats.get("summary " + key, 0.0), abs(s[key] / exp - 1.0))
    return run


def self_checks(chk):
    """The reference itself against published check values and closed forms, so that an
    agreement with the tool cannot come from a shared mistake of the reference."""
    src = ("depletion law with FC extension (Nagel 1975; Getreu 1976; from memory), check values "
           "computed in double precision (CJ 1 pF, VJ 0.75 V, M 0.33, FC 0.5)")
    for v, c in ((-5.0, 0.510598845e-12), (0.3, 1.18361398e-12), (0.375, 1.25701337e-12),
                 (0.7, 1.6165192e-12)):
        chk.rel("reference self-check: depletion C(%g V)" % v,
                acref.depletion_cap(v, 1e-12, 0.75, 0.33, 0.5), c, 1e-7, src)
    vj, cj = acref.vj_cj_at(0.75, 1e-12, 0.33, 350.15, 300.15)
    src = ("temperature laws (Getreu 1976 via Antognetti & Massobrio; Varshni 1967; from memory), "
           "check values computed in double precision")
    chk.rel("reference self-check: VJ(350.15 K)", vj, 0.661121358, 1e-8, src)
    chk.rel("reference self-check: CJ(350.15 K)", cj, 1.0457066e-12, 1e-7, src)
    p = acref.bjt_params_at({"is": 1e-14}, 1.0, 350.15)
    chk.rel("reference self-check: IS(350.15 K)", p["is"], 7.28045000e-12, 1e-8, src)
    # Ebers-Moll limit: gm = (IC + IS)/Vt at Vbc = 0 with the default card, GMIN aside
    p = acref.bjt_params_at({"is": 1e-14}, 1.0, 300.15)
    vt = acref.vt_at(300.15)
    gm = acref.dstep(lambda z: acref.gp_currents(p, vt, z, 0.0)[0], 0.65)
    ic = acref.gp_currents(p, vt, 0.65, 0.0)[0]
    chk.rel("reference self-check: gm = (IC + IS)/Vt (Ebers-Moll limit)", gm,
            (ic + 1e-14) / vt, 1e-12, "Shockley 1949 / Ebers & Moll 1954 closed form")
    # the nodal AC solve against a first-order RC closed form and a series RLC
    c = Circuit("rc")
    c.V("v1", "in", "0", 0.0, ac=1.0)
    c.R("r1", "in", "out", 1e3)
    c.C("c1", "out", "0", 100e-9)
    c.set_stage("v1", "out")
    c.solve_op()
    f = 1234.5
    w = 2.0 * math.pi * f
    g, zin, zout = c.stage_point(f)
    src = "first-order RC closed form (Nilsson & Riedel, from memory)"
    chk.rel("reference self-check: RC gain 1/(1 + jwRC)", abs(g - 1.0 / (1.0 + 1j * w * 1e-4)), 0.0,
            0.0, src, abs_=1e-14)
    chk.rel("reference self-check: RC Zin R + 1/(jwC)", abs(zin - (1e3 + 1.0 / (1j * w * 1e-7))),
            0.0, 0.0, src, abs_=1e-9)
    chk.rel("reference self-check: RC Zout R || 1/(jwC)",
            abs(zout - 1.0 / (1e-3 + 1j * w * 1e-7)), 0.0, 0.0, src, abs_=1e-10)
    c = Circuit("rlc")
    c.V("v1", "in", "0", 0.0, ac=1.0)
    c.L("l1", "in", "m", 10e-3)
    c.C("c1", "m", "out", 100e-9)
    c.R("r1", "out", "0", 10.0)
    c.set_stage("v1", "out")
    c.solve_op()
    g = c.stage_point(f)[0]
    chk.rel("reference self-check: series RLC R/(R + jwL + 1/(jwC))",
            abs(g - 10.0 / (10.0 + 1j * w * 10e-3 + 1.0 / (1j * w * 100e-9))), 0.0, 0.0,
            "series RLC closed form (Nilsson & Riedel, from memory)", abs_=1e-14)


def main():
    binary = acref.binary_from_argv()
    chk = acref.Checker()
    chk.guard(self_checks, chk)
    tight, loose = {}, {}

    def one(make):
        ckt = make()
        ckt.solve_op()
        label = "%s (%s)" % (make.__name__.replace("circuit_", "circuit ").upper(), ckt.title)
        compare(chk, binary, label + " [tight Newton tolerances]", ckt, TIGHT, 1e-6, 1e-4, tight)
        compare(chk, binary, label + " [default tolerances]", ckt, None, 1e-4, 1e-4, loose)

    for make in (circuit_a, circuit_b, circuit_c, circuit_d):
        chk.guard(one, make)
    for name, st in (("tight", tight), ("default", loose)):
        print("max relative errors, %s tolerances: %s" % (name, ", ".join(
            "%s %.2g" % kv for kv in sorted(st.items()))))
    chk.finish()


if __name__ == "__main__":
    main()
