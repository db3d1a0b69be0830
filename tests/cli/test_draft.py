#!/usr/bin/env python3
"""End-to-end checks of `stagesim draft`: a first design of a stage from its requirements.

1. Every kind, drafted for sensible requirements, passes `stagesim check` on the netlist it
   wrote, at once (exit 0): the limits it writes are met by the circuit it drew.
2. Three scenarios of our own -- a follower driving a 600 ohm line from a 10 kohm sensor, a x20
   microphone preamp, and the receiver of a 4-20 mA loop's changes across its 250 ohm shunt --
   are designed by hand below, step by step, with the rules of thumb (each marked common
   practice; the same rules docs/design.md states, written again here sharing no code with the
   C): every resistor and capacitor the command chose is within one step of its series of the
   hand design's value.
3. Requirements out of range or impossible for the kind stop with exit 2 and a message naming
   the option; a requirement that is valid but cannot be met gives the design and a warning,
   never a crash or a hang; a batch of random requirements always gives a netlist that
   stagesim reads.

The preferred values are the IEC 60063:2015 tables (E12, E24; the standard's own printed
values). re = kT/q / Ic is the Ebers-Moll small-signal emitter resistance with kT/q = 25.85 mV
at 27 C (k and q exact in the 2019 SI). The JFET bias follows the Shichman-Hodges square law
Id = BETA (Vgs - VTO)^2 (H. Shichman, D. A. Hodges, IEEE J. Solid-State Circuits 3, 285, 1968).
"""
import math
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail and not ok else ""))


def run(args, cwd):
    try:
        return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=120,
                              cwd=cwd)
    except subprocess.TimeoutExpired:
        return subprocess.CompletedProcess(args, -1, "", "hung (no end after 120 s)")


# ---- preferred values (IEC 60063:2015, as the standard prints them) --------------------------
E12 = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82]
E24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
       82, 91]
SERIES = {12: E12, 24: E24}


def series_index(v, n):
    """(decade, position) of the member of series n nearest to v on a log scale, as one
    integer: decade * n + position."""
    tab = SERIES[n]
    best = None
    d0 = math.floor(math.log10(v)) - 1
    for d in (d0 - 1, d0, d0 + 1):
        for i, m in enumerate(tab):
            cand = m * 10.0 ** d
            e = abs(math.log(cand / v))
            if best is None or e < best[0]:
                best = (e, d * n + i, cand)
    return best[1], best[2]


def on_series(v, n):
    _, cand = series_index(v, n)
    return abs(cand / v - 1) < 1e-6


SI = {"g": 1e9, "meg": 1e6, "k": 1e3, "m": 1e-3, "u": 1e-6, "n": 1e-9, "p": 1e-12, "f": 1e-15}


def value(text):
    m = re.fullmatch(r"([0-9.eE+-]+)(meg|g|k|m|u|n|p|f)?", text.lower())
    return float(m.group(1)) * SI.get(m.group(2) or "", 1.0)


def parts(netlist):
    """{name: value} of the R and C elements of a netlist text."""
    out = {}
    for line in netlist.splitlines():
        w = line.split(";")[0].split()
        if len(w) >= 4 and w[0][0] in "RrCc" and not line.startswith("*"):
            out[w[0].upper()] = value(w[3])
    return out


def par(a, b):
    return a * b / (a + b)


# ---- the rules of thumb (each common practice; docs/design.md) -------------------------------
VBE = 0.65       # common practice: a small silicon BJT's Vbe in use
BETA = 100.0     # common practice: a design beta for small-signal NPNs
BETA_MIN = 50.0  # common practice: the low end of the spread, sizing the bias divider
VT = 0.02585     # kT/q at 27 C (re = VT / Ic, Ebers-Moll)


def snap(v, n=24):
    return series_index(v, n)[1]


def divider(vcc, vb, ic):
    # common practice: the divider's bottom resistor carries 10 x the base current at the
    # lowest beta; the top one that plus the base current at the design beta
    idiv = 10.0 * ic / BETA_MIN
    r1, r2 = snap((vcc - vb) / (idiv + ic / BETA)), snap(vb / idiv)
    return r1, r2, par(r1, r2), vcc * r2 / (r1 + r2)


