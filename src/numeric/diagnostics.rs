//! Regression diagnostics on a finished least squares fit: residual checks
//! (Durbin–Watson, Breusch–Pagan in both forms, Jarque–Bera), collinearity
//! (variance inflation factors), standardized coefficients, influence
//! (externally studentized residuals, DFFITS) and heteroscedasticity-
//! consistent covariance matrices (HC0–HC3).
//!
//! Pure numerics like the rest of [`crate::numeric`]: inputs are an
//! [`LsFit`] and the design it was fitted on (column-major, as in
//! [`LsProblem`]), outputs plain numbers with NaN where a figure is undefined.
//!
//! Weighted fits: every residual check works on the weighted residuals
//! `uᵢ = √wᵢ·eᵢ` (those of the transformed problem `W^½y = W^½Xβ + ε`, whose
//! errors the model takes to be homoscedastic), and the robust covariance on
//! the weighted design `W^½X`; for an unweighted fit `uᵢ = eᵢ`.
//!
//! Tail probabilities are survival functions from [`super::inference`]
//! (statrs underneath), never `1 − cdf`.

use super::inference::{chi2_sf, standardized_residuals};
use super::qr::{solve_upper, PivotedQr, Pivoting};
use super::{least_squares, LsFit, LsProblem};

/// The weighted residuals `uᵢ = √wᵢ·eᵢ` (plain residuals when unweighted).
pub fn weighted_residuals(fit: &LsFit) -> Vec<f64> {
    match &fit.weights {
        Some(w) => fit.residuals.iter().zip(w).map(|(e, w)| e * w.sqrt()).collect(),
        None => fit.residuals.clone(),
    }
}

/// Durbin–Watson statistic `d = Σₜ₌₂ⁿ (uₜ − uₜ₋₁)² / Σₜ₌₁ⁿ uₜ²` over the
/// residuals in the order given (Durbin, J. & Watson, G. S. (1950), "Testing
/// for serial correlation in least squares regression I", *Biometrika* 37,
/// 409–428, eq. 3). `d ≈ 2(1 − ρ̂₁)`: near 2 without first-order
/// autocorrelation, towards 0 for positive and towards 4 for negative.
/// NaN for fewer than two residuals or when all are zero. The rows in
/// another order or within groups: [`super::serial::durbin_watson`].
pub fn durbin_watson(u: &[f64]) -> f64 {
    super::serial::durbin_watson(u, &super::serial::Sequence::new(u.len(), None, None))
}

/// The Breusch–Pagan test of constant error variance against a variance
/// that depends linearly on the model's columns.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BreuschPagan {
    /// Koenker's studentized statistic `n·R²` of the auxiliary regression.
    pub koenker: f64,
    /// Its upper-tail χ² p-value on [`BreuschPagan::df`] degrees of freedom.
    pub koenker_p: f64,
    /// The original statistic: half the explained sum of squares of the
    /// auxiliary regression of `uᵢ²/σ̃²`.
    pub original: f64,
    /// Its upper-tail χ² p-value.
    pub original_p: f64,
    /// Degrees of freedom: the number of non-constant auxiliary regressors
    /// (the auxiliary fit's rank minus one).
    pub df: f64,
    /// Sample correlation of `uᵢ²` with the fitted values: positive when the
    /// spread grows with the fitted value.
    pub trend_with_fitted: f64,
}

