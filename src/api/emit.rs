//! The JSON writer of the answers: compact JSON, byte for byte what
//! `serde_json::to_vec` writes (the tests below hold it to that), with strings
//! scanned eight bytes at a time for the characters JSON escapes instead of
//! one at a time. The notes and reasons of an answer are most of its bytes.
//!
//! Anything this writer does not handle itself (bytes, map keys other than
//! strings and integers, a `Serialize` implementation that fails) is written
//! again from the start by `serde_json`, so the output is always serde_json's.

use std::fmt;

use serde::ser::{self, Serialize};

/// Writes `value` as compact JSON.
///
/// # Errors
/// What `serde_json` reports for a value it cannot write.
pub fn to_vec<T: Serialize + ?Sized>(value: &T) -> serde_json::Result<Vec<u8>> {
    let mut out = Vec::with_capacity(1024);
    to_writer(&mut out, value)?;
    Ok(out)
}

/// Appends `value` as compact JSON to `out`; on an error `out` is as it was.
///
/// # Errors
/// What `serde_json` reports for a value it cannot write.
pub fn to_writer<T: Serialize + ?Sized>(out: &mut Vec<u8>, value: &T) -> serde_json::Result<()> {
    let start = out.len();
    if value.serialize(Writer { out: &mut *out }).is_ok() {
        return Ok(());
    }
    out.truncate(start);
    let written = serde_json::to_writer(&mut *out, value);
    if written.is_err() {
        out.truncate(start);
    }
    written
}

/// Something this writer leaves to `serde_json`.
#[derive(Debug)]
pub struct Handover;

impl fmt::Display for Handover {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("left to serde_json")
    }
}

impl std::error::Error for Handover {}

impl ser::Error for Handover {
    fn custom<T: fmt::Display>(_: T) -> Self {
        Handover
    }
}

type Done = Result<(), Handover>;

/// Whether JSON writes `b` escaped inside a string (RFC 8259 section 7: the
/// quotation mark, the reverse solidus and the control characters).
#[inline(always)]
fn escaped(b: u8) -> bool {
    b < 0x20 || b == b'"' || b == b'\\'
}

fn write_escape(out: &mut Vec<u8>, b: u8) {
    const HEX: &[u8; 16] = b"0123456789abcdef";
    match b {
        b'"' => out.extend_from_slice(b"\\\""),
        b'\\' => out.extend_from_slice(b"\\\\"),
        0x08 => out.extend_from_slice(b"\\b"),
        0x0C => out.extend_from_slice(b"\\f"),
        b'\n' => out.extend_from_slice(b"\\n"),
        b'\r' => out.extend_from_slice(b"\\r"),
        b'\t' => out.extend_from_slice(b"\\t"),
        _ => out.extend_from_slice(&[
            b'\\',
            b'u',
            b'0',
            b'0',
            HEX[usize::from(b >> 4)],
            HEX[usize::from(b & 0xF)],
        ]),
    }
}

/// Nonzero exactly when one of the eight bytes of `word` is one JSON escapes:
/// the bitwise tests for a zero byte and for a byte below n (n ≤ 128) of common
/// practice (no source; exact as a yes-or-no, which is all this asks).
#[inline(always)]
fn marks(word: u64) -> u64 {
    const ONES: u64 = u64::from_ne_bytes([0x01; 8]);
    const HIGHS: u64 = u64::from_ne_bytes([0x80; 8]);
    let below = |x: u64, n: u64| x.wrapping_sub(ONES * n) & !x & HIGHS;
    let zero = |x: u64| below(x, 1);
    below(word, 0x20)
        | zero(word ^ (ONES * u64::from(b'"')))
        | zero(word ^ (ONES * u64::from(b'\\')))
}

