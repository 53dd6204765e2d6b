//! Invariants every parser error and every analysis output must keep, shared by the property tests and
//! the cargo-fuzz targets (fuzz/fuzz_targets include this file by path): a non-empty path the message
//! shows, a place inside the input when the problem is at a place, and no NaN or infinity anywhere.

use serde::Serialize;
use spurline::{Error, ErrorKind, Location};
use std::path::Path;

/// Number of lines of a text input as the parsers count them (a final newline starts no new line).
pub fn line_count(bytes: &[u8]) -> usize {
    let newlines = bytes.iter().filter(|&&b| b == b'\n').count();
    if bytes.last() == Some(&b'\n') {
        newlines
    } else {
        newlines + 1
    }
}

/// What every error must satisfy: a non-empty path that the message shows, a place inside the input
/// when the kind is about a place, and an expectation free of NaN (`found` quotes the input).
pub fn check_error(e: &Error, path: &str, input: &[u8]) {
    check_place(e, path, input);
    // `found` quotes the input, which may well say "nan"; what the parser expected is its own text.
    no_nan_words(&e.expected);
}

/// The part of [`check_error`] about the path and the place, for errors whose expectation may quote
/// the input too (a key of a bench plan).
pub fn check_place(e: &Error, path: &str, input: &[u8]) {
    assert!(!e.path.is_empty(), "error without a path: {e:?}");
    assert_eq!(e.path, path, "{e:?}");
    let shown = e.to_string();
    assert!(shown.starts_with(path), "{shown}");
    assert!(!e.expected.is_empty() && !e.found.is_empty(), "{e:?}");
    match e.kind {
        // A bad token or word is always at a place.
        ErrorKind::NotInteger | ErrorKind::CodeOutOfRange | ErrorKind::PartialWord => {
            assert_ne!(e.location, Location::Whole, "{e:?}")
        }
        ErrorKind::Empty | ErrorKind::TooFewSamples | ErrorKind::Io => {
            assert_eq!(e.location, Location::Whole, "{e:?}")
        }
        _ => {}
    }
    match &e.location {
        Location::Line(l) => {
            assert!(
                *l >= 1 && *l <= line_count(input),
                "{e:?} in {} lines",
                line_count(input)
            );
            assert!(shown.contains(&format!("line {l}")), "{shown}");
        }
        Location::LineColumn(l, _) => {
            // A JSON parser at the end of input stands on the line after the last newline.
            let lines = input.iter().filter(|&&b| b == b'\n').count() + 1;
            assert!(*l >= 1 && *l <= lines, "{e:?} in {lines} lines");
            assert!(shown.contains(&format!("line {l}")), "{shown}");
        }
        Location::Byte(b) => {
            assert!(
                (*b as usize) < input.len(),
                "{e:?} in {} bytes",
                input.len()
            );
            assert!(shown.contains(&format!("byte offset {b}")), "{shown}");
        }
        Location::Key(k) => assert!(shown.contains(k.as_str()), "{shown}"),
        Location::Row(_) | Location::Whole => {}
    }
}

/// Checks an error of `read_record`: a path that is the record or its sidecar, and a place in that file.
pub fn check_read_error(e: &Error, dir: &Path, name: &str, record: &[u8], sidecar: &[u8]) {
    let rec = dir.join(name).display().to_string();
    let side = dir
        .join(Path::new(name).file_stem().unwrap())
        .with_extension("json")
        .display()
        .to_string();
    if e.path == side {
        check_error(e, &side, sidecar);
        if e.kind == ErrorKind::BadMetadata {
            assert!(
                matches!(e.location, Location::LineColumn(..) | Location::Key(_)),
                "{e:?}"
            );
        }
    } else {
        check_error(e, &rec, record);
    }
}

/// Fails when a text shows a NaN or an infinity as a word.
pub fn no_nan_words(text: &str) {
    for word in text.split(|c: char| !c.is_ascii_alphanumeric()) {
        assert!(
            !matches!(word, "NaN" | "nan" | "inf" | "infinity" | "Infinity"),
            "non-finite value shown in: {text}"
        );
    }
}

/// A serde serializer that only walks the value and fails at the first float that is not finite,
/// naming its path: JSON would silently turn such a float into `null`.
pub mod finite {
    use serde::ser::{self, Serialize};
    use std::fmt;

