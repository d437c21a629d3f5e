//! The model design: from evaluated columns to what the fit receives.
//!
//! This file owns which rows are used (blank, text, error and undefined
//! cells and zero weights leave a row out and are counted by reason;
//! `gaps=stop` turns them into an error; weights are checked), the model
//! columns on the kept rows (indicator columns of text columns against a
//! reference level, labelled `Bay: North vs East`; products, powers of one
//! base column), the shape checks, and
//! the [`Recipe`] that rebuilds the model columns from new values.

use super::eval::{read_column, Cat, Factor, Num, Why, WHY_WORDS};
use super::tables::Frame;
use super::{Ctx, LeftOut, MAX_MODEL_COLUMNS};
use crate::cells::CellAddress;
use crate::problems::Problem;
use crate::protocol::{Column, PowerOf};
use crate::recipe::{Func, Input, InputKind, NewValue, Node, Op, Recipe};
use crate::syntax::{BinOp, Expr, ExprKind, Span, UnaryOp};
use std::collections::{BTreeMap, BTreeSet};

/// A model term evaluated over the frame: its label as typed, its span in
/// the request text, and its value.
pub(super) type Term = (String, Span, Factor);

/// The rows of the frame a fit can use, and why the others are left out.
pub(super) struct Rows {
    /// Frame rows used, in order.
    pub keep: Vec<usize>,
    /// The rows left out, by reason.
    pub left_out: LeftOut,
}

