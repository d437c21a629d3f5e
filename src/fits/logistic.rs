//! `#logistic`: yes-or-no outcomes (0/1 or true/false, or events out of
//! `trials=`) by maximum likelihood.
//!
//! The numerics live in [`crate::numeric::logistic`]; this file checks the
//! response, runs the fit, and reports coefficients (z tests, Wald
//! intervals), odds ratios, the Diagnostics figures, the per-row columns
//! and the predictor on the logit scale under the protocol's names.

use super::linear::{count, dec, design_of, finite, linear_predictor, param, pval, shared_options, stat, INTERCEPT};
use super::{Fit, FitError};
use crate::numeric::logistic::{self as lg, LogisticError, LogisticProblem};
use crate::protocol::{Coefficient, EVENT_LEVEL, FitOutcome, FitRequest, FunctionSpec, Likelihood, Link, OptionValue, ParamKind, ParamSpec, RowColumn, RowRole};

/// Diagnostics heading: rows, events and the likelihood.
pub const GROUP_DATA: &str = "Rows and events";
/// Diagnostics heading: the test against the intercept alone.
pub const GROUP_HELP: &str = "Do the terms help at all?";
/// Diagnostics heading: odds ratios.
pub const GROUP_ODDS: &str = "Odds ratios (exp of each coefficient)";
/// Diagnostics heading: how well the probabilities sort and match.
pub const GROUP_CLASSIFY: &str = "How well does it classify?";
/// Diagnostics heading: log-likelihood, AIC and BIC.
pub const GROUP_COMPARE: &str = super::linear::GROUP_COMPARE;

/// The built-in logistic fit.
pub struct Logistic {
    spec: FunctionSpec,
}

impl Logistic {
    /// The fit with its spec.
    pub fn new() -> Self {
        let positional = vec![
            ParamSpec { required: true, ..param("response", ParamKind::Column, None, &[], "the yes-or-no column: 0/1 or TRUE/FALSE (1 or TRUE is the event), or text of two levels (see event=); with trials=, the number of events") },
            ParamSpec { required: true, ..param("terms", ParamKind::Terms, None, &[], "predictor terms joined by +, such as Distance + Stops") },
        ];
        let mut options: Vec<ParamSpec> = shared_options().into_iter().filter(|o| o.name != "errors").collect();
        for o in &mut options {
            if o.name == "weights" {
                o.help = "a column of frequency weights: how many times each row counts".into();
            }
        }
        options.push(param("event", ParamKind::Text, None, &[], "the level of a text response counted as the event, such as event=\"pass\" (default: the later of the two levels in alphabetical order)"));
        options.push(param("trials", ParamKind::Column, None, &[], "a column of trial counts: the response is then the number of events out of that many trials per row"));
        options.push(param("cutoff", ParamKind::Number, Some("0.5"), &[], "the fitted probability at or above which a row is classified as an event, for the classification table"));
        Logistic {
            spec: FunctionSpec {
                name: "logistic".into(),
                help: "logistic regression of a yes-or-no response on the terms by maximum likelihood, with odds ratios, probabilities and diagnostics".into(),
                positional,
                options,
            },
        }
    }
}

impl Default for Logistic {
    fn default() -> Self {
        Self::new()
    }
}

