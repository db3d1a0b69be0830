#!/usr/bin/env python3
"""End-to-end checks of `stagesim refine --tol` (docs/refine.md, "Yield").

What is checked and against what:
- the geophone preamp (netlists/geophone_preamp.cir) with tolerances on four resistors, the
  supply and the transistors' BF: refine's yield of its chosen design equals, trial for trial,
  the yield `stagesim spread` measures on the chosen netlist with the same --tol, --trials and
  --seed. spread draws trial t from the seed's stream t whatever the values; refine judges
  every candidate on those very draws (a tolerance on a free value as a ratio to its nominal,
  which spread applies around the chosen value), so the two yields agree exactly, not merely
  within the binomial standard error;
- the yield-scored design beats the margin-scored one (refine without --tol, checked by spread
  on the same trials): the largest smallest margin is not the largest yield;
- the 95 % interval in design_yield.csv is the Wilson score interval, recomputed here from its
  closed form (E. B. Wilson, J. Am. Stat. Assoc. 22 (1927) 209-212);
- an unreachable target answers exit 1 with the best yield and the limit failing most trials;
- one thread and two threads give byte-identical files;
- --trials, --seed or --min-yield without --tol, and --tol with corners, are exit 2.
"""
import csv
import math
import os
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.getcwd()
passed = failed = skipped = 0


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail and not ok else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300)


def read_rows(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def wilson(k, n, z=1.959963984540054):
    p = k / n
    den = 1 + z * z / n
    mid = (p + z * z / (2 * n)) / den
    half = z / den * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
    return max(0.0, mid - half), min(1.0, mid + half)


tmp = tempfile.mkdtemp(prefix="ss_refine_yield_")
os.makedirs(os.path.join(tmp, "netlists"))
os.makedirs(os.path.join(tmp, "models"))
shutil.copy(os.path.join(ROOT, "models", "npn_small.lib"), os.path.join(tmp, "models"))
GEO = os.path.join(tmp, "netlists", "geophone_preamp.cir")
shutil.copy(os.path.join(ROOT, "netlists", "geophone_preamp.cir"), GEO)

TOL = ["--tol", "rc1=10%", "--tol", "re1=10%", "--tol", "r1=10%", "--tol", "r2=10%",
       "--tol", "vcc=25%", "--tol", "ss_npn.bf=50..400", "--trials", "300", "--seed", "7"]


def spread_yield(cir_from, name):
    """The chosen netlist beside the input (its .include is relative), spread over TOL."""
    dst = os.path.join(tmp, "netlists", name)
    shutil.copy(cir_from, dst)
    o = os.path.join(tmp, "sp_" + name)
    rs = run(["spread", dst, *TOL, "-o", o, "-q", "--threads", "2"])
    if rs.returncode not in (0, 1):
        return None
    for row in read_rows(os.path.join(o, "study_summary.csv")):
        if row["figure"] == "all_limits":
            return float(row["pass_fraction"])
    return None


# ---- the target met; spread agrees ---------------------------------------------------------
out = os.path.join(tmp, "y")
r = run(["refine", GEO, *TOL, "--min-yield", "0.9", "-o", out, "--threads", "2"])
check("target 90 % met: exit 0", r.returncode == 0, r.stderr.strip())
rows = {row["limit"]: row for row in read_rows(os.path.join(out, "design_yield.csv"))} \
    if r.returncode == 0 else {}
allr = rows.get("all_limits")
y_refine = float(allr["pass_fraction"]) if allr else float("nan")
check("design_yield.csv: all_limits at or above the target", y_refine >= 0.9, str(y_refine))
check("report: yield, trials per candidate, candidates given the trials",
      "yield of the chosen design:" in r.stdout and "300 trials per candidate" in r.stdout
      and "were given the trials" in r.stdout, r.stdout[-600:])
if allr:
    k, n = int(allr["passing"]), int(allr["trials"])
    lo, hi = wilson(k, n)
    check("Wilson 95 % interval as the closed form",
          abs(lo - float(allr["wilson_lo95"])) < 1e-12 and
          abs(hi - float(allr["wilson_hi95"])) < 1e-12,
          f"{lo} {hi} vs {allr['wilson_lo95']} {allr['wilson_hi95']}")
y_spread = spread_yield(os.path.join(out, "refined.cir"), "chosen_yield.cir")
check("spread on the chosen netlist, same trials: the same yield exactly",
      y_spread is not None and y_spread == y_refine, f"refine {y_refine} spread {y_spread}")

# ---- the margin optimum is not the yield optimum -------------------------------------------
om = os.path.join(tmp, "m")
rm = run(["refine", GEO, "-o", om, "-q", "--threads", "2"])
y_margin = spread_yield(os.path.join(om, "refined.cir"), "chosen_margin.cir") \
    if rm.returncode == 0 else None
check("yield-scored design's yield > margin-scored design's (same trials)",
      y_margin is not None and y_refine > y_margin, f"yield {y_refine} margin {y_margin}")

# ---- an unreachable target ------------------------------------------------------------------
ou = os.path.join(tmp, "u")
ru = run(["refine", GEO, *TOL, "--min-yield", "0.995", "-o", ou, "-q", "--threads", "1"])
check("target 99.5 %: exit 1", ru.returncode == 1, ru.stderr.strip())
urows = read_rows(os.path.join(ou, "design_yield.csv")) if ru.returncode == 1 else []
limits = [row for row in urows if row["limit"] not in ("all_limits",)]
worst = max(limits, key=lambda row: int(row["failing"]))["limit"] if limits else "?"
check("unreachable: the best yield and the limit failing most trials named",
      "best yield found" in ru.stderr and f"binding limit is {worst}" in ru.stderr,
      ru.stderr.strip())

# ---- determinism: one and two threads ---------------------------------------------------------
ou2 = os.path.join(tmp, "u2")
ru2 = run(["refine", GEO, *TOL, "--min-yield", "0.995", "-o", ou2, "-q", "--threads", "2"])
same = ru.returncode == ru2.returncode == 1 and all(
    open(os.path.join(ou, f), "rb").read() == open(os.path.join(ou2, f), "rb").read()
    for f in ("refined.cir", "design.csv", "design_margins.csv", "refine_path.csv",
              "design_yield.csv"))
check("one and two threads: byte-identical files", same)

# ---- bad input ---------------------------------------------------------------------------------
bad = [
    (["--trials", "100"], "--trials"),
    (["--seed", "3"], "--seed"),
    (["--min-yield", "0.9"], "--min-yield"),
    (["--tol", "r1=5%", "--min-yield", "1.5"], "--min-yield"),
    (["--tol", "r1=5%", "--temps", "-20,70"], "corners"),
    (["--tol", "r1=5%", "--trials", "0"], "--trials"),
]
for args, named in bad:
    rb = run(["refine", GEO, "-o", os.path.join(tmp, "bad"), *args])
    check(f"bad input {' '.join(args)}: exit 2 naming {named}",
          rb.returncode == 2 and named in rb.stderr, rb.stderr.strip()[:200])

shutil.rmtree(tmp, ignore_errors=True)
print(f"{passed} passed, {failed} failed, {skipped} skipped")
sys.exit(1 if failed else 0)
