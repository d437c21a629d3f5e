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

/// The text of every part of the output's zip package whose name starts
/// with `prefix` (such as `xl/charts/chart`), as (name, text), in
/// numeric order of the parts' numbers.
pub fn parts(path: &Path, prefix: &str) -> Vec<(String, String)> {
    use std::io::Read;
    let f = std::fs::File::open(path).unwrap_or_else(|e| panic!("cannot open {}: {e}", path.display()));
    let mut z = zip::ZipArchive::new(f).unwrap_or_else(|e| panic!("{} is not a zip: {e}", path.display()));
    let mut names: Vec<String> = z.file_names().filter_map(|n| n.ok().map(|n| n.to_string())).filter(|n| n.starts_with(prefix)).collect();
    let number = |n: &str| n[prefix.len()..].chars().take_while(char::is_ascii_digit).collect::<String>().parse::<u32>().unwrap_or(0);
    names.sort_by_key(|n| number(n));
    names
        .into_iter()
        .map(|n| {
            let mut s = String::new();
            z.by_name(&n).unwrap_or_else(|e| panic!("no part {n}: {e}")).read_to_string(&mut s).unwrap_or_else(|e| panic!("part {n}: {e}"));
            (n, s)
        })
        .collect()
}

/// The worksheet part of the sheet `name` (the writer numbers the parts in
/// sheet order).
pub fn sheet_xml(path: &Path, name: &str) -> String {
    let idx = sheet_names(path).iter().position(|n| n == name).unwrap_or_else(|| panic!("no sheet {name} in {}", path.display())) + 1;
    let part = format!("xl/worksheets/sheet{idx}.xml");
    parts(path, &part).into_iter().find(|(n, _)| *n == part).map(|(_, s)| s).unwrap_or_else(|| panic!("no part {part}"))
}

/// XML text or attribute value with the five predefined entities replaced.
pub fn xml_unescape(s: &str) -> String {
    s.replace("&lt;", "<").replace("&gt;", ">").replace("&quot;", "\"").replace("&apos;", "'").replace("&amp;", "&")
}

/// Every value of `attr="…"` in `xml`, unescaped.
pub fn attributes(xml: &str, attr: &str) -> Vec<String> {
    let open = format!(" {attr}=\"");
    xml.split(&open).skip(1).filter_map(|p| p.split('"').next()).map(xml_unescape).collect()
}

/// Every text between `open` and `close` in `xml`, unescaped.
pub fn elements(xml: &str, open: &str, close: &str) -> Vec<String> {
    xml.split(open).skip(1).filter_map(|p| p.split(close).next()).map(xml_unescape).collect()
}

/// A reference `Sheet!A1:B2` or `'It''s'!$A$1` split into the sheet name
/// (unquoted, inner quotes undoubled) and the cells; `None` without a sheet.
pub fn split_reference(r: &str) -> Option<(String, String)> {
    let r = r.trim_start_matches('=');
    if let Some(rest) = r.strip_prefix('\'') {
        let mut name = String::new();
        let mut chars = rest.char_indices().peekable();
        while let Some((i, c)) = chars.next() {
            if c == '\'' {
                if chars.peek().map(|p| p.1) == Some('\'') {
                    chars.next();
                    name.push('\'');
                    continue;
                }
                return rest[i + 1..].strip_prefix('!').map(|cells| (name, cells.to_string()));
            }
            name.push(c);
        }
        None
    } else {
        r.split_once('!').map(|(s, c)| (s.to_string(), c.to_string()))
    }
}

/// `$C$5` or `AA12` → (row, column), zero-based.
pub fn cell_index(a1: &str) -> Option<(u32, u32)> {
    let a1 = a1.replace('$', "");
    let letters: String = a1.chars().take_while(|c| c.is_ascii_alphabetic()).collect();
    let row: u32 = a1[letters.len()..].parse().ok()?;
    let col = plumb::cells::column_index(&letters)?;
    Some((row.checked_sub(1)?, col))
}

/// Every chart part of an xlsx file: its title texts and the ranges its series read.
pub fn chart_parts(path: &Path) -> Vec<(Vec<String>, Vec<String>)> {
    use std::io::Read;
    let f = std::fs::File::open(path).unwrap();
    let mut z = zip::ZipArchive::new(f).unwrap();
    let mut names: Vec<String> = z.file_names().filter_map(|n| n.ok().map(|n| n.to_string())).filter(|n| n.starts_with("xl/charts/chart") || n.starts_with("xl/charts/plumb-chart")).collect();
    // plumb's charts are named plumb-chartN only where the input has a chartN of its own.
    names.sort_by_key(|n| (n.starts_with("xl/charts/chart"), n.trim_start_matches("xl/charts/").trim_start_matches("plumb-").trim_start_matches("chart").trim_end_matches(".xml").parse::<u32>().unwrap_or(0)));
    let grab = |s: &str, open: &str, close: &str| -> Vec<String> {
        s.split(open).skip(1).filter_map(|p| p.split(close).next()).map(String::from).collect()
    };
    names
        .iter()
        .map(|n| {
            let mut s = String::new();
            z.by_name(n).unwrap().read_to_string(&mut s).unwrap();
            (grab(&s, "<a:t>", "</a:t>"), grab(&s, "<c:f>", "</c:f>"))
        })
        .collect()
}

/// `Charts!$AA$3:$AA$23` → (column index, first row, last row), 0-based.
pub fn parse_range(r: &str) -> (u32, u32, u32) {
    let (_, cells) = r.split_once('!').unwrap();
    let (a, b) = cells.split_once(':').unwrap();
    let cell = |c: &str| {
        let c = c.replace('$', "");
        let letters: String = c.chars().take_while(|x| x.is_ascii_alphabetic()).collect();
        let row: u32 = c[letters.len()..].parse().unwrap();
        let col = letters.bytes().fold(0u32, |acc, l| acc * 26 + u32::from(l - b'A' + 1)) - 1;
        (col, row - 1)
    };
    let ((c, r0), (_, r1)) = (cell(a), cell(b));
    (c, r0, r1)
}
