//! Residual stress at the origin for every temper and origin location: the signs of the
//! residual and of the applied stress are those of the force balance over the thickness, and
//! chemically strengthened glass takes its central tension from its thin layer.

use std::process::Command;

use shardlog_core::fracture::residual::{linear_central_tension, simpson};
use shardlog_core::fracture::{
    analyze, materials, AnalysisInput, Boundary, LayerProfile, OriginLocation, Profile, Temper,
};

/// Layer depth, thickness and shape of the compressive layer (m, m).
type Layer = Option<(f64, f64, LayerProfile)>;

/// An analysis of one mirror–mist radius with a temper, its surface compression and, for
/// chemically strengthened glass, its layer.
fn input(
    temper: Temper,
    location: OriginLocation,
    cs: f64,
    layer: Layer,
    radius: f64,
) -> AnalysisInput {
    let mut i = AnalysisInput::new(materials::find("aluminosilicate-chem").expect("in library"))
        .with_readings(Boundary::MirrorMist, &[radius]);
    i.temper = Some(temper);
    i.origin = location.origin();
    if temper != Temper::Annealed {
        i.surface_compression_pa = Some(cs);
    }
    if let Some((depth, thickness, shape)) = layer {
        i.layer_depth_m = Some(depth);
        i.thickness_m = Some(thickness);
        i.layer_profile = Some(shape);
    }
    i
}

#[test]
fn temper_by_origin_location_table() {
    // (temper, surface compression, layer) → residual at a face, residual in the core, in MPa.
    // Thermal: −CS at a face, +CS/2 at the mid-plane (parabolic profile; ASTM C1048 classes,
    // Gardon's parabolic approximation, common practice). Chemical: −CS at a face and
    // CT = CS·DOL / (t − 2·DOL) in the core (Varshneya, Int. J. Appl. Glass Sci. 1 (2010) 131;
    // computed: 700 × 0.04 / 0.62 = 45.16 MPa).
    let layer = Some((40e-6, 0.7e-3, LayerProfile::Linear));
    let rows: [(Temper, f64, Layer, f64, f64); 4] = [
        (Temper::Annealed, 0.0, None, 0.0, 0.0),
        (Temper::HeatStrengthened, 40e6, layer, -40.0, 20.0),
        (Temper::FullyTempered, 100e6, layer, -100.0, 50.0),
        (Temper::ChemicallyStrengthened, 700e6, layer, -700.0, 45.161),
    ];
    for (temper, cs, layer, face, core) in rows {
        for location in OriginLocation::ALL {
            let i = input(temper, location, cs, layer, 0.2e-3);
            let a = analyze(&i).unwrap_or_else(|e| panic!("{temper:?} {location:?}: {e}"));
            let expected = if location == OriginLocation::Interior {
                core
            } else {
                face
            };
            let got = a.residual.at_origin_pa / 1e6;
            assert!(
                (got - expected).abs() < 0.01,
                "{temper:?} at {location:?}: residual {got} MPa, expected {expected} MPa"
            );
            // applied = net − residual, whatever the temper
            assert!((a.applied_stress_pa - (a.stress_pa - a.residual.at_origin_pa)).abs() < 1e-3);
        }
    }
}

#[test]
fn the_chemically_strengthened_example_gives_about_45_mpa() {
    let out = Command::new(env!("CARGO_BIN_EXE_shardlog"))
        .args([
            "mirror",
            "--material",
            "aluminosilicate-chem",
            "--boundary",
            "mirror-mist",
            "--radius",
            "0.05mm",
            "--temper",
            "chemically-strengthened",
            "--surface-compression",
            "700MPa",
            "--layer-depth",
            "40um",
            "--thickness",
            "0.7mm",
            "--origin",
            "interior",
            "--json",
        ])
        .env("SHARDLOG_DB", "/nonexistent/never-opened.db")
        .output()
        .expect("the binary runs");
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let find = |key: &str| -> f64 {
        fn walk(v: &serde_json::Value, key: &str) -> Option<f64> {
            match v {
                serde_json::Value::Object(m) => m
                    .get(key)
                    .and_then(|x| x.as_f64())
                    .or_else(|| m.values().find_map(|x| walk(x, key))),
                serde_json::Value::Array(a) => a.iter().find_map(|x| walk(x, key)),
                _ => None,
            }
        }
        walk(&v, key).unwrap_or_else(|| panic!("{key} in {v}"))
    };
    // before: +350 MPa (half the surface compression) and a negative applied stress
    let residual = find("at_origin_pa") / 1e6;
    assert!((residual - 45.16).abs() < 0.05, "residual {residual} MPa");
    assert!(find("applied_stress_pa") > 0.0);
}

