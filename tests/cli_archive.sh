#!/bin/sh
# CLI checks of `shoal import` and `shoal check` on the invented fixtures in fixtures/csv/: exit
# statuses (0 adequate, 1 not adequate, 2 bad input), messages with file:line:column or row and
# column, and the stored values against Python's csv module (an independent RFC 4180 reader).
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}" "${PYTHON:=/usr/bin/python3}"
F=fixtures/csv
fails=0
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d "${TMPDIR:-/tmp}/shoal-cli-archive.XXXXXX") || exit 1
trap 'rm -rf "$tmp"' EXIT

# run NAME EXPECTED_STATUS PHRASE COMMAND...: the status must match and PHRASE (fixed string)
# must appear in stdout or stderr; an empty PHRASE checks the status only.
run() {
  name=$1; want=$2; phrase=$3; shift 3
  "$@" >"$tmp/out" 2>"$tmp/err"
  got=$?
  if [ "$got" -ne "$want" ]; then
    fail "$name: exit status $got, expected $want ($(head -c 300 "$tmp/err"))"
  # Long lines wrap to 80 columns when stdout is not a terminal: match with the breaks joined.
  elif [ -n "$phrase" ] && ! grep -qF -- "$phrase" "$tmp/out" "$tmp/err" &&
       ! cat "$tmp/out" "$tmp/err" | tr -s ' \n' '  ' | grep -qF -- "$(printf '%s' "$phrase" | tr -s ' ')"; then
    fail "$name: output lacks '$phrase' (got: $(head -c 300 "$tmp/out" "$tmp/err"))"
  else
    pass "$name"
  fi
}

db=$tmp/ward.db
run "import comma CSV creates the archive as batch 1" 0 \
  "imported 4 rows from $F/comma.csv into $db as batch 1" \
  "$SHOAL" import "$F/comma.csv" --archive "$db"
run "import tab-separated file appends batch 2" 0 "as batch 2" \
  "$SHOAL" import "$F/tab.tsv" --archive "$db"
run "import semicolon file with an extra column appends batch 3" 0 "as batch 3" \
  "$SHOAL" import "$F/semicolon.csv" --archive "$db"
run "import CRLF file with a UTF-8 BOM appends batch 4" 0 "as batch 4" \
  "$SHOAL" import "$F/crlf-bom.csv" --archive "$db"
run "import quoted fields with an embedded newline appends batch 5" 0 "imported 2 rows" \
  "$SHOAL" import "$F/quoted.csv" --archive "$db"
run "import -q prints nothing" 0 "" "$SHOAL" import -q "$F/comma.csv" --archive "$tmp/quiet.db"
if [ -s "$tmp/out" ]; then fail "import -q wrote to stdout"
else pass "import -q wrote nothing to stdout"; fi
run "check of a clean archive passes (exit 0)" 0 "check passed" \
  "$SHOAL" check "$F/ward.graph" "$db"
run "check counts runs and batches" 0 "runs      12 in 5 batches" \
  "$SHOAL" check "$F/ward.graph" "$db"

# The stored rows against Python's csv module (RFC 4180 reader of the standard library) and its
# sqlite3 module: every cell must match, numbers compared as numbers, empty fields as NULL.
if "$PYTHON" - "$db" "$F" >"$tmp/py" 2>&1 <<'EOF'
import csv, sqlite3, sys
db, d = sys.argv[1], sys.argv[2]
files = [("comma.csv", ","), ("tab.tsv", "\t"), ("semicolon.csv", ";"), ("crlf-bom.csv", ","),
         ("quoted.csv", ",")]
