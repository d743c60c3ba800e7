//! Canonical JSON and its SHA-256: the one writer behind the audit chain's record images and
//! the digests of report documents (summaries, dispute bundles).
//!
//! The canonical text of a value is its serde JSON written as follows:
//! - objects: keys sorted by their UTF-8 bytes at every level, no white space;
//! - strings: escaped as serde_json escapes them (`"`, `\`, and control characters: `\n`,
//!   `\r`, `\t`, `\b`, `\f`, the others as `\u00xx`), everything else verbatim UTF-8;
//! - integers: plain decimal; `true`, `false`, `null` as such; a float that is not finite
//!   (NaN, infinity) as `null`;
//! - finite floats: by the rule the caller chooses, [`Numbers`].
//!
//! The rule for floats is a choice with a reason on each side, and each is pinned by what is
//! already out there: existing databases' audit chains hash record images written with
//! [`Numbers::BitPattern`], and existing summaries and bundles carry digests over text
//! written with [`Numbers::Shortest`]. Neither may change.

use serde::Serialize;
use serde_json::{Error, Value};
use sha2::{Digest, Sha256};

/// How a finite floating-point number is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Numbers {
    /// The string `"f64:"` followed by the 16 lower-case hex digits of the IEEE 754 binary64
    /// bit pattern (negative zero written as zero): no float formatting can ever change a
    /// hash. For the audit chain's record images, which only shardlog reads back
    /// ([`parse_bit_pattern_floats`]).
    BitPattern,
    /// serde_json's text: the shortest decimal that reads back to the same value (`0.1`,
    /// `1e-7`, `2.0`). For documents handed to others (summaries, bundles), so that anyone can
    /// recompute a digest from the JSON with an ordinary JSON library.
    Shortest,
}

/// What the writer does besides the fixed form: the number rule, optionally one field name
/// whose value is written as `"sha256:<hex of its canonical text>"` wherever it occurs, and
/// optionally texts given for some fields ([`to_canonical_with_given`]).
#[derive(Clone, Copy)]
struct Rules<'g> {
    numbers: Numbers,
    digested_field: Option<&'static str>,
    given: Option<&'g Given<'g>>,
}

/// Texts given for object fields: the k-th field named `fields[i].0` that is written gets
/// `fields[i].1[k]`, verbatim; `used[i]` counts how many were taken.
struct Given<'g> {
    fields: &'g [(&'static str, &'g [&'g str])],
    used: Vec<std::cell::Cell<usize>>,
}

impl<'g> Rules<'g> {
    fn plain(numbers: Numbers) -> Rules<'g> {
        Rules {
            numbers,
            digested_field: None,
            given: None,
        }
    }

    /// The text given for the next field named `key`, when texts are given for that name.
    fn given_text(&self, key: &str) -> Result<Option<&'g str>, Error> {
        let Some(given) = self.given else {
            return Ok(None);
        };
        let Some(i) = given.fields.iter().position(|(name, _)| *name == key) else {
            return Ok(None);
        };
        let k = given.used[i].get();
        let text = *given.fields[i].1.get(k).ok_or_else(|| {
            <Error as serde::ser::Error>::custom(format!(
                "more fields \"{key}\" are written than texts are given for it"
            ))
        })?;
        given.used[i].set(k + 1);
        Ok(Some(text))
    }
}

/// The canonical text of any serializable value, written directly (no `serde_json::Value`
/// tree in between; the same text as [`value_to_canonical`] of its `serde_json::to_value`).
pub fn to_canonical<T: Serialize + ?Sized>(value: &T, numbers: Numbers) -> Result<String, Error> {
    direct::to_string(value, Rules::plain(numbers))
}

/// [`to_canonical`] appended to `out` (a buffer the caller reuses).
pub fn to_canonical_into<T: Serialize + ?Sized>(
    value: &T,
    numbers: Numbers,
    out: &mut String,
) -> Result<(), Error> {
    direct::write(value, Rules::plain(numbers), out)
}

