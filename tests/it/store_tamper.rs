//! Tamper tests: change the database file with plain SQL behind the store's back and check
//! that `verify` names the first broken entry. Also several writers on one file at once.

use std::path::{Path, PathBuf};

use chrono::{DateTime, NaiveDate, Utc};
use shardlog::demo;
use shardlog::store::*;
use shardlog_core::units::Dimension;

fn stamp(s: &str) -> Stamp {
    Stamp::new(
        "ines",
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc),
    )
}

fn incident(d: u32) -> Incident {
    let mut inc = Incident::draft(NaiveDate::from_ymd_opt(2026, 5, d).unwrap());
    inc.glass.supplier = Some("KESTREL".into());
    inc.glass.product = Some("FT-10".into());
    inc.glass.lot = Some("K-31".into());
    inc.examinations.push(Examination {
        id: String::new(),
        examined_on: None,
        analyst: "ines".into(),
        origin_type: Some("inclusion_nis".into()),
        material: Some("soda_lime".into()),
        readings: vec![
            MirrorReading {
                boundary: "mirror_mist".into(),
                radius: Measured::parse("0.82 mm", Dimension::Length).unwrap(),
                magnification: Some(40.0),
                analyst: "ines".into(),
                note: String::new(),
                viewing: None,
            },
            MirrorReading {
                boundary: "mist_hackle".into(),
                radius: Measured::parse("1.1 mm", Dimension::Length).unwrap(),
                magnification: Some(40.0),
                analyst: "ines".into(),
                note: String::new(),
                viewing: None,
            },
        ],
        flaw: None,
        result: None,
        notes: String::new(),
    });
    inc.custody.push(CustodyEntry {
        id: String::new(),
        at: DateTime::parse_from_rfc3339("2026-05-20T09:00:00Z")
            .unwrap()
            .with_timezone(&Utc),
        action: "received".into(),
        who: "courier".into(),
        location: "lab".into(),
        note: String::new(),
    });
    inc
}

/// A file database with three incidents; returns (dir, path, references).
fn setup() -> (tempfile::TempDir, PathBuf, Vec<String>) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("t.db");
    let mut s = Store::open(&path).unwrap();
    let refs = (1..=3)
        .map(|d| {
            s.create_incident(&incident(d), &stamp("2026-05-20T10:00:00Z"))
                .unwrap()
                .reference
        })
        .collect();
    assert!(s.verify().unwrap().ok());
    (dir, path, refs)
}

fn tamper(path: &Path, sql: &str) {
    let c = rusqlite::Connection::open(path).unwrap();
    c.execute_batch(sql).unwrap();
}

fn problem(path: &Path) -> String {
    let s = Store::open_existing(path).unwrap();
    let r = s.verify().unwrap();
    r.first_problem
        .unwrap_or_else(|| panic!("verify passed after tampering"))
}

#[test]
fn changed_reading_is_found() {
    let (_d, path, refs) = setup();
    tamper(
        &path,
        "UPDATE mirror_readings SET value_text = '0.95', value_m = 0.00095 WHERE reading_no = 1
         AND examination_id = (SELECT id FROM examinations ORDER BY id LIMIT 1)",
    );
    let p = problem(&path);
    assert!(p.contains("incident") && p.contains("changed"), "{p}");
    assert!(refs.iter().any(|r| p.contains(r.as_str())), "{p}");
}

#[test]
fn changed_listed_stress_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "UPDATE incidents SET stress_pa = 123.0 WHERE seq = 2",
    );
    let p = problem(&path);
    assert!(p.contains("listed stress"), "{p}");
}

#[test]
fn deleted_custody_entry_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "DELETE FROM custody WHERE entry_no = 1 AND rowid = (SELECT min(rowid) FROM custody)",
    );
    assert!(problem(&path).contains("changed"));
}