/// Whether no byte of `bytes` is one JSON escapes: thirty-two bytes at a time
/// as four words (one test of the four together), then eight at a time, then
/// the last eight (or, in a string shorter than that, each byte).
fn clean(bytes: &[u8]) -> bool {
    let word = |b: &[u8]| {
        let mut eight = [0u8; 8];
        eight.copy_from_slice(b);
        u64::from_ne_bytes(eight)
    };
    let mut blocks = bytes.chunks_exact(32);
    for block in &mut blocks {
        let flags = marks(word(&block[..8]))
            | marks(word(&block[8..16]))
            | marks(word(&block[16..24]))
            | marks(word(&block[24..]));
        if flags != 0 {
            return false;
        }
    }
    let mut words = blocks.remainder().chunks_exact(8);
    for w in &mut words {
        if marks(word(w)) != 0 {
            return false;
        }
    }
    let rest = words.remainder();
    if rest.is_empty() {
        return true;
    }
    match bytes.len().checked_sub(8) {
        // The last eight bytes, overlapping those already tested.
        Some(from) => marks(word(&bytes[from..])) == 0,
        None => !rest.iter().any(|&b| escaped(b)),
    }
}

/// Appends the string's contents, escaped, without the quotation marks.
fn escape_into(out: &mut Vec<u8>, s: &str) {
    let bytes = s.as_bytes();
    if clean(bytes) {
        out.extend_from_slice(bytes);
        return;
    }
    let mut clean_from = 0;
    for (i, &b) in bytes.iter().enumerate() {
        if escaped(b) {
            out.extend_from_slice(&bytes[clean_from..i]);
            write_escape(out, b);
            clean_from = i + 1;
        }
    }
    out.extend_from_slice(&bytes[clean_from..]);
}

fn write_str(out: &mut Vec<u8>, s: &str) {
    out.reserve(s.len() + 2);
    out.push(b'"');
    escape_into(out, s);
    out.push(b'"');
}

/// Escapes what is written into it (for `collect_str`).
struct Escaping<'a>(&'a mut Vec<u8>);

impl fmt::Write for Escaping<'_> {
    fn write_str(&mut self, s: &str) -> fmt::Result {
        escape_into(self.0, s);
        Ok(())
    }
}

struct Writer<'a> {
    out: &'a mut Vec<u8>,
}

/// An array or object being written; `first` until its first element.
pub struct Compound<'a> {
    out: &'a mut Vec<u8>,
    first: bool,
    /// Closes a `{"variant":…}` wrapper too.
    variant: bool,
}

impl Compound<'_> {
    fn comma(&mut self) {
        if self.first {
            self.first = false;
        } else {
            self.out.push(b',');
        }
    }
}

macro_rules! integers {
    ($($name:ident: $t:ty),*) => {
        $(fn $name(self, v: $t) -> Done {
            self.out.extend_from_slice(itoa::Buffer::new().format(v).as_bytes());
            Ok(())
        })*
    };
}

impl<'a> Writer<'a> {
    /// An array or object begun.
    fn open(self, bracket: u8) -> Compound<'a> {
        self.out.push(bracket);
        Compound {
            out: self.out,
            first: true,
            variant: false,
        }
    }

    /// `{"variant":` and the bracket of its contents.
    fn open_variant(self, variant: &str, bracket: u8) -> Compound<'a> {
        self.out.push(b'{');
        write_str(self.out, variant);
        self.out.push(b':');
        self.out.push(bracket);
        Compound {
            out: self.out,
            first: true,
            variant: true,
        }
    }
}

impl<'a> ser::Serializer for Writer<'a> {
    type Ok = ();
    type Error = Handover;
    type SerializeSeq = Compound<'a>;
    type SerializeTuple = Compound<'a>;
    type SerializeTupleStruct = Compound<'a>;
    type SerializeTupleVariant = Compound<'a>;
    type SerializeMap = Compound<'a>;
    type SerializeStruct = Compound<'a>;
    type SerializeStructVariant = Compound<'a>;

    fn serialize_bool(self, v: bool) -> Done {
        self.out
            .extend_from_slice(if v { b"true" as &[u8] } else { b"false" });
        Ok(())
    }

