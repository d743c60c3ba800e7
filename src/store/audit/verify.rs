//! Checking the audit log: the chain recomputed row by row, then each record handed in
//! compared with its last audited image, then the audited records never handed in.

use std::collections::HashMap;

use chrono::{DateTime, Utc};
use rusqlite::{Connection, OptionalExtension};

use super::chain::BATCH;
use super::image::{digest, manifest_records, Entities, RecordKey};
use crate::store::canon::{AuditRow, GENESIS};
use crate::store::dates::parse_time;
use crate::store::model::VerifyReport;
use crate::store::StoreError;

/// A verification under way: the report so far and the last audited image of every record
/// the log names.
pub(crate) struct Verification {
    report: VerifyReport,
    entities: Entities,
    last: HashMap<RecordKey, LastImage>,
    /// The latest time of the rows so far, with its row (times never run backwards).
    latest: Option<(DateTime<Utc>, i64)>,
}

/// What verify knows of one record: the digest of its last audited image (`None`: last
/// audited as deleted), and whether the records hold it.
struct LastImage {
    digest: Option<[u8; 16]>,
    seen: bool,
}

/// How far a row's time may be before an earlier row's: a writer takes its time before it
/// waits for another writer's lock (up to the busy timeout), and clocks are set right by
/// seconds; a row back-dated by more is a problem.
const BACKWARDS_ALLOWED: chrono::TimeDelta = chrono::TimeDelta::hours(1);

/// One audit row as read for verification.
struct ReadRow {
    seq: i64,
    at: String,
    actor: String,
    entity: String,
    entity_id: String,
    op: String,
    before: Option<String>,
    after: Option<String>,
    prev_hash: String,
    hash: String,
}

impl Verification {
    /// Recompute the chain and check its end against the head recorded in `meta`.
    pub(crate) fn read_chain(conn: &Connection) -> Result<Verification, StoreError> {
        let mut v = Verification {
            report: VerifyReport {
                audit_rows: 0,
                records_checked: 0,
                head: GENESIS.to_string(),
                first_problem: None,
                problems: 0,
                damaged: Vec::new(),
            },
            entities: Entities::default(),
            last: HashMap::new(),
            latest: None,
        };
        let mut prev = GENESIS.to_string();
        let mut expect_seq = 1i64;
        {
            let mut stmt = conn.prepare(
                "SELECT seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash
                 FROM audit ORDER BY seq",
            )?;
            let mut rows = stmt.query([])?;
            while let Some(r) = rows.next()? {
                let row = ReadRow {
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
                };
                v.check_row(&row, &prev, expect_seq);
                v.check_time_and_actor(&row);
                v.remember_images(&row);
                prev = row.hash;
                expect_seq = row.seq + 1;
            }
        }
        v.report.head = prev.clone();
        let meta_head: Option<String> = conn
            .query_row(
                "SELECT value FROM meta WHERE key = 'audit_head_hash'",
                [],
                |r| r.get(0),
            )
            .optional()?;
        match meta_head {
            Some(h) if h == prev => {}
            Some(_) => v.problem(format!(
                "audit log: the last row ({}) is not the recorded head; rows were cut off the end or added",
                expect_seq - 1
            )),
            None if v.report.audit_rows > 0 => {
                v.problem("audit log: the recorded head is missing".to_string())
            }
            None => {}
        }
        Ok(v)
    }

    /// One row of the chain: in sequence, linked to the row before, its content its hash.
    fn check_row(&mut self, row: &ReadRow, prev: &str, expect_seq: i64) {
        let seq = row.seq;
        self.report.audit_rows += 1;
        if seq != expect_seq {
            self.problem(format!(
                "audit row {expect_seq}: missing (the next row is {seq}); rows were deleted"
            ));
        }
        if row.prev_hash != prev {
            self.problem(format!("audit row {seq}: its previous-hash does not match row {}; a row was deleted, inserted or changed", seq - 1));
        }
        let audit_row = AuditRow {
            seq,
            at: &row.at,
            actor: &row.actor,
            entity: &row.entity,
            entity_id: &row.entity_id,
            op: &row.op,
            before: row.before.as_deref(),
            after: row.after.as_deref(),
        };
        if audit_row.hash(&row.prev_hash) != row.hash {
            let (entity, entity_id, op, actor, at) =
                (&row.entity, &row.entity_id, &row.op, &row.actor, &row.at);
            self.problem(format!("audit row {seq} ({entity} {entity_id}, {op} by {actor} at {at}): its content does not match its hash; it was changed"));
        }
    }

