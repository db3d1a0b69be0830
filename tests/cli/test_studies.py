#!/usr/bin/env python3
"""End-to-end checks of `check`, `sweep`, `spread`, `merge`, `sensitivity` and `snap`.

Sources of the expected values:
- voltage divider Vout = V R2 / (R1 + R2) (standard circuit theory);
- diode at constant current: V = N Vt ln(I/IS(T) + 1) with IS(T) = IS r^(XTI/N)
  exp((r-1) EG/(N Vt)) (the temperature law of docs/models.md, computed here with numpy), and
  the trade's rule of thumb of about -2 mV/K (common practice);
- Monte Carlo: the exact mean, variance and fourth central moment of the divider output under
  uniform resistor tolerances by numerical integration (scipy.integrate.dblquad); the sample
  mean must lie within 4 standard errors sigma/sqrt(N) and the sample variance within 4
  standard errors sqrt((mu4 - sigma^4 (N-3)/(N-1)) / N) of the truth (the sampling variance of
  the variance estimator, e.g. Cramer, Mathematical Methods of Statistics, 1946 -- from memory);
- IEC 60063:2015 E-series: E12 and E24 as tabulated, E96 = round(100 * 10^(i/96)) (the project
  reference notes, computed and checked against published reproductions).
"""
import csv
import math
import os
import shutil
import subprocess
import sys
import tempfile
import xml.dom.minidom

import numpy as np
from scipy import integrate

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = skipped = 0
K_B, Q_E = 1.380649e-23, 1.602176634e-19


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


def run(args, cwd=None):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300, cwd=cwd)


def read_rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


tmp = tempfile.mkdtemp(prefix="ss_studies_")
DIV = os.path.join(tmp, "divider.cir")
with open(DIV, "w") as f:
    f.write("sensor bias divider\n.param rtop=10k\nv1 in 0 10\nr1 in mid {rtop}\nr2 mid 0 10k\n"
            ".expect v(mid) 4.9 .. 5.1\n")

# ---- check ------------------------------------------------------------------------------------
r = run(["check", DIV])
check("check: passing limits exit 0", r.returncode == 0, r.stderr.strip())
check("check: table names the quantity and verdict", "v(mid)" in r.stdout and "pass" in r.stdout)
r = run(["check", DIV, "--set", "rtop=12k", "--junit", os.path.join(tmp, "j.xml")])
check("check: failing limit exit 1", r.returncode == 1, r.stderr.strip())
try:
    doc = xml.dom.minidom.parse(os.path.join(tmp, "j.xml"))
    suites = doc.getElementsByTagName("testsuite")
    cases = doc.getElementsByTagName("testcase")
    fails = doc.getElementsByTagName("failure")
    check("junit: well-formed, one suite, counts match children",
          len(suites) == 1 and suites[0].getAttribute("tests") == str(len(cases))
          and suites[0].getAttribute("failures") == str(len(fails)) and len(fails) == 1)
except Exception as e:  # noqa: BLE001 - any parse error is the failure we look for
    check("junit: well-formed", False, str(e))
LIM = os.path.join(tmp, "bad.limits")
with open(LIM, "w") as f:
    f.write("v(mid) 5 ..\n")
r = run(["check", DIV, LIM])
check("check: malformed limit exit 2 with file:line", r.returncode == 2
      and r.stderr.startswith(LIM + ":1: limit on v(mid): cannot read"), r.stderr.strip())
with open(LIM, "w") as f:
    f.write("v(nosuch) >= 1\n")
r = run(["check", DIV, LIM])
check("check: limit on a missing figure exit 2", r.returncode == 2
      and "no such figure" in r.stderr, r.stderr.strip())

# ---- sweep: divider against the closed form ----------------------------------------------------
out = os.path.join(tmp, "sw")
r = run(["sweep", DIV, "--vary", "rtop=log:1k:100k:11", "-o", out, "-q"])
check("sweep: exit 0", r.returncode == 0, r.stderr.strip())
rows = read_rows(os.path.join(out, "study.csv"))
worst = max(abs(float(x["v(mid)"]) - 10 * 10e3 / (float(x["rtop"]) + 10e3)) for x in rows)
check("sweep: 11 points, divider within 1e-12 V of V R2/(R1+R2)", len(rows) == 11
      and worst < 1e-12, f"worst {worst:.3g}")
r = run(["sweep", DIV, "--vary", "rtop=list:", "-o", out])
check("sweep: empty list exit 2", r.returncode == 2, r.stderr.strip())
r = run(["sweep", DIV, "-o", out])
check("sweep: no --vary exit 2", r.returncode == 2, r.stderr.strip())

