#!/usr/bin/python3
"""Check: bad `.ac` and `.stage` input through the command line.

Usage: test_ac_bad_input.py PATH_TO_STAGESIM

Expected behaviour: the project's CLI contract (docs/cli.md): exit code 2 for bad input or
usage, and an error on stderr as `FILE:LINE: message` naming the element, node or value at
fault; no crash. Each case runs in a fresh temporary folder with the netlist given by a
relative name, so the message must begin with exactly `NAME.cir:LINE: ` (for an included
file, that file's name and line). The message must also contain the words listed per case
(the offending name or value and what is wrong); the full message is printed beside the
verdict. Options given on the command line (--in/--out) have no file line: there the
message must name the option's value.
"""

import os
import subprocess
import tempfile

import acref

SRC = "CLI contract (docs/cli.md): exit 2 = bad input; stderr `FILE:LINE: message` naming the fault"

HEAD = ("low-pass test network\n"   # line 1
        "V1 in 0 DC 0 AC 1\n"      # line 2
        "R1 in out 1k\n"           # line 3
        "C1 out 0 100n\n")         # line 4
GOOD_AC = ".ac dec 10 10 1meg\n"      # line 5 when used

# (label, {file: text}, netlist to run, extra CLI args, expected `FILE:LINE: ` prefix or None,
#  words the message must contain)
CASES = [
    ("stage names a missing source", {"s1.cir": HEAD + GOOD_AC + ".stage in=V9 out=out\n.end\n"},
     "s1.cir", [], "s1.cir:6: ", ["v9", "source"]),
    ("stage input is not a source", {"s2.cir": HEAD + GOOD_AC + ".stage in=R1 out=out\n.end\n"},
     "s2.cir", [], "s2.cir:6: ", ["r1", "source"]),
    ("stage names a missing node", {"s3.cir": HEAD + GOOD_AC + ".stage in=V1 out=nowhere\n.end\n"},
     "s3.cir", [], "s3.cir:6: ", ["nowhere", "node", "not exist"]),
    ("stage output is ground", {"s4.cir": HEAD + GOOD_AC + ".stage in=V1 out=0\n.end\n"},
     "s4.cir", [], "s4.cir:6: ", ["'0'", "ground"]),
    ("stage without out=", {"s5.cir": HEAD + GOOD_AC + ".stage in=V1\n.end\n"},
     "s5.cir", [], "s5.cir:6: ", [".stage", "out="]),
    ("stage with an unknown field", {"s6.cir": HEAD + GOOD_AC + ".stage in=V1 out=out foo=1\n.end\n"},
     "s6.cir", [], "s6.cir:6: ", [".stage", "foo"]),
    ("stage error inside an included file",
     {"s7.cir": HEAD + GOOD_AC + ".include s7.inc\n.end\n",
      "s7.inc": "* stage of the test network\n\n.stage in=V1 out=nowhere\n"},
     "s7.cir", [], "s7.inc:3: ", ["nowhere", "node"]),
    ("ac with zero start frequency", {"a1.cir": HEAD + ".ac dec 10 0 1meg\n.end\n"},
     "a1.cir", [], "a1.cir:5: ", [".ac", "positive", "0"]),
    ("ac with negative start frequency", {"a2.cir": HEAD + ".ac dec 10 -5 1meg\n.end\n"},
     "a2.cir", [], "a2.cir:5: ", [".ac", "positive", "-5"]),
    ("ac with negative stop frequency", {"a3.cir": HEAD + ".ac oct 10 10 -1meg\n.end\n"},
     "a3.cir", [], "a3.cir:5: ", [".ac", "positive", "-1e+06"]),
    ("ac with zero stop frequency", {"a4.cir": HEAD + ".ac lin 10 0 0\n.end\n"},
     "a4.cir", [], "a4.cir:5: ", [".ac", "positive"]),
    ("ac with fstop below fstart (lin)", {"a5.cir": HEAD + ".ac lin 10 1meg 10\n.end\n"},
     "a5.cir", [], "a5.cir:5: ", [".ac", "stop", "below", "1e+06"]),
    ("ac with fstop below fstart (dec)", {"a6.cir": HEAD + ".ac dec 10 1k 999\n.end\n"},
     "a6.cir", [], "a6.cir:5: ", [".ac", "stop", "below", "999"]),
    ("ac with N = 0", {"a7.cir": HEAD + ".ac dec 0 10 1meg\n.end\n"},
     "a7.cir", [], "a7.cir:5: ", [".ac", "point count", "0"]),
    ("ac with N negative", {"a8.cir": HEAD + ".ac lin -3 10 1meg\n.end\n"},
     "a8.cir", [], "a8.cir:5: ", [".ac", "point count", "-3"]),
    ("ac with N fractional", {"a9.cir": HEAD + ".ac oct 2.5 10 1meg\n.end\n"},
     "a9.cir", [], "a9.cir:5: ", [".ac", "point count", "2.5"]),
    ("ac with an unknown sweep type", {"a10.cir": HEAD + ".ac log 10 10 1meg\n.end\n"},
     "a10.cir", [], "a10.cir:5: ", [".ac", "log"]),
    ("ac with a field missing", {"a11.cir": HEAD + ".ac dec 10 10\n.end\n"},
     "a11.cir", [], "a11.cir:5: ", [".ac", "fstop"]),
    ("ac zero start on a continued line (reported at the line it starts)",
     {"a12.cir": HEAD + ".ac dec 10\n+ 0 1meg\n.end\n"},
     "a12.cir", [], "a12.cir:5: ", [".ac", "positive"]),
    ("ac zero start through a .param", {"a13.cir": HEAD + ".param fs=0\n.ac dec 10 {fs} 1meg\n.end\n"},
     "a13.cir", [], "a13.cir:6: ", [".ac", "positive"]),
    ("ac error inside an included file",
     {"a14.cir": HEAD + ".include a14.inc\n.end\n", "a14.inc": "* sweep\n.ac dec 10 1meg 10\n"},
     "a14.cir", [], "a14.inc:2: ", [".ac", "below"]),
    ("--in names a missing source", {"c1.cir": HEAD + GOOD_AC + ".end\n"},
     "c1.cir", ["--in", "V9", "--out", "out"], None, ["v9", "source"]),
    ("--out names a missing node", {"c2.cir": HEAD + GOOD_AC + ".end\n"},
     "c2.cir", ["--in", "V1", "--out", "nowhere"], None, ["nowhere", "node"]),
    ("--in without --out", {"c3.cir": HEAD + GOOD_AC + ".end\n"},
     "c3.cir", ["--in", "V1"], None, ["--in", "--out"]),
]