#[test]
fn inserted_incident_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "INSERT INTO incidents (id, reference, revision, created_at, updated_at, position, found_on, sun,
           weather, reporter, how_found, makeup, tension_face, status, description, notes)
         VALUES ('0190aaaa-0000-7000-8000-000000000000', 'BR-260501-0099', 1, '2026-05-01T00:00:00.000Z',
           '2026-05-01T00:00:00.000Z', '', '2026-05-01', '', '', '', '', 'monolithic', '', 'reported', '', '')",
    );
    let p = problem(&path);
    assert!(
        p.contains("BR-260501-0099") && p.contains("inserted"),
        "{p}"
    );
}

#[test]
fn deleted_incident_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "PRAGMA foreign_keys = ON; DELETE FROM incidents WHERE seq = 3;",
    );
    let p = problem(&path);
    assert!(p.contains("deleted") || p.contains("missing"), "{p}");
}

#[test]
fn changed_supplier_name_is_found() {
    let (_d, path, _) = setup();
    tamper(&path, "UPDATE suppliers SET name = 'someone else'");
    let p = problem(&path);
    assert!(p.contains("supplier KESTREL"), "{p}");
}

#[test]
fn inserted_lookup_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "INSERT INTO lookup (kind, code, label, sort_order) VALUES ('cause_category', 'act_of_god', 'x', 1)",
    );
    assert!(problem(&path).contains("cause_category/act_of_god"));
}

#[test]
fn edited_audit_row_is_found() {
    let (_d, path, _) = setup();
    tamper(&path, "UPDATE audit SET actor = 'nobody' WHERE seq = 70");
    let p = problem(&path);
    assert!(p.starts_with("audit row 70"), "{p}");
}

#[test]
fn deleted_audit_row_is_found() {
    let (_d, path, _) = setup();
    tamper(&path, "DELETE FROM audit WHERE seq = 5");
    let p = problem(&path);
    assert!(p.contains("audit row 5"), "{p}");
}

#[test]
fn cut_tail_of_audit_is_found() {
    let (_d, path, _) = setup();
    tamper(
        &path,
        "DELETE FROM audit WHERE seq = (SELECT max(seq) FROM audit)",
    );
    let p = problem(&path);
    assert!(p.contains("head") || p.contains("differs"), "{p}");
}

#[test]
fn rewritten_audit_row_with_fresh_hash_breaks_the_next_link() {
    // an attacker who recomputes one row's hash still breaks the chain at the next row
    let (_d, path, _) = setup();
    let c = rusqlite::Connection::open(&path).unwrap();
    let (prev, at, actor, entity, id, op, before, after): (
        String,
        String,
        String,
        String,
        String,
        String,
        Option<String>,
        Option<String>,
    ) = c
        .query_row(
            "SELECT prev_hash, at, actor, entity, entity_id, op, before, after FROM audit WHERE seq = 10",
            [],
            |r| {
                Ok((
                    r.get(0)?,
                    r.get(1)?,
                    r.get(2)?,
                    r.get(3)?,
                    r.get(4)?,
                    r.get(5)?,
                    r.get(6)?,
                    r.get(7)?,
                ))
            },
        )
        .unwrap();
    let row = canon::AuditRow {
        seq: 10,
        at: &at,
        actor: "mallory",
        entity: &entity,
        entity_id: &id,
        op: &op,
        before: before.as_deref(),
        after: after.as_deref(),
    };
    let _ = actor;
    let h = row.hash(&prev);
    c.execute(
        "UPDATE audit SET actor = 'mallory', hash = ?1 WHERE seq = 10",
        [&h],
    )
    .unwrap();
    drop(c);
    let p = problem(&path);
    assert!(p.starts_with("audit row 11"), "{p}");
}

#[test]
fn untouched_file_verifies() {
    let (_d, path, _) = setup();
    let s = Store::open_existing(&path).unwrap();
    let r = s.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
    assert_eq!(r.problems, 0);
    assert_eq!(r.head, s.audit_head().unwrap());
}

