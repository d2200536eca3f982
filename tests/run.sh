#!/bin/sh
# The test runner: every C test program, every Python reference check and every CLI script.
# Each prints one line per check, "PASS: ..." or "FAIL: ..." (gsl_test's format), or "SKIP: ...".
# A program that exits non-zero without printing a FAIL line counts as one failure.
# Ends with "N passed, N failed" and exits non-zero on any failure.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}" "${PYTHON:=/usr/bin/python3}"
export SHOAL BUILD PYTHON
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")
export SHOAL
log=$(mktemp)
pass=0; fail=0; skip=0
run_one() {
  name=$1; shift
  "$@" >"$log" 2>&1; rc=$?
  p=$(grep -c '^PASS' "$log"); f=$(grep -c '^FAIL' "$log"); s=$(grep -c '^SKIP' "$log")
  if [ "$rc" -ne 0 ] && [ "$f" -eq 0 ]; then
    f=1; echo "FAIL: $name exited with status $rc" >>"$log"
  fi
  if [ "$f" -gt 0 ] || [ "${VERBOSE:-0}" = 1 ]; then
    echo "---- $name"; grep -v '^PASS' "$log" | head -60
  fi
  grep '^SKIP' "$log"
  printf '%-40s %5d passed %3d failed\n' "$name" "$p" "$f"
  pass=$((pass + p)); fail=$((fail + f)); skip=$((skip + s))
}
for t in "$BUILD"/tests/test_*; do
  case "$t" in *.o|*.d) continue ;; esac
  [ -x "$t" ] || continue
  if [ -n "${VALGRIND:-}" ]; then
    run_one "$(basename "$t") (valgrind)" valgrind -q --error-exitcode=99 --leak-check=full "$t"
  else
    run_one "$(basename "$t")" "$t"
  fi
done
for t in tests/ref_*.py; do
  [ -f "$t" ] || continue
  run_one "$(basename "$t")" "$PYTHON" "$t"
done
for t in tests/cli_*.sh; do
  [ -f "$t" ] || continue
  run_one "$(basename "$t")" sh "$t"
done
rm -f "$log"
echo "$pass passed, $fail failed${skip:+ ($skip skipped)}"
[ "$fail" -eq 0 ]
