//! Reading the records, whoever holds them: a bench's SQLite file or the fleet database.
//! The commands that only read (`list`, `show`, `stats`) ask a [`RecordSource`] and do not
//! know which one answers; [`open_records`] picks it from what `--db` names (a file, or a
//! `postgres://` / `postgresql://` URL).

use std::path::Path;

use super::model::{
    Filter, Incident, LookupEntry, LookupKind, Lot, Page, PageRequest, Product, Site, Sort,
    Supplier,
};
use super::{Store, StoreError};

/// The stats input: one row of facts per incident and the panes in service.
pub type StatsInput = (
    Vec<shardlog_core::fleet::IncidentFacts>,
    Vec<shardlog_core::fleet::Exposure>,
);

/// What the read-only commands ask of the records, answered the same way by a bench file
/// and by the fleet database (for the same records, the same values in the same order).
pub trait RecordSource {
    /// Where the records are, for messages: a file path, or the fleet's host and database.
    fn shown(&self) -> String;
    /// The fleet database (read-only for its users: edits are made at the owning bench).
    fn is_fleet(&self) -> bool;
    /// The codes of the benches these records come from (a bench file: its own code, if any).
    fn bench_codes(&self) -> Result<Vec<String>, StoreError>;
    /// A lookup list in its display order.
    fn lookups(&self, kind: LookupKind) -> Result<Vec<LookupEntry>, StoreError>;
    /// Every lookup entry, all kinds.
    fn all_lookups(&self) -> Result<Vec<LookupEntry>, StoreError>;
    fn sites(&self) -> Result<Vec<Site>, StoreError>;
    fn suppliers(&self) -> Result<Vec<Supplier>, StoreError>;
    /// Every product, by supplier code then code.
    fn products(&self) -> Result<Vec<Product>, StoreError>;
    /// Every lot, by supplier, product and code.
    fn lots(&self) -> Result<Vec<Lot>, StoreError>;
    /// One page of the incident log.
    fn list(&self, filter: &Filter, sort: Sort, page: &PageRequest) -> Result<Page, StoreError>;
    /// The full incident by reference or id.
    fn get(&self, key: &str) -> Result<Incident, StoreError>;
    /// The facts and exposure `stats` works on.
    fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError>;
}

impl RecordSource for Store {
    fn shown(&self) -> String {
        self.path()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| "(in memory)".into())
    }
    fn is_fleet(&self) -> bool {
        false
    }
    fn bench_codes(&self) -> Result<Vec<String>, StoreError> {
        Ok(self.bench_code()?.into_iter().collect())
    }
    fn lookups(&self, kind: LookupKind) -> Result<Vec<LookupEntry>, StoreError> {
        Store::lookups(self, kind)
    }
    fn all_lookups(&self) -> Result<Vec<LookupEntry>, StoreError> {
        Store::all_lookups(self)
    }
    fn sites(&self) -> Result<Vec<Site>, StoreError> {
        Store::sites(self)
    }
    fn suppliers(&self) -> Result<Vec<Supplier>, StoreError> {
        Store::suppliers(self)
    }
    fn products(&self) -> Result<Vec<Product>, StoreError> {
        Store::products(self, None)
    }
    fn lots(&self) -> Result<Vec<Lot>, StoreError> {
        Store::lots(self, None, None)
    }
    fn list(&self, filter: &Filter, sort: Sort, page: &PageRequest) -> Result<Page, StoreError> {
        Store::list(self, filter, sort, page)
    }
    fn get(&self, key: &str) -> Result<Incident, StoreError> {
        Store::get(self, key)
    }
    fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError> {
        Store::stats_input(self, q, extra)
    }
}

/// Whether `--db` names the fleet database (a `postgres://` or `postgresql://` URL) rather
/// than a bench file.
pub fn is_fleet_url(db: &Path) -> bool {
    let text = db.to_string_lossy();
    let lower = text.trim_start().to_ascii_lowercase();
    lower.starts_with("postgres://") || lower.starts_with("postgresql://")
}

/// Open the records `db` names, only to read them: a bench file (as
/// [`Store::open_for_reading`]) or, for a URL, the fleet database in a read-only session.
/// `bench`: only the records of this bench (the fleet's incidents it owns and the reference
/// data it pushed); on a bench file it must be the file's own code.
pub fn open_records(db: &Path, bench: Option<&str>) -> Result<Box<dyn RecordSource>, StoreError> {
    if is_fleet_url(db) {
        let url = db.to_string_lossy();
        let reader = super::fleet::FleetReader::open(&url, bench)?;
        return Ok(Box::new(reader));
    }
    let store = Store::open_for_reading(db)?;
    if let Some(code) = bench {
        let code = super::check_bench_code(code).map_err(|m| StoreError::invalid("--bench", m))?;
        let own = store.bench_code()?;
        if own.as_deref() != Some(code.as_str()) {
            return Err(StoreError::invalid(
                "--bench",
                format!(
                    "{} is {}; --bench chooses one bench of the fleet database",
                    db.display(),
                    match own {
                        Some(c) => format!("bench {c}, not {code}"),
                        None => "a bench without a code".to_string(),
                    }
                ),
            ));
        }
    }
    Ok(Box::new(store))
}
