//! The reader against workbooks whose content is known: the every-kind
//! workbook read back cell by cell, hand-built packages for the cases no
//! writer produces (lying dimension records, unknown error values, the 1904
//! date system, OpenDocument, encrypted and foreign compound files), and bad
//! input that must give the right error, never a panic.

mod common;

use std::path::PathBuf;

use common::workbooks::{
    compound_file, every_kind_spec, every_kind_workbook, minimal_ods, minimal_xls, minimal_xlsx, stored_zip,
    write_mixed_table, write_table, Col, Expect, XlsCell, XlsSheet, LONG_SHEET_NAME,
};
use plumb::cells::{CellRange, DateKind, ErrorValue, Grid, Value, Visibility, Workbook};
use plumb::read::{read_workbook, read_workbook_bytes, ReadError, MAX_CELLS};

/// A fresh path in cargo's per-test scratch directory.
fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("read_roundtrip");
    std::fs::create_dir_all(&dir).expect("create scratch dir");
    dir.join(name)
}

fn range(a1: &str) -> CellRange {
    let (a, b) = a1.split_once(':').expect("A1:B2 form");
    let cell = |s: &str| {
        let letters: String = s.chars().take_while(|c| c.is_ascii_alphabetic()).collect();
        let row: u32 = s[letters.len()..].parse().expect("row number");
        (row - 1, plumb::cells::column_index(&letters).expect("column letters"))
    };
    let ((r0, c0), (r1, c1)) = (cell(a), cell(b));
    CellRange { first_row: r0, first_col: c0, last_row: r1, last_col: c1 }
}

fn read_bytes_ok(bytes: &[u8], name: &str) -> Workbook {
    match read_workbook_bytes(bytes, name) {
        Ok(b) => b,
        Err(e) => panic!("{name} should read: {e}"),
    }
}

fn only_sheet(book: &Workbook) -> &Grid {
    assert_eq!(book.sheets.len(), 1);
    &book.sheets[0]
}

/// Whether a damage error came from a caught reader panic (informational).
fn from_panic(e: &ReadError) -> bool {
    use std::error::Error;
    e.source().is_some_and(|s| s.to_string().starts_with("the workbook reader stopped"))
}

#[test]
fn every_kind_workbook_reads_back_cell_for_cell() {
    let path = scratch("every_kind.xlsx");
    every_kind_workbook(&path);
    let book = read_workbook(&path).unwrap_or_else(|e| panic!("{e}"));
    let spec = every_kind_spec();

    let names: Vec<&str> = book.sheets.iter().map(|g| g.name.as_str()).collect();
    let expected_names: Vec<&str> = spec.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, expected_names, "sheet names and order");
    assert_eq!(LONG_SHEET_NAME.chars().count(), 31);

    for (grid, sheet) in book.sheets.iter().zip(&spec) {
        assert_eq!(grid.visibility, sheet.visibility, "visibility of {}", sheet.name);
        let mut expected_cells = 0;
        for c in &sheet.cells {
            let got = grid.value(c.row, c.col);
            assert_eq!(got, c.value.as_value(), "value of {}!{}{}", sheet.name, plumb::cells::column_letters(c.col), c.row + 1);
            assert_eq!(grid.formula(c.row, c.col), c.formula, "formula of {}!r{}c{}", sheet.name, c.row, c.col);
            if c.value != Expect::Empty || c.formula.is_some() {
                expected_cells += 1;
            }
        }
        for (r, title) in &sheet.merged {
            assert_eq!(grid.value(r.first_row, r.first_col), Value::Text(title));
            expected_cells += 1;
        }
        let merged: Vec<CellRange> = sheet.merged.iter().map(|(r, _)| *r).collect();
        assert_eq!(grid.merged, merged, "merged ranges of {}", sheet.name);
        assert_eq!(grid.cells().count(), expected_cells, "no extra cells on {}", sheet.name);
    }

    let omega = book.sheet("Ωmega").expect("sheet Ωmega");
    assert_eq!(omega.extent(), Some(range("C5:E8")), "table at C5 keeps its offset");
    assert_eq!(omega.value(4, 2), Value::Text("Light"));
    assert_eq!(omega.value(0, 0), Value::Empty);
    assert_eq!(book.sheet("Empty").expect("sheet Empty").extent(), None);
    assert!(book.sheet("données").is_some(), "sheet lookup ignores case");

    // The same bytes read from memory give the same workbook.
    let bytes = std::fs::read(&path).expect("read back file");
    let again = read_bytes_ok(&bytes, "every_kind.xlsx");
    assert_eq!(again.sheets.len(), book.sheets.len());
    for (a, b) in again.sheets.iter().zip(&book.sheets) {
        assert_eq!(a.name, b.name);
        assert!(a.cells().eq(b.cells()), "cells of {}", a.name);
    }
}

