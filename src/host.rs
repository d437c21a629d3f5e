//! The host's own functions, `#predict` and `#compare`, evaluated after the fits.
//!
//! They work on the outcomes of other requests, found by name: `#predict`
//! turns new values into a model row through the fit's [`Recipe`] and
//! computes the predicted value with the confidence interval of the mean
//! and the prediction interval of a new observation; `#compare` sets fits
//! of one response on the same rows side by side, with nested-model F
//! tests. The results are plain data that `layout` arranges.
//!
//! Formulas (any regression text, e.g. Weisberg, *Applied Linear
//! Regression*, 4th ed., 2014, §3.6 and §6.1; statsmodels' `get_prediction`
//! and `compare_f_test` compute the same): with model row `x`, estimates
//! `b`, covariance `V = s²(XᵀX)⁻¹`, residual standard deviation `s` on `df`
//! degrees of freedom and `t = t_{1−α/2, df}`,
//! `ŷ = xᵀb`, `se_mean = √(xᵀVx)`, `se_new = √(s² + xᵀVx)`,
//! mean interval `ŷ ± t·se_mean`, new-observation interval `ŷ ± t·se_new`;
//! the leverage of the new point is `xᵀVx / s²`. Nested F test of a smaller
//! fit (residual sum of squares `SSE₀`, `df₀`) inside a larger (`SSE₁`,
//! `df₁`): `F = ((SSE₀ − SSE₁)/(df₀ − df₁)) / (SSE₁/df₁)` on
//! `(df₀ − df₁, df₁)` degrees of freedom.

use crate::cells::{CellAddress, Value, Workbook};
use crate::numeric::f_sf;
use crate::predict;
use crate::problems::{closest, Problem};
use crate::protocol::{Predictor, RowRole};
use crate::protocol::FunctionSpec;
use crate::recipe::{NewValue, Recipe};
use crate::resolve::{self, BoundArg, BoundValue, Place};
use crate::cells::CellRange;
use crate::report::{ComparedFit, Comparison, HostOutcome, NestedTest, Prediction, PredictionRow, Report};
use crate::syntax::{ExprKind, Request, UnaryOp};
use std::collections::BTreeMap;

/// What the pipeline needs of a host function's evaluation.
#[derive(Debug, Clone)]
pub struct HostResult {
    /// The tables.
    pub outcome: HostOutcome,
    /// Warnings (points outside the data) and notes (options under their
    /// old names).
    pub warnings: Vec<Problem>,
    /// The response of the fits used.
    pub response: String,
    /// The names of the fits used.
    pub fits: Vec<String>,
    /// Rows of the (first) fit used.
    pub rows_used: usize,
    /// Confidence level used.
    pub level: f64,
}

struct Ctx<'a> {
    cell: &'a CellAddress,
    text: &'a str,
}

impl Ctx<'_> {
    fn err(&self, span: crate::syntax::Span, msg: impl Into<String>) -> Problem {
        Problem::error(msg).at(self.cell.clone()).in_text(self.text, span.start, span.end)
    }
    fn whole(&self, msg: impl Into<String>) -> Problem {
        Problem::error(msg).at(self.cell.clone())
    }
}

/// The report of a fit by name among the fits already evaluated.
fn find_fit<'r>(ctx: &Ctx, reports: &[&'r Report], name: &str, span: crate::syntax::Span) -> Result<&'r Report, Problem> {
    let found = reports.iter().copied().find(|r| r.name.eq_ignore_ascii_case(name.trim()) && !r.function.is_empty() && r.host.is_none());
    match found {
        Some(r) if r.outcome.is_some() => Ok(r),
        Some(r) => Err(ctx
            .err(span, format!("the fit '{}' failed, so there is nothing to use", r.name))
            .help(format!("fix the request at {} first", r.cell))),
        None => {
            let names: Vec<&str> = reports.iter().filter(|r| r.outcome.is_some() && r.host.is_none()).map(|r| r.name.as_str()).collect();
            let near = closest(name.trim(), names.iter().copied());
            let help = match near.first() {
                Some(n) => format!("did you mean {n}? The fits are {}", names.join(", ")),
                None if names.is_empty() => "give a #linear request a name, such as name=main, and refer to it".to_string(),
                None => format!("the fits are {} (a fit is named with name=, or by its cell)", names.join(", ")),
            };
            Err(ctx.err(span, format!("there is no fit named '{}'", name.trim())).help(help))
        }
    }
}

