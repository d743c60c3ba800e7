//! The hash-chained audit log: append, history, verify.

use std::collections::HashMap;

use chrono::{DateTime, Utc};
use rusqlite::{params, Connection, OptionalExtension};
use sha2::{Digest, Sha256};

use super::canon::{self, AuditRow, GENESIS};
use super::model::*;
use super::{incidents, refdata, Store, StoreError, MIGRATION_AT};

/// Entity names used in the audit log.
pub(crate) const INCIDENT: &str = "incident";

pub(crate) fn fmt_time(at: DateTime<Utc>) -> String {
    use chrono::{Datelike, Timelike};
    format!(
        "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}.{:03}Z",
        at.year(),
        at.month(),
        at.day(),
        at.hour(),
        at.minute(),
        at.second(),
        at.timestamp_subsec_millis().min(999)
    )
}

pub(crate) fn parse_time(s: &str) -> Option<DateTime<Utc>> {
    DateTime::parse_from_rfc3339(s)
        .ok()
        .map(|d| d.with_timezone(&Utc))
}

/// The running end of the chain inside one transaction.
pub(crate) struct Chain {
    seq: i64,
    hash: String,
}

impl Chain {
    pub(crate) fn load(conn: &Connection) -> Result<Chain, StoreError> {
        let last = conn
            .query_row(
                "SELECT seq, hash FROM audit ORDER BY seq DESC LIMIT 1",
                [],
                |r| Ok((r.get::<_, i64>(0)?, r.get::<_, String>(1)?)),
            )
            .optional()?;
        Ok(match last {
            Some((seq, hash)) => Chain { seq, hash },
            None => Chain {
                seq: 0,
                hash: GENESIS.to_string(),
            },
        })
    }

    #[allow(clippy::too_many_arguments)]
    pub(crate) fn append(
        &mut self,
        conn: &Connection,
        at: &str,
        actor: &str,
        entity: &str,
        entity_id: &str,
        op: &str,
        before: Option<&str>,
        after: Option<&str>,
    ) -> Result<(), StoreError> {
        let seq = self.seq + 1;
        let row = AuditRow {
            seq,
            at,
            actor,
            entity,
            entity_id,
            op,
            before,
            after,
        };
        let hash = row.hash(&self.hash);
        conn.prepare_cached(
            "INSERT INTO audit (seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)",
        )?
        .execute(params![
            seq, at, actor, entity, entity_id, op, before, after, self.hash, hash
        ])?;
        self.seq = seq;
        self.hash = hash;
        Ok(())
    }

    pub(crate) fn record(
        &mut self,
        conn: &Connection,
        stamp: &Stamp,
        entity: &str,
        entity_id: &str,
        before: Option<&str>,
        after: Option<&str>,
    ) -> Result<(), StoreError> {
        let op = match (before, after) {
            (None, _) => "insert",
            (Some(_), Some(_)) => "update",
            (Some(_), None) => "delete",
        };
        let at = fmt_time(stamp.at);
        self.append(
            conn,
            &at,
            &stamp.actor,
            entity,
            entity_id,
            op,
            before,
            after,
        )
    }

    /// Write the chain head into `meta` (end of every writing transaction), so that
    /// cutting rows off the end of the log is noticed.
    pub(crate) fn finish(&self, conn: &Connection) -> Result<(), StoreError> {
        let mut stmt = conn.prepare_cached(
            "INSERT INTO meta (key, value) VALUES (?1, ?2)
             ON CONFLICT (key) DO UPDATE SET value = excluded.value",
        )?;
        stmt.execute(params!["audit_head_seq", self.seq.to_string()])?;
        stmt.execute(params!["audit_head_hash", self.hash])?;
        Ok(())
    }
}

/// Entity name of a bulk-load audit row: its `after` is a manifest of the records it
/// inserted, `{"entity":"incident","records":[["<id>","<sha256 of the image>"],...]}`.
pub(crate) const BATCH: &str = "batch";

/// Records per bulk-load audit row.
pub(crate) const BATCH_SIZE: usize = 1000;

