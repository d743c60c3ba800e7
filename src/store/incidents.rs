//! Incidents: write and read the whole aggregate, revision checks, the log listing with
//! keyset pagination, and the flat rows for fleet statistics.

use std::collections::{HashMap, HashSet};

use chrono::NaiveDate;
use rusqlite::types::{ToSqlOutput, Value as SqlValue, ValueRef};
use rusqlite::{params, params_from_iter, Connection, OptionalExtension, TransactionBehavior};
use shardlog_core::fleet::StressKind;

use super::audit::{fmt_time, parse_time, Chain, INCIDENT};
use super::canon;
use super::model::*;
use super::refdata::{self, fmt_date, parse_date};
use super::sqlite;
use super::{IdGen, Store, StoreError};

/// Foreign keys of an incident, resolved from its codes.
#[derive(Debug, Clone, Default)]
pub(crate) struct Refs {
    pub asset: Option<String>,
    pub site: Option<String>,
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
}

/// Keys of sites, assets, suppliers, products and lots by code, looked up (or created)
/// once per writing transaction: a bulk import resolves the same few codes for every row.
/// Valid only inside the transaction that filled it.
#[derive(Debug, Default)]
pub(crate) struct RefCache {
    sites: HashMap<String, String>,
    assets: HashMap<String, String>,
    suppliers: HashMap<String, String>,
    products: HashMap<(String, String), String>,
    lots: HashMap<(String, String), String>,
}

impl RefCache {
    fn site(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.sites,
            code,
            || code.to_string(),
            || refdata::site_id(conn, code),
        )
    }
    fn asset(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.assets,
            code,
            || code.to_string(),
            || refdata::asset_id(conn, code),
        )
    }
    fn supplier(&mut self, conn: &Connection, code: &str) -> Result<Option<String>, StoreError> {
        cached(
            &mut self.suppliers,
            code,
            || code.to_string(),
            || refdata::supplier_id(conn, code),
        )
    }
    fn product(
        &mut self,
        conn: &Connection,
        supplier_id: &str,
        code: &str,
    ) -> Result<Option<String>, StoreError> {
        let key = (supplier_id.to_string(), code.to_string());
        cached(
            &mut self.products,
            &key,
            || key.clone(),
            || refdata::product_id(conn, supplier_id, code),
        )
    }
    fn lot(
        &mut self,
        conn: &Connection,
        product_id: &str,
        code: &str,
    ) -> Result<Option<String>, StoreError> {
        let key = (product_id.to_string(), code.to_string());
        cached(
            &mut self.lots,
            &key,
            || key.clone(),
            || refdata::lot_id(conn, product_id, code),
        )
    }
}

/// The id `map` holds for `key`, else what `look` finds (kept when it finds one; a code that
/// names nothing is asked again, as it may be created meanwhile). `owned` makes the key to
/// keep, so a hit costs no allocation.
fn cached<K, Q>(
    map: &mut HashMap<K, String>,
    key: &Q,
    owned: impl FnOnce() -> K,
    look: impl FnOnce() -> Result<Option<String>, StoreError>,
) -> Result<Option<String>, StoreError>
where
    K: std::borrow::Borrow<Q> + Eq + std::hash::Hash,
    Q: Eq + std::hash::Hash + ?Sized,
{
    if let Some(id) = map.get(key) {
        return Ok(Some(id.clone()));
    }
    let id = look()?;
    if let Some(id) = &id {
        map.insert(owned(), id.clone());
    }
    Ok(id)
}

/// Columns kept for the log and statistics, derived from the aggregate.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Derived {
    pub stress_pa: Option<f64>,
    pub applied_stress_pa: Option<f64>,
    pub origin_type: Option<String>,
    pub temper: Option<String>,
}

pub(crate) fn derive(inc: &Incident) -> Derived {
    let current = inc.current_result();
    let origin_type = current
        .and_then(|(e, _)| e.origin_type.clone())
        .or_else(|| {
            inc.examinations
                .iter()
                .rev()
                .find_map(|e| e.origin_type.clone())
        });
    Derived {
        stress_pa: current.and_then(|(_, r)| r.stress_pa),
        applied_stress_pa: current.and_then(|(_, r)| r.applied_stress_pa),
        origin_type,
        temper: inc.glass.plies.first().and_then(|p| p.temper.clone()),
    }
}

/// The text that free-text search covers.
pub(crate) fn search_body(inc: &Incident) -> String {
    let mut parts: Vec<&str> = vec![&inc.reference, &inc.position, &inc.description, &inc.notes];
    if let Some(a) = &inc.asset {
        parts.push(a);
    }
    parts.push(&inc.reporter);
    parts.push(&inc.how_found);
    if let Some(c) = &inc.cause {
        parts.push(&c.note);
        for f in &c.factors {
            parts.push(f);
        }
    }
    for e in &inc.examinations {
        parts.push(&e.notes);
    }
    for c in &inc.custody {
        parts.push(&c.note);
    }
    for a in &inc.attachments {
        parts.push(&a.caption);
    }
    parts.retain(|p| !p.is_empty());
    parts.join("\n")
}

const COLS: [&str; 39] = [
    "id",
    "reference",
    "revision",
    "created_at",
    "updated_at",
    "asset_id",
    "position",
    "site_id",
    "found_on",
    "broken_on",
    "temperature_c",
    "sun",
    "weather",
    "reporter",
    "how_found",
    "supplier_id",
    "product_id",
    "lot_id",
    "makeup",
    "width_m",
    "height_m",
    "crack_count",
    "branching",
    "fragment_count",
    "origin_location",
    "tension_face",
    "cause_category",
    "cause_factors",
    "cause_confidence",
    "cause_responsibility",
    "cause_note",
    "status",
    "description",
    "notes",
    "stress_pa",
    "applied_stress_pa",
    "origin_type",
    "temper",
    "seq",
];

fn insert_sql() -> &'static str {
    static SQL: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    SQL.get_or_init(build_insert_sql)
}

fn update_sql() -> &'static str {
    static SQL: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    SQL.get_or_init(build_update_sql)
}

fn build_insert_sql() -> String {
    let cols = COLS[..38].join(", ");
    let qs: Vec<String> = (1..=38).map(|i| format!("?{i}")).collect();
    format!("INSERT INTO incidents ({cols}) VALUES ({})", qs.join(", "))
}

fn build_update_sql() -> String {
    let sets: Vec<String> = COLS[..38]
        .iter()
        .enumerate()
        .map(|(i, c)| format!("{c} = ?{}", i + 1))
        .collect();
    format!(
        "UPDATE incidents SET {} WHERE id = ?1 AND revision = ?39",
        sets.join(", ")
    )
}

fn t(s: &str) -> SqlValue {
    SqlValue::Text(s.to_string())
}
fn of(x: Option<f64>) -> SqlValue {
    x.map_or(SqlValue::Null, SqlValue::Real)
}

/// Column values of an incident row, in [`COLS`] order, borrowing the incident's text
/// (the few values that need formatting are held in `owned`).
struct RowValues<'a> {
    values: Vec<ToSqlOutput<'a>>,
}

/// Text values an incident row needs formatted (times, dates, the factor list).
struct RowText {
    created_at: String,
    updated_at: String,
    found_on: String,
    broken_on: Option<String>,
    factors: Option<String>,
}

fn row_text(inc: &Incident) -> Result<RowText, StoreError> {
    Ok(RowText {
        created_at: fmt_time(inc.created_at),
        updated_at: fmt_time(inc.updated_at),
        found_on: fmt_date(inc.found_on),
        broken_on: inc.broken_on.map(fmt_date),
        factors: match &inc.cause {
            Some(c) => Some(serde_json::to_string(&c.factors)?),
            None => None,
        },
    })
}

fn row_values<'a>(
    inc: &'a Incident,
    refs: &'a Refs,
    d: &'a Derived,
    owned: &'a RowText,
) -> RowValues<'a> {
    fn b(v: ValueRef<'_>) -> ToSqlOutput<'_> {
        ToSqlOutput::Borrowed(v)
    }
    fn t(s: &str) -> ToSqlOutput<'_> {
        b(ValueRef::Text(s.as_bytes()))
    }
    fn ot(s: Option<&str>) -> ToSqlOutput<'_> {
        s.map_or(b(ValueRef::Null), t)
    }
    fn ofr(x: Option<f64>) -> ToSqlOutput<'static> {
        b(x.map_or(ValueRef::Null, ValueRef::Real))
    }
    fn oi(x: Option<i64>) -> ToSqlOutput<'static> {
        b(x.map_or(ValueRef::Null, ValueRef::Integer))
    }
    let cause = inc.cause.as_ref();
    RowValues {
        values: vec![
            t(&inc.id),
            t(&inc.reference),
            b(ValueRef::Integer(inc.revision)),
            t(&owned.created_at),
            t(&owned.updated_at),
            ot(refs.asset.as_deref()),
            t(&inc.position),
            ot(refs.site.as_deref()),
            t(&owned.found_on),
            ot(owned.broken_on.as_deref()),
            ofr(inc.environment.temperature_c),
            t(&inc.environment.sun),
            t(&inc.environment.weather),
            t(&inc.reporter),
            t(&inc.how_found),
            ot(refs.supplier.as_deref()),
            ot(refs.product.as_deref()),
            ot(refs.lot.as_deref()),
            t(&inc.glass.makeup),
            ofr(inc.glass.width_m),
            ofr(inc.glass.height_m),
            oi(inc.pattern.crack_count),
            oi(inc.pattern.branching.map(i64::from)),
            oi(inc.pattern.fragment_count),
            ot(inc.pattern.origin_location.as_deref()),
            t(&inc.pattern.tension_face),
            ot(cause.map(|c| c.category.as_str())),
            ot(owned.factors.as_deref()),
            ot(cause.map(|c| c.confidence.as_str())),
            ot(cause.map(|c| c.responsibility.as_str())),
            ot(cause.map(|c| c.note.as_str())),
            t(&inc.status),
            t(&inc.description),
            t(&inc.notes),
            ofr(d.stress_pa),
            ofr(d.applied_stress_pa),
            ot(d.origin_type.as_deref()),
            ot(d.temper.as_deref()),
        ],
    }
}

fn insert_children(conn: &Connection, inc: &Incident) -> Result<(), StoreError> {
    {
        let mut ply = conn.prepare_cached(
            "INSERT INTO plies (incident_id, ply_no, material, temper, thickness_m, coating, edge_finish)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
        )?;
        for (i, p) in inc.glass.plies.iter().enumerate() {
            ply.execute(params![
                inc.id,
                i as i64 + 1,
                p.material,
                p.temper,
                p.thickness_m,
                p.coating,
                p.edge_finish
            ])?;
        }
    }
    for (i, e) in inc.examinations.iter().enumerate() {
        let flaw = e.flaw.as_ref();
        let depth = flaw.and_then(|f| f.depth.as_ref());
        let width = flaw.and_then(|f| f.width.as_ref());
        conn.prepare_cached(
            "INSERT INTO examinations (id, incident_id, exam_no, examined_on, analyst, origin_type, material,
                 flaw_present, flaw_depth_text, flaw_depth_unit, flaw_depth_m, flaw_width_text, flaw_width_unit,
                 flaw_width_m, flaw_shape, notes)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16)",
        )?
        .execute(params![
            e.id,
            inc.id,
            i as i64 + 1,
            e.examined_on.map(fmt_date),
            e.analyst,
            e.origin_type,
            e.material,
            flaw.is_some() as i64,
            depth.map(|m| m.text.as_str()),
            depth.map(|m| m.unit.as_str()),
            depth.map(|m| m.si),
            width.map(|m| m.text.as_str()),
            width.map(|m| m.unit.as_str()),
            width.map(|m| m.si),
            flaw.map_or("", |f| f.shape.as_str()),
            e.notes
        ])?;
        let mut rd = conn.prepare_cached(
            "INSERT INTO mirror_readings (examination_id, reading_no, boundary, value_text, unit, value_m,
                 magnification, analyst, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
        )?;
        for (j, r) in e.readings.iter().enumerate() {
            rd.execute(params![
                e.id,
                j as i64 + 1,
                r.boundary,
                r.radius.text,
                r.radius.unit,
                r.radius.si,
                r.magnification,
                r.analyst,
                r.note
            ])?;
        }
        if let Some(res) = &e.result {
            conn.prepare_cached(
                "INSERT INTO results (examination_id, computed_at, code_version, stress_pa, stress_low_pa,
                     stress_high_pa, residual_pa, applied_stress_pa, flaw_size_m, constants_json, analysis_json)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11)",
            )?
            .execute(params![
                e.id,
                fmt_time(res.computed_at),
                res.code_version,
                res.stress_pa,
                res.stress_low_pa,
                res.stress_high_pa,
                res.residual_pa,
                res.applied_stress_pa,
                res.flaw_size_m,
                serde_json::to_string(&res.constants)?,
                serde_json::to_string(&res.analysis)?
            ])?;
        }
    }
    {
        let mut cu = conn.prepare_cached(
            "INSERT INTO custody (id, incident_id, entry_no, at, action, who, location, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
        )?;
        for (i, c) in inc.custody.iter().enumerate() {
            cu.execute(params![
                c.id,
                inc.id,
                i as i64 + 1,
                fmt_time(c.at),
                c.action,
                c.who,
                c.location,
                c.note
            ])?;
        }
    }
    {
        let mut at = conn.prepare_cached(
            "INSERT INTO attachments (id, incident_id, entry_no, sha256, file_name, media_type, size_bytes,
                 caption, added_at)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)",
        )?;
        for (i, a) in inc.attachments.iter().enumerate() {
            at.execute(params![
                a.id,
                inc.id,
                i as i64 + 1,
                a.sha256,
                a.file_name,
                a.media_type,
                a.size_bytes,
                a.caption,
                fmt_time(a.added_at)
            ])?;
        }
    }
    Ok(())
}

