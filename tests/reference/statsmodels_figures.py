"""Reference figures for plumb's regression diagnostics, computed with statsmodels.

Run from the crate root:

    python3 tests/reference/statsmodels_figures.py > tests/data/statsmodels_figures.json

Data: tests/data/stackloss.csv and tests/data/longley.csv, the copies shipped in
the statsmodels package (datasets/stackloss, datasets/longley; public domain).
Models: STACKLOSS on AIRFLOW + WATERTEMP + ACIDCONC, and TOTEMP on GNPDEFL +
GNP + UNEMP + ARMED + POP + YEAR, both with an intercept, ordinary least squares.

Every figure comes from statsmodels (OLS, OLSInfluence, het_breuschpagan,
jarque_bera, durbin_watson, variance_inflation_factor, cov_type="HC0".."HC3").
Two figures statsmodels does not provide are computed with numpy and marked so:
the standardized coefficient (estimate * s_x / s_y, sample standard deviations)
and the condition number of the design with every column scaled to unit length
(Belsley, Kuh & Welsch 1980, section 3.3; numpy.linalg.cond).

As a check on the references themselves, the script also solves both problems
in exact rational arithmetic (Python fractions: the data are exact decimals)
and records, per figure, the largest relative difference between statsmodels
and the exact value ("exact_check"), for the figures that are rational
functions of the data (leverage, Cook's distance, VIF, HC covariances); the
exact values themselves, rounded to double (standard errors: the double
square root of the exact variance), are in "exact_rational".
"""

import csv
import json
import os
import sys
from fractions import Fraction

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.stats.diagnostic import het_breuschpagan
from statsmodels.stats.outliers_influence import OLSInfluence, variance_inflation_factor
from statsmodels.stats.stattools import durbin_watson, jarque_bera

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data")


def read(name):
    with open(os.path.join(DATA, name), newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], rows[1:]


def exact_figures(X, y):
    """Leverage, Cook's distance, VIF and HC0-HC3 covariance diagonals in
    exact rational arithmetic (Gauss-Jordan on X'X with Fractions)."""
    n, p = len(X), len(X[0])
    G = [[sum(X[i][a] * X[i][b] for i in range(n)) for b in range(p)] for a in range(p)]
    # Inverse by Gauss-Jordan (exact).
    M = [row[:] + [Fraction(int(a == b)) for b in range(p)] for a, row in enumerate(G)]
    for c in range(p):
        piv = next(r for r in range(c, p) if M[r][c] != 0)
        M[c], M[piv] = M[piv], M[c]
        f = M[c][c]
        M[c] = [v / f for v in M[c]]
        for r in range(p):
            if r != c and M[r][c] != 0:
                g = M[r][c]
                M[r] = [a - g * b for a, b in zip(M[r], M[c])]
    C = [row[p:] for row in M]
    Xty = [sum(X[i][a] * y[i] for i in range(n)) for a in range(p)]
    beta = [sum(C[a][b] * Xty[b] for b in range(p)) for a in range(p)]
    e = [y[i] - sum(X[i][a] * beta[a] for a in range(p)) for i in range(n)]
    B = [[sum(C[a][b] * X[i][b] for b in range(p)) for a in range(p)] for i in range(n)]  # rows of (X'X)^-1 x_i
    h = [sum(X[i][a] * B[i][a] for a in range(p)) for i in range(n)]
    sse = sum(v * v for v in e)
    s2 = sse / (n - p)
    cooks = [e[i] ** 2 / (s2 * (1 - h[i]) ** 2) * h[i] / p for i in range(n)]
    vif = []
    for j in range(1, p):
        m = sum(X[i][j] for i in range(n)) / n
        vif.append(C[j][j] * sum((X[i][j] - m) ** 2 for i in range(n)))
    hc = {}
    for kind in ("HC0", "HC1", "HC2", "HC3"):
        def om(i):
            if kind == "HC0":
                return e[i] ** 2
            if kind == "HC1":
                return e[i] ** 2 * Fraction(n, n - p)
            if kind == "HC2":
                return e[i] ** 2 / (1 - h[i])
            return e[i] ** 2 / (1 - h[i]) ** 2
        w = [om(i) for i in range(n)]
        hc[kind] = [sum(w[i] * B[i][a] ** 2 for i in range(n)) for a in range(p)]
    return {"leverage": h, "cooks_distance": cooks, "vif": vif, "hc_variance": hc}


def rel(a, b):
    return float(abs((Fraction(a) - b) / b)) if b != 0 else float(abs(Fraction(a)))


