//! Result sheets that read well when opened, and when printed: the number
//! format each style shows a value in ([`format_code`], which the writer
//! renders), the width that shown text takes ([`shown_chars`]), and the
//! pass ([`fit`]) that fits every column to its headings and figures, gives
//! rows of wrapped text the height their lines need (readers do not fit
//! rows to their text on opening) and sets up printing.
//!
//! Widths are in the spreadsheet's unit, the width of one digit of the
//! default font (11-point Calibri); heights in points.

use super::{Cached, Content, OutCell, Sheet, Style};
use std::collections::{BTreeMap, BTreeSet};

/// The height of one line of the default font, in points (the default row
/// height of the spreadsheet programs; from memory).
pub fn line_height() -> f64 {
    15.0
}

/// The width of a column holding wrapped text, when the sheet gives none.
const WRAP_WIDTH: f64 = 50.0;

/// The widest a column grows for plain text; longer text wraps.
const TEXT_WIDTH: f64 = 60.0;

/// The narrowest fitted column.
const MIN_WIDTH: f64 = 4.0;

/// The width of a column the sheet leaves at the default.
const DEFAULT_WIDTH: f64 = 8.43;

/// Above this total width, in characters, a sheet prints in landscape (a
/// portrait A4 or Letter page holds about 95 digits at full size; from
/// memory).
const PORTRAIT_CHARS: f64 = 95.0;

/// Room beside the text inside a cell, in characters.
const PAD: f64 = 1.5;

/// A number format showing `x` to six significant digits; the cell keeps
/// every digit. Fixed notation between 0.0001 and 10⁷, scientific outside.
fn significant_code(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return "0".into();
    }
    let mag = x.abs().log10().floor() as i32;
    if (-4..7).contains(&mag) {
        let decimals = (5 - mag).clamp(0, 10) as usize;
        if decimals == 0 {
            "0".into()
        } else {
            format!("0.{}", "0".repeat(decimals))
        }
    } else {
        "0.00000E+00".into()
    }
}

fn own_code(style: Style, value: Option<f64>) -> String {
    match (style, value) {
        (Style::Number, Some(x)) => significant_code(x),
        (Style::PValue, Some(x)) if x < 1e-4 => "0.00E+00".into(),
        (Style::PValue, _) => "0.0000".into(),
        (Style::Integer, _) => "0".into(),
        (Style::Fixed(d), _) => if d == 0 { "0".into() } else { format!("0.{}", "0".repeat(usize::from(d))) },
        (Style::Percent, _) => "0%".into(),
        (Style::Date, _) => "yyyy-mm-dd".into(),
        (Style::DateTime, _) => "yyyy-mm-dd hh:mm:ss".into(),
        (Style::Time, _) => "[h]:mm:ss".into(),
        _ => String::new(),
    }
}

/// The number format code a cell of this style and content is shown in
/// (empty: the spreadsheet's general format). A date or time shows as one
/// in any style without a number format of its own (an input cell, say).
pub fn format_code(style: Style, content: &Content) -> String {
    match content {
        Content::Number(x) | Content::Formula(_, Cached::Number(x)) => own_code(style, Some(*x)),
        Content::DateTime(_, kind) => {
            let own = own_code(style, None);
            if own.is_empty() {
                let s = match kind {
                    crate::cells::DateKind::Date => Style::Date,
                    crate::cells::DateKind::DateTime => Style::DateTime,
                    crate::cells::DateKind::Time => Style::Time,
                };
                own_code(s, None)
            } else {
                own
            }
        }
        _ => own_code(style, None),
    }
}

/// `x` in scientific notation with `d` decimals, as the spreadsheet shows
/// it (`1.08420E-19`).
fn scientific(x: f64, d: usize) -> String {
    let s = format!("{x:.d$e}");
    match s.split_once('e') {
        Some((m, e)) => {
            let (sign, digits) = e.strip_prefix('-').map(|d| ('-', d)).unwrap_or(('+', e));
            format!("{m}E{sign}{digits:0>2}")
        }
        None => s,
    }
}

