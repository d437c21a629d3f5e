//! M-estimation of a linear model by iteratively reweighted least squares:
//! Huber's and Tukey's bisquare ρ, a scale re-estimated from the residuals
//! at every step, and the asymptotic covariance of M-estimators.
//!
//! Each step is a weighted least squares solve by the pivoted QR of
//! [`super::lsq`] (never the normal equations). Nothing here knows about
//! requests or workbooks.
//!
//! **Start.** Ordinary least squares on all rows, and the scale of its
//! residuals (below).
//!
//! **Scale.** `s = median(|rᵢ|) / Φ⁻¹(3/4)`, the median absolute residual
//! (about zero, not about the median of the residuals) normalised to be
//! consistent for σ at the normal; `Φ⁻¹(3/4) = 0.6744897501960817`
//! (scipy 1.17.1 `scipy.stats.norm.ppf(0.75)`). For an even count the
//! median is the mean of the two middle values.
//!
//! A scale at or below `64·ε·max|yᵢ|` (the rounding level of the
//! response) counts as zero: the fit stops with an error.
//!
//! **Step.** With `zᵢ = rᵢ/s` the row weights are `wᵢ = ψ(zᵢ)/zᵢ`; rows of
//! weight 0 are left out of the solve; the weighted least squares
//! coefficients give new residuals, from which `s` is re-estimated.
//!
//! **Convergence.** Stop when no fitted value moved by more than
//! [`CONVERGENCE`]` · s` in the last step (a rule on the fitted values, so
//! it does not depend on how the terms are scaled); give up after
//! [`MAX_ITERATIONS`] steps.
//!
//! **Covariance** (Huber 1981, *Robust Statistics*, §7.6, his estimate
//! (6.5) with the correction factor `K`):
//!
//! ```text
//! Cov(β̂) = K² · [Σψ(zᵢ)²/(n−p)] · s² / [Σψ′(zᵢ)/n]² · (XᵀX)⁻¹
//! K = 1 + (p/n) · var(ψ′(z)) / mean(ψ′(z))²
//! ```
//!
//! with `var` the population variance over the `n` rows and `p` the rank.
//! This is statsmodels' `RLM` default `cov="H1"`; statsmodels counts
//! `df_model + 1` for `p` in `K`, which is the rank with an intercept (the
//! figures then agree) and one more than the rank without. `(XᵀX)⁻¹` is the
//! unweighted one, from the QR of the starting least squares fit.

use super::lsq::least_squares;
use super::{LsError, LsFit, LsProblem};
use std::fmt;

/// `Φ⁻¹(3/4)`: the median absolute deviation of a standard normal
/// (scipy 1.17.1 `scipy.stats.norm.ppf(0.75)`).
pub const MAD_NORMAL: f64 = 0.674_489_750_196_081_7;
/// Convergence: every fitted value moved by at most this many scales.
pub const CONVERGENCE: f64 = 1e-11;
/// Steps allowed before giving up.
pub const MAX_ITERATIONS: usize = 1000;

/// The ρ function of an M-estimator.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Loss {
    /// Huber's: quadratic within `c` scales, linear beyond.
    Huber,
    /// Tukey's bisquare (biweight): redescending, rows beyond `c` scales
    /// get weight 0.
    Bisquare,
}

impl Loss {
    /// The usual tuning constant: 95% efficiency at the normal (Huber
    /// 1.345, bisquare 4.685; Holland & Welsch 1977, as in statsmodels).
    pub fn default_tuning(self) -> f64 {
        match self {
            Loss::Huber => 1.345,
            Loss::Bisquare => 4.685,
        }
    }

    /// `ψ(z) = ρ′(z)`.
    pub fn psi(self, z: f64, c: f64) -> f64 {
        match self {
            Loss::Huber => z.clamp(-c, c),
            Loss::Bisquare => {
                if z.abs() <= c {
                    let u = 1.0 - (z / c).powi(2);
                    z * u * u
                } else {
                    0.0
                }
            }
        }
    }

    /// `ψ′(z)`.
    pub fn psi_deriv(self, z: f64, c: f64) -> f64 {
        match self {
            Loss::Huber => f64::from(u8::from(z.abs() <= c)),
            Loss::Bisquare => {
                if z.abs() <= c {
                    let t = (z / c).powi(2);
                    (1.0 - t) * (1.0 - 5.0 * t)
                } else {
                    0.0
                }
            }
        }
    }

