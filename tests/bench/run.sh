#!/bin/sh
# Runs every benchmark script tests/bench/bench_*.sh in turn (one per area), each printing its
# figures; exits non-zero when any of them reports a missed target or fails.
: "${BUILD:=build}" "${SHOAL:=$BUILD/shoal}" "${PYTHON:=/usr/bin/python3}"
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")
export SHOAL BUILD PYTHON
status=0
for b in tests/bench/bench_*.sh; do
  [ -f "$b" ] || continue
  echo "==== $(basename "$b")"
  if ! sh "$b"; then
    echo "==== $(basename "$b") FAILED"
    status=1
  fi
done
exit $status
