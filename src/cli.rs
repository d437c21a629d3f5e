//! The command line: arguments to a run configuration, printing, exit codes.
//!
//! Thin on purpose: it validates what the user typed, dispatches to the
//! pipeline, prints problems and the summary, and maps the outcome to an
//! [`Exit`] status. It talks to `pipeline` only.

use crate::pipeline::{self, RunConfig, Summary};
use clap::{Parser, Subcommand};
use std::path::PathBuf;

/// How a command ended, as the process's exit status.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Exit {
    /// 0: every request fitted.
    Ok = 0,
    /// 1: some request failed; the output is still written.
    SomeFailed = 1,
    /// 2: nothing was written: the input could not be used, or the output
    /// cannot be written where asked.
    Unusable = 2,
}

impl Exit {
    /// `Ok` or `SomeFailed` for a summary.
    fn of(s: &Summary) -> Exit {
        if s.any_failed() {
            Exit::SomeFailed
        } else {
            Exit::Ok
        }
    }
}

impl From<Exit> for std::process::ExitCode {
    fn from(e: Exit) -> Self {
        std::process::ExitCode::from(e as u8)
    }
}

const EXIT_HELP: &str = "Exit status: 0 every request fitted; 1 some request failed (the output is still written, each failure shown at its cell); 2 nothing was written (the input could not be used, or the output cannot be written there).

Reproducible output: set SOURCE_DATE_EPOCH (seconds since 1970, UTC) to pin the time recorded in the output; the same input then gives the same bytes.";

const CHECK_HELP: &str = "Exit status: 0 every request fits; 1 some request fails (each failure shown at its cell); 2 the input could not be used. check never writes a file.";

/// Regression fits requested from workbook cells.
#[derive(Debug, Parser)]
#[command(name = "plumb", version, about, after_help = EXIT_HELP)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Fit every request of a workbook and write a new workbook with the results.
    #[command(after_help = EXIT_HELP)]
    Run {
        /// The workbook (xlsx, xlsm, xlsb, xls or ods). It is never changed.
        input: PathBuf,
        /// Where to write (an .xlsx file); default beside the input: NAME.fitted.xlsx for NAME.xlsx, NAME.EXT-fitted.xlsx for other inputs (book.xls-fitted.xlsx), so inputs of one name in several formats keep their own outputs.
        #[arg(short, long)]
        output: Option<PathBuf>,
    },
    /// Read, parse and resolve every request and print its status; writes nothing.
    #[command(after_help = CHECK_HELP)]
    Check {
        /// The workbook to check.
        input: PathBuf,
    },
    /// List the functions of the fit language with their arguments and options.
    Functions,
}

fn pinned_time() -> Result<Option<i64>, String> {
    match std::env::var("SOURCE_DATE_EPOCH") {
        Ok(v) => v.trim().parse::<i64>().map(Some).map_err(|_| format!("SOURCE_DATE_EPOCH={v} is not a whole number of seconds")),
        Err(_) => Ok(None),
    }
}

fn print_summary(s: &Summary) {
    for p in &s.problems {
        eprint!("{p}");
    }
    for line in s.report_lines() {
        println!("{line}");
    }
    let failed = s.failed();
    println!("{} request(s): {} fitted, {} failed", s.reports.len(), s.reports.len() - failed, failed);
}

/// Runs the command line; returns the exit status.
pub fn main_with(cli: Cli) -> Exit {
    let registry = pipeline::builtin_registry();
    match cli.command {
        Command::Functions => {
            for (_, f) in registry.functions() {
                println!("{}", f.signature());
                println!("    {}", f.help);
                for p in &f.positional {
                    println!("    {:<12} {}", p.name, p.help);
                }
                for o in &f.options {
                    let d = o.default.as_ref().map(|d| format!(" (default {d})")).unwrap_or_default();
                    println!("    {:<12} {}{d}", o.written(), o.help);
                }
                println!();
            }
            Exit::Ok
        }
        Command::Check { input } => match pipeline::evaluate(&input, &registry) {
            Ok((_, s)) => {
                print_summary(&s);
                Exit::of(&s)
            }
            Err(e) => {
                eprintln!("error: {e}");
                Exit::Unusable
            }
        },
        Command::Run { input, output } => {
            let created_unix = match pinned_time() {
                Ok(t) => t,
                Err(e) => {
                    eprintln!("error: {e}");
                    return Exit::Unusable;
                }
            };
            match pipeline::run(&RunConfig { input, output, created_unix }, &registry) {
                Ok(s) => {
                    print_summary(&s);
                    if let Some(o) = &s.output {
                        println!("wrote {}", o.display());
                    }
                    Exit::of(&s)
                }
                Err(e) => {
                    eprintln!("error: {e}");
                    eprintln!("nothing was written");
                    Exit::Unusable
                }
            }
        }
    }
}
