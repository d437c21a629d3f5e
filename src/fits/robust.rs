//! `#robust`: a linear model fitted by M-estimation, which down-weights
//! rows far from the fit instead of letting them pull it.
//!
//! The numerics live in [`crate::numeric::robust`]; this file builds the
//! design as `#linear` does, runs the fit, and reports the coefficients
//! beside the least-squares ones, the weights by row and the rows the fit
//! down-weighted most, for the host to name by sheet row.
//!
//! Inference uses Student's t on `n − p` degrees of freedom with Huber's
//! covariance (not the normal, as statsmodels does): the covariance is
//! asymptotic, and t is the more cautious choice in the small samples
//! robust fits are often run on; it is also what `#predict` uses for its
//! intervals. The standard errors themselves are statsmodels' `cov="H1"`.
//!
//! No R² is reported: the robust fit does not minimise squared error, and
//! the robust R² variants in use (e.g. Renaud & Victoria-Feser 2010) answer
//! different questions; none is offered rather than one that misleads.

use super::linear::{count, dec, design, finite, model_row, param, shared_options, stat, INTERCEPT};
use super::{Fit, FitError};
use crate::numeric::robust::{self as rob, Loss, RobustError, RobustProblem};
use crate::numeric::{t_quantile, t_sf};
use crate::protocol::{
    Coefficient, FitOutcome, FitRequest, FunctionSpec, Link, OptionValue, ParamKind, ParamSpec, Predictor, PredictorForm, RowColumn, RowRole, RowWarning, Statistic,
};

/// Diagnostics heading: the robust fit itself.
pub const GROUP_ROBUST: &str = "How the rows were weighed";
/// Diagnostics heading: the robust against the least-squares estimates.
pub const GROUP_SHIFT: &str = "What down-weighting changed";
/// Rows with a weight below this are "nearly ignored" (common practice:
/// such a row has less than a tenth of an ordinary row's say).
pub const NEARLY_IGNORED: f64 = 0.1;
/// A weight at least this is "full" (Huber's weight is exactly 1 inside
/// the tuning constant; the bisquare's is below 1 for every nonzero residual).
pub const FULL_WEIGHT: f64 = 1.0 - 1e-12;
/// How many of the most down-weighted rows are named.
pub const NAMED_ROWS: usize = 5;

/// The built-in robust fit.
pub struct Robust {
    spec: FunctionSpec,
}

impl Robust {
    /// The fit with its spec.
    pub fn new() -> Self {
        let positional = vec![
            ParamSpec { required: true, ..param("response", ParamKind::Column, None, &[], "the column to explain (a header name, a range, or an expression such as log(Yield))") },
            ParamSpec { required: true, ..param("terms", ParamKind::Terms, None, &[], "predictor terms joined by +, such as Light + CO2") },
        ];
        let mut options = vec![
            param("method", ParamKind::Choice, Some("huber"), &["huber", "bisquare"], "huber (rows far out keep some weight) or bisquare (rows far enough out get none)"),
            param("tuning", ParamKind::Number, None, &[], "how many robust scales from the fit a row may lie before it is down-weighted (default 1.345 for huber, 4.685 for bisquare)"),
        ];
        options.extend(shared_options().into_iter().filter(|o| ["name", "confidence", "intercept", "gaps", "table", "against"].contains(&o.name.as_str())));
        Robust {
            spec: FunctionSpec {
                name: "robust".into(),
                help: "a linear fit that down-weights rows far from the fit (M-estimation), naming the rows it down-weighted".into(),
                positional,
                options,
            },
        }
    }
}

impl Default for Robust {
    fn default() -> Self {
        Self::new()
    }
}

/// Rounded to four decimals, for text.
fn short(x: f64) -> String {
    format!("{}", (x * 1e4).round() / 1e4)
}

fn loss_of(req: &FitRequest) -> Result<(Loss, f64), FitError> {
    let loss = match req.options.get("method") {
        None => Loss::Huber,
        Some(OptionValue::Text(m)) if m.eq_ignore_ascii_case("huber") => Loss::Huber,
        Some(OptionValue::Text(m)) if m.eq_ignore_ascii_case("bisquare") => Loss::Bisquare,
        Some(other) => return Err(FitError::new(format!("method={} is not one of the choices", match other { OptionValue::Text(t) => t.clone(), _ => "…".into() })).help("method takes huber or bisquare")),
    };
    let tuning = match req.options.get("tuning") {
        None => loss.default_tuning(),
        Some(OptionValue::Number(c)) if c.is_finite() && *c > 0.0 => *c,
        Some(_) => return Err(FitError::new("tuning= must be a positive number of scales").help(format!("leave it out for the usual {}", loss.default_tuning()))),
    };
    Ok((loss, tuning))
}

