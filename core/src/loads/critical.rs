//! The critical flaw curve: K(a) = Y·σ·√a (linear-elastic fracture mechanics, Irwin), the flaw
//! size at which K reaches the toughness K_Ic, a_c = (K_Ic / Yσ)², and the inverse, the stress at
//! which a flaw of size a fails, σ_f = K_Ic / (Y√a). Y (with √π included) comes from the caller:
//! the CLI and interface take it from `fracture::flaw::geometry_factor`, which owns the geometry
//! cases.

use super::{fits, positive, LoadError};

/// Flaw size (m) at which K reaches `toughness` (Pa·√m) under `stress` (Pa), for geometry
/// factor `y`.
pub fn critical_size(stress: f64, toughness: f64, y: f64) -> Result<f64, LoadError> {
    let s = positive("stress", stress)?;
    let k = positive("toughness", toughness)?;
    let y = positive("flaw", y)?;
    let a = (k / (y * s)).powi(2);
    // zero (underflow) is as wrong as infinity here
    fits("stress", s, &[a, 1.0 / a])?;
    Ok(a)
}

/// Stress (Pa) at which a flaw of size `a` (m) fails.
pub fn failure_stress(flaw_size: f64, toughness: f64, y: f64) -> Result<f64, LoadError> {
    let a = positive("flaw-size", flaw_size)?;
    let k = positive("toughness", toughness)?;
    let y = positive("flaw", y)?;
    let s = k / (y * a.sqrt());
    fits("flaw-size", a, &[s, 1.0 / s])?;
    Ok(s)
}

/// Stress intensity (Pa·√m) at flaw size `a` (m).
pub fn stress_intensity(stress: f64, flaw_size: f64, y: f64) -> f64 {
    y * stress * flaw_size.sqrt()
}

/// One point of the K(a) curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurvePoint {
    /// m
    pub flaw_size: f64,
    /// Pa·√m
    pub stress_intensity: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Curve {
    /// m
    pub critical_size: f64,
    /// Pa·√m, the horizontal line of the chart
    pub toughness: f64,
    /// log-spaced from critical/`span` to critical·`span`
    pub points: Vec<CurvePoint>,
}

/// The K(a) curve on `n` log-spaced flaw sizes spanning a factor `span` either side of the
/// critical size (e.g. span 10: a_c/10 to 10·a_c). `n` is clamped to 2..=2000.
pub fn curve(stress: f64, toughness: f64, y: f64, span: f64, n: usize) -> Result<Curve, LoadError> {
    let ac = critical_size(stress, toughness, y)?;
    let span = positive("span", span)?.max(1.0 + 1e-9);
    let n = n.clamp(2, 2000);
    let lo = (ac / span).ln();
    let hi = (ac * span).ln();
    fits(
        "span",
        span,
        &[lo, hi, ac * span, stress_intensity(stress, ac * span, y)],
    )?;
    let points = (0..n)
        .map(|i| {
            let a = (lo + (hi - lo) * i as f64 / (n - 1) as f64).exp();
            CurvePoint {
                flaw_size: a,
                stress_intensity: stress_intensity(stress, a, y),
            }
        })
        .collect();
    Ok(Curve {
        critical_size: ac,
        toughness,
        points,
    })
}

pub const CRITICAL_METHOD: &str =
    "linear-elastic fracture mechanics (Irwin): K = Y sigma sqrt(a); \
     critical size a_c = (K_Ic / (Y sigma))^2";
