//! The fleet database answering a report, a dispute bundle and a bundle check
//! ([`ReportSource`]): the histories from the witnessed chains, attachments from the fleet's
//! file table, facts and exposure from the read tables and the pushed reference data, the
//! head from the one bench's witnessed chain (with `--bench`) or the fleet's own receipts.

use chrono::{DateTime, NaiveDate, Utc};
use shardlog_core::fleet::{IncidentFacts, Key, StressKind};

use super::read::FleetReader;
use crate::store::audit::{changed_keys, digest, manifest_records, BATCH, INCIDENT};
use crate::store::canon;
use crate::store::dates::parse_time;
use crate::store::model::{Asset, Exposure, Filter, HistoryEntry};
use crate::store::read::RecordSource;
use crate::store::read_report::{ChainHolder, ReportSource};
use crate::store::{MaterialBook, Store, StoreError};

fn pg(e: postgres::Error) -> StoreError {
    super::read::pg(e)
}

/// A history row as the chain holds it.
struct ChainRow {
    seq: i64,
    at: String,
    actor: String,
    op: String,
    before: Option<String>,
    after: Option<String>,
    hash: String,
}

impl ChainRow {
    fn entry(self) -> HistoryEntry {
        let before = self.before.as_deref().and_then(canon::decanonical);
        let after = self.after.as_deref().and_then(canon::decanonical);
        HistoryEntry {
            seq: self.seq,
            at: parse_time(&self.at).unwrap_or(DateTime::<Utc>::UNIX_EPOCH),
            actor: self.actor,
            changed: changed_keys(before.as_ref(), after.as_ref()),
            op: self.op,
            before,
            after,
            hash: self.hash,
        }
    }
}

impl FleetReader {
    /// The incident's id, its origin and owner benches, its image and the owner's chain
    /// row that made the image.
    fn incident_row(&self, key: &str) -> Result<(String, String, String, String, i64), StoreError> {
        let key = key.trim();
        let rows = self
            .client
            .borrow_mut()
            .query(
                "SELECT id, origin, owner, image, bench_seq FROM fleet_records
                 WHERE entity = 'incident' AND image IS NOT NULL
                   AND (reference = $1 OR id = $1 OR id = lower($1))
                   AND ($2::text IS NULL OR owner = $2)
                 LIMIT 2",
                &[&key, &self.scope],
            )
            .map_err(pg)?;
        match rows.as_slice() {
            [r] => Ok((r.get(0), r.get(1), r.get(2), r.get(3), r.get(4))),
            [] => Err(StoreError::NotFound(key.to_string())),
            _ => Err(StoreError::invalid(
                "reference",
                format!("{key} names more than one incident in the fleet"),
            )),
        }
    }

    /// The audit history of one incident from the witnessed chains, as the bench gives it
    /// (`Store::history`): an incident a bulk load made starts at the manifest row naming
    /// it, with its image when the digest there vouches for it.
    fn fleet_history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        let (id, origin, owner, image, bench_seq) = self.incident_row(key)?;
        let row = |r: &postgres::Row| ChainRow {
            seq: r.get(0),
            at: r.get(1),
            actor: r.get(2),
            op: r.get(3),
            before: r.get(4),
            after: r.get(5),
            hash: r.get(6),
        };
        let rows: Vec<ChainRow> = self
            .client
            .borrow_mut()
            .query(
                "SELECT seq, at, actor, op, before, after, hash FROM bench_chain
                 WHERE entity = $1 AND entity_id = $2 ORDER BY fleet_seq, seq",
                &[&INCIDENT, &id],
            )
            .map_err(pg)?
            .iter()
            .map(row)
            .collect();
        let mut out = Vec::new();
        if rows.first().is_none_or(|r| r.op != "insert") {
            // a never-edited incident's image was made by the manifest row itself; else the
            // first manifest of its bench that names it
            let quoted = format!("%[\"{id}\",%");
            let mut found = self
                .client
                .borrow_mut()
                .query_opt(
                    "SELECT seq, at, actor, after, hash FROM bench_chain
                     WHERE bench = $1 AND seq = $2 AND entity = $3 AND after LIKE $4",
                    &[&owner, &bench_seq, &BATCH, &quoted],
                )
                .map_err(pg)?;
            if found.is_none() {
                found = self
                    .client
                    .borrow_mut()
                    .query_opt(
                        "SELECT seq, at, actor, after, hash FROM bench_chain
                         WHERE bench = $1 AND entity = $2 AND after LIKE $3
                         ORDER BY seq LIMIT 1",
                        &[&origin, &BATCH, &quoted],
                    )
                    .map_err(pg)?;
            }
            if let Some(m) = found {
                let manifest: String = m.get(3);
                let first_image = match rows.first() {
                    Some(r) => r.before.clone(),
                    None => Some(image),
                };
                let want = manifest_records(&manifest).and_then(|rs| {
                    rs.into_iter()
                        .find(|(_, rid, _)| *rid == id)
                        .map(|(_, _, d)| d)
                });
                let first_image = first_image.filter(|img| Some(digest(img)) == want);
                out.push(
                    ChainRow {
                        seq: m.get(0),
                        at: m.get(1),
                        actor: m.get(2),
                        op: "insert".into(),
                        before: None,
                        after: first_image,
                        hash: m.get(4),
                    }
                    .entry(),
                );
            }
        }
        out.extend(rows.into_iter().map(ChainRow::entry));
        Ok(out)
    }

    /// One column of the facts of the incidents `filter` selects. `column` and `order` are
    /// fixed texts of the callers.
    fn column_matching<T: for<'a> postgres::types::FromSql<'a>>(
        &self,
        filter: &Filter,
        column: &str,
        order: &str,
    ) -> Result<Vec<T>, StoreError> {
        let mut args = Vec::new();
        let conds = self.conditions(filter, &mut args);
        let sql = format!(
            "SELECT {column} FROM fleet_facts f {}{order}",
            super::read::where_clause(&conds)
        );
        Ok(self
            .client
            .borrow_mut()
            .query(&sql, &super::read::refs(&args))
            .map_err(pg)?
            .iter()
            .map(|r| r.get(0))
            .collect())
    }
}

