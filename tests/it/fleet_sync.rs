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
    enrolled: std::sync::Mutex<std::collections::HashSet<String>>,
}

impl<'a> TestFleet<'a> {
    pub(crate) fn new(cluster: &'a Cluster) -> TestFleet<'a> {
        let name = fresh_database(cluster);
        let f = TestFleet {
            cluster,
            name,
            enrolled: Default::default(),
        };
        let o = run(&["fleet", "init", "--url", &f.owner_url()]);
        assert!(o.status.success(), "fleet init: {}", err(&o));
        f
    }
    pub(crate) fn owner_url(&self) -> String {
        self.cluster.url(&self.name)
    }
    /// The login of bench `code`, made by `fleet enrol` the first time it is asked for.
    pub(crate) fn bench_login(&self, code: &str) -> String {
        let mut enrolled = self.enrolled.lock().unwrap_or_else(|e| e.into_inner());
        if !enrolled.contains(code) {
            let o = run(&["fleet", "enrol", code, "--url", &self.owner_url(), "--json"]);
            assert!(o.status.success(), "fleet enrol {code}: {}", err(&o));
            let v: serde_json::Value = serde_json::from_str(&out(&o)).expect("enrol --json");
            assert_eq!(
                v["login"],
                format!("{}_bench_{}", self.name, code.to_lowercase())
            );
            enrolled.insert(code.to_string());
        }
        format!("{}_bench_{}", self.name, code.to_lowercase())
    }
    /// A connection URL as bench `code`'s own login (the test cluster trusts its socket).
    pub(crate) fn bench_url(&self, code: &str) -> String {
        self.cluster.url_as(&self.name, &self.bench_login(code))
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

/// The audit rows of a bench after row `seq` that the bench made itself (not a pull's).
pub(crate) fn own_rows_after(db: &Path, seq: i64) -> i64 {
    rusqlite::Connection::open(db)
        .expect("open the bench")
        .query_row(
            "SELECT count(*) FROM audit WHERE seq > ?1 AND actor <> 'fleet:pull'",
            [seq],
            |r| r.get(0),
        )
        .expect("count")
}

/// The fleet witnessed the bench's chain up to its head, and what the bench holds beyond
/// it is only `own` rows of its own (the rest: what its last pull took from the fleet,
/// witnessed by its next push).
pub(crate) fn witnessed_up_to_the_last_pull(f: &TestFleet<'_>, code: &str, db: &Path, own: i64) {
    let fleet = fleet_chain(f, code);
    let local = bench_chain(db);
    assert!(fleet.len() <= local.len(), "{code}");
    assert_eq!(fleet[..], local[..fleet.len()], "{code}");
    let head = fleet.last().map_or(0, |(seq, _)| *seq);
    assert_eq!(own_rows_after(db, head), own, "{code}");
}

/// The sum of what a sync pulled (its report's `pulled` numbers).
pub(crate) fn pulled_total(r: &serde_json::Value) -> u64 {
    r["pulled"]
        .as_object()
        .expect("what was pulled")
        .values()
        .filter_map(serde_json::Value::as_u64)
        .sum()
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
        let r = sync_ok(db, &fleet.bench_url(code));
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
        // the fleet witnessed exactly the bench's chain (and since then the bench took only
        // what others gave the fleet: their exposure rows, kept apart)
        witnessed_up_to_the_last_pull(&fleet, code, db, 0);
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
    // the rows each bench pulled go back to be witnessed (a pull row is never applied:
    // no record changes), until a round moves nothing
    let records = fleet.count("SELECT count(*) FROM fleet_records");
    let mut receipts = 3;
    let mut rounds = 0;
    loop {
        let mut moved = false;
        for (code, db) in &benches {
            let r = sync_ok(db, &fleet.bench_url(code));
            assert_eq!(r["push"]["records"], 0, "{r}");
            if r["push"]["status"] == "accepted" {
                receipts += 1;
                moved = true;
            }
            moved |= pulled_total(&r) > 0;
        }
        assert_eq!(fleet.count("SELECT count(*) FROM fleet_records"), records);
        if !moved {
            break;
        }
        rounds += 1;
        assert!(
            rounds < 4,
            "the benches still move rows after {rounds} rounds"
        );
    }
    // again: nothing changes, the fleet says so
    let before = fleet.state();
    for (code, db) in &benches {
        let r = sync_ok(db, &fleet.bench_url(code));
        assert_eq!(r["push"]["status"], "unchanged", "{r}");
        assert_eq!(pulled_total(&r), 0, "{r}");
        assert_eq!(fleet_chain(&fleet, code), bench_chain(db), "{code}");
    }
    assert_eq!(fleet.state(), before);
    // status: three benches, their heads, no conflict, no refusal
    let o = run(&["fleet", "status", "--url", &fleet.owner_url(), "--json"]);
    assert!(o.status.success(), "{}", err(&o));
    let s: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    assert_eq!(s["incidents"], 125);
    assert_eq!(s["receipts"], receipts);
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
            &fleet.bench_url(code),
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
    let o = sync(&db, &fleet.bench_url("EAST"));
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
    let o = sync(&db, &fleet.bench_url("EAST"));
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
    sync_ok(&db, &fleet.bench_url("NORTH"));
    let before = fleet.state();
    let role = fleet.bench_login("NORTH");
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

/// Rewrite a bench's history the way someone with the file and plain SQL could: change the
/// actor of audit row `seq`, then re-hash every row from there so the chain is whole again.
pub(crate) fn rewrite_history(db: &Path, seq: i64) {
    let c = rusqlite::Connection::open(db).unwrap();
    c.execute(
        "UPDATE audit SET actor = 'someone else' WHERE seq = ?1",
        [seq],
    )
    .unwrap();
    drop(c);
    crate::support::audit::rechain(db, seq);
}

/// A new incident at a bench, through the store (its audit row goes with it).
pub(crate) fn add_incident(db: &Path, notes: &str) -> shardlog::store::Incident {
    let mut s = shardlog::store::Store::open_existing(db).unwrap();
    let mut draft =
        shardlog::store::Incident::draft(chrono::NaiveDate::from_ymd_opt(2026, 11, 30).unwrap());
    draft.position = "rear window".into();
    draft.notes = notes.into();
    s.create_incident(
        &draft,
        &shardlog::store::Stamp::new("test-runner", chrono::Utc::now()),
    )
    .unwrap()
}

#[test]
fn a_rewritten_history_is_refused_as_a_fork_and_the_fleet_is_unchanged() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 30);
    sync_ok(&db, &fleet.bench_url("NORTH"));
    let before = fleet.state();
    // the rewritten chain is whole: the bench's own verify cannot see it
    rewrite_history(&db, 10);
    add_incident(&db, "made after the rewrite");
    let o = run(&["--db", db.to_str().unwrap(), "verify"]);
    assert!(o.status.success(), "{}", err(&o));
    // the fleet can
    let o = sync(&db, &fleet.bench_url("NORTH"));
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(err(&o).contains("refused the push (fork)"), "{}", err(&o));
    assert_eq!(
        fleet.state(),
        before,
        "nothing of a refused push is applied"
    );
    let o = run(&["fleet", "status", "--url", &fleet.owner_url(), "--json"]);
    let s: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    let b = &s["benches"][0];
    assert_eq!(b["refused_pushes"], 1);
    assert!(
        b["last_refusal"].as_str().unwrap().starts_with("fork:"),
        "{b}"
    );
    let o = run(&["fleet", "status", "--url", &fleet.owner_url()]);
    assert!(
        out(&o).contains("NORTH: last refused push: fork:"),
        "{}",
        out(&o)
    );
    // verify --fleet names the first rewritten row
    let o = run(&[
        "--db",
        db.to_str().unwrap(),
        "verify",
        "--fleet",
        &fleet.bench_url("NORTH"),
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert!(
        err(&o).contains("audit row 10: the fleet witnessed"),
        "{}",
        err(&o)
    );
}

#[test]
fn a_hand_made_push_through_the_bench_role_is_checked_inside_the_server() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 20);
    sync_ok(&db, &fleet.bench_url("NORTH"));
    let before = fleet.state();
    let chain = bench_chain(&db);
    let (head_seq, head_hash) = chain.last().cloned().unwrap();
    let mut c = postgres::Client::connect(&fleet.bench_url("NORTH"), postgres::NoTls).unwrap();
    let push = |c: &mut postgres::Client, seq: i64, prev: &str, hash: &str| -> (String, String) {
        let mut tx = c.transaction().unwrap();
        tx.execute(
            "INSERT INTO push_entries (seq, at, actor, entity, entity_id, op, before, after, prev_hash, hash)
             VALUES ($1, '2026-12-01T00:00:00.000Z', 'mallory', 'incident', '0190aaaa-0000-7000-8000-000000000000',
                     'insert', NULL, '{}', $2, $3)",
            &[&seq, &prev, &hash],
        )
        .unwrap();
        let r = tx
            .query_one("SELECT status, detail FROM fleet_push('NORTH')", &[])
            .unwrap();
        tx.commit().unwrap();
        (r.get(0), r.get(1))
    };
    // a new row whose hash is not its content
    let wrong = "ab".repeat(32);
    assert_eq!(
        push(&mut c, head_seq + 1, &head_hash, &wrong),
        ("refused".to_string(), "forged".to_string())
    );
    // a row the fleet holds, sent again with another hash
    let (seq5, _) = chain[4].clone();
    assert_eq!(
        push(&mut c, seq5, &chain[3].1, &wrong),
        ("refused".to_string(), "fork".to_string())
    );
    // a row that does not start where the fleet's head is
    assert_eq!(
        push(&mut c, head_seq + 2, &head_hash, &wrong),
        ("refused".to_string(), "gap".to_string())
    );
    // the fleet unchanged, the refusals kept and shown
    assert_eq!(fleet.state(), before);
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_refusals WHERE bench = 'NORTH'"),
        3
    );
    // the bench role cannot read what others staged, nor empty the refusals
    let (ok, _, stderr) = cluster.psql(
        &fleet.name,
        &fleet.bench_login("NORTH"),
        "SELECT * FROM push_entries",
    );
    assert!(!ok && stderr.contains("permission denied"), "{stderr}");
    // and the bench itself still syncs
    let r = sync_ok(&db, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["status"], "unchanged");
}

#[test]
fn a_nul_character_in_a_note_is_stored_encoded_and_reads_back() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 10);
    let inc = add_incident(&db, "before\0after");
    sync_ok(&db, &fleet.bench_url("NORTH"));
    let image: String = fleet
        .admin()
        .query_one(
            "SELECT image FROM fleet_records WHERE entity = 'incident' AND id = $1",
            &[&inc.id],
        )
        .unwrap()
        .get(0);
    assert!(image.contains(r"before\u0000after"), "{image}");
    let back = shardlog::store::canon::decanonical(&image).unwrap();
    assert_eq!(back["notes"], "before\0after");
    assert_eq!(
        shardlog::store::canon::incident_image(&inc).unwrap(),
        image,
        "the fleet holds the bench's image byte for byte"
    );
    let o = run(&[
        "--db",
        db.to_str().unwrap(),
        "verify",
        "--fleet",
        &fleet.bench_url("NORTH"),
    ]);
    assert!(o.status.success(), "{}", err(&o));
}

