//! A database the user cannot write (a read-only file in a folder they cannot write): every
//! write is refused with a clear message, the data stays intact, and nothing panics.
//!
//! Permission bits do not stop root, so when the suite runs as root the commands run as the
//! unprivileged user 65534 (`nobody`); otherwise as the current user.
#![cfg(unix)]

use std::os::unix::fs::{MetadataExt, PermissionsExt};
use std::os::unix::process::CommandExt;
use std::path::Path;
use std::process::{Command, Output};

use sha2::{Digest, Sha256};

fn hash(p: &Path) -> String {
    format!("{:x}", Sha256::digest(std::fs::read(p).expect("readable")))
}

fn shardlog(db: &Path, args: &[&str], as_root: bool) -> Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    c.arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_ACTOR", "readonly-test");
    if as_root {
        c.uid(65534).gid(65534).env("HOME", "/nonexistent");
    }
    c.output().expect("the binary runs")
}

#[test]
fn read_only_database_refuses_writes_and_keeps_its_data() {
    let dir = tempfile::tempdir().expect("temp dir");
    let probe = dir.path().join("probe");
    std::fs::write(&probe, b"").expect("write");
    let as_root = std::fs::metadata(&probe).expect("meta").uid() == 0;

    let db = dir.path().join("ro.db");
    let good = dir.path().join("good.csv");
    std::fs::write(
        &good,
        "found_on,supplier,mirror_mist\n2026-03-14,ORVALE,1.1 mm\n",
    )
    .expect("csv");
    let o = shardlog(&db, &["init"], false);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = shardlog(&db, &["import", good.to_str().expect("utf-8 path")], false);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let before = hash(&db);

    // the file read-only, the folder readable but not writable by the user who runs
    std::fs::set_permissions(&db, std::fs::Permissions::from_mode(0o444)).expect("chmod");
    std::fs::set_permissions(&good, std::fs::Permissions::from_mode(0o444)).expect("chmod");
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o555)).expect("chmod");

    let o = shardlog(
        &db,
        &["import", good.to_str().expect("utf-8 path")],
        as_root,
    );
    let err = String::from_utf8_lossy(&o.stderr).to_string();
    // reading still works, or fails with a clear message (WAL needs a writable folder)
    let l = shardlog(&db, &["list", "--json"], as_root);
    let lerr = String::from_utf8_lossy(&l.stderr).to_string();
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).expect("chmod");
    match l.status.code() {
        Some(0) => assert!(String::from_utf8_lossy(&l.stdout).contains("2026-03-14")),
        Some(1) => assert!(
            lerr.starts_with("shardlog: ") && !lerr.contains("panicked"),
            "{lerr}"
        ),
        other => panic!("list on a read-only database: exit {other:?}: {lerr}"),
    }
    eprintln!(
        "list on a read-only database: exit {:?} {}",
        l.status.code(),
        lerr.trim()
    );
    assert_eq!(
        o.status.code(),
        Some(1),
        "import into a read-only database: {err}"
    );
    assert!(err.starts_with("shardlog: "), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(err.lines().count() <= 3, "a short message: {err}");
    assert_eq!(hash(&db), before, "the read-only database changed");

    // the data is intact and readable once the file is writable again
    std::fs::set_permissions(&db, std::fs::Permissions::from_mode(0o644)).expect("chmod");
    let o = shardlog(&db, &["verify"], false);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = shardlog(&db, &["list", "--json"], false);
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).expect("list JSON");
    assert_eq!(rows.as_array().map(|a| a.len()), Some(1));
}
