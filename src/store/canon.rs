//! The canonical form that the audit hash covers (documented in docs/notes.md, "The audit
//! chain"): a record image is the record's canonical JSON ([`shardlog_core::canonical`]) with
//! floating-point numbers as their bit patterns ([`Numbers::BitPattern`]), so no float
//! formatting can change a hash. This module keeps what is the audit's own: the incident
//! image (its analysis pinned by a digest) and the audit row with its hash.

use serde::Serialize;
use serde_json::Value;
use sha2::{Digest, Sha256};
use shardlog_core::canonical::{self as core_canonical, Numbers};

pub use shardlog_core::canonical::parse_bit_pattern_floats as decanonical;
pub use shardlog_core::canonical::{hex, sha256_hex, write_str};

/// The canonical JSON text of any serializable value (a record image).
pub fn canonical<T: Serialize>(value: &T) -> Result<String, serde_json::Error> {
    core_canonical::to_canonical(value, Numbers::BitPattern)
}

/// The same text built through a `serde_json::Value` (the reference the direct writer is
/// tested against).
#[cfg(test)]
pub fn canonical_via_value<T: Serialize>(value: &T) -> Result<String, serde_json::Error> {
    Ok(canonical_value(&serde_json::to_value(value)?))
}

/// The audit image of an incident: its canonical JSON, except that each result's full
/// `analysis` blob is replaced by `"sha256:<hex>"` of the blob's canonical text. The blob is
/// stored whole in the results table; the image pins it without copying it into every
/// audit row, while the figures (stress, interval, constants) stay in the image as values.
pub fn incident_image(inc: &crate::store::model::Incident) -> Result<String, serde_json::Error> {
    core_canonical::to_canonical_with_digested_field(inc, Numbers::BitPattern, "analysis")
}

/// [`incident_image`] of an incident whose results' `analysis` and `constants` are given as
/// rendered texts (`rendered`: one per examination with a result, in order), whatever the
/// record's values of them hold: the same text, without a value tree of either.
pub(crate) fn incident_image_rendered(
    inc: &crate::store::model::Incident,
    rendered: &[&crate::store::rendered::RenderedResult],
) -> Result<String, serde_json::Error> {
    let pins: Vec<&str> = rendered.iter().map(|r| r.analysis_pin.as_str()).collect();
    let constants: Vec<&str> = rendered
        .iter()
        .map(|r| r.constants_image.as_str())
        .collect();
    core_canonical::to_canonical_with_given(
        inc,
        Numbers::BitPattern,
        &[
            ("analysis", pins.as_slice()),
            ("constants", constants.as_slice()),
        ],
    )
}

/// `v` with every negative zero made zero. The canonical form writes -0.0 as 0.0, so the
/// audit image (and a digest of it) pins a zero without its sign; a value read back from a
/// stored JSON text is shown as the image pins it, the same at the bench and in the fleet.
pub fn unsigned_zeros(v: Value) -> Value {
    match v {
        Value::Number(n) if n.as_f64() == Some(0.0) && n.is_f64() => {
            serde_json::Number::from_f64(0.0).map_or(Value::Number(n), Value::Number)
        }
        Value::Array(a) => Value::Array(a.into_iter().map(unsigned_zeros).collect()),
        Value::Object(m) => {
            Value::Object(m.into_iter().map(|(k, v)| (k, unsigned_zeros(v))).collect())
        }
        other => other,
    }
}

/// [`incident_image`] built through a `serde_json::Value` (test reference).
#[cfg(test)]
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

/// The canonical text of a JSON value (floats as bit patterns).
pub fn canonical_value(v: &Value) -> String {
    core_canonical::value_to_canonical(v, Numbers::BitPattern)
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
