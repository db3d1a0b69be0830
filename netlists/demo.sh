#!/usr/bin/env bash
# Installs what is needed, builds stagesim and runs the vibration-sensor front-end example:
# the report goes to the terminal, the CSV files and the Bode plot to out/demo/.
set -euo pipefail
cd "$(dirname "$0")/.."
bash tests/install_deps.sh
cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
cmake --build build -j"$(nproc 2>/dev/null || echo 2)" >/dev/null
./build/stagesim run netlists/vibration_frontend.cir -o out/demo --plot
echo
echo "results in out/demo/: op.csv ac.csv stage.csv stage_summary.csv bode.svg noise*.csv noise.svg large_signal.csv harmonics.csv thd_wave.svg"
