#!/bin/sh
# What counts as one run: the runseed and ledger statements, repeated rows counted once, conflicting
# replicates, and imports that would double a campaign. The demo campaign is invented. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv

# run WANT_RC DESC ARGS...: runs shoal (120 s cap), checks the status; stdout in $tmp/out, stderr in
# $tmp/err.
run() {
  want=$1 desc=$2
  shift 2
  timeout 120 "$SHOAL" "$@" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq "$want" ]; then ok "$desc exits $want"
  else bad "$desc exits $rc, expected $want: $(head -c 400 "$tmp/err")"; fi
}
# has FILE TEXT DESC: FILE holds TEXT.
# Terminal text wraps to 80 columns when stdout is not a terminal: a phrase may span a line break.
has() {
  if grep -qF -- "$2" "$1" ||
     tr -s ' \n' '  ' <"$1" | grep -qF -- "$(printf '%s' "$2" | tr -s ' ')"; then ok "$3"
  else bad "$3: lacks '$2': $(head -c 600 "$1")"; fi
}

# ---- the graph statements: bad input names file:line:column -----------------------------------
base='input a real [0, 1]
output y real
default effect 0.2 sd
a -> y'
printf '%s\nrunseed s\nrunseed t\n' "$base" >"$tmp/twice.graph"
run 2 "a second runseed" claims "$tmp/twice.graph"
has "$tmp/err" "twice.graph:6:1: found a second 'runseed' statement" "a second runseed is named at 6:1"
printf '%s\nrunseed a\n' "$base" >"$tmp/input.graph"
run 2 "a seed column that is also an input" claims "$tmp/input.graph"
has "$tmp/err" "input.graph:5:9: found 'a' declared as an input on line 1 and as the seed column" \
  "the seed column that is an input is named at 5:9"
printf '%s\nledger wall cost, A\n' "$base" >"$tmp/ledger-input.graph"
run 2 "a bookkeeping column that is also an input (ASCII case folded)" claims "$tmp/ledger-input.graph"
has "$tmp/err" "ledger-input.graph:5:19: found 'A' declared as an input" \
  "the bookkeeping column that is an input is named at 5:19"
printf '%s\nledger wall cost, cpu cost\n' "$base" >"$tmp/cost2.graph"
run 2 "two cost columns" claims "$tmp/cost2.graph"
printf '%s\nrunseed\n' "$base" >"$tmp/noname.graph"
run 2 "runseed without a name" claims "$tmp/noname.graph"
has "$tmp/err" "noname.graph:5:8: found the end of the line, expected the seed column's name" \
  "runseed without a name is named at 5:8"
# A variable may still be called runseed or ledger: `ledger -> y` is an edge.
printf 'input ledger real [0, 1]\noutput y real\ndefault effect 0.2 sd\nledger -> y\n' \
  >"$tmp/edge.graph"
run 0 "an edge from a variable called ledger" claims "$tmp/edge.graph"

# The demo graph with its seed and bookkeeping columns declared.
# (fixtures/demo/triage.graph declares `runseed seed` and `ledger run_id`.)
cp "$G" "$tmp/seeded.graph"
run 0 "import of the demo campaign" import "$CSV" --archive "$tmp/one.db" -q
run 0 "check of the demo with its seed declared" check "$tmp/seeded.graph" "$tmp/one.db"
has "$tmp/out" "seed      column seed" "check names the seed column"
has "$tmp/out" "600 seeds, 0 shared by several configurations" "check counts the demo's seeds"
sed 's/^runseed seed/runseed rng_seed/' "$G" >"$tmp/noseedcol.graph"
line=$(grep -n '^runseed rng_seed' "$tmp/noseedcol.graph" | cut -d: -f1)
run 2 "a seed column missing from the archive" check "$tmp/noseedcol.graph" "$tmp/one.db"
has "$tmp/err" "noseedcol.graph:$line:9: found no column 'rng_seed'" \
  "the missing seed column is named at its declaration"
