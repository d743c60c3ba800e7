//! `shardlog report` from outside: a database made through the store's API, the real
//! binary, every format read back (PDF through pdftotext).

use std::path::Path;
use std::process::Command;

use crate::support::report::*;
use shardlog::report::summary::SummaryJson;
use shardlog_core::canonical::{self, Numbers};

fn shardlog(db: &Path, args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_shardlog"))
        // the signing key of a test database stays beside it, not in the user's data folder
        .env("SHARDLOG_KEY_DIR", db.with_extension("keys"))
        .arg("--db")
        .arg(db)
        .args(args)
        .output()
        .expect("the binary runs")
}

fn pdftotext(pdf: &Path) -> String {
    let o = Command::new("pdftotext")
        .args(["-enc", "UTF-8", "-layout"])
        .arg(pdf)
        .arg("-")
        .output()
        .expect("pdftotext runs (poppler-utils)");
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        o.status.success() && !err.contains("rror"),
        "pdftotext: {err}"
    );
    String::from_utf8(o.stdout).unwrap()
}

/// Words a claims engineer must never have to explain away.
const NEVER: &[&str] = &[
    "NaN",
    "null",
    "None",
    "Some(",
    "mirror_mist",
    "edge_cutting_damage",
    "soda_lime",
    "fully_tempered",
    "cause_assigned",
    "nickel_sulfide",
    "inclusion_nis",
    "origin_type",
    "stress_pa",
    "hard_contact",
    "edge_damage",
    "rail_car",
    "third_party",
    "impact_site",
    "heat_strengthened",
];

#[test]
fn summaries_of_demo_incidents_in_every_format() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 4, 2, false);
    let reference = demo.claimed[0].clone();
    drop(demo.store);
    let out = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join("summary");
    std::fs::create_dir_all(&out).unwrap();

    for (fmt, ext) in [
        ("pdf", "pdf"),
        ("html", "html"),
        ("md", "md"),
        ("json", "json"),
    ] {
        let file = out.join(format!("{reference}.{ext}"));
        let o = shardlog(
            &demo.db,
            &[
                "report",
                &reference,
                "--format",
                fmt,
                "-o",
                file.to_str().unwrap(),
            ],
        );
        assert!(
            o.status.success(),
            "report --format {fmt}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        assert!(String::from_utf8_lossy(&o.stdout).contains("content SHA-256"));
        let text = match fmt {
            "pdf" => pdftotext(&file),
            _ => std::fs::read_to_string(&file).unwrap(),
        };
        if fmt == "json" {
            let j: SummaryJson = serde_json::from_str(&text).unwrap();
            assert_eq!(
                canonical::digest(&j.content, Numbers::Shortest).unwrap(),
                j.proof.content_sha256,
                "the JSON's digest is the digest of its content"
            );
            assert!(j.content.examination.analysis.is_some());
            continue;
        }
        for section in [
            "Identification",
            "The glass",
            "Fracture pattern and origin",
            "Mirror readings as measured",
            "Computation, step by step",
            "Cross-checks",
            "Cause and conclusion",
            "Photos and attachments",
            "Specimen custody",
            "Case history",
            "Cautions",
            "Content SHA-256",
            "Audit-chain head at export",
        ] {
            assert!(text.contains(section), "{fmt}: section {section} missing");
        }
        for must in [
            "Velmara Glassworks (VELMARA)",
            "24-117",
            "fully tempered",
            "central tension",
            "mirror–mist",
            "MPa·√m",
            "95 % interval",
            "Residual-stress",
            "Applied stress",
            "nickel sulfide",
            "probable",
            "shelf B",
            "origin-x20.png",
            "Broken glass cuts",
        ] {
            assert!(text.contains(must), "{fmt}: {must} missing");
        }
        for never in NEVER {
            assert!(!text.contains(never), "{fmt}: {never} appears");
        }
        // the photo's hash is shown
        let sha = canonical::sha256_hex(&fixture("mirror-origin.png"));
        assert!(text.contains(&sha), "{fmt}: photo hash missing");
    }
    // an unknown reference is a clear failure, exit 1
    let o = shardlog(&demo.db, &["report", "BR-000000-0000", "-o", "/dev/null"]);
    assert_eq!(o.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&o.stderr).contains("BR-000000-0000"));
    // PDF to the terminal is refused as a usage error
    let o = shardlog(&demo.db, &["report", &reference]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn a_hostile_incident_is_safe_in_every_format() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = demo_db(tmp.path(), 1, 0, true);
    let reference = demo.hostile.clone().unwrap();
    drop(demo.store);
    let out = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("report")
        .join("summary");
    std::fs::create_dir_all(&out).unwrap();
    for fmt in ["pdf", "html", "md", "json"] {
        let file = out.join(format!("hostile.{fmt}"));
        let o = shardlog(
            &demo.db,
            &[
                "report",
                &reference,
                "--format",
                fmt,
                "-o",
                file.to_str().unwrap(),
            ],
        );
        assert!(
            o.status.success(),
            "{fmt}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        match fmt {
            "pdf" => {
                let t = pdftotext(&file);
                assert!(t.contains("<script>alert"));
                assert!(t.contains("Attachment not shown"));
                assert!(t.matches('w').count() >= 10_000);
            }
            "html" => {
                let h = std::fs::read_to_string(&file).unwrap();
                assert!(!h.contains("<script"));
                assert!(!h.contains("<b>3</b>") && h.contains("&lt;b&gt;3&lt;/b&gt;"));
                assert!(h.contains("O&#39;Brien &amp; &quot;Sons&quot;"));
                assert_eq!(h.matches("data:image/").count(), 2);
            }
            "md" => {
                let m = std::fs::read_to_string(&file).unwrap();
                assert!(!m.contains("<script") && !m.contains("<b>"));
            }
            _ => {
                let j: serde_json::Value =
                    serde_json::from_str(&std::fs::read_to_string(&file).unwrap()).unwrap();
                let notes = j["content"]["notes"][0]["text"].as_str().unwrap();
                assert!(
                    notes.starts_with(HOSTILE_NOTE),
                    "JSON keeps the text as it was"
                );
            }
        }
    }
}

