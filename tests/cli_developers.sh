#!/bin/sh
# DEVELOPERS.md's table "Where each output figure comes from" stays true: every function it names is
# defined in the sources, every file and test it names exists, and every reference section it cites
# is a section of tests/REFERENCES.md. See LICENSE.
: "${PYTHON:=/usr/bin/python3}"
"$PYTHON" - <<'PYEOF'
import glob, os, re, sys
dev = open("DEVELOPERS.md").read()
sec = dev[dev.index("### Where each output figure comes from"):]
sec = sec[:sec.index("\n## ")]
rows = [l for l in sec.splitlines() if l.startswith("| ") and not l.startswith("| output") and not l.startswith("|---")]
sources = glob.glob("coverage/*/*.c") + glob.glob("power/*.c")
text = {f: open(f).read() for f in sources}
refs = open("tests/REFERENCES.md").read()
heads = set(re.findall(r"^#{2,3} (\d+[a-z]?)\.", refs, re.M))
problems, n_fn, n_file, n_test, n_ref = [], 0, 0, 0, 0
for row in rows:
    cells = [c.strip() for c in row.strip("|").split("|")]
    if len(cells) != 6:
        problems.append("row without 6 cells: " + row[:60]); continue
    field, funcs, files, method, tests, ref = cells
    for fn in re.findall(r"`([a-z_][a-z0-9_]*)`", funcs):
        n_fn += 1
        if not any(re.search(r"^[a-z][^;{}]*\b%s\(" % fn, t, re.M) for t in text.values()):
            problems.append("%s: function %s is not defined" % (field, fn))
    for name in re.findall(r"[\w/]+\.c", files):
        n_file += 1
        if not (os.path.exists("coverage/" + name) or os.path.exists("power/" + name) or
                glob.glob("coverage/*/" + os.path.basename(name)) or glob.glob("power/" + os.path.basename(name))):
            problems.append("%s: file %s does not exist" % (field, name))
    for name in re.findall(r"[\w]+\.(?:c|py|sh)", tests):
        n_test += 1
        if not os.path.exists("tests/" + name):
            problems.append("%s: test %s does not exist" % (field, name))
    for s in re.findall(r"\d+[a-z]?", ref):
        n_ref += 1
        if s not in heads:
            problems.append("%s: reference section %s is not in tests/REFERENCES.md" % (field, s))
ok = len(rows) >= 10 and not problems
print("%s: DEVELOPERS.md traces %d output figures through %d functions, %d files, %d tests and %d "
      "reference sections that all exist %s" % ("PASS" if ok else "FAIL", len(rows), n_fn, n_file,
                                                 n_test, n_ref, problems[:6]))
sys.exit(0 if ok else 1)
PYEOF