# A seed that is not a whole number: row and column.
awk -F, 'BEGIN{OFS=","} NR==4{$2="12.5"} {print}' "$CSV" >"$tmp/badseed.csv"
run 0 "import of a campaign with a fractional seed" import "$tmp/badseed.csv" --archive "$tmp/bad.db" -q
run 2 "a fractional seed" power "$tmp/seeded.graph" "$tmp/bad.db"
has "$tmp/err" "row 3, column seed: found '12.5', expected a whole-number seed" \
  "the fractional seed is named by row and column"

# ---- the demo imported twice ---------------------------------------------------------------------
cp "$tmp/one.db" "$tmp/two.db"
sha_before=$(sha256sum "$tmp/two.db" | cut -d' ' -f1)
run 2 "importing the same CSV a second time" import "$CSV" --archive "$tmp/two.db"
has "$tmp/err" "found all 600 rows already in" "the refusal counts the rows"
has "$tmp/err" "first imported as batch 1 (imported " "the refusal names the earlier batch"
sha_after=$(sha256sum "$tmp/two.db" | cut -d' ' -f1)
if [ "$sha_before" = "$sha_after" ]; then ok "a refused import leaves the archive unchanged (sha256)"
else bad "a refused import changed the archive (sha256 $sha_before -> $sha_after)"; fi
run 0 "importing it again with --again" import "$CSV" --archive "$tmp/two.db" --again
has "$tmp/err" "600 of 600 rows were already in the archive (batch 1: 600), appended anyway" \
  "--again says what it did"
run 0 "check of the doubled archive" check "$G" "$tmp/two.db"
has "$tmp/out" "600 runs (1200 rows: 600 repeated rows of the same run counted once)" \
  "check reports the repeated rows"
run 1 "power of the doubled archive" power "$G" "$tmp/two.db"
has "$tmp/out" "600 repeated rows" "power reports the repeated rows"
run 1 "survey of the single import" survey "$G" "$tmp/one.db" -o "$tmp/r1"
# Wrapped lines (an indent of 4 or more) are joined to the line they continue first.
join_wrapped() { awk '/^    / && NR > 1 { line = line " " $0; next } NR > 1 { print line } { line = $0 } END { print line }' "$1"; }
join_wrapped "$tmp/out" | grep -v '^shoal survey\|^runs:\|^report:\|^history:\|shoal plan ' >"$tmp/s1.txt"
run 1 "survey of the doubled archive" survey "$G" "$tmp/two.db" -o "$tmp/r2"
has "$tmp/out" "600 repeated rows of the same run counted once" "survey reports the repeated rows"
join_wrapped "$tmp/out" | grep -v '^shoal survey\|^runs:\|^report:\|^history:\|shoal plan ' >"$tmp/s2.txt"
if cmp -s "$tmp/s1.txt" "$tmp/s2.txt"; then ok "the survey's terminal figures equal the single import's"
else bad "the survey's figures differ: $(diff "$tmp/s1.txt" "$tmp/s2.txt" | head -5)"; fi
has "$tmp/r2/report.md" "600 repeated rows" "the report gives the repeated rows"
has "$tmp/r2/index.html" "600 repeated rows" "the HTML report gives the repeated rows"
# Every figure of summary.json and claims.csv, bar the archive's name, the time, the row count and
# the audit trail and next steps (which name the archive and the command line).
"$PYTHON" - "$tmp/r1" "$tmp/r2" <<'EOF'
import csv, json, sys
def strip(x):
    if isinstance(x, dict):
        return {k: strip(v) for k, v in x.items()
                if k not in ("archive", "generated", "path", "at", "rows", "repeated_rows", "audit", "next_steps")}
    if isinstance(x, list):
        return [strip(v) for v in x]
    return x
