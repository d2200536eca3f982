#!/bin/sh
# Edge cases of the command line and its inputs: each gives a clear message and the documented exit
# status (README.md, "Exit status"), never a crash, a hang or a misleading verdict. See LICENSE.

# The expected statuses follow the README's table: 0 adequate, 1 not adequate, 2 bad input/usage.
# Every case runs under `timeout` so a hang fails instead of stalling the suite.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv

# run WANT_RC DESC ARGS...: runs shoal (60 s cap), checks the status; stderr in $tmp/err.
run() {
  want=$1 desc=$2
  shift 2
  timeout 60 "$SHOAL" "$@" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq "$want" ]; then ok "$desc exits $want"
  else bad "$desc exits $rc, expected $want: $(head -c 400 "$tmp/err")"; fi
}
# said TEXT DESC: stderr holds TEXT.
said() {
  if grep -qF -- "$1" "$tmp/err"; then ok "$2"
  else bad "$2: stderr lacks '$1': $(head -c 400 "$tmp/err")"; fi
}

# An archive with a single run: every claim the graph makes testable is untestable on the runs
# (no treatment varies), so survey must not call the campaign adequate; power already says 1.
head -2 "$CSV" >"$tmp/one.csv"
run 0 "import of a CSV with one row" import "$tmp/one.csv" --archive "$tmp/one.db" -q
run 1 "power on an archive with one run" power "$G" "$tmp/one.db" -q
run 1 "survey on an archive with one run" survey "$G" "$tmp/one.db" -o "$tmp/rep1"
if grep -q "NOT ADEQUATE" "$tmp/out"; then ok "survey on one run says NOT ADEQUATE"
else bad "survey on one run should say NOT ADEQUATE: $(grep ADEQUATE "$tmp/out")"; fi

# Bytes that are not UTF-8 (RFC 3629 section 4) in a graph or a CSV would pass into names and from
# there into JSON output no parser accepts: refused with exit 2 at file:line:column.
printf 'input "a\377b" real [0, 1]\noutput y real noise 1\n' >"$tmp/latin.graph"
run 2 "claims on a graph with the byte 0xFF in a name" claims "$tmp/latin.graph"
said "latin.graph:1:9: found the byte 0xFF" "0xFF in a graph is reported at 1:9"
printf 'input a real [0, 1]\noutput y real noise 1\n# \355\240\200 a surrogate\n' >"$tmp/surr.graph"
run 2 "claims on a graph with an encoded surrogate in a comment" claims "$tmp/surr.graph"
said "surr.graph:3:3: found the byte 0xED" "a surrogate in a graph is reported at 3:3"
printf 'input a real [0, 1]\noutput "caf\303\251 \342\202\254 \360\237\220\237" real noise 1\n' \
  >"$tmp/utf8.graph"
printf 'default effect 1\na -> "caf\303\251 \342\202\254 \360\237\220\237"\n' >>"$tmp/utf8.graph"
run 0 "claims on a graph with 2-, 3- and 4-byte UTF-8 names" claims "$tmp/utf8.graph" --json
if "$PYTHON" -c 'import json,sys; json.load(sys.stdin)' <"$tmp/out" 2>/dev/null
then ok "claims --json with UTF-8 names is JSON (Python json module)"
else bad "claims --json with UTF-8 names is not JSON"; fi
printf 'run_id,seed,arr\377ivals\n1,2,3\n' >"$tmp/latin.csv"
run 2 "import of a CSV with the byte 0xFF in the header" import "$tmp/latin.csv" \
  --archive "$tmp/latin.db"
said "latin.csv:1:13: found the byte 0xFF" "0xFF in a CSV header is reported at the field, 1:13"
printf 'a,b\n1,x\300\257\n' >"$tmp/overlong.csv"
run 2 "import of a CSV with an overlong encoding in a field" import "$tmp/overlong.csv" \
  --archive "$tmp/overlong.db"
said "overlong.csv:2:3: found the byte 0xC0" "an overlong '/' in a CSV is reported at 2:3"

# One input: there are no input pairs or triples, so 2-way and 3-way coverage are not measured, and
# the text must say so instead of printing "nan" or blaming "more than 20 inputs"; a demanded
# 3-way share is missed (nothing reached it), and survey must not claim "0.0% of cells reached".
printf 'input a real [0, 1]\noutput y real\ndefault effect 0.5 sd\na -> y\n' >"$tmp/one_in.graph"
printf 'a,y\n0.1,1\n0.5,2\n0.9,2.5\n0.3,1.1\n0.7,2.2\n0.2,1.3\n' >"$tmp/one_in.csv"
run 0 "import of six runs of one input" import "$tmp/one_in.csv" --archive "$tmp/one_in.db" -q
run 0 "coverage --way 3 with one input" coverage "$tmp/one_in.graph" "$tmp/one_in.db" --way 3
if grep -q "nan" "$tmp/out"; then bad "coverage with one input prints nan: $(grep nan "$tmp/out")"
else ok "coverage with one input prints no nan"; fi
if grep -qF "2-way coverage: not measured (fewer than 2 inputs)" "$tmp/out" &&
   grep -qF "3-way coverage: not measured (fewer than 3 inputs)" "$tmp/out"
