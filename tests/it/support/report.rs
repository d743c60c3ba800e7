//! Shared by the report tests: a document that uses every block kind, optionally with the
//! hostile texts and files of issue 6 (invented names only).

use std::sync::Arc;

use shardlog::report::chart::{Chart, WeibullSeries};
use shardlog::report::doc::{Block, Document, Table};
use shardlog::report::image::Picture;
use shardlog_core::canonical::sha256_hex;

pub fn fixture(name: &str) -> Vec<u8> {
    std::fs::read(format!(
        "{}/tests/fixtures/{name}",
        env!("CARGO_MANIFEST_DIR")
    ))
    .unwrap()
}

pub fn picture(name: &str, caption: &str, bytes: Vec<u8>) -> Picture {
    let sha = sha256_hex(&bytes);
    Picture::new(name, &sha, caption, Arc::new(bytes))
}

pub const HOSTILE_NOTE: &str = "Note <script>alert('x')</script> from O'Brien & \"Sons\" — \
     <img src=x onerror=alert(1)> | pipes | *stars* [link](http://example.invalid) \
     עברית: שלום עולם, عربي: مرحبا, emoji 😀🧪✅ and µ σ √ °";

pub fn sample_document(hostile: bool) -> Document {
    let mut d = Document::new(
        "Incident summary",
        "TST-0001",
        "Exported 2027-03-14 10:00 UTC by shardlog 0.1.0",
    );
    d.heading("Identification");
    d.kv(vec![
        ("Reference".into(), "TST-0001".into()),
        ("Asset".into(), "Car 214, left side, bay 3".into()),
        ("Site".into(), "North depot".into()),
        ("Found".into(), "2027-03-14, overnight low −4 °C".into()),
        ("Supplier".into(), "Ünterlinde Glasbau".into()),
    ]);
    d.heading("Computation");
    d.para(
        "Mirror-constant relation σ = A / √R, mirror–mist constant A = 1.95 MPa·√m \
         (spread 0.1 MPa·√m), radius 850 µm, stress 66.9 MPa (95 % interval 61.2–72.6 MPa).",
    );
    let mut t = Table::new(&[
        "Reading no.",
        "Boundary",
        "Radius",
        "Magnification",
        "Analyst",
    ])
    .numeric(&[0, 2, 3]);
    for i in 1..=120 {
        t.row(vec![
            i.to_string(),
            format!("row {i} mirror–mist"),
            format!("{:.0} µm", 800.0 + f64::from(i)),
            "×20".into(),
            "R. Quennell".into(),
        ]);
    }
    d.push(Block::Table(t));
    d.push(Block::Figure {
        chart: Chart::Histogram {
            x_label: "Applied stress (MPa)".into(),
            y_label: "incidents".into(),
            bins: (0..8)
                .map(|i| {
                    (
                        f64::from(i) * 10.0,
                        f64::from(i + 1) * 10.0,
                        (i * 7 % 5 + 1) as u32,
                    )
                })
                .collect(),
            marker: Some((43.0, "this incident".into())),
        },
        caption: "Back-calculated applied stress of the supplier's incidents".into(),
    });
    d.push(Block::Figure {
        chart: Chart::Weibull {
            x_label: "Applied stress (MPa)".into(),
            series: vec![
                WeibullSeries {
                    name: "Ünterlinde Glasbau".into(),
                    points: (1..=12)
                        .map(|i| (20.0 + 4.0 * f64::from(i), (f64::from(i) - 0.3) / 12.4))
                        .collect(),
                    fit: Some((4.5, 48.0)),
                },
                WeibullSeries {
                    name: "other suppliers".into(),
                    points: (1..=20)
                        .map(|i| (40.0 + 5.0 * f64::from(i), (f64::from(i) - 0.3) / 20.4))
                        .collect(),
                    fit: Some((5.2, 95.0)),
                },
            ],
        },
        caption: "Weibull probability plot".into(),
    });
    d.push(Block::Figure {
        chart: Chart::Bars {
            x_label: "incidents".into(),
            bars: vec![
                ("lot 24-117 · inclusion".into(), 4.0),
                ("lot 24-090 · thermal stress".into(), 2.0),
            ],
        },
        caption: "Causes by lot".into(),
    });
    d.push(Block::Picture(picture(
        "origin-x20.png",
        "origin at the edge, ×20",
        fixture("mirror-origin.png"),
    )));
    d.push(Block::Picture(picture(
        "origin-x20.jpg",
        "the same origin, JPEG",
        fixture("mirror-origin.jpg"),
    )));
    if hostile {
        d.heading("Notes <script>alert(1)</script>");
        d.para(HOSTILE_NOTE);
        d.para(format!("long line: {}", "y".repeat(10_000)));
        let mut t = Table::new(&["Field", "Value"]);
        t.row(vec![HOSTILE_NOTE.into(), "z".repeat(10_000)]);
        d.push(Block::Table(t));
        d.kv(vec![(HOSTILE_NOTE.into(), HOSTILE_NOTE.into())]);
        d.push(Block::Picture(picture(
            "photo.jpg",
            "a file named like a photo <b>",
            b"<script>alert('not a photo')</script>".to_vec(),
        )));
    }
    d.push(Block::Boxed {
        title: "Cautions".into(),
        lines: vec!["Broken glass cuts.".into()],
    });
    d.proof = vec![
        ("Content SHA-256".into(), "0".repeat(64)),
        ("Audit-chain head".into(), "f".repeat(64)),
    ];
    d
}