fn delete_children(conn: &Connection, id: &str) -> Result<(), StoreError> {
    // results and readings go with their examinations (ON DELETE CASCADE is not relied
    // upon: the portable way is to delete children first)
    conn.prepare_cached(
        "DELETE FROM results WHERE examination_id IN (SELECT id FROM examinations WHERE incident_id = ?1)",
    )?
    .execute([id])?;
    conn.prepare_cached(
        "DELETE FROM mirror_readings WHERE examination_id IN (SELECT id FROM examinations WHERE incident_id = ?1)",
    )?
    .execute([id])?;
    for sql in [
        "DELETE FROM examinations WHERE incident_id = ?1",
        "DELETE FROM plies WHERE incident_id = ?1",
        "DELETE FROM custody WHERE incident_id = ?1",
        "DELETE FROM attachments WHERE incident_id = ?1",
    ] {
        conn.prepare_cached(sql)?.execute([id])?;
    }
    Ok(())
}

/// Insert a complete new incident (ids, reference, revision and times already set) and
/// its audit row. Returns its seq.
pub(crate) fn insert_new(
    conn: &Connection,
    chain: &mut Chain,
    inc: &Incident,
    refs: &Refs,
    stamp: &Stamp,
    bulk: Option<&mut super::audit::Bulk>,
) -> Result<i64, StoreError> {
    let seq = write_rows(conn, inc, refs)?;
    sqlite::fts_insert(conn, seq, &search_body(inc))?;
    let img = canon::incident_image(inc)?;
    match bulk {
        Some(b) => b.add(conn, chain, stamp, &inc.id, &img)?,
        None => chain.record(conn, stamp, INCIDENT, &inc.id, None, Some(&img))?,
    }
    Ok(seq)
}

/// A new incident made ready for a bulk load away from the database: its audit image digest
/// and its searchable text computed (the demo computes these on a second thread).
pub(crate) struct Prepared {
    pub inc: Incident,
    pub refs: Refs,
    pub stamp: Stamp,
    digest: String,
    body: String,
    derived: Derived,
    text: RowText,
}

pub(crate) fn prepare(inc: Incident, refs: Refs, stamp: Stamp) -> Result<Prepared, StoreError> {
    let img = canon::incident_image(&inc)?;
    Ok(Prepared {
        digest: canon::sha256_hex(img.as_bytes()),
        body: search_body(&inc),
        derived: derive(&inc),
        text: row_text(&inc)?,
        inc,
        refs,
        stamp,
    })
}

impl Prepared {
    /// The searchable text, for a caller that builds the text index itself
    /// ([`insert_prepared`] leaves it out).
    pub fn take_body(&mut self) -> String {
        std::mem::take(&mut self.body)
    }
}

/// [`insert_new`] of a [`Prepared`] incident: the same rows and the same audit (in a batch,
/// or, without one, its own audit row with the full image), except the text index: the
/// caller adds `(seq, into_body())` to it (the demo builds it on another thread).
pub(crate) fn insert_prepared(
    conn: &Connection,
    chain: &mut Chain,
    p: &Prepared,
    bulk: Option<&mut super::audit::Bulk>,
) -> Result<i64, StoreError> {
    let seq = write_rows_with(conn, &p.inc, &p.refs, &p.derived, &p.text)?;
    match bulk {
        Some(b) => b.add_digest(conn, chain, &p.stamp, &p.inc.id, p.digest.clone())?,
        None => {
            let img = canon::incident_image(&p.inc)?;
            chain.record(conn, &p.stamp, INCIDENT, &p.inc.id, None, Some(&img))?
        }
    }
    Ok(seq)
}

/// The incident row and its children; returns the row's seq.
fn write_rows(conn: &Connection, inc: &Incident, refs: &Refs) -> Result<i64, StoreError> {
    write_rows_with(conn, inc, refs, &derive(inc), &row_text(inc)?)
}

/// [`write_rows`] with the derived columns and formatted texts already made (by a
/// [`Prepared`] incident, on another thread).
fn write_rows_with(
    conn: &Connection,
    inc: &Incident,
    refs: &Refs,
    d: &Derived,
    owned: &RowText,
) -> Result<i64, StoreError> {
    let values = row_values(inc, refs, d, owned);
    conn.prepare_cached(insert_sql())?
        .execute(params_from_iter(values.values.iter()))
        .map_err(|e| match e {
            rusqlite::Error::SqliteFailure(f, _)
                if f.code == rusqlite::ErrorCode::ConstraintViolation =>
            {
                StoreError::Duplicate {
                    what: "incident".into(),
                    code: format!("{} ({})", inc.reference, inc.id),
                }
            }
            other => other.into(),
        })?;
    let seq = conn.last_insert_rowid();
    insert_children(conn, inc)?;
    Ok(seq)
}

/// The id of an incident given its reference or id.
pub(crate) fn resolve_key(conn: &Connection, key: &str) -> Result<String, StoreError> {
    let key = key.trim();
    conn.prepare_cached("SELECT id FROM incidents WHERE reference = ?1 OR id = ?1")?
        .query_row([key], |r| r.get::<_, String>(0))
        .optional()?
        .ok_or_else(|| StoreError::NotFound(key.to_string()))
}

/// Next free reference for a date found: "BR-YYMMDD-NNNN".
pub(crate) fn next_reference(conn: &Connection, found_on: NaiveDate) -> Result<String, StoreError> {
    let prefix = reference_prefix(found_on);
    let upper = format!("{prefix}~");
    let last: Option<String> = conn
        .prepare_cached(
            "SELECT reference FROM incidents WHERE reference >= ?1 AND reference < ?2
             ORDER BY reference DESC LIMIT 1",
        )?
        .query_row([&prefix, &upper], |r| r.get(0))
        .optional()?;
    let n = match last {
        Some(r) => r[prefix.len()..].parse::<u32>().unwrap_or(9999) + 1,
        None => 1,
    };
    format_reference(found_on, n)
}

pub(crate) fn reference_prefix(found_on: NaiveDate) -> String {
    format!("BR-{}-", found_on.format("%y%m%d"))
}

pub(crate) fn format_reference(found_on: NaiveDate, n: u32) -> Result<String, StoreError> {
    if n > 9999 {
        return Err(StoreError::invalid(
            "found_on",
            format!("more than 9999 incidents found on {found_on}"),
        ));
    }
    Ok(format!("{}{n:04}", reference_prefix(found_on)))
}

/// The columns [`incident_row`] reads: an incident with the codes of its site, asset,
/// supplier, product and lot (a macro so that the queries below can `concat!` it).
macro_rules! incident_select {
    () => {
        "SELECT i.seq, i.id, i.reference, i.revision, i.created_at, i.updated_at, a.code, i.position, s.code,
                i.found_on, i.broken_on, i.temperature_c, i.sun, i.weather, i.reporter, i.how_found,
                su.code, p.code, l.code, i.makeup, i.width_m, i.height_m, i.crack_count, i.branching,
                i.fragment_count, i.origin_location, i.tension_face, i.cause_category, i.cause_factors,
                i.cause_confidence, i.cause_responsibility, i.cause_note, i.status, i.description, i.notes,
                i.stress_pa, i.applied_stress_pa, i.origin_type, i.temper
         FROM incidents i
         LEFT JOIN assets a ON a.id = i.asset_id
         LEFT JOIN sites s ON s.id = i.site_id
         LEFT JOIN suppliers su ON su.id = i.supplier_id
         LEFT JOIN products p ON p.id = i.product_id
         LEFT JOIN lots l ON l.id = i.lot_id"
    };
}

/// Columns of a ply (table alias `p`), read by [`ply_row`].
macro_rules! ply_cols {
    () => {
        "p.material, p.temper, p.thickness_m, p.coating, p.edge_finish"
    };
}

/// Columns of an examination (alias `e`), read by [`exam_row`].
macro_rules! exam_cols {
    () => {
        "e.id, e.examined_on, e.analyst, e.origin_type, e.material, e.flaw_present, e.flaw_depth_text,
         e.flaw_depth_unit, e.flaw_depth_m, e.flaw_width_text, e.flaw_width_unit, e.flaw_width_m,
         e.flaw_shape, e.notes"
    };
}

/// Columns of a mirror reading (alias `m`), read by [`reading_row`].
macro_rules! reading_cols {
    () => {
        "m.boundary, m.value_text, m.unit, m.value_m, m.magnification, m.analyst, m.note"
    };
}

/// Columns of an examination's result (alias `r`), read by [`result_row`].
macro_rules! result_cols {
    () => {
        "r.computed_at, r.code_version, r.stress_pa, r.stress_low_pa, r.stress_high_pa, r.residual_pa,
         r.applied_stress_pa, r.flaw_size_m, r.constants_json, r.analysis_json"
    };
}

/// Columns of a custody entry (alias `c`), read by [`custody_row`].
macro_rules! custody_cols {
    () => {
        "c.id, c.at, c.action, c.who, c.location, c.note"
    };
}

/// Columns of an attachment (alias `t`), read by [`attachment_row`].
macro_rules! attachment_cols {
    () => {
        "t.id, t.sha256, t.file_name, t.media_type, t.size_bytes, t.caption, t.added_at"
    };
}

/// An incident row of [`incident_select`] (children empty), with its seq and derived columns.
fn incident_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<(i64, Incident, Derived)> {
    incident_row_with(r, &|k| r.get(k))
}

/// An incident row with the code of its asset, site, supplier, product and lot (columns 6,
/// 8, 16, 17, 18) given by `code(column)`.
fn incident_row_with(
    r: &rusqlite::Row<'_>,
    code: &dyn Fn(usize) -> rusqlite::Result<Option<String>>,
) -> rusqlite::Result<(i64, Incident, Derived)> {
    let time = |i: usize| -> rusqlite::Result<chrono::DateTime<chrono::Utc>> {
        let s: String = r.get(i)?;
        parse_time(&s).ok_or_else(|| {
            rusqlite::Error::FromSqlConversionFailure(
                i,
                rusqlite::types::Type::Text,
                format!("not a time: {s}").into(),
            )
        })
    };
    let date = |i: usize| -> rusqlite::Result<Option<NaiveDate>> {
        let s: Option<String> = r.get(i)?;
        match s {
            None => Ok(None),
            Some(s) => parse_date(&s).map(Some).ok_or_else(|| {
                rusqlite::Error::FromSqlConversionFailure(
                    i,
                    rusqlite::types::Type::Text,
                    format!("not a date: {s}").into(),
                )
            }),
        }
    };
    let cause_category: Option<String> = r.get(27)?;
    let factors: Option<String> = r.get(28)?;
    let cause = match cause_category {
        Some(category) => Some(Cause {
            category,
            factors: factors
                .as_deref()
                .and_then(|f| serde_json::from_str(f).ok())
                .unwrap_or_default(),
            confidence: r.get::<_, Option<String>>(29)?.unwrap_or_default(),
            responsibility: r.get::<_, Option<String>>(30)?.unwrap_or_default(),
            note: r.get::<_, Option<String>>(31)?.unwrap_or_default(),
        }),
        None => None,
    };
    let inc = Incident {
        id: r.get(1)?,
        reference: r.get(2)?,
        revision: r.get(3)?,
        created_at: time(4)?,
        updated_at: time(5)?,
        asset: code(6)?,
        position: r.get(7)?,
        site: code(8)?,
        found_on: date(9)?.unwrap_or_default(),
        broken_on: date(10)?,
        environment: Environment {
            temperature_c: r.get(11)?,
            sun: r.get(12)?,
            weather: r.get(13)?,
        },
        reporter: r.get(14)?,
        how_found: r.get(15)?,
        glass: Glass {
            supplier: code(16)?,
            product: code(17)?,
            lot: code(18)?,
            makeup: r.get(19)?,
            plies: Vec::new(),
            width_m: r.get(20)?,
            height_m: r.get(21)?,
        },
        pattern: FracturePattern {
            crack_count: r.get(22)?,
            branching: r.get::<_, Option<i64>>(23)?.map(|b| b != 0),
            fragment_count: r.get(24)?,
            origin_location: r.get(25)?,
            tension_face: r.get(26)?,
        },
        examinations: Vec::new(),
        cause,
        status: r.get(32)?,
        description: r.get(33)?,
        notes: r.get(34)?,
        custody: Vec::new(),
        attachments: Vec::new(),
    };
    let d = Derived {
        stress_pa: r.get(35)?,
        applied_stress_pa: r.get(36)?,
        origin_type: r.get(37)?,
        temper: r.get(38)?,
    };
    Ok((r.get::<_, i64>(0)?, inc, d))
}

