#!/bin/sh
# Replays every input that ever made a fuzz harness fail (tests/fuzz/regress/NAME/), and the
# seeds, through the harnesses built without libFuzzer: a crash, a leak under valgrind or a
# sanitizer report in `make check-asan` fails the run. See tests/fuzz/run.sh for `make fuzz`.
: "${BUILD:=build}"
status=0
for name in graph csv plan; do
  bin=$BUILD/fuzz/replay_$name
  if [ ! -x "$bin" ]; then echo "FAIL: $bin was not built"; status=1; continue; fi
  n=$(ls tests/fuzz/regress/$name | wc -l)
  [ "$n" -gt 0 ] && echo "PASS: tests/fuzz/regress/$name holds $n input(s)"
  case $name in
  graph) extra="fixtures/graphs" ;;
  csv)   extra="fixtures/csv" ;;
  plan)  extra="tests/fuzz/seeds/plan" ;;
  esac
  "$bin" "tests/fuzz/regress/$name" $extra || status=1
done
exit $status
