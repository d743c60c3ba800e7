//! A pull: the reference data other benches gave the fleet (lookup entries, sites, assets,
//! suppliers, products, lots, own materials), merged into this bench by code: a code this
//! bench lacks is added with the record's fleet key, a code it has keeps its own record. What
//! this bench took from the fleet follows the fleet afterwards: an own material moves to the
//! fleet's newer revision, a lookup entry to the label and retirement of the fleet's latest
//! change of that code (an entry this bench made or edited itself never changes). Exposure
//! rows of other benches are pulled apart from the bench's own (`pulled_exposure`, each with
//! its bench): a bench's rates divide its own incidents by its own panes in service, which
//! another bench's rows would inflate. Every change is audited here as coming from the
//! fleet (actor `fleet:pull`), in one transaction; the fleet witnesses those rows on the next
//! push but never applies them.
//!
//! A pull asks only for what the fleet accepted after the last pull (its receipt number is
//! kept in the bench's `meta` as `fleet_pulled`), except records this bench could not take yet
//! (a product whose supplier it lacks): the mark stays before the first of those, so the next
//! pull tries them again.

use rusqlite::{OptionalExtension, TransactionBehavior};
use serde::de::DeserializeOwned;

use super::{Fleet, FleetError};
use crate::store::audit::Chain;
use crate::store::model::*;
use crate::store::outbox::PULL_ACTOR;
use crate::store::pulled_exposure::{self, PulledExposure};
use crate::store::{canon, own_materials, refdata, OwnMaterial, Store, StoreError};

/// What a pull added to this bench.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct PullReport {
    pub lookups: u64,
    pub sites: u64,
    pub assets: u64,
    pub suppliers: u64,
    pub products: u64,
    pub lots: u64,
    pub materials: u64,
    /// Lookup entries taken from the fleet earlier, changed to the fleet's newer version.
    pub lookup_edits: u64,
    /// Exposure rows of other benches added or brought to the fleet's version (kept apart
    /// from this bench's own; never in its rates).
    pub exposure: u64,
}

impl PullReport {
    pub fn total(&self) -> u64 {
        self.lookups
            + self.sites
            + self.assets
            + self.suppliers
            + self.products
            + self.lots
            + self.materials
            + self.lookup_edits
            + self.exposure
    }
}

const PULLED: &str = "fleet_pulled";

/// The images of `entity` records other benches made, accepted after receipt `after`, oldest
/// first, each with the receipt that accepted it.
fn images(
    fleet: &mut Fleet,
    bench: &str,
    entity: &str,
    after: i64,
) -> Result<Vec<(i64, String)>, FleetError> {
    Ok(fleet
        .client
        .query(
            "SELECT fleet_seq, image FROM fleet_records
             WHERE entity = $1 AND origin <> $2 AND image IS NOT NULL AND fleet_seq > $3
             ORDER BY fleet_seq, id",
            &[&entity, &bench, &after],
        )?
        .into_iter()
        .map(|r| (r.get(0), r.get(1)))
        .collect())
}

/// The images of the exposure rows other benches recorded, accepted after receipt `after`,
/// oldest first, each with its receipt and the bench that recorded it.
fn exposure_images(
    fleet: &mut Fleet,
    bench: &str,
    after: i64,
) -> Result<Vec<(i64, String, String)>, FleetError> {
    Ok(fleet
        .client
        .query(
            "SELECT fleet_seq, origin, image FROM fleet_records
             WHERE entity = $1 AND origin <> $2 AND image IS NOT NULL AND fleet_seq > $3
             ORDER BY fleet_seq, id",
            &[&refdata::EXPOSURE, &bench, &after],
        )?
        .into_iter()
        .map(|r| (r.get(0), r.get(1), r.get(2)))
        .collect())
}

/// The receipt up to which this bench has pulled (0: never).
fn pulled_mark(conn: &rusqlite::Connection) -> Result<i64, StoreError> {
    use rusqlite::OptionalExtension;
    let v: Option<String> = conn
        .query_row("SELECT value FROM meta WHERE key = ?1", [PULLED], |r| {
            r.get(0)
        })
        .optional()?;
    Ok(v.and_then(|v| v.parse().ok()).unwrap_or(0))
}