/// Breusch–Pagan test, both forms, on the residuals `u` and the design `x`
/// (`n × p`, column-major, the fit's own columns). A constant column is
/// added to the auxiliary regression when `has_intercept` is false.
///
/// Auxiliary regression of `uᵢ²` on `[1, x]` by the same QR least squares
/// as the fit:
/// - original form (Breusch, T. S. & Pagan, A. R. (1979), "A simple test
///   for heteroscedasticity and random coefficient variation",
///   *Econometrica* 47, 1287–1294, eq. 10): with `σ̃² = Σuᵢ²/n` and
///   `gᵢ = uᵢ²/σ̃²`, `LM = ½·ESS(g)`, the explained (centred) sum of squares
///   of `g` on the regressors; valid under normal errors;
/// - studentized form (Koenker, R. (1981), "A note on studentizing a test
///   for heteroscedasticity", *Journal of Econometrics* 17, 107–112):
///   `LM = n·R²` of `uᵢ²` on the regressors; robust to non-normal errors.
///
/// Both are referred to χ² with `df` = rank of the auxiliary design minus
/// one. `None` when there are no non-constant regressors or the auxiliary
/// fit fails (e.g. all residuals zero gives NaN statistics instead).
pub fn breusch_pagan(u: &[f64], fitted: &[f64], x: &[f64], n: usize, p: usize, has_intercept: bool) -> Option<BreuschPagan> {
    if u.len() != n || x.len() != n * p || n == 0 {
        return None;
    }
    let u2: Vec<f64> = u.iter().map(|v| v * v).collect();
    let mut z = Vec::with_capacity(n * (p + 1));
    let mut pz = p;
    if !has_intercept {
        z.extend(std::iter::repeat_n(1.0, n));
        pz += 1;
    }
    z.extend_from_slice(x);
    let aux = least_squares(&LsProblem { x: &z, n, p: pz, y: &u2, weights: None, has_intercept: true }).ok()?;
    let df = aux.df_model;
    if df <= 0.0 {
        return None;
    }
    let nf = n as f64;
    let sigma2 = u2.iter().sum::<f64>() / nf;
    let koenker = nf * aux.r_squared;
    let original = 0.5 * aux.ssr / (sigma2 * sigma2);
    Some(BreuschPagan {
        koenker,
        koenker_p: chi2_sf(koenker, df),
        original,
        original_p: chi2_sf(original, df),
        df,
        trend_with_fitted: correlation(&u2, fitted),
    })
}

/// Pearson correlation of two equally long samples (NaN when either is
/// constant).
fn correlation(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let ma = a.iter().sum::<f64>() / n;
    let mb = b.iter().sum::<f64>() / n;
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab / (saa * sbb).sqrt()
}

/// The Jarque–Bera test of normal residuals, with the moments it uses.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct JarqueBera {
    /// `JB = n/6·(S² + (K − 3)²/4)`.
    pub statistic: f64,
    /// Upper-tail χ² p-value on 2 degrees of freedom.
    pub p_value: f64,
    /// Sample skewness `S = m₃/m₂^{3/2}`.
    pub skewness: f64,
    /// Sample kurtosis `K = m₄/m₂²` (3 for a normal distribution).
    pub kurtosis: f64,
}

/// Jarque–Bera test (Jarque, C. M. & Bera, A. K. (1980), "Efficient tests
/// for normality, homoscedasticity and serial independence of regression
/// residuals", *Economics Letters* 6, 255–259; and (1987), "A test for
/// normality of observations and regression residuals", *International
/// Statistical Review* 55, 163–172): with central moments
/// `m_k = Σ(uᵢ − ū)^k / n`, `S = m₃/m₂^{3/2}`, `K = m₄/m₂²` and
/// `JB = n/6·(S² + (K − 3)²/4)`, asymptotically χ² on 2 df. The moments are
/// taken about the residuals' mean (zero with an intercept), as statsmodels'
/// `jarque_bera` does.
pub fn jarque_bera(u: &[f64]) -> JarqueBera {
    let n = u.len() as f64;
    let mean = u.iter().sum::<f64>() / n;
    let (mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0);
    for v in u {
        let d = v - mean;
        let d2 = d * d;
        m2 += d2;
        m3 += d2 * d;
        m4 += d2 * d2;
    }
    m2 /= n;
    m3 /= n;
    m4 /= n;
    let skewness = m3 / m2.powf(1.5);
    let kurtosis = m4 / (m2 * m2);
    let statistic = n / 6.0 * (skewness * skewness + 0.25 * (kurtosis - 3.0) * (kurtosis - 3.0));
    JarqueBera { statistic, p_value: chi2_sf(statistic, 2.0), skewness, kurtosis }
}

