#!/usr/bin/env python3
"""End-to-end checks of `stagesim refine` (docs/refine.md).

What is checked and against what:
- the geophone preamp (netlists/geophone_preamp.cir, six free values over three decades each):
  the chosen netlist passes `stagesim check` at the nominal point and at every corner refine
  was given, each applied by check's own means (--set of the model's BF and of the supply,
  a `.temp` line for the temperature) -- the check command shares the figures, not the search;
- the chosen netlist differs from the input only in the free values' tokens, each an IEC 60063
  E24 member (the E24 table as the standard prints it) within its .choose range;
- an infeasible specification (x1000 gain from one common-emitter stage with Zin >= 1 Mohm: the
  gain of one degenerated stage is at most about gm RC, which with the bias needed for Zin and
  the supply given stays far below 1000 -- common practice) answers exit 1 naming the binding
  limits, within seconds;
- one thread and two threads give byte-identical files;
- the options are strict: a bad value or an unknown option is exit 2 naming it.
"""
import csv
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.getcwd()
passed = failed = skipped = 0

# IEC 60063:2015, E24 significands as the standard prints them
E24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
       82, 91]


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail and not ok else ""))


def run(args, cwd=None):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300, cwd=cwd)


def read_rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def is_e24(v):
    for d in range(-3, 10):
        for s in E24:
            if abs(s * 10.0 ** (d - 1) - v) <= 1e-9 * v:
                return True
    return False


tmp = tempfile.mkdtemp(prefix="ss_refine_")
# the netlist and its model beside it, as in the repository (the .include is relative)
os.makedirs(os.path.join(tmp, "netlists"))
os.makedirs(os.path.join(tmp, "models"))
shutil.copy(os.path.join(ROOT, "models", "npn_small.lib"), os.path.join(tmp, "models"))
GEO = os.path.join(tmp, "netlists", "geophone_preamp.cir")
shutil.copy(os.path.join(ROOT, "netlists", "geophone_preamp.cir"), GEO)
with open(os.path.join(ROOT, "models", "npn_small.lib")) as f:
    BF = float(re.search(r"\bBF=([0-9.]+)", f.read().split(".model", 1)[1], re.I).group(1))

CORNERS = ["--beta-range", "0.5x,2x", "--temps", "-20,70", "--supply-tol", "vcc=10%"]

# ---- the geophone preamp --------------------------------------------------------------------
out = os.path.join(tmp, "geo")
t0 = time.monotonic()
r = run(["refine", GEO, *CORNERS, "-o", out, "--threads", "2"])
elapsed = time.monotonic() - t0
check("geophone: every limit met at every corner, exit 0", r.returncode == 0, r.stderr.strip())
check("geophone: six free values, seven corners in under 10 s", elapsed < 10.0,
      f"{elapsed:.2f} s")
m = re.search(r"searched (\d+) candidates \((\d+) circuits", r.stdout)
check("geophone: the report counts candidates and circuits",
      m is not None and int(m.group(2)) == 7 * int(m.group(1)), r.stdout[:200] if not m else "")
check("geophone: the report gives candidates/s and circuits/s per thread",
      "candidates/s" in r.stdout and "per thread" in r.stdout)
check("geophone: the report says a simulated design is a starting point for the bench",
      "starting point for the bench" in r.stdout)
print(f"     (geophone: {elapsed:.2f} s wall; " +
      " ".join(r.stdout.splitlines()[1:3]).strip() + ")")

design = read_rows(os.path.join(out, "design.csv")) if r.returncode == 0 else []
check("design.csv: one row per free value", [d["name"] for d in design] ==
      ["r1", "r2", "rc1", "re1", "re2", "re3"])
check("design.csv: every chosen value an E24 member within its range",
      all(is_e24(float(d["chosen"])) and float(d["lo"]) <= float(d["chosen"]) <= float(d["hi"])
          and d["series"] == "24" for d in design))
margins = read_rows(os.path.join(out, "design_margins.csv")) if r.returncode == 0 else []
cols = list(margins[0].keys()) if margins else []
check("design_margins.csv: value and margin at nominal and six corners",
      [c for c in cols if c.startswith("margin_")] ==
      ["margin_nominal", "margin_beta_low", "margin_beta_high", "margin_temp_low",
       "margin_temp_high", "margin_supply_vcc_low", "margin_supply_vcc_high", "margin_min"])
check("design_margins.csv: every limit passes", margins and
      all(row["pass"] == "1" and float(row["margin_min"]) >= 0 for row in margins))

