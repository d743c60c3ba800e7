//! The SQLite store. The rest of the code sees domain types ([`model`]), never rusqlite.
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
//! Every change to a user-visible record (an incident with everything under it, a site,
//! asset, supplier, product, lot, exposure row or lookup entry) appends one hash-chained
//! audit row in the same transaction. See DEVELOPERS.md, "store", for the canonical form.

use std::collections::{HashMap, HashSet};
use std::path::{Path, PathBuf};

use rusqlite::{Connection, OptionalExtension, TransactionBehavior};

mod audit;
pub mod bench_record;
pub mod canon;
pub mod compute;
pub mod demo;
pub mod exchange;
mod files;
mod incidents;
pub mod model;
mod refdata;
mod sqlite;

pub use files::{sync_dir, temporary_sibling, write_atomically, write_new_synced};
pub use model::*;
pub use sqlite::{APPLICATION_ID, SCHEMA_VERSION};

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

/// Deterministic generator for the random part of UUIDv7 keys (SplitMix64).
///
/// In monotonic mode (bulk imports, which stamp every key with the same millisecond) keys
/// made within one millisecond ascend: the 74 random bits of the previous key plus a random
/// step of 1 to 2^32 (RFC 9562 section 6.2, method 2, "monotonic random"). New rows then go
/// to the end of the key indexes instead of to random places in them.
#[derive(Debug, Clone)]
pub(crate) struct IdGen {
    state: u64,
    monotonic: bool,
    /// (millisecond, 74 random bits) of the last key made in monotonic mode
    last: Option<(u64, u128)>,
}

const RAND_BITS: u32 = 74;

impl IdGen {
    pub(crate) fn new(seed: u64) -> IdGen {
        IdGen {
            state: seed,
            monotonic: false,
            last: None,
        }
    }
    pub(crate) fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Switch monotonic mode on or off (see the type's description).
    pub(crate) fn set_monotonic(&mut self, on: bool) {
        self.monotonic = on;
        self.last = None;
    }
    /// A UUIDv7 for the given time in milliseconds since 1970.
    pub(crate) fn uuid_v7(&mut self, millis: i64) -> String {
        let a = self.next_u64().to_le_bytes();
        let b = self.next_u64().to_le_bytes();
        let mut rnd = [0u8; 10];
        rnd[..8].copy_from_slice(&a);
        rnd[8..].copy_from_slice(&b[..2]);
        let mut ms = millis.max(0) as u64;
        if self.monotonic {
            let fresh = u128::from_le_bytes({
                let mut x = [0u8; 16];
                x[..10].copy_from_slice(&rnd);
                x
            }) & ((1u128 << RAND_BITS) - 1);
            let r = match self.last {
                Some((last_ms, last_r)) if last_ms >= ms => {
                    let step = 1 + u128::from(u32::from_le_bytes([a[0], a[1], a[2], a[3]]));
                    let r = last_r + step;
                    if r >> RAND_BITS == 0 {
                        ms = last_ms;
                        r
                    } else {
                        // the random field is used up: move on to the next millisecond
                        ms = last_ms + 1;
                        fresh >> 1
                    }
                }
                _ => fresh >> 1, // start in the lower half: room to count up
            };
            self.last = Some((ms, r));
            // lay the 74 bits out where the builder takes them: 4 bits of byte 0, byte 1,
            // 6 bits of byte 2, bytes 3..9
            rnd[0] = ((r >> 70) & 0x0F) as u8;
            rnd[1] = ((r >> 62) & 0xFF) as u8;
            rnd[2] = ((r >> 56) & 0x3F) as u8;
            for (k, byte) in rnd[3..].iter_mut().enumerate() {
                *byte = ((r >> (8 * (6 - k))) & 0xFF) as u8;
            }
        }
        uuid::Builder::from_unix_timestamp_millis(ms, &rnd)
            .into_uuid()
            .hyphenated()
            .to_string()
    }
}

/// (kind, code) of every lookup entry, asked without building owned keys (validation asks
/// a dozen times per incident).
#[derive(Debug, Clone, Default)]
pub(crate) struct LookupSet(HashMap<String, HashSet<String>>);

impl LookupSet {
    pub(crate) fn insert(&mut self, (kind, code): (String, String)) {
        self.0.entry(kind).or_default().insert(code);
    }
    pub(crate) fn contains(&self, kind: &str, code: &str) -> bool {
        self.0.get(kind).is_some_and(|codes| codes.contains(code))
    }
}

impl FromIterator<(String, String)> for LookupSet {
    fn from_iter<I: IntoIterator<Item = (String, String)>>(iter: I) -> Self {
        let mut set = LookupSet::default();
        for e in iter {
            set.insert(e);
        }
        set
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
}

/// The fixed time and actor of audit rows written by migrations (seeded lookup entries).
pub(crate) const MIGRATION_AT: &str = "2026-01-01T00:00:00.000Z";

impl Store {
    /// Open a database file, creating it (and its schema) if it does not exist. A file
    /// that is not a shardlog database, or is newer than this build, is refused untouched.
    pub fn open(path: &Path) -> Result<Store, StoreError> {
        Store::open_file(path, true)
    }

