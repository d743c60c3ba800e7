//! What import lets in: dates within the documented range, results that follow from their
//! readings, attachments whose files come with them, keys and references that cannot pose as
//! new records, JSON without repeated keys, creation times not in the future.

use std::path::{Path, PathBuf};

use chrono::{DateTime, Utc};
use serde_json::{json, Value};
use shardlog::demo::{generate, DemoOptions};
use shardlog::store::exchange::{ImportOptions, ImportRejected, ImportSummary};
use shardlog::store::*;

fn stamp() -> Stamp {
    Stamp::new(
        "importer",
        DateTime::parse_from_rfc3339("2026-11-02T08:00:00Z")
            .unwrap()
            .with_timezone(&Utc),
    )
}

/// A demo database of `n` incidents and its JSON export.
fn demo_export(dir: &Path, n: u64) -> (PathBuf, Value) {
    let path = dir.join("demo.db");
    generate(
        &path,
        &DemoOptions {
            incidents: n,
            seed: 7,
        },
    )
    .unwrap();
    let text = Store::open_existing(&path)
        .unwrap()
        .export_json(&Filter::default())
        .unwrap();
    (path, serde_json::from_str(&text).unwrap())
}

/// The export without any attachment rows (for the checks that are not about them).
fn without_attachments(mut doc: Value) -> Value {
    for inc in doc["incidents"].as_array_mut().unwrap() {
        inc["attachments"] = json!([]);
    }
    doc
}

fn import(s: &mut Store, doc: &Value) -> Result<ImportSummary, ImportRejected> {
    import_with(s, doc, ImportOptions::default())
}

fn import_with(
    s: &mut Store,
    doc: &Value,
    options: ImportOptions,
) -> Result<ImportSummary, ImportRejected> {
    let bytes = serde_json::to_vec_pretty(doc).unwrap();
    s.import_bytes("x.json", &bytes, options, &stamp()).unwrap()
}

/// A document of one incident with its children's keys blank (they would clash by
/// themselves), so that only the incident's own key or reference decides.
fn one_again(inc: &Value) -> Value {
    let mut inc = inc.clone();
    for list in ["examinations", "custody", "attachments"] {
        for child in inc[list].as_array_mut().unwrap() {
            child["id"] = json!("");
        }
    }
    json!({"format": "shardlog-export", "version": 1, "incidents": [inc]})
}

fn all_messages(rej: &ImportRejected) -> String {
    rej.to_string()
}

/// The first incident that has an examination with a stored result, by index.
fn examined(doc: &Value) -> usize {
    doc["incidents"]
        .as_array()
        .unwrap()
        .iter()
        .position(|i| {
            i["examinations"]
                .as_array()
                .unwrap()
                .iter()
                .any(|e| !e["result"].is_null() && !e["readings"].as_array().unwrap().is_empty())
        })
        .expect("the demo has an examined incident")
}

#[test]
fn dates_outside_the_documented_range_are_refused_with_the_range() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 6);
    let doc = without_attachments(doc);
    let k = examined(&doc);
    for (field, value) in [
        ("found_on", "+10000-01-01"),
        ("found_on", "-0044-03-15"),
        ("found_on", "1899-12-31"),
        ("found_on", "2200-01-01"),
        ("broken_on", "0001-01-01"),
        ("examined_on", "+10000-01-01"),
    ] {
        let mut bad = doc.clone();
        if field == "examined_on" {
            bad["incidents"][k]["examinations"][0]["examined_on"] = json!(value);
        } else {
            bad["incidents"][k][field] = json!(value);
        }
        let mut s = Store::open_in_memory().unwrap();
        let rej = import(&mut s, &bad).expect_err(&format!("{field} {value} was accepted"));
        let text = all_messages(&rej);
        assert!(
            text.contains(field) && text.contains("1900") && text.contains("2199"),
            "{field} {value}: {text}"
        );
        assert_eq!(s.incident_count().unwrap(), 0);
    }
    // the edges of the range are accepted
    let mut edge = doc.clone();
    edge["incidents"][k]["found_on"] = json!("2199-12-31");
    edge["incidents"][k]["broken_on"] = json!("1900-01-01");
    let mut s = Store::open_in_memory().unwrap();
    import(&mut s, &edge).unwrap();
}

