//! Disk full and interrupted writes, in real processes.
//!
//! - A database that cannot grow: debug builds honour `SHARDLOG_TEST_MAX_PAGE_COUNT`, which
//!   caps the database with SQLite's `PRAGMA max_page_count` (the portable stand-in for a full
//!   disk; no mount needed). Import and an edit in the interface must fail with one clear
//!   line, exit 1, and leave the data exactly as it was, `verify` passing.
//! - A write that fails half-way: the child runs under `ulimit -f` with SIGXFSZ ignored, so
//!   a write past the limit fails with EFBIG. Export, report, dispute bundle and backup must
//!   leave an existing good file byte-identical, no temporary file behind, and say so.
#![cfg(unix)]

use std::os::unix::fs::PermissionsExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use crate::support::pty::{Pty, BIN};

fn shardlog(db: &Path, args: &[&str]) -> Output {
    Command::new(BIN)
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "fault-test")
        .output()
        .expect("run shardlog")
}

/// Run shardlog with files limited to `blocks` blocks of the shell's `ulimit -f` (512 bytes
/// in POSIX sh, 1024 in bash) and SIGXFSZ ignored: a write past the limit fails with EFBIG.
fn shardlog_limited(db: &Path, blocks: u32, args: &[&str]) -> Output {
    Command::new("sh")
        .arg("-c")
        .arg(format!(
            "trap '' XFSZ; ulimit -f {blocks}; exec \"$0\" \"$@\""
        ))
        .arg(BIN)
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "fault-test")
        .output()
        .expect("run shardlog under ulimit")
}

fn ok(o: &Output) -> String {
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    String::from_utf8_lossy(&o.stdout).into_owned()
}

fn demo(dir: &Path, n: usize) -> PathBuf {
    let db = dir.join("evidence.db");
    let o = Command::new(BIN)
        .args(["demo", "--incidents", &n.to_string(), "--out"])
        .arg(&db)
        .output()
        .expect("demo");
    ok(&o);
    db
}

fn snapshot(db: &Path) -> String {
    ok(&shardlog(db, &["export", "--format", "json"]))
}

fn assert_verifies(db: &Path) {
    let v = ok(&shardlog(db, &["verify"]));
    assert!(v.starts_with("ok:"), "{v}");
}

/// One line on stderr, starting `shardlog: `, with every word of `needles`; exit 1.
fn assert_one_clear_line(o: &Output, needles: &[&str]) -> String {
    let err = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(1), "exit code; stderr: {err}");
    assert_eq!(err.trim_end().lines().count(), 1, "one line: {err}");
    assert!(err.starts_with("shardlog: "), "{err}");
    for n in needles {
        assert!(err.contains(n), "{n:?} missing from: {err}");
    }
    assert!(!err.contains("panicked"), "{err}");
    assert!(!err.to_lowercase().contains("locked"), "{err}");
    err
}

/// The pages of `db` once none is free (VACUUM first: the demo's bulk load leaves the pages
/// of the planner's samples it drops free, and a write would take those before growing the
/// file): capped at this count, the database cannot take one more page.
fn page_count(db: &Path) -> u32 {
    let c = rusqlite::Connection::open(db).expect("open");
    c.execute_batch("VACUUM").expect("vacuum");
    let free: u32 = c
        .query_row("PRAGMA freelist_count", [], |r| r.get(0))
        .expect("free pages");
    assert_eq!(free, 0, "free pages after VACUUM");
    c.query_row("PRAGMA page_count", [], |r| r.get(0))
        .expect("page count")
}

fn import_file(dir: &Path, rows: usize) -> PathBuf {
    let mut csv = String::from("found_on,supplier,product,lot,mirror_mist,description\n");
    for i in 0..rows {
        csv.push_str(&format!(
            "2026-04-{:02},ORVALE,SIDE-6T,L{},1.{} mm,disk-full row {i} {}\n",
            1 + i % 28,
            i % 3,
            i % 10,
            "w".repeat(300)
        ));
    }
    let f = dir.join("more.csv");
    std::fs::write(&f, csv).expect("csv");
    f
}

/// Names in `dir` that look like a temporary file of ours.
fn leftovers(dir: &Path) -> Vec<String> {
    std::fs::read_dir(dir)
        .expect("read dir")
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.contains("partial") || n.ends_with(".part"))
        .collect()
}

