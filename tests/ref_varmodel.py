# The plan's noise, cost and bend arithmetic against numpy, scipy and statsmodels, and the plan
# file's digest against hashlib (FIPS 180-4). Data are drawn here with a fixed seed. See LICENSE.
import hashlib
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy import special, stats
import statsmodels.api as sm

BUILD = os.environ.get("BUILD", "build")
PROBE = os.path.join(BUILD, "tests", "probe_varmodel")
failed = 0


def check(ok, desc):
    global failed
    print(("PASS: " if ok else "FAIL: ") + desc)
    if not ok:
        failed += 1


def probe(text):
    out = subprocess.run([PROBE], input=text, capture_output=True, text=True, check=False).stdout
    return [float(x) for x in out.split()] if not out.startswith("error") else None


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


rng = np.random.default_rng(20261205)
n, p = 400, 3
Z = np.column_stack([np.ones(n), rng.uniform(-1, 1, n), rng.uniform(-1, 1, n)])
true_g = np.array([0.2, 1.5, -0.7])
# Skewed, heteroscedastic residuals: a centred gamma scaled by the log-linear SD.
e = (rng.gamma(2.0, 1.0, n) - 2.0) / math.sqrt(2.0) * np.exp(Z @ true_g / 2)

# Harvey (1976): OLS of log e^2 on Z, intercept raised by -(psi(1/2) + log 2); scipy's digamma
# gives the constant, statsmodels the fit. Tolerance 1e-9 relative: two least-squares solvers on
# the same well-conditioned 400 x 3 design.
text = "harvey %d %d\n" % (n, p) + "".join(
    "%.17g %.17g %.17g\n" % (e[i], Z[i, 1], Z[i, 2]) for i in range(n))
got = probe(text)
ref = sm.OLS(np.log(e * e), Z).fit()
offset = -(special.digamma(0.5) + math.log(2.0))
check(abs(offset - 1.2703628454614782) < 1e-15,
      "Harvey offset -(psi(1/2) + log 2) = %.16f (scipy.special.digamma, 1e-15)" % offset)
want = ref.params.copy()
want[0] += offset
check(got is not None and all(rel(got[j], want[j]) < 1e-9 for j in range(p)),
      "Harvey gamma %s vs statsmodels OLS of log e^2 + offset %s (1e-9 relative)" % (got[:p] if got else None, want))
lm = n * ref.rsquared
check(got is not None and rel(got[p], stats.chi2.sf(lm, p - 1)) < 1e-9,
      "Koenker n R^2 p value %.6g vs scipy chi2.sf(%.4f, %d) (1e-9 relative)" % (got[p] if got else -1, lm, p - 1))

# Constant spread: the test should rarely fire. 200 data sets at 1%: the count of p < 0.01 must stay
# below 9 (binomial(200, 0.01) upper tail P(X >= 9) < 0.001, scipy).
fires = 0
for k in range(200):
    ec = rng.standard_t(5, n)
    t = "harvey %d %d\n" % (n, p) + "".join("%.17g %.17g %.17g\n" % (ec[i], Z[i, 1], Z[i, 2]) for i in range(n))
    r = probe(t)
    fires += r is not None and r[p] < 0.01
check(fires < 9, "Koenker test on constant heavy-tailed (t5) noise fires %d of 200 times at 1%% "
      "(< 9; binomial tail %.1e)" % (fires, stats.binom.sf(8, 200, 0.01)))

# Log-linear cost with Duan's (1983) smearing: statsmodels OLS on log y, smear = mean exp(resid).
cost = np.exp(Z @ np.array([0.5, 0.8, 0.1]) + rng.normal(0, 0.3, n))
text = "loglin %d %d\n" % (n, p) + "".join("%.17g %.17g %.17g\n" % (cost[i], Z[i, 1], Z[i, 2]) for i in range(n))
got = probe(text)
ref = sm.OLS(np.log(cost), Z).fit()
smear = np.mean(np.exp(ref.resid))
check(got is not None and all(rel(got[j], ref.params[j]) < 1e-9 for j in range(p)) and rel(got[p], smear) < 1e-9,
      "cost model gamma and smearing %s vs statsmodels + Duan %s %.9f (1e-9 relative)" % (got, ref.params, smear))

# Expected RSS of a straight-line fit when the mean bends and the noise varies: the closed form
# m'(I-H)m + sum v (1 - h) against numpy's hat matrix (1e-9 relative), and against a Monte Carlo
# mean of 20,000 simulated RSS (4 standard errors).
X = np.column_stack([np.ones(60), np.linspace(-1, 1, 60)])
m = 3.0 * X[:, 1] ** 2 + X[:, 1]
v = 0.2 + 2.0 * (X[:, 1] + 1.0) ** 2
text = "erss 60 2\n" + "".join("%.17g %.17g %.17g\n" % (m[i], v[i], X[i, 1]) for i in range(60))
got = probe(text)
H = X @ np.linalg.inv(X.T @ X) @ X.T
closed = m @ (np.eye(60) - H) @ m + np.sum(v * (1 - np.diag(H)))
check(got is not None and rel(got[0], closed) < 1e-9,
      "expected RSS %.10g vs numpy hat matrix %.10g (1e-9 relative)" % (got[0] if got else -1, closed))
beta = np.linalg.lstsq(X, m, rcond=None)[0]
check(got is not None and all(rel(got[1 + j], beta[j]) < 1e-9 for j in range(2)),
      "projection of the mean on the straight line %s vs numpy lstsq %s (1e-9)" % (got[1:] if got else None, beta))
sims = []
for k in range(20000):
    y = m + rng.normal(0, 1, 60) * np.sqrt(v)
    r = y - H @ y
    sims.append(r @ r)
sims = np.array(sims)
se = sims.std(ddof=1) / math.sqrt(len(sims))
check(got is not None and abs(got[0] - sims.mean()) < 4 * se,
      "expected RSS %.4f vs Monte Carlo mean %.4f of 20,000 fits (4 SE = %.4f)" % (got[0] if got else -1, sims.mean(), 4 * se))

# The extra-sum-of-squares F test against scipy's F distribution.
got = probe("nestedf 120.5 3 80.25 6 50\n")
f = ((120.5 - 80.25) / 3) / (80.25 / 44)
check(got is not None and rel(got[0], f) < 1e-12 and rel(got[1], stats.f.sf(f, 3, 44)) < 1e-9,
      "nested F %.6f p %.6g vs scipy.stats.f.sf (1e-9)" % (f, stats.f.sf(f, 3, 44)))

# SHA-256 against hashlib: the FIPS 180-4 example "abc", the empty file, the two-block message of
# 56 bytes, a megabyte with every byte value, and a length that fills the padding block exactly.
with tempfile.TemporaryDirectory() as d:
    cases = [b"abc", b"", b"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq",
             bytes(range(256)) * 4096, b"x" * 119, b"y" * 55, b"z" * 64]
    for k, data in enumerate(cases):
        path = os.path.join(d, "f%d" % k)
        with open(path, "wb") as fh:
            fh.write(data)
        out = subprocess.run([PROBE], input="sha256 %s\n" % path, capture_output=True, text=True).stdout.strip()
        want = hashlib.sha256(data).hexdigest()
        check(out == want, "SHA-256 of %d bytes: %s vs hashlib %s" % (len(data), out[:16], want[:16]))
    check(hashlib.sha256(b"abc").hexdigest().startswith("ba7816bf"),
          "hashlib's SHA-256 of 'abc' begins ba7816bf (FIPS 180-4, appendix B.1 example)")

sys.exit(1 if failed else 0)
