//! The fleet's schema: numbered migrations of its own (schema/fleet/*.sql), each applied in a
//! transaction under an advisory lock (two `fleet init` at once apply each migration once),
//! recorded in `fleet_schema`; then the two roles and what each may do.

use super::{Fleet, FleetError};

/// The fleet migrations, in order, each with its number (the start of its file name). A
/// migration is applied once, when `fleet_schema` lacks its number; the version of a fleet is
/// the highest number applied.
const MIGRATIONS: &[(i64, &str, &str)] = &[
    (
        1,
        "0001_fleet.sql",
        include_str!("../../../schema/fleet/0001_fleet.sql"),
    ),
    (
        2,
        "0002_push.sql",
        include_str!("../../../schema/fleet/0002_push.sql"),
    ),
    (
        3,
        "0003_push_speed.sql",
        include_str!("../../../schema/fleet/0003_push_speed.sql"),
    ),
    (
        4,
        "0004_moves.sql",
        include_str!("../../../schema/fleet/0004_moves.sql"),
    ),
    (
        5,
        "0005_read.sql",
        include_str!("../../../schema/fleet/0005_read.sql"),
    ),
    (
        6,
        "0006_push_parallel.sql",
        include_str!("../../../schema/fleet/0006_push_parallel.sql"),
    ),
    (
        7,
        "0007_counts.sql",
        include_str!("../../../schema/fleet/0007_counts.sql"),
    ),
    (
        9,
        "0009_report_reads.sql",
        include_str!("../../../schema/fleet/0009_report_reads.sql"),
    ),
    (
        10,
        "0010_push_facts.sql",
        include_str!("../../../schema/fleet/0010_push_facts.sql"),
    ),
];

/// The fleet schema version this build writes: the number of its last migration.
pub const FLEET_SCHEMA_VERSION: i64 = MIGRATIONS[MIGRATIONS.len() - 1].0;

/// What `fleet init` did.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FleetInit {
    pub version_before: i64,
    pub version: i64,
    /// The role benches push with: may add through fleet_push(), never update or delete.
    pub bench_role: String,
    /// The role fleet users read with.
    pub reader_role: String,
}

/// A bench's own login, as `fleet enrol` made it.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FleetLogin {
    pub bench: String,
    pub login: String,
    pub password: String,
}

/// Roles and grants, by the database's name (so that two fleets on one server keep apart).
/// Lookup of the names in SQL: nothing of the user's text is put into a statement here.
const ROLES: &str = r#"
DO $roles$
DECLARE
    b text := current_database() || '_bench';
    r text := current_database() || '_reader';