    /// The IRLS weight `ψ(z)/z` (1 at `z = 0`).
    pub fn weight(self, z: f64, c: f64) -> f64 {
        match self {
            Loss::Huber => {
                if z.abs() <= c {
                    1.0
                } else {
                    c / z.abs()
                }
            }
            Loss::Bisquare => {
                if z.abs() <= c {
                    let u = 1.0 - (z / c).powi(2);
                    u * u
                } else {
                    0.0
                }
            }
        }
    }
}

/// A robust fit: the design as in [`LsProblem`] (no prior weights), the
/// loss and its tuning constant.
#[derive(Clone, Copy, Debug)]
pub struct RobustProblem<'a> {
    /// Design, column-major `n × p`.
    pub x: &'a [f64],
    /// Rows.
    pub n: usize,
    /// Columns.
    pub p: usize,
    /// Response.
    pub y: &'a [f64],
    /// Whether the design holds an intercept.
    pub has_intercept: bool,
    /// The ρ function.
    pub loss: Loss,
    /// Its tuning constant `c`, in scales.
    pub tuning: f64,
}

/// The result of [`m_estimate`].
#[derive(Clone, Debug)]
pub struct RobustFit {
    /// Coefficients.
    pub coefficients: Vec<f64>,
    /// Standard errors, `sqrt` of the covariance's diagonal.
    pub std_errors: Vec<f64>,
    /// `p × p` column-major covariance (Huber's, see the module notes).
    pub covariance: Vec<f64>,
    /// Fitted values `Xβ̂`.
    pub fitted: Vec<f64>,
    /// Residuals `y − Xβ̂`.
    pub residuals: Vec<f64>,
    /// The final weights `ψ(zᵢ)/zᵢ`, with `zᵢ = rᵢ/s`.
    pub weights: Vec<f64>,
    /// The robust scale `s` of the final residuals.
    pub scale: f64,
    /// Reweighting steps taken.
    pub iterations: usize,
    /// Residual degrees of freedom `n − p`.
    pub df_resid: f64,
    /// The starting ordinary least squares fit.
    pub start: LsFit,
}

/// Why a robust fit failed.
#[derive(Clone, Debug, PartialEq)]
pub enum RobustError {
    /// The least squares start failed.
    Start(LsError),
    /// Fewer rows than columns plus one.
    TooFewRows { n: usize, p: usize },
    /// A column of the design is a combination of the others.
    Collinear { column: usize },
    /// The scale of the residuals is zero at this step (more than half the
    /// rows fit exactly).
    ZeroScale { iteration: usize },
    /// At this step fewer rows than columns keep a positive weight, or the
    /// rows that do cannot determine the coefficients.
    TooFewWeighted { iteration: usize, kept: usize },
    /// Every `ψ′` is zero, so the covariance is undefined.
    NoCovariance,
    /// No convergence within the limit: the last step's largest move of a
    /// fitted value, in scales.
    NoConvergence { iterations: usize, last_change: f64 },
}

impl fmt::Display for RobustError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RobustError::Start(e) => write!(f, "{e}"),
            RobustError::TooFewRows { n, p } => write!(f, "too few rows: {n} for {p} coefficients; a robust fit needs more rows than coefficients"),
            RobustError::Collinear { .. } => write!(f, "a term is an exact combination of the others (collinear)"),
            RobustError::ZeroScale { iteration } => write!(f, "the robust scale of the residuals is zero at step {iteration}: half the rows or more lie exactly on the fitted line, so the other rows cannot be weighed"),
            RobustError::TooFewWeighted { iteration, kept } => write!(f, "at step {iteration} only {kept} rows keep a positive weight, too few to determine the coefficients: the rows were down-weighted to zero"),
            RobustError::NoCovariance => write!(f, "every row lies beyond the tuning constant, so the standard errors are undefined"),
            RobustError::NoConvergence { iterations, last_change } => write!(f, "the reweighting did not settle within {iterations} steps: the last step still moved a fitted value by {last_change:.3e} scales"),
        }
    }
}

impl std::error::Error for RobustError {}