    /// A row's time can be read and is not before the rows before it; its actor can be read.
    /// Rows written by a migration carry one fixed time and are not compared.
    fn check_time_and_actor(&mut self, row: &ReadRow) {
        let seq = row.seq;
        let actor = row.actor.trim();
        if actor.is_empty() || row.actor.chars().any(char::is_control) {
            self.problem(format!(
                "audit row {seq}: its actor {:?} cannot be read (empty or with control characters)",
                row.actor
            ));
        }
        let Some(at) = parse_time(&row.at) else {
            self.problem(format!(
                "audit row {seq}: its time {:?} cannot be read (expected RFC 3339 UTC with milliseconds)",
                row.at
            ));
            return;
        };
        if row.at == crate::store::MIGRATION_AT {
            return;
        }
        match self.latest {
            Some((before, before_seq)) if at < before - BACKWARDS_ALLOWED => self.problem(format!(
                "audit row {seq}: its time {} is more than an hour before that of row {before_seq} ({}): the times run backwards",
                row.at,
                crate::store::dates::fmt_time(before)
            )),
            Some((before, _)) if at <= before => {}
            _ => self.latest = Some((at, seq)),
        }
    }

    /// Keep the image a row leaves as the last one of its record (of each record, for a
    /// bulk-load row).
    fn remember_images(&mut self, row: &ReadRow) {
        if row.entity != BATCH {
            self.last.insert(
                self.entities.key(&row.entity, &row.entity_id),
                LastImage {
                    digest: row.after.as_deref().map(digest),
                    seen: false,
                },
            );
            return;
        }
        match row.after.as_deref().and_then(manifest_records) {
            Some(records) => {
                for (e, id, d) in records {
                    self.last.insert(
                        self.entities.key(&e, &id),
                        LastImage {
                            digest: Some(d),
                            seen: false,
                        },
                    );
                }
            }
            None => self.problem(format!(
                "audit row {}: a bulk-load row whose list of records cannot be read",
                row.seq
            )),
        }
    }

    /// Count a problem; the first one is kept for the report.
    pub(crate) fn problem(&mut self, msg: String) {
        if self.report.first_problem.is_none() {
            self.report.first_problem = Some(msg);
        }
        self.report.problems += 1;
    }

    /// A record that cannot be read: a problem, and listed by itself.
    pub(crate) fn damaged(&mut self, msg: String) {
        self.report.damaged.push(msg.clone());
        self.problem(msg);
    }

    /// A record that is there but cannot be compared (it cannot be read): not missing.
    pub(crate) fn mark_seen(&mut self, entity: &str, id: &str) {
        if let Some(l) = self
            .entities
            .existing_key(entity, id)
            .and_then(|k| self.last.get_mut(&k))
        {
            l.seen = true;
        }
    }

    /// Count one more record checked (one whose check is not [`Verification::check_record`]).
    pub(crate) fn count_checked(&mut self) {
        self.report.records_checked += 1;
    }

    /// Compare a record as it is stored (`image`, canonical) with its last audited image.
    /// `shown` names it in a message.
    pub(crate) fn check_record(&mut self, entity: &str, id: &str, shown: &str, image: &str) {
        self.check_record_digest(entity, id, shown, digest(image));
    }

    /// [`Verification::check_record`] of an image already hashed ([`digest`]).
    pub(crate) fn check_record_digest(
        &mut self,
        entity: &str,
        id: &str,
        shown: &str,
        image_digest: [u8; 16],
    ) {
        self.report.records_checked += 1;
        let last = self
            .entities
            .existing_key(entity, id)
            .and_then(|k| self.last.get_mut(&k));
        let msg = match last {
            None => Some(format!("{entity} {shown}: present in the records but never written through shardlog (inserted behind its back)")),
            Some(l) => {
                l.seen = true;
                match l.digest {
                    None => Some(format!("{entity} {shown}: present in the records although the audit log says it was deleted")),
                    Some(d) if d != image_digest => Some(format!("{entity} {shown}: differs from its last audited version (changed behind shardlog's back)")),
                    Some(_) => None,
                }
            }
        };
        if let Some(m) = msg {
            self.problem(m);
        }
    }

    /// A problem for each record the log says exists that was never handed in.
    pub(crate) fn report_missing_records(&mut self) {
        let mut gone: Vec<(String, String)> = self
            .last
            .iter()
            .filter(|(_, l)| l.digest.is_some() && !l.seen)
            .map(|(k, _)| self.entities.names(k))
            .collect();
        gone.sort();
        for (entity, id) in gone {
            self.problem(format!("{entity} {id}: in the audit log but missing from the records (deleted behind shardlog's back)"));
        }
    }

    pub(crate) fn into_report(self) -> VerifyReport {
        self.report
    }
}
