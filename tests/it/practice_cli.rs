//! Nickel sulfide practice and fragmentation through the real binary: heat-soak records per
//! lot and install dates per pane from a CSV import, shown by `show`, written back by
//! `export`, compared by `stats --heat-soak`; the fragmentation table and check.
//! All names are invented.

use std::path::Path;
use std::process::{Command, Output};

fn run(db: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "Oriane Velasquez-Tamm")
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

const HEADER: &str = "found_on,broken_on,asset,position,supplier,product,lot,temper,thickness,\
cause,installed_on,fragment_count,heat_soaked,heat_soak_on,heat_soak_ref";

/// Lot HS-1 of "BRACKENWOLD" soaked (certificate), lot NS-2 not soaked; four nickel sulfide
/// breaks in NS-2 at 0.5, 1.4, 1.6 and 3.2 years in service, one in HS-1 at 6.1 years, one
/// impact in HS-1.
fn fleet_csv() -> String {
    let rows = [
        "2026-03-01,2026-03-01,tower 3,L4 east,BRACKENWOLD,FT8,HS-1,fully_tempered,8 mm,nickel_sulfide,2020-01-20,,yes,2019-11-04,HS-CERT-0193",
        "2026-04-02,2026-04-01,tower 3,L5 east,BRACKENWOLD,FT8,HS-1,fully_tempered,8 mm,impact,2020-01-20,,yes,2019-11-04,HS-CERT-0193",
        "2025-03-01,2025-03-01,tower 7,L2 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-09-01,,no,,",
        "2025-07-01,2025-07-01,tower 7,L3 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-02-01,,no,,",
        "2025-10-01,2025-10-01,tower 7,L4 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-02-15,,,,",
        "2026-05-01,2026-05-01,tower 7,L6 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2023-02-10,,no,,",
    ];
    format!("{HEADER}\n{}\n", rows.join("\n"))
}

fn imported() -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let f = dir.path().join("fleet.csv");
    std::fs::write(&f, fleet_csv()).unwrap();
    let o = run(&db, &["import", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o));
    (dir, db)
}

fn first_ref(db: &Path, lot: &str) -> String {
    let o = run(db, &["export", "--format", "csv"]);
    let out = String::from_utf8_lossy(&o.stdout).to_string();
    let line = out
        .lines()
        .find(|l| l.contains(&format!(",{lot},")))
        .unwrap()
        .to_string();
    line.split(',').next().unwrap().to_string()
}

#[test]
fn show_names_the_install_date_time_in_service_and_the_lots_heat_soak_record() {
    let (_d, db) = imported();
    let r = first_ref(&db, "HS-1");
    let o = run(&db, &["show", &r]);
    let t = text(&o);
    assert!(o.status.success(), "{t}");
    // computed: 2020-01-20 to 2026-03-01 is 2232 days = 6.11 years of 365.25 days
    assert!(
        t.contains("installed   2020-01-20 (6.11 years in service when it broke)"),
        "{t}"
    );
    assert!(
        t.contains(
            "heat-soak   lot heat-soak tested (EN 14179-1) on 2019-11-04, certificate HS-CERT-0193"
        ),
        "{t}"
    );
    let r = first_ref(&db, "NS-2");
    let t = text(&run(&db, &["show", &r]));
    assert!(t.contains("heat-soak   lot not heat-soak tested"), "{t}");
}

#[test]
fn export_writes_the_columns_back_and_the_import_reads_its_own_export() {
    let (dir, db) = imported();
    let o = run(&db, &["export", "--format", "csv"]);
    let out = String::from_utf8_lossy(&o.stdout).to_string();
    // the first line is the signed head when the database has a key
    let header = out
        .lines()
        .find(|l| !l.starts_with("# shardlog signed head "))
        .unwrap();
    for c in [
        "installed_on",
        "fragment_count",
        "heat_soaked",
        "heat_soak_on",
        "heat_soak_ref",
        "viewing",
    ] {
        assert!(header.split(',').any(|h| h == c), "{header}");
    }
    let row = out.lines().find(|l| l.contains(",HS-1,")).unwrap();
    assert!(row.contains(",2020-01-20,"), "{row}");
    assert!(row.contains(",yes,2019-11-04,HS-CERT-0193,"), "{row}");
    // every NS-2 row says "no" (the row that said nothing takes the lot's record)
    assert_eq!(
        out.lines()
            .filter(|l| l.contains(",NS-2,") && l.contains(",no,"))
            .count(),
        4
    );
    // a second database reads the export and keeps the records
    let db2 = dir.path().join("y.db");
    assert!(run(&db2, &["init"]).status.success());
    let f = dir.path().join("back.csv");
    std::fs::write(&f, &out).unwrap();
    let o = run(&db2, &["import", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o));
    let again =
        String::from_utf8_lossy(&run(&db2, &["export", "--format", "csv"]).stdout).to_string();
    let row2 = again.lines().find(|l| l.contains(",HS-1,")).unwrap();
    assert!(row2.contains(",yes,2019-11-04,HS-CERT-0193,"), "{row2}");
    assert!(run(&db2, &["verify"]).status.success());
}