    /// Open an existing database file; a missing file is an error.
    pub fn open_existing(path: &Path) -> Result<Store, StoreError> {
        Store::open_file(path, false)
    }

    fn open_file(path: &Path, create: bool) -> Result<Store, StoreError> {
        let (conn, version) = sqlite::open_checked(path, create)?;
        sqlite::set_file_pragmas(&conn)?;
        let files_dir = files::dir_for(path);
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
        let conn = Connection::open_in_memory()?;
        sqlite::set_memory_pragmas(&conn)?;
        let mut store = Store::from_conn(conn, None, None);
        store.migrate()?;
        store.load_lookups()?;
        Ok(store)
    }

    /// Open an in-memory database brought only up to `version` (tests of migrations).
    #[doc(hidden)]
    pub fn open_in_memory_at_version(version: i64) -> Result<Store, StoreError> {
        let conn = Connection::open_in_memory()?;
        sqlite::set_memory_pragmas(&conn)?;
        let mut store = Store::from_conn(conn, None, None);
        store.migrate_to(version)?;
        Ok(store)
    }

    fn from_conn(conn: Connection, path: Option<PathBuf>, files_dir: Option<PathBuf>) -> Store {
        // the write path uses a few dozen distinct statements; the default cache (16) would
        // re-prepare them on every incident
        conn.set_prepared_statement_cache_capacity(128);
        let seed = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_nanos() as u64)
            .unwrap_or(0)
            ^ ((std::process::id() as u64) << 32);
        Store {
            conn,
            path,
            files_dir,
            ids: IdGen::new(seed),
            lookups: LookupSet::default(),
        }
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
        let target = target.min(SCHEMA_VERSION);
        loop {
            let tx = self
                .conn
                .transaction_with_behavior(TransactionBehavior::Immediate)?;
            // re-read inside the lock: another process may have migrated meanwhile
            let version = sqlite::user_version(&tx)?;
            if version >= target {
                tx.commit()?;
                if target >= 1 {
                    self.load_lookups()?;
                }
                return Ok(());
            }
            let (name, sql) = sqlite::MIGRATIONS[version as usize];
            tx.execute_batch(sql)
                .map_err(|e| StoreError::Database(format!("migration {name}: {e}")))?;
            if version == 0 {
                sqlite::set_application_id(&tx)?;
                audit::seed_lookup_audit(&tx)?;
            }
            if name == sqlite::FLEET_FACTS_MIGRATION {
                incidents::fill_fleet_facts(&tx)?;
            }
            sqlite::set_user_version(&tx, version + 1)?;
            tx.commit()?;
        }
    }

    pub(crate) fn load_lookups(&mut self) -> Result<(), StoreError> {
        let mut stmt = self.conn.prepare("SELECT kind, code FROM lookup")?;
        let set = stmt
            .query_map([], |r| Ok((r.get::<_, String>(0)?, r.get::<_, String>(1)?)))?
            .collect::<Result<LookupSet, _>>()?;
        drop(stmt);
        self.lookups = set;
        Ok(())
    }

    pub(crate) fn has_lookup(&self, kind: LookupKind, code: &str) -> bool {
        self.lookups.contains(kind.as_str(), code)
    }

    /// The hash of the last audit row (the chain head), or 64 zeros on an empty log.
    pub fn audit_head(&self) -> Result<String, StoreError> {
        Ok(self
            .conn
            .query_row(
                "SELECT hash FROM audit ORDER BY seq DESC LIMIT 1",
                [],
                |r| r.get::<_, String>(0),
            )
            .optional()?
            .unwrap_or_else(|| canon::GENESIS.to_string()))
    }

