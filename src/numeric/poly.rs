//! Least squares with polynomial terms: design columns that are whole
//! powers `x^e` of a base column `x` (`Light + Light^2`, `#polynomial`).
//!
//! Raw powers are badly conditioned (NIST StRD Filip: degree 10, a scaled
//! condition number near 1e10 for the monomials, so a pivoted QR in double
//! keeps about 7 digits), and a power column rounded to `f64` is already a
//! perturbation of the problem. Here the fit is done in a working basis:
//!
//! - When the model has an intercept and a base's exponents are exactly
//!   `1..=K`, the base is centred and scaled, `t = (x − c)/s` with `c` the
//!   midpoint of the range (rounded to `f64`) and `s` a power of two near the
//!   half-range, so `t ∈ (−2, 2)`; the working columns are `t^e`, formed in
//!   double-double from the exact `f64` base (`x − c` by TwoSum, division by
//!   a power of two exact). The span is unchanged: `{1, x, …, x^K}` and
//!   `{1, t, …, t^K}` span the same space (Forsythe 1957, "Generation and
//!   use of orthogonal polynomials for data-fitting with a digital
//!   computer", J. SIAM 5, 74–88, on centring and scaling before fitting
//!   polynomials; Björck, *Numerical Methods for Least Squares Problems*
//!   (1996), §4.5).
//! - Otherwise (no intercept, or a gap such as `x + x^3`), the working
//!   columns are the powers `x^e` themselves, formed in double-double.
//!
//! The QR factorisation uses the working columns rounded to `f64`; the
//! iterative refinement evaluates residuals with the double-double columns,
//! so it converges to the solution of the exact problem. The coefficients
//! `γ` and covariance `C_γ` of the working basis are then converted to the
//! user's basis in double-double by the binomial theorem: with
//! `t^j = s^{−j} Σ_{i≤j} C(j,i) (−c)^{j−i} x^i`, `Z = X N`, so `β = N γ` and
//! `C_β = N C_γ Nᵀ` (and `x^e = Σ_{j≤e} C(e,j) c^{e−j} s^j t^j`, `X = Z M`,
//! used to map rounded coefficients back when checking an exact fit).
//!
//! Rank is decided in the working basis (see `docs/accuracy.md`). When a
//! centred base's aliased powers are not all its highest ones, or the
//! intercept itself is aliased, the centred spans no longer match and the
//! fit is redone without centring. The multipliers of `LsFit::alias_of`
//! are those of the working basis (the kept terms they name are the same).
//! `LsFit::condition_number` is that of the working basis.

use super::dd::Dd;
use super::lsq::{core, mat_vec, Basis};
use super::{LsError, LsFit, LsProblem};

/// Design columns that are whole powers of one base column.
#[derive(Clone, Copy, Debug)]
pub struct PowerGroup<'a> {
    /// The base column `x`, one value per row, finite.
    pub base: &'a [f64],
    /// `(design column, exponent ≥ 1)` for every power of this base in the
    /// design; the design's values in those columns are ignored (the powers
    /// are formed from `base`).
    pub columns: &'a [(usize, u32)],
}

/// `(1/s) · (x − c)` exactly as a double-double (`s` a power of two).
fn centred(x: f64, c: f64, inv_s: f64) -> Dd {
    Dd::from_sum(x, -c).mul_f64(inv_s)
}

/// `v^e` in double-double by binary powering.
fn dd_pow(v: Dd, e: u32) -> Dd {
    let mut result = Dd::ONE;
    let mut b = v;
    let mut k = e;
    while k > 0 {
        if k & 1 == 1 {
            result = result * b;
        }
        k >>= 1;
        if k > 0 {
            b = b * b;
        }
    }
    result
}

/// Binomial coefficient `C(n, k)` as a double (exact below 2^53).
fn binom(n: u32, k: u32) -> f64 {
    let mut r = 1.0f64;
    for i in 0..k {
        r = r * f64::from(n - i) / f64::from(i + 1);
    }
    r.round()
}

/// A power of two near `v > 0` (`2^round(log2 v)`).
fn pow2_near(v: f64) -> f64 {
    2f64.powi(v.log2().round() as i32)
}

