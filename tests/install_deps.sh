#!/usr/bin/env bash
# Installs the Debian packages stagesim needs to build and test (Debian 12 names).
# Skips apt entirely when everything is already there; uses sudo when not run as root.
set -euo pipefail
PKGS=(build-essential cmake pkg-config libsuitesparse-dev libcmocka-dev python3 python3-numpy python3-scipy)
# the test suite also runs the examples under valgrind, shards a run with GNU parallel and
# renders the HTML report in headless chromium (tests/cli/test_html.py)
# (--with-slurm: also a one-node Slurm cluster for the cluster test, tests/cluster/)
for opt in "$@"; do
    case "$opt" in
        --with-tools) PKGS+=(valgrind parallel chromium) ;;
        --with-slurm) PKGS+=(slurm-wlm munge) ;;
        *) echo "install_deps.sh: unknown option '$opt' (--with-tools, --with-slurm)" >&2; exit 2 ;;
    esac
done
missing=()
for p in "${PKGS[@]}"; do
    dpkg -s "$p" >/dev/null 2>&1 || missing+=("$p")
done
[ ${#missing[@]} -eq 0 ] && exit 0
SUDO=""
[ "$(id -u)" -ne 0 ] && SUDO="sudo"
echo "installing: ${missing[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
