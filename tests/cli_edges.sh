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
if grep -qF "3-way coverage was not measured, 50.0% needed" "$tmp/out"
then ok "survey says the 3-way share was not measured rather than 0% reached"
else bad "survey gate text with one input: $(grep -i gate "$tmp/out")"; fi

# An empty graph has no claims at all: the family line must not speak of one testable claim.
: >"$tmp/empty.graph"
head -31 "$CSV" >"$tmp/thirty.csv"
run 0 "import of 30 runs" import "$tmp/thirty.csv" --archive "$tmp/thirty.db" -q
run 0 "power on an empty graph" power "$tmp/empty.graph" "$tmp/thirty.db"
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
if grep -q "cannot be sized.*never varies" "$tmp/out"
then ok "plan's 'cannot be sized' note allows for a treatment that never varies"
else bad "plan with a constant bool: $(grep 'cannot be sized' "$tmp/out")"; fi

[ "$fails" -eq 0 ]
