#!/bin/sh
# `make fuzz`: run each libFuzzer harness for FUZZ_SECONDS at low priority, seeded from fixtures/
# and the regression corpus, and print its executions, coverage and crashes.
# Usage: run.sh BUILD_DIR NAME...   (env FUZZ_SECONDS, default 60)
# A crash leaves its input under BUILD_DIR/artifacts/NAME/; copy it to tests/fuzz/regress/NAME/ so
# that `make check` replays it from then on.
: "${FUZZ_SECONDS:=60}"
# Scratch files on a memory file system when there is one: the import harness commits (fsyncs)
# an archive per input.
[ -z "${TMPDIR:-}" ] && [ -d /dev/shm ] && [ -w /dev/shm ] && TMPDIR=/dev/shm && export TMPDIR
build=$1; shift
crashes=0
for name in "$@"; do
  corpus=$build/corpus/$name; art=$build/artifacts/$name
  mkdir -p "$corpus" "$art"
  case $name in
  graph) seeds="fixtures/graphs fixtures/demo/triage.graph fixtures/csv/ward.graph"; max=4096 ;;
  csv)   seeds="fixtures/csv"; max=16384 ;;
  plan)  seeds="tests/fuzz/seeds/plan fixtures/csv"; max=4096 ;;
  *)     echo "run.sh: unknown harness $name" >&2; exit 2 ;;
  esac
  for s in $seeds tests/fuzz/regress/$name; do
    if [ -d "$s" ]; then
      for f in "$s"/*; do [ -f "$f" ] && cp "$f" "$corpus/"; done
    elif [ -f "$s" ]; then cp "$s" "$corpus/"; fi
  done
  log=$build/fuzz-$name.log
  nice -n 15 "$build/fuzz/fuzz_$name" -max_total_time="$FUZZ_SECONDS" -max_len=$max \
    -timeout=30 -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix="$art/" "$corpus" \
    >"$log" 2>&1
  rc=$?
  runs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -1)
  cov=$(grep -o 'cov: [0-9]*' "$log" | tail -1 | cut -d' ' -f2)
  ft=$(grep -o 'ft: [0-9]*' "$log" | tail -1 | cut -d' ' -f2)
  # crash-, leak-, timeout- and oom- inputs are failures; slow-unit- ones (over 10 s once, which a
  # busy machine can cause) are reported but are not.
  found=$(find "$art" -type f ! -name 'slow-unit-*' | wc -l)
  slow=$(find "$art" -type f -name 'slow-unit-*' | wc -l)
  printf 'fuzz_%s: %s s, %s executions, coverage %s edges (%s features), corpus %s, %s failing input(s), %s slow unit(s)\n' \
    "$name" "$FUZZ_SECONDS" "${runs:-?}" "${cov:-?}" "${ft:-?}" "$(ls "$corpus" | wc -l)" "$found" "$slow"
  if [ "$rc" -ne 0 ] || [ "$found" -gt 0 ]; then
    crashes=$((crashes + 1))
    echo "  see $log; copy the inputs in $art/ to tests/fuzz/regress/$name/"
  fi
done
[ "$crashes" -eq 0 ]
