//! From a parsed request to numbers a fit can use.
//!
//! This module finds request cells and resolves one request against the
//! workbook: its output is a protocol [`FitRequest`] plus where the fit's
//! per-row results belong ([`Placement`]), the rows left out and why
//! ([`LeftOut`]), and the [`Recipe`] for predictions. This file holds the
//! public API and runs the steps; each step has its own file:
//!
//! - `bind.rs`: the arguments against the function's spec;
//! - `tables.rs`: the data table or ranges a request reads (its frame);
//! - `eval.rs`: names, ranges, arithmetic and transforms over the frame;
//! - `design.rs`: the rows used, the model columns and the recipe.

mod bind;
mod design;
mod eval;
mod tables;

pub use self::bind::{bind, is_catch_all, parameter_group, Bound, RENAMED_OPTIONS, BoundArg, BoundExpression, BoundValue, ExprColumn, GroupEntry, Place};
use self::eval::{referenced_names, Factor};
use crate::cells::{CellAddress, CellRange, Grid, Value, Workbook};
use crate::problems::Problem;
use crate::protocol::{Column, FitRequest, FunctionSpec, ModelExpression, OptionValue, EVENT_LEVEL, PROTOCOL_VERSION};
use crate::recipe::Recipe;
use crate::syntax::{self, BinOp, Expr, ExprKind, RangeRef, Request, Span};
use std::collections::{BTreeMap, HashSet};

/// The most model columns one request may produce (after categorical
/// expansion and products).
pub const MAX_MODEL_COLUMNS: usize = 1000;

/// A request cell found in the workbook.
#[derive(Debug, Clone, PartialEq)]
pub struct FoundRequest {
    /// Where it is.
    pub cell: CellAddress,
    /// Its text.
    pub text: String,
}

/// Every cell whose text looks like a request, in sheet order then row-major.
pub fn find_requests(book: &Workbook) -> Vec<FoundRequest> {
    let mut out = Vec::new();
    for g in &book.sheets {
        for (r, c, v) in g.cells() {
            if let Value::Text(t) = v {
                if syntax::looks_like_request(t) {
                    out.push(FoundRequest { cell: CellAddress::new(g.name.clone(), r, c), text: t.to_string() });
                }
            }
        }
    }
    out
}

/// Where a fit's per-row results go: the data rows of its table on a sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct Placement {
    /// Sheet of the data.
    pub sheet: String,
    /// The table's header row, when it has one.
    pub header_row: Option<u32>,
    /// The table's first and last column.
    pub first_col: u32,
    /// Last column of the table.
    pub last_col: u32,
    /// For each row sent to the fit, its absolute row on the sheet.
    pub rows: Vec<u32>,
    /// All data rows of the table (used or not), first and last.
    pub first_row: u32,
    /// Last data row.
    pub last_row: u32,
}

/// Why rows were left out, with a count and the first cell of each reason.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct LeftOut {
    /// (reason, rows, first cell) in a fixed order.
    pub reasons: Vec<(String, usize, Option<CellAddress>)>,
}

impl LeftOut {
    /// Total rows left out.
    pub fn total(&self) -> usize {
        self.reasons.iter().map(|r| r.1).sum()
    }

    /// One sentence, such as "3 rows left out: 2 with a blank cell (first
    /// Weekly!C14), 1 with text in a numeric column (first Weekly!D40)".
    pub fn describe(&self) -> Option<String> {
        let total = self.total();
        if total == 0 {
            return None;
        }
        let parts: Vec<String> = self
            .reasons
            .iter()
            .filter(|r| r.1 > 0)
            .map(|(why, k, first)| match first {
                Some(c) => format!("{k} {why} (first {c})"),
                None => format!("{k} {why}"),
            })
            .collect();
        Some(format!("{total} row{} left out: {}", if total == 1 { "" } else { "s" }, parts.join(", ")))
    }
}

