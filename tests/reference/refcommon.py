"""Shared helpers for the independent reference checks of stagesim's DC operating point.

Nothing here knows how the C solver works: it only runs the `stagesim` binary on a
netlist (`stagesim run NETLIST -o DIR`), reads the `op.csv` it writes (columns
`quantity,value`) and compares numbers against values each test script computes on its
own with numpy/scipy.

Conventions used by every script:
  * argv[1] is the path to the stagesim binary.
  * check() passes when |actual - expected| <= max(abs_, rel * |expected|).
  * One line is printed per check, with both values (%.12g) and the source of the
    expected value; finish() prints exactly one line `N passed, M failed` and exits
    non-zero when anything failed.
  * Set the environment variable STAGESIM_REF_KEEP=1 to keep the temporary folders
    (netlists and outputs) for inspection; their paths are printed.

Physics constants: exact 2019 SI values (CODATA 2018), k = 1.380649e-23 J/K,
q = 1.602176634e-19 C; 0 degC = 273.15 K exactly.
"""

import csv
import math
import os
import shutil
import subprocess
import sys
import tempfile

K_BOLTZMANN = 1.380649e-23   # J/K, exact (SI 2019)
Q_ELECTRON = 1.602176634e-19  # C, exact (SI 2019)
ZERO_C_K = 273.15            # K, exact
TNOM_C = 27.0                # default nominal / circuit temperature, degC

_passed = 0
_failed = 0
_tmpdirs = []


def kelvin(temp_c):
    return temp_c + ZERO_C_K


def vt(temp_k):
    """Thermal voltage kT/q in volts."""
    return K_BOLTZMANN * temp_k / Q_ELECTRON


def binary_from_argv():
    if len(sys.argv) < 2:
        sys.stderr.write("usage: %s PATH_TO_STAGESIM\n" % sys.argv[0])
        sys.exit(2)
    path = os.path.abspath(sys.argv[1])
    if not os.path.isfile(path) or not os.access(path, os.X_OK):
        sys.stderr.write("%s: stagesim binary not found or not executable: %s\n"
                         % (sys.argv[0], path))
        sys.exit(2)
    return path


def read_op_csv(path):
    """op.csv -> {quantity (lower case): float}. Empty cells become NaN."""
    out = {}
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    if not rows or [c.strip().lower() for c in rows[0][:2]] != ["quantity", "value"]:
        raise ValueError("%s: header is not 'quantity,value'" % path)
    for row in rows[1:]:
        if not row:
            continue
        name = row[0].strip().lower()
        val = row[1].strip() if len(row) > 1 else ""
        out[name] = float(val) if val else float("nan")
    return out


# Newton tolerances far below the defaults (tol_rel 1e-3, tol_v 1e-6 V, tol_i 1e-12 A), so
# that the solved point is the model's exact solution to ~1e-12 and a comparison tests
# the equations alone, not where the iteration happened to stop.
TIGHT_OPTIONS = ".options tol_rel=1e-9 tol_v=1e-9 tol_i=1e-15"

MODES = (("default", None), ("tight", TIGHT_OPTIONS))


def with_options(netlist_text, options):
    """Inserts an `.options` line just before the netlist's `.end` (or at the end)."""
    if not options:
        return netlist_text
    lines = netlist_text.rstrip("\n").split("\n")
    if lines and lines[-1].strip().lower() == ".end":
        lines.insert(len(lines) - 1, options)
    else:
        lines.append(options)
    return "\n".join(lines) + "\n"


def run_op(binary, name, netlist_text, extra_args=(), options=None):
    """Writes netlist_text (plus an `.options` line when given) to a fresh temporary
    folder as NAME.cir, runs `stagesim run NAME.cir -o OUT` and returns op.csv as a dict.

    A failed run (non-zero exit, missing op.csv) counts as one failed check and
    returns an empty dict, so every later check on it fails as 'missing'."""
    netlist_text = with_options(netlist_text, options)
    d = tempfile.mkdtemp(prefix="ssref_%s_" % name)
    _tmpdirs.append(d)
    cir = os.path.join(d, name + ".cir")
    outdir = os.path.join(d, "out")
    os.mkdir(outdir)
    with open(cir, "w") as f:
        f.write(netlist_text)
    cmd = [binary, "run", cir, "-o", outdir] + list(extra_args)
    try:
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    except subprocess.TimeoutExpired:
        _fail_run(name, "timed out after 120 s", netlist_text)
        return {}
    opcsv = os.path.join(outdir, "op.csv")
    if p.returncode != 0 or not os.path.isfile(opcsv):
        _fail_run(name, "exit code %d; stderr: %s" % (p.returncode, p.stderr.strip()),
                  netlist_text)
        return {}
    try:
        return read_op_csv(opcsv)
    except (ValueError, OSError) as e:
        _fail_run(name, "cannot read op.csv: %s" % e, netlist_text)
        return {}


def _fail_run(name, why, netlist_text):
    global _failed
    _failed += 1
    print("FAIL run %s: %s" % (name, why))
    print("     netlist:")
    for line in netlist_text.splitlines():
        print("       | " + line)


def check(name, actual, expected, rel, abs_, source):
    """One comparison; pass when |actual - expected| <= max(abs_, rel*|expected|)."""
    global _passed, _failed
    if actual is None or (isinstance(actual, float) and math.isnan(actual)):
        _failed += 1
        print("FAIL %s: missing from output; expected %.12g  [%s]" % (name, expected, source))
        return False
    err = abs(actual - expected)
    tol = max(abs_, rel * abs(expected))
    ok = err <= tol
    relerr = err / abs(expected) if expected != 0 else float("inf") if err else 0.0
    if ok:
        _passed += 1
    else:
        _failed += 1
    print("%s %s: got %.12g expected %.12g (|err| %.3g, rel %.3g; tol rel %g abs %g)  [%s]"
          % ("PASS" if ok else "FAIL", name, actual, expected, err, relerr, rel, abs_, source))
    return ok


def check_range(name, actual, lo, hi, source):
    """Passes when lo <= actual <= hi."""
    global _passed, _failed
    if actual is None or (isinstance(actual, float) and math.isnan(actual)):
        _failed += 1
        print("FAIL %s: missing; expected within [%.12g, %.12g]  [%s]" % (name, lo, hi, source))
        return False
    ok = lo <= actual <= hi
    if ok:
        _passed += 1
    else:
        _failed += 1
    print("%s %s: got %.12g expected within [%.12g, %.12g]  [%s]"
          % ("PASS" if ok else "FAIL", name, actual, lo, hi, source))
    return ok


def get(op, key):
    """op[key] or None (so check() reports it as missing)."""
    return op.get(key.lower())


def finish():
    """Prints the summary line, removes temporary folders, exits 1 on any failure."""
    keep = os.environ.get("STAGESIM_REF_KEEP", "") not in ("", "0")
    for d in _tmpdirs:
        if keep:
            print("kept %s" % d)
        else:
            shutil.rmtree(d, ignore_errors=True)
    print("%d passed, %d failed" % (_passed, _failed))
    sys.stdout.flush()
    sys.exit(1 if _failed else 0)
