//! Ownership that moves with the specimen, conflicts kept and settled by name, and a login
//! per bench, against a real PostgreSQL server (support::fleet): the real binary, demo
//! benches, the fleet read back as its owner.

use std::path::Path;

use crate::fleet_sync::{demo_bench, err, out, run, sync, sync_ok, TestFleet};
use crate::support::fleet::Cluster;

fn db_arg(db: &Path) -> &str {
    db.to_str().expect("a UTF-8 path")
}

/// The first incident of a bench: (reference, id).
fn first_incident(db: &Path) -> (String, String) {
    crate::fleet_sync::bench_incidents(db)
        .into_iter()
        .next()
        .expect("the demo bench has incidents")
}

/// Change an incident's notes at a bench, through the store (one audited edit).
fn edit_notes(db: &Path, key: &str, notes: &str) {
    let mut s = shardlog::store::Store::open_existing(db).unwrap();
    s.modify_incident(
        key,
        None,
        &shardlog::store::Stamp::new("test-runner", chrono::Utc::now()),
        |inc| {
            inc.notes = notes.into();
            Ok(())
        },
    )
    .unwrap();
}

fn local(db: &Path, key: &str) -> shardlog::store::Incident {
    shardlog::store::Store::open_existing(db)
        .unwrap()
        .get(key)
        .unwrap()
}

/// (owner, image) of an incident in the fleet.
fn in_fleet(fleet: &TestFleet<'_>, id: &str) -> (String, String) {
    let row = fleet
        .admin()
        .query_one(
            "SELECT owner, image FROM fleet_records WHERE entity = 'incident' AND id = $1",
            &[&id],
        )
        .unwrap();
    (row.get(0), row.get(1))
}

fn status_json(fleet: &TestFleet<'_>) -> serde_json::Value {
    let o = run(&["fleet", "status", "--url", &fleet.owner_url(), "--json"]);
    assert!(o.status.success(), "{}", err(&o));
    serde_json::from_str(&out(&o)).unwrap()
}

fn verify_ok(db: &Path) {
    let o = run(&["--db", db_arg(db), "verify"]);
    assert!(
        o.status.success(),
        "verify {}: {}{}",
        db.display(),
        out(&o),
        err(&o)
    );
}

