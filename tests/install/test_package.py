"""The Debian package: `cpack -G DEB` in the build folder makes stagesim_VERSION_ARCH.deb,
whose control file declares the run-time libraries (dpkg-shlibdeps: KLU and SuiteSparse's
config library, the C library) and which holds the tool, the shared and static library, the
headers, pkg-config and CMake files, the manual pages and the model cards; its tool, unpacked,
runs. (Installing it with `apt-get install ./stagesim_*.deb` was done by hand on Debian 12; a
test does not change the machine's packages.) Skipped (exit 77) where dpkg-deb or cpack is
missing, and in a sanitizer build.
usage: test_package.py BUILD_DIR [--sanitized]"""
import os
import shutil
import subprocess
import sys
import tempfile

build = os.path.abspath(sys.argv[1])
if "--sanitized" in sys.argv[2:]:
    print("skipped: a sanitizer build is not packaged; the release build runs this test")
    sys.exit(77)
for tool in ("cpack", "dpkg-deb"):
    if not shutil.which(tool):
        print("skipped: %s is not installed (Debian: cmake, dpkg)" % tool)
        sys.exit(77)
fails = 0


def check(what, ok, detail=""):
    global fails
    print(("ok: " if ok else "FAIL: ") + what + ("" if ok else " -- " + detail))
    fails += 0 if ok else 1


tmp = tempfile.mkdtemp(prefix="ss_deb_")
try:
    r = subprocess.run(["cpack", "-G", "DEB", "-B", tmp], cwd=build, capture_output=True,
                       text=True, timeout=600)
    debs = [f for f in os.listdir(tmp) if f.startswith("stagesim_") and f.endswith(".deb")]
    check("cpack -G DEB makes one stagesim_*.deb", r.returncode == 0 and len(debs) == 1,
          r.stdout[-500:] + r.stderr[-500:])
    if debs:
        deb = os.path.join(tmp, debs[0])
        info = subprocess.run(["dpkg-deb", "-f", deb, "Depends"], capture_output=True,
                              text=True).stdout
        for lib in ("libklu1", "libsuitesparseconfig5", "libc6"):
            check("Depends names " + lib, lib in info, info)
        files = subprocess.run(["dpkg-deb", "-c", deb], capture_output=True, text=True).stdout
        for f in ("usr/bin/stagesim", "usr/lib/libstagesim.so.0", "usr/lib/libstagesim.a",
                  "usr/include/stagesim/core.h", "usr/lib/pkgconfig/stagesim.pc",
                  "usr/lib/cmake/stagesim/stagesimConfig.cmake",
                  "usr/share/man/man1/stagesim-run.1", "usr/share/man/man5/stagesim-netlist.5",
                  "usr/share/stagesim/models/"):
            check("the package holds " + f, "./" + f in files)
        root = os.path.join(tmp, "root")
        subprocess.run(["dpkg-deb", "-x", deb, root], check=True)
        v = subprocess.run([os.path.join(root, "usr", "bin", "stagesim"), "--version"],
                           capture_output=True, text=True)
        check("the packaged tool runs: " + v.stdout.strip(),
              v.returncode == 0 and v.stdout.startswith("stagesim "), v.stderr)
finally:
    shutil.rmtree(tmp, ignore_errors=True)
print("%d failed" % fails)
sys.exit(1 if fails else 0)
