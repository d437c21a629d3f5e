//! Inference on a least squares fit: distribution tails and quantiles
//! (thin wrappers over statrs), the coefficient table (t tests and
//! confidence intervals), internally studentized residuals and Cook's
//! distance.
//!
//! Tail probabilities are always computed directly as survival functions
//! (upper tails) from the regularised incomplete beta or gamma function, so
//! a p-value of 1e-300 comes out as 1e-300 rather than `1 − 1 = 0`.
//! Invalid arguments (non-positive or non-finite degrees of freedom, NaN)
//! give NaN, never a panic.

use super::LsFit;
use statrs::distribution::{ChiSquared, ContinuousCDF, Normal};
use statrs::function::beta::beta_reg;
use statrs::function::gamma::ln_gamma;

/// Above this many degrees of freedom the incomplete beta route starts to
/// lose accuracy (statrs evaluates `lnΓ(a+b) − lnΓ(a)` by subtraction:
/// relative error measured at 3e-11 for 1e6 df, 6e-10 for 1e7, 0.2% for
/// 1e12), so [`t_sf`] considers the large-ν expansion instead.
const T_LARGE_DF: f64 = 1e4;

/// Upper tail `P(T > x)` of Student's t with `df` degrees of freedom.
///
/// Formulas, with `ν = df` and `I` the regularised incomplete beta function
/// (statrs `beta_reg`; Abramowitz & Stegun 26.7.1 with 26.5.27, the identity
/// behind statrs' `StudentsT::sf`):
/// - `P(T > |x|) = ½ I_h(ν/2, ½)`, `h = ν/(ν + x²)`, when
///   `h < (ν/2 + 1)/(ν/2 + 5/2)`;
/// - otherwise (small `|x|`) the complementary form
///   `P(T > |x|) = ½ − ½ I_z(½, ν/2)`, `z = x²/(ν + x²)` formed directly.
///   The switch point is the one at which statrs' continued fraction would
///   itself pass to `1 − x` (Numerical Recipes' `betai` rule), so neither
///   form is evaluated through a cancelled `1 − h`;
/// - `|x| > 1e150` (where `h` would underflow): the leading term of the tail,
///   `Γ((ν+1)/2)/(Γ(ν/2)√(νπ)) · ν^((ν−1)/2) · |x|^(−ν)`, relative error
///   `O(x⁻²)`, from integrating the density's leading power (A&S 26.7.1);
/// - `ν > 1e4` where it is the more accurate route (see
///   `expansion_is_better`): the first term of Fisher's expansion in
///   `1/ν` (Fisher, R. A. (1926), "Expansion of 'Student's' integral in
///   powers of n⁻¹", *Metron* 5, 109–112), `Q(x) + φ(x)(x³ + x)/(4ν)` with
///   `Q`, `φ` the standard normal tail (statrs `Normal::sf`) and density;
///   it follows from `P(T > x) = E Q(x√(V/ν))`, `V ~ χ²_ν`, with
///   `E√(V/ν) = 1 − 1/(4ν) + O(ν⁻²)` and `Var √(V/ν) = 1/(2ν) + O(ν⁻²)`.
///   The omitted terms are `O(x⁷φ(x)/ν²)`.
///
/// `x < 0` uses `P(T > x) = 1 − P(T > |x|)`. `df = ∞` gives the standard
/// normal tail.
pub fn t_sf(x: f64, df: f64) -> f64 {
    if x.is_nan() || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if df.is_infinite() {
        return normal_sf(x);
    }
    if x.is_infinite() {
        return if x > 0.0 { 0.0 } else { 1.0 };
    }
    let ax = x.abs();
    let upper = if ax > 1e150 {
        let ln = ln_gamma(0.5 * (df + 1.0)) - ln_gamma(0.5 * df) - 0.5 * (df * std::f64::consts::PI).ln()
            + 0.5 * (df - 1.0) * df.ln()
            - df * ax.ln();
        ln.exp()
    } else if df > T_LARGE_DF && expansion_is_better(ax, df) {
        normal_sf(ax) + normal_pdf(ax) * (ax * ax * ax + ax) / (4.0 * df)
    } else {
        t_upper_beta(ax, df)
    };
    if x >= 0.0 {
        upper
    } else {
        1.0 - upper
    }
}

