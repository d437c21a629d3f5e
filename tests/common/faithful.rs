//! The faithful-copy comparison shared by `faithful_copy.rs` and the bad-input
//! corpus: every source cell reads back equal from the output.
//!
//! Documented exceptions (docs/limits-and-bad-input.md): a request cell shows
//! its outcome instead; a number that is infinite or not a number (no
//! spreadsheet program writes one, a hand-made file can) is written as the
//! text `INF`, `-INF` or `NAN`, because the xlsx format has no such number;
//! a text longer than 32,767 characters (the format's limit per cell) is cut
//! to that length.

use plumb::cells::{Value, Workbook};
use plumb::read::{read_workbook, read_workbook_with_format, Format};
use std::collections::HashSet;
use std::path::Path;

/// The longest text one xlsx cell holds, in UTF-16 units (common practice:
/// the spreadsheet programs' documented cell limit).
pub const MAX_CELL_TEXT: usize = 32_767;

/// Asserts that every source cell of `input` reads back equal from `out`;
/// returns the number of cells compared.
pub fn assert_faithful(input: &Path, out: &Path) -> usize {
    let (a, format) = read_workbook_with_format(input).expect("read input");
    let b = read_workbook(out).expect("read output");
    assert_books_faithful(&a, &b, format != Format::Ods)
}

/// As [`assert_faithful`], on workbooks already read. With `formulas` the
/// formula texts must be equal too; without (OpenDocument input, whose
/// formulas are written as their values) the output must hold no formula
/// where the source had one.
pub fn assert_books_faithful(a: &Workbook, b: &Workbook, formulas: bool) -> usize {
    let requests: HashSet<(String, u32, u32)> =
        plumb::resolve::find_requests(a).into_iter().map(|f| (f.cell.sheet, f.cell.row, f.cell.col)).collect();
    let mut n = 0;
    assert!(b.sheets.len() >= a.sheets.len() + 6, "the output has the source sheets and six result sheets");
    for (i, g) in a.sheets.iter().enumerate() {
        let h = &b.sheets[i];
        assert_eq!(g.name, h.name, "sheet order or name");
        assert_eq!(g.visibility, h.visibility, "visibility of {}", g.name);
        for (r, c, v) in g.cells() {
            if requests.contains(&(g.name.clone(), r, c)) {
                // A request cell shows its outcome instead (a one-point #predict: the predicted value).
                let predict = matches!(v, Value::Text(t) if t.trim_start().to_lowercase().starts_with("#predict("));
                assert!(
                    matches!(h.value(r, c), Value::Text(_)) || (predict && matches!(h.value(r, c), Value::Number(_))),
                    "request cell {} row {r} col {c}",
                    g.name
                );
                continue;
            }
            let w = h.value(r, c);
            match (v, w) {
                (Value::Number(x), Value::Number(y)) => assert!(x == y, "{}!{r},{c}: {x} vs {y}", g.name),
                (Value::Number(x), Value::Text(t)) if !x.is_finite() => {
                    let want = if x.is_nan() { "NAN" } else if x > 0.0 { "INF" } else { "-INF" };
                    assert_eq!(t, want, "{} row {r} col {c}", g.name);
                }
                (Value::Text(s), Value::Text(t)) if s.encode_utf16().count() > MAX_CELL_TEXT => {
                    assert!(s.starts_with(t) && t.encode_utf16().count() <= MAX_CELL_TEXT, "{} row {r} col {c}: long text cut", g.name);
                }
                (v, w) => assert_eq!(v, w, "{} row {r} col {c}", g.name),
            }
            if let Some(f) = g.formula(r, c) {
                if formulas {
                    assert_eq!(h.formula(r, c), Some(f), "formula at {} row {r} col {c}", g.name);
                } else {
                    assert_eq!(h.formula(r, c), None, "an OpenDocument formula is written as its value ({} row {r} col {c})", g.name);
                }
            }
            n += 1;
        }
    }
    n
}
