//! The fit language's syntax: request text in, a tree or a [`SyntaxError`] out.
//!
//! This module owns the grammar of a *request* (the text an analyst types
//! into a cell, such as `#linear(Yield, Light + CO2 + House, name=main)`),
//! its tree ([`Request`], [`Arg`], [`Expr`]), the canonical printed form
//! (`Display`) and the S-expression snapshot form ([`to_sexpr`]). It knows
//! nothing about workbooks, columns or which functions and options exist:
//! the caller lowercases the function name, checks the order of positional
//! and named arguments, and resolves names against the data. See
//! `fit-language.md` in the design docs for the language itself.
//!
//! # Grammar (EBNF)
//!
//! White space (any Unicode white space) may appear between any two tokens
//! and is ignored; it is not allowed inside a token (so `C2 : C9` is an error).
//!
//! ```text
//! request    = ws, "#", ident, "(", [ arg, { ",", arg } ], ")", ws ;
//! arg        = group | named | expr ;
//! named      = ( ident | quoted ), "=", expr ;
//! group      = ident, "(", entry, { ",", entry }, ")" ;      (* against(House="East") *)
//! entry      = ( ident | quoted ), "=", expr ;
//!
//! expr       = sum ;
//! sum        = product, { ( "+" | "-" ), product } ;            (* left, lowest *)
//! product    = prefix, { ( "*" | "/" ), prefix } ;              (* left *)
//! prefix     = "-", prefix | power ;
//! power      = primary, [ "^", prefix ] ;                       (* right, highest *)
//! primary    = number | quoted | sheetname | range
//!            | ident, "(", [ expr, { ",", expr } ], ")"        (* call: log(Area) *)
//!            | ident                                           (* a name: Light *)
//!            | "(", expr, ")" ;                                (* kept as Paren *)
//!
//! ident      = ( letter | "_" ), { letter | digit | "_" | "." } ;  (* Unicode letters *)
//! number     = ( digits, [ ".", [ digits ] ] | ".", digits ),
//!              [ ( "e" | "E" ), [ "+" | "-" ], digits ] ;
//! quoted     = '"', { any char but '"' | '""' }, '"' ;          (* "" is one " *)
//! sheetname  = "'", { any char but "'" | "''" }, "'" ;          (* '' is one ' *)
//! range      = [ sheet, "!" ], cell, ":", cell              (* C2:C121, Data!C2:C121 *)
//!            | [ sheet, "!" ], column, ":", column          (* C:C, 'Bay 2'!B:D *)
//!            | sheet, "!", cell                             (* Data!C7 *)
//!            | marked-cell ;                                (* $C$7, C$7 *)
//! sheet      = ident | sheetname ;
//! cell       = [ "$" ], letters, [ "$" ], row ;              (* C2, $C$2, c2 *)
//! column     = [ "$" ], letters ;                            (* C, $C *)
//! marked-cell = a cell written with at least one "$" ;
//! letters    = 1 to 3 ASCII letters, at most XFD ;  row = digits, 1 to 1048576 ;
//! ```
//!
//! Notes on the grammar:
//! - An argument is a `group` when it starts with an identifier, `(`, a key
//!   and `=`; it is `named` when it starts with a key and `=`; otherwise it
//!   is a positional expression. Positional and named arguments may come in
//!   any order here; the caller checks the order.
//! - A bare `C2` (no colon, no sheet prefix, no `$`) is a [`ExprKind::Name`]:
//!   a header may be called `C2`. A sheet prefix, a colon or a `$` marker
//!   makes a range. `table=Sheet2` is the name `Sheet2`; `table='Bay 2'` is a
//!   [`ExprKind::SheetName`].
//! - A cell has 1 to 3 column letters (upper or lower case, at most `XFD`)
//!   and a row from 1 to 1,048,576. A whole column (`C:C`) has no row; a
//!   colon range must have rows on both sides or on neither. Ranges are
//!   stored zero-based and normalised so that `start` is the top-left corner
//!   (`C9:C2` is stored as `C2:C9`). `$` markers are accepted and dropped.
//! - The precedence table is [`parser::INFIX_OPERATORS`]; unary `-` binds
//!   tighter than `*` and looser than `^`, so `-a^2` is `-(a^2)` and `2^-3`
//!   is `2^(-3)`. A call binds tightest.
//!
//! # S-expression snapshot form ([`to_sexpr`])
//!
//! One line, atoms separated by single spaces:
//!
//! | construct | form | example |
//! |---|---|---|
//! | request | `(FUNCTION ARG…)` | `(linear (name Yield) (name Light))` |
//! | positional arg | the expression's form | `(name Light)` |
//! | named arg | `(opt KEY VALUE)` | `(opt level 0.99)` |
//! | group arg | `(group NAME (KEY VALUE)…)` | `(group start (a 40) (k 0.2))` |
//! | name | `(name NAME)` | `(name CO2)` |
//! | quoted name | `(quoted "TEXT")` | `(quoted "Outdoor temp")` |
//! | sheet name | `(sheet "TEXT")` | `(sheet "Bay 2")` |
//! | number | the shortest decimal that reads back exactly | `14`, `0.2`, `0.001`, `1e300` |
//! | range | `(range A1-TEXT)`, canonical A1 text as printed by `Display` | `(range 'Bay 2'!C2:C121)` |
//! | unary minus | `(neg X)` | `(neg (name k))` |
//! | binary | `(OP LHS RHS)` with OP one of `+ - * / ^` | `(^ (name Light) 2)` |
//! | call | `(call NAME ARG…)` | `(call log (name Area))` |
//! | parentheses | `(paren X)` | `(paren (+ (name A) (name B)))` |
//!
//! KEY is printed bare when it is an identifier and as a quoted string
//! otherwise (`(opt "Outdoor temp" 14)`). Strings in the S-expression form
//! escape `"` and `\` with a backslash. A sheetless single cell prints as
//! `C7:C7`, because a bare `C7` would read back as a name.
//!
//! # Canonical text (`Display`)
//!
//! [`Request`], [`Arg`], [`Expr`], [`RangeRef`] and [`CellRefPart`] print as
//! request text: `#linear(Yield, Light + CO2, name=main)`, with `, ` between
//! arguments, spaces around `+` and `-`, none around `*`, `/`, `^`, numbers
//! in shortest form and ranges without `$`. The text of a parsed request
//! parses back to the same tree (the same [`to_sexpr`]).
//!
//! # Limits
//!
//! - [`MAX_REQUEST_LEN`]: a request longer than 8192 bytes is refused before
//!   it is parsed.
//! - [`MAX_DEPTH`]: parentheses, calls, groups, unary minus and the right
//!   operand of an operator each open one level of nesting; more than 64
//!   levels is an error. The parser never recurses deeper than this, so no
//!   input can overflow its stack.
//! - [`MAX_TREE_HEIGHT`]: a flat chain (`a + b + c + …`) does not nest, but
//!   its tree is as high as the chain is long; a tree higher than 256 levels
//!   (for example a sum of more than 256 terms) is an error, so that any
//!   recursive walk of a tree from this module is safe.
//! - Parsing never panics; every problem is a [`SyntaxError`] with a byte
//!   span into the request text.