then ok "coverage with one input says why 2-way and 3-way are not measured"
else bad "coverage with one input: $(grep -- '-way' "$tmp/out")"; fi
run 1 "coverage --need-threeway 0.5 with one input" coverage "$tmp/one_in.graph" "$tmp/one_in.db" \
  --way 3 --need-threeway 0.5
run 1 "survey --need-threeway 0.5 with one input" survey "$tmp/one_in.graph" "$tmp/one_in.db" \
  --way 3 --need-threeway 0.5 -o "$tmp/rep_one_in"
# Long lines wrap to 80 columns when stdout is not a terminal: read the text with its breaks joined.
if tr -s ' \n' '  ' <"$tmp/out" | grep -qF "3-way coverage was not measured, 50.0% needed"
then ok "survey says the 3-way share was not measured rather than 0% reached"
else bad "survey gate text with one input: $(grep -i gate "$tmp/out")"; fi

# An empty graph has no claims at all: the family line must not speak of one testable claim, and
# with nothing to test the runs are not adequate (exit 1, issue 17).
: >"$tmp/empty.graph"
head -31 "$CSV" >"$tmp/thirty.csv"
run 0 "import of 30 runs" import "$tmp/thirty.csv" --archive "$tmp/thirty.db" -q
run 1 "power on an empty graph" power "$tmp/empty.graph" "$tmp/thirty.db"
if grep -q "over 0 testable claims" "$tmp/out" && ! grep -q "over 1 testable claim" "$tmp/out"
then ok "power on an empty graph says Bonferroni over 0 testable claims"
else bad "power on an empty graph: $(head -1 "$tmp/out")"; fi

# A bool input that is constant in the runs and an outcome with no noise SD: the plan cannot size
# the claim, and must not say there are no runs (there are 40) but name the constant treatment.
printf 'input a real [0, 1]\ninput f bool\noutput y real\ndefault effect 0.5 sd\n' >"$tmp/const.graph"
printf 'a -> y\nf -> y\n' >>"$tmp/const.graph"
"$PYTHON" -c '
print("a,f,y")
for i in range(40): print("%g,1,%g" % (i / 40, (i * 7919 % 40) / 10 + i / 40))' >"$tmp/const.csv"
run 0 "import of 40 runs with a constant bool" import "$tmp/const.csv" --archive "$tmp/const.db" -q
run 1 "power with a constant bool treatment" power "$tmp/const.graph" "$tmp/const.db"
if grep -qF "treatment 'f' never varies" "$tmp/out"; then ok "power names the constant bool 'f'"
else bad "power with a constant bool: $(grep 'f -> y' "$tmp/out")"; fi
run 1 "plan with a constant bool treatment" plan "$tmp/const.graph" "$tmp/const.db" --budget 10 \
  -o "$tmp/const-plan.csv"
if tr -s ' \n' '  ' <"$tmp/out" | grep -q "cannot be sized.*never varies"
then ok "plan's 'cannot be sized' note allows for a treatment that never varies"
else bad "plan with a constant bool: $(grep 'cannot be sized' "$tmp/out")"; fi

# Cases that already behave; pinned so they stay so.
head -1 "$CSV" >"$tmp/header.csv"
: >"$tmp/nothing.csv"
run 2 "import of an empty CSV" import "$tmp/nothing.csv" --archive "$tmp/nothing.db"
said "nothing.csv:1:1: found an empty file" "an empty CSV is reported at 1:1"
run 0 "import of a CSV with only a header" import "$tmp/header.csv" --archive "$tmp/zero.db"
run 1 "power on an archive with zero rows" power "$G" "$tmp/zero.db" -q
run 1 "check on an archive with zero rows" check "$G" "$tmp/zero.db" -q
run 1 "survey on an archive with zero rows" survey "$G" "$tmp/zero.db" -o "$tmp/rep0" -q
run 1 "plan on an archive with zero rows" plan "$G" "$tmp/zero.db" --budget 5 -o "$tmp/p0.csv" -q

# A recorded column that is entirely NULL: check's gate fails (README, shoal check).
cp "$tmp/thirty.db" "$tmp/null.db"
if command -v sqlite3 >/dev/null 2>&1; then
  sqlite3 "$tmp/null.db" 'UPDATE runs SET wait = NULL'
  run 1 "check with the column wait entirely NULL" check "$G" "$tmp/null.db"
  if grep -q "wait .* 30 " "$tmp/out"; then ok "check counts 30 missing cells of wait"
  else bad "check with wait NULL: $(grep wait "$tmp/out")"; fi
else
  echo "SKIP: sqlite3 shell not installed (NULL column case)"
fi

# A 4 MB field in a column the graph does not use imports and reads back without trouble.
"$PYTHON" -c '
import sys
rows = open(sys.argv[1]).read().splitlines()[:11]
print(rows[0])
for r in rows[1:]:
    f = r.split(","); f[0] = "x" * 4000000; print(",".join(f))' "$CSV" >"$tmp/huge.csv"
