//! The narrow `incident_facts` table that `stats` reads (schema 3): filled by the migration
//! from existing incidents, kept in step by triggers on every write, and checked by `verify`.
//! Everywhere it must give the same facts as the wide incidents table (`fleet_rows`).

use shardlog_core::fleet::StressKind;
use std::path::Path;

use chrono::{DateTime, Datelike, NaiveDate, Utc};
use shardlog::store::*;
use shardlog_core::fleet::{IncidentFacts, Key};
use shardlog_core::units::Dimension;

fn stamp(s: &str) -> Stamp {
    Stamp::new(
        "ines",
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc),
    )
}

fn day(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap()
}

/// An incident of the invented fleet with a mirror reading (so it has a stress).
fn incident(found: NaiveDate, supplier: &str, lot: &str, origin: &str) -> Incident {
    let mut inc = Incident::draft(found);
    inc.asset = Some("car 214".into());
    inc.site = Some("north-depot".into());
    inc.glass.supplier = Some(supplier.into());
    inc.glass.product = Some("FT-10".into());
    inc.glass.lot = Some(lot.into());
    inc.glass.plies.push(Ply {
        material: Some("soda_lime".into()),
        temper: Some("fully_tempered".into()),
        thickness_m: Some(0.006),
        coating: String::new(),
        edge_finish: "arrissed".into(),
    });
    inc.examinations.push(Examination {
        id: String::new(),
        examined_on: None,
        analyst: "ines".into(),
        origin_type: Some(origin.into()),
        material: Some("soda_lime".into()),
        readings: vec![MirrorReading {
            boundary: "mirror_mist".into(),
            // a radius for each day, so that each incident has its own stress
            radius: Measured::parse(
                &format!("{:.2} mm", 0.6 + 0.02 * found.day() as f64),
                Dimension::Length,
            )
            .unwrap(),
            magnification: Some(40.0),
            analyst: "ines".into(),
            note: String::new(),
            viewing: None,
        }],
        flaw: None,
        result: None,
        notes: String::new(),
    });
    let at = DateTime::parse_from_rfc3339("2026-05-20T10:00:00Z")
        .unwrap()
        .with_timezone(&Utc);
    let r = analysis::compute(
        &inc,
        &inc.examinations[0],
        at,
        &shardlog::store::MaterialBook::library_only(),
    )
    .unwrap();
    inc.examinations[0].result = Some(r);
    inc
}

/// The facts of every incident through the wide table, in a fixed order.
fn from_rows(s: &Store, stress: StressKind) -> Vec<String> {
    let rows = s.fleet_rows(&Filter::default()).unwrap();
    let mut v: Vec<String> = rows
        .into_iter()
        .map(|r| {
            let st = match stress {
                StressKind::Applied => r.applied_stress_pa,
                StressKind::Net => r.net_stress_pa,
            };
            format!("{:?}", r.into_facts(st))
        })
        .collect();
    v.sort();
    v
}

fn from_facts(s: &Store, stress: StressKind) -> Vec<String> {
    let mut v: Vec<String> = s
        .fleet_facts(None, None, stress, None)
        .unwrap()
        .iter()
        .map(|f| format!("{f:?}"))
        .collect();
    v.sort();
    v
}

fn assert_same(s: &Store, what: &str) {
    for stress in [StressKind::Applied, StressKind::Net] {
        assert_eq!(from_facts(s, stress), from_rows(s, stress), "{what}");
    }
    let r = s.verify().unwrap();
    assert!(r.ok(), "{what}: {:?}", r.first_problem);
}

