#!/usr/bin/env python3
"""study.svg (`sweep --plot`, `spread --plot`) read as a reader would: the document is parsed,
every bar's count and height, every curve point and every limit line is mapped back through its
panel's axes and compared with study.csv and the limits file.

Sources of the expected values: study.csv itself (the plot must show what the table holds),
binned here independently with numpy; the limits as written in the test's limits file; the
divider Vout = V R2 / (R1 + R2) (standard circuit theory) for the swept curve.
"""
import csv
import math
import os
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import numpy as np

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0
NS = "{http://www.w3.org/2000/svg}"


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300)


def read_rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def panels(path):
    root = ET.parse(path).getroot()
    out = {}
    for g in root.iter(NS + "g"):
        if g.get("class") == "panel":
            out[g.get("data-figure")] = g
    return out


def area(g):
    a = next(r for r in g.iter(NS + "rect") if r.get("class") == "plot-area")
    x0, y0 = float(a.get("x")), float(a.get("y"))
    w, h = float(a.get("width")), float(a.get("height"))
    xlo, xhi = map(float, a.get("data-x").split())
    ylo, yhi = map(float, a.get("data-y").split())
    log = a.get("data-x-scale") == "log"

    def val_x(px):
        f = (px - x0) / w
        return 10 ** (math.log10(xlo) + f * (math.log10(xhi) - math.log10(xlo))) if log \
            else xlo + f * (xhi - xlo)

    def val_y(py):
        return ylo + (y0 + h - py) / h * (yhi - ylo)
    return val_x, val_y, (xhi - xlo) / w, (yhi - ylo) / h, h


tmp = tempfile.mkdtemp(prefix="ss_plots_")
DIV = os.path.join(tmp, "divider.cir")
with open(DIV, "w") as f:
    f.write("sensor bias divider\nv1 in 0 10\nr1 in mid 10k\nr2 mid 0 10k\n")
LIM = os.path.join(tmp, "div.limits")
with open(LIM, "w") as f:
    f.write("v(mid) 4.8 .. 5.2\ni(v1) >= -520u\n")
LIMITS = {"v(mid)": (4.8, 5.2), "i(v1)": (-520e-6, math.inf)}

# ---- spread: a histogram per limited figure ---------------------------------------------------
N = 700
d = os.path.join(tmp, "spread")
r = run(["spread", DIV, "--tol", "r1=10%", "--tol", "r2=10%:gauss", "--trials", str(N),
         "--limits", LIM, "--plot", "-o", d, "-q"])
check("spread --plot: exit 0 and study.svg written", r.returncode == 0
      and os.path.exists(os.path.join(d, "study.svg")), r.stderr.strip())
rows = read_rows(os.path.join(d, "study.csv"))
ps = panels(os.path.join(d, "study.svg"))
check("one panel per limited figure", sorted(ps) == sorted(LIMITS), str(sorted(ps)))
for fig, (lo, hi) in LIMITS.items():
    g = ps[fig]
    vals = np.array([float(x[fig]) for x in rows])
    bars = [b for b in g.iter(NS + "rect") if b.get("class") == "bar"]
    counts = np.array([int(b.get("data-count")) for b in bars])
    check(f"{fig}: the bars' counts add up to the {N} trials", counts.sum() == N,
          str(counts.sum()))
    edges = [float(bars[0].get("data-from"))] + [float(b.get("data-to")) for b in bars]
    mine, _ = np.histogram(vals, bins=edges)
    check(f"{fig}: each bar holds the values of study.csv in its bin (numpy.histogram)",
          np.array_equal(mine, counts), f"{mine} vs {counts}")
    val_x, val_y, dx, dy, h = area(g)
    heights = np.array([val_y(float(b.get("y"))) for b in bars])
    check(f"{fig}: bar heights read on the count axis are the counts (to 0.01 px)",
          np.max(np.abs(heights - counts)) < 0.01 * dy + 1e-9, f"{np.max(np.abs(heights - counts)):.3g}")
    lefts = np.array([val_x(float(b.get("x"))) for b in bars])
    check(f"{fig}: bars stand at their bins on the value axis",
          np.max(np.abs(lefts - np.array(edges[:-1]))) < 0.01 * dx + 1e-15)
    lines = [ln for ln in g.iter(NS + "line") if ln.get("class") == "limit"]
    want = sorted(v for v in (lo, hi) if math.isfinite(v))
    got = sorted(val_x(float(ln.get("x1"))) for ln in lines)
    check(f"{fig}: the limit lines stand at {want}", len(got) == len(want)
          and all(abs(a - b) < 0.01 * dx + 1e-15 for a, b in zip(got, want)), str(got))

