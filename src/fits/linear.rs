//! `#linear`: least squares on the model terms, ordinary or weighted.
//!
//! The numerics live in [`crate::numeric`]; this file turns a resolved
//! request into a design matrix, runs the fit, and reports coefficients,
//! statistics and per-row columns under the protocol's names.

use super::{Fit, FitError};
use crate::numeric::{self, LsProblem};
use crate::protocol::{Coefficient, FitOutcome, FitRequest, FunctionSpec, ParamKind, ParamSpec, RowColumn, Statistic};

/// The label of the intercept term.
pub const INTERCEPT: &str = "(intercept)";

/// The built-in least-squares fit.
pub struct Linear {
    spec: FunctionSpec,
}

fn param(name: &str, kind: ParamKind, default: Option<&str>, choices: &[&str], help: &str) -> ParamSpec {
    ParamSpec {
        name: name.into(),
        kind,
        required: false,
        default: default.map(Into::into),
        choices: choices.iter().map(|c| c.to_string()).collect(),
        help: help.into(),
    }
}

/// The options every fit of the linear family shares, resolved by the host.
pub fn shared_options() -> Vec<ParamSpec> {
    vec![
        param("name", ParamKind::Text, None, &[], "a name other requests use for this fit (default: the request's cell)"),
        param("level", ParamKind::Number, Some("0.95"), &[], "confidence level of the intervals, between 0 and 1"),
        param("intercept", ParamKind::Choice, Some("yes"), &["yes", "no"], "fit an intercept"),
        param("weights", ParamKind::Column, None, &[], "a column of non-negative weights (weighted least squares)"),
        param("missing", ParamKind::Choice, Some("skip"), &["skip", "stop"], "leave out rows with blank or non-numeric cells (and count them), or stop with an error"),
        param("data", ParamKind::Range, None, &[], "the data table: a sheet name or a range (default: the table on the request's sheet)"),
        param("base", ParamKind::Group, None, &[], "base level of a categorical column, e.g. base(Bay=\"East\")"),
    ]
}

impl Linear {
    /// The fit with its spec.
    pub fn new() -> Self {
        let positional = vec![
            ParamSpec { required: true, ..param("response", ParamKind::Column, None, &[], "the column to explain (a header name, a range, or an expression such as log(Yield))") },
            ParamSpec { required: true, ..param("terms", ParamKind::Terms, None, &[], "predictor terms joined by +, such as Light + CO2 + Light^2") },
        ];
        Linear {
            spec: FunctionSpec {
                name: "linear".into(),
                help: "least squares of the response on the terms, with standard errors, intervals and diagnostics".into(),
                positional,
                options: shared_options(),
            },
        }
    }
}

impl Default for Linear {
    fn default() -> Self {
        Self::new()
    }
}

fn stat(key: &str, label: &str, group: &str, value: f64) -> Statistic {
    Statistic { key: key.into(), label: label.into(), group: group.into(), value }
}

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

impl Fit for Linear {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let n = req.rows();
        let mut labels: Vec<String> = Vec::new();
        let p = req.columns.len() + usize::from(req.intercept);
        let mut x = Vec::with_capacity(n * p);
        if req.intercept {
            labels.push(INTERCEPT.into());
            x.extend(std::iter::repeat_n(1.0, n));
        }
        for c in &req.columns {
            labels.push(c.name.clone());
            x.extend_from_slice(&c.values);
        }
        if p == 0 {
            return Err(FitError::new("the model has no terms and no intercept").help("give at least one term, or intercept=yes"));
        }
        let problem = LsProblem {
            x: &x,
            n,
            p,
            y: &req.response.values,
            weights: req.weights.as_deref(),
            has_intercept: req.intercept,
        };
        let fit = numeric::least_squares(&problem).map_err(|e| FitError::new(e.to_string()))?;
        let mut out = FitOutcome::default();
        let table = numeric::coefficient_table(&fit, req.level);
        for (j, row) in table.iter().enumerate() {
            let est = !fit.aliased[j];
            out.coefficients.push(Coefficient {
                term: labels[j].clone(),
                estimate: est.then_some(row.estimate).and_then(finite),
                std_error: est.then_some(row.std_error).and_then(finite),
                statistic: est.then_some(row.t).and_then(finite),
                p_value: est.then_some(row.p_value).and_then(finite),
                lower: est.then_some(row.lower).and_then(finite),
                upper: est.then_some(row.upper).and_then(finite),
            });
            if fit.aliased[j] {
                let combo: Vec<String> = fit.alias_of[j].iter().map(|(k, _)| labels[*k].clone()).collect();
                let with = if combo.is_empty() { "the other terms".to_string() } else { combo.join(", ") };
                out.warnings.push(format!(
                    "the term {} is an exact combination of {} (collinear), so its coefficient cannot be estimated; drop one of them",
                    labels[j], with
                ));
            }
        }
        let g = "Goodness of fit";
        let a = "Analysis of variance";
        let r2_label = if req.intercept { "R²" } else { "R² (uncentred, no intercept)" };
        out.statistics = vec![
            stat("n", "Rows used (n)", g, fit.n as f64),
            stat("parameters", "Parameters estimated", g, fit.rank as f64),
            stat("r_squared", r2_label, g, fit.r_squared),
            stat("adj_r_squared", "Adjusted R²", g, fit.adj_r_squared),
            stat("rmse", "Root mean squared error", g, fit.sigma),
            stat("f_statistic", "F statistic", g, fit.f_statistic),
            stat("f_p_value", "p-value of F", g, fit.f_p_value),
            stat("log_likelihood", "Log-likelihood", g, fit.log_likelihood),
            stat("aic", "AIC", g, fit.aic),
            stat("bic", "BIC", g, fit.bic),
            stat("condition_number", "Condition number (scaled design)", g, fit.condition_number),
            stat("df_model", "Degrees of freedom, regression", a, fit.df_model),
            stat("ss_model", "Sum of squares, regression", a, fit.ssr),
            stat("ms_model", "Mean square, regression", a, fit.ssr / fit.df_model),
            stat("df_resid", "Degrees of freedom, residual", a, fit.df_resid),
            stat("ss_resid", "Sum of squares, residual", a, fit.sse),
            stat("ms_resid", "Mean square, residual", a, fit.sse / fit.df_resid),
            stat("ss_total", if req.intercept { "Sum of squares, total (about the mean)" } else { "Sum of squares, total (about zero)" }, a, fit.sst),
        ];
        if !req.intercept {
            out.notes.push("no intercept: R² is the uncentred one, 1 − SSE/Σy²".into());
        }
        // Covariance for predictions (column-major p×p from the fit; NaN of aliased terms as 0).
        out.covariance = Some(
            (0..p).map(|i| (0..p).map(|j| fit.covariance[j * p + i]).map(|v| if v.is_finite() { v } else { 0.0 }).collect()).collect(),
        );
        let std_res = numeric::standardized_residuals(&fit);
        let cooks = numeric::cooks_distance(&fit);
        out.rows = vec![
            RowColumn { key: "fitted".into(), label: "Fitted".into(), values: fit.fitted.clone() },
            RowColumn { key: "residual".into(), label: "Residual".into(), values: fit.residuals.clone() },
            RowColumn { key: "std_residual".into(), label: "Standardized residual".into(), values: std_res },
            RowColumn { key: "leverage".into(), label: "Leverage".into(), values: fit.leverage.clone() },
            RowColumn { key: "cooks_distance".into(), label: "Cook's distance".into(), values: cooks },
        ];
        Ok(out)
    }
}
