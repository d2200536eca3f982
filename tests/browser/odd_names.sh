# Sourced by tests/cli_survey.sh and tests/cli_browser.sh: writes "$1/odd.graph" and "$1/odd.csv",
# an invented campaign (seed 11) whose variables are named '<script>', it's; "odd" and a&b, to test
# escaping. Needs $PYTHON. See LICENSE.
odd_names() {
  cat >"$1/odd.graph" <<'EOF'
input "<script>" real [0, 1]
input "it's; \"odd\"" bool
output "a&b" real
default effect 0.5 sd
default margin 0.1 sd
"<script>" -> "a&b"
"it's; \"odd\"" -> "a&b"
EOF
  "$PYTHON" - "$1/odd.csv" <<'EOF'
import random, sys
r = random.Random(11)
with open(sys.argv[1], "w") as f:
    f.write('"<script>","it\'s; ""odd""","a&b"\n')
    for _ in range(120):
        a, b = r.random(), r.randint(0, 1)
        f.write("%.4f,%d,%.4f\n" % (a, b, a + 0.5 * b + r.gauss(0, 0.3)))
EOF
}
