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
