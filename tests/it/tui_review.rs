//! The fleet review screen over a real store on a temporary file, driven by key events
//! through the key table and drawn to TestBackend: its counts are `fleet::group`'s, and
//! Enter opens the log filtered to the group with the same count.

use std::path::{Path, PathBuf};

use chrono::{NaiveDate, TimeZone, Utc};
use ratatui::crossterm::event::KeyCode;
use shardlog::app::review::Panel;
use shardlog::app::{App, Screen};
use shardlog::store::{Cause, ComputedResult, Examination, Exposure, Incident, Ply, Stamp, Store};
use shardlog::tui::harness::{key, key_mod, render, send, type_str};
use shardlog_core::fleet::query::{StatsQuery, StressKind};
use shardlog_core::fleet::{group, GroupOptions, GroupTable, Key};

fn d(y: i32, m: u32, day: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, day).unwrap()
}

/// Invented fleet (all names invented): two suppliers, three lots, one depot, 2025; lot
/// AF-6-02 of "ALDER" has nickel sulfide breaks in fully tempered panes (the same fleet as
/// tests/stats_cli.rs).
fn build(dir: &Path) -> PathBuf {
    let db = dir.join("fleet.db");
    let mut store = Store::open(&db).unwrap();
    let stamp = Stamp::new("test", Utc.with_ymd_and_hms(2026, 1, 5, 9, 0, 0).unwrap());
    // (supplier, product, lot, cause, origin, temper, applied MPa)
    let mut specs: Vec<(&str, &str, &str, &str, &str, &str, f64)> = Vec::new();
    for i in 0..4 {
        let s = 22.0 + 3.0 * i as f64;
        specs.push((
            "ALDER",
            "AF-6",
            "AF-6-01",
            "thermal",
            "edge_cutting_damage",
            "annealed",
            s,
        ));
    }
    for i in 0..12 {
        let s = 8.0 + 1.5 * i as f64;
        specs.push((
            "ALDER",
            "AF-6",
            "AF-6-02",
            "nickel_sulfide",
            "inclusion_nis",
            "fully_tempered",
            s,
        ));
    }
    for i in 0..2 {
        let s = 30.0 + 4.0 * i as f64;
        specs.push((
            "ALDER",
            "AF-6",
            "AF-6-02",
            "thermal",
            "edge_cutting_damage",
            "fully_tempered",
            s,
        ));
    }
    for i in 0..12 {
        let impact = i % 3 == 0;
        let (cause, origin, s) = if impact {
            ("impact", "impact_site", 90.0 + 10.0 * i as f64)
        } else {
            ("thermal", "edge_cutting_damage", 25.0 + 2.0 * i as f64)
        };
        specs.push((
            "BIRCH",
            "BG-8",
            "BG-8-01",
            cause,
            origin,
            "heat_strengthened",
            s,
        ));
    }
    for (i, &(supplier, product, lot, cause, origin, temper, applied)) in specs.iter().enumerate() {
        let found = d(2025, 1 + (i as u32 * 5) % 12, 1 + (i as u32 * 7) % 28);
        let mut inc = Incident::draft(found);
        inc.site = Some("DEPOT-N".into());
        inc.glass.supplier = Some(supplier.into());
        inc.glass.product = Some(product.into());
        inc.glass.lot = Some(lot.into());
        inc.glass.plies = vec![Ply {
            material: None,
            temper: Some(temper.into()),
            thickness_m: Some(0.006),
            coating: String::new(),
            edge_finish: String::new(),
        }];
        inc.cause = Some(Cause {
            category: cause.into(),
            factors: vec![],
            confidence: "probable".into(),
            responsibility: "undetermined".into(),
            note: String::new(),
        });
        inc.examinations = vec![Examination {
            id: String::new(),
            examined_on: Some(found),
            analyst: "bench 1".into(),
            origin_type: Some(origin.into()),
            material: None,
            readings: vec![],
            flaw: None,
            result: Some(ComputedResult {
                computed_at: stamp.at,
                code_version: "test".into(),
                stress_pa: Some(applied * 1e6),
                stress_low_pa: None,
                stress_high_pa: None,
                residual_pa: Some(0.0),
                applied_stress_pa: Some(applied * 1e6),
                flaw_size_m: None,
                constants: serde_json::json!({}),
                analysis: serde_json::json!({}),
            }),
            notes: String::new(),
        }];
        store.create_incident(&inc, &stamp).unwrap();
    }
    for (supplier, product, lot, panes) in [
        ("ALDER", "AF-6", "AF-6-01", 400),
        ("ALDER", "AF-6", "AF-6-02", 400),
        ("BIRCH", "BG-8", "BG-8-01", 800),
    ] {
        store
            .add_exposure(
                &Exposure {
                    id: String::new(),
                    supplier: supplier.into(),
                    product: Some(product.into()),
                    lot: Some(lot.into()),
                    site: Some("DEPOT-N".into()),
                    installed_on: d(2024, 1, 1),
                    removed_on: None,
                    panes,
                },
                &stamp,
            )
            .unwrap();
    }
    db
}

