//! JSON and CSV exports carry the signed audit head, like reports and bundles: a recipient
//! checks one alone (`verify --export FILE --key FP`), the bench checks one against its
//! database (the head still in the chain, each incident as the records hold it), and
//! `import` reads both back.

use std::path::{Path, PathBuf};

use shardlog::store::*;

use crate::witness::{incident, rewrite_history, run, stamp};

struct Bench {
    dir: tempfile::TempDir,
    db: PathBuf,
    keys: PathBuf,
    refs: Vec<String>,
}

fn bench() -> Bench {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.db");
    let keys = dir.path().join("keys");
    let mut s = Store::open(&db).unwrap();
    let refs = (1..=3)
        .map(|d| {
            s.create_incident(&incident(d), &stamp("2026-05-20T10:00:00Z"))
                .unwrap()
                .reference
        })
        .collect();
    Bench {
        dir,
        db,
        keys,
        refs,
    }
}

fn export(b: &Bench, db: &Path, keys: &Path, format: &str, name: &str) -> PathBuf {
    let out = b.dir.path().join(name);
    let (code, text) = run(
        db,
        keys,
        &["export", "--format", format, "-o", out.to_str().unwrap()],
    );
    assert_eq!(code, 0, "{text}");
    out
}

fn fingerprint(b: &Bench) -> String {
    let (code, text) = run(&b.db, &b.keys, &["key"]);
    assert_eq!(code, 0, "{text}");
    text.lines()
        .find_map(|l| l.strip_prefix("fingerprint"))
        .map(|v| v.trim().to_string())
        .unwrap_or_else(|| panic!("no fingerprint in {text}"))
}

fn verify_export(db: &Path, keys: &Path, file: &Path, key: Option<&str>) -> (i32, String) {
    let mut args = vec!["verify", "--export", file.to_str().unwrap()];
    if let Some(k) = key {
        args.extend(["--key", k]);
    }
    run(db, keys, &args)
}

#[test]
fn json_and_csv_exports_carry_a_signed_head_that_checks_with_and_without_the_database() {
    let b = bench();
    let fp = fingerprint(&b);
    let nodb = b.dir.path().join("absent.db");
    for (format, name) in [("json", "all.json"), ("csv", "all.csv")] {
        let file = export(&b, &b.db, &b.keys, format, name);
        let text = std::fs::read_to_string(&file).unwrap();
        match format {
            "json" => {
                let v: serde_json::Value = serde_json::from_str(&text).unwrap();
                assert_eq!(v["signed_head"]["fingerprint"], fp.as_str(), "{text}");
                assert!(v["signed_head"]["seq"].as_i64().unwrap() > 0);
            }
            _ => {
                let first = text.lines().next().unwrap();
                assert!(first.starts_with("# shardlog signed head {"), "{first}");
                assert!(first.contains(&fp), "{first}");
                assert!(text.lines().nth(1).unwrap().starts_with("ref,"), "{text}");
            }
        }
        // against the database
        let (code, out) = verify_export(&b.db, &b.keys, &file, None);
        assert_eq!(code, 0, "{format}: {out}");
        assert!(
            out.contains("3 incidents, compared with the records"),
            "{out}"
        );
        assert!(
            out.contains("its head is in the chain and it matches the records"),
            "{out}"
        );
        // a recipient without the database, with the key's fingerprint
        let (code, out) = verify_export(&nodb, &b.keys, &file, Some(&fp));
        assert_eq!(code, 0, "{format}: {out}");
        assert!(out.contains("with the expected key"), "{out}");
        let (code, out) = verify_export(
            &nodb,
            &b.keys,
            &file,
            Some("0123-4567-89ab-cdef-0123-4567-89ab-cdef"),
        );
        assert_eq!(code, 1, "{format}: {out}");
        assert!(out.contains("not with the expected key"), "{out}");

        // what the tool writes it reads back: the signed export imports into another bench
        let other = b.dir.path().join(format!("other-{format}.db"));
        let (code, out) = run(&other, &b.keys, &["init"]);
        assert_eq!(code, 0, "{out}");
        let (code, out) = run(&other, &b.keys, &["import", file.to_str().unwrap()]);
        assert_eq!(code, 0, "{format}: {out}");
        let s = Store::open_existing(&other).unwrap();
        for r in &b.refs {
            assert!(s.find(r).unwrap().is_some(), "{format}: {r} not imported");
        }

        // one figure edited after the export: the content is not what was signed
        let edited = b.dir.path().join(format!("edited-{name}"));
        let changed = match format {
            "json" => text.replacen("\"KESTREL\"", "\"KESTRAL\"", 1),
            _ => text.replacen(",KESTREL,", ",KESTRAL,", 1),
        };
        assert_ne!(changed, text, "the edit must change something");
        std::fs::write(&edited, changed).unwrap();
        for db in [&b.db, &nodb] {
            let (code, out) = verify_export(db, &b.keys, &edited, Some(&fp));
            assert_eq!(code, 1, "{format}: {out}");
            assert!(
                out.contains("the content differs from what was signed"),
                "{out}"
            );
        }
    }
}

