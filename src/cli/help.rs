//! The end of every subcommand's `--help`: worked examples (command lines that parse, checked by the
//! tests below) and the exit status, added to the clap definitions in one place.

use clap::CommandFactory;

/// Per subcommand: (name, example command lines, exit status). The one place each exit status is
/// stated, so that every help ends the same way.
/// A comment after `#` says what the line does.
const EXAMPLES: &[(&str, &[&str], &str)] = &[
    (
        "analyze",
        &[
            "spurline analyze capture.txt --fs 100M --bits 12   # one record, figures as a table",
            "spurline analyze scope.bin --format i16le --bits 12 --fs 250M --out out/scope   # page and plots",
            "spurline analyze r1.txt r2.txt r3.txt --fs 100M --bits 16 --average --json",
        ],
        "0 every record analysed, 1 with --store: the report is already in the store (nothing \
             recorded), 2 an error (the other records are still analysed)",
    ),
    (
        "imd",
        &[
            "spurline imd twotone.txt --fs 100M --bits 14   # IM2, IM3 and two-tone SFDR",
            "spurline imd twotone.txt --fs 100M --bits 14 --out out/imd   # page, products marked by order",
            "spurline imd a.txt b.txt --fs 100M --bits 14 --window blackman-harris-7 --json",
        ],
        "0 every record analysed, 2 an error (the other records are still analysed)",
    ),
    (
        "interleave",
        &[
            "spurline interleave tiadc.bin --format i16le --fs 1G --bits 12 --channels 4",
            "spurline interleave tiadc.txt --fs 1G --bits 12 --channels 2 --out out/tiadc   # page with the spurs marked",
        ],
        "0 every record analysed, 2 an error (the other records are still analysed)",
    ),
    (
        "sweep",
        &[
            "spurline sweep reports/char-run   # figures against frequency and amplitude, ERBW, jitter",
            "spurline sweep reports/char-run --out reports/char-sweep",
        ],
        "0 written, 2 an error (an unreadable lot, an output that cannot be written)",
    ),
    (
        "compare",
        &[
            "spurline compare reports/revA reports/revB   # verdict in plain words, page in reports/revB/compare",
            "spurline compare reports/revA reports/revB --paired --min-change spectrum.sfdr_dbc=0.5",
        ],
        "0 compared, 2 an error (an unreadable lot, an output that cannot be written)",
    ),
    (
        "synth",
        &[
            "spurline synth -o sim.txt --bits 14 --coherent-near 21M --noise-rms 0.8 --add-harmonic 3:-82",
            "spurline synth -o big.bin --bits 16 --samples 16777216 --fin 10.1234567M --layout i16le",
        ],
        "0 written, 2 an error (bad settings, an output that cannot be written)",
    ),
    (
        "demo",
        &[
            "spurline demo   # the full report in reports/demo/",
            "spurline demo --out /tmp/demo",
        ],
        "0 written, 2 an error",
    ),
    (
        "verify",
        &["spurline verify", "spurline verify --json"],
        "0 every check passed, 1 some check failed",
    ),
    (
        "plan",
        &[
            "spurline plan --fs 100M --samples 8192 --fin 10M --fin 20M --harmonics 7",
            "spurline plan --fs 100M --samples 8192 --two-tone 5M,6M   # where IM products land",
        ],
        "0 planned, 2 an error (bad settings, no coherent choice)",
    ),
    (
        "linearity",
        &[
            "spurline linearity hist1.bin hist2.bin --format u16le --bits 10 --fs 1M",
            "spurline linearity hist.bin --format u16le --bits 10 --fs 1M --dnl-uncertainty 0.1 --out out/",
        ],
        "0 done, 2 an error (unreadable record, a sine that does not overdrive the range, bad \
         settings)",
    ),
    (
        "batch",
        &[
            "spurline batch plan.toml --limits limits.csv --out reports/lot7 --jobs 2",
            "spurline batch plan.toml --limits limits.csv --shard 2/8 --out reports/lot7-2",
        ],
        "0 every result analysed and every limit passed (or no limit table), 1 some limit failed \
         (guardband failures included), 2 an error: a bad plan or limit table, an output that cannot \
         be written, or a record that could not be read or analysed (the lot still runs to the end \
         and that result is an error row)",
    ),
    (
        "merge",
        &[
            "spurline merge reports/lot7 reports/lot7-1 reports/lot7-2",
            "spurline merge --status /shared/lot7/shards",
        ],
        "0 every result passed (or no limit table), 1 some limit failed, 2 an error: a shard \
         missing, not finished, given twice or of another run, a device in two shards, an \
         unreadable shard, an output that cannot be written, or error rows in the lot. With \
         --status: 0 every shard finished, 1 some shard not finished, 2 an error (no shard found, \
         shards of different runs, a manifest that does not parse)",
    ),
    (
        "limits",
        &[
            "spurline limits reports/char-run --method sigma --k 6 --out proposed.csv",
            "spurline limits reports/char-run --existing limits.csv   # Cpk per metric",
        ],
        "0 proposed, 2 an error",
    ),
    (
        "record",
        &[
            "spurline record reports/lot7 --store results.sqlite",
            "spurline record reports/lot7 --store postgresql://bench@db/results --plan plan.toml --limits limits.csv",
        ],
        "0 recorded, 1 the lot is already in the store (same fingerprint: nothing written), 2 an \
         error (nothing written)",
    ),
    (
        "query",
        &[
            "spurline query results.sqlite lots",
            "spurline query results.sqlite last spectrum.snr_db -n 10",
        ],
        "0 answered, 2 an error",
    ),
    (
        "trend",
        &[
            "spurline trend results.sqlite --metric spectrum.snr_db --out reports/trend",
            "spurline trend results.sqlite --chart xbar --baseline 10 --condition f21M",
        ],
        "0 no run rule fired, 1 some run rule fired on some chart, 2 an error",
    ),
];

