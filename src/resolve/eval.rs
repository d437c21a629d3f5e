//! Expressions evaluated over a frame's rows.
//!
//! This file owns what a column of the request becomes before rows are
//! dropped: numbers with a reason per unusable row ([`Num`], [`Why`]), text
//! columns as categories ([`Cat`]), products that still hold a text column
//! ([`Factor::Product`]), and the evaluation of names, ranges, numbers,
//! arithmetic and transforms over the frame, with the errors a user gets for
//! an unknown header, a text column in arithmetic or an unknown transform.

use super::tables::Frame;
use super::{typed, Ctx, ExprColumn, Here};
use crate::recipe::level_key;
use crate::cells::{CellAddress, Grid, Value};
use crate::problems::{closest, Problem};
use crate::protocol::Function;
use crate::syntax::{BinOp, Expr, ExprKind, RangeRef, Span, UnaryOp};
use std::collections::BTreeMap;

/// Why a row cannot be used; the order is the order of reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
#[repr(u8)]
pub(super) enum Why {
    Ok = 0,
    Blank,
    Uncomputed,
    Text,
    NumberAsText,
    ErrorValue,
    Undefined,
    ZeroWeight,
}

/// The words of each [`Why`] in a report, indexed by its number.
pub(super) const WHY_WORDS: [&str; 8] = [
    "",
    "with a blank cell",
    "with a formula that has no stored result",
    "with text in a numeric column",
    "with a number stored as text (convert those cells to numbers to use them)",
    "with an error value",
    "where a transform is undefined (such as log of a value ≤ 0)",
    "with zero weight",
];

/// A column of frame values with per-row reasons; NaN where unusable.
#[derive(Clone)]
pub(super) struct Num {
    pub values: Vec<f64>,
    pub why: Vec<Why>,
    /// The source cell of the first unusable row per reason.
    pub first_bad: BTreeMap<Why, CellAddress>,
    /// When these values are `base^exponent` for a whole exponent: the
    /// base's label and values (before rows are dropped).
    pub power: Option<Box<(String, u32, Vec<f64>)>>,
}

/// The largest whole exponent recorded as a power of a base column.
const MAX_POWER: f64 = 30.0;

/// The transforms a term may use: the functions of the fit language that a
/// prediction recipe can rebuild.
pub(super) const TRANSFORMS: [Function; 5] = [Function::Log, Function::Log10, Function::Exp, Function::Sqrt, Function::Abs];

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
pub(super) struct Cat {
    pub name: String,
    pub levels: Vec<Option<String>>,
    pub sheet: String,
    pub col: u32,
    /// The first cell in the rows that is a formula saved without its
    /// result, if any.
    pub uncomputed: Option<CellAddress>,
    /// Spellings taken as one level (see [`level_key`]): each level as
    /// used, with the other spellings found for it.
    pub merged: Vec<(String, Vec<String>)>,
}

impl Factor {
    /// A note for every text column of this factor whose levels came in
    /// several spellings.
    pub(super) fn merge_notes(&self, out: &mut Vec<String>) {
        match self {
            Factor::Cat(c) => {
                for (level, others) in &c.merged {
                    let all: Vec<String> = std::iter::once(level).chain(others).map(|s| format!("“{s}”")).collect();
                    out.push(format!("in {}, {} are taken as one level, {level} (levels that differ only in case or spacing are one level)", c.name, all.join(", ")));
                }
            }
            Factor::Product(p) => p.iter().for_each(|f| f.merge_notes(out)),
            Factor::Num(..) => {}
        }
    }
}

/// What an expression evaluates to before missing rows are dropped.
#[derive(Clone)]
pub(super) enum Factor {
    Num(String, Num),
    Cat(Cat),
    /// A product of factors, each expanded later.
    Product(Vec<Factor>),
}

fn value_is_numeric(v: &Value) -> Option<f64> {
    match v {
        Value::Number(x) => Some(*x),
        Value::DateTime(x, _) => Some(*x),
        Value::Bool(b) => Some(if *b { 1.0 } else { 0.0 }),
        _ => None,
    }
}

/// Reads one sheet column over the given rows as numbers or categories.
/// Whether a text reads as a number, with a point or a comma as the
/// decimal mark ("3", "12,5", " -0.25 "): a number stored as text. plumb
/// does not guess which decimal mark was meant; it says what it saw.
fn looks_numeric(t: &str) -> bool {
    let t = t.trim();
    !t.is_empty() && t.chars().filter(|c| *c == ',' || *c == '.').count() <= 1 && t.replace(',', ".").parse::<f64>().is_ok_and(f64::is_finite)
}

