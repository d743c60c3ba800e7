//! A push: in one fleet transaction, the bench's audit rows from the fleet's witnessed head on
//! (that row included, so the fleet sees a rewritten history), the images of bulk-loaded
//! records and the attachment files the fleet lacks are copied into the staging tables by
//! binary COPY, then `fleet_push()` checks and applies them inside PostgreSQL. Everything on
//! the bench is read in one read transaction. A push that dies at any point leaves the fleet
//! as it was (the transaction never commits); the same push twice changes nothing.

use std::collections::HashSet;
use std::path::Path;

use postgres::binary_copy::BinaryCopyInWriter;
use postgres::types::Type;
use postgres::Transaction;
use rusqlite::Connection;

use super::{Fleet, FleetError};
use crate::store::audit::INCIDENT;
use crate::store::outbox::{self, ChainRow, Receipt};
use crate::store::Store;

/// What the fleet answered to a push.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PushOutcome {
    /// "accepted" (new rows witnessed) or "unchanged" (the fleet had them all).
    pub status: String,
    /// Audit rows sent (the fleet's head row included).
    pub rows_sent: u64,
    /// Records the fleet added or changed.
    pub records: i64,
    /// Edits the fleet kept as conflicts.
    pub conflicts: i64,
    /// Files sent: attachments, and the stored analyses of incidents sent to another bench
    /// (the record's image holds only their SHA-256; the receiving bench needs them whole).
    pub files: u64,
    /// The fleet's receipt (None while the fleet has accepted nothing of this bench).
    pub receipt: Option<Receipt>,
}

/// The fleet's witnessed head of `bench`: (seq, hash), (0, zeros) before its first push.
pub(crate) fn witnessed_head(fleet: &mut Fleet, bench: &str) -> Result<(i64, String), FleetError> {
    let row = fleet.client.query_opt(
        "SELECT head_seq, head_hash FROM fleet_benches WHERE code = $1",
        &[&bench],
    )?;
    Ok(row
        .map(|r| (r.get(0), r.get(1)))
        .unwrap_or((0, crate::store::canon::GENESIS.to_string())))
}

/// Push this bench's new history to the fleet: up to the first transfer and, while
/// there is more, again from there (each push one fleet transaction with its receipt,
/// kept by `keep`). The outcomes are added up; the last receipt is the fleet's head.
pub(crate) fn push(
    store: &Store,
    fleet: &mut Fleet,
    bench: &str,
    mut keep: impl FnMut(&Receipt) -> Result<(), FleetError>,
) -> Result<PushOutcome, FleetError> {
    let mut total: Option<PushOutcome> = None;
    loop {
        let (head_seq, _) = witnessed_head(fleet, bench)?;
        let cut = store.push_cut_after(head_seq)?;
        let one = push_once(store, fleet, bench, head_seq, cut)?;
        if let Some(r) = &one.receipt {
            keep(r)?;
        }
        total = Some(match total {
            None => one,
            Some(t) => PushOutcome {
                status: if t.status == "accepted" || one.status == "accepted" {
                    "accepted".into()
                } else {
                    one.status
                },
                rows_sent: t.rows_sent + one.rows_sent,
                records: t.records + one.records,
                conflicts: t.conflicts + one.conflicts,
                files: t.files + one.files,
                receipt: one.receipt.or(t.receipt),
            },
        });
        if cut.is_none() {
            break;
        }
    }
    total.ok_or_else(|| FleetError::Database("no push was made".into()))
}

