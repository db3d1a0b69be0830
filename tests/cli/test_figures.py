#!/usr/bin/python3
"""Engineer-facing figures: the power of every element (op.csv, limits, the report), device
columns in dc.csv, limits on magnitudes, the stage's own output impedance against its load,
the report's units, long plot titles and the model search path.

Usage: test_figures.py PATH/TO/stagesim   (run from the repository root)
Prints one line per check and `N passed, M failed, K skipped`; exits 1 if any check failed.

Independent checks: Tellegen's theorem (B. D. H. Tellegen, Philips Res. Rep. 7, 259, 1952: the
powers of all the elements of a circuit add up to zero), Joule's law P = V^2 / R for a resistor,
P = V * I for a two-terminal element and, for a transistor, the sum of V * I over its terminals
with Kirchhoff's current law (Ie = -(Ic + Ib)); a resistive divider solved by hand; the
parallel combination Z1 Z2 / (Z1 + Z2) (Ohm's law); SVG geometry read with xml.dom.minidom.
"""
import csv
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.getcwd()
NET = os.path.join(ROOT, "netlists")
passed = failed = skipped = 0


def check(name, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print("ok   " + name)
    else:
        failed += 1
        print("FAIL " + name + ("\n     " + str(detail) if detail else ""))


def run(args, cwd=None, env=None, timeout=300):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, errors="replace",
                          timeout=timeout, cwd=cwd, env=env)


def write(path, text):
    with open(path, "w") as f:
        f.write(text)


def read_op(folder):
    with open(os.path.join(folder, "op.csv"), newline="") as f:
        rows = list(csv.reader(f))
    return dict((k, float(v)) for k, v in rows[1:])


def close(a, b, rel=1e-9, abs_=1e-15):
    return abs(a - b) <= abs_ + rel * max(abs(a), abs(b))


ENG = {"a": 1e-18, "f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3,
       "M": 1e6, "G": 1e9, "T": 1e12}


def eng_value(text, unit):
    """'5.273 mW' -> 0.005273"""
    m = re.fullmatch(r"\s*(-?[0-9.]+(?:e[-+]?[0-9]+)?) ?([afpnumkMGT]?)" + re.escape(unit) + r"\s*",
                     text)
    return float(m.group(1)) * ENG[m.group(2)] if m else None


tmp = tempfile.mkdtemp(prefix="ss_figures_")

# ---- power(X): op.csv rows, one computation with the report, limits --------------------------
# a circuit with every two-terminal kind solved by hand:
#   V1 10 V -- R1 1k -- b; R2 4k b-0; I1 1 mA from 0 into b (through the source from n+ 0 to
#   n- b); node b: (10 - Vb)/1k + 1m = Vb/4k  ->  Vb = 8.8 V
#   E1: V(c) = 2 V(b) = 17.6 V into RL 2k; G1: 1 mS * V(b) from 0 to d into RD 1k: V(d) = 8.8 V
SRC = """power of every kind
V1 a 0 10
R1 a b 1k
R2 b 0 4k
I1 0 b 1m
E1 c 0 b 0 2
RL c 0 2k
G1 0 d b 0 1m
RD d 0 1k
C1 b 0 1u
.op
.end
"""
src = os.path.join(tmp, "kinds.cir")
write(src, SRC)
r = run(["run", src, "-o", os.path.join(tmp, "kinds"), "-q"])
check("power: the hand-solved circuit runs", r.returncode == 0, r.stderr)
if r.returncode == 0:
    op = read_op(os.path.join(tmp, "kinds"))
    vb, vc, vd = 8.8, 17.6, 8.8
    want = {"power(r1)": (10 - vb) ** 2 / 1e3, "power(r2)": vb ** 2 / 4e3,
            "power(rl)": vc ** 2 / 2e3, "power(rd)": vd ** 2 / 1e3,
            "power(v1)": -10 * (10 - vb) / 1e3,   # delivers: negative
            "power(i1)": -vb * 1e-3,              # 1 mA pushed into node b: delivers
            "power(e1)": -vc ** 2 / 2e3, "power(g1)": -vd ** 2 / 1e3}
    for k, v in want.items():
        check(f"power: {k} = {v:.6g} W (Joule's law / V*I by hand)",
              k in op and close(op[k], v, 1e-9), op.get(k))
    check("power: a capacitor has no power row (no DC power)", "power(c1)" not in op)
    total = sum(v for k, v in op.items() if k.startswith("power("))
    check("power: the rows add up to zero (Tellegen)", abs(total) < 1e-12, total)

