//! Reports, dispute bundles, bundle checks and the heat-soak comparison on the fleet
//! database (`--db postgres://…`), against a real PostgreSQL server (support::fleet): the same
//! answers as the bench file gives for the same records, once a reference the bench made
//! before it had a code is shown without the fleet's bench qualifier.

use std::path::Path;

use crate::fleet_sync::{demo_bench, err, out, run, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

fn text(args: &[&str]) -> String {
    let o = run(args);
    assert!(o.status.success(), "{args:?} failed: {}", err(&o));
    out(&o)
}

fn at_bench(db: &Path, args: &[&str]) -> String {
    text(&[&["--db", db.to_str().expect("a UTF-8 path")][..], args].concat())
}

/// Two incidents examined with a bench's own material: one with its first revision, one
/// after the lab changed a constant (so each result kept different constants).
fn own_material_incidents(db: &Path, dir: &Path) {
    at_bench(
        db,
        &[
            "materials",
            "add",
            "lab_float",
            "--from",
            "soda-lime",
            "--a-i",
            "2.05 MPa√m",
            "--a-i-spread",
            "0.06 MPa*m^0.5",
            "--source",
            "four-point bends of the Harrowgate batch",
        ],
    );
    let csv = dir.join("own.csv");
    std::fs::write(
        &csv,
        "found_on,asset,position,material,mirror_mist\n2026-06-04,,bay 1,lab_float,1.2 mm\n",
    )
    .unwrap();
    at_bench(db, &["import", csv.to_str().unwrap()]);
    at_bench(
        db,
        &["materials", "edit", "lab_float", "--a-i", "2.4 MPa√m"],
    );
    std::fs::write(
        &csv,
        "found_on,asset,position,material,mirror_mist\n2026-06-05,,bay 2,lab_float,1.1 mm\n",
    )
    .unwrap();
    at_bench(db, &["import", csv.to_str().unwrap()]);
}

#[test]
fn show_on_the_fleet_gives_the_analysis_of_an_own_material_as_the_bench_does() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "LARKSPUR", 3);
    own_material_incidents(&db, dir.path());
    sync_ok(&db, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let listed = at_bench(&db, &["list", "--json", "--all"]);
    let v: serde_json::Value = serde_json::from_str(&listed).unwrap();
    let refs: Vec<String> = v
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["position"] == "bay 1" || r["position"] == "bay 2")
        .map(|r| r["ref"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(refs.len(), 2, "{listed}");
    let mut stresses = Vec::new();
    for r in &refs {
        let bench = at_bench(&db, &["show", r, "--json"]);
        let fleet_show = text(&["--db", &url, "show", r, "--json"]);
        assert_eq!(fleet_show, bench, "show {r}");
        let v: serde_json::Value = serde_json::from_str(&bench).unwrap();
        let result = &v["examinations"][0]["result"];
        // the analysis itself, not the digest the fleet pins
        assert_eq!(
            result["analysis"]["own_material"]["code"], "lab_float",
            "{bench}"
        );
        stresses.push(result["stress_pa"].as_f64().unwrap() / 1e6);
    }
    stresses.sort_by(f64::total_cmp);
    // computed: 2.05 MPa·√m / √(1.2 mm) = 59.18 MPa (revision 1); 2.4 / √(1.1 mm) = 72.36 MPa
    // (revision 2)
    assert!((stresses[0] - 59.18).abs() < 0.01, "{stresses:?}");
    assert!((stresses[1] - 72.36).abs() < 0.01, "{stresses:?}");
}

/// The bundle folder's bundle.json with one figure of the cover changed.
fn tamper(dir: &Path) {
    let p = dir.join("bundle.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&p).unwrap()).expect("bundle.json is JSON");
    let n = v["content"]["cover"]["incidents"].as_u64().unwrap();
    v["content"]["cover"]["incidents"] = serde_json::json!(n + 1);
    std::fs::write(&p, serde_json::to_string_pretty(&v).unwrap()).unwrap();
}

#[test]
fn a_bench_bundle_verifies_against_the_fleet_once_synced_and_a_tampered_one_does_not() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 80);
    sync_ok(&db, &fleet.owner_url());
    // the bench goes on after its sync: the bundle's head is one the fleet has not seen
    crate::fleet_sync::add_incident(&db, "a late entry");
    let bundle = dir.path().join("claim");
    let b = bundle.to_str().unwrap();
    at_bench(&db, &["dispute", "--supplier", "KESTREL", "-o", b]);
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    at_bench(&db, &["verify", "--bundle", b]);
    let o = run(&["--db", &url, "verify", "--bundle", b]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(
        out(&o).contains("in no chain the fleet database witnessed"),
        "{}",
        out(&o)
    );
    // once the bench synced, its bundle checks against the fleet's records
    sync_ok(&db, &fleet.owner_url());
    let ok = text(&["--db", &url, "verify", "--bundle", b]);
    assert!(
        ok.contains("bench NORTH's chain as the fleet witnessed it"),
        "{ok}"
    );
    assert!(ok.contains("compared with the records in postgres"), "{ok}");
    assert!(!ok.contains("DIFFERS"), "{ok}");
    // an edit synced after the bundle was made: the fleet's records no longer match it
    let first: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(bundle.join("bundle.json")).unwrap())
            .unwrap();
    let reference = first["content"]["incidents"][0]["reference"]
        .as_str()
        .unwrap()
        .to_string();
    let mut s = shardlog::store::Store::open_existing(&db).unwrap();
    s.modify_incident(
        &reference,
        None,
        &shardlog::store::Stamp::new("test-runner", chrono::Utc::now()),
        |inc| {
            inc.position = "moved after the claim".into();
            Ok(())
        },
    )
    .unwrap();
    drop(s);
    sync_ok(&db, &fleet.owner_url());
    let o = run(&["--db", &url, "verify", "--bundle", b]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(
        out(&o).contains(&format!(
            "incident {reference}: the bundle does not match the fleet's records: content.history: 1 entries in the bundle, 2 in the records"
        )),
        "{}",
        out(&o)
    );
    // a bundle made on the fleet verifies there; tampered with, it does not
    let made = dir.path().join("fleet-claim");
    let m = made.to_str().unwrap();
    let said = text(&["--db", &url, "dispute", "--supplier", "KESTREL", "-o", m]);
    assert!(said.contains("not signed: made from the fleet"), "{said}");
    let ok = text(&["--db", &url, "verify", "--bundle", m]);
    assert!(ok.contains("the fleet's own chain of receipts"), "{ok}");
    // the photos come from the fleet's file table, the very bytes the bench holds
    let photos = |d: &Path| -> Vec<(String, Vec<u8>)> {
        let mut v: Vec<_> = std::fs::read_dir(d.join("attachments"))
            .unwrap()
            .map(|e| {
                let e = e.unwrap();
                (
                    e.file_name().to_string_lossy().into_owned(),
                    std::fs::read(e.path()).unwrap(),
                )
            })
            .collect();
        v.sort();
        v
    };
    let from_fleet = photos(&made);
    assert!(!from_fleet.is_empty());
    assert_eq!(from_fleet, photos(&bundle));
    tamper(&made);
    let o = run(&["--db", &url, "verify", "--bundle", m]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
    assert!(out(&o).contains("DIFFERS"), "{}", out(&o));
}

/// Lot HS-1 soaked, lot NS-2 not; four nickel sulfide breaks in NS-2, one in HS-1, one
/// impact in HS-1 (as practice_cli's comparison).
const SOAK_CSV: &str = "found_on,broken_on,asset,position,supplier,product,lot,temper,thickness,\
cause,installed_on,fragment_count,heat_soaked,heat_soak_on,heat_soak_ref
2026-03-01,2026-03-01,tower 3,L4 east,BRACKENWOLD,FT8,HS-1,fully_tempered,8 mm,nickel_sulfide,2020-01-20,,yes,2019-11-04,HS-CERT-0193
2026-04-02,2026-04-01,tower 3,L5 east,BRACKENWOLD,FT8,HS-1,fully_tempered,8 mm,impact,2020-01-20,,yes,2019-11-04,HS-CERT-0193
2025-03-01,2025-03-01,tower 7,L2 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-09-01,,no,,
2025-07-01,2025-07-01,tower 7,L3 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-02-01,,no,,
2025-10-01,2025-10-01,tower 7,L4 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2024-02-15,,,,
2026-05-01,2026-05-01,tower 7,L6 west,BRACKENWOLD,FT8,NS-2,fully_tempered,8 mm,nickel_sulfide,2023-02-10,,no,,
";

#[test]
fn stats_heat_soak_on_the_fleet_is_the_bench_files_comparison() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("tower.db");
    at_bench(&db, &["init", "--bench", "TOWER"]);
    let csv = dir.path().join("soak.csv");
    std::fs::write(&csv, SOAK_CSV).unwrap();
    at_bench(&db, &["import", csv.to_str().unwrap()]);
    let ex = dir.path().join("ex.csv");
    std::fs::write(
        &ex,
        "supplier,product,lot,site,installed_on,removed_on,panes\nBRACKENWOLD,FT8,NS-2,,2024-01-01,,2000\n",
    )
    .unwrap();
    at_bench(&db, &["exposure", "import", ex.to_str().unwrap()]);
    sync_ok(&db, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let window = ["--since", "2025-01-01", "--until", "2026-12-31"];
    for extra in [&["--json"][..], &[][..]] {
        let args = [&["stats", "--heat-soak"][..], &window[..], extra].concat();
        let bench = at_bench(&db, &args);
        let whole = text(&[&["--db", url.as_str()][..], &args[..]].concat());
        let one = text(
            &[
                &["--db", url.as_str()][..],
                &args[..],
                &["--bench", "TOWER"][..],
            ]
            .concat(),
        );
        assert_eq!(whole, bench, "{extra:?}");
        assert_eq!(one, bench, "{extra:?}");
        if extra.is_empty() {
            // computed: 2000 panes × 730 days / 365.25 = 3997.3 pane-years (practice_cli)
            assert!(bench.contains("3997"), "{bench}");
        } else {
            let v: serde_json::Value = serde_json::from_str(&bench).unwrap();
            assert_eq!(v["heat_soak"]["service_time"]["count"], 5);
            assert_eq!(v["heat_soak"]["classes"][1]["nickel_sulfide"], 4);
        }
    }
}

/// A bench whose incidents a bulk load made (an import writes one audit row per 1,000
/// records, listing their digests), coded `code` after the import, with `edited` incidents of
/// KESTREL edited since.
fn bulk_loaded_bench(dir: &Path, code: &str, edited: usize) -> std::path::PathBuf {
    let src = dir.join("source.db");
    let json = dir.join("all.json");
    let db = dir.join(format!("{code}.db"));
    let path = |p: &Path| p.to_str().expect("a UTF-8 path").to_string();
    text(&[
        "demo",
        "--incidents",
        "160",
        "--seed",
        "7",
        "--out",
        &path(&src),
    ]);
    at_bench(&src, &["export", "--format", "json", "-o", &path(&json)]);
    at_bench(&db, &["init"]);
    let files = dir.join("source.db.files");
    at_bench(
        &db,
        &["import", &path(&json), "--attachments", &path(&files)],
    );
    at_bench(&db, &["bench", "code", code]);
    let listed = at_bench(&db, &["list", "--json", "--all", "--supplier", "KESTREL"]);
    let v: serde_json::Value = serde_json::from_str(&listed).unwrap();
    let mut s = shardlog::store::Store::open_existing(&db).unwrap();
    for r in v.as_array().unwrap().iter().step_by(3).take(edited) {
        s.modify_incident(
            r["ref"].as_str().unwrap(),
            None,
            &shardlog::store::Stamp::new("test-runner", chrono::Utc::now()),
            |inc| {
                inc.notes = format!("{} (looked at again)", inc.notes);
                Ok(())
            },
        )
        .unwrap();
    }
    db
}

/// The histories of a dispute bundle's incidents are read for all of them at once (the
/// bulk-load rows listing them found in one pass at the bench, a few statements on the
/// fleet): each is the history `report` gives for that incident alone, at the bench and on
/// the fleet, and the two bundles are the same.
#[test]
fn a_bundle_of_bulk_loaded_incidents_gives_each_history_as_its_own_report_does() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let code = "BULKY";
    // more edited incidents than the fleet searches for one by one
    let edited = 7;
    let db = bulk_loaded_bench(dir.path(), code, edited);
    let batches = rusqlite::Connection::open(&db)
        .unwrap()
        .query_row(
            "SELECT count(*) FROM audit WHERE entity = 'batch'",
            [],
            |r| r.get::<_, i64>(0),
        )
        .unwrap();
    assert!(batches >= 1, "the import wrote no bulk-load row");
    sync_ok(&db, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let file = db.to_str().unwrap();
    let bundle = |db: &str, name: &str, extra: &[&str]| -> serde_json::Value {
        let out_dir = dir.path().join(name);
        let o = out_dir.to_str().unwrap();
        text(
            &[
                &["--db", db, "dispute", "--supplier", "KESTREL", "-o", o][..],
                extra,
            ]
            .concat(),
        );
        serde_json::from_str(&std::fs::read_to_string(out_dir.join("bundle.json")).unwrap())
            .unwrap()
    };
    let bench_bundle = bundle(file, "bench", &[]);
    let fleet_bundle = bundle(&url, "fleet", &["--bench", code]);
    // the fleet qualifies the imported references with the bench's code; the digest of a
    // summary is over its reference too, every other field is compared
    let unqualify = |s: String| {
        s.replace(&format!("\"{code}/BR-"), "\"BR-")
            .replace(&format!("incidents/{code}_BR-"), "incidents/BR-")
    };
    let part = |v: &serde_json::Value, key: &str| {
        let mut v = v["content"][key].clone();
        if let Some(incidents) = v.as_array_mut().filter(|_| key == "incidents") {
            for i in incidents {
                i["content_sha256"] = serde_json::Value::Null;
            }
        }
        unqualify(serde_json::to_string_pretty(&v).unwrap())
    };
    for key in ["selection", "cover", "incidents", "attachments"] {
        assert_eq!(
            part(&fleet_bundle, key),
            part(&bench_bundle, key),
            "the bundle's {key}"
        );
    }
    let incidents = bench_bundle["content"]["incidents"].as_array().unwrap();
    assert!(incidents.len() > 12, "{} incidents", incidents.len());
    let history = |i: &serde_json::Value| i["content"]["history"].as_array().unwrap().clone();
    // every incident's history starts at the bulk-load row that listed it
    assert!(incidents
        .iter()
        .all(|i| history(i).first().is_some_and(|h| h["action"] == "created")));
    let changed = incidents.iter().filter(|i| history(i).len() == 2).count();
    assert_eq!(changed, edited);
    // each history is the one the incident's own summary gives, at the bench and on the
    // fleet (one in four on the fleet, every edited one among them)
    for (k, i) in incidents.iter().enumerate() {
        let reference = i["reference"].as_str().unwrap();
        let alone: serde_json::Value =
            serde_json::from_str(&at_bench(&db, &["report", reference, "--format", "json"]))
                .unwrap();
        assert_eq!(
            alone["content"]["history"], i["content"]["history"],
            "{reference}"
        );
        if k % 4 == 0 || history(i).len() == 2 {
            // the same place in the fleet's bundle: its references sort as the bench's do
            let on_fleet = fleet_bundle["content"]["incidents"][k]["reference"]
                .as_str()
                .unwrap();
            assert_eq!(unqualify(format!("\"{on_fleet}")), format!("\"{reference}"));
            let alone: serde_json::Value = serde_json::from_str(&text(&[
                "--db", &url, "report", on_fleet, "--format", "json",
            ]))
            .unwrap();
            assert_eq!(
                alone["content"]["history"], i["content"]["history"],
                "{reference}"
            );
        }
    }
}

/// A dispute on the fleet shows how far it has come on a terminal, as a bench's does.
#[test]
fn a_fleet_dispute_shows_its_progress_on_a_terminal() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "NORTH", 200);
    sync_ok(&db, &fleet.owner_url());
    let url = cluster.url_as(&fleet.name, &format!("{}_reader", fleet.name));
    let out_dir = dir.path().join("claim");
    let (seen, code) = crate::progress::in_a_terminal(&[
        "--db",
        &url,
        "dispute",
        "--supplier",
        "KESTREL",
        "-o",
        out_dir.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{seen}");
    let result_at = seen.find("wrote ").expect("the result");
    let n: u64 = seen[result_at..]
        .split(": ")
        .nth(1)
        .and_then(|t| t.split(' ').next())
        .and_then(|t| t.parse().ok())
        .expect("the number of summaries");
    assert!(n > 10, "{seen}");
    // the summaries are rendered with a line telling how many of them are done
    assert!(seen.contains("rendering "), "{seen:?}");
    assert!(seen.contains(&format!(" of {n} rows · ")), "{seen:?}");
    // and it is wiped before the result is printed
    assert!(seen[..result_at].ends_with("\r\x1b[2K"), "{seen:?}");
}
