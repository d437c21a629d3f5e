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
use statrs::distribution::{ChiSquared, Continuous, ContinuousCDF, Normal, StudentsT};
use statrs::function::beta::beta_reg;
use statrs::function::gamma::ln_gamma;

/// Upper tail `P(T > x)` of Student's t with `df` degrees of freedom.
///
/// Formulas (Abramowitz & Stegun 26.7.1 with 26.5.27; the identity behind
/// statrs' `StudentsT::sf`), with `ν = df` and `I` the regularised
/// incomplete beta function (statrs `beta_reg`):
/// - `P(T > |x|) = ½ I_h(ν/2, ½)`, `h = ν/(ν + x²)`, when
///   `h < (ν/2 + 1)/(ν/2 + 5/2)`;
/// - otherwise (small `|x|`) the complementary form
///   `P(T > |x|) = ½ − ½ I_z(½, ν/2)`, `z = x²/(ν + x²)` formed directly.
///   The switch point is the one at which statrs' continued fraction would
///   itself pass to `1 − x` (Numerical Recipes' `betai` rule), so neither
///   form is evaluated through a cancelled `1 − h`;
/// - `|x| > 1e150` (where `h` would underflow): the leading term of the tail,
///   `Γ((ν+1)/2)/(Γ(ν/2)√(νπ)) · ν^((ν−1)/2) · |x|^(−ν)`, relative error
///   `O(x⁻²)`, from integrating the density's leading power (A&S 26.7.1).
///
/// `x < 0` uses `P(T > x) = 1 − P(T > |x|)`. `df = ∞` gives the standard
/// normal tail (statrs `Normal::sf`).
pub fn t_sf(x: f64, df: f64) -> f64 {
    if x.is_nan() || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if df.is_infinite() {
        return Normal::new(0.0, 1.0).map(|d| d.sf(x)).unwrap_or(f64::NAN);
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
    } else {
        let h = df / (df + ax * ax);
        let a = 0.5 * df;
        if h < (a + 1.0) / (a + 2.5) {
            0.5 * beta_reg(a, 0.5, h)
        } else {
            0.5 - 0.5 * beta_reg(0.5, a, ax * ax / (df + ax * ax))
        }
    };
    if x >= 0.0 {
        upper
    } else {
        1.0 - upper
    }
}

/// Upper tail `P(F > x)` of the F distribution on (`d1`, `d2`) degrees of
/// freedom.
///
/// Formula (Abramowitz & Stegun 26.6.2 with 26.5.2; the identity statrs'
/// `FisherSnedecor::sf` uses): `P(F > x) = I_z(d2/2, d1/2)` with
/// `z = d2/(d2 + d1·x)`. Unlike statrs, which passes `1 − d1x/(d1x + d2)`,
/// `z` is formed directly, so the tail keeps full relative accuracy for
/// large `x` (e.g. the NIST Norris F of 5.4e6).
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
    let z = if d1 * x > 1e300 { (d2 / d1) / x } else { d2 / (d2 + d1 * x) };
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
    ChiSquared::new(k).map(|d| d.sf(x)).unwrap_or(f64::NAN)
}

/// Quantile `t` with `P(T ≤ t) = p` of Student's t on `df` degrees of
/// freedom; `−∞`/`∞` at `p = 0`/`1`, NaN outside `[0, 1]` or for invalid `df`.
///
/// Start: statrs `StudentsT::inverse_cdf` (inverse regularised incomplete
/// beta, AS 64/AS 109) on the smaller tail `q = min(p, 1 − p)`; then
/// Newton steps on `ln t_sf(t) = ln q` (derivative `−pdf/t_sf`, statrs
/// `pdf`), at most 30, until a step is below 1e-15 relative. The logarithmic
/// form converges well on the power-law tails of small `df`, and the
/// polishing repairs statrs' cancellation in `1 − y` near `p = ½`.
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
    // Work with the upper tail q < ½ and t > 0, then restore the sign.
    let (q, sign) = if p > 0.5 { (1.0 - p, 1.0) } else { (p, -1.0) };
    if df.is_infinite() {
        return match Normal::new(0.0, 1.0) {
            Ok(d) => sign * -d.inverse_cdf(q),
            Err(_) => f64::NAN,
        };
    }
    let dist = match StudentsT::new(0.0, 1.0, df) {
        Ok(d) => d,
        Err(_) => return f64::NAN,
    };
    // inverse_cdf(q) for q < ½ is negative; its magnitude is the upper point.
    let mut t = -dist.inverse_cdf(q);
    if !t.is_finite() || t < 0.0 {
        t = 0.0;
    }
    let ln_q = q.ln();
    for _ in 0..30 {
        let dens = dist.pdf(t);
        let tail = t_sf(t, df);
        if dens.is_nan() || dens <= 0.0 || tail.is_nan() || tail <= 0.0 {
            break;
        }
        // Newton on ln t_sf(t) = ln q: d/dt ln t_sf = −pdf/t_sf.
        let step = (tail.ln() - ln_q) * tail / dens;
        if !step.is_finite() {
            break;
        }
        let next = if t + step < 0.0 { 0.5 * t } else { t + step };
        let moved = (next - t).abs();
        t = next;
        if moved <= 1e-15 * t.abs() {
            break;
        }
    }
    sign * t
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
    fn chi2_tail_matches_closed_form() {
        // For 2 df, P(X > x) = exp(−x/2) (closed form, A&S 26.4.21).
        for &x in &[0.5, 3.0, 100.0, 1200.0] {
            let got = chi2_sf(x, 2.0);
            let exact = (-x / 2.0f64).exp();
            assert!(((got - exact) / exact).abs() < 1e-12, "{x}: {got} vs {exact}");
        }
    }
}