#[test]
fn every_kind_workbook_is_deterministic() {
    let (a, b) = (scratch("det_a.xlsx"), scratch("det_b.xlsx"));
    every_kind_workbook(&a);
    every_kind_workbook(&b);
    assert_eq!(std::fs::read(&a).expect("a"), std::fs::read(&b).expect("b"));
}

#[test]
fn tables_with_requests_read_back() {
    let path = scratch("table.xlsx");
    let light = vec![Some(8.0), Some(10.0), None, Some(14.0)];
    let yield_ = vec![Some(2.0), Some(2.5), Some(3.1), Some(3.9)];
    write_table(&path, "Data", &["Light", "Yield"], &[light, yield_], &[(1, 8, "#linear(Yield, Light)")]);
    let book = read_workbook(&path).unwrap_or_else(|e| panic!("{e}"));
    let g = only_sheet(&book);
    assert_eq!(g.name, "Data");
    assert_eq!(g.value(0, 0), Value::Text("Light"));
    assert_eq!(g.value(1, 0), Value::Number(8.0));
    assert_eq!(g.value(3, 0), Value::Empty);
    assert_eq!(g.value(4, 1), Value::Number(3.9));
    assert_eq!(g.value(1, 8), Value::Text("#linear(Yield, Light)"));
    assert_eq!(g.extent(), Some(range("A1:I5")));

    let path = scratch("mixed.xlsx");
    let bay = Col::Text(vec![Some("North".into()), None, Some("South".into())]);
    write_mixed_table(&path, "Bay 2", &["Bay", "Yield"], &[bay, Col::Num(vec![Some(1.0), Some(2.0), None])], &[]);
    let book = read_workbook(&path).unwrap_or_else(|e| panic!("{e}"));
    let g = only_sheet(&book);
    assert_eq!(g.name, "Bay 2");
    assert_eq!(g.value(1, 0), Value::Text("North"));
    assert_eq!(g.value(2, 0), Value::Empty);
    assert_eq!(g.value(3, 0), Value::Text("South"));
    assert_eq!(g.value(2, 1), Value::Number(2.0));
    assert_eq!(g.value(3, 1), Value::Empty);
}

#[test]
fn wrong_or_missing_dimension_records_are_survived() {
    let cells = r#"<row r="2"><c r="B2"><v>1.5</v></c><c r="D2" t="inlineStr"><is><t>far</t></is></c></row><row r="4"><c r="C4" t="b"><v>1</v></c></row>"#;
    for dim in [r#"<dimension ref="A1"/>"#, "", r#"<dimension ref="A1:XFD1048576"/>"#, r#"<dimension ref="C3:C3"/>"#] {
        let xlsx = minimal_xlsx(&format!("{dim}<sheetData>{cells}</sheetData>"), false);
        let book = read_bytes_ok(&xlsx, "dims.xlsx");
        let g = only_sheet(&book);
        assert_eq!(g.extent(), Some(range("B2:D4")), "dimension {dim:?}");
        assert_eq!(g.value(1, 1), Value::Number(1.5));
        assert_eq!(g.value(1, 3), Value::Text("far"));
        assert_eq!(g.value(3, 2), Value::Bool(true));
        assert_eq!(g.cells().count(), 3);
    }
}

