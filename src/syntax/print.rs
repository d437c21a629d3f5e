//! Printing trees: the canonical request text (`Display`, which parses back
//! to the same tree) and the S-expression snapshot form ([`to_sexpr`]),
//! whose format is described in the module documentation.

use std::fmt::{self, Write as _};

use super::lexer::is_identifier;
use crate::cells::column_letters;
use super::parser::{precedence, Assoc, PREFIX_NEG_PRECEDENCE};
use super::{Arg, CellRefPart, Expr, ExprKind, RangeRef, Request, UnaryOp};

/// The precedence of an atom (name, number, call, parentheses …).
const ATOM_PRECEDENCE: u8 = 5;

/// A number as the shortest decimal text that reads back to the same value:
/// `14`, `0.2`, `0.001`, `1e300`, `1e-7`.
fn format_number(v: f64) -> String {
    if v.is_finite() && v.fract() == 0.0 && v.abs() < 1e16 {
        format!("{v}")
    } else {
        format!("{v:?}")
    }
}

/// `text` in `quote`s with each `quote` inside doubled, as a request writes it.
fn quote_with(text: &str, quote: char) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push(quote);
    for c in text.chars() {
        if c == quote {
            out.push(quote);
        }
        out.push(c);
    }
    out.push(quote);
    out
}

/// A key or name as a request writes it: bare when it is an identifier,
/// otherwise in double quotes.
fn request_name(name: &str) -> String {
    if is_identifier(name) {
        name.to_string()
    } else {
        quote_with(name, '"')
    }
}

/// A string in the S-expression form: double quotes, `"` and `\` escaped
/// with a backslash.
fn sexpr_string(text: &str) -> String {
    let mut out = String::with_capacity(text.len() + 2);
    out.push('"');
    for c in text.chars() {
        if c == '"' || c == '\\' {
            out.push('\\');
        }
        out.push(c);
    }
    out.push('"');
    out
}

/// A key or name in the S-expression form: bare when it is an identifier,
/// otherwise a quoted string.
fn sexpr_name(name: &str) -> String {
    if is_identifier(name) {
        name.to_string()
    } else {
        sexpr_string(name)
    }
}

/// The snapshot form of a request, e.g.
/// `(linear (name Yield) (+ (name Light) (name CO2)) (opt name (name main)))`.
/// Spans are not part of it. The format is in the module documentation.
pub fn to_sexpr(r: &Request) -> String {
    let mut out = String::new();
    out.push('(');
    out.push_str(&sexpr_name(&r.function.name));
    for arg in &r.args {
        out.push(' ');
        arg_sexpr(arg, &mut out);
    }
    out.push(')');
    out
}

/// The snapshot form of one expression, e.g. `(^ (name Light) 2)`.
pub fn expr_to_sexpr(e: &Expr) -> String {
    let mut out = String::new();
    expr_sexpr(e, &mut out);
    out
}

fn arg_sexpr(arg: &Arg, out: &mut String) {
    match arg {
        Arg::Positional(e) => expr_sexpr(e, out),
        Arg::Named { key, value, .. } => {
            out.push_str("(opt ");
            out.push_str(&sexpr_name(&key.name));
            out.push(' ');
            expr_sexpr(value, out);
            out.push(')');
        }
        Arg::Group { name, entries, .. } => {
            out.push_str("(group ");
            out.push_str(&sexpr_name(&name.name));
            for (key, value) in entries {
                out.push_str(" (");
                out.push_str(&sexpr_name(&key.name));
                out.push(' ');
                expr_sexpr(value, out);
                out.push(')');
            }
            out.push(')');
        }
    }
}

fn expr_sexpr(e: &Expr, out: &mut String) {
    match &e.kind {
        ExprKind::Name(n) => {
            out.push_str("(name ");
            out.push_str(&sexpr_name(n));
            out.push(')');
        }
        ExprKind::Quoted(s) => {
            out.push_str("(quoted ");
            out.push_str(&sexpr_string(s));
            out.push(')');
        }
        ExprKind::SheetName(s) => {
            out.push_str("(sheet ");
            out.push_str(&sexpr_string(s));
            out.push(')');
        }
        ExprKind::Number(v) => out.push_str(&format_number(*v)),
        ExprKind::Range(r) => {
            // Writing to a String cannot fail.
            let _ = write!(out, "(range {r})");
        }
        ExprKind::Unary {
            op: UnaryOp::Neg,
            operand,
        } => {
            out.push_str("(neg ");
            expr_sexpr(operand, out);
            out.push(')');
        }
        ExprKind::Binary { op, lhs, rhs } => {
            out.push('(');
            out.push_str(op.symbol());
            out.push(' ');
            expr_sexpr(lhs, out);
            out.push(' ');
            expr_sexpr(rhs, out);
            out.push(')');
        }
        ExprKind::Call { name, args } => {
            out.push_str("(call ");
            out.push_str(&sexpr_name(&name.name));
            for a in args {
                out.push(' ');
                expr_sexpr(a, out);
            }
            out.push(')');
        }
        ExprKind::Paren(inner) => {
            out.push_str("(paren ");
            expr_sexpr(inner, out);
            out.push(')');
        }
    }
}