#[test]
fn import_into_a_full_database_fails_cleanly_and_changes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), 30);
    let before = snapshot(&db);
    let file = import_file(dir.path(), 400);
    let pages = page_count(&db).to_string();
    let o = Command::new(BIN)
        .arg("--db")
        .arg(&db)
        .arg("import")
        .arg(&file)
        .env("SHARDLOG_TEST_MAX_PAGE_COUNT", &pages)
        .output()
        .expect("import");
    assert_one_clear_line(&o, &["more.csv", "import failed", "disk full"]);
    assert_eq!(snapshot(&db), before, "the data changed");
    assert_verifies(&db);
    // the same import with room works: the refusal was the full database, not the file
    let o = shardlog(&db, &["import", file.to_str().unwrap()]);
    assert!(ok(&o).contains("imported 400 incidents"));
    assert_verifies(&db);
}

#[test]
fn import_that_hits_a_file_size_limit_fails_cleanly_and_changes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), 30);
    let before = snapshot(&db);
    let file = import_file(dir.path(), 2000);
    // enough for the WAL index (32 KB) and a little WAL, far less than 2000 incidents
    let o = shardlog_limited(&db, 400, &["import", file.to_str().unwrap()]);
    assert_one_clear_line(&o, &["more.csv", "import failed", "disk"]);
    assert_eq!(snapshot(&db), before, "the data changed");
    assert_verifies(&db);
}

#[test]
fn an_edit_in_the_interface_on_a_full_database_is_refused_and_the_typing_kept() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), 20);
    let before = snapshot(&db);
    let pages = page_count(&db).to_string();
    let mut ui = Pty::spawn_with(&db, &[("SHARDLOG_TEST_MAX_PAGE_COUNT", &pages)]);
    let reference = ui.open_first_incident();
    ui.edit_position();
    // the saved record and its audit row (two images of the incident) need new pages
    ui.send(" QFULLQ");
    ui.wait_text("QFULLQ");
    ui.send("\u{13}");
    ui.wait_text("not saved");
    let s = ui.screen();
    assert!(s.contains("disk full"), "{s}");
    assert!(s.contains("Edit intake"), "still in the form:\n{s}");
    assert!(s.contains("QFULLQ"), "typing kept:\n{s}");
    // leave without saving, quit
    ui.send("\u{1b}");
    ui.wait_text("unsaved changes");
    ui.send("y");
    ui.wait_for("back on the incident", |s| !s.contains("Edit intake"));
    ui.send("\u{3}");
    assert_eq!(ui.finish(), 0, "screen:\n{}", ui.screen());
    assert_eq!(snapshot(&db), before, "the data of {reference} changed");
    assert_verifies(&db);
}

fn good_file(path: &Path) -> Vec<u8> {
    let bytes = b"an earlier good export, which must survive\n".repeat(10);
    std::fs::write(path, &bytes).unwrap();
    bytes
}

#[test]
fn a_failed_export_or_report_never_replaces_the_good_file() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), 200);
    let out = tempfile::tempdir().unwrap();
    let reference = {
        let v: serde_json::Value =
            serde_json::from_str(&ok(&shardlog(&db, &["list", "--json", "--limit", "1"]))).unwrap();
        v[0]["ref"].as_str().unwrap().to_string()
    };
    // each whole output is larger than the 50 KB limit (checked first without the limit)
    let cases: Vec<(&str, Vec<String>)> = vec![
        (
            "export.json",
            vec!["export".into(), "--format".into(), "json".into()],
        ),
        (
            "export.csv",
            vec!["export".into(), "--format".into(), "csv".into()],
        ),
        ("summary.pdf", vec!["report".into(), reference.clone()]),
    ];
    for (name, args) in cases {
        let target = out.path().join(name);
        let mut full: Vec<String> = args.clone();
        full.extend(["-o".into(), target.display().to_string()]);
        let full: Vec<&str> = full.iter().map(|s| s.as_str()).collect();
        // without a limit the output is written and is larger than the limit below
        ok(&shardlog(&db, &full));
        let size = std::fs::metadata(&target).unwrap().len();
        assert!(size > 100 * 512, "{name} is only {size} bytes");
        let good = good_file(&target);
        let o = shardlog_limited(&db, 100, &full);
        assert_one_clear_line(&o, &[&target.display().to_string(), "not written"]);
        assert_eq!(std::fs::read(&target).unwrap(), good, "{name} was changed");
        assert!(
            leftovers(out.path()).is_empty(),
            "{:?}",
            leftovers(out.path())
        );
    }
}

