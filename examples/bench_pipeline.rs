//! Measures the whole pipeline on a generated numeric workbook: read, fit
//! (one least-squares request with every per-row column), lay out, write.
//!
//! ```text
//! cargo run --release --example bench_pipeline -- 1000000          # rows (default 100000)
//! cargo run --release --example bench_pipeline -- 1000000 values   # the values-only writer
//! ```
//!
//! By default the output keeps the input's own package, as `plumb run`
//! does for an xlsx input; `values` writes the source sheets from their
//! values instead (the writer's fallback, and the path of xls and ods
//! inputs).
//!
//! The input is made once per row count in the system temp folder
//! (`plumb-bench-N.xlsx`: 12 numeric columns, one request); each phase's
//! wall time and the process's peak resident memory after it are printed.
//! Results and the machine they came from are in docs/benchmarks.md.

use plumb::fits::Registry;
use plumb::layout::lay_out;
use plumb::report::RunInfo;
use plumb::pipeline::evaluate_book;
use plumb::read::read_workbook;
use plumb::write::{write_book, write_book_keeping, WriteOptions};
use rust_xlsxwriter::Workbook;
use std::time::Instant;

/// Peak resident set size of this process in MB (Linux /proc).
fn peak_mb() -> f64 {
    let s = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    s.lines()
        .find(|l| l.starts_with("VmHWM:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|k| k.parse::<f64>().ok())
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

/// A deterministic pseudo-random stream (SplitMix64; Steele, Lea & Flood 2014).
struct Mix(u64);
impl Mix {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
}

fn make_input(path: &std::path::Path, rows: u32) -> Result<(), Box<dyn std::error::Error>> {
    let mut wb = Workbook::new();
    let ws = wb.add_worksheet_with_constant_memory()?;
    ws.set_name("Data")?;
    let mut rng = Mix(7);
    let names: Vec<String> = std::iter::once("y".to_string()).chain((1..12).map(|i| format!("x{i}"))).collect();
    for (c, n) in names.iter().enumerate() {
        ws.write_string(0, c as u16, n)?;
    }
    let terms = names[1..].join(" + ");
    ws.write_string(0, 14, format!("#linear(y, {terms}, name=bench)"))?;
    for r in 1..=rows {
        let xs: Vec<f64> = (0..11).map(|_| rng.next() * 10.0).collect();
        let y = 1.0 + xs.iter().enumerate().map(|(i, x)| (i as f64 + 1.0) * 0.1 * x).sum::<f64>() + rng.next();
        ws.write_number(r, 0, y)?;
        for (i, x) in xs.iter().enumerate() {
            ws.write_number(r, i as u16 + 1, *x)?;
        }
    }
    wb.save(path)?;
    Ok(())
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let rows: u32 = std::env::args().nth(1).map(|a| a.parse()).transpose()?.unwrap_or(100_000);
    let values_only = std::env::args().nth(2).is_some_and(|a| a == "values");
    let dir = std::env::temp_dir();
    let input = dir.join(format!("plumb-bench-{rows}.xlsx"));
    if !input.exists() {
        let t = Instant::now();
        make_input(&input, rows)?;
        eprintln!("made {} in {:.1} s", input.display(), t.elapsed().as_secs_f64());
    }
    let out = dir.join(format!("plumb-bench-{rows}.fitted.xlsx"));
    let start = Instant::now();
    let t = Instant::now();
    let book = read_workbook(&input)?;
    let read_s = t.elapsed().as_secs_f64();
    let read_mb = peak_mb();
    let t = Instant::now();
    let summary = evaluate_book(&book, "bench", &Registry::builtin());
    let fit_s = t.elapsed().as_secs_f64();
    let fit_mb = peak_mb();
    assert!(!summary.any_failed(), "{:?}", summary.problems);
    let t = Instant::now();
    let info = RunInfo { version: env!("CARGO_PKG_VERSION").into(), input_name: "bench".into(), input_sha256: String::new(), time: String::new(), sheets: None };
    let laid = lay_out(&book, &summary.reports, &info);
    let opts = WriteOptions { created_unix: 0, zip_level: 3 };
    if values_only {
        write_book(&book, &laid, &out, &opts)?;
    } else {
        let w = write_book_keeping(&book, &laid, &input, &out, &opts)?;
        assert!(w.fallback.is_none(), "{:?}", w.fallback);
    }
    let write_s = t.elapsed().as_secs_f64();
    let total = start.elapsed().as_secs_f64();
    let how = if values_only { "values" } else { "kept" };
    println!("rows {rows} ({how}): read {read_s:.2} s (peak {read_mb:.0} MB), resolve+fit {fit_s:.2} s (peak {fit_mb:.0} MB), layout+write {write_s:.2} s, total {total:.2} s, peak {:.0} MB", peak_mb());
    let _ = std::fs::remove_file(&out);
    Ok(())
}