/// Fits `problem` with the power columns of `groups` formed from their base
/// columns (see the module notes). `intercept_column` is the design column
/// of ones, when the model has one. With no groups this is
/// [`super::least_squares`].
pub fn least_squares_powers(problem: &LsProblem, groups: &[PowerGroup], intercept_column: Option<usize>) -> Result<LsFit, LsError> {
    let (n, p) = (problem.n, problem.p);
    if groups.is_empty() {
        return super::least_squares(problem);
    }
    let mut seen = vec![false; p];
    for g in groups {
        if g.base.len() != n {
            return Err(LsError::DimensionMismatch { what: "a power's base column", expected: n, found: g.base.len() });
        }
        if let Some(row) = g.base.iter().position(|v| !v.is_finite()) {
            return Err(LsError::NonFinite { row });
        }
        for &(c, e) in g.columns {
            if c >= p || e == 0 || seen[c] || Some(c) == intercept_column {
                return Err(LsError::DimensionMismatch { what: "a power column's index", expected: p, found: c });
            }
            seen[c] = true;
        }
    }
    if let Some(i) = intercept_column {
        if i >= p {
            return Err(LsError::DimensionMismatch { what: "the intercept column's index", expected: p, found: i });
        }
    }
    match fit_in_basis(problem, groups, intercept_column, true)? {
        Some(f) => Ok(f),
        None => match fit_in_basis(problem, groups, intercept_column, false)? {
            Some(f) => Ok(f),
            // Invariant: without centring the basis change is diagonal
            // (identity), which is always valid.
            None => unreachable!("an uncentred power basis is always valid"),
        },
    }
}

