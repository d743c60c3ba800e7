//! Fleet sync speed: the first push of a demo bench of N incidents, an incremental sync of
//! 100 changed incidents (edited ones, then new ones), a sync with nothing new, and four
//! benches syncing at once (their first pushes, the sync that returns what each pulled from
//! the others, then 100 edited incidents each). Every push
//! is a whole `shardlog sync` process, as a user runs it (connection, schema check, push,
//! receipt, pull). Prints one table with the load average before each step.
//!
//! Run through `scripts/bench-sync N [M]`, which starts a throwaway PostgreSQL cluster (fsync
//! off: the figures leave out the server's disk flushes) and hands this bench the fleet's
//! URLs in `SHARDLOG_BENCH_OWNER_URL` and `SHARDLOG_BENCH_URL` (the bench role's; each bench
//! is enrolled and pushes as its own login, that name with `_code` appended). N is the big bench's incident
//! count, M each of the four benches' (default the smaller of N and 20,000).

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::Instant;

use shardlog::store::{Filter, PageRequest, Sort, Stamp, Store};

const CHANGES: usize = 100;

fn exe() -> Command {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
}

fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|s| s.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "?".into())
}

fn check(o: &Output, what: &str) {
    if !o.status.success() {
        eprintln!(
            "bench-sync: {what} failed:\n{}{}",
            String::from_utf8_lossy(&o.stdout),
            String::from_utf8_lossy(&o.stderr)
        );
        std::process::exit(1);
    }
}

fn demo(dir: &Path, code: &str, n: u64) -> PathBuf {
    let db = dir.join(format!("{code}.db"));
    enrol(
        &std::env::var("SHARDLOG_BENCH_OWNER_URL").unwrap_or_default(),
        code,
    );
    let o = exe()
        .args(["demo", "--bench", code, "--incidents", &n.to_string()])
        .args(["--seed", "11", "--out"])
        .arg(&db)
        .output()
        .expect("shardlog runs");
    check(&o, &format!("demo --bench {code}"));
    db
}

/// Bench `code` pushes with its own login, `fleet enrol` makes it: the fleet's bench URL with
/// the code appended to the user name (the throwaway cluster trusts its socket).
fn enrol(owner: &str, code: &str) {
    let o = exe()
        .args(["fleet", "enrol", code, "--url", owner])
        .output()
        .expect("shardlog runs");
    check(&o, &format!("fleet enrol {code}"));
}

fn url_for(url: &str, db: &Path) -> String {
    let code = db
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or_default()
        .to_lowercase();
    format!("{url}_{code}")
}

fn sync_cmd(db: &Path, url: &str) -> Command {
    let mut c = exe();
    let url = url_for(url, db);
    c.arg("--db")
        .arg(db)
        .args(["sync", "--fleet", &url, "--json"]);
    c.stdout(Stdio::piped()).stderr(Stdio::piped());
    c
}

/// One sync: seconds and what `sync --json` said (rows sent, records).
fn sync(db: &Path, url: &str) -> (f64, serde_json::Value) {
    let t = Instant::now();
    let o = sync_cmd(db, url).output().expect("shardlog runs");
    let s = t.elapsed().as_secs_f64();
    check(&o, &format!("sync of {}", db.display()));
    let v = serde_json::from_slice(&o.stdout).unwrap_or(serde_json::Value::Null);
    (s, v)
}

/// Four (or more) syncs started together: the wall time of all, and each one's.
fn sync_all(dbs: &[PathBuf], url: &str) -> (f64, Vec<f64>) {
    let t = Instant::now();
    let children: Vec<_> = dbs
        .iter()
        .map(|db| (db, sync_cmd(db, url).spawn().expect("shardlog runs")))
        .collect();
    let mut each = Vec::new();
    for (db, child) in children {
        let o = child.wait_with_output().expect("shardlog runs");
        each.push(t.elapsed().as_secs_f64());
        check(&o, &format!("sync of {}", db.display()));
    }
    (t.elapsed().as_secs_f64(), each)
}

/// Edit the notes of `n` incidents (the newest), each a change of its own, audited.
fn edit(db: &Path, n: usize, round: &str) {
    let mut store = Store::open_existing(db).expect("open the bench");
    let page = store
        .list(
            &Filter::default(),
            Sort::default(),
            &PageRequest {
                limit: n as u32,
                after: None,
                with_total: false,
            },
        )
        .expect("list");
    let stamp = Stamp::new("bench-sync", chrono::Utc::now());
    for row in page.rows {
        let mut inc = store.get(&row.id).expect("load an incident");
        inc.notes = format!("{} / re-examined ({round})", inc.notes);
        store.update_incident(&inc, &stamp).expect("save an edit");
    }
}

