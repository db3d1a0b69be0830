#!/usr/bin/python3
"""End-to-end bad-input checks of the stagesim command line.

Usage: test_bad_input.py PATH/TO/stagesim [-v] [CASE_NAME ...]
(run from the repository root; -v prints the full stderr of every case).

Each case writes its netlist(s) into a fresh temporary folder, runs the binary there with a
20 s limit and checks:
  - the exit code (0 ok, 1 check failed, 2 bad input or usage, 3 no convergence);
  - the exact stderr text, with the temporary folder's path written as <TMP>
    (a few messages carry iteration counts or residuals: those cases match a regular
    expression instead, still anchored on the whole text);
  - that no signal ended the process (a crash or sanitizer abort is a failure) and that it
    did not hang;
  - on failure, that no CSV file (or leftover temporary file) was written.
A usage error is expected as `stagesim: <message>` followed by the `--help` text.
Prints one line per case and a final `N passed, M failed`; exits 1 if any case failed.
"""
import os
import random
import re
import shutil
import stat
import subprocess
import sys
import tempfile

TIMEOUT_S = 20
TMP = "<TMP>"

DEFAULT_ARGS = ["run", "{T}/n.cir", "-o", "{T}/out"]

# A small valid netlist to which the CLI cases are applied (our own scenario: a bias divider
# feeding a clamp diode of a sensor input).
VALID = """sensor input bias divider
.param rtop=10k
V1 vcc 0 DC 5
R1 vcc in {rtop}
R2 in 0 10k
D1 in 0 dclamp
.model dclamp d is=1e-14 n=1
.op
.end
"""


class Case:
    def __init__(self, name, rc, err=None, err_re=None, net=None, files=None, args=None,
                 usage=False, setup=None, check=None, skip=None):
        self.name = name
        self.rc = rc
        self.err = err
        self.err_re = err_re
        self.files = dict(files or {})
        if net is not None:
            self.files["n.cir"] = net
        self.args = args if args is not None else DEFAULT_ARGS
        self.usage = usage
        self.setup = setup
        self.check = check
        self.skip = skip


CASES = []


def case(*a, **kw):
    CASES.append(Case(*a, **kw))


def net(*lines):
    """Netlist text from lines; the first line is the title."""
    return "\n".join(lines) + "\n"


F = TMP + "/n.cir"  # the netlist's name as stderr shows it

def bad(name, rc, err, *lines, **kw):
    """A case whose only file is the netlist n.cir made of `lines`."""
    case(name, rc, err, net=net(*lines), **kw)


# ---- elements and values ---------------------------------------------------------------------

bad("unknown element letter", 2, F + ":4: z1: unknown element type 'z'",
    "unknown letter", "V1 in 0 5", "R1 in 0 1k", "Z1 in 0 1k")
bad("missing node and value", 2, F + ":3: r1: needs 2 nodes, got 1",
    "missing node", "V1 in 0 5", "R1 in")
bad("missing node (value taken as node)", 2, F + ":3: r1: missing resistance value",
    "missing node", "V1 in 0 5", "R1 in 1k")
bad("bad value 10x5", 2,
    F + ":3: r1: bad resistance '10x5': expected a number with an optional SI suffix or a "
    "{expression}",
    "bad value", "V1 in 0 5", "R1 in 0 10x5")
bad("bad value abc", 2,
    F + ":3: r1: bad resistance 'abc': expected a number with an optional SI suffix or a "
    "{expression}",
    "bad value", "V1 in 0 5", "R1 in 0 abc")
bad("bad value 1..2", 2,
    F + ":3: r1: bad resistance '1..2': expected a number with an optional SI suffix or a "
    "{expression}",
    "bad value", "V1 in 0 5", "R1 in 0 1..2")
bad("bad source value", 2,
    F + ":2: v1: bad DC value '5volts!': expected a number with an optional SI suffix or a "
    "{expression}",
    "bad source value", "V1 in 0 5volts!", "R1 in 0 1k")
bad("value overflow 1e400", 2, F + ":3: r1: bad resistance '1e400': out of range",
    "overflow", "V1 in 0 5", "R1 in 0 1e400")
bad("value overflow in expression", 2, F + ":3: r1: resistance: expression value is not finite",
    "overflow", "V1 in 0 5", "R1 in 0 {1e200*1e200}")
bad("zero resistance", 2, F + ":3: r1: resistance must be positive, got 0",
    "zero r", "V1 in 0 5", "R1 in 0 0")
