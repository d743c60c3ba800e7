//! Fracture-mechanics core: mirror, flaw, residual stress, materials, uncertainty. Pure.
//!
//! [`analyze`] takes mirror readings and everything around them and returns an [`Analysis`]
//! that carries every step a report shows. It is cheap (no I/O, a few small allocations), so the
//! bench calculator can call it on every keystroke. SI throughout: m, Pa, Pa·√m.
//!
//! The steps:
//! 1. per boundary: mean and scatter of the radii, σ = A/√R̄, 95 % interval ([`uncertainty`]);
//! 2. net stress at the origin = the stress of the first boundary given (skipping a mirror
//!    boundary as large as the thickness, which is not closed, when another is given);
//! 3. residual stress at the origin from the temper class or the surface compression
//!    ([`residual`]); applied stress = net − residual (compression negative);
//! 4. flaw size a = (K_Ic / (Y σ_net))² ([`flaw`]); the flaw sees the net stress;
//! 5. cross-checks: mirror-to-flaw ratios, measured flaw, predicted branching distance,
//!    consistency between boundaries; warnings in plain sentences.

pub mod calibration;
pub mod flaw;
pub mod fragmentation;
pub mod materials;
pub mod mirror;
pub mod residual;
pub mod uncertainty;
mod validate;

use serde::{Deserialize, Serialize};

pub use flaw::{geometry_factor, FlawGeometry, FlawKind, GeometryFactor};
pub use materials::{Constant, Material, Provenance};
pub use mirror::{Boundary, BoundaryReadings, BoundaryResult, Consistency, ConstantUsed};
pub use residual::{LayerProfile, Origin, OriginLocation, Profile, Residual, Temper};

use crate::units::{fmt_sig, format, Unit};

/// Why an analysis cannot be made. `field` names the input (the command line uses the same
/// names for its flags: radius, constant, toughness, surface-compression, layer-depth,
/// thickness, measured-flaw, aspect, depth-ratio, boundary, temper).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FractureError {
    #[error("{field}: {problem}; expected {expected}")]
    Invalid {
        field: String,
        problem: String,
        expected: String,
    },
    #[error("{field}: {what} is needed; expected {expected}")]
    Missing {
        field: String,
        what: String,
        expected: String,
    },
    #[error(
        "radius: no readings were given; expected at least one radius for a boundary \
         (mirror-mist, mist-hackle or branching)"
    )]
    NoReadings,
}

impl FractureError {
    pub fn invalid(
        field: impl Into<String>,
        problem: impl Into<String>,
        expected: impl Into<String>,
    ) -> Self {
        FractureError::Invalid {
            field: field.into(),
            problem: problem.into(),
            expected: expected.into(),
        }
    }

    pub fn missing(
        field: impl Into<String>,
        what: impl Into<String>,
        expected: impl Into<String>,
    ) -> Self {
        FractureError::Missing {
            field: field.into(),
            what: what.into(),
            expected: expected.into(),
        }
    }

    /// The input the error is about.
    pub fn field(&self) -> &str {
        match self {
            FractureError::Invalid { field, .. } | FractureError::Missing { field, .. } => field,
            FractureError::NoReadings => "radius",
        }
    }
}

/// A word that names none of the values of a vocabulary (temper class, boundary, origin,
/// origin location, flaw geometry): what [`std::str::FromStr`] gives back for it.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("'{text}' is not a {what}")]
pub struct UnknownWord {
    /// What was expected: "temper class", "boundary", …
    pub what: &'static str,
    /// The text as given.
    pub text: String,
}

impl UnknownWord {
    pub(crate) fn new(what: &'static str, text: &str) -> Self {
        UnknownWord {
            what,
            text: text.to_string(),
        }
    }
}

/// A word as the vocabularies spell it: trimmed, lower case, with `_`, spaces and en dashes
/// read as `-` ("Fully_Tempered" → "fully-tempered", "mirror–mist" → "mirror-mist").
fn spelled(text: &str) -> String {
    text.trim()
        .to_ascii_lowercase()
        .replace(['–', '_', ' '], "-")
}