fn decode<T: DeserializeOwned>(image: &str) -> Option<T> {
    let value = canon::decanonical(image)?;
    serde_json::from_value(value).ok()
}

/// Whether an insert added the record (false: the bench keeps its own, or cannot take it yet).
/// A record refused for what it refers to (a product of a supplier the fleet never described)
/// holds the pull mark before its receipt: the next pull tries it again.
fn taken(r: Result<(), StoreError>, seq: i64, retry: &mut i64) -> Result<bool, StoreError> {
    match r {
        Ok(()) => Ok(true),
        Err(StoreError::Duplicate { .. }) => Ok(false),
        Err(StoreError::Invalid { .. }) => {
            *retry = (*retry).min(seq - 1);
            Ok(false)
        }
        Err(e) => Err(e),
    }
}

/// [`taken`] for a writer that says itself whether it wrote.
fn taken_or_not(
    r: Result<bool, StoreError>,
    seq: i64,
    retry: &mut i64,
) -> Result<bool, StoreError> {
    match r {
        Ok(wrote) => Ok(wrote),
        Err(e) => taken(Err(e), seq, retry),
    }
}

/// Lookup entries this bench took from the fleet (its last audit row of the entry is a
/// pull's) follow the fleet's latest change of that code: label and retirement. `images`
/// are the fleet's images of other benches, oldest change first. Returns how many changed.
fn follow_lookup_edits(
    conn: &rusqlite::Connection,
    chain: &mut Chain,
    images: &[(i64, String)],
    stamp: &Stamp,
) -> Result<u64, StoreError> {
    let mut latest: std::collections::HashMap<String, LookupEntry> = Default::default();
    for e in images.iter().filter_map(|(_, i)| decode::<LookupEntry>(i)) {
        latest.insert(refdata::lookup_key(&e), e);
    }
    let mut n = 0;
    for here in refdata::load_lookups(conn, None)? {
        let key = refdata::lookup_key(&here);
        let Some(fleet) = latest.get(&key) else {
            continue;
        };
        if fleet.label == here.label && fleet.retired == here.retired {
            continue;
        }
        let last_actor: Option<String> = conn
            .query_row(
                "SELECT actor FROM audit WHERE entity = ?1 AND entity_id = ?2
                 ORDER BY seq DESC LIMIT 1",
                [refdata::LOOKUP, key.as_str()],
                |r| r.get(0),
            )
            .optional()?;
        if last_actor.as_deref() != Some(PULL_ACTOR) {
            continue;
        }
        let after = LookupEntry {
            label: fleet.label.clone(),
            retired: fleet.retired,
            ..here.clone()
        };
        crate::store::lookup_upkeep::replace(conn, chain, &here, &after, stamp)?;
        n += 1;
    }
    Ok(n)
}

