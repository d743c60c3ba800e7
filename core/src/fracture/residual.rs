//! Residual stress at the origin, from a temper class or a measured surface compression.
//!
//! Sign convention: tension positive, compression negative. The mirror gives the **net**
//! stress at the origin; the applied (service) stress is net − residual. A surface origin in
//! tempered glass sits in compression (residual = −surface compression), so the applied stress
//! was larger than the mirror says. An interior origin sits in the tensile core; for the
//! parabolic through-thickness profile of thermally tempered glass the central tension is half
//! the surface compression: σ(x) = CS·(1 − 3x²)/2 with x = 1 − 2z/t (z depth from a face)
//! gives −CS at the faces, +CS/2 at the mid-plane and no net force. It crosses zero at
//! x = 1/√3, so the compressive layer reaches z/t = (1 − 1/√3)/2 ≈ 0.211 from each face.

use serde::{Deserialize, Serialize};
use std::str::FromStr;

use super::{spelled, UnknownWord};

/// ASTM C1048 classes (plus ion-exchanged glass, which has no C1048 class).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Temper {
    Annealed,
    HeatStrengthened,
    FullyTempered,
    ChemicallyStrengthened,
}

impl Temper {
    pub const ALL: [Temper; 4] = [
        Temper::Annealed,
        Temper::HeatStrengthened,
        Temper::FullyTempered,
        Temper::ChemicallyStrengthened,
    ];

    /// The stored lookup code: annealed, heat_strengthened, fully_tempered,
    /// chemically_strengthened.
    pub fn code(self) -> &'static str {
        match self {
            Temper::Annealed => "annealed",
            Temper::HeatStrengthened => "heat_strengthened",
            Temper::FullyTempered => "fully_tempered",
            Temper::ChemicallyStrengthened => "chemically_strengthened",
        }
    }

    /// The spelling of the command line, the bench and JSON: annealed, heat-strengthened,
    /// fully-tempered, chemically-strengthened.
    pub fn key(self) -> &'static str {
        match self {
            Temper::Annealed => "annealed",
            Temper::HeatStrengthened => "heat-strengthened",
            Temper::FullyTempered => "fully-tempered",
            Temper::ChemicallyStrengthened => "chemically-strengthened",
        }
    }

    /// "annealed", "heat-strengthened", "fully tempered", "chemically strengthened".
    pub fn label(self) -> &'static str {
        match self {
            Temper::Annealed => "annealed",
            Temper::HeatStrengthened => "heat-strengthened",
            Temper::FullyTempered => "fully tempered",
            Temper::ChemicallyStrengthened => "chemically strengthened",
        }
    }

    /// Thermally tempered (parabolic profile).
    pub fn is_thermal(self) -> bool {
        matches!(self, Temper::HeatStrengthened | Temper::FullyTempered)
    }

    /// The default surface compression for a class when none is measured (Pa), its spread
    /// (one standard deviation, Pa) and the basis in words. `None` where the class has none.
    pub fn default_surface_compression(self) -> Option<(f64, Option<f64>, &'static str)> {
        match self {
            Temper::Annealed => Some((0.0, None, "annealed: no residual stress")),
            // 24–52 MPa (3500–7500 psi): midpoint, half-range as one standard deviation
            Temper::HeatStrengthened => Some((
                38e6,
                Some(14e6),
                "heat-strengthened class of ASTM C1048 (24–52 MPa surface compression, \
                 thickness up to 6 mm): midpoint 38 MPa taken, half-range as one standard \
                 deviation",
            )),
            Temper::FullyTempered => Some((
                69e6,
                None,
                "fully tempered class of ASTM C1048: at least 69 MPa surface compression; the \
                 class minimum is taken, real panes often carry more",
            )),
            Temper::ChemicallyStrengthened => None,
        }
    }
}

/// A key or a code in any case ("fully-tempered", "Fully_Tempered"), or a short form: an, hs,
/// tempered, ft, toughened, chemical, cs, ion-exchanged.
impl FromStr for Temper {
    type Err = UnknownWord;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Ok(match spelled(text).as_str() {
            "annealed" | "an" => Temper::Annealed,
            "heat-strengthened" | "hs" => Temper::HeatStrengthened,
            "fully-tempered" | "tempered" | "ft" | "toughened" => Temper::FullyTempered,
            "chemically-strengthened" | "chemical" | "cs" | "ion-exchanged" => {
                Temper::ChemicallyStrengthened
            }
            _ => return Err(UnknownWord::new("temper class", text)),
        })
    }
}

/// Where the origin sits through the thickness.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Origin {
    #[default]
    Surface,
    Interior,
}

impl Origin {
    /// The code of the command line and the bench: surface, interior.
    pub fn code(self) -> &'static str {
        self.label()
    }

    /// "surface", "interior".
    pub fn label(self) -> &'static str {
        match self {
            Origin::Surface => "surface",
            Origin::Interior => "interior",
        }
    }
}

