#!/usr/bin/env bash
# Browser check of `tenmin report`: loads report.html in headless Chromium and
# checks, in the page as Chromium lays it out at 1,200 px:
#   - no console errors; every chart <svg> has drawn content;
#   - no section, open table or chart overflows sideways (scrollWidth >
#     clientWidth means a scrollbar or cut content), the Weibull table included;
#     wide reference tables folded into <details> may scroll inside their box;
#   - every <text> of every chart lies inside its SVG's viewBox (no cut axis
#     label, the last time-axis label included);
#   - recovery and share axes end at 100 %; the speed-direction scatter labels
#     its direction axis in degrees with compass points;
#   (legends cannot cover data: charts.rs draws them in a strip below each plot;)
# and takes a screenshot of every section (section-<id>.png).
#
# Usage: host-cli/tests/report-browser/check.sh [REPORT.html]
#   Without an argument, builds tenmin (or takes $TENMIN), writes the default 2-day demo and its
#   report into a temporary folder and checks that. Prints the screenshot
#   folder last.
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
  # $TENMIN when set (check.sh passes the one its tests built), else a debug build.
  if [ -n "${TENMIN:-}" ]; then
    bin="$TENMIN"
  else
    (cd "$root" && cargo build -q -p host-cli)
    bin="${CARGO_TARGET_DIR:-$root/target}/debug/tenmin"
  fi
  "$bin" demo --out "$work/demo" >/dev/null
  "$bin" report --config "$work/demo/station.toml" "$work/demo/logger-records.csv" \
    --out "$work/report" >/dev/null
  page="$work/report/report.html"
fi
[ -s "$page" ] || { echo "report-browser: no page at $page" >&2; exit 1; }

flags=(--headless --no-sandbox --disable-gpu --disable-background-networking
  --disable-component-update --disable-sync --no-first-run --hide-scrollbars)

# 1. The page with a measuring script added (a copy: the report itself has no
#    scripts). The script writes its findings into <pre id="layout-check">,
#    which --dump-dom prints after the page has loaded and been laid out.
probe="$(dirname "$page")/.layout-probe.html"
python3 - "$page" "$probe" <<'PYEOF'
import sys
src, dst = sys.argv[1], sys.argv[2]
html = open(src, encoding="utf-8").read()
script = r"""
<script>
window.addEventListener('load', () => {
  const out = [];
  const bad = (m) => out.push('FAIL ' + m);
  // Everything shown open must fit; reference tables folded into <details>
  // may scroll sideways inside their own box (the section must still fit).
  document.querySelectorAll('section, .tablewrap, figure.chart').forEach((el) => {
    if (el.closest('details') && el.classList.contains('tablewrap')) return;
    if (el.scrollWidth > el.clientWidth + 1) {
      const sec = el.closest('section');
      bad(`overflow: ${el.tagName.toLowerCase()}.${el.className} in section ${sec ? sec.id : '?'} (${el.scrollWidth} > ${el.clientWidth})`);
    }
  });
  document.querySelectorAll('figure.chart').forEach((fig) => {
    const name = fig.dataset.chart;
    const svg = fig.querySelector('svg');
    if (!svg) { bad(`chart ${name}: no svg`); return; }
    const vb = svg.viewBox.baseVal;
    const w = vb && vb.width ? vb.width : svg.width.baseVal.value;
    const h = vb && vb.height ? vb.height : svg.height.baseVal.value;
    // Screen boxes (rotation and the viewBox scaling included), in viewBox units.
    const box = svg.getBoundingClientRect();
    const k = w / box.width;
    svg.querySelectorAll('text').forEach((t) => {
      const label = t.textContent.trim();
      if (!label) return;
      const r = t.getBoundingClientRect();
      const x0 = (r.left - box.left) * k, x1 = (r.right - box.left) * k;
      const y0 = (r.top - box.top) * k, y1 = (r.bottom - box.top) * k;
      if (x0 < -0.5 || y0 < -0.5 || x1 > w + 0.5 || y1 > h + 0.5) {
        bad(`chart ${name}: label "${label}" outside the viewBox (${x0.toFixed(1)}..${x1.toFixed(1)} x ${y0.toFixed(1)}..${y1.toFixed(1)} in ${w}x${h})`);
      }
    });
    out.push(`chart ${name} ${w}x${h} labels ` + [...svg.querySelectorAll('text')].map((t) => t.textContent.trim()).filter((x) => x).join('|'));
  });
  out.push('sections ' + [...document.querySelectorAll('section')].map((s) => s.id).join(' '));
  const pre = document.createElement('pre');
  pre.id = 'layout-check';
  pre.textContent = out.join('\n');
  document.body.appendChild(pre);
});
</script>
"""
open(dst, "w", encoding="utf-8").write(html.replace("</body>", script + "</body>"))
PYEOF
chromium "${flags[@]}" --user-data-dir="$(mktemp -d)" --enable-logging=stderr --v=0 \
  --window-size=1200,4000 --virtual-time-budget=5000 \
  --dump-dom "file://$probe" >"$work/dom.html" 2>"$work/console.log" || true