fn load_row(conn: &Connection, id: &str) -> Result<Option<(i64, Incident, Derived)>, StoreError> {
    let mut stmt = conn.prepare_cached(concat!(incident_select!(), " WHERE i.id = ?1"))?;
    let row = stmt.query_row([id], incident_row).optional()?;
    let Some((seq, mut inc, d)) = row else {
        return Ok(None);
    };
    load_children(conn, &mut inc)?;
    Ok(Some((seq, inc, d)))
}

/// A text column borrowed from the row (no copy), None for NULL.
fn text_ref<'a>(r: &'a rusqlite::Row<'_>, k: usize) -> rusqlite::Result<Option<&'a str>> {
    match r.get_ref(k)? {
        rusqlite::types::ValueRef::Null => Ok(None),
        rusqlite::types::ValueRef::Text(b) => std::str::from_utf8(b)
            .map(Some)
            .map_err(|e| rusqlite::Error::Utf8Error(k, e)),
        _ => Err(bad_col(k, "text value", "another type")),
    }
}

fn bad_col(i: usize, what: &str, s: &str) -> rusqlite::Error {
    rusqlite::Error::FromSqlConversionFailure(
        i,
        rusqlite::types::Type::Text,
        format!("not a {what}: {s}").into(),
    )
}

fn ply_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Ply> {
    Ok(Ply {
        material: r.get(0)?,
        temper: r.get(1)?,
        thickness_m: r.get(2)?,
        coating: r.get(3)?,
        edge_finish: r.get(4)?,
    })
}

fn exam_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Examination> {
    let measured = |ti: usize| -> rusqlite::Result<Option<Measured>> {
        let text: Option<String> = r.get(ti)?;
        let unit: Option<String> = r.get(ti + 1)?;
        let si: Option<f64> = r.get(ti + 2)?;
        Ok(match (text, unit, si) {
            (Some(text), Some(unit), Some(si)) => Some(Measured { text, unit, si }),
            _ => None,
        })
    };
    let examined_on: Option<String> = r.get(1)?;
    let examined_on = match examined_on {
        Some(s) => Some(parse_date(&s).ok_or_else(|| bad_col(1, "date", &s))?),
        None => None,
    };
    let present: i64 = r.get(5)?;
    let flaw = if present != 0 {
        Some(FlawMeasurement {
            depth: measured(6)?,
            width: measured(9)?,
            shape: r.get(12)?,
        })
    } else {
        None
    };
    Ok(Examination {
        id: r.get(0)?,
        examined_on,
        analyst: r.get(2)?,
        origin_type: r.get(3)?,
        material: r.get(4)?,
        readings: Vec::new(),
        flaw,
        result: None,
        notes: r.get(13)?,
    })
}

fn reading_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<MirrorReading> {
    Ok(MirrorReading {
        boundary: r.get(0)?,
        radius: Measured {
            text: r.get(1)?,
            unit: r.get(2)?,
            si: r.get(3)?,
        },
        magnification: r.get(4)?,
        analyst: r.get(5)?,
        note: r.get(6)?,
    })
}

fn result_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<ComputedResult> {
    let at: String = r.get(0)?;
    let constants: String = r.get(8)?;
    let analysis: String = r.get(9)?;
    Ok(ComputedResult {
        computed_at: parse_time(&at).ok_or_else(|| bad_col(0, "time", &at))?,
        code_version: r.get(1)?,
        stress_pa: r.get(2)?,
        stress_low_pa: r.get(3)?,
        stress_high_pa: r.get(4)?,
        residual_pa: r.get(5)?,
        applied_stress_pa: r.get(6)?,
        flaw_size_m: r.get(7)?,
        constants: serde_json::from_str(&constants)
            .map_err(|_| bad_col(8, "JSON value", &constants))?,
        analysis: serde_json::from_str(&analysis)
            .map_err(|_| bad_col(9, "JSON value", "analysis"))?,
    })
}

fn custody_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<CustodyEntry> {
    let at: String = r.get(1)?;
    Ok(CustodyEntry {
        id: r.get(0)?,
        at: parse_time(&at).ok_or_else(|| bad_col(1, "time", &at))?,
        action: r.get(2)?,
        who: r.get(3)?,
        location: r.get(4)?,
        note: r.get(5)?,
    })
}

fn attachment_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Attachment> {
    let at: String = r.get(6)?;
    Ok(Attachment {
        id: r.get(0)?,
        sha256: r.get(1)?,
        file_name: r.get(2)?,
        media_type: r.get(3)?,
        size_bytes: r.get(4)?,
        caption: r.get(5)?,
        added_at: parse_time(&at).ok_or_else(|| bad_col(6, "time", &at))?,
    })
}

fn load_children(conn: &Connection, inc: &mut Incident) -> Result<(), StoreError> {
    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        ply_cols!(),
        " FROM plies p WHERE p.incident_id = ?1 ORDER BY p.ply_no"
    ))?;
    inc.glass.plies = stmt
        .query_map([&inc.id], ply_row)?
        .collect::<Result<_, _>>()?;

    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        exam_cols!(),
        " FROM examinations e WHERE e.incident_id = ?1 ORDER BY e.exam_no"
    ))?;
    inc.examinations = stmt
        .query_map([&inc.id], exam_row)?
        .collect::<Result<_, _>>()?;
    for e in &mut inc.examinations {
        let mut stmt = conn.prepare_cached(concat!(
            "SELECT ",
            reading_cols!(),
            " FROM mirror_readings m WHERE m.examination_id = ?1 ORDER BY m.reading_no"
        ))?;
        e.readings = stmt
            .query_map([&e.id], reading_row)?
            .collect::<Result<_, _>>()?;
        let mut stmt = conn.prepare_cached(concat!(
            "SELECT ",
            result_cols!(),
            " FROM results r WHERE r.examination_id = ?1"
        ))?;
        e.result = stmt.query_row([&e.id], result_row).optional()?;
    }

    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        custody_cols!(),
        " FROM custody c WHERE c.incident_id = ?1 ORDER BY c.entry_no"
    ))?;
    inc.custody = stmt
        .query_map([&inc.id], custody_row)?
        .collect::<Result<_, _>>()?;
    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        attachment_cols!(),
        " FROM attachments t WHERE t.incident_id = ?1 ORDER BY t.entry_no"
    ))?;
    inc.attachments = stmt
        .query_map([&inc.id], attachment_row)?
        .collect::<Result<_, _>>()?;
    Ok(())
}

pub(crate) fn load(conn: &Connection, id: &str) -> Result<Option<Incident>, StoreError> {
    Ok(load_row(conn, id)?.map(|(_, inc, _)| inc))
}

/// One child table read in incident order beside the incidents scan of
/// [`for_each_incident`]: its next row, decoded, with the seq of its incident.
struct ChildScan<'s, T> {
    rows: rusqlite::Rows<'s>,
    next: Option<(i64, T)>,
    read: fn(&rusqlite::Row<'_>) -> rusqlite::Result<(i64, T)>,
}

