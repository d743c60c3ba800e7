//! The lookup lists screen over a real store, driven by key events through the key table and
//! drawn to TestBackend at 80×24: add, rename, retire and restore, each audited as the
//! command line's are; pick-lists of new work hide retired entries, old records keep them.

use chrono::{NaiveDate, Utc};
use ratatui::crossterm::event::{KeyCode, KeyModifiers};
use shardlog::app::incident::{section_form, Section};
use shardlog::app::{App, Screen};
use shardlog::store::model::{Incident, LookupKind, Stamp};
use shardlog::store::Store;
use shardlog::tui::harness::{key, key_mod, render, send, type_str};

/// The audit rows of one lookup entry: (actor, op), oldest first.
fn audit_of(db: &std::path::Path, key: &str) -> Vec<(String, String)> {
    let c = rusqlite::Connection::open(db).unwrap();
    let mut st = c
        .prepare(
            "SELECT actor, op FROM audit WHERE entity = 'lookup' AND entity_id = ?1 ORDER BY seq",
        )
        .unwrap();
    st.query_map([key], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
}

/// From the log: the review (r), then the lookup lists (L).
fn open_lists(app: &mut App) {
    send(app, &key(KeyCode::Char('r')));
    send(app, &key(KeyCode::Char('L')));
    assert_eq!(app.screen(), Screen::Lookups, "{:?}", app.message);
}

fn screen_text(app: &mut App) -> String {
    render(app, 80, 24).join("\n")
}

fn save(app: &mut App) {
    send(app, &key_mod(KeyCode::Char('s'), KeyModifiers::CONTROL));
}

/// An app over a fresh database holding one incident with status "claim_open", acting as
/// the analyst "Ada Quell" (invented).
fn fixture() -> (tempfile::TempDir, std::path::PathBuf, App, String) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.db");
    let mut store = Store::open(&db).unwrap();
    let mut d = Incident::draft(NaiveDate::from_ymd_opt(2026, 2, 3).unwrap());
    d.asset = Some("car 418".into());
    d.status = "claim_open".into();
    let reference = store
        .create_incident(&d, &Stamp::new("test-analyst", Utc::now()))
        .unwrap()
        .reference;
    let mut app = App::with_store(store, &db).unwrap();
    app.actor = "Ada Quell".into();
    (dir, db, app, reference)
}

#[test]
fn the_lists_open_from_the_log_and_show_codes_labels_and_state_at_80x24() {
    let (_d, _db, mut app, _) = fixture();
    open_lists(&mut app);
    assert_eq!(app.screen(), Screen::Lookups);
    let s = screen_text(&mut app);
    assert!(s.contains("Lookup lists"), "{s}");
    assert!(s.contains("Causes"), "{s}");
    assert!(s.contains("thermal"), "{s}");
    assert!(s.contains("thermal stress"), "{s}");
    assert!(s.contains("in use"), "{s}");
    // every line fits the 80 columns
    for l in render(&mut app, 80, 24) {
        assert!(
            unicode_width::UnicodeWidthStr::width(l.as_str()) <= 80,
            "{l}"
        );
    }
    // Tab walks to the statuses
    for _ in 0..3 {
        send(&mut app, &key(KeyCode::Tab));
    }
    assert_eq!(app.lookups.kind(), LookupKind::Status);
    let s = screen_text(&mut app);
    assert!(s.contains("claim_open"), "{s}");
    // Esc goes back to the review, and again to the log
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Review);
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Log);
}

