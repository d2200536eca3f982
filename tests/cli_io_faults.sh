#!/bin/sh
# I/O faults: a full disk, made as a small tmpfs that the test mounts and removes (root only;
# SKIP otherwise). Each command must fail cleanly (exit 2, a message naming the full disk), leave
# no partial report, plan or temporary file, and leave an existing archive byte for byte as it was.
: "${SHOAL:=build/shoal}"
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
mnt=$tmp/small
mkdir "$mnt"
cleanup() { umount "$mnt" 2>/dev/null; rm -rf "$tmp"; }
trap cleanup EXIT
if [ "$(id -u)" != 0 ] || ! mount -t tmpfs -o size=160k,mode=0777 tmpfs "$mnt" 2>/dev/null; then
  echo "SKIP: cannot mount a small tmpfs (needs root)"; exit 0
fi
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv
"$SHOAL" import fixtures/csv/comma.csv --archive "$mnt/small.db" -q || bad "import of 4 rows onto the small disk"
cp "$mnt/small.db" "$tmp/small.orig"
"$SHOAL" import "$CSV" --archive "$tmp/runs.db" -q || bad "import of the demo campaign"
cp "$tmp/runs.db" "$tmp/runs.orig"
# Fill the disk but a few pages.
head -c 140000 /dev/zero >"$mnt/fill" 2>/dev/null
# expect_full DESC: exit 2 and a message that names the full disk.
expect_full() {
  if [ "$rc" -eq 2 ] && grep -qi "disk is full\|no space left" "$tmp/err"; then ok "$1: exit 2 naming the full disk"
  else bad "$1: exit $rc: $(head -c 300 "$tmp/err")"; fi
}
leftover() {
  n=$(ls -A "$mnt" | grep -c '^\.')
  [ "$n" -eq 0 ] && ok "$1: no temporary file left" || bad "$1: $n temporary files left: $(ls -A "$mnt")"
}
"$SHOAL" import "$CSV" --archive "$mnt/new.db" 2>"$tmp/err"; rc=$?
expect_full "import into a new archive on a full disk"
[ -e "$mnt/new.db" ] && bad "a failed import left a new archive" || ok "no new archive after the failed import"
leftover "import into a new archive"
"$SHOAL" import "$CSV" --archive "$mnt/small.db" 2>"$tmp/err"; rc=$?
expect_full "import into an existing archive on a full disk"
cmp -s "$mnt/small.db" "$tmp/small.orig" && ok "the existing archive is unchanged" || bad "the existing archive changed"
leftover "import into an existing archive"
"$SHOAL" survey "$G" "$tmp/runs.db" -o "$mnt/report" 2>"$tmp/err" >/dev/null; rc=$?
expect_full "survey writing its report on a full disk"
[ -e "$mnt/report" ] && bad "a partial report was left" || ok "no partial report"
cmp -s "$tmp/runs.db" "$tmp/runs.orig" && ok "the survey recorded no history round after failing" || bad "the archive changed after a failed survey"
leftover "survey"
"$SHOAL" survey "$G" "$tmp/runs.db" -o "$tmp/report" --history "$mnt/side.db" 2>"$tmp/err" >/dev/null; rc=$?
expect_full "survey writing its history side file on a full disk"
[ -e "$tmp/report" ] && bad "a report was left although the history failed" || ok "no report when the history cannot be written"
cat /dev/zero >"$mnt/fill2" 2>/dev/null
"$SHOAL" plan "$G" --budget 50 -o "$mnt/plan.csv" 2>"$tmp/err" >/dev/null; rc=$?
expect_full "plan writing its file on a full disk"
[ -e "$mnt/plan.csv" ] && bad "a partial plan was left" || ok "no partial plan"
leftover "plan"
[ "$fails" -eq 0 ]
