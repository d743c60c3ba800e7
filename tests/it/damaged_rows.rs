//! A child row that cannot be read (an examination's date that is not one, a reading whose
//! text is not UTF-8, a custody entry's time) makes its incident damaged, named by table, row and
//! field; `verify`, `list`, `show`, `export` and reports go on with the others.

use std::path::PathBuf;

use shardlog::store::*;

use crate::witness::{incident, run, stamp};

struct Damaged {
    _dir: tempfile::TempDir,
    db: PathBuf,
    keys: PathBuf,
    refs: Vec<String>,
    exam_id: String,
}

/// Four incidents; the second's examination date, the third's first reading text and the
/// fourth's custody entry time damaged with plain SQL (as an older build or another tool could).
fn damaged() -> Damaged {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.db");
    let keys = dir.path().join("keys");
    let mut s = Store::open(&db).unwrap();
    let refs: Vec<String> = (1..=4)
        .map(|d| {
            let mut inc = incident(d);
            inc.custody.push(CustodyEntry {
                id: String::new(),
                at: stamp("2026-05-19T08:00:00Z").at,
                action: "received".into(),
                who: "ines".into(),
                location: "bench 2".into(),
                note: String::new(),
            });
            s.create_incident(&inc, &stamp("2026-05-20T10:00:00Z"))
                .unwrap()
                .reference
        })
        .collect();
    let exam_id = s.get(&refs[1]).unwrap().examinations[0].id.clone();
    drop(s);
    let c = rusqlite::Connection::open(&db).unwrap();
    let exam_of = |r: &str| -> String {
        c.query_row(
            "SELECT e.id FROM examinations e JOIN incidents i ON i.id = e.incident_id WHERE i.reference = ?1",
            [r],
            |row| row.get(0),
        )
        .unwrap()
    };
    let third = exam_of(&refs[2]);
    c.execute(
        "UPDATE examinations SET examined_on = '2026-13-45' WHERE id = ?1",
        [&exam_id],
    )
    .unwrap();
    c.execute(
        "UPDATE mirror_readings SET value_text = CAST(x'c328' AS TEXT) WHERE examination_id = ?1 AND reading_no = 1",
        [&third],
    )
    .unwrap();
    c.execute(
        "UPDATE custody SET at = 'noon' WHERE incident_id = (SELECT id FROM incidents WHERE reference = ?1)",
        [&refs[3]],
    )
    .unwrap();
    Damaged {
        _dir: dir,
        db,
        keys,
        refs,
        exam_id,
    }
}

#[test]
fn verify_names_each_damaged_child_row_and_checks_the_rest() {
    let d = damaged();
    let (code, out) = run(&d.db, &d.keys, &["verify", "--json"]);
    assert_eq!(code, 1, "{out}");
    let report: serde_json::Value =
        serde_json::from_str(&out[..out.rfind('}').unwrap() + 1]).unwrap();
    let text = report.to_string();
    for needle in [
        format!(
            "incident {}: damaged, its row cannot be read (table examinations, id {}, field examined_on: not a date: 2026-13-45)",
            d.refs[1], d.exam_id
        ),
        format!("incident {}: damaged", d.refs[2]),
        "table mirror_readings".to_string(),
        "reading 1, field value_text: not UTF-8 text".to_string(),
        format!("incident {}: damaged", d.refs[3]),
        "table custody, id ".to_string(),
        "field at: not a time: noon".to_string(),
    ] {
        assert!(text.contains(&needle), "{needle} not in {text}");
    }
    // each damaged incident once, and none of them also called missing
    assert_eq!(report["damaged"].as_array().unwrap().len(), 3, "{report}");
    assert!(!text.contains("missing from the records"), "{text}");
    // the undamaged incident and the reference data were checked
    assert!(report["records_checked"].as_u64().unwrap() >= 1, "{report}");
    // the text report lists every damaged row
    let (code, out) = run(&d.db, &d.keys, &["verify"]);
    assert_eq!(code, 1, "{out}");
    assert_eq!(out.matches("DAMAGED: incident").count(), 3, "{out}");
}

#[test]
fn list_show_export_and_report_go_on_past_a_damaged_child_row() {
    let d = damaged();
    let (code, out) = run(&d.db, &d.keys, &["list", "--all"]);
    assert_eq!(code, 0, "{out}");
    for r in &d.refs {
        assert!(out.contains(r.as_str()), "{r} not listed: {out}");
    }
    let (code, out) = run(&d.db, &d.keys, &["show", &d.refs[0]]);
    assert_eq!(code, 0, "{out}");
    let (code, out) = run(&d.db, &d.keys, &["show", &d.refs[1]]);
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains(&format!(
            "table examinations, id {}, field examined_on",
            d.exam_id
        )),
        "{out}"
    );
    let (code, out) = run(&d.db, &d.keys, &["report", &d.refs[0], "--format", "md"]);
    assert_eq!(code, 0, "{out}");
    assert!(out.contains(d.refs[0].as_str()), "{out}");
    for format in ["json", "csv"] {
        let (code, out) = run(&d.db, &d.keys, &["export", "--format", format]);
        assert_eq!(code, 1, "{format}: {out}");
        assert!(out.contains(d.refs[0].as_str()), "{format}: {out}");
        assert!(
            out.contains("3 damaged incidents left out of the export"),
            "{format}: {out}"
        );
        assert!(out.contains("field examined_on"), "{format}: {out}");
    }
}
