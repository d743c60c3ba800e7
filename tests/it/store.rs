//! Store tests: open and migrations, create/get/list, revisions, audit chain and tamper
//! detection, on in-memory and on-file databases.

use chrono::{DateTime, NaiveDate, TimeZone, Utc};
use shardlog::store::*;
use shardlog_core::units::Dimension;

fn at(s: &str) -> DateTime<Utc> {
    DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc)
}

fn stamp(s: &str) -> Stamp {
    Stamp::new("mira", at(s))
}

fn day(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap()
}

fn sample(found: NaiveDate) -> Incident {
    let mut inc = Incident::draft(found);
    inc.asset = Some("car 214".into());
    inc.position = "left side, bay 3".into();
    inc.site = Some("north-depot".into());
    inc.environment.temperature_c = Some(-4.0);
    inc.glass.supplier = Some("ORVALE".into());
    inc.glass.product = Some("SIDE-6T".into());
    inc.glass.lot = Some("L2291".into());
    inc.glass.plies.push(Ply {
        material: Some("soda_lime".into()),
        temper: Some("annealed".into()),
        thickness_m: Some(0.006),
        coating: String::new(),
        edge_finish: "arrissed".into(),
    });
    inc.pattern.origin_location = Some("edge".into());
    inc.description = "crack running square to the edge, no chip".into();
    inc.examinations.push(Examination {
        id: String::new(),
        examined_on: Some(found),
        analyst: "mira".into(),
        origin_type: Some("edge_cutting_damage".into()),
        material: None,
        readings: vec![MirrorReading {
            boundary: "branching".into(),
            radius: Measured::parse("15 mm", Dimension::Length).unwrap(),
            magnification: Some(10.0),
            analyst: "mira".into(),
            note: String::new(),
            viewing: None,
        }],
        flaw: None,
        result: None,
        notes: "thermal pattern".into(),
    });
    // the stored result is what the readings give (computed 2.3 / √0.015 = 18.78 MPa);
    // verify recomputes it
    let r = analysis::compute(
        &inc,
        &inc.examinations[0],
        at("2026-03-14T10:00:00Z"),
        &shardlog::store::MaterialBook::library_only(),
    )
    .unwrap();
    inc.examinations[0].result = Some(r);
    inc
}

#[test]
fn empty_database_has_schema_and_lookups() {
    let s = Store::open_in_memory().unwrap();
    assert_eq!(s.schema_version().unwrap(), SCHEMA_VERSION);
    let origins = s.lookups(LookupKind::OriginType).unwrap();
    assert!(origins.iter().any(|e| e.code == "inclusion_nis"));
    assert!(s.lookups(LookupKind::TemperClass).unwrap().len() >= 4);
    // the seeded lookups are audited, so a fresh database verifies
    let r = s.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
    assert!(r.audit_rows > 50);
}

#[test]
fn migrates_from_every_earlier_version() {
    for v in 0..SCHEMA_VERSION {
        let mut s = Store::open_in_memory_at_version(v).unwrap();
        assert_eq!(s.schema_version().unwrap(), v);
        s.migrate().unwrap();
        assert_eq!(s.schema_version().unwrap(), SCHEMA_VERSION);
        let mut s2 = s;
        let saved = s2
            .create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
            .unwrap();
        assert_eq!(s2.get(&saved.reference).unwrap(), saved);
    }
}

