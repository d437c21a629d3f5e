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
//!
//! **MM** ([`mm_estimate`], Yohai 1987, Ann. Stat. 15:642–656): first the
//! S-estimate ([`s_estimate`], fast-S of Salibian-Barrera & Yohai 2006):
//! the coefficients minimising the M-scale `s` defined by
//! `(1/n) Σ ρ̃(rᵢ/s) = b`, ρ̃ the bisquare ρ scaled to maximum 1 with
//! `c = `[`S_TUNING`]` ≈ 1.5476` and `b = `[`S_BIAS`]` = 0.5` (breakdown
//! 0.5). Then the bisquare M-step with `c = 4.685` (95% efficiency at the
//! normal) started from the S coefficients with the S scale held fixed,
//! converged by the rule above; its covariance is Huber's formula above
//! with that fixed scale.

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
    /// For an MM fit, the S-estimate its M-step started from.
    pub s_estimate: Option<SEstimate>,
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

/// The least squares start of every method: ordinary least squares on all
/// rows, checked for too few rows and collinear terms.
fn ls_start(pr: &RobustProblem) -> Result<LsFit, RobustError> {
    let (n, p) = (pr.n, pr.p);
    let start = least_squares(&LsProblem { x: pr.x, n, p, y: pr.y, weights: None, has_intercept: pr.has_intercept }).map_err(RobustError::Start)?;
    if n <= p {
        return Err(RobustError::TooFewRows { n, p });
    }
    if let Some(column) = start.aliased.iter().position(|a| *a) {
        return Err(RobustError::Collinear { column });
    }
    Ok(start)
}

/// A scale at the rounding level of the response counts as zero.
fn zero_scale_floor(pr: &RobustProblem) -> f64 {
    64.0 * f64::EPSILON * pr.y.iter().fold(0.0, |m: f64, v| m.max(v.abs()))
}

/// M-estimation by iteratively reweighted least squares (module notes).
pub fn m_estimate(pr: &RobustProblem) -> Result<RobustFit, RobustError> {
    let start = ls_start(pr)?;
    let beta = start.coefficients.clone();
    reweight(pr, start, beta, None, None)
}

/// MM-estimation (Yohai 1987): the S-estimate of [`s_estimate`], then a
/// bisquare M-step with `pr.tuning` (4.685 for 95% efficiency) started
/// from the S coefficients with the S scale held fixed (module notes).
/// `pr.loss` should be [`Loss::Bisquare`].
pub fn mm_estimate(pr: &RobustProblem) -> Result<RobustFit, RobustError> {
    let start = ls_start(pr)?;
    let s = s_estimate(pr)?;
    let beta = s.coefficients.clone();
    let scale = s.scale;
    reweight(pr, start, beta, Some(scale), Some(s))
}

