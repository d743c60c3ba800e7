//! Shared by the report tests: a document that uses every block kind, optionally with the
//! hostile texts and files of issue 6 (invented names only).
#![allow(dead_code)]

use std::sync::Arc;

use shardlog::report::canonical::sha256_hex;
use shardlog::report::chart::{Chart, WeibullSeries};
use shardlog::report::doc::{Block, Document, Table};
use shardlog::report::image::Picture;

pub fn fixture(name: &str) -> Vec<u8> {
    std::fs::read(format!("{}/tests/fixtures/{name}", env!("CARGO_MANIFEST_DIR"))).unwrap()
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
    let mut t = Table::new(&["Reading no.", "Boundary", "Radius", "Magnification", "Analyst"])
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
                .map(|i| (f64::from(i) * 10.0, f64::from(i + 1) * 10.0, (i * 7 % 5 + 1) as u32))
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