/// Canonical request text: `#function(arg, arg, key=value, group(k=v))`
/// with single spaces after commas and around `+` and `-`. For a tree from
/// [`parse_request`](super::parse_request) it parses back to the same tree
/// (same [`to_sexpr`]).
impl fmt::Display for Request {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "#{}(", self.function.name)?;
        for (i, arg) in self.args.iter().enumerate() {
            if i > 0 {
                f.write_str(", ")?;
            }
            write!(f, "{arg}")?;
        }
        f.write_str(")")
    }
}

/// An argument as a request writes it: `Light + CO2`, `confidence=0.99`,
/// `start(a=40, k=0.2)`.
impl fmt::Display for Arg {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Arg::Positional(e) => write!(f, "{e}"),
            Arg::Named { key, value, .. } => write!(f, "{}={value}", request_name(&key.name)),
            Arg::Group { name, entries, .. } => {
                write!(f, "{}(", name.name)?;
                for (i, (key, value)) in entries.iter().enumerate() {
                    if i > 0 {
                        f.write_str(", ")?;
                    }
                    write!(f, "{}={value}", request_name(&key.name))?;
                }
                f.write_str(")")
            }
        }
    }
}

/// An expression as a request writes it. Parentheses are printed for
/// [`ExprKind::Paren`] nodes, and also wherever precedence requires them in
/// a tree built by hand (such a tree then reads back with `Paren` nodes).
/// A name that is not an identifier is printed in double quotes.
impl fmt::Display for Expr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write_expr(f, self, 0, false)
    }
}

/// The precedence of an expression's outermost operator.
fn expr_precedence(e: &Expr) -> u8 {
    match &e.kind {
        ExprKind::Binary { op, .. } => precedence(*op).0,
        ExprKind::Unary { .. } => PREFIX_NEG_PRECEDENCE,
        _ => ATOM_PRECEDENCE,
    }
}

/// Writes `e` where the context needs precedence at least `min`. In an
/// operand position (`operand_position`: the right side of an operator or
/// the operand of `-`) a unary minus needs no parentheses, because the
/// parser reads a prefix `-` there whatever the precedence.
fn write_expr(
    f: &mut fmt::Formatter<'_>,
    e: &Expr,
    min: u8,
    operand_position: bool,
) -> fmt::Result {
    let is_unary = matches!(e.kind, ExprKind::Unary { .. });
    if expr_precedence(e) < min && !(is_unary && operand_position) {
        f.write_str("(")?;
        write_expr(f, e, 0, false)?;
        return f.write_str(")");
    }
    match &e.kind {
        ExprKind::Name(n) => f.write_str(&request_name(n)),
        ExprKind::Quoted(s) => f.write_str(&quote_with(s, '"')),
        ExprKind::SheetName(s) => f.write_str(&quote_with(s, '\'')),
        ExprKind::Number(v) => f.write_str(&format_number(*v)),
        ExprKind::Range(r) => write!(f, "{r}"),
        ExprKind::Unary {
            op: UnaryOp::Neg,
            operand,
        } => {
            f.write_str("-")?;
            write_expr(f, operand, PREFIX_NEG_PRECEDENCE + 1, true)
        }
        ExprKind::Binary { op, lhs, rhs } => {
            let (prec, assoc) = precedence(*op);
            let (lhs_min, rhs_min) = match assoc {
                Assoc::Left => (prec, prec + 1),
                Assoc::Right => (prec + 1, prec),
            };
            write_expr(f, lhs, lhs_min, false)?;
            match op.symbol() {
                s @ ("+" | "-") => write!(f, " {s} ")?,
                s => f.write_str(s)?,
            }
            write_expr(f, rhs, rhs_min, true)
        }
        ExprKind::Call { name, args } => {
            write!(f, "{}(", name.name)?;
            for (i, a) in args.iter().enumerate() {
                if i > 0 {
                    f.write_str(", ")?;
                }
                write_expr(f, a, 0, false)?;
            }
            f.write_str(")")
        }
        ExprKind::Paren(inner) => {
            f.write_str("(")?;
            write_expr(f, inner, 0, false)?;
            f.write_str(")")
        }
    }
}

/// A corner in A1 form without `$`: `C7`, or `C` for a whole column.
impl fmt::Display for CellRefPart {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&column_letters(self.col))?;
        match self.row {
            Some(r) => write!(f, "{}", u64::from(r) + 1),
            None => Ok(()),
        }
    }
}

/// A reference in canonical A1 form: `C2:C121`, `Data!C7`, `'Bay 2'!C:C`.
/// A sheetless single cell prints as `C7:C7`, since a bare `C7` reads as a name.
impl fmt::Display for RangeRef {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some(sheet) = &self.sheet {
            if is_identifier(sheet) {
                write!(f, "{sheet}!")?;
            } else {
                write!(f, "{}!", quote_with(sheet, '\''))?;
            }
        }
        write!(f, "{}", self.start)?;
        let single = self.start == self.end && self.start.row.is_some();
        if self.sheet.is_none() || !single {
            write!(f, ":{}", self.end)?;
        }
        Ok(())
    }
}
