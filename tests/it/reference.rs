//! The fracture core against published values (see shared/reference-values.md). Each check
//! names its source beside it: a publication, "common practice", "from memory" (wide
//! tolerance), or "computed" with the arithmetic.

use std::f64::consts::PI;

use proptest::prelude::*;
use shardlog_core::fracture::flaw::{geometry_factor, geometry_factor_detail, FlawGeometry};
use shardlog_core::fracture::materials::{self, Provenance};
use shardlog_core::fracture::residual::Temper;
use shardlog_core::fracture::uncertainty::t975;
use shardlog_core::fracture::{analyze, AnalysisInput, Boundary, Origin};
use shardlog_core::units::{self, Dimension, Unit};

/// |got − want| ≤ tol, with a message naming the check.
fn check(what: &str, got: f64, want: f64, tol: f64) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, want {want} ± {tol}"
    );
}

fn soda() -> shardlog_core::fracture::Material {
    materials::find("soda-lime").expect("soda-lime in the library")
}

fn one_boundary(b: Boundary, r: &[f64]) -> AnalysisInput {
    AnalysisInput::new(soda()).with_readings(b, r)
}

// ---------------------------------------------------------------- mirror-constant relation

#[test]
fn one_mm_mirror_in_soda_lime_is_about_60_mpa() {
    // computed: 1.9 / √0.001 = 60.08 MPa (reference-values.md, worked checks)
    let a = analyze(&one_boundary(Boundary::MirrorMist, &[1e-3])).unwrap();
    check("σ, R_i 1 mm, A_i 1.9", a.stress_pa / 1e6, 60.08, 0.01);
    // computed: 2.0 / √0.001 = 63.25 MPa
    let mut i = one_boundary(Boundary::MirrorMist, &[1e-3]);
    i.constant_overrides
        .push(shardlog_core::fracture::ConstantOverride {
            boundary: Boundary::MirrorMist,
            constant: shardlog_core::fracture::Constant::user(2.0e6, "test"),
        });
    let a = analyze(&i).unwrap();
    check("σ, R_i 1 mm, A_i 2.0", a.stress_pa / 1e6, 63.25, 0.01);
}

#[test]
fn library_soda_lime_constants_match_the_published_ranges() {
    let m = soda();
    // Quinn, NIST SP 960-16, App. C (second-hand): A_i 1.8–2.1, A_o 2.0–2.4, A_b about 2.3
    let ai = m.a_i.unwrap().value / 1e6;
    assert!((1.8..=2.1).contains(&ai), "A_i {ai}");
    let ao = m.a_o.unwrap().value / 1e6;
    assert!((2.0..=2.4).contains(&ao), "A_o {ao}");
    check("A_b", m.a_b.unwrap().value / 1e6, 2.3, 1e-9);
    // common handbook value 0.75 MPa√m (0.72–0.82 seen)
    check("K_Ic", m.k_ic.as_ref().unwrap().value / 1e6, 0.75, 1e-9);
    assert!(matches!(
        m.k_ic.unwrap().provenance,
        Provenance::Published { .. }
    ));
    // EN 572-1: E 70 GPa, ν 0.2, α 9e-6 /K, ρ 2500 kg/m³
    check("E", m.youngs_modulus.unwrap().value / 1e9, 70.0, 1e-9);
    check("ν", m.poisson.unwrap().value, 0.2, 1e-12);
    check("α", m.expansion.as_ref().unwrap().value, 9e-6, 1e-15);
    check("ρ", m.density.unwrap().value, 2500.0, 1e-9);
    // computed: E·α = 70e9 · 9e-6 = 0.63 MPa/K; divided by (1 − ν) = 0.7875 MPa/K
    let ea = 70e9 * m.expansion.unwrap().value;
    check("E·α", ea / 1e6, 0.63, 1e-9);
    check("E·α/(1−ν)", ea / 0.8 / 1e6, 0.7875, 1e-9);
}

#[test]
fn flaw_behind_a_one_mm_mirror() {
    // computed: a = (0.75 / (1.29 · 60.1))² = 93.6 µm with Y 1.29; here Y = 1.2918 (Newman–Raju
    // surface point, below) so a = (0.75 / (1.2918 · 60.08))² = 93.4 µm
    let a = analyze(&one_boundary(Boundary::MirrorMist, &[1e-3])).unwrap();
    let f = a.flaw.unwrap();
    check("flaw size µm", f.size_m * 1e6, 93.4, 0.3);
    check("Y used", f.factor.y, 1.292, 5e-4);
    // Mecholsky, Rice & Freiman, J. Am. Ceram. Soc. 57 (1974) 440: R_i / a about 10;
    // computed: 1000 / 93.4 = 10.7
    let r = &f.ratios[0];
    check("R_i / a", r.ratio, 10.7, 0.1);
    assert!(r.plausible);
}

