//! The binary as a user runs it: `run`, `check`, `functions`, exit statuses,
//! messages on standard error, nothing written when the input is unusable.

mod common;

use common::run::{plumb, scratch};
use common::workbooks;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn dir(name: &str) -> PathBuf {
    scratch(&format!("cli-{name}"))
}

fn small_book(path: &Path, requests: &[(u32, u32, &str)]) {
    let x: Vec<Option<f64>> = (0..12).map(|i| Some(i as f64)).collect();
    // Noise in the pattern + − − + (not strictly alternating, which would
    // make the residuals look correlated in row order and draw a warning).
    let y: Vec<Option<f64>> = (0..12).map(|i| Some(2.0 * i as f64 + if (i + 1) % 4 < 2 { 0.5 } else { -0.5 })).collect();
    workbooks::write_table(path, "Data", &["Light", "Yield"], &[x, y], requests);
}

fn no_panic(o: &Output) {
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!err.contains("panicked"), "panic: {err}");
}

#[test]
fn run_writes_the_output_and_exits_zero_when_all_fit() {
    let d = dir("ok");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
    let o = plumb(&["run", "book.xlsx"], &d);
    no_panic(&o);
    assert_eq!(o.status.code(), Some(0), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(d.join("book.fitted.xlsx").exists());
    let names = common::output::sheet_names(&d.join("book.fitted.xlsx"));
    for s in ["Data", "Fits", "Coefficients", "Intervals", "Diagnostics", "Guide", "About"] {
        assert!(names.iter().any(|n| n == s), "missing sheet {s} in {names:?}");
    }
    // No temporary file is left beside the output.
    let left: Vec<_> = std::fs::read_dir(&d).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
    assert_eq!(left.len(), 2, "{left:?}");
}

#[test]
fn a_failed_request_exits_one_shows_a_caret_and_still_writes() {
    let d = dir("fail");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Ligth)"), (1, 4, "#linear(Yield, Light, name=good)")]);
    let o = plumb(&["run", "book.xlsx", "-o", "result.xlsx"], &d);
    no_panic(&o);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("book.xlsx, Data!E1: error: there is no column headed 'Ligth'"), "{err}");
    assert!(err.contains("    #linear(Yield, Ligth)\n                   ^^^^^\n"), "{err}");
    assert!(err.contains("did you mean Light?"), "{err}");
    assert!(d.join("result.xlsx").exists());
    let coefs = common::output::coefficients(&d.join("result.xlsx"), "good");
    assert_eq!(coefs.len(), 2);
}

#[test]
fn check_prints_status_and_writes_nothing() {
    let d = dir("check");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)"), (1, 4, "#lineer(Yield, Light)")]);
    let o = plumb(&["check", "book.xlsx"], &d);
    no_panic(&o);
    assert_eq!(o.status.code(), Some(1));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(out.contains("ok") && out.contains("error"), "{out}");
    assert!(String::from_utf8_lossy(&o.stderr).contains("did you mean #linear?"));
    assert_eq!(std::fs::read_dir(&d).unwrap().count(), 1);
}

#[test]
fn functions_lists_the_vocabulary() {
    let d = dir("functions");
    let o = plumb(&["functions"], &d);
    assert_eq!(o.status.code(), Some(0));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(out.contains("#linear(response, terms"), "{out}");
    for opt in ["confidence=", "intercept=", "weights=", "gaps=", "table=", "against(", "name="] {
        assert!(out.contains(opt), "{opt} missing from {out}");
    }
    // Group options are shown as they are written.
    assert!(out.contains("#nonlinear(response, model, start(a=…, k=…), name=…"), "{out}");
    assert!(out.contains(", against(Bay=\"East\"), "), "{out}");
    assert!(!out.contains("col=level"), "{out}");
}

#[test]
fn an_unusable_input_exits_two_and_writes_nothing() {
    let d = dir("bad");
    std::fs::write(d.join("notes.xlsx"), b"this is not a workbook").unwrap();
    let o = plumb(&["run", "notes.xlsx"], &d);
    no_panic(&o);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("notes.xlsx"));
    assert_eq!(std::fs::read_dir(&d).unwrap().count(), 1);
}

#[test]
fn the_output_may_not_be_the_input() {
    let d = dir("same");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
    let before = std::fs::read(d.join("book.xlsx")).unwrap();
    for target in ["book.xlsx", "./book.xlsx", "BOOK.xlsx"] {
        let o = plumb(&["run", "book.xlsx", "-o", target], &d);
        assert_eq!(o.status.code(), Some(2), "{target}");
        assert!(String::from_utf8_lossy(&o.stderr).contains("is the input itself"));
    }
    assert_eq!(std::fs::read(d.join("book.xlsx")).unwrap(), before);
}

