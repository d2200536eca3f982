#!/bin/sh
# Hostile inputs and paths (issue 17): each is refused with a clear message and exit 2, or handled,
# never a crash, a hang, a lost row, a replaced input or a silent acceptance. Every case runs
# under `timeout`, so a hang fails instead of stalling the suite. See LICENSE.
: "${SHOAL:=build/shoal}" "${PYTHON:=/usr/bin/python3}"
SHOAL=$(cd "$(dirname "$SHOAL")" && pwd)/$(basename "$SHOAL")
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
G=fixtures/demo/triage.graph
CSV=fixtures/demo/triage-runs.csv
umask 022

# run WANT_RC DESC ARGS...: runs shoal (20 s cap), checks the status; stderr in $tmp/err.
run() {
  want=$1 desc=$2
  shift 2
  timeout 20 "$SHOAL" "$@" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  if [ "$rc" -eq "$want" ]; then ok "$desc exits $want"
  else bad "$desc exits $rc, expected $want: $(head -c 400 "$tmp/err")"; fi
}
said() {
  if grep -qF -- "$1" "$tmp/err"; then ok "$2"
  else bad "$2: stderr lacks '$1': $(head -c 400 "$tmp/err")"; fi
}
# same A B DESC: the two files are byte for byte the same.
same() { if cmp -s "$1" "$2"; then ok "$3"; else bad "$3"; fi; }
mode_of() { stat -c %a "$1"; }

"$SHOAL" import "$CSV" --archive "$tmp/runs.db" -q || bad "demo import"
cp "$tmp/runs.db" "$tmp/runs.orig"; cp "$G" "$tmp/g.graph"; cp "$G" "$tmp/g.orig"

# ---- special files are refused at open: a FIFO without a writer must not hang ----------------
mkfifo "$tmp/fifo"
run 2 "claims on a FIFO graph" claims "$tmp/fifo"; said "FIFO" "the FIFO graph is named as a FIFO"
run 2 "import of a FIFO CSV" import "$tmp/fifo" --archive "$tmp/f.db"
[ -e "$tmp/f.db" ] && bad "a refused import left an archive" || ok "a refused import leaves no archive"
run 2 "power with a FIFO archive" power "$G" "$tmp/fifo"
run 2 "survey --plan on a FIFO" survey "$G" "$tmp/runs.db" --plan "$tmp/fifo" -o "$tmp/rf"
run 2 "claims on a directory" claims "$tmp"
run 2 "claims on /dev/null (a device)" claims /dev/null; said "character device" "the device is named"

# ---- plan on a graph with no variables (a double free before) -----------------------------------
: >"$tmp/empty.graph"; printf '\357\273\277' >"$tmp/bom.graph"; printf '# only a comment\n' >"$tmp/comment.graph"
for gr in empty bom comment; do
  run 2 "plan on a graph with no variables ($gr)" plan "$tmp/$gr.graph" --budget 5 -o "$tmp/p-$gr.csv"
  said "no input" "plan says the $gr graph has no input"
done

# ---- empty graph: no claims, so nothing is adequate ---------------------------------------------
run 1 "survey with a graph that implies no claims" survey "$tmp/comment.graph" "$tmp/runs.db" -o "$tmp/r-empty"
grep -q "NOT ADEQUATE" "$tmp/out" && ok "survey of an empty graph says NOT ADEQUATE" || bad "survey of an empty graph: $(grep -i adequate "$tmp/out")"
run 1 "power with a graph that implies no claims" power "$tmp/comment.graph" "$tmp/runs.db" -q

