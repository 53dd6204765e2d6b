//! Typed errors of the library: every error says where (file, line or byte), what was expected and what was found.

use std::fmt;

/// Where in an input an error was found.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Location {
    /// The input as a whole (missing, empty, too short, ...).
    Whole,
    /// A 1-based line number in a text input.
    Line(usize),
    /// A 1-based line and column (structured text such as JSON or TOML).
    LineColumn(usize, usize),
    /// A 0-based byte offset in a binary input.
    Byte(u64),
    /// A 1-based row of a table (limit table, CSV).
    Row(usize),
    /// A named key or field (settings, command-line options).
    Key(String),
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Location::Whole => Ok(()),
            Location::Line(l) => write!(f, "line {l}"),
            Location::LineColumn(l, c) => write!(f, "line {l}, column {c}"),
            Location::Byte(b) => write!(f, "byte offset {b}"),
            Location::Row(r) => write!(f, "row {r}"),
            Location::Key(k) => write!(f, "'{k}'"),
        }
    }
}

/// What went wrong, as a machine-readable class (used by tests and in JSON output).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ErrorKind {
    /// The file does not exist or cannot be read.
    Io,
    /// The file holds no samples at all.
    Empty,
    /// Fewer samples than the analysis needs.
    TooFewSamples,
    /// A token that is not an integer code.
    NotInteger,
    /// A code outside the N-bit range.
    CodeOutOfRange,
    /// A binary length that is not a whole number of words (or frames).
    PartialWord,
    /// A setting (bits, sample rate, window, ...) outside its valid range.
    BadSetting,
    /// A metadata sidecar or other structured file that does not parse.
    BadMetadata,
    /// The record holds no tone to analyse.
    NoTone,
    /// A fit that cannot be solved (degenerate normal equations, too few cycles).
    DegenerateFit,
    /// A tone so close to DC that the window's DC span swallows it.
    ToneAtEdge,
    /// DC, the tone and its harmonics claim every bin of the spectrum (a short record under a
    /// window): no noise is left to measure the spectral figures against.
    NoNoiseBins,
    /// A histogram-test sine that does not overdrive both ends of the range.
    NotOverdriven,
    /// A bench plan that does not parse or names something that does not exist.
    BadPlan,
    /// A limit table that does not parse or names something unknown.
    BadLimits,
    /// An output that could not be written.
    Output,
    /// A results store (database) that cannot be opened, read or written.
    Store,
    /// A lot already in the results store (same fingerprint), refused rather than recorded twice.
    AlreadyRecorded,
    /// A record or file larger than its ceiling (the memory its analysis would need, or its kind's
    /// size), refused before the work starts.
    TooLarge,
}

/// The library's error: the file, the place in it, what was expected and what was found.
#[derive(Debug, Clone, PartialEq, thiserror::Error, serde::Serialize)]
pub struct Error {
    /// The class of error.
    pub kind: ErrorKind,
    /// The file (or option) the error is about; empty when there is none.
    pub path: String,
    /// Where in the file.
    pub location: Location,
    /// What was expected there.
    pub expected: String,
    /// What was found there.
    pub found: String,
}

impl Error {
    /// Builds an error.
    pub fn new(
        kind: ErrorKind,
        path: impl Into<String>,
        location: Location,
        expected: impl Into<String>,
        found: impl Into<String>,
    ) -> Self {
        Error {
            kind,
            path: path.into(),
            location,
            expected: expected.into(),
            found: found.into(),
        }
    }

    /// An error about a setting (command-line option or metadata key).
    pub fn setting(key: &str, expected: impl Into<String>, found: impl Into<String>) -> Self {
        Error::new(
            ErrorKind::BadSetting,
            "",
            Location::Key(key.to_string()),
            expected,
            found,
        )
    }

    /// An error reading a file or folder: kind [`ErrorKind::Io`], its path, what was expected of it
    /// and the system's message.
    pub fn io(
        path: &std::path::Path,
        expected: impl Into<String>,
        e: impl std::fmt::Display,
    ) -> Self {
        Error::new(
            ErrorKind::Io,
            path.display().to_string(),
            Location::Whole,
            expected,
            e.to_string(),
        )
    }

    /// Returns the same error with the path filled in.
    pub fn with_path(mut self, path: impl Into<String>) -> Self {
        self.path = path.into();
        self
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut head = self.path.clone();
        let loc = self.location.to_string();
        if !loc.is_empty() {
            if !head.is_empty() {
                head.push_str(": ");
            }
            head.push_str(&loc);
        }
        if !head.is_empty() {
            write!(f, "{head}: ")?;
        }
        write!(f, "expected {}, found {}", self.expected, self.found)
    }
}

/// Result alias used throughout the library.
pub type Result<T> = std::result::Result<T, Error>;