/// Pull reference data. `pushed_to` is the last audit row the push sent; the answer's
/// second part is the bench's last row after the pull when nothing else wrote to the bench
/// since the push (None when something did).
pub(crate) fn pull(
    store: &mut Store,
    fleet: &mut Fleet,
    bench: &str,
    pushed_to: i64,
) -> Result<(PullReport, Option<i64>), FleetError> {
    let mark = pulled_mark(&store.conn)?;
    let top: i64 = fleet
        .client
        .query_one(
            "SELECT coalesce(max(fleet_seq), 0)::bigint FROM fleet_receipts",
            &[],
        )?
        .get(0);
    let mut report = PullReport::default();
    if top <= mark {
        let (seq, _) = store.audit_head_entry()?;
        return Ok((report, (seq == pushed_to).then_some(seq)));
    }
    let lookups = images(fleet, bench, refdata::LOOKUP, mark)?;
    let sites = images(fleet, bench, refdata::SITE, mark)?;
    let assets = images(fleet, bench, refdata::ASSET, mark)?;
    let suppliers = images(fleet, bench, refdata::SUPPLIER, mark)?;
    let products = images(fleet, bench, refdata::PRODUCT, mark)?;
    let lots = images(fleet, bench, refdata::LOT, mark)?;
    let materials = images(fleet, bench, own_materials::MATERIAL, mark)?;
    let exposure = exposure_images(fleet, bench, mark)?;
    let stamp = Stamp::new(PULL_ACTOR, chrono::Utc::now());
    // the mark moves to the fleet's newest receipt, or stays before a record to try again
    let mut next = top;
    let tx = store
        .conn
        .transaction_with_behavior(TransactionBehavior::Immediate)
        .map_err(StoreError::from)?;
    let mut chain = Chain::load(&tx)?;
    let untouched = chain.seq() == pushed_to;
    // own materials first: each brings its own `material` lookup entry
    for (seq, i) in &materials {
        let Some(m) = decode::<OwnMaterial>(i) else {
            continue;
        };
        report.materials += u64::from(taken_or_not(
            own_materials::put_pulled(&tx, &mut chain, &m, &stamp),
            *seq,
            &mut next,
        )?);
    }
    for (seq, i) in &lookups {
        let Some(e) = decode::<LookupEntry>(i) else {
            continue;
        };
        report.lookups += u64::from(taken(
            refdata::insert_lookup(&tx, &mut chain, &e, &stamp),
            *seq,
            &mut next,
        )?);
    }
    for (seq, i) in &sites {
        let Some(s) = decode::<Site>(i) else { continue };
        if refdata::site_id(&tx, &s.code)?.is_none() {
            report.sites += u64::from(taken(
                refdata::insert_site(&tx, &mut chain, &s, &stamp),
                *seq,
                &mut next,
            )?);
        }
    }
    for (seq, i) in &suppliers {
        let Some(s) = decode::<Supplier>(i) else {
            continue;
        };
        if refdata::supplier_id(&tx, &s.code)?.is_none() {
            report.suppliers += u64::from(taken(
                refdata::insert_supplier(&tx, &mut chain, &s, &stamp),
                *seq,
                &mut next,
            )?);
        }
    }
    for (seq, i) in &products {
        let Some(p) = decode::<Product>(i) else {
            continue;
        };
        report.products += u64::from(taken(
            refdata::insert_product(&tx, &mut chain, &p, &stamp),
            *seq,
            &mut next,
        )?);
    }
    for (seq, i) in &lots {
        let Some(l) = decode::<Lot>(i) else { continue };
        report.lots += u64::from(taken(
            refdata::insert_lot(&tx, &mut chain, &l, &stamp),
            *seq,
            &mut next,
        )?);
    }
    for (seq, i) in &assets {
        let Some(a) = decode::<Asset>(i) else {
            continue;
        };
        if refdata::asset_id(&tx, &a.code)?.is_none() {
            report.assets += u64::from(taken(
                refdata::insert_asset(&tx, &mut chain, &a, &stamp),
                *seq,
                &mut next,
            )?);
        }
    }
    // other benches' panes in service: apart from this bench's own, each with its bench
    for (seq, origin, i) in &exposure {
        let Some(e) = decode::<Exposure>(i) else {
            continue;
        };
        report.exposure += u64::from(taken_or_not(
            pulled_exposure::put(&tx, &mut chain, &PulledExposure::of(origin, e), &stamp),
            *seq,
            &mut next,
        )?);
    }
    report.lookup_edits = follow_lookup_edits(&tx, &mut chain, &lookups, &stamp)?;
    if report.total() > 0 {
        chain.finish(&tx)?;
    }
    if next > mark {
        tx.execute(
            "INSERT INTO meta (key, value) VALUES (?1, ?2)
             ON CONFLICT (key) DO UPDATE SET value = excluded.value",
            rusqlite::params![PULLED, next.to_string()],
        )
        .map_err(StoreError::from)?;
    }
    tx.commit().map_err(StoreError::from)?;
    if report.total() > 0 {
        store.load_lookups()?;
    }
    Ok((report, untouched.then_some(chain.seq())))
}
