//! Checks and standard errors for ordered data: the rows in the order of a
//! time or sequence column, optionally within groups ([`Sequence`]); the
//! Durbin–Watson statistic over neighbours within a group and its exact
//! p-value by Imhof's numerical inversion ([`durbin_watson_p`], [`imhof`]);
//! the Breusch–Godfrey test ([`breusch_godfrey`]); Newey–West and clustered
//! sandwich covariances ([`newey_west_covariance`],
//! [`clustered_covariance`]).
//!
//! As in [`super::diagnostics`], a weighted fit is checked on its weighted
//! residuals `uᵢ = √wᵢ·eᵢ` and weighted design `W^½X`.

use super::diagnostics::{sandwich, scaled_design, weighted_residuals};
use super::inference::chi2_sf;
use super::{least_squares, LsFit, LsProblem};

/// The largest number of rows for which the exact Durbin–Watson p-value is
/// computed: it needs the eigenvalues of an `n × n` matrix (O(n³) work;
/// measured at about 1 s for 300 rows and 8 s for 600 in an unoptimised
/// build, far less in a release build). Beyond it the p-value is left out
/// with a note, and the Breusch–Godfrey test stands in.
pub const DW_EXACT_MAX_ROWS: usize = 500;

/// The rows in the order the residual checks use, and which neighbours
/// count: rows sorted by their group (when there are groups), then by the
/// order column (when there is one); ties keep the rows' order as sent
/// (a stable sort). Two rows are neighbours when they are next to each
/// other in this order and in the same group.
#[derive(Clone, Debug, PartialEq)]
pub struct Sequence {
    /// Row indices (as sent) in sequence order.
    pub rows: Vec<usize>,
    /// The group number (0, 1, …) of each position in `rows`.
    pub group: Vec<usize>,
    /// How many groups (1 without a grouping column).
    pub groups: usize,
    /// How many rows share their order value with the row before them in
    /// the same group (ties, kept in the rows' order).
    pub ties: usize,
}

impl Sequence {
    /// The sequence of `n` rows by the optional `order` and `groups`
    /// values (each of length `n`; groups compared as numbers, such as the
    /// codes of a text column's levels).
    pub fn new(n: usize, order: Option<&[f64]>, groups: Option<&[f64]>) -> Sequence {
        let key = |v: Option<&[f64]>, i: usize| v.map_or(0.0, |v| v[i]);
        let mut rows: Vec<usize> = (0..n).collect();
        rows.sort_by(|&a, &b| key(groups, a).total_cmp(&key(groups, b)).then(key(order, a).total_cmp(&key(order, b))));
        let mut group = Vec::with_capacity(n);
        let mut g = 0;
        let mut ties = 0;
        for t in 0..n {
            if t > 0 {
                let (a, b) = (rows[t - 1], rows[t]);
                if key(groups, a) != key(groups, b) {
                    g += 1;
                } else if order.is_some() && key(order, a) == key(order, b) {
                    ties += 1;
                }
            }
            group.push(g);
        }
        let groups = if n == 0 { 0 } else { g + 1 };
        Sequence { rows, group, groups, ties }
    }

    /// Whether position `t` has a neighbour `lag` places back in its group.
    pub fn linked(&self, t: usize, lag: usize) -> bool {
        lag > 0 && t >= lag && self.group[t] == self.group[t - lag]
    }

    /// The group number of each row as sent.
    pub fn group_of_rows(&self) -> Vec<usize> {
        let mut out = vec![0; self.rows.len()];
        for (t, &r) in self.rows.iter().enumerate() {
            out[r] = self.group[t];
        }
        out
    }
}

/// The Durbin–Watson statistic over neighbours in `seq`:
/// `d = Σ (uₜ − uₜ₋₁)² / Σ uₜ²`, the numerator over pairs of neighbours
/// within a group only, the denominator over every row (Durbin & Watson
/// 1950, *Biometrika* 37, 409–428, eq. 3, summed within groups as for
/// panel data in Bhargava, Franzini & Narendranathan 1982, *Review of
/// Economic Studies* 49, 533–549). NaN for fewer than two rows or when
/// every residual is zero.
pub fn durbin_watson(u: &[f64], seq: &Sequence) -> f64 {
    if u.len() < 2 {
        return f64::NAN;
    }
    let num: f64 = (1..seq.rows.len()).filter(|&t| seq.linked(t, 1)).map(|t| (u[seq.rows[t]] - u[seq.rows[t - 1]]).powi(2)).sum();
    let den: f64 = u.iter().map(|v| v * v).sum();
    if den > 0.0 {
        num / den
    } else {
        f64::NAN
    }
}

