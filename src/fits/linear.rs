//! `#linear`: least squares on the model terms, ordinary or weighted.
//!
//! The numerics live in [`crate::numeric`]; this file turns a resolved
//! request into a design matrix, runs the fit, and reports coefficients,
//! statistics and per-row columns under the protocol's names.

use super::{Fit, FitError};
use crate::numeric::diagnostics::{self as diag, ErrorKind};
use crate::numeric::{self, serial, LsProblem};
use crate::protocol::{
    Coefficient, FitOutcome, ANOVA_GROUP, FitRequest, Formula, FunctionSpec, LeastSquares, Likelihood, Link, NumberFormat, OptionValue, ParamKind, ParamSpec, Predictor, PredictorForm, RowColumn, RowRole,
    RowWarning, Statistic, TermWarning,
};

/// The option naming the column that orders the rows.
pub const ORDER: &str = "order";
/// The option naming the column that groups the rows.
pub const GROUPS: &str = "groups";
/// The option giving the number of lags.
pub const LAGS: &str = "lags";
/// What `errors=` takes, for messages.
const ERRORS_HELP: &str = "errors takes classic, hc0, hc1, hc2, hc3, neweywest, clustered";
/// Diagnostics heading: the checks of neighbouring rows.
pub const GROUP_ORDER: &str = "Are the errors of neighbouring rows independent?";

/// The label of the intercept term.
pub const INTERCEPT: &str = "Intercept";

/// Diagnostics heading: how closely the fit follows the data.
pub const GROUP_FIT: &str = "How closely does it fit?";
/// Diagnostics heading: the overall F test.
pub const GROUP_HELP: &str = "Do the terms help at all?";
/// Diagnostics heading: the test of each term given all the others.
pub const GROUP_TERMS: &str = "Does each term help, given the others?";
/// Diagnostics heading: log-likelihood, AIC and BIC.
pub const GROUP_COMPARE: &str = "For comparing fits of one response";

/// A term's label, its number of columns and its test (F, degrees of
/// freedom, p-value), when it has one.
type TermTest = (String, usize, Option<(f64, f64, f64)>);

/// The built-in least-squares fit.
pub struct Linear {
    spec: FunctionSpec,
}

pub(crate) fn param(name: &str, kind: ParamKind, default: Option<&str>, choices: &[&str], help: &str) -> ParamSpec {
    ParamSpec {
        name: name.into(),
        kind,
        required: false,
        default: default.map(Into::into),
        choices: choices.iter().map(|c| c.to_string()).collect(),
        help: help.into(),
        example: None,
    }
}

