//! The bad- and odd-input corpus: every case is generated here (no binary
//! files are committed), run through the real binary in an empty folder, and
//! checked for: no panic; the expected exit status; the expected words on
//! standard error (the file's name, and for a request the sheet and cell, the
//! problem and a `fix:` line); the input's bytes unchanged (SHA-256 before
//! and after); no partial output when nothing is written, and nothing but
//! the output written otherwise; every other request of the workbook still
//! fitted (a request named `good` must print `ok`); and, for every readable
//! workbook, every source cell reading back equal from the output.
//!
//! The expectations are the `Case` table below; tests/corpus/README.md lists
//! the same cases in prose.

mod common;

use common::run::{files_in, plumb, scratch};
use common::workbooks::{compound_file, minimal_ods, minimal_xlsx, pinned_workbook, stored_zip};
use rust_xlsxwriter::{ExcelDateTime, Format, Formula};
use sha2::{Digest, Sha256};

/// A cell to write.
#[derive(Clone)]
enum C {
    N(f64),
    T(String),
    F(&'static str, &'static str),
    Date(u16, u8, u8),
}

fn t(s: &str) -> C {
    C::T(s.to_string())
}

/// One sheet: name, hidden, cells (row, col, content), merged ranges.
struct S {
    name: String,
    hidden: bool,
    cells: Vec<(u32, u32, C)>,
    merged: Vec<(u32, u16, u32, u16)>,
}

fn sheet(name: &str, cells: Vec<(u32, u32, C)>) -> S {
    S { name: name.to_string(), hidden: false, cells, merged: Vec::new() }
}

/// An xlsx of the given sheets, creation time pinned.
fn xlsx(sheets: &[S]) -> Vec<u8> {
    let mut wb = pinned_workbook();
    let date = Format::new().set_num_format("yyyy-mm-dd");
    for s in sheets {
        let ws = wb.add_worksheet();
        ws.set_name(&s.name).unwrap();
        for (r, c, v) in &s.cells {
            let c = *c as u16;
            match v {
                C::N(x) => ws.write_number(*r, c, *x).map(|_| ()),
                C::T(x) => ws.write_string(*r, c, x).map(|_| ()),
                C::F(f, res) => ws.write_formula(*r, c, Formula::new(*f).set_result(*res)).map(|_| ()),
                C::Date(y, m, d) => ws.write_datetime_with_format(*r, c, ExcelDateTime::from_ymd(*y, *m, *d).unwrap(), &date).map(|_| ()),
            }
            .unwrap();
        }
        for (r0, c0, r1, c1) in &s.merged {
            ws.merge_range(*r0, *c0, *r1, *c1, "Greenhouse readings", &Format::new()).unwrap();
        }
        if s.hidden {
            ws.set_hidden(true);
        }
    }
    wb.save_to_buffer().unwrap()
}

/// A greenhouse table at A1 with headers `Light, CO2, Yield` and `n` rows;
/// `extra` cells are added after.
fn table(n: u32, extra: Vec<(u32, u32, C)>) -> Vec<(u32, u32, C)> {
    let mut cells = vec![(0, 0, t("Light")), (0, 1, t("CO2")), (0, 2, t("Yield"))];
    for i in 0..n {
        let r = i + 1;
        let light = 8.0 + (i % 7) as f64;
        let co2 = 400.0 + 37.0 * ((i * 5) % 11) as f64;
        cells.push((r, 0, C::N(light)));
        cells.push((r, 1, C::N(co2)));
        cells.push((r, 2, C::N(1.0 + 0.4 * light + 0.003 * co2 + 0.05 * ((i * 3) % 5) as f64)));
    }
    cells.extend(extra);
    cells
}

/// The good companion request, at G1: it must fit whatever else is wrong.
fn good() -> (u32, u32, C) {
    (0, 6, t("#linear(Yield, Light + CO2, name=good)"))
}

/// A request at G2 beside the good one.
fn with_request(req: &str, n: u32) -> Vec<u8> {
    xlsx(&[sheet("Data", table(n, vec![good(), (1, 6, t(req))]))])
}

/// A hand-made one-sheet xlsx ("Data") from `<sheetData>` rows.
fn hand(rows: &str) -> Vec<u8> {
    minimal_xlsx(&format!("<sheetData>{rows}</sheetData>"), false)
}