bad("negative resistance", 2, F + ":3: r1: resistance must be positive, got -1000",
    "negative r", "V1 in 0 5", "R1 in 0 -1k")
bad("negative capacitance", 2, F + ":4: c1: capacitance must be zero or positive, got -1e-06",
    "negative c", "V1 in 0 5", "R1 in 0 1k", "C1 in 0 -1u")
bad("R with an extra field", 2, F + ":3: r1: unexpected '2k' after the resistance value",
    "r pins", "V1 in 0 5", "R1 in 0 1k 2k")
bad("Q with too few nodes", 2, F + ":4: q1: needs collector, base, emitter nodes and a model",
    "q pins", "V1 in 0 5", "R1 in 0 1k", "Q1 in 0 qn", ".model qn npn")
# Five nodes before the model: the tool should see the model name and say the node count is
# wrong, not report the fourth node as an unknown model.
bad("Q with too many nodes", 2,
    F + ":4: q1: too many nodes before model 'qn' (expected collector, base, emitter and an "
    "optional substrate)",
    "q pins", "V1 vcc 0 5", "R1 vcc b 100k", "Q1 vcc b 0 0 0 qn", ".model qn npn")
bad("Q with a field after the area", 2, F + ":4: q1: unexpected 'junk' after the area value",
    "q pins", "V1 vcc 0 5", "R1 vcc b 100k", "Q1 vcc b 0 qn 1 junk", ".model qn npn")
bad("E with too few nodes", 2, F + ":4: e1: expects `E n+ n- nc+ nc- gain`",
    "e pins", "V1 in 0 5", "R1 in 0 1k", "E1 out 0 in 2", "R2 out 0 1k")
bad("duplicate element name", 2, F + ":4: r1: element name used twice (first at " + F + ":3)",
    "dup", "V1 a 0 5", "R1 a 0 1k", "R1 a 0 2k")

# ---- models ----------------------------------------------------------------------------------

bad("undefined model", 2, F + ":4: d1: unknown model 'dmod'",
    "no model", "V1 in 0 5", "R1 in x 1k", "D1 x 0 dmod")
# "not usable for a d1" does not say what kind of model a diode needs.
bad("diode given a BJT model", 2,
    F + ":4: d1: model 'qn' is an npn model; a diode needs a model of type d",
    "wrong model", "V1 in 0 5", "R1 in x 1k", "D1 x 0 qn", ".model qn npn bf=100")
bad("BJT given a diode model", 2,
    F + ":4: q1: model 'dm' is a d model; a BJT needs a model of type npn or pnp",
    "wrong model", "V1 in 0 5", "R1 in b 100k", "Q1 in b 0 dm", ".model dm d")
bad("unknown model parameter", 2, F + ":4: model 'qn': unknown parameter 'foo' for a BJT model",
    "model param", "V1 in 0 5", "R1 in 0 1k", ".model qn npn (bf=100 foo=3)")
# Elements and .params say where the first definition is; a duplicate model should too.
bad("duplicate model", 2, F + ":5: model 'dm' defined twice (first at " + F + ":4)",
    "dup model", "V1 a 0 5", "R1 a 0 1k", ".model dm d", ".model dm d is=1e-15")

# ---- parameters and expressions --------------------------------------------------------------

bad("undefined parameter in expression", 2, F + ":3: r1: resistance: unknown parameter 'rx'",
    "param", "V1 in 0 5", "R1 in 0 {rx}")
bad("division by zero in expression", 2, F + ":3: r1: resistance: division by zero",
    "param", "V1 in 0 5", "R1 in 0 {1k/0}")
# The fault is the .param line; it should be reported there, as it is when the parameter is
# unused, not at the first element that happens to use it.
bad("parameter defined in terms of itself", 2,
    F + ":2: .param a: parameter 'a' is defined in terms of itself",
    "param", ".param a={a+1}", "V1 in 0 5", "R1 in 0 {a}")
bad("unused parameter defined in terms of itself", 2,
    F + ":2: .param a: parameter 'a' is defined in terms of itself",
    "param", ".param a={a+1}", "V1 in 0 5", "R1 in 0 1k")
bad("two parameters defined in terms of each other", 2,
    F + ":3: .param b: parameter 'a' is defined in terms of itself",
    "param", ".param a={b*2}", ".param b={a}", "V1 in 0 5", "R1 in 0 {a}")

# ---- .include --------------------------------------------------------------------------------

