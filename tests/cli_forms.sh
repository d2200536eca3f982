#!/bin/sh
# CLI checks of the graph's own forms (units, steps and ranges, ordered levels, run noise): the
# README and manual-page examples parse, bad input exits 2 with file:line:column, the manual page
# renders cleanly. See LICENSE.
: "${SHOAL:=build/shoal}"
fails=0
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if eval "$1"; then pass "$2"; else fail "$2"; fi; }

tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT

# The README's example of the forms, cut out of README.md, parses and makes the claims it says.
awk '/^# Invented traffic corridor/,/^```$/' README.md | grep -v '^```' >"$tmp/readme.graph"
"$SHOAL" claims "$tmp/readme.graph" --json >"$tmp/readme.json" 2>"$tmp/err"
rc=$?
check '[ $rc -eq 0 ]' "the README's example graph parses (exit $rc: $(cat "$tmp/err"))"
check 'grep -q "\"effect_written\": \"1 per 1000\"" "$tmp/readme.json"' \
  "its 'effect 1 per 1000' is reported as written"
check 'grep -q "\"rests_on_noise_independence\": true" "$tmp/readme.json"' \
  "its claims between 'stops' and the other outputs rest on 'noise independent stops'"
check 'grep -q "\"outcome_unit\": \"min\"" "$tmp/readme.json"' "units reach the claims' JSON"

# The manual page's example parses too, and the page renders without warnings.
awk '/^# Invented traffic corridor/,/^\.fi/' coverage/shoal.graph.5 | grep -v '^\.fi' |
  sed 's/\\-/-/g' >"$tmp/man.graph"
"$SHOAL" claims "$tmp/man.graph" >/dev/null 2>&1
rc=$?
check '[ $rc -eq 0 ]' "the manual page's example graph parses (exit $rc)"
if command -v man >/dev/null 2>&1; then
  man --warnings -l coverage/shoal.graph.5 >/dev/null 2>"$tmp/manwarn"
  check '[ ! -s "$tmp/manwarn" ]' "shoal.graph(5) renders without groff warnings ($(head -c 200 "$tmp/manwarn"))"
else
  echo "SKIP: man is not installed: shoal.graph(5) not rendered"
fi

# Bad input: exit 2 and file:line:column (the graph is not changed).
printf 'input x real [0, 1]\noutput y real\nx -> y effect 5 per 0\n' >"$tmp/bad.graph"
cp "$tmp/bad.graph" "$tmp/bad.copy"
"$SHOAL" claims "$tmp/bad.graph" >/dev/null 2>"$tmp/err"
rc=$?
check '[ $rc -eq 2 ]' "a step of 0 exits 2 (got $rc)"
check 'grep -q "bad.graph:3:21: found the step 0, expected a step greater than 0" "$tmp/err"' \
  "the message names file:line:column and what was expected ($(cat "$tmp/err"))"
check 'cmp -s "$tmp/bad.graph" "$tmp/bad.copy"' "the graph file is left as it was"
printf 'output y real unit "a\rb"\n' >"$tmp/cr.graph"
"$SHOAL" claims "$tmp/cr.graph" >/dev/null 2>"$tmp/err"
rc=$?
check '[ $rc -eq 2 ] && grep -q "cr.graph:1:20:.*control character" "$tmp/err"' \
  "a unit holding a carriage return exits 2 at 1:20 ($(cat "$tmp/err"))"

# Run noise: three inputs, three outputs, no output-output edge.
cat >"$tmp/three.graph" <<'G'
# Invented: three inputs, three outputs.
input a real [0, 1]
input b real [0, 1]
input c real [0, 1]
output x real
output y real
output z real
default effect 0.2 sd
default margin 0.1 sd
a -> x
b -> y
c -> z
G
# Columns of the claim record: index, kind, treatment, ... (README, "The claim record").
"$SHOAL" claims "$tmp/three.graph" --csv >"$tmp/shared.csv"
n_oo=$(awk -F, '$2 == "absence" && $3 ~ /^[xyz]$/' "$tmp/shared.csv" | wc -l)
check '[ "$n_oo" -eq 0 ]' "shared run noise (the default): no output-output absence claim (got $n_oo)"
echo "noise independent" >>"$tmp/three.graph"
"$SHOAL" claims "$tmp/three.graph" --csv >"$tmp/indep.csv"
n_oo=$(awk -F, '$2 == "absence" && $3 ~ /^[xyz]$/' "$tmp/indep.csv" | wc -l)
check '[ "$n_oo" -eq 3 ]' "'noise independent': the 3 output-output absence claims (got $n_oo)"
check 'head -n 1 "$tmp/indep.csv" | grep -q ",rests_on_noise_independence$"' \
  "claims CSV ends with the rests_on_noise_independence column"

echo "cli_forms: $fails failed"
[ "$fails" -eq 0 ]