/// [`to_canonical`], except that the value of every object field named `field` is replaced by
/// `"sha256:<hex>"` of its own canonical text: a large part is pinned by its digest without
/// being copied into the text.
pub fn to_canonical_with_digested_field<T: Serialize + ?Sized>(
    value: &T,
    numbers: Numbers,
    field: &'static str,
) -> Result<String, Error> {
    direct::to_string(
        value,
        Rules {
            digested_field: Some(field),
            ..Rules::plain(numbers)
        },
    )
}

/// [`to_canonical`] with the texts of some fields given: the k-th object field named `name`
/// that the value writes (in the order serde visits them) is written as `texts[k]`, verbatim,
/// whatever its value holds. The caller vouches that each text is canonical JSON (the text
/// of what the field stands for, or its digest as a string). Every text given must be used
/// exactly once, else an error.
pub fn to_canonical_with_given<T: Serialize + ?Sized>(
    value: &T,
    numbers: Numbers,
    fields: &[(&'static str, &[&str])],
) -> Result<String, Error> {
    let given = Given {
        fields,
        used: fields.iter().map(|_| std::cell::Cell::new(0)).collect(),
    };
    let out = direct::to_string(
        value,
        Rules {
            given: Some(&given),
            ..Rules::plain(numbers)
        },
    )?;
    for ((name, texts), used) in fields.iter().zip(&given.used) {
        if used.get() != texts.len() {
            return Err(<Error as serde::ser::Error>::custom(format!(
                "{} texts are given for the field \"{name}\", and {} such fields are written",
                texts.len(),
                used.get()
            )));
        }
    }
    Ok(out)
}

/// The canonical text of a JSON value.
pub fn value_to_canonical(v: &Value, numbers: Numbers) -> String {
    let mut out = String::with_capacity(256);
    write_value(v, numbers, &mut out);
    out
}

/// SHA-256 (lower-case hex) of the canonical text of a value.
pub fn digest<T: Serialize + ?Sized>(value: &T, numbers: Numbers) -> Result<String, Error> {
    Ok(sha256_hex(to_canonical(value, numbers)?.as_bytes()))
}

/// SHA-256 (lower-case hex) of the canonical text of a JSON value.
pub fn digest_value(v: &Value, numbers: Numbers) -> String {
    sha256_hex(value_to_canonical(v, numbers).as_bytes())
}

fn write_value(v: &Value, numbers: Numbers, out: &mut String) {
    match v {
        Value::Null => out.push_str("null"),
        Value::Bool(b) => out.push_str(if *b { "true" } else { "false" }),
        Value::Number(n) => {
            if let Some(i) = n.as_i64() {
                out.push_str(&i.to_string());
            } else if let Some(u) = n.as_u64() {
                out.push_str(&u.to_string());
            } else if let Some(f) = n.as_f64() {
                write_float(f, numbers, out);
            }
        }
        Value::String(s) => write_str(s, out),
        Value::Array(items) => {
            out.push('[');
            for (i, item) in items.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                write_value(item, numbers, out);
            }
            out.push(']');
        }
        Value::Object(map) => {
            let mut keys: Vec<&String> = map.keys().collect();
            keys.sort_by(|a, b| a.as_bytes().cmp(b.as_bytes()));
            out.push('{');
            for (i, k) in keys.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                write_str(k, out);
                out.push(':');
                if let Some(val) = map.get(*k) {
                    write_value(val, numbers, out);
                }
            }
            out.push('}');
        }
    }
}

/// A finite float by `numbers` (callers write `null` for the others).
fn write_float(f: f64, numbers: Numbers, out: &mut String) {
    use std::fmt::Write;
    match numbers {
        Numbers::BitPattern => {
            // -0.0 is written as 0.0: neither SQLite (which stores integral reals as
            // integers) nor JSON parsers keep the sign of zero
            let f = if f == 0.0 { 0.0 } else { f };
            let _ = write!(out, "\"f64:{:016x}\"", f.to_bits());
        }
        Numbers::Shortest => match serde_json::Number::from_f64(f) {
            Some(n) => {
                let _ = write!(out, "{n}");
            }
            None => out.push_str("null"),
        },
    }
}

