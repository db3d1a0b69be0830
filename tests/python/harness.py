"""What the Python tests share: their arguments (the library, the tool, --sanitized), the skip
in a sanitizer build, the package imported from the source tree without writing bytecode, and
the ok/FAIL lines with their count."""
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def setup(argv):
    """(LIB, STAGESIM) from argv; exits 77 (skipped) for a sanitizer build's library, which
    needs its runtime loaded first -- python3 does not do that. Makes `import stagesim` load
    the given library from the source tree's package."""
    lib = os.path.abspath(argv[1])
    tool = os.path.abspath(argv[2]) if len(argv) > 2 else None
    if "--sanitized" in argv[3:]:
        print("skipped: the Python binding does not load a sanitizer build's library")
        sys.exit(77)
    os.environ["STAGESIM_LIB"] = lib
    sys.dont_write_bytecode = True  # nothing written into the source tree
    sys.path.insert(0, os.path.join(ROOT, "python"))
    return lib, tool


class Checks:
    """One line per check; `done()` prints "N passed, M failed" and exits 1 on a failure."""

    def __init__(self):
        self.passed = self.failed = 0

    def __call__(self, name, ok, detail=""):
        self.passed += bool(ok)
        self.failed += not ok
        print(("ok   " if ok else "FAIL ") + name + ("" if ok or not detail else ": " + detail))

    def done(self):
        print(f"{self.passed} passed, {self.failed} failed")
        sys.exit(1 if self.failed else 0)
