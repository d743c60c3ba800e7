//! Bugs found by the proof work (issue 8) in code other helpers own. Each test fails until
//! its bug is fixed; the lead routes them. Where the bug is, and what happens, is beside each.

use std::path::Path;
use std::process::Command;

fn shardlog(db: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_ACTOR", "found-bugs")
        .output()
        .expect("the binary runs")
}

/// src/cli/records.rs, `export` (line ~220: `Some(path) => write_whole(&path, &buf)`): the
/// output path is not compared with the database, so
/// `shardlog --db incidents.db export --format json -o incidents.db` replaces the database
/// with its own export and exits 0; every later command says "not a shardlog database".
/// Expected: refused (exit 1, "-o is the database itself"), the database unchanged.
#[test]
fn export_onto_its_own_database_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("incidents.db");
    let csv = dir.path().join("one.csv");
    std::fs::write(
        &csv,
        "found_on,supplier,mirror_mist\n2026-03-14,ORVALE,1.1 mm\n",
    )
    .expect("csv");
    assert!(shardlog(&db, &["init"]).status.success());
    assert!(shardlog(&db, &["import", csv.to_str().expect("utf-8")])
        .status
        .success());
    let before = std::fs::read(&db).expect("db");

    let o = shardlog(
        &db,
        &[
            "export",
            "--format",
            "json",
            "-o",
            db.to_str().expect("utf-8"),
        ],
    );
    let after = std::fs::read(&db).expect("db");
    let verify = shardlog(&db, &["verify"]);
    assert!(
        verify.status.success(),
        "the database was destroyed by its own export (export exit {:?}): {}",
        o.status.code(),
        String::from_utf8_lossy(&verify.stderr)
    );
    assert_eq!(
        o.status.code(),
        Some(1),
        "export onto the database must be refused"
    );
    assert_eq!(before, after, "database bytes changed");
}