run 0 "import of a CSV with a 4 MB field" import "$tmp/huge.csv" --archive "$tmp/huge.db" -q
run 0 "check of the archive with a 4 MB field" check "$G" "$tmp/huge.db" -q

# Files of the wrong kind, directories, tables that do not exist, paths that cannot be written.
run 2 "claims on a directory" claims "$tmp"
said "$tmp: cannot open the graph file: found a directory" "claims on a directory names it"
run 2 "power on a directory as archive" power "$G" "$tmp"
said "expected an SQLite archive file" "a directory as archive says what was expected"
run 2 "power on a graph file as archive" power "$G" "$G"
said "not an SQLite database" "a text file as archive is named as not SQLite"
run 2 "power with --table that does not exist" power "$G" "$tmp/thirty.db" --table nope
said "found no table 'nope'" "a missing --table is named"
run 2 "survey -o under a missing directory" survey "$G" "$tmp/thirty.db" -o "$tmp/no/such/dir"
run 2 "survey -o naming a file" survey "$G" "$tmp/thirty.db" -o "$G"
said "exists and is not a directory" "survey -o on a file says so"
run 2 "plan -o under a missing directory" plan "$G" "$tmp/thirty.db" --budget 5 -o "$tmp/no/p.csv"
run 2 "import --archive on a directory" import "$CSV" --archive "$tmp"

# Options: out of range, malformed, unknown, missing, extra arguments.
run 2 "plan --budget -3" plan "$G" "$tmp/thirty.db" --budget -3
said "--budget expects a whole number" "--budget -3 says what it expects"
run 1 "plan --budget 0" plan "$G" "$tmp/thirty.db" --budget 0 -o "$tmp/p00.csv" -q
run 2 "plan --replicates 1000000000" plan "$G" "$tmp/thirty.db" --budget 5 --replicates 1000000000
said "--replicates expects a whole number" "--replicates too large says what it expects"
run 2 "power --alpha abc" power "$G" "$tmp/thirty.db" --alpha abc
run 2 "power --alpha 1.5" power "$G" "$tmp/thirty.db" --alpha 1.5
run 2 "power --power 1" power "$G" "$tmp/thirty.db" --power 1
run 2 "power with an unknown option" power "$G" "$tmp/thirty.db" --frobnicate
# README, "Exit status": the message on stderr starts with "shoal:", even when run by a path.
if head -1 "$tmp/err" | grep -q "^shoal: .*frobnicate"; then ok "an unknown option's message starts with shoal:"
else bad "an unknown option's message: $(head -1 "$tmp/err")"; fi
run 2 "power with --alpha and no value" power "$G" "$tmp/thirty.db" --alpha
if head -1 "$tmp/err" | grep -q "^shoal: .*alpha"; then ok "a missing value's message starts with shoal:"
else bad "a missing value's message: $(head -1 "$tmp/err")"; fi
run 2 "power with an extra argument" power "$G" "$tmp/thirty.db" extra
run 2 "an unknown command" frobnicate
run 1 "power with --alpha repeated" power "$G" "$tmp/thirty.db" --alpha 0.5 --alpha 0.01 --json
if grep -q '"alpha": 0.01,' "$tmp/out"; then ok "a repeated --alpha: the last one counts"
else bad "a repeated --alpha: $(head -c 200 "$tmp/out")"; fi

# A declared level that never occurs in the runs: coverage shows it as an empty bin.
printf 'input s levels {p, q, r}\noutput y real\ndefault effect 0.5 sd\ns -> y\n' >"$tmp/lv.graph"
printf 's,y\np,1\nq,2\np,1.5\nq,2.5\np,0.5\nq,2.2\n' >"$tmp/lv.csv"
run 0 "import of runs that never set level r" import "$tmp/lv.csv" --archive "$tmp/lv.db" -q
run 0 "coverage with a level that never occurs" coverage "$tmp/lv.graph" "$tmp/lv.db"
if grep -q "r empty (0)" "$tmp/out"; then ok "coverage lists the level r as empty"
else bad "coverage with level r never run: $(grep -A1 '^marginal' "$tmp/out")"; fi
run 1 "power with a level that never occurs" power "$tmp/lv.graph" "$tmp/lv.db" -q

# No archive and no noise SD: plan cannot size the claims and says so (exit 1, not a crash).
printf 'input a real [0, 1]\ninput b bool\noutput y real\ndefault effect 0.5 sd\n' >"$tmp/nonoise.graph"
printf 'default margin 0.1 sd\na -> y\n' >>"$tmp/nonoise.graph"
run 1 "plan with no archive and no noise SD" plan "$tmp/nonoise.graph" --budget 10 -o "$tmp/nn.csv"
if grep -q "cannot be sized: 2 claims" "$tmp/out"; then ok "plan says both claims cannot be sized"
else bad "plan with no noise SD: $(cat "$tmp/out")"; fi

[ "$fails" -eq 0 ]