struct Fixture {
    _dir: tempfile::TempDir,
    db: PathBuf,
}

fn fixture() -> (Fixture, App) {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    let app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    (Fixture { _dir: dir, db }, app)
}

/// What `fleet::group` gives for `keys` over the review's window, from the same store.
fn expected(db: &Path, app: &App, keys: &[Key]) -> GroupTable {
    let store = Store::open(db).unwrap();
    let q = StatsQuery {
        keys: keys.to_vec(),
        since: None,
        until: None,
        rates: true,
        trend: false,
        weibull: false,
        origin_type: None,
        only: vec![],
        stress: StressKind::Applied,
        json: false,
    };
    let (facts, exposure) = store.stats_input(&q, &[]).unwrap();
    let window = app.review.data.as_ref().expect("figures").window;
    group(
        &facts,
        &exposure,
        &GroupOptions {
            keys: keys.to_vec(),
            window,
            rates: true,
            weibull: false,
            origin_type: None,
            flag_level: 0.05,
        },
    )
    .unwrap()
}

fn text(lines: &[String]) -> String {
    lines.join("\n")
}

/// Open the review from the log and widen the window to all records (the fleet is 2025).
fn open_all(app: &mut App) {
    send(app, &key(KeyCode::Char('r')));
    assert_eq!(app.screen(), Screen::Review);
    send(app, &key(KeyCode::Char('w')));
    assert_eq!(app.review.window.label(), "all records");
}

#[test]
fn the_review_opens_from_the_log_with_causes_largest_first() {
    let (f, mut app) = fixture();
    open_all(&mut app);
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("Fleet review"), "{t}");
    assert!(t.contains("30 incidents"), "{t}");
    let want = expected(&f.db, &app, &[Key::Cause]);
    let got = &app.review.data.as_ref().unwrap().causes;
    let pairs = |g: &GroupTable| -> Vec<(Vec<String>, u64)> {
        g.rows.iter().map(|r| (r.key.clone(), r.count)).collect()
    };
    assert_eq!(pairs(got), pairs(&want));
    // thermal 14, nickel sulfide 12, impact 4: largest first, each count on screen
    assert_eq!(want.rows[0].key, vec!["thermal".to_string()]);
    assert_eq!(want.rows[0].count, 14);
    for r in &want.rows {
        assert!(
            t.contains(&format!("{} (", r.count)),
            "count {} missing:\n{t}",
            r.count
        );
    }
    let lines = render(&mut app, 80, 24);
    let first = lines
        .iter()
        .position(|l| l.contains("14 (47 %)"))
        .expect(&t);
    let second = lines
        .iter()
        .position(|l| l.contains("12 (40 %)"))
        .expect(&t);
    assert!(first < second, "{t}");
}