#[test]
fn an_export_made_before_a_rewrite_of_history_fails_against_the_rewritten_database() {
    let b = bench();
    let json = export(&b, &b.db, &b.keys, "json", "before.json");
    let csv = export(&b, &b.db, &b.keys, "csv", "before.csv");
    rewrite_history(&b.db, &b.refs[1]);
    let (code, out) = run(&b.db, &b.keys, &["verify"]);
    assert_eq!(code, 0, "the rewrite passes verify alone: {out}");
    for file in [&json, &csv] {
        let (code, out) = verify_export(&b.db, &b.keys, file, None);
        assert_eq!(code, 1, "{out}");
        assert!(out.contains("history was rewritten after entry"), "{out}");
    }
}

#[test]
fn an_export_from_a_copy_edited_outside_the_chain_does_not_match_the_genuine_records() {
    let b = bench();
    fingerprint(&b); // the genuine bench has its key
                     // the forger's copy: a cause changed with plain SQL, exported where the key is not held
    let forged = b.dir.path().join("forged.db");
    std::fs::copy(&b.db, &forged).unwrap();
    let c = rusqlite::Connection::open(&forged).unwrap();
    c.execute(
        "UPDATE incidents SET cause_category = 'vandalism' WHERE reference = ?1",
        [&b.refs[0]],
    )
    .unwrap();
    drop(c);
    let forger_keys = b.dir.path().join("forger-keys");
    for format in ["json", "csv"] {
        let file = export(
            &b,
            &forged,
            &forger_keys,
            format,
            &format!("forged.{format}"),
        );
        let (code, out) = verify_export(&b.db, &b.keys, &file, None);
        assert_eq!(code, 1, "{format}: {out}");
        assert!(out.contains("the export is not signed"), "{out}");
        assert!(
            out.contains(&format!(
                "incident {}: the export does not match the records",
                b.refs[0]
            )),
            "{format}: {out}"
        );
    }
    // the forger's own key on the copy: the genuine database names the other key
    let c = rusqlite::Connection::open(&forged).unwrap();
    c.execute("DELETE FROM meta WHERE key = 'signing_public_key'", [])
        .unwrap();
    drop(c);
    let file = export(&b, &forged, &forger_keys, "csv", "forged-signed.csv");
    let (code, out) = verify_export(&b.db, &b.keys, &file, None);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("but this database's key is"), "{out}");
}

#[test]
fn an_incident_changed_after_the_export_is_noted_not_failed() {
    let b = bench();
    let file = export(&b, &b.db, &b.keys, "json", "before-edit.json");
    {
        let mut s = Store::open_existing(&b.db).unwrap();
        let mut inc = s.get(&b.refs[2]).unwrap();
        inc.notes = "re-examined under better light".into();
        s.update_incident(&inc, &stamp("2026-05-21T09:00:00Z"))
            .unwrap();
    }
    let (code, out) = verify_export(&b.db, &b.keys, &file, None);
    assert_eq!(code, 0, "{out}");
    assert!(
        out.contains("1 exported incident was changed in the database after the export's head"),
        "{out}"
    );
}