#[test]
fn branching_distance_from_stress() {
    // computed: R_b = (A_b / σ)²: 2.3 at 20 MPa → 13.2 mm; at 50 MPa → 2.1 mm
    use shardlog_core::fracture::mirror::radius_from_stress;
    check(
        "R_b at 20 MPa, mm",
        radius_from_stress(2.3e6, 20e6) * 1e3,
        13.2,
        0.05,
    );
    check(
        "R_b at 50 MPa, mm",
        radius_from_stress(2.3e6, 50e6) * 1e3,
        2.1,
        0.02,
    );
    // and through analyze: a branching reading of 13.225 mm gives 20 MPa back
    let a = analyze(&one_boundary(Boundary::Branching, &[13.225e-3])).unwrap();
    check("σ from R_b", a.stress_pa / 1e6, 20.0, 0.01);
    // workflows.md, bench analyst: 15 mm branching → about 19 MPa (computed: 2.3/√0.015 = 18.8)
    let a = analyze(&one_boundary(Boundary::Branching, &[15e-3])).unwrap();
    check("σ from R_b 15 mm", a.stress_pa / 1e6, 18.78, 0.01);
}

#[test]
fn consistent_boundaries_agree_and_inconsistent_ones_warn() {
    // computed: with A_i 1.9 and A_o 2.2, R_o / R_i should be (2.2/1.9)² = 1.3407
    let ri = [0.98e-3, 1.0e-3, 1.02e-3];
    let ro: Vec<f64> = ri.iter().map(|r| r * 1.3407).collect();
    let a =
        analyze(&one_boundary(Boundary::MirrorMist, &ri).with_readings(Boundary::MistHackle, &ro))
            .unwrap();
    let c = &a.consistency[0];
    check("expected ratio", c.expected_ratio, 1.3407, 1e-4);
    assert!(c.agrees, "{c:?}");
    assert!(!a.warnings.iter().any(|w| w.contains("disagree")));
    // mist–hackle radius equal to the mirror–mist one: ratio 1 against 1.34, tight readings
    let ro2 = [0.99e-3, 1.0e-3, 1.01e-3];
    let mut i = one_boundary(Boundary::MirrorMist, &ri).with_readings(Boundary::MistHackle, &ro2);
    // narrow the constants' spreads so the disagreement exceeds the uncertainty
    for b in [Boundary::MirrorMist, Boundary::MistHackle] {
        let mut c = b.constant_of(&i.material).unwrap().clone();
        c.spread = Some(0.01e6);
        i.constant_overrides
            .push(shardlog_core::fracture::ConstantOverride {
                boundary: b,
                constant: c,
            });
    }
    let a = analyze(&i).unwrap();
    assert!(!a.consistency[0].agrees);
    assert!(
        a.warnings.iter().any(|w| w.contains("disagree")),
        "{:?}",
        a.warnings
    );
}

// ---------------------------------------------------------------- geometry factors

#[test]
fn geometry_factors_of_each_case() {
    // every fracture-mechanics text: through crack √π = 1.772
    check(
        "through",
        geometry_factor(&FlawGeometry::ThroughCrack),
        1.772,
        5e-4,
    );
    // Tada, Paris & Irwin handbook: edge crack 1.1215 √π = 1.988
    check(
        "edge",
        geometry_factor(&FlawGeometry::EdgeCrack),
        1.988,
        5e-4,
    );
    // Sneddon: embedded penny 2/√π = 1.128
    check(
        "penny",
        geometry_factor(&FlawGeometry::EmbeddedPenny),
        1.128,
        5e-4,
    );
    // computed: 1.12 · 2/√π = 1.264
    check(
        "Irwin semicircle",
        geometry_factor(&FlawGeometry::SemicircularIrwin),
        1.264,
        5e-4,
    );
}