/// Schema 4 keeps only the text index (contentless FTS5 with deletes): the migration carries
/// the words of existing incidents over, and an edit or a deletion takes the old words out.
#[test]
fn the_text_index_follows_migration_edit_and_deletion() {
    let count = |s: &Store, word: &str| {
        let f = Filter {
            text: Some(word.into()),
            ..Filter::default()
        };
        s.list(&f, Sort::default(), &PageRequest::default())
            .unwrap()
            .total
    };
    let mut s = Store::open_in_memory_at_version(3).unwrap();
    let mut a = sample(day(2026, 3, 14));
    a.description = "quartzite pebble struck the outboard face".into();
    let a = s
        .create_incident(&a, &stamp("2026-03-14T09:10:00Z"))
        .unwrap();
    let mut b = sample(day(2026, 3, 15));
    b.description = "quartzite dust in the edge chip".into();
    let b = s
        .create_incident(&b, &stamp("2026-03-15T09:10:00Z"))
        .unwrap();
    assert_eq!(count(&s, "quartzite"), Some(2));
    s.migrate().unwrap();
    assert_eq!(s.schema_version().unwrap(), SCHEMA_VERSION);
    assert_eq!(count(&s, "quartzite"), Some(2));
    assert_eq!(count(&s, "pebble"), Some(1));
    // an edit replaces the incident's words
    let mut a2 = a.clone();
    a2.description = "ballast strike on the outboard face".into();
    s.update_incident(&a2, &stamp("2026-03-16T09:10:00Z"))
        .unwrap();
    assert_eq!(count(&s, "pebble"), Some(0));
    assert_eq!(count(&s, "ballast"), Some(1));
    assert_eq!(count(&s, "quartzite"), Some(1));
    // a deletion takes them out
    s.delete_incident(&b.reference, b.revision, &stamp("2026-03-17T09:10:00Z"))
        .unwrap();
    assert_eq!(count(&s, "quartzite"), Some(0));
    assert_eq!(count(&s, "outboard"), Some(1));
    assert!(s.verify().unwrap().ok());
}

#[test]
fn create_get_round_trip_and_reference() {
    let mut s = Store::open_in_memory().unwrap();
    s.set_id_seed(1);
    let st = stamp("2026-03-14T09:10:00.123456Z");
    let a = s.create_incident(&sample(day(2026, 3, 14)), &st).unwrap();
    let b = s.create_incident(&sample(day(2026, 3, 14)), &st).unwrap();
    let c = s.create_incident(&sample(day(2025, 12, 1)), &st).unwrap();
    assert_eq!(a.reference, "BR-260314-0001");
    assert_eq!(b.reference, "BR-260314-0002");
    assert_eq!(c.reference, "BR-251201-0001");
    assert!(c.reference < a.reference, "references sort by date found");
    assert_eq!(a.revision, 1);
    assert_eq!(uuid::Uuid::parse_str(&a.id).unwrap().get_version_num(), 7);
    let got = s.get(&a.reference).unwrap();
    assert_eq!(got, a);
    assert_eq!(s.get(&a.id).unwrap(), a);
    // reading kept as typed
    let r = &got.examinations[0].readings[0];
    assert_eq!(
        (r.radius.text.as_str(), r.radius.unit.as_str()),
        ("15", "mm")
    );
    assert!((r.radius.si - 0.015).abs() < 1e-15);
    // times are kept to the millisecond
    assert_eq!(got.created_at, at("2026-03-14T09:10:00.123Z"));
    // unknown codes were created as reference data
    assert_eq!(s.suppliers().unwrap()[0].code, "ORVALE");
    assert_eq!(s.lots(Some("ORVALE"), None).unwrap()[0].code, "L2291");
    assert!(matches!(
        s.get("BR-000000-0000"),
        Err(StoreError::NotFound(_))
    ));
    assert!(s.verify().unwrap().ok());
}

#[test]
fn invalid_codes_are_refused_with_the_field() {
    let mut s = Store::open_in_memory().unwrap();
    let mut inc = sample(day(2026, 3, 14));
    inc.examinations[0].origin_type = Some("gremlins".into());
    match s.create_incident(&inc, &stamp("2026-03-14T09:10:00Z")) {
        Err(StoreError::Invalid { field, message }) => {
            assert_eq!(field, "examinations[0].origin_type");
            assert!(message.contains("gremlins"), "{message}");
        }
        other => panic!("expected Invalid, got {other:?}"),
    }
    let mut inc = sample(day(2026, 3, 14));
    inc.broken_on = Some(day(2026, 3, 20));
    assert!(matches!(
        s.create_incident(&inc, &stamp("2026-03-14T09:10:00Z")),
        Err(StoreError::Invalid { field, .. }) if field == "broken_on"
    ));
    assert_eq!(s.incident_count().unwrap(), 0);
}

