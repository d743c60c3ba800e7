//! The bench's side of the fleet: its code (kept in `meta`), the receipts the fleet returned,
//! and the outbox, which is the audit chain itself: the rows from a sequence number on, read
//! in one read transaction together with the current images of the records that bulk-load
//! rows list by digest.

use std::collections::{HashMap, HashSet};

use rusqlite::{params, Connection, TransactionBehavior};

use super::audit::{manifest_records, BATCH, INCIDENT};
use super::{canon, incidents, refdata, Store, StoreError};

/// One audit row as it leaves the bench.
#[derive(Debug, Clone, PartialEq)]
pub struct ChainRow {
    pub seq: i64,
    pub at: String,
    pub actor: String,
    pub entity: String,
    pub entity_id: String,
    pub op: String,
    pub before: Option<String>,
    pub after: Option<String>,
    pub prev_hash: String,
    pub hash: String,
}

/// A receipt the fleet returned for a push: its own chain link and the bench row it witnessed.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Receipt {
    pub fleet_seq: i64,
    pub fleet_hash: String,
    pub bench_seq: i64,
    pub bench_hash: String,
    pub received_at: String,
}

/// The actor of audit rows a pull writes: the fleet witnesses them but never applies them.
pub const PULL_ACTOR: &str = "fleet:pull";

const BENCH_CODE: &str = "bench_code";

impl Store {
    /// This bench's code (`init --bench`, `bench code`), None before one is set.
    pub fn bench_code(&self) -> Result<Option<String>, StoreError> {
        incidents::bench_code(&self.conn)
    }

    /// Set this bench's code. New references carry it; references made before keep theirs.
    /// Refused once the bench has synced (the fleet knows it by its code).
    pub fn set_bench_code(&mut self, code: &str) -> Result<(), StoreError> {
        let code =
            incidents::check_bench_code(code).map_err(|m| StoreError::invalid("bench code", m))?;
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let synced: i64 = tx.query_row("SELECT count(*) FROM fleet_receipts", [], |r| r.get(0))?;
        if synced > 0 {
            let old = incidents::bench_code(&tx)?.unwrap_or_default();
            if old != code {
                return Err(StoreError::invalid(
                    "bench code",
                    format!(
                        "this bench has synced with the fleet as {old}; its code cannot change"
                    ),
                ));
            }
        }
        tx.execute(
            "INSERT INTO meta (key, value) VALUES (?1, ?2)
             ON CONFLICT (key) DO UPDATE SET value = excluded.value",
            params![BENCH_CODE, code],
        )?;
        tx.commit()?;
        Ok(())
    }

    /// The receipts of this bench's pushes, oldest first.
    pub fn fleet_receipts(&self) -> Result<Vec<Receipt>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT fleet_seq, fleet_hash, bench_seq, bench_hash, received_at
             FROM fleet_receipts ORDER BY fleet_seq",
        )?;
        let rows = stmt.query_map([], |r| {
            Ok(Receipt {
                fleet_seq: r.get(0)?,
                fleet_hash: r.get(1)?,
                bench_seq: r.get(2)?,
                bench_hash: r.get(3)?,
                received_at: r.get(4)?,
            })
        })?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    /// Keep a receipt (again is fine: the same receipt changes nothing).
    pub fn save_receipt(&self, r: &Receipt) -> Result<(), StoreError> {
        self.conn.execute(
            "INSERT INTO fleet_receipts (fleet_seq, fleet_hash, bench_seq, bench_hash, received_at)
             VALUES (?1, ?2, ?3, ?4, ?5) ON CONFLICT (fleet_seq) DO NOTHING",
            params![
                r.fleet_seq,
                r.fleet_hash,
                r.bench_seq,
                r.bench_hash,
                r.received_at
            ],
        )?;
        Ok(())
    }

    /// The first transfer row after `after_seq` that is not this bench's last row: a push
    /// ends there (the fleet moves the incident's owner before it takes the rows after).
    pub(crate) fn push_cut_after(&self, after_seq: i64) -> Result<Option<i64>, StoreError> {
        let cut: Option<i64> = self.conn.query_row(
            "SELECT min(seq) FROM audit WHERE seq > ?1 AND entity = ?2 AND actor <> ?3",
            params![after_seq, super::moves::TRANSFER, PULL_ACTOR],
            |r| r.get(0),
        )?;
        let (last, _) = self.audit_head_entry()?;
        Ok(cut.filter(|c| *c < last))
    }

    /// Run `f` inside one read transaction: everything it reads is one moment of the bench.
    pub(crate) fn in_snapshot<T, E: From<StoreError>>(
        &self,
        f: impl FnOnce(&Connection) -> Result<T, E>,
    ) -> Result<T, E> {
        self.conn
            .execute_batch("BEGIN DEFERRED")
            .map_err(StoreError::from)?;
        let out = f(&self.conn);
        let _ = self.conn.execute_batch("COMMIT");
        out
    }
}