fn new_value(e: &crate::syntax::Expr) -> Option<NewValue> {
    match &e.kind {
        ExprKind::Number(x) => Some(NewValue::Number(*x)),
        ExprKind::Unary { op: UnaryOp::Neg, operand } => match operand.kind {
            ExprKind::Number(x) => Some(NewValue::Number(-x)),
            _ => None,
        },
        ExprKind::Name(s) | ExprKind::Quoted(s) => Some(NewValue::Text(s.trim().to_string())),
        _ => None,
    }
}

/// The fit's predictor, or why it has none.
fn predictor(r: &Report) -> Result<&Predictor, String> {
    r.outcome
        .as_ref()
        .and_then(|o| o.predictor.as_ref())
        .ok_or_else(|| format!("the fit '{}' (#{}) offers no predictions with intervals (its outcome has no predictor)", r.name, r.function))
}

/// Evaluates `#predict(fit, col=value, … | rows=range, confidence=…)`, its
/// arguments bound against `spec` (`fits::host_functions()`) like any fit's.
pub fn predict(book: &Workbook, cell: &CellAddress, text: &str, req: &Request, spec: &FunctionSpec, reports: &[&Report]) -> Result<HostResult, Problem> {
    let ctx = Ctx { cell, text };
    let bound = resolve::bind(spec, req, cell, text)?;
    let Some((fit_name, fit_span)) = bound.positional.first().and_then(|a| match &a.value {
        BoundValue::FitName(n) => Some((n.clone(), a.span)),
        _ => None,
    }) else {
        return Err(ctx.err(req.span, "#predict needs the name of a fit").help("write #predict(main, Light=14) where main is the name= of a #linear request"));
    };
    let rows_arg = bound.option("rows");
    let level_arg = match bound.option("confidence") {
        Some(BoundArg { value: BoundValue::Number(x), .. }) if *x > 0.0 && *x < 1.0 => Some(*x),
        Some(a) => return Err(ctx.err(a.value_span, "the confidence level takes a number strictly between 0 and 1, such as confidence=0.95")),
        None => None,
    };
    let mut given: BTreeMap<String, (NewValue, crate::syntax::Span)> = BTreeMap::new();
    for a in &bound.extra {
        let BoundValue::Column(e) = &a.value else { continue };
        let v = new_value(e).ok_or_else(|| ctx.err(a.value_span, format!("the value of {} must be a number or a level in double quotes", a.name)))?;
        if given.insert(a.name.to_lowercase(), (v, a.span)).is_some() {
            return Err(ctx.err(a.span, format!("{} is given twice", a.name)));
        }
    }
    let fit = find_fit(&ctx, reports, &fit_name, fit_span)?;
    let recipe: &Recipe = fit.recipe.as_ref().ok_or_else(|| {
        ctx.err(fit_span, format!("the fit '{}' names a column by a range or uses a term a new value cannot be given for, so it cannot predict", fit.name))
            .help("name the fit's columns by their headers to predict from it")
    })?;
    let pr = predictor(fit).map_err(|e| ctx.err(fit_span, e))?;
    // The points.
    let mut points: Vec<(Vec<NewValue>, String)> = Vec::new();
    match (rows_arg, given.is_empty()) {
        (Some(v), true) => {
            let BoundValue::Range(Place::Range(r)) = &v.value else {
                return Err(ctx.err(v.value_span, "rows= takes a range with headers in its first row, such as rows=Plan!A1:C13"));
            };
            let sheet = r.sheet.clone().unwrap_or_else(|| cell.sheet.clone());
            let grid = book.sheet(&sheet).ok_or_else(|| ctx.err(v.value_span, format!("there is no sheet named '{sheet}'")))?;
            let CellRange { first_row: fr, last_row: lr, first_col: fc, last_col: lc } = resolve::range_rows(grid, r);
            let mut cols: Vec<Option<usize>> = Vec::new();
            for c in fc..=lc {
                let h = match grid.value(fr, c) {
                    Value::Text(t) => t.trim().to_string(),
                    _ => String::new(),
                };
                cols.push(if h.is_empty() { None } else { recipe.input(&h) });
            }
            for (i, inp) in recipe.inputs.iter().enumerate() {
                if !cols.contains(&Some(i)) {
                    return Err(ctx.err(v.value_span, format!("the table {} has no column headed {}", CellAddress::new(sheet.clone(), fr, fc), inp.name)).help(format!(
                        "its first row must name every input of the fit: {}",
                        recipe.inputs.iter().map(|x| x.name.as_str()).collect::<Vec<_>>().join(", ")
                    )));
                }
            }
            for row in fr + 1..=lr {
                let mut vals: Vec<Option<NewValue>> = vec![None; recipe.inputs.len()];
                let mut any = false;
                for (k, c) in (fc..=lc).enumerate() {
                    let Some(i) = cols[k] else { continue };
                    let at = CellAddress::new(sheet.clone(), row, c);
                    match grid.value(row, c) {
                        Value::Number(x) | Value::DateTime(x, _) => vals[i] = Some(NewValue::Number(x)),
                        Value::Text(t) if !t.trim().is_empty() => vals[i] = Some(NewValue::Text(t.trim().to_string())),
                        Value::Empty => continue,
                        _ => return Err(ctx.whole(format!("the cell {at} is neither a number nor a level"))),
                    }
                    any = true;
                }
                if !any {
                    continue;
                }
                let mut out = Vec::new();
                for (i, v) in vals.into_iter().enumerate() {
                    match v {
                        Some(v) => out.push(v),
                        None => {
                            let c = fc + cols.iter().position(|x| *x == Some(i)).unwrap_or(0) as u32;
                            return Err(ctx.whole(format!("the cell {} (the value of {}) is blank", CellAddress::new(sheet.clone(), row, c), recipe.inputs[i].name)));
                        }
                    }
                }
                points.push((out, format!("row {} of {sheet}", row + 1)));
            }
            if points.is_empty() {
                return Err(ctx.err(v.value_span, "the table of new values has no rows below its headers"));
            }
        }
        (Some(v), false) => return Err(ctx.err(v.value_span, "give either column=value pairs or rows=, not both")),
        (None, true) => {
            return Err(ctx.err(req.span, "#predict needs the new values").help(format!(
                "give every input of the fit as column=value, such as #predict({}, {}), or a table with rows=",
                fit.name,
                recipe.inputs.iter().map(|i| format!("{}=…", i.name)).collect::<Vec<_>>().join(", ")
            )))
        }
        (None, false) => {
            let plain: BTreeMap<String, NewValue> = given.iter().map(|(k, v)| (k.clone(), v.0.clone())).collect();
            let (vals, unknown) = recipe.values_from(&plain);
            if let Some(u) = unknown.first() {
                let names: Vec<&str> = recipe.inputs.iter().map(|i| i.name.as_str()).collect();
                let near = closest(u, names.iter().copied());
                let help = match near.first() {
                    Some(n) => format!("did you mean {n}? The fit's columns are {}", names.join(", ")),
                    None => format!("the fit's columns are {}", names.join(", ")),
                };
                // Invariant: `u` is one of the keys given.
                return Err(ctx.err(given[u].1, format!("the fit '{}' uses no column '{u}'", fit.name)).help(help));
            }
            let missing: Vec<&str> = recipe.inputs.iter().zip(&vals).filter(|(_, v)| v.is_none()).map(|(i, _)| i.name.as_str()).collect();
            if !missing.is_empty() {
                return Err(ctx.err(req.span, format!("#predict needs a value for every column of the fit; missing: {}", missing.join(", "))).help("add them as column=value"));
            }
            points.push((vals.into_iter().flatten().collect(), String::new()));
        }
    }
    let level = level_arg.unwrap_or(fit.level);
    let o = fit.outcome.as_ref().ok_or_else(|| ctx.whole("the fit has no outcome"))?;
    let b: Vec<f64> = o.coefficients.iter().map(|c| c.estimate.unwrap_or(0.0)).collect();
    let max_lev = o.row_column(&RowRole::Leverage).map(|c| c.values.iter().copied().filter(|x| x.is_finite()).fold(0.0, f64::max));
    let mut rows = Vec::new();
    let mut warnings = bound.notes.clone();
    for (vals, label) in &points {
        let at = if label.is_empty() { String::new() } else { format!(" ({label})") };
        let columns = recipe.columns_at(vals).map_err(|e| ctx.whole(format!("{e}{at}")))?;
        let pt = predict::at(pr, &b, &columns, level).map_err(|e| ctx.whole(format!("{e}{at}")))?;
        let mut outside = recipe.outside(vals);
        if let Some(m) = max_lev {
            if pt.leverage > m * (1.0 + 1e-9) {
                let (a, b) = distinct(pt.leverage, m);
                outside.push(format!("its leverage {a} exceeds the largest in the data ({b})"));
            }
        }
        if !outside.is_empty() {
            let at = if label.is_empty() { String::new() } else { format!(" at {label}") };
            warnings.push(Problem::warning(format!("the point{at} lies outside the data the fit was made from: {}; the prediction is an extrapolation", outside.join("; "))).at(cell.clone()));
        }
        rows.push(PredictionRow {
            values: vals.clone(),
            at: pt,
            outside,
        });
    }
    let outcome = HostOutcome::Prediction(Prediction { fit: fit.name.clone(), inputs: recipe.inputs.iter().map(|i| i.name.clone()).collect(), level, rows });
    Ok(HostResult { outcome, warnings, response: fit.response.clone(), fits: vec![fit.name.clone()], rows_used: fit.rows_used, level })
}