impl ReportSource for FleetReader {
    fn assets(&self) -> Result<Vec<Asset>, StoreError> {
        Ok(self
            .refdata_with(super::read_need::Need::Assets)?
            .assets
            .clone())
    }
    fn material_book(&self) -> Result<MaterialBook, StoreError> {
        FleetReader::material_book(self)
    }
    fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        self.fleet_history(key)
    }
    fn attachment_bytes(&self, sha256: &str) -> Result<Option<Vec<u8>>, StoreError> {
        let sha = sha256.to_ascii_lowercase();
        Ok(self
            .client
            .borrow_mut()
            .query_opt("SELECT bytes FROM fleet_files WHERE sha256 = $1", &[&sha])
            .map_err(pg)?
            .map(|r| r.get(0)))
    }
    fn matching_ids(&self, filter: &Filter) -> Result<Vec<String>, StoreError> {
        self.column_matching(filter, "f.id", " ORDER BY f.found_on, f.ord")
    }
    fn causes_matching(&self, filter: &Filter) -> Result<Vec<Option<String>>, StoreError> {
        self.column_matching(filter, "f.cause", "")
    }
    fn exposure(&self) -> Result<Vec<Exposure>, StoreError> {
        Ok(self
            .refdata_with(super::read_need::Need::Exposure)?
            .exposure
            .clone())
    }
    fn facts_in_window(
        &self,
        since: Option<NaiveDate>,
        until: Option<NaiveDate>,
        stress: StressKind,
        keys: &[Key],
    ) -> Result<Vec<IncidentFacts>, StoreError> {
        let q = shardlog_core::fleet::StatsQuery {
            keys: keys.to_vec(),
            since,
            until,
            rates: false,
            trend: false,
            weibull: false,
            origin_type: None,
            only: Vec::new(),
            stress,
            json: false,
        };
        Ok(self.stats_input(&q, &[])?.0)
    }
    fn head_entry(&self) -> Result<(i64, String), StoreError> {
        let row = match &self.scope {
            Some(code) => self
                .client
                .borrow_mut()
                .query_opt(
                    "SELECT head_seq, head_hash FROM fleet_benches WHERE code = $1",
                    &[code],
                )
                .map_err(pg)?,
            None => self
                .client
                .borrow_mut()
                .query_opt(
                    "SELECT fleet_seq, hash FROM fleet_receipts ORDER BY fleet_seq DESC LIMIT 1",
                    &[],
                )
                .map_err(pg)?,
        };
        Ok(row
            .map(|r| (r.get(0), r.get(1)))
            .unwrap_or_else(|| (0, "0".repeat(64))))
    }
    fn chain_holding(&self, seq: i64, hash: &str) -> Result<Option<ChainHolder>, StoreError> {
        let bench = self
            .client
            .borrow_mut()
            .query_opt(
                "SELECT b.code FROM fleet_benches b
                 WHERE EXISTS (SELECT 1 FROM bench_chain c
                               WHERE c.bench = b.code AND c.seq = $1 AND c.hash = $2)
                   AND ($3::text IS NULL OR b.code = $3)
                 ORDER BY b.code LIMIT 1",
                &[&seq, &hash, &self.scope],
            )
            .map_err(pg)?;
        if let Some(r) = bench {
            let code: String = r.get(0);
            return Ok(Some(ChainHolder {
                shown: format!("bench {code}'s chain as the fleet witnessed it"),
                bench: Some(code),
            }));
        }
        if self.scope.is_some() {
            return Ok(None);
        }
        let receipt = self
            .client
            .borrow_mut()
            .query_opt(
                "SELECT 1 FROM fleet_receipts WHERE fleet_seq = $1 AND hash = $2",
                &[&seq, &hash],
            )
            .map_err(pg)?;
        Ok(receipt.map(|_| ChainHolder {
            bench: None,
            shown: "the fleet's own chain of receipts".into(),
        }))
    }
    fn made_from(&self) -> Result<Option<String>, StoreError> {
        if self.scope.is_some() {
            return Ok(Some(self.shown()));
        }
        Ok(Some(format!(
            "{} (benches {})",
            self.shown(),
            self.bench_codes()?.join(", ")
        )))
    }
    fn signing_store(&self) -> Option<&Store> {
        None
    }
    fn progress(&self, _stage: &'static str, _done: u64, _total: Option<u64>) {}
    fn begin_snapshot(&self) -> Result<bool, StoreError> {
        if self.in_snapshot.get() {
            return Ok(false);
        }
        self.client
            .borrow_mut()
            .batch_execute("BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY")
            .map_err(pg)?;
        self.in_snapshot.set(true);
        Ok(true)
    }
    fn end_snapshot(&self) {
        // read only: nothing to keep
        let _ = self.client.borrow_mut().batch_execute("ROLLBACK");
        self.in_snapshot.set(false);
    }
}

