#!/bin/sh
# CLI checks of `shoal plan`: the plan file, replicates and seeds, domains, exit statuses, bad input.
# See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
pass() { echo "PASS: $1"; }
fail() { echo "FAIL: $1"; fails=$((fails + 1)); }
check() { if eval "$1"; then pass "$2"; else fail "$2"; fi; }

tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
# The demo graph with its outputs' run noise declared independent: under the default (outputs share
# the run's noise) the claims that adjust for an output, and site -/-> wait, are untestable, and
# these checks exercise how the plan treats exactly those claims.
graph="$tmp/triage-indep.graph"
{ cat fixtures/demo/triage.graph; echo "noise independent"; } >"$graph"
db="$tmp/demo.db"
"$SHOAL" import fixtures/demo/triage-runs.csv --archive "$db" >/dev/null 2>&1 ||
  fail "demo archive imports"

# A fixed budget: 7 configurations x 3 seeds, inside the demo's declared domains.
"$SHOAL" plan "$graph" "$db" --budget 7 --replicates 3 --seed 5 -o "$tmp/p.csv" >"$tmp/out" 2>"$tmp/err"
rc=$?
check '[ $rc -eq 0 ] || [ $rc -eq 1 ]' "plan --budget 7 --replicates 3 runs (exit $rc)"
check '[ "$(head -n 1 "$tmp/p.csv")" = "arrivals,staff,fast_track,site,seed" ]' \
  "plan file header: the inputs in declaration order, then seed"