#[test]
fn stale_revision_is_refused_and_nothing_overwritten() {
    let mut s = Store::open_in_memory().unwrap();
    let a = s
        .create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
        .unwrap();
    let mut first = a.clone();
    first.notes = "first edit".into();
    let saved = s
        .update_incident(&first, &stamp("2026-03-14T09:20:00Z"))
        .unwrap();
    assert_eq!(saved.revision, 2);
    let mut second = a.clone(); // still at revision 1
    second.notes = "second edit".into();
    match s.update_incident(&second, &stamp("2026-03-14T09:21:00Z")) {
        Err(StoreError::StaleRevision {
            expected, current, ..
        }) => assert_eq!((expected, current), (1, 2)),
        other => panic!("expected StaleRevision, got {other:?}"),
    }
    let now = s.get(&a.reference).unwrap();
    assert_eq!(now.notes, "first edit");
    assert_eq!(now.revision, 2);
    assert_eq!(now.updated_at, at("2026-03-14T09:20:00Z"));
    // the convenience edits check too
    assert!(matches!(
        s.set_cause(&a.reference, 1, None, None, &stamp("2026-03-14T09:22:00Z")),
        Err(StoreError::StaleRevision { .. })
    ));
}

#[test]
fn edits_custody_cause_and_history() {
    let mut s = Store::open_in_memory().unwrap();
    let a = s
        .create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
        .unwrap();
    let b = s
        .add_custody(
            &a.reference,
            &CustodyEntry {
                id: String::new(),
                at: at("2026-03-14T09:10:00Z"),
                action: "received".into(),
                who: "depot staff".into(),
                location: "shelf B".into(),
                note: String::new(),
            },
            &stamp("2026-03-14T09:11:00Z"),
        )
        .unwrap();
    assert_eq!(b.revision, 2);
    assert!(!b.custody[0].id.is_empty());
    let c = s
        .set_cause(
            &a.reference,
            2,
            Some(Cause {
                category: "thermal".into(),
                factors: vec!["shaded edge in frame".into()],
                confidence: "probable".into(),
                responsibility: "undetermined".into(),
                note: "sunny afternoon, cold night".into(),
            }),
            Some("cause_assigned"),
            &stamp("2026-03-14T11:00:00Z"),
        )
        .unwrap();
    assert_eq!(c.status, "cause_assigned");
    let h = s.history(&a.reference).unwrap();
    assert_eq!(h.len(), 3);
    assert_eq!(h[0].op, "insert");
    assert_eq!(h[1].changed, vec!["custody".to_string()]);
    assert!(h[2].changed.contains(&"cause".to_string()));
    assert!(h[2].changed.contains(&"status".to_string()));
    assert_eq!(h[2].actor, "mira");
    // the audit images carry floats exactly
    let after = h[0].after.as_ref().unwrap();
    assert_eq!(
        after["environment"]["temperature_c"],
        serde_json::json!(-4.0)
    );
    assert!(s.verify().unwrap().ok());
}