/// The reweighting loop from `beta`: with `fixed_scale` the scale is held
/// at that value (the MM step), otherwise re-estimated by [`mad_scale`]
/// at every step.
fn reweight(pr: &RobustProblem, start: LsFit, mut beta: Vec<f64>, fixed_scale: Option<f64>, s_fit: Option<SEstimate>) -> Result<RobustFit, RobustError> {
    let (n, p) = (pr.n, pr.p);
    let c = pr.tuning;
    let scale_of = |r: &[f64]| fixed_scale.unwrap_or_else(|| mad_scale(r));
    let (mut fitted, mut resid) = residuals_of(pr, &beta);
    let mut scale = scale_of(&resid);
    let floor = zero_scale_floor(pr);
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
        scale = scale_of(&resid);
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
    Ok(RobustFit { coefficients: beta, std_errors, covariance, fitted, residuals: resid, weights, scale, iterations, df_resid: (n - p) as f64, start, s_estimate: s_fit })
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

/// Bisquare tuning constant of the S-estimate's ρ for breakdown point 0.5:
/// the root of `E ρ̃_c(Z) = 1/2` for a standard normal `Z` with the
/// bisquare ρ normalised to a maximum of 1 (module notes), computed to
/// double precision by `tests/reference/mm_figures.py` (scipy 1.17.1
/// `brentq` on `quad`); Rousseeuw & Leroy (1987, Table 19 of ch. 5) give
/// 1.547, Salibian-Barrera & Yohai (2006) 1.548.
pub const S_TUNING: f64 = 1.547_644_980_928_226;
/// The S-estimate's `b = E ρ̃(Z)`: equal to the breakdown point 0.5
/// (Rousseeuw & Yohai 1984), since ρ̃ has maximum 1.
pub const S_BIAS: f64 = 0.5;
/// Random elemental subsets drawn by the fast-S search (Salibian-Barrera &
/// Yohai 2006 use 500).
pub const S_SUBSETS: usize = 500;
/// Refining steps applied to each subset's fit before the candidates are
/// ranked (their `k = 2`).
pub const S_STEPS: usize = 2;
/// Best candidates refined to convergence (their `t = 5`).
pub const S_BEST: usize = 5;
/// The fixed seed of the subset draws, so the output is reproducible.
pub const S_SEED: u64 = 0x9E37_79B9_7F4A_7C15;

/// The S-estimate an MM fit starts from.
#[derive(Clone, Debug)]
pub struct SEstimate {
    /// Coefficients minimising the M-scale of the residuals.
    pub coefficients: Vec<f64>,
    /// That M-scale (the scale the MM step holds fixed).
    pub scale: f64,
    /// Refining steps of the winning candidate after its subset.
    pub iterations: usize,
    /// Subsets drawn (those giving a singular fit are drawn again and counted).
    pub subsets: usize,
}

/// ρ̃ of the S-estimate: the bisquare ρ normalised to a maximum of 1,
/// `1 − (1 − (z/c)²)³` within `c`, 1 beyond.
fn rho_s(z: f64) -> f64 {
    let t = (z / S_TUNING).powi(2);
    if t >= 1.0 {
        1.0
    } else {
        1.0 - (1.0 - t).powi(3)
    }
}

/// The M-scale of `r`: the `s` with `(1/n) Σ ρ̃(rᵢ/s) = b` (module notes),
/// by the fixed-point iteration `s² ← s² · mean ρ̃(r/s) / b`, which
/// increases or decreases monotonically to the root, from the normalised
/// MAD; stops when `s` changes by less than 1e-15 relative. Zero when at
/// most `b·n` residuals are nonzero (the root is then 0).
pub fn m_scale(r: &[f64]) -> f64 {
    let n = r.len() as f64;
    let nonzero = r.iter().filter(|v| **v != 0.0).count() as f64;
    if nonzero <= S_BIAS * n {
        return 0.0;
    }
    let mut s = mad_scale(r);
    if s <= 0.0 || !s.is_finite() {
        s = r.iter().map(|v| v.abs()).fold(0.0, f64::max);
    }
    for _ in 0..10_000 {
        let mean = r.iter().map(|v| rho_s(v / s)).sum::<f64>() / n;
        let next = s * (mean / S_BIAS).sqrt();
        let done = (next - s).abs() <= 1e-15 * s;
        s = next;
        if done {
            break;
        }
    }
    s
}

/// A small deterministic generator (SplitMix64, Steele, Lea & Flood 2014)
/// for the subset draws.
struct SplitMix(u64);

impl SplitMix {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// `k` distinct indices below `n` (partial Fisher–Yates).
    fn subset(&mut self, n: usize, k: usize, pool: &mut Vec<usize>) -> Vec<usize> {
        pool.clear();
        pool.extend(0..n);
        for i in 0..k {
            let j = i + (self.next() % (n - i) as u64) as usize;
            pool.swap(i, j);
        }
        pool[..k].to_vec()
    }
}

/// One refining step of the S-estimate (the "I-step" of Salibian-Barrera &
/// Yohai 2006): weights `ψ̃(zᵢ)/zᵢ ∝ (1 − (zᵢ/c)²)²` at `zᵢ = rᵢ/s`, a
/// weighted least squares solve by QR, and the M-scale of the new
/// residuals. `None` when too few rows keep a weight.
/// Coefficients, fitted values, residuals and M-scale after one step.
type SStep = (Vec<f64>, Vec<f64>, Vec<f64>, f64);

fn s_step(pr: &RobustProblem, resid: &[f64], scale: f64) -> Option<SStep> {
    let w: Vec<f64> = resid.iter().map(|r| Loss::Bisquare.weight(r / scale, S_TUNING)).collect();
    let beta = weighted_step(pr, &w, 0).ok()?;
    let (fitted, resid) = residuals_of(pr, &beta);
    let s = m_scale(&resid);
    Some((beta, fitted, resid, s))
}

/// The S-estimate by the fast-S algorithm (Salibian-Barrera & Yohai 2006,
/// J. Comput. Graph. Stat. 15:414–427): [`S_SUBSETS`] random subsets of
/// `p` rows drawn with the fixed seed [`S_SEED`] (a singular subset is
/// drawn again), each subset's exact fit refined by [`S_STEPS`] steps, the
/// [`S_BEST`] candidates of smallest M-scale refined until no fitted value
/// moves by more than [`CONVERGENCE`] scales (at most [`MAX_ITERATIONS`]
/// steps), and the one of smallest M-scale kept. The least squares fit is
/// a candidate too, so the search never ends above it.
pub fn s_estimate(pr: &RobustProblem) -> Result<SEstimate, RobustError> {
    let (n, p) = (pr.n, pr.p);
    let floor = zero_scale_floor(pr);
    let mut rng = SplitMix(S_SEED);
    let mut pool = Vec::with_capacity(n);
    let mut candidates: Vec<(f64, Vec<f64>)> = Vec::new();
    let consider = |beta: Vec<f64>, candidates: &mut Vec<(f64, Vec<f64>)>| {
        let (_, mut resid) = residuals_of(pr, &beta);
        let mut beta = beta;
        let mut s = m_scale(&resid);
        for _ in 0..S_STEPS {
            if s <= floor || !s.is_finite() {
                break;
            }
            match s_step(pr, &resid, s) {
                Some((b, _, r, s2)) => {
                    beta = b;
                    resid = r;
                    s = s2;
                }
                None => break,
            }
        }
        if s.is_finite() {
            candidates.push((s, beta));
        }
    };
    let ls = least_squares(&LsProblem { x: pr.x, n, p, y: pr.y, weights: None, has_intercept: pr.has_intercept }).map_err(RobustError::Start)?;
    consider(ls.coefficients, &mut candidates);
    let mut drawn = 0;
    let mut good = 0;
    // A design whose subsets are nearly all singular (a rare level) must
    // still end: at most 20 draws per wanted subset.
    while good < S_SUBSETS && drawn < 20 * S_SUBSETS {
        drawn += 1;
        let rows = rng.subset(n, p, &mut pool);
        let mut xs = Vec::with_capacity(p * p);
        for j in 0..p {
            xs.extend(rows.iter().map(|&i| pr.x[j * n + i]));
        }
        let ys: Vec<f64> = rows.iter().map(|&i| pr.y[i]).collect();
        let Ok(fit) = least_squares(&LsProblem { x: &xs, n: p, p, y: &ys, weights: None, has_intercept: pr.has_intercept }) else { continue };
        if fit.aliased.iter().any(|a| *a) || fit.coefficients.iter().any(|b| !b.is_finite()) {
            continue;
        }
        good += 1;
        consider(fit.coefficients, &mut candidates);
    }
    candidates.sort_by(|a, b| a.0.total_cmp(&b.0));
    if candidates[0].0 <= floor {
        return Err(RobustError::ZeroScale { iteration: 0 });
    }
    let mut best: Option<SEstimate> = None;
    for (s0, beta0) in candidates.into_iter().take(S_BEST) {
        let (mut fitted, mut resid) = residuals_of(pr, &beta0);
        let (mut beta, mut s) = (beta0, s0);
        let mut iterations = 0;
        let mut change = f64::INFINITY;
        while iterations < MAX_ITERATIONS && change > CONVERGENCE && s > floor {
            let Some((b, f2, r2, s2)) = s_step(pr, &resid, s) else { break };
            iterations += 1;
            change = f2.iter().zip(&fitted).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max) / s;
            if s2 > s * (1.0 + 1e-12) {
                // A step never raises the M-scale (Salibian-Barrera & Yohai
                // 2006, §2); past rounding it would only wander.
                break;
            }
            beta = b;
            fitted = f2;
            resid = r2;
            s = s2;
        }
        if best.as_ref().is_none_or(|b| s < b.scale) {
            best = Some(SEstimate { coefficients: beta, scale: s, iterations, subsets: drawn });
        }
    }
    let best = best.ok_or(RobustError::ZeroScale { iteration: 0 })?;
    if best.scale <= floor || !best.scale.is_finite() {
        return Err(RobustError::ZeroScale { iteration: best.iterations });
    }
    Ok(best)
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

    #[test]
    fn mm_recovers_a_line_that_thirty_percent_of_shifted_rows_pull_least_squares_from() {
        // Constructed: y = 1 + 2x with alternating ±0.1 scatter on 40 rows;
        // 12 of them (30%) moved up by 50. The M-scale equation holds at
        // the S scale (definition, module notes), the S and MM slopes stay
        // at 2 and least squares does not.
        let n = 40;
        let mut x = vec![1.0; n];
        x.extend((0..n).map(|i| i as f64));
        let mut y: Vec<f64> = (0..n).map(|i| 1.0 + 2.0 * i as f64 + if i % 2 == 0 { 0.1 } else { -0.1 }).collect();
        for i in (0..n).filter(|i| i % 10 < 3) {
            y[i] += 50.0;
        }
        let pr = RobustProblem { x: &x, n, p: 2, y: &y, has_intercept: true, loss: Loss::Bisquare, tuning: 4.685 };
        let s = s_estimate(&pr).expect("S fits");
        let (_, r) = residuals_of(&pr, &s.coefficients);
        let mean = r.iter().map(|v| rho_s(v / s.scale)).sum::<f64>() / n as f64;
        assert!((mean - S_BIAS).abs() < 1e-12, "{mean}");
        let mm = mm_estimate(&pr).expect("MM fits");
        assert!((s.coefficients[1] - 2.0).abs() < 0.01, "{:?}", s.coefficients);
        assert!((mm.coefficients[1] - 2.0).abs() < 0.01 && (mm.coefficients[0] - 1.0).abs() < 0.2, "{:?}", mm.coefficients);
        assert!(mm.weights.iter().enumerate().all(|(i, w)| (i % 10 < 3) == (*w == 0.0)));
        assert!((mm.scale - s.scale).abs() == 0.0);
        let ls = &mm.start.coefficients;
        assert!((ls[0] - 1.0).abs() > 5.0, "{ls:?}");
    }
}
