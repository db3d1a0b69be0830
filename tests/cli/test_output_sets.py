#!/usr/bin/python3
"""The files of one run form one set: written together or not at all, named with their hashes in
run_manifest.csv, never interleaved with another run's, never left half-written by a signal; and
merge takes only shards that add up to one study.

Usage: test_output_sets.py PATH/TO/stagesim   (run from the repository root)
Prints one line per check and `N passed, M failed`; exits 1 if any check failed.

Independent checks: file hashes with Python's hashlib (SHA-256, FIPS PUB 180-4), XML
well-formedness with xml.dom.minidom, the lock with fcntl.flock.
"""
import csv
import fcntl
import hashlib
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time
import xml.dom.minidom

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.getcwd()
VF = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
passed = failed = 0


def check(name, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print("ok   " + name)
    else:
        failed += 1
        print("FAIL " + name + ("\n     " + detail if detail else ""))


def run(args, cwd=None, timeout=120):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, errors="replace",
                          timeout=timeout, cwd=cwd)


def manifest(folder):
    with open(os.path.join(folder, "run_manifest.csv"), newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], dict((k, v) for k, v in rows[1:])


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def snapshot(folder):
    return {n: open(os.path.join(folder, n), "rb").read() for n in sorted(os.listdir(folder))}


def write(path, text, mode="w"):
    with open(path, mode) as f:
        f.write(text)


tmp = tempfile.mkdtemp(prefix="ss_outsets_")

# ---- a run's manifest ------------------------------------------------------------------------
out = os.path.join(tmp, "run")
r = run(["run", VF, "-o", out, "-q", "--plot"])
check("run exits 0", r.returncode == 0, r.stderr)
head, m = manifest(out)
check("manifest header is key,value", head == ["key", "value"], str(head))
check("manifest names the command and the netlist", m.get("command") == "run" and
      m.get("netlist") == VF, str(m))
files = sorted(k[len("file_sha256("):-1] for k in m if k.startswith("file_sha256("))
on_disk = sorted(n for n in os.listdir(out) if n != "run_manifest.csv")
check("manifest lists exactly the files written", files == on_disk, f"{files} vs {on_disk}")
check("every listed file has the SHA-256 hashlib computes",
      all(m["file_sha256(%s)" % n] == sha256(os.path.join(out, n)) for n in files))
inputs = {k[len("input_sha256("):-1]: v for k, v in m.items() if k.startswith("input_sha256(")}
check("the netlist and its .include are listed with their SHA-256",
      len(inputs) == 2 and all(sha256(p) == h for p, h in inputs.items()), str(inputs))
check("no lock, staged or temporary file left", not any(
    n.startswith(".") or ".tmp" in n for n in os.listdir(out)), str(os.listdir(out)))

# ---- a run that fails after the operating point leaves the old set as it was ----------------
before = snapshot(out)
bad = os.path.join(tmp, "bad.cir")
write(bad, open(VF).read().replace(".end", "") +
      ".dc vcc 0 12 1e-4 vsens 0 1 1e-4\n.end\n")
r = run(["run", bad, "-o", out, "-q"])
check("a run failing after its operating point exits 2", r.returncode == 2, r.stderr)
check("... and the folder holds the earlier run's set, byte for byte", snapshot(out) == before,
      str(sorted(snapshot(out))))

# ---- fewer outputs this time: the earlier run's extra files go -------------------------------
r = run(["run", VF, "-o", out, "-q"])
names = sorted(os.listdir(out))
check("a rerun without --plot removes the earlier bode.svg and thd_wave.svg",
      r.returncode == 0 and "bode.svg" not in names and "thd_wave.svg" not in names, str(names))
write(os.path.join(out, "notes.txt"), "mine\n")
run(["run", VF, "-o", out, "-q", "--plot"])
run(["run", VF, "-o", out, "-q"])
check("a file of the user's own in the folder stays", os.path.exists(os.path.join(out, "notes.txt")))

# ---- two outputs to one file ----------------------------------------------------------------
out2 = os.path.join(tmp, "chk")
os.mkdir(out2)
lim = os.path.join(ROOT, "netlists", "vibration_frontend.limits")
r = run(["check", VF, lim, "-o", out2, "--junit", os.path.join(out2, "check.csv")])
check("check --junit onto check.csv is refused with exit 2",
      r.returncode == 2 and "is the same file as check.csv" in r.stderr, r.stderr)
check("... before anything is written", os.listdir(out2) == [], str(os.listdir(out2)))
r = run(["check", VF, lim, "-o", out2, "--junit", os.path.join(out2, "run_manifest.csv")])
check("--junit onto the run's own manifest is refused",
      r.returncode == 2 and "run_manifest.csv" in r.stderr, r.stderr)
