//! The flat facts the fleet statistics read: rows from the wide table, the narrow
//! `incident_facts` copy, its first filling, and the check that it agrees with `incidents`.

use std::collections::HashMap;

use chrono::NaiveDate;
use rusqlite::types::ValueRef;
use rusqlite::{params, params_from_iter, Connection, TransactionBehavior};
use shardlog_core::fleet::StressKind;

use super::list::{filter_sql, text_value, where_clause, TextPlan};
use super::read::{bad_col, text_ref};
use crate::store::dates::{fmt_date, parse_date};
use crate::store::model::*;
use crate::store::{Store, StoreError};

impl Store {
    /// The incidents' facts and the exposure a statistics query needs. The query's keys,
    /// its `only` keys and, with an origin type, the origin type are always read; `extra`
    /// adds more (the review adds the cause); other keys are left unrecorded.
    pub fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError> {
        let mut keys: Vec<shardlog_core::fleet::Key> =
            q.keys.iter().chain(extra).copied().collect();
        keys.extend(q.only.iter().map(|(k, _)| *k));
        if q.origin_type.is_some() {
            keys.push(shardlog_core::fleet::Key::OriginType);
        }
        let mut incidents = self.fleet_facts(q.since, q.until, q.stress, Some(&keys))?;
        let mut exposures: Vec<_> = self.exposure()?.iter().map(|e| e.to_fleet()).collect();
        if keys.contains(&shardlog_core::fleet::Key::Bench) {
            // a bench file's incidents and panes are all its own bench's
            let code = self.bench_code()?;
            let shared: Option<std::rc::Rc<str>> = code.as_deref().map(Into::into);
            for f in &mut incidents {
                f.bench = shared.clone();
            }
            for e in &mut exposures {
                e.bench = code.clone();
            }
        }
        Ok((incidents, exposures))
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
            args.push(text_value(&fmt_date(d)));
        }
        if let Some(d) = until {
            conds.push("found_on <= ?".to_string());
            args.push(text_value(&fmt_date(d)));
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
                    // the bench's code is the same on every row: set by stats_input
                    Key::Bench | Key::Month | Key::Season => {}
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
    fill_fleet_facts_after(tx, 0)
}

/// [`fill_fleet_facts`] for the incidents after row `after_seq` only (a bulk load into a
/// database that already has incidents, with the triggers dropped for the load).
pub(crate) fn fill_fleet_facts_after(tx: &Connection, after_seq: i64) -> Result<(), StoreError> {
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
         FROM incidents WHERE seq > ?1 ORDER BY seq",
    )?;
    let mut rows = stmt.query([after_seq])?;
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

/// What [`Store::stats_input`] gives: one fact row per incident and the exposure rows.
pub type StatsInput = (
    Vec<shardlog_core::fleet::IncidentFacts>,
    Vec<shardlog_core::fleet::Exposure>,
);

#[cfg(test)]
mod tests {
    use super::*;

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
