//! Test workbooks written with rust_xlsxwriter: one with every value kind
//! and sheet-name oddity the reader must keep ([`every_kind_workbook`], its
//! contents listed by [`every_kind_spec`] so tests can compare cell by cell),
//! and plain tables with request cells ([`write_table`], [`write_mixed_table`])
//! for the fitting tests. Every such workbook's creation time is pinned, so
//! the same call writes the same bytes.
//!
//! Below those, hand-built packages for what no workbook writer here
//! produces: stored zips ([`stored_zip`]) holding minimal xlsx
//! ([`minimal_xlsx`]) and OpenDocument ([`minimal_ods`]) parts, and OLE
//! compound files ([`compound_file`]) holding BIFF8 xls workbooks
//! ([`minimal_xls`]) or just stream names (encrypted packages, foreign
//! documents).

use std::path::Path;

use plumb::cells::{CellRange, DateKind, ErrorValue, Value, Visibility};
use rust_xlsxwriter::{DocProperties, ExcelDateTime, Format, Formula, Workbook, Worksheet};

/// How a spec cell is put into the workbook.
#[derive(Debug, Clone)]
pub enum Write {
    /// `write_number`.
    Number(f64),
    /// `write_string` (an empty string writes nothing).
    Text(String),
    /// `write_boolean`.
    Bool(bool),
    /// `write_datetime_with_format` of a date `(y, m, d)` and time
    /// `(h, m, s)` with a number format.
    DateTime { date: Option<(u16, u8, u8)>, time: (u16, u8, f64), format: &'static str },
    /// `write_number_with_format`: a number shown with a date/time format.
    FormattedNumber { x: f64, format: &'static str },
    /// `write_formula` of `Formula::new(formula).set_result(result)`; an
    /// empty `result` leaves the sheet's default result.
    Formula { formula: &'static str, result: &'static str },
}

/// A value as it must read back; owned so the spec can hold long text.
#[derive(Debug, Clone, PartialEq)]
pub enum Expect {
    /// No value.
    Empty,
    /// A number.
    Number(f64),
    /// Text.
    Text(String),
    /// A boolean.
    Bool(bool),
    /// A 1900-system serial and its kind.
    DateTime(f64, DateKind),
    /// An error value.
    Error(ErrorValue),
}

impl Expect {
    /// The expectation as a borrowed cell value, to compare with `Grid::value`.
    pub fn as_value(&self) -> Value<'_> {
        match self {
            Expect::Empty => Value::Empty,
            Expect::Number(x) => Value::Number(*x),
            Expect::Text(t) => Value::Text(t),
            Expect::Bool(b) => Value::Bool(*b),
            Expect::DateTime(x, k) => Value::DateTime(*x, *k),
            Expect::Error(e) => Value::Error(*e),
        }
    }
}

/// One cell of the every-kind workbook: what is written where, and what must
/// read back (value, and formula text without `=`).
#[derive(Debug, Clone)]
pub struct SpecCell {
    /// Zero-based row.
    pub row: u32,
    /// Zero-based column.
    pub col: u32,
    /// What is written.
    pub write: Write,
    /// The value that must read back.
    pub value: Expect,
    /// The formula text that must read back.
    pub formula: Option<&'static str>,
}

/// One sheet of the every-kind workbook.
#[derive(Debug, Clone)]
pub struct SheetSpec {
    /// Sheet name.
    pub name: String,
    /// Visibility to set.
    pub visibility: Visibility,
    /// Cells, each written once.
    pub cells: Vec<SpecCell>,
    /// Merged ranges: range and the text written into it.
    pub merged: Vec<(CellRange, &'static str)>,
    /// The formula result used when a formula is written without one
    /// (`Worksheet::set_formula_result_default`); `None` keeps the crate's "0".
    pub default_result: Option<&'static str>,
}

fn cell(row: u32, col: u32, write: Write, value: Expect) -> SpecCell {
    SpecCell { row, col, write, value, formula: None }
}

fn num(row: u32, col: u32, x: f64) -> SpecCell {
    cell(row, col, Write::Number(x), Expect::Number(x))
}

fn text(row: u32, col: u32, t: &str) -> SpecCell {
    cell(row, col, Write::Text(t.to_string()), Expect::Text(t.to_string()))
}

fn formula(row: u32, col: u32, f: &'static str, result: &'static str, value: Expect) -> SpecCell {
    SpecCell { row, col, write: Write::Formula { formula: f, result }, value, formula: Some(f) }
}

fn sheet(name: &str, cells: Vec<SpecCell>) -> SheetSpec {
    SheetSpec { name: name.to_string(), visibility: Visibility::Visible, cells, merged: Vec::new(), default_result: None }
}

/// A 31-character sheet name (the formats' longest).
pub const LONG_SHEET_NAME: &str = "Weekly readings of all the bays";

/// The contents of [`every_kind_workbook`], sheet by sheet in workbook order.
///
/// Date serials are the 1900 date system's, worked out by hand (from
/// memory / common practice: 2025-01-01 is 45658, 1900-03-01 is 61).
pub fn every_kind_spec() -> Vec<SheetSpec> {
    use DateKind::*;
    let long_text: String = "greenhouse ".repeat(1000);
    let values = sheet(
        "Values",
        vec![
            text(0, 0, "numbers"),
            num(1, 0, 0.0),
            num(2, 0, 42.0),
            num(3, 0, -17.0),
            num(4, 0, 3.5),
            num(5, 0, -2.75),
            num(6, 0, 0.1),
            num(7, 0, 1e-300),
            num(8, 0, 1e300),
            num(9, 0, -1e300),
            num(10, 0, 123_456_789_012_345.0),
            num(11, 0, 9_007_199_254_740_992.0),
            num(12, 0, std::f64::consts::PI),
            num(13, 0, 2.225_073_858_507_201_4e-308),
            text(0, 1, "text"),
            text(1, 1, "plain"),
            text(2, 1, "Ünïcödé ✓ 温室 🌱 Ωmega"),
            text(3, 1, "  leading and trailing  "),
            text(4, 1, "two\nlines"),
            text(5, 1, &long_text),
            text(6, 1, "#linear(Yield, Light)"),
            text(7, 1, "=not a formula"),
            text(8, 1, "123"),
            text(9, 1, "TRUE"),
            // An empty string is not written at all: the cell stays empty.
            cell(10, 1, Write::Text(String::new()), Expect::Empty),
            text(11, 1, "tab\there & <angle> \"quotes\""),
            text(0, 2, "booleans"),
            cell(1, 2, Write::Bool(true), Expect::Bool(true)),
            cell(2, 2, Write::Bool(false), Expect::Bool(false)),
            text(0, 3, "dates"),
            cell(
                1,
                3,
                Write::DateTime { date: Some((2026, 1, 5)), time: (0, 0, 0.0), format: "yyyy-mm-dd" },
                Expect::DateTime(46027.0, Date),
            ),
            cell(
                2,
                3,
                Write::DateTime { date: Some((1900, 1, 1)), time: (0, 0, 0.0), format: "yyyy-mm-dd" },
                Expect::DateTime(1.0, Date),
            ),
            cell(
                3,
                3,
                Write::DateTime { date: Some((1900, 3, 1)), time: (0, 0, 0.0), format: "d mmm yyyy" },
                Expect::DateTime(61.0, Date),
            ),
            cell(
                4,
                3,
                Write::DateTime { date: Some((2026, 1, 5)), time: (6, 0, 0.0), format: "yyyy-mm-dd hh:mm" },
                Expect::DateTime(46027.25, DateTime),
            ),
            cell(
                5,
                3,
                Write::DateTime { date: Some((2025, 1, 1)), time: (18, 0, 0.0), format: "dd/mm/yyyy hh:mm:ss" },
                Expect::DateTime(45658.75, DateTime),
            ),
            cell(
                6,
                3,
                Write::DateTime { date: None, time: (12, 0, 0.0), format: "hh:mm:ss" },
                Expect::DateTime(0.5, Time),
            ),
            cell(
                7,
                3,
                Write::DateTime { date: None, time: (6, 0, 0.0), format: "h:mm AM/PM" },
                Expect::DateTime(0.25, Time),
            ),
            cell(8, 3, Write::FormattedNumber { x: 1.5, format: "[h]:mm:ss" }, Expect::DateTime(1.5, Time)),
            // A plain number format stays a number.
            cell(9, 3, Write::FormattedNumber { x: 46027.0, format: "0.00" }, Expect::Number(46027.0)),
            text(0, 4, "errors"),
            formula(1, 4, "1/0", "#DIV/0!", Expect::Error(ErrorValue::Div0)),
            formula(2, 4, "NA()", "#N/A", Expect::Error(ErrorValue::NotAvailable)),
            formula(3, 4, "1+\"a\"", "#VALUE!", Expect::Error(ErrorValue::Value)),
            formula(4, 4, "INDEX(A1:A2,3)", "#REF!", Expect::Error(ErrorValue::Ref)),
            formula(5, 4, "NOSUCHNAME(1)", "#NAME?", Expect::Error(ErrorValue::Name)),
            formula(6, 4, "SQRT(-1)", "#NUM!", Expect::Error(ErrorValue::Num)),
            formula(7, 4, "A1:A2 B1:B2", "#NULL!", Expect::Error(ErrorValue::Null)),
            text(0, 5, "formulas"),
            formula(1, 5, "A3+A5", "45.5", Expect::Number(45.5)),
            formula(2, 5, "\"ab\"&\"cd\"", "abcd", Expect::Text("abcd".to_string())),
            formula(3, 5, "A3>0", "TRUE", Expect::Bool(true)),
            formula(4, 5, "A3<0", "FALSE", Expect::Bool(false)),
            formula(5, 5, "SUM(A2:A6)", "", Expect::Number(0.0)),
            formula(6, 5, "D2+1", "46028", Expect::Number(46028.0)),
        ],
    );
    let mut blank_results = sheet(
        "Données",
        vec![
            text(0, 0, "Bay"),
            text(0, 1, "Rendement"),
            text(1, 0, "Nord"),
            num(1, 1, 4.25),
            // The sheet's default result is "", so these formulas carry an
            // empty text as their cached value.
            formula(2, 1, "\"\"", "", Expect::Text(String::new())),
            formula(3, 1, "B2*2", "", Expect::Text(String::new())),
        ],
    );
    blank_results.default_result = Some("");
    let offset = sheet(
        "Ωmega",
        vec![
            // A table whose header sits at C5.
            text(4, 2, "Light"),
            text(4, 3, "Yield"),
            text(4, 4, "Bay"),
            num(5, 2, 12.0),
            num(5, 3, 3.1),
            text(5, 4, "North"),
            num(6, 2, 14.0),
            num(6, 3, 3.6),
            text(6, 4, "South"),
            num(7, 2, 9.5),
            formula(7, 3, "D6+D7", "6.7", Expect::Number(6.7)),
            text(7, 4, "North"),
        ],
    );
    let mut merged = sheet("データ", vec![num(1, 0, 1.0), num(1, 1, 2.0), num(1, 2, 3.0)]);
    merged.merged = vec![(CellRange { first_row: 0, first_col: 0, last_row: 0, last_col: 2 }, "Merged title")];
    let rtl = sheet("بيانات", vec![text(0, 0, "قيمة"), num(1, 0, 7.0)]);
    let long = sheet(LONG_SHEET_NAME, vec![text(0, 0, "long name")]);
    let spaced = sheet("Bay 2", vec![text(0, 0, "Light"), num(1, 0, 11.0)]);
    let quoted = sheet("O'Neil", vec![text(0, 0, "quote in name")]);
    let mut hidden = sheet("Hidden", vec![text(0, 0, "secret"), num(0, 1, 1.0)]);
    hidden.visibility = Visibility::Hidden;
    let mut very_hidden = sheet("Deep", vec![text(0, 0, "deeper")]);
    very_hidden.visibility = Visibility::VeryHidden;
    let empty = sheet("Empty", Vec::new());
    vec![values, blank_results, offset, merged, rtl, long, spaced, quoted, hidden, very_hidden, empty]
}

/// Writes `spec` into one worksheet. Panics on a writer error (test helper).
fn write_sheet(ws: &mut Worksheet, spec: &SheetSpec) {
    ws.set_name(spec.name.as_str()).expect("valid sheet name");
    if let Some(d) = spec.default_result {
        ws.set_formula_result_default(d);
    }
    for c in &spec.cells {
        let (r, col) = (c.row, c.col as u16);
        match &c.write {
            Write::Number(x) => {
                ws.write_number(r, col, *x).expect("write number");
            }
            Write::Text(t) => {
                ws.write_string(r, col, t).expect("write text");
            }
            Write::Bool(b) => {
                ws.write_boolean(r, col, *b).expect("write boolean");
            }
            Write::DateTime { date, time, format } => {
                let (h, m, s) = *time;
                let dt = match date {
                    Some((y, mo, d)) => {
                        ExcelDateTime::from_ymd(*y, *mo, *d).and_then(|dt| dt.and_hms(h, m, s)).expect("valid date")
                    }
                    None => ExcelDateTime::from_hms(h, m, s).expect("valid time"),
                };
                ws.write_datetime_with_format(r, col, &dt, &Format::new().set_num_format(*format))
                    .expect("write date");
            }
            Write::FormattedNumber { x, format } => {
                ws.write_number_with_format(r, col, *x, &Format::new().set_num_format(*format))
                    .expect("write number");
            }
            Write::Formula { formula, result } => {
                let mut f = Formula::new(*formula);
                if !result.is_empty() {
                    f = f.set_result(*result);
                }
                ws.write_formula(r, col, f).expect("write formula");
            }
        }
    }
    for (range, title) in &spec.merged {
        ws.merge_range(
            range.first_row,
            range.first_col as u16,
            range.last_row,
            range.last_col as u16,
            title,
            &Format::new(),
        )
        .expect("merge range");
    }
    match spec.visibility {
        Visibility::Visible => {}
        Visibility::Hidden => {
            ws.set_hidden(true);
        }
        Visibility::VeryHidden => {
            ws.set_very_hidden(true);
        }
    }
}

/// A workbook whose creation time is pinned (2026-01-01), so its bytes do not
/// depend on when it was written.
pub fn pinned_workbook() -> Workbook {
    let mut wb = Workbook::new();
    let created = ExcelDateTime::from_ymd(2026, 1, 1).expect("valid date");
    wb.set_properties(&DocProperties::new().set_creation_datetime(&created));
    wb
}

/// Writes the every-kind workbook ([`every_kind_spec`]) as xlsx at `path`.
pub fn every_kind_workbook(path: &Path) {
    let mut wb = pinned_workbook();
    for spec in every_kind_spec() {
        write_sheet(wb.add_worksheet(), &spec);
    }
    wb.save(path).expect("save every-kind workbook");
}

/// A column of [`write_mixed_table`]: numbers or text, `None` for a blank cell.
#[derive(Debug, Clone)]
pub enum Col {
    /// Numbers.
    Num(Vec<Option<f64>>),
    /// Text.
    Text(Vec<Option<String>>),
}

/// Writes an xlsx at `path` with one sheet `sheet`: `headers` in row 1 from
/// A1, each numeric column below its header (`None` leaves the cell blank),
/// and each request text at its zero-based `(row, col)`.
pub fn write_table(path: &Path, sheet: &str, headers: &[&str], columns: &[Vec<Option<f64>>], requests: &[(u32, u32, &str)]) {
    let cols: Vec<Col> = columns.iter().cloned().map(Col::Num).collect();
    write_mixed_table(path, sheet, headers, &cols, requests);
}

/// As [`write_table`], with numeric or text columns.
pub fn write_mixed_table(path: &Path, sheet: &str, headers: &[&str], columns: &[Col], requests: &[(u32, u32, &str)]) {
    let mut wb = pinned_workbook();
    let ws = wb.add_worksheet();
    ws.set_name(sheet).expect("valid sheet name");
    for (j, h) in headers.iter().enumerate() {
        ws.write_string(0, j as u16, *h).expect("write header");
    }
    for (j, col) in columns.iter().enumerate() {
        let j = j as u16;
        match col {
            Col::Num(xs) => {
                for (i, x) in xs.iter().enumerate() {
                    if let Some(x) = x {
                        ws.write_number(i as u32 + 1, j, *x).expect("write number");
                    }
                }
            }
            Col::Text(ts) => {
                for (i, t) in ts.iter().enumerate() {
                    if let Some(t) = t {
                        ws.write_string(i as u32 + 1, j, t).expect("write text");
                    }
                }
            }
        }
    }
    for (r, c, t) in requests {
        ws.write_string(*r, *c as u16, *t).expect("write request");
    }
    wb.save(path).expect("save table workbook");
}

// ---------------------------------------------------------------------------
// Hand-built packages, for reader cases no workbook writer produces: a
// dimension record that lies, error values the reader does not know, a
// 1904 date system, OpenDocument content, encrypted or foreign compound
// files. The archives are stored (uncompressed) zips.
// ---------------------------------------------------------------------------

/// CRC-32 (IEEE 802.3, reflected polynomial 0xEDB88320), as zip requires.
/// Source: PKWARE APPNOTE.TXT §4.4.7 (bitwise form, from memory).
fn crc32(data: &[u8]) -> u32 {
    let mut crc = !0u32;
    for &b in data {
        crc ^= u32::from(b);
        for _ in 0..8 {
            crc = if crc & 1 != 0 { (crc >> 1) ^ 0xEDB8_8320 } else { crc >> 1 };
        }
    }
    !crc
}

/// A zip archive of `entries` (name, content), stored without compression,
/// in the given order. Layout per PKWARE APPNOTE.TXT §4.3.
pub fn stored_zip(entries: &[(&str, &[u8])]) -> Vec<u8> {
    let mut out = Vec::new();
    let mut central = Vec::new();
    let le16 = |v: &mut Vec<u8>, x: u16| v.extend_from_slice(&x.to_le_bytes());
    let le32 = |v: &mut Vec<u8>, x: u32| v.extend_from_slice(&x.to_le_bytes());
    for (name, data) in entries {
        let offset = out.len() as u32;
        let crc = crc32(data);
        let (size, name_len) = (data.len() as u32, name.len() as u16);
        le32(&mut out, 0x0403_4b50);
        le16(&mut out, 20); // version needed
        le16(&mut out, 0); // flags
        le16(&mut out, 0); // method: stored
        le16(&mut out, 0); // time
        le16(&mut out, 0x21); // date: 1980-01-01
        le32(&mut out, crc);
        le32(&mut out, size);
        le32(&mut out, size);
        le16(&mut out, name_len);
        le16(&mut out, 0); // extra length
        out.extend_from_slice(name.as_bytes());
        out.extend_from_slice(data);

        le32(&mut central, 0x0201_4b50);
        le16(&mut central, 20); // version made by
        le16(&mut central, 20); // version needed
        le16(&mut central, 0);
        le16(&mut central, 0);
        le16(&mut central, 0);
        le16(&mut central, 0x21);
        le32(&mut central, crc);
        le32(&mut central, size);
        le32(&mut central, size);
        le16(&mut central, name_len);
        le16(&mut central, 0); // extra
        le16(&mut central, 0); // comment
        le16(&mut central, 0); // disk
        le16(&mut central, 0); // internal attributes
        le32(&mut central, 0); // external attributes
        le32(&mut central, offset);
        central.extend_from_slice(name.as_bytes());
    }
    let (cd_offset, cd_size) = (out.len() as u32, central.len() as u32);
    out.extend_from_slice(&central);
    le32(&mut out, 0x0605_4b50);
    le16(&mut out, 0);
    le16(&mut out, 0);
    le16(&mut out, entries.len() as u16);
    le16(&mut out, entries.len() as u16);
    le32(&mut out, cd_size);
    le32(&mut out, cd_offset);
    le16(&mut out, 0);
    out
}

const RELS_NS: &str = "http://schemas.openxmlformats.org/package/2006/relationships";
const MAIN_NS: &str = "http://schemas.openxmlformats.org/spreadsheetml/2006/main";

/// A one-sheet xlsx package (sheet "Data") around the worksheet XML
/// `sheet_xml`; cell style 1 has the built-in date format 14. With
/// `date1904` the workbook uses the 1904 date system.
pub fn minimal_xlsx(sheet_xml: &str, date1904: bool) -> Vec<u8> {
    let content_types = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/><Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/></Types>"#;
    let rels = format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="{RELS_NS}"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>"#
    );
    let pr = if date1904 { r#"<workbookPr date1904="1"/>"# } else { "" };
    let workbook = format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><workbook xmlns="{MAIN_NS}" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships">{pr}<sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>"#
    );
    let workbook_rels = format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Relationships xmlns="{RELS_NS}"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/><Relationship Id="rId2" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/></Relationships>"#
    );
    let styles = format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><styleSheet xmlns="{MAIN_NS}"><cellXfs count="2"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/><xf numFmtId="14" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/></cellXfs></styleSheet>"#
    );
    let sheet = format!(r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?><worksheet xmlns="{MAIN_NS}">{sheet_xml}</worksheet>"#);
    stored_zip(&[
        ("[Content_Types].xml", content_types.as_bytes()),
        ("_rels/.rels", rels.as_bytes()),
        ("xl/workbook.xml", workbook.as_bytes()),
        ("xl/_rels/workbook.xml.rels", workbook_rels.as_bytes()),
        ("xl/styles.xml", styles.as_bytes()),
        ("xl/worksheets/sheet1.xml", sheet.as_bytes()),
    ])
}

