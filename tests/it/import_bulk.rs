//! A large import takes the bulk path (the demo's store::bulk): it must give the same
//! records, the same audit verification, the same fleet statistics and the same text index
//! as the ordinary path, with the same checks and the same all-or-nothing refusal. The
//! threshold is lowered here (Store::set_bulk_import_above) so a small file takes the path.

use std::path::Path;

use chrono::{DateTime, Utc};
use shardlog::demo::{generate, DemoOptions};
use shardlog::store::exchange::{ImportOptions, BULK_IMPORT_ABOVE};
use shardlog::store::*;
use shardlog_core::fleet::StressKind;

fn stamp() -> Stamp {
    Stamp::new(
        "importer",
        DateTime::parse_from_rfc3339("2026-11-02T08:00:00Z")
            .unwrap()
            .with_timezone(&Utc),
    )
}

/// The CSV export of a demo fleet of `n` incidents.
fn demo_csv(dir: &Path, n: u64) -> Vec<u8> {
    let path = dir.join(format!("demo-{n}.db"));
    generate(
        &path,
        &DemoOptions {
            incidents: n,
            seed: 11,
        },
    )
    .unwrap();
    let src = Store::open_existing(&path).unwrap();
    let mut csv = Vec::new();
    src.export_csv(&Filter::default(), &mut csv).unwrap();
    csv
}

/// `n` rows without references (the import numbers them), on dates from `first_day`.
fn plain_csv(n: usize, word: &str) -> Vec<u8> {
    let mut s = String::from(
        "found_on,site,asset,position,supplier,product,lot,makeup,material,temper,thickness,status,origin_location,origin_type,analyst,mirror_mist,mist_hackle,cause,confidence,responsibility,description\n",
    );
    for i in 0..n {
        s.push_str(&format!(
            "2025-0{}-{:02},TVL-CEN,car {},left side bay {},ORVALE,SW6-FT,OS-22{:02},monolithic,soda_lime,fully_tempered,6 mm,cause_assigned,edge,edge_chip,mira,0.{} mm,0.{} mm,thermal,probable,undetermined,{word} crack number {i}\n",
            1 + i % 9,
            1 + i % 28,
            100 + i % 7,
            i % 8,
            i % 5,
            40 + i % 50,
            60 + i % 30,
        ));
    }
    s.into_bytes()
}

/// A store with fixed keys; `bulk_above` lowers the bulk threshold.
fn store(dir: &Path, name: &str, bulk_above: Option<usize>) -> Store {
    let mut s = Store::open(&dir.join(name)).unwrap();
    s.set_id_seed(42);
    if let Some(n) = bulk_above {
        s.set_bulk_import_above(n);
    }
    s
}

fn import(s: &mut Store, csv: &[u8], options: ImportOptions) -> exchange::ImportSummary {
    s.import_bytes("x.csv", csv, options, &stamp())
        .unwrap()
        .unwrap()
}

/// Everything a reader sees of the two databases is the same.
fn assert_same(ordinary: &Store, bulk: &Store, word: &str) {
    assert_eq!(
        ordinary.export_json(&Filter::default()).unwrap(),
        bulk.export_json(&Filter::default()).unwrap(),
        "the records"
    );
    for s in [ordinary, bulk] {
        let r = s.verify().unwrap();
        assert!(r.ok(), "{:?}", r.first_problem);
    }
    // the same audit rows, in the same order, with the same hashes: the heads are equal
    assert_eq!(
        ordinary.audit_head_entry().unwrap(),
        bulk.audit_head_entry().unwrap(),
        "the audit chain"
    );
    for kind in [StressKind::Applied, StressKind::Net] {
        assert_eq!(
            ordinary.fleet_facts(None, None, kind, None).unwrap(),
            bulk.fleet_facts(None, None, kind, None).unwrap(),
            "the fleet statistics' copy"
        );
    }
    let text = Filter {
        text: Some(word.into()),
        ..Filter::default()
    };
    let (mut a, mut b) = (Vec::new(), Vec::new());
    ordinary.export_csv(&text, &mut a).unwrap();
    bulk.export_csv(&text, &mut b).unwrap();
    assert!(
        String::from_utf8_lossy(&a).lines().count() > 1,
        "{word} is found"
    );
    assert_eq!(a, b, "the text index finds the same incidents for {word}");
}

