#!/bin/sh
# The survey's plots through the command line, on an invented campaign whose names break naive
# quoting: every plot file is made, each SVG parses as XML (Python's xml.etree is the reference
# parser) and shows the names as typed, each PNG passes its chunk CRCs (zlib.crc32, per the PNG
# specification, ISO/IEC 15948:2003 section 5.3), no temporary file is left anywhere, and a failing
# gnuplot costs the plots only. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if [ "$1" -eq 0 ]; then ok "$2"; else bad "$2"; fi; }
tmp=$(mktemp -d) || exit 1
trap '[ -n "${KEEP:-}" ] || rm -rf "$tmp"' EXIT
[ -n "${KEEP:-}" ] && echo "note: files kept in $tmp"

if ! command -v gnuplot >/dev/null 2>&1; then
  echo "SKIP: gnuplot is not on PATH (Debian: apt-get install gnuplot-nox); the plot files were not checked"
  exit 0
fi

# ---- an invented campaign: a level named with a per cent sign, a quote, a semicolon, <script> ----
cat >"$tmp/odd.graph" <<'EOF'
# Invented for the plot tests: no real system behind these names.
input load real [0, 10] unit "veh/h"
input "it's; \"odd\"" bool
input "<script>" levels {low, "a_b^c", "100% high"}
input crews integer [1, 4] unit "m_2^3 & <i>"
output delay real noise 1 unit "min"
load -> delay effect 0.3
"it's; \"odd\"" -> delay effect 0.5
"<script>" -> delay effect 1
crews -> delay effect 0.2
default margin 0.2 sd
EOF
"$PYTHON" - "$tmp/odd.csv" <<'EOF'
import random, sys
rng = random.Random(20261202)          # fixed seed: the same invented runs every time
levels = ["low", "a_b^c", "100% high"]
with open(sys.argv[1], "w") as f:
    f.write('load,"it\'s; ""odd""",<script>,crews,delay\n')
    for i in range(120):
        load = rng.uniform(0, 6)        # the top of the load range is never run: a gap to draw
        odd = rng.random() < 0.5
        lev = levels[0] if rng.random() < 0.6 else levels[rng.randint(1, 2)]
        crews = rng.randint(1, 3)
        delay = 0.3 * load + 0.5 * odd + rng.gauss(0, 1)
        f.write("%.4f,%s,%s,%d,%.4f\n" % (load, "true" if odd else "false", lev, crews, delay))
EOF
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" >"$tmp/out" 2>"$tmp/err"
check $? "import of the invented campaign with odd names ($(head -c 300 "$tmp/err"))"

# Run from an empty directory with TMPDIR pointing at another: neither may gain a file.
mkdir "$tmp/cwd" "$tmp/tmpdir"
(cd "$tmp/cwd" && TMPDIR="$tmp/tmpdir" "$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/report" \
  >"$tmp/out" 2>"$tmp/err")
rc=$?
check $([ "$rc" -le 1 ]; echo $?) "survey of the odd campaign runs (exit $rc: $(head -c 300 "$tmp/err"))"
check $(grep -qi "gnuplot" "$tmp/err"; [ $? -ne 0 ]; echo $?) "gnuplot printed nothing ($(head -c 300 "$tmp/err"))"
check $([ -z "$(ls -A "$tmp/cwd")" ] && [ -z "$(ls -A "$tmp/tmpdir")" ]; echo $?) \
  "no temporary file left in the working directory or TMPDIR"

"$PYTHON" - "$tmp/report" <<'EOF'
import glob, os, struct, sys, zlib
import xml.etree.ElementTree as ET
rep = sys.argv[1]
fails = 0
def check(cond, desc):
    global fails
    print(("PASS: " if cond else "FAIL: ") + desc)
    fails += not cond
# The names of the module headers under coverage/: the matrix, up to 4 sparse pairs, power, MDE, curves.
want = ["pairs", "pair-1", "power", "mde", "curves"]
svgs = sorted(glob.glob(rep + "/*.svg"))
for name in want:
    check(os.path.exists(f"{rep}/{name}.svg") and os.path.exists(f"{rep}/{name}.png"),
          f"{name}.svg and {name}.png are in the report directory")
