"""Reference figures for plumb's tests by term, from statsmodels.

The Fair (1978) extramarital-affairs survey data that the statsmodels
package ships (statsmodels.datasets.fair, public domain) are written to
tests/data/fair.csv with the occupation code as a text column, and
  affairs ~ rate_marriage + age + occupation (a text column, 6 levels)
is fitted by ordinary least squares. For every term: the F test of all its
columns given all the other terms, with the classic covariance
(anova_lm typ=3, which equals wald_test_terms on the classic covariance)
and with the HC3 covariance (wald_test_terms in its F form, use_t=True);
and the overall F test with HC3 (the robust Wald test of every
coefficient but the intercept).

Usage (from the crate root):
    pip install statsmodels
    python3 tests/reference/term_tests.py > tests/data/term_tests.json
"""
import json
import sys

import numpy
import pandas
import statsmodels
import statsmodels.api as sm
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

d = sm.datasets.fair.load_pandas().data
data = pandas.DataFrame({
    "affairs": d["affairs"],
    "rate_marriage": d["rate_marriage"],
    "age": d["age"],
    "occupation": ["occ" + str(int(v)) for v in d["occupation"]],
})
data.to_csv("tests/data/fair.csv", index=False, float_format="%.17g")

formula = "affairs ~ rate_marriage + age + C(occupation)"
classic = smf.ols(formula, data).fit()
typ3 = anova_lm(classic, typ=3)
hc3 = smf.ols(formula, data).fit(cov_type="HC3", use_t=True)
robust = hc3.wald_test_terms(scalar=True).table
names = {"rate_marriage": "rate_marriage", "age": "age", "C(occupation)": "occupation"}
terms = {}
for key, label in names.items():
    terms[label] = {
        "classic": {"f": float(typ3.loc[key, "F"]), "df": float(typ3.loc[key, "df"]), "p": float(typ3.loc[key, "PR(>F)"])},
        "hc3": {"f": float(robust.loc[key, "statistic"]), "df": float(robust.loc[key, "df_constraint"]), "p": float(robust.loc[key, "pvalue"])},
    }
out = {
    "source": "statsmodels OLS on tests/data/fair.csv (statsmodels.datasets.fair); written by tests/reference/term_tests.py",
    "versions": {"python": sys.version.split()[0], "statsmodels": statsmodels.__version__, "numpy": numpy.__version__, "pandas": pandas.__version__},
    "formula": formula,
    "df_resid": float(classic.df_resid),
    "terms": terms,
    "overall_hc3": {"f": float(hc3.fvalue), "p": float(hc3.f_pvalue)},
    "overall_classic": {"f": float(classic.fvalue), "p": float(classic.f_pvalue)},
}
json.dump(out, sys.stdout, indent=2)
print()
