//! The store: the one seam between the program and its database. The rest of the program
//! sees [`Store`] and the domain types of [`model`], never SQL and never rusqlite.
//!
//! What the rest of the program asks of it, by group:
//! - **open**: [`Store::open`], [`Store::open_existing`], [`Store::open_in_memory`];
//!   [`Store::path`], [`Store::is_read_only`], [`Store::schema_version`].
//! - **page the log**: [`Store::list`] (one page in keyset order, with a cursor to the next),
//!   [`Store::matching_ids`], [`Store::incident_count`].
//! - **get**: [`Store::get`], [`Store::find`], [`Store::validate_incident`].
//! - **put**: [`Store::create_incident`], [`Store::update_incident`] (revision-checked),
//!   [`Store::modify_incident`] and its forms ([`Store::put_examination`],
//!   [`Store::set_result`], [`Store::set_cause`], [`Store::add_custody`]),
//!   [`Store::delete_incident`], [`Store::add_attachment`].
//! - **own materials**: [`Store::own_materials`], [`Store::material_book`] (library and own,
//!   for a calculation), [`Store::add_own_material`], [`Store::update_own_material`].
//! - **reference data**: [`Store::lookups`], [`Store::sites`], [`Store::suppliers`],
//!   [`Store::products`], [`Store::lots`], [`Store::exposure`] and the rest of their kind.
//! - **history**: [`Store::history`] of one incident.
//! - **fleet facts**: [`Store::stats_input`], [`Store::fleet_facts`], [`Store::fleet_rows`].
//! - **audit head and verify**: [`Store::audit_head`], [`Store::verify`].
//! - **import and export**: [`exchange`] (JSON and CSV documents).
//! - **backup**: [`Store::backup`].
//!
//! ```no_run
//! use shardlog::store::{Store, Stamp, Incident, Filter, PageRequest, Sort};
//! # fn main() -> Result<(), shardlog::store::StoreError> {
//! let mut store = Store::open("bench.db".as_ref())?;
//! let stamp = Stamp::new("mira", chrono::Utc::now());
//! let mut draft = Incident::draft(chrono::NaiveDate::from_ymd_opt(2026, 3, 14).unwrap());
//! draft.position = "left side, bay 3".into();
//! let saved = store.create_incident(&draft, &stamp)?;
//! let page = store.list(&Filter::default(), Sort::default(), &PageRequest::default())?;
//! # Ok(()) }
//! ```
//!
//! Inside: `incidents/` (write, read, list, validate, facts, history), `refdata` (sites to
//! lookup lists), `audit/` (the hash chain) and `verify`, `files` (attachments), `backup`,
//! `analysis` (the analysis as stored), `dates`, `ids`; everything SQLite-only (opening,
//! pragmas, migrations, FTS5, the online backup) in `sqlite/`, so that a PostgreSQL side can
//! sit beside it. Every change to a user-visible record (an incident with everything under
//! it, a site, asset, supplier, product, lot, exposure row or lookup entry) appends one
//! hash-chained audit row in the same transaction; see docs/notes.md, "The audit chain",
//! for the canonical form.

use std::path::{Path, PathBuf};

use rusqlite::Connection;

use refdata::LookupSet;

pub mod analysis;
mod audit;
mod backup;
pub mod bench_record;
pub mod bulk;
pub mod canon;
mod dates;
pub mod exchange;
mod files;
pub mod fleet;
mod ids;
mod incidents;
mod lookup_upkeep;
pub mod model;
pub(crate) mod moves;
mod outbox;
mod own_materials;
pub mod practice;
pub mod progress;
pub(crate) mod pulled_exposure;
pub mod read;
pub mod read_report;
mod refdata;
pub(crate) mod rendered;
pub mod safe_file;
pub mod signing;
mod sqlite;
mod verify;
mod verify_scan;

