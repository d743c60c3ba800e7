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

fn write_str(s: &str, out: &mut String) {
    out.push('"');
    let bytes = s.as_bytes();
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