/// Make `n` new incidents, each a change of its own.
fn add(db: &Path, n: usize) {
    let mut store = Store::open_existing(db).expect("open the bench");
    let stamp = Stamp::new("bench-sync", chrono::Utc::now());
    for k in 0..n {
        let mut draft = shardlog::store::Incident::draft(
            chrono::Utc::now().date_naive() - chrono::Days::new(1),
        );
        draft.position = "side lite".into();
        draft.notes = format!("found on the rounds, bench-sync {k}");
        store
            .create_incident(&draft, &stamp)
            .expect("save a new incident");
    }
}

struct Table(Vec<[String; 4]>);

impl Table {
    fn row(&mut self, what: String, figure: String, load_before: String) {
        let load_after = load();
        println!("  {what}: {figure} (load {load_before} → {load_after})");
        self.0.push([what, figure, load_before, load_after]);
    }
}

fn rate(n: u64, s: f64) -> String {
    format!("{s:.2} s, {:.0} incidents/s", n as f64 / s)
}

fn spread(each: &[f64]) -> String {
    let lo = each.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = each.iter().copied().fold(0.0, f64::max);
    format!("each {lo:.2}–{hi:.2} s")
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with("--"))
        .collect();
    let n: u64 = args.first().and_then(|a| a.parse().ok()).unwrap_or(20_000);
    let m: u64 = args
        .get(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(n.min(20_000));
    let (Ok(owner), Ok(url)) = (
        std::env::var("SHARDLOG_BENCH_OWNER_URL"),
        std::env::var("SHARDLOG_BENCH_URL"),
    ) else {
        eprintln!(
            "bench-sync: run through scripts/bench-sync N (it starts the PostgreSQL cluster and sets SHARDLOG_BENCH_OWNER_URL and SHARDLOG_BENCH_URL)"
        );
        std::process::exit(2);
    };
    let dir = tempfile::Builder::new()
        .prefix("shardlog-bench-sync.")
        .tempdir_in(std::env::var_os("SHARDLOG_BENCH_DIR").unwrap_or_else(|| ".".into()))
        .expect("a temporary folder");
    let o = exe()
        .args(["fleet", "init", "--url", &owner])
        .output()
        .expect("shardlog runs");
    check(&o, "fleet init");
    let mut table = Table(Vec::new());

    println!("bench-sync: N = {n}, four benches of {m}; making the demo benches");
    let t = Instant::now();
    let big = demo(dir.path(), "BIG", n);
    println!("  demo of {n}: {:.1} s", t.elapsed().as_secs_f64());

    let l = load();
    let (s, v) = sync(&big, &url);
    let rows = v["push"]["rows_sent"].as_u64().unwrap_or(0);
    let records = v["push"]["records"].as_i64().unwrap_or(0);
    table.row(
        format!("first push, {n} incidents ({rows} audit rows, {records} records)"),
        rate(n, s),
        l,
    );

    let l = load();
    let (s, _) = sync(&big, &url);
    table.row("sync with nothing new".into(), format!("{s:.2} s"), l);

    edit(&big, CHANGES, "1");
    let l = load();
    let (s, v) = sync(&big, &url);
    let records = v["push"]["records"].as_i64().unwrap_or(0);
    table.row(
        format!("incremental sync, {CHANGES} edited incidents ({records} records)"),
        format!("{s:.2} s"),
        l,
    );

    add(&big, CHANGES);
    let l = load();
    let (s, v) = sync(&big, &url);
    let records = v["push"]["records"].as_i64().unwrap_or(0);
    table.row(
        format!("incremental sync, {CHANGES} new incidents ({records} records)"),
        format!("{s:.2} s"),
        l,
    );

    let codes = ["EAST", "WEST", "NORTH", "SOUTH"];
    let four: Vec<PathBuf> = codes.iter().map(|c| demo(dir.path(), c, m)).collect();
    let l = load();
    let (s, each) = sync_all(&four, &url);
    table.row(
        format!("four first pushes at once, {m} incidents each"),
        format!("{}, {}", rate(4 * m, s), spread(&each)),
        l,
    );
    // each of them pulled the others' reference data: those rows go back to be witnessed
    let l = load();
    let (s, each) = sync_all(&four, &url);
    table.row(
        "four syncs at once witnessing what each pulled".into(),
        format!("{s:.2} s wall, {}", spread(&each)),
        l,
    );
    for db in &four {
        edit(db, CHANGES, "1");
    }
    let l = load();
    let (s, each) = sync_all(&four, &url);
    table.row(
        format!("four incremental syncs at once, {CHANGES} edited incidents each"),
        format!("{s:.2} s wall, {}", spread(&each)),
        l,
    );

    println!();
    println!("| step | figure | load before | load after |");
    println!("|---|---|---|---|");
    for [a, b, c, d] in &table.0 {
        println!("| {a} | {b} | {c} | {d} |");
    }
}
