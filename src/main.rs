//! The `plumb` binary: parses the command line and hands over to [`plumb::cli`].

use clap::Parser;

fn main() -> std::process::ExitCode {
    let cli = plumb::cli::Cli::parse();
    plumb::cli::main_with(cli).into()
}
