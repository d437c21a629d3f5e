"""The exact least-squares solution of NIST StRD Lanczos1 for the data as
stored in doubles, in 60-digit arithmetic (mpmath).

Lanczos1's certified residual sum of squares (1.4307867721E-25) is below
what its data, once rounded to doubles, can give: the tests hold plumb's
residual sum of squares, residual standard deviation and standard
deviations to this solution instead, and the parameters to the
certificate.

    python3 tests/reference/lanczos1_exact.py \
        ../shared/reference/nist-strd/nonlinear/Lanczos1.dat \
        > tests/data/lanczos1_exact.json

Method: each data value is read as the double nearest its decimal text
(Python's float), then converted to mpmath exactly; Gauss-Newton on
y = b1*exp(-b2*x) + b3*exp(-b4*x) + b5*exp(-b6*x) from the certified values,
each step solving the normal equations at 60 digits (the condition number
of J'J, about 1e12 here, leaves over 45 correct digits), until the step is
below 1e-45 relative; then RSS, s = sqrt(RSS/18) and the standard
deviations sqrt(s^2 * diag((J'J)^-1)).
"""
import json
import sys

import mpmath
from mpmath import mp, mpf

mp.dps = 60

lines = open(sys.argv[1]).read().splitlines()
data = [l.split() for l in lines[60:84]]
y = [mpf(float(t[0])) for t in data]
x = [mpf(float(t[1])) for t in data]
b = [mpf(s) for s in ["9.5100000027E-02", "1.0000000001E+00", "8.6070000013E-01", "3.0000000002E+00", "1.5575999998E+00", "5.0000000001E+00"]]


def model(b, xi):
    return b[0] * mpmath.exp(-b[1] * xi) + b[2] * mpmath.exp(-b[3] * xi) + b[4] * mpmath.exp(-b[5] * xi)


def jacobian(b, xi):
    e1, e2, e3 = mpmath.exp(-b[1] * xi), mpmath.exp(-b[3] * xi), mpmath.exp(-b[5] * xi)
    return [e1, -b[0] * xi * e1, e2, -b[2] * xi * e2, e3, -b[4] * xi * e3]


for it in range(100):
    r = [yi - model(b, xi) for yi, xi in zip(y, x)]
    J = mpmath.matrix([jacobian(b, xi) for xi in x])
    JtJ = J.T * J
    step = mpmath.lu_solve(JtJ, J.T * mpmath.matrix(r))
    b = [bi + si for bi, si in zip(b, step)]
    if max(abs(s / bi) for s, bi in zip(step, b)) < mpf("1e-45"):
        break

r = [yi - model(b, xi) for yi, xi in zip(y, x)]
rss = sum(ri * ri for ri in r)
df = len(y) - 6
s2 = rss / df
J = mpmath.matrix([jacobian(b, xi) for xi in x])
cov = mpmath.inverse(J.T * J) * s2
out = {
    "source": "NIST StRD Lanczos1.dat, data as stored in doubles; exact least squares by Gauss-Newton at 60 digits",
    "script": "tests/reference/lanczos1_exact.py",
    "mpmath": mpmath.__version__,
    "python": sys.version.split()[0],
    "iterations": it + 1,
    "parameters": [mpmath.nstr(bi, 20) for bi in b],
    "rss": mpmath.nstr(rss, 20),
    "residual_sd": mpmath.nstr(mpmath.sqrt(s2), 20),
    "std_devs": [mpmath.nstr(mpmath.sqrt(cov[i, i]), 20) for i in range(6)],
}
print(json.dumps(out, indent=2))
