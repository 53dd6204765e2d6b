//! `spurline interleave`: interleaving spurs of each record of an M-channel time-interleaved converter,
//! with each channel's offset, gain and timing error, as readable tables or one JSON array.

use super::ReadArgs;
use clap::Args;
use spurline::analyses::interleave::{analyze_interleaved, InterleaveResult, InterleaveSettings};
use spurline::report::text::block_head;
use spurline::report::units::{fixed, si};
use std::fmt::Write;
use std::path::PathBuf;

/// Arguments of `interleave`.
#[derive(Debug, Args)]
pub struct InterleaveArgs {
    /// Record files holding one sine, sample n taken by channel n mod M (text, CSV or raw binary; a
    /// JSON sidecar next to each is read when present).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// Number of interleaved channels M (2 or more).
    #[arg(long, required = true)]
    pub channels: usize,
    #[command(flatten)]
    pub read: ReadArgs,
    /// Window: auto, or one of rectangular, hann, blackman-harris-4, blackman-harris-7, hft90d,
    /// hft116d, hft144d, hft169d, flattop, kaiser(BETA).
    #[arg(long, default_value = "auto")]
    pub window: String,
    /// Guard bins added on each side of every tone's bins beyond the window's main lobe (default: 0 coherent,
    /// 1 non-coherent).
    #[arg(long)]
    pub guard_bins: Option<usize>,
    /// Print one JSON array, one object per record in input order, instead of tables.
    #[arg(long)]
    pub json: bool,
}

/// Runs `interleave`.
pub fn run(args: InterleaveArgs) -> i32 {
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    let window = match args.window.parse() {
        Ok(w) => w,
        Err(e) => return super::fail(&e),
    };
    let settings = InterleaveSettings {
        window,
        guard_bins: args.guard_bins,
        ..InterleaveSettings::new(args.channels)
    };
    super::run_files(
        &args.files,
        &ingest,
        args.json,
        |record| analyze_interleaved(record, &settings),
        render,
    )
}

/// Renders one result as a block of labelled lines.
pub fn render(r: &InterleaveResult) -> String {
    let mut s = String::new();
    if block_head(&mut s, &r.source, r.error.as_ref(), &r.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} bits · fs {} · {} channels",
        r.samples,
        r.bits,
        si(r.sample_rate_hz, "Hz", 6),
        r.channels
    );
    if let Some(f) = &r.fit {
        let _ = writeln!(
            s,
            "  sine fit   four-parameter · {} · {:.3} dBFS ({:.2} codes) · offset {:.3} codes",
            si(f.frequency_hz, "Hz", 9),
            f.amplitude_dbfs,
            f.amplitude_codes,
            f.offset_codes
        );
    }
    let _ = writeln!(
        s,
        "  channels   {:>3} {:>14} {:>14} {:>14} {:>12}",
        "ch", "offset codes", "gain error", "timing error", "residual"
    );
    for c in &r.channel_estimates {
        let _ = writeln!(
            s,
            "             {:>3} {:>+14.4} {:>+10.1} ppm {:>14} {:>12.4}",
            c.channel,
            c.offset_codes,
            c.gain_error * 1e6,
            si(c.timing_error_s, "s", 4),
            c.residual_rms_codes
        );
    }
    if let Some(sp) = &r.spectrum {
        let _ = writeln!(
            s,
            "  spectrum   window {} ({}) · bin {} · fundamental {} dBFS · noise floor {} dBFS per bin",
            sp.window,
            if sp.coherent {
                "coherent"
            } else {
                "non-coherent"
            },
            si(sp.bin_width_hz, "Hz", 4),
            fixed(sp.fundamental_dbfs, 2),
            fixed(sp.noise_floor_dbfs, 2)
        );
        let _ = writeln!(
            s,
            "             largest offset spur {} dBc · largest gain/timing spur {} dBc",
            fixed(sp.offset_spur_dbc, 2),
            fixed(sp.gain_timing_spur_dbc, 2)
        );
        let _ = writeln!(
            s,
            "  spurs      {:<14} {:>14} {:>9} {:>9} {:>14}",
            "", "frequency", "dBc", "dBFS", "predicted dBc"
        );
        for p in &sp.spurs {
            let freq = si(p.frequency_hz, "Hz", 6);
            if let Some(by) = &p.masked_by {
                let _ = writeln!(s, "             {:<14} {freq:>14}   masked by {by}", p.name);
                continue;
            }
            let bound = if p.at_floor { "≤" } else { " " };
            let _ = writeln!(
                s,
                "             {:<14} {freq:>14} {bound}{:>8} {:>9} {:>14}{}",
                p.name,
                fixed(p.dbc, 2),
                fixed(p.dbfs, 2),
                fixed(p.predicted_dbc, 2),
                if p.at_floor { "  (noise floor)" } else { "" }
            );
        }
    }
    for w in &r.warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    s
}
