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
        chrono::TimeZone::with_ymd_and_hms(&chrono::Utc, 2026, 3, 14, 9, 10, 0).unwrap(),
    )
}

/// A database with one draft incident (its pattern's origin location as given), and the
/// app opened on it.
fn one_incident(dir: &std::path::Path, location: Option<&str>) -> App {
    let path = dir.join("bench.db");
    let mut store = Store::open(&path).unwrap();
    let day = chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap();
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
    let day = chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap();
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
        viewing: None,
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

/// The bench alone (no database): a 1 mm mirror–mist reading in 6 mm soda-lime, a measured
/// flaw of 90 µm, and a thermal hypothesis of 30 K.
fn bench_with_hypothesis() -> App {
    let mut app = App::new(&std::env::temp_dir().join("shardlog-tui-bench-none.db"));
    focus(&mut app, "r_mist");
    type_str(&mut app, "1 mm");
    focus(&mut app, "thickness");
    type_str(&mut app, "6 mm");
    focus(&mut app, "measured_flaw");
    type_str(&mut app, "90 um");
    focus(&mut app, "delta_t");
    type_str(&mut app, "30 K");
    assert!(matches!(app.bench.outcome, Outcome::Done { .. }));
    assert!(matches!(app.bench.hypothesis, Some(Ok(_))));
    app
}

/// The rows of the results pane (the right-hand box under its title), without the borders.
fn results_rows(lines: &[String]) -> Vec<String> {
    let top = lines
        .iter()
        .position(|l| l.contains("Results (live)"))
        .expect("the results pane");
    let left = lines[top]
        .find("┌ Results")
        .map(|b| lines[top][..b].chars().count())
        .unwrap_or(0);
    lines[top + 1..]
        .iter()
        .take_while(|l| l.chars().nth(left).is_none_or(|c| c != '└'))
        .map(|l| {
            l.chars()
                .skip(left + 1)
                .collect::<String>()
                .trim_end_matches(['│', ' '])
                .to_string()
        })
        .collect()
}

#[test]
fn at_80x24_the_results_keep_their_rows_and_figures_stay_whole() {
    let mut app = bench_with_hypothesis();
    let lines = render(&mut app, 80, 24);
    let rows = results_rows(&lines);
    let screen = lines.join("\n");
    assert!(
        rows.len() >= 12,
        "results pane has {} rows:\n{screen}",
        rows.len()
    );
    // the headline figures and the hypothesis are in view, each interval on one row
    for whole in [
        "60.1 MPa",
        "(51.1 – 70.7 MPa)",
        "93.4 µm",
        "(61.5 – 142 µm)",
        "18.9 MPa",
    ] {
        assert!(
            rows.iter().any(|r| r.contains(whole)),
            "no row holds '{whole}' whole:\n{screen}"
        );
    }
    // no row begins with a unit or an interval's dash parted from its number
    for r in &rows {
        let first = r.split_whitespace().next().unwrap_or("");
        assert!(
            !["MPa", "µm", "mm", "K", "–", "MPa)", "µm)"].contains(&first),
            "'{r}' starts with a part of a figure:\n{screen}"
        );
    }
    assert!(
        !screen.contains('\u{a0}'),
        "no-break spaces are drawn as spaces"
    );
}

#[test]
fn the_chart_has_a_unit_distinct_glyphs_and_the_flaw_mark_at_the_measured_size() {
    use shardlog::tui::screens::hypothesis::{
        GLYPH_FLAW, GLYPH_HYPOTHESIS, GLYPH_MEASURED, GLYPH_MIRROR, GLYPH_TOUGHNESS,
    };
    let mut app = bench_with_hypothesis();
    let lines = render(&mut app, 100, 30);
    let screen = lines.join("\n");
    let legend = lines
        .iter()
        .find(|l| l.contains("K/MPa·√m") && l.contains("K_Ic"))
        .unwrap_or_else(|| panic!("no legend:\n{screen}"));
    assert!(
        legend.contains("MPa·√m"),
        "the K axis has its unit: {legend}"
    );
    let glyphs = [
        GLYPH_HYPOTHESIS,
        GLYPH_MEASURED,
        GLYPH_TOUGHNESS,
        GLYPH_FLAW,
        GLYPH_MIRROR,
    ];
    let mut distinct = glyphs.to_vec();
    distinct.sort();
    distinct.dedup();
    assert_eq!(distinct.len(), glyphs.len(), "one glyph per entry");
    for g in glyphs {
        assert!(legend.contains(g), "legend lacks {g}: {legend}");
    }
    // below the legend, each mark is drawn with its glyph (readable without colour)
    let at = lines.iter().position(|l| l == legend).unwrap();
    let chart: Vec<&String> = lines[at + 1..].iter().take(9).collect();
    for g in [GLYPH_MEASURED, GLYPH_TOUGHNESS, GLYPH_FLAW, GLYPH_MIRROR] {
        assert!(
            chart.iter().any(|l| l.contains(g)),
            "chart lacks {g}:\n{screen}"
        );
    }
    // the flaw mark sits where 90 µm falls on the log axis between the end labels
    let Some(Ok(check)) = &app.bench.hypothesis else {
        panic!()
    };
    let k = check.chart.as_ref().unwrap();
    let m = k.measured_flaw_m.expect("the measured flaw in the chart");
    assert!((m - 90e-6).abs() < 1e-12, "{m}");
    let first = k.curve.points.first().unwrap().flaw_size;
    let last = k.curve.points.last().unwrap().flaw_size;
    let axis_row = chart.iter().find(|l| l.contains('└')).unwrap();
    let corner = axis_row.chars().position(|c| c == '└').unwrap();
    let end = axis_row.chars().count() - axis_row.chars().rev().position(|c| c == '─').unwrap();
    let plot_w = end - corner - 1;
    let f = (m / first).log10() / (last / first).log10();
    let expected = corner + 1 + (f * (plot_w - 1) as f64).round() as usize;
    let flaw_row = chart.iter().find(|l| l.contains(GLYPH_FLAW)).unwrap();
    let col = flaw_row.chars().position(|c| c == GLYPH_FLAW).unwrap();
    assert_eq!(col, expected, "flaw mark column:\n{screen}");
}

#[test]
fn no_agreement_is_shown_for_a_mirror_that_is_not_closed() {
    // 7 mm mirror in a 6 mm pane: not closed; branching at 15 mm
    let mut app = App::new(&std::env::temp_dir().join("shardlog-tui-bench-none.db"));
    focus(&mut app, "r_mist");
    type_str(&mut app, "7 mm");
    focus(&mut app, "r_branch");
    type_str(&mut app, "15 mm");
    focus(&mut app, "thickness");
    type_str(&mut app, "6 mm");
    let Outcome::Done { analysis, .. } = &app.bench.outcome else {
        panic!("{:?}", app.bench.outcome)
    };
    assert!(analysis.warnings.iter().any(|w| w.contains("not closed")));
    assert!(
        analysis.consistency.is_empty(),
        "{:?}",
        analysis.consistency
    );
    for _ in 0..10 {
        send(&mut app, &key(KeyCode::PageDown));
    }
    let screen = render(&mut app, 100, 40).join("\n");
    assert!(!screen.contains("✓ agree"), "{screen}");
    assert!(screen.contains("not checked"), "{screen}");
}

#[test]
fn f2_is_advertised_only_where_it_works() {
    let dir = tempfile::tempdir().unwrap();
    let mut app = one_incident(dir.path(), None);
    open_bench(&mut app);
    focus(&mut app, "r_mist");
    let bench = render(&mut app, 80, 24);
    assert!(bench.last().unwrap().contains("F2"), "{}", bench.join("\n"));
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Incident);
    send(&mut app, &key(KeyCode::Char('e')));
    assert_eq!(app.screen(), Screen::Edit);
    let edit = render(&mut app, 80, 24);
    assert!(!edit.last().unwrap().contains("F2"), "{}", edit.join("\n"));
    send(&mut app, &key(KeyCode::F(1)));
    let help = render(&mut app, 100, 60).join("\n");
    assert!(help.contains("Tab") && !help.contains("F2"), "{help}");
}

