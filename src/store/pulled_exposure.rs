//! Panes in service other benches of the fleet recorded, as a sync pulls them: kept apart from
//! this bench's own exposure (schema/0011_pulled_exposure.sql). The bench's rates divide its
//! own incidents by its own panes only, so these rows never enter them; `exposure list` shows
//! them, marked with the bench that recorded each. Written only by a pull, audited as coming
//! from the fleet (entity `pulled_exposure`), never pushed back as the bench's own.

use rusqlite::{params, Connection};

use super::audit::Chain;
use super::dates::{fmt_date, parse_date};
use super::model::{Exposure, Stamp};
use super::{canon, Store, StoreError};

/// Entity name of the audit rows written here.
pub(crate) const PULLED_EXPOSURE: &str = "pulled_exposure";

/// One exposure row of another bench, with that bench's code.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PulledExposure {
    /// The bench that recorded the row.
    pub bench: String,
    pub id: String,
    pub supplier: String,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub site: Option<String>,
    pub installed_on: chrono::NaiveDate,
    pub removed_on: Option<chrono::NaiveDate>,
    pub panes: i64,
}

impl PulledExposure {
    /// The row `e` as bench `bench` recorded it.
    pub fn of(bench: &str, e: Exposure) -> PulledExposure {
        PulledExposure {
            bench: bench.to_string(),
            id: e.id,
            supplier: e.supplier,
            product: e.product,
            lot: e.lot,
            site: e.site,
            installed_on: e.installed_on,
            removed_on: e.removed_on,
            panes: e.panes,
        }
    }
}

/// Every pulled row, by bench, then as `exposure list` orders the bench's own.
pub(crate) fn load(conn: &Connection) -> Result<Vec<PulledExposure>, StoreError> {
    load_where(conn, None)
}

/// The pulled rows (the one with key `id` when given).
fn load_where(conn: &Connection, id: Option<&str>) -> Result<Vec<PulledExposure>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT bench, id, supplier, product, lot, site, installed_on, removed_on, panes
         FROM pulled_exposure WHERE ?1 IS NULL OR id = ?1
         ORDER BY bench, supplier, product, lot, site, installed_on, id",
    )?;
    let rows = stmt.query_map([id], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, String>(2)?,
            r.get::<_, Option<String>>(3)?,
            r.get::<_, Option<String>>(4)?,
            r.get::<_, Option<String>>(5)?,
            r.get::<_, String>(6)?,
            r.get::<_, Option<String>>(7)?,
            r.get::<_, i64>(8)?,
        ))
    })?;
    let mut out = Vec::new();
    for row in rows {
        let (bench, id, supplier, product, lot, site, installed, removed, panes) = row?;
        out.push(PulledExposure {
            bench,
            id,
            supplier,
            product,
            lot,
            site,
            installed_on: parse_date(&installed).unwrap_or_default(),
            removed_on: removed.as_deref().and_then(parse_date),
            panes,
        });
    }
    Ok(out)
}

/// (entity, id, shown name, canonical image) of every pulled row, for verify.
pub(crate) fn all_images(
    conn: &Connection,
) -> Result<Vec<(&'static str, String, String, String)>, StoreError> {
    load(conn)?
        .into_iter()
        .map(|e| {
            let shown = format!("{} of bench {}", e.id, e.bench);
            Ok((PULLED_EXPOSURE, e.id.clone(), shown, canon::canonical(&e)?))
        })
        .collect()
}

/// Put a row the fleet holds into this bench: added when new, replaced when the fleet's
/// version differs. Returns whether anything changed.
pub(crate) fn put(
    conn: &Connection,
    chain: &mut Chain,
    e: &PulledExposure,
    stamp: &Stamp,
) -> Result<bool, StoreError> {
    if e.panes < 0 {
        return Err(StoreError::invalid(
            "pulled exposure panes",
            "must not be negative",
        ));
    }
    let before = load_where(conn, Some(&e.id))?.pop();
    if before.as_ref() == Some(e) {
        return Ok(false);
    }
    conn.execute(
        "INSERT INTO pulled_exposure (id, bench, supplier, product, lot, site, installed_on,
                                      removed_on, panes)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)
         ON CONFLICT (id) DO UPDATE SET bench = excluded.bench, supplier = excluded.supplier,
             product = excluded.product, lot = excluded.lot, site = excluded.site,
             installed_on = excluded.installed_on, removed_on = excluded.removed_on,
             panes = excluded.panes",
        params![
            e.id,
            e.bench,
            e.supplier,
            e.product,
            e.lot,
            e.site,
            fmt_date(e.installed_on),
            e.removed_on.map(fmt_date),
            e.panes
        ],
    )?;
    let before_image = before.as_ref().map(canon::canonical).transpose()?;
    chain.record(
        conn,
        stamp,
        PULLED_EXPOSURE,
        &e.id,
        before_image.as_deref(),
        Some(&canon::canonical(e)?),
    )?;
    Ok(true)
}

impl Store {
    /// Panes in service other benches recorded, pulled from the fleet (never in this
    /// bench's rates).
    pub fn pulled_exposure(&self) -> Result<Vec<PulledExposure>, StoreError> {
        load(&self.conn)
    }
}
