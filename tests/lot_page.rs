//! The lot page of `batch` (its `index.html`): the shared page shell, the yield per condition and per
//! metric agreeing with `yield.csv`, one distribution per limited metric and condition with its limits
//! drawn at the limit table's values, every link resolving to a written file or to an anchor on the
//! page, failing rows linked to their device's plots, and the page as a real browser builds it.

use crate::batch::{make_lot, run_batch};
use std::collections::BTreeSet;
use std::path::Path;

/// Every value of `attr="..."` in the page.
fn attributes<'a>(page: &'a str, attr: &str) -> Vec<&'a str> {
    let key = format!(" {attr}=\"");
    page.split(key.as_str())
        .skip(1)
        .filter_map(|rest| rest.split_once('"').map(|(v, _)| v))
        .collect()
}

/// Decodes the `%XX` escapes of a link and the HTML escapes of an attribute.
fn decode(link: &str) -> String {
    let link = link
        .replace("&amp;", "&")
        .replace("&#39;", "'")
        .replace("&quot;", "\"");
    let bytes = link.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        if bytes[i] == b'%' && i + 2 < bytes.len() {
            out.push(u8::from_str_radix(&link[i + 1..i + 3], 16).unwrap());
            i += 3;
        } else {
            out.push(bytes[i]);
            i += 1;
        }
    }
    String::from_utf8(out).unwrap()
}

fn read_csv(path: &Path) -> Vec<BTreeMapRow> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(str::to_string).collect();
    r.records()
        .map(|x| {
            head.iter()
                .cloned()
                .zip(x.unwrap().iter().map(str::to_string))
                .collect()
        })
        .collect()
}

type BTreeMapRow = std::collections::BTreeMap<String, String>;

