//! Two users of one file: real `shardlog` processes in pseudo-terminals (keystrokes in, the
//! screen parsed with vt100, waiting on screen conditions with a generous timeout), against
//! each other and against `shardlog import` running in another process.
//!
//! What must hold (issue 8): nobody sees "database is locked", no write is lost, and the
//! second save of a stale record is refused with the user's typing kept in the form.

#![cfg(unix)]

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::support::pty::{Pty, BIN, TIMEOUT};

fn shardlog(db: &Path, args: &[&str]) -> std::process::Output {
    Command::new(BIN)
        .arg("--db")
        .arg(db)
        .args(args)
        .output()
        .expect("run shardlog")
}

fn ok_stdout(db: &Path, args: &[&str]) -> String {
    let out = shardlog(db, args);
    assert!(
        out.status.success(),
        "shardlog {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).expect("UTF-8 output")
}

fn demo_db(dir: &Path, n: usize) -> std::path::PathBuf {
    let db = dir.join("shared.db");
    let out = Command::new(BIN)
        .args(["demo", "--incidents", &n.to_string(), "--out"])
        .arg(&db)
        .output()
        .expect("demo");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    db
}

fn position_of(db: &Path, reference: &str) -> String {
    let v: serde_json::Value =
        serde_json::from_str(&ok_stdout(db, &["show", reference, "--json"])).expect("JSON");
    v["position"].as_str().expect("a position").to_string()
}

#[test]
fn two_interfaces_on_one_incident_the_second_save_is_refused_and_keeps_the_typing() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo_db(dir.path(), 20);
    let mut first = Pty::spawn(&db);
    let mut second = Pty::spawn(&db);
    let reference = first.open_first_incident();
    assert_eq!(second.open_first_incident(), reference, "both opened one");
    let before = position_of(&db, &reference);

    // both start editing the same section of the same revision
    first.edit_position();
    second.edit_position();
    first.send(" QFIRSTQ");
    second.send(" QSECONDQ");
    first.wait_text("QFIRSTQ");
    second.wait_text("QSECONDQ");

    // the first saves
    first.send("\u{13}");
    first.wait_text(&format!("saved intake of {reference}"));
    assert_eq!(position_of(&db, &reference), format!("{before} QFIRSTQ"));

    // the second's save is refused as stale, the typing still in its form
    second.send("\u{13}");
    second.wait_text("changed meanwhile");
    let s = second.screen();
    assert!(s.contains("Edit intake"), "still in the form:\n{s}");
    assert!(
        s.contains(&format!("{before} QSECONDQ")),
        "typing kept:\n{s}"
    );
    assert!(s.contains("input is kept"), "says the input is kept:\n{s}");
    // ... and nothing of it reached the database; the first save is intact
    assert_eq!(position_of(&db, &reference), format!("{before} QFIRSTQ"));

    // the second user can still leave without saving (asked first), and both quit cleanly
    second.send("\u{1b}");
    second.wait_text("unsaved changes");
    second.send("y");
    second.wait_for("back on the incident", |s| !s.contains("Edit intake"));
    second.send("\u{3}");
    first.send("\u{3}");
    assert_eq!(second.finish(), 0, "screen:\n{}", second.screen());
    assert_eq!(first.finish(), 0, "screen:\n{}", first.screen());

    assert_eq!(position_of(&db, &reference), format!("{before} QFIRSTQ"));
    let v = ok_stdout(&db, &["verify"]);
    assert!(v.starts_with("ok:"), "{v}");
}

/// True while another connection holds the write lock (probing with a zero busy timeout).
fn write_locked(db: &Path) -> bool {
    let c = rusqlite::Connection::open(db).expect("probe connection");
    c.busy_timeout(Duration::ZERO).expect("busy timeout");
    match c.execute_batch("BEGIN IMMEDIATE") {
        Ok(()) => {
            c.execute_batch("ROLLBACK").expect("rollback");
            false
        }
        Err(_) => true,
    }
}

#[test]
fn the_interface_saves_while_an_import_runs_in_another_process() {
    const IMPORTED: usize = 5000;
    let dir = tempfile::tempdir().unwrap();
    let db = demo_db(dir.path(), 30);
    let mut csv =
        String::from("found_on,site,asset,supplier,product,lot,mirror_mist,description,notes\n");
    for i in 0..IMPORTED {
        csv.push_str(&format!(
            "2026-03-{:02},north-depot,car {},ORVALE,SIDE-6T,L{},{}.{} mm,concurrent import row {i},n\n",
            1 + i % 28,
            200 + i % 17,
            i % 5,
            1 + i % 2,
            i % 10,
        ));
    }
    let file = dir.path().join("rows.csv");
    std::fs::write(&file, csv).unwrap();

    let mut pty = Pty::spawn(&db);
    let reference = pty.open_first_incident();
    let before = position_of(&db, &reference);
    pty.edit_position();
    pty.send(" QDURINGQ");
    pty.wait_text("QDURINGQ");

    let mut import = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("import")
        // the same rows again on purpose: not possible duplicates to stop at
        .arg("--allow-duplicates")
        .arg(&file)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("import starts");
    // wait until the import holds the write lock, then save from the interface
    let start = Instant::now();
    let mut saw_lock = false;
    while import.try_wait().expect("import status").is_none() {
        if write_locked(&db) {
            saw_lock = true;
            break;
        }
        assert!(start.elapsed() < TIMEOUT, "import neither locked nor ended");
        std::thread::sleep(Duration::from_millis(2));
    }
    assert!(
        saw_lock,
        "the import ended before it was seen writing; make the file larger"
    );
    pty.send("\u{13}");
    pty.wait_text(&format!("saved intake of {reference}"));

    let out = import.wait_with_output().expect("import runs");
    let stderr = String::from_utf8_lossy(&out.stderr);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "import failed: {stderr}");
    assert!(!stderr.to_lowercase().contains("locked"), "{stderr}");
    assert!(
        stdout.contains(&format!("imported {IMPORTED} incidents")),
        "{stdout}"
    );

    // a second edit after the import, in the same interface
    pty.edit_position();
    pty.send(" QAFTERQ");
    pty.wait_text("QAFTERQ");
    pty.send("\u{13}");
    pty.wait_for("the second save", |s| {
        s.contains("saved intake") && !s.contains("Edit intake")
    });
    pty.send("\u{3}");
    assert_eq!(pty.finish(), 0, "screen:\n{}", pty.screen());

    // both writes are there, whole
    assert_eq!(
        position_of(&db, &reference),
        format!("{before} QDURINGQ QAFTERQ")
    );
    let v: serde_json::Value =
        serde_json::from_str(&ok_stdout(&db, &["export", "--format", "json"])).expect("JSON");
    let incidents = v["incidents"].as_array().expect("incidents");
    assert_eq!(incidents.len(), 30 + IMPORTED);
    let mut seen = vec![false; IMPORTED];
    for inc in incidents {
        if let Some(rest) = inc["description"]
            .as_str()
            .and_then(|d| d.strip_prefix("concurrent import row "))
        {
            seen[rest.parse::<usize>().expect("row number")] = true;
        }
    }
    assert!(seen.iter().all(|&s| s), "every imported row is present");
    let verify = ok_stdout(&db, &["verify"]);
    assert!(verify.starts_with("ok:"), "{verify}");
}
