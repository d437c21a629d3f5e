//! The fuzz targets' bodies, shared by the cargo-fuzz targets
//! (`fuzz/fuzz_targets/*.rs`, nightly) and the stable-toolchain driver
//! (`examples/fuzz_stable.rs`). Each returns normally for every input; a
//! broken property panics.

use plumb::fits::Registry;
use plumb::syntax::{looks_like_request, parse_request, to_sexpr};

/// The parser: any text parses or gives an error whose span lies inside the
/// text, never panics; a parsed request prints to text that parses back to
/// the same tree (the same S-expression).
pub fn parse_print_reparse(data: &[u8]) {
    let text = String::from_utf8_lossy(data);
    let _ = looks_like_request(&text);
    match parse_request(&text) {
        Ok(tree) => {
            let printed = tree.to_string();
            let again = parse_request(&printed)
                .unwrap_or_else(|e| panic!("printed form does not parse: {text:?} printed as {printed:?}: {e}"));
            assert_eq!(to_sexpr(&tree), to_sexpr(&again), "print/reparse changed the tree of {text:?} (printed {printed:?})");
        }
        Err(e) => {
            assert!(e.span.start <= e.span.end && e.span.end <= text.len(), "span {:?} outside {} bytes of {text:?}", e.span, text.len());
            let _ = plumb::problems::caret_lines(&text, e.span.start, e.span.end);
        }
    }
}

/// The read → find → resolve → fit path on a workbook's bytes: reading
/// gives a workbook or a located error, and every request of a workbook
/// read is evaluated to a report (ok or a located error), never a panic.
pub fn read_and_evaluate(data: &[u8], name: &str) {
    match plumb::read::read_workbook_bytes(data, name) {
        Ok(book) => {
            let registry = Registry::builtin();
            let summary = plumb::pipeline::evaluate_book(&book, name, &registry);
            for p in &summary.problems {
                let _ = p.to_string();
            }
            let requests = summary.reports.iter().map(|r| r.cell.clone()).collect();
            let _ = plumb::pipeline::unwritable_cells(&book, &requests);
        }
        Err(e) => {
            let shown = e.to_string();
            assert!(shown.contains(name), "a read error names the file: {shown}");
        }
    }
}