# ---- sweep over temperature: diode forward voltage at constant current --------------------------
DIO = os.path.join(tmp, "diode.cir")
with open(DIO, "w") as f:
    f.write("diode thermometer\n.options gmin=0\n.model dx d is=2e-14 n=1.1 xti=3 eg=1.11\n"
            "i1 0 a 100u\nd1 a 0 dx\n")
r = run(["sweep", DIO, "--vary", "temp=lin:-25:75:5", "-o", out, "-q"])
rows = read_rows(os.path.join(out, "study.csv"))
worst = 0.0
for x in rows:
    t = float(x["temp"]) + 273.15
    vt = K_B * t / Q_E
    rr = t / 300.15
    is_t = 2e-14 * rr ** (3 / 1.1) * math.exp((rr - 1) * 1.11 / (1.1 * vt))
    worst = max(worst, abs(float(x["v(a)"]) - 1.1 * vt * math.log(100e-6 / is_t + 1)))
check("temperature sweep: Vd(T) matches the temperature law to 1e-9 V", worst < 1e-9,
      f"worst {worst:.3g} V")
v = [float(x["v(a)"]) for x in rows]
slope = (v[-1] - v[0]) / 100.0
check("temperature sweep: slope about -2 mV/K (common practice: -1.5 .. -2.5)",
      -2.5e-3 < slope < -1.5e-3, f"{slope * 1e3:.3f} mV/K")

# ---- spread: Monte Carlo statistics against exact integrals ------------------------------------
N = 4000
mc = os.path.join(tmp, "mc1")
args = ["spread", DIV, "--tol", "r1=10%", "--tol", "r2=10%", "--trials", str(N), "--seed", "42"]
r = run(args + ["--threads", "1", "-o", mc, "-q"])
check("spread: exit 0", r.returncode == 0, r.stderr.strip())
vals = np.array([float(x["v(mid)"]) for x in read_rows(os.path.join(mc, "study.csv"))])


def f(r2, r1):
    return 10 * r2 / (r1 + r2)


p = 1 / (2e3 * 2e3)  # uniform density on [9k, 11k]^2
mean = integrate.dblquad(lambda r2, r1: f(r2, r1) * p, 9e3, 11e3, 9e3, 11e3)[0]
var = integrate.dblquad(lambda r2, r1: (f(r2, r1) - mean) ** 2 * p, 9e3, 11e3, 9e3, 11e3)[0]
mu4 = integrate.dblquad(lambda r2, r1: (f(r2, r1) - mean) ** 4 * p, 9e3, 11e3, 9e3, 11e3)[0]
se_mean = math.sqrt(var / N)
se_var = math.sqrt((mu4 - var ** 2 * (N - 3) / (N - 1)) / N)
check("spread: sample mean within 4 standard errors of the exact mean",
      abs(vals.mean() - mean) < 4 * se_mean, f"{vals.mean():.6f} vs {mean:.6f}, se {se_mean:.2g}")
check("spread: sample variance within 4 standard errors of the exact variance",
      abs(vals.var(ddof=1) - var) < 4 * se_var, f"{vals.var(ddof=1):.4g} vs {var:.4g}")
summ = {x["figure"]: x for x in read_rows(os.path.join(mc, "study_summary.csv"))}
check("spread: summary mean/std equal the points' statistics",
      abs(float(summ["v(mid)"]["mean"]) - vals.mean()) < 1e-12
      and abs(float(summ["v(mid)"]["std"]) - vals.std(ddof=1)) < 1e-12)
check("spread: all_limits yield equals the fraction inside 4.9 .. 5.1",
      abs(float(summ["all_limits"]["pass_fraction"]) - np.mean((vals >= 4.9) & (vals <= 5.1)))
      < 1e-12)

mc2 = os.path.join(tmp, "mc2")
run(args + ["--threads", "2", "-o", mc2, "-q"])
with open(os.path.join(mc, "study.csv"), "rb") as a, open(os.path.join(mc2, "study.csv"), "rb") as b:
    check("spread: same seed gives byte-identical CSV with 1 and 2 threads", a.read() == b.read())
shard_files = []
for k in (1, 2, 3):
    d = os.path.join(tmp, f"shard{k}")
    run(args + ["--shard", f"{k}/3", "-o", d, "-q"])
    shard_files.append(os.path.join(d, "study.csv"))
merged = os.path.join(tmp, "merged")
r = run(["merge", "-o", merged, "-q"] + shard_files)
with open(os.path.join(mc, "study.csv"), "rb") as a, open(os.path.join(merged, "study.csv"), "rb") as b:
    check("merge: three shards give exactly the unsharded CSV", r.returncode == 0 and a.read() == b.read(),
          r.stderr.strip())
