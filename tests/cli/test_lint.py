#!/usr/bin/env python3
"""End-to-end checks of the sanity warnings (lint) of `run` and `check --strict`.

Each scenario is a small common-emitter stage of our own with one slip in it; every warning
must name its check, the element or node and FILE:LINE, go to standard error and the report,
never change a CSV, and be silenced by `.options lint_off=NAME`. The thresholds are the
project's (common practice, docs/cli.md); the one number checked against physics is the
kiloampere current of a source straight across a diode, by the Shockley diode equation
I = IS (exp(V / (N Vt)) - 1), Vt = k T / q (W. Shockley, Bell Syst. Tech. J. 28, 435, 1949;
k and q exact in the 2019 SI).
"""
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
passed = failed = 0
K_B, Q_E = 1.380649e-23, 1.602176634e-19
CHECKS = ["milli_suffix", "femto_suffix", "resistor_range", "one_connection",
          "coupling_cap_tiny", "stage_not_active", "huge_current"]
LINT_RE = re.compile(r"^stagesim: warning: (\S+):(\d+): (.*) \[([a-z_]+)\]$")


def check(name, ok, detail=""):
    global passed, failed
    passed += bool(ok)
    failed += not ok
    print(("ok   " if ok else "FAIL ") + name + (f"  [{detail}]" if detail and not ok else ""))


def run(args):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, timeout=120)


def lint_lines(stderr):
    """(file, line, text, check) of every lint warning on standard error."""
    out = []
    for line in stderr.splitlines():
        m = LINT_RE.match(line)
        if m:
            out.append((os.path.basename(m.group(1)), int(m.group(2)), m.group(3), m.group(4)))
    return out


tmp = tempfile.mkdtemp(prefix="ss_lint_")

# A clean common-emitter stage (our own design, 12 V, Ic = 1.36 mA): line numbers below are
# those of this text, one element per line.
STAGE = [
    "CE stage for the sanity checks",                      # 1
    ".model tn NPN (IS=1e-14 BF=150 VAF=100)",             # 2
    "VCC vcc 0 DC 12",                                      # 3
    "VIN src 0 DC 0 AC 1",                                  # 4
    "RS src in 600",                                        # 5
    "C1 in b 4.7u",                                         # 6
    "R1 vcc b 47k",                                         # 7
    "R2 b 0 10k",                                           # 8
    "Q1 c b e tn",                                          # 9
    "RC vcc c 4.7k",                                        # 10
    "RE e 0 1k",                                            # 11
    "CE e 0 100u",                                          # 12
    "C2 c out 1u",                                          # 13
    "RL out 0 100k",                                        # 14
    ".op",                                                  # 15
    ".ac dec 10 10 1meg",                                   # 16
    ".stage in=vin out=out",                                # 17
    ".expect v(vcc) 11 .. 13",                              # 18
]


def netlist(name, changes=None, extra=None):
    """The stage with lines replaced ({line number: text}) and lines added before .op."""
    lines = list(STAGE)
    for k, v in (changes or {}).items():
        lines[k - 1] = v
    if extra:
        lines[14:14] = extra
    path = os.path.join(tmp, name + ".cir")
    with open(path, "w") as f:
        f.write("\n".join(lines) + "\n.end\n")
    return path


def run_stage(name, changes=None, extra=None, args=()):
    path = netlist(name, changes, extra)
    out = os.path.join(tmp, "out_" + name)
    return run(["run", path, "-o", out] + list(args)), out


def expect_warnings(label, r, want):
    """want: [(check, line, text fragment)] in the order they are listed, and nothing else."""
    got = lint_lines(r.stderr)
    check(f"{label}: exit 0", r.returncode == 0, r.stderr.strip())
    found, expected = [(g[3], g[1]) for g in got], [(w[0], w[1]) for w in want]
    check(f"{label}: lint warnings {found} are {expected}", found == expected, r.stderr.strip())
    for (c, line, frag), g in zip(want, got):
        check(f"{label}: [{c}] names {frag!r} at {g[0]}:{line}",
              frag in g[2] and g[0] == f"{label}.cir", g[2])
        # the report lists the same warning once, in its warnings at the end
        text = f"{g[0]}:{g[1]}: {g[2]} [{g[3]}]"
        n_report = sum(1 for l in r.stdout.splitlines() if l.endswith(text))
        check(f"{label}: [{c}] listed once in the report", n_report == 1, r.stdout[-400:])


