//! The canonical form that the audit hash covers (documented in DEVELOPERS.md, "store").
//!
//! A record image is the record's serde JSON rewritten as follows:
//! - objects: keys sorted by their UTF-8 bytes, no white space;
//! - strings: JSON-escaped as serde_json does (`"`, `\\`, control characters as `\uXXXX`
//!   or the short escapes), everything else verbatim UTF-8;
//! - integers: plain decimal; `true`, `false`, `null` as such;
//! - floating-point numbers: the string `"f64:"` followed by the 16 lower-case hex digits of
//!   the IEEE 754 binary64 bit pattern, so no float formatting can change a hash
//!   (negative zero is written as zero).

use serde::Serialize;
use serde_json::Value;
use sha2::{Digest, Sha256};

/// The canonical JSON text of any serializable value.
pub fn canonical<T: Serialize>(value: &T) -> Result<String, serde_json::Error> {
    direct::to_string(value, false)
}

/// The same text built through a `serde_json::Value` (the reference the direct writer is
/// tested against).
pub fn canonical_via_value<T: Serialize>(value: &T) -> Result<String, serde_json::Error> {
    let v = serde_json::to_value(value)?;
    let mut out = String::with_capacity(512);
    write_value(&v, &mut out);
    Ok(out)
}

/// The audit image of an incident: its canonical JSON, except that each result's full
/// `analysis` blob is replaced by `"sha256:<hex>"` of the blob's canonical text. The blob is
/// stored whole in the results table; the image pins it without copying it into every
/// audit row, while the figures (stress, interval, constants) stay in the image as values.
pub fn incident_image(inc: &crate::store::model::Incident) -> Result<String, serde_json::Error> {
    direct::to_string(inc, true)
}

/// [`incident_image`] built through a `serde_json::Value` (test reference).
pub fn incident_image_via_value(
    inc: &crate::store::model::Incident,
) -> Result<String, serde_json::Error> {
    let mut v = serde_json::to_value(inc)?;
    if let Some(exams) = v.get_mut("examinations").and_then(Value::as_array_mut) {
        for e in exams {
            if let Some(a) = e.get_mut("result").and_then(|r| r.get_mut("analysis")) {
                let digest = sha256_hex(canonical_value(a).as_bytes());
                *a = Value::String(format!("sha256:{digest}"));
            }
        }
    }
    Ok(canonical_value(&v))
}

/// The canonical text of a JSON value.
pub fn canonical_value(v: &Value) -> String {
    let mut out = String::with_capacity(256);
    write_value(v, &mut out);
    out
}

fn write_value(v: &Value, out: &mut String) {
    match v {
        Value::Null => out.push_str("null"),
        Value::Bool(b) => out.push_str(if *b { "true" } else { "false" }),
        Value::Number(n) => {
            if let Some(i) = n.as_i64() {
                out.push_str(&i.to_string());
            } else if let Some(u) = n.as_u64() {
                out.push_str(&u.to_string());
            } else if let Some(f) = n.as_f64() {
                write_float(f, out);
            }
        }
        Value::String(s) => write_str(s, out),
        Value::Array(items) => {
            out.push('[');
            for (i, item) in items.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                write_value(item, out);
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
                    write_value(val, out);
                }
            }
            out.push('}');
        }
    }
}

fn write_float(f: f64, out: &mut String) {
    use std::fmt::Write;
    // -0.0 is written as 0.0: neither SQLite (which stores integral reals as integers) nor
    // JSON parsers keep the sign of zero
    let f = if f == 0.0 { 0.0 } else { f };
    let _ = write!(out, "\"f64:{:016x}\"", f.to_bits());
}

