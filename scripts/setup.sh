#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# Installs what is missing on Debian 12, builds sigmatube, then either runs the
# main job on the bundled demo case (`demo`, the default) or the whole test
# suite (`test`). Idempotent; works as root or through sudo.
#   bash scripts/setup.sh demo
#   bash scripts/setup.sh test
set -euo pipefail

mode="${1:-demo}"
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${SIGMATUBE_BUILD_DIR:-$root/build}"
jobs="$(nproc 2>/dev/null || echo 2)"

packages=(cmake g++ make libeigen3-dev libboost-dev libhdf5-dev libcli11-dev libtomlplusplus-dev
          libmuparser-dev libgtest-dev libbenchmark-dev python3-scipy python3-h5py hdf5-tools
          openmpi-bin libopenmpi-dev pybind11-dev python3-pybind11 python3-dev python3-numpy python3-pytest
          chromium-headless-shell)
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if ((${#missing[@]})); then
  echo "setup: installing ${missing[*]}" >&2
  sudo_cmd=()
  [[ "$(id -u)" -ne 0 ]] && sudo_cmd=(sudo)
  "${sudo_cmd[@]}" apt-get update -qq
  DEBIAN_FRONTEND=noninteractive "${sudo_cmd[@]}" apt-get install -y -qq --no-install-recommends "${missing[@]}" >/dev/null
fi

cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Release >/dev/null
cmake --build "$build" -j "$jobs"

case "$mode" in
  demo)
    mkdir -p "$root/out"
    cd "$root"
    "$build/sigmatube" run cases/inspection-approach/case.toml -o out/inspection-approach.h5 --force
    ;;
  test)
    cd "$build"
    ctest --output-on-failure -j "$jobs"
    ;;
  *)
    echo "usage: bash scripts/setup.sh [demo|test]" >&2
    exit 2
    ;;
esac
