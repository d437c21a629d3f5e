//! From a parsed request to numbers a fit can use.
//!
//! This module finds request cells, detects the data table a request refers
//! to, matches header names (case-insensitively, suggesting the closest names
//! for an unknown one), reads ranges, turns terms into model columns (text
//! columns become indicator columns against a base level; products, powers and
//! functions are evaluated), applies `missing=skip|stop` and counts the rows
//! left out, and checks shapes. Its output is a protocol [`FitRequest`] plus
//! where the fit's per-row results belong in the workbook.

use crate::cells::{CellAddress, CellRange, Grid, Value, Workbook};
use crate::problems::{closest, Problem};
use crate::protocol::{Column, FitRequest, FunctionSpec, OptionValue, ParamKind, PowerOf, PROTOCOL_VERSION};
use crate::recipe::{Func, Input, InputKind, NewValue, Node, Op, Recipe};
use crate::syntax::{self, Arg, BinOp, Expr, ExprKind, RangeRef, Request, Span, UnaryOp};
use std::collections::{BTreeMap, BTreeSet, HashSet};

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
    /// The terms as typed.
    pub terms: Vec<String>,
    /// Where per-row results belong.
    pub placement: Placement,
    /// Rows left out and why.
    pub left_out: LeftOut,
    /// Warnings about the data (rows left out, …).
    pub warnings: Vec<Problem>,
    /// How the model columns are made from the inputs, for predictions;
    /// `None` when a term names a column by a range rather than a header.
    pub recipe: Option<Recipe>,
}

/// Why a row cannot be used; the order is the order of reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
#[repr(u8)]
enum Why {
    Ok = 0,
    Blank,
    Text,
    ErrorValue,
    Undefined,
    ZeroWeight,
}

const WHY_WORDS: [&str; 6] = [
    "",
    "with a blank cell",
    "with text in a numeric column",
    "with an error value",
    "where a transform is undefined (such as log of a value ≤ 0)",
    "with zero weight",
];

/// Rows of one request: an absolute sheet row per frame row.
struct Frame<'a> {
    grid: &'a Grid,
    rows: Vec<u32>,
    header_row: Option<u32>,
    first_col: u32,
    last_col: u32,
    /// Lowercased trimmed header → columns with that header.
    headers: BTreeMap<String, Vec<u32>>,
    header_names: Vec<String>,
}

/// A column of frame values with per-row reasons; NaN where unusable.
#[derive(Clone)]
struct Num {
    values: Vec<f64>,
    why: Vec<Why>,
    /// The source cell of the first unusable row per reason.
    first_bad: BTreeMap<Why, CellAddress>,
    /// When these values are `base^exponent` for a whole exponent: the
    /// base's label and values (before rows are dropped).
    power: Option<Box<(String, u32, Vec<f64>)>>,
}

/// The largest whole exponent recorded as a power of a base column.
const MAX_POWER: f64 = 30.0;

impl Num {
    fn merge_why(&mut self, other: &Num) {
        for (i, w) in other.why.iter().enumerate() {
            if self.why[i] == Why::Ok && *w != Why::Ok {
                self.why[i] = *w;
                self.values[i] = f64::NAN;
            }
        }
        for (w, c) in &other.first_bad {
            self.first_bad.entry(*w).or_insert_with(|| c.clone());
        }
    }
}

/// A categorical column: a level per row (None where blank).
#[derive(Clone)]
struct Cat {
    name: String,
    levels: Vec<Option<String>>,
    sheet: String,
    col: u32,
}

/// What an expression evaluates to before missing rows are dropped.
#[derive(Clone)]
enum Factor {
    Num(String, Num),
    Cat(Cat),
    /// A product of factors, each expanded later.
    Product(Vec<Factor>),
}

/// The resolver's context for one request.
struct Ctx<'a> {
    book: &'a Workbook,
    cell: &'a CellAddress,
    text: &'a str,
}

impl Ctx<'_> {
    fn err(&self, span: Span, message: impl Into<String>) -> Problem {
        Problem::error(message).at(self.cell.clone()).in_text(self.text, span.start, span.end)
    }
}

fn value_is_numeric(v: &Value) -> Option<f64> {
    match v {
        Value::Number(x) => Some(*x),
        Value::DateTime(x, _) => Some(*x),
        Value::Bool(b) => Some(if *b { 1.0 } else { 0.0 }),
        _ => None,
    }
}

fn header_text(v: Value) -> Option<String> {
    match v {
        Value::Text(t) if !t.trim().is_empty() => Some(t.trim().to_string()),
        Value::Number(x) => Some(format!("{x}")),
        _ => None,
    }
}

/// Columns of a grid that hold at least one non-blank cell (request cells
/// excluded), grouped into runs separated by empty columns: each run is a
/// candidate table.
fn candidate_tables(grid: &Grid, requests: &HashSet<(u32, u32)>) -> Vec<CellRange> {
    let Some(ext) = grid.extent() else { return Vec::new() };
    let titles = merged_titles(grid, requests);
    let mut used = vec![(u32::MAX, 0u32); ext.cols() as usize];
    for (r, c, v) in grid.cells() {
        if v.is_blank() || requests.contains(&(r, c)) || titles.contains(&(r, c)) {
            continue;
        }
        let u = &mut used[(c - ext.first_col) as usize];
        u.0 = u.0.min(r);
        u.1 = u.1.max(r);
    }
    let mut out = Vec::new();
    let mut run: Option<CellRange> = None;
    for (i, (lo, hi)) in used.iter().enumerate() {
        let col = ext.first_col + i as u32;
        if *lo == u32::MAX {
            if let Some(t) = run.take() {
                out.push(t);
            }
            continue;
        }
        run = Some(match run {
            None => CellRange { first_row: *lo, last_row: *hi, first_col: col, last_col: col },
            Some(t) => CellRange { first_row: t.first_row.min(*lo), last_row: t.last_row.max(*hi), last_col: col, ..t },
        });
    }
    out.extend(run);
    out
}

