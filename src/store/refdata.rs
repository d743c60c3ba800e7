//! Reference data: sites, assets, suppliers, products, lots, exposure and lookup lists.
//! Codes are fixed once created (records refer to them); names may change.

use std::collections::{HashMap, HashSet};

use chrono::NaiveDate;
use rusqlite::{params, Connection, OptionalExtension, TransactionBehavior};

use super::audit::Chain;
use super::canon;
use super::dates::{fmt_date, parse_date};
use super::model::*;
use super::{Store, StoreError, MIGRATION_AT};

pub(crate) const SITE: &str = "site";
pub(crate) const ASSET: &str = "asset";
pub(crate) const SUPPLIER: &str = "supplier";
pub(crate) const PRODUCT: &str = "product";
pub(crate) const LOT: &str = "lot";
pub(crate) const EXPOSURE: &str = "exposure";
pub(crate) const LOOKUP: &str = "lookup";

pub(crate) fn lookup_key(e: &LookupEntry) -> String {
    format!("{}/{}", e.kind.as_str(), e.code)
}

fn date_col(s: Option<String>) -> Option<NaiveDate> {
    s.as_deref().and_then(parse_date)
}

/// Audit the lookup entries that migration 0001 seeds, as written by "schema 0001". Runs in
/// that migration's transaction, before the `retired` column exists (none is retired then).
pub(crate) fn seed_lookup_audit(conn: &Connection) -> Result<(), StoreError> {
    let mut stmt = conn.prepare(
        "SELECT kind, code, label, sort_order, note FROM lookup ORDER BY kind, sort_order, code",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, String>(2)?,
            r.get::<_, i64>(3)?,
            r.get::<_, String>(4)?,
        ))
    })?;
    let mut entries = Vec::new();
    for row in rows {
        let (k, code, label, sort_order, note) = row?;
        if let Some(kind) = LookupKind::parse(&k) {
            entries.push(LookupEntry {
                kind,
                code,
                label,
                sort_order,
                note,
                retired: false,
            });
        }
    }
    drop(stmt);
    let mut chain = Chain::load(conn)?;
    for e in &entries {
        let img = canon::canonical(e)?;
        chain.append(
            conn,
            MIGRATION_AT,
            "schema 0001",
            LOOKUP,
            &lookup_key(e),
            "insert",
            None,
            Some(&img),
        )?;
    }
    chain.finish(conn)
}

pub(crate) fn load_lookups(
    conn: &Connection,
    kind: Option<LookupKind>,
) -> Result<Vec<LookupEntry>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT kind, code, label, sort_order, note, retired FROM lookup
         WHERE ?1 IS NULL OR kind = ?1 ORDER BY kind, sort_order, code",
    )?;
    let rows = stmt.query_map(params![kind.map(LookupKind::as_str)], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, String>(2)?,
            r.get::<_, i64>(3)?,
            r.get::<_, String>(4)?,
            r.get::<_, i64>(5)?,
        ))
    })?;
    let mut out = Vec::new();
    for row in rows {
        let (k, code, label, sort_order, note, retired) = row?;
        // an unknown kind (added by a newer build) is skipped, not an error
        if let Some(kind) = LookupKind::parse(&k) {
            out.push(LookupEntry {
                kind,
                code,
                label,
                sort_order,
                note,
                retired: retired != 0,
            });
        }
    }
    Ok(out)
}

