//! `spurline merge`: combine the output folders of the shards of one lot run into one lot report.

use clap::Args;
use spurline::lot::merge_shards;
use std::path::PathBuf;

/// Arguments of `merge`.
#[derive(Debug, Args)]
#[command(
    after_help = "The shard folders are those of `spurline batch PLAN --shard K/M --out DIR` for every \
                  K = 1..M, run with the same plan, limit table and --plots. Their device folders are \
                  copied into OUT (the shard folders are left as they are) and the lot files \
                  summary.csv, failures.csv, yield.csv and index.html are written, byte for byte those \
                  of an unsharded run.\n\n\
                  Exit status: 0 every result passed (or no limit table), 1 some limit failed, 2 an \
                  error: a shard missing, given twice or of another run, a device in two shards, an \
                  unreadable shard, an output that cannot be written, or error rows in the lot."
)]
pub struct MergeArgs {
    /// Output folder of the merged lot report.
    pub out: PathBuf,
    /// The shards' output folders, in any order.
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
}

/// Runs `merge`.
pub fn run(args: MergeArgs) -> i32 {
    match merge_shards(&args.out, &args.shards) {
        Ok(counts) => super::batch::report(&counts, &args.out),
        Err(e) => super::fail(&e),
    }
}
