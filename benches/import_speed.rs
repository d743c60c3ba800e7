//! Import speed against the floor of a plain CSV-to-SQLite insert of the same rows, from one
//! run, as a table:
//!
//!     cargo bench --bench import_speed -- --rows 20000            # default 20000
//!     cargo bench --bench import_speed -- --rows 1000000 --rounds 1
//!
//! The floor ("plain"): the same CSV bytes split on commas and newlines (no quoting, no
//! checks) and written with plain prepared INSERT statements into bare tables of the same
//! shape (incident row, ply, examination, three readings; no indexes but the keys, no text
//! index, no audit), WAL and synchronous = FULL, one transaction. The import: `import` of
//! the same bytes into a new database (checks, one-pass report, references, codes, audit
//! chain, text index, fleet statistics), by the path its size takes (above 10,000 rows the
//! bulk path); with `--ordinary` also by the ordinary path at any size. Each figure is the
//! median of `--rounds` (default 3) alternating rounds; wall time and the process's CPU
//! time. Goal (not asserted): the import at no less than 0.12 of the plain floor's rate.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use chrono::{TimeZone, Utc};
use shardlog::store::exchange::ImportOptions;
use shardlog::store::*;

#[path = "support/synthetic.rs"]
mod synthetic;

/// CPU time of this process so far (the bulk path runs on three threads).
fn process_cpu() -> Duration {
    let mut ts = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: clock_gettime writes the timespec it is given
    unsafe { libc::clock_gettime(libc::CLOCK_PROCESS_CPUTIME_ID, &mut ts) };
    Duration::new(ts.tv_sec as u64, ts.tv_nsec as u32)
}

#[derive(Clone, Copy)]
struct Took {
    wall: Duration,
    cpu: Duration,
    /// Peak resident memory of the process while it ran, bytes (VmHWM after a reset).
    peak: u64,
}

/// Reset the process's peak resident memory to what it holds now (Linux: writing 5 to
/// /proc/self/clear_refs); false where that cannot be done.
fn reset_peak() -> bool {
    std::fs::write("/proc/self/clear_refs", "5").is_ok()
}

/// The process's peak resident memory since the last reset (VmHWM), bytes.
fn peak_memory() -> u64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok())
        .map_or(0, |kb| kb * 1024)
}

fn timed(f: impl FnOnce()) -> Took {
    let reset = reset_peak();
    let (w, c) = (Instant::now(), process_cpu());
    f();
    Took {
        wall: w.elapsed(),
        cpu: process_cpu() - c,
        peak: if reset { peak_memory() } else { 0 },
    }
}

/// The machine's load average (1, 5 and 15 minutes), as /proc/loadavg gives it.
fn load_average() -> (String, String, String) {
    let text = std::fs::read_to_string("/proc/loadavg").unwrap_or_default();
    let mut f = text.split_whitespace().map(str::to_string);
    let mut next = || f.next().unwrap_or_else(|| "?".into());
    (next(), next(), next())
}

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

/// The floor: the CSV split and inserted into bare tables, one transaction.
fn plain(path: &Path, csv: &[u8]) -> Took {
    let c = rusqlite::Connection::open(path).expect("open");
    c.execute_batch(
        "PRAGMA journal_mode = WAL; PRAGMA synchronous = FULL;
         CREATE TABLE inc (seq INTEGER PRIMARY KEY, id TEXT NOT NULL UNIQUE, found_on TEXT,
           site TEXT, asset TEXT, position TEXT, supplier TEXT, product TEXT, lot TEXT,
           makeup TEXT, status TEXT, origin_location TEXT, cause TEXT, confidence TEXT,
           responsibility TEXT, description TEXT) STRICT;
         CREATE TABLE ply (incident_id TEXT, material TEXT, temper TEXT, thickness TEXT) STRICT;
         CREATE TABLE exam (id TEXT, incident_id TEXT, origin_type TEXT, analyst TEXT) STRICT;
         CREATE TABLE rd (examination_id TEXT, boundary TEXT, value_text TEXT) STRICT;",
    )
    .expect("schema");
    timed(|| {
        let tx = c.unchecked_transaction().expect("tx");
        {
            let mut a = tx
                .prepare("INSERT INTO inc (id, found_on, site, asset, position, supplier, product, lot, makeup, status, origin_location, cause, confidence, responsibility, description) VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10,?11,?12,?13,?14,?15)")
                .expect("prep");
            let mut b = tx
                .prepare("INSERT INTO ply VALUES (?1, ?2, ?3, ?4)")
                .expect("prep");
            let mut e = tx
                .prepare("INSERT INTO exam VALUES (?1, ?2, ?3, ?4)")
                .expect("prep");
            let mut r = tx
                .prepare("INSERT INTO rd VALUES (?1, ?2, ?3)")
                .expect("prep");
            let text = std::str::from_utf8(csv).expect("utf-8");
            for (i, line) in text.lines().skip(1).enumerate() {
                let f: Vec<&str> = line.split(',').collect();
                let id = format!("0190{i:028x}");
                let ex = format!("0191{i:028x}");
                a.execute(rusqlite::params![
                    id, f[0], f[1], f[2], f[3], f[4], f[5], f[6], f[7], f[11], f[12], f[17], f[18],
                    f[19], f[20]
                ])
                .expect("insert");
                b.execute(rusqlite::params![id, f[8], f[9], f[10]])
                    .expect("insert");
                e.execute(rusqlite::params![ex, id, f[13], f[14]])
                    .expect("insert");
                for v in f[15].split("; ") {
                    r.execute(rusqlite::params![ex, "mirror_mist", v])
                        .expect("insert");
                }
                r.execute(rusqlite::params![ex, "mist_hackle", f[16]])
                    .expect("insert");
            }
        }
        tx.commit().expect("commit");
    })
}

