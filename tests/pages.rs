//! The pages of `sweep` and `linearity`: in the shared page shell, with their plots inline, and as a
//! real browser builds them (headless chromium) with no console message.

use crate::report::{find_chromium, wait_or_kill};
use assert_cmd::Command;
use std::path::Path;
use std::time::Duration;

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Loads `page` in headless chromium and returns (the DOM it built, its console log lines); `None`
/// (with a loud SKIPPED line) without chromium, a failure when CI is set (.ci/run installs it).
pub(crate) fn browser_dom(page: &Path) -> Option<(String, Vec<String>)> {
    let Some(exe) = find_chromium() else {
        assert!(
            std::env::var_os("CI").is_none(),
            "chromium is not on PATH, and CI is set: {} was not checked in a browser",
            page.display()
        );
        use std::io::Write as _;
        let _ = writeln!(
            std::io::stderr(),
            "SKIPPED the browser check of {}: chromium is not installed",
            page.display()
        );
        return None;
    };
    let dir = tempfile::tempdir().unwrap();
    let dom_file = dir.path().join("dom.html");
    let log_file = dir.path().join("chromium.log");
    let mut child = std::process::Command::new(exe)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
            "--dump-dom",
        ])
        .arg(format!(
            "--user-data-dir={}",
            dir.path().join("profile").display()
        ))
        .arg(format!("file://{}", page.display()))
        .stdin(std::process::Stdio::null())
        .stdout(std::fs::File::create(&dom_file).unwrap())
        .stderr(std::fs::File::create(&log_file).unwrap())
        .spawn()
        .expect("chromium starts");
    assert!(
        wait_or_kill(&mut child, Duration::from_secs(60)),
        "chromium failed on {}",
        page.display()
    );
    let dom = std::fs::read_to_string(&dom_file).unwrap();
    let console = std::fs::read_to_string(&log_file)
        .unwrap()
        .lines()
        .filter(|l| l.contains("CONSOLE"))
        .map(str::to_string)
        .collect();
    Some((dom, console))
}