/// A constant the user gives for one boundary, replacing the material's.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ConstantOverride {
    pub boundary: Boundary,
    pub constant: Constant,
}

/// Everything an analysis needs. Build with [`AnalysisInput::new`] and set what you have.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AnalysisInput {
    pub material: Material,
    /// Readings per boundary; the first one (that is closed) gives the headline stress.
    pub readings: Vec<BoundaryReadings>,
    #[serde(default)]
    pub constant_overrides: Vec<ConstantOverride>,
    #[serde(default)]
    pub toughness_override: Option<Constant>,
    /// `None`: not stated (treated as annealed, with a warning for interior origins).
    #[serde(default)]
    pub temper: Option<Temper>,
    /// Surface compression magnitude (Pa, ≥ 0), measured; replaces the class default.
    #[serde(default)]
    pub surface_compression_pa: Option<f64>,
    /// One standard deviation of the measured surface compression (Pa), if known.
    #[serde(default)]
    pub surface_compression_spread_pa: Option<f64>,
    /// Depth of the compressive layer (m); estimated as 0.21 t for thermal temper. With the
    /// thickness it gives the central tension of chemically strengthened glass.
    #[serde(default)]
    pub layer_depth_m: Option<f64>,
    /// Shape of the layer of chemically strengthened glass; `None`: linear.
    #[serde(default)]
    pub layer_profile: Option<LayerProfile>,
    #[serde(default)]
    pub origin: Origin,
    /// `None`: semicircular surface flaw for a surface origin, embedded penny for an interior one.
    #[serde(default)]
    pub flaw: Option<FlawGeometry>,
    #[serde(default)]
    pub measured_flaw_m: Option<f64>,
    #[serde(default)]
    pub thickness_m: Option<f64>,
}

impl AnalysisInput {
    pub fn new(material: Material) -> Self {
        AnalysisInput {
            material,
            readings: Vec::new(),
            constant_overrides: Vec::new(),
            toughness_override: None,
            temper: None,
            surface_compression_pa: None,
            surface_compression_spread_pa: None,
            layer_depth_m: None,
            layer_profile: None,
            origin: Origin::Surface,
            flaw: None,
            measured_flaw_m: None,
            thickness_m: None,
        }
    }

    /// Add readings for a boundary (convenience for callers and tests).
    pub fn with_readings(mut self, boundary: Boundary, radii_m: &[f64]) -> Self {
        self.readings.push(BoundaryReadings {
            boundary,
            radii_m: radii_m.to_vec(),
        });
        self
    }
}

/// The ratio of a boundary's radius to the flaw size, against the published ratio.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlawRatio {
    pub boundary: Boundary,
    pub ratio: f64,
    pub expected: f64,
    /// True when the ratio is within a factor of two of the expected one.
    pub plausible: bool,
}

/// Flaw size and its checks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlawResult {
    /// The geometry used (with a/t as solved when a thickness was given).
    pub geometry: FlawGeometry,
    pub geometry_label: String,
    /// How the geometry was chosen ("as given", "default for a surface origin", …).
    pub geometry_basis: String,
    pub factor: GeometryFactor,
    pub toughness: ConstantUsed,
    /// Flaw size a (m): depth for surface flaws, radius for a penny, half length for a
    /// through crack.
    pub size_m: f64,
    pub size_low_m: f64,
    pub size_high_m: f64,
    pub ratios: Vec<FlawRatio>,
    pub measured_m: Option<f64>,
    /// measured / predicted.
    pub measured_over_predicted: Option<f64>,
}

/// Branching distance predicted from the headline stress, R_b = (A_b / σ)².
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BranchingPrediction {
    pub constant: ConstantUsed,
    pub distance_m: f64,
    pub low_m: f64,
    pub high_m: f64,
    /// The measured mean branching distance, if branching readings were given.
    pub measured_m: Option<f64>,
}