#[test]
fn an_out_of_range_date_through_the_command_line_never_locks_the_records() {
    let dir = tempfile::tempdir().unwrap();
    let (db, doc) = demo_export(dir.path(), 4);
    let mut bad = without_attachments(doc);
    let incs = bad["incidents"].as_array_mut().unwrap();
    incs.truncate(1);
    incs[0]["id"] = json!("");
    incs[0]["reference"] = json!("");
    incs[0]["found_on"] = json!("+10000-01-01");
    let file = dir.path().join("bad.json");
    std::fs::write(&file, serde_json::to_vec(&bad).unwrap()).unwrap();
    let bin = env!("CARGO_BIN_EXE_shardlog");
    let run = |args: &[&str]| {
        std::process::Command::new(bin)
            .env("SHARDLOG_USER", "test-runner")
            .arg("--db")
            .arg(&db)
            .args(args)
            .output()
            .unwrap()
    };
    let o = run(&["import", file.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).contains("2199"));
    for args in [
        &["list"][..],
        &["export", "--format", "json"][..],
        &["export", "--format", "csv"][..],
        &["verify"][..],
    ] {
        let o = run(args);
        assert!(
            o.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
    }
}

#[test]
fn a_repeated_json_key_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 3);
    let doc = without_attachments(doc);
    let text = serde_json::to_string(&doc).unwrap();
    // "incidents" twice: the second (empty) list would silently win
    let twice = format!(
        "{},\"incidents\":[]}}",
        text.trim_end().trim_end_matches('}')
    );
    let mut s = Store::open_in_memory().unwrap();
    let rej = s
        .import_bytes(
            "x.json",
            twice.as_bytes(),
            ImportOptions::default(),
            &stamp(),
        )
        .unwrap()
        .unwrap_err();
    let msg = all_messages(&rej);
    assert!(
        msg.contains("\"incidents\"") && msg.contains("twice"),
        "{msg}"
    );
    // inside a record too
    let inner = text.replacen(
        "\"position\":",
        "\"position\":\"shadowed\",\"position\":",
        1,
    );
    let rej = s
        .import_bytes(
            "x.json",
            inner.as_bytes(),
            ImportOptions::default(),
            &stamp(),
        )
        .unwrap()
        .unwrap_err();
    let msg = all_messages(&rej);
    assert!(
        msg.contains("\"position\"") && msg.contains("twice"),
        "{msg}"
    );
    assert_eq!(s.incident_count().unwrap(), 0);
    // the same text without the repeat imports
    s.import_bytes(
        "x.json",
        text.as_bytes(),
        ImportOptions::default(),
        &stamp(),
    )
    .unwrap()
    .unwrap();
}

#[test]
fn a_uuid_in_another_spelling_is_the_same_record() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 3);
    let doc = without_attachments(doc);
    let id = doc["incidents"][0]["id"].as_str().unwrap().to_string();
    let mut s = Store::open_in_memory().unwrap();
    import(&mut s, &doc).unwrap();
    let simple = id.replace('-', "");
    for spelling in [
        id.to_uppercase(),
        format!("{{{id}}}"),
        simple.clone(),
        format!("urn:uuid:{id}"),
    ] {
        let mut again = one_again(&doc["incidents"][0]);
        again["incidents"][0]["id"] = json!(spelling);
        again["incidents"][0]["reference"] = json!("");
        let rej = import(&mut s, &again).expect_err(&format!("{spelling} imported as new"));
        assert!(
            all_messages(&rej).contains("already in the database"),
            "{spelling}: {rej}"
        );
    }
    assert_eq!(s.incident_count().unwrap(), 3);
    // a new record's key in upper case is stored in the one form
    let mut fresh = Store::open_in_memory().unwrap();
    let mut upper = one_again(&doc["incidents"][0]);
    upper["incidents"][0]["id"] = json!(simple.to_uppercase());
    import(&mut fresh, &upper).unwrap();
    assert_eq!(fresh.get(&id).unwrap().id, id);
    // and the same record in two spellings within one file is one record twice
    let mut pair = doc.clone();
    pair["incidents"][1]["id"] = json!(format!("{{{}}}", id.to_uppercase()));
    let rej = import(&mut Store::open_in_memory().unwrap(), &pair).unwrap_err();
    assert!(
        all_messages(&rej).contains("appears twice in the file"),
        "{rej}"
    );
}

