//! Ceilings that keep one run inside the machine: the memory a record may need, how many worker
//! threads a run may start, and reading of the small files (plans, limit tables, sidecars,
//! manifests, summaries) that refuses special files and files far beyond their kind's size.
//!
//! A file that is not a regular file (`/dev/zero`, a FIFO, a terminal) is opened without blocking and
//! refused unless the caller asked for a stream; every read stops at a stated number of bytes, so no
//! input can hang a run or grow it without bound.

use std::io::Read;
use std::path::Path;

use crate::error::{Error, ErrorKind, Location, Result};

/// Most worker threads a run starts (`--jobs`). Analyses are CPU-bound, so threads beyond the cores
/// only add memory (a record in flight per thread) and scheduling; 256 covers the largest machines
/// a lot runs on while refusing a typing slip such as `--jobs 10000`.
pub const MAX_JOBS: usize = 256;

/// Bytes of memory the analysis of one record needs per sample, beyond the record file's own bytes:
/// the codes (4), the fit's and the spectrum's working buffers and the windowed copy. Measured: a
/// 2^24-sample record peaks at 0.75 GB unwindowed and 0.95 GB windowed (57 bytes a sample); rounded
/// up.
pub const ANALYSIS_BYTES_PER_SAMPLE: u64 = 64;

/// Memory ceiling when the machine's memory cannot be read (8 GiB).
const FALLBACK_MEMORY_LIMIT: u64 = 8 << 30;

/// Largest plan, limit table, manifest or sidecar read (64 MiB): such files are written by hand or
/// hold one line per device; anything larger is not one of them.
pub const MAX_SMALL_FILE_BYTES: u64 = 64 << 20;

/// Checks a worker-thread count: 1..=[`MAX_JOBS`].
///
/// Errors: [`ErrorKind::BadSetting`] on `jobs`, naming the range.
pub fn check_jobs(jobs: usize) -> Result<usize> {
    if (1..=MAX_JOBS).contains(&jobs) {
        Ok(jobs)
    } else {
        Err(Error::setting(
            "jobs",
            format!(
                "a worker-thread count in 1..={MAX_JOBS} (this machine has {} cores)",
                cores()
            ),
            jobs.to_string(),
        ))
    }
}

/// The number of cores the process may use (1 when unknown).
pub fn cores() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}

/// The machine's physical memory in bytes, when the system tells.
pub fn machine_memory_bytes() -> Option<u64> {
    #[cfg(unix)]
    {
        // SAFETY: sysconf only reads system constants.
        let (pages, page) = unsafe {
            (
                libc::sysconf(libc::_SC_PHYS_PAGES),
                libc::sysconf(libc::_SC_PAGESIZE),
            )
        };
        if pages > 0 && page > 0 {
            return (pages as u64).checked_mul(page as u64);
        }
    }
    None
}

/// The default memory ceiling of one record: half the machine's memory (8 GiB when unknown). Half
/// leaves room for the other records of a batch and for the rest of the machine.
pub fn default_memory_limit() -> u64 {
    machine_memory_bytes().map_or(FALLBACK_MEMORY_LIMIT, |m| m / 2)
}

/// How the default limit was found, for messages.
pub fn memory_limit_origin(limit: u64) -> String {
    if limit == default_memory_limit() {
        match machine_memory_bytes() {
            Some(_) => "half this machine's memory".to_string(),
            None => "the default when the machine's memory is unknown".to_string(),
        }
    } else {
        "as given".to_string()
    }
}

/// Formats a byte count for messages: "1.50 GB (1500000000 bytes)".
pub fn bytes_shown(n: u64) -> String {
    let (v, unit) = match n {
        n if n >= 1_000_000_000 => (n as f64 / 1e9, "GB"),
        n if n >= 1_000_000 => (n as f64 / 1e6, "MB"),
        n if n >= 1_000 => (n as f64 / 1e3, "kB"),
        n => return format!("{n} bytes"),
    };
    format!("{v:.2} {unit} ({n} bytes)")
}

/// What kind of file a metadata's type is, in words.
fn kind_of(ft: &std::fs::FileType) -> &'static str {
    #[cfg(unix)]
    {
        use std::os::unix::fs::FileTypeExt;
        if ft.is_fifo() {
            return "a FIFO (named pipe)";
        }
        if ft.is_char_device() {
            return "a character device";
        }
        if ft.is_block_device() {
            return "a block device";
        }
        if ft.is_socket() {
            return "a socket";
        }
    }
    if ft.is_dir() {
        "a folder"
    } else {
        "a special file"
    }
}

/// An opened input: the file, and its length when it is a regular file (`None` for a stream).
pub struct Opened {
    /// The open file.
    pub file: std::fs::File,
    /// The length of a regular file; `None` for a stream the caller allowed.
    pub len: Option<u64>,
}