#[test]
fn formulas_without_cached_values_and_shared_formulas() {
    let sheet = r#"<dimension ref="A1:B3"/><sheetData>
        <row r="1"><c r="A1"><f>SUM(B1:B3)</f></c><c r="B1"><v>1</v></c></row>
        <row r="2"><c r="A2"><f t="shared" ref="A2:A3" si="0">B2*2</f><v>4</v></c><c r="B2"><v>2</v></c></row>
        <row r="3"><c r="A3"><f t="shared" si="0"/><v>6</v></c><c r="B3"><v>3</v></c></row>
        </sheetData>"#;
    let book = read_bytes_ok(&minimal_xlsx(sheet, false), "formulas.xlsx");
    let g = only_sheet(&book);
    assert_eq!(g.formula(0, 0), Some("SUM(B1:B3)"));
    assert_eq!(g.value(0, 0), Value::Empty, "no cached value");
    assert_eq!(g.formula(1, 0), Some("B2*2"));
    assert_eq!(g.value(1, 0), Value::Number(4.0));
    assert_eq!(g.formula(2, 0), Some("B3*2"), "shared formula expanded");
    assert_eq!(g.value(2, 0), Value::Number(6.0));
    assert_eq!(g.cells().count(), 6);
}

#[test]
fn dates_of_the_1904_system_become_1900_serials() {
    // Style 1 carries the built-in date format 14. 44565 days after
    // 1904-01-01 is 2026-01-05, serial 46027 in the 1900 system
    // (ECMA-376 Part 1 §18.17.4.1: the systems differ by 1462 days).
    let sheet = r#"<sheetData><row r="1"><c r="A1" s="1"><v>44565</v></c><c r="B1" s="1"><v>44565.5</v></c><c r="C1"><v>44565</v></c><c r="D1" t="d"><v>2026-01-05T12:00:00</v></c></row></sheetData>"#;
    let g1904 = read_bytes_ok(&minimal_xlsx(sheet, true), "d1904.xlsx");
    let g = only_sheet(&g1904);
    assert_eq!(g.value(0, 0), Value::DateTime(46027.0, DateKind::Date));
    assert_eq!(g.value(0, 1), Value::DateTime(46027.5, DateKind::DateTime));
    assert_eq!(g.value(0, 2), Value::Number(44565.0), "no date format: a number");
    assert_eq!(g.value(0, 3), Value::DateTime(46027.5, DateKind::DateTime), "ISO text is 1900-based already");
    let g1900 = read_bytes_ok(&minimal_xlsx(sheet, false), "d1900.xlsx");
    assert_eq!(only_sheet(&g1900).value(0, 0), Value::DateTime(44565.0, DateKind::Date));
}

#[test]
fn opendocument_values_dates_formulas_and_visibility() {
    let styles = r#"<style:style style:name="ta2" style:family="table"><style:table-properties table:display="false"/></style:style>"#;
    let tables = r#"<table:table table:name="Weekly">
        <table:table-row table:number-rows-repeated="2"><table:table-cell table:number-columns-repeated="5"/></table:table-row>
        <table:table-row><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="string"><text:p>Week</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Yield</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>Ok</text:p></table:table-cell></table:table-row>
        <table:table-row><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="date" office:date-value="2026-01-05"/><table:table-cell office:value-type="float" office:value="3.25"/><table:table-cell office:value-type="boolean" office:boolean-value="true"/></table:table-row>
        <table:table-row><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="date" office:date-value="2026-01-05T06:00:00"/><table:table-cell table:formula="of:=[.D4]*2" office:value-type="float" office:value="6.5"/><table:table-cell office:value-type="time" office:time-value="PT12H00M00S"/></table:table-row>
        <table:table-row><table:table-cell table:number-columns-repeated="2"/><table:table-cell office:value-type="date" office:date-value="1850-06-01"/><table:table-cell table:formula="of:=1/0" office:value-type="string" office:string-value="" calcext:value-type="error"><text:p>#DIV/0!</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>#N/A</text:p></table:table-cell></table:table-row>
        </table:table>
        <table:table table:name="Hidden one" table:style-name="ta2"><table:table-row><table:table-cell office:value-type="float" office:value="1"/></table:table-row></table:table>"#;
    let book = read_bytes_ok(&minimal_ods(styles, tables), "weekly.ods");
    assert_eq!(book.sheets.len(), 2);
    let g = &book.sheets[0];
    assert_eq!(g.name, "Weekly");
    assert_eq!(g.visibility, Visibility::Visible);
    assert_eq!(g.extent(), Some(range("C3:E6")), "offset kept");
    assert_eq!(g.value(2, 2), Value::Text("Week"));
    assert_eq!(g.value(3, 2), Value::DateTime(46027.0, DateKind::Date));
    assert_eq!(g.value(3, 3), Value::Number(3.25));
    assert_eq!(g.value(3, 4), Value::Bool(true));
    assert_eq!(g.value(4, 2), Value::DateTime(46027.25, DateKind::DateTime));
    assert_eq!(g.formula(4, 3), Some("[.D4]*2"), "OpenFormula text without of:=");
    assert_eq!(g.value(4, 3), Value::Number(6.5));
    assert_eq!(g.value(4, 4), Value::DateTime(0.5, DateKind::Time));
    assert_eq!(g.value(5, 2), Value::Text("1850-06-01"), "before 1900: kept as text");
    assert_eq!(g.value(5, 3), Value::Error(ErrorValue::Div0), "formula error result");
    assert_eq!(g.value(5, 4), Value::Text("#N/A"), "plain text stays text");
    let h = &book.sheets[1];
    assert_eq!((h.name.as_str(), h.visibility), ("Hidden one", Visibility::Hidden));
    assert_eq!(h.value(0, 0), Value::Number(1.0));
}

