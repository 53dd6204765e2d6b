//! Regression tests of the class "never hang, never exhaust memory": special files (`/dev/zero`, a
//! FIFO) given as records or plans, records far beyond the machine's memory, records rewritten while
//! they are read, and worker-thread counts beyond any machine. Each must end promptly with an error
//! naming the file, the size or count, the limit and the option; never a hang, a kill by the kernel
//! or a signal. (Facts of the trade, no source: a tool reading captures must bound what it reads and
//! must not block on a FIFO it was not asked to stream.)

use std::path::Path;
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

/// Longest a refusal may take. Refusals read nothing, so they take milliseconds; the bound only
/// separates "refused" from "hung" on a loaded machine (common practice, no source).
const PROMPT: Duration = Duration::from_secs(60);

fn spurline() -> Command {
    Command::new(assert_cmd::cargo::cargo_bin!("spurline"))
}

/// Runs `cmd`, killing it and failing the test if it has not ended within [`PROMPT`].
fn run_prompt(mut cmd: Command) -> Output {
    let mut child = cmd
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let start = Instant::now();
    loop {
        if child.try_wait().unwrap().is_some() {
            let o = child.wait_with_output().unwrap();
            let err = String::from_utf8_lossy(&o.stderr);
            assert!(!err.contains("panicked"), "{err}");
            return o;
        }
        if start.elapsed() > PROMPT {
            child.kill().unwrap();
            child.wait().unwrap();
            panic!("{cmd:?} did not end within {PROMPT:?}: it hangs");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).to_string()
}

fn analyze(args: &[&str], file: &Path) -> Command {
    let mut c = spurline();
    c.arg("analyze")
        .args(["--fs", "1M", "--bits", "12"])
        .args(args)
        .arg(file);
    c
}

#[cfg(target_os = "linux")]
#[test]
fn dev_zero_as_a_record_is_refused_at_once() {
    let o = run_prompt(analyze(&["--format", "i16le"], Path::new("/dev/zero")));
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("/dev/zero") && err.contains("character device") && err.contains("--stream"),
        "{err}"
    );
}

#[cfg(target_os = "linux")]
#[test]
fn a_stream_is_read_up_to_a_bound_and_then_refused() {
    // --stream reads /dev/zero, which never ends: it must stop at a quarter of --max-memory.
    let o = run_prompt(analyze(
        &["--format", "i16le", "--stream", "--max-memory", "4M"],
        Path::new("/dev/zero"),
    ));
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("1.00 MB (1000000 bytes)"), "{err}");
    assert!(err.contains("--max-memory"), "{err}");
}

#[cfg(unix)]
#[test]
fn a_fifo_without_a_writer_is_refused_not_waited_on() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("r.txt");
    let made = Command::new("mkfifo").arg(&fifo).status().unwrap();
    assert!(made.success());
    let o = run_prompt(analyze(&[], &fifo));
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("FIFO") && err.contains("--stream"), "{err}");
}

#[test]
fn a_record_beyond_the_memory_ceiling_is_refused_before_it_is_read() {
    // 2 GB of i16 words (a sparse file: no disk space used) is 10^9 samples; at 64 bytes a sample
    // its analysis needs about 66 GB.
    let dir = tempfile::tempdir().unwrap();
    let big = dir.path().join("big.bin");
    std::fs::File::create(&big)
        .unwrap()
        .set_len(2_000_000_000)
        .unwrap();
    let o = run_prompt(analyze(&["--format", "i16le", "--max-memory", "8G"], &big));
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("big.bin")
            && err.contains("1000000000 samples")
            && err.contains("8.00 GB")
            && err.contains("--max-memory"),
        "{err}"
    );
    // The default ceiling follows the machine: half its memory, named in the message.
    let o = run_prompt(analyze(&["--format", "i16le"], &big));
    let err = stderr(&o);
    let half = spurline::machine_memory_bytes().unwrap_or(16 << 30) / 2;
    if 2_000_000_000 + 1_000_000_000 * spurline::ANALYSIS_BYTES_PER_SAMPLE > half {
        assert_eq!(o.status.code(), Some(2), "{err}");
        assert!(err.contains("half this machine's memory"), "{err}");
    }
    // --json still gives one failed object for the file, with the kind of the error.
    let mut c = analyze(&["--format", "i16le", "--max-memory", "8G", "--json"], &big);
    c.current_dir(dir.path());
    let o = run_prompt(c);
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v[0]["error"]["kind"], "too_large");
}

#[cfg(target_os = "linux")]
#[test]
fn a_plan_or_limit_table_that_is_a_device_is_refused() {
    let mut c = spurline();
    c.args(["batch", "/dev/zero"]);
    let o = run_prompt(c);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("/dev/zero") && err.contains("character device"),
        "{err}"
    );

    let lot = crate::batch::make_lot();
    let mut c = spurline();
    c.arg("batch")
        .arg(lot.path().join("plan.toml"))
        .args(["--limits", "/dev/urandom", "--out"])
        .arg(lot.path().join("out"));
    let o = run_prompt(c);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("/dev/urandom") && err.contains("limit table"),
        "{err}"
    );
}

#[test]
fn worker_threads_beyond_the_cap_are_refused_with_the_cap() {
    let lot = crate::batch::make_lot();
    let o = crate::batch::run_batch(lot.path(), &lot.path().join("out"), &["--jobs", "10000"]);
    let err = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("jobs") && err.contains("1..=256") && err.contains("10000"),
        "{err}"
    );
    assert!(!lot.path().join("out").join("summary.csv").exists());
    // The cap itself is accepted (no limit table: exit 0).
    let o = crate::batch::run_batch(lot.path(), &lot.path().join("out"), &["--jobs", "256"]);
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

#[cfg(unix)]
#[test]
fn a_record_cut_short_while_it_is_read_never_kills_the_process() {
    // A 32 MB record is truncated and rewritten over and over while it is analysed. A memory-mapped
    // read dies of SIGBUS when the file shrinks under the map; a copied read gives a result or an
    // error for that record. Either way the process must exit with a status, not a signal.
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("r.bin");
    let words: Vec<u8> = (0..16_000_000u32)
        .flat_map(|i| (((i % 2000) as i16) - 1000).to_le_bytes())
        .collect();
    std::fs::write(&path, &words).unwrap();
    let stop = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
    let writer = {
        let (stop, path, words) = (stop.clone(), path.clone(), words.clone());
        std::thread::spawn(move || {
            while !stop.load(std::sync::atomic::Ordering::Relaxed) {
                let f = std::fs::OpenOptions::new().write(true).open(&path).unwrap();
                f.set_len(4096).unwrap();
                std::thread::sleep(Duration::from_millis(3));
                std::fs::write(&path, &words).unwrap();
            }
        })
    };
    // Before the fix about one run in eight died of SIGBUS here; twelve runs catch it most times.
    for _ in 0..12 {
        let o = run_prompt(analyze(&["--format", "i16le"], &path));
        assert!(
            o.status.code().is_some(),
            "killed by a signal: {:?} {}",
            o.status,
            stderr(&o)
        );
    }
    stop.store(true, std::sync::atomic::Ordering::Relaxed);
    writer.join().unwrap();
}
