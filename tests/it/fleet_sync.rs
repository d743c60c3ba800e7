//! Benches syncing into the fleet database, against a real PostgreSQL server (see
//! support::fleet): the real binary, demo benches, the fleet read back as its owner.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use crate::support::fleet::{fresh_database, Cluster};

pub(crate) fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_shardlog"));
    c.env("SHARDLOG_USER", "test-runner");
    c.env_remove("SHARDLOG_FLEET_URL");
    c
}

pub(crate) fn run(args: &[&str]) -> Output {
    bin().args(args).output().expect("the binary runs")
}

pub(crate) fn out(o: &Output) -> String {
    String::from_utf8_lossy(&o.stdout).into_owned()
}

pub(crate) fn err(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// One fleet database on a cluster, made ready with `fleet init`.
pub(crate) struct TestFleet<'a> {
    pub cluster: &'a Cluster,
    pub name: String,
}

impl<'a> TestFleet<'a> {
    pub(crate) fn new(cluster: &'a Cluster) -> TestFleet<'a> {
        let name = fresh_database(cluster);
        let f = TestFleet { cluster, name };
        let o = run(&["fleet", "init", "--url", &f.owner_url()]);
        assert!(o.status.success(), "fleet init: {}", err(&o));
        f
    }
    pub(crate) fn owner_url(&self) -> String {
        self.cluster.url(&self.name)
    }
    pub(crate) fn bench_role(&self) -> String {
        format!("{}_bench", self.name)
    }
    pub(crate) fn bench_url(&self) -> String {
        self.cluster.url_as(&self.name, &self.bench_role())
    }
    pub(crate) fn admin(&self) -> postgres::Client {
        self.cluster.admin(&self.name)
    }
    /// Everything the fleet holds, as one digest (with the counts, for messages).
    pub(crate) fn state(&self) -> String {
        let mut c = self.admin();
        let row = c
            .query_one(
                "SELECT
                   (SELECT count(*) FROM bench_chain)::text || ' rows ' ||
                   coalesce((SELECT md5(string_agg(bench || ':' || seq || ':' || hash, ',' ORDER BY bench, seq)) FROM bench_chain), '-') ||
                   ' / ' || (SELECT count(*) FROM fleet_records)::text || ' records ' ||
                   coalesce((SELECT md5(string_agg(entity || ':' || id || ':' || origin || ':' || owner || ':' || coalesce(digest, '-'), ',' ORDER BY entity, id, origin)) FROM fleet_records), '-') ||
                   ' / ' || (SELECT count(*) FROM fleet_receipts)::text || ' receipts / ' ||
                   (SELECT count(*) FROM fleet_conflicts)::text || ' conflicts / ' ||
                   (SELECT count(*) FROM fleet_files)::text || ' files'",
                &[],
            )
            .expect("the fleet's state");
        row.get(0)
    }
    pub(crate) fn count(&self, sql: &str) -> i64 {
        self.admin()
            .query_one(sql, &[])
            .unwrap_or_else(|e| panic!("{sql}: {e}"))
            .get(0)
    }
}

/// A demo bench with a code.
pub(crate) fn demo_bench(dir: &Path, code: &str, incidents: u64) -> PathBuf {
    let db = dir.join(format!("{code}.db"));
    let o = run(&[
        "demo",
        "--bench",
        code,
        "--incidents",
        &incidents.to_string(),
        "--seed",
        "11",
        "--out",
        db.to_str().expect("a UTF-8 path"),
    ]);
    assert!(o.status.success(), "demo --bench {code}: {}", err(&o));
    db
}

pub(crate) fn sync(db: &Path, url: &str) -> Output {
    run(&[
        "--db",
        db.to_str().expect("a UTF-8 path"),
        "sync",
        "--fleet",
        url,
        "--json",
    ])
}

pub(crate) fn sync_ok(db: &Path, url: &str) -> serde_json::Value {
    let o = sync(db, url);
    assert!(
        o.status.success(),
        "sync of {} failed: {}",
        db.display(),
        err(&o)
    );
    serde_json::from_str(&out(&o)).expect("sync --json prints JSON")
}

/// (reference, id) of every incident of a bench, sorted.
pub(crate) fn bench_incidents(db: &Path) -> Vec<(String, String)> {
    let c = rusqlite::Connection::open(db).expect("open the bench");
    let mut stmt = c
        .prepare("SELECT reference, id FROM incidents ORDER BY reference")
        .expect("prepare");
    let rows = stmt
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
        .expect("query");
    rows.collect::<Result<_, _>>().expect("rows")
}

/// (seq, hash) of every audit row of a bench.
pub(crate) fn bench_chain(db: &Path) -> Vec<(i64, String)> {
    let c = rusqlite::Connection::open(db).expect("open the bench");
    let mut stmt = c
        .prepare("SELECT seq, hash FROM audit ORDER BY seq")
        .expect("prepare");
    let rows = stmt
        .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
        .expect("query");
    rows.collect::<Result<_, _>>().expect("rows")
}

pub(crate) fn fleet_chain(f: &TestFleet<'_>, bench: &str) -> Vec<(i64, String)> {
    f.admin()
        .query(
            "SELECT seq, hash FROM bench_chain WHERE bench = $1 ORDER BY seq",
            &[&bench],
        )
        .expect("bench_chain")
        .iter()
        .map(|r| (r.get(0), r.get(1)))
        .collect()
}

#[test]
fn three_demo_benches_sync_into_one_fleet_once() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let benches: Vec<(&str, PathBuf)> = [("NORTH", 40), ("SOUTH", 55), ("LAB2", 30)]
        .into_iter()
        .map(|(code, n)| (code, demo_bench(dir.path(), code, n)))
        .collect();
    for (code, db) in &benches {
        let r = sync_ok(db, &fleet.bench_url());
        assert_eq!(r["bench"], *code);
        assert_eq!(r["push"]["status"], "accepted", "{r}");
    }
    // every incident once, under its bench's reference
    let mut expected: Vec<(String, String)> = Vec::new();
    for (code, db) in &benches {
        let local = bench_incidents(db);
        assert!(local.len() >= 30);
        for (reference, _) in &local {
            assert!(
                reference.starts_with(&format!("BR-{code}-")),
                "{reference} carries the bench code"
            );
        }
        expected.extend(local);
        // the fleet witnessed exactly the bench's chain
        assert_eq!(fleet_chain(&fleet, code), bench_chain(db), "{code}");
    }
    expected.sort();
    let mut c = fleet.admin();
    let in_fleet: Vec<(String, String)> = c
        .query(
            "SELECT reference, id FROM fleet_records WHERE entity = 'incident' ORDER BY reference",
            &[],
        )
        .unwrap()
        .iter()
        .map(|r| (r.get(0), r.get(1)))
        .collect();
    assert_eq!(in_fleet, expected);
    assert_eq!(
        fleet
            .count("SELECT count(DISTINCT reference) FROM fleet_records WHERE entity = 'incident'"),
        125
    );
    // the benches share the demo world's suppliers by code, each with its own keys
    assert_eq!(
        fleet.count("SELECT count(DISTINCT origin) FROM fleet_records WHERE entity = 'supplier'"),
        3
    );
    // again: nothing changes, the fleet says so
    let before = fleet.state();
    for (_, db) in &benches {
        let r = sync_ok(db, &fleet.bench_url());
        assert_eq!(r["push"]["status"], "unchanged", "{r}");
        assert_eq!(r["pulled"]["lookups"], 0);
    }
    assert_eq!(fleet.state(), before);
    // status: three benches, their heads, no conflict, no refusal
    let o = run(&["fleet", "status", "--url", &fleet.owner_url(), "--json"]);
    assert!(o.status.success(), "{}", err(&o));
    let s: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    assert_eq!(s["incidents"], 125);
    assert_eq!(s["receipts"], 3);
    let listed: Vec<&str> = s["benches"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b["code"].as_str().unwrap())
        .collect();
    assert_eq!(listed, ["LAB2", "NORTH", "SOUTH"]);
    for b in s["benches"].as_array().unwrap() {
        assert_eq!(b["refused_pushes"], 0);
        assert_eq!(b["open_conflicts"], 0);
    }
    // each bench's chain checks against what the fleet witnessed
    for (code, db) in &benches {
        let o = run(&[
            "--db",
            db.to_str().unwrap(),
            "verify",
            "--fleet",
            &fleet.bench_url(),
        ]);
        assert!(o.status.success(), "verify --fleet {code}: {}", err(&o));
        assert!(
            out(&o).starts_with("ok: the fleet witnessed"),
            "{}",
            out(&o)
        );
    }
}