mod lexer;
pub mod parser;
mod print;
#[cfg(test)]
mod tests;

use std::fmt;

pub use self::parser::{looks_like_request, parse_request};
// Column letters are those of the cell model, re-exported because printed
// requests spell ranges with them.
pub use crate::cells::column_letters;
pub use self::print::{expr_to_sexpr, to_sexpr};

/// The longest request text accepted, in bytes. A longer request is a
/// [`SyntaxError`] that states this limit.
pub const MAX_REQUEST_LEN: usize = 8192;

/// The deepest nesting of parentheses, calls, groups and operators accepted
/// in one argument. Deeper nesting is a [`SyntaxError`], never a stack overflow.
pub const MAX_DEPTH: usize = 64;

/// The greatest height of an expression tree, counting every operator,
/// call and pair of parentheses on the way from the top to a leaf, so
/// `a + b + c` is 3 high. A flat chain such as a sum of terms nests only once
/// ([`MAX_DEPTH`]) but builds a tree as high as it is long; this limit keeps
/// every tree shallow enough for code that walks it recursively (printing,
/// cloning, comparing, resolving) to never overflow the stack. A model may
/// have at most this many terms.
pub const MAX_TREE_HEIGHT: usize = 256;

/// Byte offsets into the request text, end exclusive.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Span {
    /// Offset of the first byte.
    pub start: usize,
    /// Offset one past the last byte.
    pub end: usize,
}

impl Span {
    /// The span `start..end`.
    pub fn new(start: usize, end: usize) -> Span {
        Span { start, end }
    }

    /// The smallest span covering both `self` and `other`.
    pub fn to(self, other: Span) -> Span {
        Span {
            start: self.start.min(other.start),
            end: self.end.max(other.end),
        }
    }
}

/// An identifier (function name, option key, group name, call name) with
/// the characters it came from. For a quoted key (`"Outdoor temp"=14`) the
/// name is the unquoted text and the span covers the quotes.
#[derive(Debug, Clone, PartialEq)]
pub struct Ident {
    /// The name as written (case kept; quotes removed, `""` unescaped).
    pub name: String,
    /// Where it stands in the request text.
    pub span: Span,
}

/// A whole request: `#function(arg, …)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Request {
    /// The function name, case as written (the caller lowercases it).
    pub function: Ident,
    /// The arguments in the order written.
    pub args: Vec<Arg>,
    /// From the `#` to the closing `)`, inclusive.
    pub span: Span,
}