#[test]
fn a_reference_differing_only_in_case_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 3);
    let doc = without_attachments(doc);
    let reference = doc["incidents"][0]["reference"]
        .as_str()
        .unwrap()
        .to_string();
    let mut s = Store::open_in_memory().unwrap();
    import(&mut s, &doc).unwrap();
    let mut again = one_again(&doc["incidents"][0]);
    again["incidents"][0]["id"] = json!("");
    again["incidents"][0]["reference"] = json!(reference.to_lowercase());
    let rej = import(&mut s, &again).expect_err("a reference in lower case was accepted");
    assert!(all_messages(&rej).contains(&reference), "{rej}");
    // and within one file
    let mut pair = doc.clone();
    pair["incidents"][1]["reference"] = json!(reference.to_lowercase());
    let mut fresh = Store::open_in_memory().unwrap();
    let rej = import(&mut fresh, &pair).expect_err("two references differing in case");
    assert!(all_messages(&rej).contains("differs only in case"), "{rej}");
}

#[test]
fn a_creation_time_in_the_future_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 3);
    let mut bad = without_attachments(doc);
    bad["incidents"][1]["created_at"] = json!("2027-01-01T00:00:00Z");
    bad["incidents"][1]["updated_at"] = json!("2027-01-01T00:00:00Z");
    let mut s = Store::open_in_memory().unwrap();
    let rej = import(&mut s, &bad).expect_err("a future created_at was accepted");
    let msg = all_messages(&rej);
    assert!(
        msg.contains("incidents[1].created_at") && msg.contains("future"),
        "{msg}"
    );
}

#[test]
fn a_stored_result_that_does_not_follow_from_its_readings_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let (_, doc) = demo_export(dir.path(), 8);
    let doc = without_attachments(doc);
    let k = examined(&doc);
    let reference = doc["incidents"][k]["reference"]
        .as_str()
        .unwrap()
        .to_string();
    let e = doc["incidents"][k]["examinations"]
        .as_array()
        .unwrap()
        .iter()
        .position(|e| !e["result"].is_null())
        .unwrap();
    let honest = doc["incidents"][k]["examinations"][e]["result"]["stress_pa"]
        .as_f64()
        .unwrap();
    let mut bad = doc.clone();
    bad["incidents"][k]["examinations"][e]["result"]["stress_pa"] = json!(999.0e6);
    let mut s = Store::open_in_memory().unwrap();
    let rej = import(&mut s, &bad).expect_err("999 MPa was accepted");
    let msg = all_messages(&rej);
    let shown = |mpa: f64| format!("{} MPa", shardlog_core::units::fmt_sig(mpa, 4));
    let (forged_text, honest_text) = (shown(999.0), shown(honest / 1e6));
    assert!(
        msg.contains(&reference) && msg.contains(&forged_text) && msg.contains(&honest_text),
        "expected {reference}, {forged_text} and {honest_text} in: {msg}"
    );
    // a changed reading with the old result: the same refusal
    let mut moved = doc.clone();
    let r = &mut moved["incidents"][k]["examinations"][e]["readings"][0]["radius"];
    let si = r["si"].as_f64().unwrap() * 4.0;
    r["si"] = json!(si);
    r["text"] = json!(format!("{}", si * 1e3));
    r["unit"] = json!("mm");
    let rej = import(&mut s, &moved).expect_err("a changed reading was accepted");
    assert!(all_messages(&rej).contains(&reference), "{rej}");
    // the honest document imports
    import(&mut s, &doc).unwrap();
}

#[test]
fn attachment_rows_need_their_files() {
    let dir = tempfile::tempdir().unwrap();
    let (db, doc) = demo_export(dir.path(), 10);
    let with_files: Vec<String> = doc["incidents"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|i| i["attachments"].as_array().unwrap().clone())
        .map(|a| a["sha256"].as_str().unwrap().to_string())
        .collect();
    assert!(!with_files.is_empty(), "the demo has attachments");
    // without the files: refused, each missing file named
    let mut s = Store::open(&dir.path().join("a.db")).unwrap();
    let rej = import(&mut s, &doc).expect_err("attachment rows without files accepted");
    let msg = all_messages(&rej);
    assert!(
        msg.contains(&with_files[0]) && msg.contains("--attachments"),
        "{msg}"
    );
    assert_eq!(s.incident_count().unwrap(), 0);
    // with the source's attachment folder: imported, files copied, verify holds
    let mut src_files = db.as_os_str().to_os_string();
    src_files.push(".files");
    let src_files = PathBuf::from(src_files);
    let with = ImportOptions {
        attachments: Some(src_files.clone()),
        ..ImportOptions::default()
    };
    import_with(&mut s, &doc, with.clone()).unwrap();
    let report = s.verify().unwrap();
    assert!(report.ok(), "{report:?}");
    // a folder where a file does not have the content its hash names: refused
    let forged = dir.path().join("forged");
    std::fs::create_dir(&forged).unwrap();
    for e in std::fs::read_dir(&src_files).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), forged.join(e.file_name())).unwrap();
    }
    std::fs::write(forged.join(&with_files[0]), b"not the photo").unwrap();
    let mut t = Store::open(&dir.path().join("b.db")).unwrap();
    let rej = import_with(
        &mut t,
        &doc,
        ImportOptions {
            attachments: Some(forged),
            ..ImportOptions::default()
        },
    )
    .expect_err("a file with other content was accepted");
    let msg = all_messages(&rej);
    assert!(
        msg.contains(&with_files[0]) && msg.contains("SHA-256"),
        "{msg}"
    );
    assert_eq!(t.incident_count().unwrap(), 0);
}

