"""Reference figures for plumb's checks and standard errors for ordered data.

Data (both shipped in the statsmodels package, public domain per its
COPYRIGHT text):
  * statsmodels.datasets.macrodata: US quarterly macroeconomic series
    1959Q1-2009Q3. Written to tests/data/macro_growth.csv as quarterly
    changes: dunemp (change of the unemployment rate, points), ggdp, gcons
    (annualised growth of real GDP and real consumption, 400*diff(log)),
    infl (inflation), period (year + (quarter - 1)/4) and decade (text,
    "1950s" ...), rows SHUFFLED with a
    fixed seed so that sheet order is not time order.
  * statsmodels.datasets.grunfeld: investment of 11 US firms 1935-1954.
    Written to tests/data/grunfeld.csv with each firm's name replaced by a
    code (firm01 ... firm11, in the data's own order), rows shuffled.

Figures (every model by ordinary least squares with an intercept, on the
rows sorted by period, or by firm then year):
  * Durbin-Watson (statsmodels durbin_watson) and its exact p-value
    P(D <= d) against positive autocorrelation, by an implementation of
    Imhof (1961) written here: the eigenvalues of Q2'(A - dI)Q2 (Q2 the
    complement of the design's column space from numpy's complete QR, A the
    numerator's difference matrix) and scipy.integrate.quad over (0, inf);
  * Breusch-Godfrey LM n*R^2 and chi-square p (statsmodels
    acorr_breusch_godfrey, nlags given);
  * Newey-West: OLS.fit(cov_type="HAC", cov_kwds={"maxlags": L}, use_t=True)
    (Bartlett kernel, statsmodels' default use_correction=False: no
    small-sample factor), standard errors, p-values, intervals, each term's
    Wald test (wald_test_terms, F form) and the overall F;
  * clustered: OLS.fit(cov_type="cluster", cov_kwds={"groups": codes},
    use_t=True) (statsmodels' defaults use_correction=True, the factor
    G/(G-1)*(n-1)/(n-k), and df_correction=True, t and F on G - 1);
  * Newey-West within groups: cov_type="hac-panel" with groups and
    use_correction=False;
  * Durbin-Watson and Breusch-Godfrey within groups (neighbours only within
    a firm, or a decade of the macro series; a lag before a group's first
    row is 0): written here with
    numpy, as no library function takes groups; the p-value by the same
    Imhof implementation.

Usage (from the crate root):
    pip install statsmodels scipy
    python3 tests/reference/ordered_figures.py > tests/data/ordered_figures.json
"""
import json
import sys

import numpy
import pandas
import scipy
import statsmodels
import statsmodels.api as sm
from scipy import integrate
from statsmodels.stats.diagnostic import acorr_breusch_godfrey
from statsmodels.stats.stattools import durbin_watson


def difference_matrix(groups):
    """A of d = u'Au/u'u: neighbours within one group (rows sorted)."""
    n = len(groups)
    a = numpy.zeros((n, n))
    for t in range(1, n):
        if groups[t] == groups[t - 1]:
            a[t, t] += 1
            a[t - 1, t - 1] += 1
            a[t, t - 1] -= 1
            a[t - 1, t] -= 1
    return a


def imhof_below_zero(lam):
    """P(sum lam_i z_i^2 <= 0), Imhof (1961) eq. 3.2 at x = 0."""
    lam = lam[numpy.abs(lam) > 1e-9 * numpy.abs(lam).max()]

    def f(u):
        if u == 0.0:
            return 0.5 * lam.sum()
        theta = 0.5 * numpy.arctan(lam * u).sum()
        rho = numpy.exp(0.25 * numpy.log1p((lam * u) ** 2).sum())
        return numpy.sin(theta) / (u * rho)

    val, err = integrate.quad(f, 0, numpy.inf, epsabs=1e-14, epsrel=1e-12, limit=2000)
    return 0.5 - val / numpy.pi, err / numpy.pi


def dw_exact(x, resid, groups):
    n, k = x.shape
    a = difference_matrix(groups)
    d = float(resid @ a @ resid / (resid @ resid))
    q, _ = numpy.linalg.qr(x, mode="complete")
    q2 = q[:, k:]
    lam = numpy.linalg.eigvalsh(q2.T @ (a - d * numpy.eye(n)) @ q2)
    p, err = imhof_below_zero(lam)
    return d, float(p), float(err)


def bg_within(x, resid, groups, lags):
    """Breusch-Godfrey LM within groups (zero-filled lags), numpy lstsq."""
    n = len(resid)
    cols = [x]
    for lag in range(1, lags + 1):
        c = numpy.zeros(n)
        for t in range(lag, n):
            if groups[t] == groups[t - lag]:
                c[t] = resid[t - lag]
        cols.append(c[:, None])
    z = numpy.hstack(cols)
    b, *_ = numpy.linalg.lstsq(z, resid, rcond=None)
    e = resid - z @ b
    r2 = 1 - (e @ e) / ((resid - resid.mean()) @ (resid - resid.mean()))
    lm = n * r2
    return float(lm), float(scipy.stats.chi2.sf(lm, lags))