/// A probability computed by numerical integration, with a bound on its
/// error (truncation of the range plus the quadrature's own estimate).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Integrated {
    /// The probability.
    pub probability: f64,
    /// Bound on its absolute error.
    pub error: f64,
}

/// `P(Σ λᵢ zᵢ² ≤ 0)` for independent standard normal `zᵢ`, by Imhof's
/// inversion of the characteristic function (Imhof, J. P. (1961),
/// "Computing the distribution of quadratic forms in normal variables",
/// *Biometrika* 48, 419–426, eq. 3.2 with all multiplicities 1 and no
/// non-centrality):
///
/// `P(Q > x) = ½ + (1/π) ∫₀^∞ sin θ(u) / (u ρ(u)) du`,
/// `θ(u) = ½ Σ arctan(λᵢu) − ½xu`, `ρ(u) = Π (1 + λᵢ²u²)^¼`, here `x = 0`.
///
/// Eigenvalues with `|λ| ≤ 1e-9·max|λ|` are taken as the exact zeros they
/// are in the Durbin–Watson problem (they add nothing to `Q`). The range is
/// cut at `U` where Imhof's truncation bound (his eq. 3.3)
/// `1/(π k U^k Π|λᵢ|^½)`, `k = m/2` for `m` eigenvalues, is at most 1e-13;
/// `[0, U]` is split into panels `[0, 1/max|λ|]`, then each twice as long as
/// the last, each integrated by adaptive 15-point Gauss–Kronrod (halving a
/// panel until the Kronrod and Gauss values agree to 1e-14 of the panel's
/// share). The error bound is the truncation bound plus the sum of
/// `|Kronrod − Gauss|` over the accepted panels, divided by π.
/// `None` without eigenvalues or when one is not finite.
pub fn imhof(lambda: &[f64]) -> Option<Integrated> {
    let big = lambda.iter().fold(0.0f64, |m, l| m.max(l.abs()));
    if !big.is_finite() || big == 0.0 {
        return None;
    }
    let l: Vec<f64> = lambda.iter().copied().filter(|v| v.abs() > 1e-9 * big).collect();
    if l.iter().all(|v| *v > 0.0) {
        return Some(Integrated { probability: 0.0, error: 0.0 });
    }
    if l.iter().all(|v| *v < 0.0) {
        return Some(Integrated { probability: 1.0, error: 0.0 });
    }
    let k = l.len() as f64 / 2.0;
    let half_log_prod: f64 = l.iter().map(|v| 0.5 * v.abs().ln()).sum();
    let tol = 1e-13;
    let upper = ((-(std::f64::consts::PI * k * tol).ln() - half_log_prod) / k).exp();
    let truncation = 1.0 / (std::f64::consts::PI * k * (k * upper.ln() + half_log_prod).exp());
    let f = |u: f64| -> f64 {
        if u == 0.0 {
            return 0.5 * l.iter().sum::<f64>();
        }
        let (mut theta, mut log_rho) = (0.0, 0.0);
        for v in &l {
            theta += 0.5 * (v * u).atan();
            log_rho += 0.25 * (v * v * u * u).ln_1p();
        }
        theta.sin() / (u * log_rho.exp())
    };
    let (mut total, mut err) = (0.0, 0.0);
    let (mut a, mut b) = (0.0, (1.0 / big).min(upper));
    while a < upper {
        let (s, e) = adaptive_gk15(&f, a, b, 1e-14, 0);
        total += s;
        err += e;
        a = b;
        b = (2.0 * b).min(upper);
    }
    let pi = std::f64::consts::PI;
    let above = 0.5 + total / pi;
    Some(Integrated { probability: (1.0 - above).clamp(0.0, 1.0), error: truncation + err / pi })
}

