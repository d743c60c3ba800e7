//! Reading statistics and the 95 % interval of a mirror stress.
//!
//! How the interval is built (σ = A / √R):
//!
//! 1. **Reading scatter.** With n ≥ 2 readings of one boundary, the standard uncertainty of the
//!    mean radius is u_R = s / √n (s the sample standard deviation) and its coverage factor is
//!    Student's t at 97.5 % with n − 1 degrees of freedom. With a single reading there is no
//!    scatter to measure, so a reading uncertainty of [`SINGLE_READING_REL_SD`] (5 % of the
//!    radius, one standard deviation: where an analyst places a mist boundary under a stereo
//!    microscope varies by about that much between readings) is assumed, with coverage 1.96.
//! 2. **The constant's spread.** u_A is the constant's `spread` (one standard deviation), with
//!    coverage 1.96 (treated as normal, many degrees of freedom).
//! 3. **Combination.** Relative uncertainties propagate in quadrature through σ = A R^(−½):
//!    (u_σ/σ)² = (u_A/A)² + (u_R/2R)². Each term is first expanded by its own coverage factor,
//!    then the expanded terms are added in quadrature:
//!    U = √[(1.96 u_A/A)² + (k_R u_R/2R)²]. This is slightly wider than a Welch–Satterthwaite
//!    combination and needs no iteration.
//! 4. **Interval.** The interval is taken on the logarithm: [σ e^(−U), σ e^(U)], so it is never
//!    negative, always contains σ, and is the usual ±U to first order.

use serde::{Deserialize, Serialize};

/// Relative standard uncertainty assumed for a single reading of a boundary radius.
pub const SINGLE_READING_REL_SD: f64 = 0.05;

/// Coverage factor for 95 % under a normal distribution.
pub const Z95: f64 = 1.959_963_984_540_054;

/// Student's t, two-sided 95 % (the 0.975 quantile), for 1..=30 degrees of freedom
/// (every statistics table; e.g. NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.2).
const T975: [f64; 30] = [
    12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228, 2.201, 2.179, 2.160,
    2.145, 2.131, 2.120, 2.110, 2.101, 2.093, 2.086, 2.080, 2.074, 2.069, 2.064, 2.060, 2.056,
    2.052, 2.048, 2.045, 2.042,
];

/// The 0.975 quantile of Student's t with `dof` degrees of freedom (`dof` ≥ 1).
/// Table up to 30, then the Cornish–Fisher expansion about the normal quantile.
pub fn t975(dof: usize) -> f64 {
    match dof {
        0 => f64::INFINITY,
        1..=30 => T975[dof - 1],
        _ => {
            let z = Z95;
            let v = dof as f64;
            let z3 = z.powi(3);
            let z5 = z.powi(5);
            let z7 = z.powi(7);
            z + (z3 + z) / (4.0 * v)
                + (5.0 * z5 + 16.0 * z3 + 3.0 * z) / (96.0 * v * v)
                + (3.0 * z7 + 19.0 * z5 + 17.0 * z3 - 15.0 * z) / (384.0 * v * v * v)
        }
    }
}

/// Mean, sample standard deviation and the uncertainty of the mean of some readings.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ReadingStats {
    pub n: usize,
    pub mean: f64,
    /// Sample standard deviation (n − 1 in the denominator); `None` for a single reading.
    pub sd: Option<f64>,
    /// Standard uncertainty of the mean (s/√n, or the assumed single-reading value).
    pub u_mean: f64,
    /// Coverage factor for 95 % applied to `u_mean` (t with n − 1 dof, or 1.96).
    pub coverage: f64,
    /// How `u_mean` was obtained, in words.
    pub method: String,
}

/// Statistics of readings. Callers pass at least one finite positive value.
pub fn reading_stats(values: &[f64]) -> ReadingStats {
    let n = values.len();
    let mean = values.iter().sum::<f64>() / n.max(1) as f64;
    if n < 2 {
        return ReadingStats {
            n,
            mean,
            sd: None,
            u_mean: SINGLE_READING_REL_SD * mean,
            coverage: Z95,
            method: format!(
                "single reading: {} % reading uncertainty assumed (one standard deviation), \
                 coverage 1.96",
                SINGLE_READING_REL_SD * 100.0
            ),
        };
    }
    let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
    let sd = var.sqrt();
    let t = t975(n - 1);
    ReadingStats {
        n,
        mean,
        sd: Some(sd),
        u_mean: sd / (n as f64).sqrt(),
        coverage: t,
        method: format!(
            "{n} readings: standard error of the mean, Student's t = {t:.3} ({} degree{} of \
             freedom)",
            n - 1,
            if n == 2 { "" } else { "s" }
        ),
    }
}

/// The expanded relative uncertainty U of σ = A/√R (see the module notes).
pub fn mirror_stress_rel_u95(stats: &ReadingStats, constant_rel_sd: Option<f64>) -> f64 {
    let reading = stats.coverage * stats.u_mean / (2.0 * stats.mean);
    let constant = constant_rel_sd.map(|r| Z95 * r).unwrap_or(0.0);
    (reading * reading + constant * constant).sqrt()
}

/// The interval [x e^(−U), x e^(U)].
pub fn log_interval(x: f64, rel_u: f64) -> (f64, f64) {
    let f = rel_u.max(0.0).exp();
    (x / f, x * f)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn t_expansion_joins_the_table() {
        // NIST/SEMATECH table: 30 dof 2.042, 60 dof 2.000, 120 dof 1.980.
        assert!((t975(31) - 2.040).abs() < 2e-3);
        assert!((t975(60) - 2.000).abs() < 1e-3);
        assert!((t975(120) - 1.980).abs() < 1e-3);
    }

    #[test]
    fn two_readings() {
        let s = reading_stats(&[0.98e-3, 1.04e-3]);
        assert!((s.mean - 1.01e-3).abs() < 1e-15);
        // s = |0.06| / √2 mm; u = s / √2 = 0.03 mm
        assert!((s.u_mean - 0.03e-3).abs() < 1e-12);
        assert_eq!(s.coverage, 12.706);
    }

    #[test]
    fn interval_contains() {
        let (lo, hi) = log_interval(60.0, 0.1);
        assert!(lo < 60.0 && hi > 60.0);
    }
}