#[test]
fn newman_raju_reference_points() {
    // computed from Newman & Raju, Eng. Fract. Mech. 15 (1981) 185; NASA TM-85793 (1984):
    // a/c = 1, a/t → 0: M1 = 1.04, Q = 2.464, √(π/Q) = 1.1292;
    // deepest 1.04 · 1.1292 = 1.174; surface 1.04 · 1.1 · 1.1292 = 1.292
    let d = geometry_factor_detail(&FlawGeometry::Semicircular { a_over_t: 0.0 });
    check("a/c 1 deepest", d.deepest.unwrap(), 1.174, 5e-4);
    check("a/c 1 surface", d.surface.unwrap(), 1.292, 5e-4);
    check("a/c 1 governing", d.y, 1.292, 5e-4);
    // a/c = 0.8: M1 = 1.058, Q = 1 + 1.464 · 0.8^1.65 = 2.0130; deepest 1.058 · 1.2493 = 1.322;
    // surface 1.058 · 1.1 · 0.8^½ · 1.2493 = 1.300
    let d = geometry_factor_detail(&FlawGeometry::SemiElliptical {
        a_over_c: 0.8,
        a_over_t: 0.0,
    });
    check("a/c 0.8 deepest", d.deepest.unwrap(), 1.322, 5e-4);
    check("a/c 0.8 surface", d.surface.unwrap(), 1.300, 5e-4);
    assert_eq!(d.governing_point, "deepest point");
    // computed, same equations: a/c = 0.2, a/t = 0.5, deepest point:
    // M1 = 1.112, M2 = −0.54 + 0.89/0.4 = 1.685, M3 = 0.5 − 1/0.85 + 14·0.8^24 = −0.6011,
    // F = 1.112 + 1.685·0.25 − 0.6011·0.0625 = 1.4958, Q = 1 + 1.464·0.2^1.65 = 1.1022,
    // Y = 1.4958 · √(π/1.1022) = 2.5253
    let m3 = 0.5 - 1.0 / 0.85 + 14.0 * 0.8f64.powi(24);
    let f = 1.112 + 1.685 * 0.25 + m3 * 0.0625;
    let q = 1.0 + 1.464 * 0.2f64.powf(1.65);
    let want = f * (PI / q).sqrt();
    check("hand arithmetic", want, 2.525, 2e-3);
    let d = geometry_factor_detail(&FlawGeometry::SemiElliptical {
        a_over_c: 0.2,
        a_over_t: 0.5,
    });
    check("a/c 0.2 a/t 0.5 deepest", d.deepest.unwrap(), want, 1e-9);
}

#[test]
fn corner_crack_from_memory() {
    // from memory (Newman–Raju corner-crack equations, NASA TM-85793, not confirmed against the
    // document): a/c = 1, a/t → 0: M1 = 1.05, g = 1.08 at either surface point,
    // Y = 1.05 · 1.08 · 1.1292 = 1.280; wide tolerance
    check(
        "corner",
        geometry_factor(&FlawGeometry::CornerCrack {
            a_over_c: 1.0,
            a_over_t: 0.0,
        }),
        1.280,
        0.05,
    );
}

// ---------------------------------------------------------------- residual stress

#[test]
fn astm_c1048_classes() {
    // ASTM C1048: heat-strengthened 24–52 MPa (3500–7500 psi), fully tempered ≥ 69 MPa (10 000 psi)
    let (hs, _, _) = Temper::HeatStrengthened
        .default_surface_compression()
        .unwrap();
    assert!((24e6..=52e6).contains(&hs));
    let (ft, _, _) = Temper::FullyTempered.default_surface_compression().unwrap();
    check("FT minimum MPa", ft / 1e6, 69.0, 1e-9);
    // the psi figures convert: 10 000 psi = 68.95 MPa, 3500 psi = 24.13, 7500 psi = 51.71
    let p = |s: &str| units::parse(s, Dimension::Stress).unwrap() / 1e6;
    check("10 000 psi", p("10000 psi"), 68.95, 0.01);
    check("3500 psi", p("3500 psi"), 24.13, 0.01);
    check("7500 psi", p("7500 psi"), 51.71, 0.01);
    check("9700 psi", p("9700 psi"), 66.88, 0.01);
}

#[test]
fn residual_stress_signs() {
    // design.md §2 (common practice): applied = net − residual, compression negative;
    // interior origin: central tension half the surface compression (parabolic profile)
    let mut i = one_boundary(Boundary::MirrorMist, &[0.3e-3]);
    i.temper = Some(Temper::FullyTempered);
    i.surface_compression_pa = Some(100e6);
    let a = analyze(&i).unwrap();
    check(
        "surface: applied − net",
        (a.applied_stress_pa - a.stress_pa) / 1e6,
        100.0,
        1e-6,
    );
    i.origin = Origin::Interior;
    let a = analyze(&i).unwrap();
    check(
        "interior: applied − net",
        (a.applied_stress_pa - a.stress_pa) / 1e6,
        -50.0,
        1e-6,
    );
    // a large interior mirror (small net stress) gives a negative applied stress and a warning
    let mut j = i.clone();
    j.readings[0].radii_m = vec![5e-3];
    j.thickness_m = Some(12e-3);
    let a = analyze(&j).unwrap();
    assert!(a.applied_stress_pa < 0.0);
    assert!(
        a.warnings.iter().any(|w| w.contains("negative")),
        "{:?}",
        a.warnings
    );
}