/// `P(T > ax)` for `0 ≤ ax ≤ 1e150` through the incomplete beta function
/// (the first two cases listed at [`t_sf`]).
fn t_upper_beta(ax: f64, df: f64) -> f64 {
    let h = df / (df + ax * ax);
    let a = 0.5 * df;
    if h < (a + 1.0) / (a + 2.5) {
        0.5 * beta_reg(a, 0.5, h)
    } else {
        0.5 - 0.5 * beta_reg(0.5, a, ax * ax / (df + ax * ax))
    }
}

/// Whether the one-term large-ν expansion in [`t_sf`] is expected to be more
/// accurate than the incomplete beta route at `(x, ν)`: its omitted
/// second-order term, of size about `φ(x)(3x⁷ + 7x⁵ + 5x³ + 3x)/(96ν²)`
/// (Fisher 1926; used here only as an error estimate), must be below the
/// beta route's relative error, taken as `1e-16·ν` (measured: 3e-11 at
/// 1e6 df, 6e-10 at 1e7 df), times the tail `Q(x)`.
fn expansion_is_better(x: f64, df: f64) -> bool {
    let x2 = x * x;
    let poly = x * (3.0 + x2 * (5.0 + x2 * (7.0 + 3.0 * x2)));
    let err2 = normal_pdf(x) * poly / (96.0 * df * df);
    err2 < 1e-16 * df * normal_sf(x)
}

/// Standard normal upper tail (statrs `Normal::sf`, via `erfc`).
fn normal_sf(x: f64) -> f64 {
    // Invariant: mean 0 and standard deviation 1 are valid parameters.
    Normal::new(0.0, 1.0).map(|d| d.sf(x)).unwrap_or(f64::NAN)
}

/// Standard normal density `exp(−x²/2)/√(2π)`.
fn normal_pdf(x: f64) -> f64 {
    (-0.5 * x * x).exp() / (2.0 * std::f64::consts::PI).sqrt()
}

/// Student's t density `Γ((ν+1)/2)/(Γ(ν/2)√(νπ)) (1 + x²/ν)^(−(ν+1)/2)`
/// (A&S 26.7.1), the normal density beyond 1e4 df. Used only for Newton
/// steps, so the lnΓ cancellation at large ν costs speed, not accuracy.
fn t_pdf(x: f64, df: f64) -> f64 {
    if df > T_LARGE_DF {
        return normal_pdf(x);
    }
    let ln = ln_gamma(0.5 * (df + 1.0)) - ln_gamma(0.5 * df) - 0.5 * (df * std::f64::consts::PI).ln()
        - 0.5 * (df + 1.0) * (x * x / df).ln_1p();
    ln.exp()
}

/// Upper tail `P(F > x)` of the F distribution on (`d1`, `d2`) degrees of
/// freedom.
///
/// Formula (Abramowitz & Stegun 26.6.2 with 26.5.2; the identity statrs'
/// `FisherSnedecor::sf` uses): `P(F > x) = I_z(d2/2, d1/2)` with
/// `z = d2/(d2 + d1·x)`, evaluated as `1/(1 + (d1/d2)·x)`. Unlike statrs,
/// which passes `1 − d1x/(d1x + d2)`, `z` is formed without cancellation, so
/// the tail keeps full relative accuracy for large `x` (e.g. the NIST
/// Norris F of 5.4e6).
pub fn f_sf(x: f64, d1: f64, d2: f64) -> f64 {
    if x.is_nan() || !(d1 > 0.0 && d1.is_finite()) || !(d2 > 0.0 && d2.is_finite()) {
        return f64::NAN;
    }
    if x <= 0.0 {
        return 1.0;
    }
    if x.is_infinite() {
        return 0.0;
    }
    // z = d2/(d2 + d1·x) = 1/(1 + (d1/d2)·x): in [0, 1] whatever the sizes
    // (an overflowing product gives z = 0, the correct limit).
    let z = (1.0 / (1.0 + (d1 / d2) * x)).clamp(0.0, 1.0);
    beta_reg(0.5 * d2, 0.5 * d1, z)
}

