//! Writing incidents: the row and its children, new, changed and deleted, each change
//! with its audit row in the same transaction.

use chrono::NaiveDate;
use rusqlite::types::{ToSqlOutput, ValueRef};
use rusqlite::{params, params_from_iter, Connection, OptionalExtension, TransactionBehavior};

use super::read::{load, load_row, resolve_key};
use super::refs::{RefCache, Refs};
use super::validate::{validate, Lookups};
use super::{derive, search_body, Derived};
use crate::store::audit::{Bulk, Chain, INCIDENT};
use crate::store::canon;
use crate::store::dates::{fmt_date, fmt_time};
use crate::store::model::*;
use crate::store::rendered::{self, RenderedResult};
use crate::store::sqlite;
use crate::store::{IdGen, Store, StoreError};

const COLS: [&str; 40] = [
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
    "installed_on",
    "seq",
];

/// The columns written: all but `seq`, or, in a database held before schema 0008 (the
/// upgrade tests), all but `seq` and the last one (`installed_on`, last for that reason).
fn written(legacy: bool) -> usize {
    if legacy {
        COLS.len() - 2
    } else {
        COLS.len() - 1
    }
}

fn insert_sql(legacy: bool) -> &'static str {
    static SQL: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    static LEGACY: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    if legacy {
        LEGACY.get_or_init(|| build_insert_sql(written(true)))
    } else {
        SQL.get_or_init(|| build_insert_sql(written(false)))
    }
}

fn update_sql(legacy: bool) -> &'static str {
    static SQL: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    static LEGACY: std::sync::OnceLock<String> = std::sync::OnceLock::new();
    if legacy {
        LEGACY.get_or_init(|| build_update_sql(written(true)))
    } else {
        SQL.get_or_init(|| build_update_sql(written(false)))
    }
}

fn build_insert_sql(n: usize) -> String {
    let cols = COLS[..n].join(", ");
    let qs: Vec<String> = (1..=n).map(|i| format!("?{i}")).collect();
    format!("INSERT INTO incidents ({cols}) VALUES ({})", qs.join(", "))
}

fn build_update_sql(n: usize) -> String {
    let sets: Vec<String> = COLS[..n]
        .iter()
        .enumerate()
        .map(|(i, c)| format!("{c} = ?{}", i + 1))
        .collect();
    format!(
        "UPDATE incidents SET {} WHERE id = ?1 AND revision = ?{}",
        sets.join(", "),
        n + 1
    )
}

/// Column values of an incident row, in [`COLS`] order, borrowing the incident's text
/// (the few values that need formatting are held in `owned`).
struct RowValues<'a> {
    values: Vec<ToSqlOutput<'a>>,
}

/// Text values an incident row and its children need formatted (times, dates, the factor
/// list, each examination's result as stored JSON).
struct RowText {
    created_at: String,
    updated_at: String,
    found_on: String,
    broken_on: Option<String>,
    installed_on: Option<String>,
    factors: Option<String>,
    /// Per examination, in order: its result's `constants_json` and `analysis_json`.
    results: Vec<Option<ResultText>>,
}

/// A result's two JSON columns, as stored.
struct ResultText {
    constants: String,
    analysis: String,
}

/// The JSON text of a stored value, written into a buffer sized for a whole analysis at once
/// (growing one from empty copies it a dozen times).
fn json_text(v: &serde_json::Value) -> Result<String, StoreError> {
    let mut out = Vec::with_capacity(8 * 1024);
    serde_json::to_writer(&mut out, v)?;
    // serde_json writes UTF-8 only
    String::from_utf8(out).map_err(|e| StoreError::Database(e.to_string()))
}

fn row_text(inc: &Incident) -> Result<RowText, StoreError> {
    let mut text = row_text_of_row(inc)?;
    text.results = inc
        .examinations
        .iter()
        .map(|e| {
            e.result
                .as_ref()
                .map(|r| {
                    Ok(ResultText {
                        constants: json_text(&r.constants)?,
                        analysis: json_text(&r.analysis)?,
                    })
                })
                .transpose()
        })
        .collect::<Result<_, StoreError>>()?;
    Ok(text)
}

