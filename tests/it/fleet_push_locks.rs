//! What a push waits for: one bench's push checks its own history without the fleet's lock
//! (so benches push at the same time), and takes that lock only to write what every bench
//! shares. Shown with the fleet's lock held by hand: a sync with nothing new and a refused
//! fork finish while it is held; a push with new rows waits for it, then completes, and the
//! fleet's chain stays one chain. The real binary against a real PostgreSQL server.

use std::process::{Child, Stdio};
use std::time::{Duration, Instant};

use crate::fleet_sync::{
    add_incident, bin, demo_bench, err, out, rewrite_history, sync_ok, TestFleet,
};
use crate::support::fleet::Cluster;

/// The fleet's lock (schema/fleet/0006): a single-key advisory lock.
const FLEET_LOCK: i64 = 1397247047;

fn spawn_sync(db: &std::path::Path, url: &str) -> Child {
    bin()
        .arg("--db")
        .arg(db)
        .args(["sync", "--fleet", url, "--json"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary runs")
}

/// Whether a session of login `login` waits for the fleet's lock.
fn waits_for_fleet_lock(admin: &mut postgres::Client, login: &str) -> bool {
    let n: i64 = admin
        .query_one(
            "SELECT count(*) FROM pg_locks l JOIN pg_stat_activity a ON a.pid = l.pid
             WHERE l.locktype = 'advisory' AND NOT l.granted AND a.usename = $1
               AND l.classid = 0 AND l.objid::bigint = $2 AND l.objsubid = 1",
            &[&login, &FLEET_LOCK],
        )
        .expect("pg_locks")
        .get(0);
    n > 0
}

/// Wait for `child` to end while never waiting on the fleet's lock: its output, or a panic
/// naming what it waited for. (Not a timing: a sync that hangs fails after two minutes.)
fn finishes_without_the_fleet_lock(
    mut child: Child,
    admin: &mut postgres::Client,
    login: &str,
    what: &str,
) -> std::process::Output {
    let deadline = Instant::now() + Duration::from_secs(120);
    loop {
        if child.try_wait().expect("the sync process").is_some() {
            return child.wait_with_output().expect("its output");
        }
        if waits_for_fleet_lock(admin, login) {
            let _ = child.kill();
            panic!("{what} waited for the fleet's lock");
        }
        assert!(Instant::now() < deadline, "{what} did not finish");
        std::thread::sleep(Duration::from_millis(20));
    }
}

#[test]
fn a_bench_checks_its_push_without_the_fleets_lock_and_writes_under_it() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let east = demo_bench(dir.path(), "EAST", 5);
    let west = demo_bench(dir.path(), "WEST", 5);
    let north = demo_bench(dir.path(), "NORTH", 5);
    sync_ok(&east, &fleet.bench_url("EAST"));
    sync_ok(&west, &fleet.bench_url("WEST"));
    sync_ok(&north, &fleet.bench_url("NORTH"));
    // WEST takes the others' reference data and sends those rows back to be witnessed,
    // until it has nothing new either way
    let mut rounds = 0;
    loop {
        let v = sync_ok(&west, &fleet.bench_url("WEST"));
        let pulled: u64 = v["pulled"]
            .as_object()
            .expect("what was pulled")
            .values()
            .filter_map(serde_json::Value::as_u64)
            .sum();
        if v["push"]["status"] == "unchanged" && pulled == 0 {
            break;
        }
        rounds += 1;
        assert!(rounds < 5, "WEST still moves rows: {v}");
    }
    let receipts = fleet.count("SELECT count(*) FROM fleet_receipts");

    // someone holds the fleet's lock
    let mut holder = fleet.admin();
    let mut hold = holder.transaction().unwrap();
    hold.execute("SELECT pg_advisory_xact_lock($1)", &[&FLEET_LOCK])
        .unwrap();
    let mut admin = fleet.admin();

    // WEST has nothing new: its sync finishes
    let o = finishes_without_the_fleet_lock(
        spawn_sync(&west, &fleet.bench_url("WEST")),
        &mut admin,
        &fleet.bench_login("WEST"),
        "a sync with nothing new",
    );
    assert!(o.status.success(), "{}", err(&o));
    let v: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    assert_eq!(v["push"]["status"], "unchanged", "{v}");

    // NORTH's history was rewritten: the fork is refused without the fleet's lock
    rewrite_history(&north, 3);
    let o = finishes_without_the_fleet_lock(
        spawn_sync(&north, &fleet.bench_url("NORTH")),
        &mut admin,
        &fleet.bench_login("NORTH"),
        "a forked push",
    );
    assert_eq!(o.status.code(), Some(1), "{}{}", out(&o), err(&o));
    assert!(err(&o).contains("fork"), "{}", err(&o));

    // EAST has a new incident: its push checks, then waits to write
    add_incident(&east, "found while the fleet was busy");
    let mut child = spawn_sync(&east, &fleet.bench_url("EAST"));
    let deadline = Instant::now() + Duration::from_secs(120);
    while !waits_for_fleet_lock(&mut admin, &fleet.bench_login("EAST")) {
        assert!(
            child.try_wait().unwrap().is_none(),
            "EAST's push finished while the fleet's lock was held"
        );
        assert!(
            Instant::now() < deadline,
            "EAST's push never came to the fleet's lock"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_receipts"),
        receipts,
        "nothing is written while the fleet's lock is held"
    );
    hold.commit().unwrap();
    let o = child.wait_with_output().unwrap();
    assert!(o.status.success(), "{}", err(&o));
    let v: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    assert_eq!(v["push"]["status"], "accepted", "{v}");
    assert_eq!(v["push"]["receipt"]["fleet_seq"], receipts + 1, "{v}");

    // the fleet's chain is one chain, and EAST's history is in it
    let o = bin()
        .arg("--db")
        .arg(&east)
        .args(["verify", "--fleet", &fleet.bench_url("EAST")])
        .output()
        .unwrap();
    assert!(o.status.success(), "verify --fleet: {}{}", out(&o), err(&o));
}
