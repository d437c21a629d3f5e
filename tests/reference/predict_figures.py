"""Reference figures for plumb's #predict and #compare, from statsmodels.

Fits the stack loss data (tests/data/stackloss.csv, Brownlee 1965, the
statsmodels package's copy) by ordinary least squares and writes, with the
versions used:
  - predictions at new points: OLSResults.get_prediction(...).summary_frame()
    (predicted mean, its standard error, confidence interval of the mean and
    prediction interval of a new observation) at levels 0.95 and 0.90;
  - the normal quantile plot of the full fit: Blom positions through
    scipy.stats.norm.ppf and the sorted internally studentized residuals;
  - nested-model F tests between fits of STACKLOSS: OLSResults.compare_f_test
    (and anova_lm for the same figures), with each fit's AIC and BIC.

Usage (from the crate root):
    pip install statsmodels
    python3 tests/reference/predict_figures.py > tests/data/predict_figures.json
"""
import json
import sys

import numpy
import pandas
import scipy
import scipy.stats
import statsmodels
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

data = pandas.read_csv("tests/data/stackloss.csv")

POINTS = [
    {"AIRFLOW": 60.0, "WATERTEMP": 20.0, "ACIDCONC": 85.0},
    {"AIRFLOW": 70.0, "WATERTEMP": 25.0, "ACIDCONC": 90.0},
    {"AIRFLOW": 58.0, "WATERTEMP": 18.0, "ACIDCONC": 89.0},
    {"AIRFLOW": 90.0, "WATERTEMP": 30.0, "ACIDCONC": 95.0},
]



def predictions_at(fit, points):
    """get_prediction(...).summary_frame() at each point, at levels 0.95 and 0.90."""
    out = []
    for level in (0.95, 0.90):
        frame = fit.get_prediction(pandas.DataFrame(points)).summary_frame(alpha=1 - level)
        for point, (_, row) in zip(points, frame.iterrows()):
            out.append({
                "level": level,
                "point": point,
                "mean": row["mean"],
                "mean_se": row["mean_se"],
                "mean_ci_lower": row["mean_ci_lower"],
                "mean_ci_upper": row["mean_ci_upper"],
                "obs_ci_lower": row["obs_ci_lower"],
                "obs_ci_upper": row["obs_ci_upper"],
            })
    return out


full = smf.ols("STACKLOSS ~ AIRFLOW + WATERTEMP + ACIDCONC", data).fit()
predictions = predictions_at(full, POINTS)

# A polynomial of degree 2 in AIRFLOW: the same powers plumb's
# #polynomial(STACKLOSS, AIRFLOW, degree=2) fits, predicted at new AIRFLOW values.
POLY_POINTS = [{"AIRFLOW": 55.0}, {"AIRFLOW": 62.0}, {"AIRFLOW": 75.0}, {"AIRFLOW": 85.0}]
poly = smf.ols("STACKLOSS ~ AIRFLOW + I(AIRFLOW**2)", data).fit()
poly_predictions = predictions_at(poly, POLY_POINTS)

MODELS = {
    "air": "STACKLOSS ~ AIRFLOW",
    "airwater": "STACKLOSS ~ AIRFLOW + WATERTEMP",
    "full": "STACKLOSS ~ AIRFLOW + WATERTEMP + ACIDCONC",
}
fits = {k: smf.ols(f, data).fit() for k, f in MODELS.items()}
nested = []
for small, large in (("air", "airwater"), ("air", "full"), ("airwater", "full")):
    f, p, df_diff = fits[large].compare_f_test(fits[small])
    table = anova_lm(fits[small], fits[large])
    assert abs(table["F"].iloc[1] - f) <= 1e-12 * abs(f), "anova_lm and compare_f_test disagree"
    nested.append({
        "smaller": small,
        "larger": large,
        "f": f,
        "p_value": p,
        "df_num": df_diff,
        "df_den": fits[large].df_resid,
    })

# Normal quantile plot of the full fit: Blom plotting positions (i - 0.375)/(n + 0.25)
# (Blom 1958) through scipy's normal inverse cdf, against the sorted internally
# studentized residuals of statsmodels.
n = int(full.nobs)
qq = {
    "theoretical": [float(scipy.stats.norm.ppf((i - 0.375) / (n + 0.25))) for i in range(1, n + 1)],
    "std_residuals_sorted": sorted(float(x) for x in full.get_influence().resid_studentized_internal),
}

out = {
    "source": "statsmodels OLS on tests/data/stackloss.csv; written by tests/reference/predict_figures.py",
    "versions": {
        "python": sys.version.split()[0],
        "statsmodels": statsmodels.__version__,
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "pandas": pandas.__version__,
    },
    "model": MODELS["full"],
    "predictions": predictions,
    "polynomial": {"formula": "STACKLOSS ~ AIRFLOW + I(AIRFLOW**2)", "predictions": poly_predictions},
    "fits": {k: {"formula": MODELS[k], "aic": v.aic, "bic": v.bic, "rsquared": v.rsquared, "rsquared_adj": v.rsquared_adj, "ssr": v.ssr, "df_resid": v.df_resid} for k, v in fits.items()},
    "nested": nested,
    "normal_quantile_plot": qq,
}
json.dump(out, sys.stdout, indent=2, default=float)
print()
