//! Residual stress at the origin, from a temper class or a measured surface compression.
//!
//! Sign convention: tension positive, compression negative. The mirror gives the **net**
//! stress at the origin; the applied (service) stress is net − residual. A surface origin in
//! tempered glass sits in compression (residual = −surface compression), so the applied stress
//! was larger than the mirror says. An interior origin sits in the tensile core, where the
//! residual is the central tension; what that is depends on the through-thickness profile,
//! and in every profile it follows from the force balance (no net force over the thickness):
//!
//! - **Thermally tempered** glass has a parabolic profile: σ(x) = CS·(1 − 3x²)/2 with
//!   x = 1 − 2z/t (z depth from a face) gives −CS at the faces, +CS/2 at the mid-plane and no
//!   net force. It crosses zero at x = 1/√3, so the compressive layer reaches
//!   z/t = (1 − 1/√3)/2 ≈ 0.211 from each face.
//! - **Chemically strengthened** (ion-exchanged) glass has a thin layer of depth DOL. With a
//!   linear layer (−CS at the face, zero at DOL) and a uniform core, the compressive force
//!   CS·DOL/2 per face balances CT·(t − 2·DOL), so CT = CS·DOL / (t − 2·DOL) (Varshneya,
//!   Int. J. Appl. Glass Sci. 1 (2010) 131). With an erfc layer (the profile of diffusion from
//!   a constant surface concentration) σ(z) = CT − B·[erfc(z/δ) + erfc((t − z)/δ)], where CT
//!   is the mean of the compressive term over the thickness (found by integrating it), B
//!   makes σ(0) = −CS and δ makes σ(DOL) = 0. For CS = 700 MPa, DOL = 40 µm, t = 0.7 mm the
//!   linear layer gives CT = 700 × 0.04 / 0.62 = 45.2 MPa; half the surface compression
//!   (the thermal rule) would give 350 MPa.

use serde::{Deserialize, Serialize};
use std::str::FromStr;

use super::{mm, mpa, spelled, um, AnalysisInput, FractureError, UnknownWord};

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
    /// The layer shape used for the central tension of chemically strengthened glass.
    #[serde(default)]
    pub layer_profile: Option<LayerProfile>,
    /// How the value was chosen, in words.
    pub basis: String,
}

/// The shape of the compressive layer of chemically strengthened glass.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum LayerProfile {
    /// Linear from −CS at the face to zero at the layer depth, uniform tension in the core.
    #[default]
    Linear,
    /// Complementary error function (diffusion from a constant surface concentration).
    Erfc,
}

impl LayerProfile {
    /// The code of the command line and JSON: linear, erfc.
    pub fn code(self) -> &'static str {
        match self {
            LayerProfile::Linear => "linear",
            LayerProfile::Erfc => "erfc",
        }
    }

    /// "linear layer", "erfc layer".
    pub fn label(self) -> &'static str {
        match self {
            LayerProfile::Linear => "linear layer",
            LayerProfile::Erfc => "erfc layer",
        }
    }
}

/// "linear" or "erfc", in any case.
impl FromStr for LayerProfile {
    type Err = UnknownWord;

    fn from_str(text: &str) -> Result<Self, Self::Err> {
        Ok(match spelled(text).as_str() {
            "linear" => LayerProfile::Linear,
            "erfc" | "error-function" => LayerProfile::Erfc,
            _ => return Err(UnknownWord::new("layer profile", text)),
        })
    }
}

/// A through-thickness residual stress profile that carries no net force. Stresses in Pa,
/// depths in m, tension positive.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Profile {
    /// Thermally tempered: σ = CS·(1 − 3x²)/2, x = 1 − 2z/t.
    Parabolic { cs: f64, thickness: f64 },
    /// Ion-exchanged, linear layer of depth `depth`, uniform tension `ct` in the core.
    Linear {
        cs: f64,
        depth: f64,
        thickness: f64,
        ct: f64,
    },
    /// Ion-exchanged, erfc layer: σ = ct − b·[erfc(z/δ) + erfc((t − z)/δ)].
    Erfc {
        b: f64,
        delta: f64,
        thickness: f64,
        ct: f64,
    },
}