BEGIN
    -- the benches' group: each bench logs in with its own member of it (fleet_enrol)
    BEGIN
        EXECUTE format('CREATE ROLE %I NOLOGIN', b);
    EXCEPTION WHEN duplicate_object OR unique_violation THEN NULL;
    END;
    EXECUTE format('ALTER ROLE %I NOLOGIN', b);
    BEGIN
        EXECUTE format('CREATE ROLE %I LOGIN', r);
    EXCEPTION WHEN duplicate_object OR unique_violation THEN NULL;
    END;
    EXECUTE format('REVOKE ALL ON ALL TABLES IN SCHEMA public FROM %I, %I', b, r);
    EXECUTE format('GRANT CONNECT ON DATABASE %I TO %I, %I', current_database(), b, r);
    EXECUTE format('GRANT USAGE ON SCHEMA public TO %I, %I', b, r);
    EXECUTE format('GRANT SELECT ON fleet_schema, fleet_benches, bench_chain, fleet_receipts,
        fleet_records, fleet_refusals, fleet_conflicts TO %I, %I', b, r);
    -- a bench pulls the files of the incidents sent to it
    EXECUTE format('GRANT SELECT ON fleet_files TO %I, %I', b, r);
    EXECUTE format('GRANT INSERT ON push_entries, push_records, push_files TO %I', b);
    REVOKE EXECUTE ON ALL FUNCTIONS IN SCHEMA public FROM PUBLIC;
    EXECUTE format('GRANT EXECUTE ON FUNCTION fleet_push(text) TO %I', b);
    EXECUTE format('GRANT EXECUTE ON FUNCTION fleet_row_text(bigint, text, text, text, text,
        text, text, text), fleet_link_hash(text, text), fleet_receipt_text(bigint, text, text,
        bigint, bigint, text, bigint), fleet_reference(text, text) TO %I, %I', b, r);
END
$roles$;
"#;

/// What both roles may read beside the history: the facts, words and order kept on ingest
/// (schema/fleet/0005_read.sql) and the incidents counted by month (0007_counts.sql).
const READ_GRANTS: &str = r#"
DO $grants$
DECLARE
    b text := current_database() || '_bench';
    r text := current_database() || '_reader';
BEGIN
    EXECUTE format('GRANT SELECT ON fleet_facts, fleet_search, fleet_incident_order, fleet_facts_source,
        fleet_fact_months TO %I, %I',
        b, r);
    EXECUTE format('GRANT EXECUTE ON FUNCTION fleet_f64(text) TO %I, %I', b, r);
END
$grants$;
"#;

/// The version in `fleet_schema` (0 when the table is not there: a statement naming a table
/// that does not exist fails as a whole, so the two are asked apart).
fn version_in(c: &mut impl postgres::GenericClient) -> Result<i64, FleetError> {
    let there: bool = c
        .query_one("SELECT to_regclass('public.fleet_schema') IS NOT NULL", &[])?
        .get(0);
    if !there {
        return Ok(0);
    }
    Ok(c.query_one(
        "SELECT coalesce(max(version), 0)::bigint FROM fleet_schema",
        &[],
    )?
    .get(0))
}

/// Whether migration `version` is recorded in `fleet_schema`.
fn applied(c: &mut impl postgres::GenericClient, version: i64) -> Result<bool, FleetError> {
    if version_in(c)? == 0 {
        return Ok(false);
    }
    Ok(c.query_one(
        "SELECT EXISTS (SELECT 1 FROM fleet_schema WHERE version = $1)",
        &[&(version as i32)],
    )?
    .get(0))
}

impl Fleet {
    /// The fleet schema version of this database (0: none yet).
    pub fn schema_version(&mut self) -> Result<i64, FleetError> {
        version_in(&mut self.client)
    }

    /// Create or upgrade the fleet schema and its roles. Running it again changes nothing.
    pub fn init(&mut self) -> Result<FleetInit, FleetError> {
        let before = self.schema_version()?;
        if before > FLEET_SCHEMA_VERSION {
            return Err(FleetError::Usage(format!(
                "the fleet database has schema version {before}, newer than this shardlog understands ({FLEET_SCHEMA_VERSION}); use a newer shardlog"
            )));
        }
        for &(version, name, sql) in MIGRATIONS {
            let mut tx = self.client.transaction()?;
            tx.execute("SELECT pg_advisory_xact_lock(1397247048)", &[])?;
            if applied(&mut tx, version)? {
                tx.commit()?;
                continue;
            }
            tx.batch_execute(sql).map_err(|e| {
                FleetError::Database(format!(
                    "fleet migration {name}: {}",
                    super::connect::classify(&e)
                ))
            })?;
            tx.execute(
                "INSERT INTO fleet_schema (version, name) VALUES ($1, $2)",
                &[&(version as i32), &name],
            )?;
            tx.commit()?;
        }
        let mut tx = self.client.transaction()?;
        tx.execute("SELECT pg_advisory_xact_lock(1397247048)", &[])?;
        tx.batch_execute(ROLES)?;
        tx.batch_execute(READ_GRANTS)?;
        let row = tx.query_one(
            "SELECT current_database() || '_bench', current_database() || '_reader'",
            &[],
        )?;
        tx.commit()?;
        Ok(FleetInit {
            version_before: before,
            version: FLEET_SCHEMA_VERSION,
            bench_role: row.get(0),
            reader_role: row.get(1),
        })
    }

    /// Give bench `code` its own login (a member of the bench role) with a new random
    /// password, or a new password to the login it has. Returns (login, password); the
    /// password is not kept anywhere else.
    pub fn enrol(&mut self, code: &str) -> Result<FleetLogin, FleetError> {
        self.check_schema()?;
        let code = crate::store::check_bench_code(code).map_err(FleetError::Usage)?;
        let mut secret = [0u8; 18];
        getrandom::fill(&mut secret)
            .map_err(|e| FleetError::Database(format!("the system's random generator: {e}")))?;
        let password = crate::store::canon::hex(&secret);
        let role: String = self
            .client
            .query_one("SELECT fleet_enrol($1, $2)", &[&code, &password])?
            .get(0);
        Ok(FleetLogin {
            bench: code,
            login: role,
            password,
        })
    }

    /// The migrations of this build the fleet has not applied, by file name, in order.
    fn missing_migrations(&mut self) -> Result<Vec<&'static str>, FleetError> {
        if version_in(&mut self.client)? == 0 {
            return Ok(MIGRATIONS.iter().map(|m| m.1).collect());
        }
        let applied: Vec<i64> = self
            .client
            .query("SELECT version::bigint FROM fleet_schema", &[])?
            .iter()
            .map(|r| r.get(0))
            .collect();
        Ok(MIGRATIONS
            .iter()
            .filter(|m| !applied.contains(&m.0))
            .map(|m| m.1)
            .collect())
    }

    /// Refuse to work on a database that `fleet init` has not prepared (or a newer one), or
    /// one that lacks a migration of this build (named, with what to run).
    pub(crate) fn check_schema(&mut self) -> Result<(), FleetError> {
        let v = self.schema_version()?;
        if v == 0 {
            return Err(FleetError::Usage(format!(
                "{} is not a shardlog fleet database yet; run `shardlog fleet init --url URL` as its owner first",
                self.shown
            )));
        }
        if v > FLEET_SCHEMA_VERSION {
            return Err(FleetError::Usage(format!(
                "the fleet database has schema version {v}, newer than this shardlog understands ({FLEET_SCHEMA_VERSION}); use a newer shardlog"
            )));
        }
        let missing = self.missing_migrations()?;
        if missing.is_empty() {
            return Ok(());
        }
        Err(FleetError::Usage(missing_message(v, &missing)))
    }
}

