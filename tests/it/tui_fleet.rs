//! The interface on the fleet database (`--db postgres://…`), against a real PostgreSQL
//! server (support::fleet) filled by two demo benches' syncs: the log pages through the
//! fleet, an incident and the review open, and every edit key says at which bench the edit
//! is made instead of failing. Nothing is written to the fleet.

use std::path::{Path, PathBuf};

use ratatui::crossterm::event::{KeyCode, KeyModifiers};
use shardlog::app::{App, Screen};
use shardlog::tui::harness::{key, key_mod, render, send, type_str};

use crate::fleet_sync::{demo_bench, sync_ok, TestFleet};
use crate::support::fleet::Cluster;
use crate::support::pty::Pty;

/// Incidents per demo bench.
const PER_BENCH: u64 = 60;

/// A fleet of two demo benches, NORTH and SOUTH, each synced once; the reader's URL.
fn two_bench_fleet<'a>(cluster: &'a Cluster, dir: &Path) -> (TestFleet<'a>, String) {
    let fleet = TestFleet::new(cluster);
    for code in ["NORTH", "SOUTH"] {
        let db: PathBuf = demo_bench(dir, code, PER_BENCH);
        sync_ok(&db, &fleet.owner_url());
    }
    // fleet users read with the reader role
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    (fleet, url)
}

/// The status line of a rendered screen (the row above the footer).
fn status(lines: &[String]) -> &str {
    &lines[lines.len() - 2]
}

/// The first and last row numbers of "rows 21–40" on the status line.
fn rows_shown(screen: &str) -> (u64, u64) {
    let at = screen
        .find("rows ")
        .expect("a 'rows a–b' on the status line")
        + 5;
    let tail: String = screen[at..]
        .chars()
        .take_while(|c| c.is_ascii_digit() || *c == '–' || *c == ',')
        .collect();
    let (a, b) = tail.split_once('–').expect("a range of rows");
    let n = |s: &str| s.replace(',', "").parse::<u64>().expect("a row number");
    (n(a), n(b))
}

#[test]
fn the_fleet_in_a_pty_pages_opens_an_incident_and_the_review_and_names_the_bench_for_edits() {
    let cluster = Cluster::shared();
    let dir = tempfile::tempdir().unwrap();
    let (fleet, url) = two_bench_fleet(cluster, dir.path());
    let before = fleet.state();

    let mut pty = Pty::spawn(Path::new(&url));
    let total = format!("{} incidents match", 2 * PER_BENCH);
    pty.wait_text(&total);
    let screen = pty.screen();
    let title = screen.lines().next().unwrap_or_default();
    assert!(title.contains("(fleet, read-only)"), "{screen}");
    assert!(screen.contains("Bench"), "the bench column:\n{screen}");
    assert!(
        screen.contains("NORTH") || screen.contains("SOUTH"),
        "{screen}"
    );

    // page down through the fleet's log and back
    let (first, last) = rows_shown(&screen);
    assert_eq!(first, 1, "{screen}");
    pty.send("\x1b[6~"); // PgDn
    let next = format!("rows {}–", last + 1);
    pty.wait_text(&next);
    pty.send("\x1b[5~"); // PgUp
    pty.wait_text("rows 1–");

    // one incident: its owning bench is in its reference (the demo benches made them)
    pty.send("\r");
    pty.wait_text("revision ");
    let screen = pty.screen();
    let at = screen
        .find("BR-")
        .expect("a reference on the incident screen");
    let reference: String = screen[at..]
        .chars()
        .take_while(|c| !c.is_whitespace())
        .collect();
    let owner = reference.split('-').nth(1).expect("BR-CODE-…").to_string();
    assert!(["NORTH", "SOUTH"].contains(&owner.as_str()), "{reference}");
    for (key, what) in [
        ("e", "an edit"),
        ("a", "an attachment"),
        ("c", "a custody entry"),
    ] {
        pty.send(key);
        let said = format!("fleet is read-only: {what} is made at the owning bench {owner}");
        pty.wait_text(&said);
        assert!(!pty.screen().contains("Edit intake"), "a form opened");
    }
    // the bench calculator over the incident computes but saves nothing here
    pty.send("b");
    pty.wait_text("read-only fleet: saves nothing");
    pty.send("\x13"); // Ctrl-S
    pty.wait_text(&format!(
        "a bench result is made at the owning bench {owner}"
    ));
    pty.send("\x03"); // Ctrl-C quits from any screen, asking nothing: nothing is unsaved here
    assert_eq!(pty.finish(), 0);

    // the review, from a second start, and the new-incident key at the log
    let mut pty = Pty::spawn(Path::new(&url));
    pty.wait_text(&total);
    pty.send("n");
    pty.wait_text("a new incident is made at a bench (NORTH, SOUTH)");
    pty.send("r");
    pty.wait_text("· by cause");
    pty.send("x");
    pty.wait_text("exposure is made at a bench");
    pty.send("q");
    pty.wait_text(&total);
    pty.send("q");
    assert_eq!(pty.finish(), 0);

    assert_eq!(fleet.state(), before, "the interface wrote to the fleet");
}

