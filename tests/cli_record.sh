#!/bin/sh
# The claim record: `shoal power`, the survey's summary.json and claims.csv, `shoal claims` and
# `shoal coverage` write one record per claim with the same fields under the same names, and the
# README documents exactly those fields. Read with Python's json and csv modules. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}" "${BUILD:=build}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if [ "$1" = 0 ]; then ok "$2"; else bad "$2"; fi; }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT

# Two campaigns: the invented demo, and a small invented one whose names need quoting in every
# format and whose level-set treatment and replicated runs fill the lack-of-fit fields.
cat >"$tmp/odd.graph" <<'EOF'
# invented record test model
input "it's; \"odd\"" real [0, 1]
input "lane, b" levels {p, q, r}
output "wait, min" real
default effect 0.5 sd
default margin 0.1 sd
"it's; \"odd\"", "lane, b" -> "wait, min"
EOF
"$PYTHON" - "$tmp/odd.csv" <<'EOF'
import random, sys
r = random.Random(11)
with open(sys.argv[1], "w") as f:
    f.write('"it\'s; ""odd""","lane, b","wait, min"\n')
    for i in range(120):
        a = round(r.random(), 1)            # repeated configurations: pure error exists
        b = "pqr"[i % 3]
        f.write('%.1f,%s,%.5f\n' % (a, b, 2 * a + (b == "q") + r.expovariate(1.0)))
EOF
"$SHOAL" import "$tmp/odd.csv" --archive "$tmp/odd.db" >/dev/null 2>&1
"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$tmp/demo.db" >/dev/null 2>&1

for case in demo odd; do
  if [ "$case" = demo ]; then g=fixtures/demo/triage.graph; else g="$tmp/odd.graph"; fi
  db="$tmp/$case.db"
  "$SHOAL" power "$g" "$db" --json >"$tmp/p.json" 2>/dev/null
  "$SHOAL" power "$g" "$db" --csv >"$tmp/p.csv" 2>/dev/null
  "$SHOAL" claims "$g" --json >"$tmp/c.json" 2>/dev/null
  "$SHOAL" claims "$g" --csv >"$tmp/c.csv" 2>/dev/null
  "$SHOAL" coverage "$g" "$db" --json >"$tmp/v.json" 2>/dev/null
  "$SHOAL" survey "$g" "$db" -o "$tmp/r-$case" --history "$tmp/h-$case.db" >/dev/null 2>&1
  "$PYTHON" - "$tmp" "$tmp/r-$case" >"$tmp/py" 2>&1 <<'EOF'
import csv, json, math, sys
t, rep = sys.argv[1], sys.argv[2]
p = json.load(open(t + "/p.json"))["claims"]
s = json.load(open(rep + "/summary.json"))
c = json.load(open(t + "/c.json"))["claims"]
v = json.load(open(t + "/v.json"))["support"]
assert len(p) == len(s["claims"]) == len(c) == len(v) == len(s["support"]) > 0
n_fields = 0
for a, b in zip(p, s["claims"]):
    # Field by field: the same names in the same order, the same values.
    assert list(a) == list(b), (list(a), list(b))
    for k in a:
        assert a[k] == b[k], (k, a[k], b[k])
        n_fields += 1
claim_keys = list(c[0])
assert claim_keys[0] == "index" and "adjustment_set" in claim_keys
for a, b in zip(c, p):
    assert list(b)[:len(claim_keys)] == claim_keys and all(a[k] == b[k] for k in claim_keys)
for a, b in zip(v, s["support"]):
    assert list(a) == list(b) and list(a)[:len(claim_keys)] == claim_keys, (list(a), list(b))
    assert all(a[k] == b[k] for k in a), a
# The CSVs: power --csv and claims.csv are byte for byte the same; their header is the JSON record.
pc, sc = open(t + "/p.csv", newline="").read(), open(rep + "/claims.csv", newline="").read()
assert pc == sc, "power --csv and claims.csv differ"
rows = list(csv.DictReader(open(rep + "/claims.csv", newline="")))
assert list(rows[0]) == list(p[0]), (list(rows[0]), list(p[0]))
for r, j in zip(rows, p):
    for k, x in j.items():
        cell = r[k]
        if x is None: assert cell in ("", "inf"), (k, cell)
        elif isinstance(x, bool): assert cell == ("1" if x else "0"), (k, cell, x)
        elif isinstance(x, list): assert next(csv.reader([cell], delimiter=";")) == x if x else cell == "", (k, cell, x)
        elif isinstance(x, (int, float)): assert math.isclose(float(cell), x, rel_tol=1e-9), (k, cell, x)
        else: assert cell == x, (k, cell, x)
crow = list(csv.DictReader(open(t + "/c.csv", newline="")))
assert list(crow[0]) == claim_keys
print("%d claims, %d fields compared" % (len(p), n_fields))
EOF
  check $? "$case: power --json and summary.json give the same record per claim, field by field; power --csv = claims.csv; claims and coverage share the claim fields (python json/csv) $(cat "$tmp/py")"
done

# The README documents exactly the record's fields, in the record's order (its three tables under
# "The claim record").
"$PYTHON" - README.md "$tmp/p.json" "$tmp/v.json" >"$tmp/py" 2>&1 <<'EOF'
import json, re, sys
text = open(sys.argv[1]).read()
sec = text[text.index("### The claim record"):]
sec = sec[:sec.index("\n## ")]
doc = []
for line in sec.splitlines():
    m = re.match(r"\| (`[a-z_0-9]+`(?:, `[a-z_0-9]+`)*) \|", line)
    if m: doc += re.findall(r"`([a-z_0-9]+)`", m.group(1))
p = list(json.load(open(sys.argv[2]))["claims"][0])
v = list(json.load(open(sys.argv[3]))["support"][0])
record = p + v[len([k for k in v if k in p]):]
assert doc == record, (doc, record)
EOF
check $? "README's claim record tables list exactly the record's fields in order $(cat "$tmp/py")"

[ "$fails" -eq 0 ]