#[test]
fn a_bulk_import_gives_what_the_ordinary_path_gives() {
    assert_eq!(BULK_IMPORT_ABOVE, 10_000);
    let dir = tempfile::tempdir().unwrap();
    let csv = demo_csv(dir.path(), 150);
    let mut ordinary = store(dir.path(), "ordinary.db", None);
    let mut bulk = store(dir.path(), "bulk.db", Some(100));
    let (a, b) = (
        import(&mut ordinary, &csv, ImportOptions::default()),
        import(&mut bulk, &csv, ImportOptions::default()),
    );
    assert_eq!(a, b);
    assert_eq!(b.incidents, 150);
    assert_same(&ordinary, &bulk, "stone");
    // a second large file into the database that now has incidents: the bulk path keeps the
    // indexes and writes the text index row by row
    let more = plain_csv(120, "zephyrine");
    let (a, b) = (
        import(&mut ordinary, &more, ImportOptions::default()),
        import(&mut bulk, &more, ImportOptions::default()),
    );
    assert_eq!(a, b);
    assert_eq!(b.incidents, 120);
    assert_same(&ordinary, &bulk, "zephyrine");
    assert_same(&ordinary, &bulk, "stone");
    assert_eq!(bulk.incident_count().unwrap(), 270);
}

#[test]
fn a_refused_or_dry_run_bulk_import_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let mut ordinary = store(dir.path(), "ordinary.db", None);
    let mut bulk = store(dir.path(), "bulk.db", Some(10));
    // two bad lines among 60: the same problems, all at once, and nothing written
    let good = String::from_utf8(plain_csv(60, "quartzite")).unwrap();
    let bad = good
        .replacen(",6 mm,", ",6 parsecs,", 1)
        .replace("left side bay 3,ORVALE,SW6-FT,OS-2203,monolithic,soda_lime,fully_tempered,6 mm,cause_assigned", "left side bay 3,ORVALE,SW6-FT,OS-2203,monolithic,soda_lime,fully_tempered,6 mm,not_a_status");
    let refuse = |s: &mut Store| {
        s.import_bytes("x.csv", bad.as_bytes(), ImportOptions::default(), &stamp())
            .unwrap()
            .unwrap_err()
            .problems
    };
    let (a, b) = (refuse(&mut ordinary), refuse(&mut bulk));
    assert!(a.len() >= 2, "{a:?}");
    assert_eq!(a, b);
    assert_eq!(bulk.incident_count().unwrap(), 0);
    // a dry run by the bulk path reports what it would write and keeps nothing
    let dry = ImportOptions {
        dry_run: true,
        ..ImportOptions::default()
    };
    let (a, b) = (
        import(&mut ordinary, good.as_bytes(), dry.clone()),
        import(&mut bulk, good.as_bytes(), dry),
    );
    assert_eq!(a, b);
    assert!(b.dry_run && b.incidents == 60);
    assert_eq!(bulk.incident_count().unwrap(), 0);
    let r = bulk.verify().unwrap();
    assert!(r.ok(), "{:?}", r.first_problem);
    // and then for real
    import(&mut bulk, good.as_bytes(), ImportOptions::default());
    assert_eq!(bulk.incident_count().unwrap(), 60);
}

