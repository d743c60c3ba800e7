//! `shardlog stats` from outside: a database built through the store's API (an invented
//! fleet), then the real binary.

use std::path::{Path, PathBuf};
use std::process::Command;

use chrono::{NaiveDate, TimeZone, Utc};
use shardlog::store::{Cause, ComputedResult, Examination, Exposure, Incident, Ply, Stamp, Store};

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn run(db: &Path, args: &[&str]) -> Run {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env_remove("SHARDLOG_DB")
        .output()
        .unwrap();
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

fn d(y: i32, m: u32, day: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, day).unwrap()
}

struct Spec {
    supplier: &'static str,
    product: &'static str,
    lot: &'static str,
    cause: &'static str,
    origin: &'static str,
    temper: &'static str,
    /// applied stress, MPa
    applied: f64,
}

/// Invented fleet (all names invented): two suppliers, three lots, one depot, 2025.
/// Lot AF-6-02 of "Alder Float" has nickel sulfide breaks in fully tempered panes.
fn build(dir: &Path) -> PathBuf {
    let db = dir.join("fleet.db");
    let mut store = Store::open(&db).unwrap();
    let stamp = Stamp::new("test", Utc.with_ymd_and_hms(2026, 1, 5, 9, 0, 0).unwrap());
    let mut specs = Vec::new();
    for i in 0..4 {
        specs.push(Spec {
            supplier: "ALDER",
            product: "AF-6",
            lot: "AF-6-01",
            cause: "thermal",
            origin: "edge_cutting_damage",
            temper: "annealed",
            applied: 22.0 + 3.0 * i as f64,
        });
    }
    for i in 0..12 {
        specs.push(Spec {
            supplier: "ALDER",
            product: "AF-6",
            lot: "AF-6-02",
            cause: "nickel_sulfide",
            origin: "inclusion_nis",
            temper: "fully_tempered",
            applied: 8.0 + 1.5 * i as f64,
        });
    }
    for i in 0..2 {
        specs.push(Spec {
            supplier: "ALDER",
            product: "AF-6",
            lot: "AF-6-02",
            cause: "thermal",
            origin: "edge_cutting_damage",
            temper: "fully_tempered",
            applied: 30.0 + 4.0 * i as f64,
        });
    }
    for i in 0..12 {
        let impact = i % 3 == 0;
        specs.push(Spec {
            supplier: "BIRCH",
            product: "BG-8",
            lot: "BG-8-01",
            cause: if impact { "impact" } else { "thermal" },
            origin: if impact {
                "impact_site"
            } else {
                "edge_cutting_damage"
            },
            temper: "heat_strengthened",
            applied: if impact {
                90.0 + 10.0 * i as f64
            } else {
                25.0 + 2.0 * i as f64
            },
        });
    }
    for (i, s) in specs.iter().enumerate() {
        let found = d(2025, 1 + (i as u32 * 5) % 12, 1 + (i as u32 * 7) % 28);
        let mut inc = Incident::draft(found);
        inc.site = Some("DEPOT-N".into());
        inc.glass.supplier = Some(s.supplier.into());
        inc.glass.product = Some(s.product.into());
        inc.glass.lot = Some(s.lot.into());
        inc.glass.plies = vec![Ply {
            material: None,
            temper: Some(s.temper.into()),
            thickness_m: Some(0.006),
            coating: String::new(),
            edge_finish: String::new(),
        }];
        inc.cause = Some(Cause {
            category: s.cause.into(),
            factors: vec![],
            confidence: "probable".into(),
            responsibility: "undetermined".into(),
            note: String::new(),
        });
        inc.examinations = vec![Examination {
            id: String::new(),
            examined_on: Some(found),
            analyst: "bench 1".into(),
            origin_type: Some(s.origin.into()),
            material: None,
            readings: vec![],
            flaw: None,
            result: Some(ComputedResult {
                computed_at: stamp.at,
                code_version: "test".into(),
                stress_pa: Some(s.applied * 1e6),
                stress_low_pa: None,
                stress_high_pa: None,
                residual_pa: Some(0.0),
                applied_stress_pa: Some(s.applied * 1e6),
                flaw_size_m: None,
                constants: serde_json::json!({}),
                analysis: serde_json::json!({}),
            }),
            notes: String::new(),
        }];
        store.create_incident(&inc, &stamp).unwrap();
    }
    for (lot, panes) in [("AF-6-01", 400), ("AF-6-02", 400)] {
        store
            .add_exposure(
                &Exposure {
                    id: String::new(),
                    supplier: "ALDER".into(),
                    product: Some("AF-6".into()),
                    lot: Some(lot.into()),
                    site: Some("DEPOT-N".into()),
                    installed_on: d(2024, 1, 1),
                    removed_on: None,
                    panes,
                },
                &stamp,
            )
            .unwrap();
    }
    store
        .add_exposure(
            &Exposure {
                id: String::new(),
                supplier: "BIRCH".into(),
                product: Some("BG-8".into()),
                lot: Some("BG-8-01".into()),
                site: Some("DEPOT-N".into()),
                installed_on: d(2024, 1, 1),
                removed_on: None,
                panes: 800,
            },
            &stamp,
        )
        .unwrap();
    db
}