/// The median of `v` (mean of the two middle values for an even count).
fn median(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let m = v.len();
    if m == 0 {
        return f64::NAN;
    }
    if m % 2 == 1 {
        v[m / 2]
    } else {
        0.5 * (v[m / 2 - 1] + v[m / 2])
    }
}

/// The normalised median absolute residual about zero (module notes).
pub fn mad_scale(residuals: &[f64]) -> f64 {
    let mut a: Vec<f64> = residuals.iter().map(|r| r.abs()).collect();
    median(&mut a) / MAD_NORMAL
}

fn residuals_of(pr: &RobustProblem, beta: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let n = pr.n;
    let mut fitted = vec![0.0; n];
    for (j, b) in beta.iter().enumerate() {
        for (f, xv) in fitted.iter_mut().zip(&pr.x[j * n..(j + 1) * n]) {
            *f += b * xv;
        }
    }
    let resid = pr.y.iter().zip(&fitted).map(|(y, f)| y - f).collect();
    (fitted, resid)
}

/// One weighted solve on the rows of positive weight.
fn weighted_step(pr: &RobustProblem, w: &[f64], iteration: usize) -> Result<Vec<f64>, RobustError> {
    let (n, p) = (pr.n, pr.p);
    let keep: Vec<usize> = (0..n).filter(|&i| w[i] > 0.0).collect();
    let m = keep.len();
    if m < p {
        return Err(RobustError::TooFewWeighted { iteration, kept: m });
    }
    let mut x = Vec::with_capacity(m * p);
    for j in 0..p {
        x.extend(keep.iter().map(|&i| pr.x[j * n + i]));
    }
    let y: Vec<f64> = keep.iter().map(|&i| pr.y[i]).collect();
    let wk: Vec<f64> = keep.iter().map(|&i| w[i]).collect();
    let fit = least_squares(&LsProblem { x: &x, n: m, p, y: &y, weights: Some(&wk), has_intercept: pr.has_intercept })
        .map_err(|_| RobustError::TooFewWeighted { iteration, kept: m })?;
    if fit.aliased.iter().any(|a| *a) {
        return Err(RobustError::TooFewWeighted { iteration, kept: m });
    }
    Ok(fit.coefficients)
}

/// M-estimation by iteratively reweighted least squares (module notes).
pub fn m_estimate(pr: &RobustProblem) -> Result<RobustFit, RobustError> {
    let (n, p) = (pr.n, pr.p);
    let start = least_squares(&LsProblem { x: pr.x, n, p, y: pr.y, weights: None, has_intercept: pr.has_intercept }).map_err(RobustError::Start)?;
    if n <= p {
        return Err(RobustError::TooFewRows { n, p });
    }
    if let Some(column) = start.aliased.iter().position(|a| *a) {
        return Err(RobustError::Collinear { column });
    }
    let c = pr.tuning;
    let mut beta = start.coefficients.clone();
    let (mut fitted, mut resid) = residuals_of(pr, &beta);
    let mut scale = mad_scale(&resid);
    // A scale at the rounding level of the response is zero.
    let floor = 64.0 * f64::EPSILON * pr.y.iter().fold(0.0, |m: f64, v| m.max(v.abs()));
    let mut iterations = 0;
    let mut last_change = f64::INFINITY;
    while iterations < MAX_ITERATIONS {
        if scale <= floor || !scale.is_finite() {
            return Err(RobustError::ZeroScale { iteration: iterations });
        }
        let w: Vec<f64> = resid.iter().map(|r| pr.loss.weight(r / scale, c)).collect();
        iterations += 1;
        beta = weighted_step(pr, &w, iterations)?;
        let (f2, r2) = residuals_of(pr, &beta);
        last_change = f2.iter().zip(&fitted).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max) / scale;
        fitted = f2;
        resid = r2;
        scale = mad_scale(&resid);
        if last_change <= CONVERGENCE {
            break;
        }
    }
    if last_change > CONVERGENCE {
        return Err(RobustError::NoConvergence { iterations, last_change });
    }
    if scale <= floor || !scale.is_finite() {
        return Err(RobustError::ZeroScale { iteration: iterations });
    }
    let z: Vec<f64> = resid.iter().map(|r| r / scale).collect();
    let weights: Vec<f64> = z.iter().map(|z| pr.loss.weight(*z, c)).collect();
    if weights.iter().all(|w| *w == 0.0) {
        return Err(RobustError::TooFewWeighted { iteration: iterations, kept: 0 });
    }
    let covariance = huber_covariance(pr, &start, &z, scale)?;
    let std_errors = (0..p).map(|j| covariance[j * p + j].sqrt()).collect();
    Ok(RobustFit { coefficients: beta, std_errors, covariance, fitted, residuals: resid, weights, scale, iterations, df_resid: (n - p) as f64, start })
}

