//! Heads that left the bench as witnesses: a rewrite of history that recomputes every hash
//! passes `verify` on the file alone, but not an anchor or a bundle taken before it; a bundle
//! made from a forged copy that leaves an incident out fails against the genuine database;
//! a recipient checks a bundle's signature with the key alone.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use chrono::{DateTime, NaiveDate, Utc};
use shardlog::store::*;
use shardlog_core::units::Dimension;

pub(crate) fn stamp(s: &str) -> Stamp {
    Stamp::new(
        "ines",
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc),
    )
}

pub(crate) fn incident(d: u32) -> Incident {
    let mut inc = Incident::draft(NaiveDate::from_ymd_opt(2026, 5, d).unwrap());
    inc.glass.supplier = Some("KESTREL".into());
    inc.glass.product = Some("FT-10".into());
    inc.glass.lot = Some("K-31".into());
    inc.cause = Some(Cause {
        category: "thermal".into(),
        factors: vec![],
        confidence: "probable".into(),
        responsibility: "supplier".into(),
        note: String::new(),
    });
    let reading = |boundary: &str, r: &str| MirrorReading {
        boundary: boundary.into(),
        radius: Measured::parse(r, Dimension::Length).unwrap(),
        magnification: Some(40.0),
        analyst: "ines".into(),
        note: String::new(),
        viewing: None,
    };
    inc.examinations.push(Examination {
        id: String::new(),
        examined_on: None,
        analyst: "ines".into(),
        origin_type: Some("inclusion_nis".into()),
        material: Some("soda_lime".into()),
        readings: vec![
            reading("mirror_mist", "0.82 mm"),
            reading("mist_hackle", "1.1 mm"),
        ],
        flaw: None,
        result: None,
        notes: String::new(),
    });
    inc
}

/// The bench: a database with four incidents of supplier KESTREL, and its key folder.
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
    let refs = (1..=4)
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

pub(crate) fn run(db: &Path, keys: &Path, args: &[&str]) -> (i32, String) {
    let o: Output = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .env("SHARDLOG_KEY_DIR", keys)
        .arg("--db")
        .arg(db)
        .args(args)
        .output()
        .expect("the binary runs");
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    (o.status.code().unwrap_or(-1), text)
}

/// The value after `label` on its line of `shardlog key`'s output.
fn key_line(out: &str, label: &str) -> String {
    out.lines()
        .find_map(|l| l.strip_prefix(label))
        .map(|v| v.trim().to_string())
        .unwrap_or_else(|| panic!("no {label} in {out}"))
}