for name in ["vibration_frontend", "line_driver", "hydrophone_mos_buffer", "piezo_preamp"]:
    out = os.path.join(tmp, name)
    r = run(["run", os.path.join(NET, name + ".cir"), "-o", out])
    if r.returncode != 0:
        check(f"power: {name} runs", False, r.stderr)
        continue
    op = read_op(out)
    powers = {k: v for k, v in op.items() if k.startswith("power(")}
    scale = sum(abs(v) for v in powers.values())
    check(f"power: {name}: {len(powers)} power rows add up to zero (Tellegen)",
          abs(sum(powers.values())) < 1e-9 * scale, sum(powers.values()))
    for k in op:
        m = re.fullmatch(r"ic\((.*)\)", k)
        if m:  # a BJT: sum of V*I over the terminals with Ie = -(Ic + Ib)
            q = m.group(1)
            p = op[f"ic({q})"] * op[f"vce({q})"] + op[f"ib({q})"] * op[f"vbe({q})"]
            check(f"power: {name}: power({q}) = Ic Vce + Ib Vbe", close(op[f"power({q})"], p, 1e-9),
                  (op[f"power({q})"], p))
            # the report's power column is the same number (4 significant digits)
            line = [ln for ln in r.stdout.splitlines() if ln.split()[:1] == [q]]
            mw = re.search(r"(-?[0-9.]+ [afpnumkMGT]?W) ", line[0]) if line else None
            shown = eng_value(mw.group(1), "W") if mw else None
            check(f"power: {name}: the report shows power({q}) as op.csv has it",
                  shown is not None and close(shown, op[f"power({q})"], 6e-4), line)
        m = re.fullmatch(r"vds\((.*)\)", k)
        if m and f"ig({m.group(1)})" in op:  # a JFET: Id Vds + Ig Vgs
            j = m.group(1)
            p = op[f"id({j})"] * op[f"vds({j})"] + op[f"ig({j})"] * op[f"vgs({j})"]
            check(f"power: {name}: power({j}) = Id Vds + Ig Vgs", close(op[f"power({j})"], p, 1e-9),
                  (op[f"power({j})"], p))

lim = os.path.join(tmp, "p.limits")
write(lim, "power(q1) <= 10m\npower(vcc) 0 .. 1\npower(rc) 4m .. 6m\n")
r = run(["check", os.path.join(NET, "vibration_frontend.cir"), lim])
check("power: limits on power(q1), power(vcc), power(rc): two pass, the source's fails (exit 1)",
      r.returncode == 1 and "2 passed, 1 failed" in r.stdout, r.stdout + r.stderr)
write(lim, "power(q1) <= 10m\npower(c2) <= 1\n")
r = run(["check", os.path.join(NET, "vibration_frontend.cir"), lim, "-q"])
check("power: a limit on a capacitor's power is an input error naming file:line",
      r.returncode == 2 and "p.limits:2: limit on 'power(c2)': no such figure" in r.stderr,
      r.stderr)

# ---- dc.csv with device columns (--devices) --------------------------------------------------
LD = os.path.join(NET, "line_driver.cir")
r0 = run(["run", LD, "-o", os.path.join(tmp, "ld0"), "-q"])
r1 = run(["run", LD, "-o", os.path.join(tmp, "ld1"), "-q", "--devices", "Q1,q2", "--devices",
          "d1,rline,q1"])
check("--devices: runs", r0.returncode == 0 and r1.returncode == 0, r0.stderr + r1.stderr)
if r0.returncode == 0 and r1.returncode == 0:
    d0 = open(os.path.join(tmp, "ld0", "dc.csv")).read().splitlines()
    d1 = open(os.path.join(tmp, "ld1", "dc.csv")).read().splitlines()
    head = d1[0].split(",")
    n0 = len(d0[0].split(","))
    check("--devices: the node columns are byte for byte those of a run without it",
          len(d0) == len(d1) and all(b.split(",")[:n0] == a.split(",") for a, b in zip(d0, d1)))
    want = ["ic(q1)", "ib(q1)", "vbe(q1)", "vce(q1)", "gm(q1)", "power(q1)", "ic(q2)", "ib(q2)",
            "vbe(q2)", "vce(q2)", "gm(q2)", "power(q2)", "id(d1)", "power(d1)", "power(rline)"]
    check("--devices: the columns are op.csv's names, in the order named, each element once",
          head[n0:] == want, head[n0:])
    rows = [dict(zip(head, map(float, ln.split(",")))) for ln in d1[1:]]
    ok = all(close(rw["power(q2)"], rw["ic(q2)"] * rw["vce(q2)"] + rw["ib(q2)"] * rw["vbe(q2)"],
                   1e-9) for rw in rows)
    check("--devices: power(q2) = Ic Vce + Ib Vbe at every sweep point", ok)
    # at vcc = 12 (the netlist's own value) the columns are op.csv's numbers
    op = read_op(os.path.join(tmp, "ld0"))
    at12 = [rw for rw in rows if rw["vcc"] == 12.0]
    check("--devices: at the netlist's own supply the columns agree with op.csv (1e-6)",
          at12 and all(close(at12[0][k], op[k], 1e-6, 1e-12) for k in want), at12)
    check("--devices: default dc.csv byte-identical to the file the docs show (no device columns)",
          not any("(q1)" in c for c in d0[0].split(",")))
