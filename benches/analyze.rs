//! How long one `fracture::analyze` call takes (the bench calculator calls it per keystroke).
//! Run: `cargo bench --bench analyze`. Prints the mean time per call for three typical inputs.

use std::hint::black_box;
use std::time::Instant;

use shardlog_core::fracture::{
    analyze, materials, AnalysisInput, Boundary, FlawGeometry, LayerProfile, Origin, Temper,
};
use shardlog_core::loads::plates::{self, Edges, Plate, PlateLoad, Shape};
use shardlog_core::loads::Elastic;

/// Mean time of one plate call over `n` calls.
fn time_plate(label: &str, plate: &Plate, n: usize) {
    for _ in 0..3 {
        black_box(plates::bend(black_box(plate)).ok());
    }
    let t0 = Instant::now();
    for _ in 0..n {
        black_box(plates::bend(black_box(plate)).ok());
    }
    let per = t0.elapsed().as_secs_f64() / n as f64;
    println!("{label:<48} {:>8.2} µs per call", per * 1e6);
}

fn plates_timing() {
    let glass = Elastic {
        youngs_modulus: 72e9,
        poisson: 0.22,
    };
    let plate = |edges, b: f64, load| Plate {
        shape: Shape::Rectangular,
        edges,
        span: 1.0,
        span_b: Some(b),
        thickness: 0.01,
        material: glass,
        load,
    };
    let patch = PlateLoad::Patch {
        force: 1000.0,
        diameter: 0.01,
    };
    let q = PlateLoad::Pressure(1000.0);
    time_plate(
        "plate: clamped, uniform, b/a 1.5",
        &plate(Edges::Clamped, 1.5, q),
        200,
    );
    time_plate(
        "plate: clamped, uniform, b/a 6 (largest series)",
        &plate(Edges::Clamped, 6.0, q),
        50,
    );
    time_plate(
        "plate: clamped, 10 mm patch, b/a 2",
        &plate(Edges::Clamped, 2.0, patch),
        200,
    );
    time_plate(
        "plate: simply supported, 10 mm patch, b/a 2",
        &plate(Edges::SimplySupported, 2.0, patch),
        50,
    );
}

fn time(label: &str, input: &AnalysisInput) {
    time_n(label, input, 200_000);
}

fn time_n(label: &str, input: &AnalysisInput, n: usize) {
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

    let mut chemical =
        AnalysisInput::new(materials::find("aluminosilicate-chem").expect("library"))
            .with_readings(Boundary::MirrorMist, &[0.05e-3]);
    chemical.temper = Some(Temper::ChemicallyStrengthened);
    chemical.surface_compression_pa = Some(700e6);
    chemical.layer_depth_m = Some(40e-6);
    chemical.thickness_m = Some(0.7e-3);
    chemical.origin = Origin::Interior;
    time_n(
        "chemically strengthened, interior, linear layer",
        &chemical,
        20_000,
    );
    chemical.layer_profile = Some(LayerProfile::Erfc);
    time_n(
        "chemically strengthened, interior, erfc layer",
        &chemical,
        2_000,
    );
    plates_timing();

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
