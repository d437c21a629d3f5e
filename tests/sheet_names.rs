//! Sheet names with spaces, apostrophes, non-Latin letters, the longest
//! allowed length and R1C1-like forms, through the whole tool, in every
//! place plumb writes a sheet name: chart ranges, internal links, formulas,
//! drop-down lists, the per-row columns and messages. Each output is read
//! back (its zip parts and calamine) and every reference checked to
//! resolve to a sheet and cells that hold what it promises.
//!
//! Also here: requests that name their columns by sheet-qualified ranges
//! (the README's `#linear(Data!F2:F105, Data!C2:C105)`), which once lost the
//! whole output, and a part the output format cannot hold (a calculator
//! whose formula would carry a text longer than a formula may), which costs
//! that part alone.

mod common;

use calamine::{open_workbook_auto, Data, Reader};
use common::output::{self, attributes, cell_index, elements, num, parts, sheet_xml, split_reference, text};
use common::run::{run_to, scratch};
use common::workbooks::{minimal_ods, pinned_workbook, LONG_SHEET_NAME};
use plumb::report::Status;
use rust_xlsxwriter::Formula;
use std::collections::HashMap;
use std::path::Path;

/// The data sheets of the test workbook: a space, apostrophes, Greek,
/// Cyrillic, CJK, 31 characters, and a name a reader could take for an
/// R1C1 cell.
const DATA_SHEETS: [&str; 7] = ["Bay readings", "O'Brien's plots", "Μετρήσεις θερμοκηπίου", "Данные теплицы", "温室のデータ", LONG_SHEET_NAME, "R1C1"];

/// Levels of the text column: a comma (so a drop-down list cannot hold them
/// as typed), an apostrophe and double quotes.
const LEVELS: [&str; 3] = ["East", "north, upper", "O'Hara \"old\" bay"];

/// Rows of data per sheet.
const N: u32 = 12;

/// x, y and the level of row `i` (1-based) on sheet `k`: y = 2 + 0.5x +
/// level effect + a small deterministic wobble (invented data).
fn row(k: usize, i: u32) -> (f64, f64, &'static str) {
    let x = f64::from(i);
    let g = (i as usize + k) % 3;
    let wobble = f64::from((i * 37 + k as u32 * 11) % 7) / 10.0 - 0.3;
    (x, 2.0 + 0.5 * x + [0.0, 1.5, -0.75][g] + wobble, LEVELS[g])
}

/// A1 reference of one data column on sheet `s`, rows 2–13.
fn col_range(s: &str, col: &str) -> String {
    format!("{}!{col}2:{col}{}", plumb::cells::quote_sheet_name(s), N + 1)
}

/// Writes the test workbook: each data sheet holds x, y, g in A–C and
/// requests in E; sheets named Fits, Charts and Intervals push plumb's own
/// sheets to other names; a sheet of formulas reads the others.
fn build(path: &Path) {
    let mut wb = pinned_workbook();
    for (k, name) in DATA_SHEETS.iter().enumerate() {
        let ws = wb.add_worksheet();
        ws.set_name(*name).unwrap();
        for (c, h) in ["x", "y", "g"].iter().enumerate() {
            ws.write_string(0, c as u16, *h).unwrap();
        }
        for i in 1..=N {
            let (x, y, g) = row(k, i);
            ws.write_number(i, 0, x).unwrap();
            ws.write_number(i, 1, y).unwrap();
            ws.write_string(i, 2, g).unwrap();
        }
        let fit = format!("fit{k}");
        ws.write_string(1, 4, format!("#linear(y, x + g, name={fit})")).unwrap();
        ws.write_string(2, 4, format!("#predict({fit}, x=4, g=\"north, upper\")")).unwrap();
        // Columns by sheet-qualified ranges, as the README shows.
        ws.write_string(3, 4, format!("#linear({}, {}, name=ranges{k})", col_range(name, "B"), col_range(name, "A"))).unwrap();
        // A request that fails: its message must name the cell on this sheet.
        ws.write_string(4, 4, "#linear(y, nosuch)").unwrap();
    }
    let ws = wb.add_worksheet();
    ws.set_name("Fits").unwrap();
    // table= naming a table on another sheet by a quoted name.
    ws.write_string(0, 0, format!("#linear(y, x, table={}!A1:C{}, name=elsewhere)", plumb::cells::quote_sheet_name(DATA_SHEETS[1]), N + 1)).unwrap();
    for (c, name) in DATA_SHEETS.iter().enumerate() {
        let f = format!("=SUM({})", col_range(name, "A"));
        ws.write_formula(2, c as u16, Formula::new(&f).set_result("78")).unwrap();
    }
    wb.add_worksheet().set_name("Charts").unwrap().write_string(0, 0, "the user's own sheet called Charts").unwrap();
    wb.add_worksheet().set_name("Intervals").unwrap().write_string(0, 0, "the user's own sheet called Intervals").unwrap();
    wb.save(path).unwrap();
}