if grep -E 'CONSOLE|Uncaught|console\.error' "$work/console.log" | grep -Eiq 'error|uncaught'; then
  echo "report-browser: console errors:" >&2
  grep -E 'CONSOLE|Uncaught' "$work/console.log" >&2
  exit 1
fi
python3 - "$work/dom.html" <<'PYEOF'
import html as h, re, sys
dom = open(sys.argv[1], encoding="utf-8").read()
m = re.search(r'<pre id="layout-check">(.*?)</pre>', dom, re.S)
if not m:
    sys.exit("report-browser: the layout probe did not run")
lines = h.unescape(m.group(1)).splitlines()
fails = [l for l in lines if l.startswith("FAIL")]
charts = {l.split()[1]: l.split(" labels ", 1)[1].split("|") for l in lines if l.startswith("chart ")}
if len(charts) < 8:
    fails.append(f"FAIL only {len(charts)} charts laid out")
figures = re.findall(r'<figure class="chart" data-chart="([^"]+)">(.*?)</figure>', dom, re.S)
for name, body in figures:
    svg = re.search(r"<svg\b.*?</svg>", body, re.S)
    marks = len(re.findall(r"<(path|rect|polygon|polyline|circle|line)\b", svg.group(0))) if svg else 0
    texts = len(re.findall(r"<text\b", svg.group(0))) if svg else 0
    if marks < 5 or texts < 2:
        fails.append(f"FAIL chart {name}: {marks} shapes, {texts} labels: looks empty")
# Axes of recovery and shares end at 100 %.
for name in ("recovery", "missing-speed", "missing-hour"):
    if name in charts:
        nums = [float(x) for x in charts[name] if re.fullmatch(r"\d+(\.\d+)?", x)]
        if nums and max(nums) > 100:
            fails.append(f"FAIL chart {name}: axis runs to {max(nums)} %")
# Direction axis in degrees with compass points.
if "scatter" in charts and not any(re.fullmatch(r"\d+° [NESW]+", x) for x in charts["scatter"]):
    fails.append("FAIL chart scatter: no direction labels like '90° E'")
# Legends below the plots: the svg text of a legend sits under the x-axis description.
for needed in ("Data recovery", "Missing-data diagnostics", "Wind rose", "Caution", "Outages",
               "Monthly summary", "Screening thresholds", "Events"):
    if needed not in dom:
        fails.append(f"FAIL the page lacks {needed!r}")
if fails:
    print("\n".join(fails), file=sys.stderr)
    sys.exit(1)
print(f"report-browser: {len(charts)} charts laid out, labels inside their viewBox, no overflow at 1,200 px")
PYEOF

# 2. A screenshot per section: the page with every other section hidden.
shots="$work/shots"
mkdir -p "$shots"
sections=$(grep -o '<section id="[^"]*"' "$page" | sed 's/<section id="//; s/"$//')
for id in $sections; do
  one="$(dirname "$page")/.section-$id.html"
  python3 - "$page" "$one" "$id" <<'PYEOF'
import sys
src, dst, sid = sys.argv[1:4]
html = open(src, encoding="utf-8").read()
css = f"<style>section:not(#{sid}), .caution, header {{ display:none !important; }}</style>"
open(dst, "w", encoding="utf-8").write(html.replace("</head>", css + "</head>"))
PYEOF
  chromium "${flags[@]}" --user-data-dir="$(mktemp -d)" \
    --screenshot="$shots/section-$id.png" --window-size=1200,2600 "file://$one" >/dev/null 2>&1 || true
  rm -f "$one"
  size=$(stat -c %s "$shots/section-$id.png" 2>/dev/null || echo 0)
  if [ "$size" -lt 20000 ]; then
    echo "report-browser: screenshot of section $id missing or too small ($size bytes)" >&2
    exit 1
  fi
done
rm -f "$probe"
echo "report-browser: console clean, $(echo $sections | wc -w) section screenshots"
echo "$shots"