impl<'s, T> ChildScan<'s, T> {
    fn new(
        stmt: &'s mut rusqlite::Statement<'_>,
        read: fn(&rusqlite::Row<'_>) -> rusqlite::Result<(i64, T)>,
    ) -> Result<Self, StoreError> {
        let mut scan = ChildScan {
            rows: stmt.query([])?,
            next: None,
            read,
        };
        scan.advance()?;
        Ok(scan)
    }

    fn advance(&mut self) -> Result<(), StoreError> {
        self.next = match self.rows.next()? {
            Some(r) => Some((self.read)(r)?),
            None => None,
        };
        Ok(())
    }

    /// Hand `f` the rows of incident `seq`, in order. The scans run in one read
    /// transaction and join through `incidents`, so no row belongs to an incident the
    /// incidents scan has passed; such a row would be skipped, as `load_children` would
    /// never have asked for it.
    fn take(&mut self, seq: i64, mut f: impl FnMut(T)) -> Result<(), StoreError> {
        while let Some((s, _)) = &self.next {
            if *s > seq {
                break;
            }
            if *s == seq {
                if let Some((_, v)) = self.next.take() {
                    f(v);
                }
            }
            self.advance()?;
        }
        Ok(())
    }
}

/// Call `f` with every incident in row order, and whether its derived columns agree.
///
/// The same incidents as [`load`] gives for each id, read in one ordered scan of
/// `incidents` merged with one ordered scan of each child table (a query per incident
/// costs a statement re-preparation each with the planner's sample statistics, about
/// a third of a millisecond: minutes on a million incidents).
pub(crate) fn for_each_incident(
    conn: &Connection,
    mut f: impl FnMut(Incident, bool) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    // the codes of sites, assets, suppliers, products and lots by key, looked up here
    // rather than joined per incident in SQL (five index searches each: an eighth of the time)
    let code_map = |sql: &str| -> Result<HashMap<String, String>, StoreError> {
        let mut stmt = conn.prepare(sql)?;
        let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        Ok(rows.collect::<Result<_, _>>()?)
    };
    let maps = [
        (6, code_map("SELECT id, code FROM assets")?),
        (8, code_map("SELECT id, code FROM sites")?),
        (16, code_map("SELECT id, code FROM suppliers")?),
        (17, code_map("SELECT id, code FROM products")?),
        (18, code_map("SELECT id, code FROM lots")?),
    ];
    // the columns of `incident_select`, with the keys in place of the codes
    let mut incidents = conn.prepare(
        "SELECT i.seq, i.id, i.reference, i.revision, i.created_at, i.updated_at, i.asset_id, i.position, i.site_id,
                i.found_on, i.broken_on, i.temperature_c, i.sun, i.weather, i.reporter, i.how_found,
                i.supplier_id, i.product_id, i.lot_id, i.makeup, i.width_m, i.height_m, i.crack_count, i.branching,
                i.fragment_count, i.origin_location, i.tension_face, i.cause_category, i.cause_factors,
                i.cause_confidence, i.cause_responsibility, i.cause_note, i.status, i.description, i.notes,
                i.stress_pa, i.applied_stress_pa, i.origin_type, i.temper
         FROM incidents i ORDER BY i.seq",
    )?;
    let mut plies = conn.prepare(concat!(
        "SELECT ",
        ply_cols!(),
        ", i.seq FROM incidents i JOIN plies p ON p.incident_id = i.id
         ORDER BY i.seq, p.ply_no"
    ))?;
    let mut exams = conn.prepare(concat!(
        "SELECT ",
        exam_cols!(),
        ", i.seq FROM incidents i JOIN examinations e ON e.incident_id = i.id
         ORDER BY i.seq, e.exam_no"
    ))?;
    let mut readings = conn.prepare(concat!(
        "SELECT ",
        reading_cols!(),
        ", i.seq, e.id FROM incidents i JOIN examinations e ON e.incident_id = i.id
         JOIN mirror_readings m ON m.examination_id = e.id
         ORDER BY i.seq, e.exam_no, m.reading_no"
    ))?;
    let mut results = conn.prepare(concat!(
        "SELECT ",
        result_cols!(),
        ", i.seq, e.id FROM incidents i JOIN examinations e ON e.incident_id = i.id
         JOIN results r ON r.examination_id = e.id
         ORDER BY i.seq, e.exam_no"
    ))?;
    let mut custody = conn.prepare(concat!(
        "SELECT ",
        custody_cols!(),
        ", i.seq FROM incidents i JOIN custody c ON c.incident_id = i.id
         ORDER BY i.seq, c.entry_no"
    ))?;
    let mut attachments = conn.prepare(concat!(
        "SELECT ",
        attachment_cols!(),
        ", i.seq FROM incidents i JOIN attachments t ON t.incident_id = i.id
         ORDER BY i.seq, t.entry_no"
    ))?;
    // every scan starts before any is stepped to its end, so they share one read snapshot
    let mut rows = incidents.query([])?;
    let mut plies = ChildScan::new(&mut plies, |r| Ok((r.get(5)?, ply_row(r)?)))?;
    let mut exams = ChildScan::new(&mut exams, |r| Ok((r.get(14)?, exam_row(r)?)))?;
    let mut readings = ChildScan::new(&mut readings, |r| {
        Ok((r.get(7)?, (r.get::<_, String>(8)?, reading_row(r)?)))
    })?;
    let mut results = ChildScan::new(&mut results, |r| {
        Ok((r.get(10)?, (r.get::<_, String>(11)?, result_row(r)?)))
    })?;
    let mut custody = ChildScan::new(&mut custody, |r| Ok((r.get(6)?, custody_row(r)?)))?;
    let mut attachments =
        ChildScan::new(&mut attachments, |r| Ok((r.get(7)?, attachment_row(r)?)))?;
    while let Some(r) = rows.next()? {
        let code = |k: usize| -> rusqlite::Result<Option<String>> {
            let Some(key) = text_ref(r, k)? else {
                return Ok(None);
            };
            // a key that names no row gives no code, as the LEFT JOIN of `load_row` does
            Ok(maps
                .iter()
                .find(|(c, _)| *c == k)
                .and_then(|(_, m)| m.get(key).cloned()))
        };
        let (seq, mut inc, d) = incident_row_with(r, &code)?;
        plies.take(seq, |p| inc.glass.plies.push(p))?;
        exams.take(seq, |e| inc.examinations.push(e))?;
        let exams = &mut inc.examinations;
        readings.take(seq, |(exam, m)| {
            if let Some(e) = exams.iter_mut().find(|e| e.id == exam) {
                e.readings.push(m);
            }
        })?;
        results.take(seq, |(exam, res)| {
            if let Some(e) = exams.iter_mut().find(|e| e.id == exam) {
                e.result = Some(res);
            }
        })?;
        custody.take(seq, |c| inc.custody.push(c))?;
        attachments.take(seq, |a| inc.attachments.push(a))?;
        let ok = derive(&inc) == d;
        f(inc, ok)?;
    }
    Ok(())
}

fn finite(problems: &mut Vec<(String, String)>, field: &str, x: Option<f64>) {
    if let Some(v) = x {
        if !v.is_finite() {
            problems.push((field.to_string(), "must be a finite number".into()));
        }
    }
}

fn positive(problems: &mut Vec<(String, String)>, field: &str, x: Option<f64>) {
    if let Some(v) = x {
        if !v.is_finite() || v <= 0.0 {
            problems.push((field.to_string(), "must be a positive finite number".into()));
        }
    }
}

/// Check a measured value: its text and unit must parse to its SI value.
fn check_measured(
    problems: &mut Vec<(String, String)>,
    field: &str,
    m: &Measured,
    dim: shardlog_core::units::Dimension,
) {
    let typed = format!("{} {}", m.text, m.unit);
    match shardlog_core::units::parse_with_unit(&typed, dim) {
        Err(e) => problems.push((field.to_string(), e.to_string())),
        Ok((si, _)) => {
            if !(m.si.is_finite() && (si - m.si).abs() <= 1e-9 * si.abs().max(1e-300)) {
                problems.push((
                    field.to_string(),
                    format!("the SI value {} does not match \"{typed}\"", m.si),
                ));
            } else if si <= 0.0 {
                problems.push((field.to_string(), "must be greater than zero".into()));
            }
        }
    }
}

type Lookups = super::LookupSet;

fn check_code(
    lookups: &Lookups,
    problems: &mut Vec<(String, String)>,
    field: &str,
    kind: LookupKind,
    code: Option<&str>,
) {
    if let Some(c) = code {
        if !lookups.contains(kind.as_str(), c) {
            problems.push((
                field.to_string(),
                format!("unknown {} code \"{c}\"", kind.as_str().replace('_', " ")),
            ));
        }
    }
}

/// Every problem with an incident's content, as (field path, what is wrong).
pub(crate) fn validate(lookups: &Lookups, inc: &Incident) -> Vec<(String, String)> {
    use shardlog_core::units::Dimension;
    let mut p = Vec::new();
    check_code(
        lookups,
        &mut p,
        "status",
        LookupKind::Status,
        Some(&inc.status),
    );
    check_code(
        lookups,
        &mut p,
        "glass.makeup",
        LookupKind::Makeup,
        Some(&inc.glass.makeup),
    );
    if let Some(b) = inc.broken_on {
        if b > inc.found_on {
            p.push(("broken_on".into(), "is after the date found".into()));
        }
    }
    finite(
        &mut p,
        "environment.temperature_c",
        inc.environment.temperature_c,
    );
    positive(&mut p, "glass.width_m", inc.glass.width_m);
    positive(&mut p, "glass.height_m", inc.glass.height_m);
    if inc.glass.product.is_some() && inc.glass.supplier.is_none() {
        p.push((
            "glass.product".into(),
            "a product needs its supplier".into(),
        ));
    }
    if inc.glass.lot.is_some() && inc.glass.product.is_none() {
        p.push(("glass.lot".into(), "a lot needs its product".into()));
    }
    for (i, ply) in inc.glass.plies.iter().enumerate() {
        let f = format!("glass.plies[{i}]");
        check_code(
            lookups,
            &mut p,
            &format!("{f}.material"),
            LookupKind::Material,
            ply.material.as_deref(),
        );
        check_code(
            lookups,
            &mut p,
            &format!("{f}.temper"),
            LookupKind::TemperClass,
            ply.temper.as_deref(),
        );
        positive(&mut p, &format!("{f}.thickness_m"), ply.thickness_m);
    }
    for (name, v) in [
        ("pattern.crack_count", inc.pattern.crack_count),
        ("pattern.fragment_count", inc.pattern.fragment_count),
    ] {
        if v.is_some_and(|n| n < 0) {
            p.push((name.into(), "must not be negative".into()));
        }
    }
    check_code(
        lookups,
        &mut p,
        "pattern.origin_location",
        LookupKind::OriginLocation,
        inc.pattern.origin_location.as_deref(),
    );
    if let Some(c) = &inc.cause {
        check_code(
            lookups,
            &mut p,
            "cause.category",
            LookupKind::CauseCategory,
            Some(&c.category),
        );
        check_code(
            lookups,
            &mut p,
            "cause.confidence",
            LookupKind::Confidence,
            Some(&c.confidence),
        );
        check_code(
            lookups,
            &mut p,
            "cause.responsibility",
            LookupKind::Responsibility,
            Some(&c.responsibility),
        );
    }
    let mut ids = HashSet::new();
    for (i, e) in inc.examinations.iter().enumerate() {
        let f = format!("examinations[{i}]");
        if !e.id.is_empty() && !ids.insert(e.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        check_code(
            lookups,
            &mut p,
            &format!("{f}.origin_type"),
            LookupKind::OriginType,
            e.origin_type.as_deref(),
        );
        check_code(
            lookups,
            &mut p,
            &format!("{f}.material"),
            LookupKind::Material,
            e.material.as_deref(),
        );
        for (j, r) in e.readings.iter().enumerate() {
            let g = format!("{f}.readings[{j}]");
            check_code(
                lookups,
                &mut p,
                &format!("{g}.boundary"),
                LookupKind::Boundary,
                Some(&r.boundary),
            );
            check_measured(&mut p, &format!("{g}.radius"), &r.radius, Dimension::Length);
            positive(&mut p, &format!("{g}.magnification"), r.magnification);
        }
        if let Some(fl) = &e.flaw {
            if let Some(m) = &fl.depth {
                check_measured(&mut p, &format!("{f}.flaw.depth"), m, Dimension::Length);
            }
            if let Some(m) = &fl.width {
                check_measured(&mut p, &format!("{f}.flaw.width"), m, Dimension::Length);
            }
        }
        if let Some(r) = &e.result {
            let g = format!("{f}.result");
            for (name, v) in [
                ("stress_pa", r.stress_pa),
                ("stress_low_pa", r.stress_low_pa),
                ("stress_high_pa", r.stress_high_pa),
                ("residual_pa", r.residual_pa),
                ("applied_stress_pa", r.applied_stress_pa),
                ("flaw_size_m", r.flaw_size_m),
            ] {
                finite(&mut p, &format!("{g}.{name}"), v);
            }
        }
    }
    for (i, c) in inc.custody.iter().enumerate() {
        let f = format!("custody[{i}]");
        if !c.id.is_empty() && !ids.insert(c.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        check_code(
            lookups,
            &mut p,
            &format!("{f}.action"),
            LookupKind::CustodyAction,
            Some(&c.action),
        );
        if c.who.trim().is_empty() {
            p.push((
                format!("{f}.who"),
                "must name who handled the specimen".into(),
            ));
        }
    }
    for (i, a) in inc.attachments.iter().enumerate() {
        let f = format!("attachments[{i}]");
        if !a.id.is_empty() && !ids.insert(a.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        if a.sha256.len() != 64
            || !a
                .sha256
                .bytes()
                .all(|b| b.is_ascii_hexdigit() && !b.is_ascii_uppercase())
        {
            p.push((
                format!("{f}.sha256"),
                "must be 64 lower-case hex digits".into(),
            ));
        }
        if a.size_bytes < 0 {
            p.push((format!("{f}.size_bytes"), "must not be negative".into()));
        }
    }
    p
}

impl Store {
    /// Every problem with an incident's content, as (field path, what is wrong).
    pub fn validate_incident(&self, inc: &Incident) -> Vec<(String, String)> {
        validate(&self.lookups, inc)
    }

    /// Give new children keys and truncate times to milliseconds.
    pub(crate) fn normalize(ids: &mut IdGen, inc: &mut Incident, stamp: &Stamp) {
        let ms = stamp.at.timestamp_millis();
        for e in &mut inc.examinations {
            if e.id.is_empty() {
                e.id = ids.uuid_v7(ms);
            }
            if let Some(r) = &mut e.result {
                r.computed_at = truncate_ms(r.computed_at);
            }
        }
        for c in &mut inc.custody {
            if c.id.is_empty() {
                c.id = ids.uuid_v7(ms);
            }
            c.at = truncate_ms(c.at);
        }
        for a in &mut inc.attachments {
            if a.id.is_empty() {
                a.id = ids.uuid_v7(ms);
            }
            a.added_at = truncate_ms(a.added_at);
        }
        inc.created_at = truncate_ms(inc.created_at);
        inc.updated_at = truncate_ms(inc.updated_at);
    }

    fn first_problem(lookups: &Lookups, inc: &Incident) -> Result<(), StoreError> {
        match validate(lookups, inc).into_iter().next() {
            Some((field, message)) => Err(StoreError::Invalid { field, message }),
            None => Ok(()),
        }
    }

    /// Resolve codes to keys; unknown sites, assets, suppliers, products and lots are
    /// created (and audited) unless `strict`.
    pub(crate) fn resolve_refs(
        conn: &Connection,
        chain: &mut Chain,
        ids: &mut IdGen,
        inc: &Incident,
        stamp: &Stamp,
        strict: bool,
        cache: &mut RefCache,
    ) -> Result<Refs, StoreError> {
        let ms = stamp.at.timestamp_millis();
        let missing = |what: &str, code: &str| {
            StoreError::invalid(
                what,
                format!("no {what} with code \"{code}\" (strict mode)"),
            )
        };
        let mut refs = Refs::default();
        if let Some(code) = &inc.site {
            refs.site = match cache.site(conn, code)? {
                Some(id) => Some(id),
                None if strict => return Err(missing("site", code)),
                None => {
                    let s = Site {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        name: code.clone(),
                        region: String::new(),
                    };
                    refdata::insert_site(conn, chain, &s, stamp)?;
                    cache.sites.insert(code.clone(), s.id.clone());
                    Some(s.id)
                }
            };
        }
        if let Some(code) = &inc.asset {
            refs.asset = match cache.asset(conn, code)? {
                Some(id) => Some(id),
                None if strict => return Err(missing("asset", code)),
                None => {
                    let a = Asset {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        asset_type: "other".into(),
                        name: code.clone(),
                        site: inc.site.clone(),
                    };
                    refdata::insert_asset(conn, chain, &a, stamp)?;
                    cache.assets.insert(code.clone(), a.id.clone());
                    Some(a.id)
                }
            };
        }
        if let Some(code) = &inc.glass.supplier {
            let sid = match cache.supplier(conn, code)? {
                Some(id) => id,
                None if strict => return Err(missing("supplier", code)),
                None => {
                    let s = Supplier {
                        id: ids.uuid_v7(ms),
                        code: code.clone(),
                        name: code.clone(),
                    };
                    refdata::insert_supplier(conn, chain, &s, stamp)?;
                    cache.suppliers.insert(code.clone(), s.id.clone());
                    s.id
                }
            };
            if let Some(pcode) = &inc.glass.product {
                let pid = match cache.product(conn, &sid, pcode)? {
                    Some(id) => id,
                    None if strict => return Err(missing("product", pcode)),
                    None => {
                        let p = Product {
                            id: ids.uuid_v7(ms),
                            supplier: code.clone(),
                            code: pcode.clone(),
                            name: pcode.clone(),
                        };
                        refdata::insert_product(conn, chain, &p, stamp)?;
                        cache
                            .products
                            .insert((sid.clone(), pcode.clone()), p.id.clone());
                        p.id
                    }
                };
                if let Some(lcode) = &inc.glass.lot {
                    refs.lot = Some(match cache.lot(conn, &pid, lcode)? {
                        Some(id) => id,
                        None if strict => return Err(missing("lot", lcode)),
                        None => {
                            let l = Lot {
                                id: ids.uuid_v7(ms),
                                supplier: code.clone(),
                                product: pcode.clone(),
                                code: lcode.clone(),
                                made_on: None,
                            };
                            refdata::insert_lot(conn, chain, &l, stamp)?;
                            cache
                                .lots
                                .insert((pid.clone(), lcode.clone()), l.id.clone());
                            l.id
                        }
                    });
                }
                refs.product = Some(pid);
            }
            refs.supplier = Some(sid);
        }
        Ok(refs)
    }

    /// Save a new incident from a draft: the store assigns the id, the reference, revision 1
    /// and the times. Unknown site, asset, supplier, product and lot codes are created.
    pub fn create_incident(
        &mut self,
        draft: &Incident,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let mut inc = draft.clone();
        inc.revision = 1;
        inc.created_at = stamp.at;
        inc.updated_at = stamp.at;
        Store::normalize(&mut self.ids, &mut inc, stamp);
        Store::first_problem(&self.lookups, &inc)?;
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let mut chain = Chain::load(&tx)?;
        if inc.id.is_empty() {
            inc.id = self.ids.uuid_v7(stamp.at.timestamp_millis());
        }
        inc.reference = next_reference(&tx, inc.found_on)?;
        let refs = Store::resolve_refs(
            &tx,
            &mut chain,
            &mut self.ids,
            &inc,
            stamp,
            false,
            &mut RefCache::default(),
        )?;
        insert_new(&tx, &mut chain, &inc, &refs, stamp, None)?;
        chain.finish(&tx)?;
        tx.commit()?;
        Ok(inc)
    }

    /// Save an edited incident. `inc.revision` must be the revision it was loaded at; if the
    /// stored incident has moved on, [`StoreError::StaleRevision`] and nothing is written.
    /// The whole aggregate is replaced by `inc` (examinations, custody, attachments too).
    pub fn update_incident(
        &mut self,
        inc: &Incident,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let out = Store::update_in(&tx, &mut self.ids, &self.lookups, inc, stamp)?;
        tx.commit()?;
        Ok(out)
    }

    fn update_in(
        conn: &Connection,
        ids: &mut IdGen,
        lookups: &Lookups,
        inc: &Incident,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let Some((seq, current, _)) = load_row(conn, &inc.id)? else {
            return Err(StoreError::NotFound(if inc.reference.is_empty() {
                inc.id.clone()
            } else {
                inc.reference.clone()
            }));
        };
        if current.revision != inc.revision {
            return Err(StoreError::StaleRevision {
                reference: current.reference,
                expected: inc.revision,
                current: current.revision,
            });
        }
        let mut new = inc.clone();
        new.reference = current.reference.clone();
        new.created_at = current.created_at;
        new.revision = current.revision + 1;
        new.updated_at = stamp.at;
        Store::normalize(ids, &mut new, stamp);
        Store::first_problem(lookups, &new)?;
        let mut chain = Chain::load(conn)?;
        let refs = Store::resolve_refs(
            conn,
            &mut chain,
            ids,
            &new,
            stamp,
            false,
            &mut RefCache::default(),
        )?;
        let d = derive(&new);
        let owned = row_text(&new)?;
        let mut values = row_values(&new, &refs, &d, &owned);
        values
            .values
            .push(ToSqlOutput::Borrowed(ValueRef::Integer(current.revision)));
        let n = conn
            .prepare_cached(update_sql())?
            .execute(params_from_iter(values.values.iter()))?;
        if n != 1 {
            return Err(StoreError::StaleRevision {
                reference: current.reference,
                expected: inc.revision,
                current: current.revision,
            });
        }
        delete_children(conn, &new.id)?;
        insert_children(conn, &new)?;
        sqlite::fts_put(conn, seq, &search_body(&new))?;
        let before = canon::incident_image(&current)?;
        let after = canon::incident_image(&new)?;
        chain.record(conn, stamp, INCIDENT, &new.id, Some(&before), Some(&after))?;
        chain.finish(conn)?;
        Ok(new)
    }

    /// Load, change and save in one transaction. `expected` = the revision the caller's
    /// change was made on (None: apply to whatever is current, for additive changes).
    pub fn modify_incident(
        &mut self,
        key: &str,
        expected: Option<i64>,
        stamp: &Stamp,
        change: impl FnOnce(&mut Incident) -> Result<(), StoreError>,
    ) -> Result<Incident, StoreError> {
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let id = resolve_key(&tx, key)?;
        let mut inc = load(&tx, &id)?.ok_or_else(|| StoreError::NotFound(key.to_string()))?;
        if let Some(rev) = expected {
            if rev != inc.revision {
                return Err(StoreError::StaleRevision {
                    reference: inc.reference,
                    expected: rev,
                    current: inc.revision,
                });
            }
        }
        change(&mut inc)?;
        let out = Store::update_in(&tx, &mut self.ids, &self.lookups, &inc, stamp)?;
        tx.commit()?;
        Ok(out)
    }

    /// Add or replace an examination (matched by id; an empty id adds a new one).
    /// Returns the saved incident; the examination keeps its position.
    pub fn put_examination(
        &mut self,
        key: &str,
        expected: i64,
        exam: &Examination,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let exam = exam.clone();
        self.modify_incident(key, Some(expected), stamp, move |inc| {
            match inc
                .examinations
                .iter_mut()
                .find(|e| !exam.id.is_empty() && e.id == exam.id)
            {
                Some(slot) => *slot = exam,
                None => inc.examinations.push(exam),
            }
            Ok(())
        })
    }

    /// Set (or clear) the computed result of one examination.
    pub fn set_result(
        &mut self,
        key: &str,
        expected: i64,
        examination_id: &str,
        result: Option<ComputedResult>,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let exam_id = examination_id.to_string();
        self.modify_incident(key, Some(expected), stamp, move |inc| {
            let e = inc
                .examinations
                .iter_mut()
                .find(|e| e.id == exam_id)
                .ok_or_else(|| {
                    StoreError::invalid("examination", format!("no examination {exam_id}"))
                })?;
            e.result = result;
            Ok(())
        })
    }

    /// Set (or clear) the cause, and optionally move the case status.
    pub fn set_cause(
        &mut self,
        key: &str,
        expected: i64,
        cause: Option<Cause>,
        status: Option<&str>,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let status = status.map(str::to_string);
        self.modify_incident(key, Some(expected), stamp, move |inc| {
            inc.cause = cause;
            if let Some(s) = status {
                inc.status = s;
            }
            Ok(())
        })
    }

    /// Append a custody entry (an empty id gets a new key). No revision check: entries
    /// only add.
    pub fn add_custody(
        &mut self,
        key: &str,
        entry: &CustodyEntry,
        stamp: &Stamp,
    ) -> Result<Incident, StoreError> {
        let entry = entry.clone();
        self.modify_incident(key, None, stamp, move |inc| {
            inc.custody.push(entry);
            Ok(())
        })
    }

    /// Delete an incident (the audit log keeps its last image).
    pub fn delete_incident(
        &mut self,
        key: &str,
        expected: i64,
        stamp: &Stamp,
    ) -> Result<(), StoreError> {
        let tx = self
            .conn
            .transaction_with_behavior(TransactionBehavior::Immediate)?;
        let id = resolve_key(&tx, key)?;
        let Some((seq, current, _)) = load_row(&tx, &id)? else {
            return Err(StoreError::NotFound(key.to_string()));
        };
        if current.revision != expected {
            return Err(StoreError::StaleRevision {
                reference: current.reference,
                expected,
                current: current.revision,
            });
        }
        delete_children(&tx, &id)?;
        sqlite::fts_delete(&tx, seq)?;
        tx.prepare_cached("DELETE FROM incidents WHERE id = ?1")?
            .execute([&id])?;
        let mut chain = Chain::load(&tx)?;
        let before = canon::incident_image(&current)?;
        chain.record(&tx, stamp, INCIDENT, &id, Some(&before), None)?;
        chain.finish(&tx)?;
        tx.commit()?;
        Ok(())
    }

    /// The full incident by reference ("BR-260314-0007") or id.
    pub fn get(&self, key: &str) -> Result<Incident, StoreError> {
        let id = resolve_key(&self.conn, key)?;
        load(&self.conn, &id)?.ok_or_else(|| StoreError::NotFound(key.to_string()))
    }

    /// The full incident, or None when there is no such reference or id.
    pub fn find(&self, key: &str) -> Result<Option<Incident>, StoreError> {
        match self.get(key) {
            Ok(i) => Ok(Some(i)),
            Err(StoreError::NotFound(_)) => Ok(None),
            Err(e) => Err(e),
        }
    }

    /// Number of incidents in the database.
    pub fn incident_count(&self) -> Result<u64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT count(*) FROM incidents", [], |r| r.get::<_, i64>(0))?
            as u64)
    }

    /// One page of the incident log.
    pub fn list(
        &self,
        filter: &Filter,
        sort: Sort,
        page: &PageRequest,
    ) -> Result<Page, StoreError> {
        self.list_planned(filter, sort, page, None)
    }

    /// [`Store::list`] with the text plan chosen (tests compare the two plans).
    fn list_planned(
        &self,
        filter: &Filter,
        sort: Sort,
        page: &PageRequest,
        force: Option<TextPlan>,
    ) -> Result<Page, StoreError> {
        let limit = page.limit.clamp(1, 10_000) as i64;
        // a text filter: count its matches in the text index (cheap), then choose the plan
        let text_hits = match filter.text.as_deref().and_then(sqlite::fts_query) {
            Some(q) => Some(sqlite::fts_count(&self.conn, &q)?),
            None => None,
        };
        let plan = match text_hits {
            Some(_) if force.is_some() => force.unwrap_or(TextPlan::IndexDrives),
            Some(hits) => {
                let rows: i64 = self
                    .conn
                    .prepare_cached("SELECT coalesce(max(seq), 0) FROM incidents")?
                    .query_row([], |r| r.get(0))?;
                choose_text_plan(hits, rows as u64, limit as u64)
            }
            None => TextPlan::IndexDrives,
        };
        let (from, where_sql, mut args) = filter_sql(&self.conn, filter, plan)?;
        let (order_cols, key_exprs): (&str, Vec<&str>) = match sort.column {
            SortColumn::Found => ("i.found_on {d}, i.seq {d}", vec!["i.found_on"]),
            SortColumn::Reference => ("i.reference {d}, i.seq {d}", vec!["i.reference"]),
            SortColumn::Status => (
                "i.status {d}, i.found_on {d}, i.seq {d}",
                vec!["i.status", "i.found_on"],
            ),
            SortColumn::Stress => ("", vec![]),
        };
        let dir = if sort.descending { "DESC" } else { "ASC" };
        let cmp = if sort.descending { "<" } else { ">" };
        let select = format!(
            "SELECT i.seq, i.id, i.reference, i.found_on, a.code, i.position, s.code, p.code, su.code,
                      l.code, i.status, i.cause_category, i.stress_pa
                      FROM {from}
                      LEFT JOIN assets a ON a.id = i.asset_id
                      LEFT JOIN sites s ON s.id = i.site_id
                      LEFT JOIN suppliers su ON su.id = i.supplier_id
                      LEFT JOIN products p ON p.id = i.product_id
                      LEFT JOIN lots l ON l.id = i.lot_id"
        );
        let mut rows: Vec<(i64, LogRow)> = Vec::new();
        if sort.column != SortColumn::Stress {
            let mut conds = where_sql.clone();
            let mut params_v = args.clone();
            if let Some(c) = &page.after {
                let mut lhs: Vec<&str> = key_exprs.clone();
                lhs.push("i.seq");
                let qs = vec!["?"; lhs.len()].join(", ");
                conds.push(format!("({}) {cmp} ({qs})", lhs.join(", ")));
                for k in &c.key {
                    match k {
                        CursorKey::Text(s) => params_v.push(SqlValue::Text(s.clone())),
                        CursorKey::Real(x) => params_v.push(of(*x)),
                    }
                }
                params_v.push(SqlValue::Integer(c.seq));
            }
            let sql = format!(
                "{select} {} ORDER BY {} LIMIT {limit}",
                where_clause(&conds),
                order_cols.replace("{d}", dir)
            );
            self.collect_rows(&sql, &params_v, &mut rows)?;
        } else {
            // stress: incidents with a stress first (in the chosen direction), then the rest
            let in_nulls = matches!(&page.after, Some(c) if matches!(c.key.first(), Some(CursorKey::Real(None))));
            if !in_nulls {
                let mut conds = where_sql.clone();
                conds.push("i.stress_pa IS NOT NULL".into());
                let mut params_v = args.clone();
                if let Some(c) = &page.after {
                    if let Some(CursorKey::Real(Some(x))) = c.key.first() {
                        conds.push(format!("(i.stress_pa, i.seq) {cmp} (?, ?)"));
                        params_v.push(SqlValue::Real(*x));
                        params_v.push(SqlValue::Integer(c.seq));
                    }
                }
                let sql = format!(
                    "{select} {} ORDER BY i.stress_pa {dir}, i.seq {dir} LIMIT {limit}",
                    where_clause(&conds)
                );
                self.collect_rows(&sql, &params_v, &mut rows)?;
            }
            if (rows.len() as i64) < limit {
                let mut conds = where_sql.clone();
                conds.push("i.stress_pa IS NULL".into());
                let mut params_v = args.clone();
                if in_nulls {
                    if let Some(c) = &page.after {
                        conds.push(format!("i.seq {cmp} ?"));
                        params_v.push(SqlValue::Integer(c.seq));
                    }
                }
                let sql = format!(
                    "{select} {} ORDER BY i.seq {dir} LIMIT {}",
                    where_clause(&conds),
                    limit - rows.len() as i64
                );
                self.collect_rows(&sql, &params_v, &mut rows)?;
            }
        }
        let next = if rows.len() as i64 == limit {
            rows.last().map(|(seq, row)| Cursor {
                key: match sort.column {
                    SortColumn::Found => vec![CursorKey::Text(fmt_date(row.occurred))],
                    SortColumn::Reference => vec![CursorKey::Text(row.reference.clone())],
                    SortColumn::Status => vec![
                        CursorKey::Text(row.status.clone()),
                        CursorKey::Text(fmt_date(row.occurred)),
                    ],
                    SortColumn::Stress => vec![CursorKey::Real(None)],
                },
                seq: *seq,
            })
        } else {
            None
        };
        // the stress cursor needs the exact stored value, not the MPa shown
        let next = match (next, sort.column) {
            (Some(mut c), SortColumn::Stress) => {
                let stress: Option<f64> = self
                    .conn
                    .prepare_cached("SELECT stress_pa FROM incidents WHERE seq = ?1")?
                    .query_row([c.seq], |r| r.get(0))?;
                c.key = vec![CursorKey::Real(stress)];
                Some(c)
            }
            (n, _) => n,
        };
        let text_only = Filter {
            text: None,
            ..filter.clone()
        } == Filter::default();
        let total = if page.with_total && text_only && text_hits.is_some() {
            // every text-index row belongs to one incident (kept in step on every write)
            text_hits
        } else if page.with_total {
            let (from, where_sql, args) = filter_sql(&self.conn, filter, TextPlan::IndexDrives)?;
            let sql = format!("SELECT count(*) FROM {from} {}", where_clause(&where_sql));
            let n: i64 = self
                .conn
                .prepare_cached(&sql)?
                .query_row(params_from_iter(args.iter()), |r| r.get(0))?;
            Some(n as u64)
        } else {
            None
        };
        args.clear();
        Ok(Page {
            rows: rows.into_iter().map(|(_, r)| r).collect(),
            next,
            total,
        })
    }

    fn collect_rows(
        &self,
        sql: &str,
        args: &[SqlValue],
        out: &mut Vec<(i64, LogRow)>,
    ) -> Result<(), StoreError> {
        let mut stmt = self.conn.prepare_cached(sql)?;
        let rows = stmt.query_map(params_from_iter(args.iter()), |r| {
            let found: String = r.get(3)?;
            Ok((
                r.get::<_, i64>(0)?,
                LogRow {
                    id: r.get(1)?,
                    reference: r.get(2)?,
                    occurred: parse_date(&found).ok_or_else(|| bad_col(3, "date", &found))?,
                    asset: r.get(4)?,
                    position: r.get(5)?,
                    site: r.get(6)?,
                    product: r.get(7)?,
                    supplier: r.get(8)?,
                    lot: r.get(9)?,
                    status: r.get(10)?,
                    cause: r.get(11)?,
                    stress_mpa: r.get::<_, Option<f64>>(12)?.map(|x| x / 1e6),
                },
            ))
        })?;
        for row in rows {
            out.push(row?);
        }
        Ok(())
    }

    /// Ids of all incidents matching a filter, in date-found order (exports, reports).
    pub fn matching_ids(&self, filter: &Filter) -> Result<Vec<String>, StoreError> {
        let (from, conds, args) = filter_sql(&self.conn, filter, TextPlan::IndexDrives)?;
        let sql = format!(
            "SELECT i.id FROM {from} {} ORDER BY i.found_on, i.seq",
            where_clause(&conds)
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map(params_from_iter(args.iter()), |r| r.get::<_, String>(0))?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    /// One flat row per matching incident for fleet statistics, in no particular order
    /// (the order SQLite reads them in; callers group and count, none relies on an order).
    ///
    /// The codes of supplier, product, lot and site and the asset type are looked up in
    /// memory from one read of each small table instead of joined per row: on a database of
    /// a million incidents the joins on text keys cost most of the read (benches/store.rs).
    pub fn fleet_rows(&self, filter: &Filter) -> Result<Vec<FleetRow>, StoreError> {
        let suppliers = self.code_map("SELECT id, code FROM suppliers")?;
        let products = self.code_map("SELECT id, code FROM products")?;
        let lots = self.code_map("SELECT id, code FROM lots")?;
        let sites = self.code_map("SELECT id, code FROM sites")?;
        let asset_types = self.code_map("SELECT id, asset_type FROM assets")?;
        let (from, conds, args) = filter_sql(&self.conn, filter, TextPlan::IndexDrives)?;
        let sql = format!(
            "SELECT i.id, i.reference, i.cause_category, i.cause_confidence, i.origin_type,
                    i.supplier_id, i.product_id, i.lot_id, i.site_id, i.asset_id, i.temper,
                    i.found_on, i.broken_on, i.applied_stress_pa, i.stress_pa
             FROM {from} {}",
            where_clause(&conds)
        );
        // a key with no row in its table reads as not recorded, as the LEFT JOIN did
        let code = |r: &rusqlite::Row<'_>, k: usize, map: &HashMap<String, String>| {
            Ok::<_, rusqlite::Error>(text_ref(r, k)?.and_then(|key| map.get(key).cloned()))
        };
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map(params_from_iter(args.iter()), |r| {
            let found = text_ref(r, 11)?.ok_or_else(|| bad_col(11, "date", "nothing"))?;
            let found_on = parse_date(found).ok_or_else(|| bad_col(11, "date", found))?;
            let broken: Option<String> = r.get(12)?;
            let net: Option<f64> = r.get(14)?;
            Ok(FleetRow {
                id: r.get(0)?,
                reference: r.get(1)?,
                cause: r.get(2)?,
                confidence: r.get(3)?,
                origin_type: r.get(4)?,
                supplier: code(r, 5, &suppliers)?,
                product: code(r, 6, &products)?,
                lot: code(r, 7, &lots)?,
                site: code(r, 8, &sites)?,
                asset_type: code(r, 9, &asset_types)?,
                temper: r.get(10)?,
                found_on,
                broken_on: broken.as_deref().and_then(parse_date),
                applied_stress_pa: r.get(13)?,
                net_stress_pa: net,
                has_stress: net.is_some(),
            })
        })?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    /// The facts the fleet statistics group, one per incident found inside `[since, until]`
    /// (either end open), with the stress asked for; in no particular order. Only the text
    /// facts of `keys` are read (month and season need nothing beyond the date); the others
    /// are left `None`, so pass every key the caller groups, filters or censors by.
    /// `None` reads them all.
    ///
    /// Read from the narrow `incident_facts` table (schema 3) that triggers keep in step
    /// with `incidents`, not from the wide incidents table: a tenth of the bytes. Each
    /// distinct text (cause, origin type, temper, and the code of each supplier, product,
    /// lot, site and asset type) is made once and shared by every incident that has it.
    /// With every key it gives the same facts as [`Store::fleet_rows`] with
    /// [`FleetRow::into_facts`].
    pub fn fleet_facts(
        &self,
        since: Option<NaiveDate>,
        until: Option<NaiveDate>,
        stress: StressKind,
        keys: Option<&[shardlog_core::fleet::Key]>,
    ) -> Result<Vec<shardlog_core::fleet::IncidentFacts>, StoreError> {
        use shardlog_core::fleet::Key;
        // one snapshot for the value list, the code tables and the rows: a writer between
        // them would leave numbers this read does not know (ended, read-only, when dropped)
        let _snapshot = if self.conn.is_autocommit() {
            Some(rusqlite::Transaction::new_unchecked(
                &self.conn,
                TransactionBehavior::Deferred,
            )?)
        } else {
            None
        };
        let values: Vec<(i64, String)> = {
            let mut stmt = self
                .conn
                .prepare_cached("SELECT n, value FROM fleet_values ORDER BY n")?;
            let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
            rows.collect::<Result<_, _>>()?
        };
        // column -> fleet value number -> shared text (None: not recorded)
        let table = |code: Option<&HashMap<String, String>>| {
            let mut t = ValueTable::new(values.len(), values.last().map_or(0, |v| v.0));
            for (n, v) in &values {
                let text = match code {
                    // a key with no row in its table reads as not recorded
                    Some(map) => map.get(v).map(String::as_str),
                    None => Some(v.as_str()),
                };
                t.insert(*n, text);
            }
            t
        };
        // (key, column, the small table that turns a key into its code)
        const COLUMNS: [(Key, &str, Option<&str>); 8] = [
            (Key::Cause, "cause_category", None),
            (Key::OriginType, "origin_type", None),
            (Key::Temper, "temper", None),
            (
                Key::Supplier,
                "supplier_id",
                Some("SELECT id, code FROM suppliers"),
            ),
            (
                Key::Product,
                "product_id",
                Some("SELECT id, code FROM products"),
            ),
            (Key::Lot, "lot_id", Some("SELECT id, code FROM lots")),
            (Key::Site, "site_id", Some("SELECT id, code FROM sites")),
            (
                Key::AssetType,
                "asset_id",
                Some("SELECT id, asset_type FROM assets"),
            ),
        ];
        let mut wanted = Vec::new();
        for (key, column, codes) in COLUMNS {
            if keys.is_some_and(|k| !k.contains(&key)) {
                continue;
            }
            let t = match codes {
                Some(sql) => table(Some(&self.code_map(sql)?)),
                None => table(None),
            };
            wanted.push((key, column, t));
        }
        let stress_col = match stress {
            StressKind::Applied => "applied_stress_pa",
            StressKind::Net => "stress_pa",
        };
        let mut conds = Vec::new();
        let mut args = Vec::new();
        if let Some(d) = since {
            conds.push("found_on >= ?".to_string());
            args.push(t(&fmt_date(d)));
        }
        if let Some(d) = until {
            conds.push("found_on <= ?".to_string());
            args.push(t(&fmt_date(d)));
        }
        // fixed SQL text only (column names from the list above); the dates are bound
        let columns: String = wanted.iter().map(|w| format!(", {}", w.1)).collect();
        let sql = format!(
            "SELECT found_on, {stress_col}{columns} FROM incident_facts {}",
            where_clause(&conds)
        );
        let get = |r: &rusqlite::Row<'_>, k: usize, map: &ValueTable| match r.get_ref(k)? {
            rusqlite::types::ValueRef::Null => Ok(None),
            rusqlite::types::ValueRef::Integer(n) => match map.get(n) {
                Some(v) => Ok(v.clone()),
                None => Err(bad_col(
                    k,
                    "a number listed in fleet_values (run verify)",
                    &n.to_string(),
                )),
            },
            _ => Err(bad_col(k, "a fleet value number", "another type")),
        };
        let mut stmt = self.conn.prepare(&sql)?;
        let mut rows = stmt.query(params_from_iter(args.iter()))?;
        let mut out = Vec::new();
        // dates repeat: a million incidents fall on a few thousand days
        let mut last_day: Option<(String, NaiveDate)> = None;
        while let Some(r) = rows.next()? {
            let text = text_ref(r, 0)?.ok_or_else(|| bad_col(0, "date", "nothing"))?;
            let found = match &last_day {
                Some((s, d)) if s == text => *d,
                _ => {
                    let d = parse_date(text).ok_or_else(|| bad_col(0, "date", text))?;
                    last_day = Some((text.to_string(), d));
                    d
                }
            };
            let mut f = shardlog_core::fleet::IncidentFacts {
                found,
                stress_pa: r.get(1)?,
                ..Default::default()
            };
            for (i, (key, _, map)) in wanted.iter().enumerate() {
                let v = get(r, i + 2, map)?;
                match key {
                    Key::Cause => f.cause = v,
                    Key::OriginType => f.origin_type = v,
                    Key::Temper => f.temper = v,
                    Key::Supplier => f.supplier = v,
                    Key::Product => f.product = v,
                    Key::Lot => f.lot = v,
                    Key::Site => f.site = v,
                    Key::AssetType => f.asset_type = v,
                    Key::Month | Key::Season => {}
                }
            }
            out.push(f);
        }
        Ok(out)
    }

    /// Key -> code (or other text column) of one small table, from a two-column query.
    fn code_map(&self, sql: &str) -> Result<HashMap<String, String>, StoreError> {
        let mut stmt = self.conn.prepare_cached(sql)?;
        let rows = stmt.query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))?;
        Ok(rows.collect::<Result<_, _>>()?)
    }
}

/// Copy every incident into `incident_facts` (the migration to schema 3; the triggers keep
/// it in step afterwards). One pass over the wide table: each distinct text is given its
/// number in `fleet_values` the first time it is met. Fills in the same numbers the
/// triggers would.
pub(crate) fn fill_fleet_facts(tx: &Connection) -> Result<(), StoreError> {
    let mut numbers: HashMap<String, i64> = {
        let mut stmt = tx.prepare("SELECT value, n FROM fleet_values")?;
        let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        rows.collect::<Result<_, _>>()?
    };
    let mut add_value = tx.prepare("INSERT INTO fleet_values (value) VALUES (?1)")?;
    let mut add_fact = tx.prepare(
        "INSERT INTO incident_facts (seq, found_on, cause_category, origin_type, temper,
             supplier_id, product_id, lot_id, site_id, asset_id, stress_pa, applied_stress_pa)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12)",
    )?;
    let mut stmt = tx.prepare(
        "SELECT seq, found_on, cause_category, origin_type, temper, supplier_id, product_id,
                lot_id, site_id, asset_id, stress_pa, applied_stress_pa
         FROM incidents ORDER BY seq",
    )?;
    let mut rows = stmt.query([])?;
    while let Some(r) = rows.next()? {
        let mut n: [Option<i64>; 8] = [None; 8];
        for (k, slot) in n.iter_mut().enumerate() {
            if let Some(text) = text_ref(r, k + 2)? {
                *slot = Some(match numbers.get(text) {
                    Some(&v) => v,
                    None => {
                        add_value.execute([text])?;
                        let v = tx.last_insert_rowid();
                        numbers.insert(text.to_string(), v);
                        v
                    }
                });
            }
        }
        let seq: i64 = r.get(0)?;
        let found = text_ref(r, 1)?.ok_or_else(|| bad_col(1, "date", "nothing"))?;
        let stress: Option<f64> = r.get(10)?;
        let applied: Option<f64> = r.get(11)?;
        add_fact.execute(params![
            seq, found, n[0], n[1], n[2], n[3], n[4], n[5], n[6], n[7], stress, applied
        ])?;
    }
    Ok(())
}

