//! The pull of incidents: those the fleet says this bench owns because another bench sent
//! them here (a transfer), in the version the fleet holds, with their children and the
//! attachment files they list. Each is put into this bench exactly as the fleet holds it
//! (same key, reference, revision and image), audited as coming from the fleet
//! (actor `fleet:pull`), so the bench's next edit is made on the fleet's version.

use std::collections::HashSet;

use rusqlite::TransactionBehavior;

use super::{Fleet, FleetError};
use crate::store::audit::Chain;
use crate::store::model::*;
use crate::store::outbox::PULL_ACTOR;
use crate::store::{canon, incidents, Store, StoreError};

/// What the pull of incidents did.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct IncidentPull {
    /// Incidents added to this bench or brought to the fleet's version.
    pub incidents: u64,
    /// Attachment files fetched from the fleet.
    pub files: u64,
    /// Incidents the fleet sent that this bench could not take, with why.
    pub kept_out: Vec<String>,
}

/// (id, image, digest) of every incident this bench owns in the fleet that was ever sent
/// from one bench to another.
fn owned_moved(fleet: &mut Fleet, bench: &str) -> Result<Vec<(String, String)>, FleetError> {
    Ok(fleet
        .client
        .query(
            "SELECT DISTINCT r.id, r.image
             FROM fleet_records t
             JOIN fleet_records r ON r.entity = 'incident' AND r.id = (t.image::jsonb ->> 'incident')
             WHERE t.entity = 'transfer' AND t.image IS NOT NULL
               AND r.owner = $1 AND r.image IS NOT NULL
             ORDER BY r.id",
            &[&bench],
        )?
        .into_iter()
        .map(|r| (r.get(0), r.get(1)))
        .collect())
}

/// Fetch the files `hashes` from the fleet into this bench's attachment folder (those it
/// lacks). Each is stored under the hash of what arrived, so a wrong file cannot take a
/// listed name.
fn fetch_files(
    store: &Store,
    fleet: &mut Fleet,
    hashes: &HashSet<String>,
) -> Result<u64, FleetError> {
    let Some(dir) = store.files_dir() else {
        return Ok(0);
    };
    let wanted: Vec<&String> = hashes.iter().filter(|h| !dir.join(h).exists()).collect();
    if wanted.is_empty() {
        return Ok(0);
    }
    let mut n = 0;
    for row in fleet.client.query(
        "SELECT sha256, bytes FROM fleet_files WHERE sha256 = ANY($1)",
        &[&wanted],
    )? {
        let (sha, bytes): (String, Vec<u8>) = (row.get(0), row.get(1));
        let stored = crate::store::files::put_bytes(dir, &bytes)?;
        if stored != sha {
            return Err(FleetError::Database(format!(
                "the fleet's file {} has other content (its SHA-256 is {stored})",
                &sha[..16.min(sha.len())]
            )));
        }
        n += 1;
    }
    Ok(n)
}

/// Put back each result's stored analysis, which the fleet's image holds only as
/// "sha256:<hex>" of its canonical text, from the fleet's files (the sending bench sent them
/// with the transfer). Some(why) when one is missing or does not read.
fn fetch_analyses(fleet: &mut Fleet, inc: &mut Incident) -> Result<Option<String>, FleetError> {
    for result in inc
        .examinations
        .iter_mut()
        .filter_map(|e| e.result.as_mut())
    {
        let Some(sha) = result
            .analysis
            .as_str()
            .and_then(|t| t.strip_prefix("sha256:"))
            .map(str::to_string)
        else {
            continue;
        };
        let bytes: Option<Vec<u8>> = fleet
            .client
            .query_opt("SELECT bytes FROM fleet_files WHERE sha256 = $1", &[&sha])?
            .map(|r| r.get(0));
        let value = bytes
            .and_then(|b| String::from_utf8(b).ok())
            .and_then(|t| canon::decanonical(&t));
        match value {
            Some(v) => result.analysis = v,
            None => {
                return Ok(Some(format!(
                    "the fleet lacks the stored analysis {} of one of its results",
                    &sha[..16.min(sha.len())]
                )))
            }
        }
    }
    Ok(None)
}

/// Pull the incidents sent to `bench`. `expected_head` is the bench's last audit row after
/// the push and the pull of reference data (None when something else wrote to the bench
/// meanwhile): when the bench has written since, nothing is replaced now (the next sync
/// pushes that write first, then pulls).
pub(crate) fn pull_incidents(
    store: &mut Store,
    fleet: &mut Fleet,
    bench: &str,
    expected_head: Option<i64>,
) -> Result<IncidentPull, FleetError> {
    let mut report = IncidentPull::default();
    let wait = "incidents sent to this bench wait for the next sync: the bench was written to during this one";
    let moved = owned_moved(fleet, bench)?;
    // the fleet's versions this bench does not hold yet
    let mut wanted: Vec<Incident> = Vec::new();
    for (id, image) in moved {
        let here = incidents::load(&store.conn, &id)?;
        if let Some(local) = &here {
            if canon::incident_image(local)? == image {
                continue;
            }
        }
        let decoded =
            canon::decanonical(&image).and_then(|v| serde_json::from_value::<Incident>(v).ok());
        match decoded {
            Some(mut inc) if inc.id == id => match fetch_analyses(fleet, &mut inc)? {
                None => wanted.push(inc),
                Some(why) => report.kept_out.push(format!("{}: {why}", inc.reference)),
            },
            _ => report.kept_out.push(format!(
                "incident {id}: the fleet's version cannot be read here"
            )),
        }
    }
    if wanted.is_empty() {
        return Ok(report);
    }
    let hashes: HashSet<String> = wanted
        .iter()
        .flat_map(|i| i.attachments.iter().map(|a| a.sha256.clone()))
        .collect();
    report.files = fetch_files(store, fleet, &hashes)?;
    let stamp = Stamp::new(PULL_ACTOR, chrono::Utc::now());
    let Store { conn, ids, .. } = store;
    let tx = conn
        .transaction_with_behavior(TransactionBehavior::Immediate)
        .map_err(StoreError::from)?;
    let mut chain = Chain::load(&tx)?;
    if Some(chain.seq()) != expected_head {
        report.kept_out.push(wait.into());
        return Ok(report);
    }
    for inc in &wanted {
        let taken_by: Option<String> = tx
            .query_row(
                "SELECT id FROM incidents WHERE reference = ?1 AND id <> ?2",
                [&inc.reference, &inc.id],
                |r| r.get(0),
            )
            .ok();
        if taken_by.is_some() {
            report.kept_out.push(format!(
                "{}: another incident of this bench has that reference",
                inc.reference
            ));
            continue;
        }
        if incidents::put_from_fleet(&tx, &mut chain, ids, inc, &stamp)? {
            report.incidents += 1;
        }
    }
    if report.incidents > 0 {
        chain.finish(&tx)?;
        tx.commit().map_err(StoreError::from)?;
    }
    Ok(report)
}