#[test]
fn warnings_of_the_issue() {
    // mirror larger than the thickness
    let mut i =
        one_boundary(Boundary::MirrorMist, &[7e-3]).with_readings(Boundary::Branching, &[15e-3]);
    i.thickness_m = Some(6e-3);
    let a = analyze(&i).unwrap();
    assert!(a
        .warnings
        .iter()
        .any(|w| w.contains("not closed") && w.contains("branching")));
    // interior origin without a temper class
    let mut i = one_boundary(Boundary::MirrorMist, &[1e-3]);
    i.origin = Origin::Interior;
    let a = analyze(&i).unwrap();
    assert!(a.warnings.iter().any(|w| w.contains("no temper class")));
    // mirror beyond the compressive layer (0.21 · 6 mm = 1.27 mm)
    let mut i = one_boundary(Boundary::MirrorMist, &[1.5e-3]);
    i.temper = Some(Temper::FullyTempered);
    i.thickness_m = Some(6e-3);
    let a = analyze(&i).unwrap();
    check(
        "layer depth mm",
        a.residual.layer_depth_m.unwrap() * 1e3,
        1.268,
        1e-3,
    );
    assert!(a.warnings.iter().any(|w| w.contains("compressive layer")));
}

#[test]
fn measured_flaw_ratio_is_reported() {
    let mut i = one_boundary(Boundary::MirrorMist, &[1e-3]);
    i.measured_flaw_m = Some(90e-6);
    let a = analyze(&i).unwrap();
    let f = a.flaw.unwrap();
    // computed: 90 / 93.4 = 0.963
    check(
        "measured / predicted",
        f.measured_over_predicted.unwrap(),
        0.963,
        0.005,
    );
}

#[test]
fn student_t_table() {
    // NIST/SEMATECH e-Handbook of Statistical Methods, table 1.3.6.7.2 (two-sided 95 %)
    check("t 1", t975(1), 12.706, 1e-3);
    check("t 4", t975(4), 2.776, 1e-3);
    check("t 10", t975(10), 2.228, 1e-3);
    check("t 60", t975(60), 2.000, 1e-3);
    check("t 120", t975(120), 1.980, 1e-3);
}

#[test]
fn library_has_the_materials_of_the_issue() {
    for key in [
        "soda-lime",
        "borosilicate",
        "fused-silica",
        "aluminosilicate",
        "aluminosilicate-chem",
        "glass-ceramic",
        "alumina",
        "aluminum-oxynitride",
    ] {
        let m = materials::find(key).unwrap_or_else(|| panic!("{key}"));
        assert!(m.k_ic.is_some(), "{key}");
    }
    // common practice: aluminum oxynitride K_Ic about 2.0 MPa√m
    let m = materials::find("aluminum-oxynitride").unwrap();
    check("oxynitride K_Ic", m.k_ic.unwrap().value / 1e6, 2.0, 1e-9);
}

// ---------------------------------------------------------------- properties

proptest! {
    #[test]
    fn stress_falls_as_radius_grows(r in 1e-5f64..0.1, f in 1.0001f64..10.0) {
        let a = analyze(&one_boundary(Boundary::MirrorMist, &[r])).unwrap();
        let b = analyze(&one_boundary(Boundary::MirrorMist, &[r * f])).unwrap();
        prop_assert!(b.stress_pa < a.stress_pa);
    }

    #[test]
    fn interval_contains_the_estimate(
        rs in proptest::collection::vec(1e-5f64..0.05, 1..12),
        b in prop_oneof![Just(Boundary::MirrorMist), Just(Boundary::MistHackle), Just(Boundary::Branching)],
        temper in prop_oneof![Just(None), Just(Some(Temper::Annealed)), Just(Some(Temper::HeatStrengthened)), Just(Some(Temper::FullyTempered))],
    ) {
        let mut i = one_boundary(b, &rs);
        i.temper = temper;
        let a = analyze(&i).unwrap();
        prop_assert!(a.stress_low_pa <= a.stress_pa && a.stress_pa <= a.stress_high_pa);
        prop_assert!(a.stress_low_pa > 0.0);
        prop_assert!(a.applied_low_pa <= a.applied_stress_pa && a.applied_stress_pa <= a.applied_high_pa);
        let f = a.flaw.unwrap();
        prop_assert!(f.size_low_m <= f.size_m && f.size_m <= f.size_high_m);
        for br in &a.boundaries {
            prop_assert!(br.stress_low_pa <= br.stress_pa && br.stress_pa <= br.stress_high_pa);
        }
    }

    #[test]
    fn length_round_trip_is_exact(v in 1e-9f64..10.0, u in prop_oneof![Just(Unit::Metre), Just(Unit::Millimetre), Just(Unit::Micrometre), Just(Unit::Inch)]) {
        let text = units::format_exact(v, u);
        let back = units::parse(&text, Dimension::Length).unwrap();
        prop_assert_eq!(u.to_si(u.from_si(v)), back, "{}", text);
    }

    #[test]
    fn stress_round_trip_is_exact(v in 1.0f64..1e10, u in prop_oneof![Just(Unit::Pascal), Just(Unit::Kilopascal), Just(Unit::Megapascal), Just(Unit::Gigapascal), Just(Unit::Psi), Just(Unit::Ksi)]) {
        let text = units::format_exact(v, u);
        let back = units::parse(&text, Dimension::Stress).unwrap();
        prop_assert_eq!(u.to_si(u.from_si(v)), back, "{}", text);
    }

    #[test]
    fn flaw_solution_satisfies_the_toughness(r in 1e-4f64..0.02, ac in 0.2f64..1.0, t in 1e-3f64..0.02) {
        let mut i = one_boundary(Boundary::MirrorMist, &[r]);
        i.flaw = Some(FlawGeometry::SemiElliptical { a_over_c: ac, a_over_t: 0.0 });
        i.thickness_m = Some(t);
        let a = analyze(&i).unwrap();
        let f = a.flaw.unwrap();
        if f.size_m / t <= 0.8 {
            let k = geometry_factor(&f.geometry) * a.stress_pa * f.size_m.sqrt();
            prop_assert!((k - 0.75e6).abs() / 0.75e6 < 1e-6, "K {}", k);
        }
    }
}