/// Whether two SQL values are the same by `IS` (no affinity: both sides are columns of
/// STRICT tables): NULL is NULL, numbers by value, text and blobs byte by byte.
fn same_value(a: ValueRef<'_>, b: ValueRef<'_>) -> bool {
    use ValueRef::*;
    match (a, b) {
        (Null, Null) => true,
        (Integer(x), Integer(y)) => x == y,
        (Real(x), Real(y)) => x == y,
        (Integer(i), Real(r)) | (Real(r), Integer(i)) => r == i as f64 && r as i64 == i,
        (Text(x), Text(y)) | (Blob(x), Blob(y)) => x == y,
        _ => false,
    }
}

/// Where the `incident_facts` table (what `stats` reads) disagrees with `incidents`: one
/// message per incident whose row is missing or differs, and per row with no incident.
/// Triggers keep the two in step, so any message means the table was changed by hand.
///
/// One ordered scan of each table, merged by seq, with the value numbers looked up in a
/// copy of `fleet_values` (the same comparisons as joining the nine tables in SQL, which
/// takes several times as long on a million incidents).
pub(crate) fn fleet_facts_problems(conn: &Connection) -> Result<Vec<String>, StoreError> {
    const WHY: &str = "the copy the fleet statistics read (table incident_facts)";
    let values: HashMap<i64, Vec<u8>> = {
        let mut stmt = conn.prepare("SELECT n, value FROM fleet_values")?;
        let mut rows = stmt.query([])?;
        let mut out = HashMap::new();
        while let Some(r) = rows.next()? {
            // n is the INTEGER PRIMARY KEY; a value is TEXT NOT NULL (STRICT)
            let text = match r.get_ref(1)? {
                ValueRef::Text(t) => t.to_vec(),
                _ => return Err(bad_col(1, "text value", "another type").into()),
            };
            out.insert(r.get::<_, i64>(0)?, text);
        }
        out
    };
    // the eight coded columns, then found_on and the two stresses, in both tables
    let mut inc_stmt = conn.prepare(
        "SELECT seq, reference, cause_category, origin_type, temper, supplier_id, product_id,
                lot_id, site_id, asset_id, found_on, stress_pa, applied_stress_pa
         FROM incidents ORDER BY seq",
    )?;
    let mut fact_stmt = conn.prepare(
        "SELECT seq, cause_category, origin_type, temper, supplier_id, product_id,
                lot_id, site_id, asset_id, found_on, stress_pa, applied_stress_pa
         FROM incident_facts ORDER BY seq",
    )?;
    // both scans start before either is stepped to its end: one read snapshot
    let mut incs = inc_stmt.query([])?;
    let mut facts = fact_stmt.query([])?;
    let mut out = Vec::new();
    let mut orphans = 0i64;
    let mut fact = facts.next()?;
    while let Some(i) = incs.next()? {
        let seq: i64 = i.get(0)?;
        // facts rows before this incident belong to none
        while let Some(f) = fact {
            if f.get::<_, i64>(0)? >= seq {
                break;
            }
            orphans += 1;
            fact = facts.next()?;
        }
        let matched = match fact {
            Some(f) if f.get::<_, i64>(0)? == seq => Some(f),
            _ => None,
        };
        let problem = match matched {
            None => Some(true),
            Some(f) => {
                let mut differs = false;
                for k in 0..8 {
                    let number = f.get_ref(1 + k)?;
                    let text = i.get_ref(2 + k)?;
                    // `c.value IS NOT i.x`, c joined on `c.n = f.x`
                    let value = match number {
                        ValueRef::Integer(n) => values.get(&n).map(|v| ValueRef::Text(v)),
                        _ => None,
                    }
                    .unwrap_or(ValueRef::Null);
                    let value_differs = !same_value(value, text);
                    // `(f.x IS NULL) != (i.x IS NULL)`
                    let null_differs = (number == ValueRef::Null) != (text == ValueRef::Null);
                    if value_differs || null_differs {
                        differs = true;
                        break;
                    }
                }
                for k in 0..3 {
                    if !same_value(f.get_ref(9 + k)?, i.get_ref(10 + k)?) {
                        differs = true;
                    }
                }
                differs.then_some(false)
            }
        };
        if let Some(missing) = problem {
            let reference: String = i.get(1)?;
            out.push(if missing {
                format!("incident {reference}: missing from {WHY} (deleted behind shardlog's back); stats leave it out")
            } else {
                format!("incident {reference}: {WHY} differs from the incident (changed behind shardlog's back); stats read the changed values")
            });
        }
        if matched.is_some() {
            fact = facts.next()?;
        }
    }
    while fact.is_some() {
        orphans += 1;
        fact = facts.next()?;
    }
    if orphans > 0 {
        out.push(format!(
            "{WHY}: {orphans} row(s) belong to no incident (inserted behind shardlog's back); stats count them"
        ));
    }
    Ok(out)
}