#[test]
fn a_transferred_incident_moves_with_its_photo_and_edits_settle_by_owner() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 12);
    let south = demo_bench(dir.path(), "SOUTH", 12);
    let (reference, id) = first_incident(&north);
    // a photo on it, so the receiving bench must fetch the file
    let photo = dir.path().join("origin.png");
    std::fs::write(&photo, b"\x89PNG\r\n\x1a\n invented test bytes").unwrap();
    let o = run(&[
        "--db",
        db_arg(&north),
        "attach",
        &reference,
        photo.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "attach: {}", err(&o));
    sync_ok(&north, &fleet.bench_url("NORTH"));
    sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(in_fleet(&fleet, &id).0, "NORTH");

    // the transfer: custody "sent" at the sending bench, audited
    let o = run(&[
        "--db",
        db_arg(&north),
        "transfer",
        &reference,
        "--to",
        "south",
    ]);
    assert!(o.status.success(), "transfer: {}", err(&o));
    assert!(out(&o).contains("to bench SOUTH"), "{}", out(&o));
    let sent = local(&north, &id);
    let last = sent.custody.last().expect("a custody entry");
    assert_eq!(
        (last.action.as_str(), last.location.as_str()),
        ("sent", "bench SOUTH")
    );
    verify_ok(&north);
    // sending it on again from here is refused: it is no longer here
    let o = run(&[
        "--db",
        db_arg(&north),
        "transfer",
        &reference,
        "--to",
        "LAB2",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", err(&o));
    assert!(
        err(&o).contains("already sent to bench SOUTH"),
        "{}",
        err(&o)
    );

    // the fleet moves ownership when it witnesses the transfer
    let r = sync_ok(&north, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["conflicts"], 0, "{r}");
    let (owner, image) = in_fleet(&fleet, &id);
    assert_eq!(owner, "SOUTH");
    assert_eq!(
        shardlog::store::canon::incident_image(&sent).unwrap(),
        image,
        "the fleet holds the sender's last version, custody entry included"
    );

    // the receiving bench's pull brings it, with its children and its photo
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(r["received"]["incidents"], 1, "{r}");
    assert_eq!(r["received"]["files"], 1, "{r}");
    let got = local(&south, &id);
    assert_eq!(got.reference, reference);
    assert_eq!(got, sent, "the same incident, children and all");
    let sha = &got.attachments[0].sha256;
    let file = south.with_extension("db.files").join(sha);
    assert_eq!(
        std::fs::read(&file).unwrap(),
        std::fs::read(&photo).unwrap()
    );
    verify_ok(&south);
    // audited here as coming from the fleet, and witnessed but never applied back
    let c = rusqlite::Connection::open(&south).unwrap();
    let actor: String = c
        .query_row(
            "SELECT actor FROM audit WHERE entity = 'incident' AND entity_id = ?1",
            [&id],
            |r| r.get(0),
        )
        .unwrap();
    assert_eq!(actor, "fleet:pull");
    drop(c);
    let before = fleet.state();
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(
        r["push"]["status"], "accepted",
        "the pulled rows are witnessed: {r}"
    );
    assert_eq!(
        (r["push"]["records"].clone(), r["push"]["conflicts"].clone()),
        (0.into(), 0.into())
    );
    assert_eq!(
        in_fleet(&fleet, &id).1,
        image,
        "pulled rows are not applied again"
    );
    assert_ne!(fleet.state(), before);
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(r["received"]["incidents"], 0, "pulled once: {r}");

    // the receiver may edit it: its edit applies
    edit_notes(
        &south,
        &reference,
        "seen at the south bench: origin at the lower edge",
    );
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(
        (r["push"]["records"].clone(), r["push"]["conflicts"].clone()),
        (1.into(), 0.into()),
        "{r}"
    );
    let south_version = in_fleet(&fleet, &id).1;
    assert!(south_version.contains("seen at the south bench"));

    // the sender can no longer: its later edit becomes a conflict with both versions
    edit_notes(&north, &reference, "north bench afterthought");
    let r = sync_ok(&north, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["conflicts"], 1, "{r}");
    assert_eq!(
        in_fleet(&fleet, &id).1,
        south_version,
        "nothing applied over the owner's"
    );
    let s = status_json(&fleet);
    let conflicts = s["conflicts"].as_array().unwrap();
    assert_eq!(conflicts.len(), 1, "{s}");
    let c = &conflicts[0];
    assert_eq!(
        (c["bench"].as_str(), c["owner"].as_str()),
        (Some("NORTH"), Some("SOUTH"))
    );
    assert_eq!(c["reference"], reference.as_str());
    assert!(c["fleet_image"]
        .as_str()
        .unwrap()
        .contains("seen at the south bench"));
    assert!(c["bench_image"]
        .as_str()
        .unwrap()
        .contains("north bench afterthought"));
    assert!(
        c["differs_in"]
            .as_array()
            .unwrap()
            .iter()
            .any(|k| k == "notes"),
        "{c}"
    );
    let conflict = c["id"].as_i64().unwrap().to_string();
    let text = run(&["fleet", "status", "--url", &fleet.owner_url()]);
    let text = out(&text);
    assert!(
        text.contains(&format!(
            "conflict {conflict} (incident {reference}): edited by a bench that does not own it"
        )),
        "{text}"
    );
    assert!(
        text.contains("north bench afterthought") && text.contains("seen at the south bench"),
        "{text}"
    );
    let open: Vec<i64> = s["benches"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| b["open_conflicts"].as_i64().unwrap())
        .collect();
    assert_eq!(
        open,
        [1, 1],
        "the conflict counts at the bench that made it and at the owner"
    );

    // only the owner resolves it
    let o = run(&[
        "--db",
        db_arg(&north),
        "fleet",
        "resolve",
        &conflict,
        "--url",
        &fleet.bench_url("NORTH"),
    ]);
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("bench SOUTH owns"), "{}", err(&o));
    // an edit of the owner that does not name it leaves it open
    edit_notes(&south, &reference, "south: measured the mirror again");
    sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(
        status_json(&fleet)["conflicts"].as_array().unwrap().len(),
        1
    );
    // the owner's new edit naming it, taking the version kept aside, clears it
    let o = run(&[
        "--db",
        db_arg(&south),
        "fleet",
        "resolve",
        &conflict,
        "--take-other",
        "--url",
        &fleet.bench_url("SOUTH"),
        "--json",
    ]);
    assert!(o.status.success(), "resolve: {}", err(&o));
    let r: serde_json::Value = serde_json::from_str(&out(&o)).unwrap();
    assert_eq!(
        (r["closed"].as_bool(), r["kept"].as_str()),
        (Some(true), Some("bench")),
        "{r}"
    );
    let settled = local(&south, &id);
    assert_eq!(settled.notes, "north bench afterthought");
    assert_eq!(
        in_fleet(&fleet, &id).1,
        shardlog::store::canon::incident_image(&settled).unwrap()
    );
    let s = status_json(&fleet);
    assert!(s["conflicts"].as_array().unwrap().is_empty(), "{s}");
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_conflicts WHERE resolved_at IS NOT NULL"),
        1
    );
    verify_ok(&south);
    for (code, db) in [("NORTH", &north), ("SOUTH", &south)] {
        let o = run(&[
            "--db",
            db_arg(db),
            "verify",
            "--fleet",
            &fleet.bench_url(code),
        ]);
        assert!(o.status.success(), "verify --fleet {code}: {}", err(&o));
    }
}

