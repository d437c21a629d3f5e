"""Reference figures for plumb's #robust, from statsmodels RLM.

Fits by M-estimation (statsmodels.robust.robust_linear_model.RLM) with
HuberT (t=1.345) and TukeyBiweight (c=4.685), the default MAD scale
(median absolute residual about zero / Phi^-1(3/4)) and the default
covariance cov="H1" (Huber 1981 with the correction factor), converged
tightly: conv="coefs", tol=1e-12, maxiter=1000. Data:
  - stack loss (tests/data/stackloss.csv, Brownlee 1965, the statsmodels
    package's copy): STACKLOSS on AIRFLOW + WATERTEMP + ACIDCONC;
  - Engel (tests/data/engel.csv, the statsmodels package's copy):
    foodexp on income.
Also writes a prediction of the stack loss Huber fit at one new point: the
mean x'b with its standard error sqrt(x' Cov x), Cov the H1 covariance.

Usage (from the crate root):
    python3 tests/reference/robust_figures.py > tests/data/robust_figures.json
"""
import json
import sys

import numpy
import pandas
import scipy
import scipy.stats
import statsmodels
import statsmodels.api as sm

NORMS = {"huber": sm.robust.norms.HuberT(t=1.345), "bisquare": sm.robust.norms.TukeyBiweight(c=4.685)}
CASES = {
    "stackloss": ("tests/data/stackloss.csv", "STACKLOSS", ["AIRFLOW", "WATERTEMP", "ACIDCONC"]),
    "engel": ("tests/data/engel.csv", "foodexp", ["income"]),
}

out = {
    "versions": {"statsmodels": statsmodels.__version__, "numpy": numpy.__version__, "scipy": scipy.__version__, "python": sys.version.split()[0]},
    "settings": {"conv": "coefs", "tol": 1e-12, "maxiter": 1000, "cov": "H1", "scale_est": "mad"},
    "mad_normal": float(scipy.stats.norm.ppf(0.75)),
    "fits": {},
}
for name, (path, response, terms) in CASES.items():
    data = pandas.read_csv(path)
    x = sm.add_constant(data[terms])
    for method, norm in NORMS.items():
        res = sm.RLM(data[response], x, M=norm).fit(conv="coefs", tol=1e-12, maxiter=1000, cov="H1")
        fit = {
            "response": response,
            "terms": terms,
            "params": [float(v) for v in res.params],
            "bse": [float(v) for v in res.bse],
            "scale": float(res.scale),
            "weights": [float(v) for v in res.weights],
            "resid": [float(v) for v in res.resid],
            "iterations": int(res.fit_history["iteration"]),
            "ols_params": [float(v) for v in sm.OLS(data[response], x).fit().params],
        }
        if name == "stackloss" and method == "huber":
            point = numpy.array([1.0, 60.0, 20.0, 85.0])
            fit["prediction"] = {
                "point": {"AIRFLOW": 60.0, "WATERTEMP": 20.0, "ACIDCONC": 85.0},
                "mean": float(point @ res.params.values),
                "se": float(numpy.sqrt(point @ res.cov_params().values @ point)),
            }
        out["fits"][f"{name}_{method}"] = fit
json.dump(out, sys.stdout, indent=1)
print()
