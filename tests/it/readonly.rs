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
        .env("SHARDLOG_USER", "readonly-test");
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
    // reading still works: the database is opened read-only when SQLite cannot make its
    // WAL index beside it
    assert_eq!(
        l.status.code(),
        Some(0),
        "list on a read-only database: {lerr}"
    );
    assert!(String::from_utf8_lossy(&l.stdout).contains("2026-03-14"));
    assert_eq!(
        o.status.code(),
        Some(1),
        "import into a read-only database: {err}"
    );
    assert!(err.starts_with("shardlog: "), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    assert!(err.contains("read-only"), "says why: {err}");
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

/// The interface on a database it cannot write: it opens, shows the incidents, says
/// "read-only" in the title, and a save is refused with a clear message and the typing kept.
#[test]
fn the_interface_reads_a_read_only_database_and_refuses_saves() {
    use std::io::Write;
    use std::time::{Duration, Instant};

    let dir = tempfile::tempdir().expect("temp dir");
    let probe = dir.path().join("probe");
    std::fs::write(&probe, b"").expect("write");
    let as_root = std::fs::metadata(&probe).expect("meta").uid() == 0;
    let db = dir.path().join("ro-ui.db");
    let o = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(["demo", "--incidents", "12", "--out"])
        .arg(&db)
        .output()
        .expect("demo");
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let before = hash(&db);
    std::fs::set_permissions(&db, std::fs::Permissions::from_mode(0o444)).expect("chmod");
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o555)).expect("chmod");

    let mut cmd = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    cmd.arg("--db")
        .arg(&db)
        .env("TERM", "xterm-256color")
        .env("SHARDLOG_USER", "Ines Varga-Holm");
    if as_root {
        cmd.uid(65534).gid(65534).env("HOME", "/nonexistent");
    }
    let mut session = expectrl::Session::spawn(cmd).expect("spawn in a pty");
    session
        .get_process_mut()
        .set_window_size(100, 30)
        .expect("size");
    let mut parser = vt100::Parser::new(
        std::num::NonZeroU16::new(30).unwrap(),
        std::num::NonZeroU16::new(100).unwrap(),
        0,
    );
    let mut wait = |session: &mut expectrl::session::OsSession, what: &str| -> String {
        let start = Instant::now();
        loop {
            let mut buf = [0u8; 8192];
            while let Ok(n @ 1..) = session.try_read(&mut buf) {
                parser.process(&buf[..n]);
            }
            let s = parser.screen().contents();
            if s.contains(what) {
                return s;
            }
            assert!(
                start.elapsed() < Duration::from_secs(30),
                "timed out waiting for {what}:\n{s}"
            );
            std::thread::sleep(Duration::from_millis(20));
        }
    };
    let send = |session: &mut expectrl::session::OsSession, b: &str| {
        session.write_all(b.as_bytes()).expect("write");
        session.flush().expect("flush");
    };
    let s = wait(&mut session, "12 incidents match");
    assert!(s.contains("(read-only)"), "the title says read-only:\n{s}");
    send(&mut session, "\r");
    wait(&mut session, " · revision ");
    send(&mut session, "e");
    wait(&mut session, "Edit intake");
    send(&mut session, "\t QROQ");
    wait(&mut session, "QROQ");
    send(&mut session, "\u{13}");
    let s = wait(&mut session, "not saved");
    assert!(s.contains("read-only"), "{s}");
    assert!(s.contains("QROQ"), "typing kept:\n{s}");
    assert!(!s.contains("panicked"), "{s}");
    send(&mut session, "\u{1b}");
    wait(&mut session, "unsaved changes");
    send(&mut session, "y\u{3}");
    let start = Instant::now();
    loop {
        let mut buf = [0u8; 8192];
        let _ = session.try_read(&mut buf);
        match session.get_process().status() {
            Ok(expectrl::process::unix::WaitStatus::Exited(_, code)) => {
                assert_eq!(code, 0);
                break;
            }
            Ok(expectrl::process::unix::WaitStatus::StillAlive) => {}
            other => panic!("{other:?}"),
        }
        assert!(start.elapsed() < Duration::from_secs(30), "did not quit");
        std::thread::sleep(Duration::from_millis(20));
    }
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).expect("chmod");
    assert_eq!(hash(&db), before, "the read-only database changed");
}