/// Central tension of a linear layer from the force balance: CT = CS·DOL / (t − 2·DOL).
pub fn linear_central_tension(cs: f64, depth: f64, thickness: f64) -> f64 {
    cs * depth / (thickness - 2.0 * depth)
}

/// ∫₀ᴸ f(z) dz by composite Simpson's rule over `n` (even) intervals.
pub fn simpson(f: impl Fn(f64) -> f64, length: f64, n: usize) -> f64 {
    let n = n.max(2) + n % 2;
    let h = length / n as f64;
    let inner: f64 = (1..n)
        .map(|i| f(i as f64 * h) * if i % 2 == 1 { 4.0 } else { 2.0 })
        .sum();
    (f(0.0) + inner + f(length)) * h / 3.0
}

/// Mean over the thickness of erfc(z/δ) + erfc((t − z)/δ), by integration.
fn erfc_mean(delta: f64, thickness: f64) -> f64 {
    use crate::fleet::special::erfc;
    // erfc(10) ≈ 2e-45: beyond ten diffusion lengths the integrand adds nothing
    let span = thickness.min(10.0 * delta);
    let integral = simpson(|z| erfc(z / delta), span, 200);
    2.0 * integral / thickness
}

impl Profile {
    /// The parabolic profile of thermally tempered glass.
    pub fn parabolic(cs: f64, thickness: f64) -> Profile {
        Profile::Parabolic { cs, thickness }
    }

    /// The profile of chemically strengthened glass from its surface compression, layer
    /// depth and thickness. `Err` (in words) when the layer is not thinner than half the
    /// part or an erfc layer cannot cross zero at that depth.
    pub fn chemical(
        cs: f64,
        depth: f64,
        thickness: f64,
        shape: LayerProfile,
    ) -> Result<Profile, String> {
        if !(depth > 0.0 && thickness > 2.0 * depth) {
            return Err("a layer shallower than half the thickness".to_string());
        }
        match shape {
            LayerProfile::Linear => Ok(Profile::Linear {
                cs,
                depth,
                thickness,
                ct: linear_central_tension(cs, depth, thickness),
            }),
            LayerProfile::Erfc => Self::erfc_layer(cs, depth, thickness),
        }
    }