# ---- sweep: curves over the swept value -------------------------------------------------------
d = os.path.join(tmp, "sweep")
r = run(["sweep", DIV, "--vary", "r1=log:1k:100k:21", "--vary", "r2=list:5k,10k,20k",
         "--limits", LIM, "--plot", "-o", d, "-q"])
check("sweep --plot: exit 0", r.returncode == 0, r.stderr.strip())
rows = read_rows(os.path.join(d, "study.csv"))
g = panels(os.path.join(d, "study.svg"))["v(mid)"]
val_x, val_y, dx, dy, h = area(g)
a = next(r_ for r_ in g.iter(NS + "rect") if r_.get("class") == "plot-area")
check("a log sweep gets a log axis", a.get("data-x-scale") == "log")
curves = [p for p in g.iter(NS + "polyline") if p.get("class") == "curve"]
check("one curve per value of the other swept name (r2: 3)", len(curves) == 3, str(len(curves)))
worst = 0.0
for c in curves:
    k = int(c.get("data-curve"))
    r2 = [5e3, 10e3, 20e3][k]
    mine = [(float(x["r1"]), float(x["v(mid)"])) for x in rows if float(x["r2"]) == r2]
    pts = [tuple(map(float, p.split(","))) for p in c.get("points").split()]
    if len(pts) != len(mine):
        worst = math.inf
        break
    for (px, py), (xv, yv) in zip(pts, mine):
        worst = max(worst, abs(math.log10(val_x(px)) - math.log10(xv)) / 1e-3,
                    abs(val_y(py) - yv) / (0.01 * dy), abs(yv - 10 * r2 / (xv + r2)) / 1e-9)
check("every curve point read back equals study.csv (x to 0.1 % in log, y to 0.01 px) and "
      "the divider law", worst <= 1.0, f"{worst:.3g}")
n_fail = sum(not (4.8 <= float(x["v(mid)"]) <= 5.2) for x in rows)
marks = [m for m in g.iter(NS + "circle") if m.get("class") == "fail-point"]
check("every point outside the limits is marked", len(marks) == n_fail and n_fail > 0,
      f"{len(marks)} vs {n_fail}")
band = [b for b in g.iter(NS + "rect") if b.get("class") == "limit-band"]
check("the limit band spans 4.8 .. 5.2", len(band) == 1
      and abs(val_y(float(band[0].get("y"))) - 5.2) < 0.01 * dy
      and abs(val_y(float(band[0].get("y")) + float(band[0].get("height"))) - 4.8) < 0.01 * dy)

r = run(["sweep", DIV, "--vary", "r1=list:1k,2k", "-o", os.path.join(tmp, "x"), "-q"])
check("without --plot no study.svg", not os.path.exists(os.path.join(tmp, "x", "study.svg")))
r = run(["sensitivity", DIV, "--tol", "r1=1%", "--plot", "-o", os.path.join(tmp, "x")])
check("--plot belongs to run, sweep and spread", r.returncode == 2
      and "--plot belongs to run, sweep and spread, not sensitivity" in r.stderr,
      r.stderr.splitlines()[0] if r.stderr else "")

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
