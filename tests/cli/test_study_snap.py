#!/usr/bin/env python3
"""`snap` with capacitors, kept elements, dB shifts and the snapped circuit judged against the
limits.

Sources of the expected values: IEC 60063:2015 E12 and E24 as tabulated (the nearest value on a
logarithmic scale, computed here); a single-pole corner f = 1/(2 pi R C) moves as 1/C
(standard circuit theory), so a band-limiting capacitor snapped from C to C' moves the upper
corner by about C/C'; dB figures are shifted in dB (a difference of two levels), never as a
percentage of a dB value.
"""
import csv
import math
import os
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
passed = failed = 0
E12 = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82]
E24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
       82, 91]


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300,
                          cwd=ROOT)


def rows(path):
    with open(path, newline="") as f:
        return {r[next(iter(r))]: r for r in csv.DictReader(f)}


def nearest(series, v):
    dec = 10 ** math.floor(math.log10(v))
    cands = [s * dec / 10 for s in series] + [s * dec for s in series] + [s * dec * 10 for s in series]
    return min(cands, key=lambda c: abs(math.log(c / v)))


NET = "netlists/vibration_frontend.cir"
LIM = "netlists/vibration_frontend.limits"
tmp = tempfile.mkdtemp(prefix="ss_snap_")
d = os.path.join(tmp, "a")
r = run(["snap", NET, "--series", "E24", "--keep", "Rsens,rl", "--limits", LIM, "-o", d])
check("snap --keep --limits: exit 0 when the snapped circuit meets the limits", r.returncode == 0,
      r.stderr.strip())
vals = rows(os.path.join(d, "snap_values.csv"))
check("--keep: the kept elements are left out", "rsens" not in vals and "rl" not in vals
      and "rc" in vals, str(sorted(vals)))
bad = [n for n, x in vals.items() if abs(float(x["preferred"]) - nearest(
    E24 if x["series"] == "24" else E12, float(x["value"]))) > 1e-9 * float(x["value"])]
check("resistors to the nearest E24, capacitors to the nearest E12 (the default)",
      not bad and vals["cbw"]["series"] == "12" and vals["rc"]["series"] == "24"
      and {"c1", "cbw", "ce", "c2"} <= set(vals), str(bad))
figs = rows(os.path.join(d, "snap_figures.csv"))
ratio = float(figs["f_high_hz"]["preferred"]) / float(figs["f_high_hz"]["computed"])
want = float(vals["cbw"]["value"]) / float(vals["cbw"]["preferred"])
check("CBW 620p -> 680p moves the upper corner as 1/C (within 1 %)",
      abs(ratio / want - 1) < 0.01, f"{ratio:.4f} vs {want:.4f}")
g = figs["gain_mid_db"]
check("dB figures: the shift in dB, no percentage", g["shift_pct"] == ""
      and abs(float(g["shift"]) - (float(g["preferred"]) - float(g["computed"]))) < 1e-12
      and figs["gain_db@1000"]["shift_pct"] == "")
check("other figures keep their percentage", figs["f_high_hz"]["shift_pct"] != "")
check("pass column: 1 for the limited figures, empty for the others",
      figs["f_high_hz"]["pass"] == "1" and figs["f_mid_hz"]["pass"] == "")
gline = [ln for ln in r.stdout.splitlines() if ln.split()[:1] == ["gain_mid_db"]]
check("printed: the dB shift in dB (no percentage) and the verdict",
      len(gline) == 1 and gline[0].split()[-3:-1] == [gline[0].split()[-3], "dB"]
      and "%" not in gline[0] and gline[0].endswith("pass")
      and "every limit passes" in r.stdout, r.stdout[-400:])

# a limit the snapped circuit misses: exit 1
tight = os.path.join(tmp, "tight.limits")
with open(tight, "w") as f:
    f.write("f_high_hz >= 50k\ngain_mid_db 19.5 .. 21.5\n")
d = os.path.join(tmp, "b")
r = run(["snap", NET, "--series", "E24", "--limits", tight, "-o", d])
figs = rows(os.path.join(d, "snap_figures.csv"))
check("the snapped circuit failing a limit: exit 1 naming it", r.returncode == 1
      and "fails 1 limit" in r.stderr and figs["f_high_hz"]["pass"] == "0"
      and figs["gain_mid_db"]["pass"] == "1", r.stderr.strip())
check("... though the computed values pass it", float(figs["f_high_hz"]["computed"]) >= 50e3)
d = os.path.join(tmp, "c")
r = run(["snap", NET, "--series", "E24", "--cap-series", "none", "--limits", tight, "-o", d])
vals = rows(os.path.join(d, "snap_values.csv"))
check("--cap-series none: capacitors stay, and so the corner passes (exit 0)",
      r.returncode == 0 and not any(n.startswith("c") for n in vals), str(sorted(vals)))
r = run(["snap", NET, "--series", "E24", "--cap-series", "E6", "-o", d, "-q"])
vals = rows(os.path.join(d, "snap_values.csv"))
check("--cap-series E6: CBW 620p -> 680p, the nearest E6", r.returncode == 0
      and float(vals["cbw"]["preferred"]) == nearest([10, 15, 22, 33, 47, 68], 620e-12)
      and vals["cbw"]["series"] == "6")
r = run(["snap", NET, "--series", "E24", "--keep", "nosuch", "-o", d])
check("--keep of no such element: exit 2 naming it", r.returncode == 2
      and "--keep nosuch" in r.stderr, r.stderr.strip())
r = run(["snap", NET, "--series", "E24", "--keep", "q1", "-o", d])
check("--keep of a transistor: exit 2", r.returncode == 2, r.stderr.strip())
r = run(["snap", NET, "--series", "E24", "--cap-series", "E7", "-o", d])
check("--cap-series E7: exit 2", r.returncode == 2, r.stderr.strip())

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
