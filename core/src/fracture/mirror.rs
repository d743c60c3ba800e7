//! The mirror-constant relation σ = A / √R per boundary, and the consistency between
//! boundaries (Orr; Mecholsky, Rice & Freiman, J. Am. Ceram. Soc. 57 (1974) 440; ASTM C1678).

use serde::{Deserialize, Serialize};
use std::str::FromStr;

use super::materials::{Constant, Material, Provenance};
use super::uncertainty::{self, ReadingStats};
use super::{spelled, UnknownWord};

/// The three boundaries a fractographer measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Boundary {
    MirrorMist,
    MistHackle,
    Branching,
}

impl Boundary {
    pub const ALL: [Boundary; 3] = [
        Boundary::MirrorMist,
        Boundary::MistHackle,
        Boundary::Branching,
    ];

    /// "mirror–mist", "mist–hackle", "branching".
    pub fn label(self) -> &'static str {
        match self {
            Boundary::MirrorMist => "mirror–mist",
            Boundary::MistHackle => "mist–hackle",
            Boundary::Branching => "branching",
        }
    }

    /// The key used on the command line and in JSON: mirror-mist, mist-hackle, branching.
    pub fn key(self) -> &'static str {
        match self {
            Boundary::MirrorMist => "mirror-mist",
            Boundary::MistHackle => "mist-hackle",
            Boundary::Branching => "branching",
        }
    }

    /// The constant's symbol: A_i, A_o, A_b.
    pub fn constant_symbol(self) -> &'static str {
        match self {
            Boundary::MirrorMist => "A_i",
            Boundary::MistHackle => "A_o",
            Boundary::Branching => "A_b",
        }
    }

    /// The stored lookup code: mirror_mist, mist_hackle, branching.
    pub fn code(self) -> &'static str {
        match self {
            Boundary::MirrorMist => "mirror_mist",
            Boundary::MistHackle => "mist_hackle",
            Boundary::Branching => "branching",
        }
    }

    /// The material's constant for this boundary.
    pub fn constant_of(self, m: &Material) -> Option<&Constant> {
        match self {
            Boundary::MirrorMist => m.a_i.as_ref(),
            Boundary::MistHackle => m.a_o.as_ref(),
            Boundary::Branching => m.a_b.as_ref(),
        }
    }

    /// Published mirror-radius-to-flaw-size ratio for this boundary (Mecholsky, Rice &
    /// Freiman 1974): mirror–mist about 10, mist–hackle about 13; none for branching.
    pub fn flaw_ratio(self) -> Option<f64> {
        match self {
            Boundary::MirrorMist => Some(10.0),
            Boundary::MistHackle => Some(13.0),
            Boundary::Branching => None,
        }
    }
}

/// A key or a code in any case ("mirror-mist", "mirror–mist", "MIRROR_MIST"), or a short
/// form: mist, inner, ri; hackle, mirror-hackle, outer, ro; branch, crack-branching, rb.
impl FromStr for Boundary {
    type Err = UnknownWord;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Ok(match spelled(text).as_str() {
            "mirror-mist" | "mist" | "inner" | "ri" => Boundary::MirrorMist,
            "mist-hackle" | "hackle" | "mirror-hackle" | "outer" | "ro" => Boundary::MistHackle,
            "branching" | "branch" | "crack-branching" | "rb" => Boundary::Branching,
            _ => return Err(UnknownWord::new("boundary", text)),
        })
    }
}

/// Readings of one boundary: radii in metres.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoundaryReadings {
    pub boundary: Boundary,
    pub radii_m: Vec<f64>,
}

/// A constant as it was used, with its symbol.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ConstantUsed {
    /// "A_i", "A_o", "A_b", "K_Ic".
    pub symbol: String,
    pub value: f64,
    /// One standard deviation, SI, if known.
    pub spread: Option<f64>,
    pub provenance: Provenance,
    /// True when the user gave it for this calculation.
    pub overridden: bool,
}

impl ConstantUsed {
    pub fn new(symbol: &str, c: &Constant, overridden: bool) -> Self {
        ConstantUsed {
            symbol: symbol.to_string(),
            value: c.value,
            spread: c.spread,
            provenance: c.provenance.clone(),
            overridden,
        }
    }

    pub fn relative_spread(&self) -> Option<f64> {
        self.spread
            .filter(|s| s.is_finite() && *s >= 0.0 && self.value != 0.0)
            .map(|s| s / self.value.abs())
    }
}

/// One boundary's result.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoundaryResult {
    pub boundary: Boundary,
    pub readings_m: Vec<f64>,
    pub stats: ReadingStats,
    pub constant: ConstantUsed,
    /// σ = A / √(mean R), Pa.
    pub stress_pa: f64,
    /// Expanded (95 %) relative uncertainty U of the stress (see `uncertainty`).
    pub rel_u95: f64,
    pub stress_low_pa: f64,
    pub stress_high_pa: f64,
}

/// σ = A / √R.
pub fn stress_from_radius(constant: f64, radius: f64) -> f64 {
    constant / radius.sqrt()
}

/// R = (A / σ)², e.g. the branching distance predicted from a stress.
pub fn radius_from_stress(constant: f64, stress: f64) -> f64 {
    (constant / stress).powi(2)
}

/// Compute one boundary. Readings must be finite and positive (checked by the caller).
pub fn boundary_result(
    boundary: Boundary,
    readings: &[f64],
    constant: ConstantUsed,
) -> BoundaryResult {
    let stats = uncertainty::reading_stats(readings);
    let stress = stress_from_radius(constant.value, stats.mean);
    let rel_u95 = uncertainty::mirror_stress_rel_u95(&stats, constant.relative_spread());
    let (lo, hi) = uncertainty::log_interval(stress, rel_u95);
    BoundaryResult {
        boundary,
        readings_m: readings.to_vec(),
        stats,
        constant,
        stress_pa: stress,
        rel_u95,
        stress_low_pa: lo,
        stress_high_pa: hi,
    }
}

/// Whether two boundaries tell the same stress: R_b / R_a against (A_b / A_a)².
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Consistency {
    pub inner: Boundary,
    pub outer: Boundary,
    /// Measured mean radius ratio R_outer / R_inner.
    pub radius_ratio: f64,
    /// Expected ratio (A_outer / A_inner)².
    pub expected_ratio: f64,
    /// |ln(measured / expected)|.
    pub log_difference: f64,
    /// The largest |ln(measured / expected)| the 95 % uncertainties allow:
    /// 2 √(U_inner² + U_outer²) (the factor 2 because R goes as 1/σ²).
    pub allowed: f64,
    pub agrees: bool,
}

/// Consistency of two boundary results.
pub fn consistency(inner: &BoundaryResult, outer: &BoundaryResult) -> Consistency {
    let radius_ratio = outer.stats.mean / inner.stats.mean;
    let expected_ratio = (outer.constant.value / inner.constant.value).powi(2);
    let log_difference = (radius_ratio / expected_ratio).ln().abs();
    let allowed = 2.0 * (inner.rel_u95.powi(2) + outer.rel_u95.powi(2)).sqrt();
    Consistency {
        inner: inner.boundary,
        outer: outer.boundary,
        radius_ratio,
        expected_ratio,
        log_difference,
        allowed,
        agrees: log_difference <= allowed,
    }
}