/// Title cells: the first cell of a merged range more than one column wide
/// that is the only non-blank cell of its row (request cells aside), such as
/// a title merged across the top of a table. They are not part of any table,
/// so the table's header row is the row below them.
fn merged_titles(grid: &Grid, requests: &HashSet<(u32, u32)>) -> HashSet<(u32, u32)> {
    let mut out = HashSet::new();
    let Some(ext) = grid.extent() else { return out };
    for m in &grid.merged {
        if m.cols() < 2 || grid.value(m.first_row, m.first_col).is_blank() {
            continue;
        }
        let alone = (ext.first_col..=ext.last_col)
            .filter(|&c| c != m.first_col && !requests.contains(&(m.first_row, c)))
            .all(|c| grid.value(m.first_row, c).is_blank());
        if alone {
            out.insert((m.first_row, m.first_col));
        }
    }
    out
}

impl<'a> Frame<'a> {
    /// A frame over a table whose first row holds headers.
    fn table(grid: &'a Grid, t: CellRange) -> Self {
        let mut headers: BTreeMap<String, Vec<u32>> = BTreeMap::new();
        let mut header_names = Vec::new();
        for c in t.first_col..=t.last_col {
            if let Some(h) = header_text(grid.value(t.first_row, c)) {
                headers.entry(h.to_lowercase()).or_default().push(c);
                header_names.push(h);
            }
        }
        Frame {
            grid,
            rows: (t.first_row + 1..=t.last_row).collect(),
            header_row: Some(t.first_row),
            first_col: t.first_col,
            last_col: t.last_col,
            headers,
            header_names,
        }
    }

    fn has(&self, name: &str) -> bool {
        self.headers.contains_key(&name.trim().to_lowercase())
    }

    fn range(&self) -> CellRange {
        CellRange {
            first_row: self.header_row.unwrap_or(self.rows.first().copied().unwrap_or(0)),
            last_row: self.rows.last().copied().unwrap_or(0),
            first_col: self.first_col,
            last_col: self.last_col,
        }
    }
}

/// Reads one sheet column over the given rows as numbers or categories.
fn read_column(grid: &Grid, col: u32, rows: &[u32], name: &str) -> Factor {
    let (mut numeric, mut text) = (0usize, 0usize);
    for &r in rows {
        match grid.value(r, col) {
            v if v.is_blank() => {}
            Value::Text(_) => text += 1,
            Value::Error(_) => {}
            _ => numeric += 1,
        }
    }
    if text > 0 && numeric == 0 {
        let levels = rows
            .iter()
            .map(|&r| match grid.value(r, col) {
                Value::Text(t) if !t.trim().is_empty() => Some(t.trim().to_string()),
                _ => None,
            })
            .collect();
        return Factor::Cat(Cat { name: name.to_string(), levels, sheet: grid.name.clone(), col });
    }
    let mut num = Num { values: Vec::with_capacity(rows.len()), why: Vec::with_capacity(rows.len()), first_bad: BTreeMap::new(), power: None };
    for &r in rows {
        let v = grid.value(r, col);
        let (x, why) = match v {
            v if v.is_blank() => (f64::NAN, Why::Blank),
            Value::Text(_) => (f64::NAN, Why::Text),
            Value::Error(_) => (f64::NAN, Why::ErrorValue),
            v => match value_is_numeric(&v) {
                Some(x) if x.is_finite() => (x, Why::Ok),
                _ => (f64::NAN, Why::Undefined),
            },
        };
        if why != Why::Ok {
            num.first_bad.entry(why).or_insert_with(|| CellAddress::new(grid.name.clone(), r, col));
        }
        num.values.push(x);
        num.why.push(why);
    }
    Factor::Num(name.to_string(), num)
}

/// Names a request refers to as columns: bare and quoted names in the
/// response, the terms and the weights.
fn referenced_names(e: &Expr, out: &mut Vec<String>) {
    match &e.kind {
        ExprKind::Name(n) | ExprKind::Quoted(n) => out.push(n.clone()),
        ExprKind::Unary { operand, .. } => referenced_names(operand, out),
        ExprKind::Binary { lhs, rhs, .. } => {
            referenced_names(lhs, out);
            referenced_names(rhs, out);
        }
        ExprKind::Call { args, .. } => args.iter().for_each(|a| referenced_names(a, out)),
        ExprKind::Paren(inner) => referenced_names(inner, out),
        _ => {}
    }
}

fn has_ranges(e: &Expr) -> Option<RangeRef> {
    match &e.kind {
        ExprKind::Range(r) => Some(r.clone()),
        ExprKind::Unary { operand, .. } => has_ranges(operand),
        ExprKind::Binary { lhs, rhs, .. } => has_ranges(lhs).or_else(|| has_ranges(rhs)),
        ExprKind::Call { args, .. } => args.iter().find_map(has_ranges),
        ExprKind::Paren(inner) => has_ranges(inner),
        _ => None,
    }
}

