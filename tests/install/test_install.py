"""The library installs like a C project: `cmake --install` into a temporary prefix, then the
library tour (examples/api_tour.c) is built against the installed files twice -- with the flags
pkg-config gives and with find_package(stagesim) -- and run on the vibration front-end; both
must print what the tour prints from the build tree, and its nominal mid-band gain must be the
installed command-line tool's (stage_summary.csv, gain_mid_db).
usage: test_install.py BUILD_DIR REPO_ROOT [--sanitized]
(--sanitized: a sanitizer build, whose shared library a plain program cannot load: skipped,
exit 77.)"""
import csv
import os
import re
import shutil
import subprocess
import sys
import tempfile

build, root = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
if "--sanitized" in sys.argv[3:]:
    print("skipped: a sanitizer build's libstagesim.so needs the sanitizer runtime loaded "
          "first; the release build runs this test")
    sys.exit(77)
netlist = os.path.join(root, "netlists", "vibration_frontend.cir")
tour = os.path.join(root, "examples", "api_tour.c")
fails = 0


def check(what, ok, detail=""):
    global fails
    print(("ok: " if ok else "FAIL: ") + what + ("" if ok else " -- " + detail))
    fails += 0 if ok else 1


def run(cmd, **kw):
    return subprocess.run(cmd, capture_output=True, text=True, timeout=600, **kw)


tmp = tempfile.mkdtemp(prefix="ss_install_")
try:
    prefix = os.path.join(tmp, "prefix")
    r = run(["cmake", "--install", build, "--prefix", prefix])
    check("cmake --install into a temporary prefix", r.returncode == 0, r.stderr)
    libdir = next((os.path.join(prefix, d) for d in ("lib", "lib64", "lib/x86_64-linux-gnu")
                   if os.path.exists(os.path.join(prefix, d, "pkgconfig", "stagesim.pc"))), None)
    check("stagesim.pc installed", libdir is not None)
    for rel in ("bin/stagesim", "include/stagesim/stagesim.h", "include/stagesim/core.h",
                "share/stagesim/models"):
        check(rel + " installed", os.path.exists(os.path.join(prefix, rel)))
    if libdir is None:
        sys.exit(1)
    sonames = [f for f in os.listdir(libdir) if re.fullmatch(r"libstagesim\.so\.\d+", f)]
    check("libstagesim.so with a versioned soname", len(sonames) == 1, str(os.listdir(libdir)))
    check("libstagesim.a installed", os.path.exists(os.path.join(libdir, "libstagesim.a")))
    env = dict(os.environ, LD_LIBRARY_PATH=libdir)
    # the manual pages: one per command, the netlist language, the library; every option a
    # command's --help lists is in its page; groff renders them without a warning
    mandir = os.path.join(prefix, "share", "man")
    pages = ["man1/stagesim.1", "man5/stagesim-netlist.5", "man3/stagesim.3"] + \
        ["man1/stagesim-%s.1" % c for c in ("run", "check", "sweep", "spread", "sensitivity",
                                            "snap", "merge", "draft", "refine")]
    for page in pages:
        path = os.path.join(mandir, page)
        if not os.path.exists(path):
            check(page + " installed", False)
            continue
        g = run(["groff", "-man", "-Tutf8", "-ww", "-z", path]) if shutil.which("groff") else None
        check(page + " installed and renders without a warning",
              g is None or (g.returncode == 0 and not g.stderr.strip()), g.stderr if g else "")
        m = re.match(r"man1/stagesim-(\w+)\.1", page)
        if m:
            helptext = run([os.path.join(prefix, "bin", "stagesim"), m.group(1), "--help"],
                           env=env).stdout
            text = open(path, encoding="utf-8").read().replace("\\-", "-")
            opts = set(re.findall(r"(?<![\w-])(--?[a-z][a-z-]*)", helptext.split("example:")[0]))
            missing = sorted(o for o in opts if o not in text)
            check("every option of %s --help in its page" % m.group(1), not missing,
                  str(missing))

    # the reference: the tour from the build tree
    ref = run([os.path.join(build, "tests", "api_tour"), netlist])
    check("the build tree's tour runs", ref.returncode == 0, ref.stderr)

    # 1. pkg-config
    pc = run(["pkg-config", "--cflags", "--libs", "stagesim"],
             env=dict(env, PKG_CONFIG_PATH=os.path.join(libdir, "pkgconfig")))
    check("pkg-config knows stagesim", pc.returncode == 0, pc.stderr)
    exe1 = os.path.join(tmp, "tour_pkgconfig")
    cc = run(["cc", "-std=c11", "-Wall", "-Wextra", "-Werror", tour, "-o", exe1, "-pthread"]
             + pc.stdout.split())
    check("the tour compiles with pkg-config's flags", cc.returncode == 0, cc.stderr)
    out1 = run([exe1, netlist], env=env) if cc.returncode == 0 else None
    check("the pkg-config build prints what the build tree's does",
          out1 is not None and out1.returncode == 0 and out1.stdout == ref.stdout,
          out1.stdout + out1.stderr if out1 else "")

    # 2. find_package
    bdir = os.path.join(tmp, "consumer")
    cfg = run(["cmake", "-S", os.path.join(root, "tests", "install", "consumer"), "-B", bdir,
               "-DCMAKE_PREFIX_PATH=" + prefix, "-DTOUR_SOURCE=" + tour])
    check("find_package(stagesim) configures", cfg.returncode == 0, cfg.stdout + cfg.stderr)
    bld = run(["cmake", "--build", bdir])
    check("the tour builds against stagesim::stagesim", bld.returncode == 0,
          bld.stdout + bld.stderr)
    out2 = run([os.path.join(bdir, "api_tour"), netlist], env=env) if bld.returncode == 0 else None
    check("the find_package build prints what the build tree's does",
          out2 is not None and out2.returncode == 0 and out2.stdout == ref.stdout,
          out2.stdout + out2.stderr if out2 else "")

    # 3. the installed tool's figure is the library's
    outdir = os.path.join(tmp, "run")
    cli = run([os.path.join(prefix, "bin", "stagesim"), "run", netlist, "-q", "-o", outdir],
              env=env)
    check("the installed stagesim runs the example", cli.returncode == 0, cli.stderr)
    if cli.returncode == 0 and ref.returncode == 0:
        with open(os.path.join(outdir, "stage_summary.csv")) as f:
            gain = {row[0]: row[1] for row in csv.reader(f)}["gain_mid_db"]
        lib_gain = re.search(r"mid-band gain ([-0-9.]+) dB", ref.stdout).group(1)
        check("mid-band gain: library %s dB, command line %s dB" % (lib_gain, gain),
              "%.3f" % float(gain) == lib_gain)
finally:
    shutil.rmtree(tmp, ignore_errors=True)
print("%d failed" % fails)
sys.exit(1 if fails else 0)