/// Upper tail `P(X > x)` of the chi-squared distribution with `k` degrees
/// of freedom: statrs `ChiSquared::sf`, the regularised upper incomplete
/// gamma function `Q(k/2, x/2)` (Abramowitz & Stegun 26.4.2).
pub fn chi2_sf(x: f64, k: f64) -> f64 {
    if x.is_nan() || !(k > 0.0 && k.is_finite()) {
        return f64::NAN;
    }
    if x <= 0.0 {
        return 1.0;
    }
    if x.is_infinite() {
        return 0.0;
    }
    ChiSquared::new(k).map(|d| d.sf(x)).unwrap_or(f64::NAN)
}

/// Quantile `t` with `P(T ≤ t) = p` of Student's t on `df` degrees of
/// freedom; `−∞`/`∞` at `p = 0`/`1`, NaN outside `[0, 1]` or for invalid `df`.
///
/// Works on the smaller tail `q = min(p, 1 − p)` and solves `t_sf(t) = q`
/// for `t ≥ 0`, then restores the sign. Start: the normal quantile `z`
/// (statrs `Normal::inverse_cdf`) with the first two Cornish–Fisher terms,
/// `z + (z³ + z)/(4ν) + (5z⁵ + 16z³ + 3z)/(96ν²)` (A&S 26.7.5). A bracket
/// `[lo, hi]` with `t_sf(lo) ≥ q > t_sf(hi)` is grown from it, then Newton
/// steps on `ln t_sf(t) = ln q` (derivative `−pdf/t_sf`), falling back to
/// bisection whenever a step leaves the bracket, until the step is below
/// 1e-15 relative (at most 200 steps). Every evaluation is a bounded
/// [`t_sf`] call, so the search always ends. (statrs' own `inverse_cdf`
/// is not used: its AS 64 iteration has no step limit and was seen not to
/// return for very large `df`.)
pub fn t_quantile(p: f64, df: f64) -> f64 {
    if p.is_nan() || !(0.0..=1.0).contains(&p) || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if p == 0.0 {
        return f64::NEG_INFINITY;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    if p == 0.5 {
        return 0.0;
    }
    let (q, sign) = if p > 0.5 { (1.0 - p, 1.0) } else { (p, -1.0) };
    let z = match Normal::new(0.0, 1.0) {
        Ok(d) => -d.inverse_cdf(q),
        Err(_) => return f64::NAN,
    };
    if df.is_infinite() {
        return sign * z;
    }
    let z3 = z * z * z;
    let start = z + (z3 + z) / (4.0 * df) + (5.0 * z3 * z * z + 16.0 * z3 + 3.0 * z) / (96.0 * df * df);
    let start = if start.is_finite() && start > 0.0 { start } else { z.max(1.0) };
    // Bracket.
    let mut lo = 0.0f64;
    let mut hi = start;
    let mut grow = 0;
    while t_sf(hi, df) >= q {
        lo = hi;
        hi *= 16.0;
        grow += 1;
        if !hi.is_finite() || grow > 300 {
            return sign * f64::INFINITY;
        }
    }
    let ln_q = q.ln();
    let mut t = if start > lo && start < hi { start } else { 0.5 * (lo + hi) };
    for _ in 0..200 {
        let tail = t_sf(t, df);
        if tail >= q {
            lo = t;
        } else {
            hi = t;
        }
        let dens = t_pdf(t, df);
        let newton = if tail > 0.0 && dens > 0.0 { t + (tail.ln() - ln_q) * tail / dens } else { f64::NAN };
        let next = if newton > lo && newton < hi {
            newton
        } else if lo > 0.0 && hi > 4.0 * lo {
            lo.sqrt() * hi.sqrt()
        } else {
            0.5 * (lo + hi)
        };
        let moved = (next - t).abs();
        t = next;
        if moved <= 1e-15 * t || hi - lo <= 1e-15 * hi {
            break;
        }
    }
    sign * t
}

/// Lower tail `P(F ≤ x)` of the F distribution: `I_z(d1/2, d2/2)` with
/// `z = d1·x/(d1·x + d2)` (Abramowitz & Stegun 26.6.2), formed directly so
/// small lower tails keep their relative accuracy.
pub fn f_cdf(x: f64, d1: f64, d2: f64) -> f64 {
    if x.is_nan() || !(d1 > 0.0 && d1.is_finite()) || !(d2 > 0.0 && d2.is_finite()) {
        return f64::NAN;
    }
    if x <= 0.0 {
        return 0.0;
    }
    if x.is_infinite() {
        return 1.0;
    }
    beta_reg(0.5 * d1, 0.5 * d2, d1 * x / (d1 * x + d2))
}

/// Lower tail `P(X ≤ x)` of chi-squared with `k` degrees of freedom: the
/// regularised lower incomplete gamma function `P(k/2, x/2)` (A&S 26.4.19;
/// statrs `ChiSquared::cdf`).
pub fn chi2_cdf(x: f64, k: f64) -> f64 {
    if x.is_nan() || !(k > 0.0 && k.is_finite()) {
        return f64::NAN;
    }
    if x <= 0.0 {
        return 0.0;
    }
    ChiSquared::new(k).map(|d| d.cdf(x)).unwrap_or(f64::NAN)
}

/// The point `x ≥ 0` with `P(X ≤ x) = p` for a distribution on `[0, ∞)`,
/// found by bisection on the tail that is the smaller one at the answer:
/// `cdf(x) = p` when `p ≤ ½`, `sf(x) = 1 − p` otherwise, so neither side
/// is evaluated through a cancelled `1 − …`. The bracket is doubled from
/// `[0, 1]` until it holds the answer, then halved (geometrically while the
/// ends differ by more than a factor of two) until the ends are adjacent
/// doubles: the result is as accurate as the tail functions.
fn positive_quantile(p: f64, cdf: impl Fn(f64) -> f64, sf: impl Fn(f64) -> f64) -> f64 {
    if p.is_nan() || !(0.0..=1.0).contains(&p) {
        return f64::NAN;
    }
    if p == 0.0 {
        return 0.0;
    }
    if p == 1.0 {
        return f64::INFINITY;
    }
    let q = 1.0 - p;
    let below = |x: f64| if p <= 0.5 { cdf(x) < p } else { sf(x) > q };
    if below(0.0) && cdf(0.0).is_nan() {
        return f64::NAN;
    }
    let (mut lo, mut hi) = (0.0f64, 1.0f64);
    while below(hi) {
        lo = hi;
        hi *= 2.0;
        if hi > 1e300 {
            return f64::INFINITY;
        }
    }
    for _ in 0..3000 {
        let mid = if lo == 0.0 {
            hi / 16.0
        } else if hi > 2.0 * lo {
            (lo * hi).sqrt()
        } else {
            0.5 * (lo + hi)
        };
        if mid <= lo || mid >= hi || mid == 0.0 {
            break;
        }
        if below(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    if lo == 0.0 {
        hi
    } else {
        0.5 * (lo + hi)
    }
}

/// Quantile `x` with `P(F ≤ x) = p` of the F distribution on (`d1`, `d2`)
/// degrees of freedom (see `positive_quantile` for the method); NaN for
/// invalid arguments.
pub fn f_quantile(p: f64, d1: f64, d2: f64) -> f64 {
    if !(d1 > 0.0 && d1.is_finite() && d2 > 0.0 && d2.is_finite()) {
        return f64::NAN;
    }
    positive_quantile(p, |x| f_cdf(x, d1, d2), |x| f_sf(x, d1, d2))
}

/// Quantile `x` with `P(X ≤ x) = p` of chi-squared with `k` degrees of
/// freedom (see `positive_quantile`); NaN for invalid arguments.
pub fn chi2_quantile(p: f64, k: f64) -> f64 {
    if !(k > 0.0 && k.is_finite()) {
        return f64::NAN;
    }
    positive_quantile(p, |x| chi2_cdf(x, k), |x| chi2_sf(x, k))
}

/// One row of a coefficient table.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CoefficientRow {
    /// The coefficient.
    pub estimate: f64,
    /// Its standard error.
    pub std_error: f64,
    /// `estimate / std_error`.
    pub t: f64,
    /// Two-sided p-value `2·P(T > |t|)` on `df_resid` degrees of freedom.
    pub p_value: f64,
    /// Lower end of the two-sided interval at the requested level.
    pub lower: f64,
    /// Upper end.
    pub upper: f64,
}

/// t tests and confidence intervals for every coefficient, in column order.
///
/// `t = b/se`, `p = 2·t_sf(|t|, df_resid)` (a survival function, no
/// `1 − cdf` cancellation) and `b ± t_{1−α/2, df_resid}·se` with
/// `α = 1 − level`, the quantile taken as `−t_quantile(α/2)` so it stays
/// accurate for levels close to 1 (textbook: e.g. Draper & Smith, *Applied
/// Regression Analysis*, 3rd ed. (1998), §5.2). Aliased columns, an invalid
/// `level` (outside (0, 1)) or zero residual df give NaN entries.
pub fn coefficient_table(fit: &LsFit, level: f64) -> Vec<CoefficientRow> {
    let df = fit.df_resid;
    let q = if level > 0.0 && level < 1.0 && df > 0.0 {
        -t_quantile(0.5 * (1.0 - level), df)
    } else {
        f64::NAN
    };
    fit.coefficients
        .iter()
        .zip(&fit.std_errors)
        .map(|(&b, &se)| {
            let t = b / se;
            let p_value = if df > 0.0 { 2.0 * t_sf(t.abs(), df) } else { f64::NAN };
            CoefficientRow {
                estimate: b,
                std_error: se,
                t,
                p_value,
                lower: b - q * se,
                upper: b + q * se,
            }
        })
        .collect()
}

/// Leverage this close to 1 means the row is fitted exactly to within
/// rounding; its studentized residual and Cook's distance are NaN.
const LEVERAGE_ONE: f64 = 1e-10;

/// Internally studentized residuals `rᵢ = √wᵢ·eᵢ / (s·√(1 − hᵢ))`
/// (Cook & Weisberg, *Residuals and Influence in Regression* (1982), §2.2.1;
/// statsmodels' `resid_studentized_internal`), with `s` the residual
/// standard deviation and `hᵢ` the leverage of the weighted design.
/// NaN when `1 − hᵢ < 1e-10` or when `s` is zero or undefined.
pub fn standardized_residuals(fit: &LsFit) -> Vec<f64> {
    let s = fit.sigma;
    (0..fit.residuals.len())
        .map(|i| {
            let one_minus_h = 1.0 - fit.leverage[i];
            if one_minus_h.is_nan() || one_minus_h < LEVERAGE_ONE || s.is_nan() || s <= 0.0 || !s.is_finite() {
                return f64::NAN;
            }
            let sw = fit.weights.as_ref().map(|w| w[i].sqrt()).unwrap_or(1.0);
            sw * fit.residuals[i] / (s * one_minus_h.sqrt())
        })
        .collect()
}

/// Cook's distance `Dᵢ = rᵢ² hᵢ / (k (1 − hᵢ))` with `rᵢ` the internally
/// studentized residual and `k` the rank (Cook, R. D. (1977), "Detection of
/// influential observation in linear regression", *Technometrics* 19,
/// 15–18, eq. 8).
pub fn cooks_distance(fit: &LsFit) -> Vec<f64> {
    let k = fit.rank as f64;
    standardized_residuals(fit)
        .into_iter()
        .zip(&fit.leverage)
        .map(|(r, &h)| r * r * h / (k * (1.0 - h)))
        .collect()
}

/// Theoretical normal quantiles for a normal quantile plot of `n` sorted
/// values: `Φ⁻¹((i − 0.375)/(n + 0.25))`, `i = 1…n`, the plotting positions
/// of G. Blom, *Statistical Estimates and Transformed Beta-Variables*
/// (Wiley, 1958); `Φ⁻¹` is statrs' `Normal::inverse_cdf`.
pub fn normal_plot_positions(n: usize) -> Vec<f64> {
    // Invariant: the standard normal's parameters (0, 1) are valid.
    let z = Normal::new(0.0, 1.0).expect("the standard normal is valid");
    (1..=n).map(|i| z.inverse_cdf((i as f64 - 0.375) / (n as f64 + 0.25))).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::StudentsT;

    #[test]
    fn t_tail_agrees_with_one_minus_cdf_where_that_is_accurate() {
        // Consistency (common practice): where the cdf is not near 1 the
        // complement 1 − cdf (statrs) is accurate and must match the tail.
        for &(x, df) in &[(0.3, 3.0), (1.0, 10.0), (-1.5, 7.0), (0.8, 17.0), (2.0, 1.0)] {
            let d = StudentsT::new(0.0, 1.0, df).unwrap(); // valid parameters
            let via_cdf = 1.0 - d.cdf(x);
            let tail = t_sf(x, df);
            assert!((tail - via_cdf).abs() <= 1e-14 * via_cdf.max(1e-300), "{x} {df}: {tail} vs {via_cdf}");
            assert!((tail - d.sf(x)).abs() <= 1e-14 * tail, "statrs sf");
        }
    }

    #[test]
    fn tiny_p_values_are_not_zero() {
        // t = 60 on 10 df: 1 − cdf cancels to ~1e-14 with few correct digits;
        // the survival function keeps them. Check against the closed form
        // for the tail of t with even df (Abramowitz & Stegun 26.7.3 for
        // df = 2: P(T > t) = ½(1 − t/√(2 + t²))), here with df = 2 where
        // the formula is simple enough to evaluate stably:
        // ½(1 − t/√(2+t²)) = 1/(√(2+t²)·(√(2+t²) + t)).
        let t = 60.0f64;
        let s = (2.0 + t * t).sqrt();
        let exact = 1.0 / (s * (s + t));
        let got = t_sf(t, 2.0);
        assert!(((got - exact) / exact).abs() < 1e-13, "{got} vs {exact}");
        // Ten df, two-sided: positive and small (≈ 4e-14; order from memory).
        let p10 = 2.0 * t_sf(60.0, 10.0);
        assert!(p10 > 1e-15 && p10 < 1e-12, "{p10}");
        // Far tails stay positive: df = 1 is the Cauchy distribution,
        // P(T > t) = atan(1/t)/π ≈ 1/(π t) (closed form, A&S 26.7.3).
        let far = t_sf(1e200, 1.0);
        let cauchy = (1.0 / 1e200f64).atan() / std::f64::consts::PI;
        assert!(((far - cauchy) / cauchy).abs() < 1e-12, "{far} vs {cauchy}");
        // F tail with huge F: P(F > x) for d1 = 2 is (d2/(d2 + 2x))^(d2/2)
        // (closed form, A&S 26.6.4 with d1 = 2).
        let (x, d2) = (5.0e6f64, 34.0f64);
        let exact_f = (d2 / (d2 + 2.0 * x)).powf(d2 / 2.0);
        let got_f = f_sf(x, 2.0, d2);
        assert!(got_f > 0.0 && ((got_f - exact_f) / exact_f).abs() < 1e-12, "{got_f} vs {exact_f}");
    }

    #[test]
    fn quantile_inverts_the_tail() {
        for &df in &[1.0, 2.5, 10.0, 17.0, 1000.0] {
            for &p in &[0.975, 0.995, 0.6, 0.500001, 1e-12, 0.025] {
                let t = t_quantile(p, df);
                // P(T ≤ t) = p: compare the smaller tail, relatively.
                let (tail, want) = if p > 0.5 { (t_sf(t, df), 1.0 - p) } else { (t_sf(-t, df), p) };
                assert!(((tail - want) / want).abs() < 1e-12, "df {df} p {p}: t {t}, tail {tail}");
                assert_eq!(t > 0.0, p > 0.5);
            }
        }
        // t_{0.975, 10} = 2.228138851986273 (Student t table value to 4
        // decimals, 2.2281, e.g. Draper & Smith table; further digits from
        // memory).
        assert!((t_quantile(0.975, 10.0) - 2.228138851986273).abs() < 1e-12);
        assert!(t_quantile(1.5, 3.0).is_nan());
        assert!(t_quantile(0.3, -1.0).is_nan());
        assert!(t_sf(1.0, 0.0).is_nan());
    }

    #[test]
    fn extreme_arguments_give_numbers_not_panics() {
        // Degrees of freedom and statistics at the edges of the double range
        // (common practice: no panic, values in [0, 1] or NaN).
        for &(x, d1, d2) in &[(1e-300, 3.0, 17.0), (f64::MAX, 2.0, 2.0), (0.0, 1.0, 1.0), (1e250, 1.0, 1e6)] {
            let v = f_sf(x, d1, d2);
            assert!((0.0..=1.0).contains(&v), "f_sf({x}, {d1}, {d2}) = {v}");
        }
        // Absurd degrees of freedom: statrs' incomplete beta returns NaN;
        // what matters is that nothing panics.
        let v = f_sf(1e301, 1.0, 1e305);
        assert!(v.is_nan() || (0.0..=1.0).contains(&v));
        assert!(f_sf(f64::NAN, 1.0, 1.0).is_nan() && f_sf(1.0, 0.0, 1.0).is_nan());
        for &(t, df) in &[(1e149, 3.0), (1e151, 3.0), (-1e200, 2.0), (1e-300, 1e6), (5.0, 1e12)] {
            let v = t_sf(t, df);
            assert!((0.0..=1.0).contains(&v), "t_sf({t}, {df}) = {v}");
        }
        // The two sides of the asymptotic switch at |t| = 1e150 agree: for
        // df = 1 (Cauchy) the tail is atan(1/t)/π ≈ 1/(πt) (closed form).
        for t in [0.999e150, 1.001e150] {
            let want = 1.0 / (std::f64::consts::PI * t);
            assert!(((t_sf(t, 1.0) - want) / want).abs() < 1e-12, "{t}");
        }
        // df = 2 has P(T > t) = 1/(√(2+t²)(√(2+t²) + t)) ≈ 1/(2t²) (closed
        // form, A&S 26.7.3): 5e-301 just below and above the switch.
        for t in [0.999e150, 1.001e150] {
            let want = 0.5 / (t * t);
            assert!(((t_sf(t, 2.0) - want) / want).abs() < 1e-12, "{t}");
        }
        assert_eq!(chi2_sf(f64::INFINITY, 3.0), 0.0);
        assert!(chi2_sf(1.0, -1.0).is_nan());
        // Huge df: the quantile tends to the normal one, 1.959963984540054
        // for 0.975 (normal table value 1.96; digits from memory).
        assert!((t_quantile(0.975, 1e12) - 1.959963984540054).abs() < 1e-9);
        for &df in &[1e6, 2e7, 1e9, 1e15] {
            let t = t_quantile(0.995, df);
            assert!(((t_sf(t, df) - 0.005) / 0.005).abs() < 1e-12, "{df}: {t}");
        }
    }

    #[test]
    fn large_df_branch_is_continuous_and_heavier_than_normal() {
        // Consistency (common practice): where the large-df expansion is
        // chosen it agrees with the incomplete-beta route to that route's
        // own accuracy, and a t tail is always heavier than the normal tail,
        // approaching it as df grows.
        for &x in &[0.5, 2.0, 5.0] {
            for &df in &[2e4, 1e5, 1e6, 1e7] {
                let (a, b) = (t_sf(x, df), t_upper_beta(x, df));
                assert!(((a - b) / b).abs() < 2e-15 * df.max(1e5), "{x} {df}: {a} vs {b}");
            }
            let z = normal_sf(x);
            let mut prev = f64::INFINITY;
            for &df in &[1e3, 1e5, 1e8, 1e10, 1e12] {
                let v = t_sf(x, df);
                assert!(v > z && v < prev, "{x} {df}: {v} (normal {z})");
                prev = v;
            }
        }
    }

    #[test]
    fn chi2_tail_matches_closed_form() {
        // For 2 df, P(X > x) = exp(−x/2) (closed form, A&S 26.4.21).
        for &x in &[0.5, 3.0, 100.0, 1200.0] {
            let got = chi2_sf(x, 2.0);
            let exact = (-x / 2.0f64).exp();
            assert!(((got - exact) / exact).abs() < 1e-12, "{x}: {got} vs {exact}");
        }
    }
}
