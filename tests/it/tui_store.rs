//! The log, one incident, editing and the bench calculator over a real store on a
//! temporary file, driven by key events through the key table, drawn to TestBackend.

use chrono::{NaiveDate, TimeZone, Utc};
use ratatui::crossterm::event::{KeyCode, KeyModifiers};
use shardlog::app::incident::Section;
use shardlog::app::{App, Screen};
use shardlog::store::model::{Filter, Glass, Incident, PageRequest, Sort, Stamp};
use shardlog::store::Store;
use shardlog::tui::harness::{key, key_mod, render, send, type_str};
use unicode_width::UnicodeWidthStr;

fn stamp() -> Stamp {
    Stamp::new(
        "test-analyst",
        Utc.with_ymd_and_hms(2027, 3, 14, 9, 10, 0).unwrap(),
    )
}

/// Invented names only; the non-ASCII ones check alignment.
const SUPPLIERS: [&str; 3] = ["GLASBRÜCKE", "湖畔硝子", "NORTHPANE"];

fn seed(store: &mut Store, n: usize) {
    for i in 0..n {
        let day = NaiveDate::from_ymd_opt(2027, 1, 1).unwrap() + chrono::Days::new(i as u64);
        let mut d = Incident::draft(day);
        d.asset = Some(format!("car {}", 200 + i));
        d.position = if i % 2 == 0 {
            "left side, bay 3".into()
        } else {
            "Tür vorne, Scheibe ü".into()
        };
        d.glass = Glass {
            supplier: Some(SUPPLIERS[i % 3].to_string()),
            product: Some("FLOAT6".to_string()),
            lot: Some(format!("L{}", 10 + i % 4)),
            makeup: "monolithic".into(),
            ..Glass::default()
        };
        d.status = if i % 5 == 0 { "closed" } else { "reported" }.into();
        d.description = if i == 7 {
            "hairline from the lower edge near the frame clip".into()
        } else {
            String::new()
        };
        store.create_incident(&d, &stamp()).unwrap();
    }
}

struct Fixture {
    _dir: tempfile::TempDir,
    path: std::path::PathBuf,
}

fn fixture(n: usize) -> (Fixture, App) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    let mut store = Store::open(&path).unwrap();
    seed(&mut store, n);
    let app = App::with_store(store, &path).unwrap();
    (Fixture { _dir: dir, path }, app)
}

fn text(lines: &[String]) -> String {
    lines.join("\n")
}

fn ctrl(c: char) -> ratatui::crossterm::event::Event {
    key_mod(KeyCode::Char(c), KeyModifiers::CONTROL)
}

#[test]
fn the_log_shows_only_visible_rows_and_the_count() {
    let (_f, mut app) = fixture(60);
    let lines = render(&mut app, 100, 30);
    let t = text(&lines);
    assert!(t.contains("60 incidents match"), "{t}");
    // 30 rows - 5 rows of chrome
    assert_eq!(app.log.rows.len(), 25);
    assert!(t.contains("rows 1–25"), "{t}");
    // newest first by default
    assert_eq!(app.log.rows[0].occurred.to_string(), "2027-03-01");
}

#[test]
fn paging_moves_through_every_row_and_back() {
    let (_f, mut app) = fixture(60);
    render(&mut app, 100, 30);
    let first = app.log.rows[0].reference.clone();
    send(&mut app, &key(KeyCode::PageDown));
    assert!(text(&render(&mut app, 100, 30)).contains("rows 26–50"));
    send(&mut app, &key(KeyCode::PageDown));
    assert_eq!(app.log.rows.len(), 10);
    // End: the oldest incident, last row
    send(&mut app, &key(KeyCode::End));
    assert_eq!(
        app.log.selected_row().unwrap().occurred.to_string(),
        "2027-01-01"
    );
    assert!(text(&render(&mut app, 100, 30)).contains("rows 36–60"));
    // walking up from the end crosses pages
    for _ in 0..30 {
        send(&mut app, &key(KeyCode::Char('k')));
    }
    let row = app.log.selected_row().unwrap().occurred.to_string();
    assert_eq!(row, "2027-01-31", "30 rows above the oldest");
    send(&mut app, &key(KeyCode::Home));
    assert_eq!(app.log.rows[0].reference, first);
    // the mouse wheel scrolls too
    send(
        &mut app,
        &ratatui::crossterm::event::Event::Mouse(ratatui::crossterm::event::MouseEvent {
            kind: ratatui::crossterm::event::MouseEventKind::ScrollDown,
            column: 1,
            row: 5,
            modifiers: KeyModifiers::NONE,
        }),
    );
    assert_eq!(app.log.selected, 1);
}