con = sqlite3.connect("file:" + db + "?mode=ro", uri=True)
bad = 0
for batch, (name, delim) in enumerate(files, 1):
    with open(d + "/" + name, newline="", encoding="utf-8-sig") as f:
        rows = list(csv.reader(f, delimiter=delim))
    head, body = rows[0], rows[1:]
    cols = ", ".join('"' + h.replace('"', '""') + '"' for h in head)
    got = con.execute("SELECT " + cols + " FROM runs WHERE shoal_batch = ? ORDER BY rowid",
                      (batch,)).fetchall()
    if len(got) != len(body):
        print("FAIL: %s: %d rows stored, csv module reads %d" % (name, len(got), len(body)))
        bad += 1
        continue
    for want_row, got_row in zip(body, got):
        for w, g in zip(want_row, got_row):
            ok = (g is None and w == "") or (isinstance(g, (int, float)) and float(w) == g) \
                 or (isinstance(g, str) and g == w)
            if not ok:
                print("FAIL: %s: stored %r, csv module reads %r" % (name, g, w))
                bad += 1
    if not bad:
        print("PASS: %s: every cell matches Python's csv module" % name)
sys.exit(1 if bad else 0)
EOF
then cat "$tmp/py"; else cat "$tmp/py"; fails=$((fails + 1)); fi

# Bad CSV: exit 2 with file:line:column, and the archive is left byte for byte as it was.
cp "$db" "$tmp/before.db"
run "unterminated quote: file:line:column of the opening quote" 2 "$F/bad-quote.csv:3:3:" \
  "$SHOAL" import "$F/bad-quote.csv" --archive "$db"
run "wrong field count (RFC 4180 2.4): file:line:column of the extra field" 2 \
  "$F/bad-count.csv:3:7: found 4 fields on this row, expected 3" \
  "$SHOAL" import "$F/bad-count.csv" --archive "$db"
run "duplicate header name: file:1:column" 2 "$F/bad-dup-header.csv:1:14:" \
  "$SHOAL" import "$F/bad-dup-header.csv" --archive "$db"
run "empty header name: file:1:column" 2 "$F/bad-empty-header.csv:1:5:" \
  "$SHOAL" import "$F/bad-empty-header.csv" --archive "$db"
if cmp -s "$db" "$tmp/before.db"; then pass "failed imports leave the archive unchanged"
else fail "a failed import changed the archive"; fi
run "a missing CSV file is bad input" 2 "cannot open" "$SHOAL" import "$tmp/none.csv" --archive "$db"
echo "plain text, not a database, long enough to be read as one" >"$tmp/text.db"
cp "$tmp/text.db" "$tmp/text-copy.db"
run "importing into a file that is not SQLite is bad input" 2 "not an SQLite database" \
  "$SHOAL" import "$F/comma.csv" --archive "$tmp/text.db"
if cmp -s "$tmp/text.db" "$tmp/text-copy.db"; then pass "the file that is not SQLite is left alone"
else fail "import changed a file that is not SQLite"; fi
run "import without --archive is a usage error" 2 "import needs --archive" \
  "$SHOAL" import "$F/comma.csv"

# Header names with quotes and semicolons become quoted SQL identifiers.
run "header with quotes and semicolons imports" 0 "imported 2 rows" \
  "$SHOAL" import "$F/odd-header.csv" --archive "$tmp/odd.db" --table 'odd "t"; x'
if "$PYTHON" -c '
import sqlite3, sys
con = sqlite3.connect(sys.argv[1])
cols = [r[1] for r in con.execute("PRAGMA table_info(\"odd \"\"t\"\"; x\")")]
sys.exit(0 if cols == ["it'"'"'s; \"odd\"", "plain;x", "a,b", "shoal_batch"] else 1)' "$tmp/odd.db"
then pass "names with quotes, semicolons and commas stored intact (read back by Python sqlite3)"
else fail "column names with quotes and semicolons not stored intact"; fi

# Data checks through shoal check.
for name in outside nonnumeric bad-bool bad-level missing-column empty-output; do
  rm -f "$tmp/$name.db"
  "$SHOAL" import -q "$F/$name.csv" --archive "$tmp/$name.db" || fail "import of $name.csv"
done
run "inputs outside the domain: not adequate (exit 1)" 1 \
  "check failed: 2 inputs have values outside" \
  "$SHOAL" check "$F/ward.graph" "$tmp/outside.db"