    integers!(serialize_i8: i8, serialize_i16: i16, serialize_i32: i32, serialize_i64: i64,
        serialize_i128: i128, serialize_u8: u8, serialize_u16: u16, serialize_u32: u32,
        serialize_u64: u64, serialize_u128: u128);

    fn serialize_f32(self, v: f32) -> Done {
        serde_json::to_writer(&mut *self.out, &v).map_err(|_| Handover)
    }

    fn serialize_f64(self, v: f64) -> Done {
        serde_json::to_writer(&mut *self.out, &v).map_err(|_| Handover)
    }

    fn serialize_char(self, v: char) -> Done {
        write_str(self.out, v.encode_utf8(&mut [0u8; 4]));
        Ok(())
    }

    fn serialize_str(self, v: &str) -> Done {
        write_str(self.out, v);
        Ok(())
    }

    fn serialize_bytes(self, _: &[u8]) -> Done {
        Err(Handover)
    }

    fn serialize_none(self) -> Done {
        self.out.extend_from_slice(b"null");
        Ok(())
    }

    fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Done {
        value.serialize(self)
    }

    fn serialize_unit(self) -> Done {
        self.serialize_none()
    }

    fn serialize_unit_struct(self, _: &'static str) -> Done {
        self.serialize_none()
    }

    fn serialize_unit_variant(self, _: &'static str, _: u32, variant: &'static str) -> Done {
        self.serialize_str(variant)
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _: &'static str, value: &T) -> Done {
        value.serialize(self)
    }

    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        value: &T,
    ) -> Done {
        self.out.push(b'{');
        write_str(self.out, variant);
        self.out.push(b':');
        value.serialize(Writer {
            out: &mut *self.out,
        })?;
        self.out.push(b'}');
        Ok(())
    }

    fn serialize_seq(self, _: Option<usize>) -> Result<Compound<'a>, Handover> {
        Ok(self.open(b'['))
    }

    fn serialize_tuple(self, len: usize) -> Result<Compound<'a>, Handover> {
        self.serialize_seq(Some(len))
    }

    fn serialize_tuple_struct(self, _: &'static str, len: usize) -> Result<Compound<'a>, Handover> {
        self.serialize_seq(Some(len))
    }

    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Handover> {
        Ok(self.open_variant(variant, b'['))
    }

    fn serialize_map(self, _: Option<usize>) -> Result<Compound<'a>, Handover> {
        Ok(self.open(b'{'))
    }

    fn serialize_struct(self, _: &'static str, len: usize) -> Result<Compound<'a>, Handover> {
        self.serialize_map(Some(len))
    }

    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        variant: &'static str,
        _: usize,
    ) -> Result<Compound<'a>, Handover> {
        Ok(self.open_variant(variant, b'{'))
    }

    fn collect_str<T: fmt::Display + ?Sized>(self, value: &T) -> Done {
        self.out.push(b'"');
        fmt::write(&mut Escaping(&mut *self.out), format_args!("{value}")).map_err(|_| Handover)?;
        self.out.push(b'"');
        Ok(())
    }
}

impl Compound<'_> {
    fn element<T: Serialize + ?Sized>(&mut self, value: &T) -> Done {
        self.comma();
        value.serialize(Writer {
            out: &mut *self.out,
        })
    }

    fn close(self, bracket: u8) -> Done {
        self.out.push(bracket);
        if self.variant {
            self.out.push(b'}');
        }
        Ok(())
    }

    fn field<T: Serialize + ?Sized>(&mut self, key: &str, value: &T) -> Done {
        self.comma();
        write_str(self.out, key);
        self.out.push(b':');
        value.serialize(Writer {
            out: &mut *self.out,
        })
    }
}