/// The texts of the incident row (its results' texts left empty).
fn row_text_of_row(inc: &Incident) -> Result<RowText, StoreError> {
    Ok(RowText {
        created_at: fmt_time(inc.created_at),
        updated_at: fmt_time(inc.updated_at),
        found_on: fmt_date(inc.found_on),
        broken_on: inc.broken_on.map(fmt_date),
        installed_on: inc.installed_on.map(fmt_date),
        factors: match &inc.cause {
            Some(c) => Some(serde_json::to_string(&c.factors)?),
            None => None,
        },
        results: Vec::new(),
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
            ot(owned.installed_on.as_deref()),
        ],
    }
}

fn insert_children(conn: &Connection, inc: &Incident, owned: &RowText) -> Result<(), StoreError> {
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
        let legacy = !crate::store::sqlite::columns_present(conn);
        let mut rd = conn.prepare_cached(if legacy {
            "INSERT INTO mirror_readings (examination_id, reading_no, boundary, value_text, unit, value_m,
                 magnification, analyst, note)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)"
        } else {
            "INSERT INTO mirror_readings (examination_id, reading_no, boundary, value_text, unit, value_m,
                 magnification, analyst, note, viewing)
             VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)"
        })?;
        for (j, r) in e.readings.iter().enumerate() {
            let values = params![
                e.id,
                j as i64 + 1,
                r.boundary,
                r.radius.text,
                r.radius.unit,
                r.radius.si,
                r.magnification,
                r.analyst,
                r.note,
                r.viewing
            ];
            rd.execute(&values[..if legacy { 9 } else { 10 }])?;
        }
        if let (Some(res), Some(Some(text))) = (&e.result, owned.results.get(i)) {
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
                text.constants,
                text.analysis
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
    bulk: Option<&mut Bulk>,
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
    /// Its results are held as figures, their texts rendered aside ([`prepare_rendered`]):
    /// only its digest stands for its image.
    rendered: bool,
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
        rendered: false,
    })
}