/// "surface", or "interior" (also "internal", "core"), in any case.
impl FromStr for Origin {
    type Err = UnknownWord;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        match OriginLocation::from_str(text) {
            Ok(OriginLocation::Surface) => Ok(Origin::Surface),
            Ok(OriginLocation::Interior) => Ok(Origin::Interior),
            _ => Err(UnknownWord::new("origin location", text)),
        }
    }
}

/// Where on the part an origin was found, as an examination records it. An edge or corner
/// origin is a surface origin for the residual stress.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum OriginLocation {
    Surface,
    Edge,
    Corner,
    Interior,
}

impl OriginLocation {
    pub const ALL: [OriginLocation; 4] = [
        OriginLocation::Surface,
        OriginLocation::Edge,
        OriginLocation::Corner,
        OriginLocation::Interior,
    ];

    /// The stored lookup code: surface, edge, corner, interior.
    pub fn code(self) -> &'static str {
        self.label()
    }

    /// "surface", "edge", "corner", "interior".
    pub fn label(self) -> &'static str {
        match self {
            OriginLocation::Surface => "surface",
            OriginLocation::Edge => "edge",
            OriginLocation::Corner => "corner",
            OriginLocation::Interior => "interior",
        }
    }

    /// The flaw geometry the location implies when none is chosen: an edge crack at an edge,
    /// a corner crack (a/c = `aspect`, at most 1) at a corner; `None` leaves the analysis'
    /// default for a face (semicircular surface flaw) and the interior (embedded penny).
    pub fn default_geometry(self, aspect: f64) -> Option<super::FlawGeometry> {
        match self {
            OriginLocation::Surface | OriginLocation::Interior => None,
            OriginLocation::Edge => Some(super::FlawGeometry::EdgeCrack),
            OriginLocation::Corner => Some(super::FlawGeometry::CornerCrack {
                a_over_c: aspect.min(1.0),
                a_over_t: 0.0,
            }),
        }
    }

    /// Where the origin sits through the thickness: only an interior origin is in the core.
    pub fn origin(self) -> Origin {
        match self {
            OriginLocation::Interior => Origin::Interior,
            OriginLocation::Surface | OriginLocation::Edge | OriginLocation::Corner => {
                Origin::Surface
            }
        }
    }
}

/// A code in any case; "internal" and "core" also read as interior.
impl FromStr for OriginLocation {
    type Err = UnknownWord;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Ok(match spelled(text).as_str() {
            "surface" => OriginLocation::Surface,
            "edge" => OriginLocation::Edge,
            "corner" => OriginLocation::Corner,
            "interior" | "internal" | "core" => OriginLocation::Interior,
            _ => return Err(UnknownWord::new("origin location", text)),
        })
    }
}

/// Depth of the compressive layer of thermally tempered glass as a fraction of the
/// thickness, for the parabolic profile: (1 − 1/√3)/2.
pub fn thermal_layer_fraction() -> f64 {
    (1.0 - 1.0 / 3f64.sqrt()) / 2.0
}

/// The residual stress chosen for an analysis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Residual {
    pub temper: Option<Temper>,
    pub origin: Origin,
    /// Surface compression magnitude used (Pa, ≥ 0).
    pub surface_compression_pa: f64,
    /// One standard deviation of the surface compression, if known (Pa).
    pub surface_compression_spread_pa: Option<f64>,
    /// Signed residual stress at the origin (Pa, compression negative).
    pub at_origin_pa: f64,
    /// Depth of the compressive layer, if known or estimated (m).
    pub layer_depth_m: Option<f64>,
    /// How the value was chosen, in words.
    pub basis: String,
}

/// Signed residual at the origin from a surface compression magnitude.
pub fn residual_at_origin(surface_compression: f64, origin: Origin) -> f64 {
    match origin {
        Origin::Surface => -surface_compression,
        Origin::Interior => surface_compression / 2.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn signs() {
        assert_eq!(residual_at_origin(100e6, Origin::Surface), -100e6);
        assert_eq!(residual_at_origin(100e6, Origin::Interior), 50e6);
    }

    #[test]
    fn parabolic_profile_balances() {
        // σ(x)/CS = (1 − 3x²)/2, x = 1 − 2z/t in [−1, 1]: −1 at the faces, +½ at the
        // mid-plane (central tension half the surface compression); net force zero.
        let f = |x: f64| 0.5 * (1.0 - 3.0 * x * x); // = +0.5 at mid-plane, −1 at faces
        let n = 10_000;
        let integral: f64 = (0..n)
            .map(|i| f(-1.0 + (i as f64 + 0.5) * 2.0 / n as f64) * 2.0 / n as f64)
            .sum();
        assert!(integral.abs() < 1e-6);
        let zero_x = 1.0 / 3f64.sqrt();
        assert!(f(zero_x).abs() < 1e-12);
        assert!((thermal_layer_fraction() - (1.0 - zero_x) / 2.0).abs() < 1e-15);
    }
}
