//! `spurline imd`: two-tone intermodulation of each record (IM2, IM3, two-tone SFDR), as readable tables
//! or one JSON array.

use super::ReadArgs;
use clap::Args;
use spurline::analyses::imd::{analyze_two_tone, ImdResult, ImdSettings};
use spurline::report::text::block_head;
use spurline::report::units::{fixed, si};
use std::fmt::Write;
use std::path::PathBuf;

/// Arguments of `imd`.
#[derive(Debug, Args)]
pub struct ImdArgs {
    /// Record files holding two tones (text, CSV or raw binary; a JSON sidecar next to each is read
    /// when present).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
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
    /// Keep the frequencies where the tones were located (no Gauss-Newton refinement of the fit).
    #[arg(long)]
    pub no_refine: bool,
    /// Print one JSON array, one object per record in input order, instead of tables.
    #[arg(long)]
    pub json: bool,
}

/// Runs `imd`.
pub fn run(args: ImdArgs) -> i32 {
    let ingest = match args.read.settings() {
        Ok(s) => s,
        Err(e) => return super::fail(&e),
    };
    let window = match args.window.parse() {
        Ok(w) => w,
        Err(e) => return super::fail(&e),
    };
    let settings = ImdSettings {
        window,
        guard_bins: args.guard_bins,
        refine_frequencies: !args.no_refine,
        ..ImdSettings::default()
    };
    super::run_files(
        &args.files,
        &ingest,
        args.json,
        |record| analyze_two_tone(record, &settings),
        render,
    )
}

/// Renders one result as a block of labelled lines.
pub fn render(r: &ImdResult) -> String {
    let mut s = String::new();
    if block_head(&mut s, &r.source, r.error.as_ref(), &r.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} bits · fs {}",
        r.samples,
        r.bits,
        si(r.sample_rate_hz, "Hz", 6)
    );
    if let (Some(fit), Some(sp)) = (&r.fit, &r.spectrum) {
        for (i, (t, l)) in fit.tones.iter().zip(&sp.tones).enumerate() {
            let _ = writeln!(
                s,
                "  {:<10} {} · {} dBFS (fit {} dBFS, {:.2} codes) · {:.4} cycles{}",
                if i == 0 { "tone f1" } else { "tone f2" },
                si(t.frequency_hz, "Hz", 9),
                fixed(l.dbfs, 2),
                fixed(t.amplitude_dbfs, 3),
                t.amplitude_codes,
                t.cycles,
                if l.coherent { " (coherent)" } else { "" }
            );
        }
        let _ =
            writeln!(
            s,
            "  fit        two sines + offset, {} · offset {:.3} codes · residual {:.4} codes rms",
            if fit.refined {
                format!(
                    "frequencies refined in {} iterations{}",
                    fit.iterations,
                    if fit.converged { "" } else { " (NOT converged)" }
                )
            } else {
                "at the located frequencies".to_string()
            },
            fit.offset_codes,
            fit.residual_rms_codes
        );
        let _ = writeln!(
            s,
            "  spectrum   window {} ({}) · bin {} · tone bins ±{} · noise floor {} dBFS per bin",
            sp.window,
            if sp.coherent {
                "coherent"
            } else {
                "non-coherent"
            },
            si(sp.bin_width_hz, "Hz", 4),
            sp.tone_halfwidth_bins,
            fixed(sp.noise_floor_dbfs, 2)
        );
        let spur = sp.worst_spur.as_ref().map_or("—".to_string(), |w| {
            format!(
                "{} ({})",
                si(w.frequency_hz, "Hz", 6),
                w.product.as_deref().unwrap_or("not a product")
            )
        });
        let _ = writeln!(
            s,
            "  two-tone   IM2 {} dBc / {} dBFS · IM3 {} dBc / {} dBFS (dBc of the stronger tone)",
            fixed(sp.im2_dbc, 2),
            fixed(sp.im2_dbfs, 2),
            fixed(sp.im3_dbc, 2),
            fixed(sp.im3_dbfs, 2)
        );
        let _ = writeln!(
            s,
            "             SFDR {} dBc / {} dBFS, largest spur at {spur}",
            fixed(sp.sfdr_dbc, 2),
            fixed(sp.sfdr_dbfs, 2)
        );
        let _ = writeln!(
            s,
            "  products   {:<8} {:>14} {:>9} {:>9} {:>9} {:>9}",
            "", "frequency", "dBc", "dBc f1", "dBc f2", "dBFS"
        );
        for p in &sp.products {
            let freq = si(p.frequency_hz, "Hz", 6);
            if let Some(by) = &p.masked_by {
                let _ = writeln!(s, "             {:<8} {freq:>14}   masked by {by}", p.name);
                continue;
            }
            let bound = if p.at_floor { "≤" } else { " " };
            let _ = writeln!(
                s,
                "             {:<8} {freq:>14} {bound}{:>8} {:>9} {:>9} {:>9}{}",
                p.name,
                fixed(p.dbc, 2),
                fixed(p.dbc_f1, 2),
                fixed(p.dbc_f2, 2),
                fixed(p.dbfs, 2),
                if p.at_floor { "  (noise floor)" } else { "" }
            );
        }
    }
    for w in &r.warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    s
}
