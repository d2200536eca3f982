#!/bin/sh
# Benchmark of `shoal plan`: runs --budget auto needs against the optimal-design lower bound and
# against Sobol and Latin hypercube sampling; the time of --budget auto on 64 inputs. See LICENSE.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}"
BENCH="$BUILD/bench/bench_plan"
[ -x "$BENCH" ] || { echo "bench_plan: build $BENCH first (make bench)"; exit 1; }
BENCH=$(cd "$(dirname "$BENCH")" && pwd)/$(basename "$BENCH")
status=0
median3() { sort -g | sed -n 2p; }

echo "Synthetic linear-Gaussian simulator (invented): real inputs on [0, 2], every third input"
echo "bool, noise SD 1, effects exactly at their effects of interest, absences exactly zero;"
echo "a sparse starting archive of 30 uniform random runs. Counts are added runs until every"
echo "steered claim reaches power 0.80 (Bonferroni over all claims), judged by one yardstick."
echo
for scenario in numeric mixed; do
  if [ "$scenario" = numeric ]; then
    echo "Scenario A: 12 inputs, 4 outputs, 3 real parents each; every bool input feeds every"
    echo "output (so the binding claims have numeric treatments). Aim: plan <= 1.25x the lower"
    echo "bound and <= 0.6x the Sobol and LHS counts."
    extra=""
  else
    echo "Scenario B (mixed): parents drawn among all inputs, bools included; absence claims with"
    echo "bool treatments bind, and for those balanced random sampling is already optimal."
    extra=mixed
  fi
  printf '%6s %8s %8s %8s %8s %10s %10s %10s\n' seed plan bound sobol lhs plan/bound plan/sobol plan/lhs
  for seed in 1 2 3; do
    line=$("$BENCH" compare 12 4 3 30 "$seed" $extra | tail -n 1)
    set -- $line
    # plan_auto N lower_bound N sobol N lhs N assess_seconds T plan_seconds T ...
    plan=$2; lb=$4; sob=$6; lhs=$8
    r1=$(awk "BEGIN{printf \"%.3f\", $plan/$lb}")
    r2=$(awk "BEGIN{printf \"%.3f\", $plan/$sob}")
    r3=$(awk "BEGIN{printf \"%.3f\", $plan/$lhs}")
    printf '%6s %8s %8s %8s %8s %10s %10s %10s\n' "$seed" "$plan" "$lb" "$sob" "$lhs" "$r1" "$r2" "$r3"
    echo "$r1 $r2 $r3" >>"${TMPDIR:-/tmp}/bench_plan_$$_$scenario"
  done
  m1=$(cut -d' ' -f1 "${TMPDIR:-/tmp}/bench_plan_$$_$scenario" | median3)
  m2=$(cut -d' ' -f2 "${TMPDIR:-/tmp}/bench_plan_$$_$scenario" | median3)
  m3=$(cut -d' ' -f3 "${TMPDIR:-/tmp}/bench_plan_$$_$scenario" | median3)
  rm -f "${TMPDIR:-/tmp}/bench_plan_$$_$scenario"
  echo "median ratios: plan/bound $m1, plan/sobol $m2, plan/lhs $m3"
  if [ "$scenario" = numeric ]; then
    if awk "BEGIN{exit !($m1 <= 1.25 && $m2 <= 0.6 && $m3 <= 0.6)}"; then
      echo "target met"
    else
      echo "TARGET MISSED"
      status=1
    fi
  fi
  echo
done

# Time --budget auto on 64 inputs, 16 outputs, about 1,100 claims (the CLI: graph parse, archive
# read, assessment of every claim and the plan), median of 3.
dir=$(mktemp -d)
trap 'rm -rf "$dir"' EXIT
( cd "$dir" && "$BENCH" gen 64 16 4 120 7 >/dev/null ) || { echo "gen failed"; exit 1; }
"$SHOAL" import "$dir/bench-plan.csv" --archive "$dir/b.db" >/dev/null || exit 1
claims=$("$SHOAL" claims "$dir/bench-plan.graph" --csv | tail -n +2 | wc -l)
: >"$dir/times"
for k in 1 2 3; do
  t0=$(date +%s.%N)
  "$SHOAL" plan "$dir/bench-plan.graph" "$dir/b.db" --budget auto -o "$dir/next.csv" >/dev/null
  t1=$(date +%s.%N)
  awk "BEGIN{printf \"%.2f\n\", $t1 - $t0}" >>"$dir/times"
done
t=$(median3 <"$dir/times")
n=$(tail -n +2 "$dir/next.csv" | wc -l)
echo "--budget auto, 64 inputs, $claims claims, 120-run archive: median $t s of 3 (runs: $(tr '\n' ' ' <"$dir/times")), planned $n configurations"
"$BENCH" time 64 16 4 120 7 | sed 's/^/library: /'
if awk "BEGIN{exit !($t <= 30)}"; then echo "target met (seconds, not minutes)"; else echo "TARGET MISSED"; status=1; fi
exit $status
