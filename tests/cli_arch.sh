#!/bin/sh
# The architecture check (tests/arch/check.sh) on the real tree, and on copies with one forbidden
# include planted each, which it must reject with the rule broken. See LICENSE.
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT

out=$(sh tests/arch/check.sh . 2>&1)
if [ $? -eq 0 ]; then ok "the tree keeps every allowed arrow ($out)"
else bad "the tree has forbidden arrows: $out"; fi

# plant FILE LINE EXPECTED-TEXT WHAT: one forbidden include added to a fresh copy of the sources.
plant() {
  rm -rf "$tmp/t" && mkdir "$tmp/t" && cp -R coverage power shoal.c "$tmp/t/" || exit 1
  printf '%s\n' "$2" >>"$tmp/t/$1"
  got=$(sh tests/arch/check.sh "$tmp/t" 2>&1); rc=$?
  if [ "$rc" -eq 1 ] && printf '%s' "$got" | grep -q "^$1:.*$3"; then ok "planted $4 is rejected: $(printf "%s" "$got" | grep "^$1:" | head -1)"
  else bad "planted $4: exit $rc, output: $got"; fi
}
plant power/nct.c '#include "coverage/coverage.h"' "power -> public" "power -> coverage"
plant power/ols.c '#include "coverage/base/base.h"' "power -> base" "power -> a private coverage header"
plant coverage/graph/graph.c '#include "coverage/cmd/cmd.h"' "graph -> cmd" "a library part -> cmd"
plant coverage/report/report.c '#include "coverage/plan/plan.h"' "report <-> plan" "report -> plan"
plant coverage/plan/plan.c '#include "coverage/report/report.h"' "plan <-> report" "plan -> report"
plant coverage/measure/space.c '#include "coverage/assess/assess.h"' "measure <-> assess" "measure -> assess"
plant coverage/assess/assess.c '#include "coverage/measure/measure.h"' "assess <-> measure" "assess -> measure"
plant coverage/graph/dsep.c '#include <sqlite3.h>' "sqlite3.h" "SQLite outside archive/"
plant coverage/archive/data.c '#include "coverage/assess/assess.h"' "archive -> assess" "an upward arrow (archive -> assess)"
plant shoal.c '#include "coverage/report/report.h"' "driver -> report" "the driver -> a private header"
[ "$fails" -eq 0 ]
