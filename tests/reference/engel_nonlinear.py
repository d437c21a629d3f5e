"""Reference figures for plumb's #nonlinear and #predict on a real data set,
from scipy.

Fits Engel's food expenditure data (tests/data/engel.csv, the statsmodels
package's copy: 235 Belgian households, 1857) by the power curve
    foodexp = a * income^b
with scipy.optimize.least_squares (method "lm", MINPACK, the analytic
Jacobian, tolerances at their tightest) from a = 1, b = 1, polished by
Gauss-Newton steps in numpy (see below), then scipy.optimize.curve_fit from
there for the covariance pcov = s^2 (J'J)^-1 (checked against the QR of J),
and writes with the versions used:
  - the estimates, their standard errors (sqrt of pcov's diagonal), the
    residual sum of squares, residual standard deviation and degrees of
    freedom;
  - at new incomes, the fitted value, its delta-method standard error
    sqrt(g' pcov g) with g = (x^b, a x^b ln x) the analytic gradient in the
    parameters, and both intervals at level 0.95 with the t quantile of
    scipy.stats.t on n - 2 degrees of freedom:
      mean:         fit -/+ t * se
      observation:  fit -/+ t * sqrt(s^2 + se^2)

Usage (from the crate root):
    pip install scipy numpy
    python3 tests/reference/engel_nonlinear.py > tests/data/engel_nonlinear.json
"""
import csv
import json
import sys

import numpy
import scipy
import scipy.optimize
import scipy.stats

with open("tests/data/engel.csv", newline="") as f:
    rows = list(csv.DictReader(f))
income = numpy.array([float(r["income"]) for r in rows])
foodexp = numpy.array([float(r["foodexp"]) for r in rows])
START = (1.0, 1.0)
LEVEL = 0.95
NEW_INCOMES = [500.0, 1000.0, 3000.0]


def model(x, a, b):
    return a * x**b


def gradient(x, a, b):
    """d model / d(a, b), analytic."""
    p = x**b
    return numpy.stack([p, a * p * numpy.log(x)], axis=-1)


tight = dict(ftol=1e-15, xtol=1e-15, gtol=1e-15)
ls = scipy.optimize.least_squares(
    lambda p: model(income, *p) - foodexp,
    START,
    jac=lambda p: gradient(income, *p),
    method="lm",
    max_nfev=10000,
    **tight,
)
# MINPACK stops on its step test about 1e-8 short of the minimum here (a
# Gauss-Newton step from its point still moves a by ~8e-9 relative), so
# the point is polished with Gauss-Newton steps (numpy lstsq, an orthogonal
# factorization, of the analytic Jacobian) until a step is below 1e-15
# relative; curve_fit from the polished point gives pcov there.
polished = ls.x.copy()
for _ in range(20):
    step = numpy.linalg.lstsq(gradient(income, *polished), foodexp - model(income, *polished), rcond=None)[0]
    polished = polished + step
    if numpy.all(numpy.abs(step) <= 1e-15 * numpy.abs(polished)):
        break
else:
    sys.exit(f"Gauss-Newton polishing did not settle: last step {step}")
if not numpy.allclose(polished, ls.x, rtol=1e-7, atol=0):
    sys.exit(f"least_squares stopped far from the minimum: {ls.x} against {polished}")
popt, pcov = scipy.optimize.curve_fit(
    model, income, foodexp, p0=polished, jac=lambda x, a, b: gradient(x, a, b), method="lm", maxfev=10000, **tight
)
if not numpy.allclose(popt, polished, rtol=1e-12, atol=0):
    sys.exit(f"curve_fit moved from the polished point: {popt} against {polished}")
popt = polished

n, k = len(income), 2
df = n - k
resid = foodexp - model(income, *popt)
rss = float(resid @ resid)
s2 = rss / df
# pcov from curve_fit is s^2 (J'J)^-1; check it against the QR of J.
J = gradient(income, *popt)
r = numpy.linalg.qr(J, mode="r")
rinv = numpy.linalg.inv(r)
cov_qr = s2 * rinv @ rinv.T
if not numpy.allclose(pcov, cov_qr, rtol=1e-9, atol=0):
    sys.exit(f"pcov disagrees with s^2 (R'R)^-1: {pcov} against {cov_qr}")

t = scipy.stats.t.ppf(0.5 + LEVEL / 2, df)
predictions = []
for x in NEW_INCOMES:
    g = gradient(numpy.array(x), *popt)
    fit = float(model(x, *popt))
    se = float(numpy.sqrt(g @ pcov @ g))
    obs = float(numpy.sqrt(s2 + se * se))
    predictions.append({
        "income": x,
        "fitted": fit,
        "se_fit": se,
        "mean_lower": fit - t * se,
        "mean_upper": fit + t * se,
        "obs_lower": fit - t * obs,
        "obs_upper": fit + t * obs,
    })

out = {
    "source": "scipy.optimize.least_squares / curve_fit (method lm) on tests/data/engel.csv; written by tests/reference/engel_nonlinear.py",
    "versions": {
        "python": sys.version.split()[0],
        "scipy": scipy.__version__,
        "numpy": numpy.__version__,
    },
    "model": "foodexp = a * income^b",
    "start": {"a": START[0], "b": START[1]},
    "n": n,
    "df_resid": df,
    "level": LEVEL,
    "t_quantile": float(t),
    "estimates": {"a": float(popt[0]), "b": float(popt[1])},
    "std_errors": {"a": float(numpy.sqrt(pcov[0, 0])), "b": float(numpy.sqrt(pcov[1, 1]))},
    "rss": rss,
    "residual_sd": float(numpy.sqrt(s2)),
    "least_squares_status": int(ls.status),
    "least_squares_nfev": int(ls.nfev),
    "least_squares_estimates": {"a": float(ls.x[0]), "b": float(ls.x[1])},
    "gradient_norm": float(numpy.linalg.norm(J.T @ resid)),
    "predictions": predictions,
}
json.dump(out, sys.stdout, indent=2)
sys.stdout.write("\n")
