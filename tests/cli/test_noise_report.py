#!/usr/bin/env python3
"""End-to-end checks of the noise analysis's band, its limits, the report's ranking of single
noise sources and the noise-density plot (noise.svg), read as a reader would.

* limits on the band figures pass and fail with exit 0 and 1, and a limit on a band figure
  of a run without a band is an input error (exit 2) before anything is solved;
* the report lists the five largest single noise sources by their own share, whatever
  element they belong to, with the element's total beside each: on the vibration front-end
  r2's thermal noise (5.25 %) is listed and q1's collector shot noise (1.43 %) is not, and the
  numbers are those of noise_contrib.csv;
* the report's input-referred noise is in A rms when the input is a current source;
* noise.svg: the axes are calibrated from the plot's own decade labels and grid lines, every
  plotted point is mapped back to a frequency and a density and compared with noise.csv
  (the rounding of the coordinates to 0.01 px bounds the difference).
"""
import csv
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
VIB = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
passed = failed = 0


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail and not ok else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300)


def read_csv(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


tmp = tempfile.mkdtemp(prefix="ss_noise_")


def limits_checks():
    lim = os.path.join(tmp, "band.limits")
    # the vibration front-end over 1 Hz .. 1 kHz: 0.1816 uV rms input-referred, 1.863 uV out
    with open(lim, "w") as f:
        f.write("in_noise_band_rms_v <= 0.2u\nout_noise_band_rms_v 1.5u .. 2u\n")
    r = run(["check", VIB, lim, "--noise-band", "1..1k", "-q"])
    check("band limits met: exit 0", r.returncode == 0, r.stderr + r.stdout)
    with open(lim, "w") as f:
        f.write("in_noise_band_rms_v <= 0.15u\n")
    r = run(["check", VIB, lim, "--noise-band", "1..1k", "-o", os.path.join(tmp, "chk")])
    check("band limit failed: exit 1", r.returncode == 1, r.stderr)
    rows = read_csv(os.path.join(tmp, "chk", "check.csv")) if r.returncode == 1 else []
    got = float(rows[0]["measured"]) if rows else float("nan")
    check("the failed verdict carries the band figure",
          rows and rows[0]["quantity"] == "in_noise_band_rms_v" and abs(got - 1.8158814751e-07)
          < 1e-15, str(rows))
    r = run(["check", VIB, lim, "-q"])
    want = (lim + ":1: limit on 'in_noise_band_rms_v': no such figure (a band noise figure "
            "needs .noise with a band of its own (.noise ... band=F1..F2, or --noise-band F1..F2))")
    check("a band figure without a band: exit 2 naming the limit", r.returncode == 2 and
          want in r.stderr, r.stderr)
    # A-weighting in a study: the figure exists at every point
    with open(lim, "w") as f:
        f.write("out_noise_a_rms_v <= 1\n")
    r = run(["sweep", VIB, "--vary", "r1=list:47k,51k", "--noise-band", "20..20k",
             "--noise-weight", "a", "--limits", lim, "-o", os.path.join(tmp, "sw"), "-q"])
    check("sweep with --noise-band and --noise-weight: exit 0", r.returncode == 0, r.stderr)
    if r.returncode == 0:
        rows = read_csv(os.path.join(tmp, "sw", "study.csv"))
        vals = [float(x["out_noise_a_rms_v"]) for x in rows]
        check("study.csv has out_noise_a_rms_v at each point",
              len(vals) == 2 and all(0 < v < 1e-4 for v in vals), str(vals))


def ranking_checks():
    out = os.path.join(tmp, "vib")
    r = run(["run", VIB, "-o", out, "--plot"])
    check("run --plot: exit 0", r.returncode == 0, r.stderr)
    if r.returncode != 0:
        return out
    contrib = read_csv(os.path.join(out, "noise_contrib.csv"))
    text = r.stdout.split("largest single sources (element total beside):\n", 1)
    check("the report has the single-source list", len(text) == 2, r.stdout[-800:])
    if len(text) != 2:
        return out
    listed = []
    for line in text[1].splitlines():
        m = re.match(r"^    (.+?)\s+(\S+) uV rms\s+(\S+) %\s+(\S+) (\S+) %$", line)
        if not m:
            break
        listed.append((m.group(1), float(m.group(2)), float(m.group(3)), m.group(4),
                       float(m.group(5))))
    ranked = sorted(contrib, key=lambda x: -float(x["share_pct"]))[:5]
    check("five sources listed", len(listed) == 5, str(listed))
    check("listed in the order of their own share", [x[0] for x in listed] ==
          [x["source"] for x in ranked], str([x[0] for x in listed]))
    names = [x[0] for x in listed]
    check("r2 thermal (5.25 %) is listed", "r2 thermal" in names, str(names))
    check("q1 collector shot (1.43 %) is not", "q1 collector shot" not in names, str(names))
    by = {x["source"]: x for x in contrib}
    ok = all(abs(s - float(by[n]["share_pct"])) <= 0.006 and
             abs(e - float(by[n]["element_share_pct"])) <= 0.006 and el == n.split(" ")[0] and
             abs(rms - 1e6 * float(by[n]["out_noise_rms_v"])) <= 1e-3 * rms
             for n, rms, s, el, e in listed)
    check("shares, element totals and rms as in noise_contrib.csv", ok, str(listed))
    return out


def svg_checks(out):
    path = os.path.join(out, "noise.svg")
    check("noise.svg written", os.path.isfile(path))
    if not os.path.isfile(path):
        return
    ns = {"s": "http://www.w3.org/2000/svg"}
    root = ET.parse(path).getroot()
    texts = [(float(t.get("x")), float(t.get("y")), "".join(t.itertext()))
             for t in root.iter("{http://www.w3.org/2000/svg}text") if t.get("x")]
    lines = [tuple(float(ln.get(k)) for k in ("x1", "y1", "x2", "y2"))
             for ln in root.iter("{http://www.w3.org/2000/svg}line")]
    prefix = {"p": -12, "n": -9, "\u00b5": -6, "m": -3, "": 0, "k": 3, "M": 6}

    def value_of(label, unit):
        m = re.match(r"^(1|10|100) ([pn\u00b5mkM]?)" + unit + "$", label)
        return None if not m else float(m.group(1)) * 10.0 ** prefix[m.group(2)]
    # frequency labels: their x is the decade's; density labels: the grid line 3.8 px above
    fx = [(x, value_of(s, "Hz")) for x, y, s in texts if value_of(s, "Hz")]
    hlines = sorted({round(y1, 2) for x1, y1, x2, y2 in lines if y1 == y2 and x2 - x1 > 500})
    dy = []
    for x, y, s in texts:
        v = value_of(s, "")
        if v is None or s.endswith("Hz") or x > 100:
            continue
        near = [h for h in hlines if abs(h - (y - 3.8)) < 0.02]
        if near:
            dy.append((near[0], v))
    check("the plot labels at least two frequency decades", len(fx) >= 2, str(fx))
    check("the plot labels at least two density decades on grid lines", len(dy) >= 2, str(dy))
    if len(fx) < 2 or len(dy) < 2:
        return
    (xa, fa), (xb, fb) = fx[0], fx[-1]
    (ya, va), (yb, vb) = dy[0], dy[-1]

    def freq(x):
        return 10 ** (math.log10(fa) + (x - xa) / (xb - xa) * (math.log10(fb) - math.log10(fa)))

    def dens(y):
        return 10 ** (math.log10(va) + (y - ya) / (yb - ya) * (math.log10(vb) - math.log10(va)))
    px_per_decade_x = (xb - xa) / (math.log10(fb) - math.log10(fa))
    px_per_decade_y = abs((yb - ya) / (math.log10(vb) - math.log10(va)))
    rows = read_csv(os.path.join(out, "noise.csv"))
    f_csv = [float(r["freq_hz"]) for r in rows]
    polylines = {p.get("id"): p.get("points") for p in
                 root.iter("{http://www.w3.org/2000/svg}polyline")}
    for pid, col in (("out_noise", "out_noise_v_rthz"), ("in_noise", "in_noise_v_rthz")):
        pts = [tuple(map(float, p.split(","))) for p in (polylines.get(pid) or "").split()]
        check(f"{pid}: a polyline with points", len(pts) > 20, str(len(pts)))
        worst_f = worst_v = 0.0
        for x, y in pts:
            f = freq(x)
            k = min(range(len(f_csv)), key=lambda i: abs(math.log10(f_csv[i] / f)))
            worst_f = max(worst_f, abs(math.log10(f_csv[k] / f)) * px_per_decade_x)
            v = float(rows[k][col])
            worst_v = max(worst_v, abs(math.log10(dens(y) / v)) * px_per_decade_y)
        # coordinates are written to 0.01 px; the labels' positions to 0.01 px as well
        check(f"{pid}: every point at a noise.csv frequency (within 0.02 px)", worst_f <= 0.02,
              "%.4f px" % worst_f)
        check(f"{pid}: every point at its noise.csv density (within 0.03 px)", worst_v <= 0.03,
              "%.4f px" % worst_v)
        xs = [p[0] for p in pts]
        check(f"{pid}: spans the sweep's first to last frequency",
              abs(freq(xs[0]) / f_csv[0] - 1) < 1e-3 and abs(freq(xs[-1]) / f_csv[-1] - 1) < 1e-3,
              "%g .. %g" % (freq(xs[0]), freq(xs[-1])))
    # the band run plots the band's own grid
    bout = os.path.join(tmp, "vibband")
    r = run(["run", VIB, "-o", bout, "--plot", "--noise-band", "1..1k", "-q"])
    ok = r.returncode == 0 and os.path.isfile(os.path.join(bout, "noise.svg"))
    check("run --plot --noise-band 1..1k writes noise.svg", ok, r.stderr)
    r = run(["run", VIB, "-o", os.path.join(tmp, "noplot"), "-q"])
    check("no noise.svg without --plot",
          r.returncode == 0 and not os.path.exists(os.path.join(tmp, "noplot", "noise.svg")))


def input_unit_checks():
    """The report's input-referred lines carry the input source's unit: a resistor R driven by
    a current source has the output noise of its thermal noise, sqrt(4kTRB) (Johnson-Nyquist,
    Nyquist 1928), and the input-referred noise sqrt(4kTB/R) is a current, printed in A rms."""
    net = os.path.join(tmp, "inoise.cir")
    with open(net, "w") as f:
        f.write("current-driven resistor\nIin 0 out DC 0 AC 1\nR1 out 0 10k\n"
                ".ac dec 10 10 10k\n.noise v(out) iin band=10..10k weight=a\n.end\n")
    out = os.path.join(tmp, "inoise")
    r = run(["run", net, "-o", out])
    check("current-driven noise run: exit 0", r.returncode == 0, r.stderr)
    if r.returncode != 0:
        return
    kt4 = 4 * 1.380649e-23 * 300.15  # k exact in the 2019 SI; 27 C
    want_in = math.sqrt(kt4 * (10e3 - 10) / 10e3)
    m = re.search(r"^  input-referred  (\S+) (\S+) rms$", r.stdout, re.M)
    check("input-referred noise printed in uA rms", m is not None and m.group(2) == "uA",
          r.stdout)
    if m:
        check("input-referred current = sqrt(4kTB/R) within 0.1 %",
              abs(float(m.group(1)) * 1e-6 / want_in - 1) < 1e-3, m.group(1))
    check("A-weighted input-referred noise printed in uA rms",
          re.search(r"^  A-weighted input-referred  \S+ uA rms$", r.stdout, re.M) is not None,
          r.stdout)
    check("output noise still in uV rms",
          re.search(r"^  output noise    \S+ uV rms$", r.stdout, re.M) is not None, r.stdout)
    r = run(["run", VIB, "-o", os.path.join(tmp, "vunit")])
    check("a voltage-driven stage's input-referred noise stays in uV rms",
          re.search(r"^  input-referred  \S+ uV rms$", r.stdout, re.M) is not None, r.stdout)


try:
    input_unit_checks()
    limits_checks()
    out = ranking_checks()
    svg_checks(out)
finally:
    shutil.rmtree(tmp, ignore_errors=True)
print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
