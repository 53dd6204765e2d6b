//! The spurline command: parse arguments, run the library, map the outcome to an exit code.

mod cli;

use clap::Parser;

fn main() {
    let args = cli::Cli::parse();
    std::process::exit(cli::run(args));
}