/// Everything a report shows, step by step. SI values.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Analysis {
    pub material_key: String,
    pub material_name: String,
    pub boundaries: Vec<BoundaryResult>,
    /// The boundary the headline (net) stress comes from: the first given that is closed.
    pub headline: Boundary,
    /// Net stress at the origin (Pa) and its 95 % interval.
    pub stress_pa: f64,
    pub stress_low_pa: f64,
    pub stress_high_pa: f64,
    pub residual: Residual,
    /// Applied stress = net − residual (Pa), with a 95 % interval that also carries the spread
    /// of the surface compression where it is known.
    pub applied_stress_pa: f64,
    pub applied_low_pa: f64,
    pub applied_high_pa: f64,
    /// `None` when no toughness is known.
    pub flaw: Option<FlawResult>,
    pub branching: Option<BranchingPrediction>,
    pub consistency: Vec<Consistency>,
    pub warnings: Vec<String>,
}

fn mm(m: f64) -> String {
    format(m, Unit::Millimetre)
}
fn mpa(pa: f64) -> String {
    format(pa, Unit::Megapascal)
}
fn um(m: f64) -> String {
    format(m, Unit::Micrometre)
}

/// Run the analysis.
pub fn analyze(input: &AnalysisInput) -> Result<Analysis, FractureError> {
    validate::validate(input)?;
    let mut warnings = Vec::new();
    let boundaries = boundary_statistics(input, &mut warnings)?;
    // The headline (net) stress is the first boundary given that is closed (branching always
    // counts as closed); if none is, the first one, with a warning about its size.
    let head_index = boundaries
        .iter()
        .position(|b| is_closed(input, b))
        .unwrap_or(0);
    let head = &boundaries[head_index];
    let consistency = consistency_between_boundaries(input, &boundaries, &mut warnings);
    let residual = residual::residual_stress(input, &mut warnings)?;
    mirror_size_warnings(input, &boundaries, head, &residual, &mut warnings);
    let (applied, applied_low, applied_high) = applied_stress(head, &residual, &mut warnings);
    let flaw = match toughness_used(input) {
        None => {
            warnings.push(format!(
                "{} has no fracture toughness in the library: no flaw size. Give the toughness.",
                input.material.name
            ));
            None
        }
        Some(toughness) => Some(flaw_result(
            input,
            input.flaw,
            toughness,
            &boundaries,
            head,
            &mut warnings,
        )),
    };
    let depths: Vec<(&str, f64)> = (flaw.as_ref().map(|f| ("flaw size", f.size_m)).into_iter())
        .chain(input.measured_flaw_m.map(|m| ("measured flaw", m)))
        .collect();
    residual::layer_cover_warnings(input, &residual, &depths, &mut warnings);
    let branching = branching_prediction(input, &boundaries, head);
    Ok(Analysis {
        material_key: input.material.key.clone(),
        material_name: input.material.name.clone(),
        headline: head.boundary,
        stress_pa: head.stress_pa,
        stress_low_pa: head.stress_low_pa,
        stress_high_pa: head.stress_high_pa,
        residual,
        applied_stress_pa: applied,
        applied_low_pa: applied_low,
        applied_high_pa: applied_high,
        flaw,
        branching,
        consistency,
        warnings,
        boundaries,
    })
}

impl Analysis {
    /// The flaw result [`analyze`] gives for `input` with its flaw geometry replaced by
    /// `geometry`, computed from this analysis of `input` without running it again (only the
    /// flaw step depends on the geometry). `None` when the geometry is refused or no toughness
    /// is known: where [`analyze`] would refuse the input or give no flaw.
    pub fn flaw_size_for(
        &self,
        input: &AnalysisInput,
        geometry: FlawGeometry,
    ) -> Option<FlawResult> {
        geometry.validate().ok()?;
        let toughness = toughness_used(input)?;
        let head = self
            .boundaries
            .iter()
            .find(|b| b.boundary == self.headline)?;
        // the warnings of the other geometries are not this analysis's warnings
        let mut warnings = Vec::new();
        Some(flaw_result(
            input,
            Some(geometry),
            toughness,
            &self.boundaries,
            head,
            &mut warnings,
        ))
    }
}

