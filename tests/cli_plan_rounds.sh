#!/bin/sh
# CLI checks of `shoal plan --rounds K`: the first batch of a plan split into K rounds, its learning
# share, and the advice to plan again. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if eval "$1"; then pass "$2"; else fail "$2"; fi; }

tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
graph=fixtures/demo/triage.graph
db="$tmp/demo.db"
"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$db" >/dev/null 2>&1 || fail "demo archive imports"

"$SHOAL" plan "$graph" "$db" --budget 200 --rounds 4 -o "$tmp/r.csv" >"$tmp/out" 2>&1
check 'grep -q "round 1 of 4: this batch holds 50 configurations" "$tmp/out"' \
  "--budget 200 --rounds 4 writes a first batch of 200 / 4 = 50 configurations"
check '[ "$(tail -n +2 "$tmp/r.csv" | wc -l)" -eq 50 ]' "the plan file holds the 50 runs of round 1"
check 'grep -q "plan again" "$tmp/out" && grep -q "about 150 remain" "$tmp/out"' \
  "the output says to plan again after the batch and how much of the plan remains (150)"
"$SHOAL" plan "$graph" "$db" --budget 200 --rounds 4 -o "$tmp/r.csv" --json >"$tmp/j" 2>&1
check "\"$PYTHON\" -c 'import json,sys; d=json.load(open(sys.argv[1])); sys.exit(not (d[\"rounds\"] == 4 and d[\"explore\"] == 12 and d[\"whole_plan_configurations\"] == 200))' \"$tmp/j\"" \
  "JSON: rounds 4, 12 configurations (a quarter of the batch) to learn the models, whole plan 200"
"$SHOAL" plan "$graph" "$db" --budget 200 -o "$tmp/one.csv" >"$tmp/out1" 2>&1
check '! grep -q "round 1 of" "$tmp/out1" && [ "$(tail -n +2 "$tmp/one.csv" | wc -l)" -eq 200 ]' \
  "without --rounds the whole plan of 200 is written and no round advice printed"
"$SHOAL" plan "$graph" "$db" --budget 10 --rounds 0 -o "$tmp/z.csv" >/dev/null 2>"$tmp/err"
rc=$?
check '[ $rc -eq 2 ] && grep -q "rounds" "$tmp/err"' "--rounds 0 is a usage error (exit 2)"
[ "$fails" -eq 0 ]