/// [`prepare`] of an incident whose results hold their figures only, with the stored texts
/// of each rendered beside it (`texts`, per examination: `Some` for a result computed
/// from the core's analysis; a result held as JSON values is rendered from them): the same
/// rows and the same image digest as [`prepare`] of the incident holding the values.
pub(crate) fn prepare_rendered(
    inc: Incident,
    refs: Refs,
    stamp: Stamp,
    texts: Vec<Option<RenderedResult>>,
) -> Result<Prepared, StoreError> {
    let mut given = texts.into_iter();
    let mut all = Vec::with_capacity(inc.examinations.len());
    for e in &inc.examinations {
        let r = given.next().flatten();
        all.push(match (&e.result, r) {
            (None, _) => None,
            (Some(_), Some(r)) => Some(r),
            (Some(values), None) => Some(rendered::from_values(values)?),
        });
    }
    let img = canon::incident_image_rendered(&inc, &all.iter().flatten().collect::<Vec<_>>())?;
    let mut text = row_text_of_row(&inc)?;
    text.results = all
        .into_iter()
        .map(|r| {
            r.map(|r| ResultText {
                constants: r.constants,
                analysis: r.analysis,
            })
        })
        .collect();
    Ok(Prepared {
        digest: canon::sha256_hex(img.as_bytes()),
        body: search_body(&inc),
        derived: derive(&inc),
        text,
        inc,
        refs,
        stamp,
        rendered: true,
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
    bulk: Option<&mut Bulk>,
) -> Result<i64, StoreError> {
    let seq = write_rows_with(conn, &p.inc, &p.refs, &p.derived, &p.text)?;
    match bulk {
        Some(b) => b.add_digest(conn, chain, &p.stamp, &p.inc.id, p.digest.clone())?,
        None if p.rendered => {
            return Err(StoreError::Database(
                "an incident with rendered results is audited in a batch row only".into(),
            ))
        }
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
    let legacy = !crate::store::sqlite::columns_present(conn);
    conn.prepare_cached(insert_sql(legacy))?
        .execute(params_from_iter(values.values.iter().take(written(legacy))))
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
    insert_children(conn, inc, owned)?;
    Ok(seq)
}

/// A bench code: 2 to 8 capital letters or digits, starting with a letter (the fleet's
/// `fleet_benches` checks the same). Lower case is taken and made upper case.
pub fn check_bench_code(text: &str) -> Result<String, String> {
    let code = text.trim().to_ascii_uppercase();
    let ok = (2..=8).contains(&code.len())
        && code.starts_with(|c: char| c.is_ascii_uppercase())
        && code
            .chars()
            .all(|c| c.is_ascii_uppercase() || c.is_ascii_digit());
    if ok {
        Ok(code)
    } else {
        Err(format!(
            "bench code \"{}\": expected 2 to 8 letters or digits, starting with a letter (e.g. NORTH, LAB2)",
            text.trim()
        ))
    }
}

/// This bench's code (kept in `meta`), None before one is set.
pub(crate) fn bench_code(conn: &Connection) -> Result<Option<String>, StoreError> {
    Ok(conn
        .query_row("SELECT value FROM meta WHERE key = 'bench_code'", [], |r| {
            r.get(0)
        })
        .optional()?)
}

/// Next free reference for a date found: "BR-YYMMDD-NNNN", or "BR-CODE-YYMMDD-NNNN" on a
/// bench with a code (so that no two incidents of a fleet share one).
pub(crate) fn next_reference(conn: &Connection, found_on: NaiveDate) -> Result<String, StoreError> {
    let code = bench_code(conn)?;
    let prefix = reference_prefix(code.as_deref(), found_on);
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
    format_reference(code.as_deref(), found_on, n)
}

pub(crate) fn reference_prefix(code: Option<&str>, found_on: NaiveDate) -> String {
    match code {
        Some(c) => format!("BR-{c}-{}-", found_on.format("%y%m%d")),
        None => format!("BR-{}-", found_on.format("%y%m%d")),
    }
}

pub(crate) fn format_reference(
    code: Option<&str>,
    found_on: NaiveDate,
    n: u32,
) -> Result<String, StoreError> {
    if n > 9999 {
        return Err(StoreError::invalid(
            "found_on",
            format!("more than 9999 incidents found on {found_on}"),
        ));
    }
    Ok(format!("{}{n:04}", reference_prefix(code, found_on)))
}
impl Store {
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

    pub(crate) fn update_in(
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
        let legacy = !crate::store::sqlite::columns_present(conn);
        values.values.truncate(written(legacy));
        values
            .values
            .push(ToSqlOutput::Borrowed(ValueRef::Integer(current.revision)));
        let n = conn
            .prepare_cached(update_sql(legacy))?
            .execute(params_from_iter(values.values.iter()))?;
        if n != 1 {
            return Err(StoreError::StaleRevision {
                reference: current.reference,
                expected: inc.revision,
                current: current.revision,
            });
        }
        delete_children(conn, &new.id)?;
        insert_children(conn, &new, &owned)?;
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
}

/// Put an incident exactly as the fleet holds it (a pull): inserted when this bench lacks
/// it, else its row and children replaced, its reference, revision and times kept as they
/// came, so that its image here is the fleet's byte for byte. One audit row, by `stamp`.
/// Returns whether anything changed.
pub(crate) fn put_from_fleet(
    conn: &Connection,
    chain: &mut Chain,
    ids: &mut IdGen,
    inc: &Incident,
    stamp: &Stamp,
) -> Result<bool, StoreError> {
    let refs = Store::resolve_refs(
        conn,
        chain,
        ids,
        inc,
        stamp,
        false,
        &mut RefCache::default(),
    )?;
    let Some((seq, current, _)) = load_row(conn, &inc.id)? else {
        insert_new(conn, chain, inc, &refs, stamp, None)?;
        return Ok(true);
    };
    let before = canon::incident_image(&current)?;
    let after = canon::incident_image(inc)?;
    if before == after {
        return Ok(false);
    }
    let d = derive(inc);
    let owned = row_text(inc)?;
    let mut values = row_values(inc, &refs, &d, &owned);
    let legacy = !crate::store::sqlite::columns_present(conn);
    values.values.truncate(written(legacy));
    values
        .values
        .push(ToSqlOutput::Borrowed(ValueRef::Integer(current.revision)));
    conn.prepare_cached(update_sql(legacy))?
        .execute(params_from_iter(values.values.iter()))?;
    delete_children(conn, &inc.id)?;
    insert_children(conn, inc, &owned)?;
    sqlite::fts_put(conn, seq, &search_body(inc))?;
    chain.record(conn, stamp, INCIDENT, &inc.id, Some(&before), Some(&after))?;
    Ok(true)
}
