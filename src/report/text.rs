//! The readable per-record table that `analyze` prints.

use super::units::{fixed, si, with_unit};
use crate::analysis::{Analysis, ErrorReport};
use crate::figures::{self, Figure};
use std::fmt::Write;

/// "label value unit" of one figure ("SNR 71.23 dB").
fn show(f: &Figure, value: Option<f64>, digits: usize) -> String {
    format!("{} {}", f.label, with_unit(value, f.unit, digits))
}

/// Starts the block of one result: a rule naming its source, then, for a result that failed, its error
/// and warnings. Returns true when that is the whole block (the result failed). Shared by every command
/// that prints per-record blocks.
pub fn block_head(
    s: &mut String,
    source: &str,
    error: Option<&ErrorReport>,
    warnings: &[String],
) -> bool {
    let rule = "─".repeat(72usize.saturating_sub(source.chars().count() + 4));
    let _ = writeln!(s, "── {source} {rule}");
    let Some(e) = error else {
        return false;
    };
    let _ = writeln!(s, "  error      {}", e.message);
    for w in warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    true
}

/// Renders one result record as a block of labelled lines.
pub fn render(a: &Analysis) -> String {
    let mut s = String::new();
    if block_head(&mut s, &a.source, a.error.as_ref(), &a.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} bits · fs {}",
        a.samples,
        a.bits,
        si(a.sample_rate_hz, "Hz", 6)
    );
    if let Some(f) = &a.fit {
        let method = match f.method {
            crate::fit::FitMethod::ThreeParameter => "three-parameter",
            crate::fit::FitMethod::FourParameter => "four-parameter",
        };
        let _ = writeln!(
            s,
            "  sine fit   {method} · {} · {:.3} dBFS ({:.2} codes) · offset {:.3} codes · {:.4} cycles",
            si(f.frequency_hz, "Hz", 9),
            f.amplitude_dbfs,
            f.amplitude_codes,
            f.offset_codes,
            f.cycles
        );
        let _ = writeln!(
            s,
            "             {} · {} · {} · {} iterations{}",
            show(&figures::FIT_RESIDUAL, Some(f.residual_rms_codes), 4),
            show(&figures::FIT_SINAD, f.sinad_db, 2),
            show(&figures::FIT_ENOB, f.enob_bits, 3),
            f.iterations,
            if f.converged { "" } else { " (NOT converged)" }
        );
    }
    if let Some(sp) = &a.spectrum {
        let _ = writeln!(
            s,
            "  spectrum   window {} ({}) · {} record(s) averaged · bin {}",
            sp.window,
            if sp.coherent {
                "coherent"
            } else {
                "non-coherent"
            },
            sp.records_averaged,
            si(sp.bin_width_hz, "Hz", 4)
        );
        let _ = writeln!(
            s,
            "             {} · {} · {} · {}",
            show(&figures::FUNDAMENTAL, sp.fundamental_dbfs, 2),
            show(&figures::SNR, sp.snr_db, 2),
            show(&figures::SINAD, sp.sinad_db, 2),
            show(&figures::THD, sp.thd_dbc, 2)
        );
        let spur = sp.worst_spur.as_ref().map_or("—".to_string(), |w| {
            format!(
                "{} ({})",
                si(w.frequency_hz, "Hz", 6),
                w.harmonic
                    .map_or("not a harmonic".to_string(), |h| format!("H{h}"))
            )
        });
        let _ = writeln!(
            s,
            "             {} / {}, worst spur at {spur}",
            show(&figures::SFDR, sp.sfdr_dbc, 2),
            with_unit(sp.sfdr_dbfs, figures::SFDR_DBFS.unit, 2)
        );
        let _ = writeln!(
            s,
            "             {} · {}",
            show(&figures::ENOB, sp.enob_bits, 3),
            show(&figures::ENOB_FULL_SCALE, sp.enob_full_scale_bits, 3)
        );
        let _ = writeln!(
            s,
            "             {} per bin · {}",
            show(&figures::NOISE_FLOOR, sp.noise_floor_dbfs, 2),
            show(&figures::NSD, sp.nsd_dbfs_per_hz, 2)
        );
        let _ = writeln!(
            s,
            "  leakage    {:+.3} bins off-centre · outside the tone's bins {} dBc · SNR bias ≤ {:.3} dB · SFDR bias ≤ {:.3} dB",
            sp.leakage.offset_bins,
            fixed(sp.leakage.outside_tone_bins_dbc, 1),
            sp.leakage.snr_bias_db,
            sp.leakage.sfdr_bias_db
        );
        let _ = write!(s, "  harmonics ");
        for (i, h) in sp.harmonics.iter().enumerate() {
            if i > 0 && i % 3 == 0 {
                let _ = write!(s, "\n            ");
            }
            let level = match (&h.masked_by, h.dbc) {
                (Some(by), _) => format!("masked by {by}"),
                (None, Some(d)) if h.at_floor => format!("≤{d:.1} dBc (floor)"),
                (None, Some(d)) => format!("{d:.1} dBc"),
                _ => "—".to_string(),
            };
            let _ = write!(
                s,
                " H{:<2} {:>12} {:<20}",
                h.order,
                si(h.frequency_hz, "Hz", 5),
                level
            );
        }
        let _ = writeln!(s);
    }
    for w in &a.warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    s
}
