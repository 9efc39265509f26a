#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# Renders a report page (sigmatube report ... -o report.html) to a PNG with
# headless Chromium, for a quick look or for documentation.
#   scripts/render_report.sh REPORT.html OUT.png [WIDTHxHEIGHT]
# Exits 0 with a message when Chromium is not installed.
set -euo pipefail

if [[ $# -lt 2 ]]; then
  echo "usage: $0 REPORT.html OUT.png [WIDTHxHEIGHT]" >&2
  exit 2
fi
report=$1
out=$2
size=${3:-1400x4000}
chromium=/usr/bin/chromium

if [[ ! -x $chromium ]]; then
  echo "render_report: $chromium not found; nothing rendered (install the chromium package to render)."
  exit 0
fi
if [[ ! -f $report ]]; then
  echo "render_report: no such file: $report" >&2
  exit 2
fi

report_abs=$(cd "$(dirname "$report")" && pwd)/$(basename "$report")
out_abs=$(cd "$(dirname "$out")" && pwd)/$(basename "$out")
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT

"$chromium" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
  --disable-background-networking --disable-component-update --disable-sync \
  --user-data-dir="$profile" --hide-scrollbars \
  --screenshot="$out_abs" --window-size="${size/x/,}" "file://$report_abs" >/dev/null 2>&1

if [[ ! -s $out_abs ]]; then
  echo "render_report: Chromium wrote no image" >&2
  exit 1
fi
echo "render_report: wrote $out_abs"