/// What a fleet at version `v` that lacks the `missing` migrations is told: which ones, and
/// the command that applies them (`fleet init` applies every migration a fleet lacks, an
/// earlier one too).
fn missing_message(v: i64, missing: &[&str]) -> String {
    let (them, it) = if missing.len() == 1 {
        ("migration", "it")
    } else {
        ("migrations", "them")
    };
    let names = missing.join(", ");
    let newer_only = missing
        .iter()
        .all(|name| MIGRATIONS.iter().any(|m| m.1 == *name && m.0 > v));
    if newer_only {
        format!(
            "the fleet database has schema version {v} and lacks fleet {them} {names}; its owner must run `shardlog fleet init --url URL` to upgrade it to {FLEET_SCHEMA_VERSION}"
        )
    } else {
        format!(
            "the fleet database has schema version {v} but lacks the earlier fleet {them} {names}; its owner must run `shardlog fleet init --url URL` to apply {it}"
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_missing_migration_is_named_with_the_command_that_applies_it() {
        let m = missing_message(9, &["0006_push_parallel.sql"]);
        assert!(
            m.contains("version 9 but lacks the earlier fleet migration 0006_push_parallel.sql"),
            "{m}"
        );
        assert!(
            m.contains("`shardlog fleet init --url URL` to apply it"),
            "{m}"
        );
        let m = missing_message(5, &["0006_push_parallel.sql", "0007_counts.sql"]);
        assert!(
            m.contains(
                "version 5 and lacks fleet migrations 0006_push_parallel.sql, 0007_counts.sql"
            ),
            "{m}"
        );
        assert!(
            m.contains(&format!("to upgrade it to {FLEET_SCHEMA_VERSION}")),
            "{m}"
        );
    }
}