/// Externally studentized residuals (each row's residual scaled by the
/// residual standard deviation of the fit without that row):
/// `tᵢ = rᵢ·√((n − k − 1)/(n − k − rᵢ²))` with `rᵢ` the internally
/// studentized residual and `k` the rank (Belsley, D. A., Kuh, E. &
/// Welsch, R. E. (1980), *Regression Diagnostics*, Wiley, eq. 2.26 with
/// 2.14; "RSTUDENT"). Under the model `tᵢ` follows Student's t on
/// `n − k − 1` df. NaN where `rᵢ` is NaN (leverage 1) or `n − k − 1 ≤ 0`.
pub fn studentized_residuals_external(fit: &LsFit) -> Vec<f64> {
    let df = fit.df_resid;
    standardized_residuals(fit)
        .into_iter()
        .map(|r| {
            let den = df - r * r;
            if df - 1.0 <= 0.0 || den.is_nan() || den <= 0.0 {
                f64::NAN
            } else {
                r * ((df - 1.0) / den).sqrt()
            }
        })
        .collect()
}

/// DFFITS, the scaled change in a row's own fitted value when it is left
/// out: `DFFITSᵢ = tᵢ·√(hᵢ/(1 − hᵢ))` with `tᵢ` the externally studentized
/// residual and `hᵢ` the leverage (Belsley, Kuh & Welsch 1980, eq. 2.11).
pub fn dffits(fit: &LsFit, external: &[f64]) -> Vec<f64> {
    external.iter().zip(&fit.leverage).map(|(t, h)| t * (h / (1.0 - h)).sqrt()).collect()
}

/// Weighted sum of squares of a column about its weighted mean (`centred`)
/// or about zero, with the weighted mean itself.
fn column_ss(v: &[f64], w: Option<&[f64]>, centred: bool) -> f64 {
    let (sw, swx) = match w {
        Some(w) => (w.iter().sum::<f64>(), v.iter().zip(w).map(|(x, w)| w * x).sum::<f64>()),
        None => (v.len() as f64, v.iter().sum::<f64>()),
    };
    let m = if centred { swx / sw } else { 0.0 };
    match w {
        Some(w) => v.iter().zip(w).map(|(x, w)| w * (x - m) * (x - m)).sum(),
        None => v.iter().map(|x| (x - m) * (x - m)).sum(),
    }
}

/// Variance inflation factor of every column of the design `x` (`n × p`,
/// column-major): `VIFⱼ = 1/(1 − Rⱼ²)`, with `Rⱼ²` the R² of column `j`
/// regressed on the other columns (Marquardt, D. W. (1970), "Generalized
/// inverses, ridge regression, biased linear estimation, and nonlinear
/// estimation", *Technometrics* 12, 591–612; the diagonal of the inverse
/// correlation matrix).
///
/// Computed without further regressions through the identity
/// `1/(1 − Rⱼ²) = SSⱼ·[(XᵀWX)⁻¹]ⱼⱼ`, since the residual sum of squares of
/// column `j` on the others is `1/[(XᵀWX)⁻¹]ⱼⱼ` (partitioned inverse; e.g.
/// Belsley, Kuh & Welsch 1980, §3.2), where `SSⱼ` is the column's sum of
/// squares about its mean when the model has an intercept and about zero
/// (uncentred R²) when it has none. `(XᵀWX)⁻¹` is the fit's refined
/// covariance divided by `s²`.
///
/// NaN for the column `skip` (the intercept), for aliased columns, and when
/// `s² = 0` (an exact fit).
pub fn variance_inflation(fit: &LsFit, x: &[f64], skip: Option<usize>) -> Vec<f64> {
    let n = fit.n;
    let p = fit.coefficients.len();
    let s2 = fit.sigma * fit.sigma;
    (0..p)
        .map(|j| {
            if Some(j) == skip || fit.aliased[j] || s2.is_nan() || s2 <= 0.0 || x.len() < (j + 1) * n {
                return f64::NAN;
            }
            let c = fit.covariance[j * p + j] / s2;
            c * column_ss(&x[j * n..(j + 1) * n], fit.weights.as_deref(), fit.has_intercept)
        })
        .collect()
}

/// Determinant of a small square matrix (row-major `k × k`) by Gaussian
/// elimination with partial pivoting.
fn small_det(mut a: Vec<f64>, k: usize) -> f64 {
    let mut det = 1.0;
    for c in 0..k {
        let Some(piv) = (c..k).max_by(|&i, &j| a[i * k + c].abs().total_cmp(&a[j * k + c].abs())) else { return f64::NAN };
        if a[piv * k + c] == 0.0 {
            return 0.0;
        }
        if piv != c {
            for j in 0..k {
                a.swap(c * k + j, piv * k + j);
            }
            det = -det;
        }
        let d = a[c * k + c];
        det *= d;
        for i in c + 1..k {
            let f = a[i * k + c] / d;
            for j in c..k {
                a[i * k + j] -= f * a[c * k + j];
            }
        }
    }
    det
}

