#!/usr/bin/python3
"""The HTML report (--html FILE) of run, check and the studies: one self-contained page whose
numbers are the CSV files' numbers, whose names and titles are escaped, which is part of the
output set, and which a real browser renders without errors.

Usage: test_html.py PATH/TO/stagesim   (run from the repository root)
Prints one line per check and ends with `N passed, M failed, K skipped`; exits 1 if any check
failed, 77 if nothing could run.

Independent checks: the page is parsed with Python's html.parser, its numbers compared with
the CSV files read by Python's csv module; the worst cases of a study are found again here from
study.csv and the limits of check.csv; the browser is Debian's `chromium` (headless), its
screenshot decoded here with zlib and struct (PNG, ISO/IEC 15948) and its console log read from
its standard error. Without chromium the browser checks are skipped (install_deps.sh
--with-tools installs it).
"""
import csv
import hashlib
import html.parser
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

STAGESIM = os.path.abspath(sys.argv[1])
ROOT = os.getcwd()
VF = os.path.join(ROOT, "netlists", "vibration_frontend.cir")
VF_LIMITS = os.path.join(ROOT, "netlists", "vibration_frontend.limits")
passed = failed = skipped = 0


def check(name, ok, detail=""):
    global passed, failed
    if ok:
        passed += 1
        print("ok   " + name)
    else:
        failed += 1
        print("FAIL " + name + ("\n     " + str(detail) if detail else ""))


def skip(name, why):
    global skipped
    skipped += 1
    print("skip " + name + ": " + why)


def run(args, cwd=None, timeout=300):
    return subprocess.run([STAGESIM] + args, capture_output=True, text=True, errors="replace",
                          timeout=timeout, cwd=cwd)


def read_csv(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], rows[1:]


def labelled(path):
    """label -> {column: text} of a labelled CSV file."""
    head, rows = read_csv(path)
    return {r[0]: dict(zip(head[1:], r[1:])) for r in rows}


def manifest(folder):
    _, rows = read_csv(os.path.join(folder, "run_manifest.csv"))
    return dict((k, v) for k, v in rows)