#[test]
fn changing_the_grouping_gives_fleet_groups_counts_and_rates() {
    let (f, mut app) = fixture();
    open_all(&mut app);
    // 1: cause → supplier
    send(&mut app, &key(KeyCode::Char('1')));
    assert_eq!(app.review.keys, vec![Key::Supplier]);
    assert_eq!(app.review.panel, Panel::Groups);
    let want = expected(&f.db, &app, &[Key::Supplier]);
    let got = &app.review.data.as_ref().unwrap().table;
    assert_eq!(got.rows.len(), want.rows.len());
    for (g, w) in got.rows.iter().zip(&want.rows) {
        assert_eq!(g.key, w.key);
        assert_eq!(g.count, w.count);
        assert_eq!(g.rate.map(|r| r.rate), w.rate.map(|r| r.rate));
    }
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("ALDER"), "{t}");
    assert!(t.contains("BIRCH"), "{t}");
    assert!(t.contains("per 1,000 pane-years"), "{t}");
    assert!(t.contains("pane-yr"), "{t}");
    // 2 twice: supplier × cause, then supplier × lot
    send(&mut app, &key(KeyCode::Char('2')));
    send(&mut app, &key(KeyCode::Char('2')));
    assert_eq!(app.review.keys, vec![Key::Supplier, Key::Lot]);
    let want = expected(&f.db, &app, &[Key::Supplier, Key::Lot]);
    let got = &app.review.data.as_ref().unwrap().table;
    let pairs = |g: &GroupTable| -> Vec<(Vec<String>, u64, bool)> {
        g.rows
            .iter()
            .map(|r| (r.key.clone(), r.count, r.flagged))
            .collect()
    };
    assert_eq!(pairs(got), pairs(&want));
    let bad = got.rows.iter().find(|r| r.key[1] == "AF-6-02").unwrap();
    assert_eq!(bad.count, 14);
    assert!(bad.flagged);
    let lines = render(&mut app, 80, 24);
    let row = lines
        .iter()
        .find(|l| l.contains("AF-6-02"))
        .unwrap_or_else(|| panic!("{}", text(&lines)));
    assert!(row.contains("HIGH"), "{row}");
    assert!(row.contains(" 14 "), "{row}");
    let other = lines.iter().find(|l| l.contains("AF-6-01")).unwrap();
    assert!(!other.contains("HIGH"), "{other}");
}

#[test]
fn enter_on_a_group_opens_the_log_filtered_to_it_with_the_same_count() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    send(&mut app, &key(KeyCode::Char('1')));
    send(&mut app, &key(KeyCode::Char('1')));
    assert_eq!(app.review.keys, vec![Key::Lot]);
    let rows = &app.review.data.as_ref().unwrap().table.rows;
    let i = rows.iter().position(|r| r.key[0] == "AF-6-02").unwrap();
    let count = rows[i].count;
    for _ in 0..i {
        send(&mut app, &key(KeyCode::Down));
    }
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.lot.as_deref(), Some("AF-6-02"));
    let t = text(&render(&mut app, 80, 24));
    assert_eq!(app.log.total, Some(count));
    assert!(t.contains(&format!("{count} incidents match")), "{t}");
    // back to the log's own keys: x clears the filter
    type_str(&mut app, "x");
    render(&mut app, 80, 24);
    assert_eq!(app.log.filter.lot, None);
    assert_eq!(app.log.total, Some(30));
}

#[test]
fn enter_on_a_cause_bar_and_on_a_month_opens_their_incidents() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    // causes panel, first bar: thermal
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.cause.as_deref(), Some("thermal"));
    render(&mut app, 80, 24);
    assert_eq!(app.log.total, Some(14));
    // again from the log: the review keeps its grouping and window
    send(&mut app, &key(KeyCode::Char('r')));
    assert_eq!(app.review.window.label(), "all records");
    send(&mut app, &key(KeyCode::Tab));
    assert_eq!(app.review.panel, Panel::Months);
    let months = app.review.data.as_ref().unwrap().months.clone();
    let i = months.iter().position(|m| m.count > 0).unwrap();
    for _ in 0..i {
        send(&mut app, &key(KeyCode::Down));
    }
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    let m = months[i];
    assert_eq!(
        app.log.filter.since.map(|d| d.format("%Y-%m").to_string()),
        Some(m.label())
    );
    render(&mut app, 80, 24);
    assert_eq!(app.log.total, Some(m.count));
}

#[test]
fn a_season_group_cannot_open_the_log_and_says_why() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    for _ in 0..6 {
        send(&mut app, &key(KeyCode::Char('1')));
    }
    assert_eq!(app.review.keys, vec![Key::Season]);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Review);
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("not by season"), "{t}");
}

#[test]
fn every_panel_draws_its_figures_at_80x24_and_100x30() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    for (w, h) in [(80, 24), (100, 30)] {
        let mut seen = Vec::new();
        for _ in 0..Panel::ALL.len() {
            let t = text(&render(&mut app, w, h));
            seen.push((app.review.panel, t));
            send(&mut app, &key(KeyCode::Tab));
        }
        let of = |p: Panel| &seen.iter().find(|(q, _)| *q == p).unwrap().1;
        assert!(
            of(Panel::Months).contains("Trend:"),
            "{}",
            of(Panel::Months)
        );
        let months = of(Panel::Months);
        assert!(months.contains("Season: peaks"), "{months}");
        assert!(
            of(Panel::Months).contains("2025-01"),
            "{}",
            of(Panel::Months)
        );
        assert!(of(Panel::Stress).contains("MPa"), "{}", of(Panel::Stress));
        assert!(
            of(Panel::Stress).contains("30 incidents"),
            "{}",
            of(Panel::Stress)
        );
        let wb = of(Panel::Weibull);
        assert!(wb.contains("m = ") && wb.contains("●"), "{wb}");
        // the group highlighted on Groups (thermal, the largest cause) beside the whole window
        assert!(wb.contains("○ thermal") && wb.contains("n = 14"), "{wb}");
        assert!(wb.contains("n = 30"), "{wb}");
        assert!(
            of(Panel::Groups).contains("pane-yr"),
            "{}",
            of(Panel::Groups)
        );
        for (_, t) in &seen {
            for line in t.lines() {
                assert!(unicode_width::UnicodeWidthStr::width(line) <= w as usize);
            }
        }
    }
}