// ---------------------------------------------------------------- robustness

proptest! {
    /// Whatever numbers arrive, `analyze` returns an error or finite figures (never NaN,
    /// never a panic), and its result survives a JSON round trip (the store keeps it).
    #[test]
    fn analyze_is_total_and_finite(
        rs in proptest::collection::vec(prop_oneof![1e-300f64..1e-3, 1e-3f64..20.0, Just(0.0), Just(-1e-3), Just(f64::NAN), Just(f64::INFINITY)], 0..5),
        b in prop_oneof![Just(Boundary::MirrorMist), Just(Boundary::MistHackle), Just(Boundary::Branching)],
        cs in proptest::option::of(prop_oneof![0.0f64..1e9, Just(-5e6), Just(f64::NAN)]),
        temper in prop_oneof![Just(None), Just(Some(Temper::Annealed)), Just(Some(Temper::HeatStrengthened)), Just(Some(Temper::FullyTempered)), Just(Some(Temper::ChemicallyStrengthened))],
        interior in any::<bool>(),
        thickness in proptest::option::of(prop_oneof![1e-5f64..0.05, Just(0.0), Just(f64::NAN)]),
        ac in 0.01f64..2.0,
        measured in proptest::option::of(1e-9f64..1.0),
    ) {
        let mut i = one_boundary(b, &rs);
        i.surface_compression_pa = cs;
        i.temper = temper;
        i.origin = if interior { Origin::Interior } else { Origin::Surface };
        i.thickness_m = thickness;
        i.flaw = Some(FlawGeometry::SemiElliptical { a_over_c: ac, a_over_t: 0.0 });
        i.measured_flaw_m = measured;
        if let Ok(a) = analyze(&i) {
            let figures = [a.stress_pa, a.stress_low_pa, a.stress_high_pa, a.applied_stress_pa,
                a.applied_low_pa, a.applied_high_pa, a.residual.at_origin_pa];
            prop_assert!(figures.iter().all(|x| x.is_finite()), "{:?}", figures);
            if let Some(f) = &a.flaw {
                prop_assert!(f.size_m.is_finite() && f.size_m > 0.0 && f.factor.y.is_finite());
                prop_assert!(f.size_low_m.is_finite() && f.size_high_m.is_finite());
            }
            let json = serde_json::to_string(&a).unwrap();
            let back: shardlog_core::fracture::Analysis = serde_json::from_str(&json).unwrap();
            prop_assert_eq!(back.warnings, a.warnings);
        }
    }
}

