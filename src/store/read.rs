//! Reading the records, whoever holds them: a bench's SQLite file or the fleet database.
//! The commands that only read (`list`, `show`, `stats`) ask a [`RecordSource`] and do not
//! know which one answers; `store::open_records` picks it from what `--db` names (a file, or a
//! `postgres://` / `postgresql://` URL).

use super::model::{
    Filter, Incident, LookupEntry, LookupKind, Lot, Page, PageRequest, Product, Site, Sort,
    Supplier,
};
use super::{Store, StoreError};

pub use super::incidents::StatsInput;

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
    /// The code of the bench that owns the incident `id` (where its edits are made); a
    /// bench file answers its own code.
    fn owner_of(&self, id: &str) -> Result<Option<String>, StoreError>;
    /// The export document (JSON, pretty, ending with a newline) of the incidents matching
    /// `filter` that can be read, in the order found, and those that cannot.
    fn export_json_readable(
        &self,
        filter: &Filter,
    ) -> Result<(String, Vec<super::exchange::Damaged>), StoreError>;
    /// The CSV export of the incidents matching `filter` that can be read (header first): the
    /// lines written, and the incidents left out.
    fn export_csv_readable(
        &self,
        filter: &Filter,
        out: &mut dyn std::io::Write,
    ) -> Result<(usize, Vec<super::exchange::Damaged>), StoreError>;
    /// The table of least fragment counts by thickness, thinnest first (on the fleet: the
    /// first bench's row, in code order, where several hold one range).
    fn fragmentation_minimums(
        &self,
    ) -> Result<Vec<shardlog_core::fracture::fragmentation::FragmentationMinimum>, StoreError>;
    /// The incidents found inside `[since, until]` and the lots the heat-soak comparison
    /// reads (`stats --heat-soak`).
    fn soak_input(
        &self,
        since: Option<chrono::NaiveDate>,
        until: Option<chrono::NaiveDate>,
    ) -> Result<super::practice::SoakInput, StoreError>;
    /// The facts and exposure `stats` works on.
    fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError>;
    /// The facts `stats` works on counted where they are kept, when the records can count
    /// them (the fleet database, from its counts by month); None: read [`Self::stats_input`].
    /// `today` is the default end of the window.
    fn stats_counted(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        today: chrono::NaiveDate,
    ) -> Result<Option<CountedInput>, StoreError>;
}

/// Facts counted where they are kept: `facts[i]` stands for `counts[i]` incidents of its key
/// values and date (a row of count 0 brings only its fracture stress, in the order the bench
/// keeps them); the exposure rows the `--only` values leave; and the first date found of the
/// incidents up to the end of the window (the default start of the window).
#[derive(Debug, Clone, Default)]
pub struct CountedInput {
    pub facts: Vec<shardlog_core::fleet::IncidentFacts>,
    pub counts: Vec<u64>,
    pub exposures: Vec<shardlog_core::fleet::Exposure>,
    pub earliest: Option<chrono::NaiveDate>,
    /// The fracture stresses were not read: the selection holds more than this many (see
    /// [`stress_cap`]); a Weibull fit or a histogram of them cannot be made.
    pub stresses_over_cap: Option<u64>,
}

/// The most fracture stresses the fleet database reads one by one for a Weibull fit (each is
/// a row read and held; a whole large fleet holds millions). A selection with more is
/// refused, with what to narrow.
pub const STRESS_CAP: u64 = 500_000;

/// The cap in force: [`STRESS_CAP`]; in debug builds only, `SHARDLOG_TEST_STRESS_CAP=N`, so
/// that the test suite reaches it with a few hundred incidents.
pub fn stress_cap() -> u64 {
    #[cfg(debug_assertions)]
    if let Some(n) = std::env::var("SHARDLOG_TEST_STRESS_CAP")
        .ok()
        .and_then(|v| v.parse::<u64>().ok())
    {
        return n;
    }
    STRESS_CAP
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
    fn fragmentation_minimums(
        &self,
    ) -> Result<Vec<shardlog_core::fracture::fragmentation::FragmentationMinimum>, StoreError> {
        Store::fragmentation_minimums(self)
    }
    fn soak_input(
        &self,
        since: Option<chrono::NaiveDate>,
        until: Option<chrono::NaiveDate>,
    ) -> Result<super::practice::SoakInput, StoreError> {
        Store::soak_input(self, since, until)
    }
    fn list(&self, filter: &Filter, sort: Sort, page: &PageRequest) -> Result<Page, StoreError> {
        // a bench file holds its own bench's incidents only
        let Some(code) = &filter.bench else {
            return Store::list(self, filter, sort, page);
        };
        if self.bench_code()?.as_ref() != Some(code) {
            return Ok(Page {
                rows: Vec::new(),
                next: None,
                total: page.with_total.then_some(0),
                more_than_total: false,
            });
        }
        let all = Filter {
            bench: None,
            ..filter.clone()
        };
        Store::list(self, &all, sort, page)
    }
    fn get(&self, key: &str) -> Result<Incident, StoreError> {
        Store::get(self, key)
    }
    fn owner_of(&self, _id: &str) -> Result<Option<String>, StoreError> {
        self.bench_code()
    }
    fn export_json_readable(
        &self,
        filter: &Filter,
    ) -> Result<(String, Vec<super::exchange::Damaged>), StoreError> {
        Store::export_json_readable(self, filter)
    }
    fn export_csv_readable(
        &self,
        filter: &Filter,
        out: &mut dyn std::io::Write,
    ) -> Result<(usize, Vec<super::exchange::Damaged>), StoreError> {
        Store::export_csv_readable(self, filter, out)
    }
    fn stats_input(
        &self,
        q: &shardlog_core::fleet::StatsQuery,
        extra: &[shardlog_core::fleet::Key],
    ) -> Result<StatsInput, StoreError> {
        Store::stats_input(self, q, extra)
    }
    fn stats_counted(
        &self,
        _q: &shardlog_core::fleet::StatsQuery,
        _today: chrono::NaiveDate,
    ) -> Result<Option<CountedInput>, StoreError> {
        // a bench file reads its narrow facts table in process
        Ok(None)
    }
}