/// Collects the images of records inserted by a bulk load (import, demo) and writes one
/// audit row per [`BATCH_SIZE`] records, holding each record's id and image digest.
pub(crate) struct Bulk {
    entity: &'static str,
    records: Vec<(String, String)>,
    ids: super::IdGen,
}

impl Bulk {
    pub(crate) fn new(entity: &'static str, seed: u64) -> Bulk {
        Bulk {
            entity,
            records: Vec::with_capacity(BATCH_SIZE),
            ids: super::IdGen::new(seed),
        }
    }

    pub(crate) fn add(
        &mut self,
        conn: &Connection,
        chain: &mut Chain,
        stamp: &Stamp,
        id: &str,
        image: &str,
    ) -> Result<(), StoreError> {
        self.add_digest(conn, chain, stamp, id, canon::sha256_hex(image.as_bytes()))
    }

    /// [`Bulk::add`] with the image's SHA-256 (hex) already computed.
    pub(crate) fn add_digest(
        &mut self,
        conn: &Connection,
        chain: &mut Chain,
        stamp: &Stamp,
        id: &str,
        digest: String,
    ) -> Result<(), StoreError> {
        self.records.push((id.to_string(), digest));
        if self.records.len() >= BATCH_SIZE {
            self.flush(conn, chain, stamp)?;
        }
        Ok(())
    }

    pub(crate) fn flush(
        &mut self,
        conn: &Connection,
        chain: &mut Chain,
        stamp: &Stamp,
    ) -> Result<(), StoreError> {
        if self.records.is_empty() {
            return Ok(());
        }
        let text = manifest_text(self.entity, &self.records);
        let id = self.ids.uuid_v7(stamp.at.timestamp_millis());
        chain.record(conn, stamp, BATCH, &id, None, Some(&text))?;
        self.records.clear();
        Ok(())
    }
}

/// The canonical text of a bulk-load manifest, `{"entity":E,"records":[[id,digest],…]}`,
/// written directly (the same text as `canon::canonical_value` of that JSON; a test checks).
fn manifest_text(entity: &str, records: &[(String, String)]) -> String {
    let mut out = String::with_capacity(32 + records.len() * 112);
    out.push_str("{\"entity\":");
    canon::write_str(entity, &mut out);
    out.push_str(",\"records\":[");
    for (k, (id, digest)) in records.iter().enumerate() {
        if k > 0 {
            out.push(',');
        }
        out.push('[');
        canon::write_str(id, &mut out);
        out.push(',');
        canon::write_str(digest, &mut out);
        out.push(']');
    }
    out.push_str("]}");
    out
}