/// Every cell of every sheet of the output, by sheet name.
fn all_cells(path: &Path) -> HashMap<String, HashMap<(u32, u32), Data>> {
    output::sheet_names(path).into_iter().map(|n| (n.clone(), output::sheet(path, &n).into_iter().map(|(r, c, d)| ((r, c), d)).collect())).collect()
}

/// The cells of `sheet` in the A1 range `cells` (one cell or a rectangle).
fn cells_of(book: &HashMap<String, HashMap<(u32, u32), Data>>, sheet: &str, cells: &str) -> Vec<Option<Data>> {
    let g = book.get(sheet).unwrap_or_else(|| panic!("the reference names the sheet {sheet:?}, which the output does not have"));
    let (a, b) = cells.split_once(':').unwrap_or((cells, cells));
    let ((r0, c0), (r1, c1)) = (cell_index(a).unwrap(), cell_index(b).unwrap());
    (r0..=r1).flat_map(|r| (c0..=c1).map(move |c| (r, c))).map(|k| g.get(&k).cloned()).collect()
}

#[test]
fn every_sheet_name_written_resolves() {
    let d = scratch("sheet-names");
    let input = d.join("names.xlsx");
    build(&input);
    let out = d.join("names.fitted.xlsx");
    let s = run_to(&input, &out);
    let book = all_cells(&out);

    // Every request but the four meant to fail fitted; the sheet names survive.
    let failed: Vec<String> = s.reports.iter().filter(|r| r.status == Status::Error).map(|r| r.cell.to_string()).collect();
    assert_eq!(failed.len(), DATA_SHEETS.len(), "only the nosuch requests fail: {failed:?}\n{:#?}", s.report_lines());
    let names = output::sheet_names(&out);
    for n in DATA_SHEETS.iter().chain(&["Fits", "Charts", "Intervals"]) {
        assert!(names.iter().any(|x| x == n), "sheet {n} kept: {names:?}");
    }
    for n in ["Fits (plumb)", "Charts (plumb)", "Intervals (plumb)", "Coefficients"] {
        assert!(names.iter().any(|x| x == n), "result sheet {n}: {names:?}");
    }

    // Messages name the failing cell with its sheet quoted as in a formula.
    for (k, name) in DATA_SHEETS.iter().enumerate() {
        let at = format!("{}!E5", plumb::cells::quote_sheet_name(name));
        let p = s.problems.iter().find(|p| p.cell.as_ref().map(|c| c.to_string()) == Some(at.clone())).unwrap_or_else(|| panic!("no problem at {at}"));
        assert!(format!("{p}").contains(&at), "{p}");
        assert!(p.message.contains("nosuch"), "sheet {k}: {}", p.message);
    }
    assert!(s.problems.iter().any(|p| format!("{p}").contains("'O''Brien''s plots'!E5")));

    // Chart ranges: every series reads numbers on a sheet of the output, and
    // every title and axis name is text, not a reference.
    let charts = parts(&out, "xl/charts/chart");
    assert_eq!(charts.len(), 3 * (2 * DATA_SHEETS.len() + 1), "three charts per fit");
    for (part, xml) in &charts {
        let refs = elements(xml, "<c:f>", "</c:f>");
        assert!(!refs.is_empty(), "{part} reads no cells");
        for r in refs {
            let (sheet, cells) = split_reference(&r).unwrap_or_else(|| panic!("{part}: {r} names no sheet"));
            assert_eq!(sheet, "Charts (plumb)", "{part}: {r}");
            let vals = cells_of(&book, &sheet, &cells);
            assert!(vals.len() >= 2 && vals.iter().all(|v| v.as_ref().and_then(num).is_some()), "{part}: {r} holds {vals:?}");
        }
        assert!(!xml.contains("<c:strRef>"), "{part}: a title or name is a cell reference");
    }
    // The fit by ranges: its labels are the ranges as typed, shown as text.
    let label = col_range(DATA_SHEETS[1], "B");
    let by_ranges = charts.iter().find(|(_, x)| elements(x, "<a:t>", "</a:t>").iter().any(|t| t.trim_end() == format!("Fitted {label}"))).unwrap_or_else(|| panic!("no chart with the axis name Fitted {label}"));
    assert!(elements(&by_ranges.1, "<a:t>", "</a:t>").iter().any(|t| t.starts_with(&format!("Observed {label}"))), "{:?}", elements(&by_ranges.1, "<a:t>", "</a:t>"));

    // Internal links: each names a sheet of the output and a cell that holds
    // what the link promises (a request cell holds its outcome line; a fit
    // name leads to its first coefficient).
    let mut checked = 0;
    for name in &names {
        let xml = sheet_xml(&out, name);
        for loc in attributes(&xml, "location") {
            let (sheet, cell) = split_reference(&loc).unwrap_or_else(|| panic!("link {loc} on {name} names no sheet"));
            let v = cells_of(&book, &sheet, &cell).pop().flatten().unwrap_or_else(|| panic!("link {loc} on {name} leads to an empty cell"));
            if name == "Fits (plumb)" && DATA_SHEETS.contains(&sheet.as_str()) {
                // A link back to a request cell: the cell shows that request's outcome.
                let (row, col) = cell_index(&cell).unwrap();
                let r = s.reports.iter().find(|r| r.cell.sheet == sheet && (r.cell.row, r.cell.col) == (row, col)).unwrap_or_else(|| panic!("{loc} is no request cell"));
                match &r.host {
                    // One point: the cell holds the predicted value.
                    Some(_) if r.status != Status::Error => assert!(num(&v).is_some(), "{loc}: {v:?}"),
                    _ => assert_eq!(text(&v), Some(plumb::layout::outcome_line(r).as_str()), "{loc}"),
                }
            }
            checked += 1;
        }
    }
    // Each request cell links out, each Fits row links back to its cell.
    assert!(checked >= 2 * s.reports.len(), "{checked} links for {} requests", s.reports.len());

    // The per-row columns sit beside each table, under their headers.
    for name in DATA_SHEETS {
        let g = &book[name];
        let head = (0..20u32).find(|&c| g.get(&(0, c)).and_then(text).is_some_and(|t| t.starts_with("Fitted (fit"))).unwrap_or_else(|| panic!("no Fitted column on {name}"));
        for r in 1..=N {
            assert!(g.get(&(r, head)).and_then(num).is_some(), "{name}: no fitted value in row {}", r + 1);
        }
    }

    // Formulas: the user's formulas over the other sheets come back as typed;
    // the calculators' formulas name no sheet the output lacks.
    let mut wb = open_workbook_auto(&out).unwrap();
    let fs = wb.worksheet_formula("Fits").unwrap();
    for (c, name) in DATA_SHEETS.iter().enumerate() {
        let f = fs.get_value((2, c as u32)).cloned().unwrap_or_default();
        assert_eq!(f, format!("SUM({})", col_range(name, "A")));
    }
    let ints = sheet_xml(&out, "Intervals (plumb)");
    let formulas = elements(&ints, "<f>", "</f>");
    assert!(formulas.iter().any(|f| f.starts_with("TINV(")), "a live calculator");
    // The levels appear in the indicator formulas with their quotes doubled.
    assert!(formulas.iter().any(|f| f.contains("=\"north, upper\",1,0)")), "{formulas:?}");
    assert!(formulas.iter().any(|f| f.contains("=\"O'Hara \"\"old\"\" bay\",1,0)")), "{formulas:?}");
    for f in &formulas {
        assert!(!f.contains('!'), "a calculator formula reads another sheet: {f}");
    }

    // Drop-down lists: a level holds a comma, so each list reads the levels
    // from cells of its own sheet, which hold exactly the levels.
    let lists = elements(&ints, "<formula1>", "</formula1>");
    assert_eq!(lists.len(), DATA_SHEETS.len(), "one list per calculator with a text input");
    for l in &lists {
        let vals: Vec<String> = cells_of(&book, "Intervals (plumb)", l).into_iter().map(|v| v.as_ref().and_then(text).unwrap_or("").to_string()).collect();
        let mut want: Vec<String> = LEVELS.iter().map(|s| s.to_string()).collect();
        want.sort();
        assert_eq!(vals, want, "list {l}");
    }
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_calculator_the_format_cannot_hold_costs_only_the_calculator() {
    // A level of 300 characters: the calculator's indicator formula would
    // hold it as a text constant, longer than the 255 characters a formula's
    // text may have (Excel's specifications and limits; from memory).
    let d = scratch("sheet-names-refused");
    let input = d.join("long.xlsx");
    // Sorted after the base level East, so it has an indicator formula.
    let long_level = format!("West bay {}", "with a very long description ".repeat(11));
    assert!(long_level.chars().count() > 300);
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name("Data").unwrap();
    for (c, h) in ["x", "y", "g"].iter().enumerate() {
        ws.write_string(0, c as u16, *h).unwrap();
    }
    for i in 1..=N {
        let (x, y, _) = row(0, i);
        ws.write_number(i, 0, x).unwrap();
        ws.write_number(i, 1, y).unwrap();
        ws.write_string(i, 2, if i % 2 == 0 { "East" } else { long_level.as_str() }).unwrap();
    }
    ws.write_string(1, 4, "#linear(y, x + g, name=long)").unwrap();
    ws.write_string(2, 4, "#linear(y, x, name=plain)").unwrap();
    wb.save(&input).unwrap();
    let out = d.join("long.fitted.xlsx");
    let s = run_to(&input, &out);

    // The fit with the long level: fitted, with a warning at its cell.
    let long = &s.reports[0];
    assert_ne!(long.status, Status::Error, "{:?}", long.messages);
    assert!(long.messages.iter().any(|m| m.contains("the prediction calculator of long") && m.contains("more than the 255")), "{:?}", long.messages);
    let p = s.problems.iter().find(|p| p.message.contains("prediction calculator of long")).expect("a located problem");
    assert_eq!(p.cell.as_ref().map(|c| c.to_string()).as_deref(), Some("Data!E2"));
    assert_ne!(s.reports[1].status, Status::Error);

    // Everything else is written: both fits' coefficients, the other
    // calculator, the charts; the left-out calculator says why in its place.
    assert_eq!(output::coefficients(&out, "long").len(), 3);
    assert_eq!(output::coefficients(&out, "plain").len(), 2);
    let t = output::table(&out, "Intervals");
    let line = |prefix: &str| t.iter().any(|r| r.first().and_then(text).is_some_and(|x| x.starts_with(prefix)));
    assert!(line("Prediction calculator — plain:"));
    assert!(!line("Prediction calculator — long:"));
    assert!(line("The prediction calculator of long was left out: a formula would hold a text of"));
    assert_eq!(parts(&out, "xl/charts/chart").len(), 6);
    let ints = sheet_xml(&out, "Intervals");
    assert!(elements(&ints, "<f>", "</f>").iter().all(|f| f.len() < 255), "no formula carries the long level");
    // The request cell says there is a warning.
    let data = output::table(&out, "Data");
    assert!(text(&data[1][4]).is_some_and(|x| x.contains("warning") && x.contains("see Fits")), "{:?}", data[1][4]);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn a_sheet_name_too_long_for_xlsx_is_linked_under_its_written_name() {
    // OpenDocument allows sheet names that xlsx does not (longer than 31
    // characters, with `/`); the output shortens them and every link must
    // use the shortened name.
    let d = scratch("sheet-names-ods");
    let long = "Readings from bay 7/north, week 1 to 12";
    let cell = |v: &str| if v.parse::<f64>().is_ok() { format!(r#"<table:table-cell office:value-type="float" office:value="{v}"><text:p>{v}</text:p></table:table-cell>"#) } else { format!(r#"<table:table-cell office:value-type="string"><text:p>{v}</text:p></table:table-cell>"#) };
    let mut rows = format!("<table:table-row>{}{}<table:table-cell/>{}</table:table-row>", cell("x"), cell("y"), cell("#linear(y, x)"));
    for i in 1..=N {
        let (x, y, _) = row(1, i);
        rows.push_str(&format!("<table:table-row>{}{}</table:table-row>", cell(&x.to_string()), cell(&y.to_string())));
    }
    let tables = format!(r#"<table:table table:name="{long}">{rows}</table:table>"#);
    let input = d.join("long-name.ods");
    std::fs::write(&input, minimal_ods("", &tables)).unwrap();
    let out = d.join("long-name.fitted.xlsx");
    let s = run_to(&input, &out);
    assert_ne!(s.reports[0].status, Status::Error, "{:?}", s.reports[0].messages);
    let written = output::sheet_names(&out)[0].clone();
    assert_eq!(written, "Readings from bay 7_north, week");
    // The Fits sheet's link to the request cell uses the written name and
    // leads to the outcome line.
    let fits = sheet_xml(&out, "Fits");
    let loc = attributes(&fits, "location").into_iter().find(|l| l.contains("Readings")).expect("a link to the request cell");
    assert_eq!(split_reference(&loc), Some((written.clone(), "D1".to_string())));
    let t = output::table(&out, &written);
    assert!(text(&t[0][3]).is_some_and(|x| x.contains("linear fit of y, n = 12")), "{:?}", t[0][3]);
    // Messages keep the input's own name.
    assert_eq!(s.reports[0].cell.sheet, long);
    let _ = std::fs::remove_dir_all(&d);
}
