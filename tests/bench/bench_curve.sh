#!/bin/sh
# Benchmark of `shoal plan` where the response saturates, the noise grows toward saturation and
# runs cost more under load: the plan against Sobol, Latin hypercube and uniform random sampling
# over 10 seeds. See LICENSE.
: "${BUILD:=build}"
BENCH="$BUILD/bench/bench_curve"
[ -x "$BENCH" ] || { echo "bench_curve: build $BENCH first (make bench)"; exit 1; }
echo "Invented service-line simulator (tests/bench/bench_curve.c): load u = demand (1.2 - 0.8"
echo "capacity); throughput saturates, delay bends upward near u = 1.35, dropped work is zero-inflated;"
echo "noise SD grows about fivefold toward saturation (skewed); CPU cost per run 1 + 4u^2 with"
echo "lognormal scatter. Start: 80 uneven runs (demand ~ Beta(2, 3)). The plan: --budget auto with the"
echo "cost column. Alternatives: the fewest added runs (grid rising 10%) reaching every claim the"
echo "plan reached, judged by the same assessment; their cost is the simulated cost of those runs."
echo
out=$("$BENCH" 10 80) || { echo "bench_curve failed"; exit 1; }
echo "$out" | grep -v '^result'
set -- $(echo "$out" | grep '^result')
held=$3; runs=$5; cost=$7
echo
echo "targets: predictions held >= 0.90 (got $held); plan cost / best alternative's <= 0.5 (median, got $cost)"
if awk "BEGIN{exit !($held >= 0.90 && $cost <= 0.5)}"; then echo "target met"; else echo "TARGET MISSED"; exit 1; fi
