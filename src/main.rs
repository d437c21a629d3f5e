//! The `plumb` binary: parses the command line and hands over to [`plumb::cli`].

use clap::Parser;

fn main() {
    let cli = plumb::cli::Cli::parse();
    std::process::exit(plumb::cli::main_with(cli));
}
