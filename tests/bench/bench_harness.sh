#!/bin/sh
# Power calibration harness (issue 11): 1,000 campaigns per cell drawn from the invented depot
# simulator's pool (fixtures/depot.c), each assessed by shoal; predicted power against the robust
# test's rejection rate, flag rates and interval coverage per outcome class and campaign size.
# The figures are the table in README.md ("Accuracy of the power figures"). Also run by
# `make check-slow`; `make check` runs a fast version (100 campaigns per cell).
: "${BUILD:=build}"
H="$BUILD/tests/test_harness"
[ -x "$H" ] || ${MAKE:-make} --no-print-directory BUILD="$BUILD" "$H" >/dev/null || exit 1
[ -x "$BUILD/fixtures/depot" ] || ${MAKE:-make} --no-print-directory BUILD="$BUILD" \
  "$BUILD/fixtures/depot" >/dev/null || exit 1
start=$(date +%s)
out=$(SHOAL_SLOW=1 BUILD="$BUILD" "$H") ; rc=$?
echo "$out"
echo "bench_harness: $(( $(date +%s) - start )) s wall"
echo "$out" | grep -q '^FAIL' && rc=1
exit $rc
