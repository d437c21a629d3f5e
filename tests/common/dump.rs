//! Golden snapshots of the laid-out output: [`dump_book`] turns the abstract
//! output model (`plumb::layout::Book`) into plain text, one text per result
//! sheet and one per source-sheet overlay, and [`check_snapshots`] compares
//! those texts with the files committed under `tests/snapshots/<name>/`, or
//! rewrites them when `PLUMB_UPDATE_SNAPSHOTS=1` is set.
//!
//! Numbers are printed rounded to 12 significant digits (`{:.11e}`), so a
//! last-bit difference between machines does not break a snapshot while any
//! real change of a figure does.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::io::Write as _;
use std::path::{Path, PathBuf};

use plumb::cells::{column_letters, CellAddress, Workbook};
use plumb::fits::Registry;
use plumb::layout::{lay_out, Book, Cached, ChartSpec, Choices, Content, OutCell, Overlay, Sheet};
use plumb::report::RunInfo;
use plumb::pipeline::evaluate_book;

/// The run facts used for every snapshot: constants, so the About sheet
/// does not change with the time, the input's bytes or the crate version.
pub fn fixed_run_info(input_name: &str) -> RunInfo {
    RunInfo {
        version: "0.0.0-snapshot".into(),
        input_name: input_name.into(),
        input_sha256: "0000000000000000000000000000000000000000000000000000000000000000".into(),
        time: "2000-01-01 00:00:00".into(),
        sheets: None,
    }
}

/// Evaluates every request of `book` and lays out the output, as `plumb run`
/// does, with [`fixed_run_info`].
pub fn laid_out(book: &Workbook, input_name: &str) -> Book {
    let summary = evaluate_book(book, input_name, &Registry::builtin());
    lay_out(book, &summary.reports, &fixed_run_info(input_name))
}

/// A number rounded to 12 significant digits.
pub fn num(x: f64) -> String {
    if x.is_finite() {
        format!("{x:.11e}")
    } else {
        format!("{x:?}")
    }
}

fn content(c: &Content) -> String {
    match c {
        Content::Blank => "Blank".to_string(),
        Content::Number(x) => format!("Number  {}", num(*x)),
        Content::Text(t) => format!("Text  {t:?}"),
        Content::Bool(b) => format!("Bool  {b}"),
        Content::DateTime(x, k) => format!("DateTime  {}  {k:?}", num(*x)),
        Content::Error(e) => format!("Error  {}", e.as_str()),
        Content::Formula(f, cached) => {
            let v = match cached {
                Cached::Empty => "empty".to_string(),
                Cached::Number(x) => num(*x),
                Cached::Text(t) => format!("{t:?}"),
                Cached::Bool(b) => b.to_string(),
                Cached::Error(e) => e.as_str().to_string(),
            };
            format!("Formula  {f:?}  = {v}")
        }
    }
}

fn cells(out: &mut String, cells: &BTreeMap<(u32, u32), OutCell>) {
    for (&(r, c), cell) in cells {
        let _ = write!(out, "{}  {}  [{:?}]", CellAddress::new("", r, c).local(), content(&cell.content), cell.style);
        if let Some(l) = &cell.link {
            let _ = write!(out, "  link {l:?}");
        }
        if let Some(n) = &cell.note {
            let _ = write!(out, "  note {n:?}");
        }
        out.push('\n');
    }
}

fn widths(out: &mut String, widths: &BTreeMap<u32, f64>) {
    for (c, w) in widths {
        let _ = writeln!(out, "width {}  {w:?}", column_letters(*c));
    }
}

fn chart(out: &mut String, ch: &ChartSpec) {
    let _ = writeln!(out, "chart at {}  title {:?}  x {:?}  y {:?}", CellAddress::new("", ch.anchor.0, ch.anchor.1).local(), ch.title, ch.x_label, ch.y_label);
    for s in &ch.series {
        let _ = writeln!(
            out,
            "  series {:?}  {}  x {}  y {}  rows {}..{}  {}",
            s.name,
            s.sheet,
            column_letters(s.x_col),
            column_letters(s.y_col),
            s.first_row + 1,
            s.last_row + 1,
            if s.line { "line" } else { "points" }
        );
    }
}

/// The text of one result sheet: its cells, one line each in row-major
/// order, then widths, row heights, print setup, freeze, filter, drop-down
/// choices and charts.
pub fn dump_sheet(s: &Sheet) -> String {
    let mut out = format!("sheet {:?}\n", s.name);
    cells(&mut out, &s.cells);
    widths(&mut out, &s.widths);
    for (r, h) in &s.heights {
        let _ = writeln!(out, "height {}  {h:?}", r + 1);
    }
    let p = &s.print;
    let _ = write!(out, "print {}{}", if p.landscape { "landscape" } else { "portrait" }, if p.fit_width { ", fit to page width" } else { "" });
    if let Some((a, b)) = p.repeat_rows {
        let _ = write!(out, ", repeat rows {}-{}", a + 1, b + 1);
    }
    if let Some((a, b)) = p.repeat_cols {
        let _ = write!(out, ", repeat columns {}-{}", column_letters(a), column_letters(b));
    }
    if let Some(a) = &p.area {
        let _ = write!(out, ", area {a}");
    }
    out.push('\n');
    if let Some((r, c)) = s.freeze {
        let _ = writeln!(out, "freeze {}", CellAddress::new("", r, c).local());
    }
    if let Some(f) = &s.filter {
        let _ = writeln!(out, "filter {f}");
    }
    for (&(r, c), choices) in &s.choices {
        let at = CellAddress::new("", r, c).local();
        let _ = match choices {
            Choices::List(list) => writeln!(out, "choices {at}  {list:?}"),
            Choices::Cells(range) => writeln!(out, "choices {at}  from {range}"),
        };
    }
    for ch in &s.charts {
        chart(&mut out, ch);
    }
    out
}