/// A request resolved into numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct Resolved {
    /// What the fit receives.
    pub request: FitRequest,
    /// The `name=` option, when given.
    pub name: Option<String>,
    /// The response as typed.
    pub response_label: String,
    /// The terms as typed (a model expression, when the function takes
    /// one, first).
    pub terms: Vec<String>,
    /// Where per-row results belong.
    pub placement: Placement,
    /// Rows left out and why.
    pub left_out: LeftOut,
    /// Warnings and notes about the request and its data (options under
    /// their old names, rows left out, …).
    pub warnings: Vec<Problem>,
    /// How the model columns are made from the inputs, for predictions;
    /// `None` when a term names a column by a range rather than a header.
    pub recipe: Option<Recipe>,
    /// Where each of [`Resolved::terms`] stands in the request text.
    pub term_spans: Vec<(String, Span)>,
    /// Where each column stands in the request text, by label: every
    /// request column by [`Column::name`] (an indicator or product column
    /// at its term, a model expression's column at its first use), the
    /// response, and a model expression's parameters at their names in the
    /// group option that declares them (`k` in `start(k=0.2)`).
    pub column_spans: Vec<(String, Span)>,
}

impl Resolved {
    /// The span in the request text of a term or column named by its label
    /// ([`Column::term`] or [`Column::name`], as a fit's
    /// [`FitError::term`](crate::protocol::FitError::term) names it; the
    /// response's label too): an exact match first, then one ignoring case
    /// and white space. `None` for a label the request does not have (such
    /// as `(intercept)`).
    pub fn span_of(&self, label: &str) -> Option<Span> {
        let all = || self.term_spans.iter().chain(&self.column_spans);
        let folded = |s: &str| s.split_whitespace().collect::<String>().to_lowercase();
        all().find(|(l, _)| l == label).or_else(|| all().find(|(l, _)| folded(l) == folded(label))).map(|(_, s)| *s)
    }

    /// A fit's error as a problem at the request's cell, with a caret under
    /// the term it names when the request has that term.
    pub fn fit_problem(&self, e: &crate::protocol::FitError, cell: &CellAddress, text: &str) -> Problem {
        let mut p = Problem::error(e.message.clone()).at(cell.clone());
        p.help = e.help.clone();
        match e.term.as_deref().and_then(|t| self.span_of(t)) {
            Some(span) => p.in_text(text, span.start, span.end),
            None => p,
        }
    }
}

/// The cells a range covers on a grid, corners in order: its columns, and
/// its rows (for whole columns such as `C:C`, the used rows of the sheet;
/// row 0 alone on an empty sheet). The one reading of a range's rows for
/// `table=`, one-column ranges and tables of new values.
pub fn range_rows(grid: &Grid, r: &RangeRef) -> CellRange {
    let (first_row, last_row) = match (r.start.row, r.end.row) {
        (Some(a), Some(b)) => (a.min(b), a.max(b)),
        _ => grid.extent().map(|e| (e.first_row, e.last_row)).unwrap_or((0, 0)),
    };
    CellRange { first_row, last_row, first_col: r.start.col.min(r.end.col), last_col: r.start.col.max(r.end.col) }
}

/// The options the host applies itself: their meaning is a field of the
/// [`FitRequest`] or a step of resolution, so they are never repeated in
/// [`FitRequest::options`]. `name` names the fit for other requests,
/// `confidence` is [`FitRequest::level`], `intercept` is
/// [`FitRequest::intercept`], `weights` (a column) is
/// [`FitRequest::weights`], `gaps` says whether rows with unusable cells
/// are skipped or stop the request, `table` chooses the data table, and
/// `against(...)` the reference level of text columns. Their earlier
/// spellings are in [`RENAMED_OPTIONS`].
pub const HOST_OPTIONS: [&str; 7] = [NAME, CONFIDENCE, INTERCEPT, WEIGHTS, GAPS, TABLE, AGAINST];
const NAME: &str = "name";
const CONFIDENCE: &str = "confidence";
const INTERCEPT: &str = "intercept";
const WEIGHTS: &str = "weights";
const GAPS: &str = "gaps";
const TABLE: &str = "table";
const AGAINST: &str = "against";

/// The option naming a column that groups the rows (`groups=Bay`): unlike
/// other column options it may be a text column, sent as [`level_codes`].
const GROUPS: &str = "groups";