/// Generalized variance inflation factor of the block of design columns
/// `cols` (the indicator columns of one text column, say), one figure for
/// the whole term: `GVIF = det(R_SS)·det(R_OO)/det(R)`, with `R` the
/// correlation matrix of the non-intercept columns, `S` the block and `O`
/// the others (Fox, J. & Monette, G. (1992), "Generalized collinearity
/// diagnostics", *JASA* 87, 178–183, eq. 10). For one column it is the VIF.
///
/// Computed, like [`variance_inflation`], from the fit's covariance through
/// the partitioned inverse: `det(R)/det(R_OO) = 1/det((R⁻¹)_SS)` and
/// `(R⁻¹)_SS` is `[(XᵀWX)⁻¹]_SS` scaled by the columns' root sums of squares
/// about their means, which cancel against those of `R_SS`, so
/// `GVIF = det(S_cᵀWS_c)·det([(XᵀWX)⁻¹]_SS)` with `S_c` the centred block.
///
/// NaN without an intercept (the correlations are then not those of the
/// fit), for an aliased column in the block, and when `s² = 0`.
pub fn generalized_variance_inflation(fit: &LsFit, x: &[f64], cols: &[usize]) -> f64 {
    let n = fit.n;
    let p = fit.coefficients.len();
    let s2 = fit.sigma * fit.sigma;
    let k = cols.len();
    if !fit.has_intercept || k == 0 || s2.is_nan() || s2 <= 0.0 || cols.iter().any(|&j| j >= p || fit.aliased[j] || x.len() < (j + 1) * n) {
        return f64::NAN;
    }
    let w = fit.weights.as_deref();
    let sw: f64 = w.map_or(n as f64, |w| w.iter().sum());
    let centred: Vec<Vec<f64>> = cols
        .iter()
        .map(|&j| {
            let v = &x[j * n..(j + 1) * n];
            let m = match w {
                Some(w) => v.iter().zip(w).map(|(a, b)| a * b).sum::<f64>() / sw,
                None => v.iter().sum::<f64>() / sw,
            };
            v.iter().map(|a| a - m).collect()
        })
        .collect();
    let mut cross = vec![0.0; k * k];
    let mut inv = vec![0.0; k * k];
    for a in 0..k {
        for b in 0..k {
            cross[a * k + b] = match w {
                Some(w) => (0..n).map(|i| w[i] * centred[a][i] * centred[b][i]).sum(),
                None => (0..n).map(|i| centred[a][i] * centred[b][i]).sum(),
            };
            inv[a * k + b] = fit.covariance[cols[b] * p + cols[a]] / s2;
        }
    }
    small_det(cross, k) * small_det(inv, k)
}

/// Standardized coefficients `bⱼ·s_xⱼ/s_y` (the change in the response, in
/// its standard deviations, for one standard deviation more of the term;
/// e.g. Draper & Smith, *Applied Regression Analysis*, 3rd ed. (1998),
/// §16.3 on "beta coefficients"), with the (weighted) sample standard
/// deviations about the means; the common `n − 1` denominators cancel, so
/// `bⱼ·√(SSxⱼ/SSy)`. NaN for the column `skip` (the intercept) and aliased
/// columns.
pub fn standardized_coefficients(fit: &LsFit, x: &[f64], y: &[f64], skip: Option<usize>) -> Vec<f64> {
    let n = fit.n;
    let w = fit.weights.as_deref();
    let ssy = column_ss(y, w, true);
    (0..fit.coefficients.len())
        .map(|j| {
            if Some(j) == skip || fit.aliased[j] || x.len() < (j + 1) * n {
                return f64::NAN;
            }
            fit.coefficients[j] * (column_ss(&x[j * n..(j + 1) * n], w, true) / ssy).sqrt()
        })
        .collect()
}