#[test]
fn one_unreadable_row_never_stops_the_others() {
    // a date the tool would refuse, put in by plain SQL (as an older build or another tool
    // could have written it); the other incidents must still be listed, exported, verified
    let dir = tempfile::tempdir().unwrap();
    let (db, doc) = demo_export(dir.path(), 6);
    let victim = doc["incidents"][2]["reference"]
        .as_str()
        .unwrap()
        .to_string();
    let others: Vec<String> = doc["incidents"]
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i["reference"].as_str().unwrap().to_string())
        .filter(|r| *r != victim)
        .collect();
    rusqlite::Connection::open(&db)
        .unwrap()
        .execute(
            "UPDATE incidents SET found_on = '10000-01-01' WHERE reference = ?1",
            [&victim],
        )
        .unwrap();
    let bin = env!("CARGO_BIN_EXE_shardlog");
    let run = |args: &[&str]| {
        std::process::Command::new(bin)
            .arg("--db")
            .arg(&db)
            .args(args)
            .output()
            .unwrap()
    };
    let text = |b: &[u8]| String::from_utf8_lossy(b).into_owned();
    let o = run(&["list", "--limit", "100"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert!(text(&o.stdout).contains("DAMAGED") && text(&o.stderr).contains(&victim));
    assert!(others.iter().all(|r| text(&o.stdout).contains(r.as_str())));
    let o = run(&["list", "--json", "--limit", "100"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    for format in ["json", "csv"] {
        let o = run(&["export", "--format", format]);
        assert_eq!(o.status.code(), Some(1), "{format}");
        assert!(text(&o.stderr).contains(&victim), "{}", text(&o.stderr));
        let out = text(&o.stdout);
        assert!(others.iter().all(|r| out.contains(r.as_str())), "{format}");
        assert!(
            !out.contains(&victim),
            "{format}: the damaged incident was exported"
        );
    }
    let o = run(&["verify", "--json"]);
    assert_eq!(o.status.code(), Some(1));
    let err = text(&o.stderr);
    assert!(err.contains(&victim) && err.contains("damaged"), "{err}");
    let report: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert!(
        report["records_checked"].as_u64().unwrap() > others.len() as u64,
        "{report}"
    );
}

mod written_records_read_back {
    use super::*;
    use chrono::{Duration, NaiveDate, TimeZone};
    use proptest::prelude::*;
    use shardlog_core::units::Dimension;

    /// Any text a person could type or paste: letters of several scripts, digits,
    /// punctuation, control characters, escape sequences, quotes and separators.
    fn text() -> impl Strategy<Value = String> {
        proptest::collection::vec(
            prop_oneof![
                proptest::char::range(' ', '~'),
                proptest::char::range('\u{0}', '\u{1f}'),
                Just('\u{1b}'),
                Just('é'),
                Just('日'),
                Just('\u{202e}'),
                Just('"'),
                Just(','),
                Just(';'),
            ],
            0..24,
        )
        .prop_map(|v| v.into_iter().collect())
    }

    /// A day within the range the store keeps (1900-01-01 to 2199-12-31).
    fn day() -> impl Strategy<Value = NaiveDate> {
        let first = NaiveDate::from_ymd_opt(1900, 1, 1).unwrap();
        let span = (NaiveDate::from_ymd_opt(2199, 12, 31).unwrap() - first).num_days();
        (0..=span).prop_map(move |d| first + Duration::days(d))
    }

    fn draft() -> impl Strategy<Value = Incident> {
        (
            (day(), proptest::option::of(0i64..20_000), text(), text()),
            (text(), text(), proptest::option::of(-60.0f64..60.0)),
            (
                proptest::option::of(0i64..1000),
                proptest::option::of(any::<bool>()),
                proptest::option::of(1u32..5000),
                day(),
            ),
            (proptest::option::of(day()), text(), 0i64..3_000_000_000),
        )
            .prop_map(
                |(
                    (found, before, position, notes),
                    (description, reporter, temperature),
                    (cracks, branching, radius_um, examined),
                    (_, who, seconds),
                )| {
                    let mut d = Incident::draft(found);
                    d.broken_on =
                        before.and_then(|n| found.checked_sub_signed(Duration::days(n % 400)));
                    d.broken_on = d.broken_on.filter(|b| chrono::Datelike::year(b) >= 1900);
                    d.position = position;
                    d.notes = notes;
                    d.description = description;
                    d.reporter = reporter;
                    d.environment.temperature_c = temperature;
                    d.pattern.crack_count = cracks;
                    d.pattern.branching = branching;
                    if let Some(r) = radius_um {
                        let mut e = Examination::empty();
                        e.examined_on = Some(examined);
                        e.readings.push(MirrorReading {
                            boundary: "mirror_mist".into(),
                            radius: Measured::parse(&format!("{r} um"), Dimension::Length).unwrap(),
                            magnification: None,
                            analyst: who.clone(),
                            note: String::new(),
                            viewing: None,
                        });
                        d.examinations.push(e);
                    }
                    if !who.trim().is_empty() {
                        d.custody.push(CustodyEntry {
                            id: String::new(),
                            at: Utc.timestamp_opt(seconds, 0).unwrap(),
                            action: "received".into(),
                            who,
                            location: String::new(),
                            note: String::new(),
                        });
                    }
                    d
                },
            )
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

        /// What the store accepts it reads back equal: by reference, in the log, and
        /// through a JSON export imported into another database.
        #[test]
        fn every_accepted_record_reads_back_equal(d in draft()) {
            let mut s = Store::open_in_memory().unwrap();
            prop_assume!(s.validate_incident(&d).is_empty());
            let saved = s.create_incident(&d, &stamp()).unwrap();
            let back = s.get(&saved.reference).unwrap();
            prop_assert_eq!(&back, &saved);
            let page = s
                .list(&Filter::default(), Sort::default(), &PageRequest::default())
                .unwrap();
            prop_assert_eq!(page.rows.len(), 1);
            prop_assert_eq!(page.rows[0].occurred, d.found_on);
            prop_assert!(page.rows[0].damaged.is_none());
            let json = s.export_json(&Filter::default()).unwrap();
            let mut t = Store::open_in_memory().unwrap();
            t.import_bytes("x.json", json.as_bytes(), ImportOptions::default(), &stamp())
                .unwrap()
                .unwrap();
            prop_assert_eq!(t.get(&saved.reference).unwrap(), saved);
            prop_assert!(s.verify().unwrap().ok());
        }
    }
}

/// The fuzz target's starting inputs for JSON import (fuzz/seeds/import_json: repeated keys,
/// years 10000 and -44 and 2200, a creation time in 2099; a braced upper-case key, which
/// is the same key and imports) go through
/// the target's own checks here too: no panic; a refusal names its problems and writes
/// nothing; an accepted file leaves a database that verifies.
#[test]
fn the_import_fuzz_seeds_pass_the_targets_checks() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/seeds/import_json");
    let mut refused = Vec::new();
    for e in std::fs::read_dir(&dir).unwrap() {
        let path = e.unwrap().path();
        let data = std::fs::read(&path).unwrap();
        let name = path.file_name().unwrap().to_string_lossy().into_owned();
        let mut s = Store::open_in_memory().unwrap();
        let head = s.audit_head().unwrap();
        let options = ImportOptions {
            dry_run: data[0] & 2 == 2,
            strict: data[0] & 1 == 1,
            ..ImportOptions::default()
        };
        match s
            .import_bytes("fuzz.json", &data[1..], options, &stamp())
            .unwrap()
        {
            Ok(_) => assert!(s.verify().unwrap().ok(), "{name}"),
            Err(rej) => {
                assert!(!rej.problems.is_empty(), "{name}");
                assert_eq!(s.audit_head().unwrap(), head, "{name}: a refusal wrote");
                refused.push(name);
            }
        }
    }
    refused.sort();
    assert_eq!(
        refused,
        [
            "created-in-future.json",
            "date-examined-2200.json",
            "date-negative-year.json",
            "date-year-10000.json",
            "dup-keys.json",
            // an attachment row whose file does not come with the file
            "one-0.json",
        ],
        "the hostile seeds are refused, the others accepted"
    );
}
