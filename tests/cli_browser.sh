#!/bin/sh
# The demo report in a real browser: headless Chromium (Debian's chromium) loads index.html; every
# plot must be an inline SVG drawn with a size, ids unique, no script inside any SVG, the claims
# table there and sortable, user names shown as text, and the screenshot not blank. Negative
# controls show the checks can fail: a broken image, a page breaking the SVG rules, a blank page.
# SKIP only when chromium is missing and cannot be installed. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
here=$(pwd)
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT

find_browser() { command -v chromium || command -v chromium-browser; }
browser=$(find_browser)
if [ -z "$browser" ]; then
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    export DEBIAN_FRONTEND=noninteractive
    apt-get install -y --no-install-recommends chromium >"$tmp/apt.log" 2>&1 ||
      { apt-get update >>"$tmp/apt.log" 2>&1 &&
        apt-get install -y --no-install-recommends chromium >>"$tmp/apt.log" 2>&1; }
    browser=$(find_browser)
  fi
  if [ -z "$browser" ]; then
    echo "SKIP: chromium is not installed and could not be installed here (needs root and a" \
         "reachable Debian mirror: apt-get install chromium); the browser check did not run"
    exit 0
  fi
fi

# The machines here have no internet: everything that would reach out is switched off, and each
# run gets a new, empty profile.
run_browser() {
  profile=$(mktemp -d "$tmp/profile.XXXXXX")
  timeout 180 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$profile" --hide-scrollbars --window-size="${WINDOW:-1200,1600}" \
    --virtual-time-budget=5000 "$@" 2>>"$tmp/chromium.log"
}

# Inject the probe (tests/browser/probe.js) before </body> of a copy of a page.
with_probe() {
  awk -v probe="$here/tests/browser/probe.js" \
    '/<\/body>/ { print "<script>"; while ((getline l < probe) > 0) print l; print "</script>" } { print }' \
    "$1" >"$2"
}

"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$tmp/demo.db" >/dev/null 2>&1
"$SHOAL" survey fixtures/demo/triage.graph "$tmp/demo.db" -o "$tmp/report" >/dev/null 2>&1
rc=$?
if [ "$rc" -eq 1 ] && [ -s "$tmp/report/index.html" ]; then ok "the demo survey wrote its report (exit 1)"
else bad "the demo survey exited $rc or wrote no index.html"; fi

# 1. The page renders: images decoded, inline SVG laid out, claims table present and sortable.
with_probe "$tmp/report/index.html" "$tmp/report/check.html"
run_browser --dump-dom "file://$tmp/report/check.html" >"$tmp/dom.html"
# The marker element, not the probe's own source text, which is in the DOM too.
marker=$(sed -n 's/.*<pre id="browser-check">\([^<]*\)<\/pre>.*/\1/p' "$tmp/dom.html" | head -1)
case $marker in
BROWSER-CHECK-OK*) ok "chromium rendered the report: $marker" ;;
*) bad "chromium's check of the report: ${marker:-no marker in the DOM ($(tail -3 "$tmp/chromium.log"))}" ;;
esac
plots=$(echo "$marker" | sed -n 's/.* plots=\([0-9]*\).*/\1/p')
imgs=$(echo "$marker" | sed -n 's/.* images=\([0-9]*\).*/\1/p')
files=$(ls "$tmp/report" | grep -c '\.svg$')
if [ -n "$plots" ] && [ "$plots" -eq "$files" ] && [ "$plots" -gt 0 ] && [ "$imgs" = 0 ]; then
  ok "every plot file is an inline svg in the page, drawn with a size ($plots of $files, $imgs <img>)"
else bad "inline svg plots in the page ($plots) differ from the SVG plot files ($files), or <img> left ($imgs)"; fi
if grep -q 'id="claims-table"' "$tmp/dom.html" && echo "$marker" | grep -q 'rows=[1-9]'; then
  ok "the claims table is in the rendered DOM with rows"
else bad "no claims table with rows in the rendered DOM"; fi

# Negative control: the same probe must notice a broken image.
printf '<!DOCTYPE html><html><body><table id="claims-table"><thead><tr><th>power</th></tr></thead><tbody><tr><td data-v="1">1</td></tr></tbody></table><img src="data:image/svg+xml;base64,AAAA"></body></html>\n' >"$tmp/broken.html"
with_probe "$tmp/broken.html" "$tmp/broken-check.html"
run_browser --dump-dom "file://$tmp/broken-check.html" >"$tmp/dom2.html"
if grep -q '<pre id="browser-check">BROWSER-CHECK-FAIL image 1 did not load' "$tmp/dom2.html"; then
  ok "negative control: the probe reports a broken image"
