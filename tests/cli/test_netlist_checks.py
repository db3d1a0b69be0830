#!/usr/bin/python3
"""What the netlist reader and parser refuse, and the few things they newly accept.

Usage: test_netlist_checks.py PATH/TO/stagesim [-v] [CASE_NAME ...]
(run from the repository root; -v prints the full stderr of every case).

Each case writes its files into a fresh temporary folder, runs the binary there with a 20 s
limit and checks the exit code (0 ok, 2 bad input) and the exact stderr text, with the
temporary folder's path written as <TMP>; that no signal ended the process and that it did not
hang. A few cases check what was written instead (op.csv). Every refusal names the file and
line (or the file alone when the whole file is at fault) and the element, model, node or
subcircuit at fault. Prints one line per case and a final `N passed, M failed, K skipped`.
"""
import csv
import math
import os
import resource
import shutil
import stat
import subprocess
import sys
import tempfile

TIMEOUT_S = 20
TMP = "<TMP>"
F = TMP + "/n.cir"  # the netlist's name as stderr shows it
RUN = ["run", "{T}/n.cir", "-o", "{T}/out", "--quiet"]


class Case:
    def __init__(self, name, rc, err, files, args=None, setup=None, check=None, limit_as=None):
        self.name = name
        self.rc = rc
        self.err = err
        self.files = files
        self.args = args if args is not None else RUN
        self.setup = setup
        self.check = check
        self.limit_as = limit_as


CASES = []


def net(*lines):
    """Netlist text from lines; the first line is the title."""
    return "\n".join(lines) + "\n"


def bad(name, err, *lines, **kw):
    """A case whose only file is the netlist n.cir made of `lines`, refused with exit code 2."""
    CASES.append(Case(name, kw.pop("rc", 2), err, {"n.cir": net(*lines)}, **kw))


def good(name, check, *lines, **kw):
    CASES.append(Case(name, 0, None, {"n.cir": net(*lines)}, check=check, **kw))


def op_values(tmp):
    with open(os.path.join(tmp, "out", "op.csv"), newline="", encoding="utf-8") as f:
        return {row[0]: float(row[1]) for row in list(csv.reader(f))[1:]}


def close(a, b, rel):
    return abs(a - b) <= rel * abs(b)


# ---- subcircuit headers --------------------------------------------------------------------------

# run does not judge .expect lines, but refuses one that check would refuse
bad("run: .expect on a node that does not exist",
    F + ":5: limit on 'v(bb)': no such figure (the figures are the op.csv quantities of this "
    "circuit's nodes and devices, the stage summary metrics, the noise and large-signal figures "
    "and QUANTITY@FREQ; docs/checks.md lists them)",
    "divider", "V1 a 0 10", "R1 a b 1k", "R2 b 0 1k", ".expect v(bb) 4 .. 6")
bad("run: .expect that does not read",
    F + ":5: limit on v(b): cannot read 'between 4 and 6' (write LO .. HI, >= LO, <= HI or "
    "= NOMINAL +- TOL[%])",
    "divider", "V1 a 0 10", "R1 a b 1k", "R2 b 0 1k", ".expect v(b) between 4 and 6")

bad(".tolerance written NAME=SPEC",
    F + ":5: .tolerance r2: write the name and the spread apart, `.tolerance NAME 5%` or "
    "`.tolerance NAME LO .. HI` (NAME=SPEC is --tol's form)",
    "divider", "V1 a 0 10", "R1 a b 1k", "R2 b 0 1k", ".tolerance R2=5%",
    args=["spread", "{T}/n.cir", "-o", "{T}/out", "--trials", "10"])

bad("subcircuit port listed twice", F + ":2: .subckt amp: port 'a' is listed twice",
    "t", ".subckt amp a b a", "R1 a b 1k", ".ends", "V1 n 0 1", "X1 n 0 n amp")
bad("subcircuit parameter default given twice", F + ":2: .subckt amp: parameter 'r' given twice",
    "t", ".subckt amp a r=1k r=2k", "R1 a 0 {r}", ".ends", "V1 n 0 1", "X1 n amp")
