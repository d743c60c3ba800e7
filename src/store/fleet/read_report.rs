//! The fleet database answering a report, a dispute bundle and a bundle check
//! ([`ReportSource`]): the histories from the witnessed chains, attachments from the fleet's
//! file table, facts and exposure from the read tables and the pushed reference data, the
//! head from the one bench's witnessed chain (with `--bench`) or the fleet's own receipts.

use std::collections::HashMap;

use chrono::NaiveDate;
use shardlog_core::fleet::{IncidentFacts, Key, StressKind};

use super::read::FleetReader;
use super::read_many::Held;
use crate::store::model::{Asset, Exposure, Filter, HistoryEntry, Incident};
use crate::store::progress::ProgressFn;
use crate::store::read::RecordSource;
use crate::store::read_report::{ChainHolder, ReportSource};
use crate::store::{MaterialBook, Store, StoreError};

fn pg(e: postgres::Error) -> StoreError {
    super::read::pg(e)
}

impl FleetReader {
    /// The incident (by reference or id) as the fleet holds it.
    fn incident_row(&self, key: &str) -> Result<Held, StoreError> {
        let key = key.trim();
        let rows = self.query_with(
            "SELECT id, reference, origin, owner, image, bench_seq FROM fleet_records
             WHERE entity = 'incident' AND image IS NOT NULL
               AND (reference = $1 OR id = $1 OR id = lower($1))
               AND ($2::text IS NULL OR owner = $2)
             LIMIT 2",
            &[&key, &self.scope],
        )?;
        match rows.as_slice() {
            [r] => Ok(Held::from_row(r)),
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
    pub(super) fn fleet_history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        let held = self.incident_row(key)?;
        Ok(self.histories_held(&[&held])?.pop().unwrap_or_default())
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
    fn incidents_with_history(
        &self,
        ids: &[String],
    ) -> Result<Vec<(Incident, Vec<HistoryEntry>)>, StoreError> {
        self.incidents_with_history_many(ids)
    }
    fn attachments_held(&self, hashes: &[String]) -> Result<HashMap<String, Vec<u8>>, StoreError> {
        self.files_held(hashes)
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
    fn progress(&self, stage: &'static str, done: u64, total: Option<u64>) {
        self.progress.tell(stage, done, total)
    }
    fn set_progress(&self, f: Option<ProgressFn>) -> Option<ProgressFn> {
        self.progress.set(f)
    }
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