#[test]
fn zero_and_tiny_sizes_do_not_panic() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    for _ in 0..5 {
        for (w, h) in [
            (0, 0),
            (1, 1),
            (0, 24),
            (80, 0),
            (12, 4),
            (40, 10),
            (41, 11),
            (50, 12),
        ] {
            render(&mut app, w, h);
        }
        send(&mut app, &key(KeyCode::Tab));
    }
    for _ in 0..40 {
        send(&mut app, &key(KeyCode::PageDown));
        send(&mut app, &key(KeyCode::Up));
    }
    render(&mut app, 40, 10);
}

#[test]
fn an_empty_database_opens_the_review_without_figures_to_fail_on() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("empty.db");
    let mut app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    send(&mut app, &key(KeyCode::Char('r')));
    assert_eq!(app.screen(), Screen::Review);
    for _ in 0..5 {
        let t = text(&render(&mut app, 80, 24));
        assert!(!t.contains("panicked"), "{t}");
        send(&mut app, &key(KeyCode::Enter));
        assert_eq!(app.screen(), Screen::Review);
        send(&mut app, &key(KeyCode::Tab));
    }
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Log);
}

/// Incidents with no cause yet are a backlog, not a cause: the bar chart puts them last
/// whatever their count (Pareto practice); Enter on that bar opens the log filtered to the
/// incidents with no cause recorded (the same count), and Esc goes back to the review.
#[test]
fn incidents_without_a_cause_come_last_in_the_cause_bars() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    let mut store = Store::open(&db).unwrap();
    let stamp = Stamp::new("test", Utc.with_ymd_and_hms(2026, 1, 6, 9, 0, 0).unwrap());
    for i in 0..20 {
        let inc = Incident::draft(d(2025, 6, 1) + chrono::Days::new(i));
        store.create_incident(&inc, &stamp).unwrap();
    }
    let mut app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    open_all(&mut app);
    let rows = &app.review.data.as_ref().unwrap().causes.rows;
    assert_eq!(rows[0].key, vec!["thermal".to_string()]);
    let last = rows.last().unwrap();
    assert_eq!(last.count, 20);
    assert_eq!(
        last.key,
        vec![shardlog_core::fleet::group::NOT_RECORDED.to_string()]
    );
    // the counts of the causes found stay largest first
    let counts: Vec<u64> = rows[..rows.len() - 1].iter().map(|r| r.count).collect();
    assert!(counts.windows(2).all(|w| w[0] >= w[1]), "{counts:?}");
    let n = rows.len();
    let t = text(&render(&mut app, 80, 24));
    let at = |s: &str| t.find(s).unwrap_or_else(|| panic!("{s} missing:\n{t}"));
    assert!(at("14 (") < at("20 ("), "{t}");
    for _ in 0..n - 1 {
        send(&mut app, &key(KeyCode::Down));
    }
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.cause.as_deref(), Some("none"));
    let t = text(&render(&mut app, 80, 24));
    assert_eq!(app.log.total, Some(20));
    assert!(t.contains("20 incidents match"), "{t}");
    assert!(t.contains("cause none"), "the filter line names it:\n{t}");
    // Esc: back to the review, on the same bar
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Review);
    assert_eq!(app.review.selected(), n - 1);
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("20 ("), "{t}");
    // the bar above it, the smallest cause found, opens its incidents too
    send(&mut app, &key(KeyCode::Up));
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_ne!(app.log.filter.cause.as_deref(), Some("none"));
    // leaving the review gives the log beneath it its own (empty) filter back
    send(&mut app, &key(KeyCode::Esc));
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Log);
    assert!(app.at_top());
    assert_eq!(app.log.filter, Default::default());
    render(&mut app, 80, 24);
    assert_eq!(app.log.total, Some(50));
}

