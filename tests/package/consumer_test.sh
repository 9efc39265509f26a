#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# The installed CMake package, used as a practitioner would: installs the build
# into a temporary prefix, builds tests/package/consumer (find_package(sigmatube),
# target_link_libraries(... sigmatube::sigmatube)) against it, runs it on a case
# and compares its numbers with the command line's JSON summary of the same run.
#   consumer_test.sh BUILD_DIR SOURCE_DIR SIGMATUBE_CLI
set -euo pipefail
build=$1
src=$2
cli=$3
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

cmake --install "$build" --prefix "$work/prefix" >/dev/null
launcher=()
command -v ccache >/dev/null 2>&1 && launcher=(-DCMAKE_CXX_COMPILER_LAUNCHER=ccache)
cmake -S "$src/tests/package/consumer" -B "$work/build" -DCMAKE_BUILD_TYPE=Release \
  -DCMAKE_PREFIX_PATH="$work/prefix" "${launcher[@]}" >"$work/configure.log" || { cat "$work/configure.log"; exit 1; }
cmake --build "$work/build" -j2 >"$work/build.log" || { cat "$work/build.log"; exit 1; }

case_file=$src/tests/cases/hcw_minimal.toml
"$work/build/consumer" "$case_file" >"$work/consumer.txt"
"$work/prefix/bin/sigmatube" run "$case_file" -o "$work/cli.h5" --threads 1 --mc-runs 0 \
  --json "$work/cli.json" >/dev/null || [[ $? -eq 1 ]]
/usr/bin/python3 - "$work/consumer.txt" "$work/cli.json" <<'PY'
import json, math, sys
lines = [l.split() for l in open(sys.argv[1]) if l.strip()]
summary = json.load(open(sys.argv[2]))
cli = {c["name"]: c for c in summary["constraints"]}
assert lines, "the consumer printed nothing"
for name, probability, margin in lines:
    ref = cli[name]
    for r, value in ((ref["surrogate"]["path_probability"], float(probability)), (ref["margin"], float(margin))):
        # Same library, same case, same options: the same numbers up to the JSON's printing.
        assert (r is None and math.isnan(value)) or abs(value - r) <= 1e-12 * max(1.0, abs(r)), (name, value, r)
print(f"consumer: {len(lines)} constraints agree with the command line")
PY