def cap_for(r, f):
    return 1.0 / (2 * math.pi * f * r)


def hand_follower(vcc, rs, rl, vpk, f_low):
    d = {}
    ve = vcc / 2.0                       # common practice: emitter at half the supply
    ic = max(1e-3, 1.25 * vpk * ve / (rl * (ve - vpk)))  # Ie (RE||RL) >= peak, 25 % spare
    d["RE"] = snap(ve / ic)
    d["R1"], d["R2"], rth, vth = divider(vcc, ve + VBE, ic)
    ie = (vth - VBE) / (d["RE"] + rth / (BETA + 1))
    re = VT / ie
    zin_plain = par(rth, (BETA + 1) * (re + par(d["RE"], rl)))
    assert zin_plain < 10 * rs           # common practice: Zin >= 10 x source -> bootstrap
    d["RB"] = snap(rth)                  # common practice: the bootstrapped feed about Rth
    rle = par(par(d["RE"], rl), rth)
    av = rle / (re + rle)
    zin = par(d["RB"] / (1 - av), (BETA + 1) * (re + rle))
    zo = par(d["RE"], re + rs / (BETA + 1))
    # common practice: each coupling capacitor's pole a decade below f_low
    # common practice: a bootstrap fades at low frequency, so C1 is sized for the input
    # without it (sized with the bootstrapped Zin, C1 and CB would peak the response)
    d["C1"] = cap_for(rs + zin_plain, f_low / 10)
    d["CB"] = cap_for(rth, f_low / 10)
    d["C2"] = cap_for(zo + rl, f_low / 10)
    return d, zo, zin


def hand_ce_split(vcc, gain, rs, rl, f_low, ic=1e-3):
    d = {}
    ve = 0.1 * vcc                       # common practice: emitter at 10 % of the supply
    vrc = (vcc - ve) / 2.0               # common practice: collector mid-way, symmetric swing
    d["RC"] = snap(vrc / ic)
    re_tot = ve / ic
    d["R1"], d["R2"], rth, vth = divider(vcc, ve + VBE, ic)
    re = VT / ic
    rload = par(d["RC"], rl)
    # gain = Zin/(Zin+Rs) * (RC||RL)/(re + RE1), Zin = Rth || (beta+1)(re + RE1): solve for RE1
    re1 = 0.0
    for _ in range(50):
        zin = par(rth, (BETA + 1) * (re + re1))
        re1 = rload / (gain * (zin + rs) / zin) - re
    d["RE1"] = snap(re1)
    d["RE2"] = snap(re_tot - d["RE1"])
    ie = (vth - VBE) / (d["RE1"] + d["RE2"] + rth / (BETA + 1))
    re = VT / ie
    zin = par(rth, (BETA + 1) * (re + d["RE1"]))
    d["C1"] = cap_for(rs + zin, f_low / 10)          # common practice: a decade below f_low
    d["C2"] = cap_for(d["RC"] + rl, f_low / 10)
    rseen = par(d["RE2"], d["RE1"] + re + par(rs, rth) / (BETA + 1))
    d["CE"] = cap_for(rseen, f_low / 3)              # common practice: bypass at f_low / 3
    return d, zin


def within_one_step(name, got, hand, tag):
    n = 12 if name.startswith("C") else 24
    gi, _ = series_index(got, n)
    hi, hv = series_index(hand, n)
    check(f"{tag}: {name} = {got:.4g} within one E{n} step of the hand design's {hand:.4g} "
          f"({hv:.3g})", abs(gi - hi) <= 1)


