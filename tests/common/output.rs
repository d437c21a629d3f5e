//! Reading an output workbook back with calamine directly (not through
//! plumb's own reader), so the tests see what any other reader would see.

use calamine::{open_workbook_auto, Data, Reader};
use std::path::Path;

/// Every cell of a sheet as (row, col, value), absolute coordinates.
pub fn sheet(path: &Path, name: &str) -> Vec<(u32, u32, Data)> {
    let mut wb = open_workbook_auto(path).unwrap_or_else(|e| panic!("cannot open {}: {e}", path.display()));
    let range = wb.worksheet_range(name).unwrap_or_else(|e| panic!("no sheet {name} in {}: {e}", path.display()));
    range.cells().filter(|(_, _, d)| !matches!(d, Data::Empty)).map(|(r, c, d)| (r as u32 + range.start().map(|s| s.0).unwrap_or(0), c as u32 + range.start().map(|s| s.1).unwrap_or(0), d.clone())).collect()
}

/// The sheet names in order.
pub fn sheet_names(path: &Path) -> Vec<String> {
    let wb = open_workbook_auto(path).unwrap_or_else(|e| panic!("cannot open {}: {e}", path.display()));
    wb.sheet_names()
}

/// A cell's text, if it is text.
pub fn text(d: &Data) -> Option<&str> {
    match d {
        Data::String(s) => Some(s),
        _ => None,
    }
}

/// A cell's number, if it is a number.
pub fn num(d: &Data) -> Option<f64> {
    match d {
        Data::Float(x) => Some(*x),
        Data::Int(i) => Some(*i as f64),
        _ => None,
    }
}

/// Rows of a sheet as a dense table: rows[r][c].
pub fn table(path: &Path, name: &str) -> Vec<Vec<Data>> {
    let cells = sheet(path, name);
    let rows = cells.iter().map(|c| c.0).max().map_or(0, |m| m + 1) as usize;
    let cols = cells.iter().map(|c| c.1).max().map_or(0, |m| m + 1) as usize;
    let mut t = vec![vec![Data::Empty; cols]; rows];
    for (r, c, d) in cells {
        t[r as usize][c as usize] = d;
    }
    t
}

/// One row of the Coefficients sheet.
#[derive(Debug, Clone)]
pub struct Coef {
    pub term: String,
    pub estimate: Option<f64>,
    pub std_error: Option<f64>,
    pub t: Option<f64>,
    pub p: Option<f64>,
}

/// The coefficients of one fit, in order, read by header names.
pub fn coefficients(path: &Path, fit: &str) -> Vec<Coef> {
    let t = table(path, "Coefficients");
    let h: Vec<String> = t[0].iter().map(|d| text(d).unwrap_or("").to_string()).collect();
    let col = |name: &str| h.iter().position(|x| x == name).unwrap_or_else(|| panic!("no column {name} in Coefficients: {h:?}"));
    let (cf, ct, ce, cs, cz, cp) = (col("Fit"), col("Term"), col("Estimate"), col("Standard error"), col("t statistic"), col("p-value"));
    t[1..]
        .iter()
        .filter(|r| text(&r[cf]) == Some(fit))
        .map(|r| Coef {
            term: text(&r[ct]).unwrap_or("").to_string(),
            estimate: num(&r[ce]),
            std_error: num(&r[cs]),
            t: num(&r[cz]),
            p: num(&r[cp]),
        })
        .collect()
}

/// The Diagnostics sheet's fit columns: the header row (first cell "Fit")
/// and the column of `fit` in it.
fn diagnostics_column(t: &[Vec<Data>], fit: &str) -> Option<usize> {
    let head = t.iter().find(|r| r.first().and_then(text) == Some("Fit"))?;
    head.iter().position(|d| text(d) == Some(fit))
}

/// A statistic of one fit from the side-by-side blocks of Diagnostics, by
/// its row label.
pub fn statistic(path: &Path, fit: &str, label: &str) -> Option<f64> {
    statistic_at(path, fit, label).map(|s| s.0)
}

/// A statistic of one fit by label, with the text on the line under it
/// (the row or term it is about), if any.
pub fn statistic_at(path: &Path, fit: &str, label: &str) -> Option<(f64, Option<String>)> {
    let t = table(path, "Diagnostics");
    let col = diagnostics_column(&t, fit)?;
    let at = t.iter().position(|r| r.first().and_then(text) == Some(label))?;
    let value = t[at].get(col).and_then(num)?;
    let below = t.get(at + 1).filter(|r| r.first().and_then(text).is_some_and(|l| l.trim() == "where")).and_then(|r| r.get(col)).and_then(text).map(str::to_string);
    Some((value, below))
}

/// A cell of one fit's analysis-of-variance grid on Diagnostics: the row
/// whose first cell starts with `source`, the column headed `column`.
pub fn anova(path: &Path, fit: &str, source: &str, column: &str) -> Option<f64> {
    let t = table(path, "Diagnostics");
    let head = t.iter().position(|r| r.first().and_then(text) == Some(fit) && r.get(1).and_then(text) == Some("Degrees of freedom"))?;
    let col = t[head].iter().position(|d| text(d) == Some(column))?;
    let row = t[head + 1..head + 4].iter().find(|r| r.first().and_then(text).is_some_and(|l| l.starts_with(source)))?;
    row.get(col).and_then(num)
}
