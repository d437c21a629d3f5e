//! Pure numerics for plumb's fits: weighted and ordinary linear least squares
//! by Householder QR with column pivoting, iterative refinement in
//! double-double precision, and the inference that follows from a fit
//! (standard errors, t and F tests, intervals, information criteria,
//! leverage, studentized residuals, Cook's distance).
//!
//! Nothing here knows about workbooks, cells or requests: inputs are plain
//! column-major `f64` buffers, outputs plain vectors. The normal equations
//! are never solved for an answer; the Gram matrix `XᵀWX` appears only as an
//! accurately accumulated *residual* when refining the covariance matrix.
//!
//! Submodules: [`dd`] (double-double arithmetic), [`qr`] (pivoted Householder
//! QR), [`lsq`] (the least squares driver and refinement), [`poly`]
//! (power columns fitted in a centred, scaled basis), [`inference`]
//! (distributions and tests built on statrs), [`diagnostics`] (residual
//! checks, collinearity, influence and heteroscedasticity-consistent
//! standard errors on a finished fit), [`serial`] (ordered data: Durbin–Watson
//! with its exact p-value, Breusch–Godfrey, Newey–West and clustered
//! standard errors), [`robust`] (M-estimation by
//! iteratively reweighted least squares).

pub mod dd;
pub mod diagnostics;
pub mod inference;
pub mod logistic;
pub mod lsq;
pub mod nls;
pub mod poly;
pub mod qr;
pub mod robust;
pub mod serial;

#[cfg(test)]
mod tests;

pub use inference::{
    chi2_cdf, chi2_quantile, chi2_sf, coefficient_table, cooks_distance, f_cdf, f_quantile, f_sf,
    normal_plot_positions, standardized_residuals, t_quantile, t_sf, CoefficientRow,
};
pub use lsq::{least_squares, CovarianceMethod, Refinement, RANK_TOLERANCE};
pub use poly::{least_squares_powers, PowerGroup};

use std::fmt;

/// A (weighted) linear least squares problem: minimise `Σ wᵢ (yᵢ − xᵢᵀβ)²`.
#[derive(Clone, Copy, Debug)]
pub struct LsProblem<'a> {
    /// Design matrix, column-major: column `j` is `x[j*n .. (j+1)*n]`. An
    /// intercept column of ones is included by the caller when wanted.
    pub x: &'a [f64],
    /// Number of rows (observations).
    pub n: usize,
    /// Number of columns of the design.
    pub p: usize,
    /// Response, length `n`.
    pub y: &'a [f64],
    /// Optional weights, length `n`, all finite and `> 0` (the caller drops
    /// zero-weight rows before building the problem).
    pub weights: Option<&'a [f64]>,
    /// `true` when the model contains an intercept (a constant column, or a
    /// set of columns spanning one): R² and the regression sum of squares are
    /// then centred about the (weighted) mean and the model degrees of
    /// freedom exclude the intercept. `false`: uncentred R² = Σwŷ²/Σwy² (the
    /// NIST StRD NoInt definition) and model df = rank.
    pub has_intercept: bool,
}