#[test]
fn unknown_error_values_name_the_sheet() {
    let sheet = r#"<sheetData><row r="1"><c r="A1" t="e"><f>SEQUENCE(3)</f><v>#SPILL!</v></c></row></sheetData>"#;
    match read_workbook_bytes(&minimal_xlsx(sheet, false), "spill.xlsx") {
        Err(e @ ReadError::Sheet { .. }) => {
            let msg = e.to_string();
            assert!(msg.contains("spill.xlsx") && msg.contains("'Data'") && msg.contains("#SPILL!"), "{msg}");
        }
        other => panic!("expected a sheet error, got {other:?}"),
    }
}

#[test]
fn oversized_sheets_are_refused_with_their_extent() {
    let sheet = r#"<dimension ref="A1:XFD1048576"/><sheetData><row r="1"><c r="A1"><v>1</v></c></row><row r="1048576"><c r="XFD1048576"><v>2</v></c></row></sheetData>"#;
    match read_workbook_bytes(&minimal_xlsx(sheet, false), "huge.xlsx") {
        Err(e @ ReadError::TooLarge { .. }) => {
            let msg = e.to_string();
            assert!(msg.contains("'Data'") && msg.contains("A1:XFD1048576"), "{msg}");
            assert!(msg.contains("50,000,000") && MAX_CELLS == 50_000_000, "{msg}");
        }
        other => panic!("expected TooLarge, got {other:?}"),
    }
}

#[test]
fn damaged_sheet_content_is_a_sheet_error() {
    let full = r#"<dimension ref="A1:A2"/><sheetData><row r="1"><c r="A1"><v>1</v></c></row><row r="2"><c r="A2"><v>2</v></c></row></sheetData>"#;
    for cut in [20, 60, 90] {
        let xlsx = minimal_xlsx(&full[..cut], false);
        match read_workbook_bytes(&xlsx, "cut.xlsx") {
            Err(ReadError::Sheet { sheet, .. }) => assert_eq!(sheet, "Data"),
            Err(e) => panic!("cut at {cut}: expected a sheet error, got {e:?}"),
            Ok(_) => panic!("cut at {cut}: a cut sheet must not read"),
        }
    }
}