/// An OpenDocument spreadsheet package whose `office:spreadsheet` element
/// holds `tables` (table:table elements); `styles` goes into
/// `office:automatic-styles`.
pub fn minimal_ods(styles: &str, tables: &str) -> Vec<u8> {
    let manifest = r#"<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?><office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:style="urn:oasis:names:tc:opendocument:xmlns:style:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:of="urn:oasis:names:tc:opendocument:xmlns:of:1.2" xmlns:calcext="urn:org:documentfoundation:names:experimental:calc:xmlns:calcext:1.0" office:version="1.2"><office:automatic-styles>{styles}</office:automatic-styles><office:body><office:spreadsheet>{tables}</office:spreadsheet></office:body></office:document-content>"#
    );
    stored_zip(&[
        ("mimetype", b"application/vnd.oasis.opendocument.spreadsheet"),
        ("META-INF/manifest.xml", manifest.as_bytes()),
        ("content.xml", content.as_bytes()),
    ])
}

/// A minimal OLE compound file (version 3, 512-byte sectors) holding the
/// named streams. Layout per [MS-CFB] §2.2 (header), §2.3 (FAT), §2.6
/// (directory entries): sector 0 holds the FAT, sector 1 the directory
/// (root entry plus at most three streams), then each stream's sectors in
/// turn. A stream's content must be empty or at least 4096 bytes long (the
/// size from which streams live in ordinary sectors; smaller ones would need
/// a mini stream, which this builder does not write).
pub fn compound_file(streams: &[(&str, &[u8])]) -> Vec<u8> {
    assert!(streams.len() <= 3, "one directory sector holds four entries");
    const END_OF_CHAIN: u32 = 0xFFFF_FFFE;
    const FREE: u32 = 0xFFFF_FFFF;
    const FAT_SECTOR: u32 = 0xFFFF_FFFD;
    let put32 = |buf: &mut [u8], at: usize, v: u32| buf[at..at + 4].copy_from_slice(&v.to_le_bytes());
    let put16 = |buf: &mut [u8], at: usize, v: u16| buf[at..at + 2].copy_from_slice(&v.to_le_bytes());
    let mut header = vec![0u8; 512];
    header[..8].copy_from_slice(&[0xD0, 0xCF, 0x11, 0xE0, 0xA1, 0xB1, 0x1A, 0xE1]);
    put16(&mut header, 24, 0x003E); // minor version
    put16(&mut header, 26, 3); // major version
    put16(&mut header, 28, 0xFFFE); // byte order
    put16(&mut header, 30, 9); // sector shift: 512
    put16(&mut header, 32, 6); // mini sector shift: 64
    put32(&mut header, 44, 1); // FAT sectors
    put32(&mut header, 48, 1); // first directory sector
    put32(&mut header, 56, 4096); // mini stream cutoff
    put32(&mut header, 60, END_OF_CHAIN); // first mini FAT sector
    put32(&mut header, 64, 0); // mini FAT sectors
    put32(&mut header, 68, END_OF_CHAIN); // first DIFAT sector
    put32(&mut header, 72, 0); // DIFAT sectors
    for i in 0..109 {
        put32(&mut header, 76 + 4 * i, if i == 0 { 0 } else { FREE });
    }
    let mut fat = vec![FREE; 128];
    fat[0] = FAT_SECTOR;
    fat[1] = END_OF_CHAIN;
    let mut data = Vec::new();
    let mut starts = Vec::new();
    let mut next_sector = 2u32;
    for (_, content) in streams {
        assert!(content.is_empty() || content.len() >= 4096, "stream content must be empty or at least 4096 bytes");
        if content.is_empty() {
            starts.push(END_OF_CHAIN);
            continue;
        }
        let sectors = content.len().div_ceil(512) as u32;
        assert!(next_sector + sectors <= 128, "one FAT sector maps 128 sectors");
        starts.push(next_sector);
        for k in 0..sectors {
            let id = next_sector + k;
            fat[id as usize] = if k + 1 == sectors { END_OF_CHAIN } else { id + 1 };
        }
        next_sector += sectors;
        let mut padded = content.to_vec();
        padded.resize(sectors as usize * 512, 0);
        data.extend_from_slice(&padded);
    }
    let fat: Vec<u8> = fat.iter().flat_map(|v| v.to_le_bytes()).collect();
    let mut dir = vec![0u8; 512];
    let names: Vec<&str> = std::iter::once("Root Entry").chain(streams.iter().map(|(n, _)| *n)).collect();
    for (i, name) in names.iter().enumerate() {
        let e = &mut dir[128 * i..128 * (i + 1)];
        let utf16: Vec<u16> = name.encode_utf16().collect();
        for (k, u) in utf16.iter().enumerate() {
            put16(e, 2 * k, *u);
        }
        put16(e, 64, ((utf16.len() + 1) * 2) as u16);
        e[66] = if i == 0 { 5 } else { 2 }; // root storage / stream
        e[67] = 1; // black
        put32(e, 68, FREE); // left sibling
        put32(e, 72, if i > 0 && i + 1 < names.len() { (i + 1) as u32 } else { FREE }); // right sibling
        put32(e, 76, if i == 0 && names.len() > 1 { 1 } else { FREE }); // child
        let (start, size) = if i == 0 { (END_OF_CHAIN, 0) } else { (starts[i - 1], streams[i - 1].1.len() as u32) };
        put32(e, 116, start);
        put32(e, 120, size);
    }
    for i in names.len()..4 {
        dir[128 * i + 68..128 * i + 80].copy_from_slice(&[0xFF; 12]);
    }
    [header, fat, dir, data].concat()
}

