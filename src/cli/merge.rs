//! `spurline merge`: combine the output folders of the shards of one lot run into one lot report; with
//! `--status`, say how far the shards have got without writing anything.

use super::{EXIT_FAIL, EXIT_OK};
use clap::Args;
use spurline::{lot_progress, merge_shards};
use std::path::PathBuf;

/// Arguments of `merge`.
#[derive(Debug, Args)]
#[command(
    after_help = "The shard folders are those of `spurline batch PLAN --shard K/M --out DIR` for every \
                  K = 1..M, run with the same plan, limit table and --plots. Their device folders are \
                  copied into OUT (the shard folders are left as they are) and the lot files \
                  summary.csv, failures.csv, yield.csv and index.html are written, byte for byte those \
                  of an unsharded run. A shard missing or not finished is named, with the command \
                  that runs it again.\n\n\
                  With --status, every folder given (OUT included) is a shard folder or a folder \
                  holding shard folders; nothing is written. It prints each shard as finished \
                  (shard.json), started (a start note, with the devices in its summary so far) or not \
                  started, the devices done, and a last line `unfinished shards: K,...` when some \
                  are."
)]
pub struct MergeArgs {
    /// Output folder of the merged lot report (with --status: a folder to read, like the others).
    pub out: PathBuf,
    /// The shards' output folders, in any order.
    #[arg(required_unless_present = "status")]
    pub shards: Vec<PathBuf>,
    /// Say how far the shards have got (finished, started, not started; devices done) and write
    /// nothing.
    #[arg(long)]
    pub status: bool,
}

/// Runs `merge`.
pub fn run(args: MergeArgs) -> i32 {
    if args.status {
        let mut folders = vec![args.out];
        folders.extend(args.shards);
        return match lot_progress(&folders) {
            Ok(p) => {
                print!("{p}");
                if p.unfinished().is_empty() {
                    EXIT_OK
                } else {
                    EXIT_FAIL
                }
            }
            Err(e) => super::fail(&e),
        };
    }
    match merge_shards(&args.out, &args.shards) {
        Ok(counts) => super::batch::report(&counts, &args.out),
        Err(e) => super::fail(&e),
    }
}