#[test]
fn truncated_workbooks_are_damaged_never_a_panic() {
    let path = scratch("to_truncate.xlsx");
    every_kind_workbook(&path);
    let bytes = std::fs::read(&path).expect("read file");
    let mut panics = 0;
    for len in (0..bytes.len()).step_by(97) {
        match read_workbook_bytes(&bytes[..len], "cut.xlsx") {
            Ok(_) => panic!("a workbook cut to {len} of {} bytes must not read", bytes.len()),
            Err(ReadError::NotAWorkbook { .. }) => assert!(len < 4, "prefix of {len} bytes"),
            Err(e @ ReadError::Damaged { .. }) => {
                panics += usize::from(from_panic(&e));
                let msg = e.to_string();
                assert!(msg.contains("cut.xlsx") && msg.contains("truncated or damaged"), "{msg}");
            }
            Err(e) => panic!("prefix of {len} bytes: unexpected {e:?}"),
        }
    }
    println!("truncation: {panics} reader panics caught");
}

#[test]
fn bad_inputs_give_the_right_error() {
    let not_workbook = |bytes: &[u8], name: &str, found: &str| match read_workbook_bytes(bytes, name) {
        Err(e @ ReadError::NotAWorkbook { .. }) => {
            let msg = e.to_string();
            assert!(msg.contains(name) && msg.contains(found) && msg.contains("xlsx, xlsm, xlsb, xls or ods"), "{msg}");
        }
        other => panic!("{name}: expected NotAWorkbook, got {other:?}"),
    };
    not_workbook(b"", "empty.xlsx", "empty file");
    not_workbook(b"Bay,Light,Yield\nNorth,12,3.1\n", "data.csv", "text file");
    not_workbook(b"<html><table><tr><td>1</td></tr></table></html>", "saved.xls", "XML or HTML");
    let foreign_zip = stored_zip(&[("readme.txt", b"hello"), ("data/values.bin", &[1, 2, 3])]);
    not_workbook(&foreign_zip, "archive.xlsx", "zip archive that holds no workbook");
    not_workbook(&stored_zip(&[]), "empty-zip.xlsx", "zip archive");
    not_workbook(&compound_file(&[("WordDocument", &[])]), "letter.xls", "compound document");

    match read_workbook_bytes(&compound_file(&[("EncryptionInfo", &[]), ("EncryptedPackage", &[])]), "locked.xlsx") {
        Err(e @ ReadError::PasswordProtected { .. }) => {
            assert!(e.to_string().contains("locked.xlsx is password-protected"), "{e}");
        }
        other => panic!("expected PasswordProtected, got {other:?}"),
    }

    // Random bytes, alone and behind each format's magic number.
    let mut state = 0x5EED_u64;
    let mut next = || {
        // SplitMix64 (Steele, Lea & Flood 2014; constants from memory).
        state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    };
    let mut panics = 0;
    for round in 0..60 {
        let len = 1 + (next() % 6000) as usize;
        let mut bytes: Vec<u8> = (0..len).map(|_| next() as u8).collect();
        let prefix: &[u8] = match round % 3 {
            0 => &[],
            1 => b"PK\x03\x04",
            _ => &[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1],
        };
        bytes.splice(0..0, prefix.iter().copied());
        match read_workbook_bytes(&bytes, "noise.bin") {
            Ok(_) => panic!("random bytes (round {round}) must not read as a workbook"),
            Err(e @ ReadError::Damaged { .. }) => panics += usize::from(from_panic(&e)),
            Err(ReadError::NotAWorkbook { .. }) => {}
            Err(e) => panic!("round {round}: unexpected {e:?}"),
        }
    }
    println!("noise: {panics} reader panics caught");

    // A valid compound-file header over garbage sectors.
    let mut cfb = compound_file(&[("Workbook", &[])]);
    cfb[48..52].copy_from_slice(&7u32.to_le_bytes()); // directory beyond the end
    assert!(read_workbook_bytes(&cfb, "broken.xls").is_err());
}

#[test]
fn files_that_cannot_be_opened() {
    let missing = scratch("no such file.xlsx");
    match read_workbook(&missing) {
        Err(e @ ReadError::Io { .. }) => {
            let msg = e.to_string();
            assert!(msg.contains("no such file.xlsx") && msg.contains("no such file; check the path"), "{msg}");
            assert!(std::error::Error::source(&e).is_some());
        }
        other => panic!("expected Io, got {other:?}"),
    }
    let text = scratch("notes.xlsx");
    std::fs::write(&text, "just some notes\n").expect("write text file");
    assert!(matches!(read_workbook(&text), Err(ReadError::NotAWorkbook { .. })));
    let empty = scratch("empty.ods");
    std::fs::write(&empty, b"").expect("write empty file");
    assert!(matches!(read_workbook(&empty), Err(ReadError::NotAWorkbook { found, .. }) if found.contains("empty")));
}