/// The options every fit of the linear family shares, resolved by the host.
pub fn shared_options() -> Vec<ParamSpec> {
    vec![
        param("name", ParamKind::Text, None, &[], "a name other requests use for this fit (default: the request's cell)"),
        param("confidence", ParamKind::Number, Some("0.95"), &[], "confidence level of the intervals, between 0 and 1"),
        param("intercept", ParamKind::Choice, Some("yes"), &["yes", "no"], "fit an intercept"),
        param("weights", ParamKind::Column, None, &[], "a column of non-negative weights (weighted least squares)"),
        param("gaps", ParamKind::Choice, Some("skip"), &["skip", "stop"], "a row with a blank, text or error cell in a column the request uses: skip it (and count it), or stop with an error"),
        param("table", ParamKind::Range, None, &[], "the data table: a sheet name or a range (default: the table on the request's sheet)"),
        ParamSpec { example: Some("against(Bay=\"East\")".into()), ..param("against", ParamKind::Group, None, &[], "the reference level of a text column, which its other levels are compared with, e.g. against(Bay=\"East\")") },
        param("errors", ParamKind::Choice, Some("classic"), &["classic", "hc0", "hc1", "hc2", "hc3", "neweywest", "clustered"], "standard errors: classic (constant variance), heteroscedasticity-consistent hc0, hc1, hc2, hc3, neweywest (autocorrelation-consistent over the rows in order=, needs order=) or clustered (by groups=, needs groups=)"),
        param(ORDER, ParamKind::Column, None, &[], "the column that puts the rows in order (time or sequence) for the checks of neighbouring rows and errors=neweywest (default: sheet order)"),
        param(GROUPS, ParamKind::Column, None, &[], "a column (text or numbers) that groups the rows: neighbours are only looked for within a group, and errors=clustered clusters by it"),
        param(LAGS, ParamKind::Integer, None, &[], "how many neighbours back the Breusch–Godfrey test and errors=neweywest look (default ⌊4(n/100)^(2/9)⌋, at least 1)"),
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

/// `(design column, exponent)` of the powers of one base.
pub(crate) type PowerColumns = Vec<(usize, u32)>;

/// The power columns of a request grouped by base (`Light`, `Light^2`, …):
/// `(base values, [(design column, exponent)])`, design columns counted
/// after the intercept. A repeated exponent of one base is left as a plain
/// column (it is then aliased).
pub(crate) fn power_groups(req: &FitRequest) -> Vec<(&[f64], PowerColumns)> {
    let off = usize::from(req.intercept);
    let n = req.rows();
    let mut groups: Vec<(String, &[f64], PowerColumns)> = Vec::new();
    for (j, c) in req.columns.iter().enumerate() {
        let Some(pw) = &c.power else { continue };
        if pw.base_values.len() != n || pw.exponent == 0 {
            continue;
        }
        let key = pw.base.to_lowercase();
        match groups.iter_mut().find(|g| g.0 == key) {
            Some(g) => {
                if !g.2.iter().any(|e| e.1 == pw.exponent) {
                    g.2.push((j + off, pw.exponent));
                }
            }
            None => groups.push((key, &pw.base_values, vec![(j + off, pw.exponent)])),
        }
    }
    groups.into_iter().map(|g| (g.1, g.2)).collect()
}

/// A statistic shown as a decimal figure.
pub(crate) fn stat(key: &str, label: &str, group: &str, value: f64) -> Statistic {
    Statistic::new(key, label, group, value)
}

/// A count or degrees of freedom.
pub(crate) fn count(key: &str, label: &str, group: &str, value: f64) -> Statistic {
    Statistic::new(key, label, group, value).format(NumberFormat::Integer)
}

/// A p-value.
pub(crate) fn pval(key: &str, label: &str, group: &str, value: f64) -> Statistic {
    Statistic::new(key, label, group, value).format(NumberFormat::PValue)
}

/// A figure on a known scale, shown to `d` decimals.
pub(crate) fn dec(key: &str, label: &str, group: &str, value: f64, d: u8) -> Statistic {
    Statistic::new(key, label, group, value).format(NumberFormat::Decimals(d))
}

/// The design columns of each term of the request, in order: one column
/// for a numeric term, one per indicator for a text column (columns that
/// share [`crate::protocol::Column::term`]). Indices count the intercept.
fn term_blocks(req: &FitRequest) -> Vec<(String, Vec<usize>)> {
    let off = usize::from(req.intercept);
    let mut out: Vec<(String, Vec<usize>)> = Vec::new();
    for (j, c) in req.columns.iter().enumerate() {
        match out.iter_mut().find(|(t, _)| *t == c.term) {
            Some((_, cols)) => cols.push(j + off),
            None => out.push((c.term.clone(), vec![j + off])),
        }
    }
    out
}

/// The predictor of a fit linear in its columns: the model row (intercept,
/// then the columns as sent), the covariance from a column-major `p × p`
/// buffer (NaN of aliased terms as 0) and the link; no residual spread and
/// normal quantiles until the caller says otherwise.
pub(crate) fn linear_predictor(req: &FitRequest, covariance: &[f64], link: Link) -> Predictor {
    let p = req.columns.len() + usize::from(req.intercept);
    Predictor {
        form: PredictorForm::Linear { model_row: model_row(req) },
        covariance: (0..p).map(|i| (0..p).map(|j| covariance[j * p + i]).map(|v| if v.is_finite() { v } else { 0.0 }).collect()).collect(),
        link,
        residual_sd: None,
        df: None,
    }
}

/// The design of a request: the coefficient labels and the `n × p`
/// column-major matrix (a column of ones first with an intercept, then the
/// columns as sent).
pub(crate) fn design_of(req: &FitRequest) -> (Vec<String>, Vec<f64>) {
    let n = req.rows();
    let p = req.columns.len() + usize::from(req.intercept);
    let mut labels: Vec<String> = Vec::with_capacity(p);
    let mut x = Vec::with_capacity(n * p);
    if req.intercept {
        labels.push(INTERCEPT.into());
        x.extend(std::iter::repeat_n(1.0, n));
    }
    for c in &req.columns {
        labels.push(c.name.clone());
        x.extend_from_slice(&c.values);
    }
    (labels, x)
}

/// `Some(x)` when finite.
pub(crate) fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// The design of a request linear in its terms: the labels (intercept
/// first when there is one), the column-major `n × p` matrix and `p`; an
/// error when there is nothing to estimate.
pub(crate) fn design(req: &FitRequest) -> Result<(Vec<String>, Vec<f64>, usize), FitError> {
    let (labels, x) = design_of(req);
    let p = labels.len();
    if p == 0 {
        return Err(FitError::new("the model has no terms and no intercept").help("give at least one term, or intercept=yes"));
    }
    Ok((labels, x, p))
}

/// How a new row becomes the model row of [`design`]: 1 for the
/// intercept, then the request's columns as sent.
pub(crate) fn model_row(req: &FitRequest) -> Vec<Formula> {
    let mut row: Vec<Formula> = Vec::with_capacity(req.columns.len() + 1);
    if req.intercept {
        row.push(Formula::Number(1.0));
    }
    row.extend((0..req.columns.len()).map(Formula::Column));
    row
}

impl Fit for Linear {
    fn spec(&self) -> &FunctionSpec {
        &self.spec
    }

    fn fit(&self, req: &FitRequest) -> Result<FitOutcome, FitError> {
        let n = req.rows();
        let (labels, x, p) = design(req)?;
        let problem = LsProblem {
            x: &x,
            n,
            p,
            y: &req.response.values,
            weights: req.weights.as_deref(),
            has_intercept: req.intercept,
        };
        let fit = {
            let groups = power_groups(req);
            let groups: Vec<numeric::PowerGroup> =
                groups.iter().map(|(base, cols)| numeric::PowerGroup { base, columns: cols }).collect();
            numeric::least_squares_powers(&problem, &groups, req.intercept.then_some(0))
        }
        .map_err(|e| FitError::new(e.to_string()))?;
        let mut out = FitOutcome::default();
        let kind = match req.options.get("errors") {
            None => ErrorKind::Classic,
            Some(OptionValue::Text(w)) => ErrorKind::parse(w).ok_or_else(|| FitError::new(format!("errors={w} is not one of the choices")).help(ERRORS_HELP))?,
            Some(_) => return Err(FitError::new("errors= takes a word").help(ERRORS_HELP)),
        };
        let mut ordered = Ordered::of(req, n)?;
        ordered.allowed_for = matches!(kind, ErrorKind::NeweyWest | ErrorKind::Clustered);
        let intercept_col = req.intercept.then_some(0);
        // The covariance every test uses: classic, robust with errors=hc*,
        // Newey–West or clustered; clustered tests use G − 1 degrees of
        // freedom (G groups), the others n − p.
        let (cov_used, df_tests) = match kind {
            ErrorKind::Classic => (fit.covariance.clone(), fit.df_resid),
            ErrorKind::NeweyWest => {
                if ordered.order.is_none() {
                    return Err(FitError::new("errors=neweywest needs the column that puts the rows in order").help("add order= with the time or sequence column, such as order=Week"));
                }
                (serial::newey_west_covariance(&fit, &x, &ordered.seq, ordered.lags), fit.df_resid)
            }
            ErrorKind::Clustered => {
                if ordered.groups.is_none() {
                    return Err(FitError::new("errors=clustered needs the column that groups the rows").help("add groups= with the grouping column, such as groups=Bay"));
                }
                if ordered.seq.groups < 2 {
                    return Err(FitError::new("errors=clustered needs at least two groups, but the rows used are all in one").help("choose a grouping column with several groups, or another errors= choice"));
                }
                (serial::clustered_covariance(&fit, &x, &ordered.seq.group_of_rows()), (ordered.seq.groups - 1) as f64)
            }
            _ => (diag::robust_covariance(&fit, &x, kind), fit.df_resid),
        };
        let table = if kind == ErrorKind::Classic {
            numeric::coefficient_table(&fit, req.level)
        } else {
            // Same t tests and intervals, on the robust standard errors.
            let cov = &cov_used;
            let mut robust = fit.clone();
            robust.std_errors = (0..p).map(|j| cov[j * p + j].sqrt()).collect();
            robust.df_resid = df_tests;
            numeric::coefficient_table(&robust, req.level)
        };
        out.standard_errors = Some(kind.label().to_string());
        if kind != ErrorKind::Classic {
            let (what, word) = match kind {
                ErrorKind::NeweyWest => (
                    format!("Newey–West autocorrelation-consistent standard errors (Bartlett kernel, {} lags, no small-sample factor, rows {})", ordered.lags, ordered.describe()),
                    "neweywest".to_string(),
                ),
                ErrorKind::Clustered => (
                    format!(
                        "standard errors clustered by {} ({} groups; small-sample factor G/(G − 1)·(n − 1)/(n − k)); t tests, intervals and F tests use G − 1 = {} degrees of freedom",
                        ordered.groups.as_deref().unwrap_or("the groups"),
                        ordered.seq.groups,
                        ordered.seq.groups - 1
                    ),
                    "clustered".to_string(),
                ),
                _ => (format!("{} heteroscedasticity-consistent standard errors", kind.label()), kind.label().to_lowercase()),
            };
            out.notes.push(format!("standard errors, t statistics, p-values and intervals use {what} (errors={word})"));
        }
        let vif = diag::variance_inflation(&fit, &x, intercept_col);
        let standardized = diag::standardized_coefficients(&fit, &x, &req.response.values, intercept_col);
        // Columns that are powers of a base with two or more powers in the
        // model (`Light`, `Light^2`), and the terms that make several
        // columns (the indicators of a text column), by design column.
        let off = usize::from(req.intercept);
        let mut structural = vec![false; off];
        for c in &req.columns {
            let shared = c.power.as_ref().is_some_and(|pw| req.columns.iter().filter(|o| o.power.as_ref().is_some_and(|q| q.base == pw.base)).count() > 1);
            structural.push(shared);
        }
        let blocks = term_blocks(req);
        let in_block = |j: usize| blocks.iter().any(|(_, cols)| cols.len() > 1 && cols.contains(&j));
        // A test of each term given all the others: the Wald statistic of
        // its estimable columns over their number, on F(q, n − p). With the
        // classic covariance this is exactly the F of dropping the term
        // (every other term kept, the "each term given all the others"
        // question, which a reader of one row of the table asks); with
        // errors=hc* it is the robust Wald test in its F form, W/q.
        let b_all: Vec<f64> = fit.coefficients.clone();
        let wald_f = |cols: &[usize]| -> Option<(f64, f64, f64)> {
            let idx: Vec<usize> = cols.iter().copied().filter(|&j| !fit.aliased[j]).collect();
            let q = idx.len() as f64;
            let w = diag::wald(&b_all, &cov_used, p, &idx)?;
            let f = w / q;
            Some((f, q, numeric::f_sf(f, q, df_tests)))
        };
        let term_tests: Vec<TermTest> = blocks.iter().map(|(t, cols)| (t.clone(), cols.len(), wald_f(cols))).collect();
        let term_p = |j: usize| term_tests.iter().zip(&blocks).find(|(_, (_, cols))| cols.len() > 1 && cols.contains(&j)).and_then(|((_, _, t), _)| t.map(|t| t.2));
        for (j, row) in table.iter().enumerate() {
            let est = !fit.aliased[j];
            // VIF and standardized coefficients mean nothing for a power
            // beside other powers of its column (collinear by construction,
            // and "one standard deviation more of x²" with x fixed cannot
            // happen) and without an intercept (there is no mean to centre
            // on); a text column's indicators get one figure for the term.
            let remark = if !est || Some(j) == intercept_col {
                None
            } else if !req.intercept {
                Some("VIF and standardized coefficient left blank: without an intercept they have no meaning")
            } else if structural[j] {
                Some("VIF and standardized coefficient left blank: a power beside other powers of its column")
            } else if in_block(j) {
                Some("VIF left blank: one generalized VIF for the whole term is on Diagnostics")
            } else {
                None
            };
            let plain = remark.is_none();
            out.coefficients.push(Coefficient {
                term: labels[j].clone(),
                estimate: est.then_some(row.estimate).and_then(finite),
                std_error: est.then_some(row.std_error).and_then(finite),
                statistic: est.then_some(row.t).and_then(finite),
                p_value: est.then_some(row.p_value).and_then(finite),
                lower: est.then_some(row.lower).and_then(finite),
                upper: est.then_some(row.upper).and_then(finite),
                vif: if plain { finite(vif[j]) } else { None },
                standardized: if plain || (req.intercept && !structural[j]) { finite(standardized[j]) } else { None },
                remark: remark.map(Into::into),
                term_p_value: if est { term_p(j) } else { None },
            });
            if fit.aliased[j] {
                let combo: Vec<String> = fit.alias_of[j].iter().map(|(k, _)| labels[*k].clone()).collect();
                let with = if combo.is_empty() { "the other terms".to_string() } else { combo.join(", ") };
                out.term_warnings.push(TermWarning {
                    term: labels[j].clone(),
                    text: format!("the term {} is an exact combination of {} (collinear), so its coefficient cannot be estimated; drop one of them", labels[j], with),
                });
            }
        }
        let g = GROUP_FIT;
        let h = GROUP_HELP;
        let c = GROUP_COMPARE;
        let a = ANOVA_GROUP;
        let r2_label = if req.intercept { "R²" } else { "R² (uncentred, no intercept)" };
        out.statistics = vec![
            count("n", "Rows used (n)", g, fit.n as f64),
            count("parameters", "Coefficients estimated (p)", g, fit.rank as f64),
            count("residual_df", "Residual degrees of freedom (n − p)", g, fit.df_resid),
            stat("residual_standard_error", "Residual standard error", g, fit.sigma),
            dec("r_squared", r2_label, g, fit.r_squared, 4),
            dec("adj_r_squared", "Adjusted R²", g, fit.adj_r_squared, 4),
            dec("f_statistic", "F statistic", h, fit.f_statistic, 2),
            count("f_df_terms", "F: degrees of freedom of the terms", h, fit.df_model),
            count("f_df_residual", "F: residual degrees of freedom", h, fit.df_resid),
            pval("f_p_value", "p-value of F", h, fit.f_p_value),
            dec("log_likelihood", "Log-likelihood", c, fit.log_likelihood, 3),
            dec("aic", "AIC", c, fit.aic, 3),
            dec("bic", "BIC", c, fit.bic, 3),
            count("df_model", "Degrees of freedom, terms", a, fit.df_model),
            stat("ss_model", "Sum of squares, terms", a, fit.ssr),
            stat("ms_model", "Mean square, terms", a, fit.ssr / fit.df_model),
            count("df_resid", "Degrees of freedom, residual", a, fit.df_resid),
            stat("ss_resid", "Sum of squares, residual", a, fit.sse),
            stat("ms_resid", "Mean square, residual", a, fit.sse / fit.df_resid),
            count("df_total", "Degrees of freedom, total", a, fit.df_model + fit.df_resid),
            stat("ss_total", if req.intercept { "Sum of squares, total (about the mean)" } else { "Sum of squares, total (about zero)" }, a, fit.sst),
            dec("anova_f", "F (mean square of the terms / mean square of the residual)", a, fit.f_statistic, 2),
            pval("anova_f_p_value", "p-value of F (upper tail)", a, fit.f_p_value),
        ];
        // With errors=hc* the overall F is the robust Wald test of every
        // coefficient but the intercept (W/q on F(q, n − p)).
        if kind != ErrorKind::Classic {
            let all: Vec<usize> = (usize::from(req.intercept)..p).collect();
            if let (Some((f, _, pv)), Some(at)) = (wald_f(&all), out.statistics.iter().position(|s| s.key == "f_statistic")) {
                out.statistics[at] = dec("f_statistic", "F statistic", h, f, 2);
                if let Some(s) = out.statistics.iter_mut().find(|s| s.key == "f_p_value") {
                    s.value = pv;
                }
                if let Some(s) = out.statistics.iter_mut().find(|s| s.key == "f_df_residual") {
                    s.value = df_tests;
                }
            }
            out.notes.push(format!("the F test of all the terms and the test of each term are robust Wald tests on the {} covariance, in their F form W/q on F(q, {df_tests}); the analysis of variance stays classic", kind.label()));
        }
        // Each term given all the others, after the overall F.
        let t = GROUP_TERMS;
        let mut tests = Vec::new();
        for (term, _, test) in &term_tests {
            let Some((f, q, pv)) = test else { continue };
            tests.push(dec(&format!("term_f:{term}"), &format!("{term}: F"), t, *f, 2));
            tests.push(count(&format!("term_df:{term}"), &format!("{term}: degrees of freedom"), t, *q));
            tests.push(pval(&format!("term_p:{term}"), &format!("{term}: p-value"), t, *pv));
        }
        let at = out.statistics.iter().position(|s| s.key == "f_p_value").map_or(out.statistics.len(), |i| i + 1);
        out.statistics.splice(at..at, tests);
        if !req.intercept {
            out.notes.push("no intercept: R² is the uncentred one, 1 − SSE/Σy²".into());
        }
        // An exact fit (no residual) has an infinite F: say so, and leave
        // the cells blank (an outcome's statistics are finite or NaN).
        if out.statistics.iter().any(|s| s.value.is_infinite()) {
            out.notes.push("the fit is exact (every residual is zero), so F is infinite and its cells are left blank".into());
            for s in &mut out.statistics {
                if s.value.is_infinite() {
                    s.value = f64::NAN;
                }
            }
        }
        // What predictions need: the model row (intercept, then the columns
        // as sent), the covariance (column-major p×p from the fit; NaN of
        // aliased terms as 0), the residual spread and its degrees of freedom.
        out.predictor = Some(Predictor {
            residual_sd: (fit.sigma.is_finite() && fit.sigma > 0.0).then_some(fit.sigma),
            df: (fit.df_resid > 0.0).then_some(fit.df_resid),
            ..linear_predictor(req, &fit.covariance, Link::Identity)
        });
        // AIC and BIC count the estimated coefficients (the rank), as the
        // statistics above do.
        out.likelihood = fit.log_likelihood.is_finite().then_some(Likelihood { log_likelihood: fit.log_likelihood, parameters: fit.rank as f64, observations: fit.n as f64 });
        out.least_squares = Some(LeastSquares { ss_resid: fit.sse, df_resid: fit.df_resid, r_squared: fit.r_squared, adj_r_squared: fit.adj_r_squared });
        let std_res = numeric::standardized_residuals(&fit);
        let cooks = numeric::cooks_distance(&fit);
        let external = diag::studentized_residuals_external(&fit);
        let dffits = diag::dffits(&fit, &external);
        let gvif: Vec<(String, f64, usize)> = blocks.iter().filter(|(_, cols)| cols.len() > 1).map(|(t, cols)| (t.clone(), diag::generalized_variance_inflation(&fit, &x, cols), cols.len())).collect();
        let design = Design { x: &x, labels: &labels, structural: &structural, vif: &vif, gvif: &gvif };
        diagnose(&fit, &design, &ordered, &cooks, &external, &mut out);
        // The blocks in plumb's order: the questions first, comparing fits
        // and the analysis of variance last.
        let rank = |g: &str| [GROUP_COMPARE, ANOVA_GROUP].iter().position(|x| *x == g).map_or(0, |i| i + 1);
        out.statistics.sort_by_key(|s| rank(&s.group));
        out.rows = vec![
            RowColumn::new(RowRole::Fitted, fit.fitted.clone()),
            RowColumn::new(RowRole::Residual, fit.residuals.clone()),
            RowColumn::new(RowRole::StandardizedResidual, std_res),
            RowColumn::new(RowRole::StudentizedResidual, external),
            RowColumn::new(RowRole::Leverage, fit.leverage.clone()),
            RowColumn::new(RowRole::CooksDistance, cooks),
            RowColumn::new(RowRole::Dffits, dffits),
        ];
        Ok(out)
    }
}

/// The rows' order and groups for the checks of neighbouring rows and the
/// Newey–West and clustered standard errors: the columns' names as typed
/// (`None` when not given), the sequence and the number of lags.
struct Ordered {
    order: Option<String>,
    groups: Option<String>,
    seq: serial::Sequence,
    lags: usize,
    /// Whether the standard errors in use allow for correlated errors
    /// (`errors=neweywest` or `clustered`).
    allowed_for: bool,
}

impl Ordered {
    /// From the request's `order=`, `groups=` and `lags=`.
    fn of(req: &FitRequest, n: usize) -> Result<Ordered, FitError> {
        let name = |key: &str| match req.options.get(key) {
            Some(OptionValue::Text(t)) => Some(t.clone()),
            _ => None,
        };
        let (order, groups) = (req.option_columns.get(ORDER), req.option_columns.get(GROUPS));
        let seq = serial::Sequence::new(n, order.map(Vec::as_slice), groups.map(Vec::as_slice));
        let lags = match req.options.get(LAGS) {
            None => serial::default_lags(n),
            Some(OptionValue::Number(k)) if k.fract() == 0.0 && *k >= 1.0 && *k < n as f64 => *k as usize,
            Some(OptionValue::Number(k)) => {
                return Err(FitError::new(format!("lags={k} is not a whole number from 1 to {}", n.saturating_sub(1))).help("give how many neighbours back to look, such as lags=4"))
            }
            Some(_) => return Err(FitError::new("lags= takes a whole number").help("give how many neighbours back to look, such as lags=4")),
        };
        Ok(Ordered {
            order: order.map(|_| name(ORDER).unwrap_or_else(|| ORDER.to_string())),
            groups: groups.map(|_| name(GROUPS).unwrap_or_else(|| GROUPS.to_string())),
            seq,
            lags,
            allowed_for: false,
        })
    }

    /// Which order the checks use, in words ("sorted by Week within each
    /// Bay", "in sheet order").
    fn describe(&self) -> String {
        match (&self.order, &self.groups) {
            (Some(o), Some(g)) => format!("sorted by {o} within each {g}"),
            (Some(o), None) => format!("sorted by {o}"),
            (None, Some(g)) => format!("in sheet order within each {g}"),
            (None, None) => "in sheet order".to_string(),
        }
    }
}

/// The checks of neighbouring rows (Durbin–Watson with its exact p-value,
/// Breusch–Godfrey) on the weighted residuals `u` in the order `ordered`,
/// with the notes saying which order was used; returns Durbin–Watson.
fn neighbours(fit: &numeric::LsFit, x: &[f64], ordered: &Ordered, u: &[f64], out: &mut FitOutcome) -> f64 {
    let g = GROUP_ORDER;
    let seq = &ordered.seq;
    let dw = serial::durbin_watson(u, seq);
    out.statistics.push(dec("durbin_watson", "Durbin–Watson (no correlation = 2)", g, dw, 3).detail(format!("rows {}", ordered.describe())));
    match serial::durbin_watson_p(fit, x, seq, dw) {
        Some(p) => {
            out.statistics.push(pval("durbin_watson_p_value", "p-value of Durbin–Watson (exact; against positive correlation)", g, p.probability));
            if p.probability <= 2.0 * p.error {
                out.notes.push(format!("the exact p-value of Durbin–Watson is below the accuracy of its numerical integral ({}): read it as less than that", short(2.0 * p.error)));
            }
        }
        None if fit.n > serial::DW_EXACT_MAX_ROWS => out.notes.push(format!(
            "the exact p-value of Durbin–Watson is left out: it is computed for up to {} rows (the work grows with the cube of the rows); the Breusch–Godfrey test stands in",
            serial::DW_EXACT_MAX_ROWS
        )),
        None => {}
    }
    match serial::breusch_godfrey(fit, x, seq, ordered.lags) {
        Some(bg) => {
            out.statistics.push(dec("breusch_godfrey", "Breusch–Godfrey (n·R²)", g, bg.statistic, 3));
            out.statistics.push(pval("breusch_godfrey_p_value", "p-value of Breusch–Godfrey (χ²)", g, bg.p_value));
            out.statistics.push(count("breusch_godfrey_lags", "Lags tested by Breusch–Godfrey", g, bg.lags as f64));
        }
        None if u.iter().any(|v| *v != 0.0) => out.notes.push(format!(
            "the Breusch–Godfrey test is left out: its regression of the residuals on the terms and {} lags needs more rows than columns; give fewer lags=",
            ordered.lags
        )),
        None => {}
    }
    if ordered.order.is_none() {
        out.notes.push(format!(
            "the checks of neighbouring rows use the rows {}: neighbours in the sheet may not be neighbours in time; give order= with the time or sequence column",
            ordered.describe()
        ));
    } else {
        let ties = if seq.ties > 0 { format!("; {} rows share their {} with the row before and keep their sheet order", seq.ties, ordered.order.as_deref().unwrap_or(ORDER)) } else { String::new() };
        out.notes.push(format!("the checks of neighbouring rows use the rows {}{ties}", ordered.describe()));
    }
    if ordered.groups.is_some() {
        out.notes.push(format!("Durbin–Watson and Breusch–Godfrey compare neighbours within a group only ({} groups): the differences are summed within groups, and a lag reaching before a group's first row counts as 0", seq.groups));
    }
    dw
}

/// Durbin–Watson values outside this band draw a warning (a common rule of
/// thumb, not a test: the exact bounds depend on n and the design).
pub const DW_BAND: (f64, f64) = (1.5, 2.5);
/// Breusch–Pagan (Koenker's form) p-values below this draw a warning.
pub const BP_ALPHA: f64 = 0.05;
/// Cook's distances above this draw a warning naming the row (common
/// practice: above 0.5 worth a look, above 1 clearly influential).
pub const COOK_WARN: f64 = 0.5;
/// Variance inflation factors above this draw a warning (common practice,
/// e.g. Marquardt 1970's guidance that VIFs well above 10 signal trouble).
pub const VIF_WARN: f64 = 10.0;
/// |externally studentized residual| above this is counted as unusual
/// (common practice).
pub const STUDENTIZED_FLAG: f64 = 3.0;

/// Shortest figure for a warning: four significant digits.
fn short(x: f64) -> String {
    if !x.is_finite() || x == 0.0 {
        return format!("{x}");
    }
    if x.abs() >= 1e5 || x.abs() < 1e-3 {
        format!("{x:.3e}")
    } else {
        // |x| in [1e-3, 1e5): the exponent is in -3..=4.
        let digits = (3 - x.abs().log10().floor() as i32).clamp(0, 6) as usize;
        format!("{x:.digits$}")
    }
}

/// The design as [`diagnose`] needs it: the columns (`n × p`,
/// column-major), their labels, which are powers beside other powers of
/// their column (collinear by construction: no VIF, no warning), the VIF of
/// each column and the generalized VIF of each term of several columns.
struct Design<'a> {
    x: &'a [f64],
    labels: &'a [String],
    structural: &'a [bool],
    vif: &'a [f64],
    gvif: &'a [(String, f64, usize)],
}

/// The residual checks, collinearity and influence statistics of a fit, and
/// the plain-language warnings they call for.
fn diagnose(fit: &numeric::LsFit, d: &Design, ordered: &Ordered, cooks: &[f64], external: &[f64], out: &mut FitOutcome) {
    let (x, labels, structural) = (d.x, d.labels, d.structural);
    let n = fit.n;
    let p = fit.coefficients.len();
    let nf = n as f64;
    let k = fit.rank as f64;
    let u = diag::weighted_residuals(fit);
    let shape = "Shape of the residuals";
    let jb = diag::jarque_bera(&u);
    out.statistics.push(dec("jarque_bera", "Jarque–Bera", shape, jb.statistic, 3));
    out.statistics.push(pval("jarque_bera_p_value", "p-value of Jarque–Bera", shape, jb.p_value));
    out.statistics.push(dec("skewness", "Skewness of residuals (symmetric = 0)", shape, jb.skewness, 3));
    out.statistics.push(dec("kurtosis", "Kurtosis of residuals (normal = 3)", shape, jb.kurtosis, 3));
    let spread = "Spread of the residuals";
    let bp = diag::breusch_pagan(&u, &fit.fitted, x, n, p, fit.has_intercept);
    if let Some(bp) = &bp {
        out.statistics.push(dec("bp_koenker", "Breusch–Pagan (Koenker, studentized)", spread, bp.koenker, 3));
        out.statistics.push(pval("bp_koenker_p_value", "p-value of Breusch–Pagan (Koenker)", spread, bp.koenker_p));
        out.statistics.push(dec("bp_original", "Breusch–Pagan (original)", spread, bp.original, 3));
        out.statistics.push(pval("bp_original_p_value", "p-value of Breusch–Pagan (original)", spread, bp.original_p));
        out.statistics.push(count("bp_df", "Degrees of freedom of Breusch–Pagan", spread, bp.df));
    }
    let dw = neighbours(fit, x, ordered, &u, out);

    let co = "Do the terms overlap?";
    // The scaled condition number is that of the raw design; a fit with
    // powers of one column is solved in a centred basis instead, where that
    // figure says nothing about its accuracy: left out there.
    if structural.iter().any(|s| *s) {
        out.notes.push("the condition number is left out: powers of one column are fitted in a centred, scaled basis, so the raw design's condition number says nothing about this fit's accuracy".into());
    } else {
        out.statistics.push(dec("condition_number", "Condition number (columns scaled to unit length)", co, fit.condition_number, 1));
    }
    // The VIFs shown: none for powers beside other powers, for a text
    // column's indicators or without an intercept.
    let single: Vec<f64> = d
        .vif
        .iter()
        .enumerate()
        .map(|(j, v)| if out.coefficients.get(j).is_some_and(|c| c.vif.is_none()) { f64::NAN } else { *v })
        .collect();
    if let Some((j, v)) = diag::largest(&single, false) {
        out.statistics.push(dec("max_vif", "Largest variance inflation factor", co, v, 2).detail(labels[j].clone()));
    }
    for (term, g, _) in d.gvif {
        out.statistics.push(dec(&format!("gvif:{term}"), &format!("Generalized VIF of {term}"), co, *g, 2));
    }

    let inf = "Rows that stand out";
    let lev_limit = 2.0 * k / nf;
    let cook_limit = 4.0 / nf;
    if let Some((i, v)) = diag::largest(&fit.leverage, false) {
        out.statistics.push(dec("max_leverage", "Largest leverage", inf, v, 4));
        out.statistic_rows.insert("max_leverage".into(), i);
    }
    if let Some((i, v)) = diag::largest(cooks, false) {
        out.statistics.push(dec("max_cooks_distance", "Largest Cook's distance", inf, v, 4));
        out.statistic_rows.insert("max_cooks_distance".into(), i);
    }
    if let Some((i, v)) = diag::largest(external, true) {
        out.statistics.push(dec("max_studentized_residual", "Largest externally studentized residual (by size)", inf, v, 3));
        out.statistic_rows.insert("max_studentized_residual".into(), i);
    }
    out.statistics.push(count("leverage_flag_count", "Rows with leverage above 2p/n", inf, diag::count_above(&fit.leverage, lev_limit, false) as f64));
    out.statistics.push(count("cooks_flag_count", "Rows with Cook's distance above 4/n", inf, diag::count_above(cooks, cook_limit, false) as f64));
    out.statistics.push(count("studentized_flag_count", "Rows with |externally studentized residual| above 3", inf, diag::count_above(external, STUDENTIZED_FLAG, true) as f64));

    // Warnings in plain words.
    if dw.is_finite() && n >= 3 && (dw < DW_BAND.0 || dw > DW_BAND.1) {
        let how = if dw < DW_BAND.0 { "neighbouring rows tend to have residuals of the same sign" } else { "neighbouring rows tend to have residuals of opposite sign" };
        out.warnings.push(format!(
            "the residuals look correlated in {}: Durbin–Watson is {} (far from 2; below {} or above {} draws this warning), so {how}; {}",
            if ordered.order.is_some() || ordered.groups.is_some() { "the order of the rows used" } else { "row order" },
            short(dw), DW_BAND.0, DW_BAND.1,
            if ordered.allowed_for { "the standard errors in use allow for it" } else if ordered.order.is_some() { "the classic standard errors may be too small: errors=neweywest allows for it" } else { "if the rows are in time order, the standard errors may be too small (give order= with the time column)" }
        ));
    }
    if let Some(bp) = &bp {
        if bp.koenker_p < BP_ALPHA {
            let what = if bp.trend_with_fitted > 0.0 { "the spread of the residuals changes with the terms, growing with the fitted value" } else { "the spread of the residuals changes with the terms" };
            out.warnings.push(format!(
                "{what} (Breusch–Pagan p = {}, below {BP_ALPHA}); classic standard errors may be off — errors=hc3 gives ones that allow for it",
                short(bp.koenker_p)
            ));
        }
    }
    let mut big: Vec<(usize, f64)> = cooks.iter().copied().enumerate().filter(|(_, d)| d.is_finite() && *d > COOK_WARN).collect();
    big.sort_by(|a, b| b.1.total_cmp(&a.1));
    for &(i, d) in big.iter().take(3) {
        out.row_warnings.push(RowWarning {
            row: i,
            text: format!("{{row}} has a large influence on this fit (Cook's distance {}, above {COOK_WARN}); check it and see how the fit changes without it", short(d)),
        });
    }
    if big.len() > 3 {
        out.warnings.push(format!("{} more rows have Cook's distance above {COOK_WARN}", big.len() - 3));
    }
    // A term of several columns is judged by its generalized VIF on the
    // VIF's own scale, GVIF^(1/df) (Fox & Monette 1992 compare
    // GVIF^(1/(2·df)) with √VIF).
    let mut collinear: Vec<String> = single.iter().enumerate().filter(|(_, v)| v.is_finite() && **v > VIF_WARN).map(|(j, v)| format!("{} ({})", labels[j], short(*v))).collect();
    for (term, g, df) in d.gvif {
        if g.is_finite() && g.powf(1.0 / *df as f64) > VIF_WARN {
            collinear.push(format!("{term} (generalized VIF {})", short(*g)));
        }
    }
    if structural.iter().any(|s| *s) {
        out.notes.push("powers of one column are collinear by construction, which does no harm to the fit; their variance inflation factors are left blank and draw no warning".into());
    }
    if !collinear.is_empty() {
        out.warnings.push(format!(
            "terms nearly collinear: variance inflation factor above {VIF_WARN} for {}; their estimates are unstable and hard to tell apart",
            collinear.join(", ")
        ));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::protocol::Column;
    use std::collections::BTreeMap;

    fn request(y: Vec<f64>, cols: Vec<Column>, intercept: bool, weights: Option<Vec<f64>>, errors: &str) -> FitRequest {
        let mut options = BTreeMap::new();
        options.insert("errors".to_string(), OptionValue::Text(errors.into()));
        FitRequest { intercept, weights, options, ..FitRequest::new("linear", Column::new("y", y), cols) }
    }

    #[test]
    fn robust_errors_with_weights_an_aliased_term_and_no_intercept() {
        let x: Vec<f64> = (0..10).map(|i| i as f64).collect();
        let twice: Vec<f64> = x.iter().map(|v| 2.0 * v).collect();
        let z: Vec<f64> = (0..10).map(|i| ((i * 7) % 5) as f64).collect();
        let y: Vec<f64> = (0..10).map(|i| 1.0 + 0.5 * i as f64 + ((i * 3) % 4) as f64 * 0.3).collect();
        let w: Vec<f64> = (0..10).map(|i| 1.0 + (i % 3) as f64).collect();
        let req = request(y, vec![Column::new("x", x), Column::new("twice", twice), Column::new("z", z)], false, Some(w), "hc3");
        let out = Linear::new().fit(&req).expect("fits");
        out.check_shape(&req).expect("well formed");
        assert_eq!(out.standard_errors.as_deref(), Some("HC3"));
        let aliased = &out.coefficients[1];
        assert!(aliased.estimate.is_none() && aliased.std_error.is_none() && aliased.vif.is_none());
        // Without an intercept VIF and standardized coefficients mean
        // nothing: blank, with the reason.
        for c in [&out.coefficients[0], &out.coefficients[2]] {
            assert!(c.std_error.is_some_and(|v| v > 0.0) && c.vif.is_none() && c.standardized.is_none(), "{c:?}");
            assert!(c.remark.as_deref().is_some_and(|r| r.contains("without an intercept")), "{c:?}");
        }
        assert!(out.notes.iter().any(|n| n.contains("HC3")));
    }

    #[test]
    fn an_exact_fit_gives_blank_checks_and_no_false_warnings() {
        let x: Vec<f64> = (0..8).map(|i| i as f64).collect();
        let y: Vec<f64> = x.iter().map(|v| 1.0 + 2.0 * v).collect();
        let req = request(y, vec![Column::new("x", x)], true, None, "hc1");
        let out = Linear::new().fit(&req).expect("fits");
        out.check_shape(&req).expect("well formed");
        // Every residual is zero: Durbin–Watson and Jarque–Bera are 0/0.
        assert!(out.statistic("durbin_watson").is_some_and(f64::is_nan));
        assert!(out.statistic("jarque_bera").is_some_and(f64::is_nan));
        assert!(out.row_warnings.is_empty());
        assert!(out.warnings.iter().all(|w| !w.contains("correlated") && !w.contains("spread")), "{:?}", out.warnings);
    }

    #[test]
    fn ordered_options_are_checked() {
        let x: Vec<f64> = (0..12).map(|i| i as f64).collect();
        let y: Vec<f64> = (0..12).map(|i| 1.0 + 0.5 * i as f64 + ((i * 5) % 3) as f64).collect();
        let plain = request(y.clone(), vec![Column::new("x", x.clone())], true, None, "neweywest");
        let e = Linear::new().fit(&plain).expect_err("needs order=");
        assert!(e.message.contains("order"), "{e:?}");
        let e = Linear::new().fit(&FitRequest { options: [("errors".to_string(), OptionValue::Text("clustered".into()))].into(), ..plain.clone() }).expect_err("needs groups=");
        assert!(e.message.contains("groups"), "{e:?}");
        // One group only: no clustering.
        let mut one = plain.clone();
        one.options.insert("errors".into(), OptionValue::Text("clustered".into()));
        one.option_columns.insert(GROUPS.into(), vec![1.0; 12]);
        assert!(Linear::new().fit(&one).expect_err("one group").message.contains("two groups"));
        // lags= from 1 to n − 1.
        let mut lags = request(y, vec![Column::new("x", x)], true, None, "classic");
        lags.options.insert(LAGS.into(), OptionValue::Number(12.0));
        assert!(Linear::new().fit(&lags).expect_err("too many lags").message.contains("lags=12"));
        // 10 lags + 2 columns on 12 rows: no Breusch–Godfrey, and a note.
        lags.options.insert(LAGS.into(), OptionValue::Number(10.0));
        let out = Linear::new().fit(&lags).expect("fits");
        assert!(out.statistic("breusch_godfrey").is_none() && out.notes.iter().any(|n| n.contains("Breusch–Godfrey test is left out")), "{:?}", out.notes);
        lags.options.insert(LAGS.into(), OptionValue::Number(3.0));
        let out = Linear::new().fit(&lags).expect("fits");
        assert_eq!(out.statistic("breusch_godfrey_lags"), Some(3.0));
        // Without order= a note says the rows are in sheet order.
        assert!(out.notes.iter().any(|n| n.contains("in sheet order") && n.contains("may not be neighbours in time")), "{:?}", out.notes);
    }

    #[test]
    fn short_figures() {
        // Four significant digits (our display rule).
        assert_eq!(short(1.485131), "1.485");
        assert_eq!(short(149.53), "149.5");
        assert_eq!(short(0.012345), "0.01235");
        assert_eq!(short(0.0), "0");
        assert_eq!(short(2.5e-7), "2.500e-7");
    }

    #[test]
    fn constant_residuals_in_row_order_do_not_fail() {
        // A constant y fitted through the origin on x: the residuals
        // 1 − b·x fall in a straight line, so neighbouring rows are alike
        // and Durbin–Watson is small (direct consequence of its formula).
        let x: Vec<f64> = (1..9).map(|i| i as f64).collect();
        let y: Vec<f64> = vec![1.0; 8];
        let req = request(y, vec![Column::new("x", x)], false, None, "hc0");
        let out = Linear::new().fit(&req).expect("fits");
        out.check_shape(&req).expect("well formed");
        assert!(out.statistic("durbin_watson").is_some_and(|d| d < 1.5));
        assert!(out.warnings.iter().any(|w| w.contains("correlated in row order")), "{:?}", out.warnings);
    }

    #[test]
    fn as_many_rows_as_parameters_does_not_fail() {
        let req = request(vec![1.0, 3.0], vec![Column::new("x", vec![0.0, 1.0])], true, None, "hc2");
        let out = Linear::new().fit(&req).expect("fits");
        out.check_shape(&req).expect("well formed");
    }

    #[test]
    fn an_influential_row_is_named_by_index() {
        // Ten points on a line with small scatter, and one far out of line at
        // a far x: its Cook's distance is far above 0.5 (constructed; the
        // threshold is common practice).
        let mut x: Vec<f64> = (0..10).map(|i| i as f64).collect();
        let mut y: Vec<f64> = x.iter().enumerate().map(|(i, v)| 2.0 * v + if i % 3 == 0 { 0.2 } else { -0.1 }).collect();
        x.push(30.0);
        y.push(20.0);
        let req = request(y, vec![Column::new("x", x)], true, None, "classic");
        let out = Linear::new().fit(&req).expect("fits");
        assert_eq!(out.row_warnings.len(), 1, "{:?}", out.row_warnings);
        assert_eq!(out.row_warnings[0].row, 10);
        assert!(out.row_warnings[0].text.starts_with("{row} has a large influence"));
        assert_eq!(out.statistic_rows.get("max_cooks_distance"), Some(&10));
        assert_eq!(out.statistic_rows.get("max_leverage"), Some(&10));
    }
}