a = json.load(open(sys.argv[1] + "/summary.json"))
b = json.load(open(sys.argv[2] + "/summary.json"))
n = b["run_identity"]
ok = strip(a) == strip(b) and n["rows"] == 1200 and n["repeated_rows"] == 600 and n["runs"] == 600
print(("PASS" if ok else "FAIL") + ": every summary.json figure of the doubled archive equals the "
      "single import's (run_identity %s)" % n)
ca = list(csv.reader(open(sys.argv[1] + "/claims.csv")))
cb = list(csv.reader(open(sys.argv[2] + "/claims.csv")))
print(("PASS" if ca == cb and len(ca) > 1 else "FAIL") + ": claims.csv of the doubled archive "
      "equals the single import's (%d rows)" % len(ca))
EOF

# ---- partial overlap: reported with counts, appended ---------------------------------------------
{ head -301 "$CSV"; sed -n '302,400p' "$CSV" | sed 's/^\([0-9]*\),/\1000,/'; } >"$tmp/mix.csv"
cp "$tmp/one.db" "$tmp/mix.db"
run 0 "importing a file that half repeats the archive" import "$tmp/mix.csv" --archive "$tmp/mix.db"
has "$tmp/err" "300 of 399 rows were already in the archive (batch 1: 300)" \
  "partial overlap is reported with counts"
run 0 "check after the partial overlap" check "$G" "$tmp/mix.db"
has "$tmp/out" "600 runs (999 rows: 399 repeated rows" "the partial overlap counts each run once"
run 0 "import --json reports the overlap" import "$CSV" --archive "$tmp/mix.db" --again --json
"$PYTHON" -c '
import json, sys
d = json.load(open(sys.argv[1]))
ok = d["rows_already_present"] == 600 and d["appended_anyway"] is True
print(("PASS" if ok else "FAIL") + ": import --json gives rows_already_present 600 and "
      "appended_anyway (%s)" % d)' "$tmp/out"

# ---- one seed, two outcomes: a data problem, kept as replicates ----------------------------------
# Row 5 repeats row 2's inputs and seed with another wait: the simulator is not deterministic under
# its seed, or two campaigns were mixed.
awk -F, 'BEGIN{OFS=","} NR==2{keep=$0} {print} END{split(keep,f,","); f[1]=601; f[8]=f[8]+7;
  s=f[1]; for(i=2;i<=9;i++) s=s "," f[i]; print s}' "$CSV" >"$tmp/conflict.csv"
run 0 "import of a campaign with a conflicting replicate" import "$tmp/conflict.csv" \
  --archive "$tmp/conflict.db" -q
run 1 "check with a conflicting replicate" check "$tmp/seeded.graph" "$tmp/conflict.db"
has "$tmp/out" "caution: 2 runs share every input and the seed (seed) with another run" \
  "check cautions on the conflicting runs"
has "$tmp/out" "601 runs; 597 configurations, 3 run more than once" \
  "the conflicting runs are counted as replicates"
run 1 "survey with a conflicting replicate" survey "$tmp/seeded.graph" "$tmp/conflict.db" \
  -o "$tmp/r3"
has "$tmp/out" "2 runs share every input" "the survey verdict carries the caution"
has "$tmp/r3/report.md" "2 runs share every input" "the report carries the caution"

# ---- an outcome or treatment that never varies: untestable on these runs, everywhere -------------
# The demo campaign with occupancy set to 0 in every run (column 7), and one with the fast-track
# lane always on (column 5).
awk -F, 'BEGIN{OFS=","} NR>1{$7="0"} {print}' "$CSV" >"$tmp/const.csv"
run 0 "import of a campaign whose occupancy is always 0" import "$tmp/const.csv" \
  --archive "$tmp/const.db" -q
why="untestable on these runs: outcome 'occupancy' never varies: it is 0 in all 600 runs the claim uses"
run 1 "power with a constant outcome" power "$G" "$tmp/const.db"
has "$tmp/out" "arrivals -> occupancy [staff, site]: untestable: $why" \
  "power's table gives the reason"