#[test]
fn flaw_sizes_for_each_geometry_from_one_analysis_equal_separate_analyses() {
    use shardlog_core::fracture::{
        analyze, materials, AnalysisInput, Boundary, FlawGeometry, Origin, Temper,
    };
    let geometries = [
        FlawGeometry::Semicircular { a_over_t: 0.0 },
        FlawGeometry::SemiElliptical {
            a_over_c: 0.8,
            a_over_t: 0.0,
        },
        FlawGeometry::SemiElliptical {
            a_over_c: 0.1,
            a_over_t: 0.0,
        },
        FlawGeometry::SemicircularIrwin,
        FlawGeometry::EmbeddedPenny,
        FlawGeometry::EdgeCrack,
        FlawGeometry::CornerCrack {
            a_over_c: 0.8,
            a_over_t: 0.0,
        },
        FlawGeometry::ThroughCrack,
        // refused: a/c above 2
        FlawGeometry::SemiElliptical {
            a_over_c: 3.0,
            a_over_t: 0.0,
        },
    ];
    let soda = materials::find("soda-lime").expect("soda-lime in the library");
    let plain =
        AnalysisInput::new(soda.clone()).with_readings(Boundary::MirrorMist, &[0.9e-3, 1.1e-3]);
    let mut thick = AnalysisInput::new(soda)
        .with_readings(Boundary::MistHackle, &[2.0e-3])
        .with_readings(Boundary::MirrorMist, &[1.4e-3, 1.5e-3]);
    thick.temper = Some(Temper::FullyTempered);
    thick.thickness_m = Some(4e-3);
    thick.origin = Origin::Interior;
    thick.measured_flaw_m = Some(40e-6);
    let mut no_toughness =
        AnalysisInput::new(materials::find("glass-ceramic").expect("in the library"))
            .with_readings(Boundary::MistHackle, &[1e-3]);
    no_toughness.toughness_override = None;
    no_toughness.material.k_ic = None;
    for input in [plain, thick, no_toughness] {
        let one = analyze(&input).expect("the analysis");
        for g in geometries {
            let mut separate = input.clone();
            separate.flaw = Some(g);
            let expected = analyze(&separate).ok().and_then(|a| a.flaw);
            let got = one.flaw_size_for(&input, g);
            assert_eq!(got, expected, "{g:?}");
            if let (Some(a), Some(b)) = (&got, &expected) {
                assert_eq!(a.size_m.to_bits(), b.size_m.to_bits(), "{g:?}");
                assert_eq!(a.size_low_m.to_bits(), b.size_low_m.to_bits(), "{g:?}");
                assert_eq!(a.size_high_m.to_bits(), b.size_high_m.to_bits(), "{g:?}");
            }
        }
    }
}

// ---------------------------------------------------------------- published values, one table

/// One check against a published value: what, the source named, what the program gives,
/// the published figure and the relative tolerance (the published figure's last digit, or
/// the stated reason).
struct Published {
    what: &'static str,
    source: &'static str,
    got: f64,
    want: f64,
    rel: f64,
}

const SP811: &str = "NIST SP 811 (2008), Appendix B (exact by definition)";
const AS: &str = "Abramowitz & Stegun, Handbook of Mathematical Functions (1964)";
const GARWOOD: &str = "Garwood, Biometrika 28 (1936) 437, exact Poisson limits";
const TWK: &str = "Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells (1959)";

fn unit(text: &str, dim: Dimension) -> f64 {
    units::parse(text, dim).expect("a unit of the table")
}

fn unit_checks() -> Vec<Published> {
    use Dimension::*;
    let p = |what, got, want| Published {
        what,
        source: SP811,
        got,
        want,
        rel: 1e-6,
    };
    vec![
        p("1 in", unit("1in", Length), 0.0254),
        p("1 ft", unit("1ft", Length), 0.3048),
        p("1 mil", unit("1mil", Length), 2.54e-5),
        p("1 cm", unit("1cm", Length), 0.01),
        p("1 µm", unit("1um", Length), 1e-6),
        p("1 psi", unit("1psi", Stress), 6_894.757),
        p("1 ksi", unit("1ksi", Stress), 6.894_757e6),
        p("1 bar", unit("1bar", Stress), 1e5),
        p("1 kN/m²", unit("1kN/m²", Stress), 1e3),
        p("1 N/mm²", unit("1N/mm²", Stress), 1e6),
        p("1 lbf", unit("1lbf", Force), 4.448_222),
        p("1 kgf", unit("1kgf", Force), 9.806_65),
        p("1 lb", unit("1lb", Mass), 0.453_592_37),
        p("1 knot", unit("1knot", Speed), 0.514_444_4),
        p("1 mph", unit("1mph", Speed), 0.447_04),
        p("1 km/h", unit("1km/h", Speed), 0.277_777_8),
        p("1 min", unit("1min", Time), 60.0),
        p("1 °F difference", unit("9°F", TemperatureDifference), 5.0),
        // ASTM E399 lists 1 ksi·√in = 1.0988 MPa·√m
        Published {
            what: "1 ksi√in",
            source: "ASTM E399, units note: 1 ksi·in^½ = 1.0988 MPa·m^½",
            got: unit("1ksi√in", Toughness),
            want: 1.0988e6,
            rel: 5e-5,
        },
    ]
}