for args, msg in [(["--devices", "cout"], "--devices: 'cout' (a capacitor) has no DC quantities"),
                  (["--devices", "q9"], "--devices: 'q9' is no element of the circuit"),
                  (["--devices", ","], "--devices needs element names")]:
    r = run(["run", LD, "-o", os.path.join(tmp, "ldx"), "-q"] + args)
    check(f"--devices: {' '.join(args)} is exit 2 saying why", r.returncode == 2 and msg in r.stderr,
          r.stderr[:300])
r = run(["run", os.path.join(NET, "vibration_frontend.cir"), "-o", os.path.join(tmp, "vx"), "-q",
         "--devices", "q1"])
check("--devices without a .dc sweep is exit 2", r.returncode == 2 and "no .dc sweep" in r.stderr,
      r.stderr)

# ---- abs(QUANTITY): limits on a magnitude ---------------------------------------------------
LDX = os.path.join(tmp, "ldx.cir")
write(LDX, open(LD).read().replace("../models/", os.path.join(ROOT, "models") + "/")
      .replace(".end", ".expect abs(vce(q2)) >= 3\n.end"))
op = read_op(os.path.join(tmp, "ld0"))
alim = os.path.join(tmp, "a.limits")
write(alim, "abs(vce(q2)) >= 3\nvce(q2) >= 3\nABS(ic(q2)) = 2.9m +- 10%\nabs(phase_deg) @ 1k <= 10\n")
r = run(["check", LDX, alim, "-o", os.path.join(tmp, "achk")])
check("abs: the PNP's abs(vce) >= 3 passes where vce >= 3 fails (exit 1, 4 of 5 pass)",
      r.returncode == 1 and "4 passed, 1 failed" in r.stdout, r.stdout + r.stderr)
with open(os.path.join(tmp, "achk", "check.csv"), newline="") as f:
    ver = {row[0]: row for row in list(csv.reader(f))[1:]}
check("abs: check.csv names the limit abs(vce(q2)) and measures |vce(q2)| = -vce(q2) of op.csv",
      "abs(vce(q2))" in ver and close(float(ver["abs(vce(q2))"][1]), -op["vce(q2)"], 1e-6),
      ver.get("abs(vce(q2))"))
check("abs: a relation with a tolerance and a frequency take it too",
      ver.get("abs(ic(q2))", ["", "", "", "", "", "0"])[5] == "1" and
      ver.get("abs(phase_deg)@1000", ["", "", "", "", "", "0"])[5] == "1", sorted(ver))
r = run(["run", LDX, "-o", os.path.join(tmp, "ldx"), "-q"])
check("abs: run accepts an .expect abs(...) line", r.returncode == 0, r.stderr)
write(alim, "abs(vce(q2)) >= 5\n")
r = run(["sweep", LDX, "--vary", "vsupply=list:9,12", "--limits", alim, "-o",
         os.path.join(tmp, "asw"), "-q"])
summ = {}
if r.returncode in (0, 1):
    with open(os.path.join(tmp, "asw", "study_summary.csv"), newline="") as f:
        summ = {row[0]: row for row in list(csv.reader(f))[1:]}
# at 9 V |vce(q2)| = 4.47 V (fails >= 5), at 12 V 5.94 V; the .expect >= 3 passes both
check("abs: a sweep judges the magnitude, and every limit on one figure (pass 1/2)",
      summ.get("vce(q2)", [""] * 7)[6] == "0.5", summ.get("vce(q2)"))
