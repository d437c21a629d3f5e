//! Safety of a run: the output can never be the input (through symbolic
//! links, hard links or a name differing in case); nothing is written but
//! the output (its temporary file is gone after the run); and no request
//! makes plumb open another file or start a program (checked with strace,
//! when it is installed and allowed to trace).

mod common;

use common::run::{files_in as files, plumb, plumb_exe, scratch, SOURCE_DATE_EPOCH};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn dir(name: &str) -> PathBuf {
    scratch(&format!("safety-{name}"))
}

fn book(path: &Path, requests: &[(u32, u32, &str)]) {
    let x: Vec<Option<f64>> = (0..12).map(|i| Some(i as f64)).collect();
    let y: Vec<Option<f64>> = (0..12).map(|i| Some(2.0 * i as f64 + if i % 2 == 0 { 0.5 } else { -0.5 })).collect();
    common::workbooks::write_table(path, "Data", &["Light", "Yield"], &[x, y], requests);
}


#[cfg(unix)]
#[test]
fn the_output_may_not_be_the_input_through_links() {
    let d = dir("links");
    book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)")]);
    let before = std::fs::read(d.join("book.xlsx")).unwrap();
    std::os::unix::fs::symlink(d.join("book.xlsx"), d.join("link.xlsx")).unwrap();
    std::fs::hard_link(d.join("book.xlsx"), d.join("hard.xlsx")).unwrap();
    std::fs::create_dir(d.join("sub")).unwrap();
    std::os::unix::fs::symlink(&d, d.join("sub/up")).unwrap();
    // The output named as the input through a symbolic link, a hard link,
    // a linked folder, a different case, and the input named through a link.
    for (input, target) in [
        ("book.xlsx", "link.xlsx"),
        ("book.xlsx", "hard.xlsx"),
        ("book.xlsx", "sub/up/book.xlsx"),
        ("book.xlsx", "sub/../book.xlsx"),
        ("book.xlsx", "Book.XLSX"),
        ("link.xlsx", "book.xlsx"),
        ("hard.xlsx", "book.xlsx"),
    ] {
        let o = plumb(&["run", input, "-o", target], &d);
        assert_eq!(o.status.code(), Some(2), "{input} -> {target}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains("is the input itself") && err.contains("choose another name with -o"), "{input} -> {target}: {err}");
    }
    assert_eq!(std::fs::read(d.join("book.xlsx")).unwrap(), before);
    assert!(std::fs::symlink_metadata(d.join("link.xlsx")).unwrap().file_type().is_symlink());
    assert_eq!(files(&d), ["book.xlsx", "hard.xlsx", "link.xlsx", "sub"]);
    let _ = std::fs::remove_dir_all(&d);
}

#[test]
fn nothing_is_written_but_the_output() {
    let d = dir("only-output");
    book(&d.join("book.xlsx"), &[(0, 4, "#linear(Yield, Light)"), (1, 4, "#linear(Yield, Nope)")]);
    let before = std::fs::read(d.join("book.xlsx")).unwrap();
    let o = plumb(&["run", "book.xlsx"], &d);
    assert_eq!(o.status.code(), Some(1), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(files(&d), ["book.fitted.xlsx", "book.xlsx"]);
    assert_eq!(std::fs::read(d.join("book.xlsx")).unwrap(), before);
    // `check` writes nothing at all.
    std::fs::remove_file(d.join("book.fitted.xlsx")).unwrap();
    let o = plumb(&["check", "book.xlsx"], &d);
    assert_eq!(o.status.code(), Some(1));
    assert_eq!(files(&d), ["book.xlsx"]);
    // A run that fails leaves nothing behind, and an existing output untouched.
    std::fs::write(d.join("keep.xlsx"), b"earlier output").unwrap();
    std::fs::write(d.join("bad.xlsx"), b"not a workbook").unwrap();
    let o = plumb(&["run", "bad.xlsx", "-o", "keep.xlsx"], &d);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(d.join("keep.xlsx")).unwrap(), b"earlier output");
    assert_eq!(files(&d), ["bad.xlsx", "book.xlsx", "keep.xlsx"]);
    let _ = std::fs::remove_dir_all(&d);
}

/// Runs plumb under `strace -f` and returns the trace, or `None` when strace
/// is missing or may not trace here.
fn traced(args: &[&str], d: &Path) -> Option<(Output, String)> {
    let log = d.join("trace.log");
    let o = Command::new("strace")
        .args(["-f", "-qq", "-e", "trace=open,openat,openat2,creat,execve,execveat,vfork,fork,rename,renameat,renameat2,unlink,unlinkat", "-o"])
        .arg(&log)
        .arg(plumb_exe())
        .args(args)
        .current_dir(d)
        .env("SOURCE_DATE_EPOCH", SOURCE_DATE_EPOCH)
        .output()
        .ok()?;
    let trace = std::fs::read_to_string(&log).ok()?;
    let _ = std::fs::remove_file(&log);
    if !trace.contains("execve(") {
        return None;
    }
    Some((o, trace))
}

#[test]
fn no_request_reads_another_file_or_starts_a_program() {
    let d = dir("trace");
    // Requests naming other files as sheets, and a cell holding an external
    // reference formula to another workbook.
    let requests = [
        (0, 4, "#linear(Yield, Light, table='/etc/passwd'!A1:B2)"),
        (1, 4, "#linear('/etc/passwd'!A1:A12, Light)"),
        (2, 4, "#linear(Yield, Light, table='../other.xlsx')"),
        (3, 4, "#linear(Yield, Light, name=good)"),
    ];
    book(&d.join("book.xlsx"), &requests);
    std::fs::write(d.join("other.xlsx"), b"bait").unwrap();
    let Some((o, trace)) = traced(&["run", "book.xlsx"], &d) else {
        println!("notice: strace is not available or may not trace here; the trace check is skipped");
        return;
    };
    assert_eq!(o.status.code(), Some(1), "{}", String::from_utf8_lossy(&o.stderr));
    let execs = trace.lines().filter(|l| l.contains("execve(") && !l.contains("resumed")).count();
    assert_eq!(execs, 1, "plumb starts no program:\n{trace}");
    assert!(!trace.contains("fork("), "plumb starts no process:\n{trace}");
    for l in trace.lines().filter(|l| l.contains("open")) {
        assert!(!l.contains("/etc/passwd") && !l.contains("other.xlsx"), "opened another file: {l}");
    }
    // After the program has started (the loader searches for libraries
    // first), the run opens only what it should.
    let start = trace.find("\"book.xlsx\"").expect("the input is opened");
    for l in trace[start..].lines().filter(|l| l.contains("open")) {
        // Apart from the run-time's own files (libraries, /proc, /sys), only
        // the input and the output's folder are opened.
        if let Some(path) = l.split('"').nth(1) {
            let system = ["/lib", "/usr/lib", "/etc/ld.so", "/proc/", "/sys/", "/dev/"].iter().any(|p| path.starts_with(p)) || path.contains(".so"); // shared libraries the run-time loads
            let ours = path == "book.xlsx" || path.starts_with("./.book.fitted.xlsx") || path.starts_with('.') && path.contains("tmp") || path == ".";
            assert!(system || ours, "opened an unexpected file: {l}");
        }
    }
    let _ = std::fs::remove_dir_all(&d);
}