check '[ "$(tail -n +2 "$tmp/p.csv" | wc -l)" -eq 21 ]' "7 configurations x 3 replicates = 21 rows"
# Domains from fixtures/demo/triage.graph: arrivals real [4, 24], staff integer [2, 12],
# fast_track bool, site levels {hill, river, port}.
bad=$(tail -n +2 "$tmp/p.csv" | awk -F, '
  !($1 >= 4 && $1 <= 24) { print "arrivals " $1 }
  !($2 >= 2 && $2 <= 12 && $2 == int($2)) { print "staff " $2 }
  !($3 == "0" || $3 == "1") { print "fast_track " $3 }
  !($4 == "hill" || $4 == "river" || $4 == "port") { print "site " $4 }
  !($5 ~ /^[0-9]+$/) { print "seed " $5 }')
check '[ -z "$bad" ]' "every planned value lies in its declared domain ${bad:+(found: $bad)}"
check '[ "$(tail -n +2 "$tmp/p.csv" | cut -d, -f5 | sort -u | wc -l)" -eq 21 ]' \
  "the 21 seeds are distinct"
check '[ "$(tail -n +2 "$tmp/p.csv" | cut -d, -f1-4 | uniq | wc -l)" -le 7 ]' \
  "each configuration's 3 replicates sit together with the same inputs"
check 'grep -q "assumed (not steered)" "$tmp/out"' "the output says which claims are assumed"
check 'grep -q "power now" "$tmp/out" && grep -q "predicted" "$tmp/out"' \
  "the output gives power now and predicted power"
check '[ -z "$(ls "$tmp" | grep "tmp\.")" ]' "no temporary file is left beside the plan file"

# The same seed gives the same plan; another seed other run seeds.
"$SHOAL" plan "$graph" "$db" --budget 7 --replicates 3 --seed 5 -o "$tmp/p2.csv" >/dev/null 2>&1
check 'cmp -s "$tmp/p.csv" "$tmp/p2.csv"' "the same --seed reproduces the plan file"
"$SHOAL" plan "$graph" "$db" --budget 7 --replicates 3 --seed 6 -o "$tmp/p3.csv" >/dev/null 2>&1
check '! cmp -s "$tmp/p.csv" "$tmp/p3.csv"' "another --seed gives another plan file"

# JSON output parses and carries a prediction per testable claim.
"$SHOAL" plan "$graph" "$db" --budget 3 -o "$tmp/j.csv" --json >"$tmp/j.json" 2>/dev/null
check '"$PYTHON" -c "import json,sys; d=json.load(open(sys.argv[1])); assert d[\"configurations\"] == 3 and all(\"power_after\" in c for c in d[\"claims\"])" "$tmp/j.json"' \
  "--json parses (Python json) with configurations and power_after per claim"

# --budget auto on the demo: site -0-> wait cannot be reached, so the plan is not adequate (1).
"$SHOAL" plan "$graph" "$db" --budget auto -o "$tmp/auto.csv" >"$tmp/auto.out" 2>&1
rc=$?
check '[ $rc -eq 1 ]' "--budget auto on the demo exits 1 when a claim cannot reach the target (got $rc)"
check 'grep -q "unreachable" "$tmp/auto.out"' "--budget auto names the unreachable claims"

# No archive: a first campaign sized from the declared noise SDs; all outcomes declare one here.
cat >"$tmp/first.graph" <<'EOF'
# invented first campaign
input dose real [0, 4]
input mode bool
output yield real noise 2
design independent
dose -> yield effect 0.5
mode -> yield effect 1.5
EOF
"$SHOAL" plan "$tmp/first.graph" --budget auto -o "$tmp/first.csv" >"$tmp/first.out" 2>&1
rc=$?
check '[ $rc -eq 0 ]' "first campaign from noise SDs: every claim reaches the target, exit 0 (got $rc)"
check 'grep -q "sized from the noise SD" "$tmp/first.out"' "first campaign says it used the noise SD"
n_first=$(tail -n +2 "$tmp/first.csv" | wc -l)
check '[ "$n_first" -gt 0 ]' "first campaign plans runs ($n_first)"
# Without a noise SD the claim cannot be sized: exit 1 and say so.
sed 's/ noise 2//' "$tmp/first.graph" >"$tmp/nonoise.graph"
"$SHOAL" plan "$tmp/nonoise.graph" --budget auto -o "$tmp/nn.csv" >"$tmp/nn.out" 2>&1
rc=$?
check '[ $rc -eq 1 ] && grep -q "cannot be sized" "$tmp/nn.out"' \
  "no runs and no noise SD: 'cannot be sized', exit 1 (got $rc)"

# hold: the held input keeps its value in every planned run.
sed 's/^design independent/design independent\nhold mode true/' "$tmp/first.graph" >"$tmp/hold.graph"
"$SHOAL" plan "$tmp/hold.graph" --budget 12 -o "$tmp/hold.csv" >/dev/null 2>&1
check '[ "$(tail -n +2 "$tmp/hold.csv" | cut -d, -f2 | sort -u)" = "1" ]' \
  "a held bool input is 1 (true) in every planned run"

# Bad input exits 2.
"$SHOAL" plan --budget 5 >/dev/null 2>&1
rc=$?
check '[ $rc -eq 2 ]' "--budget without a graph exits 2 (got $rc)"
"$SHOAL" plan "$graph" "$db" --budget many >/dev/null 2>&1
rc=$?
check '[ $rc -eq 2 ]' "--budget many exits 2 (got $rc)"
"$SHOAL" plan "$graph" "$db" --budget 3 --replicates 0 >/dev/null 2>&1
rc=$?
check '[ $rc -eq 2 ]' "--replicates 0 exits 2 (got $rc)"
# A graph whose input the archive does not record: an unknown input for this archive.
sed 's/^input  site .*/&\ninput  beds integer [1, 9]/' "$graph" >"$tmp/beds.graph"
"$SHOAL" plan "$tmp/beds.graph" "$db" --budget 3 -o "$tmp/b.csv" >/dev/null 2>"$tmp/b.err"
rc=$?
check '[ $rc -eq 2 ] && grep -q beds "$tmp/b.err"' "an input the archive lacks exits 2 and names it (got $rc)"
check '[ ! -e "$tmp/b.csv" ]' "no plan file is written on bad input"
"$SHOAL" plan "$graph" "$db" --budget 3 -o "$tmp/no/such/dir/p.csv" >/dev/null 2>&1
rc=$?
check '[ $rc -eq 2 ]' "an unwritable plan path exits 2 (got $rc)"

# A campaign just started (1 to 5 runs of the demo archive, fewer than a claim's parameters): the
# plan is made (exit 1: not adequate yet), never "a numeric routine failed" (exit 2); with one run
# a claim whose input treatment never varied names the treatment, so new runs can vary it.
for k in 1 2 3 5; do
    head -n $((k + 1)) fixtures/demo/triage-runs.csv >"$tmp/start$k.csv"
    "$SHOAL" import "$tmp/start$k.csv" --archive "$tmp/start$k.db" -q
    "$SHOAL" plan fixtures/demo/triage.graph "$tmp/start$k.db" --budget 20 -o "$tmp/start$k-plan.csv" >"$tmp/start$k.out" 2>&1
    rc=$?
    check '[ $rc -eq 1 ] && [ -s "$tmp/start$k-plan.csv" ]' "plan after $k run(s) writes a plan and exits 1 (got $rc)"
done
check 'grep -q "treatment .arrivals. never varies" "$tmp/start1.out"' "after 1 run the constant treatment is named, not the outcome"

[ "$fails" -eq 0 ]