/// A mirror boundary as large as the thickness is not closed: σ = A/√R does not hold for it.
/// Branching always counts as closed.
fn is_closed(input: &AnalysisInput, b: &BoundaryResult) -> bool {
    b.boundary == Boundary::Branching || !input.thickness_m.is_some_and(|t| b.stats.mean >= t)
}

/// The constant used for one boundary: the one typed, else the material's.
fn boundary_constant(
    input: &AnalysisInput,
    boundary: Boundary,
) -> Result<ConstantUsed, FractureError> {
    let material = &input.material;
    match input
        .constant_overrides
        .iter()
        .find(|o| o.boundary == boundary)
    {
        Some(o) => Ok(ConstantUsed::new(
            boundary.constant_symbol(),
            &o.constant,
            true,
        )),
        None => match boundary.constant_of(material) {
            Some(c) => Ok(ConstantUsed::new(boundary.constant_symbol(), c, false)),
            None => Err(FractureError::missing(
                "constant",
                format!(
                    "a {} constant {} ({} has none in the library)",
                    boundary.key(),
                    boundary.constant_symbol(),
                    material.key
                ),
                "a mirror constant such as 2.0MPa√m",
            )),
        },
    }
}

/// Step 1: per boundary, the mean and scatter of the radii, σ = A/√R̄ and its interval.
fn boundary_statistics(
    input: &AnalysisInput,
    warnings: &mut Vec<String>,
) -> Result<Vec<BoundaryResult>, FractureError> {
    let mut boundaries = Vec::with_capacity(input.readings.len());
    for b in input.readings.iter().filter(|b| !b.radii_m.is_empty()) {
        let constant = boundary_constant(input, b.boundary)?;
        if constant.relative_spread().is_none() {
            warnings.push(format!(
                "The {} constant {} has no known spread: the interval for the {} stress covers \
                 the reading scatter only.",
                b.boundary.label(),
                constant.symbol,
                b.boundary.label()
            ));
        }
        let result = mirror::boundary_result(b.boundary, &b.radii_m, constant);
        if result.stats.n == 1 {
            warnings.push(format!(
                "Only one {} reading: its reading uncertainty is assumed ({} %), not measured.",
                b.boundary.label(),
                uncertainty::SINGLE_READING_REL_SD * 100.0
            ));
        } else if result.stats.sd == Some(0.0) {
            warnings.push(format!(
                "The {} readings are all equal: the interval carries the constant's spread only.",
                b.boundary.label()
            ));
        }
        boundaries.push(result);
    }
    Ok(boundaries)
}

/// Consistency between every pair of boundaries, ordered inner to outer.
fn consistency_between_boundaries(
    input: &AnalysisInput,
    boundaries: &[BoundaryResult],
    warnings: &mut Vec<String>,
) -> Vec<Consistency> {
    let mut consistency = Vec::new();
    // a boundary that is not closed says nothing about the stress: it is not compared
    let mut ordered: Vec<&BoundaryResult> =
        boundaries.iter().filter(|b| is_closed(input, b)).collect();
    ordered.sort_by_key(|b| b.boundary);
    for i in 0..ordered.len() {
        for j in i + 1..ordered.len() {
            let c = mirror::consistency(ordered[i], ordered[j]);
            if !c.agrees {
                warnings.push(format!(
                    "The {} and {} readings disagree: R({}) / R({}) is {}, the constants expect \
                     ({}/{})² = {}, more than the uncertainties allow. Check the boundary \
                     readings and the constants.",
                    ordered[i].boundary.label(),
                    ordered[j].boundary.label(),
                    ordered[j].boundary.key(),
                    ordered[i].boundary.key(),
                    fmt_sig(c.radius_ratio, 3),
                    ordered[j].constant.symbol,
                    ordered[i].constant.symbol,
                    fmt_sig(c.expected_ratio, 3),
                ));
            }
            consistency.push(c);
        }
    }
    consistency
}