pub use files::{
    file_mode, make_dir_private, remove_stale_partials, sync_dir, sync_written, temporary_sibling,
    write_atomically, write_atomically_with, write_new, write_new_synced,
};
pub(crate) use ids::IdGen;
pub use incidents::check_bench_code;
pub use model::*;
pub use moves::{Resolution, Transfer};
pub use outbox::{ChainRow, Receipt, PULL_ACTOR};
pub use own_materials::{check_material, check_material_code, MaterialBook, OwnMaterial};
pub use pulled_exposure::PulledExposure;
pub use read::RecordSource;
pub use read_report::{consistent, ChainHolder, ReportSource};
pub use sqlite::{APPLICATION_ID, SCHEMA_VERSION};
pub use verify::Anchor;

/// Code version recorded with computed results and exports.
pub const CODE_VERSION: &str = concat!("shardlog ", env!("CARGO_PKG_VERSION"));

/// Why a store operation failed. Callers can match; the message names what to fix.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StoreError {
    #[error("no database at {path}; create one with `shardlog --db {path} init`")]
    Missing { path: String },
    #[error("cannot open {path}: {message}")]
    Open { path: String, message: String },
    #[error("{path} is not a shardlog database ({why}); it was left untouched")]
    NotOurs { path: String, why: String },
    #[error("{path} has schema version {found}, newer than this shardlog understands ({supported}); it was left untouched, use a newer shardlog")]
    TooNew {
        path: String,
        found: i64,
        supported: i64,
    },
    #[error("{path}: its schema was altered outside shardlog (schema {version}: {found}); it was left untouched and is not opened, migrated or written until the schema is as shardlog made it (restore a backup)")]
    Altered {
        path: String,
        version: i64,
        found: String,
    },
    #[error("incident {reference} was changed meanwhile (it is at revision {current}, the edit was made on revision {expected}); nothing was saved, reload and edit again")]
    StaleRevision {
        reference: String,
        expected: i64,
        current: i64,
    },
    #[error("no incident {0}")]
    NotFound(String),
    #[error("{field}: {message}")]
    Invalid { field: String, message: String },
    #[error("{what} {code} already exists")]
    Duplicate { what: String, code: String },
    #[error("{path}: {message}")]
    File { path: String, message: String },
    #[error("database: {0}")]
    Database(String),
    /// The machine refused the write: disk full, a disk error, a read-only file, another
    /// writer holding the lock too long. Nothing of the change was written.
    #[error("{0}")]
    Storage(String),
}

impl StoreError {
    pub(crate) fn invalid(field: impl Into<String>, message: impl Into<String>) -> StoreError {
        StoreError::Invalid {
            field: field.into(),
            message: message.into(),
        }
    }
}

impl From<rusqlite::Error> for StoreError {
    fn from(e: rusqlite::Error) -> Self {
        match sqlite::environment_failure(&e) {
            Some(m) => StoreError::Storage(m),
            None => StoreError::Database(e.to_string()),
        }
    }
}

impl From<serde_json::Error> for StoreError {
    fn from(e: serde_json::Error) -> Self {
        StoreError::Database(format!("JSON: {e}"))
    }
}

/// An open shardlog database.
pub struct Store {
    pub(crate) conn: Connection,
    /// The database file, None in memory.
    path: Option<PathBuf>,
    /// Where attachments are kept (`<database>.files/`), None if attachments are off.
    files_dir: Option<PathBuf>,
    pub(crate) ids: IdGen,
    /// (kind, code) of every lookup entry, for validating writes.
    pub(crate) lookups: LookupSet,
    /// Told how far long work (import, verify, backup) has come.
    progress: progress::ProgressSlot,
    /// Imports of more incidents than this take the bulk path.
    bulk_import_above: usize,
}

/// The fixed time and actor of audit rows written by migrations (seeded lookup entries).
pub(crate) const MIGRATION_AT: &str = "2026-01-01T00:00:00.000Z";