tmp = tempfile.mkdtemp(prefix="ss_draft_")
try:
    # ---- 1. every kind passes its own limits ------------------------------------------------
    KINDS = {
        "follower": ["--supply", "12", "--source", "1k", "--load", "10k"],
        "ce": ["--supply", "12", "--load", "47k"],
        "ce-split": ["--supply", "9", "--gain", "20", "--source", "200", "--load", "10k",
                     "--f-low", "40", "--f-high", "16k"],
        "ce-follower": ["--supply", "12", "--gain", "30", "--source", "600", "--load", "1k"],
        "jfet-cs": ["--supply", "15", "--gain", "5", "--source", "10k", "--load", "100k",
                    "--f-low", "5", "--f-high", "50k"],
    }
    for kind, req in KINDS.items():
        out = os.path.join(tmp, kind)
        r = run(["draft", kind] + req + ["-o", out], tmp)
        path = os.path.join(out, "draft.cir")
        check(f"draft {kind}: exit 0 and draft.cir written", r.returncode == 0 and
              os.path.exists(path), r.stderr)
        if not os.path.exists(path):
            continue
        text = open(path).read()
        c = run(["check", path], tmp)
        check(f"draft {kind}: `stagesim check` passes its limits at nominal (exit 0)",
              c.returncode == 0, c.stdout[-600:] + c.stderr)
        n_lim = len(re.findall(r"^\.expect ", text, re.M))
        check(f"draft {kind}: limits written ({n_lim}) and judged", n_lim >= 5 and
              f"{n_lim} passed, 0 failed" in c.stdout)
        check(f"draft {kind}: the netlist has a .stage, an .ac, an inline card, no .include",
              re.search(r"^\.stage in=vsrc out=out", text, re.M) is not None and
              re.search(r"^\.ac dec ", text, re.M) is not None and
              re.search(r"^\.model ss_(npn|njf) ", text, re.M) is not None and
              ".include" not in text)
        m = re.search(r"^\.ac dec \d+ (\S+) (\S+)", text, re.M)
        fl = value(req[req.index("--f-low") + 1]) if "--f-low" in req else 20.0
        fh = value(req[req.index("--f-high") + 1]) if "--f-high" in req else 20e3
        check(f"draft {kind}: the .ac sweep covers the band", m and value(m.group(1)) <= fl / 10
              and value(m.group(2)) >= fh * 2)
        given = {"RSRC", "RL", "RBL"}  # the source, the load, the bleed: as given, not chosen
        off = [f"{k}={v:g}" for k, v in parts(text).items()
               if k not in given and not on_series(v, 12 if k[0] == "C" else 24)]
        check(f"draft {kind}: every chosen R on E24 and C on E12", not off, str(off))
        check(f"draft {kind}: the cautions are in the header",
              "starting point for the bench, not a" in text and "ratings are NOT checked" in text
              and "local codes and licensed practice" in text)
        check(f"draft {kind}: the reasoning names its rules as common practice",
              "common practice" in text and re.search(r"^\*\s+1\. ", text, re.M) is not None)

    # ---- 2. scenarios against hand designs --------------------------------------------------
    # (a) a follower driving a 600 ohm line from a 10 kohm sensor, 1 V peak, 10 Hz .. 20 kHz
    out = os.path.join(tmp, "line")
    r = run(["draft", "follower", "--supply", "12", "--source", "10k", "--load", "600",
             "--swing", "1", "--f-low", "10", "--f-high", "20k", "-o", out, "-q"], tmp)
    got = parts(open(os.path.join(out, "draft.cir")).read()) if r.returncode == 0 else {}
    hand, zo, zin = hand_follower(12.0, 10e3, 600.0, 1.0, 10.0)
    check("line driver: drafted (exit 0)", r.returncode == 0, r.stderr)
    check("line driver: the same parts as the hand design",
          set(hand) <= set(got), f"{sorted(got)} vs {sorted(hand)}")
    for k in hand:
        if k in got:
            within_one_step(k, got[k], hand[k], "line driver")
    # by hand: Zout = RE || (re + Rs/(beta+1)) is above 600/10 and Zin below 10 x 10k at beta
    # 100 -- both 10:1 rules are out of reach of one follower, and the command says so
    check(f"line driver: hand Zout {zo:.0f} ohm > 60 and Zin {zin:.0f} < 100k: both warned",
          zo > 60 and zin < 100e3 and "warning: draft: load:" in r.stderr and
          "warning: draft: source:" in r.stderr, r.stderr)

    # (b) a x20 microphone preamp: 200 ohm dynamic microphone, 9 V battery, 10 kohm next stage
    out = os.path.join(tmp, "mic")
    r = run(["draft", "ce-split", "--supply", "9", "--gain", "20", "--source", "200", "--load",
             "10k", "--f-low", "40", "--f-high", "16k", "-o", out, "-q"], tmp)
    got = parts(open(os.path.join(out, "draft.cir")).read()) if r.returncode == 0 else {}
    hand, zin = hand_ce_split(9.0, 20.0, 200.0, 10e3, 40.0)
    check("mic preamp: drafted (exit 0)", r.returncode == 0, r.stderr)
    check("mic preamp: the same parts as the hand design", set(hand) <= set(got),
          f"{sorted(got)} vs {sorted(hand)}")
    for k in hand:
        if k in got:
            within_one_step(k, got[k], hand[k], "mic preamp")
    c = run(["check", os.path.join(out, "draft.cir"), "-q"], tmp)
    check("mic preamp: its gain limit (x20 +- 1 dB) met", c.returncode == 0, c.stderr)

    # (c) a 4-20 mA loop receiver: the loop's changes across its 250 ohm shunt (a 1 mA change is
    # 250 mV) amplified x10 to a few volts, 24 V loop supply, 5 Hz .. 1 kHz, 4 V peak into a
    # 100 kohm input of the next stage (AC-coupled: the changes, not the DC level)
    out = os.path.join(tmp, "loop")
    r = run(["draft", "ce-split", "--supply", "24", "--gain", "10", "--source", "250", "--swing",
             "4", "--load", "100k", "--f-low", "5", "--f-high", "1k", "-o", out, "-q"], tmp)
    got = parts(open(os.path.join(out, "draft.cir")).read()) if r.returncode == 0 else {}
    # common practice: the current for a 4 V peak into RC || RL, 25 % spare, is far below the
    # small-signal 1 mA, so Ic stays 1 mA
    vrc = (24 - 2.4) / 2
    check("loop receiver: the swing needs less than 1 mA by hand",
          1.25 * 4 * vrc / (100e3 * (vrc - 4)) < 1e-3)
    hand, zin = hand_ce_split(24.0, 10.0, 250.0, 100e3, 5.0)
    check("loop receiver: drafted (exit 0)", r.returncode == 0, r.stderr)
    check("loop receiver: the same parts as the hand design", set(hand) <= set(got),
          f"{sorted(got)} vs {sorted(hand)}")
    for k in hand:
        if k in got:
            within_one_step(k, got[k], hand[k], "loop receiver")
    c = run(["check", os.path.join(out, "draft.cir"), "-q"], tmp)
    check("loop receiver: its limits met (exit 0)", c.returncode == 0, c.stderr)

    # ---- 3. bad requirements, infeasible ones, random ones ---------------------------------
    BAD = [
        (["follower", "--gain", "10"], "stagesim: --gain: a follower's gain is below 1"),
        (["ce", "--supply", "0"], "stagesim: --supply needs a voltage above 0 and at most 1000 V, "
                                  "got '0'"),
        (["ce", "--current", "-1m"], "stagesim: --current needs a current above 0 and at most "
                                     "10 A, got '-1m'"),
        (["ce-split", "--supply", "12"], "stagesim: --gain: ce-split sets its gain"),
        (["ce", "--gain", "0.5"], "stagesim: --gain: ce amplifies"),
        (["jfet-cs", "--current", "5m"], "stagesim: --current: a self-biased JFET runs below IDSS"),
        (["ce", "--swing", "7"], "stagesim: --swing: a 7 V peak needs more than twice"),
        (["ce", "--supply", "2"], "stagesim: --supply: 2 V is too low to bias the stage"),
        (["ce", "--f-low", "30k"], "stagesim: --f-high: needs a frequency above f-low"),
        (["ce", "--source", "-5"], "stagesim: --source needs a resistance of 0 ohm or more"),
        (["ce", "--load", "0"], "stagesim: --load needs a resistance in ohms above 0"),
        (["ce", "--gain", "ten"], "stagesim: --gain needs a voltage gain (V/V) above 0"),
        (["ce", "--cap-series", "E5"], "stagesim: --cap-series needs E6, E12, E24, E48, E96 or "
                                       "E192 (or none), got 'E5'"),
        (["ce", "--cap-series", "none"], "stagesim: --cap-series none is snap's"),
        (["ce", "--series", "E7"], "stagesim: --series needs E6, E12, E24, E48, E96 or E192"),
        (["amplifier"], "stagesim: draft: unknown KIND 'amplifier'"),
        ([], "stagesim: draft needs a KIND"),
        (["ce", "--set", "r1=1k"], "stagesim: --set belongs to"),
    ]
    for args, msg in BAD:
        out = os.path.join(tmp, "bad")
        shutil.rmtree(out, ignore_errors=True)
        r = run(["draft"] + args + ["-o", out], tmp)
        first = r.stderr.split("\n")[0]
        check(f"draft {' '.join(args)}: exit 2, '{msg[:60]}'", r.returncode == 2 and
              first.startswith(msg) and not os.path.exists(os.path.join(out, "draft.cir")),
              f"exit {r.returncode}: {first}")

    INFEASIBLE = [
        (["ce-split", "--supply", "9", "--gain", "500"], "gain:"),
        (["follower", "--zin", "10meg", "--load", "100"], "zin:"),
        (["jfet-cs", "--gain", "200", "--load", "1k"], "gain:"),
        (["ce", "--f-low", "0.1"], "CE comes out at"),
        (["ce-follower", "--gain", "5000", "--load", "8"], "gain:"),
        (["ce", "--supply", "100", "--current", "50m"], "Q1 dissipates about"),
    ]
    for args, what in INFEASIBLE:
        out = os.path.join(tmp, "inf")
        shutil.rmtree(out, ignore_errors=True)
        r = run(["draft"] + args + ["-o", out, "-q"], tmp)
        check(f"draft {' '.join(args)}: the design (exit 0) with a warning '{what}'",
              r.returncode == 0 and f"stagesim: warning: draft: {what}" in r.stderr and
              os.path.exists(os.path.join(out, "draft.cir")), f"exit {r.returncode}: {r.stderr}")
        if r.returncode == 0:
            c = run(["check", os.path.join(out, "draft.cir"), "-q"], tmp)
            check(f"draft {' '.join(args)}: check reads it and judges (exit 0 or 1)",
                  c.returncode in (0, 1), f"exit {c.returncode}: {c.stderr[:300]}")

    rng = random.Random(20261202)
    kinds = list(KINDS)
    bad_random = []
    for i in range(30):
        k = rng.choice(kinds)
        sup = 10 ** rng.uniform(0.5, 2.5)
        a = ["draft", k, "--supply", f"{sup:.4g}", "-o", os.path.join(tmp, "rnd"), "-q"]
        if rng.random() < 0.5:
            a += ["--current", f"{10 ** rng.uniform(-6, -1):.3g}"]
        if k in ("ce-split", "ce-follower") or rng.random() < 0.3:
            a += ["--gain", f"{(rng.uniform(0.2, 0.95) if k == 'follower' else 10 ** rng.uniform(0, 3)):.3g}"]
        for o, lo, hi in (("--zin", 2, 8), ("--load", 1, 7), ("--source", 0, 6)):
            if rng.random() < 0.4:
                a += [o, f"{10 ** rng.uniform(lo, hi):.3g}"]
        r = run(a, tmp)
        if r.returncode == 2 and r.stderr.startswith("stagesim: --"):
            continue  # a requirement out of range for the kind, named
        if r.returncode != 0:
            bad_random.append((a, r.returncode, r.stderr[:200]))
            continue
        c = run(["check", os.path.join(tmp, "rnd", "draft.cir"), "-q"], tmp)
        if c.returncode not in (0, 1, 3):
            bad_random.append((a, "check", c.returncode, c.stderr[:200]))
    check("30 random requirements: each a design or a named option error; every netlist read "
          "and judged by check", not bad_random, str(bad_random[:2]))
finally:
    shutil.rmtree(tmp, ignore_errors=True)

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