/// Cross-check: the mirror size against the thickness and the compressive layer.
fn mirror_size_warnings(
    input: &AnalysisInput,
    boundaries: &[BoundaryResult],
    head: &BoundaryResult,
    residual: &Residual,
    warnings: &mut Vec<String>,
) {
    let branching_result = boundaries
        .iter()
        .find(|b| b.boundary == Boundary::Branching);
    for b in boundaries
        .iter()
        .filter(|b| b.boundary != Boundary::Branching)
    {
        let r = b.stats.mean;
        if let Some(t) = input.thickness_m {
            if r >= t {
                let advice = if head.boundary != b.boundary {
                    format!(
                        "the stress is taken from the {} boundary instead ({})",
                        head.boundary.label(),
                        mpa(head.stress_pa)
                    )
                } else {
                    match branching_result {
                        Some(br) => {
                            format!("use the branching estimate ({}) instead", mpa(br.stress_pa))
                        }
                        None => "use the branching distance or an inner boundary instead".into(),
                    }
                };
                warnings.push(format!(
                    "The {} radius ({}) is as large as the thickness ({}): the mirror is not \
                     closed inside the part, so σ = A/√R does not hold for it; {advice}.",
                    b.boundary.label(),
                    mm(r),
                    mm(t)
                ));
            } else if r > t / 4.0 && input.origin == Origin::Surface {
                // rule of thumb of this program: beyond a quarter of the thickness a bending
                // gradient visibly elongates the mirror along the surface
                warnings.push(format!(
                    "The {} radius ({}) is more than a quarter of the thickness ({}): under \
                     bending the stress falls through the thickness and the mirror elongates \
                     along the surface, so only the radius along the tension face is valid.",
                    b.boundary.label(),
                    mm(r),
                    mm(t)
                ));
            }
        }
        residual::layer_cover_warnings(
            input,
            residual,
            &[(&format!("{} radius", b.boundary.label()), r)],
            warnings,
        );
    }
}

/// Step 3: applied stress = net − residual, with its 95 % interval (low, high), which also
/// carries the spread of the surface compression where it is known.
fn applied_stress(
    head: &BoundaryResult,
    residual: &Residual,
    warnings: &mut Vec<String>,
) -> (f64, f64, f64) {
    let net = head.stress_pa;
    let applied = net - residual.at_origin_pa;
    // the residual at the origin is proportional to the surface compression in every
    // profile, so its spread scales the same way (1 at a face, ½ in a thermal core)
    let per_compression = if residual.surface_compression_pa > 0.0 {
        residual.at_origin_pa.abs() / residual.surface_compression_pa
    } else {
        1.0
    };
    let res_u = residual
        .surface_compression_spread_pa
        .map(|s| s * per_compression);
    let res_term = res_u.map(|u| uncertainty::Z95 * u).unwrap_or(0.0);
    let applied_low = applied - ((net - head.stress_low_pa).powi(2) + res_term.powi(2)).sqrt();
    let applied_high = applied + ((head.stress_high_pa - net).powi(2) + res_term.powi(2)).sqrt();
    if applied < 0.0 {
        warnings.push(format!(
            "The applied stress comes out negative ({}): the residual stress assumed at the \
             origin exceeds the net stress. Check the temper class, the surface compression and \
             the origin location.",
            mpa(applied)
        ));
    }
    (applied, applied_low, applied_high)
}

/// The toughness used: the one typed, else the material's; `None` when neither is known.
fn toughness_used(input: &AnalysisInput) -> Option<ConstantUsed> {
    match &input.toughness_override {
        Some(k) => Some(ConstantUsed::new("K_Ic", k, true)),
        None => input
            .material
            .k_ic
            .as_ref()
            .map(|k| ConstantUsed::new("K_Ic", k, false)),
    }
}

