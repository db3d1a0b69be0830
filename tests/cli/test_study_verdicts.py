#!/usr/bin/env python3
"""Each point of a study judged against the limits: study.csv's `pass` and `failed_limit`
columns, study_summary.csv's worst point per limited figure, and merge giving the same bytes.

Sources of the expected values: the limits' own definition (a point passes a limit when
LO <= value <= HI, docs/checks.md), applied here in Python to the values study.csv holds; the
divider Vout = V R2 / (R1 + R2) (standard circuit theory) recomputed from the sampled values.
"""
import csv
import os
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0


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


tmp = tempfile.mkdtemp(prefix="ss_verdicts_")
DIV = os.path.join(tmp, "divider.cir")
with open(DIV, "w") as f:
    f.write("sensor bias divider\nv1 in 0 10\nr1 in mid 10k\nr2 mid 0 10k\n")
LIM = os.path.join(tmp, "div.limits")
# two limits, in this order: the first failing one is named
LIMITS = [("v(mid)", 4.85, 5.15), ("i(v1)", -0.000505, -0.000495)]
with open(LIM, "w") as f:
    f.write("v(mid) 4.85 .. 5.15\ni(v1) -505u .. -495u\n")

base = ["spread", DIV, "--tol", "r1=10%", "--tol", "r2=10%", "--trials", "300", "--seed", "7",
        "--limits", LIM]
one = os.path.join(tmp, "one")
r = run(base + ["-o", one])
check("spread with limits: exit 0", r.returncode == 0, r.stderr.strip())
rows = read_rows(os.path.join(one, "study.csv"))
with open(os.path.join(one, "study.csv")) as f:
    header = f.readline().strip().split(",")
check("study.csv: status, pass and failed_limit precede the figures",
      header[:6] == ["point", "r1", "r2", "status", "pass", "failed_limit"], str(header[:7]))

bad_flag = bad_name = bad_div = 0
for x in rows:
    first = ""
    for name, lo, hi in LIMITS:
        v = float(x[name])
        if not (lo <= v <= hi):
            first = name
            break
    bad_flag += x["pass"] != ("1" if first == "" else "0")
    bad_name += x["failed_limit"] != first
    r1, r2 = float(x["r1"]), float(x["r2"])
    bad_div += abs(float(x["v(mid)"]) - 10 * r2 / (r1 + r2)) > 1e-9
n_fail = sum(x["pass"] == "0" for x in rows)
check("pass column: 1 exactly when every limit holds (judged here from the values)",
      bad_flag == 0 and 0 < n_fail < len(rows), f"{bad_flag} wrong of {len(rows)}, {n_fail} fail")
check("failed_limit: the first limit (in the file's order) the point fails, empty when none",
      bad_name == 0, f"{bad_name} wrong")
check("the judged values are the divider's V R2/(R1+R2)", bad_div == 0)
names = {x["failed_limit"] for x in rows}
check("failed_limit names both limits somewhere in 300 trials", {"v(mid)", "i(v1)"} <= names,
      str(names))

summ = {x["figure"]: x for x in read_rows(os.path.join(one, "study_summary.csv"))}
for name, lo, hi in LIMITS:
    margins = [min(float(x[name]) - lo, hi - float(x[name])) for x in rows]
    k = min(range(len(rows)), key=lambda i: (margins[i], i))
    s = summ[name]
    check(f"summary: worst point of {name} is the smallest margin to its limits",
          int(s["worst_point"]) == int(rows[k]["point"])
          and float(s["worst_value"]) == float(rows[k][name])
          and abs(float(s["worst_margin"]) - margins[k]) < 1e-15,
          f"{s['worst_point']} vs {rows[k]['point']}")
    check(f"summary: the varied values at {name}'s worst point",
          float(s["worst_r1"]) == float(rows[k]["r1"]) and float(s["worst_r2"]) == float(rows[k]["r2"]))
    pf = sum(lo <= float(x[name]) <= hi for x in rows) / len(rows)
    check(f"summary: pass_fraction of {name}", abs(float(s["pass_fraction"]) - pf) < 1e-15)
yield_ = sum(x["pass"] == "1" for x in rows) / len(rows)
check("summary: yield (all_limits) is the mean of the pass column",
      abs(float(summ["all_limits"]["pass_fraction"]) - yield_) < 1e-15)
k = int(summ["v(mid)"]["worst_point"])
check("the printed summary names the worst point and its values",
      f"point {k}:" in r.stdout and "at r1=" in r.stdout, r.stdout[-300:])

# shards merge to the same bytes, study.csv and study_summary.csv alike
files = []
for k in (1, 2, 3):
    d = os.path.join(tmp, f"s{k}")
    run(base + ["--shard", f"{k}/3", "-o", d, "-q"])
    files.append(os.path.join(d, "study.csv"))
merged = os.path.join(tmp, "merged")
r = run(["merge", "--limits", LIM, "-o", merged, "-q"] + files)
check("merge: exit 0", r.returncode == 0, r.stderr.strip())
for name in ("study.csv", "study_summary.csv"):
    with open(os.path.join(one, name), "rb") as a, open(os.path.join(merged, name), "rb") as b:
        check(f"merge: {name} identical to the unsharded run's", a.read() == b.read())
# the text column is read back as written: an edited name is still caught by the manifest
with open(files[1], encoding="utf-8") as f:
    text = f.read()
with open(files[1], "w", encoding="utf-8") as f:
    f.write(text.replace("v(mid)\n", "v(mid)\n", 1).replace(",i(v1),", ",v(mid),", 1))
r = run(["merge", "-o", os.path.join(tmp, "m2"), "-q"] + files)
check("merge: an edited failed_limit cell is refused", r.returncode == 2
      and "not as its run wrote it" in r.stderr, r.stderr.strip())

# without limits nothing changes: no pass column
r = run(["spread", DIV, "--tol", "r1=10%", "--trials", "5", "-o", os.path.join(tmp, "nolim"), "-q"])
with open(os.path.join(tmp, "nolim", "study.csv")) as f:
    h = f.readline().strip().split(",")
check("without limits: study.csv has no pass/failed_limit columns", h[:4] == ["point", "r1", "status", "v(in)"], str(h[:4]))

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