/// The log's own filter form offers "no cause recorded yet" beside the causes.
#[test]
fn the_log_filter_offers_no_cause_recorded() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    let mut store = Store::open(&db).unwrap();
    let stamp = Stamp::new("test", Utc.with_ymd_and_hms(2026, 1, 6, 9, 0, 0).unwrap());
    for i in 0..3 {
        let inc = Incident::draft(d(2025, 6, 1) + chrono::Days::new(i));
        store.create_incident(&inc, &stamp).unwrap();
    }
    let mut app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    render(&mut app, 80, 24);
    send(&mut app, &key(KeyCode::Char('f')));
    // status, then cause: type to narrow the pick-list, Enter chooses
    send(&mut app, &key(KeyCode::Tab));
    type_str(&mut app, "no cause");
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("no cause recorded yet"), "{t}");
    send(&mut app, &key(KeyCode::Enter));
    send(
        &mut app,
        &key_mod(
            KeyCode::Char('s'),
            ratatui::crossterm::event::KeyModifiers::CONTROL,
        ),
    );
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.cause.as_deref(), Some("none"));
    render(&mut app, 80, 24);
    assert_eq!(app.log.total, Some(3));
}

#[test]
fn g_shows_the_months_and_trend_of_the_highlighted_group() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    // 1: cause → supplier; the Groups panel highlights the largest supplier
    send(&mut app, &key(KeyCode::Char('1')));
    assert_eq!(app.review.panel, Panel::Groups);
    send(&mut app, &key(KeyCode::Char('g')));
    assert_eq!(app.review.panel, Panel::Months);
    assert!(app.review.group_months);
    let d = app.review.data.as_ref().unwrap();
    let row = &d.table.rows[0];
    let g = d.group_trends[0].as_ref().expect("a trend for the group");
    let t = g.trend.as_ref().expect("estimated");
    // the group's months hold the group's incidents, not the fleet's
    assert_eq!(t.months.iter().map(|m| m.count).sum::<u64>(), row.count);
    assert!(row.count < d.table.total);
    let name = row.key[0].clone();
    let screen = text(&render(&mut app, 100, 30));
    assert!(screen.contains(&name), "{screen}");
    assert!(screen.contains("g: whole fleet"), "{screen}");
    assert!(screen.contains("Holm"), "{screen}");
    // g again: the whole fleet
    send(&mut app, &key(KeyCode::Char('g')));
    let screen = text(&render(&mut app, 100, 30));
    assert!(screen.contains("Trend:"), "{screen}");
    assert!(!screen.contains("g: whole fleet"), "{screen}");
    // grouped by month a group has no months of its own: said so, the fleet is charted
    send(&mut app, &key(KeyCode::Char('g')));
    while app.review.keys != vec![Key::Month] {
        send(&mut app, &key(KeyCode::Char('1')));
    }
    while app.review.panel != Panel::Months {
        send(&mut app, &key(KeyCode::Right));
    }
    let screen = text(&render(&mut app, 100, 30));
    assert_eq!(app.review.panel, Panel::Months, "{screen}");
    assert!(screen.contains("none for this grouping"), "{screen}");
}

/// With `g` the per-month panel charts one group; Enter on a month then opens that group's
/// incidents of that month, not the whole fleet's.
#[test]
fn enter_on_a_month_of_a_charted_group_opens_only_that_group() {
    let (_f, mut app) = fixture();
    open_all(&mut app);
    send(&mut app, &key(KeyCode::Char('1')));
    assert_eq!(app.review.panel, Panel::Groups);
    send(&mut app, &key(KeyCode::Char('g')));
    assert_eq!(app.review.panel, Panel::Months);
    let d = app.review.data.as_ref().unwrap();
    let gi = app.review.selected_in(Panel::Groups);
    let t = d.group_trends[gi].as_ref().unwrap().trend.as_ref().unwrap();
    // a month where the group has fewer incidents than the fleet
    let (j, want) = d
        .months
        .iter()
        .enumerate()
        .find_map(|(j, m)| {
            let g = t
                .months
                .iter()
                .find(|x| (x.year, x.month) == (m.year, m.month))?;
            (g.count > 0 && g.count < m.count).then_some((j, g.count))
        })
        .expect("a month the group shares with others");
    send(&mut app, &key(KeyCode::Home));
    for _ in 0..j {
        send(&mut app, &key(KeyCode::Down));
    }
    assert_eq!(app.review.selected(), j);
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log, "{:?}", app.message);
    let screen = text(&render(&mut app, 100, 30));
    let word = if want == 1 { "incident" } else { "incidents" };
    assert!(
        screen.contains(&format!(" {want} {word} match")),
        "{want}: {screen}"
    );
}

