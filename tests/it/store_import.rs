//! Import and export: round trips, all-or-nothing, dry run, strict mode and a corpus of
//! bad files (each gives a clear problem or is stored verbatim, never panics, never
//! half-writes).

use std::path::{Path, PathBuf};

use chrono::{DateTime, Utc};
use shardlog::demo::{generate, DemoOptions};
use shardlog::store::exchange::{ImportOptions, CSV_COLUMNS};
use shardlog::store::*;

fn stamp() -> Stamp {
    Stamp::new(
        "importer",
        DateTime::parse_from_rfc3339("2026-11-02T08:00:00Z")
            .unwrap()
            .with_timezone(&Utc),
    )
}

fn demo_db(dir: &Path, n: u64) -> PathBuf {
    let path = dir.join("demo.db");
    generate(
        &path,
        &DemoOptions {
            incidents: n,
            seed: 7,
        },
    )
    .unwrap();
    path
}

#[test]
fn json_round_trip_is_identical() {
    let dir = tempfile::tempdir().unwrap();
    let src_path = demo_db(dir.path(), 80);
    let src = Store::open_existing(&src_path).unwrap();
    let first = src.export_json(&Filter::default()).unwrap();
    assert!(first.contains("\"readings\""));
    assert!(first.contains("\"custody\""));
    assert!(first.contains("\"sha256\""));
    let mut dst = Store::open(&dir.path().join("copy.db")).unwrap();
    // JSON carries attachments by hash: without their files the import is refused, with
    // the source's attachment folder they are checked and copied in
    let refused = dst
        .import_bytes(
            "x.json",
            first.as_bytes(),
            ImportOptions::default(),
            &stamp(),
        )
        .unwrap()
        .unwrap_err();
    assert!(refused.to_string().contains("--attachments"), "{refused}");
    let mut src_files = src_path.as_os_str().to_os_string();
    src_files.push(".files");
    let with_files = ImportOptions {
        attachments: Some(std::path::PathBuf::from(src_files)),
        ..ImportOptions::default()
    };
    let sum = dst
        .import_bytes("x.json", first.as_bytes(), with_files, &stamp())
        .unwrap()
        .unwrap();
    assert_eq!(sum.incidents, 80);
    let second = dst.export_json(&Filter::default()).unwrap();
    assert!(first == second, "export after import differs");
    assert!(dst.verify().unwrap().ok());
    // the imported records carry the importer in their history
    let any = &dst
        .list(&Filter::default(), Sort::default(), &PageRequest::default())
        .unwrap()
        .rows[0];
    assert_eq!(dst.history(&any.reference).unwrap()[0].actor, "importer");
}

