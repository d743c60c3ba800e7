//! Store figures (issue 3): one page of 200 log rows on a large database, and the import
//! rate against plain prepared inserts in one transaction, from one run.
//!
//!     shardlog demo --out /tmp/m1.db --incidents 1000000        # once
//!     cargo bench --bench store -- --db /tmp/m1.db --import 20000
//!
//! Without `--db` the list and fleet-row figures are skipped. Goals (not asserted): list of 200 rows in
//! under 50 ms; import at no less than half the rate of plain prepared inserts.
//!
//! `shardlog verify` on the database instead (nothing else; the database is only read):
//!
//!     cargo bench --bench store -- --db /tmp/m1.db --verify 3      # rounds
//!
//! Goal (not asserted): well under 60 s on a million incidents on two cores.

use shardlog_core::fleet::StressKind;
use std::path::PathBuf;
use std::time::{Duration, Instant};

use chrono::{NaiveDate, TimeZone, Utc};
use shardlog::store::exchange::ImportOptions;
use shardlog::store::*;

/// CPU time of this thread so far (the figures below give it beside the wall time: the
/// machine they run on is shared, and CPU time is what the load changes least).
fn thread_cpu() -> Duration {
    let mut ts = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: clock_gettime writes one timespec to the pointer it is given.
    unsafe { libc::clock_gettime(libc::CLOCK_THREAD_CPUTIME_ID, &mut ts) };
    Duration::new(ts.tv_sec as u64, ts.tv_nsec as u32)
}

/// CPU time of the whole process so far (verify may use more than one thread).
fn process_cpu() -> Duration {
    let mut ts = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: clock_gettime writes one timespec to the pointer it is given.
    unsafe { libc::clock_gettime(libc::CLOCK_PROCESS_CPUTIME_ID, &mut ts) };
    Duration::new(ts.tv_sec as u64, ts.tv_nsec as u32)
}

/// Peak resident memory of the process so far, in MB.
fn peak_rss_mb() -> f64 {
    // SAFETY: getrusage fills the struct it is given; a zeroed rusage is a valid value.
    let mut ru: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: as above, RUSAGE_SELF with a pointer to one rusage.
    unsafe { libc::getrusage(libc::RUSAGE_SELF, &mut ru) };
    ru.ru_maxrss as f64 / 1024.0
}

/// `verify` on the database, `rounds` times: wall and process CPU of each, and the peak
/// resident memory of the process after them.
fn time_verify(s: &Store, rounds: usize) {
    let mut walls = Vec::new();
    let mut cpus = Vec::new();
    for round in 1..=rounds {
        let (w, c) = (Instant::now(), process_cpu());
        let v = s.verify().expect("verify");
        let (wall, cpu) = (w.elapsed(), process_cpu() - c);
        println!(
            "verify round {round}: {:.2} s wall, {:.2} s cpu; {} audit rows, {} records, {}",
            wall.as_secs_f64(),
            cpu.as_secs_f64(),
            v.audit_rows,
            v.records_checked,
            match &v.first_problem {
                None => "ok".to_string(),
                Some(p) => format!("{} problems, the first: {p}", v.problems),
            }
        );
        walls.push(wall);
        cpus.push(cpu);
    }
    println!(
        "verify: median {:.2} s wall, {:.2} s cpu of {rounds}; peak RSS of the process {:.0} MB \
         (goal: well under 60 s wall on 1,000,000 incidents)",
        median(walls).as_secs_f64(),
        median(cpus).as_secs_f64(),
        peak_rss_mb()
    );
}

/// Wall and CPU time of one run.
#[derive(Clone, Copy)]
struct Took {
    wall: Duration,
    cpu: Duration,
}

fn took<T>(f: impl FnOnce() -> T) -> (T, Took) {
    let (w, c) = (Instant::now(), thread_cpu());
    let out = f();
    (
        out,
        Took {
            wall: w.elapsed(),
            cpu: thread_cpu() - c,
        },
    )
}

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