/// The text a user typed for an expression, white space folded.
fn typed(text: &str, span: Span) -> String {
    text.get(span.start..span.end).unwrap_or("").split_whitespace().collect::<Vec<_>>().join(" ")
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

const FUNCTIONS: [&str; 5] = ["log", "log10", "exp", "sqrt", "abs"];

impl Ctx<'_> {
    fn sheet(&self, name: &str, span: Span) -> Result<&Grid, Problem> {
        self.book.sheet(name).ok_or_else(|| {
            let names: Vec<&str> = self.book.sheets.iter().map(|g| g.name.as_str()).collect();
            let near = closest(name, names.iter().copied());
            let help = if near.is_empty() {
                format!("the sheets are {}", names.join(", "))
            } else {
                format!("did you mean {}?", near.join(" or "))
            };
            self.err(span, format!("there is no sheet named '{name}'")).help(help)
        })
    }

    /// Rows and column of a one-column range; the first cell is taken as a
    /// header when it is text and the rest are not all text.
    fn range_column(&self, r: &RangeRef, span: Span) -> Result<(&Grid, u32, Vec<u32>, Option<String>), Problem> {
        let grid = match &r.sheet {
            Some(s) => self.sheet(s, span)?,
            None => self.sheet(&self.cell.sheet, span)?,
        };
        if r.start.col != r.end.col {
            return Err(self
                .err(span, "a column reference must be one column wide")
                .help("give one column, such as C2:C40, or a header name"));
        }
        let col = r.start.col;
        let ext = grid.extent();
        let (first, last) = match (r.start.row, r.end.row) {
            (Some(a), Some(b)) => (a.min(b), a.max(b)),
            _ => match ext {
                Some(e) => (e.first_row, e.last_row),
                None => return Err(self.err(span, format!("the sheet '{}' is empty", grid.name))),
            },
        };
        let mut rows: Vec<u32> = (first..=last).collect();
        let mut header = None;
        if let Some(&r0) = rows.first() {
            if let Value::Text(t) = grid.value(r0, col) {
                let rest_text = rows[1..].iter().all(|&r| matches!(grid.value(r, col), Value::Text(_) | Value::Empty));
                if !rest_text && !t.trim().is_empty() {
                    header = Some(t.trim().to_string());
                    rows.remove(0);
                }
            }
        }
        // Whole columns stop at the last used row of the sheet.
        Ok((grid, col, rows, header))
    }

    /// Evaluates an expression over the frame.
    fn eval(&self, e: &Expr, frame: &Frame, bases: &BTreeMap<String, String>) -> Result<Factor, Problem> {
        let label = typed(self.text, e.span);
        match &e.kind {
            ExprKind::Name(n) | ExprKind::Quoted(n) => {
                let key = n.trim().to_lowercase();
                match frame.headers.get(&key).map(|v| v.as_slice()) {
                    Some([col]) => Ok(read_column(frame.grid, *col, &frame.rows, n.trim())),
                    Some(cols) => {
                        let at: Vec<String> = cols
                            .iter()
                            .map(|c| CellAddress::new(frame.grid.name.clone(), frame.header_row.unwrap_or(0), *c).local())
                            .collect();
                        Err(self
                            .err(e.span, format!("two or more columns are headed '{}' ({})", n.trim(), at.join(", ")))
                            .help("rename the headers so that each is unique"))
                    }
                    _ => Err(self.unknown_column(n, e.span, frame)),
                }
            }
            ExprKind::Range(r) => {
                let (grid, col, rows, _) = self.range_column(r, e.span)?;
                if rows.len() != frame.rows.len() {
                    return Err(self.err(
                        e.span,
                        format!("this range has {} rows but the request's data has {}", rows.len(), frame.rows.len()),
                    )
                    .help("give every column of one request the same rows"));
                }
                Ok(read_column(grid, col, &rows, &label))
            }
            ExprKind::Number(x) => Ok(Factor::Num(
                label,
                Num { values: vec![*x; frame.rows.len()], why: vec![Why::Ok; frame.rows.len()], first_bad: BTreeMap::new(), power: None },
            )),
            ExprKind::Paren(inner) => match self.eval(inner, frame, bases)? {
                Factor::Num(_, v) => Ok(Factor::Num(label, v)),
                other => Ok(other),
            },
            ExprKind::Unary { op: UnaryOp::Neg, operand } => {
                let v = self.numeric(operand, frame, bases)?;
                Ok(Factor::Num(label, map_num(v, |x| -x)))
            }
            ExprKind::Binary { op: BinOp::Mul, lhs, rhs } => {
                let mut parts = Vec::new();
                for side in [lhs, rhs] {
                    match self.eval(side, frame, bases)? {
                        Factor::Product(p) => parts.extend(p),
                        f => parts.push(f),
                    }
                }
                if parts.iter().all(|p| matches!(p, Factor::Num(..))) {
                    let mut it = parts.into_iter();
                    let Some(Factor::Num(_, mut acc)) = it.next() else { unreachable!("a product has two sides") };
                    for p in it {
                        if let Factor::Num(_, v) = p {
                            acc = zip_num(acc, &v, |a, b| a * b);
                        }
                    }
                    return Ok(Factor::Num(label, acc));
                }
                Ok(Factor::Product(parts))
            }
            ExprKind::Binary { op, lhs, rhs } => {
                let a = self.numeric(lhs, frame, bases)?;
                let b = self.numeric(rhs, frame, bases)?;
                // `base^k` with a whole k: remember the base for the fit.
                let power = match (op, &rhs.kind) {
                    (BinOp::Pow, ExprKind::Number(k)) if k.fract() == 0.0 && *k >= 1.0 && *k <= MAX_POWER => {
                        match &a.power {
                            // (x^2)^3 is not recorded.
                            Some(_) => None,
                            None => Some(Box::new((typed(self.text, lhs.span), *k as u32, a.values.clone()))),
                        }
                    }
                    _ => None,
                };
                let f: fn(f64, f64) -> f64 = match op {
                    BinOp::Add => |a, b| a + b,
                    BinOp::Sub => |a, b| a - b,
                    BinOp::Div => |a, b| a / b,
                    BinOp::Pow => f64::powf,
                    BinOp::Mul => |a, b| a * b,
                };
                let mut v = zip_num(a, &b, f);
                v.power = power;
                Ok(Factor::Num(label, v))
            }
            ExprKind::Call { name, args } => {
                let fname = name.name.to_lowercase();
                if !FUNCTIONS.contains(&fname.as_str()) {
                    let near = closest(&fname, FUNCTIONS);
                    let help = if near.is_empty() {
                        format!("the functions are {}", FUNCTIONS.join(", "))
                    } else {
                        format!("did you mean {}? The functions are {}", near.join(" or "), FUNCTIONS.join(", "))
                    };
                    return Err(self.err(name.span, format!("'{}' is not a function of the fit language", name.name)).help(help));
                }
                if args.len() != 1 {
                    return Err(self.err(e.span, format!("{fname}(…) takes exactly one argument")));
                }
                let v = self.numeric(&args[0], frame, bases)?;
                let f: fn(f64) -> f64 = match fname.as_str() {
                    "log" => f64::ln,
                    "log10" => f64::log10,
                    "exp" => f64::exp,
                    "sqrt" => f64::sqrt,
                    _ => f64::abs,
                };
                Ok(Factor::Num(label, map_num(v, f)))
            }
            ExprKind::SheetName(s) => Err(self
                .err(e.span, format!("'{s}' in single quotes is a sheet name, not a column"))
                .help("quote header names with double quotes: \"Outdoor temp\"")),
        }
    }

    /// The source cell of frame row `i` of an expression that is one column
    /// (a header name or a one-column range); `None` for anything else.
    fn cell_of(&self, e: &Expr, frame: &Frame, i: usize) -> Option<CellAddress> {
        match &e.kind {
            ExprKind::Name(n) | ExprKind::Quoted(n) => match frame.headers.get(&n.trim().to_lowercase()).map(|v| v.as_slice()) {
                Some([col]) => Some(CellAddress::new(frame.grid.name.clone(), *frame.rows.get(i)?, *col)),
                _ => None,
            },
            ExprKind::Range(r) => {
                let (grid, col, rows, _) = self.range_column(r, e.span).ok()?;
                Some(CellAddress::new(grid.name.clone(), *rows.get(i)?, col))
            }
            ExprKind::Paren(inner) => self.cell_of(inner, frame, i),
            _ => None,
        }
    }

    fn numeric(&self, e: &Expr, frame: &Frame, bases: &BTreeMap<String, String>) -> Result<Num, Problem> {
        match self.eval(e, frame, bases)? {
            Factor::Num(_, v) => Ok(v),
            Factor::Cat(c) => Err(self
                .err(e.span, format!("'{}' is a text column (categories), so it cannot be used in arithmetic", c.name))
                .help("use a text column as a term on its own (Bay) or in a product (Light*Bay)")),
            Factor::Product(_) => Err(self
                .err(e.span, "a product with a text column cannot be used in arithmetic")
                .help("use it as a term on its own")),
        }
    }

    fn unknown_column(&self, name: &str, span: Span, frame: &Frame) -> Problem {
        let near = closest(name.trim(), frame.header_names.iter().map(|s| s.as_str()));
        let where_ = format!("the table {}!{}", crate::cells::quote_sheet_name(&frame.grid.name), frame.range());
        let help = if near.is_empty() {
            format!("the headers of {where_} are {}", frame.header_names.join(", "))
        } else {
            format!("did you mean {}? The headers are {}", near.join(" or "), frame.header_names.join(", "))
        };
        self.err(span, format!("there is no column headed '{}' in {where_}", name.trim())).help(help)
    }
}

