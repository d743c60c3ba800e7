//! Bench practice kept beside the records: the heat-soak record of a lot, and the table of
//! least fragment counts of thermally toughened glass that a lab keeps for its edition of
//! the standard. Each change is one transaction with its audit row.

use rusqlite::{params, Connection};

use super::audit::Chain;
use super::canon;
use super::dates::fmt_date;
use super::model::*;
use super::refdata::{self, LOT};
use super::{Store, StoreError, MIGRATION_AT};
pub use shardlog_core::fracture::fragmentation::FragmentationMinimum;

/// The audit entity of a row of the fragmentation table. The rows are audited as entries of a
/// lookup list (key `fragmentation_minimum/…`): every bench seeds the same rows, and the fleet
/// keeps lookup entries per bench, where records of any other kind must have one origin.
pub(crate) const FRAGMENTATION_MINIMUM: &str = refdata::LOOKUP;

/// The audit key of a row: its thickness range in micrometres
/// ("fragmentation_minimum/4000-12000").
fn minimum_key(m: &FragmentationMinimum) -> String {
    format!(
        "fragmentation_minimum/{}-{}",
        (m.thickness_from_m * 1e6).round() as i64,
        (m.thickness_to_m * 1e6).round() as i64
    )
}

pub(crate) fn load_minimums(conn: &Connection) -> Result<Vec<FragmentationMinimum>, StoreError> {
    let mut stmt = conn.prepare_cached(
        "SELECT thickness_from_m, thickness_to_m, min_count, provenance
         FROM fragmentation_minimum ORDER BY thickness_from_m, thickness_to_m",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok(FragmentationMinimum {
            thickness_from_m: r.get(0)?,
            thickness_to_m: r.get(1)?,
            min_count: r.get(2)?,
            provenance: r.get(3)?,
        })
    })?;
    Ok(rows.collect::<Result<_, _>>()?)
}

/// The images `verify` compares with the last audited ones: (entity, key, shown, image).
pub(crate) fn minimum_images(
    conn: &Connection,
) -> Result<Vec<(&'static str, String, String, String)>, StoreError> {
    let mut out = Vec::new();
    for m in load_minimums(conn)? {
        let key = minimum_key(&m);
        out.push((
            FRAGMENTATION_MINIMUM,
            key.clone(),
            key,
            canon::canonical(&m)?,
        ));
    }
    Ok(out)
}

/// Audit what the bench-practice migration seeds (the viewing modes and the fragmentation
/// minimums), as written by "schema 0008". Runs in that migration's transaction.
pub(crate) fn audit_seeded(conn: &Connection) -> Result<(), StoreError> {
    let modes = refdata::load_lookups(conn, Some(LookupKind::ViewingMode))?;
    let minimums = load_minimums(conn)?;
    let mut chain = Chain::load(conn)?;
    for e in &modes {
        chain.append(
            conn,
            MIGRATION_AT,
            "schema 0008",
            refdata::LOOKUP,
            &refdata::lookup_key(e),
            "insert",
            None,
            Some(&canon::canonical(e)?),
        )?;
    }
    for m in &minimums {
        chain.append(
            conn,
            MIGRATION_AT,
            "schema 0008",
            FRAGMENTATION_MINIMUM,
            &minimum_key(m),
            "insert",
            None,
            Some(&canon::canonical(m)?),
        )?;
    }
    chain.finish(conn)
}

fn check_heat_soak(h: &HeatSoak) -> Result<(), StoreError> {
    if h.reference.chars().any(char::is_control) {
        return Err(StoreError::invalid(
            "heat-soak reference",
            "must not contain control characters",
        ));
    }
    if h.reference.chars().count() > 200 {
        return Err(StoreError::invalid(
            "heat-soak reference",
            "is longer than 200 characters",
        ));
    }
    if !h.soaked && (h.on.is_some() || !h.reference.is_empty()) {
        return Err(StoreError::invalid(
            "heat-soak",
            "a lot that was not heat-soaked has no test date or certificate",
        ));
    }
    Ok(())
}