pub(super) fn read_column(grid: &Grid, col: u32, rows: &[u32], name: &str) -> Factor {
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
        // Each level keeps the first spelling met; other spellings of the
        // same level (by `level_key`) become it and are recorded.
        let mut first: BTreeMap<String, String> = BTreeMap::new();
        let mut merged: BTreeMap<String, Vec<String>> = BTreeMap::new();
        let levels = rows
            .iter()
            .map(|&r| match grid.value(r, col) {
                Value::Text(t) if !t.trim().is_empty() => {
                    let t = t.trim();
                    let key = level_key(t);
                    let level = first.entry(key.clone()).or_insert_with(|| t.to_string()).clone();
                    if level != t && !merged.get(&key).is_some_and(|v| v.iter().any(|x| x == t)) {
                        merged.entry(key).or_default().push(t.to_string());
                    }
                    Some(level)
                }
                _ => None,
            })
            .collect();
        let merged = merged.into_iter().map(|(k, others)| (first[&k].clone(), others)).collect();
        let uncomputed = rows.iter().find(|&&r| grid.is_uncomputed(r, col)).map(|&r| CellAddress::new(grid.name.clone(), r, col));
        return Factor::Cat(Cat { name: name.to_string(), levels, sheet: grid.name.clone(), col, uncomputed, merged });
    }
    let mut num = Num { values: Vec::with_capacity(rows.len()), why: Vec::with_capacity(rows.len()), first_bad: BTreeMap::new(), power: None };
    for &r in rows {
        let v = grid.value(r, col);
        let (x, why) = match v {
            // A formula saved without its result (by a program that does
            // not compute formulas) reads as blank: say which it is.
            v if v.is_blank() && grid.is_uncomputed(r, col) => (f64::NAN, Why::Uncomputed),
            v if v.is_blank() => (f64::NAN, Why::Blank),
            Value::Text(t) if looks_numeric(t) => (f64::NAN, Why::NumberAsText),
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
pub(super) fn referenced_names(e: &Expr, out: &mut Vec<String>) {
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

/// The first range an expression uses, if any.
pub(super) fn has_ranges(e: &Expr) -> Option<RangeRef> {
    match &e.kind {
        ExprKind::Range(r) => Some(r.clone()),
        ExprKind::Unary { operand, .. } => has_ranges(operand),
        ExprKind::Binary { lhs, rhs, .. } => has_ranges(lhs).or_else(|| has_ranges(rhs)),
        ExprKind::Call { args, .. } => args.iter().find_map(has_ranges),
        ExprKind::Paren(inner) => has_ranges(inner),
        _ => None,
    }
}

/// The error for a function name that is not one of `allowed`, with the
/// closest names as suggestions.
pub(super) fn unknown_function(at: &Here, name: &crate::syntax::Ident, allowed: &[Function]) -> Problem {
    let names: Vec<&str> = allowed.iter().map(|f| f.name()).collect();
    let near = closest(&name.name.to_lowercase(), names.iter().copied());
    let help = if near.is_empty() {
        format!("the functions are {}", names.join(", "))
    } else {
        format!("did you mean {}? The functions are {}", near.join(" or "), names.join(", "))
    };
    at.err(name.span, format!("'{}' is not a function of the fit language", name.name)).help(help)
}

impl Ctx<'_> {
    /// Evaluates an expression over the frame.
    pub(super) fn eval(&self, e: &Expr, frame: &Frame) -> Result<Factor, Problem> {
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
                let rc = self.range_column(r, e.span)?;
                if rc.rows.len() != frame.rows.len() {
                    return Err(self.err(
                        e.span,
                        format!("this range has {} rows but the request's data has {}", rc.rows.len(), frame.rows.len()),
                    )
                    .help("give every column of one request the same rows"));
                }
                Ok(read_column(rc.grid, rc.col, &rc.rows, &label))
            }
            ExprKind::Number(x) => Ok(Factor::Num(
                label,
                Num { values: vec![*x; frame.rows.len()], why: vec![Why::Ok; frame.rows.len()], first_bad: BTreeMap::new(), power: None },
            )),
            ExprKind::Paren(inner) => match self.eval(inner, frame)? {
                Factor::Num(_, v) => Ok(Factor::Num(label, v)),
                other => Ok(other),
            },
            ExprKind::Unary { op: UnaryOp::Neg, operand } => {
                let v = self.numeric(operand, frame)?;
                Ok(Factor::Num(label, map_num(v, |x| -x)))
            }
            ExprKind::Binary { op: BinOp::Mul, lhs, rhs } => {
                let mut parts = Vec::new();
                for side in [lhs, rhs] {
                    match self.eval(side, frame)? {
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
                let a = self.numeric(lhs, frame)?;
                let b = self.numeric(rhs, frame)?;
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
                let Some(f) = Function::from_name(&name.name).filter(|f| TRANSFORMS.contains(f)) else {
                    return Err(unknown_function(&self.here(), name, &TRANSFORMS));
                };
                if args.len() != 1 {
                    return Err(self.err(e.span, format!("{}(…) takes exactly one argument", f.name())));
                }
                let v = self.numeric(&args[0], frame)?;
                Ok(Factor::Num(label, map_num(v, |x| f.apply(x))))
            }
            ExprKind::SheetName(s) => Err(self
                .err(e.span, format!("'{s}' in single quotes is a sheet name, not a column"))
                .help("quote header names with double quotes: \"Outdoor temp\"")),
        }
    }

    /// The source cell of frame row `i` of an expression that is one column
    /// (a header name or a one-column range); `None` for anything else.
    pub(super) fn cell_of(&self, e: &Expr, frame: &Frame, i: usize) -> Option<CellAddress> {
        match &e.kind {
            ExprKind::Name(n) | ExprKind::Quoted(n) => match frame.headers.get(&n.trim().to_lowercase()).map(|v| v.as_slice()) {
                Some([col]) => Some(CellAddress::new(frame.grid.name.clone(), *frame.rows.get(i)?, *col)),
                _ => None,
            },
            ExprKind::Range(r) => {
                let rc = self.range_column(r, e.span).ok()?;
                Some(CellAddress::new(rc.grid.name.clone(), *rc.rows.get(i)?, rc.col))
            }
            ExprKind::Paren(inner) => self.cell_of(inner, frame, i),
            _ => None,
        }
    }

    /// Evaluates an expression that must be numbers (not a text column).
    pub(super) fn numeric(&self, e: &Expr, frame: &Frame) -> Result<Num, Problem> {
        match self.eval(e, frame)? {
            Factor::Num(_, v) => Ok(v),
            Factor::Cat(c) => Err(self
                .err(e.span, format!("'{}' is a text column (categories), so it cannot be used in arithmetic", c.name))
                .help("use a text column as a term on its own (Bay) or in a product (Light*Bay)")),
            Factor::Product(_) => Err(self
                .err(e.span, "a product with a text column cannot be used in arithmetic")
                .help("use it as a term on its own")),
        }
    }

    /// The values of a column a model expression uses. A name that is no
    /// header is neither a column nor one of the `parameters` (declared in
    /// `group`): the error suggests the closest of both.
    pub(super) fn expression_column(&self, col: &ExprColumn, frame: &Frame, parameters: &[String], group: &str) -> Result<Num, Problem> {
        let e = &col.expr;
        if let ExprKind::Name(n) | ExprKind::Quoted(n) = &e.kind {
            if !frame.headers.contains_key(&n.trim().to_lowercase()) {
                if matches!(e.kind, ExprKind::Name(_)) && looks_like_parameter(n.trim()) {
                    let list: Vec<String> = parameters.iter().map(|p| format!("{p}=…")).chain([format!("{}=…", n.trim())]).collect();
                    return Err(self
                        .err(e.span, format!("{} has no starting value: it is no header of the table {}!{}, so it is taken for a parameter", n.trim(), crate::cells::quote_sheet_name(&frame.grid.name), frame.range()))
                        .help(format!("add it to the starting values, {group}({}), or write the column's header", list.join(", "))));
                }
                let candidates = frame.header_names.iter().chain(parameters).map(|s| s.as_str());
                let near = closest(n.trim(), candidates);
                let known = format!("The headers are {}; the parameters are {}", frame.header_names.join(", "), parameters.join(", "));
                let help = if near.is_empty() { known } else { format!("did you mean {}? {known}", near.join(" or ")) };
                let where_ = format!("the table {}!{}", crate::cells::quote_sheet_name(&frame.grid.name), frame.range());
                return Err(self
                    .err(e.span, format!("there is no column headed '{}' in {where_}, and no parameter of that name in {group}(…)", n.trim()))
                    .help(help));
            }
        }
        self.numeric(e, frame)
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

/// A name that is obviously meant as a parameter when no header has it:
/// one letter, perhaps followed by digits (`k`, `b2`).
fn looks_like_parameter(name: &str) -> bool {
    let mut c = name.chars();
    c.next().is_some_and(|f| f.is_alphabetic()) && c.all(|d| d.is_ascii_digit())
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
