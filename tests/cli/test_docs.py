#!/usr/bin/env python3
"""The documentation is true: every stagesim command that README.md and docs/*.md show runs,
exits as the page says, and printed or wrote every number the page quotes after it.

Usage: test_docs.py STAGESIM (run from the repository root). One line per check, then
"N passed, M failed"; exit 1 on a failure.

How a page shows commands (the rules this test reads them by):
- Commands live in code blocks: indented by four spaces, or fenced with ```. A command in
  running text (`stagesim run x.cir -o out`) is a failure: put it in a block, where it is run.
- A block is a command block when a line starts with `$ `, `stagesim `, `./build/stagesim `
  or `bash `, or runs stagesim through another program (`parallel stagesim ...`, a loop).
- With `$ ` prompts, every `$ ` line is a command and the lines up to the next prompt are its
  output as the page quotes it; `...` stands for lines left out (at the start, between, at the
  end). Without prompts every line is a command or a `#` comment; `for ...; do` runs to its
  `done`. A line ending in `\\` continues on the next.
- A command exits 0 unless it ends in `# exit N`.
- A synopsis line (with NETLIST, COMMAND, SHARD.csv or [optional] parts) is not run: its
  command must exist and take every option shown, by its own --help.
- A fenced block ending in `.end` is a complete netlist: it is saved in netlists/ and run.
- A command the test cannot run as written has an entry in MAPPED below saying what is run
  instead and why; a command it does not know how to run is a failure.

How they run: in a temporary copy of the repository (so `-o out/...` lands there), with the
binary under test first on PATH as `stagesim` and as ./build/stagesim; the pages in a fixed
order, the blocks of a page in page order (a later `cat` reads what an earlier command wrote),
each command once.

How the output is compared: the quoted lines and the printed lines (standard output, then
standard error, or the file a `cat` shows) are split into text and numbers. The text must be
the same (runs of spaces count as one); every number must equal the printed one to the digits
the page shows (the printed value rounded to the last digit shown gives the quoted one). Blank
lines are ignored.

Besides the commands: the option table of docs/cli.md against what each command accepts, and
every directive the netlist parser accepts (src/netlist/parser.c) against docs/netlist.md."""
import os
import re
import shutil
import subprocess
import sys
import tempfile

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
os.chdir(ROOT)
PAGES = ["README.md"] + sorted(os.path.join("docs", f) for f in os.listdir("docs")
                               if f.endswith(".md"))
COMMANDS = ["run", "check", "sweep", "spread", "sensitivity", "snap", "merge", "draft", "refine"]
TIMEOUT_S = 600

passed = failed = 0
# what the pages show, by how it was checked
counts = {"as written": 0, "mapped": 0, "not run": 0, "synopsis": 0, "netlist": 0}