bad("include of itself", 2, F + ":2: .include of '" + F + "' includes itself (cycle)",
    "self include", ".include n.cir", "V1 in 0 5", "R1 in 0 1k")
# Same file named relatively: the cycle must be caught at the including line of n.cir, not
# one level down under another spelling of the same path (./n.cir).
case("include of itself (relative path)", 2,
     "n.cir:2: .include of './n.cir' includes itself (cycle)",
     net=net("self include", ".include n.cir", "V1 in 0 5", "R1 in 0 1k"),
     args=["run", "n.cir", "-o", "out"])
case("include two-file cycle", 2,
     TMP + "/c.inc:2: .include of '" + TMP + "/b.inc' includes itself (cycle)",
     files={"n.cir": net("cycle", ".include b.inc", "V1 in 0 5", "R1 in 0 1k"),
            "b.inc": "* b\n.include c.inc\n", "c.inc": "* c\n.include b.inc\n"})
bad("include of a missing file", 2,
    F + ":2: cannot open '" + TMP + "/nothere.inc': No such file or directory",
    "missing include", ".include nothere.inc", "V1 in 0 5", "R1 in 0 1k")

# ---- subcircuits -----------------------------------------------------------------------------

bad("subcircuit instantiating itself", 2,
    F + ":3: x1: subcircuits nested deeper than 32 (is 'loop' instantiating itself?)",
    "self subckt", ".subckt loop a b", "X1 a b loop", "R1 a b 1k", ".ends", "V1 in 0 5",
    "X1 in 0 loop")
bad("X with the wrong number of nodes", 2,
    F + ":6: x1: subcircuit 'buf' has 2 ports, 3 nodes given",
    "x nodes", ".subckt buf a b", "R1 a b 1k", ".ends", "V1 in 0 5", "X1 in 0 5 buf")
bad("unknown subcircuit", 2, F + ":6: x1: unknown subcircuit 'nosuch'",
    "x unknown", ".subckt buf a b", "R1 a b 1k", ".ends", "V1 in 0 5", "X1 in 0 nosuch")
bad(".subckt without .ends", 2, F + ":2: .subckt buf has no matching .ends",
    "no ends", ".subckt buf a b", "R1 a b 1k", "V1 in 0 5", "X1 in 0 buf")
bad(".ends without .subckt", 2, F + ":4: .ends without .subckt",
    "stray ends", "V1 in 0 5", "R1 in 0 1k", ".ends")

# ---- whole-file problems ---------------------------------------------------------------------

