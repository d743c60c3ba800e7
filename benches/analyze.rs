//! How long one `fracture::analyze` call takes (the bench calculator calls it per keystroke).
//! Run: `cargo bench --bench analyze`. Prints the mean time per call for three typical inputs.

use std::hint::black_box;
use std::time::Instant;

use shardlog_core::fracture::{analyze, materials, AnalysisInput, Boundary, FlawGeometry, Temper};

fn time(label: &str, input: &AnalysisInput) {
    let n = 200_000;
    // warm up
    for _ in 0..1000 {
        black_box(analyze(black_box(input)).ok());
    }
    let t0 = Instant::now();
    for _ in 0..n {
        black_box(analyze(black_box(input)).ok());
    }
    let per = t0.elapsed().as_secs_f64() / n as f64;
    println!("{label:<48} {:>8.2} µs per call", per * 1e6);
}

fn main() {
    let soda = materials::find("soda-lime").expect("library");
    let one = AnalysisInput::new(soda.clone()).with_readings(Boundary::MirrorMist, &[1e-3]);
    time("one reading, defaults", &one);

    let mut full = AnalysisInput::new(soda)
        .with_readings(Boundary::MirrorMist, &[0.98e-3, 1.02e-3, 1.0e-3, 0.99e-3])
        .with_readings(Boundary::MistHackle, &[1.3e-3, 1.35e-3])
        .with_readings(Boundary::Branching, &[2.4e-3]);
    full.temper = Some(Temper::FullyTempered);
    full.surface_compression_pa = Some(95e6);
    full.thickness_m = Some(6e-3);
    full.measured_flaw_m = Some(90e-6);
    full.flaw = Some(FlawGeometry::SemiElliptical {
        a_over_c: 0.5,
        a_over_t: 0.0,
    });
    time("three boundaries, tempered, a/t solved", &full);

    let start = Instant::now();
    let lib = materials::library();
    let input = AnalysisInput::new(lib[0].clone()).with_readings(Boundary::MirrorMist, &[1e-3]);
    black_box(analyze(&input).ok());
    println!(
        "{:<48} {:>8.2} µs",
        "library() + one analysis, cold",
        start.elapsed().as_secs_f64() * 1e6
    );
}