/// Which standard errors a fit reports.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ErrorKind {
    /// `s²(XᵀWX)⁻¹`, assuming a constant error variance.
    Classic,
    /// White's estimator, `(XᵀX)⁻¹ Xᵀ diag(uᵢ²) X (XᵀX)⁻¹`.
    Hc0,
    /// HC0 times `n/(n − k)`.
    Hc1,
    /// `uᵢ²/(1 − hᵢ)` in place of `uᵢ²`.
    Hc2,
    /// `uᵢ²/(1 − hᵢ)²` in place of `uᵢ²`.
    Hc3,
    /// Newey–West, autocorrelation-consistent over the ordered rows
    /// ([`super::serial::newey_west_covariance`]).
    NeweyWest,
    /// Clustered by a grouping column ([`super::serial::clustered_covariance`]).
    Clustered,
}

impl ErrorKind {
    /// The option word (`classic`, `hc0`, …), as typed in `errors=`.
    pub fn parse(word: &str) -> Option<ErrorKind> {
        match word.to_ascii_lowercase().as_str() {
            "classic" => Some(ErrorKind::Classic),
            "hc0" => Some(ErrorKind::Hc0),
            "hc1" => Some(ErrorKind::Hc1),
            "hc2" => Some(ErrorKind::Hc2),
            "hc3" => Some(ErrorKind::Hc3),
            "neweywest" => Some(ErrorKind::NeweyWest),
            "clustered" => Some(ErrorKind::Clustered),
            _ => None,
        }
    }

    /// A short label for output: `classic`, `HC0`, ….
    pub fn label(self) -> &'static str {
        match self {
            ErrorKind::Classic => "classic",
            ErrorKind::Hc0 => "HC0",
            ErrorKind::Hc1 => "HC1",
            ErrorKind::Hc2 => "HC2",
            ErrorKind::Hc3 => "HC3",
            ErrorKind::NeweyWest => "Newey–West",
            ErrorKind::Clustered => "clustered",
        }
    }
}

/// The Wald statistic `W = b_Tᵀ V_T⁻¹ b_T` of the coefficients `idx`
/// (Wald 1943; e.g. Greene, *Econometric Analysis*, 7th ed., 2012, §5.4),
/// with `V_T` their block of the `p × p` column-major covariance `cov`,
/// solved through the Cholesky factor of that small block. With the
/// classic covariance `s²(XᵀX)⁻¹`, `W/q` is exactly the F statistic of
/// dropping those columns from the fit (the extra-sum-of-squares F);
/// with a heteroscedasticity-consistent covariance it is the robust Wald
/// test. `None` when the block is not positive definite.
pub fn wald(b: &[f64], cov: &[f64], p: usize, idx: &[usize]) -> Option<f64> {
    let q = idx.len();
    if q == 0 {
        return None;
    }
    let m = nalgebra::DMatrix::from_fn(q, q, |i, j| cov[idx[j] * p + idx[i]]);
    let v = nalgebra::DVector::from_iterator(q, idx.iter().map(|&j| b[j]));
    let x = nalgebra::linalg::Cholesky::new(m)?.solve(&v);
    let w = v.dot(&x);
    w.is_finite().then_some(w)
}