/// Kronrod 15-point nodes on [−1, 1] (non-negative half) and weights, and
/// the embedded 7-point Gauss weights (Piessens et al. 1983, *QUADPACK*,
/// routine QK15).
const XGK: [f64; 8] = [
    0.991_455_371_120_812_6,
    0.949_107_912_342_758_5,
    0.864_864_423_359_769_1,
    0.741_531_185_599_394_4,
    0.586_087_235_467_691_1,
    0.405_845_151_377_397_2,
    0.207_784_955_007_898_5,
    0.0,
];
const WGK: [f64; 8] = [
    0.022_935_322_010_529_22,
    0.063_092_092_629_978_55,
    0.104_790_010_322_250_2,
    0.140_653_259_715_525_9,
    0.169_004_726_639_267_9,
    0.190_350_578_064_785_4,
    0.204_432_940_075_298_9,
    0.209_482_141_084_727_8,
];
const WG: [f64; 4] = [0.129_484_966_168_869_7, 0.279_705_391_489_276_7, 0.381_830_050_505_118_9, 0.417_959_183_673_469_4];

/// One Gauss–Kronrod 15 step on `[a, b]`: (Kronrod value, |Kronrod − Gauss|).
fn gk15(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> (f64, f64) {
    let c = 0.5 * (a + b);
    let h = 0.5 * (b - a);
    let fc = f(c);
    let mut k = WGK[7] * fc;
    let mut g = WG[3] * fc;
    for j in 0..7 {
        let s = f(c - h * XGK[j]) + f(c + h * XGK[j]);
        k += WGK[j] * s;
        if j % 2 == 1 {
            g += WG[j / 2] * s;
        }
    }
    (k * h, ((k - g) * h).abs())
}

/// Adaptive Gauss–Kronrod: halves `[a, b]` until the estimate is below
/// `tol` per unit of the original panel's share (at most 40 halvings).
fn adaptive_gk15(f: &dyn Fn(f64) -> f64, a: f64, b: f64, tol: f64, depth: u32) -> (f64, f64) {
    let (k, e) = gk15(f, a, b);
    if e <= tol.max(1e-16 * k.abs()) || depth >= 40 {
        return (k, e);
    }
    let m = 0.5 * (a + b);
    let (k1, e1) = adaptive_gk15(f, a, m, 0.5 * tol, depth + 1);
    let (k2, e2) = adaptive_gk15(f, m, b, 0.5 * tol, depth + 1);
    (k1 + k2, e1 + e2)
}

/// The exact p-value of the Durbin–Watson statistic `d` against positive
/// first-order autocorrelation of the errors: `P(D ≤ d)` when the errors
/// are independent and normal with constant variance, given the design.
///
/// With `M = I − QQᵀ` the residual maker of the (weighted, kept) design
/// and `A` the matrix of the statistic's numerator (neighbours within a
/// group, [`durbin_watson`]), `D = zᵀMAMz / zᵀMz`, so
/// `P(D ≤ d) = P(zᵀ M(A − dI)M z ≤ 0)`, a quadratic form in normal
/// variables whose weights are the eigenvalues of `M(A − dI)M`; that
/// probability is [`imhof`]'s. `Q` comes from a Householder QR of the
/// design in sequence order, the eigenvalues from a symmetric eigensolver.
/// `None` above [`DW_EXACT_MAX_ROWS`] rows, without a residual degree of
/// freedom or when `d` is not finite.
pub fn durbin_watson_p(fit: &LsFit, x: &[f64], seq: &Sequence, d: f64) -> Option<Integrated> {
    let n = fit.n;
    if !d.is_finite() || !(2..=DW_EXACT_MAX_ROWS).contains(&n) || seq.rows.len() != n {
        return None;
    }
    let (a, kept, _) = scaled_design(fit, x)?;
    let k = kept.len();
    if k >= n {
        return None;
    }
    let xs = nalgebra::DMatrix::from_fn(n, k, |t, j| a[j * n + seq.rows[t]]);
    let q = xs.qr().q();
    // C = A − dI, tridiagonal in sequence order.
    let mut diag = vec![-d; n];
    let mut off = vec![0.0; n]; // off[t]: C[t, t−1]
    for t in 1..n {
        if seq.linked(t, 1) {
            diag[t] += 1.0;
            diag[t - 1] += 1.0;
            off[t] = -1.0;
        }
    }
    let c_times = |m: &nalgebra::DMatrix<f64>| {
        nalgebra::DMatrix::from_fn(n, m.ncols(), |t, j| {
            let mut s = diag[t] * m[(t, j)];
            if t > 0 {
                s += off[t] * m[(t - 1, j)];
            }
            if t + 1 < n {
                s += off[t + 1] * m[(t + 1, j)];
            }
            s
        })
    };
    // B = M C M = C − CQQᵀ − QQᵀC + Q(QᵀCQ)Qᵀ.
    let cq = c_times(&q);
    let qcq = q.transpose() * &cq;
    let mut b = nalgebra::DMatrix::from_fn(n, n, |i, j| {
        if i == j {
            diag[i]
        } else if i == j + 1 {
            off[i]
        } else if j == i + 1 {
            off[j]
        } else {
            0.0
        }
    });
    b -= &cq * q.transpose();
    b -= &q * cq.transpose();
    b += &q * (qcq * q.transpose());
    let bs = (&b + b.transpose()) * 0.5;
    let ev = bs.symmetric_eigenvalues();
    imhof(ev.as_slice())
}

/// The Breusch–Godfrey test of no autocorrelation up to `lags`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BreuschGodfrey {
    /// The LM statistic `n·R²`.
    pub statistic: f64,
    /// Its upper-tail χ² p-value on `lags` degrees of freedom.
    pub p_value: f64,
    /// The number of lags tested.
    pub lags: usize,
}