#[test]
fn csv_round_trip_is_identical_for_its_columns() {
    let dir = tempfile::tempdir().unwrap();
    let src = Store::open_existing(&demo_db(dir.path(), 80)).unwrap();
    let mut first = Vec::new();
    src.export_csv(&Filter::default(), &mut first).unwrap();
    let text = String::from_utf8(first.clone()).unwrap();
    assert_eq!(text.lines().next().unwrap(), CSV_COLUMNS.join(","));
    assert_eq!(text.lines().count(), 81);
    let mut dst = Store::open(&dir.path().join("copy.db")).unwrap();
    dst.import_bytes("x.csv", &first, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    let mut second = Vec::new();
    dst.export_csv(&Filter::default(), &mut second).unwrap();
    assert_eq!(String::from_utf8(second).unwrap(), text);
    let r = dst.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
}

/// CSV export guards text cells a spreadsheet would run as a formula with a leading
/// apostrophe (OWASP, "CSV Injection"); import takes exactly that apostrophe off again, so
/// the round trip holds. Numeric columns are never guarded: a negative stress stays a number.
#[test]
fn csv_export_guards_formulas_and_import_undoes_the_guard() {
    let dir = tempfile::tempdir().unwrap();
    let notes = [
        "=HYPERLINK(\"http://example.invalid/x\",\"open\")",
        "+1",
        "-x",
        "@SUM(A1:A9)",
        "\tindented",
        "'=already guarded by hand",
        "''+two apostrophes",
        "'plain apostrophe",
        "it's fine",
        "-",
        "=",
    ];
    let mut csv = String::from(
        "ref,found_on,asset,position,description,notes,analyst,origin_type,stress_mpa,applied_stress_mpa,cause\n",
    );
    for (i, n) in notes.iter().enumerate() {
        // the file is written as export writes it (the text guarded); the asset, position
        // and analyst cells are left bare: a bare formula is stored verbatim
        let guarded = shardlog::store::exchange::csv_guard("notes", n);
        let quoted = format!("\"{}\"", guarded.replace('"', "\"\""));
        csv.push_str(&format!(
            "R-{i},2026-03-{:02},=car {i},@bay {i},{quoted},{quoted},-mira,edge_chip,{},-12.5,thermal\n",
            i + 1,
            20 + i
        ));
    }
    let mut src = Store::open(&dir.path().join("src.db")).unwrap();
    src.import_bytes("in.csv", csv.as_bytes(), ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    // stored verbatim
    for (i, n) in notes.iter().enumerate() {
        let inc = src.get(&format!("R-{i}")).unwrap();
        assert_eq!(inc.notes, *n);
        assert_eq!(inc.description, *n);
        assert_eq!(inc.asset.as_deref(), Some(format!("=car {i}").as_str()));
        assert_eq!(inc.position, format!("@bay {i}"));
    }
    let mut first = Vec::new();
    src.export_csv(&Filter::default(), &mut first).unwrap();
    let text = String::from_utf8(first.clone()).unwrap();
    let col = |name: &str| CSV_COLUMNS.iter().position(|c| *c == name).unwrap();
    let rows: Vec<Vec<String>> = text.lines().skip(1).map(split_simple_csv).collect();
    assert_eq!(rows.len(), notes.len());
    for r in &rows {
        let i: usize = r[col("ref")].trim_start_matches("R-").parse().unwrap();
        // text cells: guarded exactly when they start (behind any apostrophes) with = + - @ tab
        let expected = match notes[i] {
            "'plain apostrophe" | "it's fine" => notes[i].to_string(),
            n => format!("'{n}"),
        };
        assert_eq!(r[col("notes")], expected, "notes of R-{i}");
        assert_eq!(r[col("description")], expected);
        assert_eq!(r[col("asset")], format!("'=car {i}"));
        assert_eq!(r[col("position")], format!("'@bay {i}"));
        assert_eq!(r[col("analyst")], "'-mira");
        // no cell a spreadsheet would run is left
        for (k, cell) in r.iter().enumerate() {
            if cell.starts_with(['=', '+', '@', '\t', '\r']) || cell.starts_with('-') {
                assert!(
                    ["stress_mpa", "applied_stress_mpa"].contains(&CSV_COLUMNS[k]),
                    "column {} = {cell:?}",
                    CSV_COLUMNS[k]
                );
            }
        }
        // numbers stay numbers, the negative one too
        assert_eq!(r[col("applied_stress_mpa")], "-12.5");
        assert_eq!(r[col("applied_stress_mpa")].parse::<f64>().unwrap(), -12.5);
        assert_eq!(r[col("stress_mpa")], (20 + i).to_string());
    }
    // import undoes exactly the guard: same records, same export
    let mut dst = Store::open(&dir.path().join("dst.db")).unwrap();
    dst.import_bytes("x.csv", &first, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    for (i, n) in notes.iter().enumerate() {
        let inc = dst.get(&format!("R-{i}")).unwrap();
        assert_eq!(inc.notes, *n, "R-{i}");
        assert_eq!(inc.description, *n);
        assert_eq!(inc.asset.as_deref(), Some(format!("=car {i}").as_str()));
        assert_eq!(inc.position, format!("@bay {i}"));
        assert_eq!(inc.examinations[0].analyst, "-mira");
        let r = inc.current_result().unwrap().1;
        assert_eq!(r.applied_stress_pa, Some(-12.5e6));
    }
    let mut second = Vec::new();
    dst.export_csv(&Filter::default(), &mut second).unwrap();
    assert_eq!(String::from_utf8(second).unwrap(), text);
    let r = dst.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
}

/// Split one CSV line (quoted fields without newlines) for the test above.
fn split_simple_csv(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (quoted, c) {
            (true, '"') if chars.peek() == Some(&'"') => {
                chars.next();
                field.push('"');
            }
            (true, '"') => quoted = false,
            (false, '"') if field.is_empty() => quoted = true,
            (false, ',') => out.push(std::mem::take(&mut field)),
            (_, c) => field.push(c),
        }
    }
    out.push(field);
    out
}

#[test]
fn filtered_export_keeps_only_matching_incidents() {
    let dir = tempfile::tempdir().unwrap();
    let src = Store::open_existing(&demo_db(dir.path(), 120)).unwrap();
    let f = Filter {
        supplier: Some("BRELLIN".into()),
        ..Filter::default()
    };
    let doc = src.export_doc(&f).unwrap();
    assert!(!doc.incidents.is_empty());
    assert!(doc
        .incidents
        .iter()
        .all(|i| i.glass.supplier.as_deref() == Some("BRELLIN")));
}

const GOOD_HEADER: &str = "ref,found_on,supplier,product,lot,status,mirror_mist,stress_mpa,notes";

fn csv(lines: &[&str]) -> Vec<u8> {
    let mut s = String::new();
    for l in lines {
        s.push_str(l);
        s.push('\n');
    }
    s.into_bytes()
}

/// The bad-input corpus: (name, bytes). Each must be refused with at least one problem.
fn bad_corpus() -> Vec<(String, Vec<u8>)> {
    let mut c: Vec<(String, Vec<u8>)> = Vec::new();
    let mut add = |name: &str, bytes: Vec<u8>| c.push((name.to_string(), bytes));
    add("empty.csv", Vec::new());
    add("empty.json", Vec::new());
    add("only-spaces.csv", b"   \n  \n".to_vec());
    add(
        "unknown-column.csv",
        csv(&["found_on,colour", "2026-03-14,blue"]),
    );
    add("no-found-on.csv", csv(&["ref,supplier", "X,ORVALE"]));
    add(
        "duplicate-column.csv",
        csv(&["found_on,found_on", "2026-03-14,2026-03-14"]),
    );
    add("too-few-fields.csv", csv(&[GOOD_HEADER, "R1,2026-03-14"]));
    add(
        "too-many-fields.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,a,b,c,reported,1 mm,20,x,extra"]),
    );
    add(
        "bad-date.csv",
        csv(&[GOOD_HEADER, "R1,14/03/2026,,,,reported,,,"]),
    );
    add(
        "impossible-date.csv",
        csv(&[GOOD_HEADER, "R1,2026-02-30,,,,reported,,,"]),
    );
    add("empty-date.csv", csv(&[GOOD_HEADER, "R1,,,,,reported,,,"]));
    add(
        "non-numeric-reading.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,abc mm,,"]),
    );
    add(
        "unknown-unit.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,1.2 furlong,,"]),
    );
    add(
        "reading-without-unit.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,1.2,,"]),
    );
    add(
        "decimal-comma.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,\"1,2 mm\",,"]),
    );
    add(
        "negative-reading.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,-1 mm,,"]),
    );
    add(
        "huge-number.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,1e400 mm,,"]),
    );
    add(
        "huge-stress.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,1 mm,1e300,"]),
    );
    add(
        "nan-stress.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,1 mm,NaN,"]),
    );
    add(
        "unknown-status.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,shattered,,,"]),
    );
    add(
        "product-without-supplier.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,SW6-FT,,reported,,,"]),
    );
    add(
        "duplicate-refs.csv",
        csv(&[
            GOOD_HEADER,
            "R1,2026-03-14,,,,reported,,,",
            "R1,2026-03-15,,,,reported,,,",
        ]),
    );
    add(
        "unclosed-quote.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,,,\"never closed"]),
    );
    add(
        "stray-quote.csv",
        csv(&[GOOD_HEADER, "R1,2026-03-14,,,,rep\"orted,,,"]),
    );
    add("non-utf8.csv", {
        let mut b = csv(&[GOOD_HEADER]);
        b.extend_from_slice(b"R1,2026-03-14,,,,reported,,,caf\xe9\n");
        b
    });
    add("binary.json", vec![0xff, 0xfe, 0x00, 0x7b, 0x00]);
    add(
        "truncated.json",
        br#"{"format":"shardlog-export","version":1,"incidents":[{"id":"#.to_vec(),
    );
    add("not-json.json", b"this is not json".to_vec());
    add(
        "wrong-format.json",
        br#"{"format":"other-tool","version":1}"#.to_vec(),
    );
    add(
        "wrong-version.json",
        br#"{"format":"shardlog-export","version":9}"#.to_vec(),
    );
    add(
        "unknown-section.json",
        br#"{"format":"shardlog-export","version":1,"gremlins":[]}"#.to_vec(),
    );
    add("scalar.json", b"42".to_vec());
    add(
        "incidents-not-array.json",
        br#"{"format":"shardlog-export","version":1,"incidents":{}}"#.to_vec(),
    );
    add(
        "missing-found-on.json",
        br#"[{"status":"reported"}]"#.to_vec(),
    );
    add("wrong-type.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":7}]"#.to_vec());
    add("bad-uuid.json", br#"[{"id":"not-a-uuid","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":"reported"}]"#.to_vec());
    add("reading-si-mismatch.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":"reported","examinations":[{"id":"","examined_on":null,"origin_type":null,"material":null,"flaw":null,"result":null,"readings":[{"boundary":"mirror_mist","radius":{"text":"1","unit":"mm","si":5.0},"magnification":null}]}]}]"#.to_vec());
    add("unknown-boundary.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":"reported","examinations":[{"id":"","examined_on":null,"origin_type":null,"material":null,"flaw":null,"result":null,"readings":[{"boundary":"rim","radius":{"text":"1","unit":"mm","si":0.001},"magnification":null}]}]}]"#.to_vec());
    add("broken-after-found.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","broken_on":"2026-04-01","status":"reported"}]"#.to_vec());
    add("bad-attachment-hash.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":"reported","attachments":[{"id":"","sha256":"abc","file_name":"x.png","media_type":"image/png","size_bytes":3,"added_at":"2026-01-01T00:00:00Z"}]}]"#.to_vec());
    add("custody-without-who.json", br#"[{"id":"","reference":"","revision":0,"created_at":"2026-01-01T00:00:00Z","updated_at":"2026-01-01T00:00:00Z","found_on":"2026-03-14","status":"reported","custody":[{"id":"","at":"2026-03-14T10:00:00Z","action":"received","who":" "}]}]"#.to_vec());
    add("negative-exposure.json", br#"{"format":"shardlog-export","version":1,"exposure":[{"id":"","supplier":"X","product":null,"lot":null,"site":null,"installed_on":"2024-01-01","removed_on":null,"panes":-5}]}"#.to_vec());
    add("deep-nesting.json", {
        let mut s = String::new();
        for _ in 0..5000 {
            s.push('[');
        }
        s.into_bytes()
    });
    c
}

fn file_bytes(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap()
}

#[test]
fn bad_corpus_is_refused_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    {
        let mut s = Store::open(&path).unwrap();
        let mut inc = Incident::draft(chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap());
        inc.reference = String::new();
        s.create_incident(&inc, &stamp()).unwrap();
    }
    let before = file_bytes(&path);
    let corpus = bad_corpus();
    assert!(corpus.len() >= 30, "corpus has {} files", corpus.len());
    // also keep the corpus on disk for people to try with the command line
    let corpus_dir = dir.path().join("import-bad");
    std::fs::create_dir_all(&corpus_dir).unwrap();
    for (name, bytes) in &corpus {
        std::fs::write(corpus_dir.join(name), bytes).unwrap();
        let mut s = Store::open_existing(&path).unwrap();
        let got = s
            .import_bytes(name, bytes, ImportOptions::default(), &stamp())
            .unwrap_or_else(|e| panic!("{name}: store error {e}"));
        match got {
            Ok(sum) => panic!("{name}: was accepted ({sum:?})"),
            Err(rej) => {
                assert!(!rej.problems.is_empty(), "{name}: no problems listed");
                for p in &rej.problems {
                    assert!(
                        !p.place.is_empty() && !p.message.is_empty(),
                        "{name}: {p:?}"
                    );
                }
            }
        }
        drop(s);
        assert_eq!(file_bytes(&path), before, "{name}: the database changed");
    }
}