# the chosen netlist: only the value tokens differ
chosen = os.path.join(tmp, "netlists", "chosen.cir")
if r.returncode == 0:
    shutil.copy(os.path.join(out, "refined.cir"), chosen)
    a = open(GEO).read().splitlines()
    b = open(chosen).read().splitlines()
    diff = [(x, y) for x, y in zip(a, b) if x != y]
    names = {d["name"] for d in design}
    ok = len(a) == len(b) and all(
        x.split()[0].lower() in names and x.split()[:3] == y.split()[:3]
        and x.split(";")[1:] == y.split(";")[1:] for x, y in diff)
    check("refined.cir: only the free values' tokens changed", ok, "" if ok else str(diff[:2]))

    # every corner by the check command's own means
    def check_corner(name, args, temp=None):
        path = chosen
        if temp is not None:
            path = os.path.join(tmp, "netlists", f"chosen_{name}.cir")
            with open(path, "w") as f:
                f.write(open(chosen).read().replace("\n.end\n", f"\n.temp {temp}\n.end\n"))
        rc = run(["check", path, *args, "-q"])
        check(f"stagesim check passes the chosen design at {name}", rc.returncode == 0,
              (rc.stdout + rc.stderr).strip()[-300:])

    check_corner("nominal", [])
    check_corner("beta_low", ["--set", f"ss_npn.bf={BF * 0.5:g}"])
    check_corner("beta_high", ["--set", f"ss_npn.bf={BF * 2:g}"])
    check_corner("temp_low", [], temp=-20)
    check_corner("temp_high", [], temp=70)
    check_corner("supply_low", ["--set", "vcc=10.8"])
    check_corner("supply_high", ["--set", "vcc=13.2"])
    # and the values themselves in the margins file are what check measures at nominal
    rc = run(["check", chosen, "-o", os.path.join(tmp, "chk"), "-q"])
    figs = {row["metric"]: float(row["value"] or "nan") for row in
            read_rows(os.path.join(tmp, "chk", "figures.csv"))} if rc.returncode == 0 else {}
    same = all(abs(figs.get(row["limit"], float("nan")) - float(row["value_nominal"]))
               <= 1e-9 * abs(float(row["value_nominal"])) + 1e-15 for row in margins)
    check("design_margins.csv value_nominal = check's figures.csv", same)

# ---- determinism: one and two threads --------------------------------------------------------
outs = []
for t in ("1", "2"):
    o = os.path.join(tmp, f"t{t}")
    rt = run(["refine", GEO, *CORNERS, "-o", o, "--threads", t, "-q"])
    outs.append(o if rt.returncode == 0 else None)
same = all(outs) and all(
    open(os.path.join(outs[0], f), "rb").read() == open(os.path.join(outs[1], f), "rb").read()
    for f in ("refined.cir", "design.csv", "design_margins.csv", "refine_path.csv"))
check("one and two threads: byte-identical files", same)

# ---- an infeasible specification -------------------------------------------------------------
INF = os.path.join(tmp, "netlists", "infeasible.cir")
with open(INF, "w") as f:
    f.write("""hydrophone stage asked for too much: x1000 from one stage, Zin >= 1 Mohm
.include ../models/npn_small.lib
VCC vcc 0 DC 12
Vs s 0 DC 0 AC 1
Rs s in 1k
C1 in b 10u
R1 vcc b 220k
R2 b 0 47k
Q1 c b e ss_npn
RC vcc c 10k
RE e 0 1k
CE e 0 1000u
C2 c out 10u
RL out 0 100k
.choose R1 E24 10k..10meg
.choose R2 E24 1k..1meg
.choose RC E24 1k..1meg
.choose RE E24 10..100k
.expect gain@100 >= 1000
.expect zin_ohm@100 >= 1meg
.op
.ac dec 10 10 10k
.stage in=vs out=out
.end
""")
t0 = time.monotonic()
r = run(["refine", INF, "-o", os.path.join(tmp, "inf"), "--beta-range", "0.5x,2x"])
elapsed = time.monotonic() - t0
check("infeasible: exit 1", r.returncode == 1, r.stderr.strip())
check("infeasible: the binding limits named",
      "gain@100 at" in r.stderr and "zin_ohm@100 at" in r.stderr, r.stderr.strip())
check("infeasible: answered within 10 s", elapsed < 10.0, f"{elapsed:.2f} s")
check("infeasible: the files are still written for inspection",
      os.path.exists(os.path.join(tmp, "inf", "design_margins.csv")))

# ---- bad input: exit 2, naming what is wrong -------------------------------------------------
bad = [
    (["--beta-range", "2x,1x"], "--beta-range"),
    (["--beta-range", "0.5x,200"], "--beta-range"),
    (["--supply-tol", "vcc=10"], "--supply-tol"),
    (["--supply-tol", "nosuch=10%"], "nosuch"),
    (["--temps", "50,10"], "--temps"),
    (["--max-candidates", "5"], "--max-candidates"),
    (["--threads", "0"], "--threads"),
    (["--frobnicate"], "--frobnicate"),
    (["--tol", "nosuch=5%"], "--tol"),
    (["--series", "E24"], "--series"),
]
for args, named in bad:
    rb = run(["refine", GEO, "-o", os.path.join(tmp, "bad"), *args])
    check(f"bad input {' '.join(args)}: exit 2 naming {named}",
          rb.returncode == 2 and named in rb.stderr, rb.stderr.strip()[:200])
with open(os.path.join(tmp, "netlists", "badchoice.cir"), "w") as f:
    f.write(open(GEO).read().replace(".choose RE3 E24 100..100k", ".choose RE9 E24 100..100k"))
rb = run(["refine", os.path.join(tmp, "netlists", "badchoice.cir"), "-o",
          os.path.join(tmp, "bad")])
check(".choose of an unknown name: exit 2 with file:line",
      rb.returncode == 2 and re.search(r"badchoice\.cir:\d+: \.choose re9", rb.stderr),
      rb.stderr.strip())
rb = run(["refine", "--help"])
check("refine --help: exit 0, lists its options",
      rb.returncode == 0 and "--beta-range" in rb.stdout and "--supply-tol" in rb.stdout)

shutil.rmtree(tmp, ignore_errors=True)
print(f"{passed} passed, {failed} failed, {skipped} skipped")
sys.exit(1 if failed else 0)
