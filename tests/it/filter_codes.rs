//! Every filter flag of every command reads a code or its label in any case, and refuses
//! an unknown value with exit 2 and the valid values, instead of matching nothing.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use shardlog::cli::codes::Field;
use shardlog::store::Store;

fn shardlog(db: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .output()
        .expect("the binary runs")
}

fn small_demo() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let db = tmp.path().join("demo.db");
    shardlog::demo::generate(
        &db,
        &shardlog::demo::DemoOptions {
            incidents: 300,
            seed: shardlog::demo::DEFAULT_SEED,
        },
    )
    .unwrap();
    (tmp, db)
}

/// (command line before the flag, the flag as typed with a wrong value, the field)
fn cases(out: &str) -> Vec<(Vec<String>, Vec<String>, Field)> {
    let v = |xs: &[&str]| xs.iter().map(|s| s.to_string()).collect::<Vec<_>>();
    let mut c = Vec::new();
    let shared = [
        ("--status", Field::Status),
        ("--cause", Field::Cause),
        ("--origin-type", Field::OriginType),
        ("--supplier", Field::Supplier),
        ("--lot", Field::Lot),
        ("--site", Field::Site),
    ];
    for (flag, field) in shared {
        c.push((v(&["list"]), v(&[flag, "nickelx"]), field));
        c.push((
            v(&["export", "--format", "csv"]),
            v(&[flag, "nickelx"]),
            field,
        ));
    }
    c.push((
        v(&["stats", "--weibull"]),
        v(&["--origin-type", "nickelx"]),
        Field::OriginType,
    ));
    for (key, field) in [
        ("cause", Field::Cause),
        ("origin-type", Field::OriginType),
        ("supplier", Field::Supplier),
        ("product", Field::Product),
        ("lot", Field::Lot),
        ("site", Field::Site),
        ("asset-type", Field::AssetType),
        ("temper", Field::Temper),
    ] {
        c.push((
            v(&["stats"]),
            v(&["--only", &format!("{key}=nickelx")]),
            field,
        ));
    }
    for (flag, field) in [
        ("--lot", Field::Lot),
        ("--cause", Field::Cause),
        ("--origin-type", Field::OriginType),
    ] {
        c.push((
            v(&["dispute", "--supplier", "BRELLIN", "-o", out]),
            v(&[flag, "nickelx"]),
            field,
        ));
    }
    c.push((
        v(&["dispute", "-o", out]),
        v(&["--supplier", "nickelx"]),
        Field::Supplier,
    ));
    c
}

/// A wrong code in any filter flag of list, export, stats and dispute: exit 2, nothing on
/// stdout, and the message names the flag and lists valid codes (all of them when the list
/// is short, the closest otherwise); no bundle folder is left behind.
#[test]
fn a_wrong_code_in_any_filter_flag_is_a_usage_error_listing_the_valid() {
    let (tmp, db) = small_demo();
    let out = tmp.path().join("bundle");
    let store = Store::open_existing(&db).unwrap();
    let table = cases(out.to_str().unwrap());
    assert!(table.len() >= 25, "{}", table.len());
    for (before, flag, field) in &table {
        let mut args: Vec<&str> = before.iter().map(String::as_str).collect();
        args.extend(flag.iter().map(String::as_str));
        let o = shardlog(&db, &args);
        let err = String::from_utf8_lossy(&o.stderr);
        let what = format!("{args:?}: {err}");
        assert_eq!(o.status.code(), Some(2), "{what}");
        assert!(o.stdout.is_empty(), "{what}");
        assert!(err.contains("'nickelx'"), "{what}");
        let shown_flag = flag[0].as_str();
        let shown_flag = if shown_flag == "--only" {
            format!("--only {}", flag[1].split('=').next().unwrap())
        } else {
            shown_flag.to_string()
        };
        assert!(err.contains(&shown_flag), "{what}");
        let valid = field.choices(&store).unwrap();
        assert!(!valid.is_empty(), "{field:?}");
        let listed = valid.iter().filter(|c| err.contains(&c.code)).count();
        if valid.len() <= 24 {
            assert_eq!(listed, valid.len(), "{what}");
        } else {
            assert!(listed >= 5, "{what}");
        }
        assert!(!out.exists(), "{what}");
    }
}

fn count(db: &Path, args: &[&str]) -> usize {
    let mut a = vec!["list", "--all", "--json"];
    a.extend_from_slice(args);
    let o = shardlog(db, &a);
    assert!(
        o.status.success(),
        "{a:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    serde_json::from_slice::<serde_json::Value>(&o.stdout)
        .unwrap()
        .as_array()
        .unwrap()
        .len()
}

/// A label, or a code in another case, selects what the code selects; `--cause none`
/// selects the incidents with no cause recorded, and with the others it makes the whole.
#[test]
fn a_label_or_any_case_selects_like_the_code() {
    let (_tmp, db) = small_demo();
    let by_code = count(&db, &["--cause", "thermal"]);
    assert!(by_code > 0);
    assert_eq!(count(&db, &["--cause", "Thermal Stress"]), by_code);
    assert_eq!(count(&db, &["--cause", "THERMAL"]), by_code);
    let kestrel = count(&db, &["--supplier", "KESTREL"]);
    assert!(kestrel > 0);
    assert_eq!(count(&db, &["--supplier", "kestrel glazing"]), kestrel);
    assert_eq!(
        count(&db, &["--status", "cause assigned"]),
        count(&db, &["--status", "cause_assigned"])
    );
    let all = count(&db, &[]);
    let none = count(&db, &["--cause", "none"]);
    assert!(none > 0);
    let store = Store::open_existing(&db).unwrap();
    let mut with_cause = 0;
    for c in Field::Cause.choices(&store).unwrap() {
        if c.code != "none" {
            with_cause += count(&db, &["--cause", &c.code]);
        }
    }
    assert_eq!(none + with_cause, all);
    // stats reads the same: cause=none counts the incidents without a cause
    let o = shardlog(&db, &["stats", "--only", "cause=none", "--json"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let n: u64 = j["groups"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| g["count"].as_u64().unwrap())
        .sum();
    assert_eq!(n as usize, none);
}

/// `list` sorts newest first by default, as the interface does; `--asc` reverses it; `--all`
/// (and `--limit 0`) lists every match page by page, `--json` as one array.
#[test]
fn list_is_newest_first_and_streams_every_match() {
    let (_tmp, db) = small_demo();
    let o = shardlog(&db, &["list", "--limit", "0", "--json"]);
    assert!(o.status.success());
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(rows.len(), 300);
    let dates: Vec<&str> = rows
        .iter()
        .map(|r| r["occurred"].as_str().unwrap())
        .collect();
    assert!(dates.windows(2).all(|w| w[0] >= w[1]), "not newest first");
    let o = shardlog(&db, &["list", "--asc", "--limit", "5", "--json"]);
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert_eq!(rows.len(), 5);
    assert!(rows[0]["occurred"].as_str() <= rows[4]["occurred"].as_str());
    let o = shardlog(&db, &["list", "--all"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("300 of 300 incidents shown, newest first"),
        "{text}"
    );
    // labels in the text, codes in JSON
    assert!(!text.contains("cause_assigned") && !text.contains("nickel_sulfide"));
    assert!(text.contains("net stress"));
    // an empty match is still a JSON array
    let o = shardlog(
        &db,
        &["list", "--all", "--json", "--search", "nothing-like-it"],
    );
    let rows: Vec<serde_json::Value> = serde_json::from_slice(&o.stdout).unwrap();
    assert!(rows.is_empty());
}
