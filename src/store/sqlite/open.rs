//! Opening a database: a file created owner-only, checked to be ours and not too new, opened
//! read-only where the file or its folder cannot be written; the pragmas of each kind of
//! connection; SQLite's failures that come from the machine put in words.

use std::path::Path;
use std::time::Duration;

use rusqlite::{Connection, OpenFlags};

use super::schema::{APPLICATION_ID, SCHEMA_VERSION};
use crate::store::StoreError;

/// How long a writer waits for another process holding the lock.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(30);

/// Open a file without changing it, and check it is ours and not too new.
/// Returns the connection and the schema version found (0 for a new, empty file).
///
/// A new file is created readable and writable by its owner only (the WAL and shared-memory
/// files SQLite makes beside it take the same permissions). A database the user may read but
/// not write, in a folder where SQLite cannot make those files, is opened read-only
/// (immutable): reading works, every write is refused by SQLite.
pub fn open_checked(path: &Path, create: bool) -> Result<(Connection, i64), StoreError> {
    let shown = path.display().to_string();
    let exists = path.exists();
    if !exists && !create {
        return Err(StoreError::Missing { path: shown });
    }
    if !exists {
        create_owner_only(path).map_err(|e| StoreError::Open {
            path: shown.clone(),
            message: e.to_string(),
        })?;
    }
    let mut flags = OpenFlags::SQLITE_OPEN_READ_WRITE
        | OpenFlags::SQLITE_OPEN_URI
        | OpenFlags::SQLITE_OPEN_NO_MUTEX;
    if create {
        flags |= OpenFlags::SQLITE_OPEN_CREATE;
    }
    let open_err = |e: rusqlite::Error| StoreError::Open {
        path: shown.clone(),
        message: e.to_string(),
    };
    let mut conn = Connection::open_with_flags(path, flags).map_err(open_err)?;
    conn.busy_timeout(BUSY_TIMEOUT)?;
    limit_pages_for_tests(&conn)?;
    let not_ours = |why: &str| StoreError::NotOurs {
        path: shown.clone(),
        why: why.to_string(),
    };
    // Only "file is not a database" means it is not ours; anything else (a folder SQLite
    // cannot write its WAL index in, a disk error) is a failure to open.
    let header_err = |e: rusqlite::Error| match e.sqlite_error_code() {
        Some(rusqlite::ErrorCode::NotADatabase) => not_ours("it is not an SQLite database"),
        _ => StoreError::Open {
            path: shown.clone(),
            message: describe(&e),
        },
    };
    let app_id: i64 = match conn.query_row("PRAGMA application_id", [], |r| r.get(0)) {
        Ok(v) => v,
        Err(e)
            if exists
                && matches!(
                    e.sqlite_error_code(),
                    Some(rusqlite::ErrorCode::CannotOpen | rusqlite::ErrorCode::ReadOnly)
                ) =>
        {
            // a WAL database in a folder we cannot write: read it as it is on disk
            conn = open_immutable(path).map_err(open_err)?;
            conn.query_row("PRAGMA application_id", [], |r| r.get(0))
                .map_err(header_err)?
        }
        Err(e) => return Err(header_err(e)),
    };
    let version: i64 = conn
        .query_row("PRAGMA user_version", [], |r| r.get(0))
        .map_err(header_err)?;
    if app_id != APPLICATION_ID {
        let tables: i64 = conn
            .query_row("SELECT count(*) FROM sqlite_master", [], |r| r.get(0))
            .map_err(header_err)?;
        if app_id != 0 || tables > 0 || version != 0 {
            return Err(not_ours(
                "it is an SQLite database of another program (application id differs)",
            ));
        }
    }
    if version > SCHEMA_VERSION {
        return Err(StoreError::TooNew {
            path: shown,
            found: version,
            supported: SCHEMA_VERSION,
        });
    }
    Ok((conn, version))
}