#[test]
fn an_interior_origin_in_chemically_strengthened_glass_needs_its_layer() {
    let mut i = input(
        Temper::ChemicallyStrengthened,
        OriginLocation::Interior,
        700e6,
        None,
        50e-6,
    );
    let e = analyze(&i).expect_err("no layer depth, no thickness");
    assert_eq!(e.field(), "layer-depth");
    assert!(e.to_string().contains("thickness"), "{e}");
    i.layer_depth_m = Some(40e-6);
    let e = analyze(&i).expect_err("no thickness");
    assert_eq!(e.field(), "thickness");
    // a surface origin needs neither: it sits at −CS
    i.origin = OriginLocation::Surface.origin();
    assert!(analyze(&i).is_ok());
}

#[test]
fn a_surface_origin_deeper_than_the_layer_is_warned() {
    let layer = Some((40e-6, 0.7e-3, LayerProfile::Linear));
    let deep = |radius: f64, flaw: Option<f64>| {
        let mut i = input(
            Temper::ChemicallyStrengthened,
            OriginLocation::Surface,
            700e6,
            layer,
            radius,
        );
        i.measured_flaw_m = flaw;
        analyze(&i)
            .expect("analysis")
            .warnings
            .iter()
            .filter(|w| w.contains("layer does not cover"))
            .count()
    };
    assert_eq!(deep(30e-6, None), 0, "mirror inside the layer");
    assert_eq!(deep(60e-6, None), 1, "mirror deeper than the layer");
    assert_eq!(
        deep(30e-6, Some(45e-6)),
        1,
        "measured flaw deeper than the layer"
    );
}

/// The net force of a profile over the thickness, relative to CS·t.
fn net_force(p: &Profile, cs: f64) -> f64 {
    simpson(|z| p.stress_at(z), p.thickness(), 4000) / (cs * p.thickness())
}

#[test]
fn signs_follow_the_force_balance_over_a_grid() {
    // For every temper × origin location over a grid of surface compressions, layers,
    // thicknesses and mirror radii: the profile carries no net force; the residual at the
    // origin is the profile's face stress (≤ 0) for a surface origin and its mid-plane
    // stress (≥ 0) for an interior one; the applied stress is net − residual, so it exceeds
    // the net stress at a face and falls short of it in the core.
    let mut cases = 0;
    for temper in Temper::ALL {
        for location in OriginLocation::ALL {
            for cs in [20e6, 100e6, 400e6, 900e6] {
                for (depth, thickness) in [(10e-6, 0.4e-3), (40e-6, 0.7e-3), (150e-6, 3e-3)] {
                    for shape in [LayerProfile::Linear, LayerProfile::Erfc] {
                        for radius in [20e-6, 0.3e-3] {
                            let layer = Some((depth, thickness, shape));
                            let i = input(temper, location, cs, layer, radius);
                            let a = analyze(&i).expect("analysis");
                            let r = a.residual.at_origin_pa;
                            let cs_used = a.residual.surface_compression_pa;
                            let profile = match temper {
                                Temper::ChemicallyStrengthened => {
                                    Profile::chemical(cs, depth, thickness, shape).expect("layer")
                                }
                                _ => Profile::parabolic(cs_used, thickness),
                            };
                            if cs_used > 0.0 {
                                assert!(net_force(&profile, cs_used).abs() < 1e-4);
                            }
                            let depth_of_origin = match location {
                                OriginLocation::Interior => thickness / 2.0,
                                _ => 0.0,
                            };
                            let expected = profile.stress_at(depth_of_origin);
                            assert!((r - expected).abs() <= 1e-6 * cs_used.max(1.0));
                            let net = a.stress_pa;
                            if location == OriginLocation::Interior {
                                assert!(r >= 0.0 && a.applied_stress_pa <= net);
                            } else {
                                assert!(r <= 0.0 && a.applied_stress_pa >= net);
                            }
                            assert_eq!(
                                a.applied_stress_pa < 0.0,
                                a.warnings.iter().any(|w| w.contains("comes out negative"))
                            );
                            cases += 1;
                        }
                    }
                }
            }
        }
    }
    assert_eq!(cases, 4 * 4 * 4 * 3 * 2 * 2);
    // and the linear layer agrees with its closed form at one point of the grid (computed:
    // 400 × 0.15 / (3 − 0.3) = 22.22 MPa)
    assert!((linear_central_tension(400e6, 150e-6, 3e-3) / 1e6 - 22.222).abs() < 0.001);
}
