#!/bin/sh
# Stop `make check` before any test runs when something it needs is missing, with one line per
# missing thing naming its Debian package and who needs it. Also fails when a tests/*.py file
# imports a third-party module the manifest does not map to a package.
# Usage: guard.sh [MANIFEST [TESTS_DIR]]; env PYTHON (Debian's /usr/bin/python3 by default).
# Exit 0 when all is present, 2 otherwise.
: "${PYTHON:=/usr/bin/python3}"
here=$(dirname "$0")
manifest=${1:-$here/manifest}
tests=${2:-$here/..}
missing="" pkgs=""
say() { missing="$missing
missing: $1"; }
if ! command -v "$PYTHON" >/dev/null 2>&1; then
  echo "shoal: missing: $PYTHON (Debian's python3, needed by every tests/ref_*.py); run make deps-check as root" >&2
  exit 2
fi
while read -r kind name pkg who; do
  case "$kind" in ''|'#'*) continue ;; esac
  case "$kind" in
  py)
    [ "$pkg" = "(in-tree)" ] && continue
    PYTHONPATH="${PYTHONPATH:-}" "$PYTHON" -c "import $name" >/dev/null 2>&1 ||
      { say "$pkg (Python module $name, needed by $who)"; pkgs="$pkgs $pkg"; } ;;
  prog)
    command -v "$name" >/dev/null 2>&1 ||
      { say "$pkg (program $name, needed by $who)"; pkgs="$pkgs $pkg"; } ;;
  file)
    # shellcheck disable=SC2086
    set -- $name
    [ -e "$1" ] || { say "$pkg (file $name, needed by $who)"; pkgs="$pkgs $pkg"; } ;;
  r)
    command -v Rscript >/dev/null 2>&1 && Rscript -e "suppressMessages(library($name))" >/dev/null 2>&1 ||
      { say "$pkg (R package $name, needed by $who)"; pkgs="$pkgs $pkg"; } ;;
  *) echo "shoal: $manifest: unknown kind '$kind'" >&2; exit 2 ;;
  esac
done <"$manifest"
# Every module a reference check imports must be either in Python's standard library or mapped.
unmapped=$("$PYTHON" - "$manifest" "$tests" <<'PY'
import ast, glob, os, sys
manifest, tests = sys.argv[1], sys.argv[2]
known = {l.split()[1] for l in open(manifest) if l.strip() and not l.startswith("#")}
std = set(sys.stdlib_module_names)
for path in sorted(glob.glob(os.path.join(tests, "*.py")) + glob.glob(os.path.join(tests, "*", "*.py"))):
    tree = ast.parse(open(path, encoding="utf-8").read(), path)
    for node in ast.walk(tree):
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names = [node.module]
        for n in names:
            top = n.split(".")[0]
            if top not in std and top not in known:
                print("%s (imported by %s:%d, not in %s)" % (top, path, node.lineno, manifest))
PY
)
if [ -n "$unmapped" ]; then
  echo "$unmapped" | sed 's/^/shoal: unmapped module: /' >&2
  exit 2
fi
if [ -n "$missing" ]; then
  echo "$missing" | sed '/^$/d; s/^/shoal: /' >&2
  echo "shoal: run make deps-check as root (or: apt-get install -y$pkgs)" >&2
  exit 2
fi
exit 0