impl Fit for Logistic {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let n = req.rows();
        let y = &req.response.values;
        let name = &req.response.name;
        let event_level = match req.options.get(EVENT_LEVEL) {
            Some(OptionValue::Text(l)) => Some(l.clone()),
            _ => None,
        };
        if event_level.is_none() && req.options.contains_key("event") {
            return Err(FitError::new(format!("event= names a level of a text response, but {name} holds numbers")).help("with numbers, 1 (or TRUE) is the event; leave out event=, or recode the column"));
        }
        let trials: Vec<f64> = match req.option_columns.get("trials") {
            Some(t) => {
                for (i, (&k, &m)) in y.iter().zip(t).enumerate() {
                    if !(m >= 1.0 && m.fract() == 0.0) {
                        return Err(FitError::new(format!("the number of trials {m} in {{row}} is not a whole number of at least 1")).at_row(i).help("trials= counts the attempts in each row: a whole number, 1 or more"));
                    }
                    if !(k >= 0.0 && k.fract() == 0.0 && k <= m) {
                        return Err(FitError::new(format!("the events {k} of {name} in {{row}} are not a whole number from 0 to its {m} trials")).at_row(i).help("with trials=, the response counts the events of each row: a whole number between 0 and the trials"));
                    }
                }
                t.clone()
            }
            None => {
                if let Some(i) = y.iter().position(|v| *v != 0.0 && *v != 1.0) {
                    return Err(FitError::new(format!("{name} holds {} in {{row}}; #logistic needs 0 or 1 (or TRUE/FALSE) in every row", y[i]))
                        .at_row(i)
                        .help("code the event as 1 and the non-event as 0, or give trials= when the column counts events out of several trials"));
                }
                vec![1.0; n]
            }
        };
        let weights: Vec<f64> = req.weights.clone().unwrap_or_else(|| vec![1.0; n]);
        let events: f64 = (0..n).map(|i| weights[i] * y[i]).sum();
        let total: f64 = (0..n).map(|i| weights[i] * trials[i]).sum();
        let non = total - events;
        let p = req.columns.len() + usize::from(req.intercept);
        if p == 0 {
            return Err(FitError::new("the model has no terms and no intercept").help("give at least one term, or intercept=yes"));
        }
        if events == 0.0 || non == 0.0 {
            let what = if events == 0.0 { "no events (every value is 0)" } else { "only events (every value is 1)" };
            return Err(FitError::new(format!("{name} has {what}, so there is nothing to tell apart")).help("a yes-or-no response needs both outcomes among the rows used"));
        }
        if events.min(non) < p as f64 {
            return Err(FitError::new(format!(
                "too few events for the model: {} events and {} non-events for {p} coefficients; the smaller count must be at least the number of coefficients",
                events, non
            ))
            .help("use fewer terms or more rows"));
        }
        let (labels, x) = design_of(req);
        let problem = LogisticProblem { x: &x, n, p, events: y, trials: &trials, weights: req.weights.as_deref() };
        let fit = lg::logistic(&problem).map_err(|e| match e {
            LogisticError::NoColumns => FitError::new("every model column is zero, so no coefficient can be estimated"),
            LogisticError::NoConvergence => FitError::new(format!("the fit did not settle within {} iterations", lg::MAX_ITERATIONS)).help("check the terms for extreme values, or use fewer terms"),
            LogisticError::Separation { columns } => {
                let terms: Vec<&str> = columns.iter().map(|&j| labels[j].as_str()).filter(|t| *t != INTERCEPT).collect();
                let which = if terms.is_empty() { "the terms".to_string() } else { terms.join(" and ") };
                let err = FitError::new(format!(
                    "{which} separate the events from the non-events (perfectly, or all but exactly): the fitted probabilities are driven to 0 or 1 and the coefficients grow without limit, so no estimates or standard errors can be given"
                ))
                .help("this is separation: drop or merge the term, or gather more rows; a bias-reduced fit (method=firth) is not available yet");
                match terms.first() {
                    Some(t) => err.at_term(*t),
                    None => err,
                }
            }
        })?;
        let z = lg::normal_quantile(0.5 + req.level / 2.0);
        let mut out = FitOutcome::default();
        let g = GROUP_ODDS;
        for (j, label) in labels.iter().enumerate() {
            let est = !fit.aliased[j];
            let (b, se) = (fit.coefficients[j], fit.std_errors[j]);
            let zs = b / se;
            let (lo, hi) = (b - z * se, b + z * se);
            out.coefficients.push(Coefficient {
                term: label.clone(),
                estimate: est.then_some(b).and_then(finite),
                std_error: est.then_some(se).and_then(finite),
                statistic: est.then_some(zs).and_then(finite),
                p_value: est.then(|| lg::z_p_value(zs)).and_then(finite),
                lower: est.then_some(lo).and_then(finite),
                upper: est.then_some(hi).and_then(finite),
                vif: None,
                standardized: None,
                remark: None,
                term_p_value: None,
            });
            if est && j >= usize::from(req.intercept) {
                let t = label;
                out.statistics.push(stat(&format!("odds_ratio:{t}"), &format!("Odds ratio of {t}"), g, b.exp()));
                out.statistics.push(stat(&format!("odds_ratio_lower:{t}"), &format!("Odds ratio of {t}: interval from"), g, lo.exp()));
                out.statistics.push(stat(&format!("odds_ratio_upper:{t}"), &format!("Odds ratio of {t}: interval to"), g, hi.exp()));
            }
            if fit.aliased[j] {
                out.term_warnings.push(crate::protocol::TermWarning {
                    term: label.clone(),
                    text: format!("the term {label} is an exact combination of the other terms (collinear), so its coefficient cannot be estimated; drop one of them"),
                });
            }
        }
        let k = fit.rank as f64;
        let obs = fit.observations;
        let df_resid = obs - k;
        let df_null = obs - f64::from(u8::from(req.intercept));
        let lr = 2.0 * (fit.log_likelihood - fit.null_log_likelihood);
        let lr_df = k - f64::from(u8::from(req.intercept));
        let aic = -2.0 * fit.log_likelihood + 2.0 * k;
        let bic = -2.0 * fit.log_likelihood + k * obs.ln();
        let cutoff = match req.options.get("cutoff") {
            None => 0.5,
            Some(OptionValue::Number(c)) if *c > 0.0 && *c < 1.0 => *c,
            Some(_) => return Err(FitError::new("cutoff= is not a probability between 0 and 1").help("write the cutoff as a fraction, such as cutoff=0.5")),
        };
        let (mut tp, mut fp, mut tn, mut fneg) = (0.0, 0.0, 0.0, 0.0);
        for i in 0..n {
            let (ev, ne) = (weights[i] * y[i], weights[i] * (trials[i] - y[i]));
            if fit.probability[i] >= cutoff {
                tp += ev;
                fp += ne;
            } else {
                fneg += ev;
                tn += ne;
            }
        }
        let auc = lg::concordance(&fit.probability, y, &trials, &weights);
        let (hl, hl_df, hl_p) = lg::hosmer_lemeshow(&fit.probability, y, &trials, &weights, 10);
        let d = GROUP_DATA;
        let h = GROUP_HELP;
        let c = GROUP_CLASSIFY;
        let cm = GROUP_COMPARE;
        let mut stats = vec![
            count("n", "Rows used", d, n as f64),
            count("observations", "Observations (trials × weights)", d, obs),
            count("events", "Events", d, events),
            count("non_events", "Non-events", d, non),
            count("parameters", "Coefficients estimated (p)", d, k),
            count("iterations", "Iterations of the fit", d, fit.iterations as f64),
            stat("null_deviance", "Null deviance (intercept alone)", h, fit.null_deviance),
            count("null_df", "Null deviance: degrees of freedom", h, df_null),
            stat("deviance", "Residual deviance", h, fit.deviance),
            count("residual_df", "Residual deviance: degrees of freedom", h, df_resid),
            dec("lr_statistic", "Likelihood-ratio χ² against the intercept alone", h, lr, 3),
            count("lr_df", "Likelihood-ratio χ²: degrees of freedom", h, lr_df),
            pval("lr_p_value", "p-value of the likelihood-ratio χ²", h, crate::numeric::chi2_sf(lr, lr_df)),
            dec("mcfadden_r2", "McFadden's pseudo-R² (1 − LL/LL₀; not an R² of variance explained)", h, 1.0 - fit.log_likelihood / fit.null_log_likelihood, 4),
            dec("hosmer_lemeshow", "Hosmer–Lemeshow χ² (10 groups by fitted probability)", c, hl, 3),
            count("hosmer_lemeshow_df", "Hosmer–Lemeshow: degrees of freedom", c, hl_df),
            pval("hosmer_lemeshow_p_value", "p-value of Hosmer–Lemeshow", c, hl_p),
            dec("cutoff", "Cutoff: classified as an event at or above", c, cutoff, 3),
            count("true_events", "Events classified as events", c, tp),
            count("missed_events", "Events classified as non-events", c, fneg),
            count("true_non_events", "Non-events classified as non-events", c, tn),
            count("false_events", "Non-events classified as events", c, fp),
            dec("sensitivity", "Sensitivity (events caught)", c, tp / (tp + fneg), 4),
            dec("specificity", "Specificity (non-events caught)", c, tn / (tn + fp), 4),
            dec("accuracy", "Accuracy (rows classified correctly)", c, (tp + tn) / obs, 4),
            dec("auc", "Area under the ROC curve (concordance)", c, auc, 4),
            dec("log_likelihood", "Log-likelihood", cm, fit.log_likelihood, 3),
            dec("null_log_likelihood", "Log-likelihood, intercept alone", cm, fit.null_log_likelihood, 3),
            dec("aic", "AIC", cm, aic, 3),
            dec("bic", "BIC", cm, bic, 3),
        ];
        stats.append(&mut out.statistics);
        out.statistics = stats;
        if let Some((i, v)) = crate::numeric::diagnostics::largest(&fit.cooks, false) {
            out.statistics.push(dec("max_cooks_distance", "Largest Cook's distance", "Rows that stand out", v, 4));
            out.statistic_rows.insert("max_cooks_distance".into(), i);
        }
        if let Some((i, v)) = crate::numeric::diagnostics::largest(&fit.leverage, false) {
            out.statistics.push(dec("max_leverage", "Largest leverage", "Rows that stand out", v, 4));
            out.statistic_rows.insert("max_leverage".into(), i);
        }
        out.notes.push(match &event_level {
            Some(l) => format!("the event is {name} = \"{l}\"; probabilities are those of the event"),
            None => format!("the event is {name} = 1 (TRUE counts as 1); probabilities are those of the event"),
        });
        out.notes.push("standard errors from the information matrix; z tests and Wald intervals on the normal distribution".into());
        out.predictor = Some(linear_predictor(req, &fit.covariance, Link::Logit));
        out.likelihood = Some(Likelihood { log_likelihood: fit.log_likelihood, parameters: k, observations: obs });
        out.rows = vec![
            RowColumn::new(RowRole::Probability, fit.probability.clone()),
            RowColumn { label: "Pearson residual".into(), ..RowColumn::new(RowRole::Other("pearson_residual".into()), fit.pearson.clone()) },
            RowColumn { label: "Deviance residual".into(), ..RowColumn::new(RowRole::Other("deviance_residual".into()), fit.deviance_residuals.clone()) },
            RowColumn::new(RowRole::Leverage, fit.leverage.clone()),
            RowColumn::new(RowRole::CooksDistance, fit.cooks.clone()),
        ];
        Ok(out)
    }
}