for text, msg in [("vce(q2) >= 1\nabs(vce(q2) >= 3", "a.limits:2: limit on abs(vce(q2) >= 3: "
                   "unbalanced parentheses"),
                  ("abs() >= 3", "a.limits:1: limit on abs(): write abs(QUANTITY)"),
                  ("abs >= 3", "a.limits:1: limit on abs: write abs(QUANTITY)"),
                  ("abs(abs(vce(q2))) >= 3", "a.limits:1: limit on abs(abs(vce(q2))): write"),
                  ("abs(vce(q2)))x >= 3", "a.limits:1: limit on abs(vce(q2)))x: unbalanced"),
                  ("abs(vce(q9)) >= 3", "a.limits:1: limit on 'abs(vce(q9))': no such figure")]:
    write(alim, text + "\n")
    r = run(["check", LD, alim, "-q"])
    check(f"abs: malformed {text.splitlines()[-1]!r} is exit 2 naming file:line",
          r.returncode == 2 and msg in r.stderr, r.stderr)
bad = os.path.join(tmp, "bad_expect.cir")
write(bad, open(LDX).read().replace(".expect abs(vce(q2)) >= 3", ".expect abs(vce(q2) >= 3"))
r = run(["check", bad, "-q"])
n_line = open(bad).read().splitlines().index(".expect abs(vce(q2) >= 3") + 1
check("abs: a malformed .expect abs( line names the netlist's file:line",
      r.returncode == 2 and f"bad_expect.cir:{n_line}:" in r.stderr, r.stderr)

# ---- the load compared with the stage's own output impedance --------------------------------
VF = os.path.join(NET, "vibration_frontend.cir")
r = run(["run", VF, "-o", os.path.join(tmp, "vl"), "--load", "47k"])
with open(os.path.join(tmp, "vl", "stage_summary.csv"), newline="") as f:
    zsum = {k: float(v) if v else math.nan for k, v in list(csv.reader(f))[1:]}
z_with = zsum.get("zout_mid_ohm", math.nan)
# RL 47k from out to ground is drawn in the netlist: the stage alone has 1 / (1/Z - 1/47k)
# (Ohm's law; the parallel combination taken apart; exact for a resistive Zout, close for this
# mid-band Zout whose phase is a fraction of a degree)
z_own = 1.0 / (1.0 / z_with - 1.0 / 47e3)
m_own = re.search(r"Zout of the stage alone ([0-9.]+ [kM]?ohm) \(without rl", r.stdout)
check("load: the report names the drawn load and the Zout with it",
      f"with the load rl (47 kohm) in the netlist" in r.stdout, r.stdout[-900:])
check(f"load: the stage's own Zout is 1/(1/Zout - 1/47k) = {z_own:.1f} ohm (4 digits)",
      m_own is not None and close(eng_value(m_own.group(1), "ohm"), z_own, 6e-4),
      m_own.group(1) if m_own else r.stdout[-900:])
check("load: the warning compares the stage's own Zout with the load",
      m_own is not None and f"warning: the stage's own Zout {m_own.group(1)} is not ten times "
      "below the 47 kohm load" in r.stdout, r.stdout[-600:])
r = run(["run", VF, "-o", os.path.join(tmp, "vl2"), "--load", "30k"])
check("load: a load not drawn in the netlist is compared with the Zout solved, and said so",
      "Zout of the stage alone" not in r.stdout and "no resistor of the load's value" in r.stdout
      and "own Zout 4.993 kohm" in r.stdout, r.stdout[-600:])
r = run(["run", VF, "-o", os.path.join(tmp, "vl3"), "--load", "1meg"])
check("load: no warning when the stage's own Zout is ten times below the load",
      "warning: the stage's own Zout" not in r.stdout, r.stdout[-600:])

# ---- units on every line of the report, engineering notation on stdout ----------------------
r = run(["run", VF, "-o", os.path.join(tmp, "vu")])
out = r.stdout
check("units: mid-band gain with V/V and the phase showing the inversion",
      re.search(r"mid-band gain +20\.399 dB \(10\.47 V/V\) at 471\.4 Hz", out) is not None and
      re.search(r"mid-band phase +-179\.\d deg \(inverting\)", out) is not None, out[-1500:])
check("units: the large-signal block gives the test frequency and amplitude, swings in V, the "
      "THD target",
      "Large signal at 1 kHz, test input amplitude 100 mV" in out and
      re.search(r"output swing before clipping, \+ +2\.912 V", out) is not None and
      "THD at the 100 mV test amplitude" in out and
      re.search(r"input amplitude for 1 % THD \(target\) +237\.6 mV", out) is not None, out)