# the same shards run by GNU parallel (Debian package `parallel`), as a cluster would
if shutil.which("parallel"):
    pdir = os.path.join(tmp, "par")
    cmd = " ".join([STAGESIM] + args + ["--shard", "{}/4", "-o", pdir + "/s{}", "-q"])
    r = subprocess.run(["parallel", "--will-cite", "-j", "2", cmd, ":::", "1", "2", "3", "4"],
                       capture_output=True, text=True, timeout=300)
    r2 = run(["merge", "-o", os.path.join(pdir, "all"), "-q"]
             + [os.path.join(pdir, f"s{k}", "study.csv") for k in (1, 2, 3, 4)])
    with open(os.path.join(mc, "study.csv"), "rb") as a, \
            open(os.path.join(pdir, "all", "study.csv"), "rb") as b:
        check("GNU parallel: 4 shards merged give exactly the unsharded CSV",
              r.returncode == 0 and r2.returncode == 0 and a.read() == b.read(), r.stderr[-300:])
else:
    print("skip GNU parallel sharding: `parallel` is not installed (tests/install_deps.sh "
          "--with-tools installs it)")
    skipped += 1
r = run(["merge", "-o", merged, shard_files[0], shard_files[2]])
check("merge: a missing shard is an error naming the point", r.returncode == 2
      and "missing" in r.stderr, r.stderr.strip())
r = run(["spread", DIV, "--trials", "0"])
check("spread: a trial count of zero exit 2", r.returncode == 2, r.stderr.strip())
r = run(["spread", DIV, "--tol", "r1=10%", "--shard", "4/3"])
check("spread: shard K > N exit 2", r.returncode == 2, r.stderr.strip())
r = run(["spread", DIV, "--tol", "nosuch=10%"])
check("spread: tolerance on an unknown name exit 2 naming it", r.returncode == 2
      and "nosuch" in r.stderr, r.stderr.strip())
r = run(["spread", DIV])
check("spread: no tolerances exit 2", r.returncode == 2 and "tolerance" in r.stderr,
      r.stderr.strip())

# ---- sensitivity: the divider's normalised sensitivities are -+R/(R1+R2) = -+0.5 ----------------
r = run(["sensitivity", DIV, "--tol", "r1=5%", "--tol", "r2=5%", "-o", out, "-q"])
rows = {x["figure"]: x for x in read_rows(os.path.join(out, "sensitivity.csv"))}
s1, s2 = float(rows["v(mid)"]["r1"]), float(rows["v(mid)"]["r2"])
# exact: dV/V / dR1/R1 = -R1/(R1+R2) = -0.5 (central difference of +-1 %: error O(1e-4))
check("sensitivity: divider -0.5 and +0.5 (closed form)", abs(s1 + 0.5) < 1e-3 and abs(s2 - 0.5) < 1e-3,
      f"{s1:.6f} {s2:.6f}")

# ---- snap: IEC 60063 tables ------------------------------------------------------------------
E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1,
       5.6, 6.2, 6.8, 7.5, 8.2, 9.1]
E12 = E24[::2]
E96 = [round(100 * 10 ** (i / 96)) / 100 for i in range(96)]
SNAP = os.path.join(tmp, "snap.cir")
for name, series in (("E12", E12), ("E24", E24), ("E96", E96)):
    # every series value, and values just off it, must snap to that value
    ok = True
    for i, sv in enumerate(series):
        for scale in (1e3,):
            with open(SNAP, "w") as f:
                f.write(f"snap\nv1 a 0 1\nr1 a 0 {sv * scale * 1.004:.9g}\nr2 a 0 {sv * scale:.9g}\n")
            r = run(["snap", SNAP, "--series", name, "-o", out, "-q"])
            vals_rows = {x["element"]: x for x in read_rows(os.path.join(out, "snap_values.csv"))}
            got1 = float(vals_rows["r1"]["preferred"])
            got2 = float(vals_rows["r2"]["preferred"])
            if abs(got1 - sv * scale) > 1e-9 * scale or abs(got2 - sv * scale) > 1e-9 * scale:
                ok = False
                print(f"   {name}: {sv} -> {got1} / {got2}")
        if not ok:
            break
    check(f"snap: every {name} value (and 0.4 % off it) snaps to itself", ok)
with open(SNAP, "w") as f:
    f.write("snap\nv1 a 0 10\nr1 a m 61.3k\nr2 m 0 10k\n")
r = run(["snap", SNAP, "--series", "E24", "-o", out, "-q"])
figs = {x["figure"]: x for x in read_rows(os.path.join(out, "snap_figures.csv"))}
want = 10 * 10e3 / (62e3 + 10e3)
check("snap: 61.3k -> 62k and the divider output shifts to the closed form",
      abs(float(figs["v(m)"]["preferred"]) - want) < 1e-12, figs["v(m)"]["preferred"])

print(f"{passed} passed, {failed} failed, {skipped} skipped")
sys.exit(1 if failed else 0)