fn map_num(mut v: Num, f: impl Fn(f64) -> f64) -> Num {
    v.power = None;
    for (x, w) in v.values.iter_mut().zip(v.why.iter_mut()) {
        if *w == Why::Ok {
            *x = f(*x);
            if !x.is_finite() {
                *w = Why::Undefined;
                *x = f64::NAN;
            }
        }
    }
    v
}

fn zip_num(mut a: Num, b: &Num, f: impl Fn(f64, f64) -> f64) -> Num {
    a.power = None;
    a.merge_why(b);
    for i in 0..a.values.len() {
        if a.why[i] == Why::Ok {
            let x = f(a.values[i], b.values[i]);
            if x.is_finite() {
                a.values[i] = x;
            } else {
                a.why[i] = Why::Undefined;
                a.values[i] = f64::NAN;
            }
        }
    }
    a
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
    let end = Span { start: req.span.end.saturating_sub(1), end: req.span.end };
    // 1. Arguments against the spec.
    let mut positional: Vec<&Expr> = Vec::new();
    let mut named: BTreeMap<String, (&Expr, Span)> = BTreeMap::new();
    let mut groups: BTreeMap<String, BTreeMap<String, (String, Span)>> = BTreeMap::new();
    let accepted = || spec.options.iter().map(|o| o.name.as_str()).collect::<Vec<_>>().join(", ");
    for arg in &req.args {
        match arg {
            Arg::Positional(e) => {
                if !named.is_empty() {
                    return Err(ctx.err(e.span, "a positional argument comes after an option").help(format!(
                        "put the arguments first, then the options: {}",
                        spec.signature()
                    )));
                }
                if positional.len() == spec.positional.len() {
                    return Err(ctx
                        .err(e.span, format!("#{} takes {} arguments before its options", spec.name, spec.positional.len()))
                        .help(format!("the call is {}", spec.signature())));
                }
                positional.push(e);
            }
            Arg::Named { key, value, span } => {
                let k = key.name.to_lowercase();
                let Some(o) = spec.option(&k) else {
                    let near = closest(&k, spec.options.iter().map(|o| o.name.as_str()));
                    let help = match near.first() {
                        Some(n) => format!("did you mean {n}? #{} accepts {}", spec.name, accepted()),
                        None => format!("#{} accepts {}", spec.name, accepted()),
                    };
                    return Err(ctx.err(key.span, format!("#{} has no option '{}'", spec.name, key.name)).help(help));
                };
                if o.kind == ParamKind::Group {
                    return Err(ctx.err(*span, format!("{} is written {}(column=value)", o.name, o.name)));
                }
                if named.insert(k.clone(), (value, *span)).is_some() {
                    return Err(ctx.err(*span, format!("the option {k} is given twice")).help(format!("keep one {k}=")));
                }
            }
            Arg::Group { name, entries, span } => {
                let k = name.name.to_lowercase();
                match spec.option(&k) {
                    Some(o) if o.kind == ParamKind::Group => {}
                    _ => {
                        return Err(ctx
                            .err(name.span, format!("#{} has no option '{}(…)'", spec.name, name.name))
                            .help(format!("#{} accepts {}", spec.name, accepted())))
                    }
                }
                let g = groups.entry(k).or_default();
                for (key, v) in entries {
                    let val = match &v.kind {
                        ExprKind::Name(s) | ExprKind::Quoted(s) => s.clone(),
                        ExprKind::Number(x) => format!("{x}"),
                        _ => return Err(ctx.err(v.span, "give a level as a word or in double quotes")),
                    };
                    g.insert(key.name.trim().to_lowercase(), (val, *span));
                }
            }
        }
    }
    if positional.len() < spec.positional.len() {
        let missing = &spec.positional[positional.len()];
        return Err(ctx
            .err(end, format!("#{} needs its {} argument ({})", spec.name, missing.name, missing.help))
            .help(format!("the call is {}", spec.signature())));
    }
    // 2. Options by kind.
    let mut options: BTreeMap<String, OptionValue> = BTreeMap::new();
    for o in &spec.options {
        let Some((value, span)) = named.get(&o.name) else {
            if let Some(d) = &o.default {
                let v = match o.kind {
                    ParamKind::Number | ParamKind::Integer => d.parse().map(OptionValue::Number).unwrap_or(OptionValue::Text(d.clone())),
                    _ => OptionValue::Text(d.clone()),
                };
                options.insert(o.name.clone(), v);
            }
            continue;
        };
        let v = match o.kind {
            ParamKind::Number | ParamKind::Integer => match &value.kind {
                ExprKind::Number(x) if o.kind == ParamKind::Number || x.fract() == 0.0 => OptionValue::Number(*x),
                _ => {
                    return Err(ctx.err(value.span, format!("{} takes a {}", o.name, if o.kind == ParamKind::Integer { "whole number" } else { "number" }))
                        .help(o.help.clone()))
                }
            },
            ParamKind::Choice => {
                let word = match &value.kind {
                    ExprKind::Name(s) | ExprKind::Quoted(s) => s.to_lowercase(),
                    _ => String::new(),
                };
                if !o.choices.contains(&word) {
                    return Err(ctx
                        .err(value.span, format!("{}={} is not one of the choices", o.name, typed(text, value.span)))
                        .help(format!("{} takes {}", o.name, o.choices.join(", "))));
                }
                OptionValue::Text(word)
            }
            ParamKind::Text | ParamKind::FitName => match &value.kind {
                ExprKind::Name(s) | ExprKind::Quoted(s) if !s.trim().is_empty() => OptionValue::Text(s.trim().to_string()),
                _ => return Err(ctx.err(value.span, format!("{} takes a word or text in double quotes", o.name))),
            },
            _ => OptionValue::Text(typed(text, *span)),
        };
        options.insert(o.name.clone(), v);
    }
    let level = match options.get("level") {
        Some(OptionValue::Number(x)) => *x,
        _ => 0.95,
    };
    if !(level > 0.0 && level < 1.0) {
        let span = named.get("level").map(|v| v.0.span).unwrap_or(end);
        return Err(ctx.err(span, format!("level={level} is not between 0 and 1")).help("write the confidence level as a fraction, such as level=0.95"));
    }
    let intercept = !matches!(options.get("intercept"), Some(OptionValue::Text(t)) if t == "no");
    let stop_on_missing = matches!(options.get("missing"), Some(OptionValue::Text(t)) if t == "stop");
    let name = match options.get("name") {
        Some(OptionValue::Text(t)) => Some(t.clone()),
        _ => None,
    };
    let bases: BTreeMap<String, String> =
        groups.get("base").map(|g| g.iter().map(|(k, v)| (k.clone(), v.0.clone())).collect()).unwrap_or_default();

    // 3. The frame: the data table, or the rows of the ranges used.
    let response_expr = positional[0];
    let terms_expr = positional.get(1).copied();
    let weights_expr = named.get("weights").map(|v| v.0);
    let mut names = Vec::new();
    for e in [Some(response_expr), terms_expr, weights_expr].into_iter().flatten() {
        referenced_names(e, &mut names);
    }
    let request_cells: HashSet<(u32, u32)> = requests.iter().map(|c| (c.row, c.col)).collect();
    let frame = match named.get("data") {
        Some((value, _)) => {
            let (grid, range) = match &value.kind {
                ExprKind::Name(s) | ExprKind::SheetName(s) | ExprKind::Quoted(s) => (ctx.sheet(s, value.span)?, None),
                ExprKind::Range(r) => {
                    let grid = ctx.sheet(r.sheet.as_deref().unwrap_or(&cell.sheet), value.span)?;
                    let ext = grid.extent().unwrap_or(CellRange { first_row: 0, first_col: 0, last_row: 0, last_col: 0 });
                    let (fr, lr) = match (r.start.row, r.end.row) {
                        (Some(a), Some(b)) => (a.min(b), a.max(b)),
                        _ => (ext.first_row, ext.last_row),
                    };
                    (grid, Some(CellRange { first_row: fr, last_row: lr, first_col: r.start.col.min(r.end.col), last_col: r.start.col.max(r.end.col) }))
                }
                _ => return Err(ctx.err(value.span, "data= takes a sheet name or a range, such as data=Sheet2 or data=Sheet2!A1:F500")),
            };
            let t = match range {
                Some(t) => t,
                None => {
                    let same_sheet = grid.name == cell.sheet;
                    let excl = if same_sheet { request_cells.clone() } else { HashSet::new() };
                    pick_table(grid, &excl, &names).ok_or_else(|| ctx.err(value.span, format!("the sheet '{}' has no table", grid.name)))?
                }
            };
            Frame::table(grid, t)
        }
        None if names.is_empty() => {
            // Only ranges: the frame is the first range's rows.
            let r = [Some(response_expr), terms_expr].into_iter().flatten().find_map(has_ranges);
            let Some(r) = r else {
                return Err(ctx.err(response_expr.span, "the request names no column").help("name columns by their header, such as Yield, or by a range such as C2:C40"));
            };
            let (grid, col, rows, header) = ctx.range_column(&r, response_expr.span)?;
            Frame {
                grid,
                header_row: header.as_ref().and(rows.first().map(|r| r.saturating_sub(1))),
                first_col: col,
                last_col: col,
                headers: BTreeMap::new(),
                header_names: Vec::new(),
                rows,
            }
        }
        None => {
            let grid = ctx.sheet(&cell.sheet, req.span)?;
            let t = pick_table(grid, &request_cells, &names).ok_or_else(|| {
                ctx.err(req.function.span, format!("the sheet '{}' has no data table besides its requests", grid.name))
                    .help("put the data in a table whose first row holds headers, or point to it with data=Sheet!A1:F100")
            })?;
            Frame::table(grid, t)
        }
    };
    if frame.rows.is_empty() {
        return Err(ctx.err(req.span, format!("the table {}!{} has headers but no data rows", crate::cells::quote_sheet_name(&frame.grid.name), frame.range())));
    }

    // 4. Evaluate.
    let response = match ctx.eval(response_expr, &frame, &bases)? {
        Factor::Num(_, v) => v,
        _ => {
            return Err(ctx
                .err(response_expr.span, format!("the response '{}' is a text column; #{} needs numbers", typed(text, response_expr.span), spec.name))
                .help("choose a numeric column as the response"))
        }
    };
    let mut term_exprs = Vec::new();
    if let Some(t) = terms_expr {
        split_terms(t, &mut term_exprs);
    }
    for t in &term_exprs {
        if let ExprKind::Binary { op: BinOp::Sub, .. } = t.kind {
            return Err(ctx.err(t.span, "terms are joined by +; a difference must be in parentheses").help(format!("write ({}) to use the difference as one term", typed(text, t.span))));
        }
        if let ExprKind::Number(_) = t.kind {
            return Err(ctx.err(t.span, "a number is not a term").help("the intercept is fitted unless intercept=no"));
        }
    }
    let mut factors = Vec::new();
    for t in &term_exprs {
        factors.push((typed(text, t.span), t.span, ctx.eval(t, &frame, &bases)?));
    }
    let weights = match weights_expr {
        Some(w) => Some(ctx.numeric(w, &frame, &bases)?),
        None => None,
    };

    // 5. Missing rows.
    let n = frame.rows.len();
    let mut why = response.why.clone();
    let mut first_bad = response.first_bad.clone();
    let mut note = |num: &Num, why: &mut Vec<Why>| {
        for i in 0..n {
            if why[i] == Why::Ok && num.why[i] != Why::Ok {
                why[i] = num.why[i];
            }
        }
        for (w, c) in &num.first_bad {
            first_bad.entry(*w).or_insert_with(|| c.clone());
        }
    };
    fn walk<'f>(f: &'f Factor, out: &mut Vec<&'f Factor>) {
        match f {
            Factor::Product(p) => p.iter().for_each(|x| walk(x, out)),
            x => out.push(x),
        }
    }
    let mut leaves = Vec::new();
    for (_, _, f) in &factors {
        walk(f, &mut leaves);
    }
    let mut cat_blank: Option<CellAddress> = None;
    for leaf in &leaves {
        match leaf {
            Factor::Num(_, v) => note(v, &mut why),
            Factor::Cat(c) => {
                for i in 0..n {
                    if c.levels[i].is_none() && why[i] == Why::Ok {
                        why[i] = Why::Blank;
                        cat_blank.get_or_insert_with(|| CellAddress::new(c.sheet.clone(), frame.rows[i], c.col));
                    }
                }
            }
            Factor::Product(_) => {}
        }
    }
    if let Some(w) = &weights {
        let w_span = weights_expr.map(|e| e.span).unwrap_or(end);
        // The weight's own cell, when the weights are one column.
        let w_cell = |i: usize| -> String {
            match weights_expr.and_then(|e| ctx.cell_of(e, &frame, i)) {
                Some(c) => format!("at {c}"),
                None => format!("in row {}", frame.rows[i] + 1),
            }
        };
        for i in 0..n {
            if why[i] == Why::Ok && matches!(w.why[i], Why::Text | Why::ErrorValue) {
                let what = if w.why[i] == Why::Text { "is text, not a number" } else { "is an error value" };
                return Err(ctx
                    .err(w_span, format!("the weight {} {what}", w_cell(i)))
                    .help("weights must be numbers, zero or positive; a zero weight leaves the row out"));
            }
            if why[i] == Why::Ok && w.why[i] == Why::Ok && w.values[i] < 0.0 {
                return Err(ctx
                    .err(w_span, format!("the weight {} is negative ({})", w_cell(i), w.values[i]))
                    .help("weights must be zero or positive; a zero weight leaves the row out"));
            }
        }
        note(w, &mut why);
        for i in 0..n {
            if why[i] == Why::Ok && w.values[i] == 0.0 {
                why[i] = Why::ZeroWeight;
            }
        }
    }
    let keep: Vec<usize> = (0..n).filter(|&i| why[i] == Why::Ok).collect();
    let mut left = LeftOut::default();
    for w in [Why::Blank, Why::Text, Why::ErrorValue, Why::Undefined, Why::ZeroWeight] {
        let k = why.iter().filter(|x| **x == w).count();
        if k > 0 {
            let first = first_bad.get(&w).cloned().or_else(|| if w == Why::Blank { cat_blank.clone() } else { None });
            left.reasons.push((WHY_WORDS[w as usize].to_string(), k, first));
        }
    }
    if stop_on_missing && left.total() > 0 {
        let msg = left.describe().unwrap_or_default();
        return Err(ctx.err(req.span, format!("missing=stop and {msg}")).help("fill or correct those cells, or use missing=skip to leave the rows out"));
    }

    // 6. Model columns on the kept rows.
    let pick = |v: &[f64]| keep.iter().map(|&i| v[i]).collect::<Vec<f64>>();
    let mut columns: Vec<Column> = Vec::new();
    let mut warnings = Vec::new();
    for (label, span, f) in &factors {
        let parts: Vec<&Factor> = match f {
            Factor::Product(p) => p.iter().collect(),
            x => vec![x],
        };
        // Each part expands to (label, values on kept rows).
        let mut expanded: Vec<(String, Vec<f64>)> = vec![(String::new(), vec![1.0; keep.len()])];
        for part in parts {
            let cols: Vec<(String, Vec<f64>)> = match part {
                Factor::Num(l, v) => vec![(l.clone(), pick(&v.values))],
                Factor::Cat(c) => indicator_columns(&ctx, c, &keep, &bases, *span)?,
                Factor::Product(_) => Vec::new(),
            };
            if expanded.len().saturating_mul(cols.len()) > MAX_MODEL_COLUMNS {
                return Err(ctx.err(*span, format!("this term makes more than {MAX_MODEL_COLUMNS} model columns")).help("use fewer levels or fewer products"));
            }
            let mut next = Vec::new();
            for (la, va) in &expanded {
                for (lb, vb) in &cols {
                    let l = if la.is_empty() {
                        lb.clone()
                    } else {
                        let wrap = |s: &str| if s.contains('=') { format!("({s})") } else { s.to_string() };
                        format!("{}*{}", wrap(la), wrap(lb))
                    };
                    next.push((l, va.iter().zip(vb).map(|(a, b)| a * b).collect()));
                }
            }
            expanded = next;
            if expanded.len() > MAX_MODEL_COLUMNS {
                return Err(ctx.err(*span, format!("this term makes more than {MAX_MODEL_COLUMNS} model columns")).help("use fewer levels or fewer products"));
            }
        }
        let single = expanded.len() == 1 && matches!(f, Factor::Num(..));
        let power = match f {
            Factor::Num(_, v) if single => v.power.as_ref().map(|b| PowerOf { base: b.0.clone(), exponent: b.1, base_values: pick(&b.2) }),
            _ => None,
        };
        for (l, values) in expanded {
            columns.push(Column { name: if single { label.clone() } else { l }, term: label.clone(), values, power: power.clone() });
        }
        if columns.len() > MAX_MODEL_COLUMNS {
            return Err(ctx.err(*span, format!("the model has more than {MAX_MODEL_COLUMNS} columns")).help("use fewer terms"));
        }
    }
    // A plain column that is the base of some power column is its first
    // power (`Light` beside `Light^2`).
    let power_bases: Vec<String> = columns.iter().filter_map(|c| c.power.as_ref().map(|p| p.base.to_lowercase())).collect();
    for c in columns.iter_mut() {
        if c.power.is_none() && power_bases.contains(&c.name.to_lowercase()) {
            c.power = Some(PowerOf { base: c.name.clone(), exponent: 1, base_values: c.values.clone() });
        }
    }
    let p = columns.len() + usize::from(intercept);
    if keep.len() <= p {
        let lost = left.describe().map(|d| format!(" ({d})")).unwrap_or_default();
        return Err(ctx
            .err(req.span, format!("{} rows are usable{lost}, but the model has {p} parameters; least squares needs more rows than parameters", keep.len()))
            .help("add data rows or use fewer terms"));
    }
    if let Some(d) = left.describe() {
        warnings.push(Problem::warning(d).at(cell.clone()));
    }
    let request = FitRequest {
        protocol: PROTOCOL_VERSION,
        function: spec.name.clone(),
        response: Column { name: typed(text, response_expr.span), term: typed(text, response_expr.span), values: pick(&response.values), power: None },
        columns,
        intercept,
        weights: weights.as_ref().map(|w| pick(&w.values)),
        level,
        expression: None,
        options: options.into_iter().filter(|(k, _)| !["name", "level", "intercept", "weights", "missing", "data", "base"].contains(&k.as_str())).collect(),
    };
    let placement = Placement {
        sheet: frame.grid.name.clone(),
        header_row: frame.header_row,
        first_col: frame.first_col,
        last_col: frame.last_col,
        rows: keep.iter().map(|&i| frame.rows[i]).collect(),
        first_row: frame.rows[0],
        last_row: *frame.rows.last().unwrap_or(&frame.rows[0]),
    };
    let recipe = build_recipe(&frame, &keep, &term_exprs, &bases, intercept, &request.columns);
    Ok(Resolved {
        recipe,
        request,
        name,
        response_label: typed(text, response_expr.span),
        terms: term_exprs.iter().map(|t| typed(text, t.span)).collect(),
        placement,
        left_out: left,
        warnings,
    })
}