#[test]
fn sort_filter_and_search_go_through_the_store() {
    let (_f, mut app) = fixture(30);
    render(&mut app, 100, 30);
    // sort by reference, then reverse
    send(&mut app, &key(KeyCode::Char('s')));
    assert!(text(&render(&mut app, 100, 30)).contains("sort: reference descending"));
    send(&mut app, &key(KeyCode::Char('S')));
    assert!(text(&render(&mut app, 100, 30)).contains("sort: reference ascending"));
    // filter by status: open the filter form, type to narrow the status list, Enter, save
    send(&mut app, &key(KeyCode::Char('f')));
    assert_eq!(app.screen(), Screen::Edit);
    type_str(&mut app, "closed");
    send(&mut app, &key(KeyCode::Enter));
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Log);
    let t = text(&render(&mut app, 100, 30));
    // 0, 5, 10, 15, 20, 25 are closed
    assert!(t.contains("6 incidents match"), "{t}");
    assert!(t.contains("filter: status closed"), "{t}");
    // the store agrees
    let store = app.store.as_ref().unwrap();
    let page = store
        .list(
            &Filter {
                status: Some("closed".into()),
                ..Filter::default()
            },
            Sort::default(),
            &PageRequest::default(),
        )
        .unwrap();
    assert_eq!(page.total, Some(6));
    // clear, then search text
    send(&mut app, &key(KeyCode::Char('x')));
    send(&mut app, &key(KeyCode::Char('/')));
    type_str(&mut app, "hairline");
    send(&mut app, &key(KeyCode::Enter));
    let t = text(&render(&mut app, 100, 30));
    assert!(t.contains("1 incident matches"), "{t}");
    assert_eq!(app.log.rows.len(), 1);
    assert_eq!(app.log.rows[0].asset.as_deref(), Some("car 207"));
}

#[test]
fn non_ascii_names_line_up() {
    let (_f, mut app) = fixture(9);
    let lines = render(&mut app, 110, 20);
    // the Status column starts at the same display column on every row
    let header = lines.iter().find(|l| l.contains("Reference")).unwrap();
    let status_col = UnicodeWidthStr::width(&header[..header.find("Status").unwrap()]);
    let mut checked = 0;
    for l in lines.iter().filter(|l| l.contains("BR-")) {
        let at = l.find("reported").or_else(|| l.find("closed")).unwrap();
        assert_eq!(
            UnicodeWidthStr::width(&l[..at]),
            status_col,
            "misaligned row:\n{l}\n{header}"
        );
        checked += 1;
    }
    assert_eq!(checked, 9);
    assert!(lines.iter().any(|l| l.contains("湖畔硝子")));
}

fn open_first(app: &mut App) {
    render(app, 100, 30);
    send(app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
}

#[test]
fn edit_validate_save_and_see_the_history_entry() {
    let (_f, mut app) = fixture(3);
    open_first(&mut app);
    let reference = app.incident.as_ref().unwrap().incident.reference.clone();
    let rev = app.incident.as_ref().unwrap().incident.revision;
    // edit intake: go to "Found on", break the date
    send(&mut app, &key(KeyCode::Char('e')));
    assert_eq!(app.screen(), Screen::Edit);
    app.edit.as_mut().unwrap().form.set_focus("found_on");
    for _ in 0..10 {
        send(&mut app, &key(KeyCode::Backspace));
    }
    type_str(&mut app, "2027-02-30");
    let t = text(&render(&mut app, 100, 30));
    assert!(t.contains("is not a date"), "{t}");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Edit, "an invalid form is not saved");
    assert!(app.message.as_ref().unwrap().text.contains("Found on"));
    // fix it and change the position too
    send(&mut app, &key(KeyCode::Backspace));
    send(&mut app, &key(KeyCode::Backspace));
    type_str(&mut app, "28");
    app.edit.as_mut().unwrap().form.set_focus("position");
    for _ in 0..40 {
        send(&mut app, &key(KeyCode::Backspace));
    }
    type_str(&mut app, "rechts, Fenster 2");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let inc = &app.incident.as_ref().unwrap().incident;
    assert_eq!(inc.revision, rev + 1);
    assert_eq!(inc.position, "rechts, Fenster 2");
    assert_eq!(inc.found_on.to_string(), "2027-02-28");
    // the history section shows the update first
    for _ in 0..6 {
        send(&mut app, &key(KeyCode::Tab));
    }
    assert_eq!(app.incident.as_ref().unwrap().section, Section::History);
    let lines = render(&mut app, 100, 30);
    let first_entry = lines
        .iter()
        .find(|l| l.contains("▸#") || l.contains(" #"))
        .unwrap();
    assert!(first_entry.contains("changed"), "{first_entry}");
    assert!(first_entry.contains("position"), "{first_entry}");
    assert!(text(&lines).contains(&reference));
}