# `params:` is no keyword: defaults are written name=value after the ports
bad("params: on a subcircuit line",
    F + ":2: .subckt div: port 'params:' ends in ':'; parameter defaults are written name=value "
    "after the ports",
    "t", ".subckt div top mid params: r1=10k", "R1 top mid {r1}", "R2 mid 0 1k", ".ends",
    "V1 in 0 10", "X1 in m div")
bad("port name ending in a colon",
    F + ":2: .subckt div: port 'mid:' ends in ':'; parameter defaults are written name=value "
    "after the ports",
    "t", ".subckt div top mid:", "R1 top 0 1k", ".ends", "V1 in 0 10", "X1 in m div")

# ---- a parameter or directive given twice --------------------------------------------------------

bad("model parameter given twice",
    F + ":2: model 'q': parameter bf given twice (bf=100, then bf=200)",
    "t", ".model q npn bf=100 is=1e-15 bf=200", "V1 c 0 5", "Q1 c c 0 q")
bad("model parameter given twice across continuation lines",
    F + ":2: model 'q': parameter bf given twice (bf=100, then bf={2*100})",
    "t", ".model q npn (bf=100 is=1e-15", "+ vaf=80", "+ BF={2*100})", "V1 c 0 5", "Q1 c c 0 q")
bad(".ac twice", F + ":5: .ac given twice (first at " + F + ":4)",
    "t", "V1 n 0 1 AC 1", "R1 n 0 1k", ".ac dec 10 1 1k", ".ac dec 20 1 100k")
