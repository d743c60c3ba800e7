//! Everything that is SQLite-only lives here: opening, pragmas, the application id,
//! migrations by `PRAGMA user_version`, and FTS5 text search. The domain SQL elsewhere in
//! the store is portable (PostgreSQL later).

use std::path::Path;
use std::time::Duration;

use rusqlite::{Connection, OpenFlags, Transaction};

use super::StoreError;

/// `PRAGMA application_id` of a shardlog database: "SHLG".
pub const APPLICATION_ID: i64 = 0x5348_4C47;

/// The migrations, in order. Migration n brings `user_version` from n-1 to n.
pub const MIGRATIONS: &[(&str, &str)] = &[
    (
        "0001_initial.sql",
        include_str!("../../schema/0001_initial.sql"),
    ),
    (
        "0002_search.sql",
        include_str!("../../schema/0002_search.sql"),
    ),
    (
        "0003_fleet_facts.sql",
        include_str!("../../schema/0003_fleet_facts.sql"),
    ),
    (
        "0004_search_contentless.sql",
        include_str!("../../schema/0004_search_contentless.sql"),
    ),
];

/// The migration that makes `incident_facts`; the store fills it from the incidents
/// already there, in the migration's transaction.
pub const FLEET_FACTS_MIGRATION: &str = "0003_fleet_facts.sql";

/// The schema version this build writes.
pub const SCHEMA_VERSION: i64 = MIGRATIONS.len() as i64;

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

/// Pragmas for a database in memory.
pub fn set_memory_pragmas(conn: &Connection) -> Result<(), StoreError> {
    conn.execute_batch("PRAGMA foreign_keys = ON;")?;
    Ok(())
}

/// Pragmas for a bulk load into a brand-new file (the demo generator): if the process dies
/// the half-made file is deleted by the caller, so durability is not needed until the end.
#[allow(dead_code)]
pub fn set_bulk_pragmas(conn: &Connection) -> Result<(), StoreError> {
    conn.execute_batch(
        "PRAGMA journal_mode = OFF; PRAGMA synchronous = OFF; PRAGMA foreign_keys = OFF;
         PRAGMA cache_size = -262144; PRAGMA temp_store = MEMORY; PRAGMA mmap_size = 0;",
    )?;
    Ok(())
}

/// Current schema version of an open connection.
pub fn user_version(conn: &Connection) -> Result<i64, StoreError> {
    Ok(conn.query_row("PRAGMA user_version", [], |r| r.get(0))?)
}

/// Set the schema version inside a migration's transaction (the header change commits
/// or rolls back with it).
pub fn set_user_version(tx: &Transaction<'_>, v: i64) -> Result<(), StoreError> {
    // PRAGMA takes no parameters; v is one of our own constants, never user data.
    tx.execute_batch(&format!("PRAGMA user_version = {v}"))?;
    Ok(())
}