/// The geometry used and how it was chosen: as given, else the default for the origin.
fn chosen_geometry(geometry: Option<FlawGeometry>, origin: Origin) -> (FlawGeometry, String) {
    match geometry {
        Some(g) => (g, "as given".to_string()),
        None => match origin {
            Origin::Surface => (
                FlawGeometry::Semicircular { a_over_t: 0.0 },
                "default for a surface origin".to_string(),
            ),
            Origin::Interior => (
                FlawGeometry::EmbeddedPenny,
                "default for an interior origin".to_string(),
            ),
        },
    }
}

/// Warnings about a geometry that does not suit the origin or its equations.
fn geometry_warnings(origin: Origin, geometry: FlawGeometry, warnings: &mut Vec<String>) {
    if origin == Origin::Interior
        && matches!(
            geometry,
            FlawGeometry::Semicircular { .. }
                | FlawGeometry::SemiElliptical { .. }
                | FlawGeometry::SemicircularIrwin
                | FlawGeometry::EdgeCrack
                | FlawGeometry::CornerCrack { .. }
        )
    {
        warnings.push(
            "Interior origin with a surface flaw geometry: an embedded penny crack is the usual \
             choice."
                .to_string(),
        );
    }
    if let FlawGeometry::SemiElliptical { a_over_c, .. }
    | FlawGeometry::CornerCrack { a_over_c, .. } = geometry
    {
        if a_over_c < 0.2 {
            warnings.push(format!(
                "Flaw aspect ratio a/c = {} is below 0.2, outside the range the Newman–Raju \
                 equations were fitted over.",
                fmt_sig(a_over_c, 2)
            ));
        }
    }
}

/// Cross-check: the ratio of each closed boundary's radius to the flaw size.
fn flaw_ratios(
    input: &AnalysisInput,
    boundaries: &[BoundaryResult],
    size: f64,
    warnings: &mut Vec<String>,
) -> Vec<FlawRatio> {
    let mut ratios = Vec::new();
    for b in boundaries.iter().filter(|b| is_closed(input, b)) {
        if let Some(expected) = b.boundary.flaw_ratio() {
            let ratio = b.stats.mean / size;
            let plausible = ratio >= expected / 2.0 && ratio <= expected * 2.0;
            if !plausible {
                warnings.push(format!(
                    "The {} radius is {} times the flaw size, far from the usual {} (Mecholsky, \
                     Rice & Freiman 1974). Check the toughness, the flaw geometry and the \
                     boundary.",
                    b.boundary.label(),
                    fmt_sig(ratio, 3),
                    expected
                ));
            }
            ratios.push(FlawRatio {
                boundary: b.boundary,
                ratio,
                expected,
                plausible,
            });
        }
    }
    ratios
}

