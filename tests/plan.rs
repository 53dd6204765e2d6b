//! `spurline plan` through the binary: the worked coherent example, the CSV contract, two-tone
//! products on the bin scale, the record length for a resolution, and bad settings (exit 2, no panic).

use assert_cmd::Command;

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Runs `plan` with the arguments, expecting success; returns stdout.
fn plan(args: &[&str]) -> String {
    let out = spurline().arg("plan").args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// Parses CSV text into its header and rows.
fn table(text: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let header = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

fn cell<'a>(header: &[String], row: &'a [String], name: &str) -> &'a str {
    let i = header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name} in {header:?}"));
    &row[i]
}

#[test]
fn worked_example_44_mhz() {
    // Hand arithmetic (common practice, no source):
    // 44e6·2048/100e6 = 901.12 → J = 901, odd and coprime with 2048; 901·100e6/2048 = 43 994 140.625 Hz.
    // 901 = 17·53 is not prime; the nearest prime is 907 (887 is 14.12 bins away, 907 is 5.88).
    let text = plan(&["--fs", "100M", "--samples", "2048", "--fin", "44M"]);
    assert!(text.contains("J = 901 cycles"), "{text}");
    assert!(text.contains("43994140.625 Hz"), "{text}");
    assert!(text.contains("not prime (17·53)"), "{text}");
    assert!(text.contains("48828.125 Hz"), "{text}");
    let prime = plan(&[
        "--fs",
        "100M",
        "--samples",
        "2048",
        "--fin",
        "44M",
        "--prime",
    ]);
    assert!(prime.contains("J = 907 cycles"), "{prime}");
    assert!(
        prime.contains(&format!("{} Hz", 907.0 * 100e6 / 2048.0)),
        "{prime}"
    );
}

#[test]
fn csv_has_stable_columns_with_units() {
    let text = plan(&[
        "--fs",
        "100M",
        "--samples",
        "2048",
        "--fin",
        "44M,10M",
        "--harmonics",
        "3",
        "--csv",
    ]);
    let (header, rows) = table(&text);
    let want: Vec<&str> = vec![
        "target_hz",
        "sample_rate_hz",
        "samples",
        "bin_width_hz",
        "cycles",
        "cycles_prime",
        "frequency_hz",
        "offset_from_target_hz",
        "h2_frequency_hz",
        "h2_bin",
        "h2_collides_with",
        "h3_frequency_hz",
        "h3_bin",
        "h3_collides_with",
        "collisions",
        "required_resolution_hz",
        "samples_for_resolution",
    ];
    assert_eq!(header, want);
    assert_eq!(rows.len(), 2);
    let r = &rows[0];
    assert_eq!(cell(&header, r, "cycles"), "901");
    assert_eq!(cell(&header, r, "cycles_prime"), "false");
    assert_eq!(cell(&header, r, "frequency_hz"), "43994140.625");
    assert_eq!(cell(&header, r, "bin_width_hz"), "48828.125");
    assert_eq!(cell(&header, r, "offset_from_target_hz"), "-5859.375");
    // H2 of J = 901 folds to 2048 − 1802 = 246; H3 to 2703 − 2048 = 655 (aliasing, |h·J − k·N|).
    assert_eq!(cell(&header, r, "h2_bin"), "246");
    assert_eq!(
        cell(&header, r, "h2_frequency_hz"),
        (246.0 * 100e6 / 2048.0).to_string()
    );
    assert_eq!(cell(&header, r, "h3_bin"), "655");
    assert_eq!(cell(&header, r, "collisions"), "0");
    // 10 MHz: 10e6·2048/100e6 = 204.8 → 205 = 5·41, odd and coprime with 2048.
    assert_eq!(cell(&header, &rows[1], "cycles"), "205");
    // A range gives the same columns, one row per target.
    let ranged = plan(&[
        "--fs",
        "100M",
        "--samples",
        "2048",
        "--range",
        "1M:41M:10M",
        "--harmonics",
        "3",
        "--csv",
    ]);
    let (h2, rows2) = table(&ranged);
    assert_eq!(h2, header);
    let targets: Vec<&str> = rows2.iter().map(|r| cell(&h2, r, "target_hz")).collect();
    assert_eq!(
        targets,
        ["1000000", "11000000", "21000000", "31000000", "41000000"]
    );
    // Same inputs, same bytes.
    let again = plan(&[
        "--fs",
        "100M",
        "--samples",
        "2048",
        "--fin",
        "44M,10M",
        "--harmonics",
        "3",
        "--csv",
    ]);
    assert_eq!(again, text);
}

#[test]
fn collisions_are_reported_in_csv() {
    // fs = N = 1024 (1 Hz bins), fin = 341 Hz: J = 341 = 11·31, odd and coprime with 1024.
    // H3 = 1023 folds to 1024 − 1023 = 1, within a span of 1 bin of DC (aliasing, |h·J − k·N|).
    let text = plan(&[
        "--fs",
        "1024",
        "--samples",
        "1024",
        "--fin",
        "341",
        "--harmonics",
        "3",
        "--tone-halfwidth",
        "1",
        "--csv",
    ]);
    let (h, rows) = table(&text);
    assert_eq!(cell(&h, &rows[0], "cycles"), "341");
    // H2 = 682 → 1024 − 682 = 342, within 1 bin of the fundamental 341.
    assert_eq!(cell(&h, &rows[0], "h2_bin"), "342");
    assert_eq!(cell(&h, &rows[0], "h2_collides_with"), "fundamental");
    assert_eq!(cell(&h, &rows[0], "h3_bin"), "1");
    assert_eq!(cell(&h, &rows[0], "h3_collides_with"), "dc");
    assert_eq!(cell(&h, &rows[0], "collisions"), "2");
}

