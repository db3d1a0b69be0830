#!/usr/bin/env python3
"""Runs every example netlist (and a check, a small tolerance run and a noise run) under
valgrind memcheck: no invalid read or write, no use of uninitialised values, no leak
(definite or indirect). Skipped -- and said so -- when valgrind is not installed or the binary
was built with the address sanitizer (the two cannot run together)."""
import glob
import os
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
passed = failed = skipped = 0

if not shutil.which("valgrind"):
    print("skip all: valgrind is not installed (Debian package valgrind: bash tests/install_deps.sh --with-tools)")
    print("0 passed, 0 failed, 1 skipped")
    sys.exit(77)  # ctest: SKIP_RETURN_CODE
with open(STAGESIM, "rb") as f:
    if b"__asan_init" in f.read():
        print("skip all: the binary is built with the address sanitizer")
        print("0 passed, 0 failed, 1 skipped")
        sys.exit(77)

VG = ["valgrind", "--tool=memcheck", "--error-exitcode=99", "--leak-check=full",
      "--errors-for-leak-kinds=definite,indirect", "--track-origins=yes", "-q"]

runs = []
for path in sorted(glob.glob(os.path.join(ROOT, "netlists", "*.cir"))):
    runs.append((os.path.basename(path), ["run", path, "--plot", "-q"]))
vib = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
runs.append(("check", ["check", vib, os.path.join(ROOT, "netlists", "vibration_frontend.limits"), "-q"]))
runs.append(("spread", ["spread", vib, "--tol", "R1=5%", "--tol", "ss_npn.bf=100..300",
                        "--trials", "4", "--threads", "2", "-q"]))
runs.append(("bad input", ["run", os.path.join(ROOT, "netlists")]))
for name, args in runs:
    with tempfile.TemporaryDirectory() as out:
        r = subprocess.run(VG + [STAGESIM] + args + ["-o", out], capture_output=True, text=True,
                           timeout=600)
        ok = r.returncode in (0, 1, 2) and "ERROR SUMMARY" not in r.stderr and \
            "definitely lost" not in r.stderr and "Invalid" not in r.stderr
        passed += ok
        failed += not ok
        print(("ok   " if ok else "FAIL ") + f"memcheck clean: {name} (exit {r.returncode})")
        if not ok:
            print(r.stderr[-3000:])
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
