//! A mutation fuzzer for the stable toolchain: runs the same target bodies as
//! the cargo-fuzz targets (fuzz/targets.rs) on mutated inputs for a time
//! budget, and saves every input whose panic escapes to a crash folder.
//!
//! ```text
//! cargo run --release --example fuzz_stable -- parse 300 [SEED]
//! cargo run --release --example fuzz_stable -- workbook 300 [SEED]
//! cargo run --release --example fuzz_stable -- --seeds fuzz/corpus/workbook
//! ```
//!
//! Inputs start from small seeds (valid and odd requests; small xlsx, ods and
//! compound files with request cells) and are mutated by bit flips, byte
//! changes, insertions of request tokens, deletions, duplications and
//! truncation; half of the workbook inputs are mutated inside the sheet XML
//! and re-packed with correct checksums, so the readers see damaged content
//! rather than only a damaged archive. Deterministic for a given seed.
//! Crashes are written to `fuzz/artifacts/stable-TARGET/`. With
//! `PLUMB_FUZZ_LAST=FILE` each input is written to FILE before it runs, so
//! an input that kills the process (out of memory) can be found; run under
//! `ulimit -v` to turn a runaway allocation into an abort.

#[path = "../fuzz/targets.rs"]
mod targets;

#[allow(dead_code)]
#[path = "../tests/common/workbooks.rs"]
mod workbooks;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// xorshift64* (Vigna 2016, from memory): a small deterministic generator.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }
}

const TOKENS: &[&str] = &[
    "(", ")", ",", "+", "-", "*", "/", "^", "=", "\"", "'", "!", ":", "$", "#", " ", "linear", "log(", "exp(", "sqrt(", "base(", "against(",
    "Light", "Yield", "CO2", "A1", "C2:C13", "C:C", "XFD1048576", "XFE1", "A0", "Data!", "'Bay 2'!", "1e308", "1e-320", "0.", ".5",
    "level=", "data=", "confidence=", "table=", "gaps=stop", "weights=", "missing=stop", "intercept=no", "name=", "é", "温", "\u{202e}", "\u{feff}", "\u{0}", "\n", "''", "\"\"",
];

fn mutate(rng: &mut Rng, data: &mut Vec<u8>) {
    for _ in 0..1 + rng.below(4) {
        match rng.below(7) {
            0 if !data.is_empty() => {
                let i = rng.below(data.len());
                data[i] ^= 1 << rng.below(8);
            }
            1 if !data.is_empty() => {
                let i = rng.below(data.len());
                data[i] = [0u8, 0xFF, b'<', b'>', b'"', b'0', b'9', 0x7F, 0x80][rng.below(9)];
            }
            2 => {
                let t = TOKENS[rng.below(TOKENS.len())].as_bytes();
                let i = rng.below(data.len() + 1);
                data.splice(i..i, t.iter().copied());
            }
            3 if !data.is_empty() => {
                let i = rng.below(data.len());
                let n = 1 + rng.below((data.len() - i).min(64));
                data.drain(i..i + n);
            }
            4 if !data.is_empty() => {
                let i = rng.below(data.len());
                let n = 1 + rng.below((data.len() - i).min(64));
                let chunk: Vec<u8> = data[i..i + n].to_vec();
                let j = rng.below(data.len() + 1);
                data.splice(j..j, chunk);
            }
            5 if !data.is_empty() => {
                let n = rng.below(data.len());
                data.truncate(n);
            }
            _ => {
                let i = rng.below(data.len() + 1);
                let n = rng.below(8);
                data.splice(i..i, (0..n).map(|_| rng.next() as u8));
            }
        }
    }
}