/// The Breusch–Godfrey test (Breusch, T. S. (1978), "Testing for
/// autocorrelation in dynamic linear models", *Australian Economic Papers*
/// 17, 334–355; Godfrey, L. G. (1978), "Testing against general
/// autoregressive and moving average error models when the regressors
/// include lagged dependent variables", *Econometrica* 46, 1293–1301), in
/// its Lagrange-multiplier form: the residuals `uₜ` are regressed on the
/// model's columns and on `uₜ₋₁ … uₜ₋ₗ` (in sequence order; a lag that
/// reaches before the start of the row's group is 0), with a constant
/// added when the model has none; `LM = n·R²` (R² about the mean) is
/// referred to χ² with `lags` degrees of freedom. `None` when the
/// auxiliary regression cannot be fitted.
pub fn breusch_godfrey(fit: &LsFit, x: &[f64], seq: &Sequence, lags: usize) -> Option<BreuschGodfrey> {
    let n = fit.n;
    let p = fit.coefficients.len();
    if lags == 0 || seq.rows.len() != n || x.len() != n * p {
        return None;
    }
    let u = weighted_residuals(fit);
    let sw: Option<Vec<f64>> = fit.weights.as_ref().map(|w| w.iter().map(|v| v.sqrt()).collect());
    let mut z = Vec::new();
    let mut cols = 0;
    for j in (0..p).filter(|&j| !fit.aliased[j]) {
        let col = &x[j * n..(j + 1) * n];
        match &sw {
            Some(sw) => z.extend(col.iter().zip(sw).map(|(v, s)| v * s)),
            None => z.extend_from_slice(col),
        }
        cols += 1;
    }
    if !fit.has_intercept {
        z.extend(std::iter::repeat_n(1.0, n));
        cols += 1;
    }
    for l in 1..=lags {
        let mut col = vec![0.0; n];
        for t in 0..n {
            if seq.linked(t, l) {
                col[seq.rows[t]] = u[seq.rows[t - l]];
            }
        }
        z.extend(col);
        cols += 1;
    }
    if n <= cols {
        return None;
    }
    let aux = least_squares(&LsProblem { x: &z, n, p: cols, y: &u, weights: None, has_intercept: true }).ok()?;
    let statistic = n as f64 * aux.r_squared;
    statistic.is_finite().then(|| BreuschGodfrey { statistic, p_value: chi2_sf(statistic, lags as f64), lags })
}

/// The default number of lags for Newey–West standard errors and the
/// Breusch–Godfrey test: `⌊4(n/100)^(2/9)⌋`, at least 1 (Newey, W. K. &
/// West, K. D. (1994), "Automatic lag selection in covariance matrix
/// estimation", *Review of Economic Studies* 61, 631–653: the rule of thumb
/// for the Bartlett kernel).
pub fn default_lags(n: usize) -> usize {
    ((4.0 * (n as f64 / 100.0).powf(2.0 / 9.0)).floor() as usize).max(1)
}

/// The scores `gₜ = uₜ qₜ` (row `t` of the thin `Q` times its residual),
/// `n × k` row-major.
fn scores(qcols: &[&[f64]], u: &[f64]) -> Vec<f64> {
    let k = qcols.len();
    let n = u.len();
    let mut g = vec![0.0; n * k];
    for i in 0..n {
        for a in 0..k {
            g[i * k + a] = u[i] * qcols[a][i];
        }
    }
    g
}

