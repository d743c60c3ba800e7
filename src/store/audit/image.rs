//! What verify and history know of audited images: their digests, the records a bulk-load
//! row lists, compact keys for the map of last images, and which fields a change touched.

use sha2::{Digest, Sha256};

use crate::store::canon;

/// (entity, id, image digest) of each record in a bulk-load manifest.
pub(crate) fn manifest_records(text: &str) -> Option<Vec<(String, String, [u8; 16])>> {
    let v: serde_json::Value = serde_json::from_str(text).ok()?;
    let entity = v.get("entity")?.as_str()?.to_string();
    let mut out = Vec::new();
    for r in v.get("records")?.as_array()? {
        let id = r.get(0)?.as_str()?;
        let hex = r.get(1)?.as_str()?;
        if hex.len() != 64 {
            return None;
        }
        let mut d = [0u8; 16];
        for (i, b) in d.iter_mut().enumerate() {
            *b = u8::from_str_radix(hex.get(2 * i..2 * i + 2)?, 16).ok()?;
        }
        out.push((entity.clone(), id.to_string(), d));
    }
    Some(out)
}

/// The first 16 bytes of the SHA-256 of an image: what verify compares.
pub(crate) fn digest(text: &str) -> [u8; 16] {
    let d = Sha256::digest(text.as_bytes());
    let mut out = [0u8; 16];
    out.copy_from_slice(&d[..16]);
    out
}

/// A record's key in verify's map of last audited images: (entity, id) with the entity
/// as its number in [`Entities`] and an id in the canonical UUID form (lower-case,
/// hyphenated: every id shardlog writes) as its 16 bytes; any other id kept as text. One
/// (entity, id) pair has exactly one key, so the map finds what a map of the two strings
/// would, in a fraction of the memory.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub(super) enum RecordKey {
    Uuid(u16, [u8; 16]),
    Text(u16, Box<str>),
}

/// The 16 bytes of an id in canonical UUID form, `None` for any other text.
fn uuid_bytes(id: &str) -> Option<[u8; 16]> {
    let b = id.as_bytes();
    if b.len() != 36 {
        return None;
    }
    let mut out = [0u8; 16];
    let mut k = 0;
    let mut i = 0;
    while i < 36 {
        if matches!(i, 8 | 13 | 18 | 23) {
            if b[i] != b'-' {
                return None;
            }
            i += 1;
            continue;
        }
        let nib = |c: u8| match c {
            b'0'..=b'9' => Some(c - b'0'),
            b'a'..=b'f' => Some(c - b'a' + 10),
            _ => None,
        };
        out[k] = (nib(b[i])? << 4) | nib(b[i + 1])?;
        k += 1;
        i += 2;
    }
    Some(out)
}

/// The text of a canonical UUID from its bytes (the inverse of [`uuid_bytes`]).
fn uuid_text(b: &[u8; 16]) -> String {
    let hex = canon::hex(b);
    format!(
        "{}-{}-{}-{}-{}",
        &hex[0..8],
        &hex[8..12],
        &hex[12..16],
        &hex[16..20],
        &hex[20..32]
    )
}

/// The entity names met in the audit log, numbered in order of appearance.
#[derive(Default)]
pub(super) struct Entities(Vec<String>);

impl Entities {
    fn number(&mut self, entity: &str) -> u16 {
        match self.find(entity) {
            Some(n) => n,
            None => {
                self.0.push(entity.to_string());
                (self.0.len() - 1) as u16
            }
        }
    }

    fn find(&self, entity: &str) -> Option<u16> {
        self.0.iter().position(|e| e == entity).map(|n| n as u16)
    }

    pub(super) fn key(&mut self, entity: &str, id: &str) -> RecordKey {
        let e = self.number(entity);
        match uuid_bytes(id) {
            Some(b) => RecordKey::Uuid(e, b),
            None => RecordKey::Text(e, id.into()),
        }
    }

    /// The key of a record, `None` if no audit row names its entity (so it has no key
    /// in the map).
    pub(super) fn existing_key(&self, entity: &str, id: &str) -> Option<RecordKey> {
        let e = self.find(entity)?;
        Some(match uuid_bytes(id) {
            Some(b) => RecordKey::Uuid(e, b),
            None => RecordKey::Text(e, id.into()),
        })
    }

    pub(super) fn names(&self, key: &RecordKey) -> (String, String) {
        let (e, id) = match key {
            RecordKey::Uuid(e, b) => (*e, uuid_text(b)),
            RecordKey::Text(e, id) => (*e, id.to_string()),
        };
        (self.0.get(e as usize).cloned().unwrap_or_default(), id)
    }
}

/// The top-level fields that differ between two images (revision and update time left out).
pub(crate) fn changed_keys(
    before: Option<&serde_json::Value>,
    after: Option<&serde_json::Value>,
) -> Vec<String> {
    use serde_json::Value;
    let empty = serde_json::Map::new();
    let b = before.and_then(Value::as_object).unwrap_or(&empty);
    let a = after.and_then(Value::as_object).unwrap_or(&empty);
    let mut keys: Vec<String> = b
        .keys()
        .chain(a.keys())
        .filter(|k| b.get(*k) != a.get(*k))
        .filter(|k| !matches!(k.as_str(), "revision" | "updated_at"))
        .cloned()
        .collect();
    keys.sort();
    keys.dedup();
    keys
}

#[cfg(test)]
mod tests {
    use super::*;

    /// canonical lower-case hyphenated UUID form is packed, so an id that differs from an
    /// audited one only in case or layout is still a different record.
    #[test]
    fn record_keys_are_one_to_one_with_the_strings() {
        let id = "0190f3a2-7c4e-7d21-8a3b-1f2e3d4c5b6a";
        let b = uuid_bytes(id).unwrap();
        assert_eq!(uuid_text(&b), id);
        for other in [
            "0190F3A2-7C4E-7D21-8A3B-1F2E3D4C5B6A",
            "0190f3a27c4e7d218a3b1f2e3d4c5b6a",
            "{0190f3a2-7c4e-7d21-8a3b-1f2e3d4c5b6}",
            "0190f3a2-7c4e-7d21-8a3b_1f2e3d4c5b6a",
            "0190f3a2-7c4e-7d21-8a3b-1f2e3d4c5b6g",
            "window_type/side",
            "",
        ] {
            assert_eq!(uuid_bytes(other), None, "{other}");
        }
        let mut e = Entities::default();
        let keys = [
            e.key("incident", id),
            e.key("site", id),
            e.key("incident", "0190F3A2-7C4E-7D21-8A3B-1F2E3D4C5B6A"),
            e.key("lookup", "window_type/side"),
        ];
        for (i, a) in keys.iter().enumerate() {
            for (j, b) in keys.iter().enumerate() {
                assert_eq!(a == b, i == j);
            }
        }
        assert_eq!(e.existing_key("incident", id).as_ref(), Some(&keys[0]));
        assert_eq!(e.existing_key("custody", id), None);
        assert_eq!(e.names(&keys[1]), ("site".to_string(), id.to_string()));
        assert_eq!(
            e.names(&keys[3]),
            ("lookup".to_string(), "window_type/side".to_string())
        );
    }
}