/// One BIFF8 record: type, length, data ([MS-XLS] §2.1.4).
fn biff_record(out: &mut Vec<u8>, typ: u16, data: &[u8]) {
    out.extend_from_slice(&typ.to_le_bytes());
    out.extend_from_slice(&(data.len() as u16).to_le_bytes());
    out.extend_from_slice(data);
}

/// A cell of [`minimal_xls`].
#[derive(Debug, Clone)]
pub enum XlsCell {
    /// A Number record; `date` gives it the cell format with built-in
    /// number format 14 (a date).
    Number { x: f64, date: bool },
    /// A Label record (BIFF8 unicode string).
    Label(&'static str),
    /// A BoolErr record holding a boolean.
    Bool(bool),
    /// A BoolErr record holding an error code ([MS-XLS] §2.5.17: 0x07 #DIV/0!,
    /// 0x2A #N/A, …).
    Error(u8),
    /// A Formula record with a cached number and parsed tokens `rgce`
    /// ([MS-XLS] §2.5.198); `1+2` is `[0x1E, 1, 0, 0x1E, 2, 0, 0x03]`.
    Formula { cached: f64, rgce: Vec<u8> },
}

/// One sheet of [`minimal_xls`]: name, `hsState` (0 visible, 1 hidden,
/// 2 very hidden), cells at zero-based (row, col), merged ranges
/// (first row, last row, first col, last col).
pub struct XlsSheet {
    /// Sheet name (ASCII).
    pub name: &'static str,
    /// `hsState` of the BoundSheet8 record.
    pub state: u8,
    /// Cells.
    pub cells: Vec<(u16, u16, XlsCell)>,
    /// Merged ranges as (first row, last row, first col, last col).
    pub merged: Vec<(u16, u16, u16, u16)>,
}

/// A BIFF8 workbook (an xls file): a compound file whose `Workbook` stream
/// holds the globals (BOF, DateMode when `date1904`, two XF records — 0
/// general, 1 with number format 14 —, a BoundSheet8 per sheet, EOF) and a
/// substream per sheet (BOF, cells, MergeCells, EOF). Record layouts per
/// [MS-XLS] §2.4 (BOF 2.4.21, DateMode 2.4.77, XF 2.4.353, BoundSheet8
/// 2.4.28, Number 2.4.180, Label 2.4.148, BoolErr 2.4.24, Formula 2.4.127,
/// MergeCells 2.4.168, EOF 2.4.103).
pub fn minimal_xls(sheets: &[XlsSheet], date1904: bool) -> Vec<u8> {
    let bof = |dt: u16| {
        let mut d = vec![0u8; 16];
        d[..2].copy_from_slice(&0x0600u16.to_le_bytes());
        d[2..4].copy_from_slice(&dt.to_le_bytes());
        d
    };
    let xf = |ifmt: u16| {
        let mut d = vec![0u8; 20];
        d[2..4].copy_from_slice(&ifmt.to_le_bytes());
        d
    };
    // The globals, with the sheets' stream offsets patched in afterwards.
    let mut globals = Vec::new();
    biff_record(&mut globals, 0x0809, &bof(0x0005));
    if date1904 {
        biff_record(&mut globals, 0x0022, &1u16.to_le_bytes());
    }
    biff_record(&mut globals, 0x00E0, &xf(0));
    biff_record(&mut globals, 0x00E0, &xf(14));
    let mut patches = Vec::new();
    for sh in sheets {
        let mut d = vec![0u8; 4];
        d.push(sh.state);
        d.push(0); // worksheet
        d.push(sh.name.len() as u8);
        d.push(0); // 8-bit characters
        d.extend_from_slice(sh.name.as_bytes());
        patches.push(globals.len() + 4);
        biff_record(&mut globals, 0x0085, &d);
    }
    biff_record(&mut globals, 0x000A, &[]);
    let mut stream = globals;
    for (k, sh) in sheets.iter().enumerate() {
        let pos = stream.len() as u32;
        stream[patches[k]..patches[k] + 4].copy_from_slice(&pos.to_le_bytes());
        biff_record(&mut stream, 0x0809, &bof(0x0010));
        for (r, c, cell) in &sh.cells {
            let mut d = Vec::new();
            d.extend_from_slice(&r.to_le_bytes());
            d.extend_from_slice(&c.to_le_bytes());
            let xf = if matches!(cell, XlsCell::Number { date: true, .. }) { 1u16 } else { 0 };
            d.extend_from_slice(&xf.to_le_bytes());
            let typ = match cell {
                XlsCell::Number { x, .. } => {
                    d.extend_from_slice(&x.to_le_bytes());
                    0x0203
                }
                XlsCell::Label(t) => {
                    d.extend_from_slice(&(t.len() as u16).to_le_bytes());
                    d.push(0); // 8-bit characters
                    d.extend_from_slice(t.as_bytes());
                    0x0204
                }
                XlsCell::Bool(b) => {
                    d.extend_from_slice(&[u8::from(*b), 0]);
                    0x0205
                }
                XlsCell::Error(code) => {
                    d.extend_from_slice(&[*code, 1]);
                    0x0205
                }
                XlsCell::Formula { cached, rgce } => {
                    d.extend_from_slice(&cached.to_le_bytes());
                    d.extend_from_slice(&[0; 2]); // grbit
                    d.extend_from_slice(&[0; 4]); // chn
                    d.extend_from_slice(&(rgce.len() as u16).to_le_bytes());
                    d.extend_from_slice(rgce);
                    0x0006
                }
            };
            biff_record(&mut stream, typ, &d);
        }
        if !sh.merged.is_empty() {
            let mut d = (sh.merged.len() as u16).to_le_bytes().to_vec();
            for (r0, r1, c0, c1) in &sh.merged {
                for v in [r0, r1, c0, c1] {
                    d.extend_from_slice(&v.to_le_bytes());
                }
            }
            biff_record(&mut stream, 0x00E5, &d);
        }
        biff_record(&mut stream, 0x000A, &[]);
    }
    if stream.len() < 4096 {
        stream.resize(4096, 0);
    }
    compound_file(&[("Workbook", &stream)])
}