# ---- -o never lands on an input, a link or a special file ---------------------------------------
cp "$tmp/runs.db" "$tmp/runs.orig"
run 2 "plan -o onto the archive it reads" plan "$G" "$tmp/runs.db" --budget 5 -o "$tmp/runs.db"
same "$tmp/runs.db" "$tmp/runs.orig" "plan -o onto the archive leaves the archive unchanged"
run 2 "plan -o onto the graph it reads" plan "$tmp/g.graph" --budget 5 -o "$tmp/g.graph"
same "$tmp/g.graph" "$tmp/g.orig" "plan -o onto the graph leaves the graph unchanged"
ln -s "$tmp/g.graph" "$tmp/link.csv"
run 2 "plan -o onto a symbolic link" plan "$G" --budget 5 -o "$tmp/link.csv"
[ -L "$tmp/link.csv" ] && same "$tmp/g.graph" "$tmp/g.orig" "the link and its target stay as they were" || bad "the link was replaced"
run 2 "plan -o onto a FIFO" plan "$G" --budget 5 -o "$tmp/fifo"
[ -p "$tmp/fifo" ] && ok "the FIFO is still a FIFO" || bad "the FIFO was replaced"
run 2 "plan -o onto a directory" plan "$G" --budget 5 -o "$tmp"
run 2 "plan -o ''" plan "$G" --budget 5 -o ''
run 1 "plan -o a new file" plan "$G" --budget 5 -o "$tmp/new-plan.csv" -q
[ "$(mode_of "$tmp/new-plan.csv")" = 644 ] && ok "a new plan file follows the umask (644)" || bad "new plan file mode $(mode_of "$tmp/new-plan.csv")"
run 2 "survey -o onto the graph" survey "$tmp/g.graph" "$tmp/runs.db" -o "$tmp/g.graph"
run 2 "survey -o onto a symbolic link" survey "$G" "$tmp/runs.db" -o "$tmp/link.csv"

# ---- survey -o '' and --history mistakes record nothing -----------------------------------------
cp "$tmp/runs.db" "$tmp/hist.db"; cp "$tmp/hist.db" "$tmp/hist.orig"
run 2 "survey -o ''" survey "$G" "$tmp/hist.db" -o ''
same "$tmp/hist.db" "$tmp/hist.orig" "survey -o '' records no history round in the owned archive"
run 2 "survey --history on a directory" survey "$G" "$tmp/runs.db" -o "$tmp/r-h" --history "$tmp"
said "directory" "--history on a directory names it a directory"
: >"$tmp/empty-side.db"
run 2 "survey --history on an existing empty file" survey "$G" "$tmp/runs.db" -o "$tmp/r-h" --history "$tmp/empty-side.db"
[ -s "$tmp/empty-side.db" ] && bad "the empty file became a database" || ok "the empty file stays empty"

# ---- archives that store nothing are refused ---------------------------------------------------
run 2 "import --archive ''" import "$CSV" --archive ''
run 2 "import --archive :memory:" import "$CSV" --archive :memory:
(cd "$tmp" && timeout 20 "$SHOAL" import "$OLDPWD/$CSV" --archive 'file:uri.db?mode=memory' -q)
[ -s "$tmp/file:uri.db?mode=memory" ] && ok "an archive named like an SQLite URI is a file of that name" || bad "an archive named like a URI stored nothing"

# ---- a new archive follows the umask and appears only when complete ------------------------------
run 0 "import into a new archive" import "$CSV" --archive "$tmp/new.db" -q
[ "$(mode_of "$tmp/new.db")" = 644 ] && ok "a new archive follows the umask (644)" || bad "new archive mode $(mode_of "$tmp/new.db")"
printf 'a,b\n1,2\n3\n' >"$tmp/short.csv"
run 2 "a failing first import" import "$tmp/short.csv" --archive "$tmp/never.db"
[ -e "$tmp/never.db" ] && bad "a failed first import left an archive file" || ok "a failed first import leaves no file"
[ -z "$(find "$tmp" -name '.never.db.*')" ] && ok "and no temporary file" || bad "temporary files left"

# ---- NUL inside a quoted CSV field ----------------------------------------------------------------
printf 'a,b\n"2\000zzz",1\n' >"$tmp/nul.csv"
run 2 "import of a NUL inside quotes" import "$tmp/nul.csv" --archive "$tmp/nul.db"
said "nul.csv:2:3" "the NUL is located at line 2, column 3"