/// Indicator columns of a categorical factor on the kept rows: one per level
/// except the base level (the first in sorted order unless `base(...)` names
/// another).
fn indicator_columns(ctx: &Ctx, c: &Cat, keep: &[usize], bases: &BTreeMap<String, String>, span: Span) -> Result<Vec<(String, Vec<f64>)>, Problem> {
    let levels: BTreeSet<&str> = keep.iter().filter_map(|&i| c.levels[i].as_deref()).collect();
    let levels: Vec<&str> = levels.into_iter().collect();
    let base = match bases.get(&c.name.to_lowercase()) {
        Some(b) => match levels.iter().find(|l| l.eq_ignore_ascii_case(b.trim())) {
            Some(l) => *l,
            None => {
                return Err(ctx
                    .err(span, format!("'{b}' is not a level of {} in the rows used", c.name))
                    .help(format!("the levels are {}", levels.join(", "))))
            }
        },
        None => match levels.first() {
            Some(l) => *l,
            None => return Err(ctx.err(span, format!("the text column {} has no values in the rows used", c.name))),
        },
    };
    // Checked before any column is built: a text column of unique labels
    // (an id) would otherwise cost levels × rows numbers of memory.
    if levels.len() > MAX_MODEL_COLUMNS {
        return Err(ctx
            .err(span, format!("the text column {} has {} levels in the rows used, which would make more than {MAX_MODEL_COLUMNS} model columns", c.name, levels.len()))
            .help("a text column of labels that are all different (such as an id) cannot be a term; drop it or use a column with fewer levels"));
    }
    if levels.len() < 2 {
        return Err(ctx
            .err(span, format!("the text column {} has only one level ({base}) in the rows used, so it explains nothing", c.name))
            .help("drop the term, or check the rows left out"));
    }
    Ok(levels
        .iter()
        .filter(|l| **l != base)
        .map(|l| {
            let values = keep.iter().map(|&i| if c.levels[i].as_deref() == Some(*l) { 1.0 } else { 0.0 }).collect();
            (format!("{}={}", c.name, l), values)
        })
        .collect())
}

