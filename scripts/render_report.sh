#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# Renders a report page (sigmatube report ... -o report.html) to a PNG with
# headless Chromium, for a quick look or for documentation.
#   scripts/render_report.sh REPORT.html OUT.png [WIDTHxHEIGHT]
# Uses $SIGMATUBE_CHROMIUM, else chromium-headless-shell, else chromium.
# Exits 0 only when an image was written: 2 for bad arguments, 3 when no
# headless Chromium is installed (Debian: apt-get install chromium-headless-shell),
# 1 when Chromium ran but wrote no image.
set -euo pipefail

if [[ $# -lt 2 || $# -gt 3 ]]; then
  echo "usage: $0 REPORT.html OUT.png [WIDTHxHEIGHT]" >&2
  exit 2
fi
report=$1
out=$2
size=${3:-1400x4000}
if [[ ! $size =~ ^[0-9]+x[0-9]+$ ]]; then
  echo "render_report: size must be WIDTHxHEIGHT, got '$size'" >&2
  exit 2
fi

chromium=${SIGMATUBE_CHROMIUM:-}
if [[ -z $chromium ]]; then
  for candidate in chromium-headless-shell chromium; do
    if command -v "$candidate" >/dev/null 2>&1; then
      chromium=$(command -v "$candidate")
      break
    fi
  done
fi
if [[ -z $chromium || ! -x $chromium ]]; then
  echo "render_report: no headless Chromium found (install chromium-headless-shell); nothing rendered" >&2
  exit 3
fi
if [[ ! -f $report ]]; then
  echo "render_report: no such file: $report" >&2
  exit 2
fi
out_dir=$(dirname "$out")
if [[ ! -d $out_dir ]]; then
  echo "render_report: no such folder: $out_dir" >&2
  exit 2
fi

report_abs=$(cd "$(dirname "$report")" && pwd)/$(basename "$report")
out_abs=$(cd "$out_dir" && pwd)/$(basename "$out")
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
rm -f "$out_abs"

extra=()
[[ $(basename "$chromium") == chromium-headless-shell ]] || extra=(--headless)
status=0
timeout 120 "$chromium" "${extra[@]}" --no-sandbox --disable-gpu --disable-quic --no-first-run \
  --disable-background-networking --disable-component-update --disable-sync \
  --user-data-dir="$profile" --hide-scrollbars \
  --screenshot="$out_abs" --window-size="${size/x/,}" "file://$report_abs" >/dev/null 2>"$profile/stderr" || status=$?

if [[ ! -s $out_abs ]]; then
  echo "render_report: Chromium wrote no image (exit status $status): $(tail -n 1 "$profile/stderr")" >&2
  exit 1
fi
echo "render_report: wrote $out_abs"
