//! The computable parts of "result sheets that read well": on the demo and
//! on an invented workbook with a date column, every result-sheet column is
//! at least as wide as its headings (or the heading wraps in a row tall
//! enough for its lines) and its numbers as their formats show them,
//! every wrapped cell's row has the height its lines need, every result
//! sheet prints fitted to the page width with its frozen rows repeated, and
//! the calculator's prefilled inputs keep the data's decimals and dates.
//! The written file carries the row heights and print setup.

mod common;

use std::path::{Path, PathBuf};

use common::dump::laid_out;
use common::output::{attributes, parts, sheet_xml};
use common::run::{run_to, scratch};
use plumb::cells::DateKind;
use plumb::layout::{line_height, shown_chars, wrapped_lines, Book, Content, Sheet, Style};
use plumb::read::read_workbook;

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/greenhouse.xlsx")
}

/// Invented data: a plant's growth (1 decimal) against the day it was
/// measured (a date) and the temperature (1 decimal), 14 rows.
fn dated_workbook(path: &Path) {
    let mut wb = rust_xlsxwriter::Workbook::new();
    let ws = wb.add_worksheet();
    ws.set_name("Log").expect("name");
    let date = rust_xlsxwriter::Format::new().set_num_format("dd/mm/yyyy");
    for (j, h) in ["Day", "Temperature", "Growth"].iter().enumerate() {
        ws.write_string(0, j as u16, *h).expect("header");
    }
    for i in 0..14u32 {
        // 2026-01-05 is serial 46027 (1900 system; common practice: arithmetic).
        ws.write_number_with_format(i + 1, 0, 46027.0 + f64::from(i * 3), &date).expect("date");
        ws.write_number(i + 1, 1, 15.0 + f64::from(i % 5) * 1.3).expect("temperature");
        ws.write_number(i + 1, 2, 2.0 + 0.1 * f64::from(i) + 0.2 * f64::from(i % 3)).expect("growth");
    }
    ws.write_string(1, 5, "#linear(Growth, Day + Temperature, name=dated)").expect("request");
    wb.save(path).expect("save");
}

/// The width a heading needs on one line, in digit widths: bold text is
/// about a tenth wider than digits, plus room beside it (from memory).
fn heading_width(t: &str) -> f64 {
    t.chars().count() as f64 * 1.1 + 1.0
}

fn check_sheet(s: &Sheet, faults: &mut Vec<String>) {
    let width = |c: u32| s.widths.get(&c).copied().unwrap_or(8.43);
    for (&(r, c), cell) in &s.cells {
        let at = format!("{}!{}", s.name, plumb::cells::CellAddress::new("", r, c).local());
        let Some(chars) = shown_chars(cell) else { continue };
        match (&cell.content, cell.style) {
            (Content::Text(t), Style::Header) if heading_width(t) > width(c) => faults.push(format!("{at}: heading {t:?} is cut off at width {}", width(c))),
            (Content::Text(t), Style::Label | Style::Wrap) => {
                let lines = wrapped_lines(t, width(c), cell.style);
                let h = s.heights.get(&r).copied().unwrap_or(line_height());
                if h < lines as f64 * line_height() {
                    faults.push(format!("{at}: {lines} lines of wrapped text in a row {h} points tall"));
                }
                if lines > 1 && !s.heights.contains_key(&r) {
                    faults.push(format!("{at}: wrapped text without a row height"));
                }
            }
            (Content::Number(_) | Content::DateTime(..) | Content::Formula(..), _) if chars + 1.0 > width(c) => {
                faults.push(format!("{at}: a number {chars} characters wide in a column {} wide (would show ###)", width(c)))
            }
            _ => {}
        }
    }
    if !s.print.fit_width {
        faults.push(format!("{}: does not print fitted to the page width", s.name));
    }
    if let Some((r, _)) = s.freeze {
        if r > 0 && s.print.repeat_rows != Some((0, r - 1)) {
            faults.push(format!("{}: frozen rows are not repeated on printed pages", s.name));
        }
    }
}

fn check_book(book: &Book) {
    let mut faults = Vec::new();
    for s in &book.sheets {
        check_sheet(s, &mut faults);
    }
    assert!(faults.is_empty(), "{} faults:\n{}", faults.len(), faults.join("\n"));
}

#[test]
fn the_demo_reads_well() {
    let book = read_workbook(&demo()).expect("demo");
    let laid = laid_out(&book, "greenhouse.xlsx");
    check_book(&laid);
    // The Guide's explanations wrap, each row as tall as its lines.
    let guide = laid.sheets.iter().find(|s| s.name == "Guide").expect("Guide");
    assert!(guide.heights.len() > 20, "Guide rows with heights: {}", guide.heights.len());
    // The calculator of the fit of Light (values with one decimal) starts
    // at the mean rounded to one decimal, not 11.9950980392157.
    let ints = laid.sheets.iter().find(|s| s.name == "Intervals").expect("Intervals");
    let inputs: Vec<f64> = ints.cells.values().filter(|c| c.style == Style::Input).filter_map(|c| if let Content::Number(x) = c.content { Some(x) } else { None }).collect();
    assert!(!inputs.is_empty());
    for x in inputs {
        assert!(format!("{x}").split_once('.').map(|(_, f)| f.len()).unwrap_or(0) <= 2, "input {x} has more decimals than its data");
    }
}

#[test]
fn a_date_input_shows_as_a_date_and_the_written_file_keeps_heights_and_print_setup() {
    let dir = scratch("readable-dated");
    let input = dir.join("dated.xlsx");
    dated_workbook(&input);
    let book = read_workbook(&input).expect("read");
    let laid = laid_out(&book, "dated.xlsx");
    check_book(&laid);
    let ints = laid.sheets.iter().find(|s| s.name == "Intervals").expect("Intervals");
    let inputs: Vec<&Content> = ints.cells.values().filter(|c| c.style == Style::Input).map(|c| &c.content).collect();
    // Day: the mean of 46027 + 3i, i < 14, is 46046.5, a date rounded to a whole day.
    assert!(inputs.iter().any(|c| matches!(c, Content::DateTime(x, DateKind::Date) if *x == 46047.0 || *x == 46046.0)), "{inputs:?}");
    // Temperature: one decimal, as in the data.
    assert!(inputs.iter().any(|c| matches!(c, Content::Number(x) if format!("{x}").split_once('.').is_none_or(|(_, f)| f.len() <= 1))), "{inputs:?}");

    let out = dir.join("dated.fitted.xlsx");
    run_to(&input, &out);
    let guide = sheet_xml(&out, "Guide");
    assert!(guide.contains("customHeight=\"1\""), "the Guide's rows carry their heights");
    let coef = sheet_xml(&out, "Coefficients");
    assert!(attributes(&coef, "fitToHeight").iter().any(|v| v == "0"), "printed one page wide");
    let workbook = parts(&out, "xl/workbook.xml").into_iter().map(|p| p.1).collect::<String>();
    assert!(workbook.contains("_xlnm.Print_Titles"), "header rows repeat on printed pages");
}
