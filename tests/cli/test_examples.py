#!/usr/bin/env python3
"""Runs every example netlist in netlists/ and checks it works end to end: exit code 0, the
output files the design promises, every transistor in its amplifying region, the stage
figures present, and each example's operating point and gain within a few per cent of the hand
estimate written in its own header (hand analysis with Vbe = 0.65 V, or the square law for a
JFET: an engineer's sanity check, not a precision reference -- the precision checks live in
tests/reference/)."""
import csv
import glob
import os
import re
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
passed = failed = 0


def check(name, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print(f"ok   {name}")
    else:
        failed += 1
        print(f"FAIL {name} {detail}")


def read_kv(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return {r[0]: (float(r[1]) if r[1] != "" else None) for r in rows[1:]}


# hand estimates from the netlists' own header comments (quantity, value, relative tolerance)
HAND = {
    "vibration_frontend.cir": [("v(c)", 6.80, 0.03), ("v(e)", 1.13, 0.03),
                               ("gain_mid_db", 20.5, 0.02), ("zin_mid_ohm", 8.7e3, 0.05)],
    "hydrophone_buffer.cir": [("v(e)", 4.10, 0.03), ("gain_mid_db", -0.1, None)],
    "photodiode_amp.cir": [("v(c1)", 3.09, 0.03)],
    "line_driver.cir": [("v(o)", 6.0, 0.03)],
    "piezo_preamp.cir": [("v(s)", 0.849, 0.03), ("v(d)", 6.23, 0.03),
                         ("gain_mid_db", 24.4, 0.03)],
    "hydrophone_mos_buffer.cir": [("v(s)", 3.84, 0.03), ("gain_mid_db", -1.4, None),
                                  ("zout_mid_ohm", 168.0, 0.05)],
}

# the region an amplifying stage works in, per transistor table of the report
AMPLIFYING = {"Transistors": "forward active", "JFETs": "saturation", "MOSFETs": "saturation"}


def report_regions(stdout):
    """(table, element, region) of every line of the report's transistor tables: the region
    is the text after the last column, a table ends at a blank line."""
    out, table = [], None
    for line in stdout.splitlines():
        s = line.strip()
        if s in AMPLIFYING:
            table = s
        elif not s:
            table = None
        elif table and not s.startswith("name "):
            words = s.split()
            reg = next((r for r in ("forward active", "reverse active", "saturation",
                                    "cut-off", "linear") if s.endswith(r)), None)
            out.append((table, words[0], reg))
    return out


examples = sorted(glob.glob(os.path.join(ROOT, "netlists", "*.cir")))
check("at least three example netlists", len(examples) >= 3, str(len(examples)))
for path in examples:
    name = os.path.basename(path)
    with tempfile.TemporaryDirectory() as out:
        r = subprocess.run([STAGESIM, "run", path, "-o", out, "--plot"], capture_output=True,
                           text=True, timeout=60)
        check(f"{name}: exit 0", r.returncode == 0, r.stderr.strip())
        if r.returncode != 0:
            continue
        files = set(os.listdir(out))
        for f in ("op.csv", "ac.csv", "stage.csv", "stage_summary.csv", "bode.svg"):
            check(f"{name}: writes {f}", f in files)
        leftovers = [f for f in files if ".tmp" in f]
        check(f"{name}: no temporary files left", not leftovers, str(leftovers))
        op = read_kv(os.path.join(out, "op.csv"))
        summary = read_kv(os.path.join(out, "stage_summary.csv"))
        regions = report_regions(r.stdout)
        check(f"{name}: every BJT forward active, every JFET and MOSFET in saturation",
              regions and all(reg == AMPLIFYING[table] for table, _, reg in regions),
              str(regions))
        check(f"{name}: mid-band gain and Zin present",
              summary.get("gain_mid_db") is not None and summary.get("zin_mid_ohm") is not None)
        values = dict(op)
        values.update(summary)
        for q, expected, rel in HAND.get(name, []):
            got = values.get(q)
            if rel is None:
                ok = got is not None and abs(got - expected) <= 0.2
            else:
                ok = got is not None and abs(got - expected) <= rel * abs(expected)
            check(f"{name}: {q} = {got:.5g} near the hand estimate {expected:g}", ok)



# --nodes: the per-node tables keep exactly the named nodes, in the order named, with the very
# values (same text) the full run writes; a transient table too (an RC step of our own).
def read_cols(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return {h: [r[i] for r in rows[1:]] for i, h in enumerate(rows[0])}, rows[0]


RC_TRAN = """rc step for the node selection check
V1 in 0 PULSE(0 1 0 1u 1u 1m 2m)
R1 in mid 1k
R2 mid out 1k
C1 out 0 100n
.tran 10u 1m
.end
"""
with tempfile.TemporaryDirectory() as t:
    rc_path = os.path.join(t, "rc.cir")
    with open(rc_path, "w") as f:
        f.write(RC_TRAN)
    cases = [(os.path.join(ROOT, "netlists", "line_driver.cir"), ("ac.csv", "dc.csv")),
             (rc_path, ("tran.csv",))]
    for path, tables in cases:
        name = os.path.basename(path)
        full, sel = os.path.join(t, "full"), os.path.join(t, "sel")
        r1 = subprocess.run([STAGESIM, "run", path, "-o", full, "--quiet"], capture_output=True,
                            text=True, timeout=60)
        cols_full, head_full = read_cols(os.path.join(full, tables[0]))
        nodes = [h[h.index("(") + 1:-1] for h in head_full[1:] if h.startswith("v")]
        nodes = list(dict.fromkeys(nodes))
        pick = [nodes[-1], nodes[0]]
        r2 = subprocess.run([STAGESIM, "run", path, "-o", sel, "--quiet", "--nodes",
                             ",".join(pick)], capture_output=True, text=True, timeout=60)
        check(f"--nodes {name}: both runs exit 0", r1.returncode == 0 and r2.returncode == 0,
              r1.stderr + r2.stderr)
        for table in tables:
            cols_full, head_full = read_cols(os.path.join(full, table))
            cols_sel, head_sel = read_cols(os.path.join(sel, table))
            lead = [h for h in head_full if "(" not in h]
            kinds = ["vm", "vp"] if table == "ac.csv" else ["v"]
            want = lead + [f"{k}({n})" for n in pick for k in kinds]
            check(f"--nodes {name} {table}: columns {want}", head_sel == want, str(head_sel))
            check(f"--nodes {name} {table}: the same values as the full run",
                  all(cols_sel.get(h) == cols_full.get(h) for h in want))
        op_sel = read_kv(os.path.join(sel, "op.csv"))
        check(f"--nodes {name} op.csv: only the named node voltages",
              sorted(k for k in op_sel if k.startswith("v(")) == sorted(f"v({n})" for n in pick))


# The report lists at most 100 node voltages (a board would bury the rest of it) and says how
# many more op.csv holds; op.csv keeps every one.
with tempfile.TemporaryDirectory() as t:
    path = os.path.join(t, "long.cir")
    with open(path, "w") as f:
        f.write("long ladder for the report\nvin n0 0 dc 1\n")
        for i in range(150):
            f.write(f"r{i} n{i} n{i + 1} 1k\n")
        f.write("rend n150 0 1k\n.end\n")
    r = subprocess.run([STAGESIM, "run", path, "-o", os.path.join(t, "o")], capture_output=True,
                       text=True, timeout=60)
    listed = [ln for ln in r.stdout.splitlines() if ln.startswith("  n") and ln.endswith(" V")]
    check("report: 100 of 151 node voltages listed", r.returncode == 0 and len(listed) == 100,
          f"{len(listed)} listed")
    check("report: says 51 more are in op.csv", "... and 51 more (all in op.csv" in r.stdout)
    op = read_kv(os.path.join(t, "o", "op.csv"))
    check("op.csv: all 151 node voltages", sum(1 for k in op if k.startswith("v(")) == 151)

print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