run 1 "power --csv with a constant outcome" power "$G" "$tmp/const.db" --csv
cp "$tmp/out" "$tmp/power.csv"
run 1 "power --json with a constant outcome" power "$G" "$tmp/const.db" --json
cp "$tmp/out" "$tmp/power.json"
run 1 "survey with a constant outcome" survey "$G" "$tmp/const.db" -o "$tmp/rc"
has "$tmp/out" "$why" "the survey verdict gives the reason"
has "$tmp/rc/index.html" "untestable on these runs: outcome &#39;occupancy&#39; never varies: it is 0" \
  "the HTML report gives the reason"
has "$tmp/rc/report.md" "untestable on these runs: outcome 'occupancy' never varies: it is 0" \
  "the Markdown report gives the reason"
run 1 "plan with a constant outcome" plan "$G" "$tmp/const.db" --budget 20 -o "$tmp/p.csv"
has "$tmp/out" "arrivals -> occupancy: $why" "the plan gives the reason"
has "$tmp/out" "no runs are planned for them" "the plan sizes nothing for them"
run 1 "plan --json with a constant outcome" plan "$G" "$tmp/const.db" --budget 20 \
  -o "$tmp/p2.csv" --json
cp "$tmp/out" "$tmp/plan.json"
"$PYTHON" - "$tmp" "$why" <<'EOF2'
import csv, json, sys
t, why = sys.argv[1], sys.argv[2]
fails = []
def claims_on(rows, key_t, key_o):
    return [r for r in rows if r[key_o] == "occupancy" and r["status"] == "testable"]
pj = json.load(open(t + "/power.json"))["claims"]
hit = [c for c in pj if c["outcome"] == "occupancy" and c["status"] == "testable"]
for c in hit:
    if c["verdict"] != "untestable" or c["verdict_reason"] != why or c["power"] is not None \
       or c["never_varies"] != "occupancy" or c["never_varies_value"] != "0":
        fails.append("power.json %s" % c)
pc = list(csv.DictReader(open(t + "/power.csv")))
hitc = [r for r in pc if r["outcome"] == "occupancy" and r["status"] == "testable"]
for r in hitc:
    if r["verdict"] != "untestable" or r["verdict_reason"] != why or r["never_varies"] != "occupancy":
        fails.append("power.csv %s" % r)
sj = json.load(open(t + "/rc/summary.json"))["claims"]
hits = [c for c in sj if c["outcome"] == "occupancy" and c["never_varies"] is not None]
for c in hits:
    if c["verdict"] != "untestable" or c["verdict_reason"] != why:
        fails.append("summary.json %s" % c)
sc = [r for r in csv.DictReader(open(t + "/rc/claims.csv")) if r["verdict_reason"] == why]
for r in sc:
    if r["verdict"] != "untestable":
        fails.append("claims.csv %s" % r)
pl = [c for c in json.load(open(t + "/plan.json"))["claims"] if c["outcome"] == "occupancy"]
for c in pl:
    if c["how"] != "untestable" or c["verdict_reason"] != why or c["runs_after"] is not None:
        fails.append("plan.json %s" % c)
counts = (len(hit), len(hitc), len(hits), len(sc), len(pl))
ok = not fails and counts == (3, 3, 3, 3, 3)
print(("PASS" if ok else "FAIL") + ": power JSON and CSV, summary.json, claims.csv and the plan's "
      "JSON agree: untestable on these runs, the reason naming occupancy and 0, never ample or "
      "underpowered (claims per record %s) %s" % (counts, fails[:2]))
EOF2
awk -F, 'BEGIN{OFS=","} NR>1{$5="1"} {print}' "$CSV" >"$tmp/lane.csv"
run 0 "import of a campaign whose fast-track lane is always on" import "$tmp/lane.csv" \
  --archive "$tmp/lane.db" -q
run 1 "power with a constant treatment" power "$G" "$tmp/lane.db"
has "$tmp/out" "fast_track -> wait [arrivals, staff, site]: untestable: untestable on these runs: treatment 'fast_track' never varies: it is true in all 600 runs the claim uses" \
  "a constant treatment is named with its value"