#[test]
fn a_stale_revision_is_refused_and_the_typing_kept() {
    let (f, mut app) = fixture(2);
    open_first(&mut app);
    let id = app.incident.as_ref().unwrap().incident.id.clone();
    send(&mut app, &key(KeyCode::Char('e')));
    app.edit.as_mut().unwrap().form.set_focus("description");
    type_str(&mut app, "typed at the bench");
    // someone else saves the same incident meanwhile
    let mut other = Store::open(&f.path).unwrap();
    let mut inc = other.get(&id).unwrap();
    inc.notes = "changed elsewhere".into();
    other.update_incident(&inc, &stamp()).unwrap();
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Edit);
    let msg = &app.message.as_ref().unwrap().text;
    assert!(msg.contains("changed meanwhile"), "{msg}");
    assert!(msg.contains("input is kept"), "{msg}");
    let form = &app.edit.as_ref().unwrap().form;
    assert_eq!(form.text("description"), "typed at the bench");
    assert_eq!(other.get(&id).unwrap().description, "");
}

#[test]
fn esc_with_unsaved_changes_asks_first() {
    let (_f, mut app) = fixture(1);
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Char('e')));
    app.edit.as_mut().unwrap().form.set_focus("position");
    type_str(&mut app, "x");
    send(&mut app, &key(KeyCode::Esc));
    assert!(app.prompt.is_some());
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("unsaved changes"), "{t}");
    send(&mut app, &key(KeyCode::Char('n')));
    assert_eq!(app.screen(), Screen::Edit);
    assert!(app
        .edit
        .as_ref()
        .unwrap()
        .form
        .text("position")
        .ends_with('x'));
    send(&mut app, &key(KeyCode::Esc));
    send(&mut app, &key(KeyCode::Char('y')));
    assert_eq!(app.screen(), Screen::Incident);
    // nothing was saved
    assert!(!app
        .incident
        .as_ref()
        .unwrap()
        .incident
        .position
        .ends_with('x'));
}

#[test]
fn new_incident_by_keys_then_cause_custody_and_bench_result() {
    let (_f, mut app) = fixture(0);
    render(&mut app, 80, 24);
    send(&mut app, &key(KeyCode::Char('n')));
    type_str(&mut app, "car 214\n"); // asset: new code, Enter takes it
    type_str(&mut app, "left side, bay 3");
    let before = app.store.as_ref().unwrap().incident_count().unwrap();
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    assert_eq!(
        app.store.as_ref().unwrap().incident_count().unwrap(),
        before + 1
    );
    // cause: Tab to the Cause section, edit, pick "thermal" by typing
    for _ in 0..4 {
        send(&mut app, &key(KeyCode::Tab));
    }
    send(&mut app, &key(KeyCode::Char('e')));
    type_str(&mut app, "thermal\n");
    type_str(&mut app, "probable\n");
    type_str(&mut app, "undetermined\n");
    app.edit.as_mut().unwrap().form.set_focus("status");
    type_str(&mut app, "cause assigned\n");
    send(&mut app, &ctrl('s'));
    let inc = app.incident.as_ref().unwrap().incident.clone();
    let cause = inc.cause.as_ref().expect("cause saved");
    assert_eq!(cause.category, "thermal");
    assert_eq!(cause.confidence, "probable");
    assert_eq!(inc.status, "cause_assigned");
    // custody: received, at the default time, by depot staff
    send(&mut app, &key(KeyCode::Char('c')));
    send(&mut app, &ctrl('s'));
    assert_eq!(app.incident.as_ref().unwrap().incident.custody.len(), 1);
    // bench: readings, save into the incident, figures equal the core
    send(&mut app, &key(KeyCode::Char('b')));
    assert_eq!(app.screen(), Screen::Bench);
    app.bench.form.set_focus("r_mist");
    type_str(&mut app, "1.0 mm\n1.02 mm");
    send(&mut app, &ctrl('s'));
    let msg = app.message.clone().unwrap();
    assert!(!msg.error, "{}", msg.text);
    let shardlog::app::bench::Outcome::Done { analysis, .. } = &app.bench.outcome else {
        panic!()
    };
    let core = analysis.clone();
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Incident);
    let inc = &app.incident.as_ref().unwrap().incident;
    let (exam, result) = inc.current_result().expect("result saved");
    assert_eq!(exam.readings.len(), 2);
    assert_eq!(exam.readings[0].radius.display(), "1.0 mm");
    assert_eq!(result.stress_pa, Some(core.stress_pa));
    assert_eq!(result.flaw_size_m, core.flaw.as_ref().map(|f| f.size_m));
}