#[test]
fn several_writers_on_one_file_lose_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("shared.db");
    drop(Store::open(&path).unwrap());
    let writers: Vec<_> = (0..4)
        .map(|w| {
            let path = path.clone();
            std::thread::spawn(move || {
                let mut s = Store::open_existing(&path).unwrap();
                s.set_id_seed(1000 + w);
                for i in 0..15 {
                    let inc = s
                        .create_incident(
                            &incident(1 + (i % 28) as u32),
                            &stamp("2026-05-20T10:00:00Z"),
                        )
                        .unwrap();
                    let mut e = inc.clone();
                    e.notes = format!("writer {w} edit {i}");
                    s.update_incident(&e, &stamp("2026-05-20T10:01:00Z"))
                        .unwrap();
                }
            })
        })
        .collect();
    for w in writers {
        w.join().expect("a writer failed");
    }
    let s = Store::open_existing(&path).unwrap();
    assert_eq!(s.incident_count().unwrap(), 60);
    let r = s.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
}

/// Bulk loads (demo, import) audit one manifest row per 1,000 records; records loaded that way
/// are checked and have a history like any other.
#[test]
fn bulk_loaded_records_are_checked_and_have_history() {
    let dir = tempfile::tempdir().unwrap();
    let src = dir.path().join("demo.db");
    demo::generate(
        &src,
        &demo::DemoOptions {
            incidents: 40,
            seed: 3,
        },
    )
    .unwrap();
    // a demo this small audits each incident; an import always loads in batches
    let json = Store::open_existing(&src)
        .unwrap()
        .export_json(&Filter::default())
        .unwrap();
    let path = dir.path().join("imported.db");
    let mut s = Store::open(&path).unwrap();
    // the evidence files travel beside the database (an import carries their hashes)
    let files = dir.path().join("imported.db.files");
    std::fs::create_dir_all(&files).unwrap();
    for e in std::fs::read_dir(dir.path().join("demo.db.files")).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), files.join(e.file_name())).unwrap();
    }
    s.import_bytes(
        "demo.json",
        json.as_bytes(),
        shardlog::store::exchange::ImportOptions::default(),
        // after the demo's last record: an import refuses records made after its own time
        &stamp("2026-12-01T10:00:00Z"),
    )
    .unwrap()
    .unwrap();
    let batches: i64 = rusqlite::Connection::open(&path)
        .unwrap()
        .query_row(
            "SELECT count(*) FROM audit WHERE entity = 'batch'",
            [],
            |r| r.get(0),
        )
        .unwrap();
    assert!(batches >= 1);
    let report = s.verify().unwrap();
    assert!(report.ok(), "{:?}", report.first_problem);
    let row = s
        .list(&Filter::default(), Sort::default(), &PageRequest::default())
        .unwrap()
        .rows[3]
        .clone();
    let h = s.history(&row.reference).unwrap();
    assert_eq!(h.len(), 1);
    assert_eq!(h[0].op, "insert");
    assert_eq!(
        h[0].after.as_ref().unwrap()["reference"],
        row.reference.as_str()
    );
    let mut inc = s.get(&row.reference).unwrap();
    inc.notes = "second look".into();
    // an hour after the import: audit times never run backwards
    s.update_incident(&inc, &stamp("2026-12-01T11:00:00Z"))
        .unwrap();
    let h = s.history(&row.reference).unwrap();
    assert_eq!(h.len(), 2);
    assert_eq!(h[0].after, h[1].before);
    assert_eq!(h[1].changed, vec!["notes".to_string()]);
    let report = s.verify().unwrap();
    assert!(report.ok(), "{:?}", report.first_problem);
    drop(s);

    tamper(
        &path,
        "UPDATE incidents SET description = 'nothing to see' WHERE seq = 9",
    );
    let p = problem(&path);
    assert!(p.contains("changed behind"), "{p}");
    tamper(&path, "UPDATE audit SET after = replace(after, '\"records\"', '\"recordz\"') WHERE entity = 'batch'");
    let p = problem(&path);
    assert!(p.starts_with("audit row"), "{p}");
}
