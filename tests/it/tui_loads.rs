//! The load-hypothesis panel of the bench calculator (issue 7), against ratatui's TestBackend,
//! driven by key events through the key table. Every figure expected here is what
//! `shardlog_core::loads` itself gives for the same inputs: the panel must show the core's numbers.

use ratatui::crossterm::event::KeyCode;
use shardlog::app::bench::Outcome;
use shardlog::app::App;
use shardlog::tui::harness::{key, render, send, type_str};
use shardlog_core::fracture::materials;
use shardlog_core::loads::{self, critical, plates, verdict, Hypothesis};
use shardlog_core::units::{format, Unit};

fn bench_app() -> App {
    App::new(&std::env::temp_dir().join("shardlog-tui-loads-none.db"))
}

fn text(app: &mut App, w: u16, h: u16) -> String {
    render(app, w, h).join("\n")
}

/// Tab until the field `key_name` has the focus.
fn focus(app: &mut App, key_name: &str) {
    for _ in 0..60 {
        if app.bench.form.focus_key() == Some(key_name) {
            return;
        }
        send(app, &key(KeyCode::Tab));
    }
    panic!("no field {key_name}");
}

/// F2 to the hypothesis pick-list (from its own inputs F2 goes back to the readings, so a
/// second F2), type to narrow, Enter to choose.
fn choose(app: &mut App, words: &str) {
    send(app, &key(KeyCode::F(2)));
    if app.bench.form.focus_key() != Some("hypothesis") {
        assert_eq!(app.bench.form.focus_key(), Some("r_mist"));
        send(app, &key(KeyCode::F(2)));
    }
    assert_eq!(app.bench.form.focus_key(), Some("hypothesis"));
    type_str(app, words);
    send(app, &key(KeyCode::Enter));
}

fn soda_lime() -> materials::Material {
    materials::find("soda-lime").unwrap()
}

/// A 1 mm mirror–mist reading in 6 mm soda-lime: about 60 MPa applied.
fn with_readings() -> App {
    let mut app = bench_app();
    focus(&mut app, "r_mist");
    type_str(&mut app, "1 mm");
    focus(&mut app, "thickness");
    type_str(&mut app, "6 mm");
    assert!(matches!(app.bench.outcome, Outcome::Done { .. }));
    app
}

fn measured(app: &App) -> verdict::Measured {
    let Outcome::Done { analysis, .. } = &app.bench.outcome else {
        panic!("{:?}", app.bench.outcome)
    };
    verdict::Measured {
        stress: analysis.applied_stress_pa,
        low: analysis.applied_low_pa,
        high: analysis.applied_high_pa,
    }
}

fn check(app: &App) -> &shardlog::app::hypothesis::Check {
    match &app.bench.hypothesis {
        Some(Ok(c)) => c,
        other => panic!("{other:?}"),
    }
}

#[test]
fn thermal_figures_are_the_loads_figures() {
    let mut app = with_readings();
    choose(&mut app, "thermal");
    assert_eq!(app.bench.form.focus_key(), Some("delta_t"));
    type_str(&mut app, "40 K");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "0.8");
    let m = soda_lime();
    let expected = loads::evaluate(&Hypothesis::Thermal(loads::thermal::Thermal {
        youngs_modulus: m.youngs_modulus.as_ref().unwrap().value,
        expansion: m.expansion.as_ref().unwrap().value,
        delta_t: 40.0,
        restraint: 0.8,
    }))
    .unwrap();
    let c = check(&app);
    assert_eq!(c.outcome.stress, expected.stress);
    let want = verdict::judge(&measured(&app), expected.stress.unwrap(), None).unwrap();
    let got = c.verdict.as_ref().unwrap().as_ref().unwrap();
    assert_eq!(got.finding, want.finding);
    assert_eq!(got.ratio, want.ratio);
    let screen = text(&mut app, 100, 30);
    assert!(
        screen.contains(&format!(
            "σ {} hypothesis",
            format(expected.stress.unwrap(), Unit::Megapascal)
        )),
        "{screen}"
    );
    assert!(
        screen.contains(&format!("Verdict: {}", want.finding.label())),
        "{screen}"
    );
    assert!(screen.contains("K/MPa·√m"), "{screen}");
}

