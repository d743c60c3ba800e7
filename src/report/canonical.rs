//! Canonical JSON and its SHA-256: the proof that a summary or bundle was not altered.
//!
//! Canonical form (documented in DEVELOPERS.md, "reports"): UTF-8; objects with their keys
//! sorted by byte order; no whitespace; strings escaped as JSON requires (serde_json's
//! escaping: `"` `\` and control characters, nothing else); numbers as serde_json writes
//! them (integers as integers, finite floats in the shortest form that reads back to the
//! same value); no NaN or infinity (the builders never put one in; were one to reach this
//! function it would be written as `null`). Attachments enter the content by their SHA-256,
//! never by their bytes.

use serde::Serialize;
use serde_json::Value;
use sha2::{Digest, Sha256};

/// Serialize any value to canonical JSON text.
pub fn to_canonical<T: Serialize>(v: &T) -> Result<String, serde_json::Error> {
    let value = serde_json::to_value(v)?;
    Ok(canonical_value(&value))
}

/// Canonical text of a JSON value (keys sorted at every level).
pub fn canonical_value(v: &Value) -> String {
    let mut out = String::new();
    write(&mut out, v);
    out
}

fn write(out: &mut String, v: &Value) {
    match v {
        Value::Object(m) => {
            let mut keys: Vec<&String> = m.keys().collect();
            keys.sort();
            out.push('{');
            for (i, k) in keys.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                out.push_str(&Value::String((*k).clone()).to_string());
                out.push(':');
                if let Some(x) = m.get(*k) {
                    write(out, x);
                }
            }
            out.push('}');
        }
        Value::Array(a) => {
            out.push('[');
            for (i, x) in a.iter().enumerate() {
                if i > 0 {
                    out.push(',');
                }
                write(out, x);
            }
            out.push(']');
        }
        other => out.push_str(&other.to_string()),
    }
}

/// Lower-case hex SHA-256 of bytes.
pub fn sha256_hex(data: &[u8]) -> String {
    let d = Sha256::digest(data);
    let mut s = String::with_capacity(64);
    for b in d {
        s.push_str(&format!("{b:02x}"));
    }
    s
}

/// SHA-256 of the canonical JSON of a value.
pub fn digest<T: Serialize>(v: &T) -> Result<String, serde_json::Error> {
    Ok(sha256_hex(to_canonical(v)?.as_bytes()))
}

/// SHA-256 of the canonical JSON of a JSON value.
pub fn digest_value(v: &Value) -> String {
    sha256_hex(canonical_value(v).as_bytes())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn key_order_and_whitespace_do_not_change_the_digest() {
        let a: Value = serde_json::from_str(r#"{"b": 1, "a": {"y": [1, 2.5], "x": "µ"}}"#).unwrap();
        let b: Value = serde_json::from_str(r#"{"a":{"x":"µ","y":[1,2.5]},"b":1}"#).unwrap();
        assert_eq!(canonical_value(&a), r#"{"a":{"x":"µ","y":[1,2.5]},"b":1}"#);
        assert_eq!(digest_value(&a), digest_value(&b));
        assert_ne!(digest_value(&a), digest_value(&json!({"a":1})));
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
        let t = canonical_value(&v);
        let back: Value = serde_json::from_str(&t).unwrap();
        assert_eq!(canonical_value(&back), t);
    }
}