#[test]
fn attach_a_file_and_see_its_hash() {
    let (f, mut app) = fixture(1);
    let photo = f.path.parent().unwrap().join("origin-1.jpg");
    std::fs::write(&photo, b"not really a jpeg").unwrap();
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Char('a')));
    type_str(&mut app, photo.to_str().unwrap());
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "origin, 40 mm from the corner");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let inc = &app.incident.as_ref().unwrap().incident;
    assert_eq!(inc.attachments.len(), 1);
    let hash = inc.attachments[0].sha256.clone();
    app.incident.as_mut().unwrap().section = Section::Evidence;
    let t = text(&render(&mut app, 100, 30));
    assert!(t.contains(&hash), "{t}");
    assert!(t.contains("origin-1.jpg"), "{t}");
    // a wrong path is named and nothing is attached
    send(&mut app, &key(KeyCode::Char('a')));
    type_str(&mut app, "/no/such/file.jpg");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Edit);
    assert!(app
        .message
        .as_ref()
        .unwrap()
        .text
        .contains("/no/such/file.jpg"));
}

#[test]
fn every_screen_survives_tiny_sizes() {
    let (_f, mut app) = fixture(5);
    let sizes = [(0, 0), (1, 1), (12, 4), (39, 9), (40, 10), (80, 24)];
    for s in sizes {
        render(&mut app, s.0, s.1);
    }
    send(&mut app, &key(KeyCode::Enter));
    for section in Section::ALL {
        app.incident.as_mut().unwrap().section = section;
        for s in sizes {
            render(&mut app, s.0, s.1);
        }
    }
    send(&mut app, &key(KeyCode::Char('e')));
    for s in sizes {
        render(&mut app, s.0, s.1);
    }
}

#[test]
fn a_chosen_supplier_narrows_products_and_lots() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("narrow.db");
    let mut store = Store::open(&path).unwrap();
    for (sup, prod, lot) in [
        ("ALDERGLAS", "AG-SW5", "AG-L1"),
        ("BIRCHPANE", "BP-SW6", "BP-L7"),
    ] {
        let mut d = Incident::draft(NaiveDate::from_ymd_opt(2027, 2, 1).unwrap());
        d.glass = Glass {
            supplier: Some(sup.into()),
            product: Some(prod.into()),
            lot: Some(lot.into()),
            makeup: "monolithic".into(),
            ..Glass::default()
        };
        store.create_incident(&d, &stamp()).unwrap();
    }
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 100, 30);
    send(&mut app, &key(KeyCode::Char('n')));
    app.edit.as_mut().unwrap().form.set_focus("supplier");
    type_str(&mut app, "birch\n");
    let form = &app.edit.as_ref().unwrap().form;
    assert_eq!(form.text("supplier"), "BIRCHPANE");
    let products: Vec<&str> = form
        .pick("product")
        .unwrap()
        .items()
        .iter()
        .map(|i| i.code.as_str())
        .collect();
    assert_eq!(products, vec!["BP-SW6"]);
    type_str(&mut app, "\n"); // take the only product
    let form = &app.edit.as_ref().unwrap().form;
    let lots: Vec<&str> = form
        .pick("lot")
        .unwrap()
        .items()
        .iter()
        .map(|i| i.code.as_str())
        .collect();
    assert_eq!(lots, vec!["BP-L7"]);
}