#[test]
fn migration_fills_the_facts_of_existing_incidents() {
    // a database of schema 2 (before the table existed) with incidents in it
    let mut s = Store::open_in_memory_at_version(2).unwrap();
    let st = stamp("2026-05-20T10:00:00Z");
    s.create_incident(
        &incident(day(2026, 5, 1), "KESTREL", "K-31", "inclusion_nis"),
        &st,
    )
    .unwrap();
    s.create_incident(
        &incident(day(2026, 5, 2), "ORVALE", "L2291", "edge_chip"),
        &st,
    )
    .unwrap();
    let mut bare = Incident::draft(day(2026, 5, 3));
    bare.description = "nothing recorded but the date".into();
    s.create_incident(&bare, &st).unwrap();
    s.migrate().unwrap();
    assert_eq!(s.schema_version().unwrap(), SCHEMA_VERSION);
    let facts = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap();
    assert_eq!(facts.len(), 3);
    assert!(facts
        .iter()
        .any(|f| f.supplier.as_deref() == Some("KESTREL")
            && f.origin_type.as_deref() == Some("inclusion_nis")
            && f.temper.as_deref() == Some("fully_tempered")
            && f.stress_pa.is_some()));
    assert!(facts.iter().any(|f| f
        == &IncidentFacts {
            found: day(2026, 5, 3),
            ..Default::default()
        }));
    assert_same(&s, "after the migration");
    // and the triggers work on the migrated database
    s.create_incident(
        &incident(day(2026, 5, 4), "KESTREL", "K-32", "edge_chip"),
        &st,
    )
    .unwrap();
    assert_same(&s, "after a write on the migrated database");
}

#[test]
fn facts_follow_every_write() {
    let mut s = Store::open_in_memory().unwrap();
    let st = stamp("2026-05-20T10:00:00Z");
    let a = s
        .create_incident(
            &incident(day(2026, 5, 1), "KESTREL", "K-31", "inclusion_nis"),
            &st,
        )
        .unwrap();
    let b = s
        .create_incident(
            &incident(day(2026, 5, 2), "ORVALE", "L2291", "edge_chip"),
            &st,
        )
        .unwrap();
    assert_same(&s, "after two inserts");

    let cause = Cause {
        category: "impact".into(),
        factors: Vec::new(),
        confidence: "possible".into(),
        responsibility: "third_party".into(),
        note: String::new(),
    };
    let a = s
        .set_cause(&a.reference, a.revision, Some(cause), None, &st)
        .unwrap();
    assert_same(&s, "after setting a cause");
    let facts = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap();
    assert_eq!(
        facts
            .iter()
            .filter(|f| f.cause.as_deref() == Some("impact"))
            .count(),
        1
    );

    // an edit that moves the incident to another supplier, lot, date and origin
    let mut edited = a.clone();
    edited.found_on = day(2026, 4, 30);
    edited.glass.supplier = Some("ORVALE".into());
    edited.glass.lot = Some("L2291".into());
    edited.examinations[0].origin_type = Some("edge_chip".into());
    // a surface origin changes the residual stress: the result is computed again
    let r = analysis::compute(
        &edited,
        &edited.examinations[0],
        st.at,
        &shardlog::store::MaterialBook::library_only(),
    )
    .unwrap();
    edited.examinations[0].result = Some(r);
    s.update_incident(&edited, &st).unwrap();
    assert_same(&s, "after an edit");
    let facts = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap();
    assert!(facts
        .iter()
        .all(|f| f.supplier.as_deref() == Some("ORVALE")));
    assert!(facts.iter().any(|f| f.found == day(2026, 4, 30)));

    // the window
    let may = s
        .fleet_facts(
            Some(day(2026, 5, 1)),
            Some(day(2026, 5, 31)),
            StressKind::Net,
            None,
        )
        .unwrap();
    assert_eq!(may.len(), 1);
    assert_eq!(may[0].found, day(2026, 5, 2));

    // only the keys asked for are read; the rest stay unrecorded
    let some = s
        .fleet_facts(
            None,
            None,
            StressKind::Applied,
            Some(&[Key::Supplier, Key::Month]),
        )
        .unwrap();
    let all = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap();
    let mut want: Vec<String> = all
        .iter()
        .map(|f| {
            format!(
                "{:?}",
                IncidentFacts {
                    supplier: f.supplier.clone(),
                    found: f.found,
                    stress_pa: f.stress_pa,
                    ..Default::default()
                }
            )
        })
        .collect();
    let mut got: Vec<String> = some.iter().map(|f| format!("{f:?}")).collect();
    want.sort();
    got.sort();
    assert_eq!(got, want);
    assert!(some.iter().all(|f| f.supplier.is_some() && f.lot.is_none()));

    s.delete_incident(&b.reference, b.revision, &st).unwrap();
    assert_same(&s, "after a delete");
    assert_eq!(
        s.fleet_facts(None, None, StressKind::Applied, None)
            .unwrap()
            .len(),
        1
    );
}