/// Newey–West autocorrelation- and heteroscedasticity-consistent
/// covariance (Newey, W. K. & West, K. D. (1987), "A simple, positive
/// semi-definite, heteroskedasticity and autocorrelation consistent
/// covariance matrix", *Econometrica* 55, 703–708): the sandwich with meat
/// `Σₜ gₜgₜᵀ + Σₗ₌₁ᴸ wₗ Σₜ (gₜgₜ₋ₗᵀ + gₜ₋ₗgₜᵀ)`, Bartlett weights
/// `wₗ = 1 − l/(L + 1)`, `gₜ = uₜxₜ` on the weighted design, the pairs
/// `(t, t − l)` neighbours `l` places apart in `seq` within one group (with
/// groups, the panel form: lags never cross groups). No small-sample
/// factor. `p × p` column-major, NaN for aliased columns.
pub fn newey_west_covariance(fit: &LsFit, x: &[f64], seq: &Sequence, lags: usize) -> Vec<f64> {
    let p = fit.coefficients.len();
    let Some((a, kept, scale)) = scaled_design(fit, x) else { return vec![f64::NAN; p * p] };
    sandwich(fit, a, &kept, &scale, &|qcols: &[&[f64]], u: &[f64]| {
        let k = qcols.len();
        let n = u.len();
        let g = scores(qcols, u);
        let mut m = vec![0.0; k * k];
        for t in 0..n {
            let gt = &g[seq.rows[t] * k..(seq.rows[t] + 1) * k];
            for a in 0..k {
                for b in 0..k {
                    m[b * k + a] += gt[a] * gt[b];
                }
            }
            for l in 1..=lags.min(t) {
                if !seq.linked(t, l) {
                    continue;
                }
                let w = 1.0 - l as f64 / (lags as f64 + 1.0);
                let gs = &g[seq.rows[t - l] * k..(seq.rows[t - l] + 1) * k];
                for a in 0..k {
                    for b in 0..k {
                        m[b * k + a] += w * (gt[a] * gs[b] + gs[a] * gt[b]);
                    }
                }
            }
        }
        m
    })
}

