//! Tokens of request text: punctuation, names, numbers, quoted text and A1
//! ranges. The lexer is lazy and cheap to clone, so the parser lexes in text
//! order (errors come out in the order they stand) and peeks ahead by cloning.

use super::{CellRefPart, RangeRef, Span, SyntaxError};

/// The last column of the open workbook formats, `XFD`, one-based.
const LAST_COL: u32 = 16_384;
/// The last row of the open workbook formats, one-based.
const LAST_ROW: u32 = 1_048_576;
/// How many characters of a token an error message quotes.
const EXCERPT_CHARS: usize = 40;

/// What the expected text of a bad cell reference says.
const EXPECT_CELL: &str = "a cell such as `C2` or a range such as `C2:C121` \
     (1 to 3 column letters up to `XFD`, a row from 1 to 1048576)";

/// A token kind with its value.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum TokenKind {
    LParen,
    RParen,
    Comma,
    Eq,
    Plus,
    Minus,
    Star,
    Slash,
    Caret,
    Ident(String),
    Number(f64),
    Quoted(String),
    SheetName(String),
    Range(RangeRef),
    /// Any character with no meaning here; the parser reports it in context.
    Unknown(char),
    /// The end of the text (a zero-width span at its length).
    End,
}

/// A token and the characters it came from.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Token {
    pub kind: TokenKind,
    pub span: Span,
}

/// A double quote: straight, or typographic as autocorrect types it.
fn is_double_quote(c: char) -> bool {
    matches!(c, '"' | '“' | '”' | '„')
}

/// True for a character that may start an identifier.
pub(crate) fn is_ident_start(c: char) -> bool {
    c.is_alphabetic() || c == '_'
}

/// True for a character that may continue an identifier.
pub(crate) fn is_ident_continue(c: char) -> bool {
    c.is_alphanumeric() || c == '_' || c == '.'
}

/// True when `s` is a whole identifier (so it may be printed bare).
pub(crate) fn is_identifier(s: &str) -> bool {
    let mut chars = s.chars();
    match chars.next() {
        Some(c) if is_ident_start(c) => chars.all(is_ident_continue),
        _ => false,
    }
}

/// A short quotation of `text[span]` for messages, cut at a character boundary.
pub(crate) fn excerpt(text: &str, span: Span) -> String {
    let piece = text.get(span.start..span.end).unwrap_or("");
    let mut out: String = piece.chars().take(EXCERPT_CHARS).collect();
    if piece.chars().nth(EXCERPT_CHARS).is_some() {
        out.push('…');
    }
    out
}

/// A lazy lexer over request text, starting at a byte offset. Every offset it
/// keeps comes from stepping over whole characters, so slicing the text at
/// them cannot panic.
#[derive(Debug, Clone)]
pub(crate) struct Lexer<'a> {
    text: &'a str,
    pos: usize,
}

