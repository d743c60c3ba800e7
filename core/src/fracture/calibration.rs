//! A lab's own mirror constant from specimens broken at a known stress (the calibration in the
//! scope of ASTM C1678). Pure: pairs of (stress, radius) in, the fit out. SI throughout.
//!
//! The constant. Each specimen gives its own constant a_j = σ_j √R_j, and A is the least-squares
//! fit of one constant to them, their mean (the same A as the least squares of σ on 1/√R through
//! the origin weighted by R, the weighting that suits a scatter proportional to the stress, which
//! is what a reading scatter of the radius gives):
//!
//!   A = Σ a_j / n,           s² = Σ (a_j − A)² / (n − 1)  (the scatter of one specimen),
//!   sd(A) = s / √n,          95 % interval A ± t(0.975, n − 1) · sd(A).
//!
//! The residual of each specimen is its stress less the fitted A/√R_j, so an outlier shows.
//! (An unweighted fit of σ on 1/√R gives the large stresses the most say and, with a
//! proportional scatter, an interval that holds the true A less often than it claims.)
//!
//! The slope. The relation assumes σ ∝ R^(−½). Ordinary least squares of ln σ on ln R gives
//! the slope b with its standard error s_b = s_log / √Sxx (s_log² = SSE / (n − 2)) and the
//! 95 % interval b ± t(0.975, n − 2) · s_b; when −½ lies outside that interval the set is
//! flagged: the specimens do not follow the relation (mixed boundaries, residual stress, a
//! stress that was not the stress at the origin), and the constant describes them poorly.

use serde::{Deserialize, Serialize};

use super::mirror::Boundary;
use super::uncertainty::t975;

/// Fewest specimens a boundary's fit takes: two for the constant and its spread, a third for
/// the slope's interval.
pub const MIN_SPECIMENS: usize = 3;

/// The slope the mirror relation assumes.
pub const EXPECTED_SLOPE: f64 = -0.5;

/// One specimen's reading of one boundary: the stress at the origin (Pa) and the radius (m).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Break {
    pub stress_pa: f64,
    pub radius_m: f64,
}

/// How one specimen sits against the fitted constant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpecimenResidual {
    /// Position in the input.
    pub index: usize,
    pub stress_pa: f64,
    pub radius_m: f64,
    /// σ_j √R_j, Pa·√m.
    pub own_constant: f64,
    /// A / √R_j, Pa.
    pub fitted_stress_pa: f64,
    /// σ_j − A / √R_j, Pa.
    pub residual_pa: f64,
}

/// The fit of log σ on log R.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SlopeCheck {
    pub slope: f64,
    /// Standard error of the slope.
    pub slope_sd: f64,
    /// 95 % interval of the slope.
    pub slope_low: f64,
    pub slope_high: f64,
    /// True when −½ lies inside the interval.
    pub consistent: bool,
}

/// A boundary's fitted constant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BoundaryFit {
    pub boundary: Boundary,
    pub n: usize,
    /// A, Pa·√m.
    pub constant: f64,
    /// Standard deviation (standard error) of A, Pa·√m.
    pub constant_sd: f64,
    /// Student's t used for the interval (n − 1 degrees of freedom).
    pub coverage: f64,
    pub constant_low: f64,
    pub constant_high: f64,
    /// Sample standard deviation of the specimens' own constants σ_j √R_j, Pa·√m.
    pub specimen_sd: f64,
    pub residuals: Vec<SpecimenResidual>,
    /// `None` when every radius is the same (no slope can be fitted).
    pub slope: Option<SlopeCheck>,
}

impl BoundaryFit {
    /// True when the slope check ran and −½ lies outside its interval.
    pub fn slope_flagged(&self) -> bool {
        self.slope.as_ref().is_some_and(|s| !s.consistent)
    }
}

/// Why a boundary cannot be fitted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CalibrationError {
    #[error(
        "{boundary}: {n} specimen{} with a radius; at least {MIN_SPECIMENS} are needed for \
         the constant, its spread and the slope check",
        if *.n == 1 { "" } else { "s" }
    )]
    TooFew { boundary: &'static str, n: usize },
    #[error(
        "{boundary}: specimen {index} has a stress or radius that is not a positive finite number"
    )]
    NotPositive {
        boundary: &'static str,
        index: usize,
    },
}

