//! The materials screen at 80×24 over a real store, driven through the key table and drawn
//! to TestBackend: the library read-only, an own copy made and changed from the interface
//! (each an audited revision), and the bench's material pick-list offering own materials.

use chrono::{TimeZone, Utc};
use ratatui::crossterm::event::{KeyCode, KeyModifiers};
use shardlog::app::{App, Screen};
use shardlog::store::model::Stamp;
use shardlog::store::Store;
use shardlog::tui::harness::{key, key_mod, render, send, type_str};
use shardlog_core::fracture::materials;

fn text(lines: &[String]) -> String {
    lines.join("\n")
}

fn open(path: &std::path::Path) -> App {
    let mut store = Store::open(path).unwrap();
    let mut m = materials::find("borosilicate").unwrap();
    m.name = "oven door glass, Quillmere works".into();
    store
        .add_own_material(
            "lab_oven",
            Some("borosilicate"),
            &m,
            &Stamp::new(
                "Petra Vossberg",
                Utc.with_ymd_and_hms(2026, 2, 1, 9, 0, 0).unwrap(),
            ),
        )
        .unwrap();
    let mut app = App::with_store(store, path).unwrap();
    app.actor = "Petra Vossberg".into();
    app
}

#[test]
fn the_materials_screen_lists_shows_copies_and_edits_at_80x24() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    let mut app = open(&path);
    send(&mut app, &key(KeyCode::Char('m')));
    assert_eq!(app.screen(), Screen::Materials);
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains(&format!(
            "{:<23}library  soda-lime-silica glass",
            "soda-lime"
        )),
        "{screen}"
    );
    assert!(
        screen.contains("library material: read-only; c copies it"),
        "{screen}"
    );
    assert!(
        screen.contains("A_i   1.90 MPa·√m ± 0.150 MPa·√m"),
        "{screen}"
    );
    assert!(screen.contains("published"), "{screen}");

    // a library material cannot be edited
    send(&mut app, &key(KeyCode::Char('e')));
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains("soda-lime is a library material (read-only)"),
        "{screen}"
    );
    assert!(app.materials.form.is_none());

    // the own one is listed last, marked, with its revision
    send(&mut app, &key(KeyCode::End));
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains(&format!(
            "{:<23}own r1   oven door glass, Quillmere works",
            "lab_oven"
        )),
        "{screen}"
    );
    assert!(
        screen.contains("own material, revision 1, copied from borosilicate"),
        "{screen}"
    );

    // copy soda-lime into an own material with its own A_i
    send(&mut app, &key(KeyCode::Home));
    send(&mut app, &key(KeyCode::Char('c')));
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains("New own material, copy of soda-lime"),
        "{screen}"
    );
    type_str(&mut app, "lab_float");
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Tab));
    send(
        &mut app,
        &key_mod(KeyCode::Char('u'), KeyModifiers::CONTROL),
    );
    type_str(&mut app, "2.05 MPa√m ± 0.06 MPa√m");
    send(
        &mut app,
        &key_mod(KeyCode::Char('s'), KeyModifiers::CONTROL),
    );
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains("saved own material lab_float (revision 1)"),
        "{screen}"
    );
    assert!(
        screen.contains("A_i   2.05 MPa·√m ± 0.0600 MPa·√m     user"),
        "{screen}"
    );
    assert!(
        screen.contains("A_o   2.20 MPa·√m ± 0.200 MPa·√m      published"),
        "{screen}"
    );

    // change it: a unit the field cannot read is refused, naming the field; nothing saved
    send(&mut app, &key(KeyCode::Char('e')));
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Tab));
    send(
        &mut app,
        &key_mod(KeyCode::Char('u'), KeyModifiers::CONTROL),
    );
    type_str(&mut app, "0.8 MPa");
    send(
        &mut app,
        &key_mod(KeyCode::Char('s'), KeyModifiers::CONTROL),
    );
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains("K_Ic toughness: '0.8 MPa': 'MPa' is not a unit of fracture"),
        "{screen}"
    );
    send(
        &mut app,
        &key_mod(KeyCode::Char('u'), KeyModifiers::CONTROL),
    );
    type_str(&mut app, "0.8 MPa√m");
    send(
        &mut app,
        &key_mod(KeyCode::Char('s'), KeyModifiers::CONTROL),
    );
    let screen = text(&render(&mut app, 80, 24));
    assert!(
        screen.contains("saved own material lab_float (revision 2)"),
        "{screen}"
    );
    assert!(screen.contains("K_Ic  0.800 MPa·√m"), "{screen}");
    for line in render(&mut app, 80, 24) {
        assert!(
            unicode_width::UnicodeWidthStr::width(line.as_str()) <= 80,
            "{line}"
        );
    }

    let store = Store::open(&path).unwrap();
    let own = store.own_material("lab_float").unwrap().unwrap();
    assert_eq!(own.revision, 2);
    assert_eq!(own.base.as_deref(), Some("soda-lime"));
    assert_eq!(own.material.k_ic.as_ref().unwrap().value, 0.8e6);
    let report = store.verify().unwrap();
    assert!(report.ok(), "{report:?}");

    // the bench offers the own materials in its pick-list
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Log);
    send(&mut app, &key(KeyCode::Char('b')));
    assert_eq!(app.screen(), Screen::Bench);
    let codes: Vec<String> = app
        .bench
        .form
        .pick("material")
        .unwrap()
        .items()
        .iter()
        .map(|i| i.code.clone())
        .collect();
    assert!(codes.contains(&"lab_float".to_string()), "{codes:?}");
    assert!(codes.contains(&"lab_oven".to_string()), "{codes:?}");
    app.bench
        .form
        .pick_mut("material")
        .unwrap()
        .choose_code("lab_float");
    app.bench
        .form
        .field_mut("r_mist")
        .unwrap()
        .set_text("1.2 mm");
    app.bench.recompute();
    let screen = text(&render(&mut app, 80, 24));
    // computed: 2.05 MPa·√m / √(1.2 mm) = 59.18 MPa
    assert!(screen.contains("59.2 MPa"), "{screen}");
}
