//! What `verify` sees beyond the chain: a stored result that no longer follows from its
//! readings, audit times that run backwards or cannot be read, schema objects the
//! migrations did not make (refused before anything is migrated), the text index out of
//! step, an attachment that is a symbolic link or not a regular file. Each change is made
//! the way a careful forger would: the audit hashes recomputed after it.

use std::path::{Path, PathBuf};

use crate::support::audit::rechain;
use crate::witness::{incident, rewrite_history, run, stamp};
use shardlog::store::*;

/// A database with three incidents, the second with a computed result.
fn setup() -> (tempfile::TempDir, PathBuf, Vec<String>) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.db");
    let mut s = Store::open(&db).unwrap();
    let mut refs = Vec::new();
    for d in 1..=3 {
        let mut inc = incident(d);
        if d == 2 {
            let at = stamp("2026-05-20T10:00:00Z").at;
            let r = analysis::compute(
                &inc,
                &inc.examinations[0],
                at,
                &shardlog::store::MaterialBook::library_only(),
            )
            .unwrap();
            inc.examinations[0].result = Some(r);
        }
        refs.push(
            s.create_incident(&inc, &stamp("2026-05-20T10:00:00Z"))
                .unwrap()
                .reference,
        );
    }
    assert!(s.verify().unwrap().ok());
    (dir, db, refs)
}

fn verify(db: &Path) -> (i32, String) {
    run(db, &db.with_extension("keys"), &["verify"])
}

fn sql(db: &Path, text: &str) {
    rusqlite::Connection::open(db)
        .unwrap()
        .execute_batch(text)
        .unwrap();
}

fn last_seq(db: &Path) -> i64 {
    rusqlite::Connection::open(db)
        .unwrap()
        .query_row("SELECT max(seq) FROM audit", [], |r| r.get(0))
        .unwrap()
}

#[test]
fn a_stored_result_that_no_longer_follows_from_its_readings_is_found() {
    let (_d, db, refs) = setup();
    // a reading of the incident with a result changed, images and hashes recomputed
    rewrite_history(&db, &refs[1]);
    let (code, text) = verify(&db);
    assert_eq!(code, 1, "{text}");
    assert!(
        text.contains(&format!(
            "incident {}: examination 1: the stored net stress",
            refs[1]
        )) && text.contains("does not follow from its readings and constants (recomputed"),
        "{text}"
    );
    // the same rewrite on an incident without a stored result leaves nothing to recompute
    let (_d2, db2, refs2) = setup();
    rewrite_history(&db2, &refs2[0]);
    let (code, text) = verify(&db2);
    assert_eq!(code, 0, "{text}");
}

#[test]
fn audit_times_that_run_backwards_or_cannot_be_read_are_found() {
    for (change, expected) in [
        (
            "UPDATE audit SET at = '2026-05-01T00:00:00.000Z' WHERE seq = (SELECT max(seq) FROM audit)",
            "the times run backwards",
        ),
        (
            "UPDATE audit SET at = 'last Tuesday' WHERE seq = (SELECT max(seq) FROM audit)",
            "its time \"last Tuesday\" cannot be read",
        ),
        (
            "UPDATE audit SET actor = '' WHERE seq = (SELECT max(seq) FROM audit)",
            "its actor \"\" cannot be read",
        ),
    ] {
        let (_d, db, _) = setup();
        sql(&db, change);
        rechain(&db, last_seq(&db));
        let (code, text) = verify(&db);
        assert_eq!(code, 1, "{change}: {text}");
        assert!(text.contains(expected), "{change}: {text}");
    }
}

#[test]
fn schema_objects_the_migrations_did_not_make_are_refused_untouched() {
    let cases = [
        (
            "CREATE TRIGGER quiet_fix AFTER INSERT ON incidents BEGIN
               UPDATE incidents SET cause_category = 'vandalism' WHERE seq = NEW.seq; END;",
            "trigger quiet_fix that the migrations did not make",
        ),
        (
            "CREATE VIEW everything AS SELECT * FROM incidents;",
            "view everything that the migrations did not make",
        ),
        (
            "CREATE INDEX by_notes ON incidents (notes);",
            "index by_notes that the migrations did not make",
        ),
        (
            "DROP TRIGGER incident_facts_delete;
             CREATE TRIGGER incident_facts_delete AFTER DELETE ON incidents BEGIN SELECT 1; END;",
            "trigger incident_facts_delete changed from what the migrations made",
        ),
        // a lowered version would re-run migration 3 and 4 (emptying the text index)
        ("PRAGMA user_version = 2;", "schema 2:"),
        ("PRAGMA user_version = 0;", "schema 0:"),
    ];
    for (change, expected) in cases {
        let (_d, db, _) = setup();
        sql(&db, change);
        sql(&db, "PRAGMA wal_checkpoint(TRUNCATE);");
        let before = std::fs::read(&db).unwrap();
        for args in [&["verify"][..], &["list"][..]] {
            let (code, text) = run(&db, &db.with_extension("keys"), args);
            assert_eq!(code, 1, "{change} / {args:?}: {text}");
            assert!(
                text.contains("its schema was altered outside shardlog") && text.contains(expected),
                "{change}: {text}"
            );
            assert!(text.len() < 800, "a sentence, not pages of SQL: {text}");
        }
        assert!(
            std::fs::read(&db).unwrap() == before,
            "{change}: the file was changed"
        );
    }
}

#[test]
fn a_text_index_out_of_step_is_found() {
    for (change, expected) in [
        (
            "DELETE FROM incident_text WHERE rowid = (SELECT min(seq) FROM incidents);",
            "the text index lacks 1 incident",
        ),
        (
            "INSERT INTO incident_text (rowid, body) VALUES (999999, 'planted words');",
            "the text index has 1 entry with no incident",
        ),
    ] {
        let (_d, db, _) = setup();
        sql(&db, change);
        let (code, text) = verify(&db);
        assert_eq!(code, 1, "{change}: {text}");
        assert!(text.contains(expected), "{change}: {text}");
    }
}

#[cfg(unix)]
#[test]
fn an_attachment_that_is_a_link_or_not_a_regular_file_is_found() {
    for replace_with_fifo in [false, true] {
        let (d, db, refs) = setup();
        let bytes = b"mirror photograph stand-in".to_vec();
        let file = {
            let mut s = Store::open_existing(&db).unwrap();
            let inc = s
                .add_attachment_bytes(
                    &refs[0],
                    "origin.txt",
                    &bytes,
                    "origin",
                    &stamp("2026-05-21T10:00:00Z"),
                )
                .unwrap();
            let sha = inc.attachments[0].sha256.clone();
            s.files_dir().unwrap().join(sha)
        };
        let (code, text) = verify(&db);
        assert_eq!(code, 0, "{text}");
        std::fs::remove_file(&file).unwrap();
        if replace_with_fifo {
            let c = std::ffi::CString::new(file.to_str().unwrap()).unwrap();
            // SAFETY: a valid NUL-terminated path; mkfifo only creates a file
            assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
        } else {
            // a link to a file with the very same content: its hash still matches
            let elsewhere = d.path().join("elsewhere.txt");
            std::fs::write(&elsewhere, &bytes).unwrap();
            std::os::unix::fs::symlink(&elsewhere, &file).unwrap();
        }
        let (code, text) = verify(&db);
        assert_eq!(code, 1, "{text}");
        let expected = if replace_with_fifo {
            "is not a regular file"
        } else {
            "is a symbolic link"
        };
        assert!(text.contains(expected), "{text}");
    }
}