pub fn set_application_id(tx: &Transaction<'_>) -> Result<(), StoreError> {
    tx.execute_batch(&format!("PRAGMA application_id = {APPLICATION_ID}"))?;
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

// ---- free-text search (FTS5) ----

/// Replace the searchable text of one incident.
pub fn fts_put(tx: &Connection, seq: i64, body: &str) -> Result<(), StoreError> {
    tx.prepare_cached("DELETE FROM incident_text WHERE rowid = ?1")?
        .execute([seq])?;
    tx.prepare_cached("INSERT INTO incident_text (rowid, body) VALUES (?1, ?2)")?
        .execute(rusqlite::params![seq, body])?;
    Ok(())
}

/// Add the searchable text of a new incident (no delete first: bulk loads).
pub fn fts_insert(tx: &Connection, seq: i64, body: &str) -> Result<(), StoreError> {
    tx.prepare_cached("INSERT INTO incident_text (rowid, body) VALUES (?1, ?2)")?
        .execute(rusqlite::params![seq, body])?;
    Ok(())
}

pub fn fts_delete(tx: &Connection, seq: i64) -> Result<(), StoreError> {
    tx.prepare_cached("DELETE FROM incident_text WHERE rowid = ?1")?
        .execute([seq])?;
    Ok(())
}

/// The statement that made the text index, as SQLite keeps it (to build the same index in
/// another database: [`fts_copy_index`]).
pub fn fts_create_sql(conn: &Connection) -> Result<String, StoreError> {
    Ok(conn.query_row(
        "SELECT sql FROM sqlite_master WHERE type = 'table' AND name = 'incident_text'",
        [],
        |r| r.get(0),
    )?)
}

/// The tables in which FTS5 keeps the text index (`incident_text_data`, `_idx`, …), by name,
/// with their columns (name, type, key position).
type ShadowTable = (String, Vec<(String, String, i64)>);
pub(crate) fn fts_shadow_tables(conn: &Connection) -> Result<Vec<ShadowTable>, StoreError> {
    let names: Vec<String> = {
        let mut stmt = conn.prepare(
            "SELECT name FROM sqlite_master WHERE type = 'table'
             AND name LIKE 'incident\\_text\\_%' ESCAPE '\\' ORDER BY name",
        )?;
        let rows = stmt.query_map([], |r| r.get(0))?;
        rows.collect::<Result<_, _>>()?
    };
    let mut out = Vec::with_capacity(names.len());
    for name in names {
        let mut stmt =
            conn.prepare("SELECT name, type, pk FROM pragma_table_info(?1) ORDER BY cid")?;
        let cols = stmt.query_map([&name], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?;
        let cols = cols.collect::<Result<_, _>>()?;
        out.push((name, cols));
    }
    Ok(out)
}

/// Replace the text index of `dst` by the one built in `src` (a database whose text index was
/// made by the same [`fts_create_sql`] and that holds nothing else of ours): the rows of
/// FTS5's own tables are copied as they are, which is the same index as inserting every text
/// into `dst`. Refused when the two indexes are not laid out alike. The connection to `dst`
/// must not search its text index before it is reopened (FTS5 may keep the old index's
/// layout in memory).
pub fn fts_copy_index(src: &Connection, dst: &Connection) -> Result<(), StoreError> {
    let (from, to) = (fts_shadow_tables(src)?, fts_shadow_tables(dst)?);
    if from.is_empty() || from != to || fts_create_sql(src)? != fts_create_sql(dst)? {
        return Err(StoreError::Database(
            "the text index built aside is not laid out like this database's".into(),
        ));
    }
    for (name, _) in &from {
        // names come from sqlite_master and match incident_text_*, not from a user
        let quoted = format!("\"{}\"", name.replace('"', ""));
        let mut read = src.prepare(&format!("SELECT * FROM {quoted}"))?;
        let columns = read.column_count();
        let marks = vec!["?"; columns].join(", ");
        dst.execute_batch(&format!("DELETE FROM {quoted}"))?;
        let mut write = dst.prepare(&format!("INSERT INTO {quoted} VALUES ({marks})"))?;
        let mut rows = read.query([])?;
        while let Some(r) = rows.next()? {
            let values: Vec<rusqlite::types::ToSqlOutput<'_>> = (0..columns)
                .map(|i| r.get_ref(i).map(rusqlite::types::ToSqlOutput::Borrowed))
                .collect::<Result<_, _>>()?;
            write.execute(rusqlite::params_from_iter(values))?;
        }
    }
    Ok(())
}

/// FROM clause for a text match: the text index drives (CROSS JOIN fixes the join order in
/// SQLite), then the incidents by row number.
pub const FTS_FROM: &str = "incident_text CROSS JOIN incidents i ON i.seq = incident_text.rowid";

/// SQL condition for a text match with [`FTS_FROM`]; bind [`fts_query`] of the user text.
pub const FTS_CONDITION: &str = "incident_text MATCH ?";

/// SQL condition for a text match over `incidents i` alone: the set of matching row
/// numbers, built once; the unary `+` keeps it from driving the query (see
/// `incidents::TextPlan::LogDrives`). Bind [`fts_query`] of the user text.
pub const FTS_IN_SET: &str =
    "+i.seq IN (SELECT rowid FROM incident_text WHERE incident_text MATCH ?)";

/// How many incidents a text query matches (read from the text index alone).
pub fn fts_count(conn: &Connection, query: &str) -> Result<u64, StoreError> {
    let n: i64 = conn
        .prepare_cached("SELECT count(*) FROM incident_text WHERE incident_text MATCH ?1")?
        .query_row([query], |r| r.get(0))?;
    Ok(n as u64)
}

/// Turn what a user typed into an FTS5 query that cannot be a syntax error: every word
/// becomes a quoted prefix term, all must match. None when nothing searchable is left.
pub fn fts_query(text: &str) -> Option<String> {
    let terms: Vec<String> = text
        .split(|c: char| !c.is_alphanumeric() && c != '_')
        .filter(|w| !w.is_empty())
        .map(|w| format!("\"{w}\"*"))
        .collect();
    if terms.is_empty() {
        None
    } else {
        Some(terms.join(" "))
    }
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

    #[test]
    fn a_text_index_laid_out_otherwise_is_not_copied_in() {
        let make = |sql: &str| {
            let c = Connection::open_in_memory().unwrap();
            c.execute_batch(sql).unwrap();
            fts_insert(&c, 1, "edge chip at the corner").unwrap();
            c
        };
        let ours = "CREATE VIRTUAL TABLE incident_text USING fts5 (body, tokenize = 'unicode61 remove_diacritics 2')";
        let dst = make(ours);
        let other = make("CREATE VIRTUAL TABLE incident_text USING fts5 (body)");
        assert!(fts_copy_index(&other, &dst).is_err());
        let none = Connection::open_in_memory().unwrap();
        assert!(fts_copy_index(&none, &dst).is_err());
        // the same layout copies, and the copy is what is searched
        let src = make(ours);
        fts_insert(&src, 2, "thermal break from a shaded edge").unwrap();
        fts_copy_index(&src, &dst).unwrap();
        let n: i64 = dst
            .query_row("SELECT count(*) FROM incident_text_docsize", [], |r| {
                r.get(0)
            })
            .unwrap();
        assert_eq!(n, 2);
    }

    #[test]
    fn fts_query_quotes_everything() {
        assert_eq!(
            fts_query("edge \"chip\" OR 1=1; --").as_deref(),
            Some("\"edge\"* \"chip\"* \"OR\"* \"1\"* \"1\"*")
        );
        assert_eq!(fts_query("  ;; "), None);
    }
}