    /// The erfc layer: δ from σ(DOL) = 0 by bisection, then B from σ(0) = −CS.
    fn erfc_layer(cs: f64, depth: f64, thickness: f64) -> Result<Profile, String> {
        use crate::fleet::special::erfc;
        // the zero crossing of the shape at the layer depth, in units of B
        let crossing = |delta: f64| {
            erfc_mean(delta, thickness) - erfc(depth / delta) - erfc((thickness - depth) / delta)
        };
        // crossing > 0 while the diffusion length is short (the layer has not reached the
        // depth yet), < 0 once σ(DOL) is compressive: step up to the first sign change
        let lo_start = depth / 20.0;
        let mut lo = lo_start;
        let mut hi = None;
        for _ in 0..60 {
            let next = lo * 1.25;
            if crossing(next) < 0.0 {
                hi = Some(next);
                break;
            }
            lo = next;
        }
        let Some(mut hi) = hi.filter(|_| crossing(lo_start) > 0.0) else {
            return Err("an erfc layer that can reach zero stress at that depth".to_string());
        };
        while hi - lo > 1e-10 * hi {
            let mid = 0.5 * (lo + hi);
            if crossing(mid) > 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let delta = 0.5 * (lo + hi);
        let mean = erfc_mean(delta, thickness);
        let b = cs / (1.0 + erfc(thickness / delta) - mean);
        Ok(Profile::Erfc {
            b,
            delta,
            thickness,
            ct: b * mean,
        })
    }

    /// σ at depth z from a face (Pa, tension positive).
    pub fn stress_at(&self, z: f64) -> f64 {
        match *self {
            Profile::Parabolic { cs, thickness } => {
                let x = 1.0 - 2.0 * z / thickness;
                cs * (1.0 - 3.0 * x * x) / 2.0
            }
            Profile::Linear {
                cs,
                depth,
                thickness,
                ct,
            } => {
                let from_face = z.min(thickness - z);
                if from_face < depth {
                    -cs * (1.0 - from_face / depth)
                } else {
                    ct
                }
            }
            Profile::Erfc {
                b,
                delta,
                thickness,
                ct,
            } => {
                use crate::fleet::special::erfc;
                ct - b * (erfc(z / delta) + erfc((thickness - z) / delta))
            }
        }
    }

    pub fn thickness(&self) -> f64 {
        match *self {
            Profile::Parabolic { thickness, .. }
            | Profile::Linear { thickness, .. }
            | Profile::Erfc { thickness, .. } => thickness,
        }
    }

    /// The tension at the mid-plane, where an interior origin is taken to sit.
    pub fn central_tension(&self) -> f64 {
        self.stress_at(self.thickness() / 2.0)
    }

    /// The residual at an origin: the face stress for a surface origin, the mid-plane
    /// stress for an interior one.
    pub fn at_origin(&self, origin: Origin) -> f64 {
        match origin {
            Origin::Surface => self.stress_at(0.0),
            Origin::Interior => self.central_tension(),
        }
    }
}

/// The surface compression used (Pa), its spread and how it was chosen: as given, else the
/// temper class value.
fn surface_compression(
    input: &AnalysisInput,
    warnings: &mut Vec<String>,
) -> Result<(f64, Option<f64>, String), FractureError> {
    Ok(match (input.surface_compression_pa, input.temper) {
        (Some(cs), Some(t)) => (
            cs,
            input.surface_compression_spread_pa,
            format!("{}: surface compression {} as given", t.label(), mpa(cs)),
        ),
        (Some(cs), None) => (
            cs,
            input.surface_compression_spread_pa,
            format!("surface compression {} as given", mpa(cs)),
        ),
        (None, Some(t)) => match t.default_surface_compression() {
            Some((v, spread, basis)) => {
                if t != Temper::Annealed {
                    warnings.push(format!(
                        "No surface compression was measured: the {} class value {} was used. \
                         A measured value is better.",
                        t.label(),
                        mpa(v)
                    ));
                }
                (v, spread, basis.to_string())
            }
            None => {
                return Err(FractureError::missing(
                    "surface-compression",
                    "the surface compression of chemically strengthened glass (it has no \
                     class value)",
                    "a stress such as 600MPa",
                ))
            }
        },
        (None, None) => (
            0.0,
            None,
            "no temper class given: residual stress taken as zero".into(),
        ),
    })
}

/// Warnings about the temper class against the origin and the layer depth.
fn temper_warnings(input: &AnalysisInput, warnings: &mut Vec<String>) {
    if input.origin == Origin::Interior {
        match input.temper {
            None => warnings.push(
                "Interior origin but no temper class: residual stress taken as zero. Interior \
                 origins usually sit in the tensile core of tempered glass; give the temper class."
                    .to_string(),
            ),
            Some(Temper::Annealed) => warnings.push(
                "Interior origin in annealed glass: there is no tensile core. Check the temper \
                 class (an inclusion can still start an interior break)."
                    .to_string(),
            ),
            _ => {}
        }
    }
    if input.temper == Some(Temper::ChemicallyStrengthened) && input.layer_depth_m.is_none() {
        warnings.push(
            "Chemically strengthened glass without a layer depth: the mirror cannot be compared \
             with the compressive layer."
                .to_string(),
        );
    }
}

/// The profile of chemically strengthened glass, when its layer depth and thickness are known.
/// An interior origin needs it: without it the central tension is unknown and the analysis
/// is refused.
fn chemical_profile(input: &AnalysisInput, cs: f64) -> Result<Option<Profile>, FractureError> {
    if input.temper != Some(Temper::ChemicallyStrengthened) {
        return Ok(None);
    }
    let shape = input.layer_profile.unwrap_or_default();
    match (input.layer_depth_m, input.thickness_m) {
        (Some(d), Some(t)) => Profile::chemical(cs, d, t, shape)
            .map(Some)
            .map_err(|expected| {
                FractureError::invalid(
                    "layer-depth",
                    format!("{} {} deep in a part {} thick", shape.label(), mm(d), mm(t)),
                    expected,
                )
            }),
        (depth, _) if input.origin == Origin::Interior => Err(FractureError::missing(
            if depth.is_none() {
                "layer-depth"
            } else {
                "thickness"
            },
            "the layer depth together with the thickness (an interior origin in chemically \
             strengthened glass sits in the central tension, which follows from the force \
             balance over the thickness, not from the surface compression alone)",
            "--layer-depth such as 40um and --thickness such as 0.7mm",
        )),
        _ => Ok(None),
    }
}

/// How the residual at the origin was found, in words.
fn origin_basis(
    basis: String,
    input: &AnalysisInput,
    profile: Option<&Profile>,
    at: f64,
) -> String {
    match (input.origin, profile) {
        (
            Origin::Interior,
            Some(Profile::Linear {
                depth, thickness, ..
            }),
        ) => format!(
            "{basis}; interior origin in the tensile core: central tension from the force \
             balance of a linear layer {} deep in {}, CT = CS·DOL / (t − 2·DOL) = +{} \
             (Varshneya 2010)",
            um(*depth),
            mm(*thickness),
            mpa(at)
        ),
        (Origin::Interior, Some(Profile::Erfc { thickness, .. })) => format!(
            "{basis}; interior origin in the tensile core: central tension from the force \
             balance of an erfc layer {} deep in {} (profile integrated over the thickness), \
             +{}",
            um(input.layer_depth_m.unwrap_or(0.0)),
            mm(*thickness),
            mpa(at)
        ),
        (Origin::Interior, _) if at > 0.0 => format!(
            "{basis}; interior origin in the tensile core: central tension taken as half the \
             surface compression (parabolic profile of thermal temper), +{}",
            mpa(at)
        ),
        (Origin::Surface, _) if at < 0.0 => {
            format!("{basis}; surface origin, in the compressive layer")
        }
        _ => basis,
    }
}

/// Step 2: the residual stress at the origin, from the temper class or the surface
/// compression, through the profile of the temper.
pub(super) fn residual_stress(
    input: &AnalysisInput,
    warnings: &mut Vec<String>,
) -> Result<Residual, FractureError> {
    if input.temper.is_some_and(|t| t != Temper::Annealed) && !input.material.glass {
        warnings.push(format!(
            "Temper classes apply to glass; {} is not a glass. Check the temper class.",
            input.material.name
        ));
    }
    let (cs, cs_spread, basis) = surface_compression(input, warnings)?;
    let profile = chemical_profile(input, cs)?;
    let at_origin = match &profile {
        Some(p) => p.at_origin(input.origin),
        None => residual_at_origin(cs, input.origin),
    };
    let basis = origin_basis(basis, input, profile.as_ref(), at_origin);
    let layer_depth = input
        .layer_depth_m
        .or_else(|| match (input.temper, input.thickness_m) {
            (Some(t), Some(th)) if t.is_thermal() => Some(thermal_layer_fraction() * th),
            _ => None,
        });
    temper_warnings(input, warnings);
    Ok(Residual {
        temper: input.temper,
        origin: input.origin,
        surface_compression_pa: cs,
        surface_compression_spread_pa: cs_spread,
        at_origin_pa: at_origin,
        layer_depth_m: layer_depth,
        layer_profile: profile
            .filter(|p| !matches!(p, Profile::Parabolic { .. }))
            .map(|_| input.layer_profile.unwrap_or_default()),
        basis,
    })
}

/// Warnings for a surface origin deeper than the compressive layer: the mirror radii and the
/// flaw (as solved and as measured).
pub(super) fn layer_cover_warnings(
    input: &AnalysisInput,
    residual: &Residual,
    radii: &[(&str, f64)],
    warnings: &mut Vec<String>,
) {
    let Some(d) = residual.layer_depth_m else {
        return;
    };
    if input.origin != Origin::Surface || residual.surface_compression_pa <= 0.0 {
        return;
    }
    for &(what, size) in radii.iter().filter(|(_, size)| *size > d) {
        warnings.push(format!(
            "The {what} ({}) is deeper than the compressive layer ({} deep): the layer does not \
             cover it, so part of it grew through the tensile core and the surface compression \
             overstates the residual stress it felt.",
            um(size),
            um(d)
        ));
    }
}

/// Signed residual at the origin from a surface compression magnitude, for the parabolic
/// profile of thermally tempered glass (central tension half the surface compression).
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

