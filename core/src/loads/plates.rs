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
//!   circular patch enters by its own load terms (the disc's Fourier transform, 2J₁(kc)/kc),
//!   its moment sum (which carries the logarithm) in closed form, so 41 terms a side suffice;
//! - rectangular plates, clamped, uniform pressure: a Ritz series ([`super::clamped`]) with the
//!   material's Poisson's ratio, checked against Timoshenko & Woinowsky-Krieger Table 35 (the
//!   same as Roark Table 11.4 case 8a); it follows the overshoot of the edge moment above the
//!   strip limit near b/a = 2.5 and reaches the strip by b/a = 5;
//! - rectangular plates, clamped, central patch of any size: the inscribed clamped circle under
//!   the patch (closed form, §19) made smooth at its rim, plus the Ritz series for the rest,
//!   with the material's ν ([`super::clamped::from_row`]); checked against Roark Table 11.4
//!   (all edges fixed, small concentric circle, ν = 0.3).
//!
//! The clamped series is solved once per aspect ratio ahead of time and read from
//! [`super::clamped_table`], so every plate call takes microseconds.
//!
//! Small-deflection theory assumes the deflection is small against the thickness (Roark, 8th ed.,
//! §11.1, states the limit: "the maximum deflection is not more than about one-half the
//! thickness"). Once it passes about half the thickness, membrane action stiffens a glass pane and this theory over-predicts
//! the stress (and the deflection): such results are flagged with `large-deflection`.

use super::{clamped, clamped_table, positive, Elastic, Field, LoadError, Warning};
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
                let r = clamped_table::tabulated(a, b, d, nu, clamped::ClampedLoad::Pressure(q));
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
                         Woinowsky-Krieger Table 35), tabulated by aspect ratio; the clamped \
                         strip beyond b/a = 6",
                warnings: Vec::new(),
            })
        }
        (Edges::Clamped, PlateLoad::Patch { force, diameter }) => {
            // The inscribed clamped circle under the same patch carries the logarithm of the
            // centre moment in closed form; the smooth rest comes from the Ritz series, all
            // with this material's ν (see clamped::from_row). Exact for any patch size.
            let rp = equivalent_radius(diameter / 2.0, t);
            let r = clamped_table::tabulated(
                a,
                b,
                d,
                nu,
                clamped::ClampedLoad::Patch { force, radius: rp },
            );
            let centre = 6.0 * r.centre_moments.0.max(r.centre_moments.1) / (t * t);
            let edge = 6.0 * r.long_edge_moment / (t * t);
            let (stress, at) = if centre >= edge {
                (centre, "centre")
            } else {
                (edge, "middle of the long edges")
            };
            Ok(PlateResult {
                stress,
                stress_at: at,
                deflection: r.deflection,
                force,
                method: "rectangular plate, clamped, central patch: the inscribed clamped \
                         circle under the patch (Timoshenko & Woinowsky-Krieger 19) plus a Ritz \
                         series for the smooth rest, with this material's Poisson's ratio \
                         (checked against Roark Table 11.4 at 0.3), tabulated by aspect ratio; \
                         equivalent radius for small patches",
                warnings: Vec::new(),
            })
        }
    }
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

/// Terms of the Navier series per direction for a patch: across the short side, and the cap
/// along the long one. The moment sum is in closed form (see [`navier_centre`]); what the
/// series still carries (the difference of the moments and the deflection) converges fast:
/// against 641 terms these stay within 1e-4 of the stress and the deflection
/// (`simply_supported_patch_series_is_converged` in tests/it/loads.rs).
const PATCH_TERMS: usize = 41;
const PATCH_TERMS_LONG: usize = 401;

