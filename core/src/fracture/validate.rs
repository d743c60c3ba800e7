//! Checks of everything the user typed, before any figure is computed: each refusal names the
//! input (see [`FractureError`]).

use super::{mm, mpa, AnalysisInput, Constant, FractureError, Temper};
use crate::units::{format, Unit};

/// Refuse an input the analysis cannot use, in the order the inputs are read: readings,
/// constants, residual stress, lengths.
pub(super) fn validate(input: &AnalysisInput) -> Result<(), FractureError> {
    check_readings(input)?;
    check_constants(input)?;
    check_residual_inputs(input)?;
    check_lengths(input)
}

/// At least one boundary with readings, each boundary once, every radius in range.
fn check_readings(input: &AnalysisInput) -> Result<(), FractureError> {
    if input.readings.iter().all(|b| b.radii_m.is_empty()) {
        return Err(FractureError::NoReadings);
    }
    for (i, b) in input.readings.iter().enumerate() {
        if input.readings[..i].iter().any(|o| o.boundary == b.boundary) {
            return Err(FractureError::invalid(
                "boundary",
                format!("{} is given twice", b.boundary.key()),
                "each boundary once, with all its radii after it",
            ));
        }
        if b.radii_m.is_empty() {
            return Err(FractureError::missing(
                "radius",
                format!("a radius for the {} boundary", b.boundary.key()),
                "at least one radius such as 1.0mm after the boundary",
            ));
        }
        for &r in &b.radii_m {
            check_positive(
                "radius",
                &format!("a {} radius", b.boundary.key()),
                r,
                Unit::Millimetre,
            )?;
        }
    }
    Ok(())
}

/// The material's constants and the constants and toughness typed over them.
fn check_constants(input: &AnalysisInput) -> Result<(), FractureError> {
    // a user's material (kept by the store as JSON) is checked like a typed constant
    for (symbol, c) in [
        ("A_i", &input.material.a_i),
        ("A_o", &input.material.a_o),
        ("A_b", &input.material.a_b),
        ("K_Ic", &input.material.k_ic),
    ] {
        if let Some(c) = c {
            check_constant(
                "material",
                &format!("{symbol} of {}", input.material.key),
                c,
                Unit::MegapascalRootMetre,
            )?;
        }
    }
    for o in &input.constant_overrides {
        check_constant(
            "constant",
            &format!("the {} constant", o.boundary.key()),
            &o.constant,
            Unit::MegapascalRootMetre,
        )?;
    }
    if let Some(k) = &input.toughness_override {
        check_constant("toughness", "the toughness", k, Unit::MegapascalRootMetre)?;
    }
    Ok(())
}

/// The surface compression and its spread.
fn check_residual_inputs(input: &AnalysisInput) -> Result<(), FractureError> {
    if let Some(cs) = input.surface_compression_pa {
        if !cs.is_finite() || cs < 0.0 || cs > upper_limit(Unit::Megapascal) {
            return Err(FractureError::invalid(
                "surface-compression",
                format!("surface compression {cs} Pa"),
                "its magnitude, zero or more, such as 95MPa (compression is understood)",
            ));
        }
        if input.temper == Some(Temper::Annealed) && cs > 0.0 {
            return Err(FractureError::invalid(
                "surface-compression",
                format!("{} given for annealed glass", mpa(cs)),
                "no surface compression for annealed glass, or another temper class",
            ));
        }
    }
    if let Some(s) = input.surface_compression_spread_pa {
        // bounded like the compression itself: a spread of 1e299 Pa made the applied-stress
        // interval infinite (found by fuzzing)
        if !s.is_finite() || s < 0.0 || s > upper_limit(Unit::Megapascal) {
            return Err(FractureError::invalid(
                "surface-compression",
                format!("spread {s} Pa"),
                "a spread of zero or more, at most 10 GPa",
            ));
        }
    }
    Ok(())
}

/// Layer depth, thickness, measured flaw and flaw geometry.
fn check_lengths(input: &AnalysisInput) -> Result<(), FractureError> {
    if let Some(d) = input.layer_depth_m {
        check_positive("layer-depth", "the layer depth", d, Unit::Micrometre)?;
    }
    if let Some(t) = input.thickness_m {
        check_positive("thickness", "the thickness", t, Unit::Millimetre)?;
    }
    if let Some(a) = input.measured_flaw_m {
        check_positive(
            "measured-flaw",
            "the measured flaw size",
            a,
            Unit::Micrometre,
        )?;
    }
    if let Some(g) = &input.flaw {
        g.validate()?;
    }
    if let (Some(d), Some(t)) = (input.layer_depth_m, input.thickness_m) {
        if d >= t / 2.0 {
            return Err(FractureError::invalid(
                "layer-depth",
                format!("a layer {} deep in a part {} thick", mm(d), mm(t)),
                "a compressive layer shallower than half the thickness",
            ));
        }
    }
    Ok(())
}

/// Upper limits far beyond any real part, so nothing downstream overflows: 10 m for lengths,
/// 1000 MPa·√m for constants and toughness, 10 GPa for stresses.
fn upper_limit(unit: Unit) -> f64 {
    match unit.dimension() {
        crate::units::Dimension::Length => 10.0,
        crate::units::Dimension::Toughness => 1e9,
        _ => 1e10,
    }
}

/// Lower limits far below any real part, so nothing downstream underflows to zero or
/// overflows to infinity (a subnormal radius once gave a stress of 6e161 MPa and a flaw of
/// 0 µm): 1 nm for lengths, 0.001 MPa·√m for constants and toughness.
fn lower_limit(unit: Unit) -> f64 {
    match unit.dimension() {
        crate::units::Dimension::Length => 1e-9,
        crate::units::Dimension::Toughness => 1e3,
        _ => 0.0,
    }
}

fn check_positive(field: &str, what: &str, v: f64, unit: Unit) -> Result<(), FractureError> {
    if !v.is_finite() || v <= 0.0 {
        return Err(FractureError::invalid(
            field,
            format!("{what} must be a finite number greater than zero, got {v}"),
            format!("a value in {} or another {} unit", unit, unit.dimension()),
        ));
    }
    let max = upper_limit(unit);
    if v > max {
        return Err(FractureError::invalid(
            field,
            format!("{what} of {} is out of range", format(v, unit)),
            format!("at most {}", format(max, unit)),
        ));
    }
    let min = lower_limit(unit);
    if v < min {
        return Err(FractureError::invalid(
            field,
            format!("{what} of {} is out of range", format(v, unit)),
            format!("at least {}", format(min, unit)),
        ));
    }
    Ok(())
}

fn check_constant(field: &str, what: &str, c: &Constant, unit: Unit) -> Result<(), FractureError> {
    check_positive(field, what, c.value, unit)?;
    if let Some(s) = c.spread {
        if !s.is_finite() || s < 0.0 {
            return Err(FractureError::invalid(
                field,
                format!("the spread of {what} must be finite and not negative, got {s}"),
                "a spread of zero or more".to_string(),
            ));
        }
        // one standard deviation larger than the value says nothing about it, and made the
        // interval of the flaw size overflow to infinity (found by fuzzing)
        if s > c.value {
            return Err(FractureError::invalid(
                field,
                format!(
                    "the spread of {what} ({}) is larger than the value ({})",
                    format(s, unit),
                    format(c.value, unit)
                ),
                "a spread (one standard deviation) no larger than the value itself",
            ));
        }
    }
    Ok(())
}