/// One argument of a request.
#[derive(Debug, Clone, PartialEq)]
pub enum Arg {
    /// A positional argument: an expression such as `Yield` or `Light + CO2`.
    Positional(Expr),
    /// key=value; key may be a bare or quoted name (`"Outdoor temp"=14`).
    Named {
        /// The key before `=`.
        key: Ident,
        /// The value after `=`.
        value: Expr,
        /// From the key to the end of the value.
        span: Span,
    },
    /// name(key=value, ...) such as against(House="East") or start(a=40, k=0.2)
    Group {
        /// The group's name before `(`.
        name: Ident,
        /// The `key=value` entries in the order written (at least one).
        entries: Vec<(Ident, Expr)>,
        /// From the name to the closing `)`, inclusive.
        span: Span,
    },
}

impl Arg {
    /// The characters of the whole argument.
    pub fn span(&self) -> Span {
        match self {
            Arg::Positional(e) => e.span,
            Arg::Named { span, .. } | Arg::Group { span, .. } => *span,
        }
    }
}

/// An expression with the characters it came from.
#[derive(Debug, Clone, PartialEq)]
pub struct Expr {
    /// What the expression is.
    pub kind: ExprKind,
    /// Where it stands in the request text (including any parentheses of a
    /// [`ExprKind::Paren`] and the `)` of a call).
    pub span: Span,
}

/// The kinds of expression.
#[derive(Debug, Clone, PartialEq)]
pub enum ExprKind {
    /// A bare identifier or header name: `Light`, `CO2`, `yes`, `hc3`, `main`.
    Name(String),
    /// A double-quoted name or text: `"Outdoor temp"` (`""` inside is one `"`).
    Quoted(String),
    /// A single-quoted sheet name standing alone, as in `table='Bay 2'`
    /// (`''` inside is one `'`).
    SheetName(String),
    /// A number literal (never negative: `-2` is a unary minus on `2`).
    Number(f64),
    /// An A1 reference: `C2:C121`, `Data!C7`, `'Bay 2'!C:C`.
    Range(RangeRef),
    /// A prefix operator applied to an operand: `-k`.
    Unary {
        /// The operator.
        op: UnaryOp,
        /// Its operand.
        operand: Box<Expr>,
    },
    /// An infix operator: `Light + CO2`, `Light^2`.
    Binary {
        /// The operator.
        op: BinOp,
        /// Left operand.
        lhs: Box<Expr>,
        /// Right operand.
        rhs: Box<Expr>,
    },
    /// A function applied to arguments: `log(Area)`, `exp(-k*Hours)`.
    Call {
        /// The function name, case as written.
        name: Ident,
        /// The arguments (possibly none).
        args: Vec<Expr>,
    },
    /// A parenthesised expression, kept so that `(A + B)` stays one term.
    Paren(Box<Expr>),
}

/// Prefix operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum UnaryOp {
    /// Negation, `-x`.
    Neg,
}

/// Infix operators.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BinOp {
    /// `+`
    Add,
    /// `-`
    Sub,
    /// `*`
    Mul,
    /// `/`
    Div,
    /// `^` (right associative)
    Pow,
}

impl BinOp {
    /// The operator's symbol as written in a request.
    pub fn symbol(self) -> &'static str {
        match self {
            BinOp::Add => "+",
            BinOp::Sub => "-",
            BinOp::Mul => "*",
            BinOp::Div => "/",
            BinOp::Pow => "^",
        }
    }
}

/// An A1 reference to a cell, a block of cells or whole columns.
#[derive(Debug, Clone, PartialEq)]
pub struct RangeRef {
    /// The sheet name, unquoted (`'Bay 2'!C2` gives `Bay 2`); `None` for
    /// the request's own sheet.
    pub sheet: Option<String>,
    /// The top-left corner.
    pub start: CellRefPart,
    /// The bottom-right corner; a single cell `Data!C7` has `start == end`.
    pub end: CellRefPart,
}

impl RangeRef {
    /// True for whole columns such as `C:C` or `B:D`.
    pub fn is_whole_columns(&self) -> bool {
        self.start.row.is_none()
    }

    /// True when the reference is one cell (`Data!C7`).
    pub fn is_single_cell(&self) -> bool {
        self.start == self.end && self.start.row.is_some()
    }
}

/// One corner of a range: zero-based; row None for a whole column (C:C)
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CellRefPart {
    /// Zero-based column (`A` is 0, `XFD` is 16383).
    pub col: u32,
    /// Zero-based row (`1` is 0), or `None` for a whole column.
    pub row: Option<u32>,
}

/// A problem in request text: where it is, what was found, what would be valid.
#[derive(Debug, Clone, PartialEq)]
pub struct SyntaxError {
    /// The offending characters; a zero-width span at the end of the text
    /// when the request ends early.
    pub span: Span,
    /// What was found, in user terms: "found `)`", "unclosed quote".
    pub message: String,
    /// What would be valid there: "`,` or `)`".
    pub expected: String,
}

impl fmt::Display for SyntaxError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}; expected {}", self.message, self.expected)
    }
}

impl std::error::Error for SyntaxError {}
