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
pub fn open_checked(path: &Path, create: bool) -> Result<(Connection, i64), StoreError> {
    let shown = path.display().to_string();
    let exists = path.exists();
    if !exists && !create {
        return Err(StoreError::Missing { path: shown });
    }
    let mut flags = OpenFlags::SQLITE_OPEN_READ_WRITE
        | OpenFlags::SQLITE_OPEN_URI
        | OpenFlags::SQLITE_OPEN_NO_MUTEX;
    if create {
        flags |= OpenFlags::SQLITE_OPEN_CREATE;
    }
    let conn = Connection::open_with_flags(path, flags).map_err(|e| StoreError::Open {
        path: shown.clone(),
        message: e.to_string(),
    })?;
    conn.busy_timeout(BUSY_TIMEOUT)?;
    let not_ours = |why: &str| StoreError::NotOurs {
        path: shown.clone(),
        why: why.to_string(),
    };
    let app_id: i64 = conn
        .query_row("PRAGMA application_id", [], |r| r.get(0))
        .map_err(|_| not_ours("it is not an SQLite database"))?;
    let version: i64 = conn
        .query_row("PRAGMA user_version", [], |r| r.get(0))
        .map_err(|_| not_ours("it is not an SQLite database"))?;
    if app_id != APPLICATION_ID {
        let tables: i64 = conn
            .query_row("SELECT count(*) FROM sqlite_master", [], |r| r.get(0))
            .map_err(|_| not_ours("it is not an SQLite database"))?;
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

/// Pragmas for a file database: WAL, synchronous=FULL (each committed audit row survives
/// power loss), foreign keys on.
pub fn set_file_pragmas(conn: &Connection) -> Result<(), StoreError> {
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
         PRAGMA cache_size = -262144; PRAGMA temp_store = MEMORY;",
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

/// FROM clause for a text match: the text index drives (CROSS JOIN fixes the join order in
/// SQLite), then the incidents by row number.
pub const FTS_FROM: &str = "incident_text CROSS JOIN incidents i ON i.seq = incident_text.rowid";

/// SQL condition for a text match with [`FTS_FROM`]; bind [`fts_query`] of the user text.
pub const FTS_CONDITION: &str = "incident_text MATCH ?";

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
    fn fts_query_quotes_everything() {
        assert_eq!(
            fts_query("edge \"chip\" OR 1=1; --").as_deref(),
            Some("\"edge\"* \"chip\"* \"OR\"* \"1\"* \"1\"*")
        );
        assert_eq!(fts_query("  ;; "), None);
    }
}
