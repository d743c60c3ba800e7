//! Every incident in row order, read by one ordered scan of each table (what verify reads).

use std::collections::HashMap;

use rusqlite::Connection;

use super::damage::{decode, number_at, text_at};
use super::derive;
use super::read::{
    attachment_row, custody_row, exam_row, incident_row_with, ply_row, reading_row, result_row,
    text_ref,
};
use crate::store::model::*;
use crate::store::StoreError;

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
        range: (i64, i64),
        read: fn(&rusqlite::Row<'_>) -> rusqlite::Result<(i64, T)>,
    ) -> Result<Self, StoreError> {
        let mut scan = ChildScan {
            rows: stmt.query([range.0, range.1])?,
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

/// The value of a child row, or None with its damage noted in `bad` (the first is kept).
fn keep<T>(bad: &mut Option<String>, v: Result<T, String>) -> Option<T> {
    match v {
        Ok(v) => Some(v),
        Err(why) => {
            bad.get_or_insert(why);
            None
        }
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
    f: impl FnMut(Incident, bool) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    for_each_readable_incident(conn, (i64::MIN, i64::MAX), f, |_, reference, why| {
        Err(StoreError::Database(format!(
            "incident {reference} cannot be read: {why}"
        )))
    })
}

/// A scan column holding keys, and the code of each key.
type CodeMap = (usize, HashMap<String, String>);

/// The codes of sites, assets, suppliers, products and lots by key (with the column of the
/// scan that holds each key), looked up here rather than joined per incident in SQL (five
/// index searches each: an eighth of the time).
fn code_maps(conn: &Connection) -> Result<[CodeMap; 5], StoreError> {
    let code_map = |sql: &str| -> Result<HashMap<String, String>, StoreError> {
        let mut stmt = conn.prepare(sql)?;
        let rows = stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?;
        Ok(rows.collect::<Result<_, _>>()?)
    };
    Ok([
        (6, code_map("SELECT id, code FROM assets")?),
        (8, code_map("SELECT id, code FROM sites")?),
        (16, code_map("SELECT id, code FROM suppliers")?),
        (17, code_map("SELECT id, code FROM products")?),
        (18, code_map("SELECT id, code FROM lots")?),
    ])
}

/// The incidents of a seq range: the columns of `incident_select`, with the keys in place of
/// the codes (`legacy`: a database from before the install date).
fn scan_incidents_sql(legacy: bool) -> String {
    [
        "SELECT i.seq, i.id, i.reference, i.revision, i.created_at, i.updated_at, i.asset_id, i.position, i.site_id,
                i.found_on, i.broken_on, i.temperature_c, i.sun, i.weather, i.reporter, i.how_found,
                i.supplier_id, i.product_id, i.lot_id, i.makeup, i.width_m, i.height_m, i.crack_count, i.branching,
                i.fragment_count, i.origin_location, i.tension_face, i.cause_category, i.cause_factors,
                i.cause_confidence, i.cause_responsibility, i.cause_note, i.status, i.description, i.notes,
                i.stress_pa, i.applied_stress_pa, i.origin_type, i.temper, ",
        if legacy { "NULL" } else { "i.installed_on" },
        " FROM incidents i WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq",
    ]
    .concat()
}

/// The mirror readings of a seq range's incidents (`legacy`: from before the viewing mode).
fn scan_readings_sql(legacy: bool) -> String {
    [
        "SELECT ",
        if legacy {
            reading_cols!(legacy)
        } else {
            reading_cols!()
        },
        ", i.seq, e.id, m.reading_no FROM incidents i JOIN examinations e ON e.incident_id = i.id
         JOIN mirror_readings m ON m.examination_id = e.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, e.exam_no, m.reading_no",
    ]
    .concat()
}

/// [`for_each_incident`], handing an incident whose row or one of whose child rows cannot be
/// read (a date or time that is not one) to `damaged` with its id, reference and why, and
/// going on with the others. Only the incidents whose seq is in `range` (both ends in).
pub(crate) fn for_each_readable_incident(
    conn: &Connection,
    range: (i64, i64),
    mut f: impl FnMut(Incident, bool) -> Result<(), StoreError>,
    mut damaged: impl FnMut(String, String, String) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    let maps = code_maps(conn)?;
    // the columns of `incident_select`, with the keys in place of the codes
    let legacy = !crate::store::sqlite::columns_present(conn);
    let mut incidents = conn.prepare(&scan_incidents_sql(legacy))?;
    let mut plies = conn.prepare(concat!(
        "SELECT ",
        ply_cols!(),
        ", i.seq, p.ply_no FROM incidents i JOIN plies p ON p.incident_id = i.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, p.ply_no"
    ))?;
    let mut exams = conn.prepare(concat!(
        "SELECT ",
        exam_cols!(),
        ", i.seq FROM incidents i JOIN examinations e ON e.incident_id = i.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, e.exam_no"
    ))?;
    let mut readings = conn.prepare(&scan_readings_sql(legacy))?;
    let mut results = conn.prepare(concat!(
        "SELECT ",
        result_cols!(),
        ", i.seq, e.id FROM incidents i JOIN examinations e ON e.incident_id = i.id
         JOIN results r ON r.examination_id = e.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, e.exam_no"
    ))?;
    let mut custody = conn.prepare(concat!(
        "SELECT ",
        custody_cols!(),
        ", i.seq FROM incidents i JOIN custody c ON c.incident_id = i.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, c.entry_no"
    ))?;
    let mut attachments = conn.prepare(concat!(
        "SELECT ",
        attachment_cols!(),
        ", i.seq FROM incidents i JOIN attachments t ON t.incident_id = i.id
         WHERE i.seq BETWEEN ?1 AND ?2 ORDER BY i.seq, t.entry_no"
    ))?;
    // every scan starts before any is stepped to its end, so they share one read snapshot
    let mut rows = incidents.query([range.0, range.1])?;
    // each child decoded, or the message that names the row and field it cannot read
    let mut plies = ChildScan::new(&mut plies, range, |r| {
        let row = || format!("ply {}", number_at(r, 6));
        Ok((r.get(5)?, decode(r, "plies", row, ply_row)?))
    })?;
    let mut exams = ChildScan::new(&mut exams, range, |r| {
        let row = || format!("id {}", text_at(r, 0));
        Ok((r.get(14)?, decode(r, "examinations", row, exam_row)?))
    })?;
    let mut readings = ChildScan::new(&mut readings, range, |r| {
        let row = || {
            format!(
                "examination {}, reading {}",
                text_at(r, 9),
                number_at(r, 10)
            )
        };
        let m = decode(r, "mirror_readings", row, reading_row)?;
        Ok((r.get(8)?, (r.get::<_, String>(9)?, m)))
    })?;
    let mut results = ChildScan::new(&mut results, range, |r| {
        let row = || format!("examination {}", text_at(r, 11));
        let res = decode(r, "results", row, result_row)?;
        Ok((r.get(10)?, (r.get::<_, String>(11)?, res)))
    })?;
    let mut custody = ChildScan::new(&mut custody, range, |r| {
        let row = || format!("id {}", text_at(r, 0));
        Ok((r.get(6)?, decode(r, "custody", row, custody_row)?))
    })?;
    let mut attachments = ChildScan::new(&mut attachments, range, |r| {
        let row = || format!("id {}", text_at(r, 0));
        Ok((r.get(7)?, decode(r, "attachments", row, attachment_row)?))
    })?;
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
        let (seq, mut inc, d) = match incident_row_with(r, &code) {
            Ok(x) => x,
            Err(e) => {
                // its children are passed over by the next incident's scans
                damaged(
                    r.get::<_, String>(1)?,
                    r.get::<_, String>(2)?,
                    e.to_string(),
                )?;
                continue;
            }
        };
        // the first child row that cannot be read makes the incident damaged
        let mut bad: Option<String> = None;
        plies.take(seq, |p| inc.glass.plies.extend(keep(&mut bad, p)))?;
        exams.take(seq, |e| inc.examinations.extend(keep(&mut bad, e)))?;
        let exams = &mut inc.examinations;
        readings.take(seq, |(exam, m)| {
            if let Some(m) = keep(&mut bad, m) {
                if let Some(e) = exams.iter_mut().find(|e| e.id == exam) {
                    e.readings.push(m);
                }
            }
        })?;
        results.take(seq, |(exam, res)| {
            if let Some(res) = keep(&mut bad, res) {
                if let Some(e) = exams.iter_mut().find(|e| e.id == exam) {
                    e.result = Some(res);
                }
            }
        })?;
        custody.take(seq, |c| inc.custody.extend(keep(&mut bad, c)))?;
        attachments.take(seq, |a| inc.attachments.extend(keep(&mut bad, a)))?;
        if let Some(why) = bad {
            damaged(inc.id, inc.reference, why)?;
            continue;
        }
        let ok = derive(&inc) == d;
        f(inc, ok)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::canon;
    use crate::store::incidents::read::load_row;
    use crate::store::Store;

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
}