/// Clustered ("cluster-robust") covariance (Liang, K.-Y. & Zeger, S. L.
/// (1986), "Longitudinal data analysis using generalized linear models",
/// *Biometrika* 73, 13–22): the sandwich with meat
/// `c Σ_G s_G s_Gᵀ`, `s_G = Σ_{i∈G} uᵢxᵢ` over the rows of each group, and
/// the small-sample factor `c = G/(G − 1) · (n − 1)/(n − k)` (`G` groups,
/// `k` the rank). `group[i]` is the group number (0..G) of row `i`.
/// `p × p` column-major, NaN for aliased columns or fewer than two groups.
pub fn clustered_covariance(fit: &LsFit, x: &[f64], group: &[usize]) -> Vec<f64> {
    let p = fit.coefficients.len();
    let n = fit.n;
    let g_count = group.iter().max().map_or(0, |m| m + 1);
    let Some((a, kept, scale)) = scaled_design(fit, x) else { return vec![f64::NAN; p * p] };
    if g_count < 2 || group.len() != n {
        return vec![f64::NAN; p * p];
    }
    let (gf, nf, kf) = (g_count as f64, n as f64, kept.len() as f64);
    let c = gf / (gf - 1.0) * (nf - 1.0) / (nf - kf);
    sandwich(fit, a, &kept, &scale, &|qcols: &[&[f64]], u: &[f64]| {
        let k = qcols.len();
        let g = scores(qcols, u);
        let mut sums = vec![0.0; g_count * k];
        for (i, &gi) in group.iter().enumerate() {
            for a in 0..k {
                sums[gi * k + a] += g[i * k + a];
            }
        }
        let mut m = vec![0.0; k * k];
        for s in sums.chunks(k) {
            for a in 0..k {
                for b in 0..k {
                    m[b * k + a] += c * s[a] * s[b];
                }
            }
        }
        m
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn imhof_of_two_opposite_weights_is_one_half() {
        // λ = (1, −1): Q = z₁² − z₂² is symmetric about 0, so P(Q ≤ 0) = ½
        // (direct consequence of the symmetry).
        let r = imhof(&[1.0, -1.0]).expect("a probability");
        assert!((r.probability - 0.5).abs() < 1e-10, "{r:?}");
    }

    #[test]
    fn imhof_against_the_closed_form_for_two_weights() {
        // Q = a z₁² − b z₂² ≤ 0 ⇔ |z₁/z₂| ≤ √(b/a): the ratio of two
        // standard normals is Cauchy, so P = (2/π) arctan √(b/a) (a
        // textbook result, derived here; not from a table).
        for (a, b) in [(1.0f64, 3.0f64), (2.5, 0.4), (1.0, 1e-3)] {
            let want = 2.0 / std::f64::consts::PI * (b / a).sqrt().atan();
            let r = imhof(&[a, -b]).expect("a probability");
            assert!((r.probability - want).abs() < 1e-9 && r.error < 1e-6, "{a}, {b}: {r:?} vs {want}");
        }
    }

    #[test]
    fn gauss_kronrod_integrates_a_polynomial_exactly() {
        // GK15 is exact for polynomials up to degree 22 (Kronrod's rule).
        let (v, _) = gk15(&|x: f64| x.powi(10) - 3.0 * x.powi(3), 0.0, 2.0);
        let want = 2f64.powi(11) / 11.0 - 3.0 * 16.0 / 4.0;
        assert!((v - want).abs() < 1e-12 * want.abs(), "{v} vs {want}");
    }

    #[test]
    fn a_sequence_sorts_by_group_then_order_and_keeps_ties() {
        let order = [3.0, 1.0, 2.0, 1.0, 2.0];
        let groups = [1.0, 2.0, 1.0, 1.0, 2.0];
        let s = Sequence::new(5, Some(&order), Some(&groups));
        assert_eq!(s.rows, vec![3, 2, 0, 1, 4]);
        assert_eq!(s.group, vec![0, 0, 0, 1, 1]);
        assert_eq!(s.groups, 2);
        assert!(!s.linked(3, 1) && s.linked(4, 1) && s.linked(2, 2));
        let t = Sequence::new(3, Some(&[1.0, 1.0, 0.0]), None);
        assert_eq!((t.rows.clone(), t.ties), (vec![2, 0, 1], 1));
    }

    #[test]
    fn the_exact_p_value_agrees_with_a_simulation() {
        // A sanity check, not the reference (that is tests/ordered_data.rs
        // against scipy): D for 100,000 draws of independent normal errors
        // on an intercept and trend design of 20 rows; the share with
        // D ≤ d must be within four standard errors of P(D ≤ d).
        let n = 20;
        let x: Vec<f64> = (0..n).map(|_| 1.0).chain((0..n).map(|i| i as f64)).collect();
        let y: Vec<f64> = (0..n).map(|i| ((i * 7) % 5) as f64 - 0.1 * i as f64).collect();
        let fit = least_squares(&LsProblem { x: &x, n, p: 2, y: &y, weights: None, has_intercept: true }).expect("fits");
        let seq = Sequence::new(n, None, None);
        let d = 1.6;
        let exact = durbin_watson_p(&fit, &x, &seq, d).expect("a p-value");
        // Residuals of a draw: z minus its projection on (1, t).
        let (mut state, mut hits, reps) = (0x2545_f491_4f6c_dd1du64, 0usize, 100_000);
        let mut uniform = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64
        };
        let tm = (n as f64 - 1.0) / 2.0;
        let stt: f64 = (0..n).map(|i| (i as f64 - tm).powi(2)).sum();
        for _ in 0..reps {
            let z: Vec<f64> = (0..n)
                .map(|_| (-2.0 * uniform().ln()).sqrt() * (2.0 * std::f64::consts::PI * uniform()).cos())
                .collect();
            let zm = z.iter().sum::<f64>() / n as f64;
            let b = (0..n).map(|i| (i as f64 - tm) * z[i]).sum::<f64>() / stt;
            let e: Vec<f64> = (0..n).map(|i| z[i] - zm - b * (i as f64 - tm)).collect();
            if super::durbin_watson(&e, &seq) <= d {
                hits += 1;
            }
        }
        let share = hits as f64 / reps as f64;
        let se = (exact.probability * (1.0 - exact.probability) / reps as f64).sqrt();
        assert!((share - exact.probability).abs() < 4.0 * se, "simulated {share}, exact {exact:?}");
        assert!(exact.error < 1e-10, "{exact:?}");
    }

    #[test]
    fn default_lags_follow_the_rule() {
        // ⌊4(n/100)^(2/9)⌋: n = 100 gives 4; n = 203 gives ⌊4.68⌋ = 4.
        assert_eq!(default_lags(100), 4);
        assert_eq!(default_lags(203), 4);
        assert_eq!(default_lags(1000), 6);
        assert_eq!(default_lags(3), 1);
    }
}