/// A demo database of `n` incidents in `dir`, and the folder of its key.
fn demo(dir: &Path, n: usize) -> (PathBuf, PathBuf) {
    let db = dir.join("demo.db");
    let keys = dir.join("keys");
    let (code, text) = run(
        &db,
        &keys,
        &[
            "demo",
            "--incidents",
            &n.to_string(),
            "--out",
            db.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{text}");
    (db, keys)
}

/// The whole document serialized at once, as exports were written before they were streamed:
/// the streamed file must be these very bytes, and its signed digest the document's.
fn whole_document(db: &Path, filter: &Filter, streamed: &[u8]) -> Vec<u8> {
    let s = Store::open(db).unwrap();
    let mut doc = s.export_doc(filter).unwrap();
    let written: serde_json::Value = serde_json::from_slice(streamed).unwrap();
    let head: shardlog::store::signing::SignedHead =
        serde_json::from_value(written["signed_head"].clone()).unwrap();
    assert_eq!(
        head.content_sha256,
        shardlog_core::canonical::digest(&doc, shardlog_core::canonical::Numbers::Shortest)
            .unwrap(),
        "the signed digest is not the document's"
    );
    doc.signed_head = Some(head);
    let mut text = serde_json::to_string_pretty(&doc).unwrap();
    text.push('\n');
    text.into_bytes()
}

#[test]
fn a_streamed_json_export_is_byte_for_byte_the_whole_document() {
    let dir = tempfile::tempdir().unwrap();
    let (db, keys) = demo(dir.path(), 300);
    // all of them, some of them, none of them (an empty array is written apart)
    for (args, filter) in [
        (vec![], Filter::default()),
        (
            vec!["--since", "2026-06-01"],
            Filter {
                since: Some(chrono::NaiveDate::from_ymd_opt(2026, 6, 1).unwrap()),
                ..Filter::default()
            },
        ),
        (
            vec!["--since", "2099-01-01"],
            Filter {
                since: Some(chrono::NaiveDate::from_ymd_opt(2099, 1, 1).unwrap()),
                ..Filter::default()
            },
        ),
    ] {
        let out = dir.path().join("export.json");
        let mut all = vec!["export", "--format", "json", "-o", out.to_str().unwrap()];
        all.extend(args.iter().copied());
        let (code, text) = run(&db, &keys, &all);
        assert_eq!(code, 0, "{text}");
        let streamed = std::fs::read(&out).unwrap();
        assert!(
            streamed == whole_document(&db, &filter, &streamed),
            "{args:?}: the streamed export differs from the whole document"
        );
        let (code, text) = verify_export(&db, &keys, &out, None);
        assert_eq!(code, 0, "{args:?}: {text}");
    }
}

#[test]
fn an_export_whose_reader_goes_away_ends_quietly() {
    use std::io::Read;
    use std::process::{Command, Stdio};
    let dir = tempfile::tempdir().unwrap();
    let (db, keys) = demo(dir.path(), 2000);
    for format in ["json", "csv"] {
        let mut child = Command::new(env!("CARGO_BIN_EXE_shardlog"))
            .env("SHARDLOG_KEY_DIR", &keys)
            .args(["--db", db.to_str().unwrap(), "export", "--format", format])
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("the binary runs");
        // read a little, then go away as `| head` does
        let mut first = [0u8; 64];
        child
            .stdout
            .take()
            .expect("piped")
            .read_exact(&mut first)
            .unwrap();
        let out = child.wait_with_output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "{format}: {err}");
        assert!(!err.contains("Broken pipe"), "{format}: {err}");
    }
}
