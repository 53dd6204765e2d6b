//! The spurline command: parse arguments, run the library, map the outcome to an exit code.

mod cli;

use clap::FromArgMatches;

// mimalloc keeps freed pages for reuse: the large per-record buffers then cost no page faults, which
// was a quarter of the analysis time of a 2^20-sample record with the system allocator.
#[global_allocator]
static ALLOC: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() {
    // Output piped into `head` and the like: end quietly on a closed pipe, as command-line tools do,
    // instead of panicking inside print!.
    #[cfg(unix)]
    // SAFETY: restoring the default action of one signal before any thread starts.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    // The command line with every subcommand's examples and exit status at the end of its help.
    let matches = cli::command().get_matches();
    let args = cli::Cli::from_arg_matches(&matches).unwrap_or_else(|e| e.exit());
    std::process::exit(cli::run(args));
}