#[test]
fn the_lot_page_shows_yield_distributions_and_links_that_resolve() {
    let lot = make_lot();
    let p = lot.path();
    let out = p.join("out");
    let limits = p.join("limits.csv");
    let o = run_batch(
        p,
        &out,
        &["--limits", limits.to_str().unwrap(), "--plots", "failures"],
    );
    assert_eq!(
        o.status.code(),
        Some(1),
        "some limits fail in the fixture lot"
    );
    let page = std::fs::read_to_string(out.join("index.html")).unwrap();

    // The page shell of the analyze page: its header and main, no script.
    assert!(page.starts_with("<!DOCTYPE html>"));
    assert!(page.contains("<header>\n<h1>") && page.contains("<main>"));
    assert!(!page.to_ascii_lowercase().contains("<script"));

    // Every link resolves: a file written into the lot folder, or an anchor of the page.
    let ids: BTreeSet<&str> = attributes(&page, "id").into_iter().collect();
    let hrefs = attributes(&page, "href");
    assert!(hrefs.len() > 20, "{} links", hrefs.len());
    for h in &hrefs {
        if let Some(anchor) = h.strip_prefix('#') {
            assert!(ids.contains(anchor), "no anchor '{anchor}'");
        } else {
            let file = out.join(decode(h));
            assert!(file.is_file(), "link '{h}' resolves to no file");
        }
    }

    // The limits as applied are written beside the lot files and read back as a limit table.
    let applied = std::fs::read_to_string(out.join("limits.csv")).unwrap();
    assert!(applied.contains("spectrum.snr_db,60,,dB,2.5"));

    // Yield: a row per condition and per limited metric, as yield.csv counts them.
    let yields = read_csv(&out.join("yield.csv"));
    let per_metric: Vec<&BTreeMapRow> = yields
        .iter()
        .filter(|r| r["metric"] != "*" && r["condition"] != "*")
        .collect();
    let conditions = yields
        .iter()
        .filter(|r| r["metric"] == "*" && r["condition"] != "*")
        .count();
    assert_eq!(page.matches("<tr class=\"whole\">").count(), conditions);
    // One metric row per limited metric, and the lot's devices.
    assert_eq!(
        page.matches("<tr class=\"metric\">").count(),
        per_metric.len() + 1
    );

    // One distribution per condition and limited metric, each with its stated limits drawn and
    // labelled at the table's values, and counts that agree with yield.csv's per-metric counts (two
    // computations: the verdicts at run time, the page from the summary rows).
    let figures: Vec<&str> = page.split("<figure class=\"dist\"").skip(1).collect();
    assert_eq!(figures.len(), per_metric.len());
    for (fig, row) in figures.iter().zip(&per_metric) {
        let fig = fig.split("</figure>").next().unwrap();
        assert!(fig.contains(&format!("data-metric=\"{}\"", row["metric"])));
        let want_label = match row["metric"].as_str() {
            "spectrum.snr_db" => "low 60",
            "spectrum.sfdr_dbc" => "low 65",
            "spectrum.harmonics.h3.dbc" => "high -60",
            "spectrum.enob_bits" => "low 9.5",
            other => panic!("unexpected metric {other}"),
        };
        assert!(fig.contains(want_label), "{}: {want_label}", row["metric"]);
        if row["metric"] == "spectrum.snr_db" {
            // The guardband of 2.5 dB tightens the low limit to 62.5: drawn as the guarded line.
            assert!(fig.contains("guarded 62.5"));
        }
        let caption = fig.split("<figcaption>").nth(1).unwrap();
        let inside: usize = caption
            .split(" inside")
            .next()
            .unwrap()
            .rsplit(' ')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        let guard: usize = caption
            .split(" in a guardband")
            .next()
            .unwrap()
            .rsplit(' ')
            .next()
            .unwrap()
            .parse()
            .unwrap();
        assert_eq!(inside.to_string(), row["passed"], "{}", row["metric"]);
        assert_eq!(
            guard.to_string(),
            row["failed_guardband"],
            "{}",
            row["metric"]
        );
    }

    // Every failing result is listed, links to its row, and its row links to the plots written for it.
    let failing: BTreeSet<(String, String)> = read_csv(&out.join("summary.csv"))
        .into_iter()
        .filter(|r| r["verdict"] == "fail" || r["verdict"] == "fail_guardband")
        .map(|r| (r["device"].clone(), r["condition"].clone()))
        .collect();
    assert!(!failing.is_empty());
    for (device, condition) in &failing {
        let anchor = format!("{device}/{condition}");
        assert!(
            page.contains(&format!("<a href=\"#{anchor}\">")),
            "{anchor}"
        );
        let row = page
            .split(&format!("id=\"{anchor}\">"))
            .nth(1)
            .unwrap()
            .split("</tr>")
            .next()
            .unwrap();
        for kind in ["spectrum", "residual", "histogram"] {
            let link = format!("{device}/{condition}-{kind}.svg");
            assert!(row.contains(&format!("href=\"{link}\"")), "{link}");
            assert!(out.join(&link).is_file());
        }
    }
    // A passing row links no plot (none was written for it with --plots failures).
    let pass_row = page.split("<tr class=\"pass\"").nth(1).unwrap();
    assert!(!pass_row.split("</tr>").next().unwrap().contains(".svg"));

    // Same lot, same page, byte for byte (another thread count).
    let again = p.join("again");
    run_batch(
        p,
        &again,
        &[
            "--limits",
            limits.to_str().unwrap(),
            "--plots",
            "failures",
            "--jobs",
            "2",
        ],
    );
    assert_eq!(
        page,
        std::fs::read_to_string(again.join("index.html")).unwrap()
    );

    // The page as a browser builds it: every distribution drawn, no console message.
    let Some((dom, console)) = crate::pages::browser_dom(&out.join("index.html")) else {
        return;
    };
    assert!(dom.contains("<table id=\"yields\">") && dom.contains("<table id=\"lot\">"));
    assert_eq!(dom.matches("<svg").count(), per_metric.len());
    assert!(console.is_empty(), "console messages: {console:?}");
}