/// A text column over the kept rows as numbers: each level's position
/// (1, 2, …) among the levels sorted alphabetically (spellings that differ
/// only in case or spacing are one level, as for terms).
fn level_codes(c: &eval::Cat, keep: &[usize]) -> Vec<f64> {
    let key = |i: usize| c.levels[i].as_deref().map(crate::recipe::level_key);
    let levels: std::collections::BTreeSet<String> = keep.iter().filter_map(|&i| key(i)).collect();
    let levels: Vec<String> = levels.into_iter().collect();
    keep.iter().map(|&i| key(i).and_then(|k| levels.iter().position(|l| *l == k)).map_or(f64::NAN, |p| p as f64 + 1.0)).collect()
}

/// The option of a yes-or-no fit naming the level of a text response
/// counted as the event (`event="pass"`).
const EVENT: &str = "event";

/// A text response of exactly two levels as 1 (the event) and 0, and the
/// event's level: `event="…"` when given, else the later of the two in
/// alphabetical order (case folded), so `no`/`yes` and `fail`/`pass` count
/// `yes` and `pass`.
fn two_levels(ctx: &Ctx, c: &eval::Cat, e: &Expr, bound: &Bound) -> Result<(eval::Num, String), Problem> {
    let mut levels: Vec<&String> = c.levels.iter().flatten().collect();
    levels.sort_by_key(|l| l.to_lowercase());
    levels.dedup_by_key(|l| l.to_lowercase());
    let name = typed(ctx.text, e.span);
    if levels.len() != 2 {
        let shown: Vec<String> = levels.iter().take(5).map(|l| format!("\"{l}\"")).collect();
        return Err(ctx
            .err(e.span, format!("the response '{name}' has {} level{} ({}); a yes-or-no response needs exactly two", levels.len(), if levels.len() == 1 { "" } else { "s" }, shown.join(", ")))
            .help("use a column with two values, such as yes and no, or code the event as 1 and the rest as 0"));
    }
    let level = match bound.values.get(EVENT) {
        Some(OptionValue::Text(t)) => match levels.iter().find(|l| l.eq_ignore_ascii_case(t.trim())) {
            Some(l) => (*l).clone(),
            None => {
                let span = bound.option(EVENT).map(|o| o.value_span).unwrap_or(e.span);
                return Err(ctx
                    .err(span, format!("event=\"{t}\" is not a level of '{name}', whose levels are \"{}\" and \"{}\"", levels[0], levels[1]))
                    .help("name one of the two levels, in quotes"));
            }
        },
        Some(OptionValue::Number(x)) => {
            let span = bound.option(EVENT).map(|o| o.value_span).unwrap_or(e.span);
            return Err(ctx.err(span, format!("event={x} is not a level of '{name}', whose levels are \"{}\" and \"{}\"", levels[0], levels[1])).help("name one of the two levels, in quotes"));
        }
        _ => levels[1].clone(),
    };
    let key = level.to_lowercase();
    let mut why = Vec::with_capacity(c.levels.len());
    let values = c
        .levels
        .iter()
        .map(|l| match l {
            Some(l) => {
                why.push(eval::Why::Ok);
                f64::from(u8::from(l.to_lowercase() == key))
            }
            None => {
                why.push(eval::Why::Blank);
                f64::NAN
            }
        })
        .collect();
    Ok((eval::Num { values, why, first_bad: BTreeMap::new(), power: None }, level))
}

/// Where a request is: its cell and text, for errors with a caret.
#[derive(Clone, Copy)]
struct Here<'a> {
    cell: &'a CellAddress,
    text: &'a str,
}

impl Here<'_> {
    /// An error at the request's cell with a caret under `span`.
    fn err(&self, span: Span, message: impl Into<String>) -> Problem {
        Problem::error(message).at(self.cell.clone()).in_text(self.text, span.start, span.end)
    }
}

/// The resolver's context for one request.
struct Ctx<'a> {
    book: &'a Workbook,
    cell: &'a CellAddress,
    text: &'a str,
}

impl Ctx<'_> {
    /// The request's place.
    fn here(&self) -> Here<'_> {
        Here { cell: self.cell, text: self.text }
    }

    /// An error at the request's cell with a caret under `span`.
    fn err(&self, span: Span, message: impl Into<String>) -> Problem {
        self.here().err(span, message)
    }
}