/// The file's schema version, or [`StoreError::Altered`] when its schema objects are not
/// those the migrations made (checked before anything reads, migrates or writes).
fn refuse_altered_schema(conn: &rusqlite::Connection, path: &Path) -> Result<i64, StoreError> {
    let (version, altered) = sqlite::schema_differences(conn)?;
    if altered.is_empty() {
        return Ok(version);
    }
    let n = altered.len();
    let mut found = altered.into_iter().take(3).collect::<Vec<_>>().join("; ");
    if n > 3 {
        found.push_str(&format!("; and {} more", n - 3));
    }
    Err(StoreError::Altered {
        path: path.display().to_string(),
        version,
        found,
    })
}

impl Store {
    /// Run `f` on one read snapshot of the database: every read inside sees the file as it
    /// was at the first one, even if another program writes meanwhile (a bundle's head and
    /// its incidents must come from the same moment). Nested calls share the outer snapshot.
    pub fn consistent_read<T, E: From<StoreError>>(
        &self,
        f: impl FnOnce(&Store) -> Result<T, E>,
    ) -> Result<T, E> {
        let _snapshot = if self.conn.is_autocommit() {
            Some(
                rusqlite::Transaction::new_unchecked(
                    &self.conn,
                    rusqlite::TransactionBehavior::Deferred,
                )
                .map_err(StoreError::from)?,
            )
        } else {
            None
        };
        f(self)
    }

    /// Open a database file, creating it (and its schema) if it does not exist. A file
    /// that is not a shardlog database, or is newer than this build, is refused untouched.
    pub fn open(path: &Path) -> Result<Store, StoreError> {
        Store::open_file(path, true)
    }

    /// Open an existing database file; a missing file is an error.
    pub fn open_existing(path: &Path) -> Result<Store, StoreError> {
        Store::open_file(path, false)
    }

    /// Open an existing database only to read it: nothing is created or written, so a full
    /// disk does not lock the records away. A file of an older schema is opened as
    /// [`Store::open_existing`] opens it (and upgraded), since this build reads only its own.
    pub fn open_for_reading(path: &Path) -> Result<Store, StoreError> {
        let (conn, version) = sqlite::open_for_reading(path)?;
        if version < SCHEMA_VERSION {
            drop(conn);
            return Store::open_existing(path);
        }
        refuse_altered_schema(&conn, path)?;
        sqlite::set_file_pragmas(&conn)?;
        let real = path.canonicalize().unwrap_or_else(|_| path.to_path_buf());
        let files_dir = files::dir_for(&real);
        let mut store = Store::from_conn(conn, Some(path.to_path_buf()), Some(files_dir));
        store.load_lookups()?;
        Ok(store)
    }

    fn open_file(path: &Path, create: bool) -> Result<Store, StoreError> {
        let (conn, _) = sqlite::open_checked(path, create)?;
        let version = refuse_altered_schema(&conn, path)?;
        sqlite::set_file_pragmas(&conn)?;
        // beside the database's real file: opened through a link, the folder is still the
        // one beside the file the records are in
        let real = path.canonicalize().unwrap_or_else(|_| path.to_path_buf());
        let files_dir = files::dir_for(&real);
        let mut store = Store::from_conn(conn, Some(path.to_path_buf()), Some(files_dir));
        if version < SCHEMA_VERSION {
            store.migrate()?;
        }
        store.load_lookups()?;
        Ok(store)
    }

    /// A database in memory (tests, dry runs). Attachments are off unless
    /// [`Store::set_files_dir`] is called.
    pub fn open_in_memory() -> Result<Store, StoreError> {
        let conn = sqlite::open_in_memory()?;
        let mut store = Store::from_conn(conn, None, None);
        store.migrate()?;
        store.load_lookups()?;
        Ok(store)
    }

    /// Open an in-memory database brought only up to `version` (tests of migrations).
    #[doc(hidden)]
    pub fn open_in_memory_at_version(version: i64) -> Result<Store, StoreError> {
        let conn = sqlite::open_in_memory()?;
        let mut store = Store::from_conn(conn, None, None);
        store.migrate_to(version)?;
        Ok(store)
    }