impl FleetReader {
    /// The incidents and lots the heat-soak comparison reads, as `Store::soak_input` gives
    /// them: a lot's class from its pushed heat-soak record, the install and breakage dates
    /// from each incident's image.
    pub(super) fn fleet_soak_input(
        &self,
        since: Option<NaiveDate>,
        until: Option<NaiveDate>,
    ) -> Result<crate::store::practice::SoakInput, StoreError> {
        use shardlog_core::fleet::heat_soak::{SoakClass, SoakFacts};
        let class = |l: &crate::store::model::Lot| match &l.heat_soak {
            Some(h) if h.soaked => SoakClass::Soaked,
            Some(_) => SoakClass::NotSoaked,
            None => SoakClass::Unknown,
        };
        let refdata = self.refdata()?;
        let lots: Vec<_> = refdata
            .lots
            .iter()
            .map(|l| {
                (
                    (l.supplier.clone(), l.product.clone(), l.code.clone()),
                    class(l),
                )
            })
            .collect();
        let filter = Filter {
            since,
            until,
            ..Filter::default()
        };
        let mut args = Vec::new();
        let conds = self.conditions(&filter, &mut args);
        let sql = format!(
            "SELECT f.supplier, f.product, f.lot, f.cause, f.origin_type, f.found_on,
                    j->>'installed_on', j->>'broken_on'
             FROM fleet_facts f JOIN fleet_records r ON r.entity = 'incident' AND r.id = f.id
             CROSS JOIN LATERAL (SELECT replace(r.image, '\\u0000', '\\u2400')::jsonb AS j) img
             {} ORDER BY f.ord",
            super::read::where_clause(&conds)
        );
        let rows = self
            .client
            .borrow_mut()
            .query(&sql, &super::read::refs(&args))
            .map_err(pg)?;
        let date = |t: Option<String>| t.as_deref().and_then(crate::store::dates::parse_date);
        let mut facts = Vec::with_capacity(rows.len());
        for r in &rows {
            let Some(found) = date(r.get(5)) else {
                continue;
            };
            let key = (
                r.get::<_, Option<String>>(0),
                r.get::<_, Option<String>>(1),
                r.get::<_, Option<String>>(2),
            );
            // the bench joins the incident's lot row; a lot it does not know is unknown
            let soak = match key {
                (Some(s), Some(p), Some(l)) => lots
                    .iter()
                    .find(|((ls, lp, lc), _)| *ls == s && *lp == p && *lc == l)
                    .map(|(_, c)| *c)
                    .unwrap_or(SoakClass::Unknown),
                _ => SoakClass::Unknown,
            };
            let cause: Option<String> = r.get(3);
            let origin: Option<String> = r.get(4);
            facts.push(SoakFacts {
                class: soak,
                nickel_sulfide: cause.as_deref() == Some("nickel_sulfide")
                    || origin.as_deref() == Some("inclusion_nis"),
                installed_on: date(r.get(6)),
                broke_on: date(r.get(7)).unwrap_or(found),
            });
        }
        Ok((facts, lots))
    }
}