/// Fleet value number -> text of one column. The distinct texts of the column are kept once
/// (all twenty thousand asset ids of a fleet map to a handful of asset types) and each number
/// holds a small index into them, so the table of a column stays in the processor's cache.
/// A vector indexed by the number (SQLite hands them out 1, 2, 3, ...), a map if someone
/// made them sparse.
struct ValueTable {
    /// Index 0: not recorded.
    texts: Vec<Option<std::rc::Rc<str>>>,
    seen: HashMap<String, u32>,
    index: ValueIndex,
}

enum ValueIndex {
    /// `u32::MAX`: no such number.
    Dense(Vec<u32>),
    Sparse(HashMap<i64, u32>),
}

impl ValueTable {
    fn new(count: usize, max: i64) -> ValueTable {
        let index = match usize::try_from(max) {
            Ok(m) if m <= 2 * count + 1024 => ValueIndex::Dense(vec![u32::MAX; m + 1]),
            _ => ValueIndex::Sparse(HashMap::new()),
        };
        ValueTable {
            texts: vec![None],
            seen: HashMap::new(),
            index,
        }
    }
    fn insert(&mut self, n: i64, text: Option<&str>) {
        let i = match text {
            None => 0,
            Some(t) => match self.seen.get(t) {
                Some(&i) => i,
                None => {
                    let i = self.texts.len() as u32;
                    self.texts.push(Some(std::rc::Rc::from(t)));
                    self.seen.insert(t.to_string(), i);
                    i
                }
            },
        };
        match &mut self.index {
            ValueIndex::Dense(v) => {
                if let Some(slot) = usize::try_from(n).ok().and_then(|k| v.get_mut(k)) {
                    *slot = i;
                }
            }
            ValueIndex::Sparse(m) => {
                m.insert(n, i);
            }
        }
    }
    fn get(&self, n: i64) -> Option<&Option<std::rc::Rc<str>>> {
        let i = match &self.index {
            ValueIndex::Dense(v) => *usize::try_from(n).ok().and_then(|k| v.get(k))?,
            ValueIndex::Sparse(m) => *m.get(&n)?,
        };
        self.texts.get(i as usize)
    }
}

