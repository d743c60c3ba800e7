//! How long the calls added for chemically strengthened glass and the plate calls take: the
//! bench calculator and the hypothesis panel call them on every keystroke.
//! Run: `cargo bench -p shardlog-core --bench keystroke` (the core alone, in release).

use std::hint::black_box;
use std::time::Instant;

use shardlog_core::fracture::{
    analyze, materials, AnalysisInput, Boundary, LayerProfile, Origin, Temper,
};
use shardlog_core::loads::plates::{self, Edges, Plate, PlateLoad, Shape};
use shardlog_core::loads::Elastic;

fn report(label: &str, n: usize, f: impl Fn()) {
    for _ in 0..3 {
        f();
    }
    let t0 = Instant::now();
    for _ in 0..n {
        f();
    }
    let per = t0.elapsed().as_secs_f64() / n as f64;
    println!("{label:<52} {:>9.2} µs per call", per * 1e6);
}

fn main() {
    let mut chemical =
        AnalysisInput::new(materials::find("aluminosilicate-chem").expect("library"))
            .with_readings(Boundary::MirrorMist, &[0.05e-3]);
    chemical.temper = Some(Temper::ChemicallyStrengthened);
    chemical.surface_compression_pa = Some(700e6);
    chemical.layer_depth_m = Some(40e-6);
    chemical.thickness_m = Some(0.7e-3);
    chemical.origin = Origin::Interior;
    report(
        "mirror: chemically strengthened, linear layer",
        20_000,
        || {
            black_box(analyze(black_box(&chemical)).ok());
        },
    );
    let mut erfc = chemical.clone();
    erfc.layer_profile = Some(LayerProfile::Erfc);
    report("mirror: chemically strengthened, erfc layer", 2_000, || {
        black_box(analyze(black_box(&erfc)).ok());
    });

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
    for (label, p, n) in [
        (
            "plate: clamped, uniform, b/a 1.5",
            plate(Edges::Clamped, 1.5, q),
            2000,
        ),
        (
            "plate: clamped, uniform, b/a 6 (longest tabulated)",
            plate(Edges::Clamped, 6.0, q),
            2000,
        ),
        (
            "plate: clamped, 10 mm patch, b/a 2",
            plate(Edges::Clamped, 2.0, patch),
            2000,
        ),
        (
            "plate: simply supported, uniform, b/a 1.5",
            plate(Edges::SimplySupported, 1.5, q),
            200,
        ),
        (
            "plate: simply supported, 10 mm patch, b/a 2",
            plate(Edges::SimplySupported, 2.0, patch),
            300,
        ),
        (
            "plate: simply supported, 10 mm patch, b/a 6",
            plate(Edges::SimplySupported, 6.0, patch),
            300,
        ),
        (
            "plate: simply supported, 10 mm patch, b/a 20",
            plate(Edges::SimplySupported, 20.0, patch),
            300,
        ),
        (
            "plate: clamped, 10 mm patch, b/a 4.25",
            plate(Edges::Clamped, 4.25, patch),
            2000,
        ),
    ] {
        report(label, n, || {
            black_box(plates::bend(black_box(&p)).ok());
        });
    }
}