#[test]
fn problems_name_line_and_field() {
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[
        GOOD_HEADER,
        "R1,2026-03-14,,,,reported,1.2 mm,18.5,",
        "R2,2026-03-15,,,,reported,abc mm,,",
        "R3,2026-13-01,,,,reported,,,",
    ]);
    let rej = s
        .import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap_err();
    let all: Vec<String> = rej.problems.iter().map(|p| p.to_string()).collect();
    assert_eq!(all.len(), 2, "{all:?}");
    assert!(all[0].starts_with("line 3, column mirror_mist"), "{all:?}");
    assert!(all[1].starts_with("line 4, column found_on"), "{all:?}");
    assert_eq!(s.incident_count().unwrap(), 0);
}

#[test]
fn problems_after_a_multi_line_cell_name_the_physical_line() {
    // the first record spans lines 2 to 4 (a quoted cell with two newlines), line 5 is
    // blank, and the bad record (an unknown status, found when the incident is checked)
    // starts on line 6 of the file
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[
        GOOD_HEADER,
        "R1,2026-03-14,,,,reported,,,\"first line",
        "second line",
        "third line\"",
        "",
        "R2,2026-03-15,,,,no_such_status,,,",
    ]);
    let rej = s
        .import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap_err();
    let all: Vec<String> = rej.problems.iter().map(|p| p.to_string()).collect();
    assert_eq!(all.len(), 1, "{all:?}");
    assert!(all[0].starts_with("line 6, column status: "), "{all:?}");
    assert_eq!(s.incident_count().unwrap(), 0);
}