#[test]
fn list_filters_sorts_and_pages() {
    let mut s = Store::open_in_memory().unwrap();
    let st = stamp("2026-04-01T08:00:00Z");
    for i in 0..25u32 {
        let mut inc = sample(day(2026, 1, 1) + chrono::Days::new(i as u64 * 3));
        if i % 5 == 0 {
            inc.status = "closed".into();
            inc.glass.supplier = Some("BRELLIN".into());
            inc.glass.product = Some("FT-8".into());
            inc.glass.lot = Some("B-07".into());
            inc.description = "interior origin, stone visible".into();
        }
        if i % 4 == 0 {
            inc.examinations[0].result = None;
        } else if let Some(r) = inc.examinations[0].result.as_mut() {
            r.stress_pa = Some((10 + i) as f64 * 1e6);
        }
        s.create_incident(&inc, &st).unwrap();
    }
    let all = s
        .list(&Filter::default(), Sort::default(), &PageRequest::default())
        .unwrap();
    assert_eq!(all.total, Some(25));
    assert_eq!(all.rows.len(), 25);
    assert!(all.next.is_none());
    assert!(all.rows.windows(2).all(|w| w[0].occurred <= w[1].occurred));

    // pages of 7, newest first, cover everything once
    let mut seen = Vec::new();
    let mut after = None;
    loop {
        let p = s
            .list(
                &Filter::default(),
                Sort {
                    column: SortColumn::Found,
                    descending: true,
                },
                &PageRequest {
                    limit: 7,
                    after: after.clone(),
                    with_total: false,
                },
            )
            .unwrap();
        seen.extend(p.rows.iter().map(|r| r.reference.clone()));
        match p.next {
            Some(n) => after = Some(n),
            None => break,
        }
    }
    assert_eq!(seen.len(), 25);
    let mut sorted = seen.clone();
    sorted.sort();
    sorted.reverse();
    assert_eq!(seen, sorted);

    // stress sort: with stress first (ascending), then those without
    let mut got = Vec::new();
    let mut after = None;
    loop {
        let p = s
            .list(
                &Filter::default(),
                Sort {
                    column: SortColumn::Stress,
                    descending: false,
                },
                &PageRequest {
                    limit: 4,
                    after: after.clone(),
                    with_total: false,
                },
            )
            .unwrap();
        got.extend(p.rows.iter().map(|r| r.stress_mpa));
        match p.next {
            Some(n) => after = Some(n),
            None => break,
        }
    }
    assert_eq!(got.len(), 25);
    let with: Vec<f64> = got.iter().flatten().copied().collect();
    assert_eq!(with.len(), 18);
    assert!(with.windows(2).all(|w| w[0] <= w[1]));
    assert!(got[18..].iter().all(Option::is_none));

    let f = Filter {
        supplier: Some("BRELLIN".into()),
        ..Filter::default()
    };
    let p = s
        .list(&f, Sort::default(), &PageRequest::default())
        .unwrap();
    assert_eq!(p.total, Some(5));
    assert!(p
        .rows
        .iter()
        .all(|r| r.supplier.as_deref() == Some("BRELLIN")));
    let f = Filter {
        lot: Some("B-07".into()),
        status: Some("closed".into()),
        ..Filter::default()
    };
    assert_eq!(
        s.list(&f, Sort::default(), &PageRequest::default())
            .unwrap()
            .total,
        Some(5)
    );
    let f = Filter {
        text: Some("stone".into()),
        ..Filter::default()
    };
    assert_eq!(
        s.list(&f, Sort::default(), &PageRequest::default())
            .unwrap()
            .total,
        Some(5)
    );
    // SQL or FTS syntax in the search text is just text
    let f = Filter {
        text: Some("\" OR 1=1; DROP TABLE incidents; --".into()),
        ..Filter::default()
    };
    assert_eq!(
        s.list(&f, Sort::default(), &PageRequest::default())
            .unwrap()
            .total,
        Some(0)
    );
    let f = Filter {
        since: Some(day(2026, 2, 1)),
        until: Some(day(2026, 2, 28)),
        ..Filter::default()
    };
    let p = s
        .list(&f, Sort::default(), &PageRequest::default())
        .unwrap();
    assert!(p
        .rows
        .iter()
        .all(|r| r.occurred >= day(2026, 2, 1) && r.occurred <= day(2026, 2, 28)));
    // found every third day from 1 January: 3, 6, ... 27 February
    assert_eq!(p.total, Some(9));

    let fleet = s.fleet_rows(&Filter::default()).unwrap();
    assert_eq!(fleet.len(), 25);
    assert_eq!(fleet.iter().filter(|r| r.has_stress).count(), 18);
    assert!(fleet
        .iter()
        .all(|r| r.temper.as_deref() == Some("annealed")));
    // codes are looked up in memory now (no joins): they must agree with the log's join
    let log = s
        .list(
            &Filter::default(),
            Sort::default(),
            &PageRequest {
                limit: 1000,
                after: None,
                with_total: false,
            },
        )
        .unwrap();
    assert_eq!(log.rows.len(), fleet.len());
    for r in &fleet {
        let l = log.rows.iter().find(|l| l.id == r.id).unwrap();
        assert_eq!(l.reference, r.reference);
        assert_eq!(l.supplier, r.supplier, "{}", r.reference);
        assert_eq!(l.product, r.product, "{}", r.reference);
        assert_eq!(l.lot, r.lot, "{}", r.reference);
        assert_eq!(l.site, r.site, "{}", r.reference);
        assert_eq!(l.occurred, r.found_on, "{}", r.reference);
    }
    assert!(fleet
        .iter()
        .any(|r| r.supplier.is_some() && r.lot.is_some()));
}

