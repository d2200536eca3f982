#!/bin/sh
# Every citation of a check value resolves inside the repository: each "REFERENCES.md N" names a
# section of tests/REFERENCES.md, each "pitfall N" one of its pitfalls, nothing cites a file outside
# the repository, and every reference literal of 8 or more decimals in the tests is in the file.
# See LICENSE.
: "${PYTHON:=/usr/bin/python3}"
"$PYTHON" - "${1:-.}" <<'PYEOF'
import glob, os, re, sys
root = sys.argv[1]
os.chdir(root)
refs = open("tests/REFERENCES.md").read()
heads = set(re.findall(r"^#{2,3} (\d+[a-z]?)\.", refs, re.M))
pitfalls = set(re.findall(r"^(\d+)\. ", refs[refs.index("## Pitfalls"):], re.M))
fails = 0
def report(ok, what):
    global fails
    print(("PASS: " if ok else "FAIL: ") + what)
    fails += not ok
sources = sorted(glob.glob("tests/*.c") + glob.glob("tests/*.py") + glob.glob("tests/*.sh") +
                 glob.glob("tests/bench/*") + glob.glob("power/*.[ch]") +
                 glob.glob("coverage/*/*.[ch]") + ["README.md", "DEVELOPERS.md"])
cites, bad, outside = 0, [], []
for f in sources:
    if not os.path.isfile(f) or f.endswith("cli_references.sh"):
        continue
    text = open(f, errors="replace").read()
    for m in re.finditer(r"REFERENCES\.md(?: sections?)? ((?:\d+[a-z]?)(?:/\d*[a-z])*)", text):
        first = m.group(1).split("/")[0]
        for sec in [first] + [first[:-1] + x if x.isalpha() else x for x in m.group(1).split("/")[1:]]:
            cites += 1
            if sec not in heads:
                bad.append("%s: REFERENCES.md %s" % (f, sec))
    for m in re.finditer(r"REFERENCES\.md pitfall (\d+)", text):
        cites += 1
        if m.group(1) not in pitfalls:
            bad.append("%s: pitfall %s" % (f, m.group(1)))
    for m in re.finditer(r"\S*shared/REFERENCES\.md", text):
        outside.append("%s: %s" % (f, m.group(0)))
report(cites > 50 and not bad, "%d citations of tests/REFERENCES.md resolve to a section or pitfall %s"
       % (cites, bad[:5]))
report(not outside, "no citation of a references file outside the repository %s" % outside[:5])
# Reference numbers of tests/REFERENCES.md with their printed precision: a test literal matches a
# reference when it agrees with it to the reference's last printed digit (half a unit there).
ref_nums = []
for m in re.finditer(r"(?<![\w.])(\d+)\.(\d+)(?:[eE]([-+]?\d+))?", refs):
    digits = len(m.group(1).lstrip("0") + m.group(2)) if m.group(1).strip("0") else len(m.group(2).lstrip("0"))
    if digits < 6:
        continue
    exp = int(m.group(3) or 0)
    ref_nums.append((float(m.group(0)), 0.5 * 10.0 ** (exp - len(m.group(2)))))
lits, missing = 0, []
for f in sorted(glob.glob("tests/test_*.c") + glob.glob("tests/ref_*.py") + glob.glob("tests/probe_*.c")):
    for n, line in enumerate(open(f), 1):
        for m in re.finditer(r"(?<![\w.])\d+\.\d{7,}(?:[eE][-+]?\d+)?", line):
            x = float(m.group(0))
            lits += 1
            if not any(abs(x - r) <= half * (1 + 1e-9) for r, half in ref_nums):
                missing.append("%s:%d: %s" % (f, n, m.group(0)))
report(lits > 50 and not missing, "%d reference literals of 8+ decimals in the tests appear in "
       "tests/REFERENCES.md %s" % (lits, missing[:5]))
sys.exit(1 if fails else 0)
PYEOF
