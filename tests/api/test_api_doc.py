"""docs/api.md is true: every C excerpt it shows is in examples/api_tour.c, and the program's
output on the vibration front-end is the output the doc prints.
usage: test_api_doc.py API_TOUR_BINARY REPO_ROOT"""
import os
import re
import subprocess
import sys

tour, root = sys.argv[1], sys.argv[2]
doc = open(os.path.join(root, "docs", "api.md"), encoding="utf-8").read()
src = open(os.path.join(root, "examples", "api_tour.c"), encoding="utf-8").read()
fails = 0

for block in re.findall(r"```c\n(.*?)```", doc, re.S):
    if block not in src:
        print("FAIL: a C excerpt of docs/api.md is not in examples/api_tour.c:\n" + block)
        fails += 1

shown = re.findall(r"```text\n(.*?)```", doc, re.S)
r = subprocess.run([tour, os.path.join("netlists", "vibration_frontend.cir")], cwd=root,
                   capture_output=True, text=True, timeout=120)
if r.returncode != 0:
    print("FAIL: api_tour exit %d: %s" % (r.returncode, r.stderr))
    fails += 1
elif len(shown) != 1 or shown[0] != r.stdout:
    print("FAIL: api_tour printed\n%s\nbut docs/api.md shows\n%s" % (r.stdout, shown))
    fails += 1
else:
    print("ok: docs/api.md excerpts and output match the program")
sys.exit(1 if fails else 0)