/// A JSON string literal, escaped as serde_json escapes it.
pub fn write_str(s: &str, out: &mut String) {
    let bytes = s.as_bytes();
    // most texts (and every key) need no escape: one check without early exit, one copy
    if !bytes.iter().fold(false, |acc, &b| {
        acc | (b < 0x20) | (b == b'"') | (b == b'\\')
    }) {
        out.reserve(bytes.len() + 2);
        out.push('"');
        out.push_str(s);
        out.push('"');
        return;
    }
    out.push('"');
    let mut start = 0;
    for (i, &b) in bytes.iter().enumerate() {
        let esc: Option<&str> = match b {
            b'"' => Some("\\\""),
            b'\\' => Some("\\\\"),
            b'\n' => Some("\\n"),
            b'\r' => Some("\\r"),
            b'\t' => Some("\\t"),
            0x08 => Some("\\b"),
            0x0c => Some("\\f"),
            0..=0x1f => None,
            _ => continue,
        };
        // bytes below 0x80 are whole characters, so these slices fall on char boundaries
        out.push_str(&s[start..i]);
        match esc {
            Some(e) => out.push_str(e),
            None => {
                use std::fmt::Write;
                let _ = write!(out, "\\u{:04x}", b);
            }
        }
        start = i + 1;
    }
    out.push_str(&s[start..]);
    out.push('"');
}

/// Parse text written with [`Numbers::BitPattern`] back into ordinary JSON: every string
/// `"f64:<16 hex digits>"` becomes the float it stands for.
pub fn parse_bit_pattern_floats(text: &str) -> Option<Value> {
    let v: Value = serde_json::from_str(text).ok()?;
    Some(restore(v))
}

fn restore(v: Value) -> Value {
    match v {
        Value::String(s) => {
            if let Some(hex) = s.strip_prefix("f64:") {
                if hex.len() == 16 {
                    if let Ok(bits) = u64::from_str_radix(hex, 16) {
                        if let Some(n) = serde_json::Number::from_f64(f64::from_bits(bits)) {
                            return Value::Number(n);
                        }
                    }
                }
            }
            Value::String(s)
        }
        Value::Array(a) => Value::Array(a.into_iter().map(restore).collect()),
        Value::Object(m) => Value::Object(m.into_iter().map(|(k, v)| (k, restore(v))).collect()),
        other => other,
    }
}

/// Lower-case hex of bytes.
pub fn hex(bytes: &[u8]) -> String {
    const DIGITS: &[u8; 16] = b"0123456789abcdef";
    let mut s = String::with_capacity(bytes.len() * 2);
    for b in bytes {
        s.push(DIGITS[(b >> 4) as usize] as char);
        s.push(DIGITS[(b & 15) as usize] as char);
    }
    s
}

/// Lower-case hex SHA-256 of bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// A serde serializer that writes the canonical form directly; output byte-identical to
/// [`value_to_canonical`] of `serde_json::to_value(x)` (tests check it).
mod direct {
    use std::borrow::Cow;

    use serde::ser::{self, Serialize};
    use serde_json::Error;

    use super::Rules;

    pub(super) fn to_string<T: Serialize + ?Sized>(
        value: &T,
        rules: Rules<'_>,
    ) -> Result<String, Error> {
        let mut out = String::with_capacity(256);
        write(value, rules, &mut out)?;
        Ok(out)
    }

    pub(super) fn write<T: Serialize + ?Sized>(
        value: &T,
        rules: Rules<'_>,
        out: &mut String,
    ) -> Result<(), Error> {
        value.serialize(Ser { out, rules })
    }