/// One push: the rows from the fleet's head to `cut` (to the end when None).
fn push_once(
    store: &Store,
    fleet: &mut Fleet,
    bench: &str,
    head_seq: i64,
    cut: Option<i64>,
) -> Result<PushOutcome, FleetError> {
    let (local_seq, _) = store.audit_head_entry()?;
    let from_seq = head_seq.min(local_seq).max(1);
    let to_seq = cut.unwrap_or(i64::MAX);
    // the fleet applies only the rows after its head: the records and files of the head row
    // (a bulk load lists a thousand) went with the push that brought it
    let new_from = head_seq.max(0) + 1;
    let files_dir = store.files_dir().map(Path::to_path_buf);
    store.in_snapshot(|conn| {
        let mut tx = fleet.client.transaction()?;
        let rows_sent = stage_rows(&mut tx, conn, from_seq, to_seq)?;
        let listed = outbox::batch_listed(conn, new_from)?;
        stage_images(&mut tx, conn, bench, &listed)?;
        let files = stage_files(&mut tx, conn, new_from, &listed, files_dir.as_deref())?
            + stage_analyses(&mut tx, conn, from_seq, to_seq)?;
        let row = tx.query_one(
            "SELECT status, detail, receipt_seq, receipt_hash, head_seq, head_hash, records,
                    conflicts FROM fleet_push($1)",
            &[&bench],
        )?;
        tx.commit()?;
        let status: String = row.get(0);
        let detail: String = row.get(1);
        if status == "refused" {
            let kind = detail;
            let text = last_refusal(fleet, bench)?.unwrap_or_else(|| kind.clone());
            return Err(FleetError::Refused { kind, detail: text });
        }
        let receipt = match (
            row.get::<_, Option<i64>>(2),
            row.get::<_, Option<String>>(3),
        ) {
            (Some(fleet_seq), Some(fleet_hash)) => Some(Receipt {
                fleet_seq,
                fleet_hash,
                bench_seq: row.get(4),
                bench_hash: row.get(5),
                received_at: crate::store::dates::fmt_time(chrono::Utc::now()),
            }),
            _ => None,
        };
        Ok(PushOutcome {
            status,
            rows_sent,
            records: row.get(6),
            conflicts: row.get(7),
            files,
            receipt,
        })
    })
}

fn last_refusal(fleet: &mut Fleet, bench: &str) -> Result<Option<String>, FleetError> {
    Ok(fleet
        .client
        .query_opt(
            "SELECT detail FROM fleet_refusals WHERE bench = $1 ORDER BY id DESC LIMIT 1",
            &[&bench],
        )?
        .map(|r| r.get(0)))
}

/// A NUL character cannot be stored in PostgreSQL text. Record images never hold one (their
/// canonical JSON writes it as \u0000); an audit row's own fields could only by a change
/// made behind shardlog's back, and such a row is refused here, before anything is sent.
fn check_storable(row: &ChainRow) -> Result<(), FleetError> {
    let fields = [
        ("time", Some(&row.at)),
        ("actor", Some(&row.actor)),
        ("entity", Some(&row.entity)),
        ("record key", Some(&row.entity_id)),
        ("operation", Some(&row.op)),
        ("image before", row.before.as_ref()),
        ("image after", row.after.as_ref()),
        ("previous hash", Some(&row.prev_hash)),
        ("hash", Some(&row.hash)),
    ];
    for (name, value) in fields {
        if value.is_some_and(|v| v.contains('\0')) {
            return Err(FleetError::Bench(format!(
                "audit row {}: its {name} holds a NUL character, which the fleet database cannot store; nothing was sent (run `shardlog verify`: shardlog never writes one there)",
                row.seq
            )));
        }
    }
    Ok(())
}

fn stage_rows(
    tx: &mut Transaction<'_>,
    conn: &Connection,
    from_seq: i64,
    to_seq: i64,
) -> Result<u64, FleetError> {
    let sink = tx.copy_in(
        "COPY push_entries (seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash)
         FROM STDIN (FORMAT binary)",
    )?;
    let types = [
        Type::INT8,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
        Type::TEXT,
    ];
    let mut writer = BinaryCopyInWriter::new(sink, &types);
    let mut n = 0u64;
    let mut failure: Option<FleetError> = None;
    outbox::for_each_row_until(conn, from_seq, to_seq, |row| {
        if let Err(e) = check_storable(&row) {
            failure = Some(e);
            return Err(crate::store::StoreError::Invalid {
                field: "audit".into(),
                message: "refused".into(),
            });
        }
        writer
            .write(&[
                &row.seq,
                &row.at,
                &row.actor,
                &row.entity,
                &row.entity_id,
                &row.op,
                &row.before,
                &row.after,
                &row.prev_hash,
                &row.hash,
            ])
            .map_err(|e| {
                failure = Some(FleetError::from(e));
                crate::store::StoreError::Database("copy".into())
            })?;
        n += 1;
        Ok(())
    })
    .map_err(|e| failure.take().unwrap_or_else(|| FleetError::from(e)))?;
    writer.finish()?;
    Ok(n)
}

