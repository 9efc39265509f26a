#!/usr/bin/env bash
# SPDX-License-Identifier: MIT
# The HTML report in a real browser: runs a bundled case (fewer runs than the
# case asks for, to keep CI short), writes its report, and has headless Chromium
# (Debian's chromium-headless-shell) load and render it. Fails on a blank page,
# any console message, a missing plot or a plot laid out with no area
# (tests/report/check_in_browser.py), and when scripts/render_report.sh cannot
# render the page.
#   browser_test.sh SIGMATUBE_CLI SOURCE_DIR
set -euo pipefail
cli=$1
src=$2
chromium=${SIGMATUBE_CHROMIUM:-$(command -v chromium-headless-shell || true)}
if [[ -z $chromium ]]; then
  echo "browser_test: chromium-headless-shell is not installed (scripts/setup.sh installs it)" >&2
  exit 1
fi
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

case_file=$src/cases/warehouse-tug/case.toml
"$cli" run "$case_file" -o "$work/result.h5" --threads 2 --mc-runs 200 --samples 20000 >/dev/null
"$cli" report "$work/result.h5" -o "$work/report.html" >/dev/null
plots=(plot-tube plot-probability plot-sobol plot-validation)
n_clearance=$(grep -o 'id="plot-clearance-[0-9]*"' "$work/report.html" | sort -u | wc -l)
for ((k = 1; k <= n_clearance; ++k)); do plots+=("plot-clearance-$k"); done
[[ $n_clearance -ge 1 ]] || { echo "browser_test: the report has no clearance plot" >&2; exit 1; }

browse() {  # browse OUT_STDOUT OUT_STDERR ARGS... (own profile each time)
  local out=$1 err=$2
  shift 2
  local profile
  profile=$(mktemp -d -p "$work")
  timeout 120 "$chromium" --no-sandbox --disable-gpu --no-first-run --disable-background-networking \
    --disable-component-update --disable-sync --user-data-dir="$profile" --hide-scrollbars "$@" >"$out" 2>"$err"
}

check_page() {  # check_page PAGE.html TAG: loads the page three ways, then check_in_browser.py
  local page=$1 tag=$2
  # 1. The page as it is: DOM after load, and every console message.
  browse "$work/$tag-dom.html" "$work/$tag-console.log" --enable-logging=stderr --v=0 --dump-dom "file://$page"
  # 2. A copy with a measuring script appended: the size the browser gave each plot.
  sed "s#</body>#${measure//&/\\&}</body>#" "$page" >"$work/$tag-measure.html"
  browse "$work/$tag-layout.html" "$work/$tag-layout.log" --window-size=1400,3000 --dump-dom "file://$work/$tag-measure.html"
  # 3. A small screenshot for the blank-page check (scaled down to keep decoding quick).
  browse /dev/null "$work/$tag-shot.log" --window-size=1400,3000 --force-device-scale-factor=0.25 \
    --screenshot="$work/$tag-small.png" "file://$page"
  [[ -s $work/$tag-small.png ]] || { echo "browser_test: Chromium wrote no screenshot of $page" >&2; return 1; }
  /usr/bin/python3 "$src/tests/report/check_in_browser.py" "$work/$tag-dom.html" "$work/$tag-layout.html" \
    "$work/$tag-console.log" "$work/$tag-small.png" "${plots[@]}"
}
measure='<script>(function(){var out=[];document.querySelectorAll("svg.plot").forEach(function(s){var r=s.getBoundingClientRect();out.push(s.id+" "+Math.round(r.width)+" "+Math.round(r.height));});var pre=document.createElement("pre");pre.id="st-layout";pre.textContent=out.join(String.fromCharCode(10));document.body.appendChild(pre);})();</script>'

check_page "$work/report.html" report
# The check itself must fail on a blank page without plots.
printf '<html><head><title>blank</title></head><body></body></html>\n' >"$work/blank.html"
if check_page "$work/blank.html" blank >"$work/blank-check.txt"; then
  echo "browser_test: the check passed a blank page" >&2
  exit 1
fi
grep -q "looks blank" "$work/blank-check.txt" && grep -q "is missing" "$work/blank-check.txt" ||
  { echo "browser_test: the check did not name the blank page and the missing plots:" >&2; cat "$work/blank-check.txt" >&2; exit 1; }

# 4. The documented script renders the page and says so by its exit status.
SIGMATUBE_CHROMIUM=$chromium bash "$src/scripts/render_report.sh" "$work/report.html" "$work/report.png" 1400x3000
[[ -s $work/report.png ]]
set +e
SIGMATUBE_CHROMIUM=/nonexistent/chromium bash "$src/scripts/render_report.sh" "$work/report.html" "$work/none.png" 2>/dev/null
status=$?
set -e
if [[ $status -eq 0 ]]; then
  echo "browser_test: render_report.sh exited 0 without a browser" >&2
  exit 1
fi
echo "browser_test: ok (${#plots[@]} plots)"