/// The text a user typed for an expression, white space folded.
fn typed(text: &str, span: Span) -> String {
    text.get(span.start..span.end).unwrap_or("").split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The label of a term or response in the output: a quoted header alone is
/// its header (`"Distance km"` is labelled Distance km), anything else is
/// the text as typed.
fn label(text: &str, e: &Expr) -> String {
    match &e.kind {
        ExprKind::Quoted(n) if !n.trim().is_empty() => n.trim().to_string(),
        _ => typed(text, e.span),
    }
}

/// Splits a model argument at its top-level `+` into terms.
fn split_terms(e: &Expr, out: &mut Vec<Expr>) {
    match &e.kind {
        ExprKind::Binary { op: BinOp::Add, lhs, rhs } => {
            split_terms(lhs, out);
            split_terms(rhs, out);
        }
        _ => out.push(e.clone()),
    }
}

/// The host's options of one request, read from its bound arguments.
struct HostOptions<'b> {
    name: Option<String>,
    level: f64,
    intercept: bool,
    stop_on_missing: bool,
    /// `against(...)`: lowercase column name → reference level.
    bases: BTreeMap<String, String>,
    weights: Option<&'b Expr>,
    data: Option<(&'b Place, Span)>,
}

impl<'b> HostOptions<'b> {
    fn of(at: &Here, bound: &'b Bound) -> Result<Self, Problem> {
        let values = &bound.values;
        let level = match values.get(CONFIDENCE) {
            Some(OptionValue::Number(x)) => *x,
            _ => 0.95,
        };
        if !(level > 0.0 && level < 1.0) {
            let span = bound.option(CONFIDENCE).map(|o| o.value_span).unwrap_or(bound.end);
            return Err(at.err(span, format!("the confidence level {level} is not between 0 and 1")).help("write the confidence level as a fraction, such as confidence=0.95"));
        }
        let bases = match bound.option(AGAINST).map(|o| &o.value) {
            Some(BoundValue::Group(entries)) => entries
                .iter()
                .map(|e| {
                    let level = match &e.value {
                        OptionValue::Number(x) => format!("{x}"),
                        OptionValue::Text(t) => t.clone(),
                        OptionValue::Group(_) => String::new(),
                    };
                    (e.key.to_lowercase(), level)
                })
                .collect(),
            _ => BTreeMap::new(),
        };
        Ok(HostOptions {
            name: match values.get(NAME) {
                Some(OptionValue::Text(t)) => Some(t.clone()),
                _ => None,
            },
            level,
            intercept: !matches!(values.get(INTERCEPT), Some(OptionValue::Text(t)) if t == "no"),
            stop_on_missing: matches!(values.get(GAPS), Some(OptionValue::Text(t)) if t == "stop"),
            bases,
            weights: match bound.option(WEIGHTS).map(|o| &o.value) {
                Some(BoundValue::Column(e)) => Some(e),
                _ => None,
            },
            data: bound.option(TABLE).and_then(|o| match &o.value {
                BoundValue::Range(p) => Some((p, o.value_span)),
                _ => None,
            }),
        })
    }
}

/// What the positional arguments are to the model, by their kinds: the
/// first column is the response; the terms of a terms argument, and of any
/// later column argument (split at `+` as terms are), are the model's terms.
/// A model expression argument, of a positional or an option, is the
/// model with parameters.
struct Roles<'b> {
    response: &'b Expr,
    terms: Vec<Expr>,
    expression: Option<&'b BoundExpression>,
}

impl<'b> Roles<'b> {
    fn of(at: &Here, spec: &FunctionSpec, req: &Request, bound: &'b Bound) -> Result<Self, Problem> {
        let mut response = None;
        let mut terms = Vec::new();
        for a in &bound.positional {
            match &a.value {
                BoundValue::Column(e) if response.is_none() => response = Some(e),
                BoundValue::Column(e) => terms.extend(bind::terms_of(at, e)?),
                BoundValue::Terms(t) => terms.extend(t.iter().cloned()),
                _ => {}
            }
        }
        let Some(response) = response else {
            return Err(at.err(req.span, format!("#{} declares no column argument to explain", spec.name)).help("a fit's first column argument is its response"));
        };
        let expression = bound.positional.iter().chain(&bound.options).find_map(|a| match &a.value {
            BoundValue::Expression(x) => Some(x),
            _ => None,
        });
        Ok(Roles { response, terms, expression })
    }
}