/// The audit rows from `from_seq` on, in order, handed to `f` one by one.
pub(crate) fn for_each_row(
    conn: &Connection,
    from_seq: i64,
    f: impl FnMut(ChainRow) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    for_each_row_until(conn, from_seq, i64::MAX, f)
}

/// The audit rows from `from_seq` to `to_seq` (both included), in order.
pub(crate) fn for_each_row_until(
    conn: &Connection,
    from_seq: i64,
    to_seq: i64,
    mut f: impl FnMut(ChainRow) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    let mut stmt = conn.prepare(
        "SELECT seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash
         FROM audit WHERE seq >= ?1 AND seq <= ?2 ORDER BY seq",
    )?;
    let mut rows = stmt.query([from_seq, to_seq])?;
    while let Some(r) = rows.next()? {
        f(ChainRow {
            seq: r.get(0)?,
            at: r.get(1)?,
            actor: r.get(2)?,
            entity: r.get(3)?,
            entity_id: r.get(4)?,
            op: r.get(5)?,
            before: r.get(6)?,
            after: r.get(7)?,
            prev_hash: r.get(8)?,
            hash: r.get(9)?,
        })?;
    }
    Ok(())
}

/// The records that the bulk-load rows from `from_seq` on list, by entity.
pub(crate) fn batch_listed(
    conn: &Connection,
    from_seq: i64,
) -> Result<HashMap<String, HashSet<String>>, StoreError> {
    let mut out: HashMap<String, HashSet<String>> = HashMap::new();
    let mut stmt =
        conn.prepare("SELECT after FROM audit WHERE seq >= ?1 AND entity = ?2 ORDER BY seq")?;
    let mut rows = stmt.query(params![from_seq, BATCH])?;
    while let Some(r) = rows.next()? {
        let after: Option<String> = r.get(0)?;
        let Some(text) = after else { continue };
        for (entity, id, _) in manifest_records(&text).unwrap_or_default() {
            out.entry(entity).or_default().insert(id);
        }
    }
    Ok(out)
}

/// The current images of the listed records (those still there), handed to `f` as
/// (entity, id, image). Few incidents are read one by one, many in one pass over the table.
pub(crate) fn for_each_listed_image(
    conn: &Connection,
    listed: &HashMap<String, HashSet<String>>,
    mut f: impl FnMut(&str, &str, &str) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    if let Some(ids) = listed.get(INCIDENT) {
        if ids.len() < 2000 {
            let mut sorted: Vec<&String> = ids.iter().collect();
            sorted.sort();
            for id in sorted {
                if let Some(inc) = incidents::load(conn, id)? {
                    f(INCIDENT, id, &canon::incident_image(&inc)?)?;
                }
            }
        } else {
            incidents::for_each_incident(conn, |inc, _| {
                if ids.contains(&inc.id) {
                    f(INCIDENT, &inc.id, &canon::incident_image(&inc)?)?;
                }
                Ok(())
            })?;
        }
    }
    let others: Vec<&String> = listed.keys().filter(|e| *e != INCIDENT).collect();
    if !others.is_empty() {
        let own = super::own_materials::images(conn)?;
        for (entity, id, _, image) in refdata::all_images(conn)?.into_iter().chain(own) {
            if listed.get(entity).is_some_and(|ids| ids.contains(&id)) {
                f(entity, &id, &image)?;
            }
        }
    }
    Ok(())
}

/// Every attachment hash of the incidents `ids` (all incidents when `ids` is None).
pub(crate) fn attachment_hashes(
    conn: &Connection,
    ids: Option<&HashSet<String>>,
) -> Result<Vec<String>, StoreError> {
    let mut out = HashSet::new();
    // a few incidents (an incremental push): through the index, not a pass over every file
    if let Some(set) = ids.filter(|set| set.len() < 5000) {
        let mut stmt =
            conn.prepare_cached("SELECT DISTINCT sha256 FROM attachments WHERE incident_id = ?1")?;
        for id in set {
            let rows = stmt.query_map([id], |r| r.get::<_, String>(0))?;
            for sha in rows {
                out.insert(sha?);
            }
        }
        let mut out: Vec<String> = out.into_iter().collect();
        out.sort();
        return Ok(out);
    }
    let mut stmt = conn.prepare("SELECT DISTINCT incident_id, sha256 FROM attachments")?;
    let rows = stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))?;
    for row in rows {
        let (incident, sha) = row?;
        if ids.is_none_or(|set| set.contains(&incident)) {
            out.insert(sha);
        }
    }
    let mut out: Vec<String> = out.into_iter().collect();
    out.sort();
    Ok(out)
}
