"""Makes the manual pages from what the tool and the docs say, so they cannot drift apart:
stagesim(1) from `stagesim --help`, stagesim-COMMAND(1) from `stagesim COMMAND --help`,
stagesim-netlist(5) from docs/netlist.md and stagesim(3) from docs/api.md.
usage: mkman.py STAGESIM REPO_ROOT OUT_DIR   (writes OUT_DIR/man1, man3, man5)"""
import os
import re
import subprocess
import sys

COMMANDS = ["run", "check", "sweep", "spread", "sensitivity", "snap", "merge", "draft", "refine"]
SUMMARY = {
    "run": "solve a netlist's operating point and every analysis it asks for",
    "check": "judge a stage's figures against limits, with an exit code",
    "sweep": "solve a netlist over a grid of values or temperatures",
    "spread": "tolerance (Monte Carlo) run with the yield against limits",
    "sensitivity": "sensitivities of every figure to each tolerance, and transistor corners",
    "snap": "snap values to a preferred-value series and show what shifts",
    "merge": "join the shards of a study into the unsharded result",
    "draft": "write a first design of a stage from its requirements, by rules of thumb",
    "refine": "choose preferred values meeting every limit with the largest margin at corners",
}
SAFETY = ("Simulation does not replace bench verification. Mains and high-voltage work follows "
          "local codes and licensed practice; device power and ratings are the user's duty.")


def esc(text):
    """Text for roff: backslashes doubled, a leading dot or quote guarded, dashes kept."""
    text = text.replace("\\", "\\e")
    text = text.replace("-", "\\-")
    if text.startswith((".", "'")):
        text = "\\&" + text
    # every character outside ASCII as its Unicode escape: any troff reads the page as ASCII
    return "".join(c if ord(c) < 128 else "\\[u%04X]" % ord(c) for c in text)


def header(name, section, what, version):
    return ('.TH "%s" "%s" "" "stagesim %s" "%s"\n' % (name.upper(), section, version, what))


def help_text(stagesim, *args):
    r = subprocess.run([stagesim] + list(args) + ["--help"], capture_output=True, text=True,
                       timeout=60)
    if r.returncode != 0:
        sys.exit("mkman: %s %s --help failed: %s" % (stagesim, " ".join(args), r.stderr))
    return r.stdout


def literal(lines):
    """Lines shown as they are (fill off)."""
    out = [".PP", ".nf"]
    out += [esc(l) if l.strip() else "" for l in lines]
    out.append(".fi")
    return out


def command_page(stagesim, cmd, version):
    text = help_text(stagesim, cmd)
    blocks = text.rstrip("\n").split("\n\n")
    out = [header("stagesim-" + cmd, "1", "stagesim manual", version).rstrip("\n")]
    out += [".SH NAME", "stagesim\\-%s \\- %s" % (cmd, esc(SUMMARY[cmd]))]
    out += [".SH SYNOPSIS"] + literal(blocks[0].replace("usage: ", "", 1).split("\n"))
    for b in blocks[1:]:
        lines = b.split("\n")
        if lines[0].rstrip(":") in ("options", "example"):
            out.append(".SH " + ("OPTIONS" if lines[0].startswith("options") else "EXAMPLE"))
            if lines[0].startswith("options"):
                out += option_list(lines[1:])
            else:
                out += literal([l.strip() for l in lines[1:]])
        else:
            if not any(l.startswith(".SH DESCRIPTION") for l in out):
                out.append(".SH DESCRIPTION")
            out += [".PP", esc(" ".join(l.strip() for l in lines))]
    out += [".SH EXIT STATUS", "0 ok, 1 a check failed (a limit, the yield, --strict), 2 bad "
            "input (the message names the file, line and element, or the option), 3 no "
            "convergence.", ".SH NOTES", esc(SAFETY), ".SH SEE ALSO",
            "\\fBstagesim\\fR(1), \\fBstagesim\\-netlist\\fR(5), \\fBstagesim\\fR(3)"]
    return "\n".join(out) + "\n"


def option_list(lines):
    """`  -o, --out-dir DIR    text` lines (continuations indented deeper) as .TP items."""
    out, cur = [], None
    for l in lines:
        m = re.match(r"  (\S.*?)\s{2,}(\S.*)$", l)
        if m and not l.startswith("    "):
            cur = [m.group(1), m.group(2)]
            out += [".TP", "\\fB" + esc(cur[0]) + "\\fR", esc(cur[1])]
        elif l.strip():
            out.append(esc(l.strip()))
    return out


