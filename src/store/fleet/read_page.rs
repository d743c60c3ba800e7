//! The log's pages on the fleet database, in keyset order (never OFFSET): the filter as fixed
//! SQL with bound values, each statement prepared once per connection. A page alone is one
//! statement and one round trip to the server (a keystroke in the interface waits for no
//! more); a page with its count of matches, or by stress (two statements), is read in one
//! read-only snapshot.

use postgres::GenericClient;

use super::read::{pg, refs, where_clause, Bound, FleetReader};
use crate::store::model::*;
use crate::store::StoreError;

/// The most statements kept prepared on the connection (the texts repeat: one per shape of
/// filter, sort and cursor).
const KEPT_STATEMENTS: usize = 64;

/// The columns of a log row, in the order `log_row` reads them.
const LOG_COLUMNS: &str =
    "SELECT f.ord, f.id, f.reference, f.found_on, f.asset, f.position, f.site, \
     f.product, f.supplier, f.lot, f.status, f.cause, f.stress_pa, f.owner FROM fleet_facts f";

fn log_row(r: &postgres::Row) -> (i64, LogRow) {
    let found: String = r.get(3);
    let occurred = crate::store::dates::parse_date(&found);
    (
        r.get(0),
        LogRow {
            id: r.get(1),
            reference: r.get(2),
            occurred: occurred.unwrap_or_default(),
            asset: r.get(4),
            position: r.get(5),
            site: r.get(6),
            product: r.get(7),
            supplier: r.get(8),
            lot: r.get(9),
            status: r.get(10),
            cause: r.get(11),
            stress_mpa: r.get::<_, Option<f64>>(12).map(|x| x / 1e6),
            damaged: occurred.is_none().then_some(found),
            bench: r.get(13),
        },
    )
}

impl FleetReader {
    /// `sql` prepared on this connection, once.
    fn prepared(
        &self,
        c: &mut impl GenericClient,
        sql: &str,
    ) -> Result<postgres::Statement, StoreError> {
        if let Some(s) = self.statements.borrow().get(sql) {
            return Ok(s.clone());
        }
        let s = c.prepare(sql).map_err(pg)?;
        let mut kept = self.statements.borrow_mut();
        if kept.len() >= KEPT_STATEMENTS {
            kept.clear();
        }
        kept.insert(sql.to_string(), s.clone());
        Ok(s)
    }

    /// The log rows of a statement of the log's columns.
    fn rows_of(
        &self,
        c: &mut impl GenericClient,
        sql: &str,
        args: &[Bound],
    ) -> Result<Vec<(i64, LogRow)>, StoreError> {
        let s = self.prepared(c, sql)?;
        match c.query(&s, &refs(args)) {
            Ok(rows) => Ok(rows.iter().map(log_row).collect()),
            Err(e) => {
                // a statement the server no longer knows (the schema changed) is made again
                self.statements.borrow_mut().clear();
                Err(pg(e))
            }
        }
    }

    pub(super) fn page(
        &self,
        filter: &Filter,
        sort: Sort,
        page: &PageRequest,
    ) -> Result<Page, StoreError> {
        let mut client = self.client.borrow_mut();
        let alone = !page.with_total && sort.column != SortColumn::Stress;
        if alone || self.in_snapshot.get() {
            // one statement, or inside a report's snapshot already
            return self.page_in(&mut *client, filter, sort, page);
        }
        let mut tx = client
            .build_transaction()
            .read_only(true)
            .isolation_level(postgres::IsolationLevel::RepeatableRead)
            .start()
            .map_err(pg)?;
        let p = self.page_in(&mut tx, filter, sort, page)?;
        tx.commit().map_err(pg)?;
        Ok(p)
    }