    /// The net force of a profile over its thickness, relative to CS·t.
    fn net_force(p: &Profile, cs: f64) -> f64 {
        let t = p.thickness();
        simpson(|z| p.stress_at(z), t, 20_000) / (cs * t)
    }

    #[test]
    fn linear_layer_central_tension_from_the_force_balance() {
        // Varshneya, Int. J. Appl. Glass Sci. 1 (2010) 131: CT = CS·DOL / (t − 2·DOL).
        // computed: 700 MPa × 0.040 mm / (0.700 − 0.080) mm = 45.16 MPa
        let ct = linear_central_tension(700e6, 40e-6, 0.7e-3);
        assert!((ct / 1e6 - 45.161).abs() < 0.001, "{ct}");
        let p = Profile::chemical(700e6, 40e-6, 0.7e-3, LayerProfile::Linear).unwrap();
        assert_eq!(p.at_origin(Origin::Interior), ct);
        assert_eq!(p.at_origin(Origin::Surface), -700e6);
        // zero at the foot of the layer, the uniform core beyond it
        assert!(p.stress_at(40e-6 * (1.0 - 1e-9)).abs() < 1e-6 * 700e6);
        assert_eq!(p.stress_at(0.35e-3), ct);
        // Simpson over a step: error of the order CT·h / (CS·t) ≈ 3e-6
        assert!(net_force(&p, 700e6).abs() < 1e-5);
        // the thermal rule would have given half the surface compression, 350 MPa
        assert!((residual_at_origin(700e6, Origin::Interior) - 350e6).abs() < 1.0);
    }