# ---- the clean stage has no warning ----------------------------------------------------------
r, _ = run_stage("clean")
expect_warnings("clean", r, [])
check("clean: stage transistor forward active", "forward active" in r.stdout)

# ---- each check fires on its own slip --------------------------------------------------------
# a misspelt node: R1 feeds 'bb', the base gets no bias, Q1 is cut off
r, _ = run_stage("typo", {7: "R1 vcc bb 47k"})
expect_warnings("typo", r, [("one_connection", 7, "node 'bb' has only one connection (r1)"),
                            ("stage_not_active", 9, "q1: stage transistor in cut-off")])

# a 4.7 Mohm load written 4.7M: M is milli, the load is 4.7 milliohm
r, _ = run_stage("milli", {14: "RL out 0 4.7M"})
expect_warnings("milli", r, [("milli_suffix", 14, "rl: 0.0047 ohm")])
check("milli: says 'did you mean meg?'", "did you mean meg?" in r.stderr)

# the emitter bypass written 1F: one femtofarad
r, _ = run_stage("femto", {12: "CE e 0 1F"})
expect_warnings("femto", r, [("femto_suffix", 12, "ce: 1e-15 F")])
# with the suffix warning off, the same capacitor is named as a bypass that bypasses nothing
r, _ = run_stage("femto_off", {12: "CE e 0 1F"}, [".options lint_off=femto_suffix"])
expect_warnings("femto_off", r, [("coupling_cap_tiny", 12,
                                  "ce: 1e-15 F bypassing emitter-side node 'e'")])

# the input coupling capacitor written 0.47p for 0.47u: in series with the signal path
r, _ = run_stage("coupling", {6: "C1 in b 0.47p"})
expect_warnings("coupling", r, [("coupling_cap_tiny", 6,
                                 "c1: 4.7e-13 F in series with the signal path (vin to node out)")])
# a split emitter resistor: the bypass across its lower half is emitter-side too
r, _ = run_stage("split_bypass", {11: "RE e e2 220", 12: "CE e2 0 0.5p"}, ["RE2 e2 0 820"])
expect_warnings("split_bypass", r, [("coupling_cap_tiny", 12,
                                     "ce: 5e-13 F bypassing emitter-side node 'e2'")])
# a small capacitor that is neither: across the collector resistor (band limit), no warning
r, _ = run_stage("not_coupling", extra=["CBW vcc c 0.5p"])
expect_warnings("not_coupling", r, [])

# resistors outside 1 mohm .. 1 Tohm, written without a suffix
r, _ = run_stage("range", {5: "RS src in 0.5e-3", 14: "RL out 0 2e12"})
expect_warnings("range", r, [("resistor_range", 5, "rs: 0.0005 ohm is below"),
                             ("resistor_range", 14, "rl: 2e+12 ohm is above")])
# a milli value below 1 mohm is named once, by the suffix check
r, _ = run_stage("milli_range", {5: "RS src in 0.5m"})
expect_warnings("milli_range", r, [("milli_suffix", 5, "rs: 0.0005 ohm")])
r, _ = run_stage("milli_range_off", {5: "RS src in 0.5m"}, [".options lint_off=milli_suffix"])
expect_warnings("milli_range_off", r, [("resistor_range", 5, "rs: 0.0005 ohm is below")])

# --set follows the text it is given: `--set rl=4.7M` is milli, `--set rl=100k` clears it
r, _ = run_stage("set_milli", args=["--set", "rl=4.7M"])
expect_warnings("set_milli", r, [("milli_suffix", 14, "rl: 0.0047 ohm")])
r, _ = run_stage("set_clears", {14: "RL out 0 4.7M"}, args=["--set", "rl=100k"])
expect_warnings("set_clears", r, [])

