//! Store figures (issue 3): one page of 200 log rows on a large database, and the import
//! rate against plain prepared inserts in one transaction, from one run.
//!
//!     shardlog demo --out /tmp/m1.db --incidents 1000000        # once
//!     cargo bench --bench store -- --db /tmp/m1.db --import 20000
//!
//! Without `--db` the list and fleet-row figures are skipped. Goals (not asserted): list of 200 rows in
//! under 50 ms; import at no less than half the rate of plain prepared inserts.

use std::path::PathBuf;
use std::time::{Duration, Instant};

use chrono::{NaiveDate, TimeZone, Utc};
use shardlog::store::exchange::ImportOptions;
use shardlog::store::*;

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

fn synthetic_csv(n: usize) -> Vec<u8> {
    let mut s = String::from(
        "found_on,site,asset,position,supplier,product,lot,makeup,material,temper,thickness,status,origin_location,origin_type,analyst,mirror_mist,mist_hackle,cause,confidence,responsibility,description\n",
    );
    let start = NaiveDate::from_ymd_opt(2024, 1, 1).unwrap();
    for i in 0..n {
        let d = start + chrono::Days::new((i % 1000) as u64);
        s.push_str(&format!(
            "{d},TVL-CEN,car {},left side bay {},ORVALE,SW6-FT,OS-22{:02},monolithic,soda_lime,fully_tempered,6 mm,cause_assigned,edge,edge_chip,mira,0.{:02} mm; 0.{:02} mm,0.{:02} mm,thermal,probable,undetermined,crack from the edge number {i}\n",
            100 + i % 300,
            i % 8,
            i % 12,
            40 + i % 50,
            41 + i % 50,
            55 + i % 40
        ));
    }
    s.into_bytes()
}

/// The same values written with plain prepared statements into tables of the same shape
/// (incident row with its ply and readings), one transaction, no checks, no audit.
fn plain_inserts(path: &PathBuf, n: usize) -> Duration {
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
    let t = Instant::now();
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
    t.elapsed()
}

/// The same rows with plain prepared statements into the store's own tables (with their
/// indexes), one transaction: no checks, no audit, no text index.
fn plain_into_schema(path: &PathBuf, n: usize) -> Duration {
    drop(Store::open(path).expect("schema"));
    let c = rusqlite::Connection::open(path).expect("open");
    c.execute_batch("PRAGMA synchronous = FULL; PRAGMA cache_size = -65536;")
        .expect("pragmas");
    let t = Instant::now();
    let tx = c.unchecked_transaction().expect("tx");
    {
        let mut a = tx
            .prepare(
                "INSERT INTO incidents (id, reference, revision, created_at, updated_at, position, found_on, sun,
                   weather, reporter, how_found, makeup, tension_face, status, description, notes, cause_category,
                   cause_confidence, cause_responsibility, origin_location)
                 VALUES (?1, ?2, 1, ?3, ?3, ?4, ?5, '', '', '', '', 'monolithic', '', 'cause_assigned', ?6, '',
                   'thermal', 'probable', 'undetermined', 'edge')",
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
        for i in 0..n {
            let id = format!("0190{i:028x}");
            let ex = format!("0191{i:028x}");
            a.execute(rusqlite::params![
                id,
                format!("BR-{i:08}"),
                "2026-11-01T08:00:00.000Z",
                "left side bay 1",
                "2024-01-01",
                format!("crack from the edge number {i}")
            ])
            .expect("insert");
            b.execute([&id]).expect("insert");
            e.execute([&ex, &id]).expect("insert");
            for (k, bnd) in ["mirror_mist", "mirror_mist", "mist_hackle"]
                .iter()
                .enumerate()
            {
                r.execute(rusqlite::params![
                    ex,
                    k as i64 + 1,
                    bnd,
                    format!("0.{}", 40 + k),
                    0.0004
                ])
                .expect("insert");
            }
        }
    }
    tx.commit().expect("commit");
    t.elapsed()
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
        time_list(&s, "text \"stone\", no count", &text, newest, false, false);
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
                Some(&[shardlog::fleet::Key::Cause, shardlog::fleet::Key::Supplier][..]),
            ),
        ] {
            let mut times = Vec::new();
            let mut rows = 0;
            for _ in 0..3 {
                let t = Instant::now();
                rows = s
                    .fleet_facts(None, None, FleetStress::Applied, keys)
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
    let db = dir.join("import.db");
    let mut s = Store::open(&db).expect("open");
    let stamp = Stamp::new("bench", Utc.with_ymd_and_hms(2026, 11, 1, 8, 0, 0).unwrap());
    let t = Instant::now();
    let parsed = shardlog::store::exchange::parse_csv(&csv, &stamp).expect("parse");
    let parse = t.elapsed();
    let t = Instant::now();
    let mut check = Store::open_in_memory().expect("memory");
    for inc in &parsed {
        assert!(check.validate_incident(inc).is_empty());
    }
    let validate = t.elapsed();
    let t = Instant::now();
    for inc in &parsed {
        std::hint::black_box(canon::incident_image(inc).expect("image"));
    }
    let image = t.elapsed();
    check.set_id_seed(1);
    println!(
        "import phases for {n}: parse {}, validate {}, audit images {}",
        ms(parse),
        ms(validate),
        ms(image)
    );
    let t = Instant::now();
    let sum = s
        .import_bytes("bench.csv", &csv, ImportOptions::default(), &stamp)
        .expect("import")
        .expect("accepted");
    let import = t.elapsed();
    assert_eq!(sum.incidents, n);
    drop(s);
    let plain = plain_inserts(&dir.join("plain.db"), n);
    let schema = plain_into_schema(&dir.join("schema.db"), n);
    let rate = |d: Duration| n as f64 / d.as_secs_f64();
    println!(
        "import {n} incidents (CSV, checked, audited, text-indexed, one transaction): {:.2} s, {:.0} incidents/s",
        import.as_secs_f64(),
        rate(import)
    );
    println!(
        "plain prepared inserts of the same rows, one transaction:                  {:.2} s, {:.0} incidents/s",
        plain.as_secs_f64(),
        rate(plain)
    );
    println!(
        "plain prepared inserts into the store's own tables and indexes:             {:.2} s, {:.0} incidents/s",
        schema.as_secs_f64(),
        rate(schema)
    );
    println!(
        "import / plain rate: {:.2} against bare tables, {:.2} against the store's tables (goal: at least 0.5)",
        rate(import) / rate(plain),
        rate(import) / rate(schema)
    );
    let _ = std::fs::remove_dir_all(&dir);
}