#[test]
fn leaving_the_bench_with_unsaved_readings_asks_first() {
    let (_f, mut app) = fixture(1);
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Char('b')));
    app.bench.form.set_focus("r_mist");
    type_str(&mut app, "1.1 mm");
    send(&mut app, &key(KeyCode::Esc));
    assert!(app.prompt.is_some(), "asks before dropping readings");
    send(&mut app, &key(KeyCode::Esc)); // no: stay
    assert_eq!(app.screen(), Screen::Bench);
    assert_eq!(app.bench.form.text("r_mist"), "1.1 mm");
}

/// A laminated pane's second ply is edited in the Glass section like the first; a second
/// ply left empty is no ply, and a third ply recorded elsewhere is kept and shown.
#[test]
fn every_ply_of_the_make_up_is_editable() {
    let (f, mut app) = fixture(1);
    open_first(&mut app);
    let id = app.incident.as_ref().unwrap().incident.id.clone();
    send(&mut app, &key(KeyCode::Tab));
    assert_eq!(app.incident.as_ref().unwrap().section, Section::Glass);
    // ply 1 only: the empty ply 2 fields do not make a second ply
    send(&mut app, &key(KeyCode::Char('e')));
    app.edit.as_mut().unwrap().form.set_focus("thickness");
    type_str(&mut app, "6 mm");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let plies = &app.incident.as_ref().unwrap().incident.glass.plies;
    assert_eq!(plies.len(), 1);
    assert!((plies[0].thickness_m.unwrap() - 0.006).abs() < 1e-12);
    // now the inner ply of a laminate
    send(&mut app, &key(KeyCode::Char('e')));
    let t = text(&render(&mut app, 100, 40));
    assert!(
        t.contains("Ply 2 temper ") && !t.contains("Ply 2 temper c…"),
        "{t}"
    );
    app.edit.as_mut().unwrap().form.set_focus("ply2_temper");
    type_str(&mut app, "fully\n");
    app.edit.as_mut().unwrap().form.set_focus("ply2_thickness");
    type_str(&mut app, "4 mm");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let store = Store::open(&f.path).unwrap();
    let stored = store.get(&id).unwrap();
    assert_eq!(stored.glass.plies.len(), 2);
    assert_eq!(
        stored.glass.plies[1].temper.as_deref(),
        Some("fully_tempered")
    );
    assert!((stored.glass.plies[1].thickness_m.unwrap() - 0.004).abs() < 1e-12);
    assert!((stored.glass.plies[0].thickness_m.unwrap() - 0.006).abs() < 1e-12);
    // a third ply added by another user is shown and survives an edit of ply 2
    let mut other = Store::open(&f.path).unwrap();
    let mut inc = other.get(&id).unwrap();
    let mut third = inc.glass.plies[0].clone();
    third.coating = "low-e on face 5".into();
    inc.glass.plies.push(third);
    other.update_incident(&inc, &stamp()).unwrap();
    drop(app);
    let mut app = App::with_store(Store::open(&f.path).unwrap(), &f.path).unwrap();
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Char('e')));
    let form = &app.edit.as_ref().unwrap().form;
    assert_eq!(form.text("ply3_coating"), "low-e on face 5");
    app.edit.as_mut().unwrap().form.set_focus("ply2_coating");
    type_str(&mut app, "none");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let stored = other.get(&id).unwrap();
    assert_eq!(stored.glass.plies.len(), 3);
    assert_eq!(stored.glass.plies[1].coating, "none");
    assert_eq!(stored.glass.plies[2].coating, "low-e on face 5");
}

/// At 80 columns the log gives the date column's room to the asset and position (the
/// reference carries the date found and shows the date sort), and a built-in status whose
/// label does not fit shows its short form.
#[test]
fn the_log_at_80_columns_keeps_what_matters() {
    let (f, mut app) = fixture(3);
    let t = text(&render(&mut app, 80, 24));
    assert!(!t.contains("Found"), "{t}");
    assert!(t.contains("Reference ▼"), "{t}");
    let wide = text(&render(&mut app, 120, 24));
    assert!(wide.contains("Found ▼"), "{wide}");
    let mut store = Store::open(&f.path).unwrap();
    let id = app.log.rows[0].id.clone();
    let mut inc = store.get(&id).unwrap();
    inc.status = "cause_assigned".into();
    store.update_incident(&inc, &stamp()).unwrap();
    let mut app = App::with_store(Store::open(&f.path).unwrap(), &f.path).unwrap();
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains(" assigned "), "{t}");
    assert!(!t.contains("cause ass…"), "{t}");
}

