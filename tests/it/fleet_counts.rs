//! `stats` on the fleet database counts where the data is (the counts by month of
//! schema/fleet/0007_counts.sql, the facts for the days of a month the window cuts): the
//! same `stats --json` bytes as the bench file, after edits, deletions and new incidents have
//! reached the fleet; `verify` checks the counts against the facts.

use std::path::Path;

use crate::fleet_sync::{demo_bench, err, out, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

fn text(args: &[&str]) -> String {
    let o = run(args);
    assert!(o.status.success(), "{args:?} failed: {}", err(&o));
    out(&o)
}

/// The references a bench lists, newest first.
fn references(db: &Path) -> Vec<String> {
    let v: serde_json::Value = serde_json::from_str(&text(&[
        "--db",
        db.to_str().unwrap(),
        "list",
        "--json",
        "--all",
    ]))
    .expect("JSON");
    v.as_array()
        .unwrap()
        .iter()
        .map(|r| r["ref"].as_str().unwrap().to_string())
        .collect()
}

/// Edits at a bench that move incidents between cells of the counts: another cause, no
/// cause, another month found, a deletion.
fn edit_bench(db: &Path) {
    let refs = references(db);
    let mut s = shardlog::store::Store::open_existing(db).unwrap();
    let stamp = shardlog::store::Stamp::new("test-runner", chrono::Utc::now());
    for (i, r) in refs.iter().step_by(17).enumerate() {
        match i % 4 {
            0 => {
                s.modify_incident(r, None, &stamp, |inc| {
                    inc.cause = None;
                    Ok(())
                })
                .unwrap();
            }
            1 => {
                s.modify_incident(r, None, &stamp, |inc| {
                    inc.found_on = chrono::NaiveDate::from_ymd_opt(2024, 2, 29).unwrap();
                    inc.broken_on = None;
                    inc.installed_on = None;
                    inc.glass.supplier = Some("KESTREL".into());
                    Ok(())
                })
                .unwrap();
            }
            2 => {
                let inc = s.get(r).unwrap();
                s.delete_incident(r, inc.revision, &stamp).unwrap();
            }
            _ => {
                s.modify_incident(r, None, &stamp, |inc| {
                    if let Some(c) = inc.cause.as_mut() {
                        c.category = "impact".into();
                    }
                    Ok(())
                })
                .unwrap();
            }
        }
    }
}

/// Groupings and windows: whole months only, months cut at both ends, time keys, filters,
/// Weibull fits (the stresses read one by one), trends.
const STATS: &[&[&str]] = &[
    &["--by", "cause,supplier", "--rates"],
    &[
        "--by",
        "supplier,month",
        "--rates",
        "--since",
        "2024-03-17",
        "--until",
        "2025-08-09",
    ],
    &["--by", "season,cause", "--until", "2025-06-20"],
    &["--by", "lot", "--rates", "--trend", "--only", "cause=none"],
    &[
        "--by",
        "site,temper",
        "--weibull",
        "--origin-type",
        "edge_chip",
        "--since",
        "2024-05-02",
    ],
    &[
        "--by",
        "product",
        "--weibull",
        "--stress",
        "net",
        "--only",
        "supplier=BRELLIN",
    ],
    &["--by", "origin-type", "--trend", "--rates"],
];

/// Filters whose total the fleet takes from its counts (whole months) and facts (cut ones),
/// and two it counts over the facts (status, words).
const LISTS: &[&[&str]] = &[
    &[],
    &["--supplier", "KESTREL"],
    &["--cause", "none", "--since", "2024-03-17"],
    &["--site", "TVL-ASH", "--until", "2025-08-09"],
    &[
        "--since",
        "2024-02-01",
        "--until",
        "2025-06-30",
        "--lot",
        "BS-2207",
    ],
    &["--since", "2025-03-05", "--until", "2025-03-28"],
    &[
        "--since",
        "2025-03-05",
        "--until",
        "2025-04-02",
        "--cause",
        "impact",
    ],
    &["--since", "2025-04-01", "--until", "2025-04-30"],
    &["--status", "closed"],
    &["--search", "inspection"],
];

fn compare(db: &Path, url: &str, code: &str) {
    let file = db.to_str().unwrap();
    // the line under the first page: "N of M incidents shown, …"
    for extra in LISTS {
        let mut args = vec!["list", "--limit", "5"];
        args.extend_from_slice(extra);
        let last = |s: String| s.lines().last().unwrap_or_default().to_string();
        let at_bench = last(text(&[&["--db", file][..], &args[..]].concat()));
        let at_fleet = last(text(
            &[&["--db", url][..], &args[..], &["--bench", code][..]].concat(),
        ));
        assert!(at_bench.contains(" incidents shown"), "{at_bench}");
        assert_eq!(at_fleet, at_bench, "{code}: list {extra:?}");
    }
    for extra in STATS {
        let mut args = vec!["stats", "--json"];
        args.extend_from_slice(extra);
        let at_bench = text(&[&["--db", file][..], &args[..]].concat());
        let at_fleet = text(&[&["--db", url][..], &args[..], &["--bench", code][..]].concat());
        let v: serde_json::Value = serde_json::from_str(&at_bench).unwrap();
        assert!(v["total"].as_u64().unwrap() > 5, "{code} {extra:?}: {v}");
        assert_eq!(at_fleet, at_bench, "{code}: stats {extra:?}");
    }
}

#[test]
fn stats_on_the_fleet_from_its_counts_gives_the_bench_files_bytes_after_edits() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 400);
    let south = demo_bench(dir.path(), "SOUTH", 300);
    sync_ok(&north, &fleet.owner_url());
    sync_ok(&south, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    compare(&north, &url, "NORTH");
    edit_bench(&north);
    crate::fleet_sync::add_incident(&north, "found after the first sync");
    sync_ok(&north, &fleet.owner_url());
    compare(&north, &url, "NORTH");
    compare(&south, &url, "SOUTH");

    // the whole fleet: each cause's count is the two benches' counts added
    let by_cause = |args: &[&str]| -> std::collections::BTreeMap<String, u64> {
        let v: serde_json::Value = serde_json::from_str(&text(
            &[
                args,
                &["stats", "--json", "--by", "cause", "--since", "2024-01-01"][..],
            ]
            .concat(),
        ))
        .unwrap();
        v["groups"]
            .as_array()
            .unwrap()
            .iter()
            .map(|g| {
                (
                    g["key"][0].as_str().unwrap().to_string(),
                    g["count"].as_u64().unwrap(),
                )
            })
            .collect()
    };
    let whole = by_cause(&["--db", &url]);
    let mut added = by_cause(&["--db", north.to_str().unwrap()]);
    for (cause, n) in by_cause(&["--db", south.to_str().unwrap()]) {
        *added.entry(cause).or_default() += n;
    }
    assert_eq!(whole, added);

    // verify compares the counts with the facts
    let ok = text(&["--db", &url, "verify"]);
    assert!(ok.contains("ok: bench NORTH:"), "{ok}");
    let mut admin = fleet.admin();
    admin
        .batch_execute(
            "UPDATE fleet_fact_months SET n = n + 1
             WHERE ctid = (SELECT min(ctid) FROM fleet_fact_months WHERE owner = 'SOUTH')",
        )
        .unwrap();
    let o = run(&["--db", &url, "verify"]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(
        err(&o).contains("bench SOUTH, 20") && err(&o).contains("counts by month"),
        "{}",
        err(&o)
    );
}