/// Heteroscedasticity-consistent ("sandwich") covariance of the
/// coefficients, `p × p` column-major in the caller's column order, NaN in
/// the rows and columns of aliased columns:
/// `V = (XᵀX)⁻¹ (Σᵢ ωᵢ xᵢxᵢᵀ) (XᵀX)⁻¹` on the weighted design `W^½X`, with
/// - HC0: `ωᵢ = uᵢ²` (White, H. (1980), "A heteroskedasticity-consistent
///   covariance matrix estimator and a direct test for heteroskedasticity",
///   *Econometrica* 48, 817–838, eq. 4);
/// - HC1: `ωᵢ = uᵢ²·n/(n − k)`, HC2: `ωᵢ = uᵢ²/(1 − hᵢ)`,
///   HC3: `ωᵢ = uᵢ²/(1 − hᵢ)²` (MacKinnon, J. G. & White, H. (1985), "Some
///   heteroskedasticity-consistent covariance matrix estimators with
///   improved finite sample properties", *Journal of Econometrics* 29,
///   305–325), `hᵢ` the leverage and `k` the rank.
///
/// Computed through a Householder QR of the kept columns of `W^½X` (each
/// scaled to unit length; `PivotedQr` in the given order): with thin `Q`
/// and `R`, `V = R⁻¹ (Qᵀ Ω Q) R⁻ᵀ`, unscaled afterwards. This avoids the
/// normal equations, so the error grows like the scaled condition number,
/// not its square. `ErrorKind::Classic` returns the fit's own covariance;
/// Newey–West and clustered errors need the rows' order or groups
/// ([`super::serial`]) and are NaN here.
/// Rows with leverage at 1 make HC2/HC3 undefined (NaN).
pub fn robust_covariance(fit: &LsFit, x: &[f64], kind: ErrorKind) -> Vec<f64> {
    let n = fit.n;
    let p = fit.coefficients.len();
    if kind == ErrorKind::Classic {
        return fit.covariance.clone();
    }
    let Some((a, kept, scale)) = scaled_design(fit, x) else { return vec![f64::NAN; p * p] };
    let u = weighted_residuals(fit);
    let nf = n as f64;
    let omega: Vec<f64> = (0..n)
        .map(|i| {
            let u2 = u[i] * u[i];
            let h = fit.leverage[i];
            match kind {
                ErrorKind::Hc0 | ErrorKind::Classic => u2,
                // These need the rows' order or groups: see `super::serial`.
                ErrorKind::NeweyWest | ErrorKind::Clustered => f64::NAN,
                ErrorKind::Hc1 => u2 * nf / fit.df_resid,
                ErrorKind::Hc2 => u2 / (1.0 - h),
                ErrorKind::Hc3 => u2 / ((1.0 - h) * (1.0 - h)),
            }
        })
        .collect();
    // M = Qᵀ Ω Q (k × k).
    sandwich(fit, a, &kept, &scale, &|qcols: &[&[f64]], _u: &[f64]| {
        let k = qcols.len();
        let mut m = vec![0.0; k * k];
        for a in 0..k {
            for b in a..k {
                let s: f64 = (0..n).map(|i| omega[i] * qcols[a][i] * qcols[b][i]).sum();
                m[b * k + a] = s;
                m[a * k + b] = s;
            }
        }
        m
    })
}

/// The kept (not aliased) columns of the weighted design `W^½X`, each
/// scaled to unit length: the column-major `n × k` buffer, the kept
/// column indices and the scale factors; `None` when nothing is kept or the
/// design does not match the fit.
pub(crate) fn scaled_design(fit: &LsFit, x: &[f64]) -> Option<(Vec<f64>, Vec<usize>, Vec<f64>)> {
    let n = fit.n;
    let p = fit.coefficients.len();
    let kept: Vec<usize> = (0..p).filter(|&j| !fit.aliased[j]).collect();
    let k = kept.len();
    if k == 0 || x.len() != n * p {
        return None;
    }
    let sw: Option<Vec<f64>> = fit.weights.as_ref().map(|w| w.iter().map(|v| v.sqrt()).collect());
    let mut a = Vec::with_capacity(n * k);
    let mut scale = Vec::with_capacity(k);
    for &j in &kept {
        let col = &x[j * n..(j + 1) * n];
        let start = a.len();
        match &sw {
            Some(sw) => a.extend(col.iter().zip(sw).map(|(v, s)| v * s)),
            None => a.extend_from_slice(col),
        }
        let norm = a[start..].iter().map(|v| v * v).sum::<f64>().sqrt();
        let d = if norm > 0.0 && norm.is_finite() { 1.0 / norm } else { 1.0 };
        a[start..].iter_mut().for_each(|v| *v *= d);
        scale.push(d);
    }
    Some((a, kept, scale))
}

/// The "meat" of a sandwich covariance: from the thin `Q` of the scaled
/// weighted design (its `k` columns, each of length `n`) and the weighted
/// residuals `u`, the `k × k` column-major matrix `Qᵀ S Q`, with `S` the
/// estimated covariance of the errors.
pub type Meat<'a> = dyn Fn(&[&[f64]], &[f64]) -> Vec<f64> + 'a;

