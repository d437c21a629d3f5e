//! The request parser: the `#name(` header and argument list by recursive
//! descent, expressions by precedence climbing (a Pratt parser) driven by
//! [`INFIX_OPERATORS`]. Recursion is bounded by [`MAX_DEPTH`] and the
//! height of every expression tree by [`MAX_TREE_HEIGHT`].

use super::lexer::{excerpt, is_ident_continue, is_ident_start, Lexer, Token, TokenKind};
use super::{
    Arg, BinOp, Expr, ExprKind, Ident, Request, Span, SyntaxError, UnaryOp, MAX_DEPTH,
    MAX_REQUEST_LEN, MAX_TREE_HEIGHT,
};

/// Associativity of an infix operator.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Assoc {
    /// `a-b-c` is `(a-b)-c`.
    Left,
    /// `a^b^c` is `a^(b^c)`.
    Right,
}

/// The infix operators with their precedence (higher binds tighter) and
/// associativity. Unary minus sits at [`PREFIX_NEG_PRECEDENCE`], between
/// `*` `/` and `^`; a call binds tighter than any operator.
pub const INFIX_OPERATORS: [(BinOp, u8, Assoc); 5] = [
    (BinOp::Add, 1, Assoc::Left),
    (BinOp::Sub, 1, Assoc::Left),
    (BinOp::Mul, 2, Assoc::Left),
    (BinOp::Div, 2, Assoc::Left),
    (BinOp::Pow, 4, Assoc::Right),
];

/// The precedence of unary minus: its operand takes operators of higher
/// precedence (`^`), so `-a^2` is `-(a^2)` and `-a*b` is `(-a)*b`.
pub const PREFIX_NEG_PRECEDENCE: u8 = 3;

/// Precedence and associativity of `op`, from [`INFIX_OPERATORS`].
pub fn precedence(op: BinOp) -> (u8, Assoc) {
    INFIX_OPERATORS
        .iter()
        .find(|(o, _, _)| *o == op)
        .map_or((0, Assoc::Left), |&(_, p, a)| (p, a))
}

/// What may start an operand, for error messages.
const EXPECT_OPERAND: &str = "a column name, number, range, `-` or `(`";
/// The message for running out of text inside the argument list.
const ENDS_EARLY: &str = "the request ends before its closing `)`";
/// An example request for messages about the header.
const EXAMPLE: &str = "`#linear(Yield, Light)`";

/// True when the text looks like a request at all: after optional leading
/// white space, `#`, optional spaces, an identifier, optional spaces, `(`.
/// "#1 priority", "# note", "#linear Yield" are not requests (they are
/// ordinary data). Text for which this is true is either a request or a
/// [`SyntaxError`] to report at its cell.
pub fn looks_like_request(text: &str) -> bool {
    let Some(rest) = text.trim_start().strip_prefix('#') else {
        return false;
    };
    let rest = rest.trim_start();
    let mut chars = rest.chars();
    if !chars.next().is_some_and(is_ident_start) {
        return false;
    }
    let after_name = rest.trim_start_matches(is_ident_continue);
    // The first character was an identifier start, so it is also an
    // identifier continuation and `trim_start_matches` removed it.
    after_name.trim_start().starts_with('(')
}

/// Parses request text such as `#linear(Yield, Light + CO2, name=main)`.
///
/// Leading and trailing white space is allowed; anything else after the
/// closing `)` is an error. Never panics.
///
/// # Errors
///
/// A [`SyntaxError`] for the first problem in text order: text that is not
/// `#name(...)`, a missing or unexpected token, an unclosed quote, a bad
/// number or cell reference, text after the closing `)`, text longer than
/// [`MAX_REQUEST_LEN`] bytes, nesting deeper than [`MAX_DEPTH`] or a tree
/// higher than [`MAX_TREE_HEIGHT`].
pub fn parse_request(text: &str) -> Result<Request, SyntaxError> {
    if text.len() > MAX_REQUEST_LEN {
        let mut cut = MAX_REQUEST_LEN;
        while !text.is_char_boundary(cut) {
            cut -= 1;
        }
        return Err(SyntaxError {
            span: Span::new(cut, text.len()),
            message: format!(
                "the request is {} bytes long, more than the limit of {MAX_REQUEST_LEN} bytes",
                text.len()
            ),
            expected: format!(
                "a request of at most {MAX_REQUEST_LEN} bytes: split it into several requests, \
                 give long column headers shorter names, or use ranges such as `C2:C121`"
            ),
        });
    }
    parse_unlimited(text)
}