#[test]
fn the_fleet_at_80x24_shows_read_only_the_bench_column_and_filters_by_bench() {
    let cluster = Cluster::shared();
    let dir = tempfile::tempdir().unwrap();
    let (_fleet, url) = two_bench_fleet(cluster, dir.path());
    let mut app = App::open_fleet(Path::new(&url)).expect("the interface opens the fleet");
    assert!(app.on_fleet() && app.read_only());

    let lines = render(&mut app, 80, 24);
    assert!(lines[0].contains("(fleet, read-only)"), "{}", lines[0]);
    // the title names the fleet's database, never a URL with its password
    assert!(lines[0].contains("fleet"), "{}", lines[0]);
    assert!(
        status(&lines).contains("fleet · 120 incidents match"),
        "{lines:#?}"
    );
    // the footer offers what works here: the bench key, not the new-incident key
    let footer = lines.last().unwrap();
    assert!(
        footer.contains("B bench") && !footer.contains("new incident"),
        "{footer}"
    );
    let header = lines.iter().find(|l| l.contains("Reference")).unwrap();
    assert!(header.contains("Bench"), "{header}");
    let codes: std::collections::BTreeSet<&str> = app
        .log
        .rows
        .iter()
        .map(|r| r.bench.as_deref().expect("every fleet row has its bench"))
        .collect();
    assert!(
        codes.iter().all(|c| ["NORTH", "SOUTH"].contains(c)),
        "{codes:?}"
    );

    // n: the message says where a new incident is made, and it fits at 80 columns
    send(&mut app, &key(KeyCode::Char('n')));
    assert_eq!(app.screen(), Screen::Log, "no form opens on the fleet");
    let lines = render(&mut app, 80, 24);
    assert!(
        status(&lines)
            .contains("fleet is read-only: a new incident is made at a bench (NORTH, SOUTH)"),
        "{}",
        status(&lines)
    );

    // B: one bench's incidents, then every bench's again
    send(&mut app, &key(KeyCode::Char('B')));
    assert_eq!(app.screen(), Screen::Edit);
    type_str(&mut app, "SOUTH");
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.bench.as_deref(), Some("SOUTH"));
    let lines = render(&mut app, 80, 24);
    assert!(
        lines[0].contains("(fleet, read-only) · bench SOUTH"),
        "{}",
        lines[0]
    );
    assert!(
        status(&lines).contains(&format!("{PER_BENCH} incidents match")),
        "{}",
        status(&lines)
    );
    assert!(
        lines
            .iter()
            .any(|l| l.contains("Filter: bench SOUTH (x clears)")),
        "{lines:#?}"
    );
    assert!(!app.log.rows.is_empty());
    assert!(app
        .log
        .rows
        .iter()
        .all(|r| r.bench.as_deref() == Some("SOUTH") && r.reference.starts_with("BR-SOUTH-")));
    send(&mut app, &key(KeyCode::Char('B')));
    type_str(&mut app, "every");
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.log.filter.bench, None);
    let lines = render(&mut app, 80, 24);
    assert!(
        status(&lines).contains(&format!("{} incidents match", 2 * PER_BENCH)),
        "{}",
        status(&lines)
    );

    // an incident: the owner named on each edit key
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Incident);
    let state = app.incident.as_ref().unwrap();
    let owner = state
        .owner
        .clone()
        .expect("the fleet knows the owning bench");
    assert!(state
        .incident
        .reference
        .starts_with(&format!("BR-{owner}-")));
    // the history as the fleet holds it (newest first, as at the bench)
    assert!(!state.history.is_empty(), "no history from the fleet");
    send(&mut app, &key(KeyCode::Char('e')));
    assert_eq!(app.screen(), Screen::Incident, "no form opens on the fleet");
    let lines = render(&mut app, 80, 24);
    let said =
        format!("fleet is read-only: an edit is made at the owning bench {owner}, then synced");
    assert!(status(&lines).contains(&said), "{}", status(&lines));
    send(
        &mut app,
        &key_mod(KeyCode::Char('c'), KeyModifiers::CONTROL),
    );
    assert!(app.quit);
}

