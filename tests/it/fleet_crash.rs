//! A push cut off: `sync` killed with SIGKILL at twenty points of a push of a 20,000-incident
//! bench, and the server stopped in the middle of one. Each time the fleet is as before the
//! push or as after it, never between; the next sync completes it, and the fleet then holds
//! exactly what a push that was never interrupted leaves (compared by digest).

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use crate::fleet_sync::{bench_chain, bin, demo_bench, err, fleet_chain, sync, TestFleet};
use crate::support::fleet::Cluster;

/// A copy of a bench (database and attachment folder) under a new name.
fn copy_bench(db: &Path, name: &str) -> PathBuf {
    let to = db.with_file_name(format!("{name}.db"));
    std::fs::copy(db, &to).unwrap();
    let files = db.with_file_name(format!(
        "{}.files",
        db.file_name().unwrap().to_string_lossy()
    ));
    if files.is_dir() {
        let to_files = to.with_file_name(format!("{name}.db.files"));
        std::fs::create_dir(&to_files).unwrap();
        for e in std::fs::read_dir(&files).unwrap() {
            let e = e.unwrap();
            std::fs::copy(e.path(), to_files.join(e.file_name())).unwrap();
        }
    }
    to
}

/// What a fleet holds of its records and chains, without the receipts' times.
fn content(f: &TestFleet<'_>) -> String {
    f.admin()
        .query_one(
            "SELECT (SELECT count(*) FROM fleet_records)::text || ' ' ||
                    md5(coalesce((SELECT string_agg(entity || ':' || id || ':' || origin || ':' || owner || ':' || coalesce(digest, '-') || ':' || coalesce(reference, '-'), ',' ORDER BY entity, id, origin) FROM fleet_records), '')) || ' ' ||
                    md5(coalesce((SELECT string_agg(bench || ':' || seq || ':' || hash, ',' ORDER BY bench, seq) FROM bench_chain), '')) || ' ' ||
                    md5(coalesce((SELECT string_agg(sha256, ',' ORDER BY sha256) FROM fleet_files), ''))",
            &[],
        )
        .unwrap()
        .get(0)
}

fn sync_child(db: &Path, url: &str) -> std::process::Child {
    bin()
        .args(["--db", db.to_str().unwrap(), "sync", "--fleet", url])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap()
}

#[test]
fn a_push_killed_or_cut_off_leaves_the_fleet_before_or_after_it() {
    let cluster = Cluster::start_private();
    let dir = tempfile::tempdir().unwrap();
    let big = demo_bench(dir.path(), "BIG", 20_000);

    // a push never interrupted: what the others must end as, and how long one takes
    let reference = TestFleet::new(&cluster);
    let copy = copy_bench(&big, "reference");
    let started = Instant::now();
    let o = sync(&copy, &reference.bench_url("BIG"));
    assert!(o.status.success(), "{}", err(&o));
    let whole = started.elapsed();
    let expected = content(&reference);
    assert_eq!(fleet_chain(&reference, "BIG"), bench_chain(&copy));

    // 1. killed at twenty points of the push
    let killed = TestFleet::new(&cluster);
    let empty = content(&killed);
    let bench = copy_bench(&big, "killed");
    let mut before_it = 0;
    for k in 0..20u32 {
        let mut child = sync_child(&bench, &killed.bench_url("BIG"));
        std::thread::sleep(whole.mul_f64((f64::from(k) + 0.5) / 20.0));
        let _ = child.kill(); // SIGKILL
        let _ = child.wait();
        let now = content(&killed);
        assert!(
            now == empty || now == expected,
            "after the kill at point {k} the fleet holds part of the push: {now}"
        );
        before_it += usize::from(now == empty);
    }
    assert!(
        before_it > 0,
        "no kill landed inside a push ({whole:?} per push)"
    );
    let o = sync(&bench, &killed.bench_url("BIG"));
    assert!(o.status.success(), "{}", err(&o));
    assert_eq!(content(&killed), expected);
    let o = sync(&bench, &killed.bench_url("BIG"));
    assert!(o.status.success(), "{}", err(&o));
    assert_eq!(
        content(&killed),
        expected,
        "the same push again changes nothing"
    );
    let o = bin()
        .args([
            "--db",
            bench.to_str().unwrap(),
            "verify",
            "--fleet",
            &killed.bench_url("BIG"),
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", err(&o));

    // 2. the server stopped in the middle of a sync
    let stopped = TestFleet::new(&cluster);
    let bench = copy_bench(&big, "stopped");
    let child = sync_child(&bench, &stopped.bench_url("BIG"));
    // wait until the push is under way in the server, then stop it (immediate shutdown)
    let mut admin = stopped.admin();
    let deadline = Instant::now() + Duration::from_secs(120);
    loop {
        let busy: i64 = admin
            .query_one(
                "SELECT count(*) FROM pg_stat_activity
                 WHERE usename = $1 AND state = 'active' AND query ILIKE '%push%'",
                &[&stopped.bench_login("BIG")],
            )
            .unwrap()
            .get(0);
        if busy > 0 {
            break;
        }
        assert!(
            Instant::now() < deadline,
            "the push never reached the server"
        );
        std::thread::sleep(Duration::from_millis(5));
    }
    drop(admin);
    cluster.stop();
    let o = child.wait_with_output().unwrap();
    assert_eq!(o.status.code(), Some(1), "{}", err(&o));
    let message = err(&o);
    assert!(message.contains("cannot be reached"), "{message}");
    assert_eq!(message.lines().count(), 1, "one clear line: {message}");
    // nothing half-applied on the bench: no receipt, its own chain whole
    let s = shardlog::store::Store::open_existing(&bench).unwrap();
    assert!(s.fleet_receipts().unwrap().is_empty());
    assert!(s.verify().unwrap().first_problem.is_none());
    drop(s);
    // nor in the fleet
    cluster.start();
    assert_eq!(content(&stopped), empty);
    let o = sync(&bench, &stopped.bench_url("BIG"));
    assert!(o.status.success(), "{}", err(&o));
    assert_eq!(content(&stopped), expected);
}
