//! A pull: the reference data other benches gave the fleet (lookup entries, sites, assets,
//! suppliers, products, lots), merged into this bench by code: a code this bench lacks is
//! added with the record's fleet key, a code it has keeps its own record. Every addition is
//! audited here as coming from the fleet (actor `fleet:pull`), in one transaction; the fleet
//! witnesses those rows on the next push but never applies them.

use rusqlite::TransactionBehavior;
use serde::de::DeserializeOwned;

use super::{Fleet, FleetError};
use crate::store::audit::Chain;
use crate::store::model::*;
use crate::store::outbox::PULL_ACTOR;
use crate::store::{canon, refdata, Store, StoreError};

/// What a pull added to this bench.
#[derive(Debug, Clone, Default, PartialEq, serde::Serialize)]
pub struct PullReport {
    pub lookups: u64,
    pub sites: u64,
    pub assets: u64,
    pub suppliers: u64,
    pub products: u64,
    pub lots: u64,
}

impl PullReport {
    pub fn total(&self) -> u64 {
        self.lookups + self.sites + self.assets + self.suppliers + self.products + self.lots
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
    let stamp = Stamp::new(PULL_ACTOR, chrono::Utc::now());
    let mut report = PullReport::default();
    let tx = store
        .conn
        .transaction_with_behavior(TransactionBehavior::Immediate)
        .map_err(StoreError::from)?;
    let mut chain = Chain::load(&tx)?;
    let untouched = chain.seq() == pushed_to;
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
    if report.total() > 0 {
        chain.finish(&tx)?;
        tx.commit().map_err(StoreError::from)?;
        store.load_lookups()?;
    }
    Ok((report, untouched.then_some(chain.seq())))
}