/// Two numbers with as few significant digits (at least 3) as make them
/// read differently, so "0.000105 exceeds 0.000104" never reads as
/// "0.0001 exceeds 0.0001".
fn distinct(a: f64, b: f64) -> (String, String) {
    let show = |x: f64, d: usize| {
        let s = format!("{:.*e}", d - 1, x);
        // Back to a plain decimal: parse the rounded value and print it short.
        s.parse::<f64>().map(|v| format!("{v}")).unwrap_or(s)
    };
    (3..=15).map(|d| (show(a, d), show(b, d))).find(|(x, y)| x != y).unwrap_or_else(|| (format!("{a}"), format!("{b}")))
}

fn norm(s: &str) -> String {
    s.chars().filter(|c| !c.is_whitespace()).collect::<String>().to_lowercase()
}

/// Evaluates `#compare(fit, fit, …)`.
pub fn compare(cell: &CellAddress, text: &str, req: &Request, spec: &FunctionSpec, reports: &[&Report]) -> Result<HostResult, Problem> {
    let ctx = Ctx { cell, text };
    let bound = resolve::bind(spec, req, cell, text)?;
    let mut fits: Vec<&Report> = Vec::new();
    for a in &bound.positional {
        let BoundValue::FitName(name) = &a.value else { continue };
        let f = find_fit(&ctx, reports, name, a.span)?;
        if fits.iter().any(|x| std::ptr::eq(*x, f)) {
            return Err(ctx.err(a.span, format!("the fit '{}' is named twice", f.name)));
        }
        fits.push(f);
    }
    if fits.len() < 2 {
        return Err(ctx.err(req.span, "#compare needs at least two fits").help("write #compare(main, curved)"));
    }
    let first = fits[0];
    for f in &fits[1..] {
        if norm(&f.response) != norm(&first.response) {
            return Err(ctx.whole(format!(
                "the fits '{}' and '{}' explain different responses ({} and {}); only fits of one response can be compared",
                first.name, f.name, first.response, f.response
            )));
        }
        let same_rows = match (&first.place, &f.place) {
            (Some(a), Some(b)) => a.sheet == b.sheet && a.rows == b.rows,
            _ => false,
        };
        if !same_rows {
            return Err(ctx.whole(format!(
                "the fits '{}' ({} rows) and '{}' ({} rows) use different rows (a column with blanks in one leaves rows out); AIC, BIC and F tests compare only fits on the same rows",
                first.name, first.rows_used, f.name, f.rows_used
            ))
            .help("fit both on the same rows, for example by filling the blanks or by leaving those rows out of the table"));
        }
    }
    let mut terms: Vec<String> = Vec::new();
    for f in &fits {
        for c in &f.outcome.as_ref().map(|o| o.coefficients.clone()).unwrap_or_default() {
            if !terms.contains(&c.term) {
                terms.push(c.term.clone());
            }
        }
    }
    let compared: Vec<ComparedFit> = fits
        .iter()
        .map(|f| {
            let o = f.outcome.as_ref();
            let coefs = o.map(|o| o.coefficients.clone()).unwrap_or_default();
            let lik = o.and_then(|o| o.likelihood);
            let ls = o.and_then(|o| o.least_squares);
            ComparedFit {
                name: f.name.clone(),
                n: f.rows_used as f64,
                parameters: lik.map_or(f64::NAN, |l| l.parameters),
                r_squared: ls.map_or(f64::NAN, |l| l.r_squared),
                adj_r_squared: ls.map_or(f64::NAN, |l| l.adj_r_squared),
                rmse: o.and_then(|o| o.predictor.as_ref()).and_then(|p| p.residual_sd).unwrap_or(f64::NAN),
                aic: lik.map_or(f64::NAN, |l| l.aic()),
                bic: lik.map_or(f64::NAN, |l| l.bic()),
                coefficients: terms.iter().map(|t| coefs.iter().find(|c| &c.term == t).map(|c| (c.estimate, c.std_error))).collect(),
            }
        })
        .collect();
    let lowest_aic = (0..compared.len()).min_by(|&a, &b| compared[a].aic.total_cmp(&compared[b].aic)).unwrap_or(0);
    let mut nested = Vec::new();
    let term_set = |f: &Report| -> Vec<String> { f.outcome.as_ref().map(|o| o.coefficients.iter().map(|c| c.term.clone()).collect()).unwrap_or_default() };
    for a in &fits {
        for b in &fits {
            let (ta, tb) = (term_set(a), term_set(b));
            if std::ptr::eq(*a, *b) || ta.len() >= tb.len() || !ta.iter().all(|t| tb.contains(t)) {
                continue;
            }
            // Nested F tests need the sums of squares of least squares.
            let (Some(la), Some(lb)) = (a.outcome.as_ref().and_then(|o| o.least_squares), b.outcome.as_ref().and_then(|o| o.least_squares)) else { continue };
            let (sse0, df0, sse1, df1) = (la.ss_resid, la.df_resid, lb.ss_resid, lb.df_resid);
            let dn = df0 - df1;
            if dn <= 0.0 || df1 <= 0.0 {
                continue;
            }
            let f = ((sse0 - sse1) / dn) / (sse1 / df1);
            nested.push(NestedTest { smaller: a.name.clone(), larger: b.name.clone(), f, df_num: dn, df_den: df1, p_value: f_sf(f, dn, df1) });
        }
    }
    let outcome = HostOutcome::Comparison(Comparison { response: first.response.clone(), fits: compared, lowest_aic, nested, terms });
    Ok(HostResult { outcome, warnings: bound.notes, response: first.response.clone(), fits: fits.iter().map(|f| f.name.clone()).collect(), rows_used: first.rows_used, level: first.level })
}

#[cfg(test)]
mod tests {
    #[test]
    fn close_numbers_are_shown_apart() {
        // Rounding by hand (common practice).
        assert_eq!(super::distinct(0.10941, 0.0953), ("0.109".to_string(), "0.0953".to_string()));
        assert_eq!(super::distinct(0.000105, 0.0001049), ("0.000105".to_string(), "0.0001049".to_string()));
    }
}
