//! The readable per-record blocks that `analyze`, `imd` and `interleave` print.

use super::units::{fixed, si, sigma, with_unit};
use crate::analyses::imd::ImdResult;
use crate::analyses::interleave::InterleaveResult;
use crate::analysis::{Analysis, ErrorReport};
use crate::figures::{self, Figure};
use std::fmt::Write;

/// "label value unit" of one figure ("SNR 71.23 dB").
fn show(f: &Figure, value: Option<f64>, digits: usize) -> String {
    format!("{} {}", f.label, with_unit(value, f.unit, digits))
}

/// "label value ± sigma unit" of one figure with its one-sigma uncertainty ("SNR 71.23 ± 0.05 dB");
/// without an uncertainty, as [`show`].
fn show_pm(f: &Figure, value: Option<f64>, sd: Option<f64>, digits: usize) -> String {
    match (value, sd) {
        (Some(v), Some(u)) if f.unit != crate::figures::Unit::Hz => format!(
            "{} {} ± {} {}",
            f.label,
            fixed(Some(v), digits),
            sigma(u, digits),
            f.unit
        )
        .trim_end()
        .to_string(),
        _ => show(f, value, digits),
    }
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

/// The resolution as the record line shows it; 0 is a record of values given without one.
fn resolution(bits: u32) -> String {
    if bits == 0 {
        "no resolution given".to_string()
    } else {
        format!("{bits} bits")
    }
}

/// Renders one result record as a block of labelled lines.
pub fn render(a: &Analysis) -> String {
    let mut s = String::new();
    if block_head(&mut s, &a.source, a.error.as_ref(), &a.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} · fs {}",
        a.samples,
        resolution(a.bits),
        si(a.sample_rate_hz, "Hz", 6)
    );
    if let Some(f) = &a.fit {
        let method = match f.method {
            crate::fit::FitMethod::ThreeParameter => "three-parameter",
            crate::fit::FitMethod::FourParameter => "four-parameter",
        };
        let u = &f.uncertainty;
        let pm = |sd: Option<f64>, digits: usize, unit: &str| {
            sd.map_or(String::new(), |x| format!(" ± {}{unit}", sigma(x, digits)))
        };
        let _ = writeln!(
            s,
            "  sine fit   {method} · {}{} · {:.3}{} dBFS ({:.2} codes) · offset {:.3}{} codes · {:.4} cycles",
            si(f.frequency_hz, "Hz", 9),
            u.frequency_hz.map_or(String::new(), |x| format!(" ± {}", si(x, "Hz", 2))),
            f.amplitude_dbfs,
            pm(u.amplitude_dbfs, 3, ""),
            f.amplitude_codes,
            f.offset_codes,
            pm(u.offset_codes, 3, ""),
            f.cycles
        );
        let _ = writeln!(
            s,
            "             {} · {} · {} · {} iterations{}",
            show_pm(
                &figures::FIT_RESIDUAL,
                Some(f.residual_rms_codes),
                u.residual_rms_codes,
                4
            ),
            show_pm(&figures::FIT_SINAD, f.sinad_db, u.sinad_db, 2),
            show_pm(&figures::FIT_ENOB, f.enob_bits, u.enob_bits, 3),
            f.iterations,
            if f.converged { "" } else { " (NOT converged)" }
        );
    }
    if let Some(sp) = &a.spectrum {
        let u = &sp.uncertainty;
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
            show_pm(
                &figures::FUNDAMENTAL,
                sp.fundamental_dbfs,
                u.fundamental_dbfs,
                2
            ),
            show_pm(&figures::SNR, sp.snr_db, u.snr_db, 2),
            show_pm(&figures::SINAD, sp.sinad_db, u.sinad_db, 2),
            show_pm(&figures::THD, sp.thd_dbc, u.thd_dbc, 2)
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
            show_pm(&figures::SFDR, sp.sfdr_dbc, u.sfdr_dbc, 2),
            with_unit(sp.sfdr_dbfs, figures::SFDR_DBFS.unit, 2)
        );
        let _ = writeln!(
            s,
            "             {} · {}",
            show_pm(&figures::ENOB, sp.enob_bits, u.enob_bits, 3),
            show_pm(
                &figures::ENOB_FULL_SCALE,
                sp.enob_full_scale_bits,
                u.enob_full_scale_bits,
                3
            )
        );
        let _ = writeln!(
            s,
            "             {} per bin · {}",
            show_pm(
                &figures::NOISE_FLOOR,
                sp.noise_floor_dbfs,
                u.noise_floor_dbfs,
                2
            ),
            show_pm(&figures::NSD, sp.nsd_dbfs_per_hz, u.nsd_dbfs_per_hz, 2)
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
                (None, Some(d)) => match u.harmonics.get(h.order).and_then(|x| x.dbc) {
                    Some(x) => format!("{d:.1} ± {} dBc", sigma(x, 1)),
                    None => format!("{d:.1} dBc"),
                },
                _ => "—".to_string(),
            };
            let _ = write!(
                s,
                " H{:<2} {:>12} {:<22}",
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

/// A line that a multi-tone claim measured (an IM product, an interleaving image), as a table row.
struct Line<'a> {
    name: &'a str,
    name_width: usize,
    frequency_hz: f64,
    masked_by: Option<&'a str>,
    at_floor: bool,
}

impl Line<'_> {
    /// Its row: name, frequency, then each (value, width) to two decimals; a masked line says what
    /// masks it instead, and a line at the noise floor is shown as a bound.
    fn row(&self, s: &mut String, cells: &[(Option<f64>, usize)]) {
        let (name, width) = (self.name, self.name_width);
        let freq = si(self.frequency_hz, "Hz", 6);
        if let Some(by) = self.masked_by {
            let _ = writeln!(s, "             {name:<width$} {freq:>14}   masked by {by}");
            return;
        }
        let bound = if self.at_floor { "≤" } else { " " };
        let _ = write!(s, "             {name:<width$} {freq:>14} {bound}");
        for (i, &(value, w)) in cells.iter().enumerate() {
            let gap = if i == 0 { "" } else { " " };
            let _ = write!(s, "{gap}{:>w$}", fixed(value, 2));
        }
        let _ = writeln!(s, "{}", if self.at_floor { "  (noise floor)" } else { "" });
    }
}