    fn page_in(
        &self,
        c: &mut impl GenericClient,
        filter: &Filter,
        sort: Sort,
        page: &PageRequest,
    ) -> Result<Page, StoreError> {
        let limit = i64::from(page.limit.clamp(1, 10_000));
        let mut args = Vec::new();
        let conds = self.conditions(filter, &mut args);
        let (dir, cmp) = if sort.descending {
            ("DESC", "<")
        } else {
            ("ASC", ">")
        };
        let mut rows: Vec<(i64, LogRow)> = Vec::new();
        let after = page.after.as_ref();
        if sort.column == SortColumn::Stress {
            let in_nulls =
                matches!(after, Some(c) if matches!(c.key.first(), Some(CursorKey::Real(None))));
            if !in_nulls {
                let mut c2 = conds.clone();
                let mut a2 = copy(&args);
                c2.push("f.stress_pa IS NOT NULL".into());
                if let Some(c) = after {
                    if let Some(CursorKey::Real(Some(x))) = c.key.first() {
                        a2.push(Bound::Real(*x));
                        a2.push(Bound::Int(c.seq));
                        c2.push(format!(
                            "(f.stress_pa, f.ord) {cmp} (${}, ${})",
                            a2.len() - 1,
                            a2.len()
                        ));
                    }
                }
                let sql = format!(
                    "{LOG_COLUMNS} {} ORDER BY f.stress_pa {dir}, f.ord {dir} LIMIT {limit}",
                    where_clause(&c2)
                );
                rows.extend(self.rows_of(c, &sql, &a2)?);
            }
            if (rows.len() as i64) < limit {
                let mut c2 = conds.clone();
                let mut a2 = copy(&args);
                c2.push("f.stress_pa IS NULL".into());
                if let (true, Some(c)) = (in_nulls, after) {
                    a2.push(Bound::Int(c.seq));
                    c2.push(format!("f.ord {cmp} ${}", a2.len()));
                }
                let sql = format!(
                    "{LOG_COLUMNS} {} ORDER BY f.ord {dir} LIMIT {}",
                    where_clause(&c2),
                    limit - rows.len() as i64
                );
                rows.extend(self.rows_of(c, &sql, &a2)?);
            }
        } else {
            let (order, keys): (&str, &[&str]) = match sort.column {
                SortColumn::Reference => ("f.reference {d}, f.ord {d}", &["f.reference"]),
                SortColumn::Status => (
                    "f.status {d}, f.found_on {d}, f.ord {d}",
                    &["f.status", "f.found_on"],
                ),
                _ => ("f.found_on {d}, f.ord {d}", &["f.found_on"]),
            };
            let mut c2 = conds.clone();
            let mut a2 = copy(&args);
            if let Some(c) = after {
                let mut lhs: Vec<&str> = keys.to_vec();
                lhs.push("f.ord");
                for k in &c.key {
                    a2.push(match k {
                        CursorKey::Text(s) => Bound::Text(s.clone()),
                        CursorKey::Real(x) => Bound::Real(x.unwrap_or(f64::NAN)),
                    });
                }
                a2.push(Bound::Int(c.seq));
                let first = a2.len() - lhs.len() + 1;
                let marks: Vec<String> = (first..=a2.len()).map(|n| format!("${n}")).collect();
                c2.push(format!("({}) {cmp} ({})", lhs.join(", "), marks.join(", ")));
            }
            let sql = format!(
                "{LOG_COLUMNS} {} ORDER BY {} LIMIT {limit}",
                where_clause(&c2),
                order.replace("{d}", dir)
            );
            rows.extend(self.rows_of(c, &sql, &a2)?);
        }
        let next = match rows.last() {
            Some((ord, row)) if rows.len() as i64 == limit => Some(Cursor {
                key: match sort.column {
                    SortColumn::Found => vec![CursorKey::Text(found_text(row))],
                    SortColumn::Reference => vec![CursorKey::Text(row.reference.clone())],
                    SortColumn::Status => vec![
                        CursorKey::Text(row.status.clone()),
                        CursorKey::Text(found_text(row)),
                    ],
                    SortColumn::Stress => {
                        let stress: Option<f64> = c
                            .query_one("SELECT stress_pa FROM fleet_facts WHERE ord = $1", &[ord])
                            .map_err(pg)?
                            .get(0);
                        vec![CursorKey::Real(stress)]
                    }
                },
                seq: *ord,
            }),
            _ => None,
        };
        let (total, more_than_total) = if page.with_total {
            // from the counts by month where they can answer, else the matches read up to
            // the cap: never a count over millions
            let n = match self.counted_total(c, filter)? {
                Some(n) => n,
                None => self.capped_total(c, filter, &conds, &args)?,
            };
            let (n, more) = filter.total_of(n);
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
}

fn copy(args: &[Bound]) -> Vec<Bound> {
    args.iter()
        .map(|a| match a {
            Bound::Text(s) => Bound::Text(s.clone()),
            Bound::Real(x) => Bound::Real(*x),
            Bound::Int(n) => Bound::Int(*n),
        })
        .collect()
}

/// The date found as the log's cursor holds it (the stored text of a damaged row).
fn found_text(row: &LogRow) -> String {
    match &row.damaged {
        Some(text) => text.clone(),
        None => row.occurred.format("%Y-%m-%d").to_string(),
    }
}