#[test]
fn a_bare_incident_reads_plainly() {
    // only what the intake form requires: no readings, no cause, no photos, no custody
    let tmp = tempfile::tempdir().unwrap();
    let db = tmp.path().join("bare.db");
    let mut s = shardlog::store::Store::open(&db).unwrap();
    let inc = shardlog::store::Incident::draft(day(2027, 3, 14));
    let saved = s
        .create_incident(
            &inc,
            &shardlog::store::Stamp::new("mira", at("2027-03-14T09:10:00Z")),
        )
        .unwrap();
    drop(s);
    for fmt in ["pdf", "html", "md"] {
        let file = tmp.path().join(format!("bare.{fmt}"));
        let o = shardlog(
            &db,
            &[
                "report",
                &saved.reference,
                "--format",
                fmt,
                "--paper",
                "letter",
                "-o",
                file.to_str().unwrap(),
            ],
        );
        assert!(
            o.status.success(),
            "{fmt}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let text = if fmt == "pdf" {
            pdftotext(&file)
        } else {
            std::fs::read_to_string(&file).unwrap()
        };
        for must in [
            "No mirror readings were recorded",
            "No stress was computed",
            "not yet assigned",
            "No photos or files are attached",
            "No custody entries were recorded",
            "Cautions",
        ] {
            assert!(text.contains(must), "{fmt}: {must} missing");
        }
        for never in NEVER {
            assert!(!text.contains(never), "{fmt}: {never} appears");
        }
    }
}