impl<'a> Lexer<'a> {
    /// A lexer reading `text` from byte `pos` (which must be a char boundary;
    /// otherwise the lexer sees the end of the text).
    pub fn new(text: &'a str, pos: usize) -> Lexer<'a> {
        let pos = if text.is_char_boundary(pos) {
            pos
        } else {
            text.len()
        };
        Lexer { text, pos }
    }

    fn peek_char(&self) -> Option<char> {
        self.text.get(self.pos..).and_then(|s| s.chars().next())
    }

    fn char_at(&self, at: usize) -> Option<char> {
        self.text.get(at..).and_then(|s| s.chars().next())
    }

    /// The offset after the maximal run of characters satisfying `pred` from `at`.
    fn scan_while(&self, at: usize, pred: impl Fn(char) -> bool) -> usize {
        let rest = self.text.get(at..).unwrap_or("");
        let len: usize = rest
            .chars()
            .take_while(|&c| pred(c))
            .map(char::len_utf8)
            .sum();
        at + len
    }

    fn skip_white(&mut self) {
        self.pos = self.scan_while(self.pos, char::is_whitespace);
    }

    /// The next token, or an error for a token that is malformed by itself
    /// (unclosed quote, bad number, bad cell reference).
    pub fn next_token(&mut self) -> Result<Token, SyntaxError> {
        self.skip_white();
        let start = self.pos;
        let Some(c) = self.peek_char() else {
            return Ok(Token {
                kind: TokenKind::End,
                span: Span::new(self.text.len(), self.text.len()),
            });
        };
        let simple = match c {
            '(' => Some(TokenKind::LParen),
            ')' => Some(TokenKind::RParen),
            // `;` separates arguments in spreadsheets of many languages:
            // it has no other meaning here, so it is a comma.
            ',' | ';' => Some(TokenKind::Comma),
            '=' => Some(TokenKind::Eq),
            '+' => Some(TokenKind::Plus),
            '-' => Some(TokenKind::Minus),
            '*' => Some(TokenKind::Star),
            '/' => Some(TokenKind::Slash),
            '^' => Some(TokenKind::Caret),
            _ => None,
        };
        if let Some(kind) = simple {
            self.pos += 1;
            return Ok(Token {
                kind,
                span: Span::new(start, start + 1),
            });
        }
        let next_is_digit = self
            .char_at(start + c.len_utf8())
            .is_some_and(|d| d.is_ascii_digit());
        if c.is_ascii_digit() || (c == '.' && next_is_digit) {
            return self.number(start);
        }
        if is_double_quote(c) {
            let (value, end) = self.quoted(start, c)?;
            self.pos = end;
            return Ok(Token {
                kind: TokenKind::Quoted(value),
                span: Span::new(start, end),
            });
        }
        if c == '\'' || c == '‘' || c == '’' {
            let (value, end) = self.quoted(start, c)?;
            if self.char_at(end) == Some('!') {
                return self.range(start, Some(value), end + 1);
            }
            self.pos = end;
            return Ok(Token {
                kind: TokenKind::SheetName(value),
                span: Span::new(start, end),
            });
        }
        if c == '$' {
            return self.range(start, None, start);
        }
        if is_ident_start(c) {
            let end = self.scan_while(start, is_ident_continue);
            let word = &self.text[start..end];
            return match self.char_at(end) {
                Some('!') => self.range(start, Some(word.to_string()), end + 1),
                Some(':' | '$') => self.range(start, None, start),
                _ => {
                    self.pos = end;
                    Ok(Token {
                        kind: TokenKind::Ident(word.to_string()),
                        span: Span::new(start, end),
                    })
                }
            };
        }
        self.pos = start + c.len_utf8();
        Ok(Token {
            kind: TokenKind::Unknown(c),
            span: Span::new(start, self.pos),
        })
    }

    /// A number literal from `start` (a digit, or `.` before a digit).
    fn number(&mut self, start: usize) -> Result<Token, SyntaxError> {
        let digit = |c: char| c.is_ascii_digit();
        let mut end = self.scan_while(start, digit);
        if self.char_at(end) == Some('.') {
            end = self.scan_while(end + 1, digit);
        }
        if let Some('e' | 'E') = self.char_at(end) {
            let mut exp = end + 1;
            if let Some('+' | '-') = self.char_at(exp) {
                exp += 1;
            }
            if self.char_at(exp).is_some_and(digit) {
                end = self.scan_while(exp, digit);
            }
        }
        // A percent sign makes a share: `90%` is 0.9 (as in a cell).
        let percent = self.char_at(end) == Some('%');
        if self.char_at(end + usize::from(percent)).is_some_and(is_ident_continue) {
            let end = end + usize::from(percent);
            // The number runs into letters or a second point: `2x`, `1.2.3`, `2e`.
            let bad_end = self.scan_while(end, is_ident_continue);
            let span = Span::new(start, bad_end);
            return Err(SyntaxError {
                span,
                message: format!("`{}` is not a number", excerpt(self.text, span)),
                expected: "a number such as `14`, `0.2`, `.5` or `1e-3` \
                           (put a header name that starts with a digit in double quotes)"
                    .to_string(),
            });
        }
        let literal = &self.text[start..end];
        let end = end + usize::from(percent);
        let span = Span::new(start, end);
        match literal.parse::<f64>() {
            Ok(v) if v.is_finite() => {
                let v = if percent { v / 100.0 } else { v };
                self.pos = end;
                Ok(Token {
                    kind: TokenKind::Number(v),
                    span,
                })
            }
            _ => Err(SyntaxError {
                span,
                message: format!("the number `{}` is too large", excerpt(self.text, span)),
                expected: "a number below about 1.8e308".to_string(),
            }),
        }
    }

    /// A quoted piece from the opening quote at `start`; returns the
    /// unescaped text and the offset after the closing quote.
    fn quoted(&self, start: usize, quote: char) -> Result<(String, usize), SyntaxError> {
        let mut value = String::new();
        let mut at = start + quote.len_utf8();
        // A straight quote closes with itself; a typographic one (as
        // autocorrect types them: “…”, „…“, ‘…’) with any quote of its kind.
        let closes = |c: char| match quote {
            '"' | '\'' => c == quote,
            _ if is_double_quote(quote) => is_double_quote(c),
            _ => c == '\'' || c == '‘' || c == '’',
        };
        loop {
            match self.char_at(at) {
                None => {
                    let (close, twice, kind) = if is_double_quote(quote) {
                        ("`\"`", "`\"\"`", "name")
                    } else {
                        ("`'`", "`''`", "sheet name")
                    };
                    return Err(SyntaxError {
                        span: Span::new(start, start + 1),
                        message: format!(
                            "unclosed quote: the {kind} starting here has no closing {close}"
                        ),
                        expected: format!(
                            "a closing {close} (write {twice} for one {close} inside the {kind})"
                        ),
                    });
                }
                Some(c) if closes(c) => {
                    if self.char_at(at + c.len_utf8()) == Some(c) {
                        value.push(c);
                        at += 2 * c.len_utf8();
                    } else {
                        return Ok((value, at + c.len_utf8()));
                    }
                }
                Some(c) => {
                    value.push(c);
                    at += c.len_utf8();
                }
            }
        }
    }

    /// An A1 reference whose token starts at `start` and whose first cell
    /// starts at `cell_start` (after the `!` when there is a sheet).
    fn range(
        &mut self,
        start: usize,
        sheet: Option<String>,
        cell_start: usize,
    ) -> Result<Token, SyntaxError> {
        let (first, first_span) = self.cell_part(cell_start, start)?;
        let mut end = first_span.end;
        let mut second = None;
        if self.char_at(end) == Some(':') {
            let (part, span) = self.cell_part(end + 1, start)?;
            end = span.end;
            second = Some(part);
        }
        let whole = Span::new(start, end);
        let (a, b) = match second {
            Some(b) => {
                if first.row.is_some() != b.row.is_some() {
                    return Err(SyntaxError {
                        span: whole,
                        message: format!(
                            "`{}` mixes a whole column with a cell",
                            excerpt(self.text, whole)
                        ),
                        expected: "cells on both sides of `:` (`C2:C121`) or columns on both sides (`C:C`)"
                            .to_string(),
                    });
                }
                (first, b)
            }
            None => {
                if first.row.is_none() {
                    return Err(SyntaxError {
                        span: first_span,
                        message: format!(
                            "`{}` is a column without a row",
                            excerpt(self.text, first_span)
                        ),
                        expected: "a cell such as `C7`, or a whole column written `C:C`"
                            .to_string(),
                    });
                }
                (first, first)
            }
        };
        // Normalise to top-left : bottom-right, as spreadsheet programs do.
        let top_left = CellRefPart {
            col: a.col.min(b.col),
            row: match (a.row, b.row) {
                (Some(x), Some(y)) => Some(x.min(y)),
                _ => None,
            },
        };
        let bottom_right = CellRefPart {
            col: a.col.max(b.col),
            row: match (a.row, b.row) {
                (Some(x), Some(y)) => Some(x.max(y)),
                _ => None,
            },
        };
        self.pos = end;
        Ok(Token {
            kind: TokenKind::Range(RangeRef {
                sheet,
                start: top_left,
                end: bottom_right,
            }),
            span: whole,
        })
    }

    /// One corner of a range at `at`: `[$]letters[[$]digits]`. The corner is
    /// the maximal run of identifier characters and `$`, so `C2x` is an error
    /// rather than `C2` followed by a name.
    fn cell_part(&self, at: usize, token_start: usize) -> Result<(CellRefPart, Span), SyntaxError> {
        let end = self.scan_while(at, |c| is_ident_continue(c) || c == '$');
        let span = Span::new(at, end);
        let piece = &self.text[at..end];
        if piece.is_empty() {
            let found = match self.char_at(at) {
                Some(c) => format!("found `{c}`"),
                None => "the request ends".to_string(),
            };
            let before = excerpt(self.text, Span::new(token_start, at));
            let width = self.char_at(at).map_or(0, char::len_utf8);
            return Err(SyntaxError {
                span: Span::new(at, at + width),
                message: format!("{found} after `{before}`"),
                expected: format!("{EXPECT_CELL} after `{before}`"),
            });
        }
        match parse_cell_part(piece) {
            Ok(part) => Ok((part, span)),
            Err(why) => Err(SyntaxError {
                span,
                message: format!(
                    "`{}` is not a cell reference: {why}",
                    excerpt(self.text, span)
                ),
                expected: EXPECT_CELL.to_string(),
            }),
        }
    }
}

/// Reads `[$]letters[[$]digits]` into a zero-based corner, or says what is wrong.
/// The slices below end where an ASCII run ends, which is always a character
/// boundary. Limits (XFD, 1048576) are those of the open workbook formats.
fn parse_cell_part(piece: &str) -> Result<CellRefPart, String> {
    let bytes = piece.as_bytes();
    let mut i = 0;
    if bytes.first() == Some(&b'$') {
        i += 1;
    }
    let letters_start = i;
    while i < bytes.len() && bytes[i].is_ascii_alphabetic() {
        i += 1;
    }
    let letters = &piece[letters_start..i];
    if letters.is_empty() {
        return Err("it must start with column letters".to_string());
    }
    let mut row_dollar = false;
    if bytes.get(i) == Some(&b'$') {
        row_dollar = true;
        i += 1;
    }
    let digits_start = i;
    while i < bytes.len() && bytes[i].is_ascii_digit() {
        i += 1;
    }
    let digits = &piece[digits_start..i];
    if i != bytes.len() {
        return Err("a cell is column letters then a row number, such as `C2`".to_string());
    }
    if row_dollar && digits.is_empty() {
        return Err("a `$` after the column letters must be followed by a row number".to_string());
    }
    if letters.len() > 3 {
        return Err("a column has at most 3 letters (the last column is XFD)".to_string());
    }
    let col = letters.bytes().fold(0u32, |acc, b| {
        acc * 26 + u32::from(b.to_ascii_uppercase() - b'A' + 1)
    });
    if col > LAST_COL {
        return Err("the last column is XFD".to_string());
    }
    let row = if digits.is_empty() {
        None
    } else {
        let n: u64 = digits.bytes().fold(0u64, |acc, b| {
            acc.saturating_mul(10).saturating_add(u64::from(b - b'0'))
        });
        if n == 0 {
            return Err("rows start at 1".to_string());
        }
        if n > u64::from(LAST_ROW) {
            return Err("the last row is 1048576".to_string());
        }
        // n is in 1..=LAST_ROW here, so it fits in u32.
        Some(n as u32 - 1)
    };
    Ok(CellRefPart { col: col - 1, row })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn kinds(text: &str) -> Vec<TokenKind> {
        let mut lx = Lexer::new(text, 0);
        let mut out = Vec::new();
        loop {
            let t = lx.next_token().expect("lexes");
            if t.kind == TokenKind::End {
                return out;
            }
            out.push(t.kind);
        }
    }

    #[test]
    fn numbers() {
        assert_eq!(
            kinds("14 0.2 .5 1e-3 2.5E+4 7."),
            vec![
                TokenKind::Number(14.0),
                TokenKind::Number(0.2),
                TokenKind::Number(0.5),
                TokenKind::Number(0.001),
                TokenKind::Number(25000.0),
                TokenKind::Number(7.0),
            ]
        );
    }

    #[test]
    fn what_a_spreadsheet_user_types_is_understood() {
        // A percent is a share, as in a cell: 90% is 0.9, 2.5% is 0.025.
        assert_eq!(kinds("90% 2.5%"), vec![TokenKind::Number(0.9), TokenKind::Number(0.025)]);
        assert!(Lexer::new("90%x", 0).next_token().is_err(), "a percent runs into letters");
        // Typographic quotes, as autocorrect types them, are quotes.
        assert_eq!(kinds("“Energy (kWh)”"), vec![TokenKind::Quoted("Energy (kWh)".into())]);
        assert_eq!(kinds("„Höhe“"), vec![TokenKind::Quoted("Höhe".into())]);
        assert_eq!(kinds("’Bay 2’"), vec![TokenKind::SheetName("Bay 2".into())]);
        // A straight quote still closes only with itself.
        assert_eq!(kinds("\"a ” b\""), vec![TokenKind::Quoted("a ” b".into())]);
        // `;` separates arguments like a comma.
        assert_eq!(kinds("a; b"), vec![TokenKind::Ident("a".into()), TokenKind::Comma, TokenKind::Ident("b".into())]);
    }

    #[test]
    fn bad_numbers() {
        for (text, start, end) in [("2x", 0, 2), (" 1.2.3", 1, 6), ("2e", 0, 2), ("1e+", 0, 2)] {
            let err = Lexer::new(text, 0).next_token().unwrap_err();
            assert_eq!(err.span, Span::new(start, end), "{text}");
            assert!(err.message.contains("is not a number"), "{}", err.message);
        }
        let err = Lexer::new("1e999", 0).next_token().unwrap_err();
        assert!(err.message.contains("too large"));
    }

    // Sheet limits XFD / 1048576: from memory of ECMA-376 (the open workbook formats).
    #[test]
    fn cell_parts() {
        assert_eq!(
            parse_cell_part("A1"),
            Ok(CellRefPart {
                col: 0,
                row: Some(0)
            })
        );
        assert_eq!(
            parse_cell_part("$c$9"),
            Ok(CellRefPart {
                col: 2,
                row: Some(8)
            })
        );
        assert_eq!(
            parse_cell_part("XFD1048576"),
            Ok(CellRefPart {
                col: 16383,
                row: Some(1_048_575)
            })
        );
        assert_eq!(
            parse_cell_part("AA"),
            Ok(CellRefPart { col: 26, row: None })
        );
        assert!(parse_cell_part("XFE1").is_err());
        assert!(parse_cell_part("ZZZZ1").is_err());
        assert!(parse_cell_part("A0").is_err());
        assert!(parse_cell_part("A1048577").is_err());
        assert!(parse_cell_part("A99999999999999999999999").is_err());
        assert!(parse_cell_part("C$").is_err());
        assert!(parse_cell_part("1A").is_err());
        assert!(parse_cell_part("Température").is_err());
    }

    #[test]
    fn words_and_ranges() {
        let k = kinds("C2 C2:c9 Data!C7 'Bay 2' x.y_1");
        assert_eq!(k[0], TokenKind::Ident("C2".into()));
        assert!(matches!(&k[1], TokenKind::Range(r) if r.sheet.is_none() && r.end.row == Some(8)));
        assert!(matches!(&k[2], TokenKind::Range(r) if r.sheet.as_deref() == Some("Data")));
        assert_eq!(k[3], TokenKind::SheetName("Bay 2".into()));
        assert_eq!(k[4], TokenKind::Ident("x.y_1".into()));
    }

    #[test]
    fn identifiers() {
        assert!(is_identifier("Température"));
        assert!(is_identifier("_x.2"));
        assert!(!is_identifier("2x"));
        assert!(!is_identifier("Outdoor temp"));
        assert!(!is_identifier(""));
    }
}
