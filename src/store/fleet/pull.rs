//! A pull: the reference data other benches gave the fleet (lookup entries, sites, assets,
//! suppliers, products, lots, own materials), merged into this bench by code:
//! a code this bench lacks is added with the record's fleet key, a code it has keeps its own
//! record. What this bench took from the fleet follows the fleet afterwards: an own material
//! moves to the fleet's newer revision, a lookup entry to the label and retirement of the
//! fleet's latest change of that code (an entry this bench made or edited itself never
//! changes). Exposure rows are not pulled: a bench's rates divide its own incidents by its
//! own panes in service, which another bench's rows would inflate. Every change is audited
//! here as coming from the fleet (actor `fleet:pull`), in one transaction; the fleet witnesses those rows on the next
//! push but never applies them.

use rusqlite::{OptionalExtension, TransactionBehavior};
use serde::de::DeserializeOwned;

use super::{Fleet, FleetError};
use crate::store::audit::Chain;
use crate::store::model::*;
use crate::store::outbox::PULL_ACTOR;
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
    }
}

/// The images of `entity` records other benches made, oldest first.
fn images(fleet: &mut Fleet, bench: &str, entity: &str) -> Result<Vec<String>, FleetError> {
    Ok(fleet
        .client
        .query(
            "SELECT image FROM fleet_records
             WHERE entity = $1 AND origin <> $2 AND image IS NOT NULL
             ORDER BY fleet_seq, id",
            &[&entity, &bench],
        )?
        .into_iter()
        .map(|r| r.get(0))
        .collect())
}

fn decode<T: DeserializeOwned>(image: &str) -> Option<T> {
    let value = canon::decanonical(image)?;
    serde_json::from_value(value).ok()
}

/// Whether an insert added the record (false: the bench keeps its own, or cannot take it yet).
fn taken(r: Result<(), StoreError>) -> Result<bool, StoreError> {
    match r {
        Ok(()) => Ok(true),
        // here already, or refers to what this bench does not have (a product of a supplier
        // the fleet never described): kept out, the next pull tries again
        Err(StoreError::Duplicate { .. } | StoreError::Invalid { .. }) => Ok(false),
        Err(e) => Err(e),
    }
}

/// Pull reference data. `pushed_to` is the last audit row the push sent; the answer's
/// second part is the bench's last row after the pull when nothing else wrote to the bench
/// since the push (None when something did).
/// [`taken`] for a writer that says itself whether it wrote.
fn taken_or_not(r: Result<bool, StoreError>) -> Result<bool, StoreError> {
    match r {
        Ok(wrote) => Ok(wrote),
        Err(StoreError::Duplicate { .. } | StoreError::Invalid { .. }) => Ok(false),
        Err(e) => Err(e),
    }
}

/// Lookup entries this bench took from the fleet (its last audit row of the entry is a
/// pull's) follow the fleet's latest change of that code: label and retirement. `images`
/// are the fleet's images of other benches, oldest change first. Returns how many changed.
fn follow_lookup_edits(
    conn: &rusqlite::Connection,
    chain: &mut Chain,
    images: &[String],
    stamp: &Stamp,
) -> Result<u64, StoreError> {
    let mut latest: std::collections::HashMap<String, LookupEntry> = Default::default();
    for e in images.iter().filter_map(|i| decode::<LookupEntry>(i)) {
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

pub(crate) fn pull(
    store: &mut Store,
    fleet: &mut Fleet,
    bench: &str,
    pushed_to: i64,
) -> Result<(PullReport, Option<i64>), FleetError> {
    let lookups = images(fleet, bench, refdata::LOOKUP)?;
    let sites = images(fleet, bench, refdata::SITE)?;
    let assets = images(fleet, bench, refdata::ASSET)?;
    let suppliers = images(fleet, bench, refdata::SUPPLIER)?;
    let products = images(fleet, bench, refdata::PRODUCT)?;
    let lots = images(fleet, bench, refdata::LOT)?;
    let materials = images(fleet, bench, own_materials::MATERIAL)?;
    let stamp = Stamp::new(PULL_ACTOR, chrono::Utc::now());
    let mut report = PullReport::default();
    let tx = store
        .conn
        .transaction_with_behavior(TransactionBehavior::Immediate)
        .map_err(StoreError::from)?;
    let mut chain = Chain::load(&tx)?;
    let untouched = chain.seq() == pushed_to;
    // own materials first: each brings its own `material` lookup entry
    for m in materials.iter().filter_map(|i| decode::<OwnMaterial>(i)) {
        report.materials += u64::from(taken_or_not(own_materials::put_pulled(
            &tx, &mut chain, &m, &stamp,
        ))?);
    }
    for e in lookups.iter().filter_map(|i| decode::<LookupEntry>(i)) {
        report.lookups += u64::from(taken(refdata::insert_lookup(&tx, &mut chain, &e, &stamp))?);
    }
    for s in sites.iter().filter_map(|i| decode::<Site>(i)) {
        if refdata::site_id(&tx, &s.code)?.is_none() {
            report.sites += u64::from(taken(refdata::insert_site(&tx, &mut chain, &s, &stamp))?);
        }
    }
    for s in suppliers.iter().filter_map(|i| decode::<Supplier>(i)) {
        if refdata::supplier_id(&tx, &s.code)?.is_none() {
            report.suppliers += u64::from(taken(refdata::insert_supplier(
                &tx, &mut chain, &s, &stamp,
            ))?);
        }
    }
    for p in products.iter().filter_map(|i| decode::<Product>(i)) {
        report.products += u64::from(taken(refdata::insert_product(&tx, &mut chain, &p, &stamp))?);
    }
    for l in lots.iter().filter_map(|i| decode::<Lot>(i)) {
        report.lots += u64::from(taken(refdata::insert_lot(&tx, &mut chain, &l, &stamp))?);
    }
    for a in assets.iter().filter_map(|i| decode::<Asset>(i)) {
        if refdata::asset_id(&tx, &a.code)?.is_none() {
            report.assets += u64::from(taken(refdata::insert_asset(&tx, &mut chain, &a, &stamp))?);
        }
    }
    report.lookup_edits = follow_lookup_edits(&tx, &mut chain, &lookups, &stamp)?;
    if report.total() > 0 {
        chain.finish(&tx)?;
        tx.commit().map_err(StoreError::from)?;
        store.load_lookups()?;
    }
    Ok((report, untouched.then_some(chain.seq())))
}