    struct Ser<'a> {
        out: &'a mut String,
        rules: Rules<'a>,
    }

    struct Seq<'a> {
        out: &'a mut String,
        rules: Rules<'a>,
        first: bool,
        /// for tuple and struct variants: close the wrapping object too
        close_variant: bool,
    }

    /// An object being written: each value is rendered once into `scratch` (one buffer per
    /// object, not one string per field), then the fields are copied out in key order.
    struct Obj<'a> {
        out: &'a mut String,
        rules: Rules<'a>,
        scratch: String,
        fields: Vec<(Cow<'static, str>, usize, usize)>,
        pending_key: Option<String>,
        close_variant: bool,
    }

    fn finish_obj(
        out: &mut String,
        scratch: &str,
        mut fields: Vec<(Cow<'static, str>, usize, usize)>,
    ) {
        fields.sort_by(|a, b| a.0.as_bytes().cmp(b.0.as_bytes()));
        out.reserve(scratch.len() + fields.len() * 16 + 2);
        out.push('{');
        for (i, (k, from, to)) in fields.iter().enumerate() {
            if i > 0 {
                out.push(',');
            }
            super::write_str(k, out);
            out.push(':');
            out.push_str(&scratch[*from..*to]);
        }
        out.push('}');
    }

    fn open_variant(out: &mut String, variant: &str) {
        out.push('{');
        super::write_str(variant, out);
        out.push(':');
    }

    impl<'a> ser::Serializer for Ser<'a> {
        type Ok = ();
        type Error = Error;
        type SerializeSeq = Seq<'a>;
        type SerializeTuple = Seq<'a>;
        type SerializeTupleStruct = Seq<'a>;
        type SerializeTupleVariant = Seq<'a>;
        type SerializeMap = Obj<'a>;
        type SerializeStruct = Obj<'a>;
        type SerializeStructVariant = Obj<'a>;

        fn serialize_bool(self, v: bool) -> Result<(), Error> {
            self.out.push_str(if v { "true" } else { "false" });
            Ok(())
        }
        fn serialize_i8(self, v: i8) -> Result<(), Error> {
            self.serialize_i64(v as i64)
        }
        fn serialize_i16(self, v: i16) -> Result<(), Error> {
            self.serialize_i64(v as i64)
        }
        fn serialize_i32(self, v: i32) -> Result<(), Error> {
            self.serialize_i64(v as i64)
        }
        fn serialize_i64(self, v: i64) -> Result<(), Error> {
            use std::fmt::Write;
            let _ = write!(self.out, "{v}");
            Ok(())
        }
        fn serialize_u8(self, v: u8) -> Result<(), Error> {
            self.serialize_u64(v as u64)
        }
        fn serialize_u16(self, v: u16) -> Result<(), Error> {
            self.serialize_u64(v as u64)
        }
        fn serialize_u32(self, v: u32) -> Result<(), Error> {
            self.serialize_u64(v as u64)
        }
        fn serialize_u64(self, v: u64) -> Result<(), Error> {
            use std::fmt::Write;
            let _ = write!(self.out, "{v}");
            Ok(())
        }
        fn serialize_f32(self, v: f32) -> Result<(), Error> {
            self.serialize_f64(v as f64)
        }
        fn serialize_f64(self, v: f64) -> Result<(), Error> {
            // serde_json turns non-finite numbers into null
            if v.is_finite() {
                super::write_float(v, self.rules.numbers, self.out);
            } else {
                self.out.push_str("null");
            }
            Ok(())
        }
        fn serialize_char(self, v: char) -> Result<(), Error> {
            let mut b = [0u8; 4];
            self.serialize_str(v.encode_utf8(&mut b))
        }
        fn serialize_str(self, v: &str) -> Result<(), Error> {
            super::write_str(v, self.out);
            Ok(())
        }
        fn serialize_bytes(self, v: &[u8]) -> Result<(), Error> {
            use ser::SerializeSeq;
            let mut s = self.serialize_seq(Some(v.len()))?;
            for b in v {
                s.serialize_element(b)?;
            }
            s.end()
        }
        fn serialize_none(self) -> Result<(), Error> {
            self.out.push_str("null");
            Ok(())
        }
        fn serialize_some<T: Serialize + ?Sized>(self, value: &T) -> Result<(), Error> {
            value.serialize(self)
        }
        fn serialize_unit(self) -> Result<(), Error> {
            self.out.push_str("null");
            Ok(())
        }
        fn serialize_unit_struct(self, _name: &'static str) -> Result<(), Error> {
            self.serialize_unit()
        }
        fn serialize_unit_variant(
            self,
            _name: &'static str,
            _index: u32,
            variant: &'static str,
        ) -> Result<(), Error> {
            self.serialize_str(variant)
        }
        fn serialize_newtype_struct<T: Serialize + ?Sized>(
            self,
            _name: &'static str,
            value: &T,
        ) -> Result<(), Error> {
            value.serialize(self)
        }
        fn serialize_newtype_variant<T: Serialize + ?Sized>(
            self,
            _name: &'static str,
            _index: u32,
            variant: &'static str,
            value: &T,
        ) -> Result<(), Error> {
            open_variant(self.out, variant);
            let rules = self.rules;
            value.serialize(Ser {
                out: self.out,
                rules,
            })?;
            self.out.push('}');
            Ok(())
        }
        fn serialize_seq(self, _len: Option<usize>) -> Result<Seq<'a>, Error> {
            self.out.push('[');
            Ok(Seq {
                out: self.out,
                rules: self.rules,
                first: true,
                close_variant: false,
            })
        }
        fn serialize_tuple(self, len: usize) -> Result<Seq<'a>, Error> {
            self.serialize_seq(Some(len))
        }
        fn serialize_tuple_struct(self, _name: &'static str, len: usize) -> Result<Seq<'a>, Error> {
            self.serialize_seq(Some(len))
        }
        fn serialize_tuple_variant(
            self,
            _name: &'static str,
            _index: u32,
            variant: &'static str,
            _len: usize,
        ) -> Result<Seq<'a>, Error> {
            open_variant(self.out, variant);
            self.out.push('[');
            Ok(Seq {
                out: self.out,
                rules: self.rules,
                first: true,
                close_variant: true,
            })
        }
        fn serialize_map(self, len: Option<usize>) -> Result<Obj<'a>, Error> {
            Ok(Obj {
                out: self.out,
                rules: self.rules,
                scratch: String::new(),
                fields: Vec::with_capacity(len.unwrap_or(8)),
                pending_key: None,
                close_variant: false,
            })
        }
        fn serialize_struct(self, _name: &'static str, len: usize) -> Result<Obj<'a>, Error> {
            self.serialize_map(Some(len))
        }
        fn serialize_struct_variant(
            self,
            _name: &'static str,
            _index: u32,
            variant: &'static str,
            len: usize,
        ) -> Result<Obj<'a>, Error> {
            open_variant(self.out, variant);
            Ok(Obj {
                out: self.out,
                rules: self.rules,
                scratch: String::new(),
                fields: Vec::with_capacity(len),
                pending_key: None,
                close_variant: true,
            })
        }
    }

    impl Seq<'_> {
        fn element<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
            if !self.first {
                self.out.push(',');
            }
            self.first = false;
            value.serialize(Ser {
                out: self.out,
                rules: self.rules,
            })
        }
        fn close(self) -> Result<(), Error> {
            self.out.push(']');
            if self.close_variant {
                self.out.push('}');
            }
            Ok(())
        }
    }

    macro_rules! seq_impl {
        ($tr:ident, $method:ident) => {
            impl ser::$tr for Seq<'_> {
                type Ok = ();
                type Error = Error;
                fn $method<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
                    self.element(value)
                }
                fn end(self) -> Result<(), Error> {
                    self.close()
                }
            }
        };
    }
    seq_impl!(SerializeSeq, serialize_element);
    seq_impl!(SerializeTuple, serialize_element);
    seq_impl!(SerializeTupleStruct, serialize_field);
    seq_impl!(SerializeTupleVariant, serialize_field);

    /// Map keys: strings as they are, numbers and booleans as their text (as serde_json).
    struct KeySer;
    impl ser::Serializer for KeySer {
        type Ok = String;
        type Error = Error;
        type SerializeSeq = ser::Impossible<String, Error>;
        type SerializeTuple = ser::Impossible<String, Error>;
        type SerializeTupleStruct = ser::Impossible<String, Error>;
        type SerializeTupleVariant = ser::Impossible<String, Error>;
        type SerializeMap = ser::Impossible<String, Error>;
        type SerializeStruct = ser::Impossible<String, Error>;
        type SerializeStructVariant = ser::Impossible<String, Error>;
        fn serialize_bool(self, v: bool) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_i8(self, v: i8) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_i16(self, v: i16) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_i32(self, v: i32) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_i64(self, v: i64) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_u8(self, v: u8) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_u16(self, v: u16) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_u32(self, v: u32) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_u64(self, v: u64) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_f32(self, _v: f32) -> Result<String, Error> {
            Err(ser::Error::custom("a float cannot be a map key"))
        }
        fn serialize_f64(self, _v: f64) -> Result<String, Error> {
            Err(ser::Error::custom("a float cannot be a map key"))
        }
        fn serialize_char(self, v: char) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_str(self, v: &str) -> Result<String, Error> {
            Ok(v.to_string())
        }
        fn serialize_bytes(self, _v: &[u8]) -> Result<String, Error> {
            Err(ser::Error::custom("bytes cannot be a map key"))
        }
        fn serialize_none(self) -> Result<String, Error> {
            Err(ser::Error::custom("null cannot be a map key"))
        }
        fn serialize_some<T: Serialize + ?Sized>(self, v: &T) -> Result<String, Error> {
            v.serialize(self)
        }
        fn serialize_unit(self) -> Result<String, Error> {
            Err(ser::Error::custom("null cannot be a map key"))
        }
        fn serialize_unit_struct(self, _n: &'static str) -> Result<String, Error> {
            Err(ser::Error::custom("null cannot be a map key"))
        }
        fn serialize_unit_variant(
            self,
            _n: &'static str,
            _i: u32,
            variant: &'static str,
        ) -> Result<String, Error> {
            Ok(variant.to_string())
        }
        fn serialize_newtype_struct<T: Serialize + ?Sized>(
            self,
            _n: &'static str,
            v: &T,
        ) -> Result<String, Error> {
            v.serialize(self)
        }
        fn serialize_newtype_variant<T: Serialize + ?Sized>(
            self,
            _n: &'static str,
            _i: u32,
            _v: &'static str,
            _value: &T,
        ) -> Result<String, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_seq(self, _l: Option<usize>) -> Result<Self::SerializeSeq, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_tuple(self, _l: usize) -> Result<Self::SerializeTuple, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_tuple_struct(
            self,
            _n: &'static str,
            _l: usize,
        ) -> Result<Self::SerializeTupleStruct, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_tuple_variant(
            self,
            _n: &'static str,
            _i: u32,
            _v: &'static str,
            _l: usize,
        ) -> Result<Self::SerializeTupleVariant, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_map(self, _l: Option<usize>) -> Result<Self::SerializeMap, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_struct(
            self,
            _n: &'static str,
            _l: usize,
        ) -> Result<Self::SerializeStruct, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
        fn serialize_struct_variant(
            self,
            _n: &'static str,
            _i: u32,
            _v: &'static str,
            _l: usize,
        ) -> Result<Self::SerializeStructVariant, Error> {
            Err(ser::Error::custom("key must be a string"))
        }
    }

    impl Obj<'_> {
        fn field<T: Serialize + ?Sized>(
            &mut self,
            key: Cow<'static, str>,
            value: &T,
        ) -> Result<(), Error> {
            if self.scratch.capacity() == 0 {
                self.scratch.reserve(256);
            }
            let from = self.scratch.len();
            if let Some(text) = self.rules.given_text(&key)? {
                self.scratch.push_str(text);
            } else if self.rules.digested_field == Some(&*key) {
                let inner = to_string(
                    value,
                    Rules {
                        digested_field: None,
                        ..self.rules
                    },
                )?;
                let digest = format!("sha256:{}", super::sha256_hex(inner.as_bytes()));
                super::write_str(&digest, &mut self.scratch);
            } else {
                value.serialize(Ser {
                    out: &mut self.scratch,
                    rules: self.rules,
                })?;
            }
            self.fields.push((key, from, self.scratch.len()));
            Ok(())
        }
        fn close(self) -> Result<(), Error> {
            finish_obj(self.out, &self.scratch, self.fields);
            if self.close_variant {
                self.out.push('}');
            }
            Ok(())
        }
    }

    impl ser::SerializeMap for Obj<'_> {
        type Ok = ();
        type Error = Error;
        fn serialize_key<T: Serialize + ?Sized>(&mut self, key: &T) -> Result<(), Error> {
            self.pending_key = Some(key.serialize(KeySer)?);
            Ok(())
        }
        fn serialize_value<T: Serialize + ?Sized>(&mut self, value: &T) -> Result<(), Error> {
            let key = self
                .pending_key
                .take()
                .ok_or_else(|| <Error as ser::Error>::custom("map value without a key"))?;
            self.field(Cow::Owned(key), value)
        }
        fn end(self) -> Result<(), Error> {
            self.close()
        }
    }

    impl ser::SerializeStruct for Obj<'_> {
        type Ok = ();
        type Error = Error;
        fn serialize_field<T: Serialize + ?Sized>(
            &mut self,
            key: &'static str,
            value: &T,
        ) -> Result<(), Error> {
            self.field(Cow::Borrowed(key), value)
        }
        fn end(self) -> Result<(), Error> {
            self.close()
        }
    }

    impl ser::SerializeStructVariant for Obj<'_> {
        type Ok = ();
        type Error = Error;
        fn serialize_field<T: Serialize + ?Sized>(
            &mut self,
            key: &'static str,
            value: &T,
        ) -> Result<(), Error> {
            self.field(Cow::Borrowed(key), value)
        }
        fn end(self) -> Result<(), Error> {
            self.close()
        }
    }
}