// ---- a database with invented suppliers and incidents, through the store's own API ----

use chrono::{DateTime, Duration, NaiveDate, Utc};
use shardlog::store::{
    self, ComputedResult, Exposure, Incident, Measured, MirrorReading, Stamp, Store, Supplier,
};
use shardlog_core::units::Dimension;

pub fn at(s: &str) -> DateTime<Utc> {
    DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc)
}

pub fn day(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap()
}

pub struct Demo {
    pub store: Store,
    pub db: std::path::PathBuf,
    /// references of the claimed supplier's incidents
    pub claimed: Vec<String>,
    pub hostile: Option<String>,
}

pub const CLAIMED: &str = "VELMARA";

/// Suppliers VELMARA (claimed; `n_claimed` incidents, lot 24-117 weak) and TORSUND
/// (`n_other`), with exposure rows, readings, saved computations, causes, custody, photos.
pub fn demo_db(dir: &std::path::Path, n_claimed: usize, n_other: usize, hostile: bool) -> Demo {
    let db = dir.join("bench.db");
    let mut s = Store::open(&db).unwrap();
    s.set_id_seed(7);
    let st = |t: &str| Stamp::new("ines", at(t));
    s.add_supplier(
        &Supplier {
            id: String::new(),
            code: CLAIMED.into(),
            name: "Velmara Glassworks".into(),
        },
        &st("2026-01-02T08:00:00Z"),
    )
    .unwrap();
    s.add_supplier(
        &Supplier {
            id: String::new(),
            code: "TORSUND".into(),
            name: "Torsund Panes".into(),
        },
        &st("2026-01-02T08:00:00Z"),
    )
    .unwrap();
    for (sup, panes) in [(CLAIMED, 1200), ("TORSUND", 2400)] {
        s.add_exposure(
            &Exposure {
                id: String::new(),
                supplier: sup.into(),
                product: None,
                lot: None,
                site: None,
                installed_on: day(2024, 1, 1),
                removed_on: None,
                panes,
            },
            &st("2026-01-02T08:00:00Z"),
        )
        .unwrap();
    }
    let photo_png = fixture("mirror-origin.png");
    let photo_jpg = fixture("mirror-origin.jpg");
    let mut claimed = Vec::new();
    let total = n_claimed + n_other;
    for i in 0..total {
        let is_claimed = i < n_claimed;
        let (sup, lot) = if is_claimed {
            (CLAIMED, if i % 3 == 0 { "24-117" } else { "24-090" })
        } else {
            ("TORSUND", "T-881")
        };
        let found = day(2026, 1, 1) + Duration::days((i % 300) as i64);
        let mut inc = Incident::draft(found);
        inc.asset = Some(format!("car {}", 200 + i % 40));
        inc.position = "left side, bay 3".into();
        inc.site = Some("north-depot".into());
        inc.environment.temperature_c = Some(-4.0);
        inc.environment.sun = "sunny afternoon".into();
        inc.reporter = "depot staff".into();
        inc.how_found = "found broken at the morning check".into();
        inc.glass.supplier = Some(sup.into());
        inc.glass.product = Some("SIDE-6T".into());
        inc.glass.lot = Some(lot.into());
        inc.glass.plies.push(store::Ply {
            material: Some("soda_lime".into()),
            temper: Some(
                if is_claimed {
                    "fully_tempered"
                } else {
                    "annealed"
                }
                .into(),
            ),
            thickness_m: Some(0.006),
            coating: String::new(),
            edge_finish: "arrissed".into(),
        });
        inc.pattern.origin_location = Some(if i % 3 == 0 { "interior" } else { "edge" }.into());
        inc.pattern.crack_count = Some(3 + (i % 5) as i64);
        inc.description = "crack running square to the edge, no chip".into();
        // mirror radii: weak lot breaks at lower stress (larger mirror)
        let base = if is_claimed && i % 3 == 0 { 2.4 } else { 0.9 };
        let r = base * (1.0 + 0.35 * ((i * 37 % 17) as f64 / 17.0));
        let readings = vec![
            MirrorReading {
                boundary: "mirror_mist".into(),
                radius: Measured::parse(&format!("{:.3} mm", r), Dimension::Length).unwrap(),
                magnification: Some(20.0),
                analyst: "R. Quennell".into(),
                note: String::new(),
                viewing: None,
            },
            MirrorReading {
                boundary: "mirror_mist".into(),
                radius: Measured::parse(&format!("{:.3} mm", r * 1.04), Dimension::Length).unwrap(),
                magnification: Some(20.0),
                analyst: "R. Quennell".into(),
                note: String::new(),
                viewing: None,
            },
        ];
        let mut exam = store::Examination {
            id: String::new(),
            examined_on: Some(found),
            analyst: "R. Quennell".into(),
            origin_type: Some(
                if i % 3 == 0 {
                    "inclusion_nis"
                } else {
                    "edge_cutting_damage"
                }
                .into(),
            ),
            material: Some("soda_lime".into()),
            readings,
            flaw: None,
            result: None,
            notes: String::new(),
        };
        if hostile && i == 0 {
            exam.notes = HOSTILE_NOTE.to_string();
        }
        let a = shardlog::report::source::analyze_exam(
            &inc,
            &exam,
            &shardlog::store::MaterialBook::library_only(),
        )
        .unwrap();
        exam.result = Some(ComputedResult {
            computed_at: at("2026-03-14T10:00:00Z"),
            code_version: store::CODE_VERSION.into(),
            stress_pa: Some(a.stress_pa),
            stress_low_pa: Some(a.stress_low_pa),
            stress_high_pa: Some(a.stress_high_pa),
            residual_pa: Some(a.residual.at_origin_pa),
            applied_stress_pa: Some(a.applied_stress_pa),
            flaw_size_m: a.flaw.as_ref().map(|f| f.size_m),
            constants: serde_json::json!({}),
            analysis: serde_json::to_value(&a).unwrap(),
        });
        inc.examinations.push(exam);
        inc.cause = Some(store::Cause {
            category: if i % 3 == 0 {
                "nickel_sulfide"
            } else {
                "thermal"
            }
            .into(),
            factors: vec!["sunny afternoon, cold night".into()],
            confidence: "probable".into(),
            responsibility: if i % 3 == 0 {
                "supplier"
            } else {
                "undetermined"
            }
            .into(),
            note: String::new(),
        });
        inc.status = "cause_assigned".into();
        if hostile && i == 0 {
            inc.notes = format!("{HOSTILE_NOTE}\n{}", "w".repeat(10_000));
            inc.position = "bay <b>3</b> & \"left\"".into();
        }
        let t = format!("2026-03-14T09:{:02}:00Z", i % 60);
        let saved = s.create_incident(&inc, &st(&t)).unwrap();
        s.add_custody(
            &saved.reference,
            &store::CustodyEntry {
                id: String::new(),
                at: at("2026-03-14T09:10:00Z"),
                action: "received".into(),
                who: "depot staff".into(),
                location: "shelf B".into(),
                note: String::new(),
            },
            &st(&t),
        )
        .unwrap();
        if i < 3 || (is_claimed && i % 25 == 0) {
            s.add_attachment_bytes(
                &saved.reference,
                "origin-x20.png",
                &photo_png,
                "origin, ×20",
                &st(&t),
            )
            .unwrap();
            s.add_attachment_bytes(
                &saved.reference,
                "origin-x20.jpg",
                &photo_jpg,
                "origin, JPEG",
                &st(&t),
            )
            .unwrap();
        }
        if hostile && i == 0 {
            s.add_attachment_bytes(
                &saved.reference,
                "photo.jpg",
                b"<script>alert('not a photo')</script>",
                "a \"photo\" that is not <b>one</b>",
                &st(&t),
            )
            .unwrap();
        }
        if is_claimed {
            claimed.push(saved.reference.clone());
        }
    }
    let hostile_ref = if hostile {
        claimed.first().cloned()
    } else {
        None
    };
    Demo {
        store: s,
        db,
        claimed,
        hostile: hostile_ref,
    }
}
