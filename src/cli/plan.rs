//! `spurline plan`: coherent test frequencies for a record length, where harmonics and two-tone
//! products land and what they collide with, and the record length for a resolution; as text or CSV.

use super::{si_value, EXIT_OK};
use clap::Args;
use spurline::format_si as si;
use spurline::Error;
use spurline::{
    plan_histogram, plan_tone, plan_two_tone, samples_for_resolution, HarmonicPlace, Placement,
    TonePlan, TwoTonePlan,
};
use std::fmt::Write as _;

/// Most targets one plan accepts (a list or a range).
const MAX_TARGETS: usize = 100_000;

/// Arguments of `plan`.
#[derive(Debug, Args)]
pub struct PlanArgs {
    /// Sample rate in hertz (SI prefixes allowed: 100M).
    #[arg(long, value_parser = si_value)]
    pub fs: f64,
    /// Record length N in samples, 4..=2^40. May be left out with --resolution: then N is the
    /// shortest power of two that reaches it.
    #[arg(long)]
    pub samples: Option<usize>,
    /// The old name of --samples (warns).
    #[arg(long = "n", hide = true, conflicts_with = "samples")]
    pub n_old: Option<usize>,
    /// Target input frequencies in hertz: --fin 10M,21M or --fin 10M 21M.
    #[arg(long, value_parser = si_value, value_delimiter = ',', num_args = 1..)]
    pub fin: Vec<f64>,
    /// Second tones, one for each --fin: a two-tone plan for each pair.
    #[arg(long, value_parser = si_value, value_delimiter = ',', num_args = 1..)]
    pub fin2: Vec<f64>,
    /// A two-tone plan F1,F2 in hertz, e.g. 5M,6M (repeatable).
    #[arg(long, value_parser = tone_pair)]
    pub two_tone: Vec<(f64, f64)>,
    /// Highest harmonic order placed (2..=H; 1 for none).
    #[arg(long, default_value_t = 10)]
    pub harmonics: u32,
    /// Ask for a prime cycle count (besides odd and coprime with N).
    #[arg(long)]
    pub prime: bool,
    /// Half-width in bins within which two lines count as colliding: 0 for a coherent record with the
    /// rectangular window, the window's main-lobe half-width otherwise.
    #[arg(long, default_value_t = 0.0)]
    pub tone_halfwidth: f64,
    /// Targets START:STOP:STEP in hertz, STOP included when a step lands on it (e.g. 1M:49M:4M).
    #[arg(long)]
    pub range: Option<String>,
    /// Required frequency resolution fs/N in hertz: reports the N needed.
    #[arg(long, value_parser = si_value)]
    pub resolution: Option<f64>,
    /// Print CSV (one row per target, units in the column names) instead of text.
    #[arg(long)]
    pub csv: bool,
    /// Also plan a histogram (code-density) test at this resolution: a record length with enough
    /// distinct sampling phases and a frequency coprime with it, per target (text output).
    #[arg(long, value_name = "BITS")]
    pub histogram_bits: Option<u32>,
    /// DNL uncertainty the histogram plan is for, in LSB.
    #[arg(long, default_value_t = 0.1)]
    pub dnl_uncertainty: f64,
}

fn tone_pair(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(',')
        .ok_or_else(|| format!("expected F1,F2 such as 5M,6M, found '{s}'"))?;
    Ok((si_value(a)?, si_value(b)?))
}

/// Expands START:STOP:STEP into its targets.
fn expand_range(text: &str) -> Result<Vec<f64>, Error> {
    let bad = |why: &str| Error::setting("range", format!("START:STOP:STEP in hertz, {why}"), text);
    let parts: Vec<&str> = text.split(':').collect();
    if parts.len() != 3 {
        return Err(bad("three values"));
    }
    let v: Vec<f64> = parts
        .iter()
        .map(|p| si_value(p).map_err(|_| bad("each a number with an optional SI prefix")))
        .collect::<Result<_, _>>()?;
    let (start, stop, step) = (v[0], v[1], v[2]);
    if !(step > 0.0 && stop >= start) {
        return Err(bad("with STEP > 0 and STOP ≥ START"));
    }
    // A relative tolerance lets STOP count when rounding leaves the last step a hair short.
    let count = ((stop - start) / step * (1.0 + 1e-12)).floor() + 1.0;
    if count > MAX_TARGETS as f64 {
        return Err(bad(&format!("at most {MAX_TARGETS} targets")));
    }
    Ok((0..count as usize)
        .map(|i| start + i as f64 * step)
        .collect())
}

/// What the whole plan shares.
struct Context {
    fs: f64,
    samples: usize,
    resolution: Option<f64>,
    samples_for_resolution: Option<usize>,
}

enum Plans {
    Single(Vec<TonePlan>),
    TwoTone(Vec<TwoTonePlan>),
}