#[test]
fn an_output_folder_that_cannot_be_used_is_said_plainly() {
    let d = dir("folder");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
    std::fs::write(d.join("notes.txt"), "a file, not a folder").unwrap();
    let before = common::run::files_in(&d);
    for (target, want) in [
        ("nope/out.xlsx", "error: the folder nope does not exist; create it or choose another -o"),
        ("nope/deeper/out.xlsx", "error: the folder nope/deeper does not exist; create it or choose another -o"),
        ("notes.txt/out.xlsx", "error: notes.txt is not a folder; choose another -o"),
    ] {
        let o = plumb(&["run", "book.xlsx", "-o", target], &d);
        no_panic(&o);
        let err = String::from_utf8_lossy(&o.stderr);
        // Status 2: nothing was written.
        assert_eq!(o.status.code(), Some(2), "{target}: {err}");
        assert!(err.contains(want), "{target}: {err}");
        assert!(err.contains("nothing was written"), "{err}");
        assert!(!err.contains("emporary") && !err.contains(".tmp"), "no temporary name: {err}");
    }
    assert_eq!(common::run::files_in(&d), before, "nothing written");
    // A folder that cannot be written to. Permissions do not bind root, so
    // the check is made only where they do.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let ro = d.join("locked");
        std::fs::create_dir(&ro).unwrap();
        std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o555)).unwrap();
        if std::fs::write(ro.join("probe"), "x").is_ok() {
            println!("notice: permissions do not apply to this user (root); the read-only folder case is not checked");
        } else {
            let o = plumb(&["run", "book.xlsx", "-o", "locked/out.xlsx"], &d);
            let err = String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(2), "{err}");
            assert!(err.contains("error: the folder locked cannot be written to ("), "{err}");
            assert!(err.contains("choose another -o"), "{err}");
            assert!(!err.contains(".tmp"), "{err}");
        }
        std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
}

#[test]
fn the_help_says_what_status_2_means() {
    let o = Command::new(common::run::plumb_exe()).args(["run", "--help"]).output().unwrap();
    let help = String::from_utf8_lossy(&o.stdout);
    assert!(help.contains("2 nothing was written (the input could not be used, or the output cannot be written there)"), "{help}");
}

#[test]
fn an_output_open_in_a_spreadsheet_application_is_replaced_with_a_warning() {
    // Lock files as LibreOffice (`.~lock.NAME#`) and Microsoft Office (`~$NAME`) leave them.
    for (case, lock) in [("lo", ".~lock.book.fitted.xlsx#"), ("ms", "~$book.fitted.xlsx")] {
        let d = dir(&format!("lock-{case}"));
        small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
        // No lock: no warning.
        let o = plumb(&["run", "book.xlsx"], &d);
        assert_eq!(o.status.code(), Some(0));
        assert!(!String::from_utf8_lossy(&o.stderr).contains("seems to be open"));
        // The old output, open in an application.
        std::fs::write(d.join("book.fitted.xlsx"), "the old results").unwrap();
        std::fs::write(d.join(lock), "user,host,2026-01-01").unwrap();
        let o = plumb(&["run", "book.xlsx"], &d);
        no_panic(&o);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(0), "{err}");
        assert!(err.contains("book.fitted.xlsx: warning: the output seems to be open in a spreadsheet application"), "{err}");
        assert!(err.contains(&format!("(the lock file {lock} is beside it)")), "{err}");
        assert!(err.contains("close it and run again"), "{err}");
        // Still written: the new results replaced the old file; the lock is left alone.
        assert_eq!(common::output::coefficients(&d.join("book.fitted.xlsx"), "Data!E1").len(), 2);
        assert!(d.join(lock).exists());
    }
}