bad(".temp twice", F + ":5: .temp given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".temp 30", ".temp 85")
bad(".tran twice", F + ":5: .tran given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".tran 1u 1m", ".tran 1u 2m")
bad(".dc twice", F + ":5: .dc given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".dc v1 0 1 0.1", ".dc v1 0 2 0.1")
bad(".noise twice", F + ":6: .noise given twice (first at " + F + ":5)",
    "t", "V1 n 0 0 AC 1", "R1 n o 1k", "R2 o 0 1k", ".noise v(o) v1", ".noise v(n) v1",
    ".ac dec 1 1 10")
bad(".large_signal twice", F + ":5: .large_signal given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".large_signal freq=1k", ".large_signal amp=0.1")
bad(".options name twice on two lines", F + ":5: .options: gmin given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".options gmin=1e-12", ".options tol_v=1u gmin=1e-9")
bad(".options name twice on one line", F + ":4: .options: tol_v given twice (first at " + F + ":4)",
    "t", "V1 n 0 1", "R1 n 0 1k", ".options tol_v=1u tol_v=2u")
bad(".stage load twice", F + ":4: .stage: 'load' given twice",
    "t", "V1 n 0 1 AC 1", "R1 n 0 1k", ".stage in=v1 out=n load=1k load=2k")
bad(".large_signal field twice", F + ":4: .large_signal: 'freq' given twice",
    "t", "V1 n 0 1", "R1 n 0 1k", ".large_signal freq=1k freq=2k")
bad(".noise rs twice", F + ":5: .noise: 'rs' given twice",
    "t", "V1 n 0 0 AC 1", "R1 n o 1k", "R2 o 0 1k", ".noise v(o) v1 rs=r1 rs=r2")

# ---- hierarchical names spelled at the top level -------------------------------------------------

bad("top-level node spelled like an instance's node (instance first)",
    F + ":8: r9: the top-level node 'x1.mid' is spelled like node 'mid' of instance x1 (" + F +
    ":7): the two would be one node; rename one",
    "t", ".subckt s a", "R1 a mid 1k", "R2 mid 0 1k", ".ends", "V1 n 0 1", "X1 n s",
    "R9 x1.mid 0 1k")
bad("top-level node spelled like an instance's node (instance last)",
    F + ":3: x1.r1: node 'mid' of instance x1 (" + F + ":8) is spelled like the top-level node "
    "'x1.mid' (" + F + ":7, r9): the two would be one node; rename one",
    "t", ".subckt s a", "R1 a mid 1k", "R2 mid 0 1k", ".ends", "V1 n 0 1", "R9 x1.mid 0 1k",
    "X1 n s")
bad("node of an instance spelled like a nested instance's node",
    F + ":8: x1.r5: node 'x2.mid' of instance x1 (" + F + ":11) is spelled like node 'mid' of "
    "instance x1.x2 (" + F + ":7): the two would be one node; rename one",
    "t", ".subckt inner a", "R1 a mid 1k", "R2 mid 0 1k", ".ends", ".subckt outer a",
    "X2 a inner", "R5 x2.mid 0 1k", ".ends", "V1 n 0 1", "X1 n outer")
bad("instance name used twice", F + ":7: x1: instance name used twice (first at " + F + ":6)",
    "t", ".subckt s a", "R1 a 0 1k", ".ends", "V1 n 0 1", "X1 n s", "X1 n s")

# ---- names ---------------------------------------------------------------------------------------

# a name that reaches a CSV header must not start a spreadsheet formula
NODE_RULE = ("a name starts with a letter, a digit or '_' and holds no '=', braces, "
             "parentheses or '\"'")
bad("model name starting a spreadsheet formula",
    F + ":2: .model '+cmd|'calc'!a0': not a valid model name: a name starts with a letter, a "
    "digit or '_'",
    "t", ".model +cmd|'calc'!A0 npn", "V1 c 0 5", "Q1 c c 0 +cmd|'calc'!A0")
bad("model name '='",
    F + ":2: .model '=': not a valid model name: a name starts with a letter, a digit or '_'",
    "t", ".model =cmd npn", "V1 c 0 5", "Q1 c c 0 q")
bad("node name starting with '@'",
    F + ":3: r1: '@sum' is not a valid node name: " + NODE_RULE,
    "t", "V1 n 0 1", "R1 n @sum 1k")
bad("node name starting with '-'",
    F + ":3: r1: '-out' is not a valid node name: " + NODE_RULE,
    "t", "V1 n 0 1", "R1 n -out 1k")
bad("node name with parentheses",
    F + ":3: r1: 'a(1)' is not a valid node name: " + NODE_RULE,
    "t", "V1 n 0 1", "R1 n a(1) 1k")
bad("subcircuit name starting with '@'",
    F + ":2: .subckt '@s': not a valid subcircuit name: a name starts with a letter, a digit or "
    "'_'", "t", ".subckt @s a", "R1 a 0 1k", ".ends", "V1 n 0 1", "X1 n @s")
bad("port name starting with '+'",
    F + ":2: .subckt s: '+p' is not a valid port name: " + NODE_RULE,
    "t", ".subckt s +p", "R1 +p 0 1k", ".ends", "V1 n 0 1", "X1 n s")
bad("subcircuit parameter name starting with a digit",
    F + ":2: .subckt s: '2r' is not a valid parameter name: a parameter name starts with a "
    "letter or '_'", "t", ".subckt s a 2r=1k", "R1 a 0 1k", ".ends", "V1 n 0 1", "X1 n s")


def check_utf8_nodes(tmp, out):
    """`ä` and `Ä` are two nodes (bytes >= 0x80 are not case-folded): the divider of two equal
    resistors between them halves 1 V (Ohm's law). `A` and `a` are one node, at V2's 2 V."""
    v = op_values(tmp)
    want = {"v(ä)": 1.0, "v(Ä)": 0.5, "v(a)": 2.0}
    for k, x in want.items():
        if k not in v or not close(v[k], x, 1e-12):
            return "expected %s = %g, op.csv has %s" % (k, x, v)
    if "v(A)" in v:
        return "v(A) is a node of its own: ASCII case is not folded"
    return None


good("non-ASCII names compared byte for byte", check_utf8_nodes,
     "t", "V1 ä 0 1", "R1 ä Ä 1k", "R2 Ä 0 1k", "V2 A 0 2", "R3 a 0 1k", ".op")

# ---- model cards and parameters ------------------------------------------------------------------


def check_bf_from_later_param(tmp, out):
    """BF from a .param defined below the card: with VAF, IKF infinite and ISE 0 the
    Gummel-Poon model gives Ic/Ib = BF in forward active (Getreu 1976); gmin adds ~1e-12 A."""
    v = op_values(tmp)
    ratio = v["ic(q1)"] / v["ib(q1)"]
    return None if close(ratio, 150.0, 1e-4) else "ic/ib = %r, expected 150" % ratio


good("model card uses a .param defined later", check_bf_from_later_param,
     "t", ".model qx npn bf={bfx} is=1e-15", "VCC c 0 5", "VB b 0 0.65", "Q1 c b 0 qx",
     ".param bfx=150", ".op")

# ---- published model cards: forms, and fields that are not parameters ----------------------------

# A model file written the way published ones are (our own invented card): upper case, the
# parenthesised form over `+` continuations, SI suffixes with units, spaces around `=`, and
# ratings and the maker's name beside the parameters.
PUB_LIB = ("* generic small-signal NPN, invented for the tests\n"
           ".MODEL QGEN NPN (IS = 2.5F BF=180 VAF=90V\n"
           "+ CJE=8pF MJE = 0.35 TF=350P\n"
           "+ VCEO=40 ICRATING=200M MFG=Acme)\n")
PUB_NET = ["published card", ".include pub.lib", "VCC c 0 5", "VB b 0 0.62", "Q1 c b 0 qgen",
           ".op"]
PUB_WARN = ("stagesim: warning: " + TMP + "/pub.lib:2: model 'qgen': ignored vceo, icrating, "
            "mfg: not BJT model parameters (.options model_extras=warn) [model_extras]")


def check_pub_card(tmp, out):
    """The card's IS and BF as written reach the transistor: in forward active the
    Gummel-Poon base current with ISE = ISC = 0 is Ib = IS/BF (exp(Vbe/(NF Vt)) - 1) +
    IS/BR (exp(Vbc/(NR Vt)) - 1), VAF does not enter it (H. K. Gummel, H. C. Poon, Bell Syst.
    Tech. J. 49, 827, 1970); Vt = k T / q at 300.15 K, k and q exact in the 2019 SI; the
    default gmin of 1e-12 S across each junction adds gmin (Vbe + Vbc) (docs/models.md,
    section 7)."""
    v = op_values(tmp)
    vt = 1.380649e-23 * 300.15 / 1.602176634e-19
    vbe, vbc = 0.62, 0.62 - 5.0
    want = (2.5e-15 / 180 * math.expm1(vbe / vt) + 2.5e-15 / 1.0 * math.expm1(vbc / vt)
            + 1e-12 * (vbe + vbc))
    got = v.get("ib(q1)")
    return None if got is not None and close(got, want, 1e-9) else \
        "ib(q1) = %r, expected %r" % (got, want)


CASES.append(Case("published card with ratings: refused by default, all named",
                  2, TMP + "/pub.lib:2: model 'qgen': vceo, icrating, mfg are not BJT model "
                  "parameters (ratings or maker's notes? .options model_extras=warn ignores "
                  "such fields with a warning)",
                  {"pub.lib": PUB_LIB, "n.cir": net(*PUB_NET)}))
CASES.append(Case("published card with ratings: one warning under model_extras=warn",
                  0, PUB_WARN,
                  {"pub.lib": PUB_LIB, "n.cir": net(*(PUB_NET + [".options model_extras=warn"]))},
                  check=check_pub_card))
CASES.append(Case("published card with ratings: check --strict counts the warning",
                  1, PUB_WARN,
                  {"pub.lib": PUB_LIB,
                   "n.cir": net(*(PUB_NET + [".options model_extras=warn",
                                             ".expect v(c) 4.9 .. 5.1"]))},
                  args=["check", "{T}/n.cir", "--strict", "--quiet"]))
CASES.append(Case("published card with a misspelt parameter: refused even under the option",
                  2, TMP + "/pub.lib:2: model 'qgen': unknown parameter 'cjee' (did you mean "
                  "cje?) for a BJT model",
                  {"pub.lib": PUB_LIB.replace("CJE=8pF", "CJEE=8pF"),
                   "n.cir": net(*(PUB_NET + [".options model_extras=warn"]))}))

# ---- temperature-scaled model parameters ---------------------------------------------------------

bad("xtb overflows beta at .temp 85",
    F + ":2: model 'qhot': at 85 C, bf becomes inf (it must stay finite and > 0)",
    "t", ".model qhot npn xtb=1e300", ".temp 85", "VCC c 0 5", "VB b 0 0.7", "Q1 c b 0 qhot")
bad("xtb underflows beta at .temp -40",
    F + ":2: model 'qcold': at -40 C, bf becomes 0 (it must stay finite and > 0)",
    "t", ".model qcold npn xtb=1e4", ".temp -40", "VCC c 0 5", "VB b 0 0.7", "Q1 c b 0 qcold")
bad("is underflows near absolute zero",
    F + ":2: model 'dd': at -270 C, is becomes 0 (it must stay finite and > 0)",
    "t", ".model dd d is=1e-14", ".temp -270", "V1 a 0 1", "R1 a b 1k", "D1 b 0 dd")
bad("eg overflows is at .temp 200",
    F + ":2: model 'dd': at 200 C, is becomes inf (it must stay finite and > 0)",
    "t", ".model dd d eg=1e3", ".temp 200", "V1 a 0 1", "R1 a b 1k", "D1 b 0 dd")
def vj_at(vj, temp_c, tnom_c=27.0):
    """Junction potential at temp_c (docs/models.md: Getreu 1976's law with the silicon band gap
    after Varshni 1967, EG(T) = 1.16 - 7.02e-4 T^2 / (T + 1108) eV), computed here apart from the
    C code; k and q exact in the 2019 SI."""
    t, tn = temp_c + 273.15, tnom_c + 273.15
    vt = 1.380649e-23 * t / 1.602176634e-19
    eg = lambda tk: 1.16 - 7.02e-4 * tk * tk / (tk + 1108.0)
    r = t / tn
    return vj * r - 3.0 * vt * math.log(r) - eg(tn) * r + eg(t)


# VJE = 0.75 V (the default) falls to about -0.41 V at 600 C: the capacitance law needs it > 0
bad("junction potential negative with a capacitance at .temp 600",
    F + ":2: model 'qc': at 600 C, vje becomes %g (it must stay finite and > 0)"
    % vj_at(0.75, 600.0),
    "t", ".model qc npn cje=1p", ".temp 600", "VCC c 0 5", "VB b 0 0.7", "Q1 c b 0 qc")
bad("temperature from a --set parameter",
    F + ":3: model 'qhot': at 85 C, bf becomes inf (it must stay finite and > 0)",
    "t", ".param t_c=27", ".model qhot npn xtb=1e300", ".temp {t_c}", "VCC c 0 5", "VB b 0 0.7",
    "Q1 c b 0 qhot", args=RUN + ["--set", "t_c=85"])
bad("area overflows is", F + ":2: model 'qa': at 27 C with the area 1e+308 of q1, is becomes "
    "inf (it must stay finite and > 0)",
    "t", ".model qa npn is=10", "VCC c 0 5", "VB b 0 0.7", "Q1 c b 0 qa 1e308")

# ---- source waveforms ----------------------------------------------------------------------------

bad("sin frequency overflows", F + ":2: v1: sin: frequency 1e+308 Hz is too large (2 pi f "
    "overflows)", "t", "V1 in 0 SIN(0 1 1e308)", "R1 in 0 1k", ".op")
bad("sin offset plus amplitude overflows", F + ":2: v1: sin: offset 1e+308 and amplitude 1e+308 "
    "overflow when added", "t", "V1 in 0 SIN(1e308 1e308 1k)", "R1 in 0 1k", ".op")
bad("sin phase overflows", F + ":2: v1: sin: phase 1e+308 degrees is too large",
    "t", "V1 in 0 SIN(0 1 1k 0 0 1e308)", "R1 in 0 1k", ".op")
bad("sin grows past any number within .tran",
    F + ":2: v1: sin: with theta -1e+06 1/s the sine grows past any number before 0.001 s "
    "(.tran at " + F + ":4)", "t", "V1 in 0 SIN(0 1 1k 0 -1e6)", "R1 in 0 1k", ".tran 1u 1m")
bad("sin phase overflows within .tran",
    F + ":2: v1: sin: the phase 2 pi f t overflows before 1e+10 s (frequency 1e+300 Hz) (.tran "
    "at " + F + ":4)", "t", "V1 in 0 SIN(0 1 1e300)", "R1 in 0 1k", ".tran 1e9 1e10")
bad("pulse step overflows", F + ":2: v1: pulse: the step from -1e+308 to 1e+308 overflows",
    "t", "V1 in 0 PULSE(-1e308 1e308 0 1)", "R1 in 0 1k", ".op")
bad("pulse timing overflows", F + ":2: v1: pulse: delay + rise time + width + fall time "
    "overflows", "t", "V1 in 0 PULSE(0 1 1e308 1e308 0 1)", "R1 in 0 1k", ".op")
bad("pwl step overflows", F + ":2: v1: pwl: the step from value 1 (-1e+308) to value 2 (1e+308) "
    "overflows", "t", "V1 in 0 PWL(0 -1e308 1 1e308)", "R1 in 0 1k", ".op")

# ---- a node brought in only by an X line ---------------------------------------------------------

bad("node only on a port the subcircuit leaves unconnected",
    F + ":6: x1: node 'b' connects to nothing: its port 'q' of subcircuit 's' is used by no "
    "element inside, so the node has no DC path to ground",
    "t", ".subckt s p q", "R1 p 0 1k", ".ends", "V1 n 0 1", "X1 n b s")
bad("node only on a nested instance's unused port",
    F + ":6: x1.x2: node 'x1.loose' connects to nothing: its port 'q' of subcircuit 'inner' is "
    "used by no element inside, so the node has no DC path to ground",
    "t", ".subckt inner p q", "R1 p 0 1k", ".ends", ".subckt outer a", "X2 a loose inner",
    ".ends", "V1 n 0 1", "X1 n outer")
bad("port unused through two levels",
    F + ":10: x1: node 'b' connects to nothing: its port 'y' of subcircuit 'outer' is used by no "
    "element inside, so the node has no DC path to ground",
    "t", ".subckt inner p q", "R1 p 0 1k", ".ends", ".subckt outer x y", "X2 x y inner",
    ".ends", "V1 n 0 1", "R2 n 0 1k", "X1 n b outer")


def check_port_used_elsewhere(tmp, out):
    v = op_values(tmp)
    return None if close(v["v(b)"], 0.5, 1e-12) else "v(b) = %r" % v.get("v(b)")


good("node on an unused port and on an element", check_port_used_elsewhere,
     "t", ".subckt s p q", "R1 p 0 1k", ".ends", "V1 n 0 1", "X1 n b s", "R2 n b 1k",
     "R3 b 0 1k", ".op")

# ---- sizes: expansion, joined lines, files -------------------------------------------------------


def fan_out(levels, width, leaf):
    """A subcircuit `l<levels>` made of `width` instances of the level below, down to l0."""
    lines = ["fan-out", ".subckt l0 a"] + leaf + [".ends"]
    for k in range(1, levels + 1):
        lines.append(".subckt l%d a" % k)
        lines += ["x%d a l%d" % (m, k - 1) for m in range(width)]
        lines.append(".ends")
    return lines


bad("subcircuit fan-out past the element limit",
    F + ":151: x1: subcircuit 'l12' expands to 1e+12 elements: the circuit would have more than "
    "10000000 elements",
    *(fan_out(12, 10, ["R1 a 0 1k"]) + ["V1 n 0 1", "R0 n 0 1k", "X1 n l12", ".op"]))
bad("fan-out of empty subcircuits past the instance limit",
    F + ":150: x1: subcircuit 'l12' expands to 1.11e+12 subcircuit instances: the circuit would "
    "have more than 10000000",
    *(fan_out(12, 10, []) + ["V1 n 0 1", "R0 n 0 1k", "X1 n l12", ".op"]))
# the nesting limit is found by counting, before a million elements per level are built; the
# first line too deep is the one building would have stopped at (l1's first X line, 33 deep)
bad("self-instantiating subcircuit behind a large one",
    F + ":6: x0: subcircuits nested deeper than 32 (is 'l0' instantiating itself?)",
    *(fan_out(6, 10, ["R1 a 0 1k"])[:-1] + [".ends", ".subckt loop a", "X1 a l6", "X2 a loop",
                                             ".ends", "V1 n 0 1", "X9 n loop"]))

bad("continuation lines joined past the line limit",
    F + ":3: line longer than 1048576 bytes (joined with its '+' continuations)",
    "t", "V1 a 0 1", "R1 a 0 1k", "+ " + "9" * 400000, "+ " + "9" * 400000, "+ " + "9" * 400000)


def fifo(name):
    def setup(tmp):
        os.mkfifo(os.path.join(tmp, name))
    return setup


def sparse(name, size):
    def setup(tmp):
        with open(os.path.join(tmp, name), "wb") as f:
            f.truncate(size)
    return setup


OK_NET = net("t", "V1 a 0 1", "R1 a 0 1k", ".op")
CASES.append(Case(".include of /dev/zero",
                  2, F + ":2: cannot open '/dev/zero': not a regular file (a FIFO, a device or a "
                  "socket)", {"n.cir": net("t", ".include /dev/zero", "V1 a 0 1", "R1 a 0 1k")}))
CASES.append(Case(".include of a FIFO",
                  2, F + ":2: cannot open '" + TMP + "/pipe': not a regular file (a FIFO, a device "
                  "or a socket)", {"n.cir": net("t", ".include pipe", "V1 a 0 1", "R1 a 0 1k")},
                  setup=fifo("pipe")))
CASES.append(Case("netlist is a FIFO",
                  2, TMP + "/pipe: cannot open netlist: not a regular file (a FIFO, a device or a "
                  "socket)", {}, args=["run", "{T}/pipe", "-o", "{T}/out"], setup=fifo("pipe")))
CASES.append(Case("netlist larger than 1 GiB",
                  2, TMP + "/big.cir: the netlist is larger than 1 GiB", {},
                  args=["run", "{T}/big.cir", "-o", "{T}/out"],
                  setup=sparse("big.cir", (1 << 30) + 1)))
CASES.append(Case(".include larger than 1 GiB",
                  2, F + ":2: '" + TMP + "/big.lib': the netlist and its included files together "
                  "would be larger than 1 GiB",
                  {"n.cir": net("t", ".include big.lib", "V1 a 0 1", "R1 a 0 1k")},
                  setup=sparse("big.lib", (1 << 30) - 10)))
CASES.append(Case("limits file is a FIFO",
                  2, TMP + "/pipe: cannot open limits file: not a regular file (a FIFO, a device "
                  "or a socket)", {"n.cir": OK_NET},
                  args=["check", "{T}/n.cir", "{T}/pipe", "-o", "{T}/out"], setup=fifo("pipe")))
# a FIFO with a manifest beside it that lists it: merge gets as far as reading it, and must not
# block there
SHARD_MANIFEST = ("key,value\nstudy,spread\nstudy_id,x\nseed,1\ntrials,1\npoints,1\n"
                  "shard,1/1\nfirst_point,0\nend_point,1\nfile_sha256(pipe),x\n")
CASES.append(Case("shard CSV is a FIFO",
                  2, TMP + "/pipe: cannot open: not a regular file (a FIFO, a device or a socket)",
                  {"run_manifest.csv": SHARD_MANIFEST},
                  args=["merge", "-o", "{T}/out", "{T}/pipe"], setup=fifo("pipe")))
# under an address-space cap the netlist's buffer cannot be had: one failed allocation ends
# the read (a sparse file of 768 MiB, read as zeros, under a 256 MiB cap)
CASES.append(Case("netlist read under an address-space cap",
                  2, TMP + "/big.cir: out of memory while parsing", {},
                  args=["run", "{T}/big.cir", "-o", "{T}/out"],
                  setup=sparse("big.cir", 768 << 20), limit_as=256 << 20))


# ---- runner --------------------------------------------------------------------------------------

def built_with_asan(binary):
    with open(binary, "rb") as f:
        return b"__asan_init" in f.read()


def run_case(binary, c, asan):
    if c.limit_as and asan:
        return None, "the address sanitizer needs more address space than the cap"
    tmp = os.path.realpath(tempfile.mkdtemp(prefix="stagesim-netcheck-"))
    try:
        for name, content in c.files.items():
            with open(os.path.join(tmp, name), "w", encoding="utf-8") as f:
                f.write(content)
        if c.setup:
            c.setup(tmp)
        argv = [binary] + [a.replace("{T}", tmp) for a in c.args]

        def cap():
            if c.limit_as:
                resource.setrlimit(resource.RLIMIT_AS, (c.limit_as, c.limit_as))

        try:
            p = subprocess.run(argv, cwd=tmp, capture_output=True, timeout=TIMEOUT_S,
                               preexec_fn=cap)
        except subprocess.TimeoutExpired:
            return ["hung: no exit within %d s" % TIMEOUT_S], ""
        err = p.stderr.decode("utf-8", "replace").replace(tmp, TMP)
        out = p.stdout.decode("utf-8", "replace")
        problems = []
        if p.returncode < 0:
            problems.append("killed by signal %d" % -p.returncode)
        elif p.returncode != c.rc:
            problems.append("exit code %d, expected %d" % (p.returncode, c.rc))
        if c.err is not None and err != c.err + "\n":
            problems.append("stderr differs\n      expected: %r\n      actual:   %r"
                            % (c.err, err[:600]))
        if c.err is None and c.rc == 0:
            bad_lines = [l for l in err.splitlines() if not l.startswith("stagesim: warning:")]
            if bad_lines:
                problems.append("unexpected stderr: %r" % err[:600])
        if c.check and not problems:
            msg = c.check(tmp, out)
            if msg:
                problems.append(msg)
        return problems, err
    finally:
        for root, dirs, files in os.walk(tmp):
            for d in dirs:
                os.chmod(os.path.join(root, d), stat.S_IRWXU)
        shutil.rmtree(tmp, ignore_errors=True)


def main(argv):
    if len(argv) < 2:
        print("usage: test_netlist_checks.py PATH/TO/stagesim [-v] [CASE_NAME ...]",
              file=sys.stderr)
        return 2
    binary = os.path.realpath(argv[1])
    verbose = "-v" in argv[2:]
    only = [a for a in argv[2:] if a != "-v"]
    asan = built_with_asan(binary)
    passed = failed = skipped = 0
    for c in CASES:
        if only and c.name not in only:
            continue
        problems, err = run_case(binary, c, asan)
        if problems is None:
            print("skip  %s: %s" % (c.name, err))
            skipped += 1
            continue
        if problems:
            failed += 1
            print("FAIL  %s" % c.name)
            for pr in problems:
                print("      " + pr)
        else:
            passed += 1
            print("ok    %s" % c.name)
        if verbose:
            for line in err.splitlines():
                print("      | " + line)
    print("%d passed, %d failed, %d skipped" % (passed, failed, skipped))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