/// Renders one two-tone result as a block of labelled lines, as `spurline imd` prints it.
pub fn render_two_tone(r: &ImdResult) -> String {
    let mut s = String::new();
    if block_head(&mut s, &r.source, r.error.as_ref(), &r.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} · fs {}",
        r.samples,
        resolution(r.bits),
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
            let line = Line {
                name: &p.name,
                name_width: 8,
                frequency_hz: p.frequency_hz,
                masked_by: p.masked_by.as_deref(),
                at_floor: p.at_floor,
            };
            line.row(
                &mut s,
                &[(p.dbc, 8), (p.dbc_f1, 9), (p.dbc_f2, 9), (p.dbfs, 9)],
            );
        }
    }
    for w in &r.warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    s
}

/// Renders one interleaving result as a block of labelled lines, as `spurline interleave` prints it.
pub fn render_interleaved(r: &InterleaveResult) -> String {
    let mut s = String::new();
    if block_head(&mut s, &r.source, r.error.as_ref(), &r.warnings) {
        return s;
    }
    let _ = writeln!(
        s,
        "  record     {} samples · {} · fs {} · {} channels",
        r.samples,
        resolution(r.bits),
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
            let line = Line {
                name: &p.name,
                name_width: 14,
                frequency_hz: p.frequency_hz,
                masked_by: p.masked_by.as_deref(),
                at_floor: p.at_floor,
            };
            line.row(&mut s, &[(p.dbc, 8), (p.dbfs, 9), (p.predicted_dbc, 14)]);
        }
    }
    for w in &r.warnings {
        let _ = writeln!(s, "  warning    {w}");
    }
    s
}
