#!/usr/bin/env python3
"""A bias-resistor sweep from Python against `stagesim sweep` over the same values: the same
bits, and how much the Python loop costs beside the tool's own loop.

Usage: test_sweep.py LIBSTAGESIM STAGESIM (from the repository root). Prints one line per
check and the loop-time ratio (informational: the time is printed, never asserted), then
"N passed, M failed"; exit 1 on a failure."""
import csv
import os
import subprocess
import sys
import tempfile
import time

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import ROOT, Checks, setup  # noqa: E402

LIB, STAGESIM = setup(sys.argv)
import stagesim  # noqa: E402

check = Checks()


def cli_sweep(netlist, spec, out):
    t0 = time.perf_counter()
    subprocess.run([STAGESIM, "sweep", netlist, "--vary", spec, "--threads", "1", "-o", out],
                   check=True, stdout=subprocess.DEVNULL)
    elapsed = time.perf_counter() - t0
    with open(os.path.join(out, "study.csv"), newline="") as f:
        return list(csv.DictReader(f)), elapsed


with tempfile.TemporaryDirectory() as tmp:
    # 1. the vibration front-end (op, stage figures): v(c) at 21 values of R1, bit for bit
    net = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
    rows, _ = cli_sweep(net, "R1=lin:39k:82k:21", os.path.join(tmp, "vib"))
    values = [float(r["r1"]) for r in rows]
    ckt = stagesim.Circuit.from_file(net)
    with ckt.solver() as sv:
        got = []
        for v in values:
            sv.reset()
            sv["R1"] = v
            got.append(sv.op()["v(c)"])
    same = [float(r["v(c)"]) == g for r, g in zip(rows, got)]
    check(f"vibration front-end: v(c) at {len(rows)} values of R1 the same bits as sweep",
          len(rows) == 21 and all(same), f"{same.count(False)} differ")
    # every figure of a point, as the study records them
    with ckt.solver() as sv:
        sv["R1"] = values[7]
        figs = sv.figures()
    cols = [c for c in rows[7] if c not in ("point", "r1", "status")]
    diff = [c for c in cols if float(rows[7][c] or "nan") != figs.get(c)
            and not (rows[7][c] == "" and figs.get(c) != figs.get(c))]
    check("vibration front-end: figures() of one point equal its study.csv row",
          set(cols) == set(figs) and not diff, f"differ: {diff}")

    # 2. the loop: 10,000 values, op figures only (the bias network alone); each side timed
    # three times, interleaved, the fastest kept (the machine is shared)
    net = os.path.join(ROOT, "tests", "python", "bias_op.cir")
    n = 10000
    t_cli, t_py = [], []
    for rep in range(3):
        rows, t = cli_sweep(net, f"R1=lin:40k:80k:{n}", os.path.join(tmp, f"loop{rep}"))
        t_cli.append(t)
        values = [float(r["r1"]) for r in rows]
        t0 = time.perf_counter()
        ckt = stagesim.Circuit.from_file(net)
        vc = []
        with ckt.solver() as sv:
            for v in values:
                sv.reset()
                sv["R1"] = v
                vc.append(sv.figures()["v(c)"])
        t_py.append(time.perf_counter() - t0)
        del ckt
    same = [float(r["v(c)"]) == g for r, g in zip(rows, vc)]
    check(f"bias network: v(c) at {n} values the same bits as sweep",
          len(rows) == n and all(same), f"{same.count(False)} differ")
    print(f"loop: {n} points, fastest of 3: python {min(t_py):.3f} s (parse, then reset, set "
          f"and figures per point), stagesim sweep --threads 1 {min(t_cli):.3f} s (the whole "
          f"process), ratio {min(t_py) / min(t_cli):.2f}")

check.done()