/// The text of one source sheet's overlay: the replaced cells (request
/// outcomes), then each added column block (its header, how many values,
/// the first five), then widths.
pub fn dump_overlay(source: &str, o: &Overlay) -> String {
    let mut out = format!("overlay of source sheet {source:?}\n");
    cells(&mut out, &o.cells);
    for b in &o.blocks {
        let header = b.header.as_ref().map(|(r, t)| format!("{} {t:?}", CellAddress::new("", *r, b.col).local())).unwrap_or_else(|| "no header".into());
        let _ = writeln!(out, "block {}  {header}  {} values", column_letters(b.col), b.values.len());
        for (r, v) in b.rows.iter().zip(&b.values).take(5) {
            let _ = writeln!(out, "  {}  {}", CellAddress::new("", *r, b.col).local(), num(*v));
        }
    }
    widths(&mut out, &o.widths);
    out
}

fn file_stem(name: &str) -> String {
    name.chars().map(|c| if c.is_ascii_alphanumeric() || c == '-' { c } else { '_' }).collect()
}

/// Every snapshot file of a laid-out book, file name → text: `_book.txt`
/// (sheet order and whether formulas are kept), `source-NAME.txt` per
/// source sheet and `NAME.txt` per result sheet.
pub fn dump_book(source: &Workbook, book: &Book) -> BTreeMap<String, String> {
    let mut files = BTreeMap::new();
    let mut index = String::new();
    let _ = writeln!(index, "keep formulas {}", book.keep_formulas);
    for (g, o) in source.sheets.iter().zip(&book.overlays) {
        let _ = writeln!(index, "source {:?}", g.name);
        files.insert(format!("source-{}.txt", file_stem(&g.name)), dump_overlay(&g.name, o));
    }
    if source.sheets.len() != book.overlays.len() {
        let _ = writeln!(index, "{} source sheets but {} overlays", source.sheets.len(), book.overlays.len());
    }
    for s in &book.sheets {
        let _ = writeln!(index, "result {:?}", s.name);
        files.insert(format!("{}.txt", file_stem(&s.name)), dump_sheet(s));
    }
    files.insert("_book.txt".into(), index);
    files
}

/// The folder of one snapshot set.
pub fn snapshot_dir(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("snapshots").join(name)
}

/// Compares `files` with `tests/snapshots/<name>/`, or, when
/// `PLUMB_UPDATE_SNAPSHOTS=1`, rewrites that folder to hold exactly them.
/// Panics naming every file that differs, is missing or is left over.
pub fn check_snapshots(name: &str, files: &BTreeMap<String, String>) {
    let dir = snapshot_dir(name);
    let on_disk: Vec<String> = std::fs::read_dir(&dir)
        .map(|rd| rd.filter_map(|e| e.ok()).map(|e| e.file_name().to_string_lossy().into_owned()).filter(|n| n.ends_with(".txt")).collect())
        .unwrap_or_default();
    if std::env::var("PLUMB_UPDATE_SNAPSHOTS").as_deref() == Ok("1") {
        std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("cannot create {}: {e}", dir.display()));
        for old in on_disk.iter().filter(|n| !files.contains_key(*n)) {
            std::fs::remove_file(dir.join(old)).unwrap_or_else(|e| panic!("cannot remove {old}: {e}"));
            say(&format!("snapshots: PLUMB_UPDATE_SNAPSHOTS=1, removed {}/{old}", dir.display()));
        }
        for (f, text) in files {
            let path = dir.join(f);
            if std::fs::read_to_string(&path).ok().as_deref() != Some(text.as_str()) {
                std::fs::write(&path, text).unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
                say(&format!("snapshots: PLUMB_UPDATE_SNAPSHOTS=1, rewrote {}", path.display()));
            }
        }
        return;
    }
    let mut faults = Vec::new();
    for (f, text) in files {
        let path = dir.join(f);
        match std::fs::read_to_string(&path) {
            Err(_) => faults.push(format!("{} is missing", path.display())),
            Ok(old) if old != *text => faults.push(format!("{} differs:\n{}", path.display(), first_difference(&old, text))),
            Ok(_) => {}
        }
    }
    for old in on_disk.iter().filter(|n| !files.contains_key(*n)) {
        faults.push(format!("{}/{old} is no longer produced", dir.display()));
    }
    assert!(faults.is_empty(), "snapshot {name} changed (review, then rerun with PLUMB_UPDATE_SNAPSHOTS=1 to accept):\n{}", faults.join("\n"));
}

/// A line on standard error past the test harness's capture (which only
/// takes the print macros), so an update is seen even when the test passes.
fn say(line: &str) {
    let _ = writeln!(std::io::stderr(), "{line}");
}

/// The first differing line of two texts, with its number.
fn first_difference(old: &str, new: &str) -> String {
    let (a, b): (Vec<&str>, Vec<&str>) = (old.lines().collect(), new.lines().collect());
    for i in 0..a.len().max(b.len()) {
        let (x, y) = (a.get(i).copied(), b.get(i).copied());
        if x != y {
            return format!("  line {}:\n  - {}\n  + {}", i + 1, x.unwrap_or("(none)"), y.unwrap_or("(none)"));
        }
    }
    "  (line endings differ)".into()
}