fn ms(d: Duration) -> String {
    format!("{:.2} ms", d.as_secs_f64() * 1e3)
}

fn time_list(s: &Store, label: &str, f: &Filter, sort: Sort, with_total: bool, deep: bool) {
    let req = PageRequest {
        limit: 200,
        after: None,
        with_total,
    };
    // a deep page: follow the cursor 50 pages in first
    let mut after = None;
    if deep {
        for _ in 0..50 {
            let p = s
                .list(
                    f,
                    sort,
                    &PageRequest {
                        after: after.clone(),
                        with_total: false,
                        ..req.clone()
                    },
                )
                .expect("list");
            match p.next {
                Some(n) => after = Some(n),
                None => break,
            }
        }
    }
    let mut times = Vec::new();
    let mut rows = 0;
    let mut total = None;
    for _ in 0..15 {
        let t = Instant::now();
        let p = s
            .list(
                f,
                sort,
                &PageRequest {
                    after: after.clone(),
                    ..req.clone()
                },
            )
            .expect("list");
        times.push(t.elapsed());
        rows = p.rows.len();
        total = p.total;
    }
    println!(
        "list {label:<44} {rows:>3} rows  median {:>9}  (total {})",
        ms(median(times)),
        total
            .map(|t| t.to_string())
            .unwrap_or_else(|| "not counted".into())
    );
}

#[path = "support/synthetic.rs"]
mod synthetic;
use synthetic::{csv as synthetic_csv, row as synthetic_row, Row};