#[test]
fn the_audit_author_is_the_actor_the_interface_was_opened_with() {
    let (f, app) = fixture(1);
    drop(app);
    let mut app = App::open(&f.path, " ines\u{1b}[31m ").unwrap();
    assert_eq!(app.actor, "ines", "trimmed and cleaned for the terminal");
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Char('e')));
    app.edit.as_mut().unwrap().form.set_focus("position");
    type_str(&mut app, " (checked)");
    send(&mut app, &ctrl('s'));
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    let id = app.incident.as_ref().unwrap().incident.id.clone();
    let history = Store::open(&f.path).unwrap().history(&id).unwrap();
    let last = history.last().unwrap();
    assert_eq!(last.op, "update");
    assert_eq!(last.actor, "ines");
}

#[test]
fn a_field_edits_by_the_usual_keys() {
    let (_f, mut app) = fixture(1);
    open_first(&mut app);
    send(&mut app, &key(KeyCode::Char('e')));
    app.edit.as_mut().unwrap().form.set_focus("position");
    // clear the line: to its end, then delete the words before the caret
    send(&mut app, &key(KeyCode::End));
    for _ in 0..10 {
        send(&mut app, &ctrl('w'));
    }
    type_str(&mut app, "left bay 3");
    send(&mut app, &key(KeyCode::Home));
    send(&mut app, &key(KeyCode::Delete));
    type_str(&mut app, "L");
    send(&mut app, &key_mod(KeyCode::Right, KeyModifiers::CONTROL));
    type_str(&mut app, "side ");
    send(&mut app, &key(KeyCode::End));
    send(&mut app, &key(KeyCode::Backspace));
    type_str(&mut app, "3");
    send(&mut app, &key(KeyCode::Left));
    send(&mut app, &key(KeyCode::Left));
    type_str(&mut app, ",");
    let edit = app.edit.as_ref().unwrap();
    assert_eq!(edit.form.text("position"), "Left side bay, 3");
    let lines = render(&mut app, 100, 30);
    assert!(
        text(&lines).contains("Left side bay, 3"),
        "{}",
        text(&lines)
    );
}

#[test]
fn escape_sequences_in_stored_text_show_as_symbols_not_dropped() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    let mut store = Store::open(&path).unwrap();
    let mut d = Incident::draft(NaiveDate::from_ymd_opt(2027, 2, 1).unwrap());
    d.asset = Some("car 7".into());
    d.position = "door\u{1b}[2Jleft".into();
    d.description = "edge chip\u{1b}]0;owned\u{7} then a bell\u{7}".into();
    store.create_incident(&d, &stamp()).unwrap();
    let mut app = App::with_store(store, &path).unwrap();
    // the log row: the screen-clearing sequence is shown, not obeyed nor cut
    let t = text(&render(&mut app, 100, 30));
    assert!(t.contains("door␛[2Jleft"), "{t}");
    open_first(&mut app);
    for (w, h) in [(80, 24), (100, 30)] {
        let t = text(&render(&mut app, w, h));
        assert!(!t.contains('\u{1b}') && !t.contains('\u{7}'), "{t}");
        assert!(t.contains("␛]0;owned␇"), "{w}×{h}: {t}");
        assert!(t.contains("then a bell␇"), "{w}×{h}: {t}");
    }
}

/// The first-use question fits 80×24 whole: its text does not wrap the name line out of
/// the box, and what is typed shows.
#[test]
fn the_first_use_name_box_shows_its_name_line_at_80x24() {
    let (_f, mut app) = fixture(30);
    app.ask_name(Some("ivh"));
    let screen = text(&render(&mut app, 80, 24));
    assert!(screen.contains("Your name: ivh"), "{screen}");
    assert!(screen.contains("(SHARDLOG_USER sets it too)."), "{screen}");
}

#[test]
fn the_log_at_80_columns_shows_a_bench_coded_reference_whole() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.db");
    let mut store = Store::open(&path).unwrap();
    store.set_bench_code("WESTYARD").unwrap();
    seed(&mut store, 3);
    let mut app = App::with_store(store, &path).unwrap();
    let reference = app.log.rows[0].reference.clone();
    assert!(reference.starts_with("BR-WESTYARD-"), "{reference}");
    assert_eq!(reference.len(), 23);
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains(&format!("{reference} ")), "{t}");
    // the asset and position keep some room, and the row still fits the screen
    assert!(t.contains("car 20"), "{t}");
    for line in t.lines() {
        assert!(line.width() <= 80, "{line}");
    }
}