fn request_seeds() -> Vec<Vec<u8>> {
    [
        "#linear(Yield, Light)",
        "#linear(Yield, Light + CO2 + Bay, name=bays)",
        "#linear(Yield, Light + Light^2 + CO2, confidence=0.99)",
        "#linear(log(Yield), Light + CO2*Irrigation, gaps=stop)",
        "#linear(Yield, Light, weights=Beds, intercept=no)",
        "#linear(Yield, Light + Bay, against(Bay=\"South\"), table=Weekly!A1:F105)",
        "#linear(Yield, Light + Bay, base(Bay=\"East\"), data=Weekly!A1:F105, level=0.9, missing=skip)",
        "#linear(Data!F2:F105, Data!C2:C105)",
        "#linear('Bay 2'!C:C, -x^-2*(a-b)/c, \"Outdoor temp\"=14, start(a=40, k=0.2))",
        "  #f($C$7, C$7, 1.5e3, .5, 3., table='O''Neil')  ",
        "#linear(Yield, Light",
        "# note",
    ]
    .iter()
    .map(|s| s.as_bytes().to_vec())
    .collect()
}

/// Sheet XML bodies of the structure-aware workbook seeds.
fn sheet_xml_seeds() -> Vec<String> {
    let istr = |r: &str, s: &str| format!(r#"<c r="{r}" t="inlineStr"><is><t>{s}</t></is></c>"#);
    let mut rows = format!(
        r#"<dimension ref="A1:E9"/><sheetData><row r="1">{}{}{}{}</row>"#,
        istr("A1", "Light"),
        istr("B1", "Yield"),
        istr("C1", "Bay"),
        istr("E1", "#linear(Yield, Light + Bay)")
    );
    for r in 2..=9 {
        rows.push_str(&format!(
            r#"<row r="{r}"><c r="A{r}"><v>{}</v></c><c r="B{r}"><v>{}</v></c>{}<c r="D{r}" s="1"><v>{}</v></c></row>"#,
            r * 2,
            r * 3 + r % 3,
            istr(&format!("C{r}"), ["North", "South"][r as usize % 2]),
            46000 + r
        ));
    }
    rows.push_str(r#"<row r="10"><c r="A10" t="e"><v>#DIV/0!</v></c><c r="B10"><f>A2*2</f><v>4</v></c><c r="E10" t="inlineStr"><is><t>#linear(B2:B9, A2:A9, confidence=0.9)</t></is></c></row></sheetData><mergeCells count="1"><mergeCell ref="C12:D13"/></mergeCells>"#);
    vec![rows, r#"<sheetData><row r="1"><c r="A1" t="s"><v>0</v></c></row></sheetData>"#.to_string()]
}

fn workbook_seeds() -> Vec<Vec<u8>> {
    let mut seeds: Vec<Vec<u8>> = sheet_xml_seeds().iter().map(|x| workbooks::minimal_xlsx(x, false)).collect();
    seeds.push(workbooks::minimal_xlsx(&sheet_xml_seeds()[0], true));
    seeds.push(workbooks::minimal_ods(
        "",
        r#"<table:table table:name="W"><table:table-row><table:table-cell office:value-type="string"><text:p>x</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>y</text:p></table:table-cell><table:table-cell office:value-type="string"><text:p>#linear(y, x)</text:p></table:table-cell></table:table-row><table:table-row><table:table-cell office:value-type="float" office:value="1"/><table:table-cell office:value-type="float" office:value="2"/></table:table-row><table:table-row><table:table-cell office:value-type="float" office:value="2"/><table:table-cell office:value-type="float" office:value="3.5"/></table:table-row><table:table-row><table:table-cell office:value-type="float" office:value="3"/><table:table-cell table:formula="of:=[.B3]*2" office:value-type="float" office:value="7"/></table:table-row></table:table>"#,
    ));
    seeds.push(workbooks::compound_file(&[("Workbook", &[])]));
    seeds.push(workbooks::compound_file(&[("EncryptionInfo", &[]), ("EncryptedPackage", &[])]));
    let path = std::env::temp_dir().join(format!("plumb-fuzz-seed-{}.xlsx", std::process::id()));
    let x: Vec<Option<f64>> = (0..8).map(|i| Some(i as f64)).collect();
    let y: Vec<Option<f64>> = (0..8).map(|i| Some(1.0 + 2.0 * i as f64 + (i % 3) as f64)).collect();
    workbooks::write_table(&path, "Data", &["Light", "Yield"], &[x, y], &[(0, 3, "#linear(Yield, Light)"), (1, 3, "#linear(Yield, log(Light), weights=Light)")]);
    if let Ok(b) = std::fs::read(&path) {
        seeds.push(b);
    }
    let _ = std::fs::remove_file(&path);
    seeds
}

static LAST_PANIC: Mutex<String> = Mutex::new(String::new());

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.first().map(String::as_str) == Some("--seeds") {
        // Writes the workbook seeds for cargo-fuzz's corpus folder.
        let dir = std::path::PathBuf::from(args.get(1).cloned().unwrap_or_else(|| "fuzz/corpus/workbook".into()));
        std::fs::create_dir_all(&dir).expect("create the seed folder");
        for (i, s) in workbook_seeds().iter().enumerate() {
            std::fs::write(dir.join(format!("seed-{i}")), s).expect("write a seed");
        }
        let pdir = dir.parent().map(|p| p.join("parse")).unwrap_or_else(|| "fuzz/corpus/parse".into());
        std::fs::create_dir_all(&pdir).expect("create the seed folder");
        for (i, s) in request_seeds().iter().enumerate() {
            std::fs::write(pdir.join(format!("seed-{i}")), s).expect("write a seed");
        }
        return;
    }
    let target = args.first().cloned().unwrap_or_else(|| "parse".into());
    let secs: u64 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(10);
    let seed: u64 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(0x9E37_79B9_7F4A_7C15);
    let (seeds, xml_seeds) = match target.as_str() {
        "parse" => (request_seeds(), Vec::new()),
        "workbook" => (workbook_seeds(), sheet_xml_seeds()),
        other => {
            eprintln!("unknown target {other}: use parse or workbook");
            std::process::exit(2);
        }
    };
    // Reader panics inside plumb's catch-all still run the hook; keep only
    // the last message, printed when a panic escapes.
    std::panic::set_hook(Box::new(|info| {
        if let Ok(mut m) = LAST_PANIC.lock() {
            *m = info.to_string();
        }
    }));
    let crash_dir = std::path::PathBuf::from(format!("fuzz/artifacts/stable-{target}"));
    let mut rng = Rng(seed | 1);
    let (start, budget) = (Instant::now(), Duration::from_secs(secs));
    let (mut runs, mut crashes) = (0u64, 0u64);
    let mut pool: Vec<Vec<u8>> = seeds.clone();
    let last_input = std::env::var_os("PLUMB_FUZZ_LAST").map(std::path::PathBuf::from);
    while start.elapsed() < budget {
        let input = if target == "workbook" && rng.below(2) == 0 {
            let mut xml = xml_seeds[rng.below(xml_seeds.len())].clone().into_bytes();
            mutate(&mut rng, &mut xml);
            workbooks::minimal_xlsx(&String::from_utf8_lossy(&xml), rng.below(2) == 0)
        } else {
            let mut d = pool[rng.below(pool.len())].clone();
            mutate(&mut rng, &mut d);
            d
        };
        if let Some(last) = &last_input {
            // Kept on disk before the run, so an input that kills the
            // process (out of memory, stack overflow) is not lost.
            let _ = std::fs::write(last, &input);
        }
        let result = catch_unwind(AssertUnwindSafe(|| match target.as_str() {
            "parse" => targets::parse_print_reparse(&input),
            _ => targets::read_and_evaluate(&input, "fuzz.xlsx"),
        }));
        runs += 1;
        if result.is_err() {
            crashes += 1;
            let _ = std::fs::create_dir_all(&crash_dir);
            let path = crash_dir.join(format!("crash-{runs}"));
            let _ = std::fs::write(&path, &input);
            let msg = LAST_PANIC.lock().map(|m| m.clone()).unwrap_or_default();
            eprintln!("crash saved to {}: {msg}", path.display());
        } else if pool.len() < 512 && rng.below(16) == 0 {
            // Keep some mutants as new starting points.
            pool.push(input);
        }
    }
    println!("{target}: {runs} inputs in {} s, {crashes} escaped panics", start.elapsed().as_secs());
    if crashes > 0 {
        std::process::exit(1);
    }
}
