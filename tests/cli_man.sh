#!/bin/sh
# The manual: `make install` puts shoal(1) and shoal.graph(5) in place; shoal(1) has EXAMPLES and
# documents the long form of every option the program accepts (read from `shoal help COMMAND`);
# both pages render without warnings (man -l, when man is installed). See LICENSE.
: "${SHOAL:=build/shoal}"
tmp=$(mktemp -d) || exit 1
trap 'rm -rf "$tmp"' EXIT
fails=0
ok() { echo "PASS: $1"; }
bad() { echo "FAIL: $1"; fails=$((fails + 1)); }
# The install target's own commands (make -n, so nothing is rebuilt under a test), run into a
# scratch root with the binary as built.
if make -s -n install DESTDIR="$tmp" PREFIX=/usr SHOAL="$SHOAL" 2>"$tmp/install.log" |
   grep '^install ' | sh >>"$tmp/install.log" 2>&1; then
  ok "make install DESTDIR=... succeeds"
else bad "make install failed: $(tail -3 "$tmp/install.log")"; fi
for f in bin/shoal share/man/man1/shoal.1 share/man/man5/shoal.graph.5; do
  if [ -s "$tmp/usr/$f" ]; then ok "installed $f"; else bad "make install did not install $f"; fi
done
grep -q '^\.SH EXAMPLES' coverage/shoal.1 && ok "shoal(1) has an EXAMPLES section" ||
  bad "shoal(1) lacks EXAMPLES"
# Every long option of every command, as the program lists it, appears in shoal(1) (as \-\-name).
missing=""
for c in claims import check power coverage survey plan; do
  for o in $("$SHOAL" help "$c" | sed -n 's/^  \(-., \)\{0,1\}--\([a-z-]*\).*/\2/p'); do
    esc=$(printf '%s' "$o" | sed 's/-/\\\\-/g')
    grep -q -- "\\\\-\\\\-$esc" coverage/shoal.1 || missing="$missing --$o"
  done
done
if [ -z "$missing" ]; then ok "shoal(1) documents every long option the commands accept"
else bad "shoal(1) lacks:$(echo "$missing" | tr ' ' '\n' | sort -u | tr '\n' ' ')"; fi
if command -v man >/dev/null 2>&1; then
  for p in coverage/shoal.1 coverage/shoal.graph.5; do
    out=$(MANWIDTH=80 man -l "$p" 2>&1 >/dev/null)
    if [ -z "$out" ]; then ok "man -l $p renders without warnings"; else bad "man -l $p: $out"; fi
  done
else
  echo "SKIP: man is not installed; the pages were not rendered"
fi
exit $((fails > 0))