    /// Copy the database with SQLite's online backup to `dest` (which must not exist),
    /// copy the attachment folder beside it, then run an integrity check and `verify` on
    /// the copy. Everything is made under temporary names and renamed into place only when
    /// whole and flushed to the disk: a failure half-way leaves nothing at `dest` and no
    /// temporary files. The copy is readable by its owner only.
    pub fn backup(&self, dest: &Path) -> Result<VerifyReport, StoreError> {
        let shown = dest.display().to_string();
        let dest_files = files::dir_for(dest);
        for p in [dest, dest_files.as_path()] {
            if p.exists() {
                return Err(StoreError::File {
                    path: p.display().to_string(),
                    message: "already exists; choose a new file name".into(),
                });
            }
        }
        let tmp = files::temporary_sibling(dest);
        let tmp_files = files::dir_for(&tmp);
        let clean = || {
            let _ = std::fs::remove_file(&tmp);
            for suffix in ["-wal", "-shm", "-journal"] {
                let mut n = tmp.as_os_str().to_os_string();
                n.push(suffix);
                let _ = std::fs::remove_file(PathBuf::from(n));
            }
            let _ = std::fs::remove_dir_all(&tmp_files);
        };
        let result = (|| -> Result<VerifyReport, StoreError> {
            let file_err = |e: &dyn std::fmt::Display| StoreError::File {
                path: shown.clone(),
                message: e.to_string(),
            };
            {
                let (mut target, _) = sqlite::open_checked(&tmp, true)?;
                let backup = rusqlite::backup::Backup::new(&self.conn, &mut target)?;
                backup.run_to_completion(256, std::time::Duration::from_millis(0), None)?;
                drop(backup);
                // the copy in one file (no WAL beside it), flushed to the disk
                let _: String =
                    target.query_row("PRAGMA journal_mode = DELETE", [], |r| r.get(0))?;
            }
            std::fs::File::open(&tmp)
                .and_then(|f| f.sync_all())
                .map_err(|e| file_err(&e))?;
            if let Some(src) = self.files_dir.as_deref() {
                if src.is_dir() {
                    files::copy_dir(src, &tmp_files)?;
                    files::sync_dir(&tmp_files).map_err(|e| file_err(&e))?;
                }
            }
            let report = {
                let copy = Store::open_existing(&tmp)?;
                sqlite::integrity_check(&copy.conn)?;
                copy.verify()?
            };
            if tmp_files.is_dir() {
                std::fs::rename(&tmp_files, &dest_files).map_err(|e| file_err(&e))?;
            }
            std::fs::rename(&tmp, dest).map_err(|e| file_err(&e))?;
            files::sync_dir(dest.parent().unwrap_or(Path::new("."))).map_err(|e| file_err(&e))?;
            Ok(report)
        })();
        if result.is_err() {
            clean();
            if !dest.exists() {
                let _ = std::fs::remove_dir_all(&dest_files);
            }
        }
        result
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ids_are_v7_and_deterministic() {
        let mut a = IdGen::new(7);
        let mut b = IdGen::new(7);
        let x = a.uuid_v7(1_767_225_600_000);
        assert_eq!(x, b.uuid_v7(1_767_225_600_000));
        let u = uuid::Uuid::parse_str(&x).unwrap();
        assert_eq!(u.get_version_num(), 7);
        assert_ne!(x, a.uuid_v7(1_767_225_600_000));
    }

    #[test]
    fn monotonic_ids_ascend_within_a_millisecond() {
        let ms = 1_767_225_600_000;
        let mut g = IdGen::new(11);
        g.set_monotonic(true);
        let mut prev = String::new();
        for i in 0..5000 {
            let x = g.uuid_v7(ms);
            let u = uuid::Uuid::parse_str(&x).unwrap();
            assert_eq!(u.get_version_num(), 7, "{x}");
            assert_eq!(u.get_variant(), uuid::Variant::RFC4122, "{x}");
            // RFC 9562: the first 48 bits are the Unix time in milliseconds
            let (secs, nanos) = u.get_timestamp().unwrap().to_unix();
            assert_eq!(secs * 1000 + u64::from(nanos / 1_000_000), ms as u64, "{i}");
            assert!(x > prev, "{prev} then {x}");
            prev = x;
        }
        // a random field that runs out moves on to the next millisecond, still ascending
        g.last = Some((ms as u64, (1u128 << RAND_BITS) - 2));
        let x = g.uuid_v7(ms);
        assert!(x > prev);
        let (secs, nanos) = uuid::Uuid::parse_str(&x)
            .unwrap()
            .get_timestamp()
            .unwrap()
            .to_unix();
        assert_eq!(secs * 1000 + u64::from(nanos / 1_000_000), ms as u64 + 1);
        // off again: the plain generator (the demo's keys stay as they were)
        let mut a = IdGen::new(7);
        let mut b = IdGen::new(7);
        b.set_monotonic(true);
        b.set_monotonic(false);
        assert_eq!(a.uuid_v7(ms), b.uuid_v7(ms));
    }
}
