//! What a bench tells the fleet beyond its records: a specimen sent to another bench
//! (`transfer`), and the settling of a fleet conflict by the bench that owns the incident
//! (`resolution`). Both are audited records the fleet reads from the pushed chain
//! (schema/fleet/0004): a transfer moves the incident's ownership, a resolution closes the
//! conflict it names when the same push carries the owner's new edit of the incident.

use rusqlite::{params, Connection, OptionalExtension, TransactionBehavior};

use super::audit::Chain;
use super::dates::fmt_time;
use super::incidents::{self, load};
use super::model::*;
use super::{canon, Store, StoreError};

/// Entity names of the audit rows written here.
pub(crate) const TRANSFER: &str = "transfer";
pub(crate) const RESOLUTION: &str = "resolution";

/// The custody action of a specimen leaving for another bench.
const SENT: &str = "sent";

/// A specimen sent to another bench of the fleet.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Transfer {
    pub id: String,
    /// The incident's key and reference.
    pub incident: String,
    pub reference: String,
    /// Bench codes.
    pub from: String,
    pub to: String,
    /// RFC 3339 UTC with milliseconds.
    pub at: String,
    pub by: String,
    #[serde(default)]
    pub note: String,
}

/// The owner's settling of one fleet conflict: its new edit of the incident keeps the
/// fleet's version (`fleet`) or takes the other bench's (`bench`).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Resolution {
    pub id: String,
    /// The fleet's number of the conflict.
    pub conflict: i64,
    pub incident: String,
    pub kept: String,
    pub at: String,
    pub by: String,
}