#[test]
fn summaries_of_the_shipped_demo_fleet_in_every_format() {
    // the invented demo fleet of `shardlog demo`, as README's users first see it
    let tmp = tempfile::tempdir().unwrap();
    let db = tmp.path().join("demo.db");
    let o = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args(["demo", "--out", db.to_str().unwrap(), "--incidents", "60"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = shardlog(&db, &["list", "--json", "--limit", "60"]);
    assert!(o.status.success());
    let rows: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let rows = rows.as_array().unwrap();
    let with_stress = rows.iter().filter(|r| r["stress_mpa"].is_number()).take(3);
    let without = rows.iter().filter(|r| !r["stress_mpa"].is_number()).take(2);
    let mut n = 0;
    for r in with_stress.chain(without) {
        let reference = r["ref"].as_str().unwrap();
        for fmt in ["pdf", "html", "md", "json"] {
            let file = tmp.path().join(format!("{reference}.{fmt}"));
            let o = shardlog(
                &db,
                &[
                    "report",
                    reference,
                    "--format",
                    fmt,
                    "-o",
                    file.to_str().unwrap(),
                ],
            );
            assert!(
                o.status.success(),
                "{reference} {fmt}: {}",
                String::from_utf8_lossy(&o.stderr)
            );
            if fmt == "json" {
                continue;
            }
            let text = if fmt == "pdf" {
                pdftotext(&file)
            } else {
                std::fs::read_to_string(&file).unwrap()
            };
            assert!(text.contains("Computation, step by step") && text.contains("Cautions"));
            for never in NEVER {
                assert!(!text.contains(never), "{reference} {fmt}: {never} appears");
            }
        }
        n += 1;
    }
    assert_eq!(n, 5);
}

#[test]
fn the_fragmentation_check_and_the_viewing_mode_reach_every_format() {
    // a fully tempered 6 mm pane with 31 fragments in the 50 mm × 50 mm square: below the
    // minimum of 40 the table holds for 4 – 12 mm (EN 12150-1, from memory); one reading
    // viewed with the stereo microscope
    let tmp = tempfile::tempdir().unwrap();
    let db = tmp.path().join("frag.db");
    let mut s = shardlog::store::Store::open(&db).unwrap();
    let mut inc = shardlog::store::Incident::draft(day(2027, 3, 14));
    inc.glass.plies.push(shardlog::store::Ply {
        material: Some("soda_lime".into()),
        temper: Some("fully_tempered".into()),
        thickness_m: Some(0.006),
        coating: String::new(),
        edge_finish: String::new(),
    });
    inc.pattern.fragment_count = Some(31);
    let mut exam = shardlog::store::Examination::empty();
    exam.readings.push(shardlog::store::MirrorReading {
        boundary: "mirror_mist".into(),
        radius: shardlog::store::Measured::parse(
            "0.42 mm",
            shardlog_core::units::Dimension::Length,
        )
        .unwrap(),
        magnification: Some(20.0),
        analyst: "mira".into(),
        note: String::new(),
        viewing: Some("stereo".into()),
    });
    inc.examinations.push(exam);
    let saved = s
        .create_incident(
            &inc,
            &shardlog::store::Stamp::new("mira", at("2027-03-14T09:10:00Z")),
        )
        .unwrap();
    drop(s);
    for fmt in ["pdf", "html", "md"] {
        let file = tmp.path().join(format!("frag.{fmt}"));
        let o = shardlog(
            &db,
            &[
                "report",
                &saved.reference,
                "--format",
                fmt,
                "-o",
                file.to_str().unwrap(),
            ],
        );
        assert!(
            o.status.success(),
            "{fmt}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let text = if fmt == "pdf" {
            pdftotext(&file)
        } else {
            std::fs::read_to_string(&file).unwrap()
        };
        // pdftotext may break a long cell across lines: compare with the spaces squeezed
        let flat = text.split_whitespace().collect::<Vec<_>>().join(" ");
        for must in [
            "Fragmentation (EN 12150-1)",
            "fail: 31 fragments, minimum 40 for 4 – 12 mm",
            "from memory",
            "×20, stereo microscope",
        ] {
            assert!(flat.contains(must), "{fmt}: {must} missing:\n{text}");
        }
    }
    let t = String::from_utf8_lossy(&shardlog(&db, &["show", &saved.reference]).stdout).to_string();
    assert!(
        t.contains("fragments   31 fragments in 50 mm × 50 mm; minimum 40 for 4 – 12 mm (EN 12150-1, soda-lime float, from memory: check against your edition): fail"),
        "{t}"
    );
    assert!(t.contains("0.42 mm at 20.0×, stereo microscope"), "{t}");
}
