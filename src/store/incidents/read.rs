//! Reading one incident whole: its row, its children, by reference or id.

use chrono::NaiveDate;
use rusqlite::{Connection, OptionalExtension};

use super::damage::{decode, number_at, text_at};
use super::Derived;
use crate::store::dates::{parse_date, parse_time};
use crate::store::model::*;
use crate::store::{Store, StoreError};

/// The id of an incident given its reference or id.
pub(crate) fn resolve_key(conn: &Connection, key: &str) -> Result<String, StoreError> {
    let key = key.trim();
    conn.prepare_cached("SELECT id FROM incidents WHERE reference = ?1 OR id = ?1")?
        .query_row([key], |r| r.get::<_, String>(0))
        .optional()?
        .ok_or_else(|| StoreError::NotFound(key.to_string()))
}

/// An incident row of [`incident_select`] (children empty), with its seq and derived columns.
fn incident_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<(i64, Incident, Derived)> {
    incident_row_with(r, &|k| r.get(k))
}

/// An incident row with the code of its asset, site, supplier, product and lot (columns 6,
/// 8, 16, 17, 18) given by `code(column)`.
pub(super) fn incident_row_with(
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
        installed_on: date(39)?,
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

pub(super) fn load_row(
    conn: &Connection,
    id: &str,
) -> Result<Option<(i64, Incident, Derived)>, StoreError> {
    let legacy = !crate::store::sqlite::columns_present(conn);
    let mut stmt = conn.prepare_cached(if legacy {
        concat!(incident_select!(legacy), " WHERE i.id = ?1")
    } else {
        concat!(incident_select!(), " WHERE i.id = ?1")
    })?;
    let row = stmt.query_row([id], incident_row).optional()?;
    let Some((seq, mut inc, d)) = row else {
        return Ok(None);
    };
    load_children(conn, &mut inc)?;
    Ok(Some((seq, inc, d)))
}

/// A text column borrowed from the row (no copy), None for NULL.
pub(super) fn text_ref<'a>(
    r: &'a rusqlite::Row<'_>,
    k: usize,
) -> rusqlite::Result<Option<&'a str>> {
    match r.get_ref(k)? {
        rusqlite::types::ValueRef::Null => Ok(None),
        rusqlite::types::ValueRef::Text(b) => std::str::from_utf8(b)
            .map(Some)
            .map_err(|e| rusqlite::Error::Utf8Error(k, e)),
        _ => Err(bad_col(k, "text value", "another type")),
    }
}

pub(super) fn bad_col(i: usize, what: &str, s: &str) -> rusqlite::Error {
    rusqlite::Error::FromSqlConversionFailure(
        i,
        rusqlite::types::Type::Text,
        format!("not a {what}: {s}").into(),
    )
}

pub(super) fn ply_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Ply> {
    Ok(Ply {
        material: r.get(0)?,
        temper: r.get(1)?,
        thickness_m: r.get(2)?,
        coating: r.get(3)?,
        edge_finish: r.get(4)?,
    })
}

pub(super) fn exam_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Examination> {
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

pub(super) fn reading_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<MirrorReading> {
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
        viewing: r.get(7)?,
    })
}

pub(super) fn result_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<ComputedResult> {
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

pub(super) fn custody_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<CustodyEntry> {
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

pub(super) fn attachment_row(r: &rusqlite::Row<'_>) -> rusqlite::Result<Attachment> {
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

/// The values of a child query, or the first row that cannot be read, as the damage of the
/// incident (named by table, row and field).
fn all_read<T>(
    rows: impl Iterator<Item = rusqlite::Result<Result<T, String>>>,
) -> Result<Vec<T>, StoreError> {
    let mut out = Vec::new();
    for r in rows {
        out.push(r?.map_err(StoreError::Database)?);
    }
    Ok(out)
}

fn load_children(conn: &Connection, inc: &mut Incident) -> Result<(), StoreError> {
    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        ply_cols!(),
        ", p.ply_no FROM plies p WHERE p.incident_id = ?1 ORDER BY p.ply_no"
    ))?;
    inc.glass.plies = all_read(stmt.query_map([&inc.id], |r| {
        decode(r, "plies", || format!("ply {}", number_at(r, 5)), ply_row)
    })?)?;

    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        exam_cols!(),
        " FROM examinations e WHERE e.incident_id = ?1 ORDER BY e.exam_no"
    ))?;
    inc.examinations = all_read(stmt.query_map([&inc.id], |r| {
        decode(
            r,
            "examinations",
            || format!("id {}", text_at(r, 0)),
            exam_row,
        )
    })?)?;
    for e in &mut inc.examinations {
        let mut stmt = conn.prepare_cached(if crate::store::sqlite::columns_present(conn) {
            concat!(
                "SELECT ",
                reading_cols!(),
                ", m.reading_no FROM mirror_readings m WHERE m.examination_id = ?1 ORDER BY m.reading_no"
            )
        } else {
            concat!(
                "SELECT ",
                reading_cols!(legacy),
                ", m.reading_no FROM mirror_readings m WHERE m.examination_id = ?1 ORDER BY m.reading_no"
            )
        })?;
        let exam = e.id.clone();
        e.readings = all_read(stmt.query_map([&e.id], |r| {
            let row = || format!("examination {exam}, reading {}", number_at(r, 8));
            decode(r, "mirror_readings", row, reading_row)
        })?)?;
        let mut stmt = conn.prepare_cached(concat!(
            "SELECT ",
            result_cols!(),
            " FROM results r WHERE r.examination_id = ?1"
        ))?;
        e.result = all_read(stmt.query_map([&e.id], |r| {
            decode(r, "results", || format!("examination {exam}"), result_row)
        })?)?
        .into_iter()
        .next();
    }

    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        custody_cols!(),
        " FROM custody c WHERE c.incident_id = ?1 ORDER BY c.entry_no"
    ))?;
    inc.custody = all_read(stmt.query_map([&inc.id], |r| {
        decode(
            r,
            "custody",
            || format!("id {}", text_at(r, 0)),
            custody_row,
        )
    })?)?;
    let mut stmt = conn.prepare_cached(concat!(
        "SELECT ",
        attachment_cols!(),
        " FROM attachments t WHERE t.incident_id = ?1 ORDER BY t.entry_no"
    ))?;
    inc.attachments = all_read(stmt.query_map([&inc.id], |r| {
        decode(
            r,
            "attachments",
            || format!("id {}", text_at(r, 0)),
            attachment_row,
        )
    })?)?;
    Ok(())
}

pub(crate) fn load(conn: &Connection, id: &str) -> Result<Option<Incident>, StoreError> {
    Ok(load_row(conn, id)?.map(|(_, inc, _)| inc))
}
impl Store {
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

    /// The reference of the incident with this key, if any.
    pub(crate) fn reference_of(&self, id: &str) -> Option<String> {
        self.conn
            .query_row("SELECT reference FROM incidents WHERE id = ?1", [id], |r| {
                r.get(0)
            })
            .ok()
    }

    /// Every incident's reference (the checks of an import).
    pub(crate) fn all_references(&self) -> Result<Vec<String>, StoreError> {
        let mut stmt = self.conn.prepare("SELECT reference FROM incidents")?;
        let rows = stmt.query_map([], |r| r.get::<_, String>(0))?;
        Ok(rows.collect::<Result<_, _>>()?)
    }

    /// Number of incidents in the database.
    pub fn incident_count(&self) -> Result<u64, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT count(*) FROM incidents", [], |r| r.get::<_, i64>(0))?
            as u64)
    }
}
