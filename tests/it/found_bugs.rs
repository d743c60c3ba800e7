//! Bugs found by the proof work (issue 8) in the store and its commands, kept as regression
//! tests (both fixed). Where the bug was, and what happened, is beside each.

use std::path::Path;
use std::process::Command;

fn shardlog(db: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "found-bugs")
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

/// src/store/exchange/import.rs (JSON import) and src/store/audit.rs (verify): an imported incident
/// may list an attachment whose file is not in the database's attachment folder (any 64-hex
/// hash, any file name, even "../../../../etc/cron.d/x"); the import succeeds and `verify`
/// says "ok", so the record claims evidence that does not exist. Expected: the import refuses
/// an attachment it cannot find (or `verify` reports the missing file).
#[test]
fn attachment_without_its_file_is_not_passed_as_verified() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("att.db");
    assert!(shardlog(&db, &["init"]).status.success());
    let doc = r#"{"format":"shardlog-export","version":1,"incidents":[{"id":"","reference":"","revision":1,"created_at":"2024-06-10T11:42:00Z","updated_at":"2024-06-10T11:42:00Z","asset":"car 166","position":"bay 7","site":"TVL-PEL","found_on":"2024-06-10","broken_on":null,"glass":{"makeup":"monolithic","plies":[]},"status":"received","cause":null,"attachments":[{"id":"","sha256":"0608b8ad01809135e6881a4ca8b1343c6cdc407f45a6a1c486b0cd7e9ba1a1f2","file_name":"../../../../etc/cron.d/x","media_type":"text/plain","size_bytes":1,"added_at":"2026-03-14T00:00:00Z"}]}]}"#;
    let file = dir.path().join("att.json");
    std::fs::write(&file, doc).expect("write");
    let import = shardlog(&db, &["import", file.to_str().expect("utf-8")]);
    let err = String::from_utf8_lossy(&import.stderr);
    // the refusal must be about the attachment, not about another field of the file
    assert!(
        import.status.success() || err.contains("attachments[0]"),
        "refused for another reason: {err}"
    );
    let verify = shardlog(&db, &["verify"]);
    assert!(
        !import.status.success() || !verify.status.success(),
        "an attachment with no file was imported and verified: {}",
        String::from_utf8_lossy(&verify.stdout)
    );
}

/// The attachment check of `verify` also catches evidence changed or removed after it was
/// attached (sample-db/ ships a database with photos).
#[test]
fn verify_reports_a_changed_or_missing_attachment_file() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-db");
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("demo.db");
    std::fs::copy(root.join("demo.db"), &db).expect("copy db");
    let files = dir.path().join("demo.db.files");
    std::fs::create_dir(&files).expect("files dir");
    let mut names = Vec::new();
    for e in std::fs::read_dir(root.join("demo.db.files")).expect("sample files") {
        let e = e.expect("entry");
        std::fs::copy(e.path(), files.join(e.file_name())).expect("copy file");
        names.push(e.file_name());
    }
    names.sort();
    assert!(names.len() >= 2, "the sample database ships photos");
    assert!(shardlog(&db, &["verify"]).status.success());

    // one byte of a photo changed
    let first = files.join(&names[0]);
    let mut bytes = std::fs::read(&first).expect("read photo");
    bytes[0] ^= 0xff;
    std::fs::write(&first, bytes).expect("write photo");
    let o = shardlog(&db, &["verify"]);
    assert_eq!(o.status.code(), Some(1));
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(text.contains("no longer has that content"), "{text}");

    // a photo removed
    std::fs::remove_file(files.join(&names[1])).expect("remove photo");
    let o = shardlog(&db, &["verify", "--json"]);
    assert_eq!(o.status.code(), Some(1));
}