/// THE BASELINE of the import goal: the same rows written with plain prepared statements
/// into the same schema (the store's migrations: same tables, indexes and text index), with
/// the store's own connection settings (WAL, synchronous = FULL, foreign keys ON, 64 MB
/// cache), in one transaction: incident row (with its site, asset, supplier, product and
/// lot keys), ply, examination, three mirror readings and the text-index row. What it
/// leaves out is exactly the tool's own work: parsing the file, validation, reference
/// numbering, code lookups, the canonical audit images and the hash chain.
/// With `foreign_keys = false` the same without SQLite's foreign-key checks (context only).
fn plain_same_schema(path: &PathBuf, n: usize, foreign_keys: bool) -> Took {
    drop(Store::open(path).expect("schema"));
    let c = rusqlite::Connection::open(path).expect("open");
    c.execute_batch(&format!(
        "PRAGMA journal_mode = WAL; PRAGMA synchronous = FULL; PRAGMA foreign_keys = {};
         PRAGMA cache_size = -65536;",
        if foreign_keys { "ON" } else { "OFF" }
    ))
    .expect("pragmas");
    // reference rows (the import creates these as it meets the codes; not timed here)
    let rows: Vec<Row> = (0..n).map(synthetic_row).collect();
    let mut assets = std::collections::HashMap::new();
    let mut lots = std::collections::HashMap::new();
    {
        let tx = c.unchecked_transaction().expect("tx");
        tx.execute_batch(
            "INSERT INTO sites (id, code, name) VALUES ('s1', 'TVL-CEN', 'TVL-CEN');
             INSERT INTO suppliers (id, code, name) VALUES ('u1', 'ORVALE', 'ORVALE');
             INSERT INTO products (id, supplier_id, code, name) VALUES ('p1', 'u1', 'SW6-FT', 'SW6-FT');",
        )
        .expect("refs");
        for r in &rows {
            if !assets.contains_key(&r.asset) {
                let id = format!("a{}", assets.len());
                tx.execute(
                    "INSERT INTO assets (id, code, asset_type, name, site_id) VALUES (?1, ?2, 'other', ?2, 's1')",
                    rusqlite::params![id, r.asset],
                )
                .expect("asset");
                assets.insert(r.asset.clone(), id);
            }
            if !lots.contains_key(&r.lot) {
                let id = format!("l{}", lots.len());
                tx.execute(
                    "INSERT INTO lots (id, product_id, code) VALUES (?1, 'p1', ?2)",
                    rusqlite::params![id, r.lot],
                )
                .expect("lot");
                lots.insert(r.lot.clone(), id);
            }
        }
        tx.commit().expect("commit");
    }
    // the references the import gives these rows (BR-YYMMDD-NNNN by date found)
    let mut per_day = std::collections::HashMap::new();
    let references: Vec<String> = rows
        .iter()
        .map(|r| {
            let n = per_day.entry(r.found_on.clone()).or_insert(0u32);
            *n += 1;
            format!(
                "BR-{}{}{}-{:04}",
                &r.found_on[2..4],
                &r.found_on[5..7],
                &r.found_on[8..10],
                n
            )
        })
        .collect();
    let (w, cpu0) = (Instant::now(), thread_cpu());
    let tx = c.unchecked_transaction().expect("tx");
    {
        let mut a = tx
            .prepare(
                "INSERT INTO incidents (id, reference, revision, created_at, updated_at, asset_id, position, site_id,
                   found_on, sun, weather, reporter, how_found, supplier_id, product_id, lot_id, makeup,
                   origin_location, tension_face, cause_category, cause_factors, cause_confidence,
                   cause_responsibility, cause_note, status, description, notes, origin_type, temper)
                 VALUES (?1, ?2, 1, ?3, ?3, ?4, ?5, 's1', ?6, '', '', '', '', 'u1', 'p1', ?7, 'monolithic',
                   'edge', '', 'thermal', '[]', 'probable', 'undetermined', '', 'cause_assigned', ?8, '',
                   'edge_chip', 'fully_tempered')",
            )
            .expect("prep");
        let mut b = tx
            .prepare(
                "INSERT INTO plies VALUES (?1, 1, 'soda_lime', 'fully_tempered', 0.006, '', '')",
            )
            .expect("prep");
        let mut e = tx
            .prepare("INSERT INTO examinations (id, incident_id, exam_no, analyst, origin_type, flaw_present, flaw_shape, notes) VALUES (?1, ?2, 1, 'mira', 'edge_chip', 0, '', '')")
            .expect("prep");
        let mut r = tx
            .prepare(
                "INSERT INTO mirror_readings VALUES (?1, ?2, ?3, ?4, 'mm', ?5, NULL, 'mira', '')",
            )
            .expect("prep");
        let mut f = tx
            .prepare("INSERT INTO incident_text (rowid, body) VALUES (?1, ?2)")
            .expect("prep");
        for (i, row) in rows.iter().enumerate() {
            // ascending UUIDv7-shaped keys, as the import makes them
            let ex = format!(
                "019a4a7a-2c00-7{:03x}-8{:03x}-{:012x}",
                i >> 24,
                (i >> 12) & 0xfff,
                2 * i
            );
            let id = format!(
                "019a4a7a-2c00-7{:03x}-8{:03x}-{:012x}",
                i >> 24,
                (i >> 12) & 0xfff,
                2 * i + 1
            );
            let reference = &references[i];
            a.execute(rusqlite::params![
                id,
                reference,
                "2026-11-01T08:00:00.000Z",
                assets[&row.asset],
                row.position,
                row.found_on,
                lots[&row.lot],
                row.description
            ])
            .expect("insert");
            let seq = tx.last_insert_rowid();
            b.execute([&id]).expect("insert");
            e.execute([&ex, &id]).expect("insert");
            for (k, (bnd, text)) in row.readings.iter().enumerate() {
                let value = text.trim_end_matches(" mm");
                r.execute(rusqlite::params![ex, k as i64 + 1, bnd, value, 0.0004])
                    .expect("insert");
            }
            f.execute(rusqlite::params![
                seq,
                format!(
                    "{reference}\n{}\n{}\n{}",
                    row.position, row.description, row.asset
                )
            ])
            .expect("insert");
        }
    }
    tx.commit().expect("commit");
    Took {
        wall: w.elapsed(),
        cpu: thread_cpu() - cpu0,
    }
}