/// Runs `plan`.
pub fn run(mut args: PlanArgs) -> i32 {
    args.samples = super::renamed(args.samples.take(), args.n_old.take(), "--n", "--samples");
    match go(&args) {
        Ok(text) => {
            print!("{text}");
            EXIT_OK
        }
        Err(e) => super::fail(&e),
    }
}

fn go(args: &PlanArgs) -> Result<String, Error> {
    let for_resolution = match args.resolution {
        None => None,
        Some(r) => match samples_for_resolution(args.fs, r) {
            0 => {
                return Err(Error::setting(
                    "resolution",
                    format!(
                        "a positive resolution that a record at fs = {} Hz can reach",
                        args.fs
                    ),
                    r.to_string(),
                ))
            }
            n => Some(n),
        },
    };
    let samples = args.samples.or(for_resolution).ok_or_else(|| {
        Error::setting(
            "samples",
            "a record length: give --samples, or --resolution for the N that reaches it",
            "none given",
        )
    })?;
    // Checked here as well as in the library so that the message names the option the user typed.
    if !(4..=spurline::MAX_PLAN_SAMPLES).contains(&samples) {
        let (key, why) = if args.samples.is_some() {
            ("samples", String::new())
        } else {
            ("resolution", " (the N that --resolution needs)".to_string())
        };
        return Err(Error::setting(
            key,
            format!(
                "a record length in 4..={} samples (2^40){why}",
                spurline::MAX_PLAN_SAMPLES
            ),
            samples.to_string(),
        ));
    }
    let ctx = Context {
        fs: args.fs,
        samples,
        resolution: args.resolution,
        samples_for_resolution: for_resolution,
    };
    let two_tone = !args.two_tone.is_empty() || !args.fin2.is_empty();
    let plans = if two_tone {
        if args.range.is_some() || (args.fin2.is_empty() && !args.fin.is_empty()) {
            return Err(Error::setting(
                "fin",
                "single-tone targets (--fin, --range) or two-tone plans (--two-tone, or --fin with \
                 --fin2), not both",
                "both",
            ));
        }
        if args.fin.len() != args.fin2.len() {
            return Err(Error::setting(
                "fin2",
                format!(
                    "one second tone for each of the {} --fin values",
                    args.fin.len()
                ),
                args.fin2.len().to_string(),
            ));
        }
        let pairs: Vec<(f64, f64)> = args
            .two_tone
            .iter()
            .copied()
            .chain(args.fin.iter().copied().zip(args.fin2.iter().copied()))
            .collect();
        let plans = pairs
            .iter()
            .map(|&(f1, f2)| {
                plan_two_tone(
                    args.fs,
                    samples,
                    f1,
                    f2,
                    args.prime,
                    args.harmonics,
                    args.tone_halfwidth,
                )
            })
            .collect::<Result<Vec<_>, _>>()?;
        Plans::TwoTone(plans)
    } else {
        let mut targets = args.fin.clone();
        if let Some(r) = &args.range {
            targets.extend(expand_range(r)?);
        }
        if targets.is_empty() {
            return Err(Error::setting(
                "fin",
                "at least one target: --fin, --range or --two-tone",
                "none given",
            ));
        }
        if targets.len() > MAX_TARGETS {
            return Err(Error::setting(
                "fin",
                format!("at most {MAX_TARGETS} targets"),
                targets.len().to_string(),
            ));
        }
        let plans = targets
            .iter()
            .map(|&f| {
                plan_tone(
                    args.fs,
                    samples,
                    f,
                    args.prime,
                    args.harmonics,
                    args.tone_halfwidth,
                )
            })
            .collect::<Result<Vec<_>, _>>()?;
        Plans::Single(plans)
    };
    if args.csv {
        let rows: Vec<Vec<(String, String)>> = match &plans {
            Plans::Single(p) => p.iter().map(|t| single_row(t, &ctx)).collect(),
            Plans::TwoTone(p) => p.iter().map(|t| two_tone_row(t, &ctx)).collect(),
        };
        write_csv(&rows)
    } else {
        let mut text = render(&plans, &ctx, args);
        if let (Some(bits), Plans::Single(p)) = (args.histogram_bits, &plans) {
            for t in p {
                let h = plan_histogram(
                    args.fs,
                    samples,
                    t.tone.target_hz,
                    bits,
                    args.dnl_uncertainty,
                )?;
                let _ = writeln!(
                    text,
                    "histogram test near {} Hz, {} bits, DNL ±{} LSB: {} distinct phases needed; N = {} \
                     samples{} at J = {} ({} Hz, coprime with N) gives {} phases; {} samples at 95 % \
                     confidence: {} records",
                    t.tone.target_hz,
                    h.bits,
                    h.dnl_uncertainty_lsb,
                    h.required_phases,
                    h.samples,
                    if h.samples == samples { "" } else { " (lengthened)" },
                    h.tone.cycles,
                    h.tone.frequency_hz,
                    h.distinct_phases,
                    h.required_samples,
                    h.records
                );
            }
        }
        Ok(text)
    }
}