/// The sweep's page shows the summary table and the four plots against frequency inline, each
/// device drawn, the ERBW or the jitter curve named where the lot gives one; the browser builds it
/// with no console message.
#[test]
fn sweep_writes_its_page() {
    let dir = tempfile::tempdir().unwrap();
    let demo = spurline()
        .args(["demo", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(demo.status.success());
    let out = dir.path().join("sweep");
    let o = spurline()
        .arg("sweep")
        .arg(dir.path().join("lot-rev-a/results"))
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let page = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(page.starts_with("<!DOCTYPE html>") && page.contains("<table id=\"sweep\">"));
    // The lot mean and the twelve devices of the demo (src/cli/demo_lot.rs).
    assert_eq!(page.matches("<tr").count(), 1 + 1 + 12);
    for name in ["sinad", "snr", "sfdr", "enob"] {
        let file = format!("{name}-vs-frequency.svg");
        let svg = std::fs::read_to_string(out.join(&file)).unwrap();
        assert!(page.contains(svg.trim()), "{file} is not inline");
        assert!(
            page.contains(&format!("href=\"{file}\"")),
            "{file} not linked"
        );
        let doc = roxmltree::Document::parse(&svg).unwrap();
        let texts: Vec<&str> = doc
            .descendants()
            .filter(|n| n.has_tag_name("text"))
            .filter_map(|n| n.text())
            .map(str::trim)
            .collect();
        assert!(texts.contains(&"each device (12)"), "{file}: {texts:?}");
        assert!(texts.contains(&"input frequency (MHz)"), "{file}");
        // A thin line per device, the lot mean, the axes: at least 13 polylines.
        assert!(
            doc.descendants()
                .filter(|n| n.has_tag_name("polyline"))
                .count()
                >= 13
        );
        if name == "snr" {
            // rev-a's boards were given 900 fs of jitter; the fit names its σ.
            assert!(
                texts.iter().any(|t| t.starts_with("jitter fit, σ = ")),
                "{texts:?}"
            );
        }
    }
    if let Some((dom, console)) = browser_dom(&out.join("index.html")) {
        assert_eq!(dom.matches("<svg").count(), 4);
        assert!(dom.contains("<table id=\"sweep\">"));
        assert!(console.is_empty(), "console: {console:?}");
    }
}

/// A histogram-test record written through the library: an overdriven sine (+0.5 dBFS), a
/// coprime cycle count so every code is reached from many phases, `missing` codes that get no hits.
fn overdriven(dir: &Path, bits: u32, samples: usize, missing: Vec<i64>) -> std::path::PathBuf {
    use spurline::{synthesize, write_record, OutputLayout, SynthFrequency, SynthSettings};
    let s = SynthSettings {
        bits,
        samples,
        amplitude_dbfs: 0.5,
        frequency: SynthFrequency::Hz(100e6 * 4001.0 / samples as f64),
        noise_rms_codes: 0.3,
        missing_codes: missing,
        seed: 11,
        ..SynthSettings::default()
    };
    let path = dir.join(format!("hist{bits}.txt"));
    write_record(&path, &synthesize(&s).unwrap().record, &OutputLayout::Text).unwrap();
    path
}

/// Texts of an SVG, trimmed.
fn svg_texts(svg: &str) -> Vec<String> {
    let doc = roxmltree::Document::parse(svg).unwrap();
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(|t| t.trim().to_string())
        .collect()
}

/// `linearity --out DIR` writes the page with the figures table and both plots inline. The plots
/// are in the report's style (its background colour, its tick labels): codes are labelled as whole
/// numbers and no tick reads "-0.0" or "500.0"; a missing code is ringed and counted in the legend.
/// The browser builds the page with no console message.
#[test]
fn linearity_writes_its_page_with_plain_ticks() {
    let dir = tempfile::tempdir().unwrap();
    let record = overdriven(dir.path(), 12, 1 << 20, vec![700]);
    let out = dir.path().join("lin");
    let o = spurline()
        .arg("linearity")
        .arg(&record)
        .args(["--fs", "100M", "--bits", "12", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let page = std::fs::read_to_string(out.join("index.html")).unwrap();
    assert!(page.starts_with("<!DOCTYPE html>") && page.contains("<table id=\"linearity\">"));
    assert!(
        page.contains("Missing codes: 1 (700)"),
        "the page names the missing code"
    );
    for (file, title) in [("dnl.svg", "DNL"), ("inl.svg", "INL")] {
        let svg = std::fs::read_to_string(out.join(file)).unwrap();
        assert!(page.contains(svg.trim()), "{file} is not inline");
        // The report's background (src/report/svg/mod.rs palette::BACKGROUND), not white.
        assert!(
            svg.contains("#FCFBF8"),
            "{file} is not in the report's style"
        );
        assert!(
            svg.len() < 400_000,
            "{file}: {} bytes for 4096 codes",
            svg.len()
        );
        let texts = svg_texts(&svg);
        assert!(texts.iter().any(|t| t.starts_with(title)), "{texts:?}");
        let numbers: Vec<&String> = texts.iter().filter(|t| t.parse::<f64>().is_ok()).collect();
        assert!(numbers.len() >= 8, "{file}: {numbers:?}");
        for t in &numbers {
            assert!(
                !t.ends_with(".0") && !t.starts_with("-0") || t.starts_with("-0."),
                "{file}: tick {t}"
            );
            assert!(
                t.as_str() != "-0" && t.as_str() != "-0.0",
                "{file}: tick {t}"
            );
        }
        // The code axis reaches both ends of the 12-bit range in whole numbers.
        assert!(texts.iter().any(|t| t == "-2000") && texts.iter().any(|t| t == "2000"));
        let rings = roxmltree::Document::parse(&svg)
            .unwrap()
            .descendants()
            .filter(|n| n.has_tag_name("circle"))
            .count();
        // One ring per missing code plus the legend's, on the DNL plot only.
        assert_eq!(rings, if file == "dnl.svg" { 2 } else { 0 }, "{file}");
    }
    if let Some((dom, console)) = browser_dom(&out.join("index.html")) {
        assert_eq!(dom.matches("<svg").count(), 2);
        assert!(console.is_empty(), "console: {console:?}");
    }
}

/// `compare` on the demo's two board revisions: the terminal's verdict column says better or worse
/// in words (rev-b was given less jitter, so SNR at 47 MHz is better; and a larger third harmonic, so
/// SFDR is worse: src/cli/demo_lot.rs), and the comparison page builds in the browser with no
/// console message.
#[test]
fn compare_says_better_or_worse_and_its_page_renders() {
    let dir = tempfile::tempdir().unwrap();
    let demo = spurline()
        .args(["demo", "--out"])
        .arg(dir.path())
        .output()
        .unwrap();
    assert!(demo.status.success());
    let o = spurline()
        .arg("compare")
        .arg(dir.path().join("lot-rev-a/results"))
        .arg(dir.path().join("lot-rev-b/results"))
        .arg("--out")
        .arg(dir.path().join("cmp"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let stdout = String::from_utf8_lossy(&o.stdout);
    let head = stdout
        .lines()
        .find(|l| l.starts_with("condition"))
        .expect("table header");
    // A character position: the header's "B − A" holds a multi-byte minus.
    let at = head[..head.find("verdict").expect("verdict column")]
        .chars()
        .count();
    let verdict = |cond: &str, metric: &str| -> String {
        let line = stdout
            .lines()
            .find(|l| {
                let mut w = l.split_whitespace();
                w.next() == Some(cond) && w.next() == Some(metric)
            })
            .unwrap_or_else(|| panic!("no row {cond} {metric}:\n{stdout}"));
        let rest: String = line.chars().skip(at).collect();
        rest.split("  ").next().unwrap().trim().to_string()
    };
    assert_eq!(verdict("fin_47M", "spectrum.snr_db"), "better");
    assert_eq!(verdict("fin_05M", "spectrum.sfdr_dbc"), "worse");
    let page = dir.path().join("cmp/comparison.html");
    if let Some((dom, console)) = browser_dom(&page) {
        assert!(dom.matches("<svg").count() >= 10);
        assert!(console.is_empty(), "console: {console:?}");
    }
}
