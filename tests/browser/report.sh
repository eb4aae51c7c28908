#!/usr/bin/env bash
# The HTML report in a real browser (Debian's `chromium`, headless): the report of
# examples/ opened from disk, a screenshot at 1280×900, print-to-PDF, no console message
# of level error from the page, and the DOM after the page's script ran: one row per
# channel with the final rate and status the CSV table gives (tests/browser/check_dom.py).
#
#   tests/browser/report.sh [path/to/foldcheck] [output-dir]
#
# A control page that logs a console error must be caught, so the console check can
# fail. Chromium's own messages (no network, no D-Bus here) are not the page's: only
# the console lines of --enable-logging=stderr are read.
set -euo pipefail
cd "$(dirname "$0")/../.."
bin=${1:-target/debug/foldcheck}
out=${2:-$(mktemp -d)}
mkdir -p "$out"
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
  echo "chromium is not installed (.ci/run installs Debian's chromium)" >&2
  exit 1
fi
"$browser" --version

profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
chrome() {
  timeout 120 "$browser" --headless --no-sandbox --disable-gpu \
    --disable-background-networking --disable-component-update --disable-sync \
    --no-first-run --user-data-dir="$profile" --enable-logging=stderr --v=0 "$@"
}

SOURCE_DATE_EPOCH=1798761600 "$bin" report examples --output "$out/report.html"
"$bin" report examples --format csv > "$out/report.csv"
page="file://$(cd "$out" && pwd)/report.html"

echo "== screenshot at 1280x900"
chrome --window-size=1280,900 --hide-scrollbars --screenshot="$out/report.png" "$page" \
  2> "$out/screenshot.log" > /dev/null
test -s "$out/report.png"

echo "== print to PDF"
chrome --no-pdf-header-footer --print-to-pdf="$out/report.pdf" "$page" \
  2> "$out/pdf.log" > /dev/null
head -c 5 "$out/report.pdf" | grep -q '%PDF-'
pages=$(grep -a -o '/Type */Pages\?' "$out/report.pdf" | grep -vc Pages || true)
echo "PDF pages: $pages"
# One rig per page at least: three rigs, the summary first.
[ "$pages" -ge 4 ] || { echo "expected at least 4 pages, got $pages"; exit 1; }

echo "== console and DOM"
chrome --dump-dom "$page" > "$out/dom.html" 2> "$out/dom.log"
# The page itself logs nothing, so any console line from it (older Chromium writes
# `CONSOLE(n)`, newer `INFO:CONSOLE:n]`, without the level) is a failure.
if grep -E 'CONSOLE[(:]' "$out/dom.log" "$out/screenshot.log" "$out/pdf.log"; then
  echo "the page wrote to the console (an error, or a stray log)"
  exit 1
fi
python3 tests/browser/check_dom.py "$out/dom.html" "$out/report.csv"

echo "== control: a page with a console error is caught"
printf '<!DOCTYPE html><title>x</title><script>console.error("control-error")</script>' \
  > "$out/control.html"
chrome --dump-dom "file://$(cd "$out" && pwd)/control.html" > /dev/null 2> "$out/control.log"
grep -E 'CONSOLE[(:]' "$out/control.log" | grep -q 'control-error' || {
  echo "the console check does not see a page's console.error"
  exit 1
}
echo "browser checks passed; files in $out"
