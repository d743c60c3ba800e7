//! The schema and the header that names it: the migrations (schema/*.sql, tables STRICT)
//! applied in order, each in its own transaction, the version kept in `PRAGMA user_version`
//! and the program in `PRAGMA application_id`.

use rusqlite::{Connection, Transaction, TransactionBehavior};

use crate::store::StoreError;

/// `PRAGMA application_id` of a shardlog database: "SHLG".
pub const APPLICATION_ID: i64 = 0x5348_4C47;

/// The migrations, in order. Migration n brings `user_version` from n-1 to n.
pub const MIGRATIONS: &[(&str, &str)] = &[
    (
        "0001_initial.sql",
        include_str!("../../../schema/0001_initial.sql"),
    ),
    (
        "0002_search.sql",
        include_str!("../../../schema/0002_search.sql"),
    ),
    (
        "0003_fleet_facts.sql",
        include_str!("../../../schema/0003_fleet_facts.sql"),
    ),
    (
        "0004_search_contentless.sql",
        include_str!("../../../schema/0004_search_contentless.sql"),
    ),
    (
        "0005_fleet_sync.sql",
        include_str!("../../../schema/0005_fleet_sync.sql"),
    ),
    (
        "0006_lookup_retired.sql",
        include_str!("../../../schema/0006_lookup_retired.sql"),
    ),
    (
        "0007_own_materials.sql",
        include_str!("../../../schema/0007_own_materials.sql"),
    ),
    (
        "0008_bench_practice.sql",
        include_str!("../../../schema/0008_bench_practice.sql"),
    ),
    (
        "0010_fleet_moves.sql",
        include_str!("../../../schema/0010_fleet_moves.sql"),
    ),
    (
        "0011_pulled_exposure.sql",
        include_str!("../../../schema/0011_pulled_exposure.sql"),
    ),
    (
        "0013_plain_statistics.sql",
        include_str!("../../../schema/0013_plain_statistics.sql"),
    ),
];

/// The migration that adds the viewing modes (lookup rows the store audits) and the
/// fragmentation minimums.
pub const BENCH_PRACTICE_MIGRATION: &str = "0008_bench_practice.sql";

/// The migration that makes `incident_facts`; the store fills it from the incidents
/// already there, in the migration's transaction.
pub const FLEET_FACTS_MIGRATION: &str = "0003_fleet_facts.sql";

/// Whether the database has the bench-practice columns (schema 0008 on). Only a database
/// held at an earlier version on purpose (the upgrade tests) lacks them: the store migrates
/// every database it opens. The statement is cached, so the question costs a lookup.
pub fn columns_present(conn: &Connection) -> bool {
    conn.prepare_cached("SELECT 1 FROM fragmentation_minimum LIMIT 0")
        .is_ok()
}

/// The schema version this build writes.
pub const SCHEMA_VERSION: i64 = MIGRATIONS.len() as i64;

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

/// Apply the migrations from the database's version up to `target`, each in its own
/// transaction together with `after(tx, name, version_before)`, the store's own steps for
/// that migration (auditing or filling what it made). The version is read again inside each
/// transaction's lock: another process may have migrated meanwhile.
pub fn migrate(
    conn: &mut Connection,
    target: i64,
    mut after: impl FnMut(&Transaction<'_>, &str, i64) -> Result<(), StoreError>,
) -> Result<(), StoreError> {
    let target = target.min(SCHEMA_VERSION);
    loop {
        let tx = conn.transaction_with_behavior(TransactionBehavior::Immediate)?;
        let version = user_version(&tx)?;
        if version >= target {
            tx.commit()?;
            return Ok(());
        }
        let (name, sql) = MIGRATIONS[version as usize];
        tx.execute_batch(sql)
            .map_err(|e| StoreError::Database(format!("migration {name}: {e}")))?;
        if version == 0 {
            set_application_id(&tx)?;
        }
        after(&tx, name, version)?;
        set_user_version(&tx, version + 1)?;
        tx.commit()?;
    }
}

/// One schema object as `sqlite_master` lists it: type and name, and for triggers, views
/// and indexes their SQL with runs of white space made one space.
type Objects = std::collections::BTreeMap<(String, String), Option<String>>;

fn objects(conn: &Connection) -> Result<Objects, StoreError> {
    let mut stmt = conn.prepare(
        "SELECT type, name, sql FROM main.sqlite_master WHERE name NOT LIKE 'sqlite\\_%' ESCAPE '\\'",
    )?;
    let rows = stmt.query_map([], |r| {
        Ok((
            r.get::<_, String>(0)?,
            r.get::<_, String>(1)?,
            r.get::<_, Option<String>>(2)?,
        ))
    })?;
    let mut out = Objects::new();
    for row in rows {
        let (kind, name, sql) = row?;
        let body = matches!(kind.as_str(), "trigger" | "view" | "index")
            .then(|| sql.map(|s| s.split_whitespace().collect::<Vec<_>>().join(" ")))
            .flatten();
        out.insert((kind, name), body);
    }
    Ok(out)
}

/// The objects migrations 1 to `version` make, built in a database in memory.
fn expected_objects(version: i64) -> Result<Objects, StoreError> {
    let conn = Connection::open_in_memory()?;
    for (_, sql) in MIGRATIONS
        .iter()
        .take(version.clamp(0, SCHEMA_VERSION) as usize)
    {
        conn.execute_batch(sql)?;
    }
    objects(&conn)
}

/// The file's `user_version` and every way its schema differs from what the migrations up
/// to that version make: an object added (a trigger, a view, an index, a table), one
/// missing, one whose SQL was changed. A lowered or raised `user_version` shows as objects
/// missing or added. Both are read in one transaction, so that a migration committed by
/// another process meanwhile is seen whole or not at all.
pub fn schema_differences(conn: &Connection) -> Result<(i64, Vec<String>), StoreError> {
    conn.execute_batch("BEGIN")?;
    let read = user_version(conn).and_then(|v| Ok((v, objects(conn)?)));
    let end = conn.execute_batch(if read.is_ok() { "COMMIT" } else { "ROLLBACK" });
    let (version, have) = read?;
    end?;
    let want = expected_objects(version)?;
    let mut out = Vec::new();
    for ((kind, name), sql) in &have {
        match want.get(&(kind.clone(), name.clone())) {
            None => out.push(format!("{kind} {name} that the migrations did not make")),
            Some(w) if w != sql => out.push(format!(
                "{kind} {name} changed from what the migrations made"
            )),
            Some(_) => {}
        }
    }
    for (kind, name) in want.keys() {
        if !have.contains_key(&(kind.clone(), name.clone())) {
            out.push(format!("{kind} {name} missing"));
        }
    }
    Ok((version, out))
}