#[test]
fn inputs_of_one_name_in_other_formats_keep_their_own_outputs() {
    use common::workbooks::{minimal_ods, minimal_xls, XlsCell, XlsSheet};
    let d = dir("same-stem");
    // Three workbooks named book, each with its own slope: 2 (xlsx), 3 (xls), 5 (ods).
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light, name=slope)")]);
    let noise = |i: u32| if (i + 1) % 4 < 2 { 0.5 } else { -0.5 };
    let mut cells = vec![(0, 0, XlsCell::Label("Light")), (0, 1, XlsCell::Label("Yield")), (0, 3, XlsCell::Label("#linear(Yield, Light, name=slope)"))];
    for i in 0..12u16 {
        cells.push((i + 1, 0, XlsCell::Number { x: f64::from(i), date: false }));
        cells.push((i + 1, 1, XlsCell::Number { x: 3.0 * f64::from(i) + noise(u32::from(i)), date: false }));
    }
    std::fs::write(d.join("book.xls"), minimal_xls(&[XlsSheet { name: "Data", state: 0, cells, merged: vec![] }], false)).unwrap();
    let num = |x: f64| format!(r#"<table:table-cell office:value-type="float" office:value="{x}"><text:p>{x}</text:p></table:table-cell>"#);
    let txt = |t: &str| format!(r#"<table:table-cell office:value-type="string"><text:p>{t}</text:p></table:table-cell>"#);
    let mut rows = format!("<table:table-row>{}{}<table:table-cell/>{}</table:table-row>", txt("Light"), txt("Yield"), txt("#linear(Yield, Light, name=slope)"));
    for i in 0..12u32 {
        rows.push_str(&format!("<table:table-row>{}{}</table:table-row>", num(f64::from(i)), num(5.0 * f64::from(i) + noise(i))));
    }
    std::fs::write(d.join("book.ods"), minimal_ods("", &format!(r#"<table:table table:name="Data">{rows}</table:table>"#))).unwrap();

    for input in ["book.xlsx", "book.xls", "book.ods"] {
        let o = plumb(&["run", input], &d);
        no_panic(&o);
        assert_eq!(o.status.code(), Some(0), "{input}: {}", String::from_utf8_lossy(&o.stderr));
    }
    assert_eq!(
        common::run::files_in(&d),
        ["book.fitted.xlsx", "book.ods", "book.ods-fitted.xlsx", "book.xls", "book.xls-fitted.xlsx", "book.xlsx"],
        "three outputs, none replacing another"
    );
    for (out, input, slope) in [("book.fitted.xlsx", "book.xlsx", 2.0), ("book.xls-fitted.xlsx", "book.xls", 3.0), ("book.ods-fitted.xlsx", "book.ods", 5.0)] {
        let c = common::output::coefficients(&d.join(out), "slope");
        // The noise + − − + sums to 0 and has Σ j·noise = 0 over each period of
        // four rows, so over 12 rows the fitted slope is the true one (arithmetic).
        let b = c[1].estimate.unwrap();
        assert!((b - slope).abs() < 1e-9, "{out}: slope {b}, expected {slope}");
        let about = common::output::table(&d.join(out), "About");
        assert!(about.iter().any(|r| r.get(1).and_then(common::output::text) == Some(input)), "{out} names its input {input}");
    }
    // --help says so.
    let o = Command::new(common::run::plumb_exe()).args(["run", "--help"]).output().unwrap();
    let help = String::from_utf8_lossy(&o.stdout);
    assert!(help.contains("NAME.fitted.xlsx for NAME.xlsx, NAME.EXT-fitted.xlsx for other inputs"), "{help}");
}

#[test]
fn formulas_without_stored_results_are_explained() {
    // A Type column of formulas saved without their results (no <v>), as
    // programs that write formulas without computing them save it.
    let mut rows = String::from(r#"<row r="1"><c r="A1" t="inlineStr"><is><t>Light</t></is></c><c r="B1" t="inlineStr"><is><t>Yield</t></is></c><c r="C1" t="inlineStr"><is><t>Type</t></is></c><c r="E1" t="inlineStr"><is><t>#linear(Yield, Light + Type)</t></is></c><c r="E2" t="inlineStr"><is><t>#linear(Yield, Light, name=plain)</t></is></c></row>"#);
    for i in 2..=13 {
        rows.push_str(&format!(r#"<row r="{i}"><c r="A{i}"><v>{i}</v></c><c r="B{i}"><v>{}</v></c><c r="C{i}"><f>IF(A{i}&gt;6,"big","small")</f></c></row>"#, 2 * i + i % 3));
    }
    let d = dir("uncomputed");
    std::fs::write(d.join("saved.xlsx"), common::workbooks::minimal_xlsx(&format!("<sheetData>{rows}</sheetData>"), false)).unwrap();
    for cmd in ["check", "run"] {
        let o = plumb(&[cmd, "saved.xlsx"], &d);
        no_panic(&o);
        let err = String::from_utf8_lossy(&o.stderr);
        // The request using Type fails, the other fits: status 1.
        assert_eq!(o.status.code(), Some(1), "{cmd}: {err}");
        let want = "saved.xlsx, Data!C2: warning: this cell and 11 other formula cells of Data have no stored results, so plumb reads them as blank: the file was saved by a program that does not compute formulas
    fix: open the file in a spreadsheet application and save it again, which stores the results; then run plumb again
";
        assert!(err.starts_with(want), "{cmd}: the warning comes first:
{err}");
        // The request that fails says why at its own cell too.
        assert!(err.contains("12 with a formula that has no stored result (first Data!C2)"), "{cmd}: {err}");
        assert!(err.contains("fix: some cells are formulas saved without their results; open the file in a spreadsheet application and save it again"), "{cmd}: {err}");
    }
}

#[test]
fn pinned_time_gives_identical_bytes() {
    let d = dir("repro");
    small_book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
    assert_eq!(plumb(&["run", "book.xlsx", "-o", "a.xlsx"], &d).status.code(), Some(0));
    assert_eq!(plumb(&["run", "book.xlsx", "-o", "b.xlsx"], &d).status.code(), Some(0));
    assert_eq!(std::fs::read(d.join("a.xlsx")).unwrap(), std::fs::read(d.join("b.xlsx")).unwrap());
}
