//! A pull asks the fleet only for what it accepted since the last pull, yet a record the
//! bench could not take yet (a product whose supplier the fleet did not hold) is asked for
//! again until it can be taken. Against a real PostgreSQL server (see support::fleet).

use crate::fleet_sync::{demo_bench, err, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

#[test]
fn a_pull_takes_later_what_it_could_not_take_yet_and_asks_no_more_once_taken() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 20);
    sync_ok(&north, &fleet.bench_url("NORTH"));
    let products = fleet.count("SELECT count(*) FROM fleet_records WHERE entity = 'product'");
    assert!(products > 0, "the demo bench has products");

    // a new bench, empty, while the fleet lacks the suppliers those products name
    let south = dir.path().join("SOUTH.db");
    let o = run(&["--db", south.to_str().unwrap(), "init", "--bench", "SOUTH"]);
    assert!(o.status.success(), "init: {}", err(&o));
    let mut admin = fleet.admin();
    admin
        .batch_execute(
            "CREATE TABLE held AS SELECT * FROM fleet_records WHERE entity = 'supplier';
             DELETE FROM fleet_records WHERE entity = 'supplier';",
        )
        .unwrap();
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(r["pulled"]["suppliers"], 0, "{r}");
    assert_eq!(
        r["pulled"]["products"], 0,
        "no product without its supplier: {r}"
    );

    // the suppliers come back (with the receipt they had, older than the last pull)
    admin
        .batch_execute("INSERT INTO fleet_records SELECT * FROM held; DROP TABLE held;")
        .unwrap();
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert!(r["pulled"]["suppliers"].as_u64().unwrap() > 0, "{r}");
    assert_eq!(r["pulled"]["products"].as_i64().unwrap(), products, "{r}");

    // everything taken: the next pulls bring nothing
    for _ in 0..2 {
        let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
        assert_eq!(r["pulled"]["suppliers"], 0, "{r}");
        assert_eq!(r["pulled"]["products"], 0, "{r}");
        assert_eq!(r["pulled"]["lots"], 0, "{r}");
    }
}