def run_case(chk, binary, label, files, netlist, args, prefix, words):
    d = tempfile.mkdtemp(prefix="ssac_bad_")
    chk.tmpdirs.append(d)
    for name, text in files.items():
        with open(os.path.join(d, name), "w") as f:
            f.write(text)
    cmd = [binary, "run", netlist, "-o", "out"] + args
    try:
        p = subprocess.run(cmd, cwd=d, capture_output=True, text=True, timeout=60)
        rc, err = p.returncode, p.stderr
    except subprocess.TimeoutExpired:
        rc, err = None, "(timed out)"
    first = err.strip().splitlines()[0] if err.strip() else ""
    chk.true("%s: exit code 2" % label, rc == 2, "exit code %r" % rc, SRC)
    # a leading "./" on an included file's name is accepted
    msg = first[2:] if first.startswith("./") else first
    if prefix is not None:
        ok = msg.startswith(prefix)
        chk.true("%s: message starts with %r" % (label, prefix), ok, "stderr: %r" % first, SRC)
    low = first.lower()
    missing = [w for w in words if w.lower() not in low]
    chk.true("%s: message names the fault (%s)" % (label, ", ".join(words)), not missing,
             "stderr: %r%s" % (first, "; missing: %s" % missing if missing else ""), SRC)


def main():
    binary = acref.binary_from_argv()
    chk = acref.Checker()
    for case in CASES:
        chk.guard(run_case, chk, binary, *case)
    chk.finish()


if __name__ == "__main__":
    main()
