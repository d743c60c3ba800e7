//! The incident log: pages in keyset order (never OFFSET), the filter as fixed SQL with
//! bound values, and the plan for a text search.

use rusqlite::types::Value as SqlValue;
use rusqlite::{params, params_from_iter, Connection};

use crate::store::dates::{fmt_date, parse_date};
use crate::store::model::*;
use crate::store::sqlite;
use crate::store::{Store, StoreError};

impl Store {
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
        let (from, conds, args) = filter_sql(&self.conn, filter, plan)?;
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
        let query = PageQuery {
            select: &select,
            conds: &conds,
            args: &args,
            sort,
            after: page.after.as_ref(),
            limit,
        };
        let rows = match sort.column {
            SortColumn::Stress => self.page_by_stress(&query)?,
            _ => self.page_by_key(&query)?,
        };
        let next = self.next_cursor(&rows, sort, limit)?;
        let (total, more_than_total) = if page.with_total {
            let (n, more) = filter.total_of(self.filtered_total(filter, text_hits)?);
            (Some(n), more)
        } else {
            (None, false)
        };
        Ok(Page {
            rows: rows.into_iter().map(|(_, r)| r).collect(),
            next,
            total,
            more_than_total,
        })
    }

    /// One page in the order of a sort column and seq, after the cursor's key.
    fn page_by_key(&self, q: &PageQuery<'_>) -> Result<Vec<(i64, LogRow)>, StoreError> {
        let (order_cols, key_exprs): (&str, Vec<&str>) = match q.sort.column {
            SortColumn::Found => ("i.found_on {d}, i.seq {d}", vec!["i.found_on"]),
            SortColumn::Reference => ("i.reference {d}, i.seq {d}", vec!["i.reference"]),
            SortColumn::Status => (
                "i.status {d}, i.found_on {d}, i.seq {d}",
                vec!["i.status", "i.found_on"],
            ),
            SortColumn::Stress => ("", vec![]),
        };
        let (dir, cmp) = q.direction();
        let select = q.select;
        let limit = q.limit;
        let mut rows = Vec::new();
        let mut conds = q.conds.to_vec();
        let mut params_v = q.args.to_vec();
        if let Some(c) = q.after {
            let mut lhs: Vec<&str> = key_exprs.clone();
            lhs.push("i.seq");
            let qs = vec!["?"; lhs.len()].join(", ");
            conds.push(format!("({}) {cmp} ({qs})", lhs.join(", ")));
            for k in &c.key {
                match k {
                    CursorKey::Text(s) => params_v.push(SqlValue::Text(s.clone())),
                    CursorKey::Real(x) => params_v.push(real_value(*x)),
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
        Ok(rows)
    }

    /// One page by stress: incidents with a stress first (in the chosen direction), then
    /// the rest in seq order.
    fn page_by_stress(&self, q: &PageQuery<'_>) -> Result<Vec<(i64, LogRow)>, StoreError> {
        let (dir, cmp) = q.direction();
        let select = q.select;
        let limit = q.limit;
        let mut rows = Vec::new();
        let in_nulls =
            matches!(q.after, Some(c) if matches!(c.key.first(), Some(CursorKey::Real(None))));
        if !in_nulls {
            let mut conds = q.conds.to_vec();
            conds.push("i.stress_pa IS NOT NULL".into());
            let mut params_v = q.args.to_vec();
            if let Some(c) = q.after {
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
            let mut conds = q.conds.to_vec();
            conds.push("i.stress_pa IS NULL".into());
            let mut params_v = q.args.to_vec();
            if in_nulls {
                if let Some(c) = q.after {
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
        Ok(rows)
    }

    /// The cursor after a full page (None after a short one: the log ends there).
    fn next_cursor(
        &self,
        rows: &[(i64, LogRow)],
        sort: Sort,
        limit: i64,
    ) -> Result<Option<Cursor>, StoreError> {
        let next = if rows.len() as i64 == limit {
            rows.last().map(|(seq, row)| Cursor {
                key: match sort.column {
                    SortColumn::Found => vec![CursorKey::Text(found_text(row))],
                    SortColumn::Reference => vec![CursorKey::Text(row.reference.clone())],
                    SortColumn::Status => vec![
                        CursorKey::Text(row.status.clone()),
                        CursorKey::Text(found_text(row)),
                    ],
                    SortColumn::Stress => vec![CursorKey::Real(None)],
                },
                seq: *seq,
            })
        } else {
            None
        };
        // the stress cursor needs the exact stored value, not the MPa shown
        Ok(match (next, sort.column) {
            (Some(mut c), SortColumn::Stress) => {
                let stress: Option<f64> = self
                    .conn
                    .prepare_cached("SELECT stress_pa FROM incidents WHERE seq = ?1")?
                    .query_row([c.seq], |r| r.get(0))?;
                c.key = vec![CursorKey::Real(stress)];
                Some(c)
            }
            (n, _) => n,
        })
    }

    /// How many incidents match the filter: all of them, or at most [`COUNT_CAP`] + 1 when
    /// the filter's count is capped (as the fleet counts). `text_hits`: the text index's
    /// count of the text filter's matches, if there is one.
    fn filtered_total(&self, filter: &Filter, text_hits: Option<u64>) -> Result<u64, StoreError> {
        let text_only = Filter {
            text: None,
            ..filter.clone()
        } == Filter::default();
        if let (true, Some(hits)) = (text_only, text_hits) {
            // every text-index row belongs to one incident (kept in step on every write)
            return Ok(hits);
        }
        let (from, where_sql, args) = filter_sql(&self.conn, filter, TextPlan::IndexDrives)?;
        let sql = if filter.count_is_capped() {
            format!(
                "SELECT count(*) FROM (SELECT 1 FROM {from} {} LIMIT {})",
                where_clause(&where_sql),
                count_cap() + 1
            )
        } else {
            format!("SELECT count(*) FROM {from} {}", where_clause(&where_sql))
        };
        let n: i64 = self
            .conn
            .prepare_cached(&sql)?
            .query_row(params_from_iter(args.iter()), |r| r.get(0))?;
        Ok(n as u64)
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
            let occurred = parse_date(&found);
            Ok((
                r.get::<_, i64>(0)?,
                LogRow {
                    id: r.get(1)?,
                    reference: r.get(2)?,
                    occurred: occurred.unwrap_or_default(),
                    asset: r.get(4)?,
                    position: r.get(5)?,
                    site: r.get(6)?,
                    product: r.get(7)?,
                    supplier: r.get(8)?,
                    lot: r.get(9)?,
                    status: r.get(10)?,
                    cause: r.get(11)?,
                    stress_mpa: r.get::<_, Option<f64>>(12)?.map(|x| x / 1e6),
                    damaged: occurred.is_none().then_some(found),
                    bench: None,
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
}

/// What one page of the log asks: the select (up to FROM and its joins), the filter's
/// conditions and their values, the order and where the page starts.
struct PageQuery<'a> {
    select: &'a str,
    conds: &'a [String],
    args: &'a [SqlValue],
    sort: Sort,
    after: Option<&'a Cursor>,
    limit: i64,
}

impl PageQuery<'_> {
    /// The SQL order keyword and the comparison that steps past the cursor.
    fn direction(&self) -> (&'static str, &'static str) {
        if self.sort.descending {
            ("DESC", "<")
        } else {
            ("ASC", ">")
        }
    }
}

/// A bound text value.
/// The date found as stored: the text of a damaged row, so that paging goes on past it.
fn found_text(row: &LogRow) -> String {
    row.damaged
        .clone()
        .unwrap_or_else(|| fmt_date(row.occurred))
}

pub(super) fn text_value(s: &str) -> SqlValue {
    SqlValue::Text(s.to_string())
}

/// A bound number, NULL for none.
fn real_value(x: Option<f64>) -> SqlValue {
    x.map_or(SqlValue::Null, SqlValue::Real)
}

pub(super) fn where_clause(conds: &[String]) -> String {
    if conds.is_empty() {
        String::new()
    } else {
        format!("WHERE {}", conds.join(" AND "))
    }
}

/// How a text filter enters the query.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum TextPlan {
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
/// about ten per match (measured on the 1,000,000-incident demo database; docs/notes.md,
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

/// The FROM clause, SQL conditions on `incidents i` and their parameters. Only fixed SQL
/// text; every user value is a bound parameter. Lot codes are resolved to keys first so the
/// lot index can be used.
pub(super) fn filter_sql(
    conn: &Connection,
    f: &Filter,
    plan: TextPlan,
) -> Result<(&'static str, Vec<String>, Vec<SqlValue>), StoreError> {
    let mut from = "incidents i";
    let mut c = Vec::new();
    let mut a = Vec::new();
    if let Some(s) = &f.status {
        c.push("i.status = ?".to_string());
        a.push(text_value(s));
    }
    match f.cause.as_deref() {
        Some(NO_CAUSE) => c.push("i.cause_category IS NULL".to_string()),
        Some(s) => {
            c.push("i.cause_category = ?".to_string());
            a.push(text_value(s));
        }
        None => {}
    }
    if let Some(s) = &f.origin_type {
        c.push("i.origin_type = ?".to_string());
        a.push(text_value(s));
    }
    if let Some(s) = &f.supplier {
        c.push("i.supplier_id = (SELECT id FROM suppliers WHERE code = ?)".to_string());
        a.push(text_value(s));
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
        a.push(text_value(s));
    }
    if let Some(d) = f.since {
        c.push("i.found_on >= ?".to_string());
        a.push(text_value(&fmt_date(d)));
    }
    if let Some(d) = f.until {
        c.push("i.found_on <= ?".to_string());
        a.push(text_value(&fmt_date(d)));
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
    use chrono::NaiveDate;

    fn all_pages(
        s: &Store,
        f: &Filter,
        sort: Sort,
        plan: Option<TextPlan>,
    ) -> (Vec<String>, Option<(u64, bool)>) {
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
                total = p.total.map(|t| (t, p.more_than_total));
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
                        // the count stops at the cap, as on the fleet
                        for t in [ta, tb, tc] {
                            assert_eq!(t, Some(f.total_of(expected_total)), "{w} {base:?}");
                        }
                    }
                }
                if w == "impact" {
                    assert!(expected_total > 100, "{expected_total}");
                }
                if w == "car" && *base == Filter::default() {
                    // a word of every incident: more than the cap
                    assert_eq!(f.total_of(expected_total), (COUNT_CAP, true));
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
}
