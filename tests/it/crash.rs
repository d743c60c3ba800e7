//! Crash safety: a writer in a child process is killed with SIGKILL at varied points; after
//! every kill the database must pass `PRAGMA integrity_check` and `foreign_key_check`, the
//! store's own `verify` (the audit chain against the records), every write the child reported
//! committed must be there, and nothing half-written may be.
//!
//! The child is this test binary run again with `CRASH_CHILD` set (the `crash_child` test
//! below does the writing then); it prints `committed ...` after each `commit` returns.
//! `SHARDLOG_CRASH_KILLS` sets the number of kills per writer (default 25 here, so the suite
//! stays fast; scripts/crash runs several hundred).
#![cfg(unix)]

use std::collections::HashMap;
use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use chrono::{NaiveDate, TimeZone, Utc};
use rusqlite::Connection;
use shardlog::store::{Filter, Incident, Stamp, Store};

const CHILD_ENV: &str = "CRASH_CHILD";

fn stamp(i: i64) -> Stamp {
    Stamp::new(
        "crash-harness",
        Utc.timestamp_millis_opt(1_780_000_000_000 + i * 1000)
            .single()
            .expect("a valid time"),
    )
}

fn draft(i: i64) -> Incident {
    let found = NaiveDate::from_ymd_opt(2026, 3, 1 + (i % 28) as u32).expect("a date");
    let mut inc = Incident::draft(found);
    inc.asset = Some(format!("car {}", 200 + i % 17));
    inc.site = Some("north-depot".into());
    inc.position = format!("bay {}", i % 9);
    inc.description = format!("crash-test incident {i}");
    inc.notes = "x".repeat(200 + (i as usize * 37) % 3000);
    inc
}

