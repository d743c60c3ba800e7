//! What a record's history reads from the chain, for one record or for many at once: each
//! audit row as a history entry, and the bulk-load row (its manifest) that first listed a
//! record a bulk load inserted. A bench file and the fleet's witnessed chains give the same
//! rows, so both assemble a history here.

use std::collections::HashMap;

use chrono::{DateTime, Utc};

use super::image::{changed_keys, digest, manifest_records};
use crate::store::canon;
use crate::store::dates::parse_time;
use crate::store::model::HistoryEntry;

/// One audit row of a record, as the chain holds it.
#[derive(Clone)]
pub(crate) struct AuditRow {
    pub seq: i64,
    pub at: String,
    pub actor: String,
    pub op: String,
    pub before: Option<String>,
    pub after: Option<String>,
    pub hash: String,
}

impl AuditRow {
    pub(crate) fn entry(self) -> HistoryEntry {
        let before = self.before.as_deref().and_then(canon::decanonical);
        let after = self.after.as_deref().and_then(canon::decanonical);
        HistoryEntry {
            seq: self.seq,
            at: parse_time(&self.at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
            actor: self.actor,
            changed: changed_keys(before.as_ref(), after.as_ref()),
            op: self.op,
            before,
            after,
            hash: self.hash,
        }
    }
}

/// Whether a history starts before its first audit row: a record a bulk load inserted has
/// no insert row of its own, the manifest row listing it stands for one.
pub(crate) fn starts_at_a_manifest(rows: &[AuditRow]) -> bool {
    rows.first().is_none_or(|r| r.op != "insert")
}

/// A bulk-load row, read once however many of the records it lists are asked about.
pub(crate) struct Manifest {
    pub seq: i64,
    at: String,
    actor: String,
    hash: String,
    /// The digest of each record it lists (the first listing of an id), None when its text
    /// cannot be read as a manifest.
    digests: Option<HashMap<String, [u8; 16]>>,
}

impl Manifest {
    pub(crate) fn new(seq: i64, at: String, actor: String, text: &str, hash: String) -> Manifest {
        let digests = manifest_records(text).map(|records| {
            let mut m = HashMap::with_capacity(records.len());
            for (_, id, d) in records {
                m.entry(id).or_insert(d);
            }
            m
        });
        Manifest {
            seq,
            at,
            actor,
            hash,
            digests,
        }
    }

    /// The history entry it stands for as the insert of record `id`: with `image` (the
    /// record's first image) when the digest it lists for `id` vouches for it.
    pub(crate) fn insert_entry(&self, id: &str, image: Option<String>) -> HistoryEntry {
        let want = self.digests.as_ref().and_then(|m| m.get(id)).copied();
        let image = image.filter(|img| Some(digest(img)) == want);
        AuditRow {
            seq: self.seq,
            at: self.at.clone(),
            actor: self.actor.clone(),
            op: "insert".into(),
            before: None,
            after: image,
            hash: self.hash.clone(),
        }
        .entry()
    }
}

/// Whether a record id can be looked for by the text `["id",` of a manifest: a plain id
/// (letters, digits, hyphens: every UUID), with nothing in it that a LIKE pattern or the
/// canonical text's escaping would read differently.
pub(crate) fn plain_id(id: &str) -> bool {
    !id.is_empty() && id.bytes().all(|b| b.is_ascii_alphanumeric() || b == b'-')
}

/// Every id a manifest's text lists, as the text `["id",` gives it (what the pattern
/// `%["id",%` matches), in the order listed.
pub(crate) fn listed_ids(text: &str, mut each: impl FnMut(&str)) {
    let mut rest = text;
    // a one-byte search (memchr) for each '[', then the quote after it
    while let Some(at) = rest.find('[') {
        if !rest[at + 1..].starts_with('"') {
            rest = &rest[at + 1..];
            continue;
        }
        let tail = &rest[at + 2..];
        let Some(end) = tail.find('"') else {
            return;
        };
        if tail[end + 1..].starts_with(',') {
            each(&tail[..end]);
        }
        rest = &tail[end..];
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_ids_a_manifest_lists_are_read_as_the_like_pattern_finds_them() {
        let text = "{\"entity\":\"incident\",\"records\":[[\"a-1\",\"00\"],[\"b-2\",\"11\"]]}";
        let mut ids = Vec::new();
        listed_ids(text, |id| ids.push(id.to_string()));
        assert_eq!(ids, ["a-1", "b-2"]);
        // a quote-bracket not followed by a listed id and a comma is not a listing
        let mut ids = Vec::new();
        listed_ids("[\"x\"] [\"y\"", |id| ids.push(id.to_string()));
        assert!(ids.is_empty(), "{ids:?}");
        assert!(plain_id("0190a1b2-c3d4-7e5f-8a9b-0c1d2e3f4a5b"));
        assert!(!plain_id("a_b"));
        assert!(!plain_id("a%"));
        assert!(!plain_id(""));
    }

    #[test]
    fn a_manifest_vouches_only_for_the_image_it_lists() {
        let image = "{\"id\":\"a-1\"}".to_string();
        let d = canon::sha256_hex(image.as_bytes());
        let text = format!("{{\"entity\":\"incident\",\"records\":[[\"a-1\",\"{d}\"]]}}");
        let m = Manifest::new(
            7,
            "2026-01-02T03:04:05.000Z".into(),
            "ana".into(),
            &text,
            "h".into(),
        );
        let e = m.insert_entry("a-1", Some(image.clone()));
        assert_eq!(
            (e.seq, e.op.as_str(), e.actor.as_str()),
            (7, "insert", "ana")
        );
        assert!(e.after.is_some());
        assert!(m.insert_entry("a-1", Some("{}".into())).after.is_none());
        assert!(m.insert_entry("b-2", Some(image)).after.is_none());
    }
}