# 5 V straight across a diode without series resistance
DIODE = os.path.join(tmp, "diode.cir")
with open(DIODE, "w") as f:
    f.write("supply across a diode\n.model dd D (IS=1e-14 N=1)\nV1 a 0 DC 5\nD1 a 0 dd\n.op\n"
            ".end\n")
r = run(["run", DIODE, "-o", os.path.join(tmp, "out_diode")])
got = lint_lines(r.stderr)
check("diode: exit 0", r.returncode == 0, r.stderr.strip())
check("diode: [huge_current] names v1 (line 3) and d1 (line 4)",
      [(g[3], g[1], g[2].split(":")[0]) for g in got] ==
      [("huge_current", 3, "v1"), ("huge_current", 4, "d1")], r.stderr.strip())
vt = K_B * 300.15 / Q_E
i_shockley = 1e-14 * math.expm1(5.0 / vt)
for g in got:
    m = re.search(r": ([0-9.e+-]+) A at the operating point is above 1 kA", g[2])
    i_rep = float(m.group(1)) if m else float("nan")
    check(f"diode: {g[2].split(':')[0]} current {i_rep:.4g} A = Shockley {i_shockley:.4g} A "
          "(rel 1e-3: printed to 4 digits)", abs(i_rep - i_shockley) <= 1e-3 * i_shockley)

# ---- .options lint_off silences each one ------------------------------------------------------
for label, changes, off in [("typo", {7: "R1 vcc bb 47k"}, "one_connection,stage_not_active"),
                            ("milli", {14: "RL out 0 4.7M"}, "milli_suffix"),
                            ("femto", {12: "CE e 0 1F"}, "femto_suffix, coupling_cap_tiny"),
                            ("coupling", {6: "C1 in b 0.47p"}, "coupling_cap_tiny"),
                            ("range", {5: "RS src in 0.5e-3"}, "resistor_range")]:
    r, _ = run_stage(label + "_silenced", changes, [f".options lint_off={off}"])
    expect_warnings(label + "_silenced", r, [])
DIODE_OFF = os.path.join(tmp, "diode_off.cir")
with open(DIODE_OFF, "w") as f:
    f.write("supply across a diode\n.model dd D (IS=1e-14 N=1)\nV1 a 0 DC 5\nD1 a 0 dd\n"
            ".options lint_off=huge_current\n.op\n.end\n")
r = run(["run", DIODE_OFF, "-o", os.path.join(tmp, "out_diode_off")])
check("diode_silenced: no lint warning", r.returncode == 0 and not lint_lines(r.stderr),
      r.stderr.strip())

# an unknown name is an input error at its line
r, _ = run_stage("unknown_name", extra=[".options lint_off=one_conection"])
first = r.stderr.splitlines()[0] if r.stderr else ""
check("lint_off with an unknown name: exit 2", r.returncode == 2, r.stderr.strip())
check("lint_off with an unknown name: FILE:LINE names it and lists the known ones",
      first == os.path.join(tmp, "unknown_name.cir") + ":15: .options: lint_off: unknown "
      "warning name 'one_conection' (known: " + ", ".join(CHECKS) + ")", first)

# ---- a warning changes no result --------------------------------------------------------------
r1, out1 = run_stage("same_on", {7: "R1 vcc bb 47k", 14: "RL out 0 4.7M"})
r2, out2 = run_stage("same_off", {7: "R1 vcc bb 47k", 14: "RL out 0 4.7M"},
                     [".options lint_off=one_connection,stage_not_active,milli_suffix"])
check("same: three warnings with lint on, none with it off",
      len(lint_lines(r1.stderr)) == 3 and not lint_lines(r2.stderr), r1.stderr + r2.stderr)
def read_bytes(path):
    try:
        with open(path, "rb") as f:
            return f.read()
    except OSError:
        return None


for f in ("op.csv", "ac.csv", "stage.csv", "stage_summary.csv"):
    a, b = read_bytes(os.path.join(out1, f)), read_bytes(os.path.join(out2, f))
    check(f"same: {f} byte for byte the same with and without the warnings",
          a is not None and a == b)