#[test]
fn contradicting_heat_soak_rows_are_refused_by_line_and_column_and_nothing_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let f = dir.path().join("bad.csv");
    std::fs::write(
        &f,
        format!(
            "{HEADER}\n\
             2025-03-01,,tower 1,a,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,,,,no,,\n\
             2025-03-02,,tower 1,b,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,,,,yes,,\n\
             2025-03-03,,tower 1,c,BRACKENWOLD,FT8,NS-3,fully_tempered,8 mm,,,,maybe,,\n\
             2025-03-04,,tower 1,d,BRACKENWOLD,FT8,NS-4,fully_tempered,8 mm,,2025-04-01,,,,\n\
             2025-03-05,,tower 1,e,BRACKENWOLD,FT8,NS-5,fully_tempered,8 mm,,,,no,2024-01-01,\n"
        ),
    )
    .unwrap();
    let o = run(&db, &["import", f.to_str().unwrap()]);
    let t = text(&o);
    assert!(!o.status.success(), "{t}");
    assert!(t.contains("line 3, column heat_soaked: lot BRACKENWOLD/FT8/NS-2 has another heat-soak record on line 2"), "{t}");
    assert!(
        t.contains("line 4, column heat_soaked: \"maybe\" is not yes or no"),
        "{t}"
    );
    assert!(t.contains("line 5, column installed_on"), "{t}");
    assert!(t.contains("line 6, column heat_soaked"), "{t}");
    let list = text(&run(&db, &["list"]));
    assert!(!list.contains("tower 1"), "{list}");
}

#[test]
fn stats_compare_soaked_and_unsoaked_lots_and_give_the_time_in_service() {
    let (dir, db) = imported();
    // exposure of the unsoaked lot only: 2,000 panes from 2024-01-01
    let ex = dir.path().join("ex.csv");
    std::fs::write(
        &ex,
        "supplier,product,lot,site,installed_on,removed_on,panes\nBRACKENWOLD,FT8,NS-2,,2024-01-01,,2000\n",
    )
    .unwrap();
    assert!(run(&db, &["exposure", "import", ex.to_str().unwrap()])
        .status
        .success());
    let o = run(
        &db,
        &[
            "stats",
            "--heat-soak",
            "--since",
            "2025-01-01",
            "--until",
            "2026-12-31",
        ],
    );
    let t = text(&o);
    assert!(o.status.success(), "{t}");
    let soaked = t.lines().find(|l| l.contains("heat-soaked lots")).unwrap();
    let cells: Vec<&str> = soaked.split_whitespace().collect();
    // lots, incidents, nickel sulfide
    assert_eq!(&cells[2..5], ["1", "2", "1"], "{soaked}");
    assert!(soaked.contains("no exposure recorded"), "{soaked}");
    let not = t.lines().find(|l| l.contains("lots not soaked")).unwrap();
    let cells: Vec<&str> = not.split_whitespace().collect();
    assert_eq!(&cells[3..6], ["1", "4", "4"], "{not}");
    // computed: 2000 panes × 730 days / 365.25 = 3997.3 pane-years; 4 / 3997.3 × 1000 = 1.00;
    // the exact (Garwood) 95 % interval of a Poisson count of 4 is 1.090 – 10.24 (published
    // tables of Poisson confidence limits), / 3.9973 = 0.273 – 2.56
    assert!(not.contains("3997"), "{not}");
    assert!(
        not.contains("1.00 /1000 pane-years (0.273 – 2.56)"),
        "{not}"
    );
    // times in service of the five nickel sulfide breaks (computed, days / 365.25):
    // 0.496, 1.413, 1.626, 3.220, 6.111 → median 1.626; one each in years 1, 2, 4, 7 and two in year 2
    assert!(
        t.contains("5 with an install date; median 1.63 years in service"),
        "{t}"
    );
    assert!(t.contains("year  1 in service (0 to 1 years):    1"), "{t}");
    assert!(t.contains("year  2 in service (1 to 2 years):    2"), "{t}");
    assert!(t.contains("year  4 in service (3 to 4 years):    1"), "{t}");
    assert!(t.contains("year  7 in service (6 to 7 years):    1"), "{t}");
    // the JSON carries the same figures
    let o = run(
        &db,
        &[
            "stats",
            "--heat-soak",
            "--json",
            "--since",
            "2025-01-01",
            "--until",
            "2026-12-31",
        ],
    );
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(v["heat_soak"]["service_time"]["count"], 5);
    assert_eq!(v["heat_soak"]["classes"][1]["nickel_sulfide"], 4);
}