/// Fit A for one boundary from its specimens.
pub fn fit_boundary(boundary: Boundary, breaks: &[Break]) -> Result<BoundaryFit, CalibrationError> {
    let name = boundary.code();
    let n = breaks.len();
    if n < MIN_SPECIMENS {
        return Err(CalibrationError::TooFew { boundary: name, n });
    }
    if let Some(index) = breaks.iter().position(|b| {
        !(b.stress_pa.is_finite()
            && b.radius_m.is_finite()
            && b.stress_pa > 0.0
            && b.radius_m > 0.0)
    }) {
        return Err(CalibrationError::NotPositive {
            boundary: name,
            index,
        });
    }
    let own: Vec<f64> = breaks
        .iter()
        .map(|b| b.stress_pa * b.radius_m.sqrt())
        .collect();
    let constant = own.iter().sum::<f64>() / n as f64;
    let specimen_sd =
        (own.iter().map(|a| (a - constant).powi(2)).sum::<f64>() / (n - 1) as f64).sqrt();
    let constant_sd = specimen_sd / (n as f64).sqrt();
    let residuals: Vec<SpecimenResidual> = breaks
        .iter()
        .zip(&own)
        .enumerate()
        .map(|(index, (b, own))| {
            let fitted = constant / b.radius_m.sqrt();
            SpecimenResidual {
                index,
                stress_pa: b.stress_pa,
                radius_m: b.radius_m,
                own_constant: *own,
                fitted_stress_pa: fitted,
                residual_pa: b.stress_pa - fitted,
            }
        })
        .collect();
    let coverage = t975(n - 1);
    Ok(BoundaryFit {
        boundary,
        n,
        constant,
        constant_sd,
        coverage,
        constant_low: constant - coverage * constant_sd,
        constant_high: constant + coverage * constant_sd,
        specimen_sd,
        residuals,
        slope: slope_check(breaks),
    })
}

/// Ordinary least squares of ln σ on ln R (n ≥ 3); `None` when every radius is equal.
fn slope_check(breaks: &[Break]) -> Option<SlopeCheck> {
    let n = breaks.len();
    let lx: Vec<f64> = breaks.iter().map(|b| b.radius_m.ln()).collect();
    let ly: Vec<f64> = breaks.iter().map(|b| b.stress_pa.ln()).collect();
    let mx = lx.iter().sum::<f64>() / n as f64;
    let my = ly.iter().sum::<f64>() / n as f64;
    let sxx: f64 = lx.iter().map(|x| (x - mx).powi(2)).sum();
    // radii equal to rounding: no slope
    if sxx <= 1e-12 * mx.abs().max(1.0) {
        return None;
    }
    let sxy: f64 = lx.iter().zip(&ly).map(|(x, y)| (x - mx) * (y - my)).sum();
    let slope = sxy / sxx;
    let intercept = my - slope * mx;
    let sse: f64 = lx
        .iter()
        .zip(&ly)
        .map(|(x, y)| (y - intercept - slope * x).powi(2))
        .sum();
    let slope_sd = (sse / (n - 2) as f64).sqrt() / sxx.sqrt();
    let half = t975(n - 2) * slope_sd;
    // a set that follows the relation exactly has no scatter and an interval of zero width:
    // allow the rounding of the logarithms
    let consistent = (slope - EXPECTED_SLOPE).abs() <= half + 1e-9;
    Some(SlopeCheck {
        slope,
        slope_sd,
        slope_low: slope - half,
        slope_high: slope + half,
        consistent,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * b.abs().max(1e-300)
    }

    #[test]
    fn exact_data_gives_the_constant_and_slope() {
        // σ = A/√R exactly with A = 1.92 MPa·√m: A comes back, residuals vanish, slope −½
        let a = 1.92e6;
        let breaks: Vec<Break> = [0.5e-3, 1.0e-3, 2.0e-3, 4.0e-3]
            .iter()
            .map(|&r| Break {
                stress_pa: a / f64::sqrt(r),
                radius_m: r,
            })
            .collect();
        let f = fit_boundary(Boundary::MirrorMist, &breaks).unwrap();
        assert!(close(f.constant, a, 1e-12));
        assert!(f.constant_sd < 1e-6 * a);
        let s = f.slope.unwrap();
        assert!(close(s.slope, -0.5, 1e-9));
        assert!(s.consistent);
    }

    #[test]
    fn too_few_and_bad_values_are_refused() {
        let b = Break {
            stress_pa: 60e6,
            radius_m: 1e-3,
        };
        assert_eq!(
            fit_boundary(Boundary::Branching, &[b, b]),
            Err(CalibrationError::TooFew {
                boundary: "branching",
                n: 2
            })
        );
        let bad = Break {
            stress_pa: -1.0,
            radius_m: 1e-3,
        };
        assert!(matches!(
            fit_boundary(Boundary::Branching, &[b, b, bad]),
            Err(CalibrationError::NotPositive { index: 2, .. })
        ));
    }

    #[test]
    fn equal_radii_have_no_slope() {
        let b = |s: f64| Break {
            stress_pa: s,
            radius_m: 1e-3,
        };
        let f = fit_boundary(Boundary::MistHackle, &[b(60e6), b(62e6), b(61e6)]).unwrap();
        assert!(f.slope.is_none());
        assert!(!f.slope_flagged());
    }
}
