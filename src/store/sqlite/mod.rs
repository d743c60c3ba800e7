//! Everything that is SQLite-only: opening files and their pragmas, the schema's migrations
//! by `PRAGMA user_version` (the tables are STRICT), FTS5 text search, the online backup.
//! The domain SQL elsewhere in the store is plain SQL, so that a PostgreSQL side can sit
//! beside this folder.

mod backup;
mod open;
mod schema;
mod search;

pub use backup::copy_database;
pub use open::{
    environment_failure, integrity_check, is_read_only, leave_wal_for_load, open_checked,
    open_for_reading, open_in_memory, rejoin_wal, set_bulk_pragmas, set_file_pragmas,
};
pub use schema::{
    columns_present, migrate, schema_differences, user_version, APPLICATION_ID,
    BENCH_PRACTICE_MIGRATION, FLEET_FACTS_MIGRATION, SCHEMA_VERSION,
};
#[cfg(test)]
pub(crate) use search::fts_shadow_tables;
pub use search::{
    fts_copy_index, fts_count, fts_create_sql, fts_delete, fts_insert, fts_out_of_step, fts_put,
    fts_query, FTS_CONDITION, FTS_FROM, FTS_IN_SET,
};