#[test]
fn odd_but_valid_text_is_stored_verbatim() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = Store::open(&dir.path().join("t.db")).unwrap();
    let sql = "Robert'); DROP TABLE incidents; -- \" OR 1=1";
    let big_note = "x".repeat(10 * 1024 * 1024);
    let odd = "ünïcødé ✓ \u{202e}reversed\u{202c} tab\there";
    let bytes = csv(&[
        GOOD_HEADER,
        &format!(
            "R1,2026-03-14,,,,reported,,,\"{}\"",
            sql.replace('"', "\"\"")
        ),
        &format!("R2,2026-03-14,,,,reported,,,{big_note}"),
        &format!("R3,2026-03-14,,,,reported,,,{odd}"),
        "R4,2026-03-14,,,,reported,850 um; 0.9 mm,,\"multi\nline\"",
    ]);
    let sum = s
        .import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    assert_eq!(sum.incidents, 4);
    assert_eq!(s.get("R1").unwrap().notes, sql);
    assert_eq!(s.get("R2").unwrap().notes.len(), big_note.len());
    assert_eq!(s.get("R3").unwrap().notes, odd);
    let r4 = s.get("R4").unwrap();
    assert_eq!(r4.notes, "multi\nline");
    let texts: Vec<String> = r4.examinations[0]
        .readings
        .iter()
        .map(|r| r.radius.display())
        .collect();
    assert_eq!(texts, vec!["850 um", "0.9 mm"]);
    assert_eq!(s.incident_count().unwrap(), 4);
    assert!(s.verify().unwrap().ok());
}