/// [`parse_request`] without the length limit (the depth limit still holds).
pub(crate) fn parse_unlimited(text: &str) -> Result<Request, SyntaxError> {
    let (hash, function, after) = header(text)?;
    let mut p = Parser::new(text, after)?;
    if p.tok.kind == TokenKind::End {
        return Err(SyntaxError {
            span: p.tok.span,
            message: "the request ends after the function name".to_string(),
            expected: format!("`(` after the function name, as in {EXAMPLE}"),
        });
    }
    p.expect_lparen("`(` after the function name")?;
    let mut args = Vec::new();
    let close;
    if p.tok.kind == TokenKind::RParen {
        close = p.tok.span;
    } else {
        loop {
            args.push(p.arg()?);
            match p.tok.kind {
                TokenKind::Comma => {
                    p.advance()?;
                }
                TokenKind::RParen => {
                    close = p.tok.span;
                    break;
                }
                TokenKind::Unknown(':') => {
                    return Err(p.unexpected(
                        "`,` or `)` (a range is written without spaces, as in `C2:C121`)",
                    ))
                }
                _ => return Err(p.unexpected("`,` or `)`")),
            }
        }
    }
    // `)` is one byte, so `close.end` is a character boundary.
    let rest = &text[close.end..];
    let trimmed = rest.trim();
    if !trimmed.is_empty() {
        let start = close.end + (rest.len() - rest.trim_start().len());
        let span = Span::new(start, start + trimmed.len());
        return Err(SyntaxError {
            span,
            message: format!(
                "unexpected text after the closing parenthesis: `{}`",
                excerpt(text, span)
            ),
            expected: "nothing after the `)` that closes the request (put notes in another cell)"
                .to_string(),
        });
    }
    Ok(Request {
        function,
        args,
        span: Span::new(hash, close.end),
    })
}

/// Reads `ws # ws name`; returns the offset of `#`, the name and the offset
/// after it. Offsets come from trimming whole characters (and `#` is one
/// byte), so the slices are on character boundaries.
fn header(text: &str) -> Result<(usize, Ident, usize), SyntaxError> {
    let hash = text.len() - text.trim_start().len();
    let first = text[hash..].chars().next();
    match first {
        Some('#') => {}
        Some(c) => {
            return Err(SyntaxError {
                span: Span::new(hash, hash + c.len_utf8()),
                message: format!("found `{c}` where a request starts with `#`"),
                expected: format!("`#` and a function name, as in {EXAMPLE}"),
            })
        }
        None => {
            return Err(SyntaxError {
                span: Span::new(text.len(), text.len()),
                message: "the text is empty".to_string(),
                expected: format!("a request such as {EXAMPLE}"),
            })
        }
    }
    let after_hash = &text[hash + 1..];
    let name_start = text.len() - after_hash.trim_start().len();
    let rest = &text[name_start..];
    match rest.chars().next() {
        Some(c) if is_ident_start(c) => {}
        Some(c) => {
            return Err(SyntaxError {
                span: Span::new(name_start, name_start + c.len_utf8()),
                message: format!("found `{c}` after `#`"),
                expected: format!("a function name after `#`, as in {EXAMPLE}"),
            })
        }
        None => {
            return Err(SyntaxError {
                span: Span::new(text.len(), text.len()),
                message: "the request ends after `#`".to_string(),
                expected: format!("a function name after `#`, as in {EXAMPLE}"),
            })
        }
    }
    let name_end = text.len() - rest.trim_start_matches(is_ident_continue).len();
    let function = Ident {
        name: text[name_start..name_end].to_string(),
        span: Span::new(name_start, name_end),
    };
    Ok((hash, function, name_end))
}