#[test]
fn impulse_gives_a_force_and_says_there_is_no_verdict() {
    // the impulse case of issue 7: 1.81 kg at 11.6 m/s reversed in 40 ms (common practice)
    let mut app = with_readings();
    choose(&mut app, "impulse");
    assert_eq!(app.bench.form.focus_key(), Some("h_mass"));
    type_str(&mut app, "1.81 kg");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "11.6 m/s");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "40 ms");
    let expected = loads::evaluate(&Hypothesis::Impulse(loads::impact::Impulse {
        mass: 1.81,
        speed: 11.6,
        contact_time: 0.04,
        restitution: 1.0,
    }))
    .unwrap();
    let c = check(&app);
    assert_eq!(c.outcome.force, expected.force);
    assert!((c.outcome.force.unwrap() - 1050.0).abs() < 5.0);
    assert!(c.verdict.is_none());
    let screen = text(&mut app, 100, 30);
    assert!(
        screen.contains(&format!(
            "F {}",
            format(expected.force.unwrap(), Unit::Newton)
        )),
        "{screen}"
    );
    assert!(screen.contains("force only"), "{screen}");
    // the force carries over as the patch load of a plate, where it gets a stress
    choose(&mut app, "patch");
    let carried = app.bench.form.field("h_force").unwrap().quantity().unwrap();
    let f = expected.force.unwrap();
    assert!((carried - f).abs() < 1e-3 * f, "{carried} vs {f}");
}

#[test]
fn plate_patch_load_stress_verdict_and_chart_with_the_measured_flaw() {
    let mut app = with_readings();
    focus(&mut app, "measured_flaw");
    type_str(&mut app, "120 µm");
    choose(&mut app, "patch");
    // shape and edges keep their defaults (rectangular, simply supported)
    focus(&mut app, "h_span");
    type_str(&mut app, "600 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "900 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "1 kN");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "10 mm");
    let m = soda_lime();
    let expected = loads::evaluate(&Hypothesis::Plate(plates::Plate {
        shape: plates::Shape::Rectangular,
        edges: plates::Edges::SimplySupported,
        span: 0.6,
        span_b: Some(0.9),
        thickness: 0.006,
        material: loads::Elastic {
            youngs_modulus: m.youngs_modulus.as_ref().unwrap().value,
            poisson: m.poisson.as_ref().unwrap().value,
        },
        load: plates::PlateLoad::Patch {
            force: 1000.0,
            diameter: 0.01,
        },
    }))
    .unwrap();
    let c = check(&app);
    assert_eq!(c.outcome.stress, expected.stress);
    assert_eq!(c.outcome.deflection, expected.deflection);
    let s = expected.stress.unwrap();
    let want = verdict::judge(&measured(&app), s, None).unwrap();
    assert_eq!(
        c.verdict.as_ref().unwrap().as_ref().unwrap().finding,
        want.finding
    );
    // the chart: K(a) of the hypothesis stress (no residual stress: annealed by default)
    let chart = c.chart.as_ref().unwrap();
    let Outcome::Done { analysis, .. } = &app.bench.outcome else {
        unreachable!()
    };
    let fl = analysis.flaw.as_ref().unwrap();
    let ac = critical::critical_size(s, fl.toughness.value, fl.factor.y).unwrap();
    assert!((chart.curve.critical_size - ac).abs() <= 1e-12 * ac);
    let flaw = chart.measured_flaw_m.unwrap();
    assert!((flaw - 120e-6).abs() < 1e-15, "{flaw}");
    // the sizes drawn include the measured flaw
    let first = chart.curve.points.first().unwrap().flaw_size;
    let last = chart.curve.points.last().unwrap().flaw_size;
    assert!(first < 120e-6 && 120e-6 < last, "{first} {last}");
    // at 80×24 the results pane keeps its rows: the hypothesis is in it, without the chart
    let small = text(&mut app, 80, 24);
    assert!(small.contains(&format(s, Unit::Megapascal)), "{small}");
    assert!(small.contains("Load hypothesis (plate"), "{small}");
    for (w, h) in [(80, 25), (100, 30)] {
        let screen = text(&mut app, w, h);
        assert!(
            screen.contains(&format(s, Unit::Megapascal)),
            "{w}×{h}\n{screen}"
        );
        assert!(
            screen.contains(&format!("Verdict: {}", want.finding.label())),
            "{screen}"
        );
        assert!(
            screen.contains("┆flaw"),
            "measured flaw in the legend at {w}×{h}\n{screen}"
        );
        assert!(screen.contains("K_Ic"), "{screen}");
        // an axis label of the chart (the critical size is the middle of the log axis)
        let mid = if ac < 1e-3 {
            format(ac, Unit::Micrometre)
        } else {
            format(ac, Unit::Millimetre)
        };
        assert!(screen.contains(&mid), "{w}×{h}\n{screen}");
    }
    // the large-deflection warning of loads reaches the results pane
    if expected
        .warnings
        .iter()
        .any(|w| w.code == "large-deflection")
    {
        let screen = text(&mut app, 250, 80);
        assert!(screen.contains("more than half"), "{screen}");
    }
}

