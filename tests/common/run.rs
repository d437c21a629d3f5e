//! Running plumb from the tests: fresh scratch folders, `plumb run` through
//! the library with the output's creation time pinned, the binary in a
//! folder with `SOURCE_DATE_EPOCH` set, and the files a run leaves there.

use std::path::{Path, PathBuf};
#[cfg(test)]
use std::process::{Command, Output};

use plumb::fits::Registry;
use plumb::pipeline::{run, RunConfig, Summary};

/// The creation time the binary is given (`SOURCE_DATE_EPOCH`): 2026-01-01
/// 00:00:00 UTC, so its output does not depend on when the test runs.
pub const SOURCE_DATE_EPOCH: &str = "1767225600";

/// An empty folder `plumb-NAME-PID` in the system's temp folder (emptied
/// first when a run before left it).
pub fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("plumb-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap_or_else(|e| panic!("cannot create {}: {e}", d.display()));
    d
}

/// `plumb run` through the library from `input` to `out`, the output's
/// creation time pinned to the Unix epoch; panics when the run stops
/// (unreadable input, unwritable output), not when a request fails.
pub fn run_to(input: &Path, out: &Path) -> Summary {
    let config = RunConfig { input: input.to_path_buf(), output: Some(out.to_path_buf()), created_unix: Some(0) };
    run(&config, &Registry::builtin()).unwrap_or_else(|e| panic!("plumb run {}: {e}", input.display()))
}

/// The path of the plumb binary. Cargo names it to integration tests only
/// (built with `cfg(test)`); the examples that share these helpers are not,
/// and do not run the binary.
#[cfg(test)]
pub fn plumb_exe() -> &'static str {
    env!("CARGO_BIN_EXE_plumb")
}

/// The plumb binary run with `args` in `dir`, with [`SOURCE_DATE_EPOCH`].
#[cfg(test)]
pub fn plumb(args: &[&str], dir: &Path) -> Output {
    Command::new(plumb_exe()).args(args).current_dir(dir).env("SOURCE_DATE_EPOCH", SOURCE_DATE_EPOCH).output().expect("run plumb")
}

/// The names of the files in `dir`, sorted.
pub fn files_in(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()))
        .map(|e| e.expect("a folder entry").file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}