#[test]
fn two_tone_products_in_csv() {
    // fs = 100 MHz, N = 1024 (97 656.25 Hz bins): 5 MHz → 51.2 → J = 51; 6 MHz → 61.44 → J = 61.
    // Products on the bin scale (IM2 f2 − f1, f1 + f2; IM3 2f1 − f2, 2f2 − f1, 2f1 + f2, 2f2 + f1;
    // standard formulas): 10, 112, 41, 71, 163, 173 — none beyond N/2 = 512.
    let text = plan(&[
        "--fs",
        "100M",
        "--samples",
        "1024",
        "--two-tone",
        "5M,6M",
        "--harmonics",
        "2",
        "--csv",
    ]);
    let (h, rows) = table(&text);
    let r = &rows[0];
    assert_eq!(cell(&h, r, "f1_cycles"), "51");
    assert_eq!(cell(&h, r, "f2_cycles"), "61");
    for (name, bin) in [
        ("im2_f2_minus_f1", 10.0),
        ("im2_f1_plus_f2", 112.0),
        ("im3_2f1_minus_f2", 41.0),
        ("im3_2f2_minus_f1", 71.0),
        ("im3_2f1_plus_f2", 163.0),
        ("im3_2f2_plus_f1", 173.0),
    ] {
        assert_eq!(
            cell(&h, r, &format!("{name}_bin")),
            bin.to_string(),
            "{name}"
        );
        assert_eq!(
            cell(&h, r, &format!("{name}_frequency_hz")),
            (bin * 100e6 / 1024.0).to_string(),
            "{name}"
        );
    }
    // f1 H2 = 102 and f2 H2 = 122 are harmonics of each tone.
    assert_eq!(cell(&h, r, "f1_h2_bin"), "102");
    assert_eq!(cell(&h, r, "f2_h2_bin"), "122");
    // The same pair as --fin/--fin2 gives the same row.
    let paired = plan(&[
        "--fs",
        "100M",
        "--samples",
        "1024",
        "--fin",
        "5M",
        "--fin2",
        "6M",
        "--harmonics",
        "2",
        "--csv",
    ]);
    assert_eq!(paired, text);
    // Text output names the products.
    let shown = plan(&["--fs", "100M", "--samples", "1024", "--two-tone", "5M,6M"]);
    assert!(
        shown.contains("IM3 2f1-f2") && shown.contains("IM2 f2-f1"),
        "{shown}"
    );
}

#[test]
fn record_length_for_a_resolution() {
    // fs/N ≤ 10 kHz at 100 MHz needs N ≥ 10 000; the next power of two is 16 384 (6103.5 Hz bins).
    let text = plan(&[
        "--fs",
        "100M",
        "--resolution",
        "10k",
        "--fin",
        "1M",
        "--csv",
    ]);
    let (h, rows) = table(&text);
    assert_eq!(cell(&h, &rows[0], "samples"), "16384");
    assert_eq!(cell(&h, &rows[0], "samples_for_resolution"), "16384");
    assert_eq!(cell(&h, &rows[0], "required_resolution_hz"), "10000");
    assert_eq!(cell(&h, &rows[0], "bin_width_hz"), "6103.515625");
    // With a shorter N given, the text says the resolution is not reached.
    let short = plan(&[
        "--fs",
        "100M",
        "--samples",
        "4096",
        "--resolution",
        "10k",
        "--fin",
        "1M",
    ]);
    assert!(
        short.contains("needs N ≥ 16384") && short.contains("NOT reached"),
        "{short}"
    );
}

#[test]
fn bad_settings_exit_2_without_panic() {
    let cases: [&[&str]; 8] = [
        &["--fs", "100M", "--samples", "2048", "--fin", "60M"],
        &["--fs", "100M", "--fin", "1M"],
        &["--fs", "100M", "--samples", "2048"],
        &["--fs", "100M", "--samples", "2048", "--range", "5M:1M:1M"],
        &[
            "--fs",
            "100M",
            "--samples",
            "2048",
            "--fin",
            "1M,2M",
            "--fin2",
            "3M",
        ],
        &[
            "--fs",
            "100M",
            "--samples",
            "2048",
            "--fin",
            "1M",
            "--two-tone",
            "2M,3M",
        ],
        &[
            "--fs",
            "100M",
            "--samples",
            "2048",
            "--two-tone",
            "5M,5.01M",
        ],
        &[
            "--fs",
            "100M",
            "--samples",
            "2048",
            "--fin",
            "1M",
            "--harmonics",
            "0",
        ],
    ];
    for args in cases {
        let out = spurline().arg("plan").args(args).output().unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
        assert!(stderr.contains("expected"), "{args:?}: {stderr}");
    }
}

/// `plan --n` is the old spelling of `--samples` (one name for a record length across commands): it
/// still works, gives the same plan, and warns that it was renamed.
#[test]
fn old_record_length_option_still_works_and_warns() {
    let new = plan(&["--fs", "100M", "--samples", "2048", "--fin", "44M"]);
    let out = spurline()
        .arg("plan")
        .args(["--fs", "100M", "--n", "2048", "--fin", "44M"])
        .output()
        .unwrap();
    assert!(out.status.success());
    assert_eq!(String::from_utf8_lossy(&out.stdout), new);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("--n is now --samples"), "{err}");
    // The old name is hidden from the help; the new one is there.
    let help = spurline().args(["plan", "--help"]).output().unwrap();
    let help = String::from_utf8_lossy(&help.stdout);
    assert!(
        help.contains("--samples") && !help.contains("--n <"),
        "{help}"
    );
}