#[test]
fn saving_a_possible_duplicate_asks_first() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("dup.db");
    let store = Store::open(&path).unwrap();
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 80, 24);
    let new_incident = |app: &mut App| {
        send(app, &key(KeyCode::Char('n')));
        type_str(app, "car 214\n");
        type_str(app, "left side, bay 3");
        save_keys(app);
    };
    new_incident(&mut app);
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
    send(&mut app, &key(KeyCode::Esc));
    let count = |app: &App| app.store.as_ref().unwrap().incident_count().unwrap();
    assert_eq!(count(&app), 1);
    // the same asset, position and day: asked, and n keeps the form unsaved
    new_incident(&mut app);
    assert_eq!(count(&app), 1);
    let screen = render(&mut app, 80, 24).join("\n");
    assert!(screen.contains("Possible duplicate"), "{screen}");
    assert!(screen.contains("BR-"), "{screen}");
    send(&mut app, &key(KeyCode::Char('n')));
    assert_eq!(app.screen(), Screen::Edit);
    assert_eq!(count(&app), 1);
    // asked again on the next save; y saves it
    save_keys(&mut app);
    assert!(app.prompt.is_some());
    send(&mut app, &key(KeyCode::Char('y')));
    assert_eq!(count(&app), 2);
    assert_eq!(app.screen(), Screen::Incident, "{:?}", app.message);
}

