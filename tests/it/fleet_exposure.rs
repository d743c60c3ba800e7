//! Exposure through the fleet: another bench's panes in service are pulled, kept apart with
//! the bench that recorded them, shown by `exposure list`, and never enter this bench's own
//! rates. Against a real PostgreSQL server (support::fleet), through the real binary.

use std::path::Path;

use crate::fleet_sync::{demo_bench, err, out, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

fn db_arg(db: &Path) -> &str {
    db.to_str().expect("a UTF-8 path")
}

fn bench_value<T: rusqlite::types::FromSql>(db: &Path, sql: &str) -> T {
    rusqlite::Connection::open(db)
        .unwrap()
        .query_row(sql, [], |r| r.get(0))
        .unwrap_or_else(|e| panic!("{sql}: {e}"))
}

fn bench_out(db: &Path, args: &[&str]) -> String {
    let mut all = vec!["--db", db_arg(db)];
    all.extend_from_slice(args);
    let o = run(&all);
    assert!(o.status.success(), "{args:?}: {}", err(&o));
    out(&o)
}

#[test]
fn another_benchs_exposure_is_pulled_apart_and_stays_out_of_the_rates() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 6);
    let south = demo_bench(dir.path(), "SOUTH", 6);
    // SOUTH syncs first, alone: its rates and its own exposure before anything of NORTH's
    sync_ok(&south, &fleet.bench_url("SOUTH"));
    let rates_before = bench_out(&south, &["stats", "--rates", "--json"]);
    let csv_before = bench_out(&south, &["exposure", "list", "--csv"]);
    let own_before: i64 = bench_value(&south, "SELECT count(*) FROM exposure");
    assert!(own_before > 0, "the demo bench records panes in service");

    // NORTH records 317 panes more and syncs
    let mut s = shardlog::store::Store::open_existing(&north).unwrap();
    let stamp = shardlog::store::Stamp::new("test-runner", chrono::Utc::now());
    let supplier = s.suppliers().unwrap()[0].code.clone();
    let panes = s
        .add_exposure(
            &shardlog::store::Exposure {
                id: String::new(),
                supplier,
                product: None,
                lot: None,
                site: None,
                installed_on: chrono::NaiveDate::from_ymd_opt(2025, 4, 1).unwrap(),
                removed_on: None,
                panes: 317,
            },
            &stamp,
        )
        .unwrap();
    drop(s);
    let north_rows: i64 = bench_value(&north, "SELECT count(*) FROM exposure");
    sync_ok(&north, &fleet.bench_url("NORTH"));

    // SOUTH pulls every exposure row of NORTH, apart from its own
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(r["pulled"]["exposure"], north_rows, "{r}");
    assert_eq!(
        bench_value::<i64>(&south, "SELECT count(*) FROM exposure"),
        own_before
    );
    assert_eq!(
        bench_value::<i64>(
            &south,
            "SELECT count(*) FROM pulled_exposure WHERE bench = 'NORTH'"
        ),
        north_rows
    );
    assert_eq!(
        bench_value::<i64>(
            &south,
            &format!(
                "SELECT panes FROM pulled_exposure WHERE id = '{}' AND bench = 'NORTH'",
                panes.id
            )
        ),
        317
    );
    // the rates of SOUTH are its own, to the byte; the CSV for import is its own
    assert_eq!(
        bench_out(&south, &["stats", "--rates", "--json"]),
        rates_before
    );
    assert_eq!(
        bench_out(&south, &["exposure", "list", "--csv"]),
        csv_before
    );
    // `exposure list` shows NORTH's rows, marked with NORTH, after SOUTH's own
    let list = bench_out(&south, &["exposure", "list"]);
    let (own, pulled) = list
        .split_once("from other benches of the fleet (not in this bench's rates):")
        .unwrap_or_else(|| panic!("no pulled section:\n{list}"));
    assert!(!own.contains("NORTH"), "{list}");
    let line = pulled
        .lines()
        .find(|l| l.starts_with("NORTH") && l.trim_end().ends_with(" 317"))
        .unwrap_or_else(|| panic!("NORTH's 317 panes are not listed:\n{list}"));
    assert!(line.contains("in service"), "{line}");
    assert!(
        pulled.contains(&format!("{north_rows} rows of other benches")),
        "{list}"
    );
    // the pulled rows are audited and verify; a second sync pulls nothing more
    let o = run(&["--db", db_arg(&south), "verify"]);
    assert!(o.status.success(), "verify: {}{}", out(&o), err(&o));
    let again = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(again["pulled"]["exposure"], 0, "{again}");
    // the fleet witnessed SOUTH's pulled rows but holds NORTH's rows once, as NORTH's
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_records WHERE entity = 'pulled_exposure'"),
        0
    );
    assert_eq!(
        fleet.count(
            "SELECT count(*) FROM bench_chain WHERE bench = 'SOUTH' AND entity = 'pulled_exposure'"
        ),
        north_rows
    );
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_records WHERE entity = 'exposure'"),
        north_rows + own_before
    );
}