fn special_function_checks() -> Vec<Published> {
    use shardlog_core::fleet::special::{
        chi2_quantile, erfc, ln_gamma, normal_cdf, normal_quantile,
    };
    use shardlog_core::fracture::uncertainty::t975;
    use shardlog_core::loads::plates::disc_mean;
    let p = |what, source, got, want, rel| Published {
        what,
        source,
        got,
        want,
        rel,
    };
    vec![
        p("erfc(0.5)", AS, erfc(0.5), 0.479_500_122_2, 1e-9),
        p("erfc(1)", AS, erfc(1.0), 0.157_299_207_1, 1e-9),
        p("erfc(2)", AS, erfc(2.0), 0.004_677_734_981, 1e-8),
        p("erfc(3)", AS, erfc(3.0), 2.209_049_699e-5, 1e-7),
        p("z(0.975)", AS, normal_quantile(0.975), 1.959_964, 1e-6),
        p("z(0.95)", AS, normal_quantile(0.95), 1.644_854, 1e-6),
        p("Φ(1.96)", AS, normal_cdf(1.96), 0.975_002_1, 1e-6),
        p("ln Γ(½) = ln √π", AS, ln_gamma(0.5), 0.572_364_942_9, 1e-9),
        p("χ²₀.₉₅(1)", AS, chi2_quantile(1.0, 0.95), 3.841_459, 1e-6),
        p("χ²₀.₉₅(10)", AS, chi2_quantile(10.0, 0.95), 18.307_04, 1e-6),
        p("2J₁(1)/1", AS, disc_mean(1.0), 2.0 * 0.440_050_585_7, 1e-9),
        p("2J₁(2)/2", AS, disc_mean(2.0), 0.576_724_807_8, 1e-9),
        p(
            "2J₁(5)/5",
            AS,
            disc_mean(5.0),
            2.0 * -0.327_579_137_6 / 5.0,
            1e-8,
        ),
        p(
            "2J₁(10)/10",
            AS,
            disc_mean(10.0),
            2.0 * 0.043_472_746_2 / 10.0,
            1e-7,
        ),
        p("t₀.₉₇₅(1)", AS, t975(1), 12.706, 1e-4),
        p("t₀.₉₇₅(5)", AS, t975(5), 2.571, 2e-4),
        p("t₀.₉₇₅(10)", AS, t975(10), 2.228, 2e-4),
    ]
}

fn poisson_checks() -> Vec<Published> {
    use shardlog_core::fleet::poisson_interval;
    let p = |what, got, want| Published {
        what,
        source: GARWOOD,
        got,
        want,
        rel: 1e-6,
    };
    vec![
        p("k = 0, upper", poisson_interval(0, 0.95).high, 3.688_879),
        p("k = 1, lower", poisson_interval(1, 0.95).low, 0.025_317_8),
        p("k = 1, upper", poisson_interval(1, 0.95).high, 5.571_643),
        p("k = 5, lower", poisson_interval(5, 0.95).low, 1.623_486),
        p("k = 5, upper", poisson_interval(5, 0.95).high, 11.668_33),
        p("k = 10, lower", poisson_interval(10, 0.95).low, 4.795_389),
        p("k = 10, upper", poisson_interval(10, 0.95).high, 18.390_36),
    ]
}