#[test]
fn four_benches_syncing_at_once_lose_nothing() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let codes = ["EAST", "WEST", "NORTH", "SOUTH"];
    let dbs: Vec<PathBuf> = codes
        .iter()
        .map(|c| demo_bench(dir.path(), c, 40))
        .collect();
    for round in 0..2 {
        let children: Vec<_> = codes
            .iter()
            .zip(&dbs)
            .map(|(code, db)| {
                bin()
                    .args([
                        "--db",
                        db.to_str().unwrap(),
                        "sync",
                        "--fleet",
                        &fleet.bench_url(code),
                    ])
                    .stdout(std::process::Stdio::piped())
                    .stderr(std::process::Stdio::piped())
                    .spawn()
                    .unwrap()
            })
            .collect();
        for child in children {
            let o = child.wait_with_output().unwrap();
            assert!(o.status.success(), "round {round}: {}", err(&o));
        }
        // new work at each bench for the second round
        for db in &dbs {
            add_incident(db, &format!("round {round}"));
        }
    }
    for (code, db) in codes.iter().zip(&dbs) {
        // the incident added after the last round is not synced yet, nor what the bench
        // pulled in it
        witnessed_up_to_the_last_pull(&fleet, code, db, 1);
    }
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_records WHERE entity = 'incident'"),
        4 * 41
    );
    assert_eq!(fleet.count("SELECT count(*) FROM fleet_receipts"), 8);
    assert_eq!(fleet.count("SELECT count(*) FROM fleet_refusals"), 0);
}