#[test]
fn a_bench_without_a_code_or_a_server_is_told_why() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("plain.db");
    let o = run(&["--db", db.to_str().unwrap(), "init"]);
    assert!(o.status.success(), "{}", err(&o));
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let o = sync(&db, &fleet.bench_url());
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("no code"), "{}", err(&o));
    // a code, then a server that is not there
    let o = run(&["--db", db.to_str().unwrap(), "bench", "code", "east"]);
    assert!(o.status.success(), "{}", err(&o));
    let gone = dir.path().join("no-server");
    std::fs::create_dir(&gone).unwrap();
    let url = format!("postgresql:///x?host={}&user=postgres", gone.display());
    let o = sync(&db, &url);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("cannot be reached"), "{}", err(&o));
    // a URL that is not one is a usage error
    let o = sync(&db, "postgresql://a:b:c@/");
    assert_eq!(o.status.code(), Some(2), "{}", err(&o));
    // no URL at all
    let o = run(&["--db", db.to_str().unwrap(), "sync"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(err(&o).contains("SHARDLOG_FLEET_URL"), "{}", err(&o));
    // a bad code
    let o = run(&["--db", db.to_str().unwrap(), "bench", "code", "9-lives"]);
    assert_eq!(o.status.code(), Some(2));
    assert!(err(&o).contains("bench code"), "{}", err(&o));
    // once synced, the code stays
    let o = sync(&db, &fleet.bench_url());
    assert!(o.status.success(), "{}", err(&o));
    let o = run(&["--db", db.to_str().unwrap(), "bench", "code", "WEST"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("cannot change"), "{}", err(&o));
    let o = run(&["--db", db.to_str().unwrap(), "bench", "code"]);
    assert_eq!(out(&o).trim(), "EAST");
}

#[test]
fn the_bench_role_cannot_change_or_delete_fleet_history() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 20);
    sync_ok(&db, &fleet.bench_url());
    let before = fleet.state();
    let role = fleet.bench_role();
    for sql in [
        "UPDATE bench_chain SET actor = 'someone else'",
        "DELETE FROM bench_chain",
        "DELETE FROM fleet_receipts",
        "UPDATE fleet_records SET image = NULL",
        "DELETE FROM fleet_records",
        "UPDATE fleet_benches SET head_seq = 0",
        "INSERT INTO bench_chain SELECT * FROM bench_chain LIMIT 1",
        "TRUNCATE fleet_receipts",
        "DELETE FROM fleet_refusals",
    ] {
        let (ok, _, stderr) = cluster.psql(&fleet.name, &role, sql);
        assert!(!ok, "the bench role could run: {sql}");
        assert!(stderr.contains("permission denied"), "{sql}: {stderr}");
    }
    // reading is allowed
    let (ok, stdout, stderr) = cluster.psql(&fleet.name, &role, "SELECT count(*) FROM bench_chain");
    assert!(ok, "{stderr}");
    assert!(
        stdout
            .trim()
            .lines()
            .any(|l| l.trim().parse::<i64>().is_ok_and(|n| n > 0)),
        "{stdout}"
    );
    // not even the owner rewrites history
    for sql in [
        "UPDATE bench_chain SET actor = 'x'",
        "DELETE FROM fleet_receipts",
    ] {
        let (ok, _, stderr) = cluster.psql(&fleet.name, &cluster.user, sql);
        assert!(!ok, "the owner could run: {sql}");
        assert!(stderr.contains("append-only"), "{sql}: {stderr}");
    }
    // the reader role reads and cannot push
    let reader = format!("{}_reader", fleet.name);
    let (ok, _, stderr) = cluster.psql(&fleet.name, &reader, "SELECT * FROM fleet_push('NORTH')");
    assert!(!ok);
    assert!(stderr.contains("permission denied"), "{stderr}");
    assert_eq!(fleet.state(), before);
}