run 1 "plan with a constant input treatment" plan "$G" "$tmp/lane.db" --budget 20 -o "$tmp/p3.csv"
has "$tmp/out" "fast_track -0-> occupancy (untestable on these runs: treatment 'fast_track' never varies: it is true in all 600 runs the claim uses)" \
  "the plan names the constant treatment and its value"

# ---- fresh seeds: plan, simulate with the demo simulator, import, plan again ---------------------
TRIAGE=${BUILD:-build}/fixtures/triage
cp "$tmp/one.db" "$tmp/round.db"
run 1 "plan round 2 (seeded graph)" plan "$tmp/seeded.graph" "$tmp/round.db" --budget 40 \
  -o "$tmp/plan2.csv"
has "$tmp/out" "drawn from the archive's runs" "the plan prints its seed and where it came from"
seed2=$(sed -n 's/^planner seed \([0-9]*\) .*/\1/p' "$tmp/out")
run 1 "the same plan again" plan "$tmp/seeded.graph" "$tmp/round.db" --budget 40 \
  -o "$tmp/plan2b.csv"
if cmp -s "$tmp/plan2.csv" "$tmp/plan2b.csv"; then ok "the same archive gives the same plan"
else bad "two plans of the same archive differ"; fi
"$TRIAGE" run "$tmp/plan2.csv" >"$tmp/round2.csv" 2>"$tmp/err" || bad "triage run failed: $(cat "$tmp/err")"
run 0 "import round 2" import "$tmp/round2.csv" --archive "$tmp/round.db" -q
run 1 "plan round 3" plan "$tmp/seeded.graph" "$tmp/round.db" --budget 40 -o "$tmp/plan3.csv"
seed3=$(sed -n 's/^planner seed \([0-9]*\) .*/\1/p' "$tmp/out")
if [ -n "$seed2" ] && [ "$seed2" != "$seed3" ]; then ok "round 3's planner seed ($seed3) differs from round 2's ($seed2)"
else bad "the planner seed did not move with the archive ($seed2, $seed3)"; fi
"$PYTHON" - "$tmp/round.db" "$tmp/plan3.csv" "$tmp/plan2.csv" <<'EOF2'
import csv, sqlite3, sys
con = sqlite3.connect(sys.argv[1])
arch = con.execute("SELECT arrivals, staff, fast_track, site, seed FROM runs").fetchall()
seeds = {int(r[4]) for r in arch}
pairs = {(round(float(r[0]), 3), int(r[1]), int(r[2]), str(r[3]), int(r[4])) for r in arch}
plan = list(csv.DictReader(open(sys.argv[2])))
new = [int(r["seed"]) for r in plan]
shared = [s for s in new if s in seeds]
print(("PASS" if plan and not shared else "FAIL") + ": the second plan's %d seeds share none with "
      "the archive's %d (shared: %s)" % (len(new), len(seeds), shared[:5]))
again = [r for r in plan if (round(float(r["arrivals"]), 3), int(r["staff"]), int(r["fast_track"]),
                             r["site"], int(r["seed"])) in pairs]
print(("PASS" if not again else "FAIL") + ": no planned (configuration, seed) is already in the "
      "archive (%d repeated)" % len(again))
for path in sys.argv[2:]:
    rows = list(csv.DictReader(open(path)))
    runs = [(r["arrivals"], r["staff"], r["fast_track"], r["site"], r["seed"]) for r in rows]
    seeds = [r["seed"] for r in rows]
    ok = len(set(runs)) == len(runs) and len(set(seeds)) == len(seeds)
    print(("PASS" if ok else "FAIL") + ": %s plans %d distinct runs with %d distinct seeds (%d "
          "distinct configurations)" % (path.rsplit("/", 1)[1], len(set(runs)), len(set(seeds)),
                                        len({r[:4] for r in runs})))
EOF2

echo "cli_runs: $fails failed"
[ "$fails" -eq 0 ]
