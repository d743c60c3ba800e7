//! Thermal stress between a hot centre and a cold edge of a pane.
//!
//! Method: the cold edge band is held to the length of the hotter pane beside it, so it carries a
//! tension σ = k·E·α·ΔT (the restrained-strip relation of thermoelasticity; e.g. Timoshenko &
//! Goodier, *Theory of Elasticity*, ch. 13). k = 1 is a fully restrained strip in one direction;
//! k = 1/(1 − ν) a fully restrained biaxial layer; real panes with a shaded edge band sit at or
//! below 1 because the band is narrow and the frame lets it move. Inverse: the temperature
//! difference an edge of strength σ_edge survives, ΔT = σ_edge / (k·E·α).

use super::{positive, within, LoadError, Warning};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Thermal {
    /// Pa
    pub youngs_modulus: f64,
    /// 1/K
    pub expansion: f64,
    /// K
    pub delta_t: f64,
    /// restraint factor, 0 < k ≤ 2 (1 = full uniaxial restraint)
    pub restraint: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct ThermalResult {
    /// Pa
    pub stress: f64,
    /// Pa per kelvin (k·E·α)
    pub stress_per_kelvin: f64,
    pub warnings: Vec<Warning>,
}

pub const THERMAL_METHOD: &str =
    "thermal edge stress of a restrained cold edge band: sigma = k E alpha dT (thermoelasticity)";

/// A restraint above this is more than a fully restrained biaxial layer of any glass
/// (1/(1 − 0.499) ≈ 2); refuse it.
const MAX_RESTRAINT: f64 = 2.0;
/// Temperature differences above this are past what a glazed pane meets in service
/// (judgement, for the warning only).
const LARGE_DELTA_T_K: f64 = 150.0;

fn check(youngs_modulus: f64, expansion: f64, restraint: f64) -> Result<f64, LoadError> {
    let e = positive("material", youngs_modulus)?;
    let a = positive("material", expansion)?;
    let k = within(
        "restraint",
        restraint,
        f64::MIN_POSITIVE,
        MAX_RESTRAINT,
        "a restraint factor above 0 and at most 2 (1 = fully restrained edge strip)",
    )?;
    Ok(k * e * a)
}

pub fn edge_stress(input: &Thermal) -> Result<ThermalResult, LoadError> {
    let per_k = check(input.youngs_modulus, input.expansion, input.restraint)?;
    let dt = positive("delta-t", input.delta_t)?;
    let mut warnings = Vec::new();
    if input.restraint > 1.0 {
        warnings.push(Warning::new(
            "restraint-above-1",
            "restraint above 1 means a biaxially restrained layer; a shaded edge band is usually \
             at or below 1",
        ));
    }
    if dt > LARGE_DELTA_T_K {
        warnings.push(Warning::new(
            "large-delta-t",
            "temperature difference over 150 K: beyond service conditions of glazing; check the \
             input",
        ));
    }
    super::fits("delta-t", dt, &[per_k, per_k * dt])?;
    Ok(ThermalResult {
        stress: per_k * dt,
        stress_per_kelvin: per_k,
        warnings,
    })
}

/// The temperature difference (K) that raises the edge tension to `edge_strength` (Pa).
pub fn allowable_delta_t(
    youngs_modulus: f64,
    expansion: f64,
    restraint: f64,
    edge_strength: f64,
) -> Result<f64, LoadError> {
    let per_k = check(youngs_modulus, expansion, restraint)?;
    let s = positive("edge-strength", edge_strength)?;
    super::fits("edge-strength", s, &[s / per_k])?;
    Ok(s / per_k)
}
