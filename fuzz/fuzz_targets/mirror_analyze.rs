//! Arbitrary readings (and everything around them) into `fracture::analyze`.
//! Properties: never panics; either a typed error naming a field, or an analysis whose
//! figures are all finite, with low ≤ value ≤ high for every interval.
#![no_main]

use arbitrary::{Arbitrary, Result, Unstructured};
use libfuzzer_sys::fuzz_target;
use shardlog_core::fracture::{
    self, materials, AnalysisInput, Boundary, BoundaryReadings, Constant, ConstantOverride,
    FlawGeometry, Material, Origin, Temper,
};

/// Mostly plausible numbers, sometimes anything at all (NaN, infinities, subnormals, huge).
fn number(u: &mut Unstructured, scale: f64) -> Result<f64> {
    Ok(match u.int_in_range(0u8..=9)? {
        0 => f64::arbitrary(u)?,
        1 => [0.0, -0.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, f64::MIN_POSITIVE, 5e-324, f64::MAX, -1.0][u.choose_index(9)?],
        2 => scale * 10f64.powi(u.int_in_range(-30..=30)?),
        _ => scale * (u.int_in_range(1u32..=1_000_000)? as f64) / 1000.0,
    })
}

fn boundary(u: &mut Unstructured) -> Result<Boundary> {
    Ok(*u.choose(&Boundary::ALL)?)
}

fn constant(u: &mut Unstructured, scale: f64) -> Result<Option<Constant>> {
    if !bool::arbitrary(u)? {
        return Ok(None);
    }
    let value = number(u, scale)?;
    let spread = if bool::arbitrary(u)? { Some(number(u, scale / 10.0)?) } else { None };
    Ok(Some(Constant { spread, ..Constant::user(value, "fuzz") }))
}

fn material(u: &mut Unstructured) -> Result<Material> {
    let lib = materials::library();
    let mut m = lib[u.choose_index(lib.len())?].clone();
    // a user-made material: any constant may be odd (the store persists materials as JSON)
    if u.ratio(1, 4)? {
        m.a_i = constant(u, 2e6)?;
        m.a_o = constant(u, 2.5e6)?;
        m.a_b = constant(u, 3e6)?;
        m.k_ic = constant(u, 0.75e6)?;
        m.youngs_modulus = constant(u, 70e9)?;
        m.poisson = constant(u, 0.2)?;
        m.glass = bool::arbitrary(u)?;
    }
    Ok(m)
}

fn flaw(u: &mut Unstructured) -> Result<Option<FlawGeometry>> {
    let r = |u: &mut Unstructured| number(u, 0.5);
    Ok(match u.int_in_range(0u8..=7)? {
        0 => Some(FlawGeometry::Semicircular { a_over_t: r(u)? }),
        1 => Some(FlawGeometry::SemiElliptical { a_over_c: r(u)?, a_over_t: r(u)? }),
        2 => Some(FlawGeometry::SemicircularIrwin),
        3 => Some(FlawGeometry::EmbeddedPenny),
        4 => Some(FlawGeometry::EdgeCrack),
        5 => Some(FlawGeometry::CornerCrack { a_over_c: r(u)?, a_over_t: r(u)? }),
        6 => Some(FlawGeometry::ThroughCrack),
        _ => None,
    })
}

fn opt(u: &mut Unstructured, scale: f64) -> Result<Option<f64>> {
    Ok(if bool::arbitrary(u)? { Some(number(u, scale)?) } else { None })
}

fn input(u: &mut Unstructured) -> Result<AnalysisInput> {
    let mut a = AnalysisInput::new(material(u)?);
    for _ in 0..u.int_in_range(0u8..=4)? {
        let b = boundary(u)?;
        let mut radii = Vec::new();
        for _ in 0..u.int_in_range(0u8..=12)? {
            radii.push(number(u, 1e-3)?);
        }
        a.readings.push(BoundaryReadings { boundary: b, radii_m: radii });
    }
    for _ in 0..u.int_in_range(0u8..=2)? {
        if let Some(c) = constant(u, 2e6)? {
            a.constant_overrides.push(ConstantOverride { boundary: boundary(u)?, constant: c });
        }
    }
    a.toughness_override = constant(u, 0.75e6)?;
    a.temper = match u.int_in_range(0u8..=4)? {
        0 => Some(Temper::Annealed),
        1 => Some(Temper::HeatStrengthened),
        2 => Some(Temper::FullyTempered),
        3 => Some(Temper::ChemicallyStrengthened),
        _ => None,
    };
    a.surface_compression_pa = opt(u, 100e6)?;
    a.surface_compression_spread_pa = opt(u, 10e6)?;
    a.layer_depth_m = opt(u, 1e-3)?;
    a.origin = if bool::arbitrary(u)? { Origin::Surface } else { Origin::Interior };
    a.flaw = flaw(u)?;
    a.measured_flaw_m = opt(u, 1e-4)?;
    a.thickness_m = opt(u, 6e-3)?;
    Ok(a)
}

fn finite(what: &str, v: f64, input: &AnalysisInput) {
    assert!(v.is_finite(), "{what} = {v} for {input:?}");
}

fn interval(what: &str, lo: f64, v: f64, hi: f64, input: &AnalysisInput) {
    finite(what, lo, input);
    finite(what, v, input);
    finite(what, hi, input);
    assert!(lo <= v && v <= hi, "{what}: {lo} <= {v} <= {hi} fails for {input:?}");
}

fuzz_target!(|data: &[u8]| {
    let mut u = Unstructured::new(data);
    let Ok(inp) = input(&mut u) else { return };
    match fracture::analyze(&inp) {
        Err(e) => {
            assert!(!e.field().is_empty());
            assert!(!e.to_string().is_empty());
        }
        Ok(a) => {
            interval("stress", a.stress_low_pa, a.stress_pa, a.stress_high_pa, &inp);
            interval("applied", a.applied_low_pa, a.applied_stress_pa, a.applied_high_pa, &inp);
            finite("residual at origin", a.residual.at_origin_pa, &inp);
            finite("surface compression", a.residual.surface_compression_pa, &inp);
            for b in &a.boundaries {
                interval("boundary stress", b.stress_low_pa, b.stress_pa, b.stress_high_pa, &inp);
                finite("rel_u95", b.rel_u95, &inp);
                finite("mean radius", b.stats.mean, &inp);
                finite("u_mean", b.stats.u_mean, &inp);
                finite("constant", b.constant.value, &inp);
            }
            if let Some(f) = &a.flaw {
                interval("flaw size", f.size_low_m, f.size_m, f.size_high_m, &inp);
                finite("Y", f.factor.y, &inp);
                for r in &f.ratios {
                    finite("flaw ratio", r.ratio, &inp);
                }
                if let Some(m) = f.measured_over_predicted {
                    finite("measured/predicted", m, &inp);
                }
            }
            if let Some(b) = &a.branching {
                interval("branching", b.low_m, b.distance_m, b.high_m, &inp);
            }
            for c in &a.consistency {
                finite("radius ratio", c.radius_ratio, &inp);
                finite("log difference", c.log_difference, &inp);
            }
            // the result serialises (the store keeps it as JSON)
            let json = serde_json::to_string(&a).expect("analysis serialises");
            assert!(!json.contains("NaN"));
        }
    }
});