fn dispute(b: &Bench, db: &Path, keys: &Path, name: &str) -> PathBuf {
    let out = b.dir.path().join(name);
    let (code, text) = run(
        db,
        keys,
        &[
            "dispute",
            "--supplier",
            "KESTREL",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{text}");
    out
}

/// The attack an opposing party can make on the file: change a reading and a cause with
/// plain SQL, write the incident's new image into its last audit row, recompute every hash
/// from there on (SHA-256 over the previous hash and the row's canonical text, as
/// docs/notes.md describes it) and store the new head.
pub(crate) fn rewrite_history(db: &Path, reference: &str) {
    let c = rusqlite::Connection::open(db).unwrap();
    let id: String = c
        .query_row(
            "SELECT id FROM incidents WHERE reference = ?1",
            [reference],
            |r| r.get(0),
        )
        .unwrap();
    c.execute_batch(&format!(
        "UPDATE mirror_readings SET value_text = '0.61', value_m = 0.00061
           WHERE reading_no = 1 AND examination_id IN (SELECT id FROM examinations WHERE incident_id = '{id}');
         UPDATE incidents SET cause_category = 'vandalism' WHERE id = '{id}';"
    ))
    .unwrap();
    // the incident's image as it reads now (the program's own canonical form)
    let image = {
        let s = Store::open_existing(db).unwrap();
        canon::incident_image(&s.get(&id).unwrap()).unwrap()
    };
    let from: i64 = c
        .query_row(
            "SELECT max(seq) FROM audit WHERE entity = 'incident' AND entity_id = ?1",
            [&id],
            |r| r.get(0),
        )
        .unwrap();
    c.execute(
        "UPDATE audit SET after = ?1 WHERE seq = ?2",
        rusqlite::params![image, from],
    )
    .unwrap();
    drop(c);
    crate::support::audit::rechain(db, from);
}

#[test]
fn a_rewrite_passes_verify_alone_but_not_an_earlier_anchor_or_bundle() {
    let b = bench();
    let (code, key) = run(&b.db, &b.keys, &["key"]);
    assert_eq!(code, 0, "{key}");
    let anchor = key_line(&key, "audit head");
    let earlier = dispute(&b, &b.db, &b.keys, "claim-before");
    let (code, text) = run(
        &b.db,
        &b.keys,
        &["verify", "--bundle", earlier.to_str().unwrap()],
    );
    assert_eq!(code, 0, "{text}");

    rewrite_history(&b.db, &b.refs[1]);

    // A file cannot witness itself: after a rewrite that recomputed every image and hash,
    // verify on the file alone passes, and says that this is all it proves.
    let (code, text) = run(&b.db, &b.keys, &["verify"]);
    assert_eq!(
        code, 0,
        "verify alone passes after a careful rewrite: {text}"
    );
    assert!(
        text.contains("not that its history was never rewritten"),
        "{text}"
    );

    // the head taken before the rewrite is a witness
    let (code, text) = run(&b.db, &b.keys, &["verify", "--anchor", &anchor]);
    assert_eq!(code, 1, "{text}");
    let seq: i64 = anchor.split(':').next().unwrap().parse().unwrap();
    assert!(
        text.contains(&format!(
            "history was rewritten after entry 0: entry {seq} now has hash"
        )),
        "{text}"
    );
    // an anchor of an entry before the change still holds and moves N up
    let c = rusqlite::Connection::open(&b.db).unwrap();
    let (first, first_hash): (i64, String) = c
        .query_row(
            "SELECT seq, hash FROM audit ORDER BY seq LIMIT 1",
            [],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .unwrap();
    let (code, text) = run(
        &b.db,
        &b.keys,
        &[
            "verify",
            "--anchor",
            &format!("{first}:{first_hash}"),
            "--anchor",
            &anchor,
        ],
    );
    assert_eq!(code, 1, "{text}");
    assert!(
        text.contains(&format!("history was rewritten after entry {first}:")),
        "{text}"
    );

    // so is the bundle made before it
    let (code, text) = run(
        &b.db,
        &b.keys,
        &["verify", "--bundle", earlier.to_str().unwrap()],
    );
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("history was rewritten after entry"), "{text}");
    assert!(
        text.contains(&format!(
            "incident {}: the bundle does not match",
            b.refs[1]
        )),
        "{text}"
    );
}

#[test]
fn a_bundle_from_a_forged_copy_that_leaves_one_incident_out_fails() {
    let b = bench();
    // the incident to leave out, stamped (by a wrong clock) after the export to come: an
    // export-time rule alone would call it "recorded after the export"
    let left_out = {
        let mut s = Store::open_existing(&b.db).unwrap();
        s.create_incident(&incident(9), &stamp("2099-01-01T00:00:00Z"))
            .unwrap()
            .reference
    };
    let (code, text) = run(&b.db, &b.keys, &["key"]);
    assert_eq!(code, 0, "{text}");
    // the forger's copy, on a machine without the bench's private key
    let forged = b.dir.path().join("forged.db");
    std::fs::copy(&b.db, &forged).unwrap();
    let c = rusqlite::Connection::open(&forged).unwrap();
    c.execute_batch(&format!(
        "PRAGMA foreign_keys = ON; DELETE FROM incidents WHERE reference = '{left_out}';"
    ))
    .unwrap();
    drop(c);
    let forger_keys = b.dir.path().join("forger-keys");
    let bundle = dispute(&b, &forged, &forger_keys, "claim-forged");
    // the bundle is intact in itself (only unsigned)
    let (code, text) = run(
        &b.dir.path().join("absent.db"),
        &b.keys,
        &["verify", "--bundle", bundle.to_str().unwrap()],
    );
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("not signed"), "{text}");
    // against the genuine database the selection re-run at the bundle's head finds it
    let (code, text) = run(
        &b.db,
        &b.keys,
        &["verify", "--bundle", bundle.to_str().unwrap()],
    );
    assert_eq!(code, 1, "{text}");
    assert!(
        text.contains(&format!(
            "incident {left_out}: matched the bundle's selection in the records as they stood at its head"
        )),
        "{text}"
    );
    assert!(
        text.contains("after the bundle's own export time"),
        "{text}"
    );

    // the forger signs with a key of their own: the genuine database names the other key
    let c = rusqlite::Connection::open(&forged).unwrap();
    c.execute("DELETE FROM meta WHERE key = 'signing_public_key'", [])
        .unwrap();
    drop(c);
    let signed = dispute(&b, &forged, &forger_keys, "claim-forged-signed");
    let (code, text) = run(
        &b.db,
        &b.keys,
        &["verify", "--bundle", signed.to_str().unwrap()],
    );
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("but this database's key is"), "{text}");
}