pub(crate) fn write_str(s: &str, out: &mut String) {
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

/// Turn a canonical image back into ordinary JSON (floats restored from their bits).
pub fn decanonical(text: &str) -> Option<Value> {
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

pub fn sha256_hex(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// The fields of one audit row that its hash covers.
pub struct AuditRow<'a> {
    pub seq: i64,
    pub at: &'a str,
    pub actor: &'a str,
    pub entity: &'a str,
    pub entity_id: &'a str,
    pub op: &'a str,
    pub before: Option<&'a str>,
    pub after: Option<&'a str>,
}

impl AuditRow<'_> {
    /// Canonical text of the audit row: a JSON object with sorted keys in which `before`
    /// and `after` are the record images embedded as strings (or null).
    pub fn canonical(&self) -> String {
        let mut out = String::with_capacity(
            128 + self.before.map_or(0, str::len) + self.after.map_or(0, str::len),
        );
        out.push_str("{\"actor\":");
        write_str(self.actor, &mut out);
        out.push_str(",\"after\":");
        match self.after {
            Some(a) => write_str(a, &mut out),
            None => out.push_str("null"),
        }
        out.push_str(",\"at\":");
        write_str(self.at, &mut out);
        out.push_str(",\"before\":");
        match self.before {
            Some(b) => write_str(b, &mut out),
            None => out.push_str("null"),
        }
        out.push_str(",\"entity\":");
        write_str(self.entity, &mut out);
        out.push_str(",\"entity_id\":");
        write_str(self.entity_id, &mut out);
        out.push_str(",\"op\":");
        write_str(self.op, &mut out);
        out.push_str(",\"seq\":");
        out.push_str(&self.seq.to_string());
        out.push('}');
        out
    }

    /// hash = SHA-256(prev_hash bytes (32) || canonical row bytes), lower-case hex.
    pub fn hash(&self, prev_hash_hex: &str) -> String {
        let mut h = Sha256::new();
        h.update(unhex32(prev_hash_hex));
        h.update(self.canonical().as_bytes());
        hex(&h.finalize())
    }
}

/// The hash before the first audit row: 64 zeros.
pub const GENESIS: &str = "0000000000000000000000000000000000000000000000000000000000000000";

fn unhex32(s: &str) -> [u8; 32] {
    let mut out = [0u8; 32];
    let b = s.as_bytes();
    for (i, o) in out.iter_mut().enumerate() {
        let hi = b.get(2 * i).map_or(0, |c| nib(*c));
        let lo = b.get(2 * i + 1).map_or(0, |c| nib(*c));
        *o = (hi << 4) | lo;
    }
    out
}

fn nib(c: u8) -> u8 {
    match c {
        b'0'..=b'9' => c - b'0',
        b'a'..=b'f' => c - b'a' + 10,
        b'A'..=b'F' => c - b'A' + 10,
        _ => 0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn keys_sorted_floats_as_bits() {
        let v = json!({"b": 1, "a": 0.1, "c": [true, null, "x\"y\\\n\u{1}é"]});
        assert_eq!(
            canonical_value(&v),
            r#"{"a":"f64:3fb999999999999a","b":1,"c":[true,null,"x\"y\\\n\u0001é"]}"#
        );
        let back = decanonical(&canonical_value(&v)).unwrap();
        assert_eq!(back, v);
    }

    #[test]
    fn direct_writer_matches_value_path() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("d.db");
        crate::demo::generate(
            &path,
            &crate::demo::DemoOptions {
                incidents: 120,
                seed: 5,
            },
        )
        .unwrap();
        let s = crate::store::Store::open_existing(&path).unwrap();
        let doc = s.export_doc(&crate::store::Filter::default()).unwrap();
        let mut with_result = 0;
        for inc in &doc.incidents {
            assert_eq!(
                incident_image(inc).unwrap(),
                incident_image_via_value(inc).unwrap()
            );
            assert_eq!(canonical(inc).unwrap(), canonical_via_value(inc).unwrap());
            with_result += inc.current_result().is_some() as usize;
        }
        assert!(with_result > 10);
        for e in &doc.lookups {
            assert_eq!(canonical(e).unwrap(), canonical_via_value(e).unwrap());
        }
        for e in &doc.exposure {
            assert_eq!(canonical(e).unwrap(), canonical_via_value(e).unwrap());
        }
        let odd = json!({"k": [1.5, -0.0, null, {"z": 1, "a": "\u{7f}\u{1f}"}], "n": u64::MAX});
        assert_eq!(canonical(&odd).unwrap(), canonical_via_value(&odd).unwrap());
        assert_eq!(canonical(&f64::NAN).unwrap(), "null");
    }

    #[test]
    fn audit_hash_depends_on_prev() {
        let row = AuditRow {
            seq: 1,
            at: "2026-01-01T00:00:00.000Z",
            actor: "a",
            entity: "incident",
            entity_id: "x",
            op: "insert",
            before: None,
            after: Some("{}"),
        };
        let h1 = row.hash(GENESIS);
        let h2 = row.hash(&h1);
        assert_ne!(h1, h2);
        assert_eq!(h1.len(), 64);
        // SHA-256 of the empty string (FIPS 180-4 test vector, common knowledge)
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}

/// A serde serializer that writes the canonical form directly (no `serde_json::Value` tree
/// in between). Output is byte-identical to `canonical_value(&serde_json::to_value(x))`;
/// `tests::direct_writer_matches_value_path` checks that. With `digest_analysis`, a struct
/// field named `analysis` is written as `"sha256:<hex of its canonical text>"` (the incident
/// image).
pub(crate) mod direct {
    use std::borrow::Cow;

    use serde::ser::{self, Serialize};
    use serde_json::Error;

    pub(crate) fn to_string<T: Serialize + ?Sized>(
        value: &T,
        digest_analysis: bool,
    ) -> Result<String, Error> {
        let mut out = String::with_capacity(256);
        value.serialize(Ser {
            out: &mut out,
            digest_analysis,
        })?;
        Ok(out)
    }

    pub(crate) struct Ser<'a> {
        out: &'a mut String,
        digest_analysis: bool,
    }

    pub(crate) struct Seq<'a> {
        out: &'a mut String,
        digest_analysis: bool,
        first: bool,
        /// for tuple and struct variants: close the wrapping object too
        close_variant: bool,
    }

    /// An object being written: each value is rendered once into `scratch` (one buffer per
    /// object, not one string per field), then the fields are copied out in key order.
    pub(crate) struct Obj<'a> {
        out: &'a mut String,
        digest_analysis: bool,
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
                super::write_float(v, self.out);
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
            let d = self.digest_analysis;
            value.serialize(Ser {
                out: self.out,
                digest_analysis: d,
            })?;
            self.out.push('}');
            Ok(())
        }
        fn serialize_seq(self, _len: Option<usize>) -> Result<Seq<'a>, Error> {
            self.out.push('[');
            Ok(Seq {
                out: self.out,
                digest_analysis: self.digest_analysis,
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
                digest_analysis: self.digest_analysis,
                first: true,
                close_variant: true,
            })
        }
        fn serialize_map(self, len: Option<usize>) -> Result<Obj<'a>, Error> {
            Ok(Obj {
                out: self.out,
                digest_analysis: self.digest_analysis,
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
                digest_analysis: self.digest_analysis,
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
                digest_analysis: self.digest_analysis,
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
            if self.digest_analysis && key == "analysis" {
                let inner = to_string(value, false)?;
                let digest = format!("sha256:{}", super::sha256_hex(inner.as_bytes()));
                super::write_str(&digest, &mut self.scratch);
            } else {
                value.serialize(Ser {
                    out: &mut self.scratch,
                    digest_analysis: self.digest_analysis,
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
