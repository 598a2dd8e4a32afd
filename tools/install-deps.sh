#!/usr/bin/env bash
# Installs every Debian package knotpath's build, tests, benchmarks and docs
# use. Idempotent: packages already present are not fetched again, and the
# package lists are refreshed only when something is missing.
set -euo pipefail

packages=(
  g++ cmake make
  libeigen3-dev libboost-dev libgmp-dev libmpfr-dev
  libgtest-dev libbenchmark-dev
  libcli11-dev libfmt-dev nlohmann-json3-dev zlib1g-dev
  libtinyxml2-dev libpng-dev librsvg2-bin pkg-config
  chromium  # headless: tests/browser_report.py renders the select report
  python3 python3-cvxopt python3-numpy doxygen
  python3-dev pybind11-dev python3-pytest python3-pandas python3-scipy  # the Python module (python/)
  clang libclang-rt-14-dev
  libopenmpi-dev openmpi-bin  # MPI: tables spread over the processes of a job
)

missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "install-deps: all ${#packages[@]} packages present"
  exit 0
fi
SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
echo "install-deps: installing ${missing[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