/// The demo fleet grouped by cause × lot at 80×24: every visible row reads differently
/// (the lot is kept whole; the cause label gives way), no figure is cut ("…" appears only
/// in a group name), and the note above the table does not contradict the flags below it.
#[test]
fn cause_by_lot_rows_stay_distinguishable_at_80_columns() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("demo.db");
    shardlog::demo::generate(
        &db,
        &shardlog::demo::DemoOptions {
            incidents: shardlog::demo::DEFAULT_INCIDENTS,
            seed: shardlog::demo::DEFAULT_SEED,
        },
    )
    .unwrap();
    let mut app = App::with_store(Store::open(&db).unwrap(), &db).unwrap();
    open_all(&mut app);
    send(&mut app, &key(KeyCode::Char('2')));
    send(&mut app, &key(KeyCode::Char('2')));
    assert_eq!(app.review.keys, vec![Key::Cause, Key::Lot]);
    assert_eq!(app.review.panel, Panel::Groups);
    let rows = app.review.data.as_ref().unwrap().table.rows.len();
    assert!(rows > 20, "{rows}");
    let mut seen = std::collections::BTreeSet::new();
    let mut flagged_seen = false;
    // page through every row: each screen's rows must differ from all seen before
    for _ in 0..rows {
        let lines = render(&mut app, 80, 24);
        let t = text(&lines);
        let header = lines
            .iter()
            .position(|l| l.contains(" group ") && l.contains("p Holm"))
            .unwrap_or_else(|| panic!("no table header:\n{t}"));
        let p_col = lines[header].find("p Holm").unwrap();
        for l in &lines[header + 1..] {
            let body = l.trim_start_matches(['▶', ' ']);
            if body.is_empty() || !l.contains(" · ") || l.contains(" incidents · ") {
                continue;
            }
            // the figures after the name are whole
            let name_end = l.find("  ").unwrap_or(l.len());
            assert!(!l[name_end..].contains('…'), "a figure is cut: {l}\n{t}");
            seen.insert(body.trim_end().to_string());
            if l.contains("HIGH") {
                flagged_seen = true;
                assert!(l.len() > p_col);
            }
        }
        if flagged_seen {
            assert!(
                !t.contains("no flags") && t.contains("HIGH: above the rest"),
                "the note contradicts a flagged row:\n{t}"
            );
        }
        send(&mut app, &key(KeyCode::Down));
    }
    assert_eq!(seen.len(), rows, "some rows read the same: {seen:#?}");
    // the rows of one cause in different lots keep their lot
    assert!(seen.iter().any(|r| r.contains("· BS-2207")), "{seen:#?}");
    assert!(flagged_seen);
    // Enter on a group: the log's filter line at 80 columns keeps the lot and both dates
    send(&mut app, &key(KeyCode::Home));
    let lot = app.review.data.as_ref().unwrap().table.rows[0].key[1].clone();
    let window = app.review.data.as_ref().unwrap().window;
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    let lines = render(&mut app, 80, 24);
    let filter_line = lines
        .iter()
        .find(|l| l.contains("Filter:"))
        .unwrap_or_else(|| panic!("no filter line:\n{}", text(&lines)));
    for want in [
        format!("lot {lot}"),
        window.since.to_string(),
        window.until.to_string(),
        "(x clears)".to_string(),
    ] {
        assert!(
            filter_line.contains(&want),
            "{want:?} cut from {filter_line:?}"
        );
    }
    send(&mut app, &key(KeyCode::Esc));
    assert_eq!(app.screen(), Screen::Review);
    // cause × season is not an exposure key; its note still agrees with its flags
    for _ in 0..4 {
        send(&mut app, &key(KeyCode::Char('2')));
    }
    assert_eq!(app.review.keys, vec![Key::Cause, Key::Season]);
    let flagged = app
        .review
        .data
        .as_ref()
        .unwrap()
        .table
        .rows
        .iter()
        .any(|r| r.flagged);
    let t = text(&render(&mut app, 80, 24));
    assert!(t.contains("not an exposure key"), "{t}");
    if flagged {
        assert!(
            !t.contains("no flags") && t.contains("HIGH: above the rest"),
            "{t}"
        );
    }
}
