#!/usr/bin/env bash
# Installs what is needed, builds stagesim twice (optimised, and with address + undefined-
# behaviour sanitizers) and runs the whole test suite in both. Exit status: 0 all green.
set -euo pipefail
cd "$(dirname "$0")/.."
bash tests/install_deps.sh --with-tools
JOBS=$(nproc 2>/dev/null || echo 2)

echo "== build: release =="
cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo -DSTAGESIM_TESTS=ON >/dev/null
cmake --build build -j"$JOBS"
echo "== tests: release =="
(cd build && ctest --output-on-failure -j"$JOBS")

echo "== build: sanitizers (ASan + UBSan) =="
cmake -S . -B build-sanitize -DCMAKE_BUILD_TYPE=Debug -DSTAGESIM_SANITIZE=ON -DSTAGESIM_TESTS=ON >/dev/null
cmake --build build-sanitize -j"$JOBS"
echo "== tests: sanitizers =="
(cd build-sanitize && ASAN_OPTIONS=detect_leaks=1:abort_on_error=1 \
    UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 ctest --output-on-failure -j"$JOBS")
