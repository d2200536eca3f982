#!/bin/sh
# The dependency guard (tests/deps/guard.sh) that `make check` runs before any test: a missing
# module, program or unmapped import stops the check with one clear line and exit 2.
# Hiding a module: a directory first on PYTHONPATH holding a package of that name that raises
# ImportError, so Debian's python3 cannot import the real one.
: "${PYTHON:=/usr/bin/python3}"
export PYTHON
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT
ok() { if [ "$1" = 0 ]; then echo "PASS: $2"; else echo "FAIL: $2"; fi; }

sh tests/deps/guard.sh >"$tmp/out" 2>&1; rc=$?
ok "$rc" "guard passes where every dependency is installed (rc $rc: $(head -c 300 "$tmp/out"))"

mkdir -p "$tmp/hide/mpmath"
echo 'raise ImportError("hidden by tests/cli_deps.sh")' >"$tmp/hide/mpmath/__init__.py"
PYTHONPATH="$tmp/hide" sh tests/deps/guard.sh >"$tmp/out" 2>&1; rc=$?
[ "$rc" = 2 ]; ok $? "hidden mpmath: guard exits 2 (got $rc)"
grep -q '^shoal: missing: python3-mpmath (Python module mpmath, needed by tests/ref_dist.py)$' "$tmp/out"
ok $? "hidden mpmath: one line names the package and the check that needs it"
grep -q 'run make deps-check as root' "$tmp/out"; ok $? "hidden mpmath: says how to install"
[ "$(grep -c '^shoal: missing:' "$tmp/out")" = 1 ]; ok $? "hidden mpmath: nothing else reported missing"

# An import the manifest does not map: a new reference check cannot slip past a fresh machine.
mkdir -p "$tmp/tests"
printf 'import sys\nimport frobnicate_xyz\n' >"$tmp/tests/ref_new.py"
sh tests/deps/guard.sh tests/deps/manifest "$tmp/tests" >"$tmp/out" 2>&1; rc=$?
[ "$rc" = 2 ] && grep -q 'unmapped module: frobnicate_xyz (imported by .*ref_new.py:2' "$tmp/out"
ok $? "an unmapped import is refused with its file and line (rc $rc)"

# A missing program and a missing R package.
printf 'prog no-such-program-xyz no-such-pkg tests/cli_x.sh\nr nosuchrpkgxyz r-cran-nosuch tests/ref_x.py\n' \
  >"$tmp/manifest"
sh tests/deps/guard.sh "$tmp/manifest" "$tmp/empty" >"$tmp/out" 2>&1; rc=$?
[ "$rc" = 2 ] && grep -q '^shoal: missing: no-such-pkg (program no-such-program-xyz, needed by tests/cli_x.sh)$' "$tmp/out" &&
  grep -q '^shoal: missing: r-cran-nosuch (R package nosuchrpkgxyz' "$tmp/out"
ok $? "a missing program and R package are named with their packages (rc $rc)"

# Every package the manifest names is one `make deps-check` installs (the two lists agree).
for p in $(awk '!/^#/ && NF >= 3 && $3 != "(in-tree)" && $3 != "r-base-core" {print $3}' tests/deps/manifest); do
  make -s -n -p deps-check 2>/dev/null | grep '^DEB_CHECK\|^DEB_BUILD' | grep -qw "$p" ||
    { echo "FAIL: manifest package $p is not in the Makefile's DEB_BUILD/DEB_CHECK"; continue; }
  echo "PASS: manifest package $p is installed by make deps-check"
done

# make check itself stops at the guard, before building or running any test. The inner run is
# kept from recursing into this script by SHOAL_DEPS_INNER (only if the guard were gone).
if [ -z "${SHOAL_DEPS_INNER:-}" ]; then
  SHOAL_DEPS_INNER=1 PYTHONPATH="$tmp/hide" timeout 900 make -s check >"$tmp/out" 2>&1; rc=$?
  [ "$rc" = 2 ] && grep -q '^shoal: missing: python3-mpmath' "$tmp/out" && ! grep -q 'passed' "$tmp/out"
  ok $? "make check with mpmath hidden stops at the guard with exit 2 and runs no test (rc $rc)"
else
  echo "FAIL: make check ran the tests although a dependency was hidden (the guard is not in the way)"
fi