/// One attempt; `Ok(None)` when centring was used but the aliased columns
/// make the centred span differ from the user's.
fn fit_in_basis(problem: &LsProblem, groups: &[PowerGroup], intercept: Option<usize>, allow_centre: bool) -> Result<Option<LsFit>, LsError> {
    let (n, p) = (problem.n, problem.p);
    let mut z_hi = problem.x.to_vec();
    let mut z_lo = vec![0.0; n * p];
    let mut n_mat = vec![Dd::ZERO; p * p];
    let mut m_mat = vec![Dd::ZERO; p * p];
    for j in 0..p {
        n_mat[j * p + j] = Dd::ONE;
        m_mat[j * p + j] = Dd::ONE;
    }
    // (group, exponent → column) for the centred groups.
    let mut centred_groups: Vec<Vec<usize>> = Vec::new();
    for g in groups {
        let max_e = g.columns.iter().map(|c| c.1).max().unwrap_or(0);
        let mut by_e = vec![usize::MAX; max_e as usize + 1];
        for &(c, e) in g.columns {
            by_e[e as usize] = c;
        }
        let lo = g.base.iter().cloned().fold(f64::INFINITY, f64::min);
        let hi = g.base.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
        let half = 0.5 * (hi - lo);
        let contiguous = (1..=max_e as usize).all(|e| by_e[e] != usize::MAX);
        let centre = allow_centre && intercept.is_some() && contiguous && half > 0.0 && half.is_finite();
        let (c, s) = if centre { (0.5 * lo + 0.5 * hi, pow2_near(half)) } else { (0.0, 1.0) };
        let inv_s = 1.0 / s;
        for &(col, e) in g.columns {
            for i in 0..n {
                let v = dd_pow(centred(g.base[i], c, inv_s), e);
                z_hi[col * n + i] = v.hi;
                z_lo[col * n + i] = v.lo;
            }
        }
        if let (true, Some(ic)) = (centre, intercept) {
            // N: t^j = s^{−j} Σ_{i≤j} C(j,i)(−c)^{j−i} x^i; M: x^e = Σ_{j≤e} C(e,j) c^{e−j} s^j t^j.
            let col_of = |e: usize| if e == 0 { ic } else { by_e[e] };
            for j in 1..=max_e {
                let zj = col_of(j as usize);
                n_mat[zj * p + zj] = Dd::ZERO;
                m_mat[zj * p + zj] = Dd::ZERO;
                let s_pow_neg = dd_pow(Dd::new(inv_s), j);
                for i in 0..=j {
                    let xi = col_of(i as usize);
                    let b = Dd::new(binom(j, i));
                    n_mat[zj * p + xi] = n_mat[zj * p + xi] + b * dd_pow(Dd::new(-c), j - i) * s_pow_neg;
                }
                // Column x^j of M: coefficients on t^i, i ≤ j.
                for i in 0..=j {
                    let ti = col_of(i as usize);
                    let b = Dd::new(binom(j, i));
                    m_mat[zj * p + ti] = m_mat[zj * p + ti] + b * dd_pow(Dd::new(c), j - i) * dd_pow(Dd::new(s), i);
                }
            }
            centred_groups.push(by_e);
        }
    }
    let work = LsProblem { x: &z_hi, ..*problem };
    let basis = Basis { n_mat, m_mat };
    let any_centred = !centred_groups.is_empty();
    let res = core(&work, Some(&z_lo), any_centred.then_some(&basis))?;
    let mut fit = res.fit;
    if !any_centred {
        return Ok(Some(fit));
    }
    // Validity: the intercept kept, and each centred base's aliased powers
    // are its highest ones.
    if let Some(ic) = intercept {
        if fit.aliased[ic] {
            return Ok(None);
        }
    }
    for by_e in &centred_groups {
        let mut seen_aliased = false;
        for &c in &by_e[1..] {
            if fit.aliased[c] {
                seen_aliased = true;
            } else if seen_aliased {
                return Ok(None);
            }
        }
    }
    // β = N γ, C_β = N C_γ Nᵀ in double-double.
    let beta = mat_vec(&basis.n_mat, &res.beta, p);
    let mut t = vec![Dd::ZERO; p * p]; // T = N C (column-major)
    for j in 0..p {
        t[j * p..(j + 1) * p].copy_from_slice(&mat_vec(&basis.n_mat, &res.cov[j * p..(j + 1) * p], p));
    }
    // C_β = T Nᵀ: column k of C_β = Σ_j T[:, j] N[k, j] = N · (row k of T)ᵀ.
    let mut cov = vec![Dd::ZERO; p * p];
    for kcol in 0..p {
        let row: Vec<Dd> = (0..p).map(|j| t[j * p + kcol]).collect();
        cov[kcol * p..(kcol + 1) * p].copy_from_slice(&mat_vec(&basis.n_mat, &row, p));
    }
    for j in 0..p {
        if fit.aliased[j] {
            continue;
        }
        fit.coefficients[j] = beta[j].to_f64();
        fit.std_errors[j] = cov[j * p + j].sqrt().to_f64();
        for i in 0..p {
            if !fit.aliased[i] {
                fit.covariance[j * p + i] = cov[j * p + i].to_f64();
            }
        }
    }
    Ok(Some(fit))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn binomials_and_powers() {
        // Pascal's triangle (common practice).
        assert_eq!(binom(10, 5), 252.0);
        assert_eq!(binom(5, 0), 1.0);
        let v = dd_pow(Dd::new(3.0), 5);
        assert_eq!(v.to_f64(), 243.0);
    }

    #[test]
    fn quadratic_with_exact_coefficients_is_recovered() {
        // y = 3 − 2x + 0.5x² exactly on invented points (light hours):
        // the fit must return the coefficients to the last digit (common
        // practice: an exactly representable exact fit).
        let x: Vec<f64> = (0..12).map(|i| 6.0 + 0.5 * i as f64).collect();
        let y: Vec<f64> = x.iter().map(|v| 3.0 - 2.0 * v + 0.5 * v * v).collect();
        let n = x.len();
        let mut design = vec![1.0; n];
        design.extend_from_slice(&x);
        design.extend(x.iter().map(|v| v * v));
        let prob = LsProblem { x: &design, n, p: 3, y: &y, weights: None, has_intercept: true };
        let groups = [PowerGroup { base: &x, columns: &[(1, 1), (2, 2)] }];
        let fit = least_squares_powers(&prob, &groups, Some(0)).expect("well posed");
        assert_eq!(fit.coefficients, vec![3.0, -2.0, 0.5]);
        assert_eq!(fit.rank, 3);
    }

    #[test]
    fn weight_two_equals_a_duplicated_row_with_powers() {
        // A weight of 2 is the same as the row given twice (common practice:
        // the definition of weighted least squares), here for a cubic in a
        // centred basis; invented data (light hours → yield).
        let x: Vec<f64> = (0..15).map(|i| 5.5 + 0.7 * i as f64).collect();
        let y: Vec<f64> = x.iter().enumerate().map(|(i, v)| 1.0 + 0.3 * v - 0.02 * v * v + 0.001 * v * v * v + 0.05 * ((i * 7 % 5) as f64 - 2.0)).collect();
        let design = |x: &[f64]| -> Vec<f64> {
            let mut d = vec![1.0; x.len()];
            for e in 1..=3 {
                d.extend(x.iter().map(|v| v.powi(e)));
            }
            d
        };
        let cols: [(usize, u32); 3] = [(1, 1), (2, 2), (3, 3)];
        let w: Vec<f64> = (0..15).map(|i| if i == 4 { 2.0 } else { 1.0 }).collect();
        let dx = design(&x);
        let prob = LsProblem { x: &dx, n: 15, p: 4, y: &y, weights: Some(&w), has_intercept: true };
        let wfit = least_squares_powers(&prob, &[PowerGroup { base: &x, columns: &cols }], Some(0)).expect("well posed");
        let mut x2 = x.clone();
        let mut y2 = y.clone();
        x2.push(x[4]);
        y2.push(y[4]);
        let dx2 = design(&x2);
        let prob2 = LsProblem { x: &dx2, n: 16, p: 4, y: &y2, weights: None, has_intercept: true };
        let dfit = least_squares_powers(&prob2, &[PowerGroup { base: &x2, columns: &cols }], Some(0)).expect("well posed");
        for (a, b) in wfit.coefficients.iter().zip(&dfit.coefficients) {
            assert!(((a - b) / b).abs() < 1e-13, "{a} vs {b}");
        }
        assert!(((wfit.sse - dfit.sse) / dfit.sse).abs() < 1e-13);
    }
}
