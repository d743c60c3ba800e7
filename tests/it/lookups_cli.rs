//! `shardlog lookups list|add|rename|retire|restore`, the real binary, and what a retired entry
//! means for the interface's pick-lists and for the records that hold it.

use std::path::Path;
use std::process::{Command, Output};

use chrono::{NaiveDate, Utc};
use shardlog::app::App;
use shardlog::store::model::{Incident, LookupKind, Stamp};
use shardlog::store::Store;

fn run(db: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "Oskarine Vellmar")
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn fresh() -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    (dir, db)
}

/// The audit rows of one lookup entry: (actor, op, before, after), oldest first.
fn audit_of(db: &Path, key: &str) -> Vec<(String, String, Option<String>, Option<String>)> {
    let c = rusqlite::Connection::open(db).unwrap();
    let mut st = c
        .prepare(
            "SELECT actor, op, before, after FROM audit
             WHERE entity = 'lookup' AND entity_id = ?1 ORDER BY seq",
        )
        .unwrap();
    st.query_map([key], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
}

fn verify_ok(db: &Path) {
    let o = run(db, &["verify"]);
    assert!(o.status.success(), "verify: {}", text(&o));
}

#[test]
fn add_puts_an_entry_at_the_end_of_its_list_with_its_audit_row() {
    let (_d, db) = fresh();
    let o = run(
        &db,
        &[
            "lookups",
            "add",
            "cause",
            "sealant_attack",
            "sealant attack on the edge",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    let listed = text(&run(&db, &["lookups", "list", "cause"]));
    let last = listed.lines().last().unwrap();
    assert!(
        last.contains("sealant_attack") && last.contains("sealant attack on the edge"),
        "{listed}"
    );
    let rows = audit_of(&db, "cause_category/sealant_attack");
    assert_eq!(rows.len(), 1, "{rows:?}");
    assert_eq!(rows[0].0, "Oskarine Vellmar");
    assert_eq!(rows[0].1, "insert");
    assert!(rows[0]
        .3
        .as_deref()
        .unwrap()
        .contains("sealant attack on the edge"));
    // the new code is accepted where codes are: a filter of the log
    let o = run(&db, &["list", "--cause", "sealant attack on the edge"]);
    assert!(o.status.success(), "{}", text(&o));
    verify_ok(&db);
}

#[test]
fn rename_changes_the_label_keeps_the_code_and_is_audited_with_both_versions() {
    let (_d, db) = fresh();
    let o = run(
        &db,
        &[
            "lookups",
            "rename",
            "origin-type",
            "edge_chip",
            "edge chip (shell-shaped)",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    let listed = text(&run(&db, &["lookups", "list", "origin-type"]));
    assert!(
        listed.contains("edge_chip") && listed.contains("edge chip (shell-shaped)"),
        "{listed}"
    );
    assert!(!listed.contains("edge chip or shell"), "{listed}");
    let rows = audit_of(&db, "origin_type/edge_chip");
    assert_eq!(rows.len(), 2, "the seed and the rename: {rows:?}");
    let (actor, op, before, after) = &rows[1];
    assert_eq!(
        (actor.as_str(), op.as_str()),
        ("Oskarine Vellmar", "update")
    );
    assert!(before.as_deref().unwrap().contains("edge chip or shell"));
    assert!(after
        .as_deref()
        .unwrap()
        .contains("edge chip (shell-shaped)"));
    verify_ok(&db);
}

#[test]
fn retire_and_restore_are_audited_and_listed() {
    let (_d, db) = fresh();
    let o = run(&db, &["lookups", "retire", "custody-event", "disposed"]);
    assert!(o.status.success(), "{}", text(&o));
    let listed = text(&run(&db, &["lookups", "list", "custody-event"]));
    let line = listed.lines().find(|l| l.contains("disposed")).unwrap();
    assert!(line.contains("(retired)"), "{listed}");
    let o = run(&db, &["lookups", "restore", "custody-event", "disposed"]);
    assert!(o.status.success(), "{}", text(&o));
    let listed = text(&run(&db, &["lookups", "list", "custody-event"]));
    assert!(!listed.contains("(retired)"), "{listed}");
    let json = run(&db, &["lookups", "list", "custody-event", "--json"]);
    let v: serde_json::Value = serde_json::from_slice(&json.stdout).unwrap();
    let disposed = v
        .as_array()
        .unwrap()
        .iter()
        .find(|e| e["code"] == "disposed")
        .unwrap();
    assert_eq!(disposed["retired"], false, "{v}");
    assert_eq!(disposed["kind"], "custody_action", "{v}");
    let rows = audit_of(&db, "custody_action/disposed");
    let ops: Vec<_> = rows.iter().map(|r| r.1.as_str()).collect();
    assert_eq!(ops, ["insert", "update", "update"], "{rows:?}");
    assert!(
        rows[1].3.as_deref().unwrap().contains("\"retired\":true"),
        "{rows:?}"
    );
    // restored, the image is the seed's again, bytes and all
    assert_eq!(rows[2].3, rows[0].3);
    verify_ok(&db);
}

#[test]
fn a_wrong_list_or_code_is_refused_with_exit_2_and_the_valid_ones() {
    let (_d, db) = fresh();
    let o = run(&db, &["lookups", "retire", "causes", "thermal"]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    let t = text(&o);
    for want in ["cause", "origin-type", "custody-event", "status"] {
        assert!(t.contains(want), "missing {want}: {t}");
    }
    // temper is a type the computations know: not a list a lab edits
    let o = run(&db, &["lookups", "add", "temper", "x", "y"]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));

    let o = run(
        &db,
        &["lookups", "rename", "cause", "thermal stress", "heat"],
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    let t = text(&o);
    assert!(t.contains("no code \"thermal stress\""), "{t}");
    for code in ["thermal", "nickel_sulfide", "pressure", "unknown"] {
        assert!(
            t.contains(code),
            "the valid codes are listed, {code} missing: {t}"
        );
    }
    // a label that already names another entry, a blank label, a code taken: refused, exit 2
    for args in [
        &["lookups", "rename", "cause", "thermal", "Impact"][..],
        &["lookups", "add", "cause", "heat", "  "][..],
        &["lookups", "add", "cause", "impact", "impact by a stone"][..],
    ] {
        let o = run(&db, args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", text(&o));
    }
    // the status new incidents start with cannot be retired
    let o = run(&db, &["lookups", "retire", "status", "reported"]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    // nothing of the refused changes was written
    assert_eq!(audit_of(&db, "cause_category/thermal").len(), 1);
    assert!(audit_of(&db, "cause_category/heat").is_empty());
    verify_ok(&db);
}

#[test]
fn a_retired_code_leaves_the_pick_list_but_stays_on_the_old_record() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.db");
    let reference = {
        let mut store = Store::open(&db).unwrap();
        let mut d = Incident::draft(NaiveDate::from_ymd_opt(2026, 2, 3).unwrap());
        d.asset = Some("car 418".into());
        d.status = "claim_open".into();
        // now: the chain refuses times that run backwards, and the command line stamps now
        let stamp = Stamp::new("test-analyst", Utc::now());
        store.create_incident(&d, &stamp).unwrap().reference
    };
    let o = run(&db, &["lookups", "retire", "status", "claim_open"]);
    assert!(o.status.success(), "{}", text(&o));

    // the interface: not offered to new work, named on the old record, kept in its form
    let app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    let offered = app.lists.lookup(LookupKind::Status);
    assert!(
        offered.iter().all(|i| i.code != "claim_open"),
        "{offered:?}"
    );
    assert!(offered.iter().any(|i| i.code == "closed"), "{offered:?}");
    assert_eq!(
        app.lists.label(LookupKind::Status, "claim_open"),
        "claim open"
    );
    let kept = app
        .lists
        .lookup_keeping(LookupKind::Status, Some("claim_open"));
    assert!(
        kept.iter()
            .any(|i| i.code == "claim_open" && i.label == "claim open (retired)"),
        "{kept:?}"
    );
    let other = app.lists.lookup_keeping(LookupKind::Status, Some("closed"));
    assert!(other.iter().all(|i| i.code != "claim_open"), "{other:?}");

    // the command line: the old record shows the label, a filter still finds it
    let shown = text(&run(&db, &["show", &reference]));
    assert!(shown.contains("claim open"), "{shown}");
    let o = run(&db, &["list", "--status", "claim open"]);
    assert!(o.status.success(), "{}", text(&o));
    assert!(text(&o).contains(&reference), "{}", text(&o));
    verify_ok(&db);
}