#[test]
fn file_database_settings_and_refusals() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    assert!(matches!(
        Store::open_existing(&path),
        Err(StoreError::Missing { .. })
    ));
    {
        let mut s = Store::open(&path).unwrap();
        s.create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
            .unwrap();
    }
    let conn = rusqlite::Connection::open(&path).unwrap();
    let mode: String = conn
        .query_row("PRAGMA journal_mode", [], |r| r.get(0))
        .unwrap();
    assert_eq!(mode, "wal");
    let app: i64 = conn
        .query_row("PRAGMA application_id", [], |r| r.get(0))
        .unwrap();
    assert_eq!(app, APPLICATION_ID);
    drop(conn);
    let s = Store::open_existing(&path).unwrap();
    assert_eq!(s.incident_count().unwrap(), 1);
    drop(s);

    // a file that is not ours is left untouched
    let other = dir.path().join("other.db");
    {
        let c = rusqlite::Connection::open(&other).unwrap();
        c.execute_batch("CREATE TABLE t (x INTEGER); INSERT INTO t VALUES (1);")
            .unwrap();
    }
    let before = std::fs::read(&other).unwrap();
    assert!(matches!(
        Store::open(&other),
        Err(StoreError::NotOurs { .. })
    ));
    assert_eq!(std::fs::read(&other).unwrap(), before);

    let text = dir.path().join("notes.txt");
    std::fs::write(&text, "hello, not a database at all, just some text ......").unwrap();
    assert!(matches!(
        Store::open(&text),
        Err(StoreError::NotOurs { .. })
    ));
    assert_eq!(
        std::fs::read_to_string(&text).unwrap(),
        "hello, not a database at all, just some text ......"
    );

    // a newer schema is refused untouched
    let newer = dir.path().join("newer.db");
    drop(Store::open(&newer).unwrap());
    {
        let c = rusqlite::Connection::open(&newer).unwrap();
        c.execute_batch("PRAGMA user_version = 99").unwrap();
    }
    let before = std::fs::read(&newer).unwrap();
    match Store::open(&newer) {
        Err(StoreError::TooNew { found, .. }) => assert_eq!(found, 99),
        other => panic!("expected TooNew, got {:?}", other.err()),
    }
    assert_eq!(std::fs::read(&newer).unwrap(), before);
}

#[test]
fn attachments_are_copied_by_hash_owner_only() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    let mut s = Store::open(&path).unwrap();
    let a = s
        .create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
        .unwrap();
    let photo = dir.path().join("origin.png");
    std::fs::write(&photo, b"\x89PNG\r\n\x1a\nnot really").unwrap();
    let b = s
        .add_attachment(
            &a.reference,
            &photo,
            "origin, 10x",
            &stamp("2026-03-14T10:00:00Z"),
        )
        .unwrap();
    let att = &b.attachments[0];
    assert_eq!(att.media_type, "image/png");
    assert_eq!(att.file_name, "origin.png");
    let stored = s.attachment_path(&att.sha256).unwrap();
    assert_eq!(
        std::fs::read(&stored).unwrap(),
        std::fs::read(&photo).unwrap()
    );
    assert_eq!(
        stored.parent().unwrap().file_name().unwrap(),
        "bench.db.files"
    );
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(&stored).unwrap().permissions().mode();
        assert_eq!(mode & 0o077, 0, "attachment readable by others: {mode:o}");
    }
    // removing the outside file changes nothing
    std::fs::remove_file(&photo).unwrap();
    assert!(s.attachment_path(&att.sha256).is_some());
    assert!(s.verify().unwrap().ok());
}

#[test]
fn ids_are_deterministic_with_a_seed() {
    let make = || {
        let mut s = Store::open_in_memory().unwrap();
        s.set_id_seed(42);
        s.create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T09:10:00Z"))
            .unwrap()
    };
    assert_eq!(make(), make());
    let _ = Utc.timestamp_opt(0, 0);
}

/// A bundle's head and the incidents it vouches for come from one moment: inside
/// `consistent_read` a write by another connection is not seen, after it it is.
#[test]
fn a_consistent_read_does_not_see_a_write_made_during_it() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("snap.db");
    let mut writer = Store::open(&path).unwrap();
    writer
        .create_incident(&sample(day(2026, 3, 14)), &stamp("2026-03-14T10:00:00Z"))
        .unwrap();
    let reader = Store::open_existing(&path).unwrap();
    let (before, after_inside) = reader
        .consistent_read(|r| -> Result<_, StoreError> {
            let before = r.audit_head_entry()?;
            writer.create_incident(&sample(day(2026, 3, 15)), &stamp("2026-03-15T10:00:00Z"))?;
            Ok((before, r.audit_head_entry()?))
        })
        .unwrap();
    assert_eq!(before, after_inside, "a write leaked into the snapshot");
    let outside = reader.audit_head_entry().unwrap();
    assert!(outside.0 > before.0, "the write is seen once the read ends");
}