fn plate_checks() -> Vec<Published> {
    use shardlog_core::loads::plates::{self, Edges, Plate, PlateLoad, Shape};
    use shardlog_core::loads::Elastic;
    let mat = Elastic {
        youngs_modulus: 70e9,
        poisson: 0.3,
    };
    let (q, t) = (1000.0, 0.01);
    let d = plates::rigidity(mat.youngs_modulus, 0.3, t);
    let bend = |shape, edges, b: Option<f64>| {
        plates::bend(&Plate {
            shape,
            edges,
            span: 1.0,
            span_b: b,
            thickness: t,
            material: mat,
            load: PlateLoad::Pressure(q),
        })
        .expect("plate")
    };
    let six_beta =
        |edges, ratio: f64| bend(Shape::Rectangular, edges, Some(ratio)).stress * t * t / q;
    let mut v = Vec::new();
    // clamped, middle of the long edge, 6β (β of Table 35 printed to three figures)
    for (what, ratio, want) in [
        ("clamped 6β, b/a 1.0", 1.0, 0.3078),
        ("clamped 6β, b/a 1.2", 1.2, 0.3834),
        ("clamped 6β, b/a 1.4", 1.4, 0.4356),
        ("clamped 6β, b/a 1.6", 1.6, 0.4680),
        ("clamped 6β, b/a 1.8", 1.8, 0.4872),
        ("clamped 6β, b/a 2.0", 2.0, 0.4974),
    ] {
        v.push(Published {
            what,
            source: "Timoshenko & Woinowsky-Krieger, Table 35 (ν = 0.3)",
            got: six_beta(Edges::Clamped, ratio),
            want,
            rel: 1e-3,
        });
    }
    v.push(Published {
        what: "clamped square, centre deflection / (q a⁴/D)",
        source: "Timoshenko & Woinowsky-Krieger, Table 35",
        got: bend(Shape::Rectangular, Edges::Clamped, Some(1.0)).deflection * d / q,
        want: 0.00126,
        rel: 5e-3,
    });
    for (what, ratio, want) in [
        ("simply supported β, b/a 1.0", 1.0, 0.2874),
        ("simply supported β, b/a 2.0", 2.0, 0.6102),
        ("simply supported β, b/a 3.0", 3.0, 0.7134),
    ] {
        v.push(Published {
            what,
            source:
                "Roark's Formulas for Stress and Strain, 7th ed., Table 11.4 case 1a; TWK Table 8",
            got: six_beta(Edges::SimplySupported, ratio),
            want,
            rel: 3e-3,
        });
    }
    // circular plates of radius a = 0.5 (span is the diameter)
    let a: f64 = 0.5;
    let circ = |edges| bend(Shape::Circular, edges, None);
    v.push(Published {
        what: "clamped circle, edge σ = 3qa²/4t²",
        source: TWK,
        got: circ(Edges::Clamped).stress,
        want: 0.75 * q * a * a / (t * t),
        rel: 1e-9,
    });
    v.push(Published {
        what: "clamped circle, w = qa⁴/64D",
        source: TWK,
        got: circ(Edges::Clamped).deflection,
        want: q * a.powi(4) / (64.0 * d),
        rel: 1e-9,
    });
    v.push(Published {
        what: "simply supported circle, centre σ = 3(3+ν)qa²/8t²",
        source: TWK,
        got: circ(Edges::SimplySupported).stress,
        want: 3.0 * 3.3 * q * a * a / (8.0 * t * t),
        rel: 1e-9,
    });
    v.push(Published {
        what: "simply supported circle, w = (5+ν)qa⁴/64(1+ν)D",
        source: TWK,
        got: circ(Edges::SimplySupported).deflection,
        want: 5.3 * q * a.powi(4) / (64.0 * 1.3 * d),
        rel: 1e-9,
    });
    v.push(Published {
        what: "clamped long plate, edge σ → 6·qa²/12t² (the strip)",
        source: "Roark's Formulas for Stress and Strain, Table 11.4 case 8a, b/a = ∞: β₁ = 0.5",
        got: six_beta(Edges::Clamped, 10.0),
        want: 0.5,
        rel: 1e-4,
    });
    v
}

fn fracture_checks() -> Vec<Published> {
    use shardlog_core::fracture::residual::{linear_central_tension, thermal_layer_fraction};
    vec![
        Published {
            what: "ion-exchanged CT, CS 700 MPa, DOL 40 µm, t 0.7 mm",
            source: "Varshneya, Int. J. Appl. Glass Sci. 1 (2010) 131: CT = CS·DOL/(t − 2·DOL)",
            got: linear_central_tension(700e6, 40e-6, 0.7e-3) / 1e6,
            want: 700.0 * 0.04 / 0.62,
            rel: 1e-12,
        },
        Published {
            what: "thermally tempered compressive layer depth / thickness",
            source: "Gardon, parabolic tempering profile (Glass: Science and Technology 5, 1980): zero at x = 1/√3",
            got: thermal_layer_fraction(),
            want: 0.211_325,
            rel: 1e-5,
        },
        Published {
            what: "embedded penny crack Y",
            source: "Sneddon, Proc. R. Soc. A 187 (1946) 229: K = 2σ√(a/π)",
            got: geometry_factor(&FlawGeometry::EmbeddedPenny),
            want: 2.0 / PI.sqrt(),
            rel: 1e-12,
        },
    ]
}

#[test]
fn published_values_table() {
    let all: Vec<Published> = [
        unit_checks(),
        special_function_checks(),
        poisson_checks(),
        plate_checks(),
        fracture_checks(),
    ]
    .into_iter()
    .flatten()
    .collect();
    let mut failed = Vec::new();
    for c in &all {
        assert!(!c.source.trim().is_empty(), "{} names no source", c.what);
        if (c.got - c.want).abs() > c.rel * c.want.abs() {
            failed.push(format!(
                "{}: got {}, published {} ± {} relative ({})",
                c.what, c.got, c.want, c.rel, c.source
            ));
        }
    }
    assert!(failed.is_empty(), "{}", failed.join("\n"));
    assert!(all.len() >= 60, "{} published checks", all.len());
}