const WINDOW: [&str; 4] = ["--since", "2025-01-01", "--until", "2025-12-31"];

fn json(db: &Path, extra: &[&str]) -> serde_json::Value {
    let mut args = vec!["stats"];
    args.extend_from_slice(&WINDOW);
    args.extend_from_slice(extra);
    args.push("--json");
    let r = run(db, &args);
    assert_eq!(r.code, 0, "{}", r.stderr);
    serde_json::from_str(&r.stdout).unwrap()
}

#[test]
fn counts_rates_and_the_flagged_lot() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    let v = json(&db, &["--by", "supplier,lot", "--rates"]);
    assert_eq!(v["total"], 30);
    let groups = v["groups"].as_array().unwrap();
    assert_eq!(groups.len(), 3);
    let lot = |code: &str| {
        groups
            .iter()
            .find(|g| g["key"][1] == code)
            .unwrap_or_else(|| panic!("no group {code}: {v}"))
    };
    let bad = lot("AF-6-02");
    assert_eq!(bad["key"][0], "ALDER");
    assert_eq!(bad["count"], 14);
    assert!((bad["share"].as_f64().unwrap() - 14.0 / 30.0).abs() < 1e-15);
    // 400 panes × 365 days / 365.25 = 399.73 pane-years; 14 breaks → 35.02 per 1,000
    let py = 400.0 * 365.0 / 365.25;
    assert!((bad["pane_years"].as_f64().unwrap() - py).abs() < 1e-9);
    let rate = bad["rate_per_1000_pane_years"].as_f64().unwrap();
    assert!((rate - 14.0 * 1000.0 / py).abs() < 1e-9);
    // the rate interval is Garwood's for 14 events, scaled (14 → [7.654, 23.49], scipy 1.17.1
    // chi2.ppf(0.025, 28)/2 and chi2.ppf(0.975, 30)/2)
    let ci = bad["rate_ci95"].as_array().unwrap();
    assert!(
        (ci[0].as_f64().unwrap() * py / 1000.0 - 7.654).abs() < 2e-3,
        "{ci:?}"
    );
    assert!(
        (ci[1].as_f64().unwrap() * py / 1000.0 - 23.49).abs() < 1e-2,
        "{ci:?}"
    );
    // against the rest: 14 over 399.7 against 16 over 1199.2 pane-years = 2.625
    let rr = bad["rate_ratio"].as_f64().unwrap();
    assert!((rr - 14.0 / 16.0 * 3.0).abs() < 1e-9, "{rr}");
    assert_eq!(bad["flagged"], true);
    assert!(bad["p_value"].as_f64().unwrap() < 0.05);
    assert_eq!(lot("AF-6-01")["flagged"], false);
    assert_eq!(lot("BG-8-01")["flagged"], false);
    assert!(v["methods"]["flag"].as_str().unwrap().contains("Holm"));
}