#[test]
fn a_recipient_checks_the_signature_with_the_key_alone() {
    let b = bench();
    let pubfile = b.dir.path().join("bench.pub");
    let (code, key) = run(
        &b.db,
        &b.keys,
        &["key", "--public-key-file", pubfile.to_str().unwrap()],
    );
    assert_eq!(code, 0, "{key}");
    let fp = key_line(&key, "fingerprint");
    let bundle = dispute(&b, &b.db, &b.keys, "claim");
    let nodb = b.dir.path().join("no-database-here.db");
    let offline = |key: &str| {
        run(
            &nodb,
            &b.keys,
            &["verify", "--bundle", bundle.to_str().unwrap(), "--key", key],
        )
    };
    for k in [
        fp.as_str(),
        &fp.replace('-', "").to_uppercase(),
        pubfile.to_str().unwrap(),
    ] {
        let (code, text) = offline(k);
        assert_eq!(code, 0, "--key {k}: {text}");
        assert!(text.contains("signed with the expected key"), "{text}");
    }
    // another key
    let (code, text) = offline("0123-4567-89ab-cdef-0123-4567-89ab-cdef");
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("not with the expected key"), "{text}");
    // not a key at all: a usage error
    let (code, text) = offline("12-34");
    assert_eq!(code, 2, "{text}");
    // the signed head edited to name a later entry: the signature no longer checks
    let path = bundle.join("bundle.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
    v["signed_head"]["seq"] = serde_json::json!(999);
    std::fs::write(&path, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    let (code, text) = offline(&fp);
    assert_eq!(code, 1, "{text}");
    assert!(
        text.contains("the signed audit head does not check"),
        "{text}"
    );
    // the signature removed: an unsigned bundle cannot be checked against a key
    v.as_object_mut().unwrap().remove("signed_head");
    std::fs::write(&path, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    let (code, text) = offline(&fp);
    assert_eq!(code, 1, "{text}");
    assert!(
        text.contains("not signed, so it cannot be checked"),
        "{text}"
    );
}

#[test]
fn the_private_key_stays_outside_the_database_and_its_copies() {
    let b = bench();
    let (code, text) = run(&b.db, &b.keys, &["key"]);
    assert_eq!(code, 0, "{text}");
    let fp = key_line(&text, "fingerprint");
    let private = b.keys.join(format!("{fp}.key"));
    let secret = std::fs::read_to_string(&private).unwrap();
    let seed = secret.split_whitespace().last().unwrap().to_string();
    assert_eq!(seed.len(), 64);
    let file = std::fs::read(&b.db).unwrap();
    let wal = std::fs::read(b.db.with_extension("db-wal")).unwrap_or_default();
    for bytes in [&file, &wal] {
        assert!(
            !bytes.windows(seed.len()).any(|w| w == seed.as_bytes()),
            "the private key is in the database file"
        );
    }
    // a copy elsewhere names the key it lacks, and its exports say they are not signed
    let copy = b.dir.path().join("copy.db");
    std::fs::copy(&b.db, &copy).unwrap();
    let other = b.dir.path().join("other-keys");
    let (code, text) = run(&copy, &other, &["key"]);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains(&fp), "{text}");
    assert!(text.contains("NOT on this machine"), "{text}");
    let out = b.dir.path().join("from-copy");
    let (code, text) = run(
        &copy,
        &other,
        &[
            "dispute",
            "--supplier",
            "KESTREL",
            "-o",
            out.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("not signed"), "{text}");
}