/// Write the heat-soak record of the lot `supplier/product/code` (None: not known), with
/// its audit row; unchanged records write nothing.
pub(crate) fn put_lot_heat_soak(
    conn: &Connection,
    chain: &mut Chain,
    supplier: &str,
    product: &str,
    code: &str,
    heat_soak: Option<&HeatSoak>,
    stamp: &Stamp,
) -> Result<Lot, StoreError> {
    if let Some(h) = heat_soak {
        check_heat_soak(h)?;
    }
    let before = refdata::load_lots(conn, Some(supplier), Some(product))?
        .into_iter()
        .find(|l| l.code == code)
        .ok_or_else(|| {
            StoreError::invalid(
                "lot",
                format!("no lot {supplier}/{product}/{code} is recorded"),
            )
        })?;
    let after = Lot {
        heat_soak: heat_soak.cloned(),
        ..before.clone()
    };
    if after == before {
        return Ok(after);
    }
    conn.prepare_cached(
        "UPDATE lots SET heat_soaked = ?2, heat_soak_on = ?3, heat_soak_ref = ?4 WHERE id = ?1",
    )?
    .execute(params![
        after.id,
        heat_soak.map(|h| i64::from(h.soaked)),
        heat_soak.and_then(|h| h.on).map(fmt_date),
        heat_soak.map_or("", |h| h.reference.as_str())
    ])?;
    chain.record(
        conn,
        stamp,
        LOT,
        &after.id,
        Some(&canon::canonical(&before)?),
        Some(&canon::canonical(&after)?),
    )?;
    Ok(after)
}

fn check_minimum(m: &FragmentationMinimum) -> Result<(), StoreError> {
    let field = "fragmentation minimum";
    let ok = |t: f64| t.is_finite() && t > 0.0 && t < 0.1;
    if !ok(m.thickness_from_m) || !ok(m.thickness_to_m) {
        return Err(StoreError::invalid(
            field,
            "thicknesses must be above 0 and below 100 mm",
        ));
    }
    if m.thickness_to_m < m.thickness_from_m {
        return Err(StoreError::invalid(
            field,
            "the range must not end below its start",
        ));
    }
    if m.min_count < 1 {
        return Err(StoreError::invalid(field, "the count must be 1 or more"));
    }
    if m.provenance.trim().is_empty() || m.provenance.chars().any(char::is_control) {
        return Err(StoreError::invalid(
            field,
            "the provenance must say where the row comes from (no control characters)",
        ));
    }
    Ok(())
}

impl Store {
    /// Set (or clear, with None) the heat-soak record of a lot.
    pub fn set_lot_heat_soak(
        &mut self,
        supplier: &str,
        product: &str,
        code: &str,
        heat_soak: Option<&HeatSoak>,
        stamp: &Stamp,
    ) -> Result<Lot, StoreError> {
        self.write_one(stamp, |c, ch| {
            put_lot_heat_soak(c, ch, supplier, product, code, heat_soak, stamp)
        })
    }

    /// The table of least fragment counts, thinnest first.
    pub fn fragmentation_minimums(&self) -> Result<Vec<FragmentationMinimum>, StoreError> {
        load_minimums(&self.conn)
    }

    /// Add a row to the fragmentation table, or replace the row of the same thickness range.
    /// A range that overlaps another row is refused (a thickness must find one minimum).
    pub fn set_fragmentation_minimum(
        &mut self,
        row: &FragmentationMinimum,
        stamp: &Stamp,
    ) -> Result<(), StoreError> {
        check_minimum(row)?;
        let key = minimum_key(row);
        self.write_one(stamp, |c, ch| {
            let rows = load_minimums(c)?;
            let before = rows.iter().find(|m| minimum_key(m) == key).cloned();
            if let Some(o) = rows.iter().find(|m| {
                minimum_key(m) != key
                    && m.thickness_from_m <= row.thickness_to_m + 1e-9
                    && row.thickness_from_m <= m.thickness_to_m + 1e-9
            }) {
                return Err(StoreError::invalid(
                    "fragmentation minimum",
                    format!(
                        "the range overlaps the row for {}",
                        shardlog_core::fracture::fragmentation::range_text(o)
                    ),
                ));
            }
            if before.as_ref() == Some(row) {
                return Ok(());
            }
            c.prepare_cached(
                "INSERT INTO fragmentation_minimum (thickness_from_m, thickness_to_m, min_count, provenance)
                 VALUES (?1, ?2, ?3, ?4)
                 ON CONFLICT (thickness_from_m, thickness_to_m)
                 DO UPDATE SET min_count = excluded.min_count, provenance = excluded.provenance",
            )?
            .execute(params![
                row.thickness_from_m,
                row.thickness_to_m,
                row.min_count,
                row.provenance
            ])?;
            let before_img = before.as_ref().map(canon::canonical).transpose()?;
            ch.record(
                c,
                stamp,
                FRAGMENTATION_MINIMUM,
                &key,
                before_img.as_deref(),
                Some(&canon::canonical(row)?),
            )
        })
    }