#[test]
fn an_edit_made_after_a_transfer_before_it_synced_is_a_conflict_the_owner_settles() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 8);
    let south = demo_bench(dir.path(), "SOUTH", 8);
    let (reference, id) = first_incident(&north);
    sync_ok(&north, &fleet.bench_url("NORTH"));
    // sent, then edited at the sender before anything synced
    let o = run(&[
        "--db",
        db_arg(&north),
        "transfer",
        &reference,
        "--to",
        "SOUTH",
    ]);
    assert!(o.status.success(), "{}", err(&o));
    edit_notes(&north, &reference, "north: edited after sending");
    let receipts = fleet.count("SELECT count(*) FROM fleet_receipts");
    let r = sync_ok(&north, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["conflicts"], 1, "{r}");
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_receipts"),
        receipts + 2,
        "one push up to the transfer, one after it"
    );
    let (owner, image) = in_fleet(&fleet, &id);
    assert_eq!(owner, "SOUTH");
    assert!(!image.contains("edited after sending"));
    // the receiver gets the version as sent; the other one is kept in the conflict
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(r["received"]["incidents"], 1, "{r}");
    let s = status_json(&fleet);
    let c = &s["conflicts"][0];
    assert!(
        c["bench_image"]
            .as_str()
            .unwrap()
            .contains("edited after sending"),
        "{s}"
    );
    let conflict = c["id"].as_i64().unwrap().to_string();
    // settled at the owner, keeping the fleet's version
    let o = run(&[
        "--db",
        db_arg(&south),
        "fleet",
        "resolve",
        &conflict,
        "--url",
        &fleet.bench_url("SOUTH"),
    ]);
    assert!(o.status.success(), "{}", err(&o));
    assert!(out(&o).contains("closed the conflict"), "{}", out(&o));
    let settled = local(&south, &id);
    assert!(!settled.notes.contains("edited after sending"));
    assert_eq!(
        settled.revision,
        local(&north, &id).revision,
        "one edit on each side of the conflict"
    );
    assert!(status_json(&fleet)["conflicts"]
        .as_array()
        .unwrap()
        .is_empty());
}