def main_page(stagesim, version):
    text = help_text(stagesim)
    blocks = text.rstrip("\n").split("\n\n")
    out = [header("stagesim", "1", "stagesim manual", version).rstrip("\n"),
           ".SH NAME", "stagesim \\- operating point, stage figures, noise and studies of "
           "transistor amplifier stages from a netlist", ".SH SYNOPSIS"]
    out += literal(blocks[0].replace("usage: ", "", 1).split("\n"))
    out += [".SH DESCRIPTION", ".PP", esc(
        "stagesim reads a SPICE-style netlist (stagesim-netlist(5)), solves its operating point "
        "with Gummel-Poon transistor models, sweeps it in frequency and writes the stage's "
        "figures (gain, input and output impedance, corners), noise, transient and large-signal "
        "figures as CSV files, judges them against limits with an exit code CI can act on, and "
        "runs sweeps and tolerance studies. Each command has its own page:")]
    out += [".PP", ", ".join("\\fBstagesim\\-%s\\fR(1)" % c for c in COMMANDS) + "."]
    for b in blocks[1:]:
        lines = b.split("\n")
        if lines[0].startswith("options"):
            out += [".SH OPTIONS", ".PP", esc(lines[0])]
            out += option_list(lines[1:])
        elif lines[0].startswith("exit:"):
            out += [".SH EXIT STATUS", esc(" ".join(l.strip() for l in lines))]
        else:
            out += [".PP", esc(" ".join(l.strip() for l in lines))]
    out += [".SH NOTES", esc(SAFETY), ".SH SEE ALSO",
            ", ".join("\\fBstagesim\\-%s\\fR(1)" % c for c in COMMANDS)
            + ", \\fBstagesim\\-netlist\\fR(5), \\fBstagesim\\fR(3)"]
    return "\n".join(out) + "\n"


def inline(text):
    """Markdown inline forms to roff: `code` bold, **strong** bold, [text](link) text."""
    text = re.sub(r"\[([^\]]+)\]\([^)]+\)", r"\1", text)
    text = esc(text)
    text = re.sub(r"`([^`]+)`", r"\\fB\1\\fR", text)
    text = re.sub(r"\*\*([^*]+)\*\*", r"\\fB\1\\fR", text)
    return text


def markdown_page(path, name, section, what, version, title):
    lines = open(path, encoding="utf-8").read().split("\n")
    out = [header(name, section, what, version).rstrip("\n"), ".SH NAME",
           esc(name) + " \\- " + esc(title), ".SH DESCRIPTION"]
    para, i = [], 0

    def flush():
        if para:
            out.extend([".PP", inline(" ".join(para))])
            para.clear()

    while i < len(lines):
        l = lines[i]
        if l.startswith("```"):
            flush()
            j = i + 1
            while j < len(lines) and not lines[j].startswith("```"):
                j += 1
            out += literal(lines[i + 1:j])
            i = j + 1
            continue
        if l.startswith("    ") and not para:
            j = i
            while j < len(lines) and (lines[j].startswith("    ") or not lines[j].strip()):
                j += 1
            block = [x[4:] for x in lines[i:j]]
            while block and not block[-1].strip():
                block.pop()
            out += literal(block)
            i = j
            continue
        m = re.match(r"(#+) (.*)", l)
        if m:
            flush()
            level = len(m.group(1))
            if level > 1:
                out.append((".SH " if level == 2 else ".SS ") + inline(m.group(2)).upper()
                           if level == 2 else ".SS " + inline(m.group(2)))
        elif l.startswith("|"):
            flush()
            cells = [c.strip() for c in l.strip("|").split("|")]
            if not all(re.fullmatch(r":?-+:?", c) for c in cells if c):
                out += [".TP", inline(cells[0]), inline(" \\(em ".join(cells[1:]))
                        if len(cells) > 1 else ""]
        elif re.match(r"\s*([-*]|\d+\.) ", l):
            flush()
            item = re.sub(r"\s*([-*]|\d+\.) ", "", l, count=1)
            j = i + 1
            while j < len(lines) and lines[j].startswith("  ") and lines[j].strip() and \
                    not re.match(r"\s*([-*]|\d+\.) ", lines[j]):
                item += " " + lines[j].strip()
                j += 1
            out += [".IP \\(bu 2", inline(item)]
            i = j
            continue
        elif not l.strip():
            flush()
        else:
            para.append(l.strip())
        i += 1
    flush()
    out += [".SH NOTES", esc(SAFETY)]
    return "\n".join(out) + "\n"


def main():
    stagesim, root, outdir = sys.argv[1], sys.argv[2], sys.argv[3]
    version = subprocess.run([stagesim, "--version"], capture_output=True,
                             text=True).stdout.split()[-1]
    pages = {("man1", "stagesim.1"): main_page(stagesim, version)}
    for c in COMMANDS:
        pages[("man1", "stagesim-%s.1" % c)] = command_page(stagesim, c, version)
    pages[("man5", "stagesim-netlist.5")] = markdown_page(
        os.path.join(root, "docs", "netlist.md"), "stagesim-netlist", "5",
        "stagesim file formats", version, "the netlist language of stagesim")
    pages[("man3", "stagesim.3")] = markdown_page(
        os.path.join(root, "docs", "api.md"), "stagesim", "3", "stagesim library", version,
        "the stagesim C library: circuits, solver contexts, analyses, sinks")
    for (sub, name), text in pages.items():
        os.makedirs(os.path.join(outdir, sub), exist_ok=True)
        with open(os.path.join(outdir, sub, name), "w", encoding="utf-8") as f:
            f.write(text)


if __name__ == "__main__":
    main()
