//! The planner's statistics a database keeps: the row counts of ANALYZE (sqlite_stat1), never
//! its samples of key values (sqlite_stat4), with which SQLite prepares the statements that
//! read an incident again for every incident (schema/0013_plain_statistics.sql).

use std::path::Path;
use std::process::Command;

fn shardlog(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(args)
        .env("SHARDLOG_USER", "statistics-test")
        .output()
        .expect("the binary runs")
}

fn stat_tables(db: &Path) -> Vec<(String, i64)> {
    let c = rusqlite::Connection::open(db).expect("open");
    let names: Vec<String> = c
        .prepare("SELECT name FROM sqlite_schema WHERE name LIKE 'sqlite_stat%' ORDER BY name")
        .expect("prepare")
        .query_map([], |r| r.get(0))
        .expect("query")
        .collect::<Result<_, _>>()
        .expect("rows");
    names
        .into_iter()
        .map(|n| {
            let rows: i64 = c
                .query_row(&format!("SELECT count(*) FROM {n}"), [], |r| r.get(0))
                .expect("count");
            (n, rows)
        })
        .collect()
}

/// A demo database of `n` incidents in `dir` (made by the bulk path, with its ANALYZE).
fn demo(dir: &Path, n: usize) -> std::path::PathBuf {
    let db = dir.join("demo.db");
    let out = shardlog(&[
        "demo",
        "--incidents",
        &n.to_string(),
        "--out",
        db.to_str().expect("utf-8"),
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    db
}

#[test]
fn the_demo_keeps_row_counts_and_no_key_samples() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path(), 3000);
    let tables = stat_tables(&db);
    assert!(
        tables
            .iter()
            .any(|(n, rows)| n == "sqlite_stat1" && *rows > 0),
        "{tables:?}"
    );
    assert!(
        tables.iter().all(|(n, _)| n != "sqlite_stat4"),
        "{tables:?}"
    );
}

#[test]
fn a_database_with_key_samples_loses_them_on_upgrade_and_keeps_its_records() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path(), 2000);
    let listed = |db: &Path| {
        let out = shardlog(&["--db", db.to_str().expect("utf-8"), "list", "--limit", "5"]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        String::from_utf8_lossy(&out.stdout).into_owned()
    };
    let before = listed(&db);
    // as the previous schema's bulk paths left it: ANALYZE with its samples, version 10
    {
        let c = rusqlite::Connection::open(&db).expect("open");
        c.execute_batch("ANALYZE; PRAGMA user_version = 10;")
            .expect("analyze");
    }
    assert!(
        stat_tables(&db)
            .iter()
            .any(|(n, rows)| n == "sqlite_stat4" && *rows > 0),
        "ANALYZE made no samples here: this test would prove nothing"
    );
    assert_eq!(listed(&db), before);
    let tables = stat_tables(&db);
    assert!(
        tables.iter().all(|(n, _)| n != "sqlite_stat4"),
        "{tables:?}"
    );
    assert!(
        tables
            .iter()
            .any(|(n, rows)| n == "sqlite_stat1" && *rows > 0),
        "{tables:?}"
    );
    let c = rusqlite::Connection::open(&db).expect("open");
    let v: i64 = c
        .query_row("PRAGMA user_version", [], |r| r.get(0))
        .expect("version");
    assert_eq!(v, shardlog::store::SCHEMA_VERSION);
}
