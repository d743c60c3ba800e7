//! The bench calculator over a saved incident: reopening shows what was saved (hypothesis,
//! flaw geometry, constants), the origin location picks the default flaw geometry, and the
//! results pane at 80×24. TestBackend, driven by key events through the key table.

use ratatui::crossterm::event::{Event, KeyCode, KeyEvent, KeyModifiers};
use shardlog::app::bench::Outcome;
use shardlog::app::{App, Screen};
use shardlog::store::model::{Incident, Stamp};
use shardlog::store::Store;
use shardlog::tui::harness::{key, render, send, type_str};

fn stamp() -> Stamp {
    Stamp::new(
        "Vera Okonkwo-Lind",
        chrono::TimeZone::with_ymd_and_hms(&chrono::Utc, 2027, 3, 14, 9, 10, 0).unwrap(),
    )
}

/// A database with one draft incident (its pattern's origin location as given), and the
/// app opened on it.
fn one_incident(dir: &std::path::Path, location: Option<&str>) -> App {
    let path = dir.join("bench.db");
    let mut store = Store::open(&path).unwrap();
    let day = chrono::NaiveDate::from_ymd_opt(2027, 3, 1).unwrap();
    let mut draft = Incident::draft(day);
    draft.pattern.origin_location = location.map(str::to_string);
    store.create_incident(&draft, &stamp()).unwrap();
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 100, 30);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
    app
}

fn open_bench(app: &mut App) {
    send(app, &key(KeyCode::Char('b')));
    assert_eq!(app.screen(), Screen::Bench);
}

fn focus(app: &mut App, key_name: &str) {
    for _ in 0..60 {
        if app.bench.form.focus_key() == Some(key_name) {
            return;
        }
        send(app, &key(KeyCode::Tab));
    }
    panic!("no field {key_name}");
}

/// Focus a pick-list, type to narrow it, Enter to choose.
fn pick(app: &mut App, key_name: &str, words: &str) {
    focus(app, key_name);
    type_str(app, words);
    send(app, &key(KeyCode::Enter));
}

fn save(app: &mut App) {
    send(
        app,
        &Event::Key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL)),
    );
    let msg = app.message.clone().expect("a message after saving");
    assert!(!msg.error, "{}", msg.text);
}

fn flaw_size(app: &App) -> (f64, String) {
    let Outcome::Done { analysis, .. } = &app.bench.outcome else {
        panic!("not computed: {:?}", app.bench.outcome);
    };
    let f = analysis.flaw.as_ref().expect("a flaw size");
    (f.size_m, f.geometry_label.clone())
}

#[test]
fn reopening_a_saved_examination_restores_the_hypothesis_and_the_flaw_geometry() {
    let dir = tempfile::tempdir().unwrap();
    let mut app = one_incident(dir.path(), None);
    open_bench(&mut app);
    focus(&mut app, "r_mist");
    type_str(&mut app, "0.42 mm");
    focus(&mut app, "thickness");
    type_str(&mut app, "6 mm");
    pick(&mut app, "geometry", "edge");
    assert_eq!(app.bench.form.text("geometry"), "edge");
    pick(&mut app, "hypothesis", "pressure");
    focus(&mut app, "h_span");
    type_str(&mut app, "600 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "900 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "10 kPa");
    let (size, label) = flaw_size(&app);
    let stress = match &app.bench.hypothesis {
        Some(Ok(c)) => c.outcome.stress.unwrap(),
        other => panic!("{other:?}"),
    };
    save(&mut app);
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Incident);

    // reopen: the same geometry, the same flaw size, the same hypothesis with its inputs
    open_bench(&mut app);
    assert_eq!(app.bench.form.text("geometry"), "edge");
    let (again, again_label) = flaw_size(&app);
    assert_eq!(again_label, label);
    assert!((again - size).abs() <= 1e-12 * size, "{again} vs {size}");
    assert_eq!(app.bench.form.text("hypothesis"), "plate-pressure");
    assert_eq!(app.bench.form.text("h_span"), "600 mm");
    assert_eq!(app.bench.form.text("h_span_b"), "900 mm");
    assert_eq!(app.bench.form.text("h_pressure"), "10 kPa");
    match &app.bench.hypothesis {
        Some(Ok(c)) => assert_eq!(c.outcome.stress, Some(stress)),
        other => panic!("hypothesis not restored: {other:?}"),
    }
    assert!(
        !app.bench.form.is_dirty(),
        "nothing typed yet after reopening"
    );
}

#[test]
fn a_thermal_hypothesis_saved_without_its_typed_inputs_comes_back_from_its_figures() {
    use shardlog::store::bench_record::{bench_examination, BenchRecord, ThermalHypothesis};
    use shardlog_core::fracture::{analyze, materials, AnalysisInput, Boundary};
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("old.db");
    let mut store = Store::open(&path).unwrap();
    let day = chrono::NaiveDate::from_ymd_opt(2027, 3, 1).unwrap();
    let inc = store
        .create_incident(&Incident::draft(day), &stamp())
        .unwrap();
    let input = AnalysisInput::new(materials::find("soda-lime").unwrap())
        .with_readings(Boundary::MirrorMist, &[1e-3]);
    let analysis = analyze(&input).unwrap();
    let lines = vec!["1 mm".to_string()];
    let record = BenchRecord {
        analyst: "Vera Okonkwo-Lind",
        at: stamp().at,
        readings: vec![shardlog::store::bench_record::BoundaryLines {
            boundary: "mirror_mist",
            label: "Mirror–mist R",
            lines: &lines,
        }],
        input: &input,
        analysis: &analysis,
        thermal: Some(ThermalHypothesis {
            delta_t_k: 35.0,
            restraint: 0.8,
            stress_pa: 20e6,
            verdict: None,
        }),
        load: None,
    };
    let exam = bench_examination(None, &record).unwrap();
    store
        .put_examination(&inc.id, inc.revision, &exam, &stamp())
        .unwrap();
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 100, 30);
    send(&mut app, &key(KeyCode::Enter));
    open_bench(&mut app);
    assert_eq!(app.bench.form.text("hypothesis"), "thermal");
    assert_eq!(app.bench.form.text("delta_t"), "35 K");
    assert_eq!(app.bench.form.text("h_restraint"), "0.8");
    assert!(
        matches!(app.bench.thermal, Some(Ok(_))),
        "{:?}",
        app.bench.thermal
    );
}

#[test]
fn the_origin_location_of_the_pattern_chooses_the_default_flaw_geometry() {
    for (location, expected) in [
        ("edge", "edge crack"),
        ("corner", "corner crack"),
        ("interior", "embedded penny"),
        ("surface", "semicircular"),
    ] {
        let dir = tempfile::tempdir().unwrap();
        let mut app = one_incident(dir.path(), Some(location));
        open_bench(&mut app);
        assert_eq!(app.bench.form.text("origin"), location);
        assert_eq!(
            app.bench.form.text("geometry"),
            "",
            "default for the origin"
        );
        focus(&mut app, "r_mist");
        type_str(&mut app, "1 mm");
        let (_, label) = flaw_size(&app);
        assert!(
            label.to_lowercase().contains(expected),
            "{location}: {label}"
        );
        // a geometry picked by hand wins over the location's
        pick(&mut app, "geometry", "through");
        let (_, label) = flaw_size(&app);
        assert!(label.to_lowercase().contains("through"), "{label}");
    }
}