fn where_clause(conds: &[String]) -> String {
    if conds.is_empty() {
        String::new()
    } else {
        format!("WHERE {}", conds.join(" AND "))
    }
}

/// The FROM clause, SQL conditions on `incidents i` and their parameters. Only fixed SQL
/// text; every user value is a bound parameter. Lot codes are resolved to keys first so the
/// lot index can be used.
/// How a text filter enters the query.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum TextPlan {
    /// The text index drives: every match is looked up, then sorted (few matches).
    IndexDrives,
    /// The log's own order drives (an index that fits the sort), each row tested against
    /// the set of matches; the first page stops after `limit` hits (common words).
    LogDrives,
}

/// The plan for one page of a text search over a log of `rows` incidents of which `hits`
/// match. Driving from the text index costs one row lookup per match, whatever the page
/// size (about 8 µs each, sorting included); walking the log in its sort order costs about
/// `limit * rows / hits` index steps (at most `rows`, about 0.8 µs each) after the set of
/// matches is built (about 0.6 µs a match). Walking wins when its steps are fewer than
/// about ten per match (measured on the 1,000,000-incident demo database; DEVELOPERS.md,
/// "Text search").
fn choose_text_plan(hits: u64, rows: u64, limit: u64) -> TextPlan {
    let walk = limit
        .saturating_mul(rows)
        .checked_div(hits)
        .map_or(rows, |w| w.min(rows));
    if walk < hits.saturating_mul(10) {
        TextPlan::LogDrives
    } else {
        TextPlan::IndexDrives
    }
}

