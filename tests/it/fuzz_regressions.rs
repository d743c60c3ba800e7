//! Inputs that once broke the core, found by the fuzz targets in fuzz/ and by the hostile
//! command-line table. Each stays here so the bug cannot come back unnoticed.

use shardlog_core::fracture::{self, materials, AnalysisInput, Boundary};
use shardlog_core::loads::{self, critical, impact, plates, thermal, Elastic, Hypothesis};

fn soda_lime() -> fracture::Material {
    materials::find("soda-lime").expect("soda-lime is in the library")
}

/// A subnormal radius (1e-320 mm typed) was accepted: stress 6e161 MPa, flaw 0 µm and an
/// applied-stress interval of NaN. Lengths below 1 nm are now refused, naming the radius.
#[test]
fn subnormal_radius_is_refused() {
    let input = AnalysisInput::new(soda_lime()).with_readings(Boundary::MirrorMist, &[1e-323]);
    let e = fracture::analyze(&input).unwrap_err();
    assert_eq!(e.field(), "radius");
    assert!(e.to_string().contains("at least"), "{e}");
}

/// The smallest length accepted still gives a finite analysis with ordered intervals.
#[test]
fn smallest_accepted_radius_gives_finite_figures() {
    let input = AnalysisInput::new(soda_lime()).with_readings(Boundary::MirrorMist, &[1e-9]);
    let a = fracture::analyze(&input).expect("1 nm is accepted");
    for v in [
        a.stress_low_pa,
        a.stress_pa,
        a.stress_high_pa,
        a.applied_low_pa,
        a.applied_stress_pa,
        a.applied_high_pa,
    ] {
        assert!(v.is_finite(), "{v}");
    }
    let f = a.flaw.expect("soda-lime has a toughness");
    assert!(f.size_m > 0.0 && f.size_m.is_finite());
    assert!(f.size_low_m <= f.size_m && f.size_m <= f.size_high_m);
}

/// A toughness override of 1e-300 Pa·√m gave a flaw of 0 µm; now refused.
#[test]
fn vanishing_toughness_is_refused() {
    let mut input = AnalysisInput::new(soda_lime()).with_readings(Boundary::MirrorMist, &[1e-3]);
    input.toughness_override = Some(fracture::Constant::user(1e-300, "test"));
    let e = fracture::analyze(&input).unwrap_err();
    assert_eq!(e.field(), "toughness");
}

const GLASS: Elastic = Elastic {
    youngs_modulus: 70e9,
    poisson: 0.22,
};

/// `load impact --speed 1e308m/s` printed "mean contact force: — N" with exit 0.
#[test]
fn impulse_overflow_is_refused() {
    let h = Hypothesis::Impulse(impact::Impulse {
        mass: 1.0,
        speed: 1e308,
        contact_time: 1e-3,
        restitution: 0.5,
    });
    assert_eq!(loads::evaluate(&h).unwrap_err().field(), "speed");
}

/// `load plate --span 1e300m` printed "largest bending stress: — MPa" with exit 0.
#[test]
fn plate_overflow_is_refused() {
    let h = Hypothesis::Plate(plates::Plate {
        shape: plates::Shape::Circular,
        edges: plates::Edges::Clamped,
        span: 1e300,
        span_b: None,
        thickness: 6e-3,
        material: GLASS,
        load: plates::PlateLoad::Pressure(1e3),
    });
    assert_eq!(loads::evaluate(&h).unwrap_err().field(), "span");
}

/// `load critical-flaw --stress 1e-320MPa` printed "critical flaw size: — µm" with exit 0.
#[test]
fn critical_size_overflow_is_refused() {
    let e = critical::critical_size(1e-314, 0.75e6, 1.29).unwrap_err();
    assert_eq!(e.field(), "stress");
    // and the ordinary case is untouched: a_c = (K / Yσ)²
    let a = critical::critical_size(50e6, 0.75e6, 1.29).expect("ordinary");
    assert!((a - (0.75e6_f64 / (1.29 * 50e6)).powi(2)).abs() < 1e-15);
}

/// A finite, warned result at an absurd temperature difference stays a result.
#[test]
fn thermal_large_but_finite_is_kept_with_a_warning() {
    let r = thermal::edge_stress(&thermal::Thermal {
        youngs_modulus: 70e9,
        expansion: 9e-6,
        delta_t: 1e300,
        restraint: 1.0,
    })
    .expect("finite");
    assert!(r.stress.is_finite());
    assert!(r.warnings.iter().any(|w| w.code == "large-delta-t"));
}

/// fuzz/mirror_analyze, first crasher: a toughness of 0.01275 MPa·√m with a spread of
/// 61.3 MPa·√m made the upper end of the flaw-size interval infinite. A spread larger than
/// its value is now refused.
#[test]
fn spread_larger_than_the_value_is_refused() {
    let mut input = AnalysisInput::new(materials::find("alumina").expect("alumina"))
        .with_readings(Boundary::MistHackle, &[0.026367]);
    input.toughness_override = Some(fracture::Constant {
        spread: Some(61_343_550.0),
        ..fracture::Constant::user(12_750.0, "fuzz")
    });
    input.origin = fracture::Origin::Interior;
    input.flaw = Some(fracture::FlawGeometry::Semicircular { a_over_t: 0.0 });
    let e = fracture::analyze(&input).unwrap_err();
    assert_eq!(e.field(), "toughness");
    assert!(e.to_string().contains("larger than the value"), "{e}");
}

/// A user's material with a negative mirror constant is refused, naming the material.
#[test]
fn user_material_with_a_negative_constant_is_refused() {
    let mut m = soda_lime();
    m.key = "in-house".into();
    m.a_i = Some(fracture::Constant::user(-2e6, "typed wrong"));
    let input = AnalysisInput::new(m).with_readings(Boundary::MirrorMist, &[1e-3]);
    let e = fracture::analyze(&input).unwrap_err();
    assert_eq!(e.field(), "material");
    assert!(e.to_string().contains("in-house"), "{e}");
}

/// Every library material still analyses a 1 mm reading on each boundary it has a constant for.
#[test]
fn every_library_material_passes_the_new_checks() {
    for m in materials::library() {
        for b in Boundary::ALL {
            if b.constant_of(&m).is_some() {
                let input = AnalysisInput::new(m.clone()).with_readings(b, &[1e-3]);
                assert!(fracture::analyze(&input).is_ok(), "{} {:?}", m.key, b);
            }
        }
    }
}

/// fuzz/mirror_analyze, second crasher: a surface-compression spread of 1.7e299 Pa made the
/// applied-stress interval −inf. The spread is bounded like the compression (10 GPa).
#[test]
fn enormous_surface_compression_spread_is_refused() {
    let mut input = AnalysisInput::new(soda_lime())
        .with_readings(Boundary::MirrorMist, &[0.798972])
        .with_readings(Boundary::Branching, &[0.07949]);
    input.surface_compression_pa = Some(-0.0);
    input.surface_compression_spread_pa = Some(1.6725972032429372e299);
    let e = fracture::analyze(&input).unwrap_err();
    assert_eq!(e.field(), "surface-compression");
}
