#!/bin/sh
# The architecture check: reads every #include of the library and the driver under ROOT (default .)
# and fails on an arrow that must never exist. See LICENSE.
#
# The parts and their layers (DEVELOPERS.md, "Layout"); a file may include its own part's header,
# the public header coverage/coverage.h (not from power/), and the headers of parts on a lower
# layer only:
#   6 cmd            the commands
#   5 report, plan   the survey's report; the plan of next runs
#   4 assess, measure
#   3 archive        the only part that may include <sqlite3.h>
#   2 graph
#   1 base
#   0 power          pure numerics: never includes coverage/
# Parts on the same layer never include each other (report <-> plan, assess <-> measure), and no
# library part includes cmd/. The driver shoal.c includes coverage/coverage.h only. Prints one line per forbidden arrow, "file:line: what", and exits 1
# when there is any; exits 0 with a count of the arrows checked otherwise.
root=${1:-.}
cd "$root" || exit 2
files=$(find coverage power -name '*.[ch]' 2>/dev/null | sort)
[ -f shoal.c ] && files="shoal.c $files"
[ -n "$files" ] || { echo "arch: no sources under $root"; exit 2; }
# shellcheck disable=SC2086
awk '
function part(path,    a, n) {
    n = split(path, a, "/")
    if (path == "shoal.c") return "driver"
    if (a[1] == "power") return "power"
    if (a[1] == "coverage" && n == 2) return "public"
    if (a[1] == "coverage") return a[2]
    return "?"
}
function layer(p) {
    if (p == "power") return 0
    if (p == "base") return 1
    if (p == "graph") return 2
    if (p == "archive") return 3
    if (p == "assess" || p == "measure") return 4
    if (p == "report" || p == "plan") return 5
    if (p == "cmd") return 6
    return -1
}
function bad(msg) { printf "%s:%d: %s\n", FILENAME, FNR, msg; n_bad++ }
/^[ \t]*#[ \t]*include[ \t]*[<"]/ {
    line = $0
    sub(/^[ \t]*#[ \t]*include[ \t]*/, "", line)
    quote = substr(line, 1, 1)
    target = substr(line, 2)
    sub(/[">].*$/, "", target)
    from = part(FILENAME)
    n_arrows++
    if (quote == "<") {
        if (target == "sqlite3.h" && from != "archive")
            bad("includes <sqlite3.h>: SQLite belongs to coverage/archive/ only")
        next
    }
    to = part(target)
    if (target !~ /^(coverage|power)\//) { bad("includes \"" target "\": use a path from the root (coverage/... or power/...)"); next }
    if (from == "power" && to != "power") { bad("power -> " to ": power/ never includes coverage/"); next }
    if (to == "cmd" && from != "cmd") { bad(from " -> cmd: no library part includes the commands"); next }
    if (from == "driver") { if (to != "public") bad("driver -> " to ": shoal.c includes the public header coverage/coverage.h only"); next }
    if (to == from || to == "power" || to == "public") next
    if (from == "public") { bad("coverage.h -> " to ": the public header includes no private header"); next }
    lf = layer(from); lt = layer(to)
    if (lf < 0 || lt < 0) { bad("unknown part in " from " -> " to); next }
    if (lt == lf) { bad(from " <-> " to ": parts on one layer never include each other"); next }
    if (lt > lf) { bad(from " -> " to ": an arrow upward (allowed: cmd -> {report, plan} -> {assess, measure} -> archive -> graph -> base -> power)"); next }
}
END {
    if (n_bad) { printf "arch: %d forbidden arrow(s)\n", n_bad; exit 1 }
    printf "arch: %d includes checked, 0 forbidden arrows\n", n_arrows
}
' $files