fn save_keys(app: &mut App) {
    send(
        app,
        &Event::Key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL)),
    );
}

#[test]
fn a_revision_is_restored_from_the_history_as_a_new_change() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("revert.db");
    let mut store = Store::open(&path).unwrap();
    let day = chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap();
    let mut draft = Incident::draft(day);
    draft.position = "door left".into();
    let created = store.create_incident(&draft, &stamp()).unwrap();
    let mut changed = created.clone();
    changed.position = "door right".into();
    changed.status = "examining".into();
    let changed = store.update_incident(&changed, &stamp()).unwrap();
    assert_eq!(changed.revision, 2);
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 80, 24);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
    // to the History section (the last one)
    for _ in 0..10 {
        if app.incident.as_ref().unwrap().section == shardlog::app::incident::Section::History {
            break;
        }
        send(&mut app, &key(KeyCode::Tab));
    }
    let screen = render(&mut app, 80, 24).join("\n");
    assert!(
        screen.contains("▸#"),
        "the newest entry is highlighted:\n{screen}"
    );
    // v on the newest entry: nothing to restore
    send(&mut app, &key(KeyCode::Char('v')));
    assert!(app.prompt.is_none());
    // down to the creation, v, the question, y
    send(&mut app, &key(KeyCode::Down));
    send(&mut app, &key(KeyCode::Char('v')));
    let screen = render(&mut app, 80, 24).join("\n");
    assert!(screen.contains("Restore a revision"), "{screen}");
    assert!(screen.contains("revision 1"), "{screen}");
    send(&mut app, &key(KeyCode::Char('y')));
    let msg = app.message.clone().unwrap();
    assert!(!msg.error, "{}", msg.text);
    let state = app.incident.as_ref().unwrap();
    assert_eq!(state.incident.position, "door left");
    assert_eq!(state.incident.status, created.status);
    assert_eq!(state.incident.revision, 3, "a new revision");
    // the history keeps all three, the newest by this analyst
    assert_eq!(state.history.len(), 3);
    assert_eq!(state.history[0].op, "update");
    let store = app.store.as_ref().unwrap();
    let again = store.get(&created.id).unwrap();
    assert_eq!(again.position, "door left");
    let report = store.verify().unwrap();
    assert!(report.ok(), "{:?}", report.first_problem);
}