/// A sandwich covariance `V = (XᵀX)⁻¹ XᵀSX (XᵀX)⁻¹` on the weighted design,
/// through the thin QR `W^½X D = QR` of its kept columns scaled to unit
/// length (`D` the scale): `V = D R⁻¹ (QᵀSQ) R⁻ᵀ D`, where `meat` gives
/// `QᵀSQ`. `p × p` column-major in the caller's column order, NaN in the
/// rows and columns of aliased columns. No normal equations: the error
/// grows like the scaled condition number, not its square.
pub(crate) fn sandwich(fit: &LsFit, a: Vec<f64>, kept: &[usize], scale: &[f64], meat: &Meat) -> Vec<f64> {
    let n = fit.n;
    let p = fit.coefficients.len();
    let k = kept.len();
    let mut out = vec![f64::NAN; p * p];
    let mut qr = PivotedQr::factor(a, n, k, Pivoting::InOrder, 0.0, 0.0);
    if qr.rank < k {
        return out;
    }
    let r = qr.r_matrix();
    // Position a of the factorisation holds kept column cols[a].
    let order: Vec<usize> = qr.cols[..k].to_vec();
    qr.form_thin_q();
    let u = weighted_residuals(fit);
    let qcols: Vec<&[f64]> = (0..k).map(|a| qr.q_column(a)).collect();
    let mut m = meat(&qcols, &u);
    // Y = R⁻¹ M (column by column), then V = R⁻¹ Yᵀ = R⁻¹ M R⁻ᵀ.
    for b in 0..k {
        solve_upper(&r, k, &mut m[b * k..(b + 1) * k]);
    }
    let mut yt = vec![0.0; k * k];
    for a in 0..k {
        for b in 0..k {
            yt[a * k + b] = m[b * k + a];
        }
    }
    for a in 0..k {
        solve_upper(&r, k, &mut yt[a * k..(a + 1) * k]);
    }
    for a in 0..k {
        for b in 0..k {
            let v = 0.5 * (yt[b * k + a] + yt[a * k + b]);
            let (ja, jb) = (kept[order[a]], kept[order[b]]);
            out[jb * p + ja] = v * scale[order[a]] * scale[order[b]];
        }
    }
    out
}

/// The index and value of the largest finite entry (by absolute value when
/// `absolute`), `None` when there is none.
pub fn largest(values: &[f64], absolute: bool) -> Option<(usize, f64)> {
    let key = |v: f64| if absolute { v.abs() } else { v };
    values
        .iter()
        .enumerate()
        .filter(|(_, v)| v.is_finite())
        .fold(None, |best: Option<(usize, f64)>, (i, &v)| match best {
            Some((_, b)) if key(b) >= key(v) => best,
            _ => Some((i, v)),
        })
}