/// The same values written with plain prepared statements into tables of the same shape
/// (incident row with its ply and readings), one transaction, no checks, no audit.
fn plain_inserts(path: &PathBuf, n: usize) -> Took {
    let c = rusqlite::Connection::open(path).expect("open");
    c.execute_batch(
        "PRAGMA journal_mode = WAL; PRAGMA synchronous = FULL;
         CREATE TABLE inc (seq INTEGER PRIMARY KEY, id TEXT NOT NULL UNIQUE, reference TEXT NOT NULL UNIQUE,
           found_on TEXT, site TEXT, asset TEXT, position TEXT, supplier TEXT, product TEXT, lot TEXT,
           makeup TEXT, status TEXT, origin_location TEXT, cause TEXT, confidence TEXT, responsibility TEXT,
           description TEXT) STRICT;
         CREATE TABLE ply (incident_id TEXT, material TEXT, temper TEXT, thickness_m REAL) STRICT;
         CREATE TABLE exam (id TEXT, incident_id TEXT, origin_type TEXT, analyst TEXT) STRICT;
         CREATE TABLE rd (examination_id TEXT, boundary TEXT, value_text TEXT, unit TEXT, value_m REAL) STRICT;",
    )
    .expect("schema");
    let (w, cpu0) = (Instant::now(), thread_cpu());
    let tx = c.unchecked_transaction().expect("tx");
    {
        let mut a = tx
            .prepare("INSERT INTO inc (id, reference, found_on, site, asset, position, supplier, product, lot, makeup, status, origin_location, cause, confidence, responsibility, description) VALUES (?1,?2,?3,?4,?5,?6,?7,?8,?9,?10,?11,?12,?13,?14,?15,?16)")
            .expect("prep");
        let mut b = tx
            .prepare("INSERT INTO ply VALUES (?1, ?2, ?3, ?4)")
            .expect("prep");
        let mut e = tx
            .prepare("INSERT INTO exam VALUES (?1, ?2, ?3, ?4)")
            .expect("prep");
        let mut r = tx
            .prepare("INSERT INTO rd VALUES (?1, ?2, ?3, ?4, ?5)")
            .expect("prep");
        for i in 0..n {
            let id = format!("0190{i:028x}");
            let ex = format!("0191{i:028x}");
            a.execute(rusqlite::params![
                id,
                format!("BR-{i:08}"),
                "2024-01-01",
                "TVL-CEN",
                format!("car {}", 100 + i % 300),
                "left side bay 1",
                "ORVALE",
                "SW6-FT",
                "OS-2201",
                "monolithic",
                "cause_assigned",
                "edge",
                "thermal",
                "probable",
                "undetermined",
                format!("crack from the edge number {i}")
            ])
            .expect("insert");
            b.execute(rusqlite::params![id, "soda_lime", "fully_tempered", 0.006])
                .expect("insert");
            e.execute(rusqlite::params![ex, id, "edge_chip", "mira"])
                .expect("insert");
            for (k, bnd) in ["mirror_mist", "mirror_mist", "mist_hackle"]
                .iter()
                .enumerate()
            {
                r.execute(rusqlite::params![
                    ex,
                    bnd,
                    format!("0.{}", 40 + k),
                    "mm",
                    0.0004
                ])
                .expect("insert");
            }
        }
    }
    tx.commit().expect("commit");
    Took {
        wall: w.elapsed(),
        cpu: thread_cpu() - cpu0,
    }
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let arg = |name: &str| {
        args.iter()
            .position(|a| a == name)
            .and_then(|i| args.get(i + 1).cloned())
    };
    if let Some(db) = arg("--db") {
        let s = Store::open_existing(db.as_ref()).expect("open the benchmark database");
        let n = s.incident_count().expect("count");
        println!("database {db}: {n} incidents");
        if let Some(rounds) = arg("--verify") {
            let rounds = rounds.parse().expect("--verify takes a number of rounds");
            time_verify(&s, rounds);
            return;
        }
        let all = Filter::default();
        let newest = Sort {
            column: SortColumn::Found,
            descending: true,
        };
        time_list(&s, "newest first, no count", &all, newest, false, false);
        time_list(&s, "newest first, with count", &all, newest, true, false);
        time_list(
            &s,
            "newest first, page 51, no count",
            &all,
            newest,
            false,
            true,
        );
        let brellin = Filter {
            supplier: Some("BRELLIN".into()),
            ..Filter::default()
        };
        time_list(
            &s,
            "supplier BRELLIN, no count",
            &brellin,
            newest,
            false,
            false,
        );
        time_list(
            &s,
            "supplier BRELLIN, with count",
            &brellin,
            newest,
            true,
            false,
        );
        let lot = Filter {
            lot: Some("BS-2207".into()),
            ..Filter::default()
        };
        time_list(&s, "lot BS-2207, with count", &lot, newest, true, false);
        let thermal = Filter {
            cause: Some("thermal".into()),
            ..Filter::default()
        };
        time_list(
            &s,
            "cause thermal, with count",
            &thermal,
            newest,
            true,
            false,
        );
        let y = Filter {
            since: NaiveDate::from_ymd_opt(2025, 3, 1),
            until: NaiveDate::from_ymd_opt(2025, 3, 31),
            ..Filter::default()
        };
        time_list(&s, "March 2025, with count", &y, newest, true, false);
        let stress = Sort {
            column: SortColumn::Stress,
            descending: true,
        };
        time_list(
            &s,
            "by stress, largest first, no count",
            &all,
            stress,
            false,
            false,
        );
        let text = Filter {
            text: Some("stone".into()),
            ..Filter::default()
        };
        // text search (the plan depends on how many incidents match: see DEVELOPERS.md)
        time_list(&s, "text \"stone\", no count", &text, newest, false, false);
        time_list(&s, "text \"stone\", with count", &text, newest, true, false);
        time_list(&s, "text \"stone\", page 51", &text, newest, false, true);
        time_list(&s, "text \"stone\", by stress", &text, stress, false, false);
        for w in ["impact", "shaded", "heat", "stereo"] {
            let f = Filter {
                text: Some(w.into()),
                ..Filter::default()
            };
            time_list(
                &s,
                &format!("text \"{w}\", with count"),
                &f,
                newest,
                true,
                false,
            );
        }
        let text_supplier = Filter {
            text: Some("stone".into()),
            supplier: Some("BRELLIN".into()),
            ..Filter::default()
        };
        time_list(
            &s,
            "text \"stone\" + supplier BRELLIN, no count",
            &text_supplier,
            newest,
            false,
            false,
        );
        time_list(
            &s,
            "text \"stone\" + supplier BRELLIN, with count",
            &text_supplier,
            newest,
            true,
            false,
        );
        // the read behind `shardlog stats` (issue 5): every incident as one flat row
        let mut times = Vec::new();
        let mut rows = 0;
        for _ in 0..3 {
            let t = Instant::now();
            rows = s.fleet_rows(&all).expect("fleet rows").len();
            times.push(t.elapsed());
        }
        println!(
            "fleet_rows, whole fleet                      {rows} rows  median {:>9}",
            ms(median(times))
        );
        // what `stats` reads now: the narrow incident_facts table, all keys and two keys
        for (label, keys) in [
            ("fleet_facts, every key                      ", None),
            (
                "fleet_facts, cause and supplier              ",
                Some(
                    &[
                        shardlog_core::fleet::Key::Cause,
                        shardlog_core::fleet::Key::Supplier,
                    ][..],
                ),
            ),
        ] {
            let mut times = Vec::new();
            let mut rows = 0;
            for _ in 0..3 {
                let t = Instant::now();
                rows = s
                    .fleet_facts(None, None, StressKind::Applied, keys)
                    .expect("fleet facts")
                    .len();
                times.push(t.elapsed());
            }
            println!("{label}{rows} rows  median {:>9}", ms(median(times)));
        }
    }
    let n: usize = arg("--import")
        .and_then(|v| v.parse().ok())
        .unwrap_or(20_000);
    let dir = std::env::temp_dir().join(format!("shardlog-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let csv = synthetic_csv(n);
    let stamp = Stamp::new("bench", Utc.with_ymd_and_hms(2026, 11, 1, 8, 0, 0).unwrap());
    let t = Instant::now();
    let parsed = shardlog::store::exchange::parse_csv(&csv, &stamp).expect("parse");
    let parse = t.elapsed();
    let t = Instant::now();
    let check = Store::open_in_memory().expect("memory");
    for record in &parsed {
        assert!(check.validate_incident(&record.incident).is_empty());
    }
    let validate = t.elapsed();
    let t = Instant::now();
    for record in &parsed {
        std::hint::black_box(canon::incident_image(&record.incident).expect("image"));
    }
    let image = t.elapsed();
    println!(
        "import phases for {n}: parse {}, validate {}, audit images {}",
        ms(parse),
        ms(validate),
        ms(image)
    );
    // the import and its baseline, alternately, three rounds: medians (the machine is shared)
    let mut imports = Vec::new();
    let mut sames = Vec::new();
    for round in 0..3 {
        let db = dir.join(format!("import-{round}.db"));
        let mut s = Store::open(&db).expect("open");
        let (sum, import) = took(|| {
            s.import_bytes("bench.csv", &csv, ImportOptions::default(), &stamp)
                .expect("import")
                .expect("accepted")
        });
        assert_eq!(sum.incidents, n);
        let v = s.verify().expect("verify");
        assert!(
            v.first_problem.is_none(),
            "the imported database verifies: {v:?}"
        );
        drop(s);
        imports.push(import);
        sames.push(plain_same_schema(
            &dir.join(format!("same-{round}.db")),
            n,
            true,
        ));
    }
    let med = |v: &[Took]| Took {
        wall: median(v.iter().map(|t| t.wall).collect()),
        cpu: median(v.iter().map(|t| t.cpu).collect()),
    };
    let (import, same) = (med(&imports), med(&sames));
    let same_nofk = plain_same_schema(&dir.join("same-nofk.db"), n, false);
    let bare = plain_inserts(&dir.join("bare.db"), n);
    let rate = |d: Duration| n as f64 / d.as_secs_f64();
    let line = |label: &str, t: Took| {
        println!(
            "{label:<66} {:>6.2} s wall {:>7.0}/s | {:>6.2} s cpu {:>7.0}/s",
            t.wall.as_secs_f64(),
            rate(t.wall),
            t.cpu.as_secs_f64(),
            rate(t.cpu)
        )
    };
    println!(
        "{n} incidents, one transaction each; import and BASELINE: median of 3 alternating rounds\n\
         (rates in incidents per second of wall / CPU time of the writing thread):"
    );
    line(
        "import from CSV bytes (parse, validate, audit, text index)",
        import,
    );
    line(
        "BASELINE: same rows, same schema+FTS, store pragmas, FK on",
        same,
    );
    line("  context: the same with foreign keys off", same_nofk);
    line("  context: bare tables, no indexes, no FTS", bare);
    println!(
        "  BASELINE = plain prepared INSERTs of the same rows into the store's own schema (tables,\n  \
         indexes, FTS5 text index), WAL + synchronous=FULL + foreign_keys=ON, no parsing/validation/audit."
    );
    println!(
        "import / BASELINE rate: {:.2} by wall time, {:.2} by CPU time (goal: at least 0.5)",
        rate(import.wall) / rate(same.wall),
        rate(import.cpu) / rate(same.cpu),
    );
    let _ = std::fs::remove_dir_all(&dir);
}
