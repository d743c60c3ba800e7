//! Service-load hypotheses: forward calculations that test a suspected cause against the
//! stress back-calculated from the fracture mirror. Pure: numbers in (SI), numbers out, or a
//! typed error naming the field. No I/O, no clock, no printing.
//!
//! - [`impact`]: impulse–momentum force of a blunt impact;
//! - [`contact`]: Hertz contact of a sphere on a flat (force, contact radius, surface tension);
//! - [`plates`]: small-deflection bending of circular and rectangular plates;
//! - [`thermal`]: σ = k·E·α·ΔT between a hot centre and a cold edge, and its inverse;
//! - [`critical`]: K(a) = Y·σ·√a, the critical flaw size and the failure stress of a flaw;
//! - [`verdict`]: compare a hypothesis with the measured stress and a strength lower bound.
//!
//! Every function is cheap (microseconds; the simply supported rectangle under a patch, the
//! slowest, about 0.1 ms), so an interface may call them on every keystroke.

pub mod clamped;
pub mod clamped_table;
pub mod contact;
pub mod critical;
pub mod impact;
pub mod plates;
pub mod thermal;
pub mod verdict;

/// Why a calculation refused its input. The field is named as the user knows it
/// (the CLI flag without dashes), the value is in SI units.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LoadError {
    #[error("{field}: out of range; expected {expected}")]
    OutOfRange {
        field: &'static str,
        value: f64,
        expected: &'static str,
    },
    #[error("{field}: {reason}")]
    NotAvailable { field: &'static str, reason: String },
}

impl LoadError {
    /// The field the error is about.
    pub fn field(&self) -> &'static str {
        match self {
            LoadError::OutOfRange { field, .. } | LoadError::NotAvailable { field, .. } => field,
        }
    }
}

/// Something the analyst should know about a result that is still computed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Warning {
    /// A stable key for tests and machines, e.g. `large-deflection`.
    pub code: &'static str,
    /// One plain sentence for a person.
    pub message: String,
}

impl Warning {
    pub fn new(code: &'static str, message: impl Into<String>) -> Self {
        Warning {
            code,
            message: message.into(),
        }
    }
}

/// `value` must be finite and > 0.
pub(crate) fn positive(field: &'static str, value: f64) -> Result<f64, LoadError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(LoadError::OutOfRange {
            field,
            value,
            expected: "a finite value greater than zero",
        })
    }
}

/// `value` must be finite and within `[lo, hi]`.
pub(crate) fn within(
    field: &'static str,
    value: f64,
    lo: f64,
    hi: f64,
    expected: &'static str,
) -> Result<f64, LoadError> {
    if value.is_finite() && value >= lo && value <= hi {
        Ok(value)
    } else {
        Err(LoadError::OutOfRange {
            field,
            value,
            expected,
        })
    }
}

/// Every figure of a result must fit a floating-point number: inputs far past any real part
/// (a span of 1e300 m, a speed of 1e308 m/s) once gave infinities printed as "—" with exit 0.
/// Refuse them, naming the input that drives the result.
pub(crate) fn fits(field: &'static str, value: f64, results: &[f64]) -> Result<(), LoadError> {
    if results.iter().all(|r| r.is_finite()) {
        Ok(())
    } else {
        Err(LoadError::OutOfRange {
            field,
            value,
            expected: "a value within the range of real parts (the result overflows)",
        })
    }
}

/// Elastic constants of a body, SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Elastic {
    /// Young's modulus, Pa.
    pub youngs_modulus: f64,
    /// Poisson's ratio.
    pub poisson: f64,
}

impl Elastic {
    pub(crate) fn check(self, prefix: Field) -> Result<Self, LoadError> {
        positive(prefix.modulus, self.youngs_modulus)?;
        within(
            prefix.poisson,
            self.poisson,
            0.0,
            0.499,
            "a Poisson's ratio from 0 to 0.499",
        )?;
        Ok(self)
    }
}

/// Field names used in errors about one body's elastic constants.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Field {
    pub modulus: &'static str,
    pub poisson: &'static str,
}

/// One hypothesis of any kind, for an interface that lets the analyst switch between them and
/// recomputes on every keystroke: `evaluate` gives the common figures of all kinds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Hypothesis {
    Impulse(impact::Impulse),
    Sphere(contact::SphereImpact),
    Plate(plates::Plate),
    Thermal(thermal::Thermal),
}

/// The figures every hypothesis can be shown with. `stress` is what the verdict compares with
/// the measured stress (`None` for the impulse model, which gives a force only).
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// N
    pub force: Option<f64>,
    /// Pa
    pub stress: Option<f64>,
    /// m
    pub deflection: Option<f64>,
    pub warnings: Vec<Warning>,
    pub method: &'static str,
}

pub fn evaluate(h: &Hypothesis) -> Result<Outcome, LoadError> {
    Ok(match h {
        Hypothesis::Impulse(i) => {
            let r = impact::impulse(i)?;
            Outcome {
                force: Some(r.force),
                stress: None,
                deflection: None,
                warnings: r.warnings,
                method: impact::IMPULSE_METHOD,
            }
        }
        Hypothesis::Sphere(s) => {
            let r = contact::sphere_impact(s)?;
            Outcome {
                force: Some(r.contact.force),
                stress: Some(r.contact.rim_tension),
                deflection: None,
                warnings: r.warnings,
                method: contact::HERTZ_METHOD,
            }
        }
        Hypothesis::Plate(p) => {
            let r = plates::bend(p)?;
            Outcome {
                force: Some(r.force),
                stress: Some(r.stress),
                deflection: Some(r.deflection),
                warnings: r.warnings,
                method: r.method,
            }
        }
        Hypothesis::Thermal(t) => {
            let r = thermal::edge_stress(t)?;
            Outcome {
                force: None,
                stress: Some(r.stress),
                deflection: None,
                warnings: r.warnings,
                method: thermal::THERMAL_METHOD,
            }
        }
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn evaluate_passes_the_figures_through() {
        let t = thermal::Thermal {
            youngs_modulus: 70e9,
            expansion: 9e-6,
            delta_t: 10.0,
            restraint: 1.0,
        };
        let o = evaluate(&Hypothesis::Thermal(t)).unwrap();
        assert!((o.stress.unwrap() - 6.3e6).abs() < 1.0);
        let bad =
            evaluate(&Hypothesis::Thermal(thermal::Thermal { delta_t: 0.0, ..t })).unwrap_err();
        assert_eq!(bad.field(), "delta-t");
    }
}