r = run(["check", VF, lim, "--junit", os.path.join(tmp, "nosuchdir", "j.xml")])
check("--junit into a missing folder is refused before solving",
      r.returncode == 2 and "does not exist" in r.stderr, r.stderr)

# ---- the folder's lock ----------------------------------------------------------------------
out3 = os.path.join(tmp, "locked")
os.mkdir(out3)
fd = os.open(os.path.join(out3, ".stagesim.lock"), os.O_RDWR | os.O_CREAT)
fcntl.flock(fd, fcntl.LOCK_EX)
r = run(["run", VF, "-o", out3, "-q"])
check("a run into a folder another run holds exits 2 naming it",
      r.returncode == 2 and "is being written by another stagesim run" in r.stderr, r.stderr)
check("... and writes nothing there", os.listdir(out3) == [".stagesim.lock"],
      str(os.listdir(out3)))
os.close(fd)
r = run(["run", VF, "-o", out3, "-q"])
check("once released, the folder is usable", r.returncode == 0, r.stderr)

# ---- a signal in the middle of a long AC sweep -----------------------------------------------
ladder = os.path.join(tmp, "ladder.cir")
lines = ["RC ladder of a long cable model", "V1 n0 0 DC 1 AC 1"]
for i in range(20000):
    lines += [f"R{i} n{i} n{i + 1} 100", f"C{i} n{i + 1} 0 1n"]
lines.append(".ac dec 200 1 1e9")
write(ladder, "\n".join(lines) + "\n")
for sig in (signal.SIGINT, signal.SIGTERM):
    out4 = os.path.join(tmp, "sig%d" % sig)
    os.mkdir(out4)
    p = subprocess.Popen([STAGESIM, "run", ladder, "-o", out4, "-q"], stderr=subprocess.PIPE)
    deadline = time.time() + 60
    while time.time() < deadline and not any(".tmp." in n for n in os.listdir(out4)):
        time.sleep(0.05)
    time.sleep(0.3)  # the temporary ac.csv is growing
    p.send_signal(sig)
    p.wait(timeout=60)
    left = os.listdir(out4)
    check(f"signal {sig} mid-sweep ends the run by that signal", p.returncode == -sig,
          str(p.returncode))
    check(f"... and leaves no temporary, staged or lock file", left == [], str(left))

# ---- text that is not UTF-8 in XML outputs -----------------------------------------------------
os.makedirs(os.path.join(tmp, "netlists"))
shutil.copytree(os.path.join(ROOT, "models"), os.path.join(tmp, "models"))
latin = os.path.join(tmp, "netlists", "latin1.cir")
write(latin, b"Geophon-Vorverst\xe4rker \xb5V\n" + open(VF, "rb").read().split(b"\n", 1)[1],
      "wb")
out5 = os.path.join(tmp, "latin")
r = run(["run", latin, "-o", out5, "-q", "--plot"])
ok = r.returncode == 0
try:
    xml.dom.minidom.parse(os.path.join(out5, "bode.svg"))
    xml.dom.minidom.parse(os.path.join(out5, "thd_wave.svg"))
except Exception as e:  # noqa: BLE001 -- any parse error is the failure
    ok = False
    r.stderr += str(e)
check("a Latin-1 title gives well-formed SVG plots", ok, r.stderr)
latnode = os.path.join(tmp, "latnode.cir")
write(latnode, b"node names\nV1 in 0 DC 1\nR1 in n\xe4 1k\nR2 n\xe4 0 1k\n"
      b".expect v(n\xe4) 0.4 .. 0.6\n.end\n", "wb")
junit = os.path.join(tmp, "latnode.xml")
r = run(["check", latnode, "--junit", junit])
ok = r.returncode == 0
try:
    doc = xml.dom.minidom.parse(junit)
    name = doc.getElementsByTagName("testcase")[0].getAttribute("name")
    ok = ok and name == "v(n\ufffd)"
except Exception as e:  # noqa: BLE001
    ok = False
    r.stderr += str(e)
check("a node name that is not UTF-8 gives well-formed JUnit XML (U+FFFD in its place)", ok,
      r.stderr)

# ---- a plot that cannot be drawn costs the plot, not the run ---------------------------------
held = os.path.join(tmp, "held.cir")
write(held, "stage output held by a source\nV1 in 0 DC 0 AC 1\nR1 in b 1k\nV2 b 0 5\n"
      ".ac dec 5 10 1k\n.stage in=V1 out=b\n")
out6 = os.path.join(tmp, "held")
r = run(["run", held, "-o", out6, "-q", "--plot"])
names = sorted(os.listdir(out6)) if os.path.isdir(out6) else []
check("--plot on a gain of -inf dB warns and exits 0",
      r.returncode == 0 and "warning: no bode.svg" in r.stderr, r.stderr)
check("... with every CSV written and no plot",
      "stage.csv" in names and "bode.svg" not in names, str(names))