fn error_of(e: RobustError, labels: &[String]) -> FitError {
    match e {
        RobustError::Collinear { column } => {
            let mut f = FitError::new(format!("the term {} is an exact combination of the other terms (collinear), so a robust fit cannot weigh it", labels[column])).help("drop one of the collinear terms");
            if labels[column] != INTERCEPT {
                f = f.at_term(labels[column].clone());
            }
            f
        }
        RobustError::TooFewRows { .. } => FitError::new(e.to_string()).help("use more rows, or fewer terms"),
        RobustError::TooFewWeighted { .. } | RobustError::NoCovariance => FitError::new(e.to_string()).help("try method=huber, which never gives a row weight zero, or a larger tuning="),
        RobustError::ZeroScale { .. } => FitError::new(e.to_string()).help("the data fit a line exactly for most rows; #linear shows the few that do not"),
        RobustError::NoConvergence { .. } => FitError::new(e.to_string()).help("try method=huber, or a larger tuning="),
        RobustError::Start(_) => FitError::new(e.to_string()),
    }
}

impl Fit for Robust {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let (loss, tuning) = loss_of(req)?;
        if req.weights.is_some() {
            return Err(FitError::new("#robust makes its own weights, so it takes no weights= column").help("leave weights= out"));
        }
        let n = req.rows();
        let (labels, x, p) = design(req)?;
        let problem = RobustProblem { x: &x, n, p, y: &req.response.values, has_intercept: req.intercept, loss, tuning };
        let fit = rob::m_estimate(&problem).map_err(|e| error_of(e, &labels))?;
        let df = fit.df_resid;
        let tq = t_quantile(0.5 + req.level / 2.0, df);
        let mut out = FitOutcome { standard_errors: Some("M-estimation (Huber 1981)".into()), ..FitOutcome::default() };
        let ls = &fit.start;
        for (j, label) in labels.iter().enumerate() {
            let (b, se, b_ls) = (fit.coefficients[j], fit.std_errors[j], ls.coefficients[j]);
            let t = b / se;
            let moved = (b - b_ls) / se;
            out.coefficients.push(Coefficient {
                term: label.clone(),
                estimate: finite(b),
                std_error: finite(se),
                statistic: finite(t),
                p_value: finite(2.0 * t_sf(t.abs(), df)),
                lower: finite(b - tq * se),
                upper: finite(b + tq * se),
                vif: None,
                standardized: None,
                remark: Some(format!("least squares gives {}; the robust estimate is {} robust standard errors from it", short(b_ls), short(moved))),
                term_p_value: None,
            });
            out.statistics.push(stat(&format!("ls_estimate:{label}"), &format!("Least-squares estimate of {label}"), GROUP_SHIFT, b_ls));
            out.statistics.push(dec(&format!("shift:{label}"), &format!("{label}: robust minus least squares, in robust standard errors"), GROUP_SHIFT, moved, 2));
        }
        let g = GROUP_ROBUST;
        let w = &fit.weights;
        let method_label = match loss {
            Loss::Huber => "Huber",
            Loss::Bisquare => "bisquare (Tukey's biweight)",
        };
        let mut head = vec![
            count("n", "Rows used (n)", g, n as f64),
            count("parameters", "Coefficients estimated (p)", g, p as f64),
            count("residual_df", "Residual degrees of freedom (n − p)", g, df),
            dec("tuning", "Tuning constant, in robust scales", g, tuning, 3).detail(method_label),
            stat("scale", "Robust scale of the residuals (median |residual| / 0.6745)", g, fit.scale),
            stat("ls_residual_standard_error", "Least-squares residual standard error, for comparison", g, ls.sigma),
            count("iterations", "Reweighting steps", g, fit.iterations as f64),
            count("rows_full_weight", "Rows with full weight (1)", g, w.iter().filter(|v| **v >= FULL_WEIGHT).count() as f64),
            count("rows_down_weighted", "Rows down-weighted (weight below 1)", g, w.iter().filter(|v| **v < FULL_WEIGHT).count() as f64),
            count("rows_nearly_ignored", "Rows nearly ignored (weight below 0.1)", g, w.iter().filter(|v| **v < NEARLY_IGNORED).count() as f64),
        ];
        head.append(&mut out.statistics);
        out.statistics = head;
        // The most down-weighted rows, lowest weight first, each named by
        // the host through `statistic_rows`.
        let mut order: Vec<usize> = (0..n).filter(|&i| w[i] < FULL_WEIGHT).collect();
        order.sort_by(|a, b| w[*a].total_cmp(&w[*b]).then(a.cmp(b)));
        for (k, &i) in order.iter().take(NAMED_ROWS).enumerate() {
            let key = format!("lowest_weight_{}", k + 1);
            let label = if k == 0 { "Lowest weight".to_string() } else { format!("Lowest weight, number {}", k + 1) };
            out.statistics.push(Statistic::new(&key, &label, g, w[i]).format(crate::protocol::NumberFormat::Decimals(4)));
            out.statistic_rows.insert(key, i);
        }
        let ignored: Vec<usize> = order.iter().copied().filter(|&i| w[i] < NEARLY_IGNORED).collect();
        for &i in ignored.iter().take(NAMED_ROWS) {
            out.row_warnings.push(RowWarning {
                row: i,
                text: format!("{{row}} is nearly ignored by the robust fit (weight {}, residual {} robust scales): check it for a typing or reading error rather than deleting it", short(w[i]), short(fit.residuals[i] / fit.scale)),
            });
        }
        if ignored.len() > NAMED_ROWS {
            out.warnings.push(format!("{} more rows have weight below {NEARLY_IGNORED}", ignored.len() - NAMED_ROWS));
        }
        let rule = match loss {
            Loss::Huber => format!("rows more than {tuning} robust scales from the fit are down-weighted, in proportion to how far out they lie"),
            Loss::Bisquare => format!("every row is down-weighted the more the farther it lies from the fit, and rows more than {tuning} robust scales away get weight 0"),
        };
        out.notes.push(format!(
            "{method_label} M-estimate with tuning constant {tuning}: {rule}; standard errors are Huber's asymptotic ones with his small-sample correction, tests and intervals use t on n − p = {df} degrees of freedom; no R² is given, since the fit does not minimise squared error"
        ));
        out.predictor = Some(Predictor {
            form: PredictorForm::Linear { model_row: model_row(req) },
            covariance: (0..p).map(|i| (0..p).map(|j| fit.covariance[j * p + i]).collect()).collect(),
            link: Link::Identity,
            residual_sd: Some(fit.scale),
            df: Some(df),
        });
        let standardized: Vec<f64> = fit.residuals.iter().map(|r| r / fit.scale).collect();
        out.rows = vec![
            RowColumn::new(RowRole::Fitted, fit.fitted.clone()),
            RowColumn::new(RowRole::Residual, fit.residuals.clone()),
            RowColumn::new(RowRole::Weight, fit.weights.clone()),
            RowColumn::new(RowRole::Other("Residual / robust scale".into()), standardized),
        ];
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::protocol::Column;
    use std::collections::BTreeMap;