#[test]
fn weibull_of_one_origin_type_with_the_others_censored() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    // the label works as well as the code
    let v = json(
        &db,
        &[
            "--by",
            "lot",
            "--weibull",
            "--origin-type",
            "inclusion: nickel sulfide stone",
        ],
    );
    let g = v["groups"]
        .as_array()
        .unwrap()
        .iter()
        .find(|g| g["key"][0] == "AF-6-02")
        .unwrap();
    let w = &g["weibull"];
    assert_eq!(w["n"], 14);
    assert_eq!(w["n_censored"], 2);
    assert!(w["modulus"].as_f64().unwrap() > 0.0);
    // the lot without that origin has every value censored: a clear per-group error
    let other = v["groups"]
        .as_array()
        .unwrap()
        .iter()
        .find(|g| g["key"][0] == "AF-6-01")
        .unwrap();
    assert!(other["weibull"]["error"]
        .as_str()
        .unwrap()
        .contains("censored"));
    assert_eq!(v["weibull_origin_type"], "inclusion_nis");
    // pooled: 30 stresses, 12 failures
    assert_eq!(v["weibull_all"]["n"], 30);
    assert_eq!(v["weibull_all"]["n_censored"], 18);
}

#[test]
fn plain_output_with_trend_and_strength() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    let mut args = vec!["stats"];
    args.extend_from_slice(&WINDOW);
    args.extend_from_slice(&["--by", "cause", "--rates", "--trend", "--weibull"]);
    let r = run(&db, &args);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let s = &r.stdout;
    assert!(
        s.contains("Incidents found 2025-01-01 to 2025-12-31: 30"),
        "{s}"
    );
    // labels in the text (the JSON keeps the codes)
    assert!(s.contains("nickel sulfide inclusion"), "{s}");
    assert!(!s.contains("nickel_sulfide"), "{s}");
    assert!(s.contains("Incidents per month"), "{s}");
    assert!(s.contains("2025-12"), "{s}");
    assert!(s.contains("σθ MPa"), "{s}");
    assert!(s.contains("pane-years"), "{s}");
    assert!(!s.contains("NaN"), "{s}");
}

#[test]
fn only_narrows_incidents_and_exposure() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    // thermal breaks on supplier ALDER: 4 on AF-6-01 and 2 on AF-6-02, over ALDER's 800 panes
    let v = json(
        &db,
        &[
            "--by",
            "lot",
            "--rates",
            "--trend",
            "--only",
            "cause=thermal",
            "--only",
            "supplier=ALDER",
        ],
    );
    assert_eq!(v["total"], 6);
    let py = 800.0 * 365.0 / 365.25;
    assert!((v["total_pane_years"].as_f64().unwrap() - py).abs() < 1e-9);
    let months = v["trend"]["months"].as_array().unwrap();
    assert_eq!(months.len(), 12);
    let n: u64 = months.iter().map(|m| m["count"].as_u64().unwrap()).sum();
    assert_eq!(n, 6);
}

#[test]
fn errors() {
    let dir = tempfile::tempdir().unwrap();
    let db = build(dir.path());
    for (args, code, want) in [
        (vec!["stats", "--by", "colour"], 2, "--by"),
        (vec!["stats", "--since", "2025-02-30"], 2, "--since"),
        (
            vec!["stats", "--weibull", "--origin-type", "moonbeam"],
            2,
            "inclusion_nis",
        ),
        (
            vec!["stats", "--origin-type", "inclusion_nis"],
            2,
            "--weibull",
        ),
        (vec!["stats", "--stress", "peak"], 2, "--stress"),
        (vec!["stats", "--only", "cause"], 2, "KEY=VALUE"),
        (vec!["stats", "--only", "month=2025-01"], 2, "--since"),
    ] {
        let r = run(&db, &args);
        assert_eq!(r.code, code, "{args:?}: {}", r.stderr);
        assert!(r.stderr.contains(want), "{args:?}: {}", r.stderr);
    }
    let r = run(&dir.path().join("missing.db"), &["stats"]);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(r.stderr.contains("no database"), "{}", r.stderr);
}