else bad "negative control: the probe missed a broken image: $(grep -o 'BROWSER-CHECK[^<]*' "$tmp/dom2.html")"; fi

# Negative control: duplicate ids, an SVG drawn without a size, a script inside an SVG and a user
# name turned into markup must each be reported.
printf '%s\n' '<!DOCTYPE html><html><body><table id="claims-table"><thead><tr><th>power</th></tr></thead><tbody><tr><td data-v="1"><script>/* a name as markup */</script>it&#39;s; odd</td></tr></tbody></table>' \
  '<svg width="0" height="0"><circle id="gpDot" r="1"/></svg><svg width="20" height="20"><circle id="gpDot" r="1"/><script>/* in svg */</script></svg></body></html>' >"$tmp/bad-svg.html"
with_probe "$tmp/bad-svg.html" "$tmp/bad-svg-check.html"
run_browser --dump-dom "file://$tmp/bad-svg-check.html" >"$tmp/dom3.html"
m3=$(sed -n 's/.*<pre id="browser-check">\([^<]*\)<\/pre>.*/\1/p' "$tmp/dom3.html" | head -1)
case $m3 in
BROWSER-CHECK-FAIL*"has no size"*"duplicate ids"*"inside svg"*"odd=no"*) ok "negative control: the probe reports a sizeless svg, duplicate ids, a script in svg ($m3)" ;;
*) bad "negative control: the probe missed a broken svg rule: ${m3:-no marker}" ;;
esac

# 1b. User names '<script>' and it's; "odd" appear on the page as text, never as markup: the only
#     scripts are the page's sorter and the injected probe (invented scenario, seed 11).
. "$here/tests/browser/odd_names.sh"
odd_names "$tmp"
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" >/dev/null 2>&1
"$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/odd-report" >/dev/null 2>&1
with_probe "$tmp/odd-report/index.html" "$tmp/odd-report/check.html"
run_browser --dump-dom "file://$tmp/odd-report/check.html" >"$tmp/dom4.html"
m4=$(sed -n 's/.*<pre id="browser-check">\([^<]*\)<\/pre>.*/\1/p' "$tmp/dom4.html" | head -1)
case $m4 in
BROWSER-CHECK-OK*" scripts=2 odd=yes"*) ok "the names '<script>' and it's; \"odd\" show as text, not markup ($m4)" ;;
*) bad "odd names in the browser: ${m4:-no marker in the DOM}" ;;
esac

# 2. The screenshot is not blank: many colours, and plenty of pixels off the background
#    (tests/browser/pngstats.py decodes the PNG with zlib alone).
run_browser --screenshot="$tmp/shot.png" "file://$tmp/report/index.html" >/dev/null
set -- $("$PYTHON" tests/browser/pngstats.py "$tmp/shot.png" 2>>"$tmp/chromium.log")
if [ "$#" -eq 4 ] && [ "$1" -eq 1200 ] && [ "$2" -eq 1600 ]; then ok "the screenshot is 1200 x 1600"
else bad "the screenshot could not be read or has another size: $*"; fi
# A rendered report shows text in several colours, tinted panels and anti-aliasing: hundreds of
# distinct colours and well over 2% of pixels off the background. A blank page has 1 colour, 0%.
if [ "$#" -eq 4 ] && [ "$3" -ge 20 ] && awk -v s="$4" 'BEGIN { exit !(s > 0.02) }'; then
  ok "the screenshot is not blank ($3 colours, share off the background $4)"
else bad "the screenshot looks blank: $*"; fi
printf '<!DOCTYPE html><html><body style="background:#fff"></body></html>\n' >"$tmp/blank.html"
run_browser --screenshot="$tmp/blank.png" "file://$tmp/blank.html" >/dev/null
set -- $("$PYTHON" tests/browser/pngstats.py "$tmp/blank.png" 2>>"$tmp/chromium.log")
if [ "$#" -eq 4 ] && [ "$3" -lt 20 ] && awk -v s="$4" 'BEGIN { exit !(s <= 0.02) }'; then
  ok "negative control: a blank page is judged blank ($3 colour, share $4)"
