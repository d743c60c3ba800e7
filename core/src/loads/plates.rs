//! Small-deflection (Kirchhoff) bending of flat plates: circular plates under a central patch or
//! uniform pressure, rectangular plates under uniform pressure or a central patch.
//!
//! Methods, each cited where it is used:
//! - circular plates: closed forms of S. Timoshenko & S. Woinowsky-Krieger, *Theory of Plates and
//!   Shells* (2nd ed., 1959), §15–§19, which are the formulas tabulated in *Roark's Formulas for
//!   Stress and Strain* (Table 11.2), with Roark's equivalent radius for a patch smaller than about
//!   half the thickness: r′ = √(1.6r² + t²) − 0.675t when r < 0.5t;
//! - rectangular plates, simply supported: Navier's double sine series (Timoshenko &
//!   Woinowsky-Krieger §28–§30), summed here for the actual Poisson's ratio; a
//!   circular patch enters by its own load terms (the disc's Fourier transform, 2J₁(kc)/kc);
//! - rectangular plates, clamped, uniform pressure: a Ritz series ([`super::clamped`]) with the
//!   material's Poisson's ratio, checked against Timoshenko & Woinowsky-Krieger Table 35 (the
//!   same as Roark Table 11.4 case 8a); it follows the overshoot of the edge moment above the
//!   strip limit near b/a = 2.5 and reaches the strip by b/a = 5;
//! - rectangular plates, clamped, small central patch: Roark Table 11.4 (all edges fixed, load
//!   over a small concentric circle), tabulated for ν = 0.3, interpolated by aspect ratio and
//!   carried to the material's ν exactly (deflection by 1 − ν², the centre moment through the
//!   ν-free parts of the curvature, the anisotropic one from the Ritz series).
//!
//! Small-deflection theory assumes the deflection is small against the thickness (Roark, 8th ed.,
//! §11.1, states the limit: "the maximum deflection is not more than about one-half the
//! thickness"). Once it passes about half the thickness, membrane action stiffens a glass pane and this theory over-predicts
//! the stress (and the deflection): such results are flagged with `large-deflection`.

