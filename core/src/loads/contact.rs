//! Hertz contact of a sphere on a flat, and the impact of a sphere found from its energy.
//!
//! Method (H. Hertz 1882; K. L. Johnson, *Contact Mechanics*, Cambridge 1985, §4.2 and §11.4):
//! - effective modulus 1/E* = (1 − ν₁²)/E₁ + (1 − ν₂²)/E₂; for a flat the effective radius is the
//!   sphere's radius R;
//! - force and approach: F = (4/3)·E*·√R·δ^(3/2); contact radius a = √(R·δ) = (3FR / 4E*)^(1/3);
//!   peak pressure p₀ = 3F / (2πa²);
//! - the largest tension in the flat is radial, at the rim of the contact circle:
//!   σ = (1 − 2ν₂)·p₀ / 3 (this is what starts a ring or cone crack in glass);
//! - impact, quasi-static (Hertz's theory of impact): the kinetic energy ½mv² is stored as
//!   (8/15)·E*·√R·δ^(5/2), so δ_max = (15mv² / 16E*√R)^(2/5), and the contact lasts
//!   T ≈ 2.94·δ_max / v (Johnson eq. 11.24).
//!
//! No contact time is needed. The flat is a half-space: a plate that bends under the contact
//! (contact radius not small against the thickness) is flagged.

use super::{positive, Elastic, Field, LoadError, Warning};

/// An impactor body the glass library does not hold (the glasses come from
/// `fracture::materials`). Values are round handbook figures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Impactor {
    pub key: &'static str,
    pub name: &'static str,
    pub elastic: Elastic,
    /// kg/m³
    pub density: f64,
    pub provenance: &'static str,
}

/// Impactor materials. Provenance is stated per row.
pub const IMPACTORS: &[Impactor] = &[
    Impactor {
        key: "steel",
        name: "carbon steel",
        elastic: Elastic {
            youngs_modulus: 200e9,
            poisson: 0.30,
        },
        density: 7850.0,
        provenance: "common practice: the usual handbook figures for carbon steel",
    },
    Impactor {
        key: "aluminium",
        name: "aluminium alloy",
        elastic: Elastic {
            youngs_modulus: 70e9,
            poisson: 0.33,
        },
        density: 2700.0,
        provenance: "common practice: the usual handbook figures for wrought aluminium alloys",
    },
    Impactor {
        key: "granite",
        name: "granite stone",
        elastic: Elastic {
            youngs_modulus: 50e9,
            poisson: 0.25,
        },
        density: 2650.0,
        provenance: "from memory: granite spans about 30 to 70 GPa; wide scatter",
    },
    Impactor {
        key: "tungsten-carbide",
        name: "tungsten carbide (cemented)",
        elastic: Elastic {
            youngs_modulus: 600e9,
            poisson: 0.22,
        },
        density: 15_000.0,
        provenance: "from memory: cemented carbides about 550 to 650 GPa",
    },
];

/// Look an impactor up by key (case-insensitive; "aluminum" is accepted too).
pub fn find_impactor(key: &str) -> Option<&'static Impactor> {
    let k = key.trim().to_ascii_lowercase();
    let k = if k == "aluminum" { "aluminium" } else { &k };
    IMPACTORS.iter().find(|i| i.key == k)
}

/// Effective contact modulus E*, Pa.
pub fn effective_modulus(a: Elastic, b: Elastic) -> f64 {
    1.0 / ((1.0 - a.poisson * a.poisson) / a.youngs_modulus
        + (1.0 - b.poisson * b.poisson) / b.youngs_modulus)
}

const SPHERE: Field = Field {
    modulus: "sphere-material",
    poisson: "sphere-material",
};
const TARGET: Field = Field {
    modulus: "target",
    poisson: "target",
};

/// The state of a static Hertz contact.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HertzContact {
    /// N
    pub force: f64,
    /// contact radius, m
    pub contact_radius: f64,
    /// peak (central) pressure, Pa
    pub peak_pressure: f64,
    /// approach of the two bodies, m
    pub approach: f64,
    /// radial tension in the flat at the contact rim, Pa
    pub rim_tension: f64,
}