#[test]
fn the_standalone_bench_calculator_on_the_fleet_computes_and_saves_nothing() {
    let cluster = Cluster::shared();
    let dir = tempfile::tempdir().unwrap();
    let (fleet, url) = two_bench_fleet(cluster, dir.path());
    let before = fleet.state();
    let mut app = App::open_fleet(Path::new(&url)).unwrap();
    send(&mut app, &key(KeyCode::Char('b')));
    assert_eq!(app.screen(), Screen::Bench);
    let lines = render(&mut app, 80, 24);
    assert!(
        status(&lines).contains("nothing is saved on the fleet"),
        "{}",
        status(&lines)
    );
    send(
        &mut app,
        &key_mod(KeyCode::Char('s'), KeyModifiers::CONTROL),
    );
    let lines = render(&mut app, 80, 24);
    assert!(
        status(&lines).contains("fleet is read-only: a bench result is made at a bench"),
        "{}",
        status(&lines)
    );
    assert_eq!(fleet.state(), before);
}

#[test]
fn the_review_on_the_fleet_groups_by_bench_and_opens_a_bench_in_the_log() {
    let cluster = Cluster::shared();
    let dir = tempfile::tempdir().unwrap();
    let (_fleet, url) = two_bench_fleet(cluster, dir.path());
    let mut app = App::open_fleet(Path::new(&url)).unwrap();
    send(&mut app, &key(KeyCode::Char('r')));
    assert_eq!(app.screen(), Screen::Review);
    // every record, then the first key after cause: the bench
    send(&mut app, &key(KeyCode::Char('w')));
    send(&mut app, &key(KeyCode::Char('1')));
    assert_eq!(app.review.keys, vec![shardlog_core::fleet::Key::Bench]);
    let table = &app.review.data.as_ref().expect("figures").table;
    let counts: Vec<(String, u64)> = table
        .rows
        .iter()
        .map(|r| (r.key.join(" · "), r.count))
        .collect();
    assert_eq!(
        counts.iter().map(|c| c.1).sum::<u64>(),
        2 * PER_BENCH,
        "{counts:?}"
    );
    let mut benches: Vec<&str> = counts.iter().map(|c| c.0.as_str()).collect();
    benches.sort();
    assert_eq!(benches, ["NORTH", "SOUTH"]);
    assert!(counts.iter().all(|c| c.1 == PER_BENCH), "{counts:?}");
    // the same groups as `stats --by bench` on the fleet
    let o = crate::fleet_sync::run(&["--db", &url, "stats", "--by", "bench", "--json"]);
    assert!(o.status.success(), "{}", crate::fleet_sync::err(&o));
    let stats = crate::fleet_sync::out(&o);
    for (code, _) in &counts {
        assert!(stats.contains(&format!("\"{code}\"")), "{stats}");
    }
    let lines = render(&mut app, 80, 24);
    let screen = lines.join("\n");
    assert!(
        screen.contains("NORTH") && screen.contains("SOUTH"),
        "{screen}"
    );
    assert!(screen.contains("by bench"), "{screen}");

    // Enter on the highlighted bench opens the log of that bench's incidents
    let first = counts[app.review.selected()].0.clone();
    send(&mut app, &key(KeyCode::Enter));
    assert_eq!(app.screen(), Screen::Log);
    assert_eq!(app.log.filter.bench.as_deref(), Some(first.as_str()));
    let lines = render(&mut app, 80, 24);
    assert!(
        status(&lines).contains(&format!("{PER_BENCH} incidents match")),
        "{}",
        status(&lines)
    );
    assert!(app
        .log
        .rows
        .iter()
        .all(|r| r.bench.as_deref() == Some(first.as_str())));
}

#[test]
fn a_fleet_that_cannot_be_reached_fails_plainly_before_the_terminal_is_taken() {
    let dir = tempfile::tempdir().unwrap();
    // a socket folder with no server in it
    let url = format!("postgresql:///nofleet?host={}", dir.path().display());
    let o = crate::fleet_sync::run(&["--db", &url]);
    assert_eq!(o.status.code(), Some(1), "{}", crate::fleet_sync::err(&o));
    let err = crate::fleet_sync::err(&o);
    assert!(err.contains("cannot open the fleet database"), "{err}");
    // no terminal set-up was written (the alternate screen is never entered)
    assert!(!crate::fleet_sync::out(&o).contains("\u{1b}[?1049h"));
}