/// Step 4: the flaw size a = (K_Ic / (Y σ_net))² under `geometry` (the default for the origin
/// when `None`), its interval and its cross-checks.
fn flaw_result(
    input: &AnalysisInput,
    geometry: Option<FlawGeometry>,
    toughness: ConstantUsed,
    boundaries: &[BoundaryResult],
    head: &BoundaryResult,
    warnings: &mut Vec<String>,
) -> FlawResult {
    let (geometry, geometry_basis) = chosen_geometry(geometry, input.origin);
    geometry_warnings(input.origin, geometry, warnings);
    // with a thickness a/t is solved with the flaw size and warned below; without one it is
    // as given, and it gets the same warning beyond the fitted range
    if let (None, Some(ratio)) = (input.thickness_m, geometry.a_over_t()) {
        if ratio > flaw::DEPTH_RATIO_LIMIT {
            warnings.push(format!(
                "The flaw depth ratio a/t = {} is beyond 0.8 of the thickness: beyond the range \
                 of the Newman–Raju equations.",
                fmt_sig(ratio, 3)
            ));
        }
    }
    let solved = flaw::solve_flaw(geometry, toughness.value, head.stress_pa, input.thickness_m);
    if solved.beyond_range {
        warnings.push(format!(
            "The flaw comes out deeper than 0.8 of the thickness ({}): beyond the range of the \
             Newman–Raju equations.",
            um(solved.size)
        ));
    }
    let k_rel = toughness.relative_spread().unwrap_or(0.0);
    let rel = 2.0 * (head.rel_u95.powi(2) + (uncertainty::Z95 * k_rel).powi(2)).sqrt();
    let (lo, hi) = uncertainty::log_interval(solved.size, rel);
    let ratios = flaw_ratios(input, boundaries, solved.size, warnings);
    let measured_over_predicted = input.measured_flaw_m.map(|m| m / solved.size);
    if let (Some(m), Some(q)) = (input.measured_flaw_m, measured_over_predicted) {
        if !(0.5..=2.0).contains(&q) {
            warnings.push(format!(
                "The measured flaw ({}) is {} times the predicted size ({}): check the flaw \
                 geometry, the toughness, or whether this flaw was the origin.",
                um(m),
                fmt_sig(q, 2),
                um(solved.size)
            ));
        }
    }
    FlawResult {
        geometry_label: solved.geometry.label(),
        geometry: solved.geometry,
        geometry_basis,
        factor: solved.factor,
        toughness,
        size_m: solved.size,
        size_low_m: lo,
        size_high_m: hi,
        ratios,
        measured_m: input.measured_flaw_m,
        measured_over_predicted,
    }
}

/// Cross-check: the branching distance predicted from the headline stress, unless the
/// headline is the branching boundary itself.
fn branching_prediction(
    input: &AnalysisInput,
    boundaries: &[BoundaryResult],
    head: &BoundaryResult,
) -> Option<BranchingPrediction> {
    if head.boundary == Boundary::Branching {
        return None;
    }
    let constant = match input
        .constant_overrides
        .iter()
        .find(|o| o.boundary == Boundary::Branching)
    {
        Some(o) => Some(ConstantUsed::new("A_b", &o.constant, true)),
        None => input
            .material
            .a_b
            .as_ref()
            .map(|c| ConstantUsed::new("A_b", c, false)),
    };
    constant.map(|c| {
        let d = mirror::radius_from_stress(c.value, head.stress_pa);
        let rel = 2.0
            * (head.rel_u95.powi(2)
                + (uncertainty::Z95 * c.relative_spread().unwrap_or(0.0)).powi(2))
            .sqrt();
        let (lo, hi) = uncertainty::log_interval(d, rel);
        BranchingPrediction {
            constant: c,
            distance_m: d,
            low_m: lo,
            high_m: hi,
            measured_m: boundaries
                .iter()
                .find(|b| b.boundary == Boundary::Branching)
                .map(|b| b.stats.mean),
        }
    })
}

/// The short caution of design.md §6, for the end of every result.
pub const CAUTION: &str = "Caution: estimates from fracture mirrors carry the uncertainty of the \
constants and readings; they support, and do not replace, a qualified investigator.";

#[cfg(test)]
mod tests {
    use super::*;

    fn soda() -> Material {
        materials::find("soda-lime").unwrap()
    }

    #[test]
    fn one_mm_mirror_in_soda_lime() {
        let a = analyze(&AnalysisInput::new(soda()).with_readings(Boundary::MirrorMist, &[1e-3]))
            .unwrap();
        // 1.9 / √0.001 = 60.08 MPa (computed)
        assert!((a.stress_pa / 1e6 - 60.08).abs() < 0.01);
        assert!(a.stress_low_pa < a.stress_pa && a.stress_pa < a.stress_high_pa);
        let f = a.flaw.unwrap();
        assert!((f.size_m * 1e6 - 93.6).abs() < 0.5, "{}", f.size_m);
        assert!(a.branching.is_some());
    }

