//! Predictions at new points from a fit's [`Predictor`]: the one function
//! behind `#predict` and the cached values of the prediction calculator.
//!
//! Formulas (any regression text, e.g. Weisberg, *Applied Linear
//! Regression*, 4th ed., 2014, §3.6; statsmodels' `get_prediction` computes
//! the same): with the predictor's gradient `g` at the point (the model row
//! `x` of a fit linear in its coefficients, `∂f/∂b` of a model formula `f`),
//! coefficient covariance `V`, residual standard deviation `s` and the
//! quantile `q` (Student's t on the predictor's degrees of freedom, else the
//! normal), the predictor is `η = xᵀb` (or `f(x; b)`), its standard error
//! `se = √(gᵀVg)` (the delta method for a model formula), the interval of
//! the mean `η ± q·se`, of a new observation `η ± q·√(s² + se²)`, and the
//! leverage of the point `gᵀVg / s²`. With a link other than the identity
//! the interval is formed on the predictor's scale and its ends mapped
//! through the inverse link (a Wald interval; e.g. Agresti, *Categorical
//! Data Analysis*, 3rd ed., 2013, §4.2.5); there is then no interval of a
//! new observation.

use crate::numeric::t_quantile;
use crate::protocol::{Link, Predictor, PredictorForm};

/// A prediction at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Point {
    /// The predicted response.
    pub predicted: f64,
    /// Standard error of the predictor at the point (on the link's scale).
    pub se_mean: f64,
    /// Interval of the mean response: lower end.
    pub mean_lower: f64,
    /// Upper end.
    pub mean_upper: f64,
    /// Interval of a new observation (NaN when the fit has none): lower end.
    pub new_lower: f64,
    /// Upper end.
    pub new_upper: f64,
    /// Standard error of a new observation (NaN when the fit has none).
    pub se_new: f64,
    /// Leverage of the point, `gᵀVg / s²` (NaN without a residual spread).
    pub leverage: f64,
}

/// The two-sided quantile for confidence `level`: Student's t on `df`
/// degrees of freedom, or the normal when `df` is absent.
pub fn quantile(level: f64, df: Option<f64>) -> f64 {
    let a = 0.5 * (1.0 - level);
    // t on infinitely many degrees of freedom is the normal (statrs' normal
    // quantile inside `t_quantile`).
    -t_quantile(a, df.unwrap_or(f64::INFINITY))
}

/// The predictor's value and gradient in the coefficients at a row of the
/// request's columns; an error says why there is none.
pub fn gradient(pr: &Predictor, estimates: &[f64], columns: &[f64]) -> Result<(f64, Vec<f64>), String> {
    match &pr.form {
        PredictorForm::Linear { model_row } => {
            if model_row.len() != estimates.len() {
                return Err(format!("the model row has {} values for {} coefficients", model_row.len(), estimates.len()));
            }
            let x: Vec<f64> = model_row.iter().map(|f| f.eval(columns, &[])).collect();
            Ok((x.iter().zip(estimates).map(|(a, b)| a * b).sum(), x))
        }
        PredictorForm::Model { formula } => Ok(formula.gradient(columns, estimates)),
    }
}