/// Which frame rows are usable: a row is left out when the response, a
/// term's column or the weight is unusable in it, or its weight is zero.
/// A weight that is text, an error value or negative is an error naming its
/// cell; with `stop_on_missing`, any row left out is an error.
#[allow(clippy::too_many_arguments)]
pub(super) fn usable_rows<'t>(
    ctx: &Ctx,
    frame: &Frame,
    response: &Num,
    terms: impl Iterator<Item = &'t Term>,
    weights: Option<(&Num, Option<&Expr>)>,
    end: Span,
    stop_on_missing: bool,
    request_span: Span,
) -> Result<Rows, Problem> {
    let n = frame.rows.len();
    let mut why = response.why.clone();
    let mut first_bad = response.first_bad.clone();
    let mut note = |num: &Num, why: &mut Vec<Why>| {
        for (w, x) in why.iter_mut().zip(&num.why) {
            if *w == Why::Ok && *x != Why::Ok {
                *w = *x;
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
    for (_, _, f) in terms {
        walk(f, &mut leaves);
    }
    let mut cat_blank: Option<CellAddress> = None;
    for leaf in &leaves {
        match leaf {
            Factor::Num(_, v) => note(v, &mut why),
            Factor::Cat(c) => {
                for (i, w) in why.iter_mut().enumerate() {
                    if c.levels[i].is_none() && *w == Why::Ok {
                        *w = Why::Blank;
                        cat_blank.get_or_insert_with(|| CellAddress::new(c.sheet.clone(), frame.rows[i], c.col));
                    }
                }
            }
            Factor::Product(_) => {}
        }
    }
    if let Some((w, weights_expr)) = weights {
        let w_span = weights_expr.map(|e| e.span).unwrap_or(end);
        // The weight's own cell, when the weights are one column.
        let w_cell = |i: usize| -> String {
            match weights_expr.and_then(|e| ctx.cell_of(e, frame, i)) {
                Some(c) => format!("at {c}"),
                None => format!("in row {}", frame.rows[i] + 1),
            }
        };
        for (i, (row_why, (&w_why, &w_value))) in why.iter().zip(w.why.iter().zip(&w.values)).enumerate() {
            if *row_why == Why::Ok && matches!(w_why, Why::Text | Why::NumberAsText | Why::ErrorValue) {
                let what = match w_why {
                    Why::Text => "is text, not a number",
                    Why::NumberAsText => "is a number stored as text (convert it to a number)",
                    _ => "is an error value",
                };
                return Err(ctx
                    .err(w_span, format!("the weight {} {what}", w_cell(i)))
                    .help("weights must be numbers, zero or positive; a zero weight leaves the row out"));
            }
            if *row_why == Why::Ok && w_why == Why::Ok && w_value < 0.0 {
                return Err(ctx
                    .err(w_span, format!("the weight {} is negative ({})", w_cell(i), w_value))
                    .help("weights must be zero or positive; a zero weight leaves the row out"));
            }
        }
        note(w, &mut why);
        for (row_why, &w_value) in why.iter_mut().zip(&w.values) {
            if *row_why == Why::Ok && w_value == 0.0 {
                *row_why = Why::ZeroWeight;
            }
        }
    }
    let keep: Vec<usize> = (0..n).filter(|&i| why[i] == Why::Ok).collect();
    let mut left = LeftOut::default();
    for w in [Why::Blank, Why::Uncomputed, Why::Text, Why::NumberAsText, Why::ErrorValue, Why::Undefined, Why::ZeroWeight] {
        let k = why.iter().filter(|x| **x == w).count();
        if k > 0 {
            let first = first_bad.get(&w).cloned().or_else(|| if w == Why::Blank { cat_blank.clone() } else { None });
            left.reasons.push((WHY_WORDS[w as usize].to_string(), k, first));
        }
    }
    if stop_on_missing && left.total() > 0 {
        let msg = left.describe().unwrap_or_default();
        return Err(ctx.err(request_span, format!("gaps=stop and {msg}")).help("fill or correct those cells, or use gaps=skip to leave the rows out"));
    }
    Ok(Rows { keep, left_out: left })
}

/// The model columns on the kept rows: a numeric term is one column, a text
/// column one indicator column per level but the reference level, and a product every
/// product of its parts' columns. A plain column that is the base of some
/// power column is marked as its first power (`Light` beside `Light^2`).
pub(super) fn model_columns(ctx: &Ctx, terms: &[Term], keep: &[usize], bases: &BTreeMap<String, String>) -> Result<Vec<Column>, Problem> {
    let pick = |v: &[f64]| keep.iter().map(|&i| v[i]).collect::<Vec<f64>>();
    let mut columns: Vec<Column> = Vec::new();
    for (label, span, f) in terms {
        let parts: Vec<&Factor> = match f {
            Factor::Product(p) => p.iter().collect(),
            x => vec![x],
        };
        // Each part expands to (label, values on kept rows); in a product an
        // indicator's label is in parentheses: `Light*(Bay: North vs East)`.
        let in_product = parts.len() > 1;
        let mut expanded: Vec<(String, Vec<f64>)> = vec![(String::new(), vec![1.0; keep.len()])];
        for part in parts {
            let cols: Vec<(String, Vec<f64>)> = match part {
                Factor::Num(l, v) => vec![(l.clone(), pick(&v.values))],
                Factor::Cat(c) => {
                    let cols = indicator_columns(ctx, c, keep, bases, *span)?;
                    if in_product {
                        cols.into_iter().map(|(l, v)| (format!("({l})"), v)).collect()
                    } else {
                        cols
                    }
                }
                Factor::Product(_) => Vec::new(),
            };
            if expanded.len().saturating_mul(cols.len()) > MAX_MODEL_COLUMNS {
                return Err(ctx.err(*span, format!("this term makes more than {MAX_MODEL_COLUMNS} model columns")).help("use fewer levels or fewer products"));
            }
            let mut next = Vec::new();
            for (la, va) in &expanded {
                for (lb, vb) in &cols {
                    let l = if la.is_empty() { lb.clone() } else { format!("{la}*{lb}") };
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
    let power_bases: Vec<String> = columns.iter().filter_map(|c| c.power.as_ref().map(|p| p.base.to_lowercase())).collect();
    for c in columns.iter_mut() {
        if c.power.is_none() && power_bases.contains(&c.name.to_lowercase()) {
            c.power = Some(PowerOf { base: c.name.clone(), exponent: 1, base_values: c.values.clone() });
        }
    }
    Ok(columns)
}

/// What fixes a workbook whose formulas were saved without their results.
pub(super) const UNCOMPUTED_FIX: &str = "open the file in a spreadsheet application and save it again, which stores the results";

/// Why a text column has no base level.
enum NoBase {
    /// `against(...)` names a word that is not one of its levels.
    NotALevel(String),
    /// The column has no values in the rows used.
    NoLevels,
}

/// The levels of a text column in the kept rows, in sorted order, and its
/// reference level: the level `against(...)` names (ignoring case), else the
/// first.
fn levels_and_base<'c>(c: &'c Cat, keep: &[usize], bases: &BTreeMap<String, String>) -> (Vec<&'c str>, Result<&'c str, NoBase>) {
    let levels: BTreeSet<&str> = keep.iter().filter_map(|&i| c.levels[i].as_deref()).collect();
    let levels: Vec<&str> = levels.into_iter().collect();
    let base = match bases.get(&c.name.to_lowercase()) {
        Some(b) => levels.iter().find(|l| crate::recipe::level_key(l) == crate::recipe::level_key(b)).copied().ok_or_else(|| NoBase::NotALevel(b.clone())),
        None => levels.first().copied().ok_or(NoBase::NoLevels),
    };
    (levels, base)
}

/// The label of the indicator column of `level` of the text column `column`:
/// what it is compared with is part of its name, `Bay: North vs East`.
fn indicator_label(column: &str, level: &str, reference: &str) -> String {
    format!("{column}: {level} vs {reference}")
}

/// Indicator columns of a categorical factor on the kept rows: one per level
/// except the reference level (the first in sorted order unless
/// `against(...)` names another).
fn indicator_columns(ctx: &Ctx, c: &Cat, keep: &[usize], bases: &BTreeMap<String, String>, span: Span) -> Result<Vec<(String, Vec<f64>)>, Problem> {
    let (levels, base) = levels_and_base(c, keep, bases);
    let base = match base {
        Ok(b) => b,
        Err(NoBase::NotALevel(b)) => {
            return Err(ctx
                .err(span, format!("'{b}' is not a level of {} in the rows used", c.name))
                .help(format!("the levels are {}", levels.join(", "))))
        }
        Err(NoBase::NoLevels) => {
            let e = ctx.err(span, format!("the text column {} has no values in the rows used", c.name));
            return Err(match &c.uncomputed {
                Some(at) => e.help(format!("its cells are formulas saved without their results (first {at}), as some programs save files; {UNCOMPUTED_FIX}")),
                None => e,
            });
        }
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
            (indicator_label(&c.name, l, base), values)
        })
        .collect())
}

/// One input of a recipe being built: the input, its values in the kept
/// rows (numeric inputs), and its value in the first kept row.
type RecipeInput = (Input, Option<Vec<f64>>, NewValue);

/// The recipe of a model: each term as a tree over named input columns,
/// with each input's range (numbers) or levels and base (text) in the kept
/// rows. `None` when a term uses a range or anything a new value could not
/// be given for.
pub(super) fn build_recipe(frame: &Frame, keep: &[usize], terms: &[Expr], bases: &BTreeMap<String, String>, columns: &[Column]) -> Option<Recipe> {
    fn node(e: &Expr, frame: &Frame, keep: &[usize], bases: &BTreeMap<String, String>, inputs: &mut Vec<RecipeInput>) -> Option<Node> {
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
                        let (levels, base) = levels_and_base(&c, keep, bases);
                        let base = base.ok()?.to_string();
                        let levels: Vec<String> = levels.into_iter().map(str::to_string).collect();
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
        inputs: inputs.into_iter().map(|(i, _, _)| i).collect(),
        terms: trees,
        columns: columns.iter().map(|c| c.name.clone()).collect(),
        single_input,
    };
    // The recipe must rebuild the model exactly: check it on the first row used.
    let row = recipe.columns_at(&first).ok()?;
    let same = columns.iter().zip(&row).all(|(c, x)| c.values.first().is_some_and(|v| (v - x).abs() <= 1e-12 * v.abs().max(1.0)));
    same.then_some(recipe)
}
