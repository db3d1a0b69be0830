#!/usr/bin/env python3
"""Per-instance tolerances (`--tol q1.bf=...`), matched (correlated) tolerances (`--match`) and
the temperature as a random variable (`--tol temp=...`) in `spread`.

Sources of the expected values:
- BJT with every high-injection and Early parameter at its default (none): Ic = BF Ib
  (Gummel-Poon reduces to Ebers-Moll, docs/models.md), to 1e-5 relative: the reverse
  base-collector current (IS/BR) and the junctions' gmin add parts in 10^7 of Ib;
- correlation of the draws: for a bivariate normal sample of size N the Fisher transform
  atanh(r) is close to normal with mean atanh(rho) and standard error 1/sqrt(N - 3)
  (R. A. Fisher, 1915 and 1921 -- from memory); the checks allow 4 standard errors;
- a gaussian copula with correlation rho gives uniform marginals whose Pearson (= Spearman)
  correlation is (6/pi) asin(rho/2) (K. Pearson, 1907; W. Kruskal, JASA 1958 -- from memory);
- sample mean and standard deviation within 4 standard errors (sigma/sqrt(N); for the standard
  deviation sigma/sqrt(2(N-1)) for normal data);
- uniform on [a, b]: mean (a+b)/2, variance (b-a)^2/12;
- diode at constant current: V = N Vt ln(I/IS(T) + 1), IS(T) = IS r^(XTI/N) exp((r-1) EG/(N Vt))
  (the temperature law of docs/models.md), recomputed here with the sampled temperature.
"""
import csv
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import stats

STAGESIM = os.path.abspath(sys.argv[1])
passed = failed = 0
K_B, Q_E = 1.380649e-23, 1.602176634e-19


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=300)


def table(d):
    with open(os.path.join(d, "study.csv"), newline="") as f:
        rows = list(csv.DictReader(f))
    return {k: np.array([float(r[k]) if r[k] else math.nan for r in rows]) for k in rows[0]
            if k != "failed_limit"}


tmp = tempfile.mkdtemp(prefix="ss_mismatch_")
PAIR = os.path.join(tmp, "pair.cir")
with open(PAIR, "w") as f:
    f.write("two sensor channels, one transistor card\n.model qn npn is=1e-15 bf=100\n"
            "vcc vcc 0 5\nrb1 vcc b1 430k\nq1 c1 b1 0 qn\nrc1 vcc c1 1k\n"
            "rb2 vcc b2 430k\nq2 c2 b2 0 qn\nrc2 vcc c2 1k\n")

# ---- one instance's own parameter -------------------------------------------------------------
d = os.path.join(tmp, "own")
r = run(["sweep", PAIR, "--vary", "q1.bf=list:50,100,200", "-o", d, "-q"])
check("sweep of q1.bf (an instance's own BF): exit 0", r.returncode == 0, r.stderr.strip())
t = table(d)
check("q1's Ic/Ib is its own BF (Ic = BF Ib), q2 keeps the card's 100",
      np.allclose(t["ic(q1)"] / t["ib(q1)"], t["q1.bf"], rtol=1e-5, atol=0)
      and np.allclose(t["ic(q2)"] / t["ib(q2)"], 100, rtol=1e-5, atol=0)
      and np.ptp(t["ic(q2)"]) < 1e-12 * t["ic(q2)"][0], str(t["ic(q1)"] / t["ib(q1)"]))

N = 4000
d = os.path.join(tmp, "indep")
r = run(["spread", PAIR, "--tol", "q1.bf=20%:gauss", "--tol", "q2.bf=20%:gauss", "--trials",
         str(N), "--seed", "11", "-o", d, "-q"])
check("spread with two instance tolerances: exit 0", r.returncode == 0, r.stderr.strip())
t = table(d)
rr = np.corrcoef(t["q1.bf"], t["q2.bf"])[0, 1]
check("unmatched instances are independent (|atanh r| < 4/sqrt(N-3))",
      abs(math.atanh(rr)) < 4 / math.sqrt(N - 3), f"r = {rr:.4f}")
check("each transistor follows its own sample (Ic/Ib = its BF)",
      np.allclose(t["ic(q1)"] / t["ib(q1)"], t["q1.bf"], rtol=1e-5, atol=0)
      and np.allclose(t["ic(q2)"] / t["ib(q2)"], t["q2.bf"], rtol=1e-5, atol=0))