/// `x` as the general format shows it in a column of ordinary width: up to
/// eleven characters, scientific when it does not fit.
fn general(x: f64) -> String {
    if x == 0.0 {
        return "0".into();
    }
    let mag = x.abs().log10().floor() as i32;
    if !(-5..11).contains(&mag) {
        let s = scientific(x, 5);
        return match s.split_once('E') {
            Some((m, e)) => format!("{}E{e}", m.trim_end_matches('0').trim_end_matches('.')),
            None => s,
        };
    }
    let int_digits = mag.max(0) as usize + 1;
    let decimals = 10usize.saturating_sub(int_digits + usize::from(x < 0.0));
    let s = format!("{x:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The text a number shows in a format code (see [`format_code`]).
pub fn shown_number(code: &str, x: f64) -> String {
    match code {
        "" => general(x),
        "0%" => format!("{:.0}%", x * 100.0),
        "yyyy-mm-dd" => "2000-01-01".into(),
        "yyyy-mm-dd hh:mm:ss" => "2000-01-01 00:00:00".into(),
        "[h]:mm:ss" => format!("{}:00:00", (x * 24.0).floor().max(0.0)),
        _ => {
            if let Some((m, _)) = code.split_once('E') {
                scientific(x, m.len().saturating_sub(2))
            } else {
                let d = code.split_once('.').map(|(_, f)| f.len()).unwrap_or(0);
                format!("{x:.d$}")
            }
        }
    }
}

/// How many characters wide a cell's content shows (numbers and dates in
/// their format; text as it is), or `None` for a blank.
pub fn shown_chars(cell: &OutCell) -> Option<f64> {
    let n = |s: String| s.chars().count() as f64;
    match &cell.content {
        Content::Blank | Content::Formula(_, Cached::Empty) => None,
        Content::Text(t) | Content::Formula(_, Cached::Text(t)) => Some(n(t.clone())),
        Content::Bool(_) | Content::Formula(_, Cached::Bool(_)) => Some(5.0),
        Content::Error(_) | Content::Formula(_, Cached::Error(_)) => Some(7.0),
        Content::Number(x) | Content::DateTime(x, _) | Content::Formula(_, Cached::Number(x)) => Some(n(shown_number(&format_code(cell.style, &cell.content), *x))),
    }
}

/// How much wider than a digit the average character of a style's text
/// is: bold text is wider.
fn text_factor(style: Style) -> f64 {
    match style {
        Style::Header | Style::Label | Style::Good | Style::Error => 1.1,
        // Running text: letters are narrower than digits on average
        // (measured on rendered Guide rows, LibreOffice 7, Calibri 11).
        Style::Wrap => 0.9,
        _ => 1.0,
    }
}

/// The lines `text` takes when wrapped in a column `width` characters wide
/// (words kept whole where they fit, breaks kept), for text of `style`.
pub fn wrapped_lines(text: &str, width: f64, style: Style) -> usize {
    let per_line = ((width - PAD) / text_factor(style)).floor().max(1.0) as usize;
    let mut lines = 0;
    for para in text.split('\n') {
        let mut len = 0usize;
        lines += 1;
        for word in para.split(' ') {
            let w = word.chars().count();
            if len > 0 && len + 1 + w > per_line {
                lines += 1;
                len = 0;
            }
            len += if len > 0 { 1 } else { 0 } + w;
            while len > per_line {
                lines += 1;
                len -= per_line;
            }
        }
    }
    lines
}

fn wraps(style: Style) -> bool {
    matches!(style, Style::Wrap | Style::Label)
}

/// Fits a result sheet for reading: every column as wide as its headings
/// and figures show (text that spills into an empty neighbour does not
/// count; plain text longer than [`TEXT_WIDTH`] beside a filled cell
/// wraps instead), a column of wrapped text at least its laid-out width,
/// rows of wrapped text as tall as their lines, and printing fitted to the
/// page width with the frozen rows and columns repeated on every page,
/// in landscape when the sheet is wider than a portrait page.
pub(super) fn fit(s: &mut Sheet) {
    let filled: BTreeSet<(u32, u32)> = s.cells.iter().filter(|(_, c)| shown_chars(c).is_some()).map(|(k, _)| *k).collect();
    let mut need: BTreeMap<u32, f64> = BTreeMap::new();
    let mut wrap_cols: BTreeSet<u32> = BTreeSet::new();
    let mut to_wrap: Vec<(u32, u32)> = Vec::new();
    for (&(r, c), cell) in &s.cells {
        if cell.style == Style::Title {
            continue;
        }
        if wraps(cell.style) {
            wrap_cols.insert(c);
            continue;
        }
        let Some(chars) = shown_chars(cell) else { continue };
        let w = match &cell.content {
            // A heading may take two lines, never splitting a word.
            Content::Text(t) if cell.style == Style::Header => {
                let longest = t.split_whitespace().map(|w| w.chars().count()).max().unwrap_or(0) as f64;
                longest.max((chars / 2.0).ceil() + 1.0) * text_factor(cell.style) + PAD
            }
            Content::Text(_) => {
                if !filled.contains(&(r, c + 1)) {
                    continue;
                }
                let w = chars * text_factor(cell.style) + PAD;
                if w > TEXT_WIDTH && cell.style == Style::Plain {
                    to_wrap.push((r, c));
                    wrap_cols.insert(c);
                    TEXT_WIDTH
                } else {
                    w
                }
            }
            _ => chars * text_factor(cell.style) + PAD,
        };
        let e = need.entry(c).or_insert(MIN_WIDTH);
        *e = e.max(w);
    }
    for k in to_wrap {
        if let Some(cell) = s.cells.get_mut(&k) {
            cell.style = Style::Wrap;
        }
    }
    for c in &wrap_cols {
        let laid = s.widths.get(c).copied().unwrap_or(WRAP_WIDTH);
        let e = need.entry(*c).or_insert(laid);
        *e = e.max(laid);
    }
    for (c, w) in need {
        s.widths.insert(c, (w * 4.0).ceil() / 4.0);
    }
    // A heading wider than its column wraps.
    for (&(_, c), cell) in s.cells.iter_mut() {
        if let (Style::Header, Content::Text(t)) = (cell.style, &cell.content) {
            let w = s.widths.get(&c).copied().unwrap_or(DEFAULT_WIDTH);
            if t.chars().count() as f64 * text_factor(Style::Header) + PAD > w {
                cell.style = Style::Label;
            }
        }
    }
    let width_of = |widths: &BTreeMap<u32, f64>, c: u32| widths.get(&c).copied().unwrap_or(DEFAULT_WIDTH);
    let mut heights: BTreeMap<u32, f64> = BTreeMap::new();
    for (&(r, c), cell) in &s.cells {
        if !wraps(cell.style) {
            continue;
        }
        let Content::Text(t) = &cell.content else { continue };
        let lines = wrapped_lines(t, width_of(&s.widths, c), cell.style);
        if lines > 1 {
            let h = heights.entry(r).or_insert(0.0);
            *h = h.max(lines as f64 * line_height());
        }
    }
    s.heights = heights;

    let last_col = match &s.print.area {
        Some(a) => a.last_col,
        None => s.cells.keys().map(|k| k.1).max().unwrap_or(0),
    };
    let first_col = s.print.area.as_ref().map(|a| a.first_col).unwrap_or(0);
    let total: f64 = (first_col..=last_col).map(|c| width_of(&s.widths, c)).sum();
    s.print.fit_width = true;
    s.print.landscape = total > PORTRAIT_CHARS;
    if let Some((r, c)) = s.freeze {
        s.print.repeat_rows = (r > 0).then(|| (0, r - 1));
        s.print.repeat_cols = (c > 0).then(|| (0, c - 1));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_show_as_their_format_does() {
        // The spreadsheet's own rendering of these codes (from memory).
        assert_eq!(shown_number("0.00000E+00", 1.0842021724855044e-19), "1.08420E-19");
        assert_eq!(shown_number("0.00E+00", 2.5e7), "2.50E+07");
        assert_eq!(shown_number("0.0000", 0.12345), "0.1235");
        assert_eq!(shown_number("0%", 0.95), "95%");
        assert_eq!(shown_number("", 1.3718627450980392), "1.371862745");
        assert_eq!(shown_number("", 12.0), "12");
        assert_eq!(shown_number("", 1.0842021724855044e-19), "1.0842E-19");
        assert_eq!(significant_code(3.25), "0.00000");
        assert_eq!(significant_code(-1234.5678), "0.00");
        assert_eq!(significant_code(0.000123456), "0.000000000");
        assert_eq!(significant_code(1.0e-9), "0.00000E+00");
        assert_eq!(significant_code(123456789.0), "0.00000E+00");
    }

    #[test]
    fn a_date_in_an_input_cell_shows_as_a_date() {
        let c = Content::DateTime(46280.0, crate::cells::DateKind::Date);
        assert_eq!(format_code(Style::Input, &c), "yyyy-mm-dd");
        assert_eq!(format_code(Style::Input, &Content::Number(3.0)), "");
    }

    #[test]
    fn wrapped_text_counts_its_lines() {
        // 11.5 wide in digits: 10 characters a line of plain text.
        assert_eq!(wrapped_lines("aaaa bbbb cccc", 11.5, Style::Plain), 2);
        assert_eq!(wrapped_lines("aaaa\nbbbb", 11.5, Style::Plain), 2);
        assert_eq!(wrapped_lines(&"x".repeat(25), 11.5, Style::Plain), 3);
        assert_eq!(wrapped_lines("short", 11.5, Style::Plain), 1);
        // Running text: 10 / 0.9 = 11 characters a line.
        assert_eq!(wrapped_lines("aaaaa bbbbb cccc", 11.5, Style::Wrap), 2);
    }

    #[test]
    fn columns_fit_headings_and_figures_and_wrapped_rows_get_height() {
        let mut s = Sheet::new("T");
        s.put(0, 0, OutCell::text("A rather long heading", Style::Header));
        s.put(1, 0, OutCell::number(0.000123456, Style::Number));
        s.put(0, 1, OutCell::text("Notes", Style::Header));
        s.put(1, 1, OutCell::text("word ".repeat(40), Style::Wrap));
        s.put(3, 0, OutCell::text("A sentence that spills into the empty cells beside it and needs no width", Style::Plain));
        s.widths.insert(1, 30.0);
        s.freeze = Some((1, 0));
        fit(&mut s);
        // The heading takes two lines: ⌈21 / 2⌉ + 1 characters a line, bold.
        assert_eq!(s.widths[&0], 14.75, "the spilling sentence does not widen the column: {:?}", s.widths);
        assert_eq!(s.cells[&(0, 0)].style, Style::Label);
        assert_eq!(s.heights.get(&0), Some(&(2.0 * line_height())));
        assert_eq!(s.widths[&1], 30.0);
        // 200 characters, (30 − 1.5) / 0.9 = 31 a line, six words of five a
        // line: 7 lines.
        assert_eq!(s.heights.get(&1), Some(&(7.0 * line_height())));
        assert_eq!(s.print.repeat_rows, Some((0, 0)));
        assert!(s.print.fit_width && !s.print.landscape);
    }
}
