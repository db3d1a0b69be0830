#!/usr/bin/env python3
"""A transistor card written the way makers publish them: every standard Gummel-Poon parameter
(plus TNOM, KF, AF), continuation lines, mixed case, the parenthesised form and a substrate
node. The values are invented (no vendor's part). It must load and run the operating point,
AC, noise and transient with finite numbers, and the operating point must satisfy Kirchhoff's
current law at the transistor's nodes through the resistors around it (Ohm's law, KCL:
standard circuit theory).
"""
import csv
import math
import os
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0

NETLIST = """Seismic sensor preamp with a fully specified transistor card
.MODEL QFull npn( Is=2.5e-15 bf=210 NF=1.01 vaf=95 IKF=0.12 ise=3e-14 NE=1.6
+ BR=4.5 nr=1.005 VAR=22 ikr=0.04 ISC=1e-13 nc=1.9
+ RB=45 irb=0.2m RBM=6 re=0.35 RC=1.8
+ CJE=14p vje=0.74 MJE=0.36 TF=0.42n xtf=3 VTF=4 itf=0.25 PTF=25
+ cjc=5p VJC=0.68 mjc=0.34 XCJC=0.6 tr=45n
+ CJS=3p vjs=0.6 MJS=0.3 xtb=1.6 EG=1.12 XTI=3.2 fc=0.55
+ TNOM=25 KF=2e-16 AF=1.05 )
VCC vcc 0 DC 12
Vsig src 0 DC 0 AC 1 SIN(0 5m 10k)
Rs src in 600
C1 in b 10u
R1 vcc b 100k
R2 b 0 22k
RC vcc c 4.7k
RE e 0 1k
CE e 0 100u
Q1 c b e vcc QFull
C2 c out 10u
RL out 0 10k
.op
.ac dec 10 10 1G
.noise v(out) Vsig
.tran 1u 300u
.stage in=Vsig out=out
"""


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


tmp = tempfile.mkdtemp(prefix="ss_fullcard_")
try:
    cir = os.path.join(tmp, "full.cir")
    with open(cir, "w") as f:
        f.write(NETLIST)
    out = os.path.join(tmp, "out")
    r = subprocess.run([STAGESIM, "run", cir, "-o", out], capture_output=True, text=True,
                       timeout=300)
    check("the full card loads and op/ac/noise/tran run (exit 0)", r.returncode == 0,
          r.stderr.strip())
    for name in ("op.csv", "ac.csv", "noise.csv", "tran.csv", "stage_summary.csv"):
        path = os.path.join(out, name)
        bad = []
        if os.path.exists(path):
            with open(path, newline="") as f:
                rows = list(csv.reader(f))[1:]
            for row in rows:
                for cell in row[1:]:
                    try:
                        if not math.isfinite(float(cell)):
                            bad.append(cell)
                    except ValueError:
                        pass
        check(f"{name}: written, every number finite", os.path.exists(path) and not bad
              and len(rows) > 0, ",".join(bad[:3]))
    with open(os.path.join(out, "op.csv"), newline="") as f:
        op = {row[0]: float(row[1]) for row in list(csv.reader(f))[1:] if row}
    ic, ib = op["ic(q1)"], op["ib(q1)"]
    vcc, vb, vc, ve = op["v(vcc)"], op["v(b)"], op["v(c)"], op["v(e)"]
    # the substrate (vcc) carries no DC current, so the three terminals balance
    check("KCL at the collector: (Vcc - Vc)/RC = Ic", abs((vcc - vc) / 4.7e3 - ic) <= 1e-9 * ic,
          f"{(vcc - vc) / 4.7e3} vs {ic}")
    check("KCL at the base: (Vcc - Vb)/R1 - Vb/R2 = Ib",
          abs((vcc - vb) / 100e3 - vb / 22e3 - ib) <= 1e-7 * ib, f"{ib}")
    check("KCL at the emitter: Ve/RE = Ic + Ib", abs(ve / 1e3 - (ic + ib)) <= 1e-9 * (ic + ib),
          f"{ve / 1e3} vs {ic + ib}")
    check("forward active, sane bias (0.5 mA < Ic < 3 mA, beta 50..400)",
          5e-4 < ic < 3e-3 and 50 < ic / ib < 400, f"Ic {ic}, beta {ic / ib}")
    with open(os.path.join(out, "stage_summary.csv"), newline="") as f:
        st = {row["metric"]: row["value"] for row in csv.DictReader(f)}
    g = float(st["gain_mid_db"])
    fh = float(st["f_high_hz"])
    check("stage: a gain of some 40 dB and an upper corner between 10 kHz and 100 MHz",
          30 < g < 50 and 1e4 < fh < 1e8, f"{g} dB, {fh} Hz")
    with open(os.path.join(out, "tran.csv"), newline="") as f:
        tr = list(csv.DictReader(f))
    swing = max(float(x["v(c)"]) for x in tr) - min(float(x["v(c)"]) for x in tr)
    check("tran: the collector swings (a 5 mV input, some 40 dB of gain)", 0.05 < swing < 5.0,
          f"{swing} V")
finally:
    shutil.rmtree(tmp, ignore_errors=True)

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