#[test]
fn a_bench_login_cannot_push_as_another_bench() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 6);
    sync_ok(&north, &fleet.bench_url("NORTH"));
    let before = fleet.state();
    // the bench NORTH through SOUTH's login: refused inside the server
    let o = sync(&north, &fleet.bench_url("SOUTH"));
    assert_eq!(o.status.code(), Some(1));
    assert!(err(&o).contains("refused the push (login)"), "{}", err(&o));
    assert!(
        err(&o).contains("cannot push as bench NORTH"),
        "{}",
        err(&o)
    );
    // by hand through psql as SOUTH's login, too
    let south_login = fleet.bench_login("SOUTH");
    let (ok, stdout, stderr) = cluster.psql(
        &fleet.name,
        &south_login,
        "SELECT status, detail FROM fleet_push('NORTH')",
    );
    assert!(ok, "{stderr}");
    assert!(
        stdout.contains("refused") && stdout.contains("login"),
        "{stdout}"
    );
    // the shared bench role no longer logs in
    let (ok, _, stderr) = cluster.psql(&fleet.name, &format!("{}_bench", fleet.name), "SELECT 1");
    assert!(!ok);
    assert!(stderr.contains("not permitted to log in"), "{stderr}");
    assert_eq!(fleet.state(), before);
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_refusals WHERE bench = 'NORTH' AND kind = 'login'"),
        2
    );
    // enrolling again gives a new password to the same login; the bench still syncs as itself
    let o = run(&["fleet", "enrol", "NORTH", "--url", &fleet.owner_url()]);
    assert!(o.status.success(), "{}", err(&o));
    assert!(
        out(&o).contains(&format!("login {}_bench_north", fleet.name)),
        "{}",
        out(&o)
    );
    let r = sync_ok(&north, &fleet.bench_url("NORTH"));
    assert_eq!(r["push"]["status"], "unchanged");
    // enrol is the owner's: a bench login cannot make logins
    let o = run(&["fleet", "enrol", "WEST", "--url", &fleet.bench_url("NORTH")]);
    assert_eq!(o.status.code(), Some(1), "{}", out(&o));
}

/// One row of a bench's own SQLite file (a count or a text).
fn bench_value<T: rusqlite::types::FromSql>(db: &Path, sql: &str) -> T {
    rusqlite::Connection::open(db)
        .unwrap()
        .query_row(sql, [], |r| r.get(0))
        .unwrap_or_else(|e| panic!("{sql}: {e}"))
}