texts = []
for path in svgs:
    try:
        root = ET.parse(path).getroot()
        ok = root.tag.endswith("svg")
        texts += ["".join(t.itertext()) for t in root.iter() if t.tag.endswith("text")]
    except ET.ParseError as e:
        ok = False
    check(ok, f"{os.path.basename(path)} is well-formed XML with an <svg> root (xml.etree)")
    raw = open(path, encoding="utf-8").read()
    check("<script" not in raw, f"{os.path.basename(path)} holds no raw <script")
alltext = "\n".join(texts)
for name in ["it's; \"odd\"", "<script>", "a_b^c", "100% high"]:
    check(name in alltext, f"the name {name!r} reads as typed in the SVG text (parsed, unescaped)")
# Declared units reach every quantity axis: on each sparse-pair plot (whose axes are two inputs'
# values) an input with a unit is labelled "name (unit)", never by its bare name; the other plots'
# axes are unitless (power, MDE / effect of interest, runs) or list inputs by name (pairs).
units = {"load": "veh/h", "crews": "m_2^3 & <i>"}
labelled, bare = [], []
for path in sorted(glob.glob(rep + "/pair-*.svg")):
    t = ["".join(e.itertext()).strip() for e in ET.parse(path).getroot().iter()
         if e.tag.endswith("text")]
    labelled += [x for x in t if x in (f"{n} ({u})" for n, u in units.items())]
    bare += [f"{os.path.basename(path)}: {x}" for x in t if x in units]
check(labelled and not bare, f"pair plots label input axes with their units as typed: {labelled}; "
      f"bare names {bare}")
html = open(rep + "/index.html", encoding="utf-8").read()
check("<code>load</code> (veh/h)" in html and "<code>crews</code> (m_2^3 &amp; &lt;i&gt;)" in html
      and "<code>delay</code> (min)" in html,
      "the graph listed in words gives each variable's unit, HTML-escaped")
check("expected effect 0.3 (delay in min, load in veh/h)" in html,
      "the graph listing says the units an effect is counted in")
for path in sorted(glob.glob(rep + "/*.png")):
    data = open(path, "rb").read()
    good = data[:8] == b"\x89PNG\r\n\x1a\n"
    pos, chunks, size = 8, [], None
    while good and pos + 8 <= len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        crc = struct.unpack(">I", data[pos + 8 + length:pos + 12 + length])[0]
        good = zlib.crc32(kind + body) & 0xFFFFFFFF == crc
        if kind == b"IHDR":
            size = struct.unpack(">II", body[:8])
        chunks.append(kind)
        pos += 12 + length
    good = good and chunks[:1] == [b"IHDR"] and chunks[-1:] == [b"IEND"]
    check(good, f"{os.path.basename(path)}: PNG signature, chunk CRCs, IHDR first, IEND last")
    check(size is not None and size[0] == 900 and size[1] >= 560,
          f"{os.path.basename(path)} is 900 px wide and at least 560 high (got {size})")
sys.exit(1 if fails else 0)
EOF
[ $? -eq 0 ] || fails=$((fails + 1))

# ---- a gnuplot that breaks: the survey goes on, says why, and ships no half-drawn plot ----------
mkdir "$tmp/badbin"
cat >"$tmp/badbin/gnuplot" <<'EOF'
#!/bin/sh
cat >/dev/null
echo '         line 3: invented plotter failure' >&2
exit 1
EOF
chmod 755 "$tmp/badbin/gnuplot"
PATH="$tmp/badbin:$PATH" "$SHOAL" survey "$tmp/odd.graph" "$tmp/odd.db" -o "$tmp/report2" \
  >"$tmp/out2" 2>"$tmp/err2"
rc2=$?
check $([ "$rc2" -eq "$rc" ]; echo $?) "a failing gnuplot leaves the verdict alone (exit $rc2, was $rc)"
check $(grep -q "invented plotter failure" "$tmp/err2"; echo $?) \
  "the survey passes on gnuplot's own message ($(head -c 300 "$tmp/err2"))"
check $([ -f "$tmp/report2/index.html" ]; echo $?) "the report is written without plots"
check $(ls "$tmp/report2" | grep -q '\.svg$\|\.png$'; [ $? -ne 0 ]; echo $?) \
  "no plot file is shipped after gnuplot failed"

[ "$fails" -eq 0 ]