run "out-of-domain example names row and value" 1 "arrivals, row 2: 14, outside [2, 12]" \
  "$SHOAL" check "$F/ward.graph" "$tmp/outside.db"
run "non-whole integer input is out of domain" 1 \
  "staff, row 3: 2.5, not a whole number in [1, 9]" \
  "$SHOAL" check "$F/ward.graph" "$tmp/outside.db"
run "non-numeric cell: row and column, found and expected (exit 2)" 2 \
  "nonnumeric.db: row 2, column arrivals: found 'abc', expected a number" \
  "$SHOAL" check "$F/ward.graph" "$tmp/nonnumeric.db"
run "bool other than 0/1/true/false (exit 2)" 2 \
  "row 1, column fast: found 'yes', expected 0, 1, true or false" \
  "$SHOAL" check "$F/ward.graph" "$tmp/bad-bool.db"
run "undeclared level names it and the declared ones (exit 2)" 2 \
  "found the level 'west', expected one of the declared levels: north, south, east" \
  "$SHOAL" check "$F/ward.graph" "$tmp/bad-level.db"
run "missing columns are all named (exit 2)" 2 "recorded variables 'staff', 'site';" \
  "$SHOAL" check "$F/ward.graph" "$tmp/missing-column.db"
run "an output with no values at all: not adequate (exit 1)" 1 \
  "1 recorded variable has no values" \
  "$SHOAL" check "$F/ward.graph" "$tmp/empty-output.db"
run "a missing archive is bad input" 2 "cannot open the archive" \
  "$SHOAL" check "$F/ward.graph" "$tmp/none.db"
run "a missing table is bad input" 2 "found no table 'other'" \
  "$SHOAL" check "$F/ward.graph" "$db" --table other

# JSON output, read by Python's json module.
run "check --json" 1 "" "$SHOAL" check --json "$F/ward.graph" "$tmp/outside.db"
if "$PYTHON" -c '
import json, sys
d = json.load(open(sys.argv[1]))
v = {x["name"]: x for x in d["variables"]}
ok = (d["schema_version"] == 1 and d["runs"] == 3 and d["adequate"] is False
      and d["owned"] is True and v["arrivals"]["outside"] == 1 and v["arrivals"]["examples"][0]["row"] == 2
      and v["arrivals"]["examples"][0]["value"] == 14 and "outside" not in v["wait"]
      and len(d["batches"]) == 1 and d["batches"][0]["rows"] == 3)
sys.exit(0 if ok else 1)' "$tmp/out"
then pass "check --json gives runs, per-variable counts, examples and batches (Python json)"
else fail "check --json content: $(head -c 400 "$tmp/out")"; fi

# An archive of the user's own is opened read-only: bytes and modification time unchanged.
if command -v sqlite3 >/dev/null 2>&1; then
  own=$tmp/own.db
  sqlite3 "$own" "CREATE TABLE runs(run, arrivals, staff, fast, site, wait);
    INSERT INTO runs VALUES(1, 3, 2, 'true', 'north', 4.5), (2, 5, 3, 0, 'east', 'NaN');"
  cp "$own" "$tmp/own-copy.db"
  m0=$(stat -c %y "$own")
  run "check of the user's own archive (no batches) passes" 0 "the user's own: read only" \
    "$SHOAL" check "$F/ward.graph" "$own"
  m1=$(stat -c %y "$own")
  if cmp -s "$own" "$tmp/own-copy.db" && [ "$m0" = "$m1" ] && [ ! -e "$own-journal" ]; then
    pass "the user's archive keeps its bytes and modification time"
  else fail "check changed the user's archive"; fi
  run "text 'NaN' counts as missing" 0 "" "$SHOAL" check --csv "$F/ward.graph" "$own"
  if grep -q '^wait,output,real,1,$' "$tmp/out"; then pass "check --csv: wait has 1 missing"
  else fail "check --csv missing count: $(cat "$tmp/out")"; fi
else
  echo "SKIP: the sqlite3 shell is not installed"
fi

[ "$fails" -eq 0 ]