#[test]
fn the_fragmentation_table_is_seeded_from_memory_and_editable_with_its_audit() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let t = text(&run(&db, &["fragmentation", "list"]));
    // EN 12150-1 soda-lime float, from memory (reference-values.md): 15 for 3 mm, 40 for 4 – 12 mm
    assert!(t.contains("3 mm         at least  15"), "{t}");
    assert!(t.contains("4 – 12 mm    at least  40"), "{t}");
    assert!(t.contains("from memory"), "{t}");
    let o = run(
        &db,
        &[
            "fragmentation",
            "set",
            "--from",
            "4 mm",
            "--to",
            "12 mm",
            "--min",
            "42",
            "--source",
            "lab table, 2026 edition",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    let t = text(&run(&db, &["fragmentation", "list"]));
    assert!(
        t.contains(
            "4 – 12 mm    at least  42 fragments in 50 mm × 50 mm  (lab table, 2026 edition)"
        ),
        "{t}"
    );
    // an overlapping range is refused with exit 2
    let o = run(
        &db,
        &[
            "fragmentation",
            "set",
            "--from",
            "10 mm",
            "--to",
            "16 mm",
            "--min",
            "30",
            "--source",
            "x",
        ],
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(
        text(&o).contains("overlaps the row for 4 – 12 mm"),
        "{}",
        text(&o)
    );
    assert!(run(&db, &["verify"]).status.success());
    let c = rusqlite::Connection::open(&db).unwrap();
    let actors: Vec<String> = c
        .prepare("SELECT actor FROM audit WHERE entity = 'lookup' AND entity_id = 'fragmentation_minimum/4000-12000' ORDER BY seq")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    assert_eq!(actors, vec!["schema 0008", "Oriane Velasquez-Tamm"]);
}

#[test]
fn viewing_modes_import_by_label_or_code_one_per_reading_and_come_back_on_export() {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    let f = dir.path().join("v.csv");
    std::fs::write(
        &f,
        "found_on,asset,position,material,mirror_mist,branching,viewing\n\
         2026-02-01,tram 4,door 1,soda_lime,0.61 mm;0.64 mm,,Stereo Microscope\n\
         2026-02-02,tram 4,door 2,soda_lime,0.61 mm,14 mm,stereo;hand lens\n",
    )
    .unwrap();
    let o = run(&db, &["import", f.to_str().unwrap()]);
    assert!(o.status.success(), "{}", text(&o));
    let out = String::from_utf8_lossy(&run(&db, &["export", "--format", "csv"]).stdout).to_string();
    let door1 = out.lines().find(|l| l.contains("door 1")).unwrap();
    assert!(door1.ends_with(",stereo"), "{door1}");
    let door2 = out.lines().find(|l| l.contains("door 2")).unwrap();
    assert!(door2.ends_with(",stereo;hand_lens"), "{door2}");
    let json =
        String::from_utf8_lossy(&run(&db, &["export", "--format", "json"]).stdout).to_string();
    assert!(json.contains("\"viewing\": \"hand_lens\""), "{json}");

    // the wrong number of modes, and a mode the list does not hold, are refused by line
    let bad = dir.path().join("bad.csv");
    std::fs::write(
        &bad,
        "found_on,asset,position,mirror_mist,viewing\n\
         2026-02-03,tram 5,door 1,0.61 mm;0.64 mm;0.66 mm,stereo;oblique\n\
         2026-02-04,tram 5,door 2,0.61 mm,x-ray\n",
    )
    .unwrap();
    let o = run(&db, &["import", bad.to_str().unwrap()]);
    let t = text(&o);
    assert!(!o.status.success(), "{t}");
    assert!(
        t.contains("line 2, column viewing: gives 2 modes for 3 readings"),
        "{t}"
    );
    assert!(t.contains("line 3, column viewing"), "{t}");
    assert!(t.contains("unknown viewing mode code \"x-ray\""), "{t}");
}

#[test]
fn a_json_import_refuses_a_heat_soak_date_outside_the_kept_range_by_its_path() {
    let (dir, db) = imported();
    let o = run(&db, &["export", "--format", "json"]);
    assert!(o.status.success(), "{}", text(&o));
    let json = String::from_utf8_lossy(&o.stdout).to_string();
    assert!(json.contains("\"on\": \"2019-11-04\""), "{json}");
    // a typing slip in the year: 1019 for 2019
    let slipped = json.replace("\"on\": \"2019-11-04\"", "\"on\": \"1019-11-04\"");
    let f = dir.path().join("slipped.json");
    std::fs::write(&f, slipped).unwrap();
    let db2 = dir.path().join("y.db");
    assert!(run(&db2, &["init"]).status.success());
    let o = run(&db2, &["import", f.to_str().unwrap()]);
    let t = text(&o);
    assert_eq!(o.status.code(), Some(1), "{t}");
    assert!(t.contains(".heat_soak.on"), "{t}");
    assert!(
        t.contains("1019-11-04 is outside the dates shardlog keeps"),
        "{t}"
    );
    // nothing of the file was written
    assert!(!text(&run(&db2, &["list"])).contains("tower 3"));
}
