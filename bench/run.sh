#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# Configures a Release build with the benchmarks, builds them, and runs the
# side-by-side suite (ratios (a)–(e) against their goals; the NumPy baseline of
# (b) is run from inside it with /usr/bin/python3), then the Google Benchmark
# micro-benchmarks.
#   bench/run.sh            full suite (about 5 minutes on 2 idle cores)
#   bench/run.sh --quick    smaller sizes, for a smoke run
# BUILD_DIR (default build-bench) and JOBS (default 2) can be set in the environment.
set -euo pipefail
root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
build="${BUILD_DIR:-$root/build-bench}"
jobs="${JOBS:-2}"

cmake -S "$root" -B "$build" -DCMAKE_BUILD_TYPE=Release -DSIGMATUBE_BUILD_BENCH=ON -DSIGMATUBE_BUILD_TESTS=OFF >/dev/null
cmake --build "$build" -j "$jobs" --target sigmatube_bench sigmatube_micro_bench sigmatube_adaptive_bench

echo "== machine =="
echo "cores: $(nproc); CPU: $(grep -m1 'model name' /proc/cpuinfo | cut -d: -f2 | sed 's/^ //')"
echo "memory: $(grep MemTotal /proc/meminfo | awk '{printf "%.1f GiB", $2/1048576}'); load: $(cut -d' ' -f1-3 /proc/loadavg)"

echo "== side-by-side suite =="
"$build/bench/sigmatube_bench" "$@"

echo "== micro-benchmarks =="
"$build/bench/sigmatube_micro_bench" --benchmark_min_time=0.2

echo "== many inputs, few active: adaptive surrogates =="
"$build/bench/sigmatube_adaptive_bench"