fn num(v: f64) -> String {
    v.to_string()
}

fn opt<T: ToString>(v: Option<T>) -> String {
    v.map(|x| x.to_string()).unwrap_or_default()
}

fn shared_columns(row: &mut Vec<(String, String)>, ctx: &Context) {
    row.push(("sample_rate_hz".into(), num(ctx.fs)));
    row.push(("samples".into(), ctx.samples.to_string()));
    row.push(("bin_width_hz".into(), num(ctx.fs / ctx.samples as f64)));
}

fn tail_columns(row: &mut Vec<(String, String)>, collisions: usize, ctx: &Context) {
    row.push(("collisions".into(), collisions.to_string()));
    row.push(("required_resolution_hz".into(), opt(ctx.resolution)));
    row.push((
        "samples_for_resolution".into(),
        opt(ctx.samples_for_resolution),
    ));
}

/// Column-name stem of a placement: "f1 H2" → "f1_h2", "IM3 2f1-f2" → "im3_2f1_minus_f2".
fn stem(name: &str) -> String {
    name.to_lowercase()
        .replace(' ', "_")
        .replace('-', "_minus_")
        .replace('+', "_plus_")
}

fn harmonic_columns(row: &mut Vec<(String, String)>, prefix: &str, h: &HarmonicPlace) {
    let p = format!("{prefix}h{}", h.order);
    row.push((format!("{p}_frequency_hz"), num(h.frequency_hz)));
    row.push((format!("{p}_bin"), num(h.bin)));
    row.push((format!("{p}_collides_with"), opt(h.collides_with.clone())));
}

fn placement_columns(row: &mut Vec<(String, String)>, p: &Placement) {
    let s = stem(&p.name);
    row.push((format!("{s}_frequency_hz"), num(p.frequency_hz)));
    row.push((format!("{s}_bin"), num(p.bin)));
    row.push((format!("{s}_collides_with"), opt(p.collides_with.clone())));
}

/// One CSV row of a single-tone plan; the columns depend only on the highest harmonic.
fn single_row(p: &TonePlan, ctx: &Context) -> Vec<(String, String)> {
    let mut row = vec![("target_hz".to_string(), num(p.tone.target_hz))];
    shared_columns(&mut row, ctx);
    row.push(("cycles".into(), p.tone.cycles.to_string()));
    row.push(("cycles_prime".into(), p.cycles_prime.to_string()));
    row.push(("frequency_hz".into(), num(p.tone.frequency_hz)));
    row.push((
        "offset_from_target_hz".into(),
        num(p.tone.frequency_hz - p.tone.target_hz),
    ));
    for h in &p.harmonics {
        harmonic_columns(&mut row, "", h);
    }
    let collisions = p
        .harmonics
        .iter()
        .filter(|h| h.collides_with.is_some())
        .count();
    tail_columns(&mut row, collisions, ctx);
    row
}

/// One CSV row of a two-tone plan; the columns depend only on the highest harmonic.
fn two_tone_row(p: &TwoTonePlan, ctx: &Context) -> Vec<(String, String)> {
    let mut row = vec![
        ("f1_target_hz".to_string(), num(p.f1.target_hz)),
        ("f2_target_hz".to_string(), num(p.f2.target_hz)),
    ];
    shared_columns(&mut row, ctx);
    for (name, c, prime) in [
        ("f1", &p.f1, p.f1_cycles_prime),
        ("f2", &p.f2, p.f2_cycles_prime),
    ] {
        row.push((format!("{name}_cycles"), c.cycles.to_string()));
        row.push((format!("{name}_cycles_prime"), prime.to_string()));
        row.push((format!("{name}_frequency_hz"), num(c.frequency_hz)));
    }
    for q in p.harmonics.iter().chain(&p.products) {
        placement_columns(&mut row, q);
    }
    let collisions = p
        .harmonics
        .iter()
        .chain(&p.products)
        .filter(|q| q.collides_with.is_some())
        .count();
    tail_columns(&mut row, collisions, ctx);
    row
}

fn write_csv(rows: &[Vec<(String, String)>]) -> Result<String, Error> {
    Ok(spurline::csv_table(rows))
}

/// Prime factors of n in increasing order, by trial division; None when n is too large for that to
/// be quick (above 2^40).
fn factors(mut n: u64) -> Option<Vec<u64>> {
    if n > 1 << 40 {
        return None;
    }
    let mut out = Vec::new();
    let mut d = 2;
    while d * d <= n {
        while n.is_multiple_of(d) {
            out.push(d);
            n /= d;
        }
        d += 1;
    }
    if n > 1 {
        out.push(n);
    }
    Some(out)
}