/// Resolves one parsed request against the workbook for the function `spec`.
///
/// `requests` holds every request cell of the workbook, so that tables are
/// detected without them.
pub fn resolve(
    book: &Workbook,
    cell: &CellAddress,
    text: &str,
    req: &Request,
    spec: &FunctionSpec,
    requests: &HashSet<CellAddress>,
) -> Result<Resolved, Problem> {
    let ctx = Ctx { book, cell, text };
    let here = ctx.here();
    // 1. Arguments against the spec, by kind; their roles.
    let bound = bind::bind_at(&here, spec, req)?;
    let host = HostOptions::of(&here, &bound)?;
    let roles = Roles::of(&here, spec, req, &bound)?;
    let (response_expr, term_exprs) = (roles.response, &roles.terms);
    let expression_columns: Vec<&Expr> = roles.expression.iter().flat_map(|x| x.columns.iter().map(|c| &c.expr)).collect();
    // Column options other than the host's (`trials=Tested`): read as
    // numbers over the frame and sent in `FitRequest::option_columns`.
    let option_exprs: Vec<(&str, &Expr)> = bound
        .options
        .iter()
        .filter(|o| !HOST_OPTIONS.contains(&o.name.as_str()))
        .filter_map(|o| match &o.value {
            BoundValue::Column(e) => Some((o.name.as_str(), e)),
            _ => None,
        })
        .collect();

    // 2. The frame: the data table, or the rows of the ranges used.
    let mut names = Vec::new();
    for e in [response_expr].into_iter().chain(term_exprs).chain(host.weights).chain(expression_columns.iter().copied()).chain(option_exprs.iter().map(|o| o.1)) {
        referenced_names(e, &mut names);
    }
    let columns: Vec<&Expr> = [response_expr].into_iter().chain(term_exprs).chain(expression_columns.iter().copied()).collect();
    let frame = ctx.frame(req, host.data, &names, &columns, requests)?;

    // 3. Evaluate.
    let mut event_level = None;
    let response = match ctx.eval(response_expr, &frame)? {
        Factor::Num(_, v) => v,
        Factor::Cat(c) if spec.option(EVENT).is_some() => {
            let (num, level) = two_levels(&ctx, &c, response_expr, &bound)?;
            event_level = Some(level);
            num
        }
        _ => {
            return Err(ctx
                .err(response_expr.span, format!("the response '{}' is a text column; #{} needs numbers", typed(text, response_expr.span), spec.name))
                .help("choose a numeric column as the response"))
        }
    };
    // The expression's columns first: they are the first request columns.
    let mut inputs = Vec::new();
    if let Some(x) = roles.expression {
        let parameters: Vec<String> = x.parameters.iter().map(|p| p.0.clone()).collect();
        for c in &x.columns {
            let v = ctx.expression_column(c, &frame, &parameters, &x.group)?;
            inputs.push((c.label.clone(), c.expr.span, Factor::Num(c.label.clone(), v)));
        }
    }
    let mut factors = Vec::new();
    for t in term_exprs {
        factors.push((label(text, t), t.span, ctx.eval(t, &frame)?));
    }
    let weights = match host.weights {
        Some(w) => Some(ctx.numeric(w, &frame)?),
        None => None,
    };
    // An option column's gaps leave rows out as a term's do.
    let mut option_columns = Vec::new();
    for (name, e) in &option_exprs {
        let f = match ctx.eval(e, &frame)? {
            // A grouping column may hold text: its levels become numbers below.
            Factor::Cat(c) if *name == GROUPS => Factor::Cat(c),
            _ => Factor::Num(typed(text, e.span), ctx.numeric(e, &frame)?),
        };
        option_columns.push((name.to_string(), e.span, f));
    }

    // 4. Missing rows.
    let design::Rows { keep, left_out } =
        design::usable_rows(&ctx, &frame, &response, inputs.iter().chain(&factors).chain(&option_columns), weights.as_ref().map(|w| (w, host.weights)), bound.end, host.stop_on_missing, req.span)?;

    // 5. Model columns on the kept rows: the expression's columns, then the
    // terms' columns.
    let pick = |v: &[f64]| keep.iter().map(|&i| v[i]).collect::<Vec<f64>>();
    let mut columns = design::model_columns(&ctx, &inputs, &keep, &host.bases)?;
    let term_columns = design::model_columns(&ctx, &factors, &keep, &host.bases)?;
    // A model expression has its own constant, if any: an intercept only
    // when the spec has the option.
    let intercept = host.intercept && (roles.expression.is_none() || spec.option(INTERCEPT).is_some());
    let p = term_columns.len() + usize::from(intercept) + roles.expression.map_or(0, |x| x.parameters.len());
    columns.extend(term_columns);
    if keep.len() <= p {
        let lost = left_out.describe().map(|d| format!(" ({d})")).unwrap_or_default();
        return Err(ctx
            .err(req.span, format!("{} rows are usable{lost}, but the model has {p} parameters; least squares needs more rows than parameters", keep.len()))
            .help(if left_out.reasons.iter().any(|r| r.0 == eval::WHY_WORDS[eval::Why::Uncomputed as usize]) {
                format!("some cells are formulas saved without their results; {}", design::UNCOMPUTED_FIX)
            } else {
                "add data rows or use fewer terms".to_string()
            }));
    }
    let mut warnings = bound.notes.clone();
    let mut merges = Vec::new();
    for (_, _, f) in inputs.iter().chain(&factors) {
        f.merge_notes(&mut merges);
    }
    warnings.extend(merges.into_iter().map(|m| Problem::note(m).at(cell.clone())));
    if let Some(d) = left_out.describe() {
        // Leaving out unusable rows is what was asked (gaps=skip): a note.
        warnings.push(Problem::note(d).at(cell.clone()));
    }
    let request = FitRequest {
        protocol: PROTOCOL_VERSION,
        function: spec.name.clone(),
        response: Column { name: label(text, response_expr), term: label(text, response_expr), values: pick(&response.values), power: None },
        columns,
        intercept,
        weights: weights.as_ref().map(|w| pick(&w.values)),
        level: host.level,
        expression: roles.expression.map(|x| ModelExpression {
            text: x.text.clone(),
            formula: x.formula.clone(),
            parameters: x.parameters.iter().map(|p| p.0.clone()).collect(),
        }),
        options: bound
            .values
            .iter()
            // A column option is also sent here as its text as typed
            // (`order` → "Week"), so the fit can name it.
            .filter(|(k, _)| !HOST_OPTIONS.contains(&k.as_str()))
            .filter(|(k, _)| event_level.is_none() || k.as_str() != EVENT)
            .map(|(k, v)| (k.clone(), v.clone()))
            .chain(event_level.iter().map(|l| (EVENT_LEVEL.to_string(), OptionValue::Text(l.clone()))))
            .collect(),
        option_columns: option_columns
            .iter()
            .filter_map(|(name, _, f)| match f {
                Factor::Num(_, v) => Some((name.clone(), pick(&v.values))),
                Factor::Cat(c) => Some((name.clone(), level_codes(c, &keep))),
                _ => None,
            })
            .collect(),
    };
    let placement = frame.placement(&keep);
    // A recipe rebuilds the request's columns from new values: the terms'
    // columns, after a model expression's columns, each of them as itself.
    let recipe_terms: Vec<Expr> = expression_columns.iter().map(|e| (*e).clone()).chain(term_exprs.iter().cloned()).collect();
    let recipe = design::build_recipe(&frame, &keep, &recipe_terms, &host.bases, &request.columns);
    let term_spans: Vec<(String, Span)> = roles
        .expression
        .map(|x| (x.text.clone(), x.expr.span))
        .into_iter()
        .chain(term_exprs.iter().map(|t| (label(text, t), t.span)))
        .collect();
    let term_at = |term: &str| inputs.iter().chain(&factors).find(|(l, _, _)| l == term).map(|(_, s, _)| *s);
    let column_spans = request
        .columns
        .iter()
        .filter_map(|c| Some((c.name.clone(), term_at(&c.term)?)))
        .chain([(request.response.name.clone(), response_expr.span)])
        .chain(roles.expression.into_iter().flat_map(|x| x.parameters.iter().cloned()))
        .collect();
    Ok(Resolved {
        recipe,
        request,
        name: host.name,
        response_label: label(text, response_expr),
        terms: term_spans.iter().map(|t| t.0.clone()).collect(),
        term_spans,
        column_spans,
        placement,
        left_out,
        warnings,
    })
}

#[cfg(test)]
mod tests;
