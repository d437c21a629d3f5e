//! cargo-fuzz target: read → find → resolve → fit on workbook bytes (see
//! fuzz/targets.rs). Seed it with small workbooks: `scripts/fuzz.sh` writes
//! them to fuzz/corpus/workbook/ with the stable driver's `--seeds`.
#![no_main]

#[path = "../targets.rs"]
mod targets;

libfuzzer_sys::fuzz_target!(|data: &[u8]| {
    targets::read_and_evaluate(data, "fuzz.xlsx");
});