    #[derive(Debug)]
    pub struct NonFinite(pub String);
    impl fmt::Display for NonFinite {
        fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            f.write_str(&self.0)
        }
    }
    impl std::error::Error for NonFinite {}
    impl ser::Error for NonFinite {
        fn custom<T: fmt::Display>(msg: T) -> Self {
            NonFinite(msg.to_string())
        }
    }

    #[derive(Default)]
    pub struct Walker {
        path: Vec<String>,
    }

    /// Ok when every float in `value` is finite.
    pub fn check<T: Serialize>(value: &T) -> Result<(), NonFinite> {
        value.serialize(&mut Walker::default())
    }

    type R = Result<(), NonFinite>;

    impl Walker {
        fn float(&self, v: f64) -> R {
            if v.is_finite() {
                Ok(())
            } else {
                Err(NonFinite(format!("{} = {v}", self.path.join("."))))
            }
        }
        fn inside<T: ?Sized + Serialize>(&mut self, key: &str, v: &T) -> R {
            self.path.push(key.to_string());
            let r = v.serialize(&mut *self);
            self.path.pop();
            r
        }
    }

    impl ser::Serializer for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        type SerializeSeq = Self;
        type SerializeTuple = Self;
        type SerializeTupleStruct = Self;
        type SerializeTupleVariant = Self;
        type SerializeMap = Self;
        type SerializeStruct = Self;
        type SerializeStructVariant = Self;

        fn serialize_bool(self, _: bool) -> R {
            Ok(())
        }
        fn serialize_i8(self, _: i8) -> R {
            Ok(())
        }
        fn serialize_i16(self, _: i16) -> R {
            Ok(())
        }
        fn serialize_i32(self, _: i32) -> R {
            Ok(())
        }
        fn serialize_i64(self, _: i64) -> R {
            Ok(())
        }
        fn serialize_u8(self, _: u8) -> R {
            Ok(())
        }
        fn serialize_u16(self, _: u16) -> R {
            Ok(())
        }
        fn serialize_u32(self, _: u32) -> R {
            Ok(())
        }
        fn serialize_u64(self, _: u64) -> R {
            Ok(())
        }
        fn serialize_f32(self, v: f32) -> R {
            self.float(f64::from(v))
        }
        fn serialize_f64(self, v: f64) -> R {
            self.float(v)
        }
        fn serialize_char(self, _: char) -> R {
            Ok(())
        }
        fn serialize_str(self, _: &str) -> R {
            Ok(())
        }
        fn serialize_bytes(self, _: &[u8]) -> R {
            Ok(())
        }
        fn serialize_none(self) -> R {
            Ok(())
        }
        fn serialize_some<T: ?Sized + Serialize>(self, v: &T) -> R {
            v.serialize(self)
        }
        fn serialize_unit(self) -> R {
            Ok(())
        }
        fn serialize_unit_struct(self, _: &'static str) -> R {
            Ok(())
        }
        fn serialize_unit_variant(self, _: &'static str, _: u32, _: &'static str) -> R {
            Ok(())
        }
        fn serialize_newtype_struct<T: ?Sized + Serialize>(self, _: &'static str, v: &T) -> R {
            v.serialize(self)
        }
        fn serialize_newtype_variant<T: ?Sized + Serialize>(
            self,
            _: &'static str,
            _: u32,
            variant: &'static str,
            v: &T,
        ) -> R {
            self.inside(variant, v)
        }
        fn serialize_seq(self, _: Option<usize>) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_tuple(self, _: usize) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_tuple_struct(self, _: &'static str, _: usize) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_tuple_variant(
            self,
            _: &'static str,
            _: u32,
            _: &'static str,
            _: usize,
        ) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_map(self, _: Option<usize>) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_struct(self, _: &'static str, _: usize) -> Result<Self, NonFinite> {
            Ok(self)
        }
        fn serialize_struct_variant(
            self,
            _: &'static str,
            _: u32,
            _: &'static str,
            _: usize,
        ) -> Result<Self, NonFinite> {
            Ok(self)
        }
    }

    impl ser::SerializeSeq for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_element<T: ?Sized + Serialize>(&mut self, v: &T) -> R {
            self.inside("[]", v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeTuple for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_element<T: ?Sized + Serialize>(&mut self, v: &T) -> R {
            self.inside("()", v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeTupleStruct for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_field<T: ?Sized + Serialize>(&mut self, v: &T) -> R {
            self.inside("()", v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeTupleVariant for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_field<T: ?Sized + Serialize>(&mut self, v: &T) -> R {
            self.inside("()", v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeMap for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_key<T: ?Sized + Serialize>(&mut self, k: &T) -> R {
            self.inside("{key}", k)
        }
        fn serialize_value<T: ?Sized + Serialize>(&mut self, v: &T) -> R {
            self.inside("{}", v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeStruct for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_field<T: ?Sized + Serialize>(&mut self, key: &'static str, v: &T) -> R {
            self.inside(key, v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
    impl ser::SerializeStructVariant for &mut Walker {
        type Ok = ();
        type Error = NonFinite;
        fn serialize_field<T: ?Sized + Serialize>(&mut self, key: &'static str, v: &T) -> R {
            self.inside(key, v)
        }
        fn end(self) -> R {
            Ok(())
        }
    }
}

/// Checks every output made from an analysis: no non-finite float anywhere in the result record, and no
/// NaN or infinity in the JSON, CSV and text renderings.
pub fn check_outputs<T: Serialize>(what: &T, analyses: &[spurline::Analysis]) {
    if let Err(e) = finite::check(what) {
        panic!("non-finite figure {e}");
    }
    let json = spurline::to_json(analyses);
    let back: serde_json::Value = serde_json::from_str(&json).unwrap();
    // Null appears only where a figure is optional; re-serialising the Rust value must give the same JSON
    // (a NaN would have become null on the way out and fail the walk above already).
    assert_eq!(back, serde_json::to_value(analyses).unwrap());
    no_nan_words(&spurline::to_csv(analyses, 10));
    for a in analyses {
        no_nan_words(&spurline::render_text(a));
    }
}

/// Checks an error of `BenchPlan::parse`: a `bad_plan` error of the file at a line inside the input
/// (the general checks of [`check_error`] included).
pub fn check_plan_error(e: &Error, path: &str, input: &str) {
    assert_eq!(e.kind, ErrorKind::BadPlan, "{e:?}");
    assert!(matches!(e.location, Location::Line(_)), "{e:?}");
    check_place(e, path, input.as_bytes());
    // The expectation names the key as written, so a NaN word in it can only come from the input.
    let lower = input.to_ascii_lowercase();
    if !lower.contains("nan") && !lower.contains("inf") {
        no_nan_words(&e.expected);
    }
}

/// Checks a plan `BenchPlan::parse` accepted: every value inside the range its docs give, every line
/// inside the input, and the derived settings free of NaN.
pub fn check_plan(plan: &spurline::BenchPlan, input: &str) {
    use spurline::RecordSource;
    let lines = line_count(input.as_bytes());
    let fs = plan.ingest.meta.sample_rate_hz.expect("a sample rate");
    assert!(fs.is_finite() && fs > 0.0, "{fs}");
    assert!((1..=32).contains(&plan.ingest.meta.bits.expect("bits")));
    assert!(!plan.conditions.is_empty());
    for (i, c) in plan.conditions.iter().enumerate() {
        assert!(
            !c.name.is_empty() && c.name != "*" && !c.name.contains('/'),
            "{c:?}"
        );
        assert!(
            plan.conditions[..i].iter().all(|o| o.name != c.name),
            "{c:?}"
        );
        assert!(c.fin_hz.is_finite() && c.fin_hz > 0.0, "{c:?}");
        assert!(c.amplitude_dbfs.is_finite(), "{c:?}");
        assert!((1..=100).contains(&c.settings.spectrum.harmonics), "{c:?}");
        assert!((1..=10_000).contains(&c.average), "{c:?}");
        assert!(c.amplitude_tolerance_db.is_finite() && c.amplitude_tolerance_db > 0.0);
        assert!(c.line >= 1 && c.line <= lines, "{c:?} in {lines} lines");
        // The fit's hint is the input folded into the first zone: inside (0, fs/2) or none.
        if let Some(f) = plan.ingest_for(c).meta.fin_hz {
            assert!(f > 0.0 && f < fs / 2.0, "{f} for {c:?}");
        }
    }
    assert!(plan.max_harmonics() >= 1);
    match &plan.records {
        RecordSource::Pattern { line, .. } => assert!(*line >= 1 && *line <= lines),
        // A list needs no file system to be located.
        RecordSource::List(list) => {
            assert!(!list.is_empty());
            for e in list {
                assert!(e.line >= 1 && e.line <= lines, "{e:?}");
            }
            let lot = plan
                .locate()
                .expect("a listed lot is located without files");
            assert_eq!(lot.results(), lot.devices.len() * plan.conditions.len());
        }
    }
}

/// Checks an error of `LimitTable::parse`: a `bad_limits` error of the file at a row (a line of the
/// input, which the message shows), or about the whole file.
pub fn check_limits_error(e: &Error, path: &str, input: &str) {
    assert_eq!(e.kind, ErrorKind::BadLimits, "{e:?}");
    check_error(e, path, input.as_bytes());
    match e.location {
        Location::Row(r) => {
            let lines = line_count(input.as_bytes());
            assert!(r >= 1 && r <= lines, "{e:?} in {lines} lines");
            assert!(e.to_string().contains(&format!("row {r}")), "{e}");
        }
        Location::Whole => {}
        _ => panic!("a limit-table error at neither a row nor the whole file: {e:?}"),
    }
}

/// Checks a table `LimitTable::parse` accepted against its scope: rows at lines of the input in file
/// order, every condition and metric of the scope, finite ordered bounds, and a CSV form that reads
/// back to the same limits.
pub fn check_limits(
    t: &spurline::LimitTable,
    path: &str,
    input: &str,
    scope: &[(String, spurline::Catalogue)],
) {
    let lines = line_count(input.as_bytes());
    assert!(!t.limits.is_empty());
    assert_eq!(t.path, path);
    for (i, l) in t.limits.iter().enumerate() {
        assert!(l.row >= 1 && l.row <= lines, "{l:?} in {lines} lines");
        if i > 0 {
            // Without a lone CR (which the CSV reader also ends a row at) each row starts a line.
            let prev = t.limits[i - 1].row;
            if input.contains('\r') {
                assert!(l.row >= prev, "{l:?} after row {prev}");
            } else {
                assert!(l.row > prev, "{l:?} after row {prev}");
            }
        }
        let catalogues: Vec<_> = scope
            .iter()
            .filter(|(n, _)| l.condition.as_ref().is_none_or(|c| c == n))
            .map(|(_, c)| c)
            .collect();
        assert!(!catalogues.is_empty(), "{l:?}");
        for c in catalogues {
            let m = c
                .get(&l.metric)
                .unwrap_or_else(|| panic!("{l:?} not in scope"));
            assert_eq!(m.unit, l.unit, "{l:?}");
        }
        assert!(l.low.is_some() || l.high.is_some(), "{l:?}");
        assert!(l.low.is_none_or(f64::is_finite) && l.high.is_none_or(f64::is_finite));
        assert!(l.guardband.is_finite() && l.guardband >= 0.0, "{l:?}");
        if let (Some(lo), Some(hi)) = (l.low, l.high) {
            assert!(lo + l.guardband <= hi - l.guardband, "{l:?}");
        }
        assert!(
            t.limits[..i]
                .iter()
                .all(|o| o.condition != l.condition || o.metric != l.metric),
            "{l:?} twice"
        );
    }
    let back = spurline::LimitTable::parse(&t.to_csv(), path, scope)
        .unwrap_or_else(|e| panic!("the table's CSV does not read back: {e}"));
    let strip = |t: &spurline::LimitTable| -> Vec<_> {
        t.limits
            .iter()
            .map(|l| {
                (
                    l.condition.clone(),
                    l.metric.clone(),
                    l.low,
                    l.high,
                    l.guardband,
                )
            })
            .collect()
    };
    assert_eq!(strip(t), strip(&back));
    // Judging never panics, whatever the values, and a missing value fails.
    for (name, _) in scope {
        let applies = !t.for_condition(name).is_empty();
        for value in [None, Some(0.0), Some(-1e300), Some(1e300)] {
            let v = t.judge(name, |_| value);
            no_nan_words(&format!("{v:?}"));
            if value.is_none() && applies {
                assert_eq!(v.outcome, spurline::Outcome::Fail, "{v:?}");
            }
        }
    }
}