#[test]
fn the_demo_workbook_reads_as_described() {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("demo-data/greenhouse.xlsx");
    let book = read_workbook(&path).unwrap_or_else(|e| panic!("{e} (regenerate with `cargo run --example make_demo`)"));
    let names: Vec<&str> = book.sheets.iter().map(|g| g.name.as_str()).collect();
    assert_eq!(names, ["Weekly", "Plan", "Drying", "Notes"]);
    let g = &book.sheets[0];
    for (j, h) in ["Week", "Bay", "Light", "CO2", "Irrigation", "Yield"].iter().enumerate() {
        assert_eq!(g.value(0, j as u32), Value::Text(h));
    }
    let rows = 104;
    let bays = ["North", "South", "East", "West"];
    let mut blanks = 0;
    for i in 0..rows {
        let r = i + 1;
        // Weekly from 2026-01-05, serial 46027 (from memory: 2025-01-01 is 45658).
        assert_eq!(g.value(r, 0), Value::DateTime(46027.0 + 7.0 * f64::from(i / 4), DateKind::Date), "week of row {r}");
        assert_eq!(g.value(r, 1), Value::Text(bays[(i % 4) as usize]));
        for (col, lo, hi) in [(2, 8.0, 16.0), (3, 400.0, 1200.0), (4, 0.0, 100.0), (5, 0.0, 10.0)] {
            match g.value(r, col) {
                Value::Number(x) => assert!((lo..=hi).contains(&x), "row {r} col {col}: {x}"),
                Value::Empty if col < 5 => blanks += 1,
                other => panic!("row {r} col {col}: {other:?}"),
            }
        }
        for col in 6..13 {
            assert_eq!(g.value(r, col), Value::Empty, "gap columns G..M stay empty");
        }
    }
    assert_eq!(g.value(rows + 1, 0), Value::Empty);
    assert!((3..=4).contains(&blanks), "{blanks} blank predictor cells");
    assert!(matches!(g.value(0, 13), Value::Text(t) if t.starts_with("Requests")));
    let requests: Vec<Value> = (1..=5).map(|r| g.value(r, 13)).collect();
    assert_eq!(
        requests,
        [
            Value::Text("#linear(Yield, Light)"),
            Value::Text("#linear(Yield, Light + CO2 + Irrigation, name=main)"),
            Value::Text("#linear(Yield, Light + CO2 + Bay, against(Bay=\"East\"), name=bays)"),
            Value::Text("#linear(Yield, Light + Light^2 + CO2, name=curved)"),
            Value::Text("#linear(Yield, Ligth + CO2)"),
        ]
    );
    // The Drying sheet: hours 0 to 24 after watering with a moisture each
    // (% by volume, invented between 12 and 46), and its two requests.
    let d = &book.sheets[2];
    assert_eq!((d.value(0, 0), d.value(0, 1)), (Value::Text("Hours"), Value::Text("Moisture")));
    for h in 0..=24u32 {
        assert_eq!(d.value(h + 1, 0), Value::Number(f64::from(h)));
        assert!(matches!(d.value(h + 1, 1), Value::Number(x) if (10.0..=48.0).contains(&x)), "moisture at hour {h}");
    }
    assert_eq!(d.value(26, 0), Value::Empty);
    assert!(matches!(d.value(1, 3), Value::Text(t) if t.starts_with("#nonlinear(Moisture, a*exp(-k*Hours) + c")));
    assert_eq!(d.value(2, 3), Value::Text("#predict(drying, Hours=10)"));
    assert!(book.sheets[3].cells().count() >= 3, "a few lines of notes");
}

