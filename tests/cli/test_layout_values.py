#!/usr/bin/env python3
"""Values that change a transistor's matrix layout, set by a study or on the command line.

A BJT card without RBM, XCJC, CJS (or with RB = 0) makes fewer matrix entries than one with
them. A sweep, a tolerance study or --set that gives such a parameter a value must give the
figures a netlist with that value written into its card gives, bit for bit: the reference
here is a separate `stagesim run` of the edited netlist (the same published equations solved
on a fresh circuit), and the check also asserts that the value moved the figures at all.
"""
import csv
import os
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0

CE = """Geophone line receiver: common-emitter stage, 12 V
.model qn NPN (IS=5e-15 BF=180 VAF=90 IKF=0.08 ISE=2e-15 NE=1.5 RB={rb} RE=0.4 RC=2
+ CJE=8p VJE=0.72 MJE=0.35 CJC=3p VJC=0.7 MJC=0.33 TF=0.35n TR=30n{extra})
VCC vcc 0 DC 12
Vsig src 0 DC 0 AC 1
Rs src in 600
C1 in b 10u
R1 vcc b 100k
R2 b 0 22k
RC vcc c 4.7k
RE e 0 1k
CE e 0 100u
Q1 c b e qn
C2 c out 10u
RL out 0 10k
.op
.ac dec 20 10 1G
.stage in=Vsig out=out
"""
FIGURES = ["gain_mid_db", "f_high_hz", "zin_mid_ohm", "zout_mid_ohm"]


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300,
                          cwd=tmp)


def write(name, rb="60", extra=""):
    path = os.path.join(tmp, name)
    with open(path, "w") as f:
        f.write(CE.format(rb=rb, extra=extra))
    return path


def run_figures(rb, extra, tag):
    """The stage figures of a run of the netlist with the values written in."""
    path = write(f"{tag}.cir", rb, extra)
    out = os.path.join(tmp, "o_" + tag)
    r = run(["run", path, "-o", out])
    if r.returncode != 0:
        return None, r.stderr.strip()
    with open(os.path.join(out, "stage_summary.csv"), newline="") as f:
        rows = {row["metric"]: float(row["value"]) for row in csv.DictReader(f)}
    return {k: rows[k] for k in FIGURES}, ""


def study_rows(args, tag):
    out = os.path.join(tmp, "s_" + tag)
    r = run(args + ["-o", out])
    if r.returncode != 0:
        return None, r.stderr.strip()
    with open(os.path.join(out, "study.csv"), newline="") as f:
        return list(csv.DictReader(f)), ""


tmp = tempfile.mkdtemp(prefix="ss_layout_")
try:
    base = write("base.cir")
    nominal, why = run_figures("60", "", "nominal")
    check("the nominal netlist runs", nominal is not None, why)

    # name=list:a,b on the nominal card; the netlist each point stands for (rb, extra)
    CASES = [
        ("q1.cjs", "0,20p", [("60", ""), ("60", " CJS=20p")]),
        ("qn.cjs", "0,20p", [("60", ""), ("60", " CJS=20p")]),
        ("qn.xcjc", "1,0.3", [("60", ""), ("60", " XCJC=0.3")]),
        ("q1.xcjc", "0.3,1", [("60", " XCJC=0.3"), ("60", "")]),
        ("qn.rbm", "5,60", [("60", " RBM=5"), ("60", " RBM=60")]),
        ("qn.rb", "0,60", [("0", ""), ("60", "")]),
    ]
    for name, spec, points in CASES:
        rows, why = study_rows(["sweep", base, "--vary", f"{name}=list:{spec}"],
                               name.replace(".", "_"))
        if rows is None:
            check(f"sweep --vary {name}=list:{spec} runs", False, why)
            continue
        for k, (rb, extra) in enumerate(points):
            ref, why = run_figures(rb, extra, f"{name.replace('.', '_')}_{k}")
            got = {f: float(rows[k][f]) for f in FIGURES}
            check(f"sweep {name}={spec.split(',')[k]}: figures of the netlist with "
                  f"RB={rb}{extra} written in", ref == got, f"{got} vs {ref}")
        moved = abs(float(rows[0]["f_high_hz"]) / float(rows[1]["f_high_hz"]) - 1.0)
        check(f"sweep {name}: the value moves f_high_hz", moved > 1e-3, f"{moved:.3g}")

    # two at once, with IRB: a base resistance that falls with the base current
    rows, why = study_rows(["sweep", base, "--vary", "qn.rbm=list:5", "--vary",
                            "qn.irb=list:0.2m", "--vary", "q1.cjs=list:20p"], "combo")
    ref, why2 = run_figures("60", " RBM=5 IRB=0.2m CJS=20p", "combo")
    check("sweep rbm, irb, cjs together: figures of the edited netlist",
          rows is not None and ref == {f: float(rows[0][f]) for f in FIGURES},
          why or why2)

    # --set on the command line and one point of a tolerance study at the nominal card
    out = os.path.join(tmp, "o_set")
    r = run(["run", base, "--set", "qn.cjs=20p", "--set", "qn.xcjc=0.3", "-o", out])
    ref, _ = run_figures("60", " CJS=20p XCJC=0.3", "set")
    ok = r.returncode == 0
    if ok:
        with open(os.path.join(out, "stage_summary.csv"), newline="") as f:
            got = {row["metric"]: float(row["value"]) for row in csv.DictReader(f)}
        ok = {k: got[k] for k in FIGURES} == ref
    check("run --set qn.cjs=20p --set qn.xcjc=0.3: figures of the edited netlist", ok,
          r.stderr.strip())
finally:
    shutil.rmtree(tmp, ignore_errors=True)

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
