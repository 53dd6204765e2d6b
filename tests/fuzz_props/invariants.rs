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
    // `found` quotes the input, which may well say "nan"; what the parser expected is its own text.
    no_nan_words(&e.expected);
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
pub fn check_outputs<T: Serialize>(what: &T, analyses: &[spurline::analysis::Analysis]) {
    if let Err(e) = finite::check(what) {
        panic!("non-finite figure {e}");
    }
    let json = spurline::report::json::to_json(analyses);
    let back: serde_json::Value = serde_json::from_str(&json).unwrap();
    // Null appears only where a figure is optional; re-serialising the Rust value must give the same JSON
    // (a NaN would have become null on the way out and fail the walk above already).
    assert_eq!(back, serde_json::to_value(analyses).unwrap());
    no_nan_words(&spurline::report::csv::to_csv(analyses, 10));
    for a in analyses {
        no_nan_words(&spurline::report::text::render(a));
    }
}