# ---- merge takes only shards that add up to one study ----------------------------------------
sh = os.path.join(tmp, "shards")
base = ["spread", VF, "--tol", "R1=5%", "--trials", "90", "--seed", "7", "-q"]
for k in (1, 2, 3):
    r = run(base + ["--shard", f"{k}/3", "-o", os.path.join(sh, f"s{k}")])
    check(f"shard {k}/3 runs", r.returncode == 0, r.stderr)
r = run(base + ["-o", os.path.join(sh, "all")])
S = [os.path.join(sh, f"s{k}", "study.csv") for k in (1, 2, 3)]
r = run(["merge", "-o", os.path.join(sh, "m"), "-q"] + S)
check("the three shards merge", r.returncode == 0, r.stderr)
check("... into the unsharded run's study.csv, byte for byte",
      open(os.path.join(sh, "m", "study.csv"), "rb").read() ==
      open(os.path.join(sh, "all", "study.csv"), "rb").read())
_, mm = manifest(os.path.join(sh, "m"))
_, ma = manifest(os.path.join(sh, "all"))
same = {k: v for k, v in mm.items() if k not in ("command", "arguments")}
check("... with the unsharded run's manifest but for command and arguments",
      same == {k: v for k, v in ma.items() if k not in ("command", "arguments")})


def attack(name, make, expect):
    folder = os.path.join(sh, "x_" + str(abs(hash(name))))
    paths = make(folder)
    r = run(["merge", "-o", os.path.join(sh, "mx"), "-q"] + paths)
    ok = r.returncode == 2 and expect in r.stderr
    check("merge refuses " + name, ok, r.stderr)
    check("... and writes no study.csv", not os.path.exists(os.path.join(sh, "mx", "study.csv")))


def tampered(edit):
    def make(folder):
        shutil.copytree(os.path.join(sh, "s3"), folder)
        p = os.path.join(folder, "study.csv")
        data = open(p, "rb").read()
        write(p, edit(data), "wb")
        return S[:2] + [p]
    return make


attack("a shard that lost its last rows",
       tampered(lambda d: b"\n".join(d.split(b"\n")[:-4]) + b"\n"), "not as its run wrote it")
attack("a shard cut in the middle of a number", tampered(lambda d: d[:-9]),
       "not as its run wrote it")
attack("a typed-in nan", tampered(lambda d: d.replace(b",", b",nan,", 1)),
       "not as its run wrote it")


def other_run(extra, shard="3/3"):
    def make(folder):
        a = list(base)
        for i in range(0, len(extra), 2):
            if extra[i] in a:
                a[a.index(extra[i]) + 1] = extra[i + 1]
            else:
                a += extra[i:i + 2]
        run(a + ["--shard", shard, "-o", folder])
        return S[:2] + [os.path.join(folder, "study.csv")]
    return make


attack("a shard of another seed", other_run(["--seed", "8"]), "seed differs")
attack("a shard of another trial count", other_run(["--trials", "91"]), "trials differs")
attack("a shard with another tolerance", other_run(["--tol", "R1=6%"]), "another study")
attack("a shard with another --set", other_run(["--set", "r2=39k"]), "another study")
attack("a shard of another N", other_run([], "3/4"), "the shards of one study share N")


def edited_netlist(folder):
    """The same study on a netlist with one value changed (its include beside it, as the
    original has it)."""
    os.makedirs(os.path.join(folder, "netlists"))
    shutil.copytree(os.path.join(ROOT, "models"), os.path.join(folder, "models"))
    net = os.path.join(folder, "netlists", "vibration_frontend.cir")
    write(net, open(VF).read().replace("R2    b 0 10k", "R2    b 0 10.1k"))
    a = list(base)
    a[1] = net
    run(a + ["--shard", "3/3", "-o", os.path.join(folder, "o")])
    return S[:2] + [os.path.join(folder, "o", "study.csv")]


attack("a shard of an edited netlist", edited_netlist, "another study")
attack("a missing shard", lambda f: S[:2], "shard 3 of 3 is missing")
attack("a shard given twice", lambda f: S + [S[1]], "again")


def no_manifest(folder):
    os.makedirs(folder)
    shutil.copy(S[2], folder)
    return S[:2] + [os.path.join(folder, "study.csv")]


attack("a shard without its manifest", no_manifest, "no run_manifest.csv beside it")
limf = os.path.join(tmp, "typo.limits")
write(limf, "gain_mid_db >= 10\ngain_db @ 100 >= 3\n")
r = run(["merge", "-o", os.path.join(sh, "ml"), "--limits", limf, "-q"] + S)
check("merge --limits on a column the shards never computed exits 2 naming the line",
      r.returncode == 2 and "typo.limits:2: limit on 'gain_db@100'" in r.stderr, r.stderr)

shutil.rmtree(tmp, ignore_errors=True)
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