/// The prediction at a row of the request's columns, at confidence `level`.
/// `estimates` are the coefficients' estimates in order (0 for one without
/// an estimate).
pub fn at(pr: &Predictor, estimates: &[f64], columns: &[f64], level: f64) -> Result<Point, String> {
    let (eta, g) = gradient(pr, estimates, columns)?;
    let v = &pr.covariance;
    if v.len() != g.len() {
        return Err(format!("the covariance has {} rows for {} coefficients", v.len(), g.len()));
    }
    if !eta.is_finite() || g.iter().any(|x| !x.is_finite()) {
        return Err("the model is undefined at these values (such as the log of a value ≤ 0)".into());
    }
    let q: f64 = (0..g.len()).map(|i| g[i] * (0..g.len()).map(|j| v[i][j] * g[j]).sum::<f64>()).sum();
    let se = q.max(0.0).sqrt();
    let t = quantile(level, pr.df);
    let s = pr.residual_sd.unwrap_or(f64::NAN);
    let link = pr.link;
    let (mean_lower, mean_upper) = (link.inverse(eta - t * se), link.inverse(eta + t * se));
    let (se_new, new_lower, new_upper) = match (link, pr.residual_sd) {
        (Link::Identity, Some(s)) => {
            let se_new = (s * s + se * se).sqrt();
            (se_new, eta - t * se_new, eta + t * se_new)
        }
        _ => (f64::NAN, f64::NAN, f64::NAN),
    };
    Ok(Point { predicted: link.inverse(eta), se_mean: se, mean_lower, mean_upper, new_lower, new_upper, se_new, leverage: q / (s * s) })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::protocol::{Formula, Function};

    fn line() -> Predictor {
        Predictor {
            form: PredictorForm::Linear { model_row: vec![Formula::Number(1.0), Formula::Column(0)] },
            covariance: vec![vec![0.5, -0.03], vec![-0.03, 0.002]],
            link: Link::Identity,
            residual_sd: Some(1.2),
            df: Some(10.0),
        }
    }

    #[test]
    fn a_straight_line_at_a_point() {
        // Worked by hand (common practice): x = (1, 4), b = (2, 3):
        // ŷ = 14, xᵀVx = 0.5 − 2·0.12 + 16·0.002 = 0.292; t(0.975, 10) =
        // 2.228138851986 (e-Handbook table 1.3.6.7.2 gives 2.228, from memory).
        let p = at(&line(), &[2.0, 3.0], &[4.0], 0.95).expect("predicts");
        assert_eq!(p.predicted, 14.0);
        assert!((p.se_mean - 0.292f64.sqrt()).abs() < 1e-15);
        let t = 2.228138851986;
        assert!((p.mean_upper - (14.0 + t * 0.292f64.sqrt())).abs() < 1e-9);
        assert!((p.new_lower - (14.0 - t * (1.44f64 + 0.292).sqrt())).abs() < 1e-9);
        assert!((p.leverage - 0.292 / 1.44).abs() < 1e-15);
    }

    #[test]
    fn a_logit_link_maps_the_interval_ends() {
        // η = 0 at x = 0 with se² = 0.25: p = 0.5, mean interval
        // logistic(±1.959963984540·0.5) (normal quantile from memory, also
        // scipy.stats.norm.ppf(0.975)); no interval of a new observation.
        let pr = Predictor { link: Link::Logit, residual_sd: None, df: None, covariance: vec![vec![0.25, 0.0], vec![0.0, 1.0]], ..line() };
        let p = at(&pr, &[0.0, 1.0], &[0.0], 0.95).expect("predicts");
        assert_eq!(p.predicted, 0.5);
        let hi = 1.0 / (1.0 + (-1.959963984540 * 0.5f64).exp());
        assert!((p.mean_upper - hi).abs() < 1e-10 && (p.mean_lower - (1.0 - hi)).abs() < 1e-10);
        assert!(p.new_lower.is_nan() && p.leverage.is_nan());
    }

    #[test]
    fn a_model_formula_uses_its_gradient() {
        // f = a·exp(−k·x) at a = 40, k = 0.2, x = 5: f = 40/e; the gradient
        // by hand (common practice) is (e^(−1), −40·5·e^(−1)).
        let f = Formula::Mul(
            Box::new(Formula::Parameter(0)),
            Box::new(Formula::Call(Function::Exp, Box::new(Formula::Neg(Box::new(Formula::Mul(Box::new(Formula::Parameter(1)), Box::new(Formula::Column(0)))))))),
        );
        let pr = Predictor { form: PredictorForm::Model { formula: f }, covariance: vec![vec![4.0, 0.01], vec![0.01, 0.0004]], ..line() };
        let p = at(&pr, &[40.0, 0.2], &[5.0], 0.9).expect("predicts");
        let e = (-1.0f64).exp();
        assert!((p.predicted - 40.0 * e).abs() < 1e-13);
        let g = [e, -200.0 * e];
        let q = g[0] * g[0] * 4.0 + 2.0 * g[0] * g[1] * 0.01 + g[1] * g[1] * 0.0004;
        assert!((p.se_mean - q.sqrt()).abs() < 1e-13, "{} vs {}", p.se_mean, q.sqrt());
    }

    #[test]
    fn a_model_row_of_the_wrong_length_is_an_error() {
        assert!(at(&line(), &[1.0, 2.0, 3.0], &[1.0], 0.95).unwrap_err().contains("2 values for 3 coefficients"));
    }
}
