"""Reference figures for plumb's #logistic and #predict on a logistic fit, from statsmodels.

Fits, with the versions used recorded in the output:
  - the Spector & Mazzeo (1980) data (tests/data/spector.csv, the statsmodels
    package's copy): GRADE on GPA + TUCE + PSI, by statsmodels GLM with the
    Binomial family (IRLS, tol 1e-14) and by discrete Logit (Newton, tol
    1e-14); coefficients, standard errors, z, p, Wald intervals, the
    log-likelihood, null and residual deviance, AIC/BIC, and per row the
    fitted probability, Pearson and deviance residuals, leverage (hat
    diagonal) and Cook's distance (GLMResults.get_influence());
  - predictions at new points: GLMResults.get_prediction(...) on the linear
    predictor (which="linear"), its interval mapped through 1/(1+exp(-eta)),
    beside statsmodels' own mean interval (summary_frame);
  - a grouped data set (Bliss 1935 beetle mortality, as printed in Dobson &
    Barnett, An Introduction to Generalized Linear Models, table 7.2; from
    memory): killed out of tested by dose, GLM Binomial on (killed,
    tested - killed).

Usage (from the crate root):
    python3 tests/reference/logistic_figures.py > tests/data/logistic_figures.json
"""
import json
import sys

import numpy
import pandas
import scipy
import scipy.stats
import statsmodels
import statsmodels.api as sm

data = pandas.read_csv("tests/data/spector.csv", sep=r"\s+", quotechar="'")
X = sm.add_constant(data[["GPA", "TUCE", "PSI"]])
y = data["GRADE"]
glm = sm.GLM(y, X, family=sm.families.Binomial()).fit(tol=1e-14, maxiter=200)
logit = sm.Logit(y, X).fit(method="newton", tol=1e-14, maxiter=200, disp=0)
# The two fits agree: the estimate is well determined.
assert numpy.allclose(glm.params, logit.params, rtol=1e-11, atol=0)
infl = glm.get_influence()
ci = glm.conf_int(0.05)
names = {"const": "Intercept"}


def by_term(series):
    return {names.get(k, k): float(v) for k, v in series.items()}


POINTS = [
    {"GPA": 3.0, "TUCE": 20.0, "PSI": 1.0},
    {"GPA": 2.5, "TUCE": 25.0, "PSI": 0.0},
    {"GPA": 3.8, "TUCE": 28.0, "PSI": 1.0},
]
predictions = []
z = scipy.stats.norm.ppf(0.975)
for pt in POINTS:
    row = pandas.DataFrame([{"const": 1.0, **pt}])[X.columns]
    lin = glm.get_prediction(row, which="linear").summary_frame(alpha=0.05)
    mean = glm.get_prediction(row).summary_frame(alpha=0.05)
    eta = float(lin["predicted"].iloc[0])
    se = float(lin["se"].iloc[0])
    lo, hi = eta - z * se, eta + z * se
    ex = lambda e: 1.0 / (1.0 + numpy.exp(-e))
    assert numpy.isclose(ex(lo), float(mean["mean_ci_lower"].iloc[0]), rtol=1e-12)
    predictions.append({
        "point": pt,
        "eta": eta,
        "eta_se": se,
        "probability": float(ex(eta)),
        "lower": float(ex(lo)),
        "upper": float(ex(hi)),
    })

spector = {
    "n": int(glm.nobs),
    "events": int(y.sum()),
    "estimates": by_term(glm.params),
    "std_errors": by_term(glm.bse),
    "z": by_term(glm.tvalues),
    "p_values": by_term(glm.pvalues),
    "lower": by_term(ci[0]),
    "upper": by_term(ci[1]),
    "log_likelihood": float(glm.llf),
    "null_log_likelihood": float(logit.llnull),
    "deviance": float(glm.deviance),
    "null_deviance": float(glm.null_deviance),
    "lr_statistic": float(logit.llr),
    "lr_p_value": float(logit.llr_pvalue),
    "mcfadden_r2": float(logit.prsquared),
    "aic": float(glm.aic),
    "bic": float(logit.bic),
    "probability": [float(v) for v in glm.fittedvalues],
    "pearson": [float(v) for v in glm.resid_pearson],
    "deviance_residuals": [float(v) for v in glm.resid_deviance],
    "leverage": [float(v) for v in infl.hat_matrix_diag],
    "cooks": [float(v) for v in infl.cooks_distance[0]],
    "predictions": predictions,
}

# Grouped: killed of tested at each dose.
dose = [1.6907, 1.7242, 1.7552, 1.7842, 1.8113, 1.8369, 1.8610, 1.8839]
tested = [59, 60, 62, 56, 63, 59, 62, 60]
killed = [6, 13, 18, 28, 52, 53, 61, 60]
Xg = sm.add_constant(numpy.array(dose))
endog = numpy.column_stack([killed, numpy.array(tested) - numpy.array(killed)])
g = sm.GLM(endog, Xg, family=sm.families.Binomial()).fit(tol=1e-14, maxiter=200)
grouped = {
    "dose": dose,
    "tested": tested,
    "killed": killed,
    "estimates": {"Intercept": float(g.params[0]), "dose": float(g.params[1])},
    "std_errors": {"Intercept": float(g.bse[0]), "dose": float(g.bse[1])},
    "log_likelihood": float(g.llf),
    "deviance": float(g.deviance),
    "null_deviance": float(g.null_deviance),
    "probability": [float(v) for v in g.fittedvalues],
}

json.dump({
    "source": "tests/reference/logistic_figures.py",
    "versions": {
        "python": sys.version.split()[0],
        "statsmodels": statsmodels.__version__,
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "pandas": pandas.__version__,
    },
    "spector": spector,
    "grouped": grouped,
}, sys.stdout, indent=1)
print()