    #[test]
    fn tempered_surface_origin_adds_compression() {
        let mut i = AnalysisInput::new(soda()).with_readings(Boundary::MirrorMist, &[0.5e-3]);
        i.temper = Some(Temper::FullyTempered);
        i.surface_compression_pa = Some(95e6);
        let a = analyze(&i).unwrap();
        assert!((a.applied_stress_pa - (a.stress_pa + 95e6)).abs() < 1.0);
        i.origin = Origin::Interior;
        let b = analyze(&i).unwrap();
        assert!((b.applied_stress_pa - (b.stress_pa - 47.5e6)).abs() < 1.0);
    }

    #[test]
    fn slender_flaw_warns() {
        let mut i = AnalysisInput::new(soda()).with_readings(Boundary::MirrorMist, &[1e-3]);
        i.flaw = Some(FlawGeometry::SemiElliptical {
            a_over_c: 0.1,
            a_over_t: 0.0,
        });
        let a = analyze(&i).unwrap();
        assert!(
            a.warnings.iter().any(|w| w.contains("below 0.2")),
            "{:?}",
            a.warnings
        );
        i.flaw = Some(FlawGeometry::SemiElliptical {
            a_over_c: 0.5,
            a_over_t: 0.0,
        });
        let a = analyze(&i).unwrap();
        assert!(!a.warnings.iter().any(|w| w.contains("below 0.2")));
    }

    #[test]
    fn every_word_reads_back_from_its_code_key_and_label() {
        for t in Temper::ALL {
            for word in [t.code(), t.key(), t.label()] {
                assert_eq!(word.parse::<Temper>(), Ok(t), "{word}");
            }
        }
        for b in Boundary::ALL {
            for word in [b.code(), b.key(), b.label()] {
                assert_eq!(word.parse::<Boundary>(), Ok(b), "{word}");
            }
        }
        for l in OriginLocation::ALL {
            assert_eq!(l.code().parse::<OriginLocation>(), Ok(l));
            assert_eq!(l.label().parse::<OriginLocation>(), Ok(l));
        }
        for o in [Origin::Surface, Origin::Interior] {
            assert_eq!(o.code().parse::<Origin>(), Ok(o));
        }
        assert!(
            "edge".parse::<Origin>().is_err(),
            "an edge is a location, not an origin"
        );
        assert_eq!(OriginLocation::Corner.origin(), Origin::Surface);
        assert_eq!(
            "Core".parse::<OriginLocation>(),
            Ok(OriginLocation::Interior)
        );
        for k in FlawKind::ALL {
            assert_eq!(k.code().parse::<FlawKind>(), Ok(k));
        }
        assert_eq!(
            FlawGeometry::CornerCrack {
                a_over_c: 0.5,
                a_over_t: 0.0
            }
            .kind(),
            FlawKind::CornerCrack
        );
        assert_eq!(
            " Fully_Tempered ".parse::<Temper>(),
            Ok(Temper::FullyTempered)
        );
        assert_eq!("ro".parse::<Boundary>(), Ok(Boundary::MistHackle));
        let e = "glazed".parse::<Temper>().unwrap_err();
        assert_eq!(e.to_string(), "'glazed' is not a temper class");
    }

    #[test]
    fn errors_name_fields() {
        let i = AnalysisInput::new(soda()).with_readings(Boundary::MirrorMist, &[-1e-3]);
        assert_eq!(analyze(&i).unwrap_err().field(), "radius");
        let mut i = AnalysisInput::new(soda()).with_readings(Boundary::MirrorMist, &[1e-3]);
        i.temper = Some(Temper::ChemicallyStrengthened);
        assert_eq!(analyze(&i).unwrap_err().field(), "surface-compression");
        let i = AnalysisInput::new(materials::find("aluminum-oxynitride").unwrap())
            .with_readings(Boundary::MistHackle, &[1e-3]);
        assert_eq!(analyze(&i).unwrap_err().field(), "constant");
        assert_eq!(
            analyze(&AnalysisInput::new(soda())).unwrap_err(),
            FractureError::NoReadings
        );
    }
}
