//! What an incident summary and a dispute bundle read beyond the log: the labels' assets,
//! the materials a report computes with, each incident's audit history, attachments by
//! SHA-256, the facts and exposure of the cover's comparison, and the head the report
//! vouches for, all from one read snapshot. A bench file and the fleet database answer the
//! same way for the same records ([`ReportSource`]); `store::open_reports` picks the one
//! `--db` names.

use chrono::NaiveDate;
use shardlog_core::fleet::{IncidentFacts, Key, StressKind};

use std::collections::HashMap;

use super::model::{Asset, Exposure, Filter, HistoryEntry, Incident, Sort};
use super::progress::ProgressFn;
use super::read::RecordSource;
use super::{MaterialBook, Store, StoreError};

/// The reads of `report`, `dispute` and `verify --bundle`, on top of [`RecordSource`].
pub trait ReportSource: RecordSource {
    /// Every asset, by code.
    fn assets(&self) -> Result<Vec<Asset>, StoreError>;
    /// The library and the own materials, for a computation made for a report.
    fn material_book(&self) -> Result<MaterialBook, StoreError>;
    /// The audit history of one incident (by reference or id), oldest first.
    fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError>;
    /// The bytes held for an attachment's SHA-256 (not checked here), None when none are.
    fn attachment_bytes(&self, sha256: &str) -> Result<Option<Vec<u8>>, StoreError>;
    /// The incidents of `ids` (as `matching_ids` gives them), in that order, each with its
    /// audit history: what `get` and `history` give one by one, read for many at once.
    fn incidents_with_history(
        &self,
        ids: &[String],
    ) -> Result<Vec<(Incident, Vec<HistoryEntry>)>, StoreError> {
        ids.iter()
            .map(|id| {
                let inc = self.get(id)?;
                let history = self.history(&inc.id)?;
                Ok((inc, history))
            })
            .collect()
    }
    /// The bytes held for each of `hashes` (not checked here), keyed as given; a hash with
    /// no bytes held is left out. What `attachment_bytes` gives one by one.
    fn attachments_held(&self, hashes: &[String]) -> Result<HashMap<String, Vec<u8>>, StoreError> {
        let mut out = HashMap::new();
        for h in hashes {
            if let Some(b) = self.attachment_bytes(h)? {
                out.insert(h.clone(), b);
            }
        }
        Ok(out)
    }
    /// The ids of the incidents matching `filter`, in the order of their dates found.
    fn matching_ids(&self, filter: &Filter) -> Result<Vec<String>, StoreError>;
    /// The cause code (None: none recorded) of each incident matching `filter`.
    fn causes_matching(&self, filter: &Filter) -> Result<Vec<Option<String>>, StoreError>;
    /// The exposure rows (panes in service).
    fn exposure(&self) -> Result<Vec<Exposure>, StoreError>;
    /// One row of facts per incident found inside `[since, until]`, with the text facts of
    /// `keys` (the others left `None`) and the stress asked for.
    fn facts_in_window(
        &self,
        since: Option<NaiveDate>,
        until: Option<NaiveDate>,
        stress: StressKind,
        keys: &[Key],
    ) -> Result<Vec<IncidentFacts>, StoreError>;
    /// The head a report made now vouches for: the entry number and hash of the chain's last
    /// row (on the fleet: the one bench's witnessed head, or the fleet's own receipts head).
    fn head_entry(&self) -> Result<(i64, String), StoreError>;
    /// Which chain holds `hash` at entry `seq`, None when none does.
    fn chain_holding(&self, seq: i64, hash: &str) -> Result<Option<ChainHolder>, StoreError>;
    /// The database a report came from, as the report names it; None for a bench file (a
    /// report names only the fleet, whose reports mix benches).
    fn made_from(&self) -> Result<Option<String>, StoreError>;
    /// The bench file, which signs what it reports with its key (None: the fleet, which
    /// holds no bench's key).
    fn signing_store(&self) -> Option<&Store>;
    /// Tell the progress meter, if any.
    fn progress(&self, stage: &'static str, done: u64, total: Option<u64>);
    /// Be told how far long work (a dispute bundle, a bundle check) has come; `None` stops
    /// it. Returns the callback that was set before.
    fn set_progress(&self, f: Option<ProgressFn>) -> Option<ProgressFn>;
    /// Start one read snapshot (true), or false when one is open already (nested reads
    /// share it).
    fn begin_snapshot(&self) -> Result<bool, StoreError>;
    /// End the snapshot `begin_snapshot` started.
    fn end_snapshot(&self);
}

/// The chain that holds a head.
#[derive(Debug, Clone, PartialEq)]
pub struct ChainHolder {
    /// On the fleet: the bench whose witnessed chain it is (None: the fleet's receipts, or
    /// a bench file's own chain).
    pub bench: Option<String>,
    /// The chain as a message names it.
    pub shown: String,
}

/// Run `f` on one read snapshot of `src`: every read inside sees the records as they were at
/// the first one, whatever is written meanwhile.
pub fn consistent<T, E: From<StoreError>>(
    src: &dyn ReportSource,
    f: impl FnOnce() -> Result<T, E>,
) -> Result<T, E> {
    let began = src.begin_snapshot()?;
    let r = f();
    if began {
        src.end_snapshot();
    }
    r
}

impl ReportSource for Store {
    fn assets(&self) -> Result<Vec<Asset>, StoreError> {
        Store::assets(self)
    }
    fn material_book(&self) -> Result<MaterialBook, StoreError> {
        Store::material_book(self)
    }
    fn history(&self, key: &str) -> Result<Vec<HistoryEntry>, StoreError> {
        Store::history(self, key)
    }
    fn attachment_bytes(&self, sha256: &str) -> Result<Option<Vec<u8>>, StoreError> {
        Ok(self
            .attachment_path(sha256)
            .and_then(|p| std::fs::read(p).ok()))
    }
    fn matching_ids(&self, filter: &Filter) -> Result<Vec<String>, StoreError> {
        Store::matching_ids(self, filter)
    }
    fn causes_matching(&self, filter: &Filter) -> Result<Vec<Option<String>>, StoreError> {
        let mut out = Vec::new();
        let mut after = None;
        loop {
            let page = self.list(
                filter,
                Sort::default(),
                &super::model::PageRequest {
                    limit: 5000,
                    after: after.take(),
                    with_total: false,
                },
            )?;
            out.extend(page.rows.into_iter().map(|r| r.cause));
            match page.next {
                Some(n) => after = Some(n),
                None => return Ok(out),
            }
        }
    }
    fn exposure(&self) -> Result<Vec<Exposure>, StoreError> {
        Store::exposure(self)
    }
    fn facts_in_window(
        &self,
        since: Option<NaiveDate>,
        until: Option<NaiveDate>,
        stress: StressKind,
        keys: &[Key],
    ) -> Result<Vec<IncidentFacts>, StoreError> {
        self.fleet_facts(since, until, stress, Some(keys))
    }
    fn head_entry(&self) -> Result<(i64, String), StoreError> {
        self.audit_head_entry()
    }
    fn chain_holding(&self, seq: i64, hash: &str) -> Result<Option<ChainHolder>, StoreError> {
        Ok(
            (self.audit_hash_at(seq)?.as_deref() == Some(hash)).then(|| ChainHolder {
                bench: None,
                shown: "this database's chain".into(),
            }),
        )
    }
    fn made_from(&self) -> Result<Option<String>, StoreError> {
        Ok(None)
    }
    fn signing_store(&self) -> Option<&Store> {
        Some(self)
    }
    fn progress(&self, stage: &'static str, done: u64, total: Option<u64>) {
        self.report_progress(stage, done, total)
    }
    fn set_progress(&self, f: Option<ProgressFn>) -> Option<ProgressFn> {
        Store::set_progress(self, f)
    }
    fn incidents_with_history(
        &self,
        ids: &[String],
    ) -> Result<Vec<(Incident, Vec<HistoryEntry>)>, StoreError> {
        let incidents = ids
            .iter()
            .map(|id| self.get(id))
            .collect::<Result<Vec<_>, _>>()?;
        let histories = self.histories_of(&incidents)?;
        Ok(incidents.into_iter().zip(histories).collect())
    }
    fn begin_snapshot(&self) -> Result<bool, StoreError> {
        if !self.conn.is_autocommit() {
            return Ok(false);
        }
        self.conn.execute_batch("BEGIN DEFERRED")?;
        Ok(true)
    }
    fn end_snapshot(&self) {
        // a read-only snapshot: nothing to keep
        let _ = self.conn.execute_batch("ROLLBACK");
    }
}