/// Parser state: the text, the lexer after the current token, the current
/// token and the one before it (for "after `+`" in messages).
struct Parser<'a> {
    text: &'a str,
    lexer: Lexer<'a>,
    tok: Token,
    prev: Option<Span>,
}

impl<'a> Parser<'a> {
    fn new(text: &'a str, pos: usize) -> Result<Parser<'a>, SyntaxError> {
        let mut lexer = Lexer::new(text, pos);
        let tok = lexer.next_token()?;
        Ok(Parser {
            text,
            lexer,
            tok,
            prev: None,
        })
    }

    /// Moves to the next token; returns the one just passed.
    fn advance(&mut self) -> Result<Token, SyntaxError> {
        let next = self.lexer.next_token()?;
        let old = std::mem::replace(&mut self.tok, next);
        self.prev = Some(old.span);
        Ok(old)
    }

    /// The kinds of the next `n` tokens after the current one, without
    /// consuming anything; stops early at the end or at a lexing error.
    fn peek_kinds(&self, n: usize) -> Vec<TokenKind> {
        let mut lx = self.lexer.clone();
        let mut out = Vec::with_capacity(n);
        for _ in 0..n {
            match lx.next_token() {
                Ok(t) if t.kind != TokenKind::End => out.push(t.kind),
                _ => break,
            }
        }
        out
    }

    /// An error for the current token, with `expected` as the valid choices.
    fn unexpected(&self, expected: &str) -> SyntaxError {
        let message = match self.tok.kind {
            TokenKind::End => ENDS_EARLY.to_string(),
            _ => format!("found `{}`", excerpt(self.text, self.tok.span)),
        };
        SyntaxError {
            span: self.tok.span,
            message,
            expected: expected.to_string(),
        }
    }

    /// The text of the previous token, for "after `+`".
    fn after_prev(&self) -> String {
        match self.prev {
            Some(span) => format!(" after `{}`", excerpt(self.text, span)),
            None => String::new(),
        }
    }

    fn expect_lparen(&mut self, expected: &str) -> Result<Span, SyntaxError> {
        if self.tok.kind == TokenKind::LParen {
            Ok(self.advance()?.span)
        } else {
            Err(self.unexpected(expected))
        }
    }

    /// The current token as a key (`name` or `"Outdoor temp"`), if it is one.
    fn key(&self) -> Option<Ident> {
        match &self.tok.kind {
            TokenKind::Ident(s) | TokenKind::Quoted(s) => Some(Ident {
                name: s.clone(),
                span: self.tok.span,
            }),
            _ => None,
        }
    }

    /// One argument: a group, a named option or a positional expression.
    fn arg(&mut self) -> Result<Arg, SyntaxError> {
        let is_key = matches!(self.tok.kind, TokenKind::Ident(_) | TokenKind::Quoted(_));
        let is_ident = matches!(self.tok.kind, TokenKind::Ident(_));
        if is_key {
            let ahead = self.peek_kinds(3);
            let key_like = |k: Option<&TokenKind>| {
                matches!(k, Some(TokenKind::Ident(_) | TokenKind::Quoted(_)))
            };
            if ahead.first() == Some(&TokenKind::Eq) {
                return self.named();
            }
            if is_ident
                && ahead.first() == Some(&TokenKind::LParen)
                && key_like(ahead.get(1))
                && ahead.get(2) == Some(&TokenKind::Eq)
            {
                return self.group();
            }
        }
        Ok(Arg::Positional(self.expr(0, 0)?))
    }

    /// `key = value`; the current token is the key and the next is `=`.
    fn named(&mut self) -> Result<Arg, SyntaxError> {
        let key = self
            .key()
            .ok_or_else(|| self.unexpected("an option name"))?;
        self.advance()?;
        self.advance()?; // the `=`, checked by the caller's look-ahead
        let value = self.expr(0, 0)?;
        let span = key.span.to(value.span);
        Ok(Arg::Named { key, value, span })
    }

    /// `name(key=value, ...)`; the current token is the name.
    fn group(&mut self) -> Result<Arg, SyntaxError> {
        let name_tok = self.advance()?;
        let TokenKind::Ident(group_name) = name_tok.kind else {
            return Err(self.unexpected("a group name"));
        };
        let name = Ident {
            name: group_name,
            span: name_tok.span,
        };
        self.expect_lparen("`(` after the group name")?;
        let mut entries = Vec::new();
        loop {
            let Some(key) = self.key() else {
                return Err(self.unexpected(&format!(
                    "a name followed by `=` inside `{}(...)`{}",
                    name.name,
                    self.after_prev()
                )));
            };
            self.advance()?;
            if self.tok.kind != TokenKind::Eq {
                return Err(self.unexpected(&format!(
                    "`=` after `{}` (entries of `{}(...)` are written name=value)",
                    key.name, name.name
                )));
            }
            self.advance()?;
            let value = self.expr(0, 1)?;
            entries.push((key, value));
            match self.tok.kind {
                TokenKind::Comma => {
                    self.advance()?;
                }
                TokenKind::RParen => break,
                _ => return Err(self.unexpected(&format!("`,` or `)` to close `{}(`", name.name))),
            }
        }
        let close = self.advance()?.span;
        let span = name.span.to(close);
        Ok(Arg::Group {
            name,
            entries,
            span,
        })
    }

    /// A whole argument-level expression at nesting level `depth`.
    fn expr(&mut self, min_prec: u8, depth: usize) -> Result<Expr, SyntaxError> {
        Ok(self.expr_h(min_prec, depth)?.0)
    }

    /// An expression whose operators all have precedence at least
    /// `min_prec`, at nesting level `depth`, with the height of its tree.
    fn expr_h(&mut self, min_prec: u8, depth: usize) -> Result<(Expr, usize), SyntaxError> {
        if depth > MAX_DEPTH {
            return Err(SyntaxError {
                span: self.tok.span,
                message: format!(
                    "the expression is nested too deeply: more than {MAX_DEPTH} levels of \
                     parentheses, function calls or operators"
                ),
                expected: format!("an expression with at most {MAX_DEPTH} levels of nesting"),
            });
        }
        let (mut lhs, mut height) = self.operand(depth)?;
        loop {
            let op = match self.tok.kind {
                TokenKind::Plus => BinOp::Add,
                TokenKind::Minus => BinOp::Sub,
                TokenKind::Star => BinOp::Mul,
                TokenKind::Slash => BinOp::Div,
                TokenKind::Caret => BinOp::Pow,
                _ => break,
            };
            let (prec, assoc) = precedence(op);
            if prec < min_prec {
                break;
            }
            let op_span = self.advance()?.span;
            let rhs_min = match assoc {
                Assoc::Left => prec + 1,
                Assoc::Right => prec,
            };
            let (rhs, rhs_height) = self.expr_h(rhs_min, depth + 1)?;
            height = check_height(height.max(rhs_height) + 1, op_span)?;
            let span = lhs.span.to(rhs.span);
            lhs = Expr {
                kind: ExprKind::Binary {
                    op,
                    lhs: Box::new(lhs),
                    rhs: Box::new(rhs),
                },
                span,
            };
        }
        Ok((lhs, height))
    }

    /// A prefix operator with its operand, or a primary, with its height.
    fn operand(&mut self, depth: usize) -> Result<(Expr, usize), SyntaxError> {
        let tok_span = self.tok.span;
        let kind = match &self.tok.kind {
            TokenKind::Minus => {
                self.advance()?;
                let (operand, h) = self.expr_h(PREFIX_NEG_PRECEDENCE + 1, depth + 1)?;
                let span = tok_span.to(operand.span);
                let expr = Expr {
                    kind: ExprKind::Unary {
                        op: UnaryOp::Neg,
                        operand: Box::new(operand),
                    },
                    span,
                };
                return Ok((expr, check_height(h + 1, tok_span)?));
            }
            TokenKind::LParen => {
                self.advance()?;
                let (inner, h) = self.expr_h(0, depth + 1)?;
                if self.tok.kind != TokenKind::RParen {
                    return Err(self.unexpected(&format!(
                        "`)` to close the `(` at character {}, or an operator such as `+`",
                        char_number(self.text, tok_span.start)
                    )));
                }
                let close = self.advance()?.span;
                let expr = Expr {
                    kind: ExprKind::Paren(Box::new(inner)),
                    span: tok_span.to(close),
                };
                return Ok((expr, check_height(h + 1, tok_span)?));
            }
            TokenKind::Ident(name) => {
                let name = Ident {
                    name: name.clone(),
                    span: tok_span,
                };
                self.advance()?;
                if self.tok.kind == TokenKind::LParen {
                    return self.call(name, depth);
                }
                let expr = Expr {
                    kind: ExprKind::Name(name.name),
                    span: tok_span,
                };
                return Ok((expr, 1));
            }
            TokenKind::Number(v) => ExprKind::Number(*v),
            TokenKind::Quoted(s) => ExprKind::Quoted(s.clone()),
            TokenKind::SheetName(s) => ExprKind::SheetName(s.clone()),
            TokenKind::Range(r) => ExprKind::Range(r.clone()),
            _ => {
                let expected = format!("{EXPECT_OPERAND}{}", self.after_prev());
                return Err(self.unexpected(&expected));
            }
        };
        self.advance()?;
        Ok((
            Expr {
                kind,
                span: tok_span,
            },
            1,
        ))
    }

    /// `name(args)`; the current token is the `(`.
    fn call(&mut self, name: Ident, depth: usize) -> Result<(Expr, usize), SyntaxError> {
        self.advance()?;
        let mut args = Vec::new();
        let mut height = 1;
        if self.tok.kind != TokenKind::RParen {
            loop {
                let (arg, h) = self.expr_h(0, depth + 1)?;
                args.push(arg);
                height = height.max(h + 1);
                match self.tok.kind {
                    TokenKind::Comma => {
                        self.advance()?;
                    }
                    TokenKind::RParen => break,
                    _ => {
                        return Err(
                            self.unexpected(&format!("`,` or `)` to close `{}(`", name.name))
                        )
                    }
                }
            }
        }
        let close = self.advance()?.span;
        let height = check_height(height, name.span)?;
        let span = name.span.to(close);
        Ok((
            Expr {
                kind: ExprKind::Call { name, args },
                span,
            },
            height,
        ))
    }
}

/// `height` if it is within [`MAX_TREE_HEIGHT`], else an error at `at`
/// (the operator, `(`, `-` or call name that makes the tree too high).
fn check_height(height: usize, at: Span) -> Result<usize, SyntaxError> {
    if height <= MAX_TREE_HEIGHT {
        return Ok(height);
    }
    Err(SyntaxError {
        span: at,
        message: format!(
            "the expression has too many parts: more than {MAX_TREE_HEIGHT} levels of operators, \
             calls and parentheses (each `+` of a sum adds one)"
        ),
        expected: format!(
            "an expression at most {MAX_TREE_HEIGHT} levels high, such as a model of at most \
             {MAX_TREE_HEIGHT} terms: split a longer model into several requests"
        ),
    })
}

/// The one-based character position of byte offset `at`, for messages.
fn char_number(text: &str, at: usize) -> usize {
    text.get(..at).map_or(0, |s| s.chars().count()) + 1
}