def sha256(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


# ---- the page, parsed ---------------------------------------------------------------------

class Page(html.parser.HTMLParser):
    """Tables (heading -> rows of cells (text, data-v)), the title and h1 text, the number of
    inline svg roots, every attribute and tag seen."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables = {}
        self.heading = None
        self.in_h = None
        self.text = {"title": "", "h1": "", "h2": ""}
        self.cell = None
        self.row = None
        self.rows = None
        self.svg = 0
        self.tags = set()
        self.attrs = []
        self.banner = ""
        self.in_banner = 0
        self.warnings = []
        self.in_li = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.add(tag)
        self.attrs.extend(attrs)
        if tag in ("title", "h1", "h2"):
            self.in_h = tag
            if tag == "h2":
                self.text["h2"] = ""
        if tag == "svg":
            self.svg += 1
        if tag == "div" and a.get("id") == "verdict":
            self.in_banner = 1
        if tag == "li":
            self.in_li = ""
        if tag == "table":
            self.rows = []
            self.tables[self.heading] = self.rows
        if tag == "tr" and self.rows is not None:
            self.row = []
        if tag in ("td", "th") and self.row is not None:
            self.cell = ["", a.get("data-v"), a.get("class")]

    def handle_endtag(self, tag):
        if tag == self.in_h:
            if tag == "h2":
                self.heading = self.text["h2"]
            self.in_h = None
        if tag == "div" and self.in_banner:
            self.in_banner = 0
        if tag == "li" and self.in_li is not None:
            self.warnings.append(self.in_li)
            self.in_li = None
        if tag in ("td", "th") and self.cell is not None:
            self.row.append(tuple(self.cell))
            self.cell = None
        if tag == "tr" and self.row is not None:
            self.rows.append(self.row)
            self.row = None
        if tag == "table":
            self.rows = None

    def handle_data(self, data):
        if self.in_h:
            self.text[self.in_h] += data
        if self.cell is not None:
            self.cell[0] += data
        if self.in_banner:
            self.banner += data
        if self.in_li is not None:
            self.in_li += data


def parse_page(path):
    with open(path, "rb") as f:
        raw = f.read()
    text = raw.decode("utf-8")  # raises on invalid UTF-8
    p = Page()
    p.feed(text)
    p.close()
    p.raw = text
    return p


def table(page, heading):
    """{row label: {column: (text, data-v)}} of the table under heading."""
    rows = page.tables.get(heading)
    if not rows:
        return {}
    head = [c[0] for c in rows[0]]
    return {r[0][0]: {head[j]: (r[j][0], r[j][1]) for j in range(1, len(r))} for r in rows[1:]}


SI = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "\u00b5": 1e-6, "m": 1e-3, "": 1.0, "k": 1e3,
      "M": 1e6, "G": 1e9, "T": 1e12}
UNITS = ("Hz", "\u03a9", "dB", "%", "\u00b0C", "\u00b0", "V", "A", "S", "s", "W", "K")


def shown_value(text):
    """The number a rounded cell shows ("921.606 µA" -> 9.21606e-4), None for "-"."""
    t = text.strip()
    if t == "-":
        return None
    m = re.fullmatch(r"(-?[0-9.]+(?:e[-+][0-9]+)?)(?: (.*))?", t)
    if not m:
        raise ValueError("not a number cell: %r" % text)
    v, rest = float(m.group(1)), m.group(2) or ""
    for u in UNITS:
        if rest.endswith(u):
            prefix = rest[: -len(u)]
            if prefix in SI and u not in ("dB", "%", "\u00b0C", "\u00b0", "K"):
                return v * SI[prefix]
            return v
    return v


def same_number(csv_text, cell, what, rel=6e-6):
    """The cell's data-v is the CSV's text read as the same double, and its shown text rounds
    it (6 significant digits)."""
    text, exact = cell
    if csv_text == "":
        return exact == "" and text.strip() == "-", "%s: %r vs empty" % (what, cell)
    want = float(csv_text)
    if exact is None or exact == "" or float(exact) != want:
        return False, "%s: data-v %r, CSV %r" % (what, exact, csv_text)
    shown = shown_value(text)
    if text.strip().endswith("%") and "pass_fraction" in what:
        shown = shown / 100.0
    if shown is None or abs(shown - want) > rel * abs(want) + 1e-300:
        return False, "%s: shows %r, CSV %r" % (what, text, csv_text)
    return True, ""


def compare_table(name, page_tab, csv_path, skip_labels=()):
    head, rows = read_csv(csv_path)
    bad = []
    n = 0
    for r in rows:
        if r[0] in skip_labels:
            continue
        got = page_tab.get(r[0])
        if got is None:
            bad.append("row %r missing" % r[0])
            continue
        for col, v in zip(head[1:], r[1:]):
            if col == "pass" and v == "":  # a figure without limits: no verdict either side
                ok = got[col][1] in (None, "")
                detail = "%s %s" % (r[0], col)
            elif col == "pass":
                ok = got[col][1] is not None and float(got[col][1]) == float(v)
                detail = "%s %s" % (r[0], col)
            else:
                ok, detail = same_number(v, got[col], "%s %s" % (r[0], col))
            n += 1
            if not ok:
                bad.append(detail)
    check("%s: %d numbers equal %s" % (name, n, os.path.basename(csv_path)), not bad and n > 0,
          "; ".join(bad[:5]))


def self_contained(name, page):
    """No script, no external resource: nothing fetched, nothing run."""
    refs = [(k, v) for k, v in page.attrs
            if k in ("src", "href", "srcset", "action", "data", "xlink:href") or k.startswith("on")]
    bad_tags = page.tags & {"script", "link", "iframe", "object", "embed", "img", "base", "form"}
    urls = re.findall(r"url\(|@import|https?://(?!www\.w3\.org/2000/svg)", page.raw)
    check(name + ": self-contained (no script, no external reference)",
          not refs and not bad_tags and not urls, (refs, bad_tags, urls))


# ---- the browser --------------------------------------------------------------------------

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


def browser(path, png, width=1200, height=2400):
    """Renders path headless: the screenshot into png; returns (returncode, console messages
    that are errors, the full log)."""
    profile = tempfile.mkdtemp(prefix="ss_html_profile_")
    try:
        r = subprocess.run([CHROMIUM, "--headless", "--disable-gpu", "--no-sandbox",
                            "--enable-logging=stderr", "--v=0", "--user-data-dir=" + profile,
                            "--screenshot=" + png, "--window-size=%d,%d" % (width, height),
                            "file://" + os.path.abspath(path)],
                           capture_output=True, text=True, errors="replace", timeout=180)
    finally:
        shutil.rmtree(profile, ignore_errors=True)
    log = r.stderr
    # page errors: console messages of the page, resources that failed to load
    errors = [ln for ln in log.splitlines()
              if re.search(r"CONSOLE|Uncaught|net::ERR_|Failed to load resource|"
                           r"Refused to|Not allowed to load", ln)]
    return r.returncode, errors, log


def png_pixels(path):
    """(width, height, rows of (r, g, b) tuples) of an 8-bit RGB or RGBA PNG without
    interlace (what chromium writes)."""
    with open(path, "rb") as f:
        data = f.read()
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
    pos, idat, ihdr = 8, b"", None
    while pos < len(data):
        n, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + n]
        if kind == b"IHDR":
            ihdr = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat += body
        pos += 12 + n
    w, h, depth, ctype, _, _, interlace = ihdr
    assert depth == 8 and ctype in (2, 6) and interlace == 0, ihdr
    bpp = 3 if ctype == 2 else 4
    raw = zlib.decompress(idat)
    stride = w * bpp
    rows, prev = [], bytearray(stride)
    for y in range(h):
        ft = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        for i in range(stride):
            a = line[i - bpp] if i >= bpp else 0
            b = prev[i]
            c = prev[i - bpp] if i >= bpp else 0
            if ft == 1:
                line[i] = (line[i] + a) & 255
            elif ft == 2:
                line[i] = (line[i] + b) & 255
            elif ft == 3:
                line[i] = (line[i] + ((a + b) >> 1)) & 255
            elif ft == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pr = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[i] = (line[i] + pr) & 255
        rows.append(bytes(line))
        prev = line
    return w, h, bpp, rows


def picture_stats(path):
    """Fraction of pixels that are not white, and the number of distinct colours (sampled
    every 2nd pixel of every 2nd row)."""
    w, h, bpp, rows = png_pixels(path)
    non_white = total = 0
    colours = set()
    for y in range(0, h, 2):
        row = rows[y]
        for x in range(0, w, 2):
            px = row[x * bpp:x * bpp + 3]
            total += 1
            if px != b"\xff\xff\xff":
                non_white += 1
            colours.add(bytes(px))
    return non_white / max(total, 1), len(colours)


def render_checks(name, page_path, work, height=2400, min_colours=20):
    if not CHROMIUM:
        skip(name + ": rendered by chromium", "no chromium here (Debian package chromium; "
             "tests/install_deps.sh --with-tools)")
        return
    png = os.path.join(work, name.replace(" ", "_") + ".png")
    rc, errors, log = browser(page_path, png, height=height)
    check(name + ": chromium renders it (exit 0, a screenshot)", rc == 0 and os.path.exists(png),
          log[-800:])
    if not os.path.exists(png):
        return
    check(name + ": the page logs no console or load error", not errors, errors[:5])
    frac, ncol = picture_stats(png)
    print("     %s: %.1f %% of the screenshot not white, %d colours" % (name, 100 * frac, ncol))
    check(name + ": the screenshot is not blank (>= 3 %% not white, >= %d colours)" % min_colours,
          frac >= 0.03 and ncol >= min_colours, (frac, ncol))


def browser_self_test(work):
    """The detector catches what it must: a page that logs an error; a blank page is blank."""
    if not CHROMIUM:
        skip("browser self-test", "no chromium here")
        return
    bad = os.path.join(work, "bad.html")
    with open(bad, "w") as f:
        f.write("<!DOCTYPE html><html><body><p>x</p>"
                "<script>console.error('deliberate');</script></body></html>")
    rc, errors, log = browser(bad, os.path.join(work, "bad.png"), height=300)
    check("browser self-test: a console error of the page is seen", len(errors) >= 1,
          log[-800:])
    blank = os.path.join(work, "blank.html")
    with open(blank, "w") as f:
        f.write("<!DOCTYPE html><html><body></body></html>")
    browser(blank, os.path.join(work, "blank.png"), height=300)
    frac, ncol = picture_stats(os.path.join(work, "blank.png"))
    check("browser self-test: a blank page counts as blank", frac < 0.03 and ncol < 20,
          (frac, ncol))


# ---- the cases ----------------------------------------------------------------------------

# a netlist whose title and names hold markup characters, quotes, UTF-8 and one byte that is
# not UTF-8 (our own common-emitter buffer)
HOSTILE_TITLE = b"Buffer <b>&amp; \"quoted\" 'x' \xc3\xbc </title> \xff end"
HOSTILE = HOSTILE_TITLE + b"""
V1 vcc 0 12
Vs<&"> src 0 AC 1
Rs src in 1k
C1 in b 10u
R1 vcc b 56k
R2 b 0 10k
Q1 c b e ss_npn
Rc vcc c 5.6k
Re e 0 1k
Ce e 0 100u
C2 c out 10u
Rl out 0 100k
.model ss_npn npn (is=1e-14 bf=200)
.ac dec 10 10 1meg
.stage in=Vs<&"> out=out
.expect gain_mid_db >= 40
.expect v(c) 3 .. 5
.end
"""


def case_run(work):
    out = os.path.join(work, "run")
    page_path = os.path.join(out, "report.html")
    r = run(["run", VF, "-o", out, "--html", page_path, "-q"])
    check("run --html: exit 0", r.returncode == 0, r.stderr)
    if r.returncode != 0:
        return
    m = manifest(out)
    check("run --html: the page is in the manifest with its hash",
          m.get("file_sha256(report.html)") == sha256(page_path), m)
    svgs = sorted(n for n in os.listdir(out) if n.endswith(".svg"))
    check("run --html draws the plots --plot writes (bode.svg, thd_wave.svg)",
          "bode.svg" in svgs and "thd_wave.svg" in svgs, svgs)
    page = parse_page(page_path)
    check("run --html: one inline svg per .svg file of the set (%d)" % len(svgs),
          page.svg == len(svgs), (page.svg, svgs))
    check("run --html: the title is the netlist's",
          page.text["h1"].startswith("Vibration sensor front-end"), page.text["h1"])
    self_contained("run", page)
    compare_table("run: stage figures", table(page, "Stage figures"),
                  os.path.join(out, "stage_summary.csv"))
    compare_table("run: operating point", table(page, "Operating point"),
                  os.path.join(out, "op.csv"))
    compare_table("run: large signal", table(page, "Large signal"),
                  os.path.join(out, "large_signal.csv"))
    compare_table("run: noise", table(page, "Noise"), os.path.join(out, "noise_summary.csv"))
    # the same plots as --plot writes: the inline svg is the file's document
    r2 = run(["run", VF, "-o", os.path.join(work, "run_plot"), "--plot", "-q"])
    with open(os.path.join(work, "run_plot", "bode.svg")) as f:
        bode = f.read()
    body = bode[bode.index("<svg"):].rstrip()
    check("run --html: the Bode plot on the page is bode.svg of run --plot",
          r2.returncode == 0 and body in page.raw)
    render_checks("run page", page_path, work, height=4400, min_colours=40)


def case_hostile(work):
    cir = os.path.join(work, "hostile.cir")
    with open(cir, "wb") as f:
        f.write(HOSTILE)
    out = os.path.join(work, "hostile")
    page_path = os.path.join(work, "hostile page.html")  # outside the -o folder
    r = run(["check", cir, "-o", out, "--html", page_path, "-q"])
    check("check --html, a failing limit: exit 1", r.returncode == 1, r.stderr)
    if not os.path.exists(page_path):
        check("check --html: the page is written", False)
        return
    m = manifest(out)
    check("check --html outside the -o folder: the manifest names it by its path",
          m.get("file_sha256(%s)" % page_path) == sha256(page_path),
          [k for k in m if k.startswith("file_")])
    page = parse_page(page_path)
    want = HOSTILE_TITLE.decode("utf-8", errors="replace")
    check("escaped title: the text read back is the netlist's (U+FFFD for the stray byte)",
          page.text["h1"] == want and page.text["title"] == want,
          (page.text["h1"], want))
    check("escaped title: no markup of the title reaches the page",
          "<b>&amp;" not in page.raw and "</title> \ufffd" not in page.raw)
    ops = table(page, "Operating point")
    check("escaped names: the element name with <&\" survives as text", "i(vs<&\">)" in ops,
          sorted(ops)[:8])
    check("check --html: the banner says FAIL, 1 of 2 limits met",
          "FAIL" in page.banner and "1 of 2 limits met" in page.banner, page.banner)
    verdicts = table(page, "Verdicts")
    compare_table("check: verdicts with margins", verdicts, os.path.join(out, "check.csv"))
    check("check: the failing limit's cell says FAIL",
          verdicts.get("v(c)", {}).get("pass", ("",))[0] == "FAIL", verdicts.get("v(c)"))
    compare_table("check: figures", table(page, "Figures"), os.path.join(out, "figures.csv"))
    self_contained("check", page)
    render_checks("check page", page_path, work, height=1600)
    # the plots carry the title too (the SVG writer escapes it): the page still parses whole
    run_page = os.path.join(work, "hostile_run.html")
    r = run(["run", cir, "-o", os.path.join(work, "hostile_run"), "--html", run_page, "-q"])
    page = parse_page(run_page) if r.returncode == 0 else None
    check("run --html of the same netlist: the Bode plot inline, the title intact",
          page is not None and page.svg == 1 and page.text["h1"] == want, r.stderr)
    render_checks("hostile run page", run_page, work, height=2400)


def case_check_lint(work):
    """--strict: lint warnings are listed (marked lint) and fail the page."""
    cir = os.path.join(work, "lint.cir")
    with open(cir, "w") as f:
        f.write("Lint case: a node with one connection\nV1 a 0 5\nR1 a b 1k\nR2 b 0 1k\n"
                "R3 b dangling 1k\n.expect v(b) 2 .. 3\n.end\n")
    page_path = os.path.join(work, "lint.html")
    r = run(["check", cir, "--strict", "--html", page_path, "-q"])
    if not os.path.exists(page_path):
        check("check --strict --html: the page is written", False, r.stderr)
        return
    page = parse_page(page_path)
    lint = [w for w in page.warnings if w.startswith("lint ")]
    check("check --strict --html: the lint warning is listed as lint", len(lint) >= 1,
          page.warnings)
    check("check --strict --html: exit 1 and the banner says FAIL",
          r.returncode == 1 and "FAIL" in page.banner, (r.returncode, page.banner))


def case_spread(work):
    out = os.path.join(work, "spread")
    page_path = os.path.join(out, "spread.html")
    r = run(["spread", VF, "--tol", "R1=5%", "--tol", "R2=5%", "--trials", "60",
             "--limits", VF_LIMITS, "-o", out, "--html", page_path, "-q", "--threads", "2"])
    check("spread --html: exit 0", r.returncode == 0, r.stderr)
    if r.returncode != 0:
        return
    page = parse_page(page_path)
    compare_table("spread: summary", table(page, "Study summary"),
                  os.path.join(out, "study_summary.csv"), skip_labels=("all_limits",))
    summ = labelled(os.path.join(out, "study_summary.csv"))
    y = float(summ["all_limits"]["pass_fraction"])
    check("spread: the yield in the banner is study_summary.csv's",
          ("%.4g %%" % (100 * y)) in page.banner, page.banner)
    # the worst cases, found again from study.csv with the bounds check.csv lists
    chk = os.path.join(work, "spread_check")
    run(["check", VF, VF_LIMITS, "-o", chk, "-q"])
    bounds = labelled(os.path.join(chk, "check.csv"))
    head, rows = read_csv(os.path.join(out, "study.csv"))
    worst = table(page, "Worst cases against the limits")
    bad = []
    for q, b in bounds.items():
        lo = float(b["lower"]) if b["lower"] else -float("inf")
        hi = float(b["upper"]) if b["upper"] else float("inf")
        j = head.index(q)
        best = None
        for r_ in rows:
            v = float(r_[j]) if r_[j] else float("nan")
            mg = min(v - lo, hi - v) if v == v else -float("inf")
            if best is None or mg < best[0]:
                best = (mg, v, r_[0])
        got = worst.get(q)
        if not got:
            bad.append("no row %s" % q)
            continue
        if float(got["point"][1]) != float(best[2]) or float(got["measured"][1]) != best[1]:
            bad.append("%s: point %s value %s, expected %s %r" % (q, got["point"][1],
                                                                  got["measured"][1], best[2],
                                                                  best[1]))
        if abs(float(got["margin"][1]) - best[0]) > 1e-12 * max(1.0, abs(best[0])):
            bad.append("%s margin %s vs %r" % (q, got["margin"][1], best[0]))
        if float(got["pass_fraction"][1]) != float(summ[q]["pass_fraction"]):
            bad.append("%s pass fraction" % q)
    check("spread: worst point, value, margin and pass fraction of %d limits as found from "
          "study.csv" % len(bounds), not bad and len(worst) == len(bounds), bad[:4])
    self_contained("spread", page)
    render_checks("spread page", page_path, work, height=2400)


def case_sensitivity_snap(work):
    out = os.path.join(work, "sens")
    page_path = os.path.join(out, "s.html")
    r = run(["sensitivity", VF, "--tol", "R1=5%", "--tol", "RC=2%", "-o", out, "--html",
             page_path, "-q"])
    check("sensitivity --html: exit 0", r.returncode == 0, r.stderr)
    if r.returncode == 0:
        page = parse_page(page_path)
        compare_table("sensitivity: sensitivities", table(page, "Sensitivities"),
                      os.path.join(out, "sensitivity.csv"))
        compare_table("sensitivity: corners",
                      table(page, "Operating point at the spread and temperature extremes"),
                      os.path.join(out, "corners.csv"))
    out = os.path.join(work, "snap")
    page_path = os.path.join(out, "s.html")
    r = run(["snap", VF, "--series", "E24", "--limits", VF_LIMITS, "-o", out, "--html",
             page_path, "-q"])
    check("snap --html: exit 0", r.returncode == 0, r.stderr)
    if r.returncode == 0:
        page = parse_page(page_path)
        # the limits judged at the preferred values: snap_figures.csv's preferred column
        # against the bounds check.csv lists
        chk = os.path.join(work, "snap_check")
        run(["check", VF, VF_LIMITS, "-o", chk, "-q"])
        bounds = labelled(os.path.join(chk, "check.csv"))
        figs = labelled(os.path.join(out, "snap_figures.csv"))
        verdicts = table(page, "Limits at the preferred values")
        bad = []
        for q, b in bounds.items():
            got = verdicts.get(q)
            if not got:
                bad.append("no row " + q)
                continue
            v = float(figs[q]["preferred"])
            lo = float(b["lower"]) if b["lower"] else -float("inf")
            hi = float(b["upper"]) if b["upper"] else float("inf")
            for col, want in (("measured", v), ("margin", min(v - lo, hi - v)),
                              ("pass", 1.0 if lo <= v <= hi else 0.0)):
                if abs(float(got[col][1]) - want) > 1e-12 * max(1.0, abs(want)):
                    bad.append("%s %s %s vs %r" % (q, col, got[col][1], want))
            for col in ("lower", "upper"):
                ok, detail = same_number(b[col], got[col], q + " " + col)
                if not ok:
                    bad.append(detail)
        check("snap: %d limits judged at the preferred values (snap_figures.csv)" % len(bounds),
              not bad and len(verdicts) == len(bounds), bad[:4])
        compare_table("snap: values", table(page, "Resistors snapped to E24, capacitors to E12"),
                      os.path.join(out, "snap_values.csv"))
        compare_table("snap: figures", table(page, "Figures at the preferred values"),
                      os.path.join(out, "snap_figures.csv"))


def case_errors(work):
    out = os.path.join(work, "err")
    r = run(["run", VF, "-o", out, "--html", out + "/op.csv", "-q"])
    check("--html naming another output of the run: exit 2, both named",
          r.returncode == 2 and "--html" in r.stderr and "op.csv" in r.stderr, r.stderr)
    os.makedirs(os.path.join(work, "adir"), exist_ok=True)
    r = run(["run", VF, "-o", out, "--html", os.path.join(work, "adir"), "-q"])
    check("--html naming a folder: exit 2", r.returncode == 2 and "--html" in r.stderr, r.stderr)
    r = run(["merge", "--html", os.path.join(work, "m.html"), "x.csv"])
    check("merge refuses --html: exit 2", r.returncode == 2 and "--html" in r.stderr, r.stderr)
    r = run(["run", VF, "-o", out, "--html"])
    check("--html without a file: exit 2", r.returncode == 2, r.stderr)
    bad = os.path.join(work, "bad.cir")
    with open(bad, "w") as f:
        f.write("broken\nR1 a 0\n.end\n")
    page_path = os.path.join(work, "never.html")
    r = run(["run", bad, "--html", page_path, "-o", out, "-q"])
    check("a run that fails leaves no page", r.returncode == 2 and not os.path.exists(page_path),
          r.stderr)
    r = run(["run", "--help"])
    check("run --help lists --html", "--html FILE" in r.stdout, r.stdout[-400:])


def main():
    if not os.access(STAGESIM, os.X_OK):
        print("0 passed, 0 failed, 1 skipped (no stagesim binary)")
        sys.exit(77)
    work = tempfile.mkdtemp(prefix="ss_html_")
    try:
        browser_self_test(work)
        case_run(work)
        case_hostile(work)
        case_check_lint(work)
        case_spread(work)
        case_sensitivity_snap(work)
        case_errors(work)
    finally:
        if os.environ.get("SS_KEEP_HTML_TEST"):
            print("kept " + work)
        else:
            shutil.rmtree(work, ignore_errors=True)
    print(f"{passed} passed, {failed} failed, {skipped} skipped")
    sys.exit(1 if failed else 0)


main()