/// Open an existing file for reading only: nothing is created, switched or written, so a
/// full disk (or a file-size limit) does not stop `list`, `show`, `export` or `verify`.
/// Where SQLite cannot even size its shared-memory index beside the file, and no write is
/// pending in the WAL, the file is read as it is on disk (immutable). Returns the
/// connection and the schema version found.
pub fn open_for_reading(path: &Path) -> Result<(Connection, i64), StoreError> {
    let shown = path.display().to_string();
    if !path.exists() {
        return Err(StoreError::Missing { path: shown });
    }
    let open_err = |e: rusqlite::Error| StoreError::Open {
        path: shown.clone(),
        message: describe(&e),
    };
    let plain = Connection::open_with_flags(
        path,
        OpenFlags::SQLITE_OPEN_READ_ONLY
            | OpenFlags::SQLITE_OPEN_URI
            | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )
    .and_then(|c| {
        c.busy_timeout(BUSY_TIMEOUT)?;
        c.query_row("PRAGMA application_id", [], |r| r.get::<_, i64>(0))?;
        Ok(c)
    });
    let conn = match plain {
        Ok(c) => c,
        Err(e) => {
            let mut wal = path.as_os_str().to_os_string();
            wal.push("-wal");
            let pending = std::fs::metadata(std::path::PathBuf::from(wal))
                .map(|m| m.len() > 0)
                .unwrap_or(false);
            if pending {
                return Err(open_err(e));
            }
            open_immutable(path).map_err(open_err)?
        }
    };
    let header = |e: rusqlite::Error| match e.sqlite_error_code() {
        Some(rusqlite::ErrorCode::NotADatabase) => StoreError::NotOurs {
            path: shown.clone(),
            why: "it is not an SQLite database".into(),
        },
        _ => open_err(e),
    };
    let app_id: i64 = conn
        .query_row("PRAGMA application_id", [], |r| r.get(0))
        .map_err(header)?;
    let version: i64 = conn
        .query_row("PRAGMA user_version", [], |r| r.get(0))
        .map_err(header)?;
    if app_id != APPLICATION_ID {
        return Err(StoreError::NotOurs {
            path: shown,
            why: "its application id is not shardlog's".into(),
        });
    }
    if version > SCHEMA_VERSION {
        return Err(StoreError::TooNew {
            path: shown,
            found: version,
            supported: SCHEMA_VERSION,
        });
    }
    Ok((conn, version))
}

/// Create an empty file readable by its owner only (SQLite then writes the database into it).
fn create_owner_only(path: &Path) -> std::io::Result<()> {
    let mut o = std::fs::OpenOptions::new();
    o.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        o.mode(0o600);
    }
    match o.open(path) {
        Ok(_) => Ok(()),
        // made meanwhile by another process: SQLite opens (and checks) it as it is
        Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Ok(()),
        Err(e) => Err(e),
    }
}

/// Open read-only and immutable (no WAL index, no locks): for a database in a folder the
/// user cannot write.
fn open_immutable(path: &Path) -> Result<Connection, rusqlite::Error> {
    let abs = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut uri = String::from("file:");
    for b in abs.to_string_lossy().bytes() {
        if b.is_ascii_alphanumeric() || b"/-_.~".contains(&b) {
            uri.push(b as char);
        } else {
            uri.push_str(&format!("%{b:02X}"));
        }
    }
    uri.push_str("?mode=ro&immutable=1");
    let conn = Connection::open_with_flags(
        uri,
        OpenFlags::SQLITE_OPEN_READ_ONLY
            | OpenFlags::SQLITE_OPEN_URI
            | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )?;
    conn.busy_timeout(BUSY_TIMEOUT)?;
    Ok(conn)
}

/// Whether the connection can only read (the file or its folder is not writable).
pub fn is_read_only(conn: &Connection) -> bool {
    conn.is_readonly(rusqlite::MAIN_DB).unwrap_or(false)
}

/// Debug builds only: `SHARDLOG_TEST_MAX_PAGE_COUNT=N` caps the database at N pages, the
/// portable way for the test suite to make a database that cannot grow (disk full).
fn limit_pages_for_tests(conn: &Connection) -> Result<(), StoreError> {
    #[cfg(debug_assertions)]
    if let Some(n) = std::env::var("SHARDLOG_TEST_MAX_PAGE_COUNT")
        .ok()
        .and_then(|v| v.parse::<u32>().ok())
    {
        // a number we parsed, never text from the user
        let _: i64 = conn.query_row(&format!("PRAGMA max_page_count = {n}"), [], |r| r.get(0))?;
    }
    #[cfg(not(debug_assertions))]
    let _ = conn;
    Ok(())
}
/// Run an integrity check; Ok(()) when SQLite says "ok".
pub fn integrity_check(conn: &Connection) -> Result<(), StoreError> {
    let mut stmt = conn.prepare("PRAGMA integrity_check")?;
    let rows: Vec<String> = stmt
        .query_map([], |r| r.get::<_, String>(0))?
        .collect::<Result<_, _>>()?;
    if rows.len() == 1 && rows[0] == "ok" {
        Ok(())
    } else {
        Err(StoreError::Database(format!(
            "integrity check failed: {}",
            rows.join("; ")
        )))
    }
}