/// Opens `path` for reading without ever blocking on a FIFO: a file that is not regular is refused
/// ([`ErrorKind::Io`], naming its kind and, when `stream_option` is given, the option that reads it
/// as a stream) unless `allow_stream`, in which case it is reopened for an ordinary blocking read.
pub fn open_input(
    path: &Path,
    what: &str,
    allow_stream: bool,
    stream_option: Option<&str>,
) -> Result<Opened> {
    let mut options = std::fs::OpenOptions::new();
    options.read(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        // A FIFO without a writer would block the open itself; O_NONBLOCK has no effect on a
        // regular file's reads.
        options.custom_flags(libc::O_NONBLOCK);
    }
    let file = options.open(path).map_err(|e| Error::io(path, what, e))?;
    let meta = file.metadata().map_err(|e| Error::io(path, what, e))?;
    let ft = meta.file_type();
    if ft.is_file() {
        #[cfg(unix)]
        clear_nonblock(&file);
        return Ok(Opened {
            file,
            len: Some(meta.len()),
        });
    }
    if allow_stream && !ft.is_dir() {
        drop(file);
        let file = std::fs::File::open(path).map_err(|e| Error::io(path, what, e))?;
        return Ok(Opened { file, len: None });
    }
    let hint = match stream_option {
        Some(o) if !ft.is_dir() => {
            format!(" (give {o} to read it as a stream, bounded by the memory limit)")
        }
        _ => String::new(),
    };
    Err(Error::new(
        ErrorKind::Io,
        path.display().to_string(),
        Location::Whole,
        format!("{what}: a regular file"),
        format!("{}{hint}", kind_of(&ft)),
    ))
}

#[cfg(unix)]
fn clear_nonblock(file: &std::fs::File) {
    use std::os::unix::io::AsRawFd;
    let fd = file.as_raw_fd();
    // SAFETY: fcntl on a descriptor this function's caller owns; failure leaves O_NONBLOCK, which
    // regular files ignore.
    unsafe {
        let flags = libc::fcntl(fd, libc::F_GETFL);
        if flags >= 0 {
            libc::fcntl(fd, libc::F_SETFL, flags & !libc::O_NONBLOCK);
        }
    }
}

/// Reads at most `max_bytes` from `reader`; more is [`ErrorKind::Io`] naming `shown`, the limit and
/// `advice` (what to do about it). The bytes are copied onto the heap, so a file that shrinks or
/// grows meanwhile gives an error or a short read, never a crash.
pub fn read_bounded(
    reader: impl Read,
    shown: &str,
    what: &str,
    max_bytes: u64,
    advice: &str,
) -> Result<Vec<u8>> {
    let mut bytes = Vec::new();
    reader
        .take(max_bytes.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(|e| {
            Error::new(
                ErrorKind::Io,
                shown,
                Location::Byte(bytes.len() as u64),
                what,
                e.to_string(),
            )
        })?;
    if bytes.len() as u64 > max_bytes {
        return Err(Error::new(
            ErrorKind::Io,
            shown,
            Location::Whole,
            format!("{what} of at most {}{advice}", bytes_shown(max_bytes)),
            "more bytes than that",
        ));
    }
    Ok(bytes)
}

/// Reads a small regular file whole (a plan, limit table, manifest, sidecar, summary): refuses a
/// special file and a file above `max_bytes`, naming its size and the limit.
pub fn read_small_file(path: &Path, what: &str, max_bytes: u64) -> Result<Vec<u8>> {
    let opened = open_input(path, what, false, None)?;
    let len = opened.len.unwrap_or(0);
    if len > max_bytes {
        return Err(Error::new(
            ErrorKind::Io,
            path.display().to_string(),
            Location::Whole,
            format!("{what} of at most {}", bytes_shown(max_bytes)),
            bytes_shown(len),
        ));
    }
    read_bounded(
        opened.file,
        &path.display().to_string(),
        what,
        max_bytes,
        "",
    )
}

/// [`read_small_file`] as UTF-8 text.
pub fn read_small_text(path: &Path, what: &str, max_bytes: u64) -> Result<String> {
    let bytes = read_small_file(path, what, max_bytes)?;
    String::from_utf8(bytes).map_err(|e| {
        Error::new(
            ErrorKind::Io,
            path.display().to_string(),
            Location::Byte(e.utf8_error().valid_up_to() as u64),
            format!("{what} in UTF-8"),
            "bytes that are not UTF-8",
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn jobs_bounds() {
        assert!(check_jobs(0).is_err());
        assert_eq!(check_jobs(1).unwrap(), 1);
        assert_eq!(check_jobs(MAX_JOBS).unwrap(), MAX_JOBS);
        let e = check_jobs(10_000).unwrap_err();
        assert!(e.expected.contains("1..=256"), "{e}");
    }

    #[test]
    fn bounded_read_refuses_more() {
        let data = [7u8; 100];
        assert_eq!(
            read_bounded(&data[..], "x", "data", 100, "").unwrap().len(),
            100
        );
        let e = read_bounded(&data[..], "x", "data", 99, "; raise it").unwrap_err();
        assert!(
            e.expected.contains("99 bytes") && e.expected.contains("raise"),
            "{e}"
        );
    }

    #[test]
    fn small_file_limits() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("a.txt");
        std::fs::write(&p, "hello").unwrap();
        assert_eq!(read_small_text(&p, "a file", 5).unwrap(), "hello");
        let e = read_small_file(&p, "a file", 4).unwrap_err();
        assert!(e.found.contains("5 bytes"), "{e}");
        let e = read_small_file(dir.path(), "a file", 4).unwrap_err();
        assert!(e.found.contains("folder"), "{e}");
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn dev_zero_is_refused_without_reading() {
        let e = read_small_file(Path::new("/dev/zero"), "a plan", 1 << 20).unwrap_err();
        assert!(e.found.contains("character device"), "{e}");
    }
}
