//! Appending to the audit log inside a writing transaction: one row per change, or, for a
//! bulk load, one row per batch of records listing each record's image digest.

use rusqlite::{params, Connection, OptionalExtension};

use crate::store::canon::{self, AuditRow, GENESIS};
use crate::store::dates::fmt_time;
use crate::store::model::*;
use crate::store::{IdGen, Store, StoreError};

/// The running end of the chain inside one transaction.
pub(crate) struct Chain {
    seq: i64,
    hash: String,
}

impl Chain {
    /// The sequence number of the last row.
    pub(crate) fn seq(&self) -> i64 {
        self.seq
    }

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

impl Store {
    /// The hash of the last audit row (the chain head), or 64 zeros on an empty log.
    pub fn audit_head(&self) -> Result<String, StoreError> {
        Ok(Chain::load(&self.conn)?.hash)
    }

    /// The last audit row: its sequence number and hash (0 and 64 zeros on an empty log).
    pub fn audit_head_entry(&self) -> Result<(i64, String), StoreError> {
        let c = Chain::load(&self.conn)?;
        Ok((c.seq, c.hash))
    }

    /// The hash the log holds at entry `seq` (None when there is no such entry; 64 zeros
    /// for entry 0, the start of every chain).
    pub fn audit_hash_at(&self, seq: i64) -> Result<Option<String>, StoreError> {
        if seq == 0 {
            return Ok(Some(GENESIS.to_string()));
        }
        Ok(self
            .conn
            .query_row("SELECT hash FROM audit WHERE seq = ?1", [seq], |r| r.get(0))
            .optional()?)
    }
}

/// Entity name of a bulk-load audit row: its `after` is a manifest of the records it
/// inserted, `{"entity":"incident","records":[["<id>","<sha256 of the image>"],...]}`.
pub(crate) const BATCH: &str = "batch";

/// Records per bulk-load audit row.
const BATCH_SIZE: usize = 1000;

/// Collects the images of records inserted by a bulk load (import, demo) and writes one
/// audit row per [`BATCH_SIZE`] records, holding each record's id and image digest.
pub(crate) struct Bulk {
    entity: &'static str,
    records: Vec<(String, String)>,
    ids: IdGen,
}

impl Bulk {
    pub(crate) fn new(entity: &'static str, seed: u64) -> Bulk {
        Bulk {
            entity,
            records: Vec::with_capacity(BATCH_SIZE),
            ids: IdGen::new(seed),
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
}