else bad "negative control: the blank page was not judged blank: $*"; fi

# 3. Any screen: a 390-px phone and a 1,400-px desktop (tests/browser/layout.js). The page never
#    scrolls sideways, the claims table keeps every column on screen (cards on the phone), plot
#    text is drawn at 8.5 CSS px or more, and the graph is drawn and listed. At 1,400 px also a
#    campaign of 63 claims with long names (tests/browser/wide_campaign.sh, invented).
with_layout() {
  awk -v probe="$here/tests/browser/layout.js" -v node="$3" \
    '/<\/body>/ { print "<script>window.SHOAL_EXPECT_NODE=\"" node "\";"; while ((getline l < probe) > 0) print l; print "</script>" } { print }' \
    "$1" >"$2"
}
# A headless window is never narrower than 500 px, so the page is opened in a frame WIDTH px wide
# (its own viewport: media queries and innerWidth follow the frame), inside a 1,600-px window.
layout() {   # layout PAGE WIDTH NODE -> the marker
  with_layout "$1" "$1.layout.html" "$3"
  printf '%s\n' '<!DOCTYPE html><html><body style="margin:0">' \
    "<iframe src=\"$(basename "$1").layout.html\" style=\"width:$2px;height:2000px;border:0\"></iframe>" \
    '<script>window.addEventListener("message",function(e){var p=document.createElement("pre");p.id="layout-check";p.textContent=e.data;document.body.appendChild(p);});</script>' \
    '</body></html>' >"$1.frame.html"
  WINDOW="1600,2100" run_browser --dump-dom "file://$1.frame.html" |
    sed -n 's/.*<pre id="layout-check">\([^<]*\)<\/pre>.*/\1/p' | head -1
}
. "$here/tests/browser/wide_campaign.sh"
wide_campaign "$tmp"
"$SHOAL" import "$tmp/wide.csv" --archive "$tmp/wide.db" >/dev/null 2>&1
"$SHOAL" survey "$tmp/wide.graph" "$tmp/wide.db" -o "$tmp/wide-report" >/dev/null 2>&1
for case in "report 390 arrivals" "report 1400 arrivals" "wide-report 1400 worker_thread_pool_size" \
            "wide-report 390 worker_thread_pool_size"; do
  set -- $case
  m=$(layout "$tmp/$1/index.html" "$2" "$3")
  case $m in
  LAYOUT-OK*" graph=yes"*) ok "$1 at $2 px: $m" ;;
  *) bad "$1 at $2 px: ${m:-no marker ($(tail -2 "$tmp/chromium.log"))}" ;;
  esac
done
rows=$("$PYTHON" -c 'import json,sys; print(len(json.load(open(sys.argv[1]))["claims"]))' "$tmp/wide-report/summary.json")
if [ "$rows" -ge 60 ]; then ok "the wide campaign has $rows claims"; else bad "the wide campaign has only $rows claims"; fi
# Negative controls: a planted wide table (60 columns) and a plot shrunk to a phone's width must
# each be reported.
sed 's|<section id="claims">|<table><tr>'"$(printf '<td>column%s</td>' $(seq 1 60))"'</tr></table>&|' \
  "$tmp/report/index.html" >"$tmp/report/planted.html"
m=$(layout "$tmp/report/planted.html" 1400 arrivals)
case $m in
LAYOUT-FAIL*"page scrolls sideways"*) ok "negative control: a planted wide table is reported at 1400 px ($m)" ;;
*) bad "negative control: the planted wide table was not reported: ${m:-no marker}" ;;
esac
m=$(layout "$tmp/report/planted.html" 390 arrivals)
case $m in
LAYOUT-FAIL*"page scrolls sideways"*) ok "negative control: a planted wide table is reported at 390 px" ;;
*) bad "negative control at 390 px: ${m:-no marker}" ;;
esac
sed 's|</style>|.plot svg{min-width:0 !important;max-width:100% !important}</style>|' \
  "$tmp/report/index.html" >"$tmp/report/tiny.html"
m=$(layout "$tmp/report/tiny.html" 390 arrivals)
case $m in
LAYOUT-FAIL*"plot text drawn at"*) ok "negative control: plots shrunk to the phone's width are reported ($m)" ;;
*) bad "negative control: shrunken plot text was not reported: ${m:-no marker}" ;;
esac

[ "$fails" -eq 0 ]