/// A sentence for an SQLite failure that comes from the machine, not the data: a full disk,
/// a failing or refusing disk, another writer holding the lock too long, a read-only file.
/// None for anything else.
pub fn environment_failure(e: &rusqlite::Error) -> Option<String> {
    use rusqlite::ErrorCode as C;
    let raw = e.to_string();
    Some(match e.sqlite_error_code()? {
        C::DiskFull => format!(
            "disk full: the disk or the database has no room left ({raw}); nothing of this change was written"
        ),
        C::SystemIoFailure => format!(
            "the disk refused a read or write ({raw}: is it full, is the file over a size limit, or is the disk failing?); nothing of this change was written"
        ),
        C::DatabaseBusy | C::DatabaseLocked => format!(
            "another program kept the database busy for more than {} s (an import or a backup?); nothing was written, try again",
            BUSY_TIMEOUT.as_secs()
        ),
        C::ReadOnly => "the database is read-only here (the file or its folder cannot be written); nothing was written".to_string(),
        _ => return None,
    })
}

/// [`environment_failure`] or SQLite's own message.
pub fn describe(e: &rusqlite::Error) -> String {
    environment_failure(e).unwrap_or_else(|| e.to_string())
}

/// Pragmas for a file database: WAL, synchronous=FULL (each committed audit row survives
/// power loss), foreign keys on.
/// Reads go through a memory map of the file (up to SQLite's limit, 2 GB): a fresh process
/// reading many pages (a count over a supplier's 350,000 incidents) takes them from the
/// operating system's cache without copying each into SQLite's own (1,000,000-incident
/// demo: 60 ms → 30 ms for the whole `list --supplier` command). Writes still go through
/// ordinary writes and `synchronous = FULL`; the map is only read.
const READ_MAP: &str = "PRAGMA mmap_size = 2147418112;";

pub fn set_file_pragmas(conn: &Connection) -> Result<(), StoreError> {
    conn.execute_batch(READ_MAP)?;
    if is_read_only(conn) {
        // nothing to switch on a connection that cannot write
        conn.execute_batch("PRAGMA foreign_keys = ON;")?;
        return Ok(());
    }
    let mode: String = conn.query_row("PRAGMA journal_mode = WAL", [], |r| r.get(0))?;
    if !mode.eq_ignore_ascii_case("wal") {
        return Err(StoreError::Database(format!(
            "could not switch the journal to WAL (got {mode})"
        )));
    }
    // a larger page cache keeps a big import's index pages in memory (64 MB)
    conn.execute_batch(
        "PRAGMA synchronous = FULL; PRAGMA foreign_keys = ON; PRAGMA cache_size = -65536;",
    )?;
    Ok(())
}

/// For a large load's one transaction into a file no other connection has open: the
/// rollback journal instead of the write-ahead log. A page the load adds past the file's
/// end is written once, into the file, and needs no journal entry (only the pages the file
/// had are copied to the journal before they change), where the log takes every page
/// twice (into the log, then into the file at the checkpoint) and looks each written page
/// up in a log that grows with the load. All or nothing still: a transaction rolled back,
/// or a process killed mid-way, leaves the file as it was (the journal is rolled back when
/// the file is next opened). Returns whether the journal was switched; false (the log
/// kept) when the file is not in WAL mode (in memory) or another connection has it open
/// (SQLite then refuses to leave WAL at once, without waiting). [`rejoin_wal`] after.
pub fn leave_wal_for_load(conn: &Connection) -> Result<bool, StoreError> {
    let mode: String = conn.query_row("PRAGMA journal_mode", [], |r| r.get(0))?;
    if !mode.eq_ignore_ascii_case("wal") {
        return Ok(false);
    }
    match conn.query_row("PRAGMA journal_mode = DELETE", [], |r| {
        r.get::<_, String>(0)
    }) {
        Ok(now) if now.eq_ignore_ascii_case("delete") => {
            // the pages the load writes into the file would be read back through the read
            // map, counting the whole load in this process's resident memory
            conn.execute_batch("PRAGMA mmap_size = 0;")?;
            Ok(true)
        }
        Ok(_) => Ok(false),
        Err(e)
            if matches!(
                e.sqlite_error_code(),
                Some(rusqlite::ErrorCode::DatabaseBusy | rusqlite::ErrorCode::DatabaseLocked)
            ) =>
        {
            Ok(false)
        }
        Err(e) => Err(e.into()),
    }
}

/// Back to the write-ahead log after [`leave_wal_for_load`] (outside any transaction).
/// Another connection that opened the file meanwhile may hold it a moment: the file is
/// then left as it is, whole, and the next opening switches it (`set_file_pragmas`).
pub fn rejoin_wal(conn: &Connection) -> Result<(), StoreError> {
    let mode: String = match conn.query_row("PRAGMA journal_mode = WAL", [], |r| r.get(0)) {
        Ok(mode) => mode,
        Err(e)
            if matches!(
                e.sqlite_error_code(),
                Some(rusqlite::ErrorCode::DatabaseBusy | rusqlite::ErrorCode::DatabaseLocked)
            ) =>
        {
            conn.execute_batch(READ_MAP)?;
            return Ok(());
        }
        Err(e) => return Err(e.into()),
    };
    if !mode.eq_ignore_ascii_case("wal") {
        return Err(StoreError::Database(format!(
            "could not switch the journal back to WAL after the load (got {mode})"
        )));
    }
    conn.execute_batch(READ_MAP)?;
    Ok(())
}