use super::{clamped, positive, Elastic, Field, LoadError, Warning};
use std::f64::consts::PI;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Shape {
    /// `span` is the diameter
    Circular,
    /// `span` and `span_b` are the side lengths
    Rectangular,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edges {
    SimplySupported,
    Clamped,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PlateLoad {
    /// Pa over the whole plate
    Pressure(f64),
    /// total force N, spread over a central circle of the given diameter (m)
    Patch { force: f64, diameter: f64 },
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Plate {
    pub shape: Shape,
    pub edges: Edges,
    /// m: the diameter of a circular plate, one side of a rectangular one
    pub span: f64,
    /// m: the other side of a rectangular plate (ignored for a circular one)
    pub span_b: Option<f64>,
    /// m
    pub thickness: f64,
    pub material: Elastic,
    pub load: PlateLoad,
}

#[derive(Debug, Clone, PartialEq)]
pub struct PlateResult {
    /// largest bending stress (tension on one face), Pa
    pub stress: f64,
    /// where it acts, in words
    pub stress_at: &'static str,
    /// largest deflection, m
    pub deflection: f64,
    /// total load, N
    pub force: f64,
    pub method: &'static str,
    pub warnings: Vec<Warning>,
}

const MATERIAL: Field = Field {
    modulus: "material",
    poisson: "material",
};

/// Deflection above this fraction of the thickness: small-deflection theory over-predicts.
pub const LARGE_DEFLECTION_RATIO: f64 = 0.5;

/// Flexural rigidity D = Et³ / 12(1 − ν²).
pub fn rigidity(e: f64, nu: f64, t: f64) -> f64 {
    e * t * t * t / (12.0 * (1.0 - nu * nu))
}

/// Roark's equivalent radius of a small loaded circle (Roark, Table 11.2, note to the central
/// patch cases): below half the thickness the plate does not feel the load as concentrated.
pub fn equivalent_radius(r0: f64, t: f64) -> f64 {
    if r0 < 0.5 * t {
        (1.6 * r0 * r0 + t * t).sqrt() - 0.675 * t
    } else {
        r0
    }
}

pub fn bend(plate: &Plate) -> Result<PlateResult, LoadError> {
    let span = positive("span", plate.span)?;
    let t = positive("thickness", plate.thickness)?;
    let mat = plate.material.check(MATERIAL)?;
    match plate.load {
        PlateLoad::Pressure(q) => {
            positive("pressure", q)?;
        }
        PlateLoad::Patch { force, diameter } => {
            positive("force", force)?;
            positive("patch", diameter)?;
        }
    }
    let mut result = match plate.shape {
        Shape::Circular => {
            if let PlateLoad::Patch { diameter, .. } = plate.load {
                if diameter > span {
                    return Err(LoadError::OutOfRange {
                        field: "patch",
                        value: diameter,
                        expected: "a patch no wider than the plate",
                    });
                }
            }
            circular(plate.edges, span / 2.0, t, mat, plate.load)
        }
        Shape::Rectangular => {
            let b = match plate.span_b {
                Some(b) => positive("span-b", b)?,
                None => {
                    return Err(LoadError::NotAvailable {
                        field: "span-b",
                        reason: "a rectangular plate needs both sides (--span and --span-b)".into(),
                    })
                }
            };
            if let PlateLoad::Patch { diameter, .. } = plate.load {
                if diameter > span.min(b) {
                    return Err(LoadError::OutOfRange {
                        field: "patch",
                        value: diameter,
                        expected: "a patch no wider than the shorter side",
                    });
                }
            }
            rectangular(plate.edges, span, b, t, mat, plate.load)?
        }
    };
    super::fits(
        "span",
        span,
        &[result.stress, result.deflection, result.force],
    )?;
    if result.deflection > LARGE_DEFLECTION_RATIO * t {
        result.warnings.push(Warning::new(
            "large-deflection",
            format!(
                "deflection {:.2} mm is more than half the thickness ({:.2} mm): small-deflection \
                 theory over-predicts the stress here (membrane action carries part of the load); \
                 treat the stress as an upper bound",
                result.deflection * 1e3,
                t * 1e3
            ),
        ));
    }
    if let PlateLoad::Patch { diameter, .. } = plate.load {
        if diameter / 2.0 < 0.5 * t {
            result.warnings.push(Warning::new(
                "equivalent-radius",
                "the patch radius is under half the thickness: Roark's equivalent radius was used \
                 for the stress",
            ));
        }
    }
    Ok(result)
}

/// Circular plate of radius `a`.
fn circular(edges: Edges, a: f64, t: f64, mat: Elastic, load: PlateLoad) -> PlateResult {
    let nu = mat.poisson;
    let d = rigidity(mat.youngs_modulus, nu, t);
    match load {
        PlateLoad::Pressure(q) => {
            let force = q * PI * a * a;
            // Timoshenko & Woinowsky-Krieger §15–§16 (Roark Table 11.2 cases 10a, 10b).
            match edges {
                Edges::SimplySupported => PlateResult {
                    stress: 3.0 * (3.0 + nu) * q * a * a / (8.0 * t * t),
                    stress_at: "centre",
                    deflection: (5.0 + nu) * q * a.powi(4) / (64.0 * (1.0 + nu) * d),
                    force,
                    method: "circular plate, simply supported, uniform pressure: \
                             Timoshenko & Woinowsky-Krieger 15-16 / Roark Table 11.2",
                    warnings: Vec::new(),
                },
                Edges::Clamped => PlateResult {
                    stress: 3.0 * q * a * a / (4.0 * t * t),
                    stress_at: "edge",
                    deflection: q * a.powi(4) / (64.0 * d),
                    force,
                    method: "circular plate, clamped, uniform pressure: \
                             Timoshenko & Woinowsky-Krieger 15 / Roark Table 11.2",
                    warnings: Vec::new(),
                },
            }
        }
        PlateLoad::Patch { force, diameter } => {
            let c = diameter / 2.0;
            let rc = equivalent_radius(c, t);
            let k = force / (4.0 * PI);
            let ln = (a / rc).ln();
            let ratio = c * c / (a * a);
            // Centre moment under a load P spread over a circle of radius c (Timoshenko &
            // Woinowsky-Krieger §19): simply supported M = P/4π [(1+ν)ln(a/c) + 1 − (1−ν)c²/4a²];
            // clamped M = P/4π [(1+ν)ln(a/c) + (1+ν)c²/4a²], edge moment P/4π (1 − c²/2a²).
            // For small c these are Roark's 3W/2πt² [(1+ν)ln(a/r′) + 1] and 3W/2πt² (1+ν)ln(a/r′).
            // Deflections: the point-load Green's function integrated over the patch.
            let w0 = force / (16.0 * PI * d);
            match edges {
                Edges::SimplySupported => {
                    let m = k * ((1.0 + nu) * ln + 1.0 - (1.0 - nu) * ratio / 4.0);
                    let kk = (3.0 + nu) / (1.0 + nu);
                    PlateResult {
                        stress: 6.0 * m / (t * t),
                        stress_at: "centre",
                        deflection: w0
                            * (kk * (a * a - c * c / 2.0) - c * c * (a / c).ln() - c * c / 4.0),
                        force,
                        method: "circular plate, simply supported, central patch: \
                                 Timoshenko & Woinowsky-Krieger 19 / Roark Table 11.2, \
                                 equivalent radius for small patches",
                        warnings: Vec::new(),
                    }
                }
                Edges::Clamped => {
                    let centre = k * ((1.0 + nu) * ln + (1.0 + nu) * ratio / 4.0);
                    let edge = k * (1.0 - ratio / 2.0);
                    let (m, at) = if centre >= edge {
                        (centre, "centre")
                    } else {
                        (edge, "edge")
                    };
                    PlateResult {
                        stress: 6.0 * m / (t * t),
                        stress_at: at,
                        deflection: w0 * (a * a - c * c * (a / c).ln() - 0.75 * c * c),
                        force,
                        method: "circular plate, clamped, central patch: \
                                 Timoshenko & Woinowsky-Krieger 19 / Roark Table 11.2, \
                                 equivalent radius for small patches",
                        warnings: Vec::new(),
                    }
                }
            }
        }
    }
}

/// Rectangular plate with sides `sa`, `sb`.
fn rectangular(
    edges: Edges,
    sa: f64,
    sb: f64,
    t: f64,
    mat: Elastic,
    load: PlateLoad,
) -> Result<PlateResult, LoadError> {
    // a: the shorter side
    let (a, b) = if sa <= sb { (sa, sb) } else { (sb, sa) };
    let nu = mat.poisson;
    let d = rigidity(mat.youngs_modulus, nu, t);
    match (edges, load) {
        (Edges::SimplySupported, load) => {
            let (mx, my, w, force) = navier_centre(a, b, nu, d, load, t);
            Ok(PlateResult {
                stress: 6.0 * mx.max(my) / (t * t),
                stress_at: "centre",
                deflection: w,
                force,
                method: match load {
                    PlateLoad::Pressure(_) => {
                        "rectangular plate, simply supported, uniform pressure: Navier series \
                         (Timoshenko & Woinowsky-Krieger 30, Table 8; Roark Table 11.4 case 1a)"
                    }
                    PlateLoad::Patch { .. } => {
                        "rectangular plate, simply supported, central patch: Navier series \
                         with the circular patch's own load terms (Timoshenko & \
                         Woinowsky-Krieger 30; Roark Table 11.4 case 1b), equivalent radius for \
                         small patches"
                    }
                },
                warnings: Vec::new(),
            })
        }
        (Edges::Clamped, PlateLoad::Pressure(q)) => {
            let ratio = b / a;
            let (stress, deflection, at) = if ratio <= clamped::LONGEST_SOLVED {
                let r = clamped::solve(a, b, d, nu, clamped::ClampedLoad::Pressure(q));
                let (cx, cy) = r.centre_moments;
                let edge = r.long_edge_moment;
                let centre = cx.abs().max(cy.abs());
                if edge >= centre {
                    (
                        6.0 * edge / (t * t),
                        r.deflection,
                        "middle of the long edges",
                    )
                } else {
                    (6.0 * centre / (t * t), r.deflection, "centre")
                }
            } else {
                // the clamped strip: edge effects of the short sides have died out
                (
                    6.0 * CLAMPED_STRIP.1 * q * a * a / (t * t),
                    CLAMPED_STRIP.0 * q * a.powi(4) / d,
                    "middle of the long edges",
                )
            };
            Ok(PlateResult {
                stress,
                stress_at: at,
                deflection,
                force: q * a * b,
                method: "rectangular plate, clamped, uniform pressure: Ritz series with the \
                         material's Poisson's ratio (checked against Timoshenko & \
                         Woinowsky-Krieger Table 35); the clamped strip beyond b/a = 6",
                warnings: Vec::new(),
            })
        }
        (Edges::Clamped, PlateLoad::Patch { force, diameter }) => {
            // Roark Table 11.4, rectangular plate with all edges fixed, load W uniform over a
            // small central circle (ν = 0.3): centre σ = 3W/2πt² [(1+ν) ln(2b/πr′) + β₁],
            // middle of the long edge σ = β₂ W/t², y = α W b²/(E t³), b the short side.
            // A clamped plate's deflection in units of 1/D and its edge moment do not depend
            // on ν, so α scales with (1 − ν²)/(1 − 0.3²) and β₂ holds for any ν. The centre
            // moment is M_x = (1+ν)/2·S + (1−ν)/2·Δ with S = −D∇²w and Δ = −D(w,xx − w,yy),
            // both free of ν: S follows from the table at ν = 0.3 and Δ (bounded under the
            // patch) from the Ritz series, which gives M_x for this material's ν.
            let ratio = b / a;
            let (beta1, beta2, alpha) = clamped_patch_coefficients(ratio);
            let rp = equivalent_radius(diameter / 2.0, t);
            let table_moment = force / (4.0 * PI) * (1.3 * (2.0 * a / (PI * rp)).ln() + beta1);
            let series = clamped::solve(
                a,
                b.min(a * clamped::LONGEST_SOLVED),
                d,
                nu,
                clamped::ClampedLoad::Patch { force, radius: rp },
            );
            let (cx, cy) = series.centre_moments;
            // Δ = (M_x − M_y)/(1 − ν) for any ν
            let delta = (cx - cy) / (1.0 - nu);
            let laplacian = (table_moment - 0.35 * delta) / 0.65;
            let centre = 6.0 * ((1.0 + nu) / 2.0 * laplacian + (1.0 - nu) / 2.0 * delta) / (t * t);
            let edge = beta2 * force / (t * t);
            let (stress, at) = if centre >= edge {
                (centre, "centre")
            } else {
                (edge, "middle of the long edges")
            };
            let mut warnings = Vec::new();
            if 2.0 * rp > 0.25 * a {
                warnings.push(Warning::new(
                    "patch-not-small",
                    "the patch is wider than a quarter of the short side: the small-patch \
                     coefficients are stretched beyond their use",
                ));
            }
            let scale = (1.0 - nu * nu) / (1.0 - 0.09);
            Ok(PlateResult {
                stress,
                stress_at: at,
                deflection: scale * alpha * force * a * a / (mat.youngs_modulus * t.powi(3)),
                force,
                method: "rectangular plate, clamped, central patch: Roark Table 11.4 (all edges \
                         fixed, uniform load over a small concentric circle), coefficients \
                         interpolated by aspect ratio and carried to this material's Poisson's \
                         ratio (deflection by 1 − ν², centre moment with the Ritz series), \
                         equivalent radius for small patches",
                warnings,
            })
        }
    }
}

/// Roark Table 11.4, all edges fixed, uniform load over a small concentric circle (ν = 0.3):
/// long side / short side, β₁ (centre), β₂ (middle of the long edge), α (deflection).
/// Quoted from the 7th edition as reproduced on a public engineering-reference page; the ∞ row's
/// β₁ reads 0.067 there truncated to "0.06", taken as 0.067 (the 1.8 and 2.0 rows).
const CLAMPED_PATCH: &[(f64, f64, f64, f64)] = &[
    (1.0, -0.2387, 0.7542, 0.0611),
    (1.2, -0.078, 0.8940, 0.0706),
    (1.4, 0.011, 0.9624, 0.0754),
    (1.6, 0.053, 0.9906, 0.0777),
    (1.8, 0.068, 1.0000, 0.0786),
    (2.0, 0.067, 1.0040, 0.0788),
];
const CLAMPED_PATCH_INF: (f64, f64, f64) = (0.067, 1.008, 0.0791);

/// (β₁, β₂, α) for a clamped plate under a small central patch, ratio = long / short ≥ 1.
pub fn clamped_patch_coefficients(ratio: f64) -> (f64, f64, f64) {
    let tab = CLAMPED_PATCH;
    if ratio <= tab[0].0 {
        return (tab[0].1, tab[0].2, tab[0].3);
    }
    for w in tab.windows(2) {
        let (r0, p0, q0, s0) = w[0];
        let (r1, p1, q1, s1) = w[1];
        if ratio <= r1 {
            let f = (ratio - r0) / (r1 - r0);
            return (p0 + f * (p1 - p0), q0 + f * (q1 - q0), s0 + f * (s1 - s0));
        }
    }
    let (r2, p2, q2, s2) = tab[tab.len() - 1];
    let f = 1.0 - r2 / ratio;
    let (pi, qi, si) = CLAMPED_PATCH_INF;
    (p2 + f * (pi - p2), q2 + f * (qi - q2), s2 + f * (si - s2))
}

/// The long-strip limit (b/a → ∞): a clamped-clamped beam strip, w = qa⁴/384D, M = qa²/12.
const CLAMPED_STRIP: (f64, f64) = (1.0 / 384.0, 1.0 / 12.0);

/// 2J₁(x)/x: the mean of cos(αu)·cos(βv) over a disc of radius c, x = c√(α² + β²).
/// J₁ by its power series up to x = 20 and by Hankel's asymptotic expansion beyond
/// (Abramowitz & Stegun 9.1.10 and 9.2.5; the next term of the expansion is below 1e-9).
pub fn disc_mean(x: f64) -> f64 {
    if x.abs() < 1e-8 {
        return 1.0;
    }
    let j1 = if x <= 20.0 {
        let h = x / 2.0;
        let mut term = h;
        let mut sum = h;
        for k in 1..80 {
            let kf = k as f64;
            term *= -h * h / (kf * (kf + 1.0));
            sum += term;
            if term.abs() < 1e-17 * sum.abs().max(1e-300) {
                break;
            }
        }
        sum
    } else {
        let mu = 4.0;
        let z = 8.0 * x;
        let p = 1.0 - (mu - 1.0) * (mu - 9.0) / (2.0 * z * z)
            + (mu - 1.0) * (mu - 9.0) * (mu - 25.0) * (mu - 49.0) / (24.0 * z.powi(4));
        let q = (mu - 1.0) / z - (mu - 1.0) * (mu - 9.0) * (mu - 25.0) / (6.0 * z.powi(3))
            + (mu - 1.0) * (mu - 9.0) * (mu - 25.0) * (mu - 49.0) * (mu - 81.0)
                / (120.0 * z.powi(5));
        let (sin, cos) = (x - 0.75 * PI).sin_cos();
        (2.0 / (PI * x)).sqrt() * (p * cos - q * sin)
    };
    2.0 * j1 / x
}

/// Navier series for a simply supported a×b plate (a ≤ b): centre moments Mx (along the short
/// span), My, centre deflection and total force. Odd terms only (symmetric load).
fn navier_centre(a: f64, b: f64, nu: f64, d: f64, load: PlateLoad, t: f64) -> (f64, f64, f64, f64) {
    let (n_terms, force, patch) = match load {
        PlateLoad::Pressure(q) => (99usize, q * a * b, None),
        PlateLoad::Patch { force, diameter } => {
            let r = equivalent_radius(diameter / 2.0, t);
            // enough terms for the patch to be resolved: about 25 half-waves across the
            // square of its area, capped so that one call stays within milliseconds
            let side = r * PI.sqrt();
            let n = ((25.0 * b / side).ceil() as usize).clamp(99, 1201);
            (n | 1, force, Some(r))
        }
    };
    // Centre value of each term: the load coefficient q_mn times sin(mπ/2)·sin(nπ/2).
    // Uniform q:   q_mn = 16q / (π² m n)                       → centre factor ±1/(m n)·16q/π²
    // Patch, a circle of radius c at the centre: q_mn = 4/(ab) ∫∫ p sin(mπx/a) sin(nπy/b) dA
    //            = 4P/(ab) · sin(mπ/2) sin(nπ/2) · 2J₁(kc)/(kc), k² = (mπ/a)² + (nπ/b)²
    //              (the mean of cos(αu)·cos(βv) over the disc)  → centre factor
    //              4P/(ab) · 2J₁(kc)/(kc) (the two signs square away).
    let mut sa = Vec::with_capacity(n_terms / 2 + 1);
    let mut sb = Vec::with_capacity(n_terms / 2 + 1);
    for k in (1..=n_terms).step_by(2) {
        let kf = k as f64;
        let sign = if (k / 2) % 2 == 0 { 1.0 } else { -1.0 };
        let f = match patch {
            None => sign / kf,
            Some(_) => 1.0,
        };
        sa.push((kf / a, f));
        sb.push((kf / b, f));
    }
    let qbar = force / (a * b);
    let k = match patch {
        None => 16.0 * qbar / (PI * PI),
        Some(_) => 4.0 * qbar,
    };
    let mut mx = 0.0;
    let mut my = 0.0;
    let mut w = 0.0;
    for &(ma, ca) in &sa {
        for &(nb, cb) in &sb {
            let s = ma * ma + nb * nb;
            let shape = match patch {
                None => ca * cb,
                Some(radius) => disc_mean(PI * s.sqrt() * radius),
            };
            let c = shape / (s * s);
            w += c;
            mx += c * (ma * ma + nu * nb * nb);
            my += c * (nu * ma * ma + nb * nb);
        }
    }
    (
        k * mx / (PI * PI),
        k * my / (PI * PI),
        k * w / (PI.powi(4) * d),
        force,
    )
}