/// The text added after a subcommand's own help: its examples, then its exit status.
fn ending(own: Option<&str>, examples: &[&str], exit: &str) -> String {
    let mut s = String::new();
    if let Some(own) = own {
        s.push_str(own);
        s.push_str("\n\n");
    }
    s.push_str("Examples:\n");
    for e in examples {
        s.push_str("  ");
        s.push_str(e);
        s.push('\n');
    }
    s.push_str("\nExit status: ");
    s.push_str(exit);
    s.push('.');
    s
}

/// The command line with every subcommand's help ending in its examples and exit status.
pub fn command() -> clap::Command {
    let mut cmd = super::Cli::command();
    for (name, examples, exit) in EXAMPLES {
        cmd = cmd.mut_subcommand(*name, |c| {
            let own = c.get_after_help().map(|s| s.to_string());
            c.after_help(ending(own.as_deref(), examples, exit))
        });
    }
    cmd
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every subcommand's long help ends with two or three examples and then its exit status, and
    /// every example parses as a command line (files need not exist: only the arguments are checked).
    #[test]
    fn every_subcommand_has_examples_that_parse() {
        let mut cmd = command();
        cmd.build();
        let names: Vec<String> = cmd
            .get_subcommands()
            .map(|c| c.get_name().to_string())
            .filter(|n| n != "help")
            .collect();
        for name in &names {
            let (_, examples, exit) = EXAMPLES
                .iter()
                .find(|(n, _, _)| n == name)
                .unwrap_or_else(|| panic!("no examples for {name}"));
            assert!(
                (2..=3).contains(&examples.len()),
                "{name}: {} examples",
                examples.len()
            );
            let help = cmd
                .find_subcommand_mut(name)
                .unwrap()
                .render_long_help()
                .to_string();
            let tail = format!("\nExit status: {exit}.");
            assert!(help.trim_end().ends_with(&tail), "{name}: {help}");
            let at = help.rfind("\nExamples:\n").expect("an examples block");
            assert!(help[at..].matches("\n  spurline ").count() == examples.len());
        }
        for (name, examples, _) in EXAMPLES {
            assert!(names.contains(&name.to_string()), "no subcommand {name}");
            for e in *examples {
                let line = e.split('#').next().unwrap();
                let args: Vec<&str> = line.split_whitespace().collect();
                assert_eq!(args[1], *name, "{e}");
                if let Err(err) = command().try_get_matches_from(&args) {
                    panic!("{e}: {err}");
                }
            }
        }
    }
}