check("units: no e-notation on stdout", not re.search(r"\de[-+]\d", out), out)
r = run(["check", VF, os.path.join(NET, "vibration_frontend.limits")])
check("units: check's table in engineering notation with units",
      re.search(r"ic\(q1\) +921\.6 uA +782 uA +1\.058 mA +136\.4 uA +pass", r.stdout) is not None
      and re.search(r"f_high_hz +51\.02 kHz +40 kHz", r.stdout) is not None, r.stdout)
r = run(["sensitivity", VF, "--tol", "rc=5%", "-o", os.path.join(tmp, "vs")])
check("units: the sensitivity command's corner table in engineering notation",
      re.search(r"q1 .* +\d+(\.\d+)? uA +\d+(\.\d+)? V +forward active", r.stdout) is not None,
      r.stdout[-800:])
# the formatter itself: published SI prefixes (BIPM SI Brochure, 9th ed., 2019, table 7)
W = os.path.join(tmp, "tiny.cir")
write(W, "leak\nI1 0 a 1.841e-18\nR1 a 0 1\n.expect v(a) <= 1\n.op\n.end\n")
r = run(["check", W])
check("units: 1.841e-18 V is written 1.841 aV, not 0.001841 fV",
      "1.841 aV" in r.stdout and "fV" not in r.stdout, r.stdout)

# ---- the model search path: beside the netlist, --models, STAGESIM_MODELS, installed ---------
MP = os.path.join(tmp, "mp")
for d in ["net", "a", "b", "c"]:
    os.makedirs(os.path.join(MP, d))
# one diode card under one name in several folders, each with its own saturation current: which
# file was read shows in id(d1). V1 10 V through 1 k into the diode.
write(os.path.join(MP, "net", "n.cir"),
      "clamp\nV1 in 0 10\nR1 in mid 1k\nD1 mid 0 dlib\n.include lib.mod\n.op\n.end\n")
for d, is_ in [("a", "1e-14"), ("b", "1e-9"), ("c", "1e-6")]:
    write(os.path.join(MP, d, "lib.mod"), f".model dlib d is={is_}\n")
env0 = dict(os.environ)
env0.pop("STAGESIM_MODELS", None)


def id_with(args, env_models=None, name="o"):
    env = dict(env0)
    if env_models is not None:
        env["STAGESIM_MODELS"] = env_models
    out = os.path.join(MP, name)
    r = run(["run", "net/n.cir", "-o", out, "-q"] + args, cwd=MP, env=env)
    return (read_op(out)["id(d1)"] if r.returncode == 0 else None), r


ids = {}
for d in ["a", "b", "c"]:
    ids[d], _ = id_with(["--models", d], name="o" + d)
check("models: the three cards give three different diode currents",
      None not in ids.values() and len(set(ids.values())) == 3, ids)
v, _ = id_with(["--models", "b", "--models", "a"])
check("models: --models folders are searched in the order given (b before a)", v == ids["b"], v)
v, _ = id_with([], env_models=os.path.join(MP, "c") + ":" + os.path.join(MP, "a"))
check("models: STAGESIM_MODELS entries in order (c before a)", v == ids["c"], v)
v, _ = id_with(["--models", "a"], env_models=os.path.join(MP, "b"))
check("models: --models before STAGESIM_MODELS", v == ids["a"], v)
write(os.path.join(MP, "net", "lib.mod"), ".model dlib d is=1e-14\n")
v, _ = id_with(["--models", "b"], env_models=os.path.join(MP, "c"))
check("models: a file beside the netlist comes first", v == ids["a"], v)
os.remove(os.path.join(MP, "net", "lib.mod"))
v, r = id_with(["--models", "nowhere"], env_models="::" + os.path.join(MP, "gone") + ":")
check("models: not found anywhere: exit 2 naming the netlist line and every folder tried",
      v is None and r.returncode == 2 and "net/n.cir:5: .include 'lib.mod': no such file in any "
      "folder tried: net, nowhere, " + os.path.join(MP, "gone") in r.stderr, r.stderr)
env = dict(env0)
r = run(["sweep", "net/n.cir", "--vary", "r1=list:1k,2k", "--models", "b", "-o",
         os.path.join(MP, "sw"), "-q"], cwd=MP, env=env)
check("models: the studies take --models too", r.returncode == 0, r.stderr)
write(os.path.join(MP, "l.limits"), "id(d1) >= 1m\n")
r = run(["check", "net/n.cir", "l.limits", "--models", "a", "-q"], cwd=MP, env=env)
check("models: check takes --models", r.returncode == 0, r.stderr)


def finish():
    shutil.rmtree(tmp, ignore_errors=True)
    print(f"{passed} passed, {failed} failed, {skipped} skipped")
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    finish()