def figures(name, file, response, terms):
    header, rows = read(file)
    col = {h: i for i, h in enumerate(header)}
    y = np.array([float(r[col[response]]) for r in rows])
    Xt = np.array([[float(r[col[t]]) for t in terms] for r in rows])
    X = sm.add_constant(Xt)
    res = sm.OLS(y, X).fit()
    infl = OLSInfluence(res)
    resid = res.resid
    bp_k = het_breuschpagan(resid, X)  # robust=True: Koenker's studentized form
    bp_o = het_breuschpagan(resid, X, robust=False)
    jb, jb_p, skew, kurt = jarque_bera(resid)
    out = {
        "model": f"{response} ~ " + " + ".join(terms) + " (with intercept, OLS)",
        "data": f"tests/data/{file}",
        "n": int(len(y)),
        "terms": ["(intercept)"] + list(terms),
        "coefficients": res.params.tolist(),
        "std_errors_classic": res.bse.tolist(),
        "durbin_watson": float(durbin_watson(resid)),
        "breusch_pagan_koenker": [float(bp_k[0]), float(bp_k[1])],
        "breusch_pagan_original": [float(bp_o[0]), float(bp_o[1])],
        "jarque_bera": [float(jb), float(jb_p)],
        "skewness": float(skew),
        "kurtosis": float(kurt),
        "log_likelihood": float(res.llf),
        "aic": float(res.aic),
        "bic": float(res.bic),
        "leverage": infl.hat_matrix_diag.tolist(),
        "cooks_distance": infl.cooks_distance[0].tolist(),
        "studentized_residuals_internal": infl.resid_studentized_internal.tolist(),
        "studentized_residuals_external": infl.resid_studentized_external.tolist(),
        "dffits": infl.dffits[0].tolist(),
        "vif": [float(variance_inflation_factor(X, j)) for j in range(1, X.shape[1])],
        "standardized_coefficients_numpy": (res.params[1:] * Xt.std(axis=0, ddof=1) / y.std(ddof=1)).tolist(),
        "condition_number_unit_columns_numpy": float(np.linalg.cond(X / np.linalg.norm(X, axis=0))),
    }
    for kind in ("HC0", "HC1", "HC2", "HC3"):
        r = sm.OLS(y, X).fit(cov_type=kind)
        out[f"std_errors_{kind.lower()}"] = r.bse.tolist()
    # Exact check of the references.
    Xq = [[Fraction(1)] + [Fraction(r[col[t]]) for t in terms] for r in rows]
    yq = [Fraction(r[col[response]]) for r in rows]
    ex = exact_figures(Xq, yq)
    check = {
        "leverage": max(rel(a, b) for a, b in zip(out["leverage"], ex["leverage"])),
        "cooks_distance": max(rel(a, b) for a, b in zip(out["cooks_distance"], ex["cooks_distance"])),
        "vif": max(rel(a, b) for a, b in zip(out["vif"], ex["vif"])),
    }
    for kind in ("HC0", "HC1", "HC2", "HC3"):
        se = out[f"std_errors_{kind.lower()}"]
        check[f"std_errors_{kind.lower()}"] = max(
            rel(a * a, b) for a, b in zip(se, ex["hc_variance"][kind])
        ) / 2
    out["exact_check"] = check
    out["exact_rational"] = {
        "leverage": [float(v) for v in ex["leverage"]],
        "cooks_distance": [float(v) for v in ex["cooks_distance"]],
        "vif": [float(v) for v in ex["vif"]],
        **{f"std_errors_{k.lower()}": [float(v) ** 0.5 for v in ex["hc_variance"][k]] for k in ("HC0", "HC1", "HC2", "HC3")},
    }
    return name, out


def weighted_figures():
    """Stack loss by weighted least squares, weights WATERTEMP/20 (an
    arbitrary positive column): statsmodels WLS, whose robust covariances
    and residual checks work on the weighted design and residuals."""
    header, rows = read("stackloss.csv")
    col = {h: i for i, h in enumerate(header)}
    terms = ["AIRFLOW", "WATERTEMP", "ACIDCONC"]
    y = np.array([float(r[col["STACKLOSS"]]) for r in rows])
    X = sm.add_constant(np.array([[float(r[col[t]]) for t in terms] for r in rows]))
    w = np.array([float(r[col["WATERTEMP"]]) for r in rows]) / 20.0
    res = sm.WLS(y, X, weights=w).fit()
    jb, jb_p, skew, kurt = jarque_bera(res.wresid)
    out = {
        "model": "STACKLOSS ~ AIRFLOW + WATERTEMP + ACIDCONC, weights WATERTEMP/20 (with intercept, WLS)",
        "coefficients": res.params.tolist(),
        "std_errors_classic": res.bse.tolist(),
        "durbin_watson_weighted_residuals": float(durbin_watson(res.wresid)),
        "jarque_bera_weighted_residuals": [float(jb), float(jb_p)],
    }
    for kind in ("HC0", "HC1", "HC2", "HC3"):
        r = sm.WLS(y, X, weights=w).fit(cov_type=kind)
        out[f"std_errors_{kind.lower()}"] = r.bse.tolist()
    return out


def main():
    result = {
        "generated_by": "tests/reference/statsmodels_figures.py",
        "statsmodels_version": statsmodels.__version__,
        "numpy_version": np.__version__,
        "python_version": sys.version.split()[0],
        "notes": "exact_check: largest relative difference between statsmodels and an exact rational solution (for std errors: half that of the variances, i.e. of the standard error).",
    }
    for name, file, response, terms in [
        ("stackloss", "stackloss.csv", "STACKLOSS", ["AIRFLOW", "WATERTEMP", "ACIDCONC"]),
        ("longley", "longley.csv", "TOTEMP", ["GNPDEFL", "GNP", "UNEMP", "ARMED", "POP", "YEAR"]),
    ]:
        k, v = figures(name, file, response, terms)
        result[k] = v
    result["stackloss_weighted"] = weighted_figures()
    json.dump(result, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