/// The result of [`least_squares`]. Per-column vectors have length `p`, in
/// the caller's column order; per-row vectors have length `n`.
#[derive(Clone, Debug)]
pub struct LsFit {
    /// Estimated coefficients; NaN for an aliased column.
    pub coefficients: Vec<f64>,
    /// Standard errors `sqrt(Cov[j, j])`; NaN for an aliased column.
    pub std_errors: Vec<f64>,
    /// `true` for a column found to be (numerically) a linear combination of
    /// the kept columns (see [`RANK_TOLERANCE`]).
    pub aliased: Vec<bool>,
    /// For an aliased column `j`: the kept columns `(index, multiplier)` with
    /// `x_j ≈ Σ multiplier · x_index` (least squares multipliers, refined;
    /// multipliers whose contribution is below 1e-12 of ‖x_j‖ are left out).
    /// Empty for kept columns, and for an aliased column that is all zeros.
    pub alias_of: Vec<Vec<(usize, f64)>>,
    /// Numerical rank: number of kept columns.
    pub rank: usize,
    /// `p × p` column-major covariance `s²·(XᵀWX)⁻¹` over the kept columns;
    /// rows and columns of aliased columns are NaN.
    pub covariance: Vec<f64>,
    /// Fitted values `ŷ = Xβ`.
    pub fitted: Vec<f64>,
    /// Residuals `y − ŷ` (unweighted).
    pub residuals: Vec<f64>,
    /// Diagonal of the hat matrix of the weighted design `W^½X`: the row sums
    /// of squares of the thin `Q` (kept columns).
    pub leverage: Vec<f64>,
    /// Weighted residual sum of squares `Σ wᵢ eᵢ²`.
    pub sse: f64,
    /// Regression sum of squares `sst − sse` (centred when `has_intercept`).
    pub ssr: f64,
    /// Total sum of squares: `Σ wᵢ (yᵢ − ȳ_w)²` with an intercept, `Σ wᵢ yᵢ²`
    /// without.
    pub sst: f64,
    /// Model degrees of freedom: `rank − 1` with an intercept, else `rank`.
    pub df_model: f64,
    /// Residual degrees of freedom `n − rank`.
    pub df_resid: f64,
    /// Residual standard deviation `s = sqrt(sse / df_resid)`.
    pub sigma: f64,
    /// `R² = 1 − sse/sst`.
    pub r_squared: f64,
    /// `1 − (1 − R²)(n − c)/df_resid`, `c = 1` with an intercept, else 0
    /// (the statsmodels convention).
    pub adj_r_squared: f64,
    /// `F = (ssr/df_model) / (sse/df_resid)`; NaN when `df_model = 0`.
    pub f_statistic: f64,
    /// Upper-tail probability of `F` on (`df_model`, `df_resid`) df.
    pub f_p_value: f64,
    /// Gaussian log-likelihood at the estimate with `σ̂² = sse/n`:
    /// `−n/2·(ln 2π + ln(sse/n) + 1) + ½ Σ ln wᵢ`.
    pub log_likelihood: f64,
    /// `−2 LL + 2k`, `k = rank` (σ not counted, as in statsmodels).
    pub aic: f64,
    /// `−2 LL + k ln n`, `k = rank`.
    pub bic: f64,
    /// Number of rows.
    pub n: usize,
    /// 2-norm condition number of the weighted design's kept columns, each
    /// scaled to unit length: `σ_max/σ_min` of `R·diag(1/‖R e_j‖)` from a
    /// singular value decomposition of that small `rank × rank` matrix
    /// (exact up to rounding, not an estimate; `Q` is orthogonal so the
    /// singular values are those of the scaled design).
    pub condition_number: f64,
    /// The weights the fit used (copied), for the weighted diagnostics.
    pub weights: Option<Vec<f64>>,
    /// Whether the problem was declared to contain an intercept.
    pub has_intercept: bool,
    /// How the refinement went (iterations, method used for the covariance).
    pub refinement: Refinement,
}

/// Why a least squares problem could not be solved.
#[derive(Clone, Debug, PartialEq)]
pub enum LsError {
    /// Fewer rows than design columns.
    TooFewRows { n: usize, p: usize },
    /// A value in this row (zero-based) of the response or the design is not
    /// a finite number.
    NonFinite { row: usize },
    /// The design has no columns.
    NoColumns,
    /// A weight in this row (zero-based) is not a finite positive number.
    BadWeight { row: usize },
    /// A buffer has the wrong length for the stated `n` and `p`.
    DimensionMismatch { what: &'static str, expected: usize, found: usize },
    /// Every column of the design is zero, so nothing can be estimated.
    ZeroDesign,
}

impl fmt::Display for LsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            LsError::TooFewRows { n, p } => write!(
                f,
                "too few rows: {n} observation{} for {p} model column{}; at least as many rows as columns are needed",
                if *n == 1 { "" } else { "s" },
                if *p == 1 { "" } else { "s" }
            ),
            LsError::NonFinite { row } => write!(
                f,
                "row {} holds a value that is not a finite number (empty, infinite or not a number)",
                row + 1
            ),
            LsError::NoColumns => write!(f, "the model has no columns to estimate"),
            LsError::BadWeight { row } => write!(
                f,
                "the weight in row {} is not a finite positive number",
                row + 1
            ),
            LsError::DimensionMismatch { what, expected, found } => write!(
                f,
                "internal size mismatch: {what} has {found} values where {expected} were expected"
            ),
            LsError::ZeroDesign => {
                write!(f, "every model column is zero, so no coefficient can be estimated")
            }
        }
    }
}

impl std::error::Error for LsError {}