fn transfers(conn: &Connection) -> Result<Vec<Transfer>, StoreError> {
    let mut stmt = conn.prepare(
        "SELECT id, incident_id, reference, from_bench, to_bench, at, by, note
         FROM transfers ORDER BY at, id",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok(Transfer {
            id: r.get(0)?,
            incident: r.get(1)?,
            reference: r.get(2)?,
            from: r.get(3)?,
            to: r.get(4)?,
            at: r.get(5)?,
            by: r.get(6)?,
            note: r.get(7)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

fn resolutions(conn: &Connection) -> Result<Vec<Resolution>, StoreError> {
    let mut stmt = conn.prepare(
        "SELECT id, conflict, incident_id, kept, at, by FROM resolutions ORDER BY at, id",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok(Resolution {
            id: r.get(0)?,
            conflict: r.get(1)?,
            incident: r.get(2)?,
            kept: r.get(3)?,
            at: r.get(4)?,
            by: r.get(5)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

/// (entity, id, shown name, canonical image) of every transfer and resolution, for verify.
pub(crate) fn all_images(
    conn: &Connection,
) -> Result<Vec<(&'static str, String, String, String)>, StoreError> {
    let mut out = Vec::new();
    for t in transfers(conn)? {
        let shown = format!("{} to {}", t.reference, t.to);
        out.push((TRANSFER, t.id.clone(), shown, canon::canonical(&t)?));
    }
    for r in resolutions(conn)? {
        let shown = format!("of conflict {}", r.conflict);
        out.push((RESOLUTION, r.id.clone(), shown, canon::canonical(&r)?));
    }
    Ok(out)
}

impl Store {
    /// Send an incident's specimen to bench `to`: a custody entry "sent" and the transfer
    /// record, in one transaction. After both benches sync, `to` owns the incident.
    pub fn transfer_incident(
        &mut self,
        key: &str,
        to: &str,
        note: &str,
        stamp: &Stamp,
    ) -> Result<Transfer, StoreError> {
        let to = incidents::check_bench_code(to).map_err(|m| StoreError::invalid("--to", m))?;
        let from = self.bench_code()?.ok_or_else(|| {
            StoreError::invalid(
                "bench code",
                "this bench has no code, so the fleet cannot know where the specimen comes from; set one with `shardlog bench code CODE`",
            )
        })?;
        if from == to {
            return Err(StoreError::invalid(
                "--to",
                format!("{to} is this bench; name the bench the specimen goes to"),
            ));
        }
        let ms = stamp.at.timestamp_millis();
        let transfer_id = self.ids.uuid_v7(ms);
        let custody_id = self.ids.uuid_v7(ms);
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let id = incidents::resolve_key(&tx, key)?;
        let mut inc = load(&tx, &id)?.ok_or_else(|| StoreError::NotFound(key.to_string()))?;
        // sent from here and not pulled back since
        let already: Option<String> = tx
            .query_row(
                "SELECT t.to_bench FROM transfers t
                   JOIN audit a ON a.entity = 'transfer' AND a.entity_id = t.id
                 WHERE t.incident_id = ?1 AND NOT EXISTS (
                     SELECT 1 FROM audit p WHERE p.entity = 'incident' AND p.entity_id = ?1
                        AND p.actor = ?2 AND p.seq > a.seq)
                 ORDER BY a.seq DESC LIMIT 1",
                params![id, crate::store::PULL_ACTOR],
                |r| r.get(0),
            )
            .optional()?;
        if let Some(gone_to) = already {
            return Err(StoreError::invalid(
                "transfer",
                format!(
                    "{} was already sent to bench {gone_to} from here",
                    inc.reference
                ),
            ));
        }
        inc.custody.push(CustodyEntry {
            id: custody_id,
            at: stamp.at,
            action: SENT.into(),
            who: stamp.actor.clone(),
            location: format!("bench {to}"),
            note: note.to_string(),
        });
        let saved = Store::update_in(&tx, &mut self.ids, &self.lookups, &inc, stamp)?;
        let t = Transfer {
            id: transfer_id,
            incident: saved.id.clone(),
            reference: saved.reference.clone(),
            from,
            to,
            at: fmt_time(stamp.at),
            by: stamp.actor.clone(),
            note: note.to_string(),
        };
        tx.execute(
            "INSERT INTO transfers (id, incident_id, reference, from_bench, to_bench, at, by, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
            params![
                t.id,
                t.incident,
                t.reference,
                t.from,
                t.to,
                t.at,
                t.by,
                t.note
            ],
        )?;
        let mut chain = Chain::load(&tx)?;
        chain.record(
            &tx,
            stamp,
            TRANSFER,
            &t.id,
            None,
            Some(&canon::canonical(&t)?),
        )?;
        chain.finish(&tx)?;
        tx.commit()?;
        Ok(t)
    }

    /// Settle fleet conflict `conflict` on incident `key` with a new edit here: the incident
    /// as it is (`other` None: the fleet's version kept) or with the other bench's version
    /// of its content (`other`: its id, reference and history stay this incident's). The
    /// edit and the resolution record are written in one transaction; the next sync
    /// carries both to the fleet.
    pub fn resolve_conflict(
        &mut self,
        key: &str,
        conflict: i64,
        other: Option<&Incident>,
        stamp: &Stamp,
    ) -> Result<(Incident, Resolution), StoreError> {
        let resolution_id = self.ids.uuid_v7(stamp.at.timestamp_millis());
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let id = incidents::resolve_key(&tx, key)?;
        let current = load(&tx, &id)?.ok_or_else(|| StoreError::NotFound(key.to_string()))?;
        let edit = match other {
            Some(o) => Incident {
                id: current.id.clone(),
                reference: current.reference.clone(),
                revision: current.revision,
                created_at: current.created_at,
                ..o.clone()
            },
            None => current.clone(),
        };
        let saved = Store::update_in(&tx, &mut self.ids, &self.lookups, &edit, stamp)?;
        let r = Resolution {
            id: resolution_id,
            conflict,
            incident: saved.id.clone(),
            kept: if other.is_some() { "bench" } else { "fleet" }.into(),
            at: fmt_time(stamp.at),
            by: stamp.actor.clone(),
        };
        tx.execute(
            "INSERT INTO resolutions (id, conflict, incident_id, kept, at, by)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
            params![r.id, r.conflict, r.incident, r.kept, r.at, r.by],
        )?;
        let mut chain = Chain::load(&tx)?;
        chain.record(
            &tx,
            stamp,
            RESOLUTION,
            &r.id,
            None,
            Some(&canon::canonical(&r)?),
        )?;
        chain.finish(&tx)?;
        tx.commit()?;
        Ok((saved, r))
    }

    /// The benches this bench sent the incident to, newest last.
    pub fn transfers_of(&self, key: &str) -> Result<Vec<Transfer>, StoreError> {
        let id = incidents::resolve_key(&self.conn, key)?;
        Ok(transfers(&self.conn)?
            .into_iter()
            .filter(|t| t.incident == id)
            .collect())
    }
}