/// Huber's covariance with its correction factor (module notes), from the
/// standardized residuals `z` and the unweighted `(XᵀX)⁻¹` of the start.
fn huber_covariance(pr: &RobustProblem, start: &LsFit, z: &[f64], scale: f64) -> Result<Vec<f64>, RobustError> {
    let (n, p) = (pr.n as f64, pr.p as f64);
    let c = pr.tuning;
    let d: Vec<f64> = z.iter().map(|z| pr.loss.psi_deriv(*z, c)).collect();
    let mean_d = d.iter().sum::<f64>() / n;
    if mean_d <= 0.0 {
        return Err(RobustError::NoCovariance);
    }
    let var_d = d.iter().map(|v| (v - mean_d).powi(2)).sum::<f64>() / n;
    let k = 1.0 + p / n * var_d / (mean_d * mean_d);
    let ss_psi: f64 = z.iter().map(|z| pr.loss.psi(*z, c).powi(2)).sum();
    // `start.covariance / σ̂²` is `(XᵀX)⁻¹` (σ̂ > 0: the scale is positive,
    // so some least squares residual is not zero).
    let sigma2 = start.sigma * start.sigma;
    let factor = k * k * (ss_psi / (n - p)) * scale * scale / (mean_d * mean_d);
    Ok(start.covariance.iter().map(|v| v / sigma2 * factor).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mad_scale_of_known_residuals() {
        // median(|r|) of {-3, 1, 2, -4} is 2.5 (mean of the middle two).
        assert_eq!(mad_scale(&[-3.0, 1.0, 2.0, -4.0]), 2.5 / MAD_NORMAL);
        assert_eq!(mad_scale(&[5.0, -1.0, 0.5]), 1.0 / MAD_NORMAL);
    }

    #[test]
    fn psi_is_weight_times_z_and_psi_deriv_its_derivative() {
        // ψ(z) = w(z)·z by definition; ψ′ against a central difference
        // (common practice), away from the kinks at ±c.
        for loss in [Loss::Huber, Loss::Bisquare] {
            let c = loss.default_tuning();
            for k in -60..=60 {
                let z = f64::from(k) * 0.1 + 0.013;
                assert!((loss.psi(z, c) - loss.weight(z, c) * z).abs() < 1e-14, "{loss:?} at {z}");
                if (z.abs() - c).abs() > 1e-3 {
                    let h = 1e-6;
                    let fd = (loss.psi(z + h, c) - loss.psi(z - h, c)) / (2.0 * h);
                    assert!((fd - loss.psi_deriv(z, c)).abs() < 1e-7, "{loss:?} at {z}: {fd} vs {}", loss.psi_deriv(z, c));
                }
            }
        }
    }

    #[test]
    fn a_line_without_outliers_keeps_every_weight_under_huber() {
        // Residuals ±0.1 alternate: all within 1.345 scales, so Huber's
        // fit is least squares (direct consequence of its weight function).
        let n = 10;
        let mut x = vec![1.0; n];
        x.extend((0..n).map(|i| i as f64));
        let y: Vec<f64> = (0..n).map(|i| 2.0 + 0.5 * i as f64 + if i % 2 == 0 { 0.1 } else { -0.1 }).collect();
        let fit = m_estimate(&RobustProblem { x: &x, n, p: 2, y: &y, has_intercept: true, loss: Loss::Huber, tuning: 1.345 }).expect("fits");
        assert!(fit.weights.iter().all(|w| *w == 1.0));
        for (a, b) in fit.coefficients.iter().zip(&fit.start.coefficients) {
            assert!((a - b).abs() < 1e-12, "{a} vs {b}");
        }
    }
}