#[test]
fn the_format_is_told_from_the_content_not_the_name() {
    let xlsx = minimal_xlsx(r#"<sheetData><row r="1"><c r="A1"><v>2.5</v></c></row></sheetData>"#, false);
    let ods = minimal_ods("", r#"<table:table table:name="T"><table:table-row><table:table-cell office:value-type="float" office:value="2.5"/></table:table-row></table:table>"#);
    for (bytes, name) in [(&xlsx, "book.ods"), (&xlsx, "book.xlsb"), (&xlsx, "book"), (&ods, "book.xlsx"), (&ods, "book.xls"), (&ods, "noext")] {
        let book = read_bytes_ok(bytes, name);
        assert_eq!(only_sheet(&book).value(0, 0), Value::Number(2.5), "{name}");
    }
    // A directory is not a file to read.
    let dir = scratch("a folder.xlsx");
    std::fs::create_dir_all(&dir).expect("create folder");
    match read_workbook(&dir) {
        Err(e @ ReadError::Io { .. }) => assert!(e.to_string().contains("a folder.xlsx"), "{e}"),
        other => panic!("expected Io, got {other:?}"),
    }
}

#[test]
fn xls_values_offsets_formulas_merges_and_visibility() {
    let data = XlsSheet {
        name: "Data",
        state: 0,
        cells: vec![
            (4, 2, XlsCell::Label("Light")),
            (4, 3, XlsCell::Label("Week")),
            (5, 2, XlsCell::Number { x: 12.5, date: false }),
            (5, 3, XlsCell::Number { x: 46027.0, date: true }),
            (6, 2, XlsCell::Bool(true)),
            (6, 3, XlsCell::Error(0x2A)),
            (7, 2, XlsCell::Formula { cached: 3.0, rgce: vec![0x1E, 1, 0, 0x1E, 2, 0, 0x03] }),
            (7, 3, XlsCell::Error(0x07)),
        ],
        merged: vec![(4, 4, 4, 5)],
    };
    let hidden = XlsSheet { name: "Kept aside", state: 1, cells: vec![(0, 0, XlsCell::Number { x: 1.0, date: false })], merged: vec![] };
    let book = read_bytes_ok(&minimal_xls(&[data, hidden], false), "old.xls");
    assert_eq!(book.sheets.len(), 2);
    let g = &book.sheets[0];
    assert_eq!((g.name.as_str(), g.visibility), ("Data", Visibility::Visible));
    assert_eq!(g.extent(), Some(range("C5:D8")), "offset kept");
    assert_eq!(g.value(4, 2), Value::Text("Light"));
    assert_eq!(g.value(5, 2), Value::Number(12.5));
    assert_eq!(g.value(5, 3), Value::DateTime(46027.0, DateKind::Date));
    assert_eq!(g.value(6, 2), Value::Bool(true));
    assert_eq!(g.value(6, 3), Value::Error(ErrorValue::NotAvailable));
    assert_eq!(g.value(7, 2), Value::Number(3.0));
    assert_eq!(g.formula(7, 2), Some("1+2"));
    assert_eq!(g.value(7, 3), Value::Error(ErrorValue::Div0));
    assert_eq!(g.merged, vec![range("E5:F5")]);
    assert_eq!(g.cells().count(), 8);
    let h = &book.sheets[1];
    assert_eq!((h.name.as_str(), h.visibility), ("Kept aside", Visibility::Hidden));

    // In a 1904-system workbook the same date is stored 1462 days lower
    // (ECMA-376 Part 1 §18.17.4.1; [MS-XLS] §2.4.77 DateMode).
    let d1904 = XlsSheet { name: "D", state: 0, cells: vec![(0, 0, XlsCell::Number { x: 44565.0, date: true })], merged: vec![] };
    let book = read_bytes_ok(&minimal_xls(&[d1904], true), "d1904.xls");
    assert_eq!(only_sheet(&book).value(0, 0), Value::DateTime(46027.0, DateKind::Date));
}

#[test]
fn xls_sheets_spanning_too_much_are_refused_before_reading() {
    // Columns beyond the format's 256 make a rectangle of 65,536 × 65,536
    // cells, which calamine would allocate densely.
    let far = XlsSheet {
        name: "Far",
        state: 0,
        cells: vec![(0, 0, XlsCell::Number { x: 1.0, date: false }), (65535, 65535, XlsCell::Number { x: 2.0, date: false })],
        merged: vec![],
    };
    match read_workbook_bytes(&minimal_xls(&[far], false), "far.xls") {
        Err(e @ ReadError::TooLarge { .. }) => {
            let msg = e.to_string();
            assert!(msg.contains("'Far'") && msg.contains("A1:CRXP65536"), "{msg}");
        }
        other => panic!("expected TooLarge, got {other:?}"),
    }
}

#[test]
fn a_reader_panic_becomes_damage() {
    // A BoundSheet8 record ([MS-XLS] §2.4.28) cut to 4 bytes: calamine 0.38
    // indexes past its end and panics.
    let mut stream = Vec::new();
    for (typ, data) in [(0x0809u16, vec![0, 6, 5, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0]), (0x0085, vec![0; 4]), (0x000A, vec![])] {
        stream.extend_from_slice(&typ.to_le_bytes());
        stream.extend_from_slice(&(data.len() as u16).to_le_bytes());
        stream.extend_from_slice(&data);
    }
    stream.resize(4096, 0);
    match read_workbook_bytes(&compound_file(&[("Workbook", &stream)]), "short.xls") {
        Err(e @ ReadError::Damaged { .. }) => assert!(from_panic(&e), "{e}: {:?}", std::error::Error::source(&e)),
        other => panic!("expected Damaged, got {other:?}"),
    }
}

#[test]
fn a_formula_without_a_stored_result_reads_apart_from_one_whose_result_is_empty_text() {
    // xlsx: B1 has no <v> (as programs that write formulas without computing
    // them save it); C1 and E1 hold an empty text result, D1 a text result.
    let xml = r#"<sheetData><row r="1"><c r="A1"><v>1</v></c><c r="B1"><f>A1*2</f></c><c r="C1" t="str"><f>""</f><v></v></c><c r="D1" t="str"><f>"a"</f><v>a</v></c><c r="E1" t="str"><f>""</f><v/></c></row></sheetData>"#;
    let book = read_bytes_ok(&minimal_xlsx(xml, false), "uncomputed.xlsx");
    let g = &book.sheets[0];
    assert_eq!((g.value(0, 1), g.formula(0, 1)), (Value::Empty, Some("A1*2")));
    assert_eq!(g.value(0, 2), Value::Text(""));
    assert_eq!(g.value(0, 3), Value::Text("a"));
    assert_eq!(g.value(0, 4), Value::Text(""));
    assert_eq!((0..5).filter(|&c| g.is_uncomputed(0, c)).collect::<Vec<_>>(), vec![1]);
    assert_eq!(g.uncomputed().collect::<Vec<_>>(), vec![(0, 1)]);
    // ods: a formula cell without office:value against ones with an empty string result.
    let t = r#"<table:table table:name="Data"><table:table-row><table:table-cell office:value-type="float" office:value="1"><text:p>1</text:p></table:table-cell><table:table-cell table:formula="of:=[.A1]*2"/><table:table-cell table:formula="of:=&quot;&quot;" office:value-type="string" office:string-value=""/><table:table-cell table:formula="of:=&quot;&quot;" office:value-type="string"><text:p/></table:table-cell></table:table-row></table:table>"#;
    let book = read_bytes_ok(&minimal_ods("", t), "uncomputed.ods");
    let g = &book.sheets[0];
    assert_eq!(g.uncomputed().collect::<Vec<_>>(), vec![(0, 1)]);
    assert_eq!((g.value(0, 2), g.value(0, 3)), (Value::Text(""), Value::Text("")));
    // xls: a formula record always carries its result.
    let xls = XlsSheet { name: "Data", state: 0, cells: vec![(0, 0, XlsCell::Formula { cached: 3.0, rgce: vec![0x1E, 1, 0, 0x1E, 2, 0, 0x03] })], merged: vec![] };
    let book = read_bytes_ok(&minimal_xls(&[xls], false), "computed.xls");
    assert_eq!(book.sheets[0].uncomputed().count(), 0);
    assert!(book.sheets[0].formula(0, 0).is_some());
}
