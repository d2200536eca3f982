#!/bin/sh
# Edge cases of the command line and its inputs: each gives a clear message and the documented exit
# status (README.md, "Exit status"), never a crash, a hang or a misleading verdict. See LICENSE.

# The expected statuses follow the README's table: 0 adequate, 1 not adequate, 2 bad input/usage.
# Every case runs under `timeout` so a hang fails instead of stalling the suite.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv

# run WANT_RC DESC ARGS...: runs shoal (60 s cap), checks the status; stderr in $tmp/err.
run() {
  want=$1 desc=$2
  shift 2
  timeout 60 "$SHOAL" "$@" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq "$want" ]; then ok "$desc exits $want"
  else bad "$desc exits $rc, expected $want: $(head -c 400 "$tmp/err")"; fi
}
# said TEXT DESC: stderr holds TEXT.
said() {
  if grep -qF -- "$1" "$tmp/err"; then ok "$2"
  else bad "$2: stderr lacks '$1': $(head -c 400 "$tmp/err")"; fi
}

# An archive with a single run: every claim the graph makes testable is untestable on the runs
# (no treatment varies), so survey must not call the campaign adequate; power already says 1.
head -2 "$CSV" >"$tmp/one.csv"
run 0 "import of a CSV with one row" import "$tmp/one.csv" --archive "$tmp/one.db" -q
run 1 "power on an archive with one run" power "$G" "$tmp/one.db" -q
run 1 "survey on an archive with one run" survey "$G" "$tmp/one.db" -o "$tmp/rep1"
if grep -q "NOT ADEQUATE" "$tmp/out"; then ok "survey on one run says NOT ADEQUATE"
else bad "survey on one run should say NOT ADEQUATE: $(grep ADEQUATE "$tmp/out")"; fi

[ "$fails" -eq 0 ]