#[test]
fn a_failed_dispute_bundle_or_backup_leaves_nothing_behind() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path(), 30);
    let out = tempfile::tempdir().unwrap();

    let bundle = out.path().join("bundle");
    let o = shardlog_limited(
        &db,
        100,
        &[
            "dispute",
            "--supplier",
            "ORVALE",
            "-o",
            bundle.to_str().unwrap(),
        ],
    );
    assert_one_clear_line(&o, &["bundle not written", "nothing was left"]);
    assert!(!bundle.exists(), "a half bundle was left");
    assert!(
        leftovers(out.path()).is_empty(),
        "{:?}",
        leftovers(out.path())
    );
    // an existing, complete bundle is never replaced: a second bundle there is refused
    ok(&shardlog(
        &db,
        &[
            "dispute",
            "--supplier",
            "ORVALE",
            "-o",
            bundle.to_str().unwrap(),
        ],
    ));
    let listing = |d: &Path| {
        let mut v: Vec<(String, Vec<u8>)> = walk(d)
            .into_iter()
            .map(|p| (p.display().to_string(), std::fs::read(&p).unwrap()))
            .collect();
        v.sort();
        v
    };
    let whole = listing(&bundle);
    let o = shardlog_limited(
        &db,
        100,
        &[
            "dispute",
            "--supplier",
            "ORVALE",
            "-o",
            bundle.to_str().unwrap(),
        ],
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("already exists"), "{err}");
    assert_eq!(listing(&bundle), whole, "the good bundle changed");
    assert!(
        leftovers(out.path()).is_empty(),
        "{:?}",
        leftovers(out.path())
    );

    let copy = out.path().join("copy.db");
    let o = shardlog_limited(&db, 100, &["backup", copy.to_str().unwrap()]);
    assert_one_clear_line(&o, &["backup to", "copy.db", "failed"]);
    assert!(!copy.exists(), "a half backup was left");
    assert!(!out.path().join("copy.db.files").exists());
    assert!(
        leftovers(out.path()).is_empty(),
        "{:?}",
        leftovers(out.path())
    );
    // with room the backup works, owner-only, and verifies
    let said = ok(&shardlog(&db, &["backup", copy.to_str().unwrap()]));
    assert!(said.contains("integrity check ok"), "{said}");
    let mode = std::fs::metadata(&copy).unwrap().permissions().mode();
    assert_eq!(mode & 0o077, 0, "backup readable by others: {mode:o}");
    assert_verifies(&copy);
    assert_verifies(&db);
}

fn walk(d: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for e in std::fs::read_dir(d).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            out.extend(walk(&p));
        } else {
            out.push(p);
        }
    }
    out
}

#[test]
fn new_databases_and_their_files_are_owner_only() {
    let dir = tempfile::tempdir().unwrap();
    let mode = |p: &Path| std::fs::metadata(p).unwrap().permissions().mode() & 0o777;
    // init
    let db = dir.path().join("fresh.db");
    ok(&shardlog(&db, &["init"]));
    assert_eq!(mode(&db), 0o600, "init");
    // the demo, with its attachment folder and files
    let demo_db = demo(dir.path(), 10);
    assert_eq!(mode(&demo_db), 0o600, "demo");
    let files = dir.path().join("evidence.db.files");
    assert_eq!(mode(&files), 0o700, "attachment folder");
    let mut n = 0;
    for e in std::fs::read_dir(&files).unwrap() {
        let p = e.unwrap().path();
        assert_eq!(mode(&p), 0o600, "{}", p.display());
        n += 1;
    }
    assert!(n > 0, "the demo has attachments");
    // the WAL files SQLite makes beside an open database take the file's permissions
    let c = rusqlite::Connection::open(&db).unwrap();
    let _: i64 = c
        .query_row("SELECT count(*) FROM incidents", [], |r| r.get(0))
        .unwrap();
    for suffix in ["-wal", "-shm"] {
        let p = dir.path().join(format!("fresh.db{suffix}"));
        assert_eq!(mode(&p) & 0o077, 0, "{}", p.display());
    }
}