/// The array-like compounds: elements separated by commas, then `]`.
macro_rules! array_like {
    ($($trait:ident :: $method:ident),*) => {
        $(impl ser::$trait for Compound<'_> {
            type Ok = ();
            type Error = Handover;
            fn $method<T: Serialize + ?Sized>(&mut self, value: &T) -> Done {
                self.element(value)
            }
            fn end(self) -> Done {
                self.close(b']')
            }
        })*
    };
}

array_like!(
    SerializeSeq::serialize_element,
    SerializeTuple::serialize_element,
    SerializeTupleStruct::serialize_field,
    SerializeTupleVariant::serialize_field
);

impl ser::SerializeMap for Compound<'_> {
    type Ok = ();
    type Error = Handover;
    fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Done {
        self.comma();
        key.serialize(Key {
            out: &mut *self.out,
        })?;
        self.out.push(b':');
        Ok(())
    }
    fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Done {
        value.serialize(Writer {
            out: &mut *self.out,
        })
    }
    fn end(self) -> Done {
        self.close(b'}')
    }
}

/// The struct-like compounds: `"field":value` separated by commas, then `}`.
macro_rules! struct_like {
    ($($trait:ident),*) => {
        $(impl ser::$trait for Compound<'_> {
            type Ok = ();
            type Error = Handover;
            fn serialize_field<T: Serialize + ?Sized>(
                &mut self,
                key: &'static str,
                value: &T,
            ) -> Done {
                self.field(key, value)
            }
            fn end(self) -> Done {
                self.close(b'}')
            }
        })*
    };
}

struct_like!(SerializeStruct, SerializeStructVariant);

/// A map key: a string as it is, an integer in quotation marks; anything else
/// is left to serde_json.
struct Key<'a> {
    out: &'a mut Vec<u8>,
}

macro_rules! integer_keys {
    ($($name:ident: $t:ty),*) => {
        $(fn $name(self, v: $t) -> Done {
            self.out.push(b'"');
            self.out.extend_from_slice(itoa::Buffer::new().format(v).as_bytes());
            self.out.push(b'"');
            Ok(())
        })*
    };
}

