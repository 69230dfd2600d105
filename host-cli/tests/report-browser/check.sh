#!/usr/bin/env bash
# Browser check of `tenmin report`: loads report.html in headless Chromium,
# checks that the page logs no console errors and that every chart <svg> is in
# the DOM with drawn content, and takes a screenshot.
#
# Usage: host-cli/tests/report-browser/check.sh [REPORT.html]
#   Without an argument, builds tenmin, writes a 3-day demo and its report into
#   a temporary folder and checks that. Prints the screenshot's path last.
# Needs: Debian's chromium (installed with apt-get when missing), python3.
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
root="$(cd "$here/../../.." && pwd)"

if ! command -v chromium >/dev/null 2>&1; then
  echo "report-browser: installing chromium (Debian package)"
  apt-get update >/dev/null
  DEBIAN_FRONTEND=noninteractive apt-get install -y chromium >/dev/null
fi

work="$(mktemp -d)"
if [ $# -ge 1 ]; then
  page="$(cd "$(dirname "$1")" && pwd)/$(basename "$1")"
else
  (cd "$root" && cargo build -q -p host-cli)
  target="${CARGO_TARGET_DIR:-$root/target}"
  bin="$target/debug/tenmin"
  "$bin" demo --days 3 --out "$work/demo" >/dev/null
  "$bin" report --config "$work/demo/station.toml" "$work/demo/logger-records.csv" \
    --out "$work/report" >/dev/null
  page="$work/report/report.html"
fi
[ -s "$page" ] || { echo "report-browser: no page at $page" >&2; exit 1; }

flags=(--headless --no-sandbox --disable-gpu --disable-background-networking
  --disable-component-update --disable-sync --no-first-run)

# 1. The DOM as Chromium parsed it, with console messages on stderr.
chromium "${flags[@]}" --user-data-dir="$(mktemp -d)" --enable-logging=stderr --v=0 \
  --dump-dom "file://$page" >"$work/dom.html" 2>"$work/console.log" || true
if grep -E 'CONSOLE|Uncaught|console\.error' "$work/console.log" | grep -Eiq 'error|uncaught'; then
  echo "report-browser: console errors:" >&2
  grep -E 'CONSOLE|Uncaught' "$work/console.log" >&2
  exit 1
fi
python3 - "$work/dom.html" <<'EOF'
import re, sys
dom = open(sys.argv[1], encoding="utf-8").read()
figures = re.findall(r'<figure class="chart" data-chart="([^"]+)">(.*?)</figure>', dom, re.S)
if len(figures) < 6:
    sys.exit(f"report-browser: only {len(figures)} charts in the DOM (expected at least 6)")
for name, body in figures:
    svg = re.search(r"<svg\b.*?</svg>", body, re.S)
    if not svg:
        sys.exit(f"report-browser: chart {name}: no <svg>")
    marks = len(re.findall(r"<(path|rect|polygon|polyline|circle|line)\b", svg.group(0)))
    texts = len(re.findall(r"<text\b", svg.group(0)))
    if marks < 5 or texts < 2:
        sys.exit(f"report-browser: chart {name}: {marks} shapes, {texts} labels: looks empty")
for needed in ("Data recovery", "Missing-data diagnostics", "Wind rose", "Caution"):
    if needed not in dom:
        sys.exit(f"report-browser: the page lacks {needed!r}")
print(f"report-browser: {len(figures)} charts present with content: " + ", ".join(n for n, _ in figures))
EOF

# 2. A screenshot of the whole report.
shot="$work/report.png"
chromium "${flags[@]}" --user-data-dir="$(mktemp -d)" --hide-scrollbars \
  --screenshot="$shot" --window-size=1280,4000 "file://$page" >/dev/null 2>&1 || true
size=$(stat -c %s "$shot" 2>/dev/null || echo 0)
if [ "$size" -lt 50000 ]; then
  echo "report-browser: screenshot missing or too small ($size bytes)" >&2
  exit 1
fi
echo "report-browser: console clean, screenshot $size bytes"
echo "$shot"