#[test]
fn exposure_is_entered_from_the_review() {
    let dir = tempfile::tempdir().unwrap();
    let mut app = one_incident(dir.path(), None);
    send(&mut app, &key(KeyCode::Esc));
    send(&mut app, &key(KeyCode::Char('r')));
    assert_eq!(app.screen(), Screen::Review);
    let footer = render(&mut app, 100, 30).last().unwrap().clone();
    assert!(footer.contains("x "), "{footer}");
    send(&mut app, &key(KeyCode::Char('x')));
    assert_eq!(app.screen(), Screen::Edit);
    type_str(&mut app, "NORTHPANE\n");
    type_str(&mut app, "FLOAT6\n");
    type_str(&mut app, "L10\n");
    type_str(&mut app, "DEPOT-A\n");
    type_str(&mut app, "2024-01-01");
    send(&mut app, &key(KeyCode::Tab));
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "1200");
    save_keys(&mut app);
    let msg = app.message.clone().unwrap();
    assert!(!msg.error, "{}", msg.text);
    assert_eq!(app.screen(), Screen::Review);
    let rows = app.store.as_ref().unwrap().exposure().unwrap();
    assert_eq!(rows.len(), 1, "{rows:?}");
    let e = &rows[0];
    assert_eq!(e.supplier, "NORTHPANE");
    assert_eq!(e.product.as_deref(), Some("FLOAT6"));
    assert_eq!(e.lot.as_deref(), Some("L10"));
    assert_eq!(e.site.as_deref(), Some("DEPOT-A"));
    assert_eq!(e.installed_on.to_string(), "2024-01-01");
    assert_eq!(e.removed_on, None);
    assert_eq!(e.panes, 1200);
}

#[test]
fn reverting_past_a_removed_examination_brings_back_its_figures_and_pin() {
    use shardlog::store::bench_record::{bench_examination, BenchRecord, BoundaryLines};
    use shardlog_core::fracture::{analyze, materials, AnalysisInput, Boundary};
    let mut store = Store::open_in_memory().unwrap();
    let day = chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap();
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
        readings: vec![BoundaryLines {
            boundary: "mirror_mist",
            label: "Mirror–mist R",
            lines: &lines,
        }],
        viewing: None,
        input: &input,
        analysis: &analysis,
        thermal: None,
        load: None,
    };
    let exam = bench_examination(None, &record).unwrap();
    let with_exam = store
        .put_examination(&inc.id, inc.revision, &exam, &stamp())
        .unwrap();
    let saved = with_exam.current_result().unwrap().1.clone();
    // restoring the current revision's own image keeps the whole analysis
    let history = store.history(&inc.id).unwrap();
    let last = history.last().unwrap().seq;
    let same = store
        .revert(&inc.id, last, with_exam.revision, &stamp())
        .unwrap();
    assert_eq!(same.current_result().unwrap().1.analysis, saved.analysis);
    // drop the examination, then restore the revision that had it
    let mut without = same.clone();
    without.examinations.clear();
    let without = store.update_incident(&without, &stamp()).unwrap();
    assert!(without.current_result().is_none());
    let back = store
        .revert(&inc.id, last, without.revision, &stamp())
        .unwrap();
    let (_, result) = back.current_result().expect("the examination is back");
    assert_eq!(result.stress_pa, saved.stress_pa);
    assert_eq!(result.applied_stress_pa, saved.applied_stress_pa);
    let pin = result.analysis["restored_from_history"].as_str().unwrap();
    assert!(pin.starts_with("sha256:"), "{pin}");
    // a stale revision is refused
    assert!(store
        .revert(&inc.id, last, without.revision, &stamp())
        .is_err());
    assert!(store.verify().unwrap().ok());
}