/// `import` of the CSV into a new database; `ordinary` forces the ordinary path.
fn import(path: &Path, csv: &[u8], ordinary: bool) -> Took {
    let mut s = Store::open(path).expect("open");
    if ordinary {
        s.set_bulk_import_above(usize::MAX);
    }
    let stamp = Stamp::new("bench", Utc.with_ymd_and_hms(2026, 11, 1, 8, 0, 0).unwrap());
    let n = csv.iter().filter(|&&b| b == b'\n').count() - 1;
    let took = timed(|| {
        let sum = s
            .import_bytes("bench.csv", csv, ImportOptions::default(), &stamp)
            .expect("import")
            .expect("accepted");
        assert_eq!(sum.incidents, n);
    });
    // not timed: the imported database verifies and holds every row
    let v = s.verify().expect("verify");
    assert!(v.first_problem.is_none(), "verifies: {v:?}");
    assert_eq!(s.incident_count().expect("count"), n as u64);
    took
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let arg = |name: &str| {
        args.iter()
            .position(|a| a == name)
            .and_then(|i| args.get(i + 1).cloned())
    };
    let n: usize = arg("--rows").and_then(|v| v.parse().ok()).unwrap_or(20_000);
    let rounds: usize = arg("--rounds").and_then(|v| v.parse().ok()).unwrap_or(3);
    let ordinary = args.iter().any(|a| a == "--ordinary");
    let dir = std::env::temp_dir().join(format!("shardlog-import-speed-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let csv = synthetic::csv(n);
    let file = |name: &str, round: usize| -> PathBuf { dir.join(format!("{name}-{round}.db")) };
    let (mut plains, mut imports, mut ordinaries) = (Vec::new(), Vec::new(), Vec::new());
    for round in 0..rounds.max(1) {
        plains.push(plain(&file("plain", round), &csv));
        imports.push(import(&file("import", round), &csv, false));
        if ordinary {
            ordinaries.push(import(&file("ordinary", round), &csv, true));
        }
        for name in ["plain", "import", "ordinary"] {
            let p = file(name, round);
            for suffix in ["", "-wal", "-shm"] {
                let _ = std::fs::remove_file(format!("{}{suffix}", p.display()));
            }
        }
    }
    let med = |v: &[Took]| Took {
        wall: median(v.iter().map(|t| t.wall).collect()),
        cpu: median(v.iter().map(|t| t.cpu).collect()),
        peak: v.iter().map(|t| t.peak).max().unwrap_or(0),
    };
    let floor = med(&plains);
    let rate = |d: Duration| n as f64 / d.as_secs_f64();
    println!(
        "{n} rows, median of {} rounds; rates in rows per second of wall (and CPU) time",
        rounds.max(1)
    );
    println!(
        "| what | wall s | rows/s | CPU s | rows/s of CPU | ratio to plain (wall) | ratio (CPU) | peak memory MB |"
    );
    println!("|---|---|---|---|---|---|---|---|");
    let line = |label: &str, t: Took| {
        println!(
            "| {label} | {:.2} | {:.0} | {:.2} | {:.0} | {:.3} | {:.3} | {} |",
            t.wall.as_secs_f64(),
            rate(t.wall),
            t.cpu.as_secs_f64(),
            rate(t.cpu),
            rate(t.wall) / rate(floor.wall),
            rate(t.cpu) / rate(floor.cpu),
            if t.peak > 0 {
                format!("{:.0}", t.peak as f64 / 1048576.0)
            } else {
                "not measured".to_string()
            },
        )
    };
    line("plain CSV-to-SQLite insert (floor)", floor);
    let path = if n > shardlog::store::exchange::BULK_IMPORT_ABOVE {
        "bulk path"
    } else {
        "ordinary path"
    };
    line(&format!("import ({path})"), med(&imports));
    if ordinary {
        line("import (ordinary path, forced)", med(&ordinaries));
    }
    println!("goal: import at no less than 0.12 of the plain floor's rate");
    // SAFETY: getrusage fills the struct it is given; an all-zero rusage is a valid value
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut usage) };
    println!(
        "peak memory: resident memory while each step ran (the highest of the rounds; the CSV bytes, {:.0} MB, are held throughout); of the whole process (every round, the verify after each import included): {} MB",
        csv.len() as f64 / 1048576.0,
        usage.ru_maxrss / 1024
    );
    let (load1, load5, load15) = load_average();
    println!("load average at the end (1, 5, 15 min): {load1} {load5} {load15}");
    let _ = std::fs::remove_dir_all(&dir);
}