fn stage_images(
    tx: &mut Transaction<'_>,
    conn: &Connection,
    bench: &str,
    listed: &std::collections::HashMap<String, HashSet<String>>,
) -> Result<(), FleetError> {
    if listed.is_empty() {
        return Ok(());
    }
    if listed
        .get(INCIDENT)
        .is_some_and(|ids| ids.len() >= super::push_facts::FACTS_FROM)
    {
        return super::push_facts::stage_images_with_facts(tx, conn, bench, listed);
    }
    let sink = tx.copy_in("COPY push_records (entity, id, image) FROM STDIN (FORMAT binary)")?;
    let mut writer = BinaryCopyInWriter::new(sink, &[Type::TEXT, Type::TEXT, Type::TEXT]);
    let mut failure: Option<FleetError> = None;
    outbox::for_each_listed_image(conn, listed, |entity, id, image| {
        writer.write(&[&entity, &id, &image]).map_err(|e| {
            failure = Some(FleetError::from(e));
            crate::store::StoreError::Database("copy".into())
        })
    })
    .map_err(|e| failure.take().unwrap_or_else(|| FleetError::from(e)))?;
    writer.finish()?;
    Ok(())
}

/// Send the attachment files of the incidents the push touches that the fleet lacks.
fn stage_files(
    tx: &mut Transaction<'_>,
    conn: &Connection,
    from_seq: i64,
    listed: &std::collections::HashMap<String, HashSet<String>>,
    dir: Option<&Path>,
) -> Result<u64, FleetError> {
    let Some(dir) = dir else { return Ok(0) };
    let mut touched: HashSet<String> = listed.get(INCIDENT).cloned().unwrap_or_default();
    outbox::for_each_row(conn, from_seq, |row| {
        if row.entity == INCIDENT {
            touched.insert(row.entity_id);
        }
        Ok(())
    })?;
    let hashes = outbox::attachment_hashes(conn, Some(&touched))?;
    if hashes.is_empty() {
        return Ok(0);
    }
    let present: HashSet<String> = tx
        .query(
            "SELECT sha256 FROM fleet_files WHERE sha256 = ANY($1)",
            &[&hashes],
        )?
        .into_iter()
        .map(|r| r.get(0))
        .collect();
    let mut n = 0;
    for sha in hashes.iter().filter(|h| !present.contains(*h)) {
        // a file missing here is for `verify` to report; the fleet then lacks it too
        let Ok(bytes) = std::fs::read(dir.join(sha)) else {
            continue;
        };
        tx.execute(
            "INSERT INTO push_files (sha256, bytes) VALUES ($1, $2)",
            &[sha, &bytes],
        )?;
        n += 1;
    }
    Ok(n)
}

/// The stored analyses of the incidents this push sends to another bench, as files named by
/// the SHA-256 of their canonical text (the digest the incident's image holds in their
/// place), those the fleet lacks.
fn stage_analyses(
    tx: &mut Transaction<'_>,
    conn: &Connection,
    from_seq: i64,
    to_seq: i64,
) -> Result<u64, FleetError> {
    let mut sent: Vec<String> = Vec::new();
    outbox::for_each_row_until(conn, from_seq, to_seq, |row| {
        if row.entity == crate::store::moves::TRANSFER && row.op == "insert" {
            let incident = row
                .after
                .as_deref()
                .and_then(|a| serde_json::from_str::<serde_json::Value>(a).ok())
                .and_then(|v| v.get("incident")?.as_str().map(str::to_string));
            sent.extend(incident);
        }
        Ok(())
    })?;
    let mut blobs: Vec<(String, String)> = Vec::new();
    for id in &sent {
        let Some(inc) = crate::store::incidents::load(conn, id)? else {
            continue;
        };
        for result in inc.examinations.iter().filter_map(|e| e.result.as_ref()) {
            let text = crate::store::canon::canonical_value(&result.analysis);
            blobs.push((crate::store::canon::sha256_hex(text.as_bytes()), text));
        }
    }
    if blobs.is_empty() {
        return Ok(0);
    }
    let hashes: Vec<&String> = blobs.iter().map(|(h, _)| h).collect();
    let present: HashSet<String> = tx
        .query(
            "SELECT sha256 FROM fleet_files WHERE sha256 = ANY($1)",
            &[&hashes],
        )?
        .into_iter()
        .map(|r| r.get(0))
        .collect();
    let mut n = 0;
    let mut staged = HashSet::new();
    for (sha, text) in &blobs {
        if present.contains(sha) || !staged.insert(sha.clone()) {
            continue;
        }
        tx.execute(
            "INSERT INTO push_files (sha256, bytes) VALUES ($1, $2)",
            &[sha, &text.as_bytes()],
        )?;
        n += 1;
    }
    Ok(n)
}