/// Picks the table of a sheet that holds the referenced names: among the
/// candidate tables (runs of used columns between empty columns), the one
/// whose headers contain the most of the names, the largest on a tie.
fn pick_table(grid: &Grid, requests: &HashSet<(u32, u32)>, names: &[String]) -> Option<CellRange> {
    let tables = candidate_tables(grid, requests);
    tables
        .into_iter()
        .filter(|t| t.rows() >= 1)
        .max_by_key(|t| {
            let f = Frame::table(grid, *t);
            let hits = names.iter().filter(|n| f.has(n)).count();
            (hits, t.rows() as u64 * t.cols() as u64)
        })
}

/// The recipe of a model: each term as a tree over named input columns,
/// with each input's range (numbers) or levels and base (text) in the kept
/// rows. `None` when a term uses a range or anything a new value could not
/// be given for.
fn build_recipe(frame: &Frame, keep: &[usize], terms: &[Expr], bases: &BTreeMap<String, String>, intercept: bool, columns: &[Column]) -> Option<Recipe> {
    fn node(e: &Expr, frame: &Frame, keep: &[usize], bases: &BTreeMap<String, String>, inputs: &mut Vec<(Input, Option<Vec<f64>>, NewValue)>) -> Option<Node> {
        Some(match &e.kind {
            ExprKind::Name(n) | ExprKind::Quoted(n) => {
                let name = n.trim();
                if let Some(i) = inputs.iter().position(|(x, _, _)| x.name.eq_ignore_ascii_case(name)) {
                    return Some(Node::Input(i));
                }
                let col = match frame.headers.get(&name.to_lowercase()).map(|v| v.as_slice()) {
                    Some([c]) => *c,
                    _ => return None,
                };
                let (kind, values, first) = match read_column(frame.grid, col, &frame.rows, name) {
                    Factor::Num(_, v) => {
                        let xs: Vec<f64> = keep.iter().map(|&i| v.values[i]).collect();
                        if xs.is_empty() || xs.iter().any(|x| !x.is_finite()) {
                            return None;
                        }
                        let min = xs.iter().copied().fold(f64::INFINITY, f64::min);
                        let max = xs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                        let mean = xs.iter().sum::<f64>() / xs.len() as f64;
                        let first = NewValue::Number(xs[0]);
                        (InputKind::Numeric { min, max, mean }, Some(xs), first)
                    }
                    Factor::Cat(c) => {
                        let levels: BTreeSet<&str> = keep.iter().filter_map(|&i| c.levels[i].as_deref()).collect();
                        let levels: Vec<String> = levels.into_iter().map(str::to_string).collect();
                        let base = match bases.get(&name.to_lowercase()) {
                            Some(b) => levels.iter().find(|l| l.eq_ignore_ascii_case(b.trim()))?.clone(),
                            None => levels.first()?.clone(),
                        };
                        let first = NewValue::Text(c.levels[*keep.first()?].clone()?);
                        (InputKind::Levels { levels, base }, None, first)
                    }
                    Factor::Product(_) => return None,
                };
                inputs.push((Input { name: name.to_string(), kind }, values, first));
                Node::Input(inputs.len() - 1)
            }
            ExprKind::Number(x) => Node::Number(*x),
            ExprKind::Paren(inner) => node(inner, frame, keep, bases, inputs)?,
            ExprKind::Unary { op: UnaryOp::Neg, operand } => Node::Neg(Box::new(node(operand, frame, keep, bases, inputs)?)),
            ExprKind::Binary { op, lhs, rhs } => {
                let op = match op {
                    BinOp::Add => Op::Add,
                    BinOp::Sub => Op::Sub,
                    BinOp::Mul => Op::Mul,
                    BinOp::Div => Op::Div,
                    BinOp::Pow => Op::Pow,
                };
                Node::Bin(op, Box::new(node(lhs, frame, keep, bases, inputs)?), Box::new(node(rhs, frame, keep, bases, inputs)?))
            }
            ExprKind::Call { name, args } if args.len() == 1 => Node::Call(Func::from_name(&name.name)?, Box::new(node(&args[0], frame, keep, bases, inputs)?)),
            _ => return None,
        })
    }
    let mut inputs = Vec::new();
    let mut trees = Vec::new();
    for t in terms {
        trees.push(node(t, frame, keep, bases, &mut inputs)?);
    }
    let single_input = match inputs.as_slice() {
        [(Input { kind: InputKind::Numeric { .. }, .. }, Some(v), _)] => Some(v.clone()),
        _ => None,
    };
    let first: Vec<NewValue> = inputs.iter().map(|(_, _, f)| f.clone()).collect();
    let recipe = Recipe {
        intercept,
        inputs: inputs.into_iter().map(|(i, _, _)| i).collect(),
        terms: trees,
        columns: columns.iter().map(|c| c.name.clone()).collect(),
        single_input,
    };
    // The recipe must rebuild the model exactly: check it on the first row used.
    let row = recipe.row(&first).ok()?;
    let skip = usize::from(intercept);
    let same = columns.iter().zip(&row[skip..]).all(|(c, x)| c.values.first().is_some_and(|v| (v - x).abs() <= 1e-12 * v.abs().max(1.0)));
    same.then_some(recipe)
}
