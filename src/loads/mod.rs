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
//! Every function is cheap (microseconds, the rectangular patch series a few milliseconds at
//! most), so an interface may call them on every keystroke.

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
    #[error("{field}: {value} is out of range; expected {expected}")]
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