/// Inline-string cell XML.
fn istr(r: &str, s: &str) -> String {
    let esc = s.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;");
    format!(r#"<c r="{r}" t="inlineStr"><is><t>{esc}</t></is></c>"#)
}

/// The greenhouse table as sheetData rows (12 rows), with `extra` appended to row 1.
fn hand_table(extra_row1: &str, yield_override: Option<(u32, &str)>) -> String {
    let mut rows = format!(r#"<row r="1">{}{}{}{extra_row1}</row>"#, istr("A1", "Light"), istr("B1", "CO2"), istr("C1", "Yield"));
    for i in 0..12u32 {
        let r = i + 2;
        let light = 8.0 + (i % 7) as f64;
        let co2 = 400.0 + 37.0 * ((i * 5) % 11) as f64;
        let y = match yield_override {
            Some((row, v)) if row == r => v.to_string(),
            _ => format!("{}", 1.0 + 0.4 * light + 0.003 * co2 + 0.05 * ((i * 3) % 5) as f64),
        };
        rows.push_str(&format!(r#"<row r="{r}"><c r="A{r}"><v>{light}</v></c><c r="B{r}"><v>{co2}</v></c><c r="C{r}"><v>{y}</v></c></row>"#));
    }
    rows
}

/// What a case expects.
struct Case {
    /// Short name; also the input file's stem.
    name: &'static str,
    /// File extension of the input.
    ext: &'static str,
    /// The input's bytes.
    bytes: Vec<u8>,
    /// Exit status of `plumb run`.
    status: i32,
    /// Words that must appear on standard error (besides the file name,
    /// which is always required when the status is not 0).
    stderr: Vec<&'static str>,
    /// Whether a request named `good` must be fitted.
    good: bool,
}

fn case(name: &'static str, ext: &'static str, bytes: Vec<u8>, status: i32, stderr: &[&'static str], good: bool) -> Case {
    Case { name, ext, bytes, status, stderr: stderr.to_vec(), good }
}

/// A request error at Data!G2 with a caret, a fix line, and the good request fitted.
fn request_error(name: &'static str, req: &str, words: &[&'static str]) -> Case {
    let mut w = vec!["Data!G2: error:", "fix:"];
    w.extend_from_slice(words);
    Case { name, ext: "xlsx", bytes: with_request(req, 12), status: 1, stderr: w, good: true }
}

fn cases() -> Vec<Case> {
    let ok_book = with_request("#linear(Yield, Light)", 12);
    let mut v = vec![
        // --- Not a workbook at all: exit 2, nothing written.
        case("not_a_workbook", "xlsx", b"Light,CO2,Yield\n8,400,4.5\n".to_vec(), 2, &["is not a workbook", "a text file"], false),
        case("empty_file", "xlsx", Vec::new(), 2, &["an empty file"], false),
        case("pdf_named_xlsx", "xlsx", b"%PDF-1.4\n\x00\x01\x02binary".to_vec(), 2, &["a PDF document"], false),
        case("html_named_xls", "xls", b"<html><body><table><tr><td>1</td></tr></table></body></html>".to_vec(), 2, &["XML or HTML"], false),
        case("random_bytes", "xlsx", (0..4000u32).map(|i| (i.wrapping_mul(2_654_435_761) >> 13) as u8).collect(), 2, &["is not a workbook"], false),
        case("truncated_half", "xlsx", ok_book[..ok_book.len() / 2].to_vec(), 2, &["truncated or damaged"], false),
        case("truncated_head", "xlsx", ok_book[..40].to_vec(), 2, &["truncated or damaged"], false),
        case("zip_of_text", "xlsx", stored_zip(&[("notes.txt", b"bay 3 lamps replaced")]), 2, &["zip archive that holds no workbook"], false),
        case("zip_empty", "xlsx", stored_zip(&[]), 2, &["zip archive that holds no workbook"], false),
        case("encrypted_ole", "xlsx", compound_file(&[("EncryptionInfo", &[]), ("EncryptedPackage", &[])]), 2, &["password-protected", "unprotected copy"], false),
        case("ole_word_document", "xls", compound_file(&[("WordDocument", &[])]), 2, &["holds no workbook"], false),
        // Found by fuzzing: a sector chain that loops made the xls reader
        // grow a buffer until memory ran out.
        case("ole_fat_loop", "xls", {
            let mut b = compound_file(&[("Workbook", &[])]);
            b[512 + 4..512 + 8].copy_from_slice(&1u32.to_le_bytes()); // the directory sector points to itself
            b
        }, 2, &["truncated or damaged"], false),
        case("ole_truncated", "xls", compound_file(&[("Workbook", &[])])[..600].to_vec(), 2, &["truncated or damaged"], false),
        case(
            "oversized_sheet",
            "xlsx",
            hand(&format!(r#"<row r="1">{}</row><row r="1048576"><c r="XFD1048576"><v>1</v></c></row>"#, istr("A1", "Light"))),
            2,
            &["more than the 50,000,000 cells", "delete unused rows and columns"],
            false,
        ),
        // --- Readable workbooks without trouble in their data.
        case("empty_workbook", "xlsx", xlsx(&[sheet("Sheet1", Vec::new())]), 0, &[], false),
        case("no_requests", "xlsx", xlsx(&[sheet("Data", table(12, Vec::new()))]), 0, &[], false),
        case("hash_comment_cells", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("# note: bay 3 lamps replaced")), (2, 6, t("#1 priority")), (3, 6, t("#linear Yield"))]))]), 0, &[], true),
        // --- Data that cannot be fitted: the request fails at its cell.
        case(
            "headers_only",
            "xlsx",
            xlsx(&[sheet("Data", table(0, Vec::new())), sheet("Req", vec![(0, 0, t("#linear(Yield, Light, table=Data)")), (3, 0, t("Light")), (3, 1, t("Yield")), (4, 0, C::N(1.0)), (4, 1, C::N(2.0)), (5, 0, C::N(2.0)), (5, 1, C::N(2.5)), (6, 0, C::N(3.0)), (6, 1, C::N(4.5)), (0, 5, t("#linear(Yield, Light, name=good)"))])]),
            1,
            &["Req!A1: error:", "headers but no data rows"],
            true,
        ),
        request_error("one_data_row", "#linear(Yield, Light, table=Data!A1:C2)", &["1 rows are usable", "needs more rows than parameters"]),
        request_error("fewer_rows_than_parameters", "#linear(Yield, Light + CO2, table=Data!A1:C3)", &["2 rows are usable", "3 parameters"]),
        // #nonlinear's bad input (issue 10), through the binary.
        request_error("curve_parameter_never_used", "#nonlinear(Yield, a*Light, start(a=1, b=2))", &["b"]),
        request_error("curve_name_neither_parameter_nor_column", "#nonlinear(Yield, a*Ligth, start(a=1))", &["Ligth", "Light"]),
        request_error("curve_start_value_missing", "#nonlinear(Yield, a*exp(-k*Light), start(a=1))", &["k has no starting value"]),
        request_error("curve_undefined_at_the_start", "#nonlinear(Yield, a*log(Light - b), start(a=1, b=10))", &["the model is not a number at the starting values in row 2 of Data"]),
        request_error("curve_singular_at_the_start", "#nonlinear(Yield, a*b*Light + c, start(a=0, b=1, c=1))", &["does not change with b"]),
        request_error("curve_no_convergence", "#nonlinear(Yield, a*exp(-k*Light) + c, start(a=1, k=0.1, c=1), limit=2)", &["no convergence within limit=2 iterations: it stopped at start(a=", "paste them over start(…)"]),
        case("text_in_numeric_column", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("#linear(Yield, Light)")), (4, 0, t("n/a")), (7, 0, t("broken sensor"))]))]), 0, &["2 rows left out: 2 with text in a numeric column (first Data!A5)"], true),
        case("constant_column", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (0, 3, t("Bays")), (1, 6, t("#linear(Yield, Light + Bays)"))].into_iter().chain((1..=12).map(|r| (r, 3, C::N(4.0)))).collect()))]), 0, &["collinear"], true),
        case("collinear_columns", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("#linear(Yield, Light + Double, name=twice)")), (0, 3, t("Double"))].into_iter().chain((1..=12).map(|r| (r, 3, C::F("A1*2", "0")))).collect()))]), 0, &["collinear"], true),
        request_error("text_response", "#linear(Bay, Light, table=Data!A1:D13)", &["there is no column headed 'Bay'"]),
        case("log_of_zero_and_negatives", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("#linear(Yield, log(Light))")), (2, 0, C::N(0.0)), (3, 0, C::N(-2.0))]))]), 0, &["2 rows left out: 2 where a transform is undefined"], true),
        request_error("log_of_all_invalid", "#linear(Yield, log(-Light))", &["0 rows are usable", "where a transform is undefined"]),
        case("error_values_in_data", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("#linear(Yield, Light)")), (5, 0, C::F("1/0", "#DIV/0!")), (6, 0, C::F("NA()", "#N/A"))]))]), 0, &["2 rows left out: 2 with an error value (first Data!A6)"], false),
        case("infinite_values", "xlsx", hand(&hand_table(&format!("{}{}", istr("G1", "#linear(Yield, Light, name=good)"), istr("G2", "#linear(Yield, CO2)")), Some((4, "INF")))), 0, &["1 row left out: 1 where a transform is undefined"], true),
        case("not_a_number_value", "xlsx", hand(&hand_table(&istr("G1", "#linear(Yield, Light, name=good)"), Some((5, "NaN")))), 0, &["1 row left out"], true),
        case("duplicate_headers", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (0, 3, t("light")), (1, 3, C::N(1.0)), (1, 6, t("#linear(Yield, CO2 + Light)"))]))]), 1, &["Data!G2: error:", "two or more columns are headed 'Light' (A1, D1)", "fix: rename the headers"], false),
        case("empty_header_cell", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (1, 6, t("#linear(Yield, D2:D13)"))].into_iter().chain((1..=12).map(|r| (r, 3, C::N(r as f64 * 1.5 + (r % 3) as f64)))).collect()))]), 0, &[], true),
        request_error("unknown_sheet", "#linear(Yield, Light, table=Dta)", &["there is no sheet named 'Dta'", "did you mean Data?"]),
        request_error("unequal_ranges", "#linear(C2:C13, A2:A9)", &["this range has 8 rows but the request's data has 12"]),
        request_error("range_two_columns_wide", "#linear(C2:C13, A2:B13)", &["one column wide"]),
        request_error("nesting_10000_deep", &format!("#linear(Yield, {}Light{})", "(".repeat(10_000), ")".repeat(10_000)), &["bytes long, more than the limit of 8192 bytes"]),
        request_error("nesting_4000_deep", &format!("#linear(Yield, {}Light{})", "(".repeat(4_000), ")".repeat(4_000)), &["nested too deeply: more than 64 levels"]),
        request_error("too_many_terms", &format!("#linear(Yield, {})", vec!["Light"; 300].join(" + ")), &["more than 256 levels"]),
        request_error("unknown_function", "#lineer(Yield, Light)", &["there is no function #lineer", "did you mean #linear?"]),
        request_error("unknown_transform", "#linear(Yield, logit(Light))", &["'logit' is not a function of the fit language"]),
        request_error("unknown_option", "#linear(Yield, Light, confidnce=0.9)", &["#linear has no option 'confidnce'", "did you mean confidence?"]),
        request_error("bad_level", "#linear(Yield, Light, confidence=95)", &["the confidence level 95 is not between 0 and 1"]),
        request_error("bad_choice", "#linear(Yield, Light, gaps=maybe)", &["gaps=maybe is not one of the choices", "gaps takes skip, stop"]),
        request_error("bad_intercept", "#linear(Yield, Light, intercept=perhaps)", &["intercept=perhaps is not one of the choices"]),
        request_error("option_given_twice", "#linear(Yield, Light, confidence=0.9, confidence=0.8)", &["given twice"]),
        request_error("missing_argument", "#linear(Yield)", &["needs its"]),
        request_error("syntax_error", "#linear(Yield, Light +)", &["expected"]),
        request_error("unclosed_quote", "#linear(Yield, \"Light)", &["expected"]),
        request_error("negative_weights", "#linear(Yield, Light, weights=-CO2)", &["is negative", "weights must be zero or positive"]),
        request_error("duplicate_fit_name", "#linear(Yield, CO2, name=good)", &["another request is already named 'good'"]),
        request_error("path_as_sheet", "#linear(Yield, Light, table='/etc/passwd'!A1:B2)", &["there is no sheet named '/etc/passwd'"]),
        request_error("path_in_range", "#linear('/etc/passwd'!A1:A9, Light)", &["there is no sheet named '/etc/passwd'"]),
        request_error("robust_bad_method", "#robust(Yield, Light, method=lms)", &["method=lms is not one of the choices", "huber, bisquare"]),
        request_error("robust_bad_tuning", "#robust(Yield, Light, tuning=0)", &["tuning= must be a positive number of scales"]),
        request_error("robust_weights", "#robust(Yield, Light, weights=CO2)", &["#robust has no option 'weights'"]),
        request_error("robust_too_few_rows", "#robust(Yield, Light + CO2, table=Data!A1:C4)", &["3 rows are usable"]),
        request_error("robust_collinear", "#robust(Yield, Light + 2*Light)", &["is an exact combination of the other terms"]),
        // --- Odd but valid workbooks: fitted, copied faithfully.
        case("merged_title_cells", "xlsx", {
            let mut s = sheet("Data", table(12, vec![good()]).into_iter().map(|(r, c, v)| (r + 2, c, v)).collect());
            s.cells.retain(|(r, c, _)| !(*r == 2 && *c == 6));
            s.cells.push((0, 6, t("#linear(Yield, Light + CO2, name=good)")));
            s.merged.push((0, 0, 0, 2));
            xlsx(&[s])
        }, 0, &[], true),
        case("hidden_data_sheet", "xlsx", {
            let mut hidden = sheet("Readings", table(12, Vec::new()));
            hidden.hidden = true;
            xlsx(&[sheet("Requests", vec![(0, 0, t("#linear(Yield, Light, table=Readings, name=good)"))]), hidden])
        }, 0, &[], true),
        case("columns_16384", "xlsx", {
            let mut cells = vec![(0, 16_383, t("Yield")), (0, 16_382, t("Light"))];
            for c in 0..16_382u32 {
                cells.push((0, c, t(&format!("c{c}"))));
                cells.push((1, c, C::N(c as f64)));
            }
            for i in 0..12u32 {
                cells.push((i + 1, 16_382, C::N(i as f64)));
                cells.push((i + 1, 16_383, C::N(2.0 * i as f64 + (i % 3) as f64)));
            }
            xlsx(&[sheet("Wide", cells), sheet("Req", vec![(0, 0, t("#linear(Yield, Light, table=Wide, name=good)"))])])
        }, 0, &[], true),
        case("unicode_rtl_long_sheet_names", "xlsx", xlsx(&[
            sheet("温室データ", table(12, vec![good()])),
            sheet("بيانات", table(12, vec![(0, 6, t("#linear(Yield, Light, name=rtl)"))])),
            sheet(common::workbooks::LONG_SHEET_NAME, vec![(0, 0, t("#linear(Yield, CO2, table='温室データ'!A1:C13, name=long)"))]),
        ]), 0, &[], true),
        case("dates_as_predictors", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (0, 3, t("Day")), (1, 6, t("#linear(Yield, Day + Light)"))].into_iter().chain((1..=12).map(|r| (r, 3, C::Date(2026, 1, r as u8 * 2)))).collect()))]), 0, &[], true),
        case("whole_column_ranges", "xlsx", with_request("#linear(C:C, A:A)", 12), 0, &[], true),
        case("unique_text_ids_as_term", "xlsx", xlsx(&[sheet("Data", table(1500, vec![good(), (0, 3, t("Tray")), (1, 6, t("#linear(Yield, Tray)"))].into_iter().chain((1..=1500).map(|r| (r, 3, t(&format!("tray-{r:05}"))))).collect()))]), 1, &["Data!G2: error:", "more than 1000 model columns"], true),
        case("request_of_100_kb", "xlsx", hand(&hand_table(&format!("{}{}", istr("G1", "#linear(Yield, Light, name=good)"), istr("G2", &format!("#linear(Yield, Light{})", " + Light".repeat(100_000 / 8)))), None)), 1, &["Data!G2: error:", "more than the limit of 8192 bytes"], true),
        case("text_longer_than_a_cell_holds", "xlsx", hand(&hand_table(&format!("{}{}", istr("G1", "#linear(Yield, Light, name=good)"), istr("H1", &"greenhouse ".repeat(4000))), None)), 0, &["Data!H1", "32,767"], true),
        case("external_reference_formula", "xlsx", xlsx(&[sheet("Data", table(12, vec![good(), (0, 3, t("Remote")), (1, 3, C::F("'/etc/[passwd]Sheet1'!A1", "7")), (2, 3, C::F("[1]Sheet1!$A$1", "8"))]))]), 0, &[], true),
        case("opendocument_named_xlsx", "xlsx", minimal_ods("", &format!(
            r#"<table:table table:name="Data"><table:table-row>{}</table:table-row>{}</table:table>"#,
            ["Light", "Yield", "#linear(Yield, Light, name=good)"].iter().map(|h| format!(r#"<table:table-cell office:value-type="string"><text:p>{h}</text:p></table:table-cell>"#)).collect::<String>(),
            (1..=10).map(|i| format!(r#"<table:table-row><table:table-cell office:value-type="float" office:value="{i}"/><table:table-cell table:formula="of:=[.A{}]*2+1" office:value-type="float" office:value="{}"/></table:table-row>"#, i + 1, 2 * i + 1 + i % 3)).collect::<String>()
        )), 0, &[], true),
    ];
    // A case whose only data is one column of text.
    v.push(case("all_text_table", "xlsx", xlsx(&[sheet("Data", vec![(0, 0, t("Bay")), (1, 0, t("North")), (2, 0, t("South")), (0, 2, t("#linear(Bay, Bay)"))])]), 1, &["Data!C1: error:", "is a text column"], false));
    v
}

fn sha(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}


/// Runs one case; returns a description of every broken expectation.
fn check(c: &Case) -> Vec<String> {
    let mut bad = Vec::new();
    let d = scratch(&format!("corpus-{}", c.name));
    let file = format!("{}.{}", c.name, c.ext);
    let input = d.join(&file);
    std::fs::write(&input, &c.bytes).unwrap();
    let before = sha(&c.bytes);
    let o = plumb(&["run", &file], &d);
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    let out = String::from_utf8_lossy(&o.stdout).into_owned();
    let short = |s: &str| s.chars().take(1500).collect::<String>();
    if err.contains("panicked") || err.contains("RUST_BACKTRACE") {
        bad.push(format!("panic: {}", short(&err)));
    }
    if o.status.code() != Some(c.status) {
        bad.push(format!("exit {:?}, expected {}; stderr: {}", o.status.code(), c.status, short(&err)));
    }
    if c.status != 0 && !err.contains(&file) {
        bad.push(format!("stderr does not name the file {file}: {}", short(&err)));
    }
    for w in &c.stderr {
        if !err.contains(w) {
            bad.push(format!("stderr lacks {w:?}: {}", short(&err)));
        }
    }
    if sha(&std::fs::read(&input).unwrap()) != before {
        bad.push("the input changed".into());
    }
    let output = plumb::pipeline::default_output(&input);
    let output_name = output.file_name().unwrap().to_string_lossy().into_owned();
    let files = files_in(&d);
    if o.status.code() == Some(2) {
        if files != [file.clone()] {
            bad.push(format!("nothing may be written on exit 2, found {files:?}"));
        }
    } else {
        let mut want = vec![file.clone(), output_name.clone()];
        want.sort();
        if files != want {
            bad.push(format!("only the output may be written, found {files:?}"));
        }
        if c.good && !out.lines().any(|l| (l.starts_with("ok") || l.starts_with("warning")) && l.contains(" good ")) {
            bad.push(format!("the good request was not fitted: {out}"));
        }
        if output.exists() {
            let r = std::panic::catch_unwind(|| common::faithful::assert_faithful(&input, &output));
            if let Err(e) = r {
                let msg = e.downcast_ref::<String>().cloned().or_else(|| e.downcast_ref::<&str>().map(|s| s.to_string())).unwrap_or_default();
                bad.push(format!("not a faithful copy: {}", short(&msg)));
            }
        }
    }
    if bad.is_empty() {
        let _ = std::fs::remove_dir_all(&d);
    }
    bad
}

#[test]
fn the_corpus_has_at_least_forty_cases_with_unique_names() {
    let cs = cases();
    println!("{} corpus cases", cs.len());
    assert!(cs.len() >= 40, "{} cases", cs.len());
    let mut names: Vec<&str> = cs.iter().map(|c| c.name).collect();
    names.sort();
    names.dedup();
    assert_eq!(names.len(), cs.len(), "case names are unique");
}

#[test]
fn every_corpus_case_behaves_as_expected() {
    let mut failures = Vec::new();
    for c in cases() {
        for b in check(&c) {
            failures.push(format!("{}: {b}", c.name));
        }
    }
    assert!(failures.is_empty(), "{} broken expectations:\n{}", failures.len(), failures.join("\n\n"));
}