    fn request(y: Vec<f64>, x: Vec<f64>, method: &str) -> FitRequest {
        let mut options = BTreeMap::new();
        options.insert("method".to_string(), OptionValue::Text(method.into()));
        FitRequest { options, ..FitRequest::new("robust", Column::new("y", y), vec![Column::new("x", x)]) }
    }

    #[test]
    fn a_wild_row_is_down_weighted_and_named() {
        // A line with small alternating scatter and one row far off it
        // (constructed): bisquare gives that row weight 0 and recovers the line.
        let x: Vec<f64> = (0..12).map(f64::from).collect();
        let mut y: Vec<f64> = x.iter().enumerate().map(|(i, v)| 1.0 + 2.0 * v + if i % 2 == 0 { 0.1 } else { -0.1 }).collect();
        y[7] += 40.0;
        let req = request(y, x, "bisquare");
        let out = Robust::new().fit(&req).expect("fits");
        out.check_shape(&req).expect("well formed");
        assert_eq!(out.statistic_rows.get("lowest_weight_1"), Some(&7));
        assert_eq!(out.statistic("lowest_weight_1"), Some(0.0));
        assert_eq!(out.row_warnings.len(), 1);
        assert_eq!(out.row_warnings[0].row, 7);
        let slope = out.coefficients[1].estimate.expect("a slope");
        assert!((slope - 2.0).abs() < 0.02, "{slope}");
        assert!(out.statistic("shift:x").is_some_and(|s| s.abs() > 1.0));
    }

    #[test]
    fn bad_choices_and_too_few_rows_are_errors() {
        let req = request(vec![1.0, 2.0], vec![0.0, 1.0], "huber");
        let e = Robust::new().fit(&req).expect_err("two rows for two coefficients");
        assert!(e.message.contains("too few rows"), "{}", e.message);
        let req = request(vec![1.0, 2.0, 4.0], vec![0.0, 1.0, 2.0], "lms");
        assert!(Robust::new().fit(&req).expect_err("no such method").message.contains("method=lms"));
    }

    #[test]
    fn a_tiny_bisquare_tuning_weighs_the_rows_to_zero() {
        // With c = 0.01 scales nearly every row lies beyond c and gets
        // weight 0 (direct consequence of the bisquare weight): too few
        // rows are left to determine the line.
        let x: Vec<f64> = (0..12).map(f64::from).collect();
        let y: Vec<f64> = x.iter().enumerate().map(|(i, v)| 1.0 + 2.0 * v + [0.3, -0.2, 0.5, -0.6][i % 4]).collect();
        let mut req = request(y, x, "bisquare");
        req.options.insert("tuning".into(), OptionValue::Number(0.01));
        let e = Robust::new().fit(&req).expect_err("rows weighted to zero");
        assert!(e.message.contains("keep a positive weight") && e.message.contains("down-weighted to zero"), "{}", e.message);
        assert!(e.help.as_deref().is_some_and(|h| h.contains("method=huber")));
    }

    #[test]
    fn an_exact_line_for_most_rows_has_zero_scale() {
        let x: Vec<f64> = (0..9).map(f64::from).collect();
        let mut y: Vec<f64> = x.iter().map(|v| 3.0 - v).collect();
        y[2] += 5.0;
        let e = Robust::new().fit(&request(y, x, "huber")).expect_err("scale zero");
        assert!(e.message.contains("scale of the residuals is zero"), "{}", e.message);
    }
}