#[test]
fn circular_clamped_plate_under_pressure() {
    let mut app = with_readings();
    choose(&mut app, "pressure");
    assert_eq!(app.bench.form.focus_key(), Some("h_shape"));
    type_str(&mut app, "circ");
    send(&mut app, &key(KeyCode::Enter));
    type_str(&mut app, "clamp");
    send(&mut app, &key(KeyCode::Enter));
    type_str(&mut app, "500 mm");
    send(&mut app, &key(KeyCode::Tab)); // span b is not used by a circle
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "20 kPa");
    let m = soda_lime();
    let expected = loads::evaluate(&Hypothesis::Plate(plates::Plate {
        shape: plates::Shape::Circular,
        edges: plates::Edges::Clamped,
        span: 0.5,
        span_b: None,
        thickness: 0.006,
        material: loads::Elastic {
            youngs_modulus: m.youngs_modulus.as_ref().unwrap().value,
            poisson: m.poisson.as_ref().unwrap().value,
        },
        load: plates::PlateLoad::Pressure(20e3),
    }))
    .unwrap();
    let c = check(&app);
    assert_eq!(c.outcome.stress, expected.stress);
    let screen = text(&mut app, 100, 30);
    assert!(
        screen.contains(&format(expected.stress.unwrap(), Unit::Megapascal)),
        "{screen}"
    );
}

#[test]
fn a_missing_unit_is_refused_by_name_and_a_missing_input_asked_for() {
    let mut app = with_readings();
    choose(&mut app, "thermal");
    type_str(&mut app, "30");
    match &app.bench.hypothesis {
        Some(Err(e)) => assert!(e.starts_with("Thermal ΔT:"), "{e}"),
        other => panic!("{other:?}"),
    }
    let screen = text(&mut app, 100, 30);
    assert!(screen.contains("✗"), "{screen}");
    // impulse with the mass only: the next input is asked for by name
    choose(&mut app, "impulse");
    type_str(&mut app, "2 kg");
    match &app.bench.hypothesis {
        Some(Err(e)) => assert!(e.starts_with("Speed:"), "{e}"),
        other => panic!("{other:?}"),
    }
    // a restitution above 1 is refused by loads, with its field
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "10 m/s");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "30 ms");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "1.5");
    match &app.bench.hypothesis {
        Some(Err(e)) => assert!(e.contains("restitution"), "{e}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn switching_kinds_keeps_what_was_typed() {
    let mut app = with_readings();
    choose(&mut app, "thermal");
    type_str(&mut app, "30 K");
    choose(&mut app, "impulse");
    assert!(app.bench.form.field("delta_t").is_none());
    type_str(&mut app, "1 kg");
    choose(&mut app, "thermal");
    assert_eq!(app.bench.form.field("delta_t").unwrap().text(), "30 K");
    choose(&mut app, "impulse");
    assert_eq!(app.bench.form.field("h_mass").unwrap().text(), "1 kg");
    // F2 again goes back to the readings
    focus(&mut app, "h_speed");
    send(&mut app, &key(KeyCode::F(2)));
    assert_eq!(app.bench.form.focus_key(), Some("r_mist"));
}

#[test]
fn no_size_panics_with_the_panel_and_chart() {
    let mut app = with_readings();
    focus(&mut app, "measured_flaw");
    type_str(&mut app, "90 µm");
    choose(&mut app, "thermal");
    type_str(&mut app, "30 K");
    assert!(check(&app).chart.is_ok());
    for w in [
        0u16, 1, 2, 3, 5, 10, 20, 29, 30, 33, 34, 35, 40, 50, 60, 71, 72, 80, 100, 140, 300,
    ] {
        for h in [
            0u16, 1, 2, 3, 5, 8, 10, 15, 17, 18, 19, 20, 24, 25, 30, 40, 90,
        ] {
            let lines = render(&mut app, w, h);
            assert_eq!(lines.len(), h as usize);
        }
    }
    // an impulse (no chart) and a refusal at the same sizes
    choose(&mut app, "impulse");
    type_str(&mut app, "1 kg");
    for (w, h) in [(0, 0), (1, 1), (34, 18), (80, 24), (100, 30)] {
        render(&mut app, w, h);
    }
}

#[test]
fn saving_into_an_incident_keeps_the_hypothesis() {
    use shardlog::app::Screen;
    use shardlog::store::model::{Incident, Stamp};
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("loads.db");
    let mut store = shardlog::store::Store::open(&path).unwrap();
    let stamp = Stamp::new(
        "test-analyst",
        chrono::TimeZone::with_ymd_and_hms(&chrono::Utc, 2027, 3, 14, 9, 10, 0).unwrap(),
    );
    let day = chrono::NaiveDate::from_ymd_opt(2027, 3, 1).unwrap();
    store
        .create_incident(&Incident::draft(day), &stamp)
        .unwrap();
    let mut app = App::with_store(store, &path).unwrap();
    render(&mut app, 100, 30);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
    send(&mut app, &key(KeyCode::Char('b')));
    assert_eq!(app.screen(), Screen::Bench);
    focus(&mut app, "r_mist");
    type_str(&mut app, "1 mm");
    focus(&mut app, "thickness");
    type_str(&mut app, "6 mm");
    choose(&mut app, "pressure");
    focus(&mut app, "h_span");
    type_str(&mut app, "600 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "900 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "10 kPa");
    let stress = check(&app).outcome.stress.unwrap();
    send(
        &mut app,
        &ratatui::crossterm::event::Event::Key(ratatui::crossterm::event::KeyEvent::new(
            KeyCode::Char('s'),
            ratatui::crossterm::event::KeyModifiers::CONTROL,
        )),
    );
    let msg = app.message.clone().unwrap();
    assert!(!msg.error, "{}", msg.text);
    send(&mut app, &key(KeyCode::Esc));
    let inc = &app.incident.as_ref().unwrap().incident;
    let (_, result) = inc.current_result().expect("result saved");
    let h = &result.analysis["load_hypothesis"];
    assert_eq!(h["kind"], "plate-pressure");
    assert_eq!(h["stress_pa"].as_f64(), Some(stress));
    assert!(h["verdict"].as_str().is_some(), "{h}");
}

#[test]
fn sphere_impact_gives_the_hertz_rim_tension() {
    let mut app = with_readings();
    choose(&mut app, "sphere");
    assert_eq!(app.bench.form.focus_key(), Some("h_impactor"));
    send(&mut app, &key(KeyCode::Enter)); // steel, the default
    type_str(&mut app, "75 mm");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "1.8 kg");
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "11.6 m/s");
    let m = soda_lime();
    let steel = loads::contact::find_impactor("steel").unwrap();
    let expected = loads::evaluate(&Hypothesis::Sphere(loads::contact::SphereImpact {
        sphere_diameter: 0.075,
        sphere: steel.elastic,
        sphere_density: steel.density,
        mass: Some(1.8),
        speed: 11.6,
        target: loads::Elastic {
            youngs_modulus: m.youngs_modulus.as_ref().unwrap().value,
            poisson: m.poisson.as_ref().unwrap().value,
        },
        thickness: 0.006,
    }))
    .unwrap();
    let c = check(&app);
    assert_eq!(c.kind, "sphere");
    assert_eq!(c.outcome.stress, expected.stress);
    assert_eq!(c.outcome.force, expected.force);
    let want = verdict::judge(&measured(&app), expected.stress.unwrap(), None).unwrap();
    assert_eq!(
        c.verdict.as_ref().unwrap().as_ref().unwrap().finding,
        want.finding
    );
    let screen = text(&mut app, 100, 30);
    assert!(
        screen.contains(&format(expected.stress.unwrap(), Unit::Megapascal)),
        "{screen}"
    );
}

