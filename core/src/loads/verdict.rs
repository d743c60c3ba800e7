//! Does a hypothesis explain the measured stress?
//!
//! Inputs: the stress back-calculated from the fracture surface (a central value and its interval,
//! from the uncertainty of the mirror constant and readings), the stress the hypothesis produces,
//! and optionally a lower bound of the sound part's strength (a Weibull quantile, or for tempered
//! glass its surface compression plus the strength of the annealed surface).
//!
//! Thresholds, and why:
//! - [`MODEL_FACTOR`] = 1.5. A load model is itself uncertain: contact times are guessed to a
//!   factor of about 1.5, edge conditions sit between simply supported and clamped, restraint
//!   factors between 0.5 and 1. A hypothesis whose stress, raised by this factor, still falls
//!   below the low end of the measured interval cannot explain the break: **too weak**.
//! - [`FAR_FACTOR`] = 2. Mirror radius and branching distance go as 1/σ²: a stress twice the
//!   upper end of the measured interval would have left a mirror a quarter of the size (and
//!   branching much closer to the origin, more fragments). A hypothesis above twice the upper end
//!   is **far too strong** as stated. Caution: a load that rises through the breaking stress
//!   breaks the part on the way up, at the measured stress; "far too strong" says the stated
//!   magnitude is not what the fracture surface records (overstated speed or mass, or a
//!   different event), not that the kind of load is impossible.
//! - otherwise **consistent**.
//! - sound part: the hypothesis stress at or above the strength lower bound means the load alone
//!   should break a sound part; below it, a sound part should have survived, and a flaw, prior
//!   damage or another stress is needed to explain the break.

use super::{positive, LoadError};

/// Uncertainty allowed to the hypothesis' own model (see the module notes).
pub const MODEL_FACTOR: f64 = 1.5;
/// Above this multiple of the measured upper bound the hypothesis is far too strong.
pub const FAR_FACTOR: f64 = 2.0;

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measured {
    /// Pa
    pub stress: f64,
    /// Pa, low end of the interval
    pub low: f64,
    /// Pa, high end of the interval
    pub high: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Finding {
    Consistent,
    TooWeak,
    FarTooStrong,
}

impl Finding {
    pub fn label(self) -> &'static str {
        match self {
            Finding::Consistent => "consistent",
            Finding::TooWeak => "too weak",
            Finding::FarTooStrong => "far too strong",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SoundPart {
    /// the load alone should break a part as strong as the lower bound
    WouldBreak,
    /// a sound part should have survived this load
    WouldSurvive,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Verdict {
    pub finding: Finding,
    /// hypothesis stress / measured central stress
    pub ratio: f64,
    /// `Some` when a strength lower bound was given
    pub sound_part: Option<SoundPart>,
    /// hypothesis stress / strength lower bound
    pub strength_ratio: Option<f64>,
    /// one or two plain sentences
    pub explanation: String,
}

pub fn judge(
    measured: &Measured,
    hypothesis_stress: f64,
    strength_lower_bound: Option<f64>,
) -> Result<Verdict, LoadError> {
    let s = positive("measured-stress", measured.stress)?;
    let lo = positive("measured-low", measured.low)?;
    let hi = positive("measured-high", measured.high)?;
    if lo > s {
        return Err(LoadError::OutOfRange {
            field: "measured-low",
            value: lo,
            expected: "an interval low ≤ stress ≤ high",
        });
    }
    if s > hi {
        return Err(LoadError::OutOfRange {
            field: "measured-high",
            value: hi,
            expected: "an interval low ≤ stress ≤ high",
        });
    }
    let h = positive("hypothesis-stress", hypothesis_stress)?;
    let ratio = h / s;
    let finding = if h * MODEL_FACTOR < lo {
        Finding::TooWeak
    } else if h > FAR_FACTOR * hi {
        Finding::FarTooStrong
    } else {
        Finding::Consistent
    };
    let mut explanation = match finding {
        Finding::Consistent => format!(
            "consistent: the hypothesis gives {:.2} times the measured stress, within the \
             measured interval allowing a factor {MODEL_FACTOR} for the load model",
            ratio
        ),
        Finding::TooWeak => format!(
            "too weak: the hypothesis gives {:.2} times the measured stress; even raised by a \
             factor {MODEL_FACTOR} it stays below the measured interval",
            ratio
        ),
        Finding::FarTooStrong => format!(
            "far too strong: the hypothesis gives {:.2} times the measured stress, more than \
             {FAR_FACTOR} times its upper end; the fracture would show a much smaller mirror and \
             more branching. A load rising through the breaking stress still breaks the part at \
             the measured stress: the stated magnitude, not the kind of load, is in doubt",
            ratio
        ),
    };
    let (sound_part, strength_ratio) = match strength_lower_bound {
        None => (None, None),
        Some(b) => {
            let b = positive("strength", b)?;
            let r = h / b;
            let sp = if h >= b {
                explanation.push_str(&format!(
                    ". The load alone reaches {:.2} times the strength lower bound: it should \
                     break a sound part",
                    r
                ));
                SoundPart::WouldBreak
            } else {
                explanation.push_str(&format!(
                    ". The load alone reaches {:.2} times the strength lower bound: a sound part \
                     should have survived it; a flaw, prior damage or another stress is needed",
                    r
                ));
                SoundPart::WouldSurvive
            };
            (Some(sp), Some(r))
        }
    };
    Ok(Verdict {
        finding,
        ratio,
        sound_part,
        strength_ratio,
        explanation,
    })
}