/// `n` rows with unique positions, a heat-soak record on every row of one lot, and assets
/// first named after row `late` (made, with their audit rows, after the first thousand
/// incidents: past the first batch row of the incidents' audit).
fn late_assets_csv(n: usize, late: usize) -> Vec<u8> {
    let mut s = String::from(
        "found_on,site,asset,position,supplier,product,lot,makeup,material,temper,thickness,status,origin_location,origin_type,analyst,mirror_mist,mist_hackle,cause,confidence,responsibility,description,heat_soaked,heat_soak_on,heat_soak_ref\n",
    );
    for i in 0..n {
        let asset = if i < late {
            format!("car {}", 100 + i % 7)
        } else {
            format!("late car {i}")
        };
        let soak = if i % 12 == 3 {
            "yes,2024-05-02,HS-77"
        } else {
            ",,"
        };
        s.push_str(&format!(
            "2025-0{}-{:02},TVL-CEN,{asset},bay {i},ORVALE,SW6-FT,OS-22{:02},monolithic,soda_lime,fully_tempered,6 mm,cause_assigned,edge,edge_chip,mira,0.{} mm,0.{} mm,thermal,probable,undetermined,basalt crack number {i},{soak}\n",
            1 + i % 9,
            1 + i % 28,
            i % 12,
            40 + i % 50,
            60 + i % 30,
        ));
    }
    s.into_bytes()
}

/// Both paths write the audit rows of a file in one order: the records the rows name (here
/// assets first named after the thousandth row), the lots' heat-soak records, then the
/// incidents' batch rows. Before, the ordinary path wrote a batch row after each thousand
/// incidents, between the records, and the heat-soak records last, so the chains differed.
#[test]
fn a_large_file_gives_one_audit_chain_by_either_path() {
    let dir = tempfile::tempdir().unwrap();
    let csv = late_assets_csv(1_100, 1_050);
    let mut ordinary = store(dir.path(), "ordinary.db", None);
    let mut bulk = store(dir.path(), "bulk.db", Some(1_000));
    let (a, b) = (
        import(&mut ordinary, &csv, ImportOptions::default()),
        import(&mut bulk, &csv, ImportOptions::default()),
    );
    assert_eq!(a, b);
    assert_eq!(b.incidents, 1_100);
    assert_eq!(bulk.assets().unwrap().len(), 7 + 50);
    let soaked = bulk
        .lots(None, None)
        .unwrap()
        .into_iter()
        .filter(|l| l.heat_soak.as_ref().is_some_and(|h| h.soaked))
        .count();
    assert_eq!(soaked, 1, "one lot has its heat-soak record");
    assert_same(&ordinary, &bulk, "basalt");
}

/// A large import takes the rollback journal for its transaction only when no other
/// connection has the file open, else it keeps the write-ahead log (a reader meanwhile still
/// reads); either way the same records and audit chain, and the file is in WAL mode after.
#[test]
fn a_bulk_import_gives_the_same_whoever_else_has_the_file_open() {
    let dir = tempfile::tempdir().unwrap();
    let csv = plain_csv(80, "porphyry");
    let mut alone = store(dir.path(), "alone.db", Some(10));
    let mut shared = store(dir.path(), "shared.db", Some(10));
    let reader = rusqlite::Connection::open(dir.path().join("shared.db")).unwrap();
    let count = |c: &rusqlite::Connection| -> i64 {
        c.query_row("SELECT count(*) FROM incidents", [], |r| r.get(0))
            .unwrap()
    };
    assert_eq!(count(&reader), 0);
    let (a, b) = (
        import(&mut alone, &csv, ImportOptions::default()),
        import(&mut shared, &csv, ImportOptions::default()),
    );
    assert_eq!(a, b);
    assert_eq!(b.incidents, 80);
    assert_eq!(count(&reader), 80);
    assert_same(&alone, &shared, "porphyry");
    for name in ["alone.db", "shared.db"] {
        let c = rusqlite::Connection::open(dir.path().join(name)).unwrap();
        let mode: String = c
            .query_row("PRAGMA journal_mode", [], |r| r.get(0))
            .unwrap();
        assert_eq!(mode, "wal", "{name}");
    }
}