#[test]
fn add_then_rename_writes_the_entry_with_its_audit_rows_under_the_analyst() {
    let (_d, db, mut app, _) = fixture();
    open_lists(&mut app);
    send(&mut app, &key(KeyCode::Char('a')));
    assert_eq!(app.screen(), Screen::Edit);
    let s = screen_text(&mut app);
    assert!(s.contains("Add to the cause category list"), "{s}");
    type_str(&mut app, "sealant_attack");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "sealant attack on the edge");
    save(&mut app);
    assert_eq!(app.screen(), Screen::Lookups, "{:?}", app.message);
    let s = screen_text(&mut app);
    assert!(s.contains("sealant_attack"), "{s}");
    assert!(s.contains("sealant attack on the edge"), "{s}");
    // the new cause is offered to new work at once
    assert!(app
        .lists
        .lookup(LookupKind::CauseCategory)
        .iter()
        .any(|i| i.code == "sealant_attack"));

    // rename the highlighted (new) entry: the form holds the old label
    send(&mut app, &key(KeyCode::Char('e')));
    assert_eq!(app.screen(), Screen::Edit);
    for _ in 0.."sealant attack on the edge".chars().count() {
        send(&mut app, &key(KeyCode::Backspace));
    }
    type_str(&mut app, "sealant attack");
    save(&mut app);
    assert_eq!(app.screen(), Screen::Lookups, "{:?}", app.message);
    let entry = app.lookups.selected().unwrap().clone();
    assert_eq!(
        (entry.code.as_str(), entry.label.as_str()),
        ("sealant_attack", "sealant attack")
    );
    assert_eq!(
        audit_of(&db, "cause_category/sealant_attack"),
        vec![
            ("Ada Quell".to_string(), "insert".to_string()),
            ("Ada Quell".to_string(), "update".to_string())
        ]
    );
    let v = app.store.as_ref().unwrap().verify().unwrap();
    assert!(v.ok(), "{v:?}");
}

#[test]
fn a_refused_code_says_why_and_writes_nothing() {
    let (_d, db, mut app, _) = fixture();
    open_lists(&mut app);
    send(&mut app, &key(KeyCode::Char('a')));
    type_str(&mut app, "thermal");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "heat again");
    save(&mut app);
    assert_eq!(app.screen(), Screen::Edit);
    let m = app.message.clone().unwrap();
    assert!(m.error && m.text.contains("not saved"), "{m:?}");
    assert!(m.text.contains("thermal"), "{m:?}");
    assert_eq!(audit_of(&db, "cause_category/thermal").len(), 1);
}

#[test]
fn retire_hides_from_pick_lists_keeps_the_old_record_and_restore_brings_it_back() {
    let (_d, db, mut app, reference) = fixture();
    open_lists(&mut app);
    for _ in 0..3 {
        send(&mut app, &key(KeyCode::Tab));
    }
    let at = app
        .lookups
        .entries
        .iter()
        .position(|e| e.code == "claim_open")
        .unwrap();
    for _ in 0..at {
        send(&mut app, &key(KeyCode::Down));
    }
    send(&mut app, &key(KeyCode::Char('r')));
    let s = screen_text(&mut app);
    assert!(s.contains("retired"), "{s}");
    assert!(app.lookups.selected().unwrap().retired);
    // not offered to new work; named on the old record
    assert!(app
        .lists
        .lookup(LookupKind::Status)
        .iter()
        .all(|i| i.code != "claim_open"));
    assert_eq!(
        app.lists.label(LookupKind::Status, "claim_open"),
        "claim open"
    );
    send(&mut app, &key(KeyCode::Esc));
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Log);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
    let s = screen_text(&mut app);
    assert!(s.contains(&reference), "{s}");
    assert!(s.contains("claim open"), "{s}");
    // the cause section's status pick-list: a new record is not offered it, the old one
    // keeps it, marked
    let draft = Incident::draft(NaiveDate::from_ymd_opt(2026, 3, 1).unwrap());
    let codes = |form: &shardlog::app::form::Form| -> Vec<(String, String)> {
        form.pick("status")
            .unwrap()
            .items()
            .iter()
            .map(|i| (i.code.clone(), i.label.clone()))
            .collect()
    };
    let fresh = codes(&section_form(Section::Cause, &draft, &app.lists));
    assert!(fresh.iter().all(|(c, _)| c != "claim_open"), "{fresh:?}");
    let old = app.incident.as_ref().unwrap().incident.clone();
    let kept = codes(&section_form(Section::Cause, &old, &app.lists));
    assert!(
        kept.contains(&("claim_open".to_string(), "claim open (retired)".to_string())),
        "{kept:?}"
    );
    send(&mut app, &key(KeyCode::Esc));

    // restore
    open_lists(&mut app);
    assert_eq!(app.lookups.selected().unwrap().code, "claim_open");
    send(&mut app, &key(KeyCode::Char('r')));
    assert!(!app.lookups.selected().unwrap().retired);
    assert!(app
        .lists
        .lookup(LookupKind::Status)
        .iter()
        .any(|i| i.code == "claim_open"));
    let ops: Vec<String> = audit_of(&db, "status/claim_open")
        .into_iter()
        .map(|(_, op)| op)
        .collect();
    assert_eq!(ops, vec!["insert", "update", "update"]);
}