impl ser::Serializer for Key<'_> {
    type Ok = ();
    type Error = Handover;
    type SerializeSeq = ser::Impossible<(), Handover>;
    type SerializeTuple = ser::Impossible<(), Handover>;
    type SerializeTupleStruct = ser::Impossible<(), Handover>;
    type SerializeTupleVariant = ser::Impossible<(), Handover>;
    type SerializeMap = ser::Impossible<(), Handover>;
    type SerializeStruct = ser::Impossible<(), Handover>;
    type SerializeStructVariant = ser::Impossible<(), Handover>;

    fn serialize_str(self, v: &str) -> Done {
        write_str(self.out, v);
        Ok(())
    }

    integer_keys!(serialize_i8: i8, serialize_i16: i16, serialize_i32: i32, serialize_i64: i64,
        serialize_i128: i128, serialize_u8: u8, serialize_u16: u16, serialize_u32: u32,
        serialize_u64: u64, serialize_u128: u128);

    fn serialize_char(self, v: char) -> Done {
        write_str(self.out, v.encode_utf8(&mut [0u8; 4]));
        Ok(())
    }

    fn serialize_unit_variant(self, _: &'static str, _: u32, variant: &'static str) -> Done {
        self.serialize_str(variant)
    }

    fn serialize_newtype_struct<T: Serialize + ?Sized>(self, _: &'static str, value: &T) -> Done {
        value.serialize(self)
    }

    fn serialize_bool(self, _: bool) -> Done {
        Err(Handover)
    }
    fn serialize_f32(self, _: f32) -> Done {
        Err(Handover)
    }
    fn serialize_f64(self, _: f64) -> Done {
        Err(Handover)
    }
    fn serialize_bytes(self, _: &[u8]) -> Done {
        Err(Handover)
    }
    fn serialize_none(self) -> Done {
        Err(Handover)
    }
    fn serialize_some<T: Serialize + ?Sized>(self, _: &T) -> Done {
        Err(Handover)
    }
    fn serialize_unit(self) -> Done {
        Err(Handover)
    }
    fn serialize_unit_struct(self, _: &'static str) -> Done {
        Err(Handover)
    }
    fn serialize_newtype_variant<T: Serialize + ?Sized>(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: &T,
    ) -> Done {
        Err(Handover)
    }
    fn serialize_seq(self, _: Option<usize>) -> Result<Self::SerializeSeq, Handover> {
        Err(Handover)
    }
    fn serialize_tuple(self, _: usize) -> Result<Self::SerializeTuple, Handover> {
        Err(Handover)
    }
    fn serialize_tuple_struct(
        self,
        _: &'static str,
        _: usize,
    ) -> Result<Self::SerializeTupleStruct, Handover> {
        Err(Handover)
    }
    fn serialize_tuple_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Self::SerializeTupleVariant, Handover> {
        Err(Handover)
    }
    fn serialize_map(self, _: Option<usize>) -> Result<Self::SerializeMap, Handover> {
        Err(Handover)
    }
    fn serialize_struct(
        self,
        _: &'static str,
        _: usize,
    ) -> Result<Self::SerializeStruct, Handover> {
        Err(Handover)
    }
    fn serialize_struct_variant(
        self,
        _: &'static str,
        _: u32,
        _: &'static str,
        _: usize,
    ) -> Result<Self::SerializeStructVariant, Handover> {
        Err(Handover)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use serde::Serialize;
    use serde_json::Value;
    use std::collections::BTreeMap;

    /// Written by this writer itself (not handed over), as serde_json writes it.
    fn same<T: Serialize + ?Sized>(v: &T) {
        let want = serde_json::to_vec(v).unwrap();
        let mut got = Vec::new();
        assert!(v.serialize(Writer { out: &mut got }).is_ok(), "handed over");
        assert_eq!(
            String::from_utf8_lossy(&got),
            String::from_utf8_lossy(&want)
        );
        assert_eq!(to_vec(v).unwrap(), want);
    }

    /// Handed over to serde_json, and so written as it writes it.
    fn handed_over<T: Serialize + ?Sized>(v: &T) {
        let mut scratch = Vec::new();
        assert!(v.serialize(Writer { out: &mut scratch }).is_err());
        assert_eq!(to_vec(v).unwrap(), serde_json::to_vec(v).unwrap());
    }

    #[derive(Serialize)]
    enum Shape {
        Unit,
        Newtype(u8),
        Tuple(i32, String),
        Record { a: Option<u64>, b: char },
    }

    #[derive(Serialize)]
    struct Inner {
        x: i64,
        #[serde(skip_serializing_if = "Option::is_none")]
        skipped: Option<u8>,
    }

    #[derive(Serialize)]
    struct Outer {
        name: &'static str,
        list: Vec<Shape>,
        #[serde(flatten)]
        inner: Inner,
        keyed: BTreeMap<u32, bool>,
        chars: BTreeMap<char, ()>,
        floats: Vec<f64>,
        tuple: (u8, &'static str),
        unit: (),
        big: (i128, u128),
        amount: rust_decimal::Decimal,
    }

    #[test]
    fn every_serde_shape_is_written_as_serde_json_writes_it() {
        same(&Outer {
            name: "quote \" backslash \\ tab \t newline \n nul \u{0} unit-separator \u{1f} del \u{7f} é € 𝄞",
            list: vec![
                Shape::Unit,
                Shape::Newtype(7),
                Shape::Tuple(-3, "t".into()),
                Shape::Record { a: None, b: '"' },
                Shape::Record { a: Some(u64::MAX), b: '\u{8}' },
            ],
            inner: Inner { x: i64::MIN, skipped: None },
            keyed: [(1, true), (20, false)].into_iter().collect(),
            chars: [('k', ())].into_iter().collect(),
            floats: vec![0.1, -2.5e300, f64::NAN, f64::INFINITY, 0.0, -0.0],
            tuple: (255, ""),
            unit: (),
            big: (i128::MIN, u128::MAX),
            amount: "-1234.5600".parse().unwrap(),
        });
        same(&Vec::<u8>::new());
        same(&BTreeMap::<String, u8>::new());
        same(&Option::<u8>::None);
        // What this writer hands over: bytes, keys that are not strings or integers.
        handed_over(&serde_bytes_like(b"\x00ab"));
        handed_over(&[(true, 1u8)].into_iter().collect::<BTreeMap<bool, u8>>());
        handed_over(&vec![Some(serde_bytes_like(b"x"))]);
    }

    struct Bytes(&'static [u8]);
    impl Serialize for Bytes {
        fn serialize<S: ser::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
            s.serialize_bytes(self.0)
        }
    }
    fn serde_bytes_like(b: &'static [u8]) -> Bytes {
        Bytes(b)
    }

    #[test]
    fn the_word_test_agrees_with_the_byte_test_on_every_byte_and_pair() {
        for at in 0..8 {
            for b in 0..=255u8 {
                let mut w = [b'a'; 8];
                w[at] = b;
                assert_eq!(
                    marks(u64::from_ne_bytes(w)) != 0,
                    escaped(b),
                    "{b:#x} at {at}"
                );
            }
        }
        for (p, q) in [(0, 1), (3, 4), (6, 7), (0, 7)] {
            for b in 0..=255u8 {
                for c in 0..=255u8 {
                    let mut w = [0xffu8; 8];
                    w[p] = b;
                    w[q] = c;
                    assert_eq!(
                        marks(u64::from_ne_bytes(w)) != 0,
                        escaped(b) || escaped(c),
                        "{b:#x} at {p}, {c:#x} at {q}"
                    );
                }
            }
        }
    }

    #[test]
    fn strings_of_every_length_around_the_eight_byte_step() {
        for len in 0..50 {
            for at in 0..len {
                for c in ['"', '\\', '\n', '\u{1}', 'x', 'é'] {
                    let mut s: String = "a".repeat(len);
                    s.replace_range(at..=at, c.encode_utf8(&mut [0; 4]));
                    same(&s);
                }
            }
        }
    }

    #[test]
    fn a_failing_value_reports_serde_json_error_and_leaves_the_buffer() {
        struct Fails;
        impl Serialize for Fails {
            fn serialize<S: ser::Serializer>(&self, _: S) -> Result<S::Ok, S::Error> {
                Err(ser::Error::custom("no"))
            }
        }
        let mut out = b"kept".to_vec();
        assert!(to_writer(&mut out, &vec![Fails]).is_err());
        assert_eq!(out, b"kept");
    }

    fn value() -> impl Strategy<Value = Value> {
        let leaf = prop_oneof![
            Just(Value::Null),
            any::<bool>().prop_map(Value::Bool),
            any::<i64>().prop_map(Value::from),
            any::<u64>().prop_map(Value::from),
            any::<f64>().prop_map(Value::from),
            any::<String>().prop_map(Value::String),
            "[\\x00-\\x7f]{0,40}".prop_map(Value::String),
        ];
        leaf.prop_recursive(4, 64, 8, |inner| {
            prop_oneof![
                prop::collection::vec(inner.clone(), 0..8).prop_map(Value::Array),
                prop::collection::btree_map(any::<String>(), inner, 0..8)
                    .prop_map(|m| Value::Object(m.into_iter().collect())),
            ]
        })
    }

    proptest! {
        // serde_json (crates.io), the general-purpose writer, is the reference.
        #[test]
        fn any_json_value_is_written_as_serde_json_writes_it(v in value()) {
            let mut direct = Vec::new();
            let written = v.serialize(Writer { out: &mut direct });
            prop_assert!(written.is_ok());
            prop_assert_eq!(direct, serde_json::to_vec(&v).unwrap());
        }
    }
}