/// Static contact under a force: sphere of `radius` pressed on a flat.
pub fn static_contact(
    force: f64,
    radius: f64,
    sphere: Elastic,
    target: Elastic,
) -> Result<HertzContact, LoadError> {
    let f = positive("force", force)?;
    let r = positive("sphere-diameter", radius)?;
    let es = effective_modulus(sphere.check(SPHERE)?, target.check(TARGET)?);
    let a = (3.0 * f * r / (4.0 * es)).cbrt();
    let p0 = 3.0 * f / (2.0 * std::f64::consts::PI * a * a);
    super::fits("force", f, &[a, p0, a * a / r])?;
    Ok(HertzContact {
        force: f,
        contact_radius: a,
        peak_pressure: p0,
        approach: a * a / r,
        rim_tension: (1.0 - 2.0 * target.poisson) * p0 / 3.0,
    })
}

/// Inputs of the sphere-impact model, SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SphereImpact {
    /// m
    pub sphere_diameter: f64,
    pub sphere: Elastic,
    /// kg/m³, used when `mass` is `None`
    pub sphere_density: f64,
    /// kg; `None` means a solid sphere of `sphere_density`
    pub mass: Option<f64>,
    /// m/s
    pub speed: f64,
    pub target: Elastic,
    /// m; only used to judge whether the half-space assumption holds
    pub thickness: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct SphereImpactResult {
    /// the state at the deepest point of the impact
    pub contact: HertzContact,
    /// kg, as given or computed from the density
    pub mass: f64,
    /// J
    pub energy: f64,
    /// s, Hertz contact duration
    pub contact_time: f64,
    pub warnings: Vec<Warning>,
}

pub const HERTZ_METHOD: &str = "Hertz impact of an elastic sphere on a flat (quasi-static): \
     energy stored as (8/15)E*sqrt(R)d^(5/2); force (4/3)E*sqrt(R)d^(3/2); \
     rim tension (1-2nu)p0/3 (Johnson, Contact Mechanics, 4.2 and 11.4)";

/// Above this ratio of contact radius to thickness the glass bends under the contact and the
/// half-space result is no longer the whole story (judgement: the Hertz field reaches a depth of
/// a few contact radii; a quarter of the thickness leaves room for it).
const HALF_SPACE_LIMIT: f64 = 0.25;

pub fn sphere_impact(input: &SphereImpact) -> Result<SphereImpactResult, LoadError> {
    let d = positive("sphere-diameter", input.sphere_diameter)?;
    let v = positive("speed", input.speed)?;
    let t = positive("thickness", input.thickness)?;
    let sphere = input.sphere.check(SPHERE)?;
    let target = input.target.check(TARGET)?;
    let r = d / 2.0;
    let m = match input.mass {
        Some(m) => positive("mass", m)?,
        None => {
            let rho = positive("sphere-density", input.sphere_density)?;
            rho * std::f64::consts::PI * d * d * d / 6.0
        }
    };
    let es = effective_modulus(sphere, target);
    let energy = 0.5 * m * v * v;
    let delta = (15.0 * m * v * v / (16.0 * es * r.sqrt())).powf(0.4);
    let force = 4.0 / 3.0 * es * r.sqrt() * delta.powf(1.5);
    super::fits("speed", v, &[m, energy, delta, force, 2.94 * delta / v])?;
    let contact = static_contact(force, r, sphere, target)?;
    let mut warnings = Vec::new();
    if contact.contact_radius > HALF_SPACE_LIMIT * t {
        warnings.push(Warning::new(
            "thin-target",
            format!(
                "contact radius {:.2} mm is more than a quarter of the thickness: the pane \
                 bends under the impact and Hertz's half-space result is only part of the \
                 stress; check plate bending with this force as a patch load",
                contact.contact_radius * 1e3
            ),
        ));
    }
    if let Some(given) = input.mass {
        let solid = input.sphere_density * std::f64::consts::PI * d * d * d / 6.0;
        if input.sphere_density > 0.0 && (given / solid > 1.5 || given / solid < 1.0 / 1.5) {
            warnings.push(Warning::new(
                "mass-vs-size",
                format!(
                    "the given mass differs from a solid sphere of this size and material \
                     ({solid:.3} kg); the contact uses the sphere's radius and the given mass"
                ),
            ));
        }
    }
    Ok(SphereImpactResult {
        contact,
        mass: m,
        energy,
        contact_time: 2.94 * delta / v,
        warnings,
    })
}