/// Navier series for a simply supported a×b plate (a ≤ b): centre moments Mx (along the short
/// span), My, centre deflection and total force. Odd terms only (symmetric load).
fn navier_centre(a: f64, b: f64, nu: f64, d: f64, load: PlateLoad, t: f64) -> (f64, f64, f64, f64) {
    // Centre value of each term: the load coefficient q_mn times sin(mπ/2)·sin(nπ/2).
    // Uniform q:   q_mn = 16q / (π² m n)                       → centre factor ±1/(m n)·16q/π²
    // Patch, a circle of radius c at the centre: q_mn = 4/(ab) ∫∫ p sin(mπx/a) sin(nπy/b) dA
    //            = 4P/(ab) · sin(mπ/2) sin(nπ/2) · 2J₁(kc)/(kc), k² = (mπ/a)² + (nπ/b)²
    //              (the mean of cos(αu)·cos(βv) over the disc)  → centre factor
    //              4P/(ab) · 2J₁(kc)/(kc) (the two signs square away).
    let sign = |k: usize| if (k / 2).is_multiple_of(2) { 1.0 } else { -1.0 };
    match load {
        PlateLoad::Pressure(q) => {
            let k = 16.0 * q / (PI * PI);
            let (sum, diff, w) = navier_sums(a, b, 99, 99, |m, n, _| {
                sign(m) * sign(n) / (m as f64 * n as f64)
            });
            let pi2 = PI * PI;
            let (mx, my) = from_sum_and_difference((1.0 + nu) * k * sum / pi2, k * diff / pi2, nu);
            (mx, my, k * w / (PI.powi(4) * d), q * a * b)
        }
        PlateLoad::Patch { force, diameter } => {
            let c = equivalent_radius(diameter / 2.0, t);
            let k = 4.0 * force / (a * b);
            let long = ((PATCH_TERMS as f64 * b / a).ceil() as usize).min(PATCH_TERMS_LONG) | 1;
            let (_, diff, w) = navier_sums(a, b, PATCH_TERMS, long, |_, _, root_s| {
                disc_mean(PI * root_s * c)
            });
            // The moment sum M_x + M_y = (1 + ν)ψ with ψ = −D∇²w, and ∇²ψ = −p with ψ = 0 on
            // the simply supported edges: ψ is the Dirichlet problem of the rectangle. At the
            // centre, the disc's mean of its Green's function is the logarithm's exact mean
            // plus the regular part at the centre (harmonic, so its mean is its centre value),
            // found by Lévy's single series for the rectangle's Green's function (Timoshenko &
            // Woinowsky-Krieger §35 carries the same ln(2a/πc)):
            //   ψ(0) = P/2π [ln(2a/πc) + 1/2 − 4 Σ_{m odd} 1/(m(1 + e^{mπb/a}))]
            let mut tail = 0.0;
            for m in (1..200).step_by(2) {
                let term = 1.0 / (m as f64 * (1.0 + (m as f64 * PI * b / a).exp()));
                tail += term;
                if term < 1e-18 {
                    break;
                }
            }
            let psi = force / (2.0 * PI) * ((2.0 * a / (PI * c)).ln() + 0.5 - 4.0 * tail);
            let (mx, my) = from_sum_and_difference((1.0 + nu) * psi, k * diff / (PI * PI), nu);
            (mx, my, k * w / (PI.powi(4) * d), force)
        }
    }
}

/// M_x, M_y from the ν-weighted sum (M_x + M_y) and the ν-free difference
/// −D(w,xx − w,yy): M_x − M_y = (1 − ν)·difference.
fn from_sum_and_difference(sum: f64, difference: f64, nu: f64) -> (f64, f64) {
    (
        (sum + (1.0 - nu) * difference) / 2.0,
        (sum - (1.0 - nu) * difference) / 2.0,
    )
}

/// The Navier double sums over odd m ≤ `na`, n ≤ `nb` of shape(m, n, √s)/s² times
/// (α² + β²), (α² − β²) and 1, with α = m/a, β = n/b, s = α² + β²: the ν-weighted moment
/// sum without ν (times 1 + ν it is (M_x + M_y)), the ν-free difference, the deflection.
fn navier_sums(
    a: f64,
    b: f64,
    na: usize,
    nb: usize,
    shape: impl Fn(usize, usize, f64) -> f64,
) -> (f64, f64, f64) {
    let (mut sum, mut diff, mut w) = (0.0, 0.0, 0.0);
    for m in (1..=na).step_by(2) {
        let al = m as f64 / a;
        for n in (1..=nb).step_by(2) {
            let be = n as f64 / b;
            let s = al * al + be * be;
            let c = shape(m, n, s.sqrt()) / (s * s);
            w += c;
            sum += c * s;
            diff += c * (al * al - be * be);
        }
    }
    (sum, diff, w)
}
