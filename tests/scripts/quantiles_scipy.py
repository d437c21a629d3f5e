#!/usr/bin/env python3
"""Outside check of the distribution quantiles tested in tests/quantiles.rs.

Prints, for every point tested there, scipy.stats' quantile to 17
significant digits. The output is committed as tests/data/quantiles_scipy.tsv
and compared by the Rust test; regenerate with

    python3 tests/scripts/quantiles_scipy.py > tests/data/quantiles_scipy.tsv

Columns: distribution (t, F, chi2), lower-tail probability p, df1, df2
(0 when unused), scipy's quantile.
"""
import scipy
from scipy import stats

# Upper-tail probabilities of the handbook tables (NIST/SEMATECH
# e-Handbook 1.3.6.7.2 t, 1.3.6.7.3 F, 1.3.6.7.4 chi-square).
T_ALPHAS = [0.10, 0.05, 0.025, 0.01, 0.005, 0.001]
T_DF = [1, 2, 5, 10, 20, 30, 100]
F_POINTS = [(0.05, 1, 1), (0.05, 2, 2), (0.05, 3, 3), (0.05, 4, 4), (0.05, 5, 5), (0.05, 10, 10),
            (0.05, 1, 10), (0.05, 2, 10), (0.05, 1, 30), (0.01, 1, 1), (0.01, 2, 2), (0.01, 10, 10), (0.01, 1, 10)]
CHI_UPPER = [0.10, 0.05, 0.025, 0.01, 0.001]
CHI_DF = [1, 2, 5, 10, 20, 30, 100]
CHI_LOWER = [(0.10, 10), (0.05, 10), (0.01, 10)]

print(f"# scipy {scipy.__version__}")
for df in T_DF:
    for a in T_ALPHAS:
        print(f"t\t{1 - a!r}\t{df}\t0\t{float(stats.t.ppf(1 - a, df))!r}")
for a, d1, d2 in F_POINTS:
    print(f"F\t{1 - a!r}\t{d1}\t{d2}\t{float(stats.f.isf(a, d1, d2))!r}")
for df in CHI_DF:
    for a in CHI_UPPER:
        print(f"chi2\t{1 - a!r}\t{df}\t0\t{float(stats.chi2.isf(a, df))!r}")
for p, df in CHI_LOWER:
    print(f"chi2\t{p!r}\t{df}\t0\t{float(stats.chi2.ppf(p, df))!r}")