/// How many finite entries exceed `limit` (by absolute value when
/// `absolute`).
pub fn count_above(values: &[f64], limit: f64, absolute: bool) -> usize {
    values.iter().filter(|v| v.is_finite() && if absolute { v.abs() > limit } else { **v > limit }).count()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pearson correlation matrix of `cols` (row-major), computed directly.
    fn correlations(cols: &[Vec<f64>]) -> Vec<f64> {
        let k = cols.len();
        let n = cols[0].len() as f64;
        let c: Vec<Vec<f64>> = cols.iter().map(|v| {
            let m = v.iter().sum::<f64>() / n;
            let d: Vec<f64> = v.iter().map(|a| a - m).collect();
            let s = d.iter().map(|a| a * a).sum::<f64>().sqrt();
            d.iter().map(|a| a / s).collect()
        }).collect();
        (0..k * k).map(|ab| c[ab / k].iter().zip(&c[ab % k]).map(|(a, b)| a * b).sum()).collect()
    }

    #[test]
    fn generalized_vif_follows_its_definition() {
        // Fox & Monette (1992), eq. 10: GVIF = det(R_SS)·det(R_OO)/det(R),
        // evaluated here from explicit correlation matrices (an independent
        // route to the covariance identity used in the function), on an
        // invented design: a numeric column u and three indicator columns.
        let n = 12;
        let u: Vec<f64> = (0..n).map(|i| (i as f64 * 1.7).sin() * 3.0 + i as f64 * 0.4).collect();
        let level = |i: usize| (i * 7 + i / 4) % 4;
        let ind: Vec<Vec<f64>> = (1..4).map(|l| (0..n).map(|i| f64::from(u8::from(level(i) == l))).collect()).collect();
        let y: Vec<f64> = (0..n).map(|i| 2.0 + 0.5 * u[i] + level(i) as f64 + ((i * 7) % 3) as f64 * 0.2).collect();
        let mut x = vec![1.0; n];
        x.extend(&u);
        for c in &ind {
            x.extend(c);
        }
        let fit = least_squares(&LsProblem { x: &x, n, p: 5, y: &y, weights: None, has_intercept: true }).expect("fits");
        let all: Vec<Vec<f64>> = std::iter::once(u.clone()).chain(ind.iter().cloned()).collect();
        let r = correlations(&all);
        let r_ss = correlations(&ind);
        let want = small_det(r_ss, 3) * 1.0 / small_det(r, 4);
        let got = generalized_variance_inflation(&fit, &x, &[2, 3, 4]);
        assert!((got - want).abs() < 1e-10 * want, "{got} vs {want}");
        // One column: the VIF itself.
        let vif = variance_inflation(&fit, &x, Some(0));
        let one = generalized_variance_inflation(&fit, &x, &[1]);
        assert!((one - vif[1]).abs() < 1e-10 * vif[1], "{one} vs {}", vif[1]);
        assert!(want > 1.0);
    }

    #[test]
    fn durbin_watson_of_simple_sequences() {
        // Alternating signs: each difference is ±2, so d = 4(n−1)/n
        // (direct evaluation of the defining formula, common practice).
        let u = [1.0, -1.0, 1.0, -1.0];
        assert!((durbin_watson(&u) - 3.0).abs() < 1e-15);
        // A constant sequence has no differences.
        assert_eq!(durbin_watson(&[2.0, 2.0, 2.0]), 0.0);
        assert!(durbin_watson(&[1.0]).is_nan());
        assert!(durbin_watson(&[0.0, 0.0]).is_nan());
    }

    #[test]
    fn jarque_bera_of_a_symmetric_sample() {
        // Symmetric about its mean: skewness 0. For {−1, 1} repeated, every
        // |d| = 1 so m₂ = m₄ = 1 and K = 1, JB = n/6·(4/4) = n/6 (direct
        // evaluation of the formula, common practice).
        let u = [-1.0, 1.0, -1.0, 1.0, -1.0, 1.0];
        let jb = jarque_bera(&u);
        assert!(jb.skewness.abs() < 1e-15);
        assert!((jb.kurtosis - 1.0).abs() < 1e-15);
        assert!((jb.statistic - 1.0).abs() < 1e-15);
        // χ² on 2 df: P(X > 1) = exp(−1/2) (closed form, A&S 26.4.21).
        assert!((jb.p_value - (-0.5f64).exp()).abs() < 1e-14);
    }

    #[test]
    fn largest_and_counts_skip_nan() {
        let v = [0.1, f64::NAN, -0.7, 0.5];
        assert_eq!(largest(&v, false), Some((3, 0.5)));
        assert_eq!(largest(&v, true), Some((2, -0.7)));
        assert_eq!(count_above(&v, 0.4, true), 2);
        assert_eq!(largest(&[f64::NAN], false), None);
    }

    #[test]
    fn robust_covariance_of_a_mean() {
        // Intercept only: (XᵀX)⁻¹ = 1/n, so HC0 = Σuᵢ²/n² and HC1 adds
        // n/(n−1); with hᵢ = 1/n, HC2 = Σuᵢ²/(n(n−1)) and HC3 = Σuᵢ²/(n−1)²
        // (direct evaluation of the definitions, common practice).
        let y = [1.0, 2.0, 4.0, 7.0];
        let x = [1.0; 4];
        let fit = least_squares(&LsProblem { x: &x, n: 4, p: 1, y: &y, weights: None, has_intercept: true }).unwrap(); // valid problem
        let ss: f64 = fit.residuals.iter().map(|e| e * e).sum();
        let want = [ss / 16.0, ss / 16.0 * 4.0 / 3.0, ss / 12.0, ss / 9.0];
        for (kind, w) in [ErrorKind::Hc0, ErrorKind::Hc1, ErrorKind::Hc2, ErrorKind::Hc3].into_iter().zip(want) {
            let v = robust_covariance(&fit, &x, kind)[0];
            assert!(((v - w) / w).abs() < 1e-14, "{kind:?}: {v} vs {w}");
        }
    }
}
