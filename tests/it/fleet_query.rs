//! The fleet database read at scale without reading every incident: a filter by status or
//! words counts its matches up to a cap (the same words at the bench and on the fleet), the
//! review reads the counts by month as `stats` does (the same figures as from each
//! incident's facts), and a fleet that lacks an earlier migration says which and what to
//! run. Against a real PostgreSQL server (support::fleet).

use std::path::Path;

use chrono::NaiveDate;
use shardlog::app::review::{ReviewState, WindowChoice};
use shardlog::store::fleet::FleetReader;
use shardlog::store::Store;
use shardlog_core::fleet::Key;

use crate::fleet_sync::{bin, demo_bench, err, out, sync_ok, TestFleet};
use crate::support::fleet::Cluster;
use crate::support::pty::Pty;

/// The cap the tests set (debug builds read SHARDLOG_TEST_COUNT_CAP), so that a demo bench
/// of a few hundred incidents passes it.
const CAP: &str = "20";

/// A run of the binary with the test cap.
fn capped(args: &[&str]) -> String {
    let o = bin()
        .env("SHARDLOG_TEST_COUNT_CAP", CAP)
        .args(args)
        .output()
        .expect("the binary runs");
    assert!(o.status.success(), "{args:?} failed: {}", err(&o));
    out(&o)
}

fn last_line(s: &str) -> String {
    s.lines().last().unwrap_or_default().to_string()
}

/// How many incidents `list --json --all` gives for `extra`.
fn listed(db: &str, extra: &[&str]) -> usize {
    let v: serde_json::Value = serde_json::from_str(&capped(
        &[&["--db", db, "list", "--json", "--all"][..], extra].concat(),
    ))
    .expect("JSON");
    v.as_array().expect("an array").len()
}

#[test]
fn a_count_by_status_or_words_stops_at_the_cap_alike_at_the_bench_and_on_the_fleet() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 300);
    sync_ok(&north, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let file = north.to_str().unwrap();
    let cases: &[(&[&str], bool)] = &[
        // (filter, whether its count is capped)
        (&["--status", "closed"], true),
        (&["--search", "inspection"], true),
        (&["--search", "inspection", "--since", "2025-01-01"], true),
        (&["--supplier", "KESTREL"], false),
        (&[], false),
    ];
    let mut stopped = 0;
    for (extra, is_capped) in cases {
        let args = [&["list", "--limit", "5"][..], *extra].concat();
        let at_bench = last_line(&capped(&[&["--db", file][..], &args[..]].concat()));
        let at_fleet = last_line(&capped(
            &[&["--db", &url][..], &args[..], &["--bench", "NORTH"][..]].concat(),
        ));
        assert_eq!(at_fleet, at_bench, "list {extra:?}");
        // every match is still listed (--json has no count)
        let n = listed(file, extra);
        assert_eq!(
            listed(&url, &[*extra, &["--bench", "NORTH"][..]].concat()),
            n,
            "{extra:?}"
        );
        assert!(n > 20, "{extra:?}: {n} matches do not pass the cap");
        if *is_capped {
            assert_eq!(at_bench, "5 of more than 20 incidents shown, newest first");
            stopped += 1;
        } else {
            assert_eq!(at_bench, format!("5 of {n} incidents shown, newest first"));
        }
    }
    assert_eq!(stopped, 3);
    // words with fewer matches than the cap are counted exactly
    let rare = ["list", "--search", "nothing-like-it"];
    let n = listed(file, &rare[1..]);
    assert!(n <= 20, "{n}");
    let at_fleet = last_line(&capped(&[&["--db", &url][..], &rare[..]].concat()));
    assert_eq!(
        at_fleet,
        format!(
            "{n} of {n} incident{} shown, newest first",
            if n == 1 { "" } else { "s" }
        )
    );
    assert_eq!(
        at_fleet,
        last_line(&capped(&[&["--db", file][..], &rare[..]].concat()))
    );

    // --weibull reads each fracture stress: more than the cap is refused, with what to narrow
    let weibull = ["--db", &url, "stats", "--by", "supplier", "--weibull"];
    let o = bin()
        .env("SHARDLOG_TEST_STRESS_CAP", "10")
        .args(weibull)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", out(&o));
    assert!(
        err(&o).contains("this one holds more than 10: narrow it (--since and --until"),
        "{}",
        err(&o)
    );
    let o = bin().args(weibull).output().unwrap();
    assert!(o.status.success(), "{}", err(&o));
    assert!(out(&o).contains("Strength (Weibull fit of"), "{}", out(&o));

    // the interface says so on the status line
    let mut pty = Pty::spawn_with(Path::new(&url), &[("SHARDLOG_TEST_COUNT_CAP", CAP)]);
    pty.wait_text("incidents match");
    pty.send("/");
    pty.send("inspection\r");
    pty.wait_text("more than 20 incidents match");
    pty.send("q");
    assert_eq!(pty.finish(), 0);
}

/// Every grouping the review offers on the fleet, with both windows: the review read from
/// the counts gives the figures of the review read from each incident's facts at the bench.
#[test]
fn the_review_on_the_fleet_reads_the_counts_and_gives_the_bench_files_figures() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 400);
    sync_ok(&north, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let bench = Store::open_existing(&north).unwrap();
    let on_fleet = FleetReader::open(&url, Some("NORTH")).unwrap();
    // the day after the newest incident: the last twelve months hold incidents
    let newest: serde_json::Value = serde_json::from_str(&capped(&[
        "--db",
        north.to_str().unwrap(),
        "list",
        "--json",
        "--limit",
        "1",
    ]))
    .unwrap();
    let today = NaiveDate::parse_from_str(newest[0]["occurred"].as_str().unwrap(), "%Y-%m-%d")
        .unwrap()
        .succ_opt()
        .unwrap();
    let groupings: &[&[Key]] = &[
        &[Key::Cause],
        &[Key::Bench],
        &[Key::Supplier, Key::Month],
        &[Key::Lot],
        &[Key::Site, Key::Season],
        &[Key::OriginType, Key::Cause],
    ];
    for keys in groupings {
        for window in [WindowChoice::Last12, WindowChoice::All] {
            let load = |source: &dyn shardlog::store::RecordSource| {
                let mut r = ReviewState::new();
                r.keys = keys.to_vec();
                r.window = window;
                r.load(source, today);
                assert_eq!(r.error, None, "{keys:?} {window:?}");
                r.data.expect("figures")
            };
            let mut from_facts = load(&bench);
            let mut from_counts = load(&on_fleet);
            assert!(!from_facts.from_counts && from_counts.from_counts);
            assert!(from_facts.table.total > 20, "{keys:?} {window:?}");
            from_facts.from_counts = true;
            from_counts.from_counts = true;
            assert_eq!(
                format!("{from_counts:#?}"),
                format!("{from_facts:#?}"),
                "{keys:?} {window:?}"
            );
        }
    }
}

#[test]
fn a_fleet_without_an_earlier_migration_names_it_and_what_to_run() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    // a fleet made by a build that did not have migration 6 yet, upgraded by one that had
    // the later ones
    fleet
        .admin()
        .batch_execute("DELETE FROM fleet_schema WHERE version = 6")
        .unwrap();
    let o = bin().args(["--db", &url, "list"]).output().unwrap();
    assert_eq!(o.status.code(), Some(1), "{}", err(&o));
    let e = err(&o);
    assert!(
        e.contains("lacks the earlier fleet migration 0006_push_parallel.sql")
            && e.contains("its owner must run `shardlog fleet init --url URL` to apply it"),
        "{e}"
    );
}
