//! A lab's own materials: `shardlog materials add|edit|show` through the real binary, the
//! audit rows they write, a library material that can only be copied, and the own material
//! used by `mirror`, `load`, the CSV import, verify's recomputation and the report exactly as
//! a library material is.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use chrono::{DateTime, NaiveDate, Utc};
use shardlog::store::exchange::ImportOptions;
use shardlog::store::model::*;
use shardlog::store::{analysis, MaterialBook, Store};
use shardlog_core::fracture::materials::{self, Constant, Provenance};
use shardlog_core::units::Dimension;

fn run(db: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .arg("--db")
        .arg(db)
        .args(args)
        .env("SHARDLOG_USER", "Ilse Marrow-Quint")
        .env("SHARDLOG_KEY_DIR", db.with_extension("keys"))
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

fn fresh() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("x.db");
    assert!(run(&db, &["init"]).status.success());
    (dir, db)
}

/// (op, after) of every audit row of `entity`, oldest first.
fn audit_of(db: &Path, entity: &str) -> Vec<(String, Option<String>)> {
    let c = rusqlite::Connection::open(db).unwrap();
    let mut st = c
        .prepare("SELECT op, after FROM audit WHERE entity = ?1 ORDER BY seq")
        .unwrap();
    st.query_map([entity], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap()
}

fn audit_count(db: &Path) -> i64 {
    rusqlite::Connection::open(db)
        .unwrap()
        .query_row("SELECT count(*) FROM audit", [], |r| r.get(0))
        .unwrap()
}

fn add_lab_float(db: &Path) {
    let o = run(
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
    assert!(o.status.success(), "{}", text(&o));
}

#[test]
fn an_own_material_is_added_shown_edited_and_audited() {
    let (_d, db) = fresh();
    add_lab_float(&db);
    let show = text(&run(&db, &["materials", "show", "lab_float"]));
    assert!(
        show.contains("own material, revision 1, copied from the library's soda-lime"),
        "{show}"
    );
    assert!(show.contains("A_i   2.05 MPa·√m ± 0.0600 MPa·√m"), "{show}");
    assert!(
        show.contains("user: four-point bends of the Harrowgate batch"),
        "{show}"
    );
    // the copied constants keep the library's provenance
    assert!(show.contains("published: EN 572-1"), "{show}");

    let o = run(
        &db,
        &[
            "materials",
            "edit",
            "lab_float",
            "--expansion",
            "8.8 ppm/K",
            "--density",
            "2.49 g/cm³",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    assert!(text(&o).contains("revision 2"), "{}", text(&o));

    // one insert and one update of the material, each image carrying its revision
    let rows = audit_of(&db, "material");
    assert_eq!(rows.len(), 2, "{rows:?}");
    assert_eq!(rows[0].0, "insert");
    assert_eq!(rows[1].0, "update");
    let after: serde_json::Value = serde_json::from_str(rows[1].1.as_deref().unwrap()).unwrap();
    assert_eq!(after["revision"], 2);
    assert_eq!(after["code"], "lab_float");
    // the code is a material lookup entry, so records can name it
    let lookups = audit_of(&db, "lookup");
    assert!(
        lookups
            .iter()
            .any(|(_, a)| a.as_deref().is_some_and(|a| a.contains("lab_float"))),
        "no lookup entry for lab_float"
    );

    // listed beside the library, marked
    let list = text(&run(&db, &["materials"]));
    assert!(list.contains("lab_float (own)"), "{list}");
    assert!(
        list.contains("own, revision 2, copied from soda-lime"),
        "{list}"
    );
    let json: serde_json::Value =
        serde_json::from_slice(&run(&db, &["materials", "--json"]).stdout).unwrap();
    let own = &json["own_materials"][0];
    assert_eq!(own["material"]["expansion"]["value"], 8.8e-6);
    assert_eq!(own["material"]["density"]["value"], 2490.0);

    let v = run(&db, &["verify"]);
    assert!(v.status.success(), "{}", text(&v));
    // a constant changed behind shardlog's back no longer matches its audited image
    let n = rusqlite::Connection::open(&db)
        .unwrap()
        .execute(
            "UPDATE own_materials SET body = replace(body, '\"glass\":true', '\"glass\":false')",
            [],
        )
        .unwrap();
    assert_eq!(n, 1);
    let body: String = rusqlite::Connection::open(&db)
        .unwrap()
        .query_row("SELECT body FROM own_materials", [], |r| r.get(0))
        .unwrap();
    assert!(body.contains("\"glass\":false"), "{body}");
    let v = run(&db, &["verify"]);
    assert_eq!(v.status.code(), Some(1), "{}", text(&v));
    assert!(text(&v).contains("material"), "{}", text(&v));
}

#[test]
fn a_library_material_can_only_be_copied_and_refusals_write_nothing() {
    let (_d, db) = fresh();
    add_lab_float(&db);
    let before = audit_count(&db);
    for (args, expected) in [
        (
            vec!["materials", "edit", "soda-lime", "--a-i", "2 MPa√m"],
            "soda-lime is a library material and cannot be changed; copy it with `shardlog materials add NEW_CODE --from soda-lime`",
        ),
        (
            vec!["materials", "add", "soda_lime", "--from", "soda-lime"],
            "material code: soda_lime is the library's soda-lime",
        ),
        (
            vec!["materials", "add", "lab_float", "--from", "borosilicate"],
            "material lab_float already exists",
        ),
        (
            vec!["materials", "add", "Lab Float", "--name", "x"],
            "material code: \"Lab Float\" is not a code",
        ),
        (
            vec!["materials", "edit", "lab_float", "--poisson", "0.7"],
            "--poisson: '0.7' is outside the physical range of a Poisson's ratio; expected -1 to 0.5",
        ),
        (
            vec!["materials", "edit", "lab_float", "--k-ic", "0.8"],
            "--k-ic: '0.8' has no unit",
        ),
        (
            vec!["materials", "edit", "lab_float", "--expansion", "9 MPa"],
            "--expansion: '9 MPa': 'MPa' is not a unit of expansion coefficient",
        ),
        (
            vec!["materials", "add", "tile_x", "--a-o", "3 MPa√m"],
            "--name: a new material needs a name",
        ),
        (
            vec!["materials", "add", "tile_y", "--from", "alumina", "--name", "Soda-lime silicate glass"],
            "material name: \"Soda-lime silicate glass\" already names soda_lime",
        ),
        (
            vec!["materials", "edit", "no_such", "--a-i", "2 MPa√m"],
            "no own material \"no_such\"; the own materials are lab_float",
        ),
    ] {
        let o = run(&db, &args);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", text(&o));
        assert!(text(&o).contains(expected), "{args:?}: {}", text(&o));
    }
    assert_eq!(audit_count(&db), before, "a refusal wrote to the audit log");
    // every library material can be copied as it is (dense alumina's E, 380 GPa, lies above
    // the range of a stress: a modulus has its own)
    for (i, key) in materials::keys().iter().enumerate() {
        let code = format!("copy_{i}");
        let o = run(&db, &["materials", "add", &code, "--from", key]);
        assert!(o.status.success(), "{key}: {}", text(&o));
    }
    let o = run(
        &db,
        &["materials", "edit", "copy_0", "--youngs-modulus", "380 GPa"],
    );
    assert!(o.status.success(), "{}", text(&o));
}

#[test]
fn mirror_and_load_use_an_own_material_like_a_library_one() {
    let (_d, db) = fresh();
    add_lab_float(&db);
    let o = run(
        &db,
        &["materials", "edit", "lab_float", "--expansion", "8.8 ppm/K"],
    );
    assert!(o.status.success(), "{}", text(&o));
    // computed: σ = A_i / √R = 2.05 MPa·√m / √(1.2 mm) = 2.05 / 0.034641 = 59.18 MPa
    let o = run(
        &db,
        &[
            "mirror",
            "--material",
            "lab_float",
            "--boundary",
            "mirror-mist",
            "--radius",
            "1.2mm",
            "--json",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let stress = v["analysis"]["stress_pa"]
        .as_f64()
        .or_else(|| v["stress_pa"].as_f64())
        .unwrap_or_else(|| panic!("no stress in {v}"));
    assert!((stress / 1e6 - 59.18).abs() < 0.01, "{stress}");
    // computed: σ = k E α ΔT = 1 × 70 GPa × 8.8e-6 /K × 40 K = 24.64 MPa (the library's
    // soda-lime, 9e-6 /K, gives 25.2 MPa)
    let o = run(
        &db,
        &[
            "load",
            "thermal",
            "--material",
            "lab_float",
            "--delta-t",
            "40K",
        ],
    );
    assert!(o.status.success(), "{}", text(&o));
    assert!(text(&o).contains("24.6 MPa"), "{}", text(&o));
    // an unknown code lists the library and the own materials
    let o = run(
        &db,
        &[
            "mirror",
            "--material",
            "lab_flaot",
            "--boundary",
            "mirror-mist",
            "--radius",
            "1mm",
        ],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o).contains("aluminum-oxynitride, lab_float"),
        "{}",
        text(&o)
    );
}

fn at(s: &str) -> Stamp {
    Stamp::new(
        "Ilse Marrow-Quint",
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc),
    )
}

fn own_soda(a_i_mpa: f64) -> materials::Material {
    let mut m = materials::find("soda-lime").unwrap();
    m.name = "float glass, Harrowgate batch".into();
    m.a_i = Some(Constant {
        value: a_i_mpa * 1e6,
        spread: Some(0.06e6),
        provenance: Provenance::User {
            note: "four-point bends".into(),
        },
    });
    m
}

fn incident_on(material: &str) -> Incident {
    let mut inc = Incident::draft(NaiveDate::from_ymd_opt(2026, 6, 3).unwrap());
    inc.position = "north bay, pane 4".into();
    inc.examinations.push(Examination {
        analyst: "Ilse Marrow-Quint".into(),
        material: Some(material.into()),
        readings: vec![MirrorReading {
            boundary: "mirror_mist".into(),
            radius: Measured::parse("1.2 mm", Dimension::Length).unwrap(),
            magnification: None,
            analyst: "Ilse Marrow-Quint".into(),
            note: String::new(),
            viewing: None,
        }],
        ..Examination::empty()
    });
    inc
}

#[test]
fn a_stored_result_keeps_its_constants_when_the_own_material_changes_later() {
    let dir = tempfile::tempdir().unwrap();
    let mut s = Store::open(&dir.path().join("b.db")).unwrap();
    s.add_own_material(
        "lab_float",
        Some("soda-lime"),
        &own_soda(2.05),
        &at("2026-06-01T09:00:00Z"),
    )
    .unwrap();
    let book = s.material_book().unwrap();
    let mut inc = incident_on("lab_float");
    let r = analysis::compute(
        &inc,
        &inc.examinations[0],
        at("2026-06-03T10:00:00Z").at,
        &book,
    )
    .unwrap();
    // computed: 2.05 MPa·√m / √(1.2 mm) = 59.18 MPa
    assert!(
        (r.stress_pa.unwrap() / 1e6 - 59.18).abs() < 0.01,
        "{:?}",
        r.stress_pa
    );
    assert_eq!(r.analysis["own_material"]["revision"], 1);
    inc.examinations[0].result = Some(r);
    let saved = s
        .create_incident(&inc, &at("2026-06-03T10:00:00Z"))
        .unwrap();
    assert!(s.verify().unwrap().ok());

    // the lab corrects its constant; the earlier examination still verifies
    s.update_own_material(
        "lab_float",
        Some(1),
        &own_soda(2.4),
        &at("2026-06-10T09:00:00Z"),
    )
    .unwrap();
    let report = s.verify().unwrap();
    assert!(report.ok(), "{report:?}");

    // without the constants it kept, the same result would not follow from today's material:
    // the kept copy is what spares it
    let book = s.material_book().unwrap();
    let stored = s.get(&saved.id).unwrap();
    let mut bare = stored.clone();
    if let Some(r) = bare.examinations[0].result.as_mut() {
        r.analysis.as_object_mut().unwrap().remove("own_material");
    }
    let why = analysis::stored_result_differs(&bare, &bare.examinations[0], &book);
    assert!(
        why.as_deref().is_some_and(|w| w.contains("net stress")),
        "{why:?}"
    );
    assert_eq!(
        analysis::stored_result_differs(&stored, &stored.examinations[0], &book),
        None
    );

    // a new computation (the report's, the bench's) uses the current revision:
    // computed 2.4 / √(1.2 mm) = 69.28 MPa
    let a =
        shardlog::report::source::analyze_exam(&stored, &stored.examinations[0], &book).unwrap();
    assert!((a.stress_pa / 1e6 - 69.28).abs() < 0.01, "{}", a.stress_pa);
    // and the library alone does not know the code
    assert!(shardlog::report::source::analyze_exam(
        &stored,
        &stored.examinations[0],
        &MaterialBook::library_only()
    )
    .unwrap_err()
    .contains("neither in the material library nor an own material"));
}

#[test]
fn the_csv_import_computes_with_an_own_material_and_accepts_its_name() {
    let mut s = Store::open_in_memory().unwrap();
    s.add_own_material(
        "lab_float",
        Some("soda-lime"),
        &own_soda(2.05),
        &at("2026-06-01T09:00:00Z"),
    )
    .unwrap();
    // the material cell by code on one line, by its name (the lookup label) on the other
    let csv = "found_on,asset,position,material,mirror_mist\n\
               2026-06-04,,bay 1,lab_float,1.2 mm\n\
               2026-06-05,,bay 2,\"float glass, Harrowgate batch\",1.2 mm\n";
    s.import_bytes(
        "own.csv",
        csv.as_bytes(),
        ImportOptions::default(),
        &at("2026-06-06T08:00:00Z"),
    )
    .unwrap()
    .unwrap_or_else(|rej| panic!("{:?}", rej.problems));
    for id in s.matching_ids(&Default::default()).unwrap() {
        let inc = s.get(&id).unwrap();
        let e = &inc.examinations[0];
        assert_eq!(e.material.as_deref(), Some("lab_float"));
        let r = e.result.as_ref().expect("computed on import");
        // computed: 2.05 / √(1.2 mm) = 59.18 MPa
        assert!(
            (r.stress_pa.unwrap() / 1e6 - 59.18).abs() < 0.01,
            "{:?}",
            r.stress_pa
        );
        assert_eq!(r.analysis["own_material"]["code"], "lab_float");
    }
    assert!(s.verify().unwrap().ok());
}

#[test]
fn an_own_material_reaches_the_fleet_as_an_audited_record() {
    use crate::fleet_sync::{demo_bench, sync_ok, TestFleet};
    let cluster = crate::support::fleet::Cluster::shared();
    let fleet = TestFleet::new(cluster);
    let dir = tempfile::tempdir().unwrap();
    let db = demo_bench(dir.path(), "LARKSPUR", 2);
    add_lab_float(&db);
    let o = run(
        &db,
        &["materials", "edit", "lab_float", "--density", "2490 kg/m³"],
    );
    assert!(o.status.success(), "{}", text(&o));
    sync_ok(&db, &fleet.bench_url("LARKSPUR"));
    let mut c = fleet.admin();
    let rows = c
        .query(
            "SELECT image, origin FROM fleet_records WHERE entity = 'material'",
            &[],
        )
        .unwrap();
    assert_eq!(rows.len(), 1);
    let image: String = rows[0].get(0);
    let origin: String = rows[0].get(1);
    assert_eq!(origin, "LARKSPUR");
    let v: serde_json::Value = serde_json::from_str(&image).unwrap();
    assert_eq!(v["code"], "lab_float");
    assert_eq!(v["revision"], 2);
    // both revisions are in the chain the fleet witnessed
    assert_eq!(
        fleet.count("SELECT count(*) FROM bench_chain WHERE entity = 'material'"),
        2
    );
}