/// (entity, id, image digest) of each record in a bulk-load manifest.
fn manifest_records(text: &str) -> Option<Vec<(String, String, [u8; 16])>> {
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

/// Audit the lookup entries that migration 0001 seeds, as written by "schema 0001".
pub(crate) fn seed_lookup_audit(conn: &Connection) -> Result<(), StoreError> {
    let entries = refdata::load_lookups(conn, None)?;
    let mut chain = Chain::load(conn)?;
    for e in &entries {
        let img = canon::canonical(e)?;
        chain.append(
            conn,
            MIGRATION_AT,
            "schema 0001",
            refdata::LOOKUP,
            &refdata::lookup_key(e),
            "insert",
            None,
            Some(&img),
        )?;
    }
    chain.finish(conn)
}

fn digest(text: &str) -> [u8; 16] {
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
enum RecordKey {
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
struct Entities(Vec<String>);

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

    fn key(&mut self, entity: &str, id: &str) -> RecordKey {
        let e = self.number(entity);
        match uuid_bytes(id) {
            Some(b) => RecordKey::Uuid(e, b),
            None => RecordKey::Text(e, id.into()),
        }
    }

    /// The key of a record, `None` if no audit row names its entity (so it has no key
    /// in the map).
    fn existing_key(&self, entity: &str, id: &str) -> Option<RecordKey> {
        let e = self.find(entity)?;
        Some(match uuid_bytes(id) {
            Some(b) => RecordKey::Uuid(e, b),
            None => RecordKey::Text(e, id.into()),
        })
    }

    fn names(&self, key: &RecordKey) -> (String, String) {
        let (e, id) = match key {
            RecordKey::Uuid(e, b) => (*e, uuid_text(b)),
            RecordKey::Text(e, id) => (*e, id.to_string()),
        };
        (self.0.get(e as usize).cloned().unwrap_or_default(), id)
    }
}

/// What verify knows of one record: the digest of its last audited image (`None`: last
/// audited as deleted), and whether the records hold it.
struct LastImage {
    digest: Option<[u8; 16]>,
    seen: bool,
}

fn changed_keys(
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

impl Store {
    /// The audit history of one incident (by reference or id), oldest first.
    pub fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        let id = incidents::resolve_key(&self.conn, key)?;
        let mut stmt = self.conn.prepare(
            "SELECT seq, at, actor, op, before, after, hash FROM audit
             WHERE entity = ?1 AND entity_id = ?2 ORDER BY seq",
        )?;
        let rows = stmt.query_map(params![INCIDENT, id], |r| {
            Ok((
                r.get::<_, i64>(0)?,
                r.get::<_, String>(1)?,
                r.get::<_, String>(2)?,
                r.get::<_, String>(3)?,
                r.get::<_, Option<String>>(4)?,
                r.get::<_, Option<String>>(5)?,
                r.get::<_, String>(6)?,
            ))
        })?;
        let mut out = Vec::new();
        let rows: Vec<_> = rows.collect::<Result<_, _>>()?;
        drop(stmt);
        if rows.first().is_none_or(|r| r.3 != "insert") {
            // inserted by a bulk load: the manifest row names it; its image is the first
            // later row's before-image, or the current record if it matches the digest
            let mut stmt = self.conn.prepare(
                "SELECT seq, at, actor, after, hash FROM audit
                 WHERE entity = ?1 AND after LIKE ?2 ORDER BY seq LIMIT 1",
            )?;
            // ids are UUIDs (hex digits and hyphens): nothing in them is a LIKE wildcard
            let quoted = format!("%[\"{id}\",%");
            let found = stmt
                .query_row(params![BATCH, quoted], |r| {
                    Ok((
                        r.get::<_, i64>(0)?,
                        r.get::<_, String>(1)?,
                        r.get::<_, String>(2)?,
                        r.get::<_, String>(3)?,
                        r.get::<_, String>(4)?,
                    ))
                })
                .optional()?;
            if let Some((seq, at, actor, manifest, hash)) = found {
                let image = match rows.first() {
                    Some(r) => r.4.clone(),
                    None => incidents::load(&self.conn, &id)?
                        .map(|inc| canon::incident_image(&inc))
                        .transpose()?,
                };
                let want = manifest_records(&manifest).and_then(|rs| {
                    rs.into_iter()
                        .find(|(_, rid, _)| *rid == id)
                        .map(|(_, _, d)| d)
                });
                let image = image.filter(|img| Some(digest(img)) == want);
                let after = image.as_deref().and_then(canon::decanonical);
                out.push(HistoryEntry {
                    seq,
                    at: parse_time(&at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
                    actor,
                    op: "insert".into(),
                    changed: changed_keys(None, after.as_ref()),
                    before: None,
                    after,
                    hash,
                });
            }
        }
        for row in rows {
            let (seq, at, actor, op, before, after, hash) = row;
            let before = before.as_deref().and_then(canon::decanonical);
            let after = after.as_deref().and_then(canon::decanonical);
            out.push(HistoryEntry {
                seq,
                at: parse_time(&at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
                actor,
                op,
                changed: changed_keys(before.as_ref(), after.as_ref()),
                before,
                after,
                hash,
            });
        }
        Ok(out)
    }

    /// Recompute the audit chain and compare every record with its last audited image.
    /// Finds audit rows changed, deleted or inserted, and record rows changed, deleted or
    /// inserted without going through the store.
    pub fn verify(&self) -> Result<VerifyReport, StoreError> {
        let mut report = VerifyReport {
            audit_rows: 0,
            records_checked: 0,
            head: GENESIS.to_string(),
            first_problem: None,
            problems: 0,
        };
        let problem = |report: &mut VerifyReport, msg: String| {
            if report.first_problem.is_none() {
                report.first_problem = Some(msg);
            }
            report.problems += 1;
        };

        // 1. the chain
        let mut entities = Entities::default();
        let mut last: HashMap<RecordKey, LastImage> = HashMap::new();
        let mut prev = GENESIS.to_string();
        let mut expect_seq = 1i64;
        {
            let mut stmt = self.conn.prepare(
                "SELECT seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash
                 FROM audit ORDER BY seq",
            )?;
            let mut rows = stmt.query([])?;
            while let Some(r) = rows.next()? {
                let seq: i64 = r.get(0)?;
                let at: String = r.get(1)?;
                let actor: String = r.get(2)?;
                let entity: String = r.get(3)?;
                let entity_id: String = r.get(4)?;
                let op: String = r.get(5)?;
                let before: Option<String> = r.get(6)?;
                let after: Option<String> = r.get(7)?;
                let prev_hash: String = r.get(8)?;
                let hash: String = r.get(9)?;
                report.audit_rows += 1;
                if seq != expect_seq {
                    problem(
                        &mut report,
                        format!("audit row {expect_seq}: missing (the next row is {seq}); rows were deleted"),
                    );
                }
                if prev_hash != prev {
                    problem(
                        &mut report,
                        format!("audit row {seq}: its previous-hash does not match row {}; a row was deleted, inserted or changed", seq - 1),
                    );
                }
                let row = AuditRow {
                    seq,
                    at: &at,
                    actor: &actor,
                    entity: &entity,
                    entity_id: &entity_id,
                    op: &op,
                    before: before.as_deref(),
                    after: after.as_deref(),
                };
                let computed = row.hash(&prev_hash);
                if computed != hash {
                    problem(
                        &mut report,
                        format!("audit row {seq} ({entity} {entity_id}, {op} by {actor} at {at}): its content does not match its hash; it was changed"),
                    );
                }
                prev = hash;
                expect_seq = seq + 1;
                if entity == BATCH {
                    match after.as_deref().and_then(manifest_records) {
                        Some(records) => {
                            for (e, id, d) in records {
                                last.insert(
                                    entities.key(&e, &id),
                                    LastImage {
                                        digest: Some(d),
                                        seen: false,
                                    },
                                );
                            }
                        }
                        None => problem(
                            &mut report,
                            format!("audit row {seq}: a bulk-load row whose list of records cannot be read"),
                        ),
                    }
                } else {
                    last.insert(
                        entities.key(&entity, &entity_id),
                        LastImage {
                            digest: after.as_deref().map(digest),
                            seen: false,
                        },
                    );
                }
            }
        }
        report.head = prev.clone();
        let meta_head: Option<String> = self
            .conn
            .query_row(
                "SELECT value FROM meta WHERE key = 'audit_head_hash'",
                [],
                |r| r.get(0),
            )
            .optional()?;
        match meta_head {
            Some(h) if h == prev => {}
            Some(_) => problem(
                &mut report,
                format!("audit log: the last row ({}) is not the recorded head; rows were cut off the end or added", expect_seq - 1),
            ),
            None if report.audit_rows > 0 => problem(
                &mut report,
                "audit log: the recorded head is missing".to_string(),
            ),
            None => {}
        }

        // 2. the records against their last images
        let mut check = |report: &mut VerifyReport,
                         entity: &str,
                         id: &str,
                         shown: &str,
                         image: &str| {
            report.records_checked += 1;
            match entities
                .existing_key(entity, id)
                .and_then(|k| last.get_mut(&k))
            {
                None => problem(
                    report,
                    format!("{entity} {shown}: present in the records but never written through shardlog (inserted behind its back)"),
                ),
                Some(l) => {
                    l.seen = true;
                    match l.digest {
                        None => problem(
                            report,
                            format!("{entity} {shown}: present in the records although the audit log says it was deleted"),
                        ),
                        Some(d) => {
                            if d != digest(image) {
                                problem(
                                    report,
                                    format!("{entity} {shown}: differs from its last audited version (changed behind shardlog's back)"),
                                );
                            }
                        }
                    }
                }
            }
        };
        for e in refdata::load_lookups(&self.conn, None)? {
            let img = canon::canonical(&e)?;
            let key = refdata::lookup_key(&e);
            check(&mut report, refdata::LOOKUP, &key, &key, &img);
        }
        for (entity, id, shown, img) in refdata::all_images(&self.conn)? {
            check(&mut report, entity, &id, &shown, &img);
        }
        {
            let mut bad_derived: Option<String> = None;
            let mut n_bad = 0u64;
            incidents::for_each_incident(&self.conn, |inc, derived_ok| {
                let img = canon::incident_image(&inc)?;
                check(&mut report, INCIDENT, &inc.id, &inc.reference, &img);
                if !derived_ok {
                    n_bad += 1;
                    if bad_derived.is_none() {
                        bad_derived = Some(inc.reference.clone());
                    }
                }
                Ok(())
            })?;
            if let Some(r) = bad_derived {
                for _ in 0..n_bad {
                    problem(&mut report, format!("incident {r}: its listed stress, origin type or temper does not follow from its examinations (changed behind shardlog's back)"));
                }
            }
        }
        // the narrow copy the fleet statistics read (schema 3) agrees with the incidents
        for msg in incidents::fleet_facts_problems(&self.conn)? {
            problem(&mut report, msg);
        }
        let mut gone: Vec<(String, String)> = last
            .iter()
            .filter(|(_, l)| l.digest.is_some() && !l.seen)
            .map(|(k, _)| entities.names(k))
            .collect();
        gone.sort();
        for (entity, id) in gone {
            problem(
                &mut report,
                format!("{entity} {id}: in the audit log but missing from the records (deleted behind shardlog's back)"),
            );
        }

        // 3. the evidence: every attachment's file is in the attachment folder and still has
        // the content its hash names (skipped for a database with no folder, i.e. in memory)
        if let Some(dir) = self.files_dir.as_deref() {
            let mut stmt = self.conn.prepare(
                "SELECT i.reference, a.entry_no, a.sha256 FROM attachments a
                 JOIN incidents i ON i.id = a.incident_id ORDER BY i.reference, a.entry_no",
            )?;
            let mut rows = stmt.query([])?;
            while let Some(r) = rows.next()? {
                let reference: String = r.get(0)?;
                let entry: i64 = r.get(1)?;
                let sha: String = r.get(2)?;
                report.records_checked += 1;
                let well_formed = sha.len() == 64 && sha.bytes().all(|b| b.is_ascii_hexdigit());
                let path = dir.join(&sha);
                let msg = if !well_formed {
                    Some("its hash is not a SHA-256".to_string())
                } else {
                    match std::fs::read(&path) {
                        Err(_) => Some(format!(
                            "its file {sha} is not in the attachment folder {}",
                            dir.display()
                        )),
                        Ok(bytes) => {
                            let got = canon::hex(&Sha256::digest(&bytes));
                            (got != sha.to_ascii_lowercase()).then(|| {
                                format!(
                                    "its file {sha} no longer has that content (SHA-256 now {got})"
                                )
                            })
                        }
                    }
                };
                if let Some(m) = msg {
                    problem(
                        &mut report,
                        format!("incident {reference}: attachment {entry}: {m}"),
                    );
                }
            }
        }
        Ok(report)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_manifest_is_written_as_its_canonical_json() {
        for records in [
            vec![],
            vec![("a".to_string(), "0f".to_string())],
            vec![
                ("0190-x".to_string(), "ab".repeat(16)),
                ("odd \"id\"\n".to_string(), "\\".to_string()),
            ],
        ] {
            let v = serde_json::json!({
                "entity": "incident",
                "records": records.iter().map(|(i, d)| serde_json::json!([i, d])).collect::<Vec<_>>(),
            });
            assert_eq!(
                manifest_text("incident", &records),
                canon::canonical_value(&v)
            );
        }
    }

    #[test]
    fn time_format_round_trips() {
        let t = DateTime::parse_from_rfc3339("2026-03-14T09:10:00.120Z")
            .unwrap()
            .with_timezone(&Utc);
        assert_eq!(fmt_time(t), "2026-03-14T09:10:00.120Z");
        assert_eq!(parse_time(&fmt_time(t)), Some(t));
    }

    /// verify's compact keys: one key per (entity, id) pair of strings, and back. Only the
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