def tests_of(res, terms):
    out = {"se": [float(v) for v in res.bse], "p": [float(v) for v in res.pvalues],
           "lower": [float(v) for v in res.conf_int()[:, 0]], "upper": [float(v) for v in res.conf_int()[:, 1]],
           "f": float(numpy.squeeze(res.fvalue)), "f_p": float(numpy.squeeze(res.f_pvalue)), "terms": {}}
    for j, t in enumerate(terms, start=1):
        w = res.wald_test(numpy.eye(1, len(terms) + 1, j), scalar=True, use_f=True)
        out["terms"][t] = {"f": float(w.statistic), "p": float(w.pvalue)}
    return out


rng = numpy.random.default_rng(20261202)
out = {
    "source": "statsmodels and scipy on statsmodels.datasets.macrodata and .grunfeld; written by tests/reference/ordered_figures.py",
    "versions": {"python": sys.version.split()[0], "statsmodels": statsmodels.__version__, "scipy": scipy.__version__,
                 "numpy": numpy.__version__, "pandas": pandas.__version__},
}

# Macro series: quarterly changes, one row per quarter from 1959Q2.
m = sm.datasets.macrodata.load_pandas().data
g = lambda c: 400 * numpy.diff(numpy.log(m[c].to_numpy()))
macro = pandas.DataFrame({
    "period": (m["year"] + (m["quarter"] - 1) / 4).to_numpy()[1:],
    "dunemp": numpy.diff(m["unemp"].to_numpy()),
    "ggdp": g("realgdp"),
    "gcons": g("realcons"),
    "infl": m["infl"].to_numpy()[1:],
})
macro["decade"] = ["%ds" % (int(v) // 10 * 10) for v in macro["period"]]
macro.iloc[rng.permutation(len(macro))].to_csv("tests/data/macro_growth.csv", index=False, float_format="%.17g")
ones = numpy.zeros(len(macro))
for name, y, xs, lags in [("okun", "dunemp", ["ggdp"], [4, 2]), ("consumption", "gcons", ["ggdp", "infl"], [4, 1])]:
    x = sm.add_constant(macro[xs]).to_numpy()
    res = sm.OLS(macro[y].to_numpy(), x).fit()
    d, p, err = dw_exact(x, res.resid, ones)
    fig = {"n": int(res.nobs), "durbin_watson": float(durbin_watson(res.resid)), "dw_imhof": d, "dw_p": p, "dw_p_quad_error": err, "bg": {}}
    for lag in lags:
        bg = acorr_breusch_godfrey(res, nlags=lag, result_object=True)
        fig["bg"][str(lag)] = {"lm": float(bg.lm), "p": float(bg.lmpval)}
    hac = sm.OLS(macro[y].to_numpy(), x).fit(cov_type="HAC", cov_kwds={"maxlags": 4}, use_t=True)
    fig["newey_west_4"] = tests_of(hac, xs)
    out[name] = fig
# Okun's regression with neighbours only within a decade (text groups).
decades = macro["decade"].to_numpy()
x = sm.add_constant(macro[["ggdp"]]).to_numpy()
res = sm.OLS(macro["dunemp"].to_numpy(), x).fit()
d, p, err = dw_exact(x, res.resid, decades)
lm, lmp = bg_within(x, res.resid, decades, 2)
out["okun_by_decade"] = {"dw_within": d, "dw_within_p": p, "dw_p_quad_error": err, "bg_within_2": {"lm": lm, "p": lmp}}

# Grunfeld: 11 firms, 20 years each.
gr = sm.datasets.grunfeld.load_pandas().data
firms = list(dict.fromkeys(gr["firm"]))
gr = pandas.DataFrame({"invest": gr["invest"], "value": gr["value"], "capital": gr["capital"],
                       "firm": ["firm%02d" % (firms.index(f) + 1) for f in gr["firm"]], "year": gr["year"]})
gr.iloc[rng.permutation(len(gr))].to_csv("tests/data/grunfeld.csv", index=False, float_format="%.17g")
gs = gr.sort_values(["firm", "year"], kind="stable").reset_index(drop=True)
codes = numpy.array([int(f[4:]) for f in gs["firm"]])
x = sm.add_constant(gs[["value", "capital"]]).to_numpy()
y = gs["invest"].to_numpy()
res = sm.OLS(y, x).fit()
d, p, err = dw_exact(x, res.resid, codes)
lm, lmp = bg_within(x, res.resid, codes, 2)
clu = sm.OLS(y, x).fit(cov_type="cluster", cov_kwds={"groups": codes}, use_t=True)
panel = sm.OLS(y, x).fit(cov_type="hac-panel", cov_kwds={"groups": codes, "maxlags": 2, "use_correction": False}, use_t=True)
out["grunfeld"] = {
    "n": int(res.nobs), "groups": int(len(set(codes))),
    "dw_within": d, "dw_within_p": p, "dw_p_quad_error": err,
    "bg_within_2": {"lm": lm, "p": lmp},
    "clustered": tests_of(clu, ["value", "capital"]),
    "newey_west_panel_2": {"se": [float(v) for v in panel.bse]},
}
json.dump(out, sys.stdout, indent=2)
print()