#[test]
fn duplicate_of_an_existing_reference_is_refused() {
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[GOOD_HEADER, "R1,2026-03-14,,,,reported,,,"]);
    s.import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    let rej = s
        .import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap_err();
    assert!(rej.problems[0].message.contains("already in the database"));
    assert_eq!(s.incident_count().unwrap(), 1);
}

#[test]
fn dry_run_and_strict_mode() {
    let mut s = Store::open_in_memory().unwrap();
    let bytes = csv(&[GOOD_HEADER, "R1,2026-03-14,NEWCO,P1,L1,reported,1.1 mm,,"]);
    let strict = ImportOptions {
        strict: true,
        ..ImportOptions::default()
    };
    let rej = s
        .import_bytes("x.csv", &bytes, strict, &stamp())
        .unwrap()
        .unwrap_err();
    assert!(
        rej.problems[0].message.contains("unknown supplier"),
        "{rej}"
    );
    let dry = ImportOptions {
        dry_run: true,
        ..ImportOptions::default()
    };
    let head = s.audit_head().unwrap();
    let sum = s
        .import_bytes("x.csv", &bytes, dry, &stamp())
        .unwrap()
        .unwrap();
    assert!(sum.dry_run);
    assert_eq!(sum.incidents, 1);
    assert_eq!(s.incident_count().unwrap(), 0);
    assert!(s.suppliers().unwrap().is_empty());
    assert_eq!(s.audit_head().unwrap(), head);
    // lenient mode creates the supplier, product and lot
    s.import_bytes("x.csv", &bytes, ImportOptions::default(), &stamp())
        .unwrap()
        .unwrap();
    assert_eq!(s.lots(Some("NEWCO"), Some("P1")).unwrap()[0].code, "L1");
}