sig = 100 * 0.20 / 3
check("instance BF: mean 100 and sigma 20/3 within 4 standard errors",
      abs(t["q1.bf"].mean() - 100) < 4 * sig / math.sqrt(N)
      and abs(t["q1.bf"].std(ddof=1) - sig) < 4 * sig / math.sqrt(2 * (N - 1)),
      f"{t['q1.bf'].mean():.3f}, {t['q1.bf'].std(ddof=1):.3f}")

# ---- matched: gaussian ------------------------------------------------------------------------
for rho in (0.9, 0.5):
    d = os.path.join(tmp, f"g{rho}")
    r = run(["spread", PAIR, "--tol", "q1.bf=20%:gauss", "--tol", "q2.bf=20%:gauss", "--match",
             f"q1.bf,q2.bf={rho}", "--trials", str(N), "--seed", "5", "-o", d, "-q"])
    t = table(d)
    rr = np.corrcoef(t["q1.bf"], t["q2.bf"])[0, 1]
    zdev = (math.atanh(rr) - math.atanh(rho)) * math.sqrt(N - 3)
    check(f"--match q1.bf,q2.bf={rho} (gaussian): sample correlation within 4 standard errors "
          "(Fisher z)", r.returncode == 0 and abs(zdev) < 4, f"r = {rr:.4f}, z = {zdev:+.2f}")
    check(f"--match {rho}: each marginal keeps mean 100, sigma 20/3",
          all(abs(t[k].mean() - 100) < 4 * sig / math.sqrt(N)
              and abs(t[k].std(ddof=1) - sig) < 4 * sig / math.sqrt(2 * (N - 1))
              for k in ("q1.bf", "q2.bf")))
rho = 1.0
d = os.path.join(tmp, "g1")
run(["spread", PAIR, "--tol", "q1.bf=20%:gauss", "--tol", "q2.bf=20%:gauss", "--match",
     "q1.bf,q2.bf=1", "--trials", "50", "-o", d, "-q"])
t = table(d)
check("--match ...=1: the two draws are the same", np.array_equal(t["q1.bf"], t["q2.bf"]))

# ---- matched: uniform (gaussian copula) -------------------------------------------------------
rho = 0.8
d = os.path.join(tmp, "u")
r = run(["spread", PAIR, "--tol", "q1.bf=90..110", "--tol", "q2.bf=90..110", "--match",
         f"q1.bf,q2.bf={rho}", "--trials", str(N), "--seed", "3", "-o", d, "-q"])
t = table(d)
u1, u2 = (t["q1.bf"] - 90) / 20, (t["q2.bf"] - 90) / 20
check("--match on uniform tolerances: samples stay within LO..HI",
      r.returncode == 0 and u1.min() > 0 and u1.max() < 1 and u2.min() > 0 and u2.max() < 1)
zs = np.corrcoef(stats.norm.ppf(u1), stats.norm.ppf(u2))[0, 1]
zdev = (math.atanh(zs) - math.atanh(rho)) * math.sqrt(N - 3)
check("uniform matched pair: the normal scores correlate with rho (Fisher z, 4 SE)",
      abs(zdev) < 4, f"r = {zs:.4f}, z = {zdev:+.2f}")
want = 6 / math.pi * math.asin(rho / 2)
got = np.corrcoef(u1, u2)[0, 1]
check("uniform matched pair: Pearson correlation (6/pi) asin(rho/2) within 0.02",
      abs(got - want) < 0.02, f"{got:.4f} vs {want:.4f}")
check("uniform marginal: mean 100 within 4 SE (sigma 20/sqrt(12))",
      abs(t["q1.bf"].mean() - 100) < 4 * 20 / math.sqrt(12) / math.sqrt(N))

# ---- an instance around its card's sampled value ----------------------------------------------
d = os.path.join(tmp, "lot")
r = run(["spread", PAIR, "--tol", "qn.bf=50..150", "--tol", "q1.bf=10%", "--trials", "500",
         "-o", d, "-q"])
t = table(d)
ratio = t["q1.bf"] / t["qn.bf"]
check("card and instance both toleranced: q1.bf = card sample x (1 +- 10 %)",
      r.returncode == 0 and ratio.min() >= 0.9 and ratio.max() <= 1.1 and np.ptp(ratio) > 0.15,
      f"{ratio.min():.4f} .. {ratio.max():.4f}")
check("... and q2 (no own tolerance) takes the card's sample",
      np.allclose(t["ic(q2)"] / t["ib(q2)"], t["qn.bf"], rtol=1e-5, atol=0)
      and np.allclose(t["ic(q1)"] / t["ib(q1)"], t["q1.bf"], rtol=1e-5, atol=0))