pub(crate) fn load_sites(conn: &Connection) -> Result<Vec<Site>, StoreError> {
    let mut stmt = conn.prepare_cached("SELECT id, code, name, region FROM sites ORDER BY code")?;
    let rows = stmt.query_map([], |r| {
        Ok(Site {
            id: r.get(0)?,
            code: r.get(1)?,
            name: r.get(2)?,
            region: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

pub(crate) fn load_assets(conn: &Connection) -> Result<Vec<Asset>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT a.id, a.code, a.asset_type, a.name, s.code FROM assets a
         LEFT JOIN sites s ON s.id = a.site_id ORDER BY a.code",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok(Asset {
            id: r.get(0)?,
            code: r.get(1)?,
            asset_type: r.get(2)?,
            name: r.get(3)?,
            site: r.get(4)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

pub(crate) fn load_suppliers(conn: &Connection) -> Result<Vec<Supplier>, StoreError> {
    let mut stmt = conn.prepare_cached("SELECT id, code, name FROM suppliers ORDER BY code")?;
    let rows = stmt.query_map([], |r| {
        Ok(Supplier {
            id: r.get(0)?,
            code: r.get(1)?,
            name: r.get(2)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

pub(crate) fn load_products(
    conn: &Connection,
    supplier: Option<&str>,
) -> Result<Vec<Product>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT p.id, s.code, p.code, p.name FROM products p JOIN suppliers s ON s.id = p.supplier_id
         WHERE ?1 IS NULL OR s.code = ?1 ORDER BY s.code, p.code",
    )?;
    let rows = stmt.query_map(params![supplier], |r| {
        Ok(Product {
            id: r.get(0)?,
            supplier: r.get(1)?,
            code: r.get(2)?,
            name: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

pub(crate) fn load_lots(
    conn: &Connection,
    supplier: Option<&str>,
    product: Option<&str>,
) -> Result<Vec<Lot>, StoreError> {
    // a database held before schema 0008 (the upgrade tests) has no heat-soak columns
    let mut stmt = conn.prepare_cached(if super::sqlite::columns_present(conn) {
        "SELECT l.id, s.code, p.code, l.code, l.made_on, l.heat_soaked, l.heat_soak_on,
                l.heat_soak_ref FROM lots l
         JOIN products p ON p.id = l.product_id JOIN suppliers s ON s.id = p.supplier_id
         WHERE (?1 IS NULL OR s.code = ?1) AND (?2 IS NULL OR p.code = ?2)
         ORDER BY s.code, p.code, l.code"
    } else {
        "SELECT l.id, s.code, p.code, l.code, l.made_on, NULL, NULL, '' FROM lots l
         JOIN products p ON p.id = l.product_id JOIN suppliers s ON s.id = p.supplier_id
         WHERE (?1 IS NULL OR s.code = ?1) AND (?2 IS NULL OR p.code = ?2)
         ORDER BY s.code, p.code, l.code"
    })?;
    let rows = stmt.query_map(params![supplier, product], |r| {
        Ok(Lot {
            id: r.get(0)?,
            supplier: r.get(1)?,
            product: r.get(2)?,
            code: r.get(3)?,
            made_on: date_col(r.get(4)?),
            heat_soak: r.get::<_, Option<i64>>(5)?.map(|s| HeatSoak {
                soaked: s != 0,
                on: None,
                reference: String::new(),
            }),
        })
        .and_then(|mut lot: Lot| {
            if let Some(h) = lot.heat_soak.as_mut() {
                h.on = date_col(r.get(6)?);
                h.reference = r.get(7)?;
            }
            Ok(lot)
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

pub(crate) fn load_exposure(conn: &Connection) -> Result<Vec<Exposure>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT e.id, s.code, p.code, l.code, si.code, e.installed_on, e.removed_on, e.panes
         FROM exposure e JOIN suppliers s ON s.id = e.supplier_id
         LEFT JOIN products p ON p.id = e.product_id LEFT JOIN lots l ON l.id = e.lot_id
         LEFT JOIN sites si ON si.id = e.site_id
         ORDER BY s.code, p.code, l.code, si.code, e.installed_on, e.id",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, Option<String>>(2)?,
            r.get::<_, Option<String>>(3)?,
            r.get::<_, Option<String>>(4)?,
            r.get::<_, String>(5)?,
            r.get::<_, Option<String>>(6)?,
            r.get::<_, i64>(7)?,
        ))
    })?;
    let mut out = Vec::new();
    for row in rows {
        let (id, supplier, product, lot, site, inst, rem, panes) = row?;
        out.push(Exposure {
            id,
            supplier,
            product,
            lot,
            site,
            installed_on: parse_date(&inst).unwrap_or_default(),
            removed_on: date_col(rem),
            panes,
        });
    }
    Ok(out)
}

/// (entity, id, shown name, canonical image) of every reference record, for verify.
pub(crate) fn all_images(
    conn: &Connection,
) -> Result<Vec<(&'static str, String, String, String)>, StoreError> {
    let mut out = Vec::new();
    for s in load_sites(conn)? {
        out.push((SITE, s.id.clone(), s.code.clone(), canon::canonical(&s)?));
    }
    for a in load_assets(conn)? {
        out.push((ASSET, a.id.clone(), a.code.clone(), canon::canonical(&a)?));
    }
    for s in load_suppliers(conn)? {
        out.push((
            SUPPLIER,
            s.id.clone(),
            s.code.clone(),
            canon::canonical(&s)?,
        ));
    }
    for p in load_products(conn, None)? {
        let shown = format!("{}/{}", p.supplier, p.code);
        out.push((PRODUCT, p.id.clone(), shown, canon::canonical(&p)?));
    }
    for l in load_lots(conn, None, None)? {
        let shown = format!("{}/{}/{}", l.supplier, l.product, l.code);
        out.push((LOT, l.id.clone(), shown, canon::canonical(&l)?));
    }
    for e in load_exposure(conn)? {
        out.push((EXPOSURE, e.id.clone(), e.id.clone(), canon::canonical(&e)?));
    }
    Ok(out)
}

pub(crate) fn site_id(conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
    Ok(conn
        .prepare_cached("SELECT id FROM sites WHERE code = ?1")?
        .query_row([code], |r| r.get(0))
        .optional()?)
}

pub(crate) fn asset_id(conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
    Ok(conn
        .prepare_cached("SELECT id FROM assets WHERE code = ?1")?
        .query_row([code], |r| r.get(0))
        .optional()?)
}

pub(crate) fn supplier_id(conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
    Ok(conn
        .prepare_cached("SELECT id FROM suppliers WHERE code = ?1")?
        .query_row([code], |r| r.get(0))
        .optional()?)
}

pub(crate) fn product_id(
    conn: &Connection,
    supplier_id: &str,
    code: &str,
) -> Result<Option<String>, StoreError> {
    Ok(conn
        .prepare_cached("SELECT id FROM products WHERE supplier_id = ?1 AND code = ?2")?
        .query_row([supplier_id, code], |r| r.get(0))
        .optional()?)
}

pub(crate) fn lot_id(
    conn: &Connection,
    product_id: &str,
    code: &str,
) -> Result<Option<String>, StoreError> {
    Ok(conn
        .prepare_cached("SELECT id FROM lots WHERE product_id = ?1 AND code = ?2")?
        .query_row([product_id, code], |r| r.get(0))
        .optional()?)
}

pub(crate) fn check_code(field: &str, code: &str) -> Result<(), StoreError> {
    if code.trim().is_empty() {
        return Err(StoreError::invalid(field, "must not be empty"));
    }
    if code.trim() != code {
        return Err(StoreError::invalid(
            field,
            "must not start or end with spaces",
        ));
    }
    if code.chars().any(char::is_control) {
        return Err(StoreError::invalid(
            field,
            "must not contain control characters",
        ));
    }
    if code.len() > 200 {
        return Err(StoreError::invalid(field, "is longer than 200 bytes"));
    }
    Ok(())
}

/// Insert helpers shared by the API, import and the demo. Each writes one row and one
/// audit row; `id` must already be set.
pub(crate) fn insert_site(
    conn: &Connection,
    chain: &mut Chain,
    s: &Site,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("site code", &s.code)?;
    if site_id(conn, &s.code)?.is_some() {
        return Err(StoreError::Duplicate {
            what: "site".into(),
            code: s.code.clone(),
        });
    }
    conn.prepare_cached("INSERT INTO sites (id, code, name, region) VALUES (?1, ?2, ?3, ?4)")?
        .execute(params![s.id, s.code, s.name, s.region])?;
    chain.record(conn, stamp, SITE, &s.id, None, Some(&canon::canonical(s)?))
}

pub(crate) fn insert_asset(
    conn: &Connection,
    chain: &mut Chain,
    a: &Asset,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("asset code", &a.code)?;
    if asset_id(conn, &a.code)?.is_some() {
        return Err(StoreError::Duplicate {
            what: "asset".into(),
            code: a.code.clone(),
        });
    }
    let site = match &a.site {
        Some(code) => Some(site_id(conn, code)?.ok_or_else(|| {
            StoreError::invalid("asset site", format!("no site with code {code}"))
        })?),
        None => None,
    };
    conn.prepare_cached(
        "INSERT INTO assets (id, code, asset_type, name, site_id) VALUES (?1, ?2, ?3, ?4, ?5)",
    )?
    .execute(params![a.id, a.code, a.asset_type, a.name, site])?;
    chain.record(conn, stamp, ASSET, &a.id, None, Some(&canon::canonical(a)?))
}

pub(crate) fn insert_supplier(
    conn: &Connection,
    chain: &mut Chain,
    s: &Supplier,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("supplier code", &s.code)?;
    if supplier_id(conn, &s.code)?.is_some() {
        return Err(StoreError::Duplicate {
            what: "supplier".into(),
            code: s.code.clone(),
        });
    }
    conn.prepare_cached("INSERT INTO suppliers (id, code, name) VALUES (?1, ?2, ?3)")?
        .execute(params![s.id, s.code, s.name])?;
    chain.record(
        conn,
        stamp,
        SUPPLIER,
        &s.id,
        None,
        Some(&canon::canonical(s)?),
    )
}

pub(crate) fn insert_product(
    conn: &Connection,
    chain: &mut Chain,
    p: &Product,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("product code", &p.code)?;
    let sid = supplier_id(conn, &p.supplier)?.ok_or_else(|| {
        StoreError::invalid(
            "product supplier",
            format!("no supplier with code {}", p.supplier),
        )
    })?;
    if product_id(conn, &sid, &p.code)?.is_some() {
        return Err(StoreError::Duplicate {
            what: "product".into(),
            code: format!("{}/{}", p.supplier, p.code),
        });
    }
    conn.prepare_cached(
        "INSERT INTO products (id, supplier_id, code, name) VALUES (?1, ?2, ?3, ?4)",
    )?
    .execute(params![p.id, sid, p.code, p.name])?;
    chain.record(
        conn,
        stamp,
        PRODUCT,
        &p.id,
        None,
        Some(&canon::canonical(p)?),
    )
}

pub(crate) fn insert_lot(
    conn: &Connection,
    chain: &mut Chain,
    l: &Lot,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("lot code", &l.code)?;
    let sid = supplier_id(conn, &l.supplier)?.ok_or_else(|| {
        StoreError::invalid(
            "lot supplier",
            format!("no supplier with code {}", l.supplier),
        )
    })?;
    let pid = product_id(conn, &sid, &l.product)?.ok_or_else(|| {
        StoreError::invalid(
            "lot product",
            format!("supplier {} has no product {}", l.supplier, l.product),
        )
    })?;
    if lot_id(conn, &pid, &l.code)?.is_some() {
        return Err(StoreError::Duplicate {
            what: "lot".into(),
            code: format!("{}/{}/{}", l.supplier, l.product, l.code),
        });
    }
    if l.heat_soak.is_none() {
        // no heat-soak record: the columns keep their defaults (and a database held before
        // schema 0008, as the upgrade tests hold one, can take the row)
        conn.prepare_cached(
            "INSERT INTO lots (id, product_id, code, made_on) VALUES (?1, ?2, ?3, ?4)",
        )?
        .execute(params![l.id, pid, l.code, l.made_on.map(fmt_date)])?;
        return chain.record(conn, stamp, LOT, &l.id, None, Some(&canon::canonical(l)?));
    }
    conn.prepare_cached(
        "INSERT INTO lots (id, product_id, code, made_on, heat_soaked, heat_soak_on, heat_soak_ref)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
    )?
    .execute(params![
        l.id,
        pid,
        l.code,
        l.made_on.map(fmt_date),
        l.heat_soak.as_ref().map(|h| i64::from(h.soaked)),
        l.heat_soak.as_ref().and_then(|h| h.on).map(fmt_date),
        l.heat_soak.as_ref().map_or("", |h| h.reference.as_str())
    ])?;
    chain.record(conn, stamp, LOT, &l.id, None, Some(&canon::canonical(l)?))
}

pub(crate) fn insert_exposure(
    conn: &Connection,
    chain: &mut Chain,
    e: &Exposure,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    if e.panes < 0 {
        return Err(StoreError::invalid(
            "exposure panes",
            "must not be negative",
        ));
    }
    if let Some(r) = e.removed_on {
        if r < e.installed_on {
            return Err(StoreError::invalid(
                "exposure removed_on",
                "is before the installation date",
            ));
        }
    }
    let sid = supplier_id(conn, &e.supplier)?.ok_or_else(|| {
        StoreError::invalid(
            "exposure supplier",
            format!("no supplier with code {}", e.supplier),
        )
    })?;
    let pid = match &e.product {
        Some(p) => Some(product_id(conn, &sid, p)?.ok_or_else(|| {
            StoreError::invalid(
                "exposure product",
                format!("supplier {} has no product {p}", e.supplier),
            )
        })?),
        None => None,
    };
    let lid = match (&e.lot, &pid) {
        (Some(l), Some(pid)) => Some(lot_id(conn, pid, l)?.ok_or_else(|| {
            StoreError::invalid("exposure lot", format!("the product has no lot {l}"))
        })?),
        (Some(_), None) => {
            return Err(StoreError::invalid(
                "exposure lot",
                "a lot needs its product",
            ))
        }
        _ => None,
    };
    let site = match &e.site {
        Some(code) => Some(site_id(conn, code)?.ok_or_else(|| {
            StoreError::invalid("exposure site", format!("no site with code {code}"))
        })?),
        None => None,
    };
    conn.prepare_cached(
        "INSERT INTO exposure (id, supplier_id, product_id, lot_id, site_id, installed_on, removed_on, panes)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
    )?
    .execute(params![
        e.id,
        sid,
        pid,
        lid,
        site,
        fmt_date(e.installed_on),
        e.removed_on.map(fmt_date),
        e.panes
    ])?;
    chain.record(
        conn,
        stamp,
        EXPOSURE,
        &e.id,
        None,
        Some(&canon::canonical(e)?),
    )
}

pub(crate) fn insert_lookup(
    conn: &Connection,
    chain: &mut Chain,
    e: &LookupEntry,
    stamp: &Stamp,
) -> Result<(), StoreError> {
    check_code("lookup code", &e.code)?;
    if e.kind == LookupKind::CauseCategory && e.code.eq_ignore_ascii_case(NO_CAUSE) {
        return Err(StoreError::Invalid {
            field: "cause code".into(),
            message: format!("'{NO_CAUSE}' is kept for the filter of incidents with no cause"),
        });
    }
    let exists: Option<i64> = conn
        .prepare_cached("SELECT 1 FROM lookup WHERE kind = ?1 AND code = ?2")?
        .query_row(params![e.kind.as_str(), e.code], |r| r.get(0))
        .optional()?;
    if exists.is_some() {
        return Err(StoreError::Duplicate {
            what: format!("{} entry", e.kind.as_str()),
            code: e.code.clone(),
        });
    }
    conn.prepare_cached(
        "INSERT INTO lookup (kind, code, label, sort_order, note, retired)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
    )?
    .execute(params![
        e.kind.as_str(),
        e.code,
        e.label,
        e.sort_order,
        e.note,
        i64::from(e.retired)
    ])?;
    chain.record(
        conn,
        stamp,
        LOOKUP,
        &lookup_key(e),
        None,
        Some(&canon::canonical(e)?),
    )
}

/// (kind, code) of every lookup entry, asked without building owned keys (validation asks
/// a dozen times per incident).
#[derive(Debug, Clone, Default)]
pub(crate) struct LookupSet(HashMap<String, HashSet<String>>);

impl LookupSet {
    pub(crate) fn insert(&mut self, (kind, code): (String, String)) {
        self.0.entry(kind).or_default().insert(code);
    }
    pub(crate) fn contains(&self, kind: &str, code: &str) -> bool {
        self.0.get(kind).is_some_and(|codes| codes.contains(code))
    }
}

impl FromIterator<(String, String)> for LookupSet {
    fn from_iter<I: IntoIterator<Item = (String, String)>>(iter: I) -> Self {
        let mut set = LookupSet::default();
        for e in iter {
            set.insert(e);
        }
        set
    }
}

impl Store {
    pub(crate) fn load_lookups(&mut self) -> Result<(), StoreError> {
        let mut stmt = self.conn.prepare("SELECT kind, code FROM lookup")?;
        let set = stmt
            .query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))?
            .collect::<Result<LookupSet, _>>()?;
        drop(stmt);
        self.lookups = set;
        Ok(())
    }

    pub(crate) fn write_one<T>(
        &mut self,
        stamp: &Stamp,
        f: impl FnOnce(&Connection, &mut Chain) -> Result<T, StoreError>,
    ) -> Result<T, StoreError> {
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let mut chain = Chain::load(&tx)?;
        let _ = stamp;
        let out = f(&tx, &mut chain)?;
        chain.finish(&tx)?;
        tx.commit()?;
        Ok(out)
    }

    fn new_id(&mut self, id: &str, stamp: &Stamp) -> String {
        if id.is_empty() {
            self.ids.uuid_v7(stamp.at.timestamp_millis())
        } else {
            id.to_string()
        }
    }

    /// Add a supplier (an empty `id` gets a new key). The program itself adds suppliers by
    /// import or as codes met on an incident; this one-at-a-time form is kept for the tests
    /// that set up a fleet without a document to import.
    pub fn add_supplier(&mut self, s: &Supplier, stamp: &Stamp) -> Result<Supplier, StoreError> {
        let mut s = s.clone();
        s.id = self.new_id(&s.id, stamp);
        self.write_one(stamp, |c, ch| insert_supplier(c, ch, &s, stamp))?;
        Ok(s)
    }

    /// Add an exposure row (an empty `id` gets a new key). The program itself adds exposure
    /// by import; this one-at-a-time form is kept for the tests that set up a fleet's panes
    /// in service without a document to import.
    pub fn add_exposure(&mut self, e: &Exposure, stamp: &Stamp) -> Result<Exposure, StoreError> {
        let mut e = e.clone();
        e.id = self.new_id(&e.id, stamp);
        self.write_one(stamp, |c, ch| insert_exposure(c, ch, &e, stamp))?;
        Ok(e)
    }

    /// A lookup list for a pick-list, in its display order.
    pub fn lookups(&self, kind: LookupKind) -> Result<Vec<LookupEntry>, StoreError> {
        load_lookups(&self.conn, Some(kind))
    }

    /// Every lookup entry, all kinds.
    pub fn all_lookups(&self) -> Result<Vec<LookupEntry>, StoreError> {
        load_lookups(&self.conn, None)
    }

    pub fn sites(&self) -> Result<Vec<Site>, StoreError> {
        load_sites(&self.conn)
    }
    pub fn assets(&self) -> Result<Vec<Asset>, StoreError> {
        load_assets(&self.conn)
    }
    pub fn suppliers(&self) -> Result<Vec<Supplier>, StoreError> {
        load_suppliers(&self.conn)
    }
    /// Products, of one supplier if given.
    pub fn products(&self, supplier: Option<&str>) -> Result<Vec<Product>, StoreError> {
        load_products(&self.conn, supplier)
    }
    /// Lots, narrowed by supplier and product codes if given.
    pub fn lots(
        &self,
        supplier: Option<&str>,
        product: Option<&str>,
    ) -> Result<Vec<Lot>, StoreError> {
        load_lots(&self.conn, supplier, product)
    }
    /// Exposure rows (panes in service) for fleet rates.
    pub fn exposure(&self) -> Result<Vec<Exposure>, StoreError> {
        load_exposure(&self.conn)
    }
}