def check(name, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print(f"ok   {name}")
    else:
        failed += 1
        print(f"FAIL {name}" + (f": {detail}" if detail else ""))


# ---- commands the test runs in another form, each with the reason ----------------------------
#
# The key is the command as the page writes it (continuation lines joined with one space). The
# value: why it cannot run as written, and a function giving the shell commands run instead.
# When a page changes such a command, its key no longer matches and the test fails until the
# mapping is brought up to date.

def _sub(text, old, new):
    """text with old replaced by new; old must be there (else the mapping is stale)."""
    if old not in text:
        raise KeyError(f"'{old}' is not in the command any more")
    return text.replace(old, new)


def _demo(_text):
    # demo.sh installs packages and builds, then runs the example; run its stagesim lines (the
    # build is the binary under test) and check the files its last line promises.
    with open(os.path.join("netlists", "demo.sh")) as f:
        lines = f.read().splitlines()
    cmds = [ln for ln in lines if ln.startswith("./build/stagesim ")]
    promised = next(ln for ln in lines if ln.startswith('echo "results in '))
    folder, names = re.match(r'echo "results in (\S+): (.*)"', promised).groups()
    tests = [f"ls {folder}{n} >/dev/null" for n in names.split()]
    return cmds + tests


def _parallel(text):
    # 100 000 trials would take minutes: the same command with 800 trials (100 per shard).
    # Without GNU parallel installed, the eight stagesim lines it would start, one by one.
    # (The page's "across hosts" variant, parallel --sshlogin, starts these same lines.)
    text = _sub(text, "--trials 100000", "--trials 800")
    if shutil.which("parallel"):
        return [_sub(text, "parallel ", "parallel --will-cite ")]
    cmd, args = text[len("parallel "):].split(" ::: ")
    return [cmd.replace("{}", k) for k in args.split()]


def _slurm(text):
    # A Slurm array job: the same command once per array task (SLURM_ARRAY_TASK_ID = 1..32,
    # SLURM_CPUS_PER_TASK = 4 as the #SBATCH lines ask), with 3 200 trials instead of 10^6.
    text = _sub(text, "--trials 1000000", "--trials 3200")
    return [f"export SLURM_CPUS_PER_TASK=4 SLURM_ARRAY_TASK_ID={k}\n{text}"
            for k in range(1, 33)]


MAPPED = {
    "bash netlists/demo.sh":
        ("installs and builds first; its stagesim lines are run", _demo),
    "bash tests/run_all.sh":
        ("the whole test suite, which runs this test: not run from here", lambda t: []),
    'cmake -S . -B build -DSTAGESIM_TESTS=OFF && cmake --build build -j':
        ("the build is what made the binary under test", lambda t: []),
    'export PATH="$PWD/build:$PATH"':
        ("the test puts the binary under test first on PATH itself", lambda t: []),
    "parallel stagesim spread netlists/vibration_frontend.cir --tol R1=5% --tol R2=5% "
    "--tol ss_npn.bf=100..300 --limits netlists/vibration_frontend.limits --trials 100000 "
    "--seed 7 --shard {}/8 -o out/shard{} -q ::: 1 2 3 4 5 6 7 8":
        ("100 000 trials take minutes: 800", _parallel),
    'stagesim spread netlists/vibration_frontend.cir --tol R1=5% --tol R2=5% '
    '--tol ss_npn.bf=100..300 --limits netlists/vibration_frontend.limits --trials 1000000 '
    '--seed 7 --threads "$SLURM_CPUS_PER_TASK" --shard "$SLURM_ARRAY_TASK_ID/32" '
    '-o "out/shard$SLURM_ARRAY_TASK_ID" -q':
        ("a Slurm array job: its 32 tasks run one by one, 3 200 trials instead of 10^6",
         _slurm),
}

# programs a page may run besides stagesim (reading what stagesim wrote)
SHELL_OK = {"cat", "head", "tail", "grep", "mkdir", "ls", "sha256sum", "cmp", "diff", "wc", "cut"}


# ---- reading the pages ----------------------------------------------------------------------

def code_blocks(path):
    """(first line number, [lines], fenced) of every fenced or four-space-indented block."""
    with open(path, encoding="utf-8") as f:
        lines = f.read().split("\n")
    blocks, i = [], 0
    while i < len(lines):
        ln = lines[i]
        if ln.lstrip().startswith("```"):
            j = i + 1
            while j < len(lines) and not lines[j].lstrip().startswith("```"):
                j += 1
            blocks.append((i + 2, lines[i + 1:j], True))
            i = j + 1
            continue
        if ln.startswith("    ") and ln.strip() and (i == 0 or not lines[i - 1].strip()):
            j = i
            while j < len(lines) and (lines[j].startswith("    ") or not lines[j].strip()):
                j += 1
            body = [x[4:] for x in lines[i:j]]
            while body and not body[-1].strip():
                body.pop()
            blocks.append((i + 1, body, False))
            i = j
            continue
        i += 1
    return blocks


RUNS_STAGESIM = re.compile(r"(^|\s)(\./build/)?stagesim\s+(run|check|sweep|spread|sensitivity|"
                           r"snap|merge|help|--)")


def is_command_block(body):
    for ln in body:
        if re.match(r"(\$ |(\./build/)?stagesim\s|bash\s)", ln) or RUNS_STAGESIM.search(ln):
            return True
    return False


def looks_like_output(body):
    """A block quoting what stagesim prints or writes, with no command to produce it."""
    for ln in body:
        if re.match(r"(quantity|metric|freq_hz|point|source|harmonic|time_s)[ ,]+[a-z_]+", ln):
            return True
        if re.match(r"(Node voltages|Transistors|Stage: input source|Diodes)$", ln.strip()):
            return True
    return False


def join_continued(body, first_line):
    """[(line number, text)] with `\\` continuations joined (one space between the parts)."""
    out, i = [], 0
    while i < len(body):
        text, n = body[i].rstrip(), first_line + i
        while text.endswith("\\") and i + 1 < len(body):
            i += 1
            text = text[:-1].rstrip() + " " + body[i].strip()
        out.append((n, text))
        i += 1
    return out


def is_synopsis(cmd):
    return bool(re.search(r"\bNETLIST\b|\bCOMMAND\b|SHARD\.csv|\[", cmd))


def parse_block(page, first_line, body):
    """Items of a command block: ("run", line, command, quoted output lines, exit code),
    ("synopsis", line, text), ("bad", line, text, why)."""
    items = []
    if any(ln.startswith("$ ") for ln in body):
        lines = join_continued(body, first_line)
        cur = None
        for n, text in lines:
            if text.startswith("$ "):
                cur = ["run", n, text[2:].strip(), [], 0]
                items.append(cur)
            elif cur is None:
                if text.strip():
                    items.append(("bad", n, text, "a line before the first $ command"))
            else:
                cur[3].append(text)
        return [tuple(x) for x in items]
    lines = join_continued(body, first_line)
    i = 0
    while i < len(lines):
        n, text = lines[i]
        s = text.strip()
        if not s or s.startswith("#"):
            i += 1
            continue
        if re.match(r"(\./build/)?stagesim\s", s) and is_synopsis(s):
            # a synopsis continues on deeper-indented lines without a backslash
            while i + 1 < len(lines) and lines[i + 1][1].startswith((" ", "\t")) \
                    and lines[i + 1][1].strip():
                i += 1
                s += " " + lines[i][1].strip()
            items.append(("synopsis", n, s))
        elif s.startswith("for ") and s.endswith("; do"):
            j = i
            while j < len(lines) and lines[j][1].strip() != "done":
                j += 1
            loop = "\n".join(t for _, t in lines[i:j + 1])
            items.append(("run", n, loop, [], 0))
            i = j
        else:
            items.append(("run", n, s, [], 0))
        i += 1
    return items


# ---- comparing quoted output with printed output --------------------------------------------

NUM = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")


def split_numbers(line):
    """(text with each number replaced by #, [number strings]); runs of spaces as one."""
    nums = NUM.findall(line)
    text = " ".join(NUM.sub("#", line).split())
    return text, nums


def number_matches(quoted, printed):
    """printed, rounded to the last digit quoted shows, is quoted."""
    m = re.fullmatch(r"[-+]?(\d*)\.?(\d*)(?:[eE]([-+]?\d+))?", quoted)
    decimals = len(m.group(2)) if "." in quoted else 0
    exponent = int(m.group(3)) if m.group(3) else 0
    q, p = float(quoted), float(printed)
    half = 0.5 * 10.0 ** (exponent - decimals)
    return abs(p - q) <= half * (1 + 1e-9) + 1e-300


def line_matches(quoted, printed):
    tq, nq = split_numbers(quoted)
    tp, np_ = split_numbers(printed)
    if tq != tp or len(nq) != len(np_):
        return False, None
    bad = [f"{a} (printed {b})" for a, b in zip(nq, np_) if not number_matches(a, b)]
    return not bad, bad


def compare_output(quoted, printed):
    """None when every quoted line is printed in order, else what differs."""
    quoted = [q for q in quoted if q.strip()]
    printed = [p for p in printed if p.strip()]
    segments, cur = [], []
    lead_gap = bool(quoted) and quoted[0].strip() == "..."
    tail_gap = bool(quoted) and quoted[-1].strip() == "..."
    for q in quoted:
        if q.strip() == "...":
            if cur:
                segments.append(cur)
            cur = []
        else:
            cur.append(q)
    if cur:
        segments.append(cur)
    pos = 0
    for k, seg in enumerate(segments):
        may_skip = lead_gap if k == 0 else True
        starts = range(pos, len(printed) - len(seg) + 1) if may_skip else \
            ([pos] if pos + len(seg) <= len(printed) else [])
        found = None
        for s in starts:
            if all(line_matches(q, printed[s + t])[0] for t, q in enumerate(seg)):
                found = s
                break
        if found is None and not may_skip:
            # the quote starts with the output: name the first line that differs
            for t, q in enumerate(seg):
                if pos + t >= len(printed):
                    return f"'{q.strip()}': nothing more is printed"
                ok, bad = line_matches(q, printed[pos + t])
                if not ok:
                    return f"'{q.strip()}': printed '{printed[pos + t].strip()}'" + \
                        (f": {', '.join(bad)}" if bad else " (mark lines left out with ...)")
        if found is None:
            # explain with the first quoted line that has no match where it should be
            for t, q in enumerate(seg):
                cands = [p for p in printed[pos:] if split_numbers(p)[0] == split_numbers(q)[0]]
                if not cands:
                    return f"'{q.strip()}' is not printed" + \
                        (f" (next printed line: '{printed[pos].strip()}')"
                         if pos < len(printed) else " (nothing more printed)")
                ok, bad = line_matches(q, cands[0])
                if not ok:
                    return f"'{q.strip()}': printed '{cands[0].strip()}'" + \
                        (f": {', '.join(bad)}" if bad else "")
            return f"the lines from '{seg[0].strip()}' are not printed together in this order"
        pos = found + len(seg)
    if segments and not tail_gap and pos != len(printed):
        return f"printed more than quoted (from '{printed[pos].strip()}'); end the quote with ..."
    return None


# ---- running --------------------------------------------------------------------------------

def first_lines(text, n=3):
    return " | ".join(text.strip().split("\n")[:n])


def run_shell(cmd, cwd, env):
    try:
        return subprocess.run(["bash", "-c", "set -o pipefail\n" + cmd], cwd=cwd, env=env,
                              capture_output=True, text=True, timeout=TIMEOUT_S)
    except subprocess.TimeoutExpired:
        return subprocess.CompletedProcess(cmd, -1, "", f"no end after {TIMEOUT_S} s")


def help_text(cmd, cwd, env):
    r = subprocess.run([STAGESIM, cmd, "--help"], cwd=cwd, env=env, capture_output=True,
                       text=True, timeout=60)
    return r.returncode, r.stdout


def check_synopsis(where, text, cwd, env):
    words = text.split()
    if words[0].endswith("stagesim"):
        words = words[1:]
    sub = words[0] if words else ""
    if sub == "COMMAND":
        for c in COMMANDS:
            for argv in ([c, "--help"], ["help", c]):
                r = subprocess.run([STAGESIM] + argv, cwd=cwd, env=env, capture_output=True,
                                   text=True, timeout=60)
                check(f"{where}: stagesim {' '.join(argv)} exits 0 with the usage of {c}",
                      r.returncode == 0 and r.stdout.startswith(f"usage: stagesim {c} "),
                      r.stderr.strip())
        return
    if sub not in COMMANDS:
        check(f"{where}: synopsis of a command stagesim has", False, f"'{sub}' in '{text}'")
        return
    rc, usage = help_text(sub, cwd, env)
    options = re.findall(r"(?<![\w-])(--?[a-z][a-z-]*)", text)
    missing = [o for o in options if not re.search(rf"(?<![\w-]){re.escape(o)}\b", usage)]
    check(f"{where}: stagesim {sub} takes every option its synopsis shows ({len(options)})",
          rc == 0 and not missing, f"not in `stagesim {sub} --help`: {missing}")


def check_out_dir(where, short, cmd):
    """A command that writes files writes them under out/ (kept out of git by .gitignore)."""
    for m in re.finditer(r"(?:^|[\s;])(?:\./build/)?stagesim\s+(\S+)", cmd):
        if m.group(1) in COMMANDS and "--help" not in cmd:
            check(f"{where}: {short}: writes under out/ (-o out/...)",
                  re.search(r"""(-o|--out-dir)\s+["']?out/""", cmd) is not None)
            return


def run_item(page, item, cwd, env):
    kind, n = item[0], item[1]
    where = f"{page}:{n}"
    if kind == "bad":
        check(f"{where}: {item[2]}", False, item[3])
        return
    if kind == "synopsis":
        counts["synopsis"] += 1
        check_synopsis(where, item[2], cwd, env)
        return
    _, _, cmd, quoted, _ = item
    want = 0
    m = re.search(r"\s+#\s*exit\s+(\d+)\s*$", cmd)
    if m:
        want, cmd = int(m.group(1)), cmd[:m.start()]
    cmd = re.sub(r"\s{2,}#\s.*$", "", cmd)  # a trailing comment, set off by two spaces
    short = cmd.split("\n")[0]
    short = short if len(short) <= 90 else short[:87] + "..."
    first = cmd.split()[0]
    if cmd in MAPPED:
        why, fn = MAPPED[cmd]
        try:
            cmds = fn(cmd)
        except KeyError as e:
            check(f"{where}: {short}: mapping up to date", False, str(e))
            return
        counts["mapped" if cmds else "not run"] += 1
        check_out_dir(where, short, cmd)
        for c in cmds:
            r = run_shell(c, cwd, env)
            if r.returncode != 0:
                check(f"{where}: {short}: run as [{why}]: {c[:80]} exits 0", False,
                      f"exit {r.returncode}: {first_lines(r.stderr)}")
                return
        check(f"{where}: {short}: run as [{why}]: {len(cmds)} command(s) exit 0", True)
        if quoted:
            check(f"{where}: {short}: quoted output", False, "a mapped command cannot quote it")
        return
    check_out_dir(where, short, cmd)
    known = (first in ("stagesim", "./build/stagesim", "for") or first in SHELL_OK)
    if not known:
        check(f"{where}: {short}: the test knows how to run it", False,
              f"'{first}' is neither stagesim nor a mapped command (add it to MAPPED)")
        return
    counts["as written"] += 1
    r = run_shell(cmd, cwd, env)
    check(f"{where}: {short}: exit {want}", r.returncode == want,
          f"exit {r.returncode}: {first_lines(r.stderr)}")
    if quoted and any(q.strip() for q in quoted):
        printed = r.stdout.split("\n") + r.stderr.split("\n")
        why = compare_output(quoted, printed)
        count = sum(len(split_numbers(q)[1]) for q in quoted if q.strip() != "...")
        check(f"{where}: {short}: prints the {count} numbers quoted", why is None, why or "")


def inline_commands(page):
    """Commands written in running text, outside any block."""
    with open(page, encoding="utf-8") as f:
        text = f.read()
    text = re.sub(r"```.*?```", "", text, flags=re.S)
    found = []
    for span in re.findall(r"`([^`\n]+)`", text):
        if re.match(r"(\./build/)?stagesim (run|check|sweep|spread|sensitivity|snap|merge|draft) "
                    r"\S+\.cir\b", span):
            found.append(span)
    return found


# ---- the option table of docs/cli.md --------------------------------------------------------

VALUES = {"DIR": "out/probe", "NAME=VALUE": "r1=1k", "SRC": "vsens", "NODE": "out",
          "OHMS": "1k", "A,B,...": "out", "HZ": "1k", "AMP": "0.1", "PCT": "1",
          "FILE": "out/probe.txt", "F": "0.5", "N": "2", "S": "1", "K/N": "1/2",
          "LO,HI": "-40,85", "E12\\|E24\\|E96": "E12",
          "E6\\|E12\\|E24\\|E48\\|E96\\|E192": "E12", "F1..F2": "1..1k", "a\\|none": "a",
          "VOLTS": "12", "AMPS": "1m", "GAIN": "10",
          "E6\\|E12\\|E24\\|E48\\|E96\\|E192\\|none": "E12",
          "X,Y,...": "q1"}
SPEC = {"--vary": "r1=list:1k", "--tol": "r1=5%", "--supply-tol": "vcc=10%",
        "--beta-range": "0.5x,2x", "--match": "r1,r2=0.5"}


def check_option_table(cwd, env):
    with open(os.path.join("docs", "cli.md"), encoding="utf-8") as f:
        text = f.read()
    sect = text.split("## Which command takes which option", 1)[1].split("\n## ", 1)[0]
    rows = [ln for ln in sect.splitlines() if ln.startswith("| `")]
    header = next(ln for ln in sect.splitlines() if ln.startswith("| Option"))
    cmds = [c.strip() for c in header.strip("|").split("|")[1:]]
    check("docs/cli.md option table: one column per command", cmds == COMMANDS, str(cmds))
    seen = set()
    for row in rows:
        cells = [c.strip() for c in row.strip().strip("|").split("|")]
        # `E12\|E24\|E96` holds escaped bars: rejoin the first cell
        while len(cells) > len(cmds) + 1:
            cells[0:2] = [cells[0] + "|" + cells[1]]
        opts = re.findall(r"`([^`]+)`", cells[0])
        for spec in opts:
            words = spec.split()
            opt = words[0]
            seen.add(opt)
            val = SPEC.get(opt) or (VALUES.get(words[1]) if len(words) > 1 else None)
            if len(words) > 1 and val is None:
                check(f"docs/cli.md option table: a probe value for {spec}", False)
                continue
            for c, mark in zip(cmds, cells[1:]):
                argv = [STAGESIM, c, "no_such_netlist.cir", opt] + ([val] if val else [])
                if c == "merge":
                    argv = [STAGESIM, c, opt] + ([val] if val else []) + ["no_such.csv"]
                r = subprocess.run(argv, cwd=cwd, env=env, capture_output=True, text=True,
                                   timeout=60)
                refused = re.search(r"belongs to|unknown option|does not take", r.stderr)
                if opt in ("--help", "-h"):
                    refused = r.returncode != 0
                takes = mark == "✓"
                check(f"docs/cli.md option table: {c} {'takes' if takes else 'refuses'} {opt}",
                      takes != bool(refused), r.stderr.strip().split("\n")[0])
    # every option of every command's --help is in the table
    for c in COMMANDS:
        _, usage = help_text(c, cwd, env)
        body = usage.split("options:", 1)[1].split("\n\n", 1)[0]
        listed = set(re.findall(r"^\s+(--?[a-z][a-z-]*)(?:,\s*(--?[a-z][a-z-]*))?", body, re.M))
        listed = {o for pair in listed for o in pair if o}
        check(f"docs/cli.md option table: lists every option of `stagesim {c} --help`",
              listed <= seen, str(sorted(listed - seen)))


# ---- the directives of the netlist parser against docs/netlist.md ---------------------------

def check_directives():
    # the parser's table of directives (src/netlist/directives.c), and .include (the reader's)
    with open(os.path.join("src", "netlist", "directives.c"), encoding="utf-8") as f:
        src = f.read()
    body = src.split("static const directive_def DIRECTIVES[] = {", 1)[1].split("\n};\n", 1)[0]
    names = set(re.findall(r'\{"(\.[a-z_]+)",', body)) | {".include"}
    check("the parser's directive table was found", len(names) > 10, str(sorted(names)))
    with open(os.path.join("docs", "netlist.md"), encoding="utf-8") as f:
        doc = f.read()
    headings = set(re.findall(r"^### .*?`(\.[a-z_]+)`", doc, re.M)) | \
        set(re.findall(r"^### `[^`]*` / `(\.[a-z_]+)`", doc, re.M))
    aliases = {".option": ".options", ".end": None}  # .end: section 1's table of line rules
    for d in sorted(names):
        if d in aliases:
            ok = f"`{d}`" in doc
            check(f"docs/netlist.md mentions {d}", ok)
        else:
            check(f"docs/netlist.md has a section for {d}", d in headings)


# ---- complete netlists the pages show ------------------------------------------------------

def run_netlist(page, first, body, cwd, env):
    """A fenced block ending in .end is a complete netlist: saved in netlists/ (where its
    .include paths point from), it runs and raises no warning."""
    name = f"doc_{os.path.basename(page)[:-3]}_{first}"
    with open(os.path.join(cwd, "netlists", name + ".cir"), "w") as f:
        f.write("\n".join(body) + "\n")
    r = subprocess.run([STAGESIM, "run", f"netlists/{name}.cir", "-o", f"out/{name}", "-q"],
                       cwd=cwd, env=env, capture_output=True, text=True, timeout=TIMEOUT_S)
    check(f"{page}:{first}: the netlist shown runs (exit 0, no warning)",
          r.returncode == 0 and not r.stderr.strip(),
          f"exit {r.returncode}: {first_lines(r.stderr)}")
    counts["netlist"] += 1


# ---- the plot docs/stage.md shows -----------------------------------------------------------

def check_bode_image(cwd, env):
    """docs/img/vibration_frontend_bode.svg is what --plot draws for that example today."""
    r = subprocess.run([STAGESIM, "run", "netlists/vibration_frontend.cir", "-o", "out/img",
                        "--plot", "-q"], cwd=cwd, env=env, capture_output=True, text=True,
                       timeout=TIMEOUT_S)
    with open(os.path.join(cwd, "docs", "img", "vibration_frontend_bode.svg"), "rb") as f:
        shown = f.read()
    drawn = b""
    if r.returncode == 0:
        with open(os.path.join(cwd, "out", "img", "bode.svg"), "rb") as f:
            drawn = f.read()
    check("docs/img/vibration_frontend_bode.svg is the bode.svg of "
          "`stagesim run netlists/vibration_frontend.cir --plot`", shown == drawn,
          f"exit {r.returncode}" if r.returncode else "the files differ: copy the new plot")


# ---- main -----------------------------------------------------------------------------------

def main():
    with tempfile.TemporaryDirectory(prefix="stagesim-docs-") as tmp:
        repo = os.path.join(tmp, "repo")

        def ignore(folder, names):
            if os.path.abspath(folder) == ROOT:
                return [n for n in names if n.startswith("build") or n in ("out", ".git")]
            return [n for n in names if n == "__pycache__"]

        shutil.copytree(ROOT, repo, ignore=ignore, symlinks=True)
        bindir = os.path.join(tmp, "bin")
        os.makedirs(bindir)
        os.symlink(STAGESIM, os.path.join(bindir, "stagesim"))
        os.makedirs(os.path.join(repo, "build"))
        os.symlink(STAGESIM, os.path.join(repo, "build", "stagesim"))
        env = dict(os.environ)
        env["PATH"] = bindir + os.pathsep + env.get("PATH", "")

        for page in PAGES:
            for span in inline_commands(page):
                check(f"{page}: `{span}` is in a code block, where this test runs it", False,
                      "a command in running text is not run")
            for first, body, fenced in code_blocks(page):
                if fenced and body and body[-1].strip().lower() == ".end":
                    run_netlist(page, first, body, repo, env)
                    continue
                if not is_command_block(body):
                    if looks_like_output(body):
                        check(f"{page}:{first}: output quoted right after the command that "
                              "prints it", False, f"'{body[0].strip()}' has no command")
                    continue
                for item in parse_block(page, first, body):
                    run_item(page, item, repo, env)
        shown = ", ".join(f"{v} {k}" for k, v in counts.items())
        check(f"the pages show commands ({shown})", counts["as written"] > 0)
        check_bode_image(repo, env)
        check_option_table(repo, env)
    check_directives()


main()
print(f"{passed} passed, {failed} failed")
sys.exit(1 if failed else 0)