/// Pragmas for a database in memory.
pub fn set_memory_pragmas(conn: &Connection) -> Result<(), StoreError> {
    conn.execute_batch("PRAGMA foreign_keys = ON;")?;
    Ok(())
}

/// Pragmas for a bulk load into a brand-new file (the demo generator): if the process dies
/// the half-made file is deleted by the caller, so durability is not needed until the end.
pub fn set_bulk_pragmas(conn: &Connection) -> Result<(), StoreError> {
    conn.execute_batch(
        "PRAGMA journal_mode = OFF; PRAGMA synchronous = OFF; PRAGMA foreign_keys = OFF;
         PRAGMA cache_size = -262144; PRAGMA temp_store = MEMORY; PRAGMA mmap_size = 0;",
    )?;
    Ok(())
}

/// A database in memory, with its pragmas.
pub fn open_in_memory() -> Result<Connection, StoreError> {
    let conn = Connection::open_in_memory()?;
    set_memory_pragmas(&conn)?;
    Ok(conn)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn machine_failures_are_sentences_without_locked() {
        use rusqlite::ffi;
        let err =
            |code: i32| rusqlite::Error::SqliteFailure(ffi::Error::new(code), Some("raw".into()));
        let full = environment_failure(&err(ffi::SQLITE_FULL)).unwrap();
        assert!(full.starts_with("disk full"), "{full}");
        for code in [ffi::SQLITE_BUSY, ffi::SQLITE_LOCKED] {
            let m = environment_failure(&err(code)).unwrap();
            assert!(
                m.contains("another program") && m.contains("try again"),
                "{m}"
            );
            assert!(!m.to_lowercase().contains("locked"), "{m}");
        }
        let io = environment_failure(&err(ffi::SQLITE_IOERR_WRITE)).unwrap();
        assert!(io.contains("disk refused"), "{io}");
        let ro = environment_failure(&err(ffi::SQLITE_READONLY)).unwrap();
        assert!(ro.contains("read-only"), "{ro}");
        assert_eq!(environment_failure(&err(ffi::SQLITE_CONSTRAINT)), None);
    }

    fn mode(conn: &Connection) -> String {
        conn.query_row("PRAGMA journal_mode", [], |r| r.get(0))
            .unwrap()
    }

    /// A load leaves the write-ahead log only when no other connection has the file open
    /// (then at once, without waiting for it), writes all or nothing with the rollback
    /// journal, and the file is back in WAL mode after; a database in memory keeps its own.
    #[test]
    fn a_load_leaves_the_log_only_for_a_file_nobody_else_has_open() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("load.db");
        let conn = Connection::open(&path).unwrap();
        conn.busy_timeout(BUSY_TIMEOUT).unwrap();
        set_file_pragmas(&conn).unwrap();
        conn.execute_batch("CREATE TABLE t (x TEXT); INSERT INTO t VALUES ('before');")
            .unwrap();
        // another connection has the file open: the log is kept, at once
        let other = Connection::open(&path).unwrap();
        let n: i64 = other
            .query_row("SELECT count(*) FROM t", [], |r| r.get(0))
            .unwrap();
        assert_eq!(n, 1);
        let start = std::time::Instant::now();
        assert!(!leave_wal_for_load(&conn).unwrap());
        assert!(start.elapsed() < BUSY_TIMEOUT / 2, "{:?}", start.elapsed());
        assert_eq!(mode(&conn), "wal");
        drop(other);
        // alone: the rollback journal, and a load rolled back leaves nothing
        assert!(leave_wal_for_load(&conn).unwrap());
        assert_eq!(mode(&conn), "delete");
        conn.execute_batch("BEGIN IMMEDIATE; INSERT INTO t VALUES ('rolled back'); ROLLBACK;")
            .unwrap();
        conn.execute_batch("BEGIN IMMEDIATE; INSERT INTO t VALUES ('kept'); COMMIT;")
            .unwrap();
        rejoin_wal(&conn).unwrap();
        assert_eq!(mode(&conn), "wal");
        let fresh = Connection::open(&path).unwrap();
        assert_eq!(mode(&fresh), "wal");
        let rows: Vec<String> = fresh
            .prepare("SELECT x FROM t ORDER BY rowid")
            .unwrap()
            .query_map([], |r| r.get(0))
            .unwrap()
            .collect::<Result<_, _>>()
            .unwrap();
        assert_eq!(rows, ["before", "kept"]);
        // in memory: nothing to leave
        let memory = open_in_memory().unwrap();
        assert!(!leave_wal_for_load(&memory).unwrap());
        assert_eq!(mode(&memory), "memory");
    }
}