case("empty file", 2, F + ": empty netlist (no title line)", net="")
case("title only", 2, F + ": the netlist has no elements", net="only a title\n")
case("title only, no newline", 2, F + ": the netlist has no elements", net="only a title")
# A PNG file given as netlist: line 1 ("\x89PNG\r") is a printable title, line 2 starts 0x1a.
case("binary garbage (PNG header)", 2,
     F + ":2: unexpected control character (byte 0x1a): not a text netlist",
     net=b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x01\x00" + bytes(range(256)))
case("binary garbage (NUL in the title)", 2,
     F + ":1: unexpected control character (byte 0x00): not a text netlist",
     net=b"ti\x00tle\nV1 a 0 1\nR1 a 0 1k\n")


def random_garbage():
    """4 KiB of seeded random bytes with NULs; the expected report is the first byte that is
    NUL or a control character other than tab/CR, counted by '\\n' lines."""
    rnd = random.Random(20240417)
    data = bytearray(rnd.getrandbits(8) for _ in range(4096))
    data[700] = 0
    data[2000] = 0
    for line_no, line in enumerate(bytes(data).split(b"\n"), start=1):
        for byte in line:
            if byte == 0 or (byte < 0x20 and byte not in (0x09, 0x0D)):
                return bytes(data), "%s:%d: unexpected control character (byte 0x%02x): not a " \
                                    "text netlist" % (F, line_no, byte)
    raise AssertionError("seeded garbage has no control byte")


_garbage, _garbage_err = random_garbage()
case("binary garbage (random bytes with NUL)", 2, _garbage_err, net=_garbage)

bad(".include without a file name", 2, F + ":2: .include needs a file name",
    "include", ".include", "V1 in 0 5", "R1 in 0 1k")


def include_chain(t):
    for k in range(20):
        with open(os.path.join(t, "f%d.inc" % k), "w") as f:
            f.write("* level %d\n.include f%d.inc\n" % (k, k + 1))
    with open(os.path.join(t, "f20.inc"), "w") as f:
        f.write("R9 in 0 1k\n")


case(".include nested 21 files deep", 2, TMP + "/f15.inc:2: .include nested deeper than 16 files",
     net=net("deep include", ".include f0.inc", "V1 in 0 5", "R1 in 0 1k"), setup=include_chain)

# ---- line syntax -----------------------------------------------------------------------------

bad("continuation line with nothing to continue", 2,
    F + ":2: continuation line '+' with nothing to continue",
    "continuation", "+ R1 in 0 1k", "V1 in 0 5")
bad("expression missing its closing brace", 2, F + ":3: missing '}' in '{2*(1k'",
    "brace", "V1 in 0 5", "R1 in 0 {2*(1k")
bad("expression ending early", 2, F + ":3: r1: resistance: expression ends too early",
    "expr", "V1 in 0 5", "R1 in 0 {2*}")
# 1 followed by 400 zeros is 1e400: out of range, like `1e400`, not "not a number"
bad("overflowing number written out in digits", 2,
    F + ":3: r1: bad resistance '1" + "0" * 39 + "...': out of range",
    "long number", "V1 in 0 5", "R1 in 0 1" + "0" * 400)
# A 70000-digit number: the message must keep its reason (out of range), abbreviating the
# token rather than being cut off by the message buffer.
bad("70000-digit number", 2, None,
    "huge number", "V1 in 0 5", "R1 in 0 " + "1" * 70000,
    err_re=r"<TMP>/n\.cir:3: r1: bad resistance '1{1,80}(\.\.\.|\u2026)[^\n]{0,80}': out of "
           r"range")
bad("line with more than 4096 fields", 2, F + ":3: line has more than 4096 fields",
    "many fields", "V1 in 0 5", "R1 in 0 1k" + " x" * 5000)
bad("line longer than 1 MiB", 2, F + ":3: line longer than 1048576 bytes",
    "long line", "V1 in 0 5", "* " + "y" * (1 << 20))
bad("unknown time-varying source form", 2,
    F + ":2: v1: unknown source form 'exp(0 1 1k)' (known: sin, pulse, pwl)",
    "exp", "V1 in 0 exp(0 1 1k)", "R1 in 0 1k")
bad("source form with too few values", 2,
    F + ":2: v1: sin(VO VA FREQ [TD [THETA [PHASE]]]) takes 3 to 6 values, got 2",
    "sin", "V1 in 0 sin(0 1)", "R1 in 0 1k")
bad(".temp below absolute zero", 2, F + ":4: .temp -300 C is outside -273.15 .. 1000 C",
    "temp", "V1 in 0 5", "R1 in 0 1k", ".temp -300")
bad(".stage naming a missing source", 2,
    F + ":4: stage input 'v7' is not an independent source of the circuit",
    "stage", "V1 in 0 5", "R1 in 0 1k", ".stage in=v7 out=in", ".ac dec 1 1 10")
bad("X with an unknown parameter", 2, F + ":6: x1: subcircuit 'buf' has no parameter 'q'",
    "x param", ".subckt buf a b r=1k", "R1 a b {r}", ".ends", "V1 in 0 5", "X1 in 0 buf q=3")
bad("bad element inside a subcircuit", 2, F + ":3: x1.r1: resistance must be positive, got -1000",
    "subckt body", ".subckt buf a b", "R1 a b -1k", ".ends", "V1 in 0 5", "X1 in 0 buf")
bad("unknown parameter inside a subcircuit", 2,
    F + ":3: x1.r1: resistance: unknown parameter 'nope'",
    "subckt body", ".subckt buf a b", "R1 a b {nope}", ".ends", "V1 in 0 5", "X1 in 0 buf")

# ---- topology --------------------------------------------------------------------------------

bad("floating node behind a capacitor", 2,
    F + ":4: node 'mid' has no DC path to ground (it connects only through capacitors, current "
    "sources or controlling inputs; see c1)",
    "floating", "V1 in 0 5", "R1 in 0 1k", "C1 in mid 1u", "R2 mid x 1k", "C2 x 0 1u")
bad("node fed only by a current source", 2,
    F + ":4: node 'mid' has no DC path to ground (it connects only through capacitors, current "
    "sources or controlling inputs; see i1)",
    "current source only", "V1 in 0 5", "R1 in 0 1k", "I1 0 mid 1m")
bad("loop of voltage sources", 2,
    F + ":4: v3: closes a loop of voltage sources and inductors between nodes 'b' and '0' (the "
    "loop's current is undetermined at DC)",
    "v loop", "V1 a 0 5", "V2 b a 1", "V3 b 0 2", "R1 a 0 1k")
bad("two voltage sources in parallel", 2,
    F + ":3: v2: closes a loop of voltage sources and inductors between nodes 'a' and '0' (the "
    "loop's current is undetermined at DC)",
    "v parallel", "V1 a 0 5", "V2 a 0 5", "R1 a 0 1k")
bad("inductor across a voltage source", 2,
    F + ":3: l1: closes a loop of voltage sources and inductors between nodes 'a' and '0' (the "
    "loop's current is undetermined at DC)",
    "l parallel v", "V1 a 0 5", "L1 a 0 1m", "R1 a 0 1k")
bad("F naming a missing controlling source", 2,
    F + ":4: f1: controlling source 'vx' is not a voltage source of the circuit",
    "f ctrl", "V1 a 0 5", "R1 a b 1k", "F1 b 0 vx 2")
bad("H naming a resistor as controlling source", 2,
    F + ":4: h1: controlling source 'r1' is not a voltage source of the circuit",
    "h ctrl", "V1 a 0 5", "R1 a b 1k", "H1 b 0 r1 2")

# ---- directives ------------------------------------------------------------------------------

bad("unknown directive", 2, F + ":4: unknown directive '.foo'",
    "directive", "V1 a 0 5", "R1 a 0 1k", ".foo 3")
bad(".dc without arguments", 2, F + ":4: .dc expects SRC start stop step [SRC2 start2 stop2 step2]",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc")
bad(".dc without a step", 2, F + ":4: .dc expects SRC start stop step [SRC2 start2 stop2 step2]",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc v1 0 5")
bad(".dc with a step of the wrong sign", 2, F + ":4: .dc v1: step -1 does not lead from 0 to 5",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc v1 0 5 -1")
bad(".dc with a zero step", 2, F + ":4: .dc v1: step 0 does not lead from 0 to 5",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc v1 0 5 0")
bad(".dc of an unknown source", 2,
    F + ":4: .dc: 'vnone' is not an independent voltage or current source",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc vnone 0 5 1")
bad(".dc of a resistor", 2, F + ":4: .dc: 'r1' is not an independent voltage or current source",
    "dc", "V1 a 0 5", "R1 a 0 1k", ".dc r1 0 5 1")
bad(".ac with an extra field", 2, F + ":4: .ac expects dec|oct|lin N fstart fstop",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac dec 10 1 1meg x")
bad(".ac with an unknown sweep type", 2, F + ":4: .ac: sweep type 'log' is not dec, oct or lin",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac log 10 1 1meg")
bad(".ac from 0 Hz", 2, F + ":4: .ac: frequencies must be positive (got 0 and 1e+06 Hz)",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac dec 10 0 1meg")
bad(".ac with zero points", 2, F + ":4: .ac: the point count must be a whole number >= 1, got 0",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac dec 0 1 1meg")
bad(".ac with a fractional point count", 2,
    F + ":4: .ac: the point count must be a whole number >= 1, got 2.5",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac dec 2.5 1 1meg")
bad(".ac stop below start", 2, F + ":4: .ac: stop frequency 1 Hz is below start 1e+06 Hz",
    "ac", "V1 a 0 5", "R1 a 0 1k", ".ac dec 10 1meg 1")
bad("unknown .options name", 2,
    F + ":4: .options: unknown option 'reltol' (known: tol_rel, tol_v, tol_i, gmin, "
    "newton_iters, tran_method, tran_tol_rel, tran_tol_v, lint_off, model_extras)",
    "options", "V1 a 0 5", "R1 a 0 1k", ".options reltol=1e-3")
bad(".options value out of range", 2, F + ":4: .options: tol_rel = 2 is out of range",
    "options", "V1 a 0 5", "R1 a 0 1k", ".options tol_rel=2")

# ---- command line ----------------------------------------------------------------------------

V = {"n.cir": VALID}
RUN = ["run", "{T}/n.cir", "-o", "{T}/out"]

case("--set of an unknown name", 2,
     "stagesim: --set nosuch: no parameter, element or model parameter of that name",
     files=V, args=RUN + ["--set", "nosuch=3"])
case("--set of an unknown model parameter", 2,
     "stagesim: --set dclamp.foo: model 'dclamp' has no parameter 'foo'",
     files=V, args=RUN + ["--set", "dclamp.foo=1"])
case("--set of a negative resistance", 2, "stagesim: --set r2: resistance must be positive, got -5",
     files=V, args=RUN + ["--set", "r2=-5"])
case("--set without '='", 2, "stagesim: --set needs NAME=VALUE, got 'rtop'", usage=True,
     files=V, args=RUN + ["--set", "rtop"])
case("--set without a name", 2, "stagesim: --set needs NAME=VALUE, got '=3'", usage=True,
     files=V, args=RUN + ["--set", "=3"])
case("--set without a value", 2, "stagesim: --set needs NAME=VALUE, got 'rtop='", usage=True,
     files=V, args=RUN + ["--set", "rtop="])
case("--set as the last argument", 2, "stagesim: --set needs NAME=VALUE, got ''", usage=True,
     files=V, args=RUN + ["--set"])
# A bad --set value for a .param must be blamed on the --set, not on the netlist line that
# happens to use the parameter (the netlist itself is fine).
case("--set with a bad value for a .param", 2, "stagesim: --set rtop=abc: unknown parameter 'abc'",
     files=V, args=RUN + ["--set", "rtop=abc"])
case("unknown CLI option", 2, "stagesim: unknown option '--frobnicate'", usage=True,
     files=V, args=RUN + ["--frobnicate"])
case("unknown command", 2, "stagesim: unknown command 'solve'", usage=True,
     files=V, args=["solve", "{T}/n.cir"])
case("no arguments at all", 2, "", usage=True, args=[])
case("run without a netlist", 2, "stagesim: run needs a NETLIST", usage=True,
     args=["run", "-o", "{T}/out"])
case("two netlists", 2, "stagesim: more than one netlist given ('" + F + "')", usage=True,
     files=V, args=RUN + ["{T}/n.cir"])
case("-o without a folder", 2, "stagesim: -o needs a folder", usage=True,
     files=V, args=["run", "{T}/n.cir", "-o"])
case("--in without --out", 2, "stagesim: --in and --out go together",
     files=V, args=RUN + ["--in", "v1"])
case("--in naming a missing source", 2,
     "stagesim: stage input 'v9' is not an independent source of the circuit",
     files=V, args=RUN + ["--in", "v9", "--out", "in"])
case("--out naming a missing node", 2, "stagesim: stage output node 'zz' does not exist",
     files=V, args=RUN + ["--in", "v1", "--out", "zz"])
case("--nodes naming a missing node", 2, "stagesim: --nodes: 'zz' is no node of the circuit",
     files=V, args=RUN + ["--nodes", "in,zz"])
case("--nodes naming ground", 2,
     "stagesim: --nodes: node 'gnd' is ground: its voltage is 0 by definition",
     files=V, args=RUN + ["--nodes", "gnd"])
case("--nodes with only commas", 2, "stagesim: --nodes needs node names separated by commas",
     usage=True, files=V, args=RUN + ["--nodes", ",,"])
case("--nodes as the last argument", 2, "stagesim: --nodes needs a value", usage=True,
     files=V, args=RUN + ["--nodes"])
case("--nodes outside run", 2, "stagesim: --nodes belongs to run, not sweep", usage=True, files=V,
     args=["sweep", "{T}/n.cir", "-o", "{T}/out", "--vary", "rtop=list:1k", "--nodes", "in"])
case("netlist file that does not exist", 2,
     TMP + "/nothere.cir: cannot open netlist: No such file or directory",
     args=["run", "{T}/nothere.cir", "-o", "{T}/out"])
case("netlist path is a folder", 2, TMP + "/adir: cannot open netlist: Is a directory",
     files=V, setup=lambda t: os.mkdir(os.path.join(t, "adir")),
     args=["run", "{T}/adir", "-o", "{T}/out"])


def make_file(name):
    def setup(t):
        with open(os.path.join(t, name), "w") as f:
            f.write("not a folder\n")
    return setup


case("-o pointing at a regular file", 2,
     "stagesim: output folder '" + TMP + "/afile' is not a folder",
     files=V, setup=make_file("afile"), args=["run", "{T}/n.cir", "-o", "{T}/afile"])
case("-o under a regular file", 2,
     "stagesim: output folder '" + TMP + "/afile/sub': Not a directory",
     files=V, setup=make_file("afile"), args=["run", "{T}/n.cir", "-o", "{T}/afile/sub"])
# found when the run's files are reserved, before the netlist is read
case("op.csv is a folder", 2,
     "stagesim: op.csv '" + TMP + "/out/op.csv' is a folder, not a file",
     files=V, setup=lambda t: os.makedirs(os.path.join(t, "out", "op.csv")))


def make_readonly(t):
    os.mkdir(os.path.join(t, "ro"))
    os.chmod(os.path.join(t, "ro"), 0o555)


case("-o a read-only folder", 2,
     "stagesim: output folder '" + TMP + "/ro' is not writable: Permission denied",
     files=V, setup=make_readonly, args=["run", "{T}/n.cir", "-o", "{T}/ro"],
     skip="running as root: permission bits do not apply" if os.geteuid() == 0 else None)

# ---- no convergence --------------------------------------------------------------------------

NOCONV = (r"<TMP>/n\.cir(:\d+)?: no DC operating point found after \d+ Newton iterations "
          r"\(plain Newton, gmin stepping and source stepping all tried\); worst: "
          r"(node|branch current of) '%s', last change [-+0-9.e]+[^\n]*")
# Regenerative loop: the collector drives the base through a VCVS of gain +1000. Any answer
# needs the base thousands of volts above the emitter, far beyond the junction model's range.
bad("positive-feedback loop (no convergence)", 3, None,
    "regenerative loop", "Vcc vcc 0 10", "Rc vcc c 1k", "Q1 c b e qn", "Re e 0 10",
    "E1 b 0 c 0 1000", ".model qn npn bf=100", err_re=NOCONV % "e1")
# 1 mA forced into a reverse-biased junction with gmin off: no DC solution exists, and the
# Newton run must say so with exit 3 naming the node, not call it a singular (topology) case.
bad("forced current into a reverse junction, gmin=0 (no convergence)", 3, None,
    "reverse junction", "Vcc vcc 0 5", "Rb vcc b 1meg", "Q1 c b 0 qn", "I1 0 c 1m",
    ".model qn npn bf=100", ".options gmin=0",
    err_re=r"<TMP>/n\.cir(:\d+)?: no DC operating point[^\n]*node 'c'[^\n]*")

# ---- positive controls -----------------------------------------------------------------------


def check_op_csv(t, out):
    path = os.path.join(t, "out", "op.csv")
    if not os.path.isfile(path):
        return "op.csv not written"
    with open(path) as f:
        rows = f.read().splitlines()
    if not rows or rows[0] != "quantity,value":
        return "op.csv header is %r" % (rows[:1],)
    labels = [r.split(",")[0] for r in rows[1:]]
    for want in ("v(vcc)", "v(in)", "i(v1)", "id(d1)"):
        if want not in labels:
            return "op.csv lacks row %s (rows: %s)" % (want, labels)
    return None


case("valid netlist runs and writes op.csv", 0, "", files=V, check=check_op_csv)


def check_op_nodes(t, out):
    with open(os.path.join(t, "out", "op.csv")) as f:
        labels = [r.split(",")[0] for r in f.read().splitlines()[1:]]
    want = ["v(in)", "i(v1)", "id(d1)"]  # only the named node's voltage; element rows stay
    if [x for x in labels if x.startswith("v(")] != ["v(in)"] or not all(w in labels
                                                                          for w in want):
        return "op.csv rows %s" % labels
    if "in " not in out or "vcc " in out:
        return "report shows other nodes: %r" % out
    return None


case("--nodes limits op.csv and the report", 0, "", files=V,
     args=RUN + ["--nodes", "IN,in"], check=check_op_nodes)
case("valid netlist with --set", 0, "", files=V, args=RUN + ["--set", "rtop=22k"],
     check=check_op_csv)


def check_bjt_op(t, out):
    path = os.path.join(t, "out", "op.csv")
    if not os.path.isfile(path):
        return "op.csv not written"
    with open(path) as f:
        text = f.read()
    return None if "ic(q1)," in text else "op.csv lacks ic(q1)"


bad("valid BJT driven hard (Ic about 0.4 A)", 0, "",
    "hard-driven switch", "V1 in 0 5", "R1 in b 1k", "Q1 in b 0 qn", ".model qn npn",
    check=check_bjt_op)


def check_stdout(pattern):
    def check(t, out):
        return None if re.fullmatch(pattern, out, re.S) else "stdout %r does not match %r" % (
            out, pattern)
    return check


case("--help", 0, "", args=["--help"], check=check_stdout(r"usage: stagesim run NETLIST.*"))
case("--version", 0, "", args=["--version"],
     check=check_stdout(r"stagesim \d+\.\d+\.\d+\S*\n"))


# ---- runner ----------------------------------------------------------------------------------

def usage_text(binary):
    p = subprocess.run([binary, "--help"], capture_output=True, timeout=TIMEOUT_S)
    return p.stdout.decode("utf-8", "replace")


def csv_leftovers(out_dir):
    if not os.path.isdir(out_dir):
        return []
    return sorted(n for n in os.listdir(out_dir)
                  if os.path.isfile(os.path.join(out_dir, n))
                  and (n.endswith(".csv") or ".tmp" in n or n.endswith(".svg")))


def shorten(text, keep=160):
    """Long texts (70000-digit tokens) shown as head ... tail."""
    if len(text) <= 2 * keep + 40:
        return text
    return "%s ...[%d chars]... %s" % (text[:keep], len(text) - 2 * keep, text[-keep:])


def run_case(binary, c, usage):
    tmp = os.path.realpath(tempfile.mkdtemp(prefix="stagesim-badinput-"))
    try:
        for name, content in c.files.items():
            mode = "wb" if isinstance(content, bytes) else "w"
            with open(os.path.join(tmp, name), mode) as f:
                f.write(content)
        if c.setup:
            c.setup(tmp)
        argv = [binary] + [a.replace("{T}", tmp) for a in c.args]
        try:
            p = subprocess.run(argv, cwd=tmp, capture_output=True, timeout=TIMEOUT_S)
        except subprocess.TimeoutExpired:
            return ["hung: no exit within %d s" % TIMEOUT_S], ""
        err = p.stderr.decode("utf-8", "replace").replace(tmp, TMP)
        out = p.stdout.decode("utf-8", "replace").replace(tmp, TMP)
        problems = []
        if p.returncode < 0:
            problems.append("killed by signal %d" % -p.returncode)
        elif p.returncode != c.rc:
            problems.append("exit code %d, expected %d" % (p.returncode, c.rc))
        if c.err_re is not None:
            if not re.fullmatch(c.err_re, err[:-1]) or not err.endswith("\n"):
                problems.append("stderr differs\n      expected: /%s/\n      actual:   %s"
                                % (c.err_re, shorten(repr(err))))
        else:
            want = (c.err + "\n" if c.err else "") + (usage if c.usage else "")
            if c.rc == 0 and not c.err:
                # a successful run may print warnings, never errors
                bad_lines = [l for l in err.splitlines() if not l.startswith("stagesim: warning:")]
                if bad_lines:
                    problems.append("unexpected stderr on success")
            elif err != want:
                shown_want = c.err + "\n<usage>" if c.usage else want
                shown_err = err
                if c.usage and usage and err.endswith(usage):
                    shown_err = err[:len(err) - len(usage)] + "<usage>"
                problems.append("stderr differs\n      expected: %s\n      actual:   %s"
                                % (shorten(repr(shown_want)), shorten(repr(shown_err))))
        if c.rc != 0 and p.returncode != 0:
            left = csv_leftovers(os.path.join(tmp, "out"))
            if left:
                problems.append("files written despite the error: %s" % ", ".join(left))
        if c.check and not problems:
            msg = c.check(tmp, out)
            if msg:
                problems.append(msg)
        if problems and "stderr" not in " ".join(problems):
            problems.append("stderr was: %s" % shorten(repr(err)))
        return problems, err
    finally:
        for root, dirs, _ in os.walk(tmp):
            for d in dirs:
                os.chmod(os.path.join(root, d), stat.S_IRWXU)
        shutil.rmtree(tmp, ignore_errors=True)


def main(argv):
    if len(argv) < 2:
        print("usage: test_bad_input.py PATH/TO/stagesim [-v] [CASE_NAME ...]", file=sys.stderr)
        return 2
    binary = os.path.realpath(argv[1])
    verbose = "-v" in argv[2:]
    only = [a for a in argv[2:] if a != "-v"]
    if not os.access(binary, os.X_OK):
        print("not an executable: %s" % argv[1], file=sys.stderr)
        return 2
    usage = usage_text(binary)
    passed = failed = skipped = 0
    for c in CASES:
        if only and c.name not in only:
            continue
        if c.skip:
            print("skip  %s (%s)" % (c.name, c.skip))
            skipped += 1
            continue
        problems, err = run_case(binary, c, usage)
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