# ---- one number reader everywhere ------------------------------------------------------------------
printf 'input x real [0, 100]\noutput y real\ndefault effect 1\nx -> y\n' >"$tmp/xy.graph"
printf 'x,y\n0x1A,1\n5,2\n' >"$tmp/hex.csv"
run 0 "import of a hexadecimal cell (kept as text)" import "$tmp/hex.csv" --archive "$tmp/hex.db" -q
[ "$(sqlite3 "$tmp/hex.db" "SELECT typeof(x) FROM runs LIMIT 1")" = text ] && ok "import keeps 0x1A as text" || bad "import stored 0x1A as a number"
run 2 "check reads 0x1A as no number, as import did" check "$tmp/xy.graph" "$tmp/hex.db"
said "0x1A" "check names the hexadecimal cell"
run 2 "power refuses the hexadecimal cell too" power "$tmp/xy.graph" "$tmp/hex.db" -q
run 2 "--alpha 0x1p-5" power "$tmp/xy.graph" "$tmp/runs.db" --alpha 0x1p-5
run 2 "--alpha inf" power "$tmp/xy.graph" "$tmp/runs.db" --alpha inf
printf 'input x real [0, 100]\noutput y real noise 4.9e-324\ndefault effect 1\nx -> y\n' >"$tmp/sub.graph"
run 0 "a graph with the subnormal 4.9e-324" claims "$tmp/sub.graph"
printf 'x,y\n4.9e-324,1\n5,2\n' >"$tmp/sub.csv"
run 0 "import of 4.9e-324" import "$tmp/sub.csv" --archive "$tmp/sub.db" -q
[ "$(sqlite3 "$tmp/sub.db" "SELECT typeof(x) FROM runs LIMIT 1")" = real ] && ok "4.9e-324 is stored as a number" || bad "4.9e-324 not stored as a number"
run 0 "check of the subnormal cell" check "$tmp/xy.graph" "$tmp/sub.db" -q

# ---- limits are checked up front and named --------------------------------------------------------
"$PYTHON" -c "print(','.join('c%d' % i for i in range(100000))); print(','.join('1' for i in range(100000)))" >"$tmp/wide.csv"
run 2 "import of a 100,000-column header" import "$tmp/wide.csv" --archive "$tmp/wide.db"
said "the limit on columns" "the column limit is named"
"$PYTHON" -c "print('input a levels {' + ', '.join('l%d' % i for i in range(10000)) + '}')" >"$tmp/lv.graph"
run 2 "a graph with 10,000 levels" claims "$tmp/lv.graph"; said "the limit on levels" "the level limit is named"
"$PYTHON" -c "
for i in range(1500): print('output v%d real' % i)" >"$tmp/many.graph"
run 2 "a graph with 1,500 outputs" claims "$tmp/many.graph"; said "the limit on recorded variables" "the variable limit is named"
printf 'input x real [-1e308, 1e308]\noutput y real\ndefault effect 1\nx -> y\n' >"$tmp/huge.graph"
run 2 "a range of [-1e308, 1e308]" coverage "$tmp/huge.graph" "$tmp/runs.db"; said "the limits on ranges" "the range limit is named"
run 2 "--budget 100000000" plan "$G" --budget 100000000 -o "$tmp/b.csv"; said "the limit on configurations" "the budget limit is named"
run 2 "--budget 5000 --replicates 100000" plan "$G" --budget 5000 --replicates 100000 -o "$tmp/b.csv"; said "the limit on replicates" "the replicate limit is named"
run 2 "--budget 5000 --replicates 1000" plan "$G" --budget 5000 --replicates 1000 -o "$tmp/b.csv"; said "the limit on runs" "the run limit is named"
[ -e "$tmp/b.csv" ] && bad "a refused plan left a file" || ok "a refused plan leaves no file"

# ---- smaller items ------------------------------------------------------------------------------
# Lone-CR line endings: errors point at the right line.
printf 'a,b\r1,2\r3,x,4\r' >"$tmp/cr.csv"
run 2 "import of a bad row in a lone-CR file" import "$tmp/cr.csv" --archive "$tmp/cr.db"
said "cr.csv:3:5" "the bad row of a lone-CR file is on line 3"
# A level name of 300 bytes matches.
long=$("$PYTHON" -c "print('w' * 300)")
printf 'input site levels {"%s", short}\noutput y real\ndefault effect 1\nsite -> y\n' "$long" >"$tmp/long.graph"
printf 'site,y\n%s,1\nshort,2\n' "$long" >"$tmp/long.csv"
run 0 "import of a 300-byte level" import "$tmp/long.csv" --archive "$tmp/long.db" -q
run 0 "check of a 300-byte level name" check "$tmp/long.graph" "$tmp/long.db" -q
# A graph variable named like shoal's batch column does not silently read the batch ids.
printf 'input shoal_batch integer [1, 9]\noutput y real\ndefault effect 1\nshoal_batch -> y\n' >"$tmp/sb.graph"
printf 'y\n1\n2\n' >"$tmp/sb.csv"
run 0 "import for the batch-column case" import "$tmp/sb.csv" --archive "$tmp/sb.db" -q
run 2 "check with a variable named shoal_batch" check "$tmp/sb.graph" "$tmp/sb.db"; said "batch column" "the batch column clash is named"

[ "$fails" -eq 0 ]
