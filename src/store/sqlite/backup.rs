//! SQLite's online backup: a consistent copy of an open database, even while it is written.

use std::path::Path;
use std::time::Duration;

use rusqlite::backup::Backup;
use rusqlite::Connection;

use super::open::open_checked;
use crate::store::StoreError;

/// Copy the database of `conn` into a new file at `dest`, left in one file (no WAL beside
/// it). The caller flushes it to the disk.
pub fn copy_database(conn: &Connection, dest: &Path) -> Result<(), StoreError> {
    let (mut target, _) = open_checked(dest, true)?;
    let backup = Backup::new(conn, &mut target)?;
    backup.run_to_completion(256, Duration::from_millis(0), None)?;
    drop(backup);
    let _: String = target.query_row("PRAGMA journal_mode = DELETE", [], |r| r.get(0))?;
    Ok(())
}