fn kills() -> usize {
    std::env::var("SHARDLOG_CRASH_KILLS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(25)
}

/// The writer, run only in the child: creates and edits interleaved, one transaction each.
#[test]
fn crash_child() {
    if std::env::var(CHILD_ENV).is_err() {
        return;
    }
    let db = std::env::var("CRASH_DB").expect("CRASH_DB");
    let mut store = Store::open_existing(Path::new(&db)).expect("open");
    let out = std::io::stdout();
    let mut ids: Vec<String> = store
        .matching_ids(&Filter::default())
        .expect("existing incidents");
    let mut i: i64 = 1000;
    loop {
        i += 1;
        if i % 3 == 0 && !ids.is_empty() {
            let id = ids[(i as usize * 7) % ids.len()].clone();
            let marker = format!("edited {i}");
            let m = marker.clone();
            let saved = store
                .modify_incident(&id, None, &stamp(i), move |inc| {
                    inc.notes = m;
                    Ok(())
                })
                .expect("edit");
            let mut lock = out.lock();
            writeln!(
                lock,
                "committed edit {} {} {marker}",
                saved.id, saved.revision
            )
            .expect("stdout");
            lock.flush().expect("flush");
        } else {
            let saved = store.create_incident(&draft(i), &stamp(i)).expect("create");
            ids.push(saved.id.clone());
            let mut lock = out.lock();
            writeln!(lock, "committed create {}", saved.id).expect("stdout");
            lock.flush().expect("flush");
        }
    }
}

/// What the child said it committed.
#[derive(Default)]
struct Committed {
    created: Vec<String>,
    /// id -> (revision, notes) of the last edit reported
    edited: HashMap<String, (i64, String)>,
}

fn parse_committed(lines: &[String]) -> Committed {
    let mut c = Committed::default();
    for l in lines {
        let mut w = l.splitn(5, ' ');
        match (w.next(), w.next()) {
            (Some("committed"), Some("create")) => c.created.push(w.next().unwrap_or("").into()),
            (Some("committed"), Some("batch")) => c
                .created
                .extend(w.next().unwrap_or("").split(',').map(String::from)),
            (Some("committed"), Some("edit")) => {
                let id = w.next().unwrap_or("").to_string();
                let rev: i64 = w.next().and_then(|r| r.parse().ok()).unwrap_or(-1);
                let notes = w.next().unwrap_or("").to_string();
                c.edited.insert(id, (rev, notes));
            }
            _ => {}
        }
    }
    c
}

/// Every check after a kill; returns the number of incidents found.
fn check_after_kill(db: &Path, before: u64, c: &Committed, round: usize, batch: u64) -> u64 {
    {
        let conn = Connection::open(db).expect("sqlite opens the file");
        let integrity: String = conn
            .query_row("PRAGMA integrity_check", [], |r| r.get(0))
            .expect("integrity_check runs");
        assert_eq!(integrity, "ok", "round {round}: integrity_check");
        let mut fk = conn.prepare("PRAGMA foreign_key_check").expect("prepare");
        let violations = fk.query_map([], |_| Ok(())).expect("fk").count();
        assert_eq!(violations, 0, "round {round}: foreign_key_check");
    }
    let store = Store::open_existing(db).expect("the store reopens the file");
    let report = store.verify().expect("verify runs");
    assert!(
        report.ok(),
        "round {round}: verify: {:?}",
        report.first_problem
    );
    for id in &c.created {
        let inc = store
            .get(id)
            .unwrap_or_else(|e| panic!("round {round}: committed {id} missing: {e}"));
        assert!(
            inc.description.starts_with("crash-test incident"),
            "round {round}"
        );
    }
    for (id, (rev, notes)) in &c.edited {
        let inc = store.get(id).expect("edited incident present");
        assert!(
            inc.revision >= *rev,
            "round {round}: {id} at revision {} but {rev} was committed",
            inc.revision
        );
        if inc.revision == *rev {
            assert_eq!(
                &inc.notes, notes,
                "round {round}: {id} content of revision {rev}"
            );
        }
    }
    let n = store.incident_count().expect("count");
    // committed ones, plus at most one transaction that committed before the child could say
    // so (a whole batch); never a part of one
    assert!(
        n >= before + c.created.len() as u64,
        "round {round}: {n} incidents"
    );
    let extra = n - before - c.created.len() as u64;
    assert!(
        extra == 0 || extra == batch,
        "round {round}: {extra} unreported"
    );
    n
}

/// Kill `rounds` children of the given mode; returns (kills, committed writes seen).
fn kill_loop(mode: &str, rounds: usize) -> (usize, usize) {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("crash.db");
    {
        let mut s = Store::open(&db).expect("create");
        for i in 0..5 {
            s.create_incident(&draft(i), &stamp(i)).expect("seed");
        }
    }
    let exe = std::env::current_exe().expect("test binary");
    let mut total_writes = 0;
    for round in 0..rounds {
        let before = Store::open_existing(&db)
            .expect("open")
            .incident_count()
            .expect("count");
        let mut child = Command::new(&exe)
            .args([
                "--exact",
                "crash::crash_child",
                "--nocapture",
                "--test-threads=1",
            ])
            .env(CHILD_ENV, mode)
            .env("CRASH_DB", &db)
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("child starts");
        let stdout = child.stdout.take().expect("piped");
        let (first_tx, first_rx) = std::sync::mpsc::channel::<()>();
        let reader = std::thread::spawn(move || {
            let mut lines = Vec::new();
            for l in BufReader::new(stdout).lines().map_while(Result::ok) {
                // libtest may print "test crash_child ... " on the same line first
                if let Some(at) = l.find("committed ") {
                    if lines.is_empty() {
                        let _ = first_tx.send(());
                    }
                    lines.push(l[at..].to_string());
                }
            }
            lines
        });
        // varied points: odd rounds from the start (open, schema check, first write), even
        // rounds from the first reported commit (in the middle of the stream of writes)
        if round % 2 == 0 {
            let _ = first_rx.recv_timeout(Duration::from_secs(10));
        }
        let delay_ms = [0u64, 3, 7, 15, 25, 40, 60, 90, 130][round % 9] + (round as u64 * 13) % 11;
        let t0 = Instant::now();
        while t0.elapsed() < Duration::from_millis(delay_ms) {
            std::thread::sleep(Duration::from_millis(1));
        }
        child.kill().expect("SIGKILL");
        let status = child.wait().expect("wait");
        assert!(!status.success(), "round {round}: the child was not killed");
        let lines = reader.join().expect("reader");
        let c = parse_committed(&lines);
        total_writes += c.created.len() + c.edited.len();
        check_after_kill(&db, before, &c, round, 1);
    }
    (rounds, total_writes)
}

#[test]
fn sigkill_during_single_edits_leaves_a_sound_database() {
    if std::env::var(CHILD_ENV).is_ok() {
        return;
    }
    let (k, w) = kill_loop("edits", kills());
    eprintln!("edits: {k} kills, {w} committed writes checked");
    assert!(
        w > 0,
        "the children never committed anything: the harness tests nothing"
    );
}

/// `shardlog import` (the real binary) killed at points spread over the time one import
/// takes: the import is all or nothing, and a reported import is all there.
#[test]
fn sigkill_during_import_leaves_all_or_nothing() {
    if std::env::var(CHILD_ENV).is_ok() {
        return;
    }
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("import.db");
    let bin = env!("CARGO_BIN_EXE_shardlog");
    let ok = Command::new(bin)
        .arg("--db")
        .arg(&db)
        .arg("init")
        .output()
        .expect("init");
    assert!(
        ok.status.success(),
        "{}",
        String::from_utf8_lossy(&ok.stderr)
    );
    const ROWS: u64 = 120;
    let mut csv =
        String::from("found_on,site,asset,supplier,product,lot,mirror_mist,description,notes\n");
    for i in 0..ROWS {
        csv.push_str(&format!(
            "2026-03-{:02},north-depot,car {},ORVALE,SIDE-6T,L{},{}.{} mm,crash-test import row {i},{}\n",
            1 + i % 28,
            200 + i % 17,
            i % 5,
            1 + i % 2,
            i % 10,
            "n".repeat((i as usize * 31) % 500)
        ));
    }
    let file = dir.path().join("rows.csv");
    std::fs::write(&file, csv).expect("csv");
    let import = || {
        Command::new(bin)
            .arg("--db")
            .arg(&db)
            .arg("import")
            // the same rows again on purpose: not possible duplicates to stop at
            .arg("--allow-duplicates")
            .arg(&file)
            .env("SHARDLOG_USER", "crash-harness")
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("import starts")
    };
    // one full import to know how long it takes
    let t0 = Instant::now();
    let full = import().wait_with_output().expect("import runs");
    let full_time = t0.elapsed();
    assert!(full.status.success(), "a whole import works");
    let count = |db: &Path| {
        Store::open_existing(db)
            .expect("open")
            .incident_count()
            .expect("n")
    };
    assert_eq!(count(&db), ROWS);

    let rounds = kills();
    let mut killed_mid_way = 0;
    for round in 0..rounds {
        let before = count(&db);
        let mut child = import();
        // spread over 0 .. 1.2 × the time of a whole import
        let at = full_time.mul_f64(1.2 * round as f64 / rounds as f64);
        std::thread::sleep(at);
        let finished = matches!(child.try_wait(), Ok(Some(_)));
        let _ = child.kill();
        let out = child.wait_with_output().expect("wait");
        if !finished && !out.status.success() {
            killed_mid_way += 1;
        }
        let reported = String::from_utf8_lossy(&out.stdout).contains(&format!("imported {ROWS}"));
        check_after_kill(&db, before, &Committed::default(), round, ROWS);
        let after = count(&db);
        if reported {
            assert_eq!(
                after,
                before + ROWS,
                "round {round}: reported import not all there"
            );
        } else {
            assert!(
                after == before || after == before + ROWS,
                "round {round}: {} of {ROWS} rows written: half an import",
                after - before
            );
        }
    }
    eprintln!(
        "import: {rounds} rounds, {killed_mid_way} killed before the end (whole import {:?})",
        full_time
    );
    assert!(
        killed_mid_way >= rounds / 3,
        "few kills landed mid-import: {killed_mid_way}"
    );
}