fn cycles_note(j: u64, samples: usize, prime: bool) -> String {
    if prime {
        return format!("J = {j}: odd, coprime with {samples}, prime");
    }
    match factors(j) {
        Some(f) if f.len() > 1 => {
            let f: Vec<String> = f.iter().map(|x| x.to_string()).collect();
            format!(
                "J = {j}: odd, coprime with {samples}, not prime ({})",
                f.join("·")
            )
        }
        _ => format!("J = {j}: odd, coprime with {samples}, not prime"),
    }
}

fn lands_on(c: &Option<String>) -> &str {
    c.as_deref().unwrap_or("—")
}

fn render(plans: &Plans, ctx: &Context, args: &PlanArgs) -> String {
    let mut s = String::new();
    let bin = ctx.fs / ctx.samples as f64;
    let _ =
        writeln!(
        s,
        "plan: fs {} Hz ({}), N = {} samples, bin width (resolution) {} Hz ({}); harmonics 2..{}, \
         tone bins ±{}{}",
        ctx.fs,
        si(ctx.fs, "Hz", 6),
        ctx.samples,
        bin,
        si(bin, "Hz", 6),
        args.harmonics,
        args.tone_halfwidth,
        if args.prime { ", prime cycle counts" } else { "" }
    );
    if let (Some(r), Some(n)) = (ctx.resolution, ctx.samples_for_resolution) {
        let verdict = if bin <= r {
            "reached"
        } else {
            "NOT reached with this N"
        };
        let _ = writeln!(
            s,
            "resolution {r} Hz needs N ≥ {n} (the shortest power of two): {verdict}"
        );
    }
    match plans {
        Plans::Single(p) => {
            for t in p {
                let c = &t.tone;
                let _ = writeln!(
                    s,
                    "\ntarget {} Hz → {} Hz ({}), J = {} cycles, {:+} Hz from the target",
                    c.target_hz,
                    c.frequency_hz,
                    si(c.frequency_hz, "Hz", 9),
                    c.cycles,
                    c.frequency_hz - c.target_hz
                );
                let _ = writeln!(
                    s,
                    "  {}",
                    cycles_note(c.cycles, ctx.samples, t.cycles_prime)
                );
                if !t.harmonics.is_empty() {
                    let _ = writeln!(
                        s,
                        "  {:<8}{:>22}{:>12}  lands on",
                        "", "frequency (Hz)", "bin"
                    );
                    for h in &t.harmonics {
                        let _ = writeln!(
                            s,
                            "  {:<8}{:>22}{:>12}  {}",
                            format!("H{}", h.order),
                            h.frequency_hz,
                            h.bin,
                            lands_on(&h.collides_with)
                        );
                    }
                }
            }
        }
        Plans::TwoTone(p) => {
            for t in p {
                let _ = writeln!(s);
                for (name, c, prime) in [
                    ("f1", &t.f1, t.f1_cycles_prime),
                    ("f2", &t.f2, t.f2_cycles_prime),
                ] {
                    let _ = writeln!(
                        s,
                        "{name}: target {} Hz → {} Hz ({}); {}",
                        c.target_hz,
                        c.frequency_hz,
                        si(c.frequency_hz, "Hz", 9),
                        cycles_note(c.cycles, ctx.samples, prime)
                    );
                }
                let _ = writeln!(
                    s,
                    "  {:<12}{:>22}{:>12}  lands on",
                    "", "frequency (Hz)", "bin"
                );
                for q in t.products.iter().chain(&t.harmonics) {
                    let _ = writeln!(
                        s,
                        "  {:<12}{:>22}{:>12}  {}",
                        q.name,
                        q.frequency_hz,
                        q.bin,
                        lands_on(&q.collides_with)
                    );
                }
            }
        }
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_include_their_stop() {
        assert_eq!(
            expand_range("1M:5M:1M").unwrap(),
            vec![1e6, 2e6, 3e6, 4e6, 5e6]
        );
        assert_eq!(expand_range("0.1:0.3:0.1").unwrap().len(), 3);
        assert_eq!(expand_range("1M:4.5M:1M").unwrap().len(), 4);
        for bad in ["1M:5M", "1M:5M:0", "5M:1M:1M", "a:b:c", "0:1:1e-9"] {
            assert!(expand_range(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn column_stems_and_factors() {
        assert_eq!(stem("IM3 2f1-f2"), "im3_2f1_minus_f2");
        assert_eq!(stem("IM2 f1+f2"), "im2_f1_plus_f2");
        assert_eq!(stem("f2 H3"), "f2_h3");
        // 901 = 17·53 (hand arithmetic).
        assert_eq!(factors(901), Some(vec![17, 53]));
        assert_eq!(factors(907), Some(vec![907]));
        assert_eq!(factors(1 << 41), None);
    }
}