fn setup() -> (tempfile::TempDir, std::path::PathBuf, Vec<String>) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("t.db");
    let mut s = Store::open(&path).unwrap();
    let st = stamp("2026-05-20T10:00:00Z");
    let refs = (1..=3)
        .map(|d| {
            s.create_incident(
                &incident(day(2026, 5, d), "KESTREL", "K-31", "inclusion_nis"),
                &st,
            )
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

fn problems(path: &Path) -> (u64, String) {
    let s = Store::open_existing(path).unwrap();
    let r = s.verify().unwrap();
    (
        r.problems,
        r.first_problem
            .unwrap_or_else(|| panic!("verify passed after tampering")),
    )
}

#[test]
fn hand_changed_facts_are_found_by_verify() {
    let (_d, path, refs) = setup();
    tamper(
        &path,
        "UPDATE incident_facts SET supplier_id = (SELECT n FROM fleet_values WHERE value = 'fully_tempered') WHERE seq = 2",
    );
    let (n, p) = problems(&path);
    assert_eq!(n, 1, "{p}");
    assert!(p.contains(&refs[1]) && p.contains("incident_facts"), "{p}");

    let (_d, path, refs) = setup();
    tamper(
        &path,
        "UPDATE incident_facts SET applied_stress_pa = 1.0 WHERE seq = 3",
    );
    let (_, p) = problems(&path);
    assert!(p.contains(&refs[2]) && p.contains("differs"), "{p}");

    let (_d, path, refs) = setup();
    tamper(
        &path,
        "UPDATE incident_facts SET cause_category = 99999 WHERE seq = 1",
    );
    let (_, p) = problems(&path);
    assert!(p.contains(&refs[0]), "{p}");
    // stats refuse a number that names no value rather than guess
    let s = Store::open_existing(&path).unwrap();
    let e = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap_err();
    assert!(e.to_string().contains("fleet_values"), "{e}");

    let (_d, path, refs) = setup();
    tamper(&path, "DELETE FROM incident_facts WHERE seq = 1");
    let (_, p) = problems(&path);
    assert!(p.contains(&refs[0]) && p.contains("missing"), "{p}");

    let (_d, path, _) = setup();
    tamper(
        &path,
        "INSERT INTO incident_facts (seq, found_on) VALUES (77, '2026-05-09')",
    );
    let (_, p) = problems(&path);
    assert!(p.contains("belong to no incident"), "{p}");
}

#[test]
fn edits_behind_the_stores_back_reach_the_facts_too() {
    // the triggers are in the schema: plain SQL on incidents keeps the copy in step, so
    // verify reports the one real problem (the changed incident), not a second one
    let (_d, path, _) = setup();
    tamper(
        &path,
        "UPDATE incidents SET stress_pa = 123.0 WHERE seq = 2",
    );
    let (n, p) = problems(&path);
    assert!(p.contains("listed stress"), "{p}");
    assert_eq!(n, 1, "{p}");
    let s = Store::open_existing(&path).unwrap();
    let facts = s.fleet_facts(None, None, StressKind::Net, None).unwrap();
    assert!(facts.iter().any(|f| f.stress_pa == Some(123.0)));
}

#[test]
fn sample_database_gives_the_same_facts_both_ways() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample-db");
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("demo.db");
    std::fs::copy(root.join("demo.db"), &db).unwrap();
    // opening migrates a copy made before schema 3
    let s = Store::open_existing(&db).unwrap();
    assert_eq!(s.schema_version().unwrap(), SCHEMA_VERSION);
    let facts = s
        .fleet_facts(None, None, StressKind::Applied, None)
        .unwrap();
    assert!(facts.len() > 100, "{}", facts.len());
    for stress in [StressKind::Applied, StressKind::Net] {
        assert_eq!(from_facts(&s, stress), from_rows(&s, stress));
    }
}