    /// Remove the row of a thickness range.
    pub fn remove_fragmentation_minimum(
        &mut self,
        thickness_from_m: f64,
        thickness_to_m: f64,
        stamp: &Stamp,
    ) -> Result<(), StoreError> {
        self.write_one(stamp, |c, ch| {
            let rows = load_minimums(c)?;
            let probe = FragmentationMinimum {
                thickness_from_m,
                thickness_to_m,
                min_count: 1,
                provenance: String::new(),
            };
            let key = minimum_key(&probe);
            let Some(before) = rows.into_iter().find(|m| minimum_key(m) == key) else {
                return Err(StoreError::invalid(
                    "fragmentation minimum",
                    format!(
                        "no row for {}",
                        shardlog_core::fracture::fragmentation::range_text(&probe)
                    ),
                ));
            };
            c.prepare_cached(
                "DELETE FROM fragmentation_minimum WHERE thickness_from_m = ?1 AND thickness_to_m = ?2",
            )?
            .execute(params![before.thickness_from_m, before.thickness_to_m])?;
            ch.record(
                c,
                stamp,
                FRAGMENTATION_MINIMUM,
                &key,
                Some(&canon::canonical(&before)?),
                None,
            )
        })
    }
}

/// The nickel sulfide comparison's view of the incidents found within the window (both
/// ends included; None: open) and the heat-soak class of every lot.
pub type SoakInput = (
    Vec<shardlog_core::fleet::heat_soak::SoakFacts>,
    Vec<(
        (String, String, String),
        shardlog_core::fleet::heat_soak::SoakClass,
    )>,
);

fn soak_class(v: Option<i64>) -> shardlog_core::fleet::heat_soak::SoakClass {
    use shardlog_core::fleet::heat_soak::SoakClass;
    match v {
        Some(0) => SoakClass::NotSoaked,
        Some(_) => SoakClass::Soaked,
        None => SoakClass::Unknown,
    }
}

impl Store {
    /// The incidents and lots the heat-soak comparison reads. An incident counts as a
    /// nickel sulfide failure when its cause or its origin type says so.
    pub fn soak_input(
        &self,
        since: Option<chrono::NaiveDate>,
        until: Option<chrono::NaiveDate>,
    ) -> Result<SoakInput, StoreError> {
        use super::dates::parse_date;
        use shardlog_core::fleet::heat_soak::SoakFacts;
        let mut stmt = self.conn.prepare_cached(
            "SELECT l.heat_soaked, i.cause_category, i.origin_type, i.installed_on, i.broken_on,
                    i.found_on
             FROM incidents i LEFT JOIN lots l ON l.id = i.lot_id
             WHERE (?1 IS NULL OR i.found_on >= ?1) AND (?2 IS NULL OR i.found_on <= ?2)",
        )?;
        let rows = stmt.query_map(params![since.map(fmt_date), until.map(fmt_date)], |r| {
            Ok((
                r.get::<_, Option<i64>>(0)?,
                r.get::<_, Option<String>>(1)?,
                r.get::<_, Option<String>>(2)?,
                r.get::<_, Option<String>>(3)?,
                r.get::<_, Option<String>>(4)?,
                r.get::<_, String>(5)?,
            ))
        })?;
        let mut facts = Vec::new();
        for row in rows {
            let (soaked, cause, origin, installed, broken, found) = row?;
            let Some(found) = parse_date(&found) else {
                continue;
            };
            facts.push(SoakFacts {
                class: soak_class(soaked),
                nickel_sulfide: cause.as_deref() == Some("nickel_sulfide")
                    || origin.as_deref() == Some("inclusion_nis"),
                installed_on: installed.as_deref().and_then(parse_date),
                broke_on: broken.as_deref().and_then(parse_date).unwrap_or(found),
            });
        }
        let lots = refdata::load_lots(&self.conn, None, None)?
            .into_iter()
            .map(|l| {
                let class = soak_class(l.heat_soak.as_ref().map(|h| i64::from(h.soaked)));
                ((l.supplier, l.product, l.code), class)
            })
            .collect();
        Ok((facts, lots))
    }
}

/// The fragmentation check of an incident: its fragment count against the table's minimum
/// for the thickness of its thermally toughened (fully tempered) ply. None when no count is
/// recorded or no ply is fully tempered with a thickness.
pub fn fragmentation_check(
    inc: &Incident,
    table: &[FragmentationMinimum],
) -> Option<shardlog_core::fracture::fragmentation::FragmentationCheck> {
    let count = inc.pattern.fragment_count?;
    let thickness = inc
        .glass
        .plies
        .iter()
        .find(|p| p.temper.as_deref() == Some("fully_tempered"))
        .and_then(|p| p.thickness_m)?;
    Some(shardlog_core::fracture::fragmentation::check(
        count, thickness, table,
    ))
}

/// Whole days from the install date to the breakage (else the day found), when both are
/// known and in order.
pub fn days_in_service(inc: &Incident) -> Option<i64> {
    let installed = inc.installed_on?;
    let broke = inc.broken_on.unwrap_or(inc.found_on);
    (installed <= broke).then(|| (broke - installed).num_days())
}