# ---- errors -----------------------------------------------------------------------------------
r = run(["spread", PAIR, "--tol", "q1.nosuch=5%", "-o", d])
check("an instance parameter its model lacks: exit 2 naming it", r.returncode == 2
      and "q1.nosuch" in r.stderr, r.stderr.strip())
r = run(["spread", PAIR, "--tol", "q1.bf=5%", "--match", "q1.bf,q2.bf=0.9", "-o", d])
check("--match of a value without tolerance: exit 2", r.returncode == 2
      and "'q2.bf' has no tolerance" in r.stderr, r.stderr.strip())
r = run(["spread", PAIR, "--tol", "q1.bf=5%", "--tol", "q2.bf=5%", "--match", "q1.bf,q2.bf=1.5",
         "-o", d])
check("--match with a correlation above 1: exit 2", r.returncode == 2
      and "from 0 to 1" in r.stderr, r.stderr.strip())
r = run(["sweep", PAIR, "--vary", "q1.bf=list:1", "--match", "a,b=0.5", "-o", d])
check("--match belongs to spread", r.returncode == 2
      and "--match belongs to spread, not sweep" in r.stderr, r.stderr.splitlines()[0])

# ---- temperature as a random variable ---------------------------------------------------------
DIO = os.path.join(tmp, "diode.cir")
with open(DIO, "w") as f:
    f.write("diode thermometer\n.options gmin=0\n.model dx d is=2e-14 n=1.1 xti=3 eg=1.11\n"
            "i1 0 a 100u\nd1 a 0 dx\n")
d1, d2 = os.path.join(tmp, "t1"), os.path.join(tmp, "t2")
r = run(["spread", DIO, "--tol", "temp=-40..85", "--trials", "2000", "--seed", "9",
         "--threads", "1", "-o", d1, "-q"])
run(["spread", DIO, "--tol", "temp=-40..85", "--trials", "2000", "--seed", "9", "--threads", "2",
     "-o", d2, "-q"])
check("--tol temp=-40..85: exit 0", r.returncode == 0, r.stderr.strip())
with open(os.path.join(d1, "study.csv"), "rb") as a, open(os.path.join(d2, "study.csv"), "rb") as b:
    check("random temperature: byte-identical with 1 and 2 threads", a.read() == b.read())
t = table(d1)
T = t["temp"]
check("uniform temperature: within -40 .. 85, mean 22.5 within 4 SE",
      T.min() >= -40 and T.max() <= 85
      and abs(T.mean() - 22.5) < 4 * 125 / math.sqrt(12) / math.sqrt(len(T)), f"{T.mean():.3f}")
tk = T + 273.15
vt = K_B * tk / Q_E
rr = tk / 300.15
is_t = 2e-14 * rr ** (3 / 1.1) * np.exp((rr - 1) * 1.11 / (1.1 * vt))
worst = np.max(np.abs(t["v(a)"] - 1.1 * vt * np.log(100e-6 / is_t + 1)))
check("each trial solves at its sampled temperature (diode law to 1e-9 V)", worst < 1e-9,
      f"{worst:.3g} V")
d3 = os.path.join(tmp, "t3")
r = run(["spread", DIO, "--tol", "temp=25+-30:gauss", "--trials", "3000", "-o", d3, "-q"])
T = table(d3)["temp"]
check("--tol temp=25+-30:gauss: mean 25, sigma 10 (+-30 = 3 sigma) within 4 SE",
      r.returncode == 0 and abs(T.mean() - 25) < 4 * 10 / math.sqrt(3000)
      and abs(T.std(ddof=1) - 10) < 4 * 10 / math.sqrt(2 * 2999), f"{T.mean():.3f} {T.std(ddof=1):.3f}")
r = run(["spread", DIO, "--tol", "temp=5%", "-o", d3])
check("--tol temp=5%: exit 2 (a percentage of degrees C)", r.returncode == 2, r.stderr.strip())
r = run(["spread", DIO, "--tol", "temp=-300..20", "-o", d3])
check("--tol temp below absolute zero: exit 2", r.returncode == 2, r.stderr.strip())
r = run(["spread", DIO, "--tol", "temp=0..50", "--vary", "temp=list:25", "-o", d3])
check("temp both swept and sampled: exit 2", r.returncode == 2, r.stderr.strip())

print(f"{passed} passed, {failed} failed, 0 skipped")
sys.exit(1 if failed else 0)