/// The optional strength lower bound of a sound pane asks the sound-part question of
/// `loads::verdict::judge`: the panel shows its answer and ratio, the same as the core's, and
/// a bad value is refused by name.
#[test]
fn a_sound_strength_answers_the_sound_part_question() {
    let mut app = with_readings();
    choose(&mut app, "thermal");
    type_str(&mut app, "30 K");
    let stress = check(&app).outcome.stress.unwrap();
    focus(&mut app, "h_strength");
    type_str(&mut app, "45 MPa");
    let want = verdict::judge(&measured(&app), stress, Some(45e6)).unwrap();
    let got = check(&app).verdict.as_ref().unwrap().as_ref().unwrap();
    assert_eq!(got.sound_part, want.sound_part);
    assert_eq!(got.sound_part, Some(verdict::SoundPart::WouldSurvive));
    assert_eq!(got.strength_ratio, want.strength_ratio);
    // wide enough that the verdict line does not wrap
    let screen = text(&mut app, 180, 30);
    assert!(
        screen.contains("a sound pane survives (×0.420)"),
        "{screen}"
    );
    // a strength far below the thermal stress: the load alone breaks a sound pane
    for _ in 0..6 {
        send(&mut app, &key(KeyCode::Backspace));
    }
    type_str(&mut app, "5 MPa");
    let got = check(&app).verdict.as_ref().unwrap().as_ref().unwrap();
    assert_eq!(got.sound_part, Some(verdict::SoundPart::WouldBreak));
    let screen = text(&mut app, 180, 30);
    assert!(screen.contains("breaks a sound pane (×3.78)"), "{screen}");
    // a strength without a unit is refused, naming the field
    for _ in 0..5 {
        send(&mut app, &key(KeyCode::Backspace));
    }
    type_str(&mut app, "45");
    match &app.bench.hypothesis {
        Some(Err(e)) => assert!(e.contains("Sound strength"), "{e}"),
        other => panic!("{other:?}"),
    }
}