#[test]
fn own_materials_and_lookup_edits_follow_the_fleet_and_exposure_stays_home() {
    let cluster = Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let north = demo_bench(dir.path(), "NORTH", 6);
    let south = demo_bench(dir.path(), "SOUTH", 6);
    let bench = |db: &Path, args: &[&str]| {
        let mut all = vec!["--db", db_arg(db)];
        all.extend_from_slice(args);
        let o = run(&all);
        assert!(o.status.success(), "{args:?}: {}", err(&o));
    };
    // at NORTH: an own material, a cause of its own, a relabelled seeded cause, and panes in
    // service
    bench(
        &north,
        &[
            "materials",
            "add",
            "north_float",
            "--from",
            "soda-lime",
            "--a-i",
            "2.05 MPa√m",
        ],
    );
    bench(
        &north,
        &[
            "lookups",
            "add",
            "cause",
            "sealant_attack",
            "sealant attack on the edge",
        ],
    );
    bench(
        &north,
        &[
            "lookups",
            "rename",
            "cause",
            "impact",
            "impact (north wording)",
        ],
    );
    let mut s = shardlog::store::Store::open_existing(&north).unwrap();
    let stamp = shardlog::store::Stamp::new("test-runner", chrono::Utc::now());
    let supplier = s.suppliers().unwrap()[0].code.clone();
    let panes = s
        .add_exposure(
            &shardlog::store::Exposure {
                id: String::new(),
                supplier,
                product: None,
                lot: None,
                site: None,
                installed_on: chrono::NaiveDate::from_ymd_opt(2025, 4, 1).unwrap(),
                removed_on: None,
                panes: 317,
            },
            &stamp,
        )
        .unwrap();
    drop(s);
    let south_exposure: i64 = bench_value(&south, "SELECT count(*) FROM exposure");
    sync_ok(&north, &fleet.bench_url("NORTH"));
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    let p = &r["pulled"];
    assert_eq!(p["materials"], 1, "{r}");
    assert_eq!(
        p["lookups"], 1,
        "the cause (the material brought its own entry): {r}"
    );
    // panes in service stay at their bench: another bench's would inflate this one's rates
    assert_eq!(
        bench_value::<i64>(&south, "SELECT count(*) FROM exposure"),
        south_exposure
    );
    assert_eq!(
        bench_value::<i64>(
            &south,
            &format!("SELECT count(*) FROM exposure WHERE id = '{}'", panes.id)
        ),
        0
    );
    let got = shardlog::store::Store::open_existing(&south).unwrap();
    let m = got
        .own_material("north_float")
        .unwrap()
        .expect("the material arrived");
    assert_eq!(m.revision, 1);
    drop(got);
    assert_eq!(
        bench_value::<String>(
            &south,
            "SELECT label FROM lookup WHERE kind = 'cause_category' AND code = 'sealant_attack'"
        ),
        "sealant attack on the edge"
    );
    // SOUTH's own seeded label stays its own
    let impact = "SELECT label FROM lookup WHERE kind = 'cause_category' AND code = 'impact'";
    let south_impact: String = bench_value(&south, impact);
    assert_ne!(south_impact, "impact (north wording)");
    verify_ok(&south);

    // NORTH changes what SOUTH took from it: SOUTH follows
    bench(
        &north,
        &[
            "materials",
            "edit",
            "north_float",
            "--density",
            "2490 kg/m³",
        ],
    );
    bench(
        &north,
        &[
            "lookups",
            "rename",
            "cause",
            "sealant_attack",
            "sealant attack (edge seal)",
        ],
    );
    bench(&north, &["lookups", "retire", "cause", "sealant_attack"]);
    sync_ok(&north, &fleet.bench_url("NORTH"));
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(
        (
            r["pulled"]["materials"].as_i64(),
            r["pulled"]["lookup_edits"].as_i64()
        ),
        (Some(1), Some(1)),
        "{r}"
    );
    let got = shardlog::store::Store::open_existing(&south).unwrap();
    assert_eq!(
        got.own_material("north_float").unwrap().unwrap().revision,
        2
    );
    drop(got);
    assert_eq!(
        bench_value::<String>(
            &south,
            "SELECT label || ' / ' || retired FROM lookup WHERE kind = 'cause_category' AND code = 'sealant_attack'"
        ),
        "sealant attack (edge seal) / 1"
    );
    assert_eq!(bench_value::<String>(&south, impact), south_impact);
    verify_ok(&south);
    // the pulled rows are witnessed, never applied as SOUTH's: NORTH keeps the fleet's image
    let before = fleet.count("SELECT count(*) FROM fleet_records WHERE origin = 'SOUTH'");
    let r = sync_ok(&south, &fleet.bench_url("SOUTH"));
    assert_eq!(
        r["pulled"]
            .as_object()
            .unwrap()
            .values()
            .filter(|v| v.as_i64() != Some(0))
            .count(),
        0,
        "{r}"
    );
    assert_eq!(
        fleet.count("SELECT count(*) FROM fleet_records WHERE origin = 'SOUTH'"),
        before
    );
}
