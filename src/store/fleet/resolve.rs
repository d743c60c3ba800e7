//! `fleet resolve N`: the bench that owns an incident settles fleet conflict N with a new
//! edit that names it (keeping the fleet's version, or taking the version the fleet kept
//! aside), then syncs, so the fleet applies the edit and closes the conflict.

use super::status::Conflict;
use super::sync::{code_of, sync, SyncReport};
use super::{Fleet, FleetError};
use crate::store::audit::INCIDENT;
use crate::store::model::{Incident, Stamp};
use crate::store::{canon, Store};

/// What `fleet resolve` did.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ResolveReport {
    pub conflict: i64,
    pub reference: String,
    /// "fleet" (its version kept) or "bench" (the version kept aside taken).
    pub kept: String,
    /// The incident's revision after the resolving edit.
    pub revision: i64,
    /// Whether the fleet closed the conflict.
    pub closed: bool,
    pub sync: SyncReport,
}

fn open_conflict(fleet: &mut Fleet, id: i64, bench: &str) -> Result<Conflict, FleetError> {
    let c = fleet
        .conflict(id)?
        .ok_or_else(|| FleetError::Usage(format!("the fleet has no conflict {id}")))?;
    if let Some(at) = &c.resolved_at {
        return Err(FleetError::Bench(format!(
            "conflict {id} was resolved at {at}"
        )));
    }
    if c.entity != INCIDENT {
        return Err(FleetError::Bench(format!(
            "conflict {id} is on a {} record; only incident conflicts are settled with `fleet resolve`",
            c.entity
        )));
    }
    match c.owner.as_deref() {
        Some(owner) if owner == bench => Ok(c),
        Some(owner) => Err(FleetError::Bench(format!(
            "bench {owner} owns the incident of conflict {id}; only it can resolve the conflict"
        ))),
        None => Err(FleetError::Bench(format!(
            "the incident of conflict {id} is not in the fleet"
        ))),
    }
}

/// Resolve conflict `id` at this bench: sync, check, edit, sync.
pub fn resolve(
    store: &mut Store,
    url: &str,
    id: i64,
    take_other: bool,
    stamp: &Stamp,
) -> Result<ResolveReport, FleetError> {
    let bench = code_of(store)?;
    // this bench's pending rows first, and the fleet's version of the incident here
    sync(store, url)?;
    let mut fleet = Fleet::connect(url)?;
    fleet.check_schema()?;
    let c = open_conflict(&mut fleet, id, &bench)?;
    let local = store.find(&c.record_id)?.ok_or_else(|| {
        FleetError::Bench(format!(
            "this bench does not hold the incident of conflict {id}; sync and try again"
        ))
    })?;
    let current: Option<String> = fleet
        .client
        .query_opt(
            "SELECT image FROM fleet_records WHERE entity = 'incident' AND id = $1",
            &[&c.record_id],
        )?
        .and_then(|r| r.get(0));
    if current.as_deref() != Some(canon::incident_image(&local)?.as_str()) {
        return Err(FleetError::Bench(format!(
            "{} here is not the version the fleet holds; sync until it is, then resolve",
            local.reference
        )));
    }
    let other = if take_other {
        let decoded = c
            .bench_image
            .as_deref()
            .filter(|_| c.kind == "edit")
            .and_then(canon::decanonical)
            .and_then(|v| serde_json::from_value::<Incident>(v).ok());
        Some(decoded.ok_or_else(|| {
            FleetError::Usage(format!(
                "conflict {id} keeps no other version of the incident to take; resolve it without --take-other"
            ))
        })?)
    } else {
        None
    };
    let (saved, _) = store.resolve_conflict(&c.record_id, id, other.as_ref(), stamp)?;
    let report = sync(store, url)?;
    let closed = fleet.conflict(id)?.is_some_and(|c| c.resolved_at.is_some());
    Ok(ResolveReport {
        conflict: id,
        reference: saved.reference,
        kept: if take_other { "bench" } else { "fleet" }.into(),
        revision: saved.revision,
        closed,
        sync: report,
    })
}
