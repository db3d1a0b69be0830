#!/usr/bin/env python3
"""The Python page (docs/python.md) is true: the example script runs, prints what the page
quotes and writes a well-formed SVG plot; the package installed by `cmake --install` finds the
installed library from its own place, with no STAGESIM_LIB.

Usage: test_example.py LIBSTAGESIM STAGESIM (from the repository root). One line per check,
then "N passed, M failed"; exit 1 on a failure."""
import os
import re
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from harness import ROOT, Checks, setup  # noqa: E402

LIB, _ = setup(sys.argv)
PY = sys.executable

check = Checks()


with open(os.path.join(ROOT, "docs", "python.md"), encoding="utf-8") as f:
    page = f.read()
quoted = re.search(r"It prints\n\n```text\n(.*?)```", page, re.S).group(1)

with tempfile.TemporaryDirectory() as tmp:
    svg = os.path.join(tmp, "bias_sweep.svg")
    env = dict(os.environ, STAGESIM_LIB=LIB, PYTHONPATH=os.path.join(ROOT, "python"),
               PYTHONDONTWRITEBYTECODE="1")
    r = subprocess.run([PY, os.path.join("examples", "python_bias_sweep.py"), svg], cwd=ROOT,
                       env=env, capture_output=True, text=True)
    check("examples/python_bias_sweep.py exits 0", r.returncode == 0, r.stderr[-500:])
    check("it prints what docs/python.md quotes",
          r.stdout == quoted.replace("out/bias_sweep.svg", svg), r.stdout)
    try:
        root = ET.parse(svg).getroot()
        lines = [e for e in root.iter() if e.tag.endswith("polyline")]
        pts = [[tuple(map(float, p.split(","))) for p in e.get("points").split()]
               for e in lines]
        w, h = float(root.get("width")), float(root.get("height"))
        inside = all(0 <= x <= w and 0 <= y <= h for trace in pts for x, y in trace)
        check("the SVG is well-formed: two traces of 44 points inside the picture",
              len(pts) == 2 and all(len(t) == 44 for t in pts) and inside)
    except (ET.ParseError, OSError) as e:
        check("the SVG is well-formed", False, str(e))

    # the installed package, away from the source tree
    build = os.path.dirname(LIB)
    prefix = os.path.join(tmp, "prefix")
    r = subprocess.run(["cmake", "--install", build, "--prefix", prefix],
                       capture_output=True, text=True)
    check("cmake --install into a temporary prefix", r.returncode == 0, r.stderr[-500:])
    pkg = os.path.join(prefix, "lib", "python3", "dist-packages")
    check("the package is installed under lib/python3/dist-packages",
          os.path.isfile(os.path.join(pkg, "stagesim", "__init__.py")))
    env = {k: v for k, v in os.environ.items() if k not in ("STAGESIM_LIB", "PYTHONPATH")}
    env.update(PYTHONPATH=pkg, PYTHONDONTWRITEBYTECODE="1")
    code = ("import stagesim; print(stagesim.lib_path); "
            f"c = stagesim.Circuit.from_file({os.path.join(ROOT, 'netlists', 'vibration_frontend.cir')!r}); "
            "print(repr(c.solver().op()['v(c)']))")
    r = subprocess.run([PY, "-c", code], cwd=tmp, env=env, capture_output=True, text=True)
    out = r.stdout.split("\n")
    want = os.path.join(prefix, "lib", "libstagesim.so.0")
    check("installed: the package loads PREFIX/lib/libstagesim.so.0 by itself",
          r.returncode == 0 and os.path.realpath(out[0]) == os.path.realpath(want),
          r.stdout + r.stderr[-500:])
    check("installed: an operating point solves", r.returncode == 0 and
          abs(float(out[1]) - 6.839) < 1e-3, r.stdout)

# the three lines README.md and docs/python.md show run as written, from the repository root
for page in ("README.md", os.path.join("docs", "python.md")):
    with open(os.path.join(ROOT, page), encoding="utf-8") as f:
        block = re.search(r"```python\n(.*?)```", f.read(), re.S).group(1)
    r = subprocess.run([PY, "-c", block], cwd=ROOT, capture_output=True, text=True, timeout=120,
                       env=dict(os.environ, STAGESIM_LIB=LIB,
                                PYTHONPATH=os.path.join(ROOT, "python"),
                                PYTHONDONTWRITEBYTECODE="1"))
    nums = r.stdout.split()
    check("%s's Python example runs and prints v(c) and the mid-band gain" % page,
          r.returncode == 0 and len(nums) == 2 and 1.0 < float(nums[0]) < 12.0
          and 15.0 < float(nums[1]) < 25.0, r.stdout + r.stderr)
check.done()