# ---- the example netlists are clean designs ---------------------------------------------------
for path in sorted(os.listdir(os.path.join(ROOT, "netlists"))):
    if not path.endswith(".cir"):
        continue
    r = run(["run", os.path.join(ROOT, "netlists", path), "-o", os.path.join(tmp, "ex_" + path),
             "-q"])
    check(f"example {path}: exit 0 and no lint warning",
          r.returncode == 0 and not lint_lines(r.stderr), r.stderr.strip())
vib = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
r = run(["check", vib, os.path.join(ROOT, "netlists", "vibration_frontend.limits"), "--strict"])
check("example vibration_frontend.cir: check --strict exit 0", r.returncode == 0,
      r.stderr.strip())

# ---- check and check --strict -----------------------------------------------------------------
typo = netlist("typo", {7: "R1 vcc bb 47k"})
r = run(["check", typo])
check("check (no --strict): limits judged as before, exit 0", r.returncode == 0, r.stderr.strip())
check("check (no --strict): prints the two lint warnings",
      [g[3] for g in lint_lines(r.stderr)] == ["one_connection", "stage_not_active"],
      r.stderr.strip())
junit = os.path.join(tmp, "strict.xml")
r = run(["check", typo, "--strict", "--junit", junit])
check("check --strict with lint warnings: exit 1", r.returncode == 1, r.stderr.strip())
check("check --strict: says so on stdout",
      "2 sanity warnings (lint): --strict fails the check" in r.stdout, r.stdout[-300:])
def junit_suite(path):
    try:
        return ET.parse(path).getroot().find("testsuite")
    except (OSError, ET.ParseError):
        return ET.Element("testsuite")


suite = junit_suite(junit)
cases = suite.findall("testcase")
lint_cases = [c for c in cases if c.get("classname", "").startswith("stagesim.lint.")]
check("check --strict: JUnit counts 1 limit + 2 warnings, 2 failures",
      suite.get("tests") == "3" and suite.get("failures") == "2",
      f"tests={suite.get('tests')} failures={suite.get('failures')}")
check("check --strict: one failing JUnit testcase per warning",
      [c.get("name") for c in lint_cases] == ["one_connection bb", "stage_not_active q1"] and
      all(c.find("failure") is not None and c.find("failure").get("type") == "lint"
          for c in lint_cases), str([c.get("name") for c in lint_cases]))
check("check --strict: the failure message is the warning",
      lint_cases and lint_cases[0].find("failure").get("message", "").endswith(
          "node 'bb' has only one connection (r1): a misspelt node name? [one_connection]"))
r = run(["check", typo, "--strict", "--junit", junit, "-o", os.path.join(tmp, "check_out")])
rows = (read_bytes(os.path.join(tmp, "check_out", "check.csv")) or b"").decode().splitlines()
check("check --strict: check.csv holds the limits only", len(rows) == 2 and
      rows[1].startswith("v(vcc),"), str(rows))
clean = netlist("clean")
if os.path.exists(junit):
    os.remove(junit)
r = run(["check", clean, "--strict", "--junit", junit])
suite = junit_suite(junit)
check("check --strict on a clean stage: exit 0, JUnit without failures",
      r.returncode == 0 and suite.get("failures") == "0" and suite.get("tests") == "1",
      r.stderr.strip())
r = run(["check", netlist("typo_off", {7: "R1 vcc bb 47k"},
                          [".options lint_off=one_connection,stage_not_active"]), "--strict"])
check("check --strict with the warnings silenced: exit 0", r.returncode == 0, r.stderr.strip())
r = run(["run", clean, "--strict", "-o", os.path.join(tmp, "o")])
check("run --strict: usage error, exit 2",
      r.returncode == 2 and r.stderr.startswith("stagesim: --strict belongs to check, not run"),
      r.stderr.strip()[:200])

# ---- the documentation lists exactly these checks ---------------------------------------------
with open(os.path.join(ROOT, "docs", "cli.md")) as f:
    doc = f.read()
section = doc[doc.find("## Sanity warnings"):]
documented = re.findall(r"^\| `([a-z_]+)` \|", section, re.M)
check(f"docs/cli.md: the warnings table lists {documented}", documented == CHECKS)

shutil.rmtree(tmp, ignore_errors=True)
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