fn filter_sql(
    conn: &Connection,
    f: &Filter,
    plan: TextPlan,
) -> Result<(&'static str, Vec<String>, Vec<SqlValue>), StoreError> {
    let mut from = "incidents i";
    let mut c = Vec::new();
    let mut a = Vec::new();
    if let Some(s) = &f.status {
        c.push("i.status = ?".to_string());
        a.push(t(s));
    }
    if let Some(s) = &f.cause {
        c.push("i.cause_category = ?".to_string());
        a.push(t(s));
    }
    if let Some(s) = &f.origin_type {
        c.push("i.origin_type = ?".to_string());
        a.push(t(s));
    }
    if let Some(s) = &f.supplier {
        c.push("i.supplier_id = (SELECT id FROM suppliers WHERE code = ?)".to_string());
        a.push(t(s));
    }
    if let Some(l) = &f.lot {
        let mut stmt = conn.prepare_cached(
            "SELECT lo.id FROM lots lo JOIN products pr ON pr.id = lo.product_id
             JOIN suppliers sp ON sp.id = pr.supplier_id
             WHERE lo.code = ?1 AND (?2 IS NULL OR sp.code = ?2) ORDER BY lo.id",
        )?;
        let ids: Vec<String> = stmt
            .query_map(params![l, f.supplier], |r| r.get(0))?
            .collect::<Result<_, _>>()?;
        if ids.is_empty() {
            c.push("1 = 0".to_string());
        } else {
            c.push(format!("i.lot_id IN ({})", vec!["?"; ids.len()].join(", ")));
            a.extend(ids.into_iter().map(SqlValue::Text));
        }
    }
    if let Some(s) = &f.site {
        c.push("i.site_id = (SELECT id FROM sites WHERE code = ?)".to_string());
        a.push(t(s));
    }
    if let Some(d) = f.since {
        c.push("i.found_on >= ?".to_string());
        a.push(t(&fmt_date(d)));
    }
    if let Some(d) = f.until {
        c.push("i.found_on <= ?".to_string());
        a.push(t(&fmt_date(d)));
    }
    if let Some(text) = &f.text {
        match sqlite::fts_query(text) {
            Some(q) if plan == TextPlan::IndexDrives => {
                // the text index drives: its matches are few next to the whole log
                from = sqlite::FTS_FROM;
                c.insert(0, sqlite::FTS_CONDITION.to_string());
                a.insert(0, SqlValue::Text(q));
            }
            Some(q) => {
                // the unary + keeps SQLite from turning the set into rowid lookups: the
                // set is built once, the walk follows the sort's index
                c.insert(0, sqlite::FTS_IN_SET.to_string());
                a.insert(0, SqlValue::Text(q));
            }
            None => c.push("1 = 0".to_string()),
        }
    }
    Ok((from, c, a))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn all_pages(
        s: &Store,
        f: &Filter,
        sort: Sort,
        plan: Option<TextPlan>,
    ) -> (Vec<String>, Option<u64>) {
        let mut out = Vec::new();
        let mut after = None;
        let mut total = None;
        loop {
            let p = s
                .list_planned(
                    f,
                    sort,
                    &PageRequest {
                        limit: 97,
                        after: after.clone(),
                        with_total: after.is_none(),
                    },
                    plan,
                )
                .unwrap();
            if after.is_none() {
                total = p.total;
            }
            out.extend(p.rows.into_iter().map(|r| r.reference));
            match p.next {
                Some(n) => after = Some(n),
                None => break,
            }
        }
        (out, total)
    }

    /// Both text plans give the same rows in the same order on every page, for every sort
    /// and with other filters, and the same totals as a plain count of the matches.
    #[test]
    fn text_plans_agree_page_by_page() {
        let (_dir, path) = crate::demo::temp_demo(1500, 3);
        let s = Store::open_existing(&path).unwrap();
        let words = [
            "impact",
            "stone",
            "heat",
            "car",
            "stereo",
            "nothing-like-it",
            "edge_chip",
        ];
        let filters = [
            Filter::default(),
            Filter {
                supplier: Some("BRELLIN".into()),
                ..Filter::default()
            },
            Filter {
                since: NaiveDate::from_ymd_opt(2025, 1, 1),
                ..Filter::default()
            },
        ];
        let mut log_driven_used = 0;
        for w in words {
            for base in &filters {
                let f = Filter {
                    text: Some(w.into()),
                    ..base.clone()
                };
                let expected_total = s.matching_ids(&f).unwrap().len() as u64;
                for column in [
                    SortColumn::Found,
                    SortColumn::Reference,
                    SortColumn::Status,
                    SortColumn::Stress,
                ] {
                    for descending in [true, false] {
                        let sort = Sort { column, descending };
                        let (a, ta) = all_pages(&s, &f, sort, Some(TextPlan::IndexDrives));
                        let (b, tb) = all_pages(&s, &f, sort, Some(TextPlan::LogDrives));
                        let (c, tc) = all_pages(&s, &f, sort, None);
                        assert_eq!(a, b, "{w} {base:?} {sort:?}");
                        assert_eq!(a, c, "{w} {base:?} {sort:?}");
                        assert_eq!(a.len() as u64, expected_total, "{w} {base:?}");
                        for t in [ta, tb, tc] {
                            assert_eq!(t, Some(expected_total), "{w} {base:?}");
                        }
                    }
                }
                if w == "impact" {
                    assert!(expected_total > 100, "{expected_total}");
                }
            }
            let q = sqlite::fts_query(w).unwrap();
            let hits = sqlite::fts_count(&s.conn, &q).unwrap();
            if choose_text_plan(hits, 1500, 97) == TextPlan::LogDrives {
                log_driven_used += 1;
            }
        }
        // the common words take the walk, the rare ones the text index
        assert!(log_driven_used >= 2, "{log_driven_used}");
        assert_eq!(choose_text_plan(8, 1_000_000, 200), TextPlan::IndexDrives);
        assert_eq!(choose_text_plan(733, 1_000_000, 200), TextPlan::IndexDrives);
        assert_eq!(
            choose_text_plan(35_660, 1_000_000, 200),
            TextPlan::LogDrives
        );
        assert_eq!(
            choose_text_plan(481_445, 1_000_000, 200),
            TextPlan::LogDrives
        );
        assert_eq!(choose_text_plan(0, 1_000_000, 200), TextPlan::IndexDrives);
    }

    /// The ordered scans of `for_each_incident` (what verify reads) give every incident
    /// exactly as `load_row` gives it by id, children in order, with the same derived-column
    /// check, in seq order. On a demo database, with attachments added to later incidents
    /// (the demo puts its few on the first ones), so that every child table is read.
    #[test]
    fn scan_gives_the_incidents_load_gives() {
        use chrono::TimeZone;
        let (_dir, path) = crate::demo::temp_demo(300, 5);
        let mut s = Store::open_existing(&path).unwrap();
        let stamp = Stamp::new(
            "test",
            chrono::Utc.with_ymd_and_hms(2026, 11, 2, 9, 0, 0).unwrap(),
        );
        let ids: Vec<String> = {
            let mut stmt = s
                .conn
                .prepare("SELECT id FROM incidents ORDER BY seq")
                .unwrap();
            let rows = stmt.query_map([], |r| r.get(0)).unwrap();
            rows.collect::<Result<_, _>>().unwrap()
        };
        assert_eq!(ids.len(), 300);
        for (k, id) in [&ids[3], &ids[3], &ids[150], &ids[299]]
            .into_iter()
            .enumerate()
        {
            s.add_attachment_bytes(id, &format!("p{k}.jpg"), &[k as u8; 10], "photo", &stamp)
                .unwrap();
        }
        // the demo gives one examination at most: give two incidents a second one (a copy
        // of another incident's, with its readings and result)
        let examined: Vec<Incident> = ids
            .iter()
            .map(|id| s.get(id).unwrap())
            .filter(|inc| {
                inc.examinations
                    .first()
                    .is_some_and(|e| e.readings.len() > 1 && e.result.is_some())
            })
            .take(3)
            .collect();
        assert_eq!(examined.len(), 3, "the demo has examined incidents");
        for (from, to) in [(0, 1), (1, 2)] {
            let mut exam = examined[from].examinations[0].clone();
            exam.id.clear();
            exam.notes = format!("second look, copied from {}", examined[from].reference);
            let target = s.get(&examined[to].id).unwrap();
            s.put_examination(&target.id, target.revision, &exam, &stamp)
                .unwrap();
        }
        // a key that names nothing and a missing key (plain SQL): no code, both ways
        s.conn
            .execute_batch(
                "PRAGMA foreign_keys = OFF;
                 UPDATE incidents SET lot_id = 'no-such-lot' WHERE seq = 7;
                 UPDATE incidents SET site_id = NULL, asset_id = NULL WHERE seq = 8;
                 PRAGMA foreign_keys = ON;",
            )
            .unwrap();
        assert_eq!(s.get(&ids[6]).unwrap().glass.lot, None);
        assert!(s.get(&ids[7]).unwrap().site.is_none());
        let mut seen = Vec::new();
        let (mut plies, mut exams, mut readings, mut results) = (0, 0, 0, 0);
        let (mut custody, mut attachments, mut multi_exam) = (0, 0, 0);
        for_each_incident(&s.conn, |inc, ok| {
            let (_, want, d) = load_row(&s.conn, &inc.id)?.expect("the incident loads by id");
            assert_eq!(
                canon::incident_image(&inc)?,
                canon::incident_image(&want)?,
                "incident {}",
                inc.reference
            );
            assert_eq!(ok, derive(&want) == d, "incident {}", inc.reference);
            plies += inc.glass.plies.len();
            exams += inc.examinations.len();
            readings += inc
                .examinations
                .iter()
                .map(|e| e.readings.len())
                .sum::<usize>();
            results += inc
                .examinations
                .iter()
                .filter(|e| e.result.is_some())
                .count();
            custody += inc.custody.len();
            attachments += inc.attachments.len();
            multi_exam += usize::from(inc.examinations.len() > 1);
            seen.push(inc.id);
            Ok(())
        })
        .unwrap();
        assert_eq!(seen, ids, "every incident once, in seq order");
        // every child table was read, and the merge met incidents with several children
        let count = |t: &str| -> usize {
            s.conn
                .query_row(&format!("SELECT count(*) FROM {t}"), [], |r| {
                    r.get::<_, i64>(0)
                })
                .unwrap() as usize
        };
        assert_eq!(plies, count("plies"));
        assert_eq!(exams, count("examinations"));
        assert_eq!(readings, count("mirror_readings"));
        assert_eq!(results, count("results"));
        assert_eq!(custody, count("custody"));
        assert_eq!(attachments, count("attachments"));
        assert!(plies > 300 && exams > 0 && readings > exams && results > 0 && custody > 0);
        assert!(multi_exam > 0, "some incident has several examinations");
    }

    /// The check `fleet_facts_problems` makes, as it was written first: the incidents
    /// joined with the facts and the eight value lookups in SQL (the reference the merged
    /// scan is tested against).
    fn fleet_facts_problems_by_sql(conn: &Connection) -> Vec<String> {
        const WHY: &str = "the copy the fleet statistics read (table incident_facts)";
        let mut out = Vec::new();
        let mut stmt = conn.prepare(
            "SELECT i.reference, f.seq IS NULL FROM incidents i
             LEFT JOIN incident_facts f ON f.seq = i.seq
             LEFT JOIN fleet_values c ON c.n = f.cause_category
             LEFT JOIN fleet_values o ON o.n = f.origin_type
             LEFT JOIN fleet_values t ON t.n = f.temper
             LEFT JOIN fleet_values s ON s.n = f.supplier_id
             LEFT JOIN fleet_values p ON p.n = f.product_id
             LEFT JOIN fleet_values l ON l.n = f.lot_id
             LEFT JOIN fleet_values e ON e.n = f.site_id
             LEFT JOIN fleet_values a ON a.n = f.asset_id
             WHERE f.seq IS NULL OR f.found_on IS NOT i.found_on
                OR c.value IS NOT i.cause_category OR (f.cause_category IS NULL) != (i.cause_category IS NULL)
                OR o.value IS NOT i.origin_type OR (f.origin_type IS NULL) != (i.origin_type IS NULL)
                OR t.value IS NOT i.temper OR (f.temper IS NULL) != (i.temper IS NULL)
                OR s.value IS NOT i.supplier_id OR (f.supplier_id IS NULL) != (i.supplier_id IS NULL)
                OR p.value IS NOT i.product_id OR (f.product_id IS NULL) != (i.product_id IS NULL)
                OR l.value IS NOT i.lot_id OR (f.lot_id IS NULL) != (i.lot_id IS NULL)
                OR e.value IS NOT i.site_id OR (f.site_id IS NULL) != (i.site_id IS NULL)
                OR a.value IS NOT i.asset_id OR (f.asset_id IS NULL) != (i.asset_id IS NULL)
                OR f.stress_pa IS NOT i.stress_pa OR f.applied_stress_pa IS NOT i.applied_stress_pa
             ORDER BY i.seq",
        ).unwrap();
        let mut rows = stmt.query([]).unwrap();
        while let Some(r) = rows.next().unwrap() {
            let reference: String = r.get(0).unwrap();
            let missing: bool = r.get(1).unwrap();
            out.push(if missing {
                format!("incident {reference}: missing from {WHY} (deleted behind shardlog's back); stats leave it out")
            } else {
                format!("incident {reference}: {WHY} differs from the incident (changed behind shardlog's back); stats read the changed values")
            });
        }
        let orphans: i64 = conn
            .query_row(
                "SELECT count(*) FROM incident_facts f
             WHERE NOT EXISTS (SELECT 1 FROM incidents i WHERE i.seq = f.seq)",
                [],
                |r| r.get(0),
            )
            .unwrap();
        if orphans > 0 {
            out.push(format!(
                "{WHY}: {orphans} row(s) belong to no incident (inserted behind shardlog's back); stats count them"
            ));
        }
        out
    }

    /// The merged scan finds what the SQL join finds, message for message, on a demo
    /// database tampered with in each way the check looks for (and a few it must not
    /// report), one tamper at a time and all together.
    #[test]
    fn fleet_facts_scan_agrees_with_the_sql_join() {
        let (dir, path) = crate::demo::temp_demo(200, 9);
        let tampers = [
            "UPDATE incident_facts SET supplier_id = (SELECT max(n) FROM fleet_values) WHERE seq = 2",
            "UPDATE incident_facts SET cause_category = 99999 WHERE seq = 3",
            "UPDATE incident_facts SET origin_type = NULL WHERE seq = (SELECT min(seq) FROM incident_facts WHERE origin_type IS NOT NULL)",
            "UPDATE incident_facts SET temper = (SELECT min(n) FROM fleet_values) WHERE seq = 5",
            "UPDATE incidents SET cause_category = NULL WHERE seq = 6",
            "UPDATE incidents SET asset_id = NULL WHERE seq = 12",
            "UPDATE incident_facts SET found_on = '2001-01-01' WHERE seq = 7",
            "UPDATE incident_facts SET stress_pa = 1.5 WHERE seq = 8",
            "UPDATE incident_facts SET applied_stress_pa = NULL WHERE seq = (SELECT min(seq) FROM incidents WHERE applied_stress_pa IS NOT NULL)",
            // the one that must not be reported: -0.0 is 0.0 by value
            "UPDATE incidents SET stress_pa = 0.0 WHERE seq = 13; UPDATE incident_facts SET stress_pa = -0.0 WHERE seq = 13",
            "DELETE FROM incident_facts WHERE seq IN (1, 10, 200)",
            "INSERT INTO incident_facts (seq, found_on) VALUES (0, '2026-05-09'), (100000, '2026-05-09')",
            "DELETE FROM incidents WHERE seq = 150",
            "UPDATE fleet_values SET value = value || 'x' WHERE n = (SELECT site_id FROM incident_facts WHERE seq = 11)",
        ];
        let check = |c: &Connection| {
            let want = fleet_facts_problems_by_sql(c);
            assert_eq!(fleet_facts_problems(c).unwrap(), want);
            want.len()
        };
        // no triggers: a tamper of the incidents must not reach the copy
        let untriggered = |c: &Connection, sql: &str| {
            c.execute_batch(
                "DROP TRIGGER IF EXISTS incident_facts_update; DROP TRIGGER IF EXISTS incident_facts_delete;",
            )
            .unwrap();
            c.execute_batch(sql).unwrap();
        };
        {
            let c = Connection::open(&path).unwrap();
            assert_eq!(check(&c), 0);
        }
        let mut found = 0;
        for (k, sql) in tampers.iter().enumerate() {
            let copy = dir.path().join(format!("t{k}.db"));
            std::fs::copy(&path, &copy).unwrap();
            let c = Connection::open(&copy).unwrap();
            untriggered(&c, sql);
            let n = check(&c);
            assert_eq!(n == 0, sql.contains("-0.0"), "{sql}");
            found += usize::from(n > 0);
        }
        assert_eq!(found, tampers.len() - 1);
        let c = Connection::open(&path).unwrap();
        for sql in tampers {
            untriggered(&c, sql);
        }
        assert!(check(&c) > 10);
    }
}