    #[test]
    fn erfc_layer_balances_and_crosses_zero_at_the_layer_depth() {
        for (cs, d, t) in [
            (700e6, 40e-6, 0.7e-3),
            (900e6, 10e-6, 0.55e-3),
            (400e6, 100e-6, 2e-3),
        ] {
            let p = Profile::chemical(cs, d, t, LayerProfile::Erfc).unwrap();
            assert!((p.stress_at(0.0) + cs).abs() < 1e-9 * cs, "{p:?}");
            assert!(p.stress_at(d).abs() < 1e-6 * cs, "{p:?}");
            assert!(net_force(&p, cs).abs() < 1e-5, "{p:?}");
            let ct = p.central_tension();
            let linear = linear_central_tension(cs, d, t);
            // an erfc layer carries less force than a triangle of the same depth
            assert!(ct > 0.3 * linear && ct < linear, "{ct} against {linear}");
        }
    }

    #[test]
    fn erfc_integral_against_its_antiderivative() {
        // ∫₀ˣ erfc(u) du = x·erfc(x) − e^(−x²)/√π + 1/√π (Abramowitz & Stegun 7.1.1 and
        // integration by parts)
        use crate::fleet::special::erfc;
        let root_pi = std::f64::consts::PI.sqrt();
        for x in [0.1, 0.5, 1.0, 2.0, 5.0] {
            let exact = x * erfc(x) - (-x * x).exp() / root_pi + 1.0 / root_pi;
            let numeric = simpson(erfc, x, 400);
            assert!((numeric - exact).abs() < 1e-9, "{x}: {numeric} {exact}");
        }
    }

    #[test]
    fn a_layer_as_deep_as_half_the_part_is_refused() {
        assert!(Profile::chemical(700e6, 0.35e-3, 0.7e-3, LayerProfile::Linear).is_err());
        assert!(Profile::chemical(700e6, 0.0, 0.7e-3, LayerProfile::Erfc).is_err());
        assert_eq!("ERFC".parse::<LayerProfile>(), Ok(LayerProfile::Erfc));
        assert!("cubic".parse::<LayerProfile>().is_err());
    }

    #[test]
    fn parabolic_profile_object_matches_the_rule() {
        let p = Profile::parabolic(100e6, 6e-3);
        assert!((p.at_origin(Origin::Surface) + 100e6).abs() < 1e-6);
        assert!((p.at_origin(Origin::Interior) - 50e6).abs() < 1e-6);
        assert!(net_force(&p, 100e6).abs() < 1e-9);
    }
}