#[cfg(test)]
mod given_tests;

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn one_value_under_both_number_rules() {
        let v = json!({"s": "x\"\n", "b": 0.1, "a": [1, -0.0, 1e-7, 2.5, 2.0], "n": null});
        assert_eq!(
            value_to_canonical(&v, Numbers::BitPattern),
            r#"{"a":[1,"f64:0000000000000000","f64:3e7ad7f29abcaf48","f64:4004000000000000","f64:4000000000000000"],"b":"f64:3fb999999999999a","n":null,"s":"x\"\n"}"#
        );
        assert_eq!(
            value_to_canonical(&v, Numbers::Shortest),
            r#"{"a":[1,-0.0,1e-7,2.5,2.0],"b":0.1,"n":null,"s":"x\"\n"}"#
        );
        // keys, strings and integers are the same text under both rules; the direct writer
        // gives what the value path gives
        for numbers in [Numbers::BitPattern, Numbers::Shortest] {
            assert_eq!(
                to_canonical(&v, numbers).unwrap(),
                value_to_canonical(&v, numbers)
            );
            assert_eq!(digest(&v, numbers).unwrap(), digest_value(&v, numbers));
        }
        assert_ne!(
            digest_value(&v, Numbers::BitPattern),
            digest_value(&v, Numbers::Shortest)
        );
        // bit patterns read back to the same floats (negative zero as zero)
        let back = parse_bit_pattern_floats(&value_to_canonical(&v, Numbers::BitPattern));
        assert_eq!(
            back.unwrap(),
            json!({"s": "x\"\n", "b": 0.1, "a": [1, 0.0, 1e-7, 2.5, 2.0], "n": null})
        );
    }

    #[test]
    fn the_direct_writer_matches_the_value_path_on_odd_values() {
        #[derive(Serialize)]
        enum Shape {
            Unit,
            Tuple(f64, u8),
            Struct { z: f32, a: Option<i64> },
            Newtype(Vec<u8>),
        }
        let odd = json!({"k": [1.5, -0.0, null, {"z": 1, "a": "\u{7f}\u{1f}"}], "n": u64::MAX, "m": i64::MIN});
        let shapes = vec![
            Shape::Unit,
            Shape::Tuple(1e300, 7),
            Shape::Struct {
                z: 0.1,
                a: Some(-3),
            },
            Shape::Newtype(vec![0, 255]),
        ];
        let map: std::collections::BTreeMap<u32, f64> = [(10, 0.5), (9, f64::NAN)].into();
        for numbers in [Numbers::BitPattern, Numbers::Shortest] {
            assert_eq!(
                to_canonical(&odd, numbers).unwrap(),
                via_value(&odd, numbers)
            );
            assert_eq!(
                to_canonical(&shapes, numbers).unwrap(),
                via_value(&shapes, numbers)
            );
            assert_eq!(
                to_canonical(&map, numbers).unwrap(),
                via_value(&map, numbers)
            );
            assert_eq!(to_canonical(&f64::NAN, numbers).unwrap(), "null");
        }
    }

    /// The reference path: through a `serde_json::Value`.
    fn via_value<T: Serialize>(x: &T, numbers: Numbers) -> String {
        value_to_canonical(&serde_json::to_value(x).unwrap(), numbers)
    }

    #[test]
    fn a_digested_field_is_replaced_by_the_hash_of_its_canonical_text() {
        let v = json!({"result": {"analysis": {"b": 2.5, "a": 1}, "stress": 0.5}});
        let inner = value_to_canonical(&json!({"a": 1, "b": 2.5}), Numbers::BitPattern);
        assert_eq!(
            to_canonical_with_digested_field(&v, Numbers::BitPattern, "analysis").unwrap(),
            format!(
                r#"{{"result":{{"analysis":"sha256:{}","stress":"f64:3fe0000000000000"}}}}"#,
                sha256_hex(inner.as_bytes())
            )
        );
    }

    // Moved from the report's canonical module: the document form (shortest floats).

    #[test]
    fn key_order_and_whitespace_do_not_change_the_digest() {
        let a: Value = serde_json::from_str(r#"{"b": 1, "a": {"y": [1, 2.5], "x": "µ"}}"#).unwrap();
        let b: Value = serde_json::from_str(r#"{"a":{"x":"µ","y":[1,2.5]},"b":1}"#).unwrap();
        assert_eq!(
            value_to_canonical(&a, Numbers::Shortest),
            r#"{"a":{"x":"µ","y":[1,2.5]},"b":1}"#
        );
        assert_eq!(
            digest_value(&a, Numbers::Shortest),
            digest_value(&b, Numbers::Shortest)
        );
        assert_ne!(
            digest_value(&a, Numbers::Shortest),
            digest_value(&json!({"a":1}), Numbers::Shortest)
        );
    }

    #[test]
    fn sha256_of_abc_is_the_fips_vector() {
        // FIPS 180-2, appendix B.1
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }

    #[test]
    fn floats_round_trip_through_canonical_text() {
        let v = json!({"s": 0.1 + 0.2, "n": 1e-7, "i": 3});
        let t = value_to_canonical(&v, Numbers::Shortest);
        let back: Value = serde_json::from_str(&t).unwrap();
        assert_eq!(value_to_canonical(&back, Numbers::Shortest), t);
    }
}
