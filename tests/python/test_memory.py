#!/usr/bin/env python3
"""Solver contexts made and freed from Python do not leak: 100,000 contexts of one circuit,
created and destroyed (half with `with`, half left to garbage collection), with the process's
resident memory (/proc/self/statm) flat within a small tolerance after a warm-up.

Usage: test_memory.py LIBSTAGESIM STAGESIM (from the repository root). One line per check,
then "N passed, M failed"; exit 1 on a failure."""
import gc
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import ROOT, Checks, setup  # noqa: E402

LIB, _ = setup(sys.argv)
import stagesim  # noqa: E402

N = 100000
WARMUP = 5000
TOLERANCE_KB = 512  # a context of this circuit is a few kB: a leak of one per 100 shows

check = Checks()


def rss_kb():
    with open("/proc/self/statm") as f:
        return int(f.read().split()[1]) * os.sysconf("SC_PAGE_SIZE") // 1024


ckt = stagesim.Circuit.from_file(os.path.join(ROOT, "netlists", "vibration_frontend.cir"))


def cycle(i):
    if i % 2:
        with ckt.solver() as sv:
            sv["R1"] = 50e3
    else:
        sv = ckt.solver()  # freed when the name is rebound / the frame ends
        sv["R1"] = 50e3


for i in range(WARMUP):
    cycle(i)
gc.collect()
start = rss_kb()
samples = []
for i in range(N):
    cycle(i)
    if i % 20000 == 0:
        samples.append(rss_kb())
gc.collect()
end = rss_kb()
print(f"resident: {start} kB after {WARMUP} contexts, {end} kB after {N} more "
      f"(samples {samples})")
check(f"{N} contexts created and destroyed: resident memory within {TOLERANCE_KB} kB",
      end - start <= TOLERANCE_KB, f"grew {end - start} kB")

# with an operating point solved on each (the matrix and its factors allocated and freed)
for i in range(200):
    with ckt.solver() as sv:
        sv.op()
gc.collect()
start = rss_kb()
for i in range(5000):
    with ckt.solver() as sv:
        sv.op()
gc.collect()
end = rss_kb()
print(f"resident with an op per context: {start} kB, then {end} kB after 5000")
check("5000 contexts each solving an op: resident memory within the tolerance",
      end - start <= TOLERANCE_KB, f"grew {end - start} kB")

check.done()