    fn from_conn(conn: Connection, path: Option<PathBuf>, files_dir: Option<PathBuf>) -> Store {
        // the write path uses a few dozen distinct statements; the default cache (16) would
        // re-prepare them on every incident
        conn.set_prepared_statement_cache_capacity(128);
        // the random bits of new keys: std's RandomState takes its keys from the operating
        // system's generator, so keys made at different benches never meet (the demo and the
        // tests fix the seed with set_id_seed and stay reproducible)
        let seed = {
            use std::hash::{BuildHasher, Hasher};
            let mut h = std::collections::hash_map::RandomState::new().build_hasher();
            h.write_u128(
                std::time::SystemTime::now()
                    .duration_since(std::time::UNIX_EPOCH)
                    .map(|d| d.as_nanos())
                    .unwrap_or(0),
            );
            h.write_u32(std::process::id());
            h.finish()
        };
        Store {
            conn,
            path,
            files_dir,
            ids: IdGen::new(seed),
            lookups: LookupSet::default(),
            progress: progress::ProgressSlot::default(),
            bulk_import_above: exchange::BULK_IMPORT_ABOVE,
        }
    }

    /// Be told how far long work (import, verify, backup, a dispute bundle) has come; `None`
    /// stops it. Returns the callback that was set before.
    pub fn set_progress(&self, f: Option<progress::ProgressFn>) -> Option<progress::ProgressFn> {
        self.progress.set(f)
    }

    /// Tell the progress callback, if any, that `done` of `total` rows of `stage` are done.
    pub fn report_progress(&self, stage: &'static str, done: u64, total: Option<u64>) {
        self.progress.tell(stage, done, total);
    }

    /// Make key generation deterministic (tests, the demo generator).
    pub fn set_id_seed(&mut self, seed: u64) {
        self.ids = IdGen::new(seed);
    }

    /// Keep attachments in `dir` instead of `<database>.files/`.
    pub fn set_files_dir(&mut self, dir: PathBuf) {
        self.files_dir = Some(dir);
    }

    /// The attachment folder, if attachments are on.
    pub fn files_dir(&self) -> Option<&Path> {
        self.files_dir.as_deref()
    }

    /// The database file, None in memory.
    pub fn path(&self) -> Option<&Path> {
        self.path.as_deref()
    }

    /// Whether this database can only be read here (the file or its folder is not writable):
    /// reading works, every write is refused.
    pub fn is_read_only(&self) -> bool {
        sqlite::is_read_only(&self.conn)
    }

    /// Schema version of the open database.
    pub fn schema_version(&self) -> Result<i64, StoreError> {
        sqlite::user_version(&self.conn)
    }

    /// Apply every migration the database lacks, one transaction each.
    pub fn migrate(&mut self) -> Result<(), StoreError> {
        self.migrate_to(SCHEMA_VERSION)
    }

    /// Apply migrations up to `target` (tests of upgrades from earlier versions).
    #[doc(hidden)]
    pub fn migrate_to(&mut self, target: i64) -> Result<(), StoreError> {
        sqlite::migrate(&mut self.conn, target, |tx, name, version| {
            if version == 0 {
                refdata::seed_lookup_audit(tx)?;
            }
            if name == sqlite::FLEET_FACTS_MIGRATION {
                incidents::fill_fleet_facts(tx)?;
            }
            if name == sqlite::BENCH_PRACTICE_MIGRATION {
                practice::audit_seeded(tx)?;
            }
            Ok(())
        })?;
        if target.min(SCHEMA_VERSION) >= 1 {
            self.load_lookups()?;
        }
        Ok(())
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
    Ok(open_reports(db, bench)?)
}

/// [`open_records`] for a report, a dispute bundle or a bundle check, which read more than
/// the log ([`ReportSource`]).
pub fn open_reports(db: &Path, bench: Option<&str>) -> Result<Box<dyn ReportSource>, StoreError> {
    if is_fleet_url(db) {
        let url = db.to_string_lossy();
        let reader = fleet::FleetReader::open(&url, bench)?;
        return Ok(Box::new(reader));
    }
    let store = Store::open_for_reading(db)?;
    if let Some(code) = bench {
        let code = check_bench_code(code).map_err(|m| StoreError::invalid("--bench", m))?;
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
