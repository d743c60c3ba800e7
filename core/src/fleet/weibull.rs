//! Two-parameter Weibull distribution by maximum likelihood, with right-censoring.
//!
//! F(σ) = 1 − exp(−(σ/σ_θ)^m). With r failures among N specimens (the others right-censored:
//! survivors of a proof load, or fractures from a competing flaw population), the likelihood
//! equations of ASTM C1239 §8 / ISO 20501 are
//!
//! ```text
//!   Σ_all σᵢ^m ln σᵢ / Σ_all σᵢ^m − (1/r) Σ_failures ln σᵢ − 1/m = 0
//!   σ_θ = (Σ_all σᵢ^m / r)^(1/m)
//! ```
//!
//! The left side of the first equation rises strictly with m (its derivative is a weighted
//! variance of ln σ plus 1/m²), so it has one root; it is found by Newton's method kept
//! inside a bracket (bisection when a step leaves it). Values are divided by the largest one
//! first, so σ^m never overflows.
//!
//! Confidence bounds: Wald intervals on ln m and ln σ_θ, with the variances taken from the
//! inverse of the observed information matrix at the estimate (large-sample theory; C1239's
//! tabulated factors are exact for complete samples and give somewhat wider bounds when N is
//! small). Probability-plot positions: Johnson's adjusted ranks, then C1239's estimator
//! P = (rank − 0.5) / N (for complete samples this is exactly C1239's (i − 0.5)/N).
//! Goodness of fit: the Anderson–Darling statistic against the fitted distribution, with
//! Stephens' small-sample modification for estimated parameters (complete samples only).
//!
//! Units: whatever the caller passes (Pa inside shardlog); the modulus has none.

use super::special::normal_quantile;

/// One specimen: its stress, and whether it survived that stress (right-censored) instead of
/// breaking at it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Specimen {
    pub stress: f64,
    pub censored: bool,
}

impl Specimen {
    pub fn failure(stress: f64) -> Self {
        Specimen {
            stress,
            censored: false,
        }
    }
    pub fn survivor(stress: f64) -> Self {
        Specimen {
            stress,
            censored: true,
        }
    }
}

/// Why a set of strengths cannot be fitted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum WeibullError {
    #[error("no values to fit")]
    Empty,
    #[error("value {index} is {value}; strengths must be finite and greater than zero")]
    NotPositive { index: usize, value: f64 },
    #[error("every value is censored (survived); at least two failures are needed")]
    AllCensored,
    #[error("only {failures} failure(s); at least two are needed for a Weibull fit")]
    TooFewFailures { failures: usize },
    #[error("all failure stresses are equal ({value}); the Weibull modulus is unbounded")]
    AllEqual { value: f64 },
    #[error("the likelihood equation did not converge")]
    NoConvergence,
}

/// A confidence interval `[low, high]`.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Interval {
    pub low: f64,
    pub high: f64,
}

impl Interval {
    pub fn as_array(self) -> [f64; 2] {
        [self.low, self.high]
    }
}

/// Anderson–Darling goodness of fit against the fitted distribution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AndersonDarling {
    /// A² against the fitted distribution.
    pub a2: f64,
    /// A² (1 + 0.2/√N): Stephens' modification for the Weibull (extreme-value) case with both
    /// parameters estimated.
    pub a2_modified: f64,
    /// 5 % critical value of the modified statistic (0.757, Stephens 1977; from memory).
    pub critical_5pct: f64,
    /// True when the modified statistic exceeds the 5 % critical value.
    pub rejected_at_5pct: bool,
}

/// One point of a Weibull probability plot.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotPoint {
    pub stress: f64,
    /// Johnson's adjusted rank (an integer 1..=N for complete samples).
    pub rank: f64,
    /// Probability of failure (rank − 0.5) / N.
    pub probability: f64,
    /// ln(stress): the plot's horizontal axis.
    pub x: f64,
    /// ln ln (1 / (1 − P)): the plot's vertical axis.
    pub y: f64,
}

/// The result of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct WeibullFit {
    pub n: usize,
    pub n_failures: usize,
    pub n_censored: usize,
    /// Maximum-likelihood Weibull modulus m̂.
    pub modulus: f64,
    /// m̂ × the C1239 unbiasing factor (complete samples of 5 or more only).
    pub modulus_unbiased: Option<f64>,
    pub unbiasing_factor: Option<f64>,
    /// Characteristic strength σ_θ (63.2 % failure), in the caller's unit.
    pub scale: f64,
    pub modulus_ci90: Interval,
    pub modulus_ci95: Interval,
    pub scale_ci90: Interval,
    pub scale_ci95: Interval,
    /// None for censored samples (the plain statistic does not apply to them).
    pub anderson_darling: Option<AndersonDarling>,
    /// Failures only, in rising order of stress.
    pub plot: Vec<PlotPoint>,
    /// Newton/bisection steps the solver took.
    pub iterations: u32,
}

impl WeibullFit {
    /// Fitted probability of failure at `stress`.
    pub fn cdf(&self, stress: f64) -> f64 {
        cdf(stress, self.modulus, self.scale)
    }

    /// The fitted line on the probability plot: y = m·x − m·ln σ_θ.
    pub fn plot_line(&self, x: f64) -> f64 {
        self.modulus * (x - self.scale.ln())
    }
}

/// Weibull distribution function.
pub fn cdf(stress: f64, modulus: f64, scale: f64) -> f64 {
    if stress <= 0.0 {
        return 0.0;
    }
    -(-(stress / scale).powf(modulus)).exp_m1()
}

/// ASTM C1239 unbiasing factors for the maximum-likelihood modulus of a complete sample
/// (from memory, not confirmed against the document; the anchors N = 5, 10, 20, 30, 50, 100 are
/// those of the project's reference values, and every entry is checked against a Monte Carlo
/// run in the fleet integration tests).
const UNBIASING: [(usize, f64); 49] = [
    (5, 0.700),
    (6, 0.752),
    (7, 0.792),
    (8, 0.820),
    (9, 0.842),
    (10, 0.859),
    (11, 0.872),
    (12, 0.883),
    (13, 0.893),
    (14, 0.901),
    (15, 0.908),
    (16, 0.914),
    (18, 0.923),
    (20, 0.931),
    (22, 0.938),
    (24, 0.943),
    (26, 0.947),
    (28, 0.951),
    (30, 0.955),
    (32, 0.958),
    (34, 0.960),
    (36, 0.962),
    (38, 0.964),
    (40, 0.966),
    (42, 0.968),
    (44, 0.969),
    (46, 0.971),
    (48, 0.972),
    (50, 0.973),
    (52, 0.974),
    (54, 0.975),
    (56, 0.976),
    (58, 0.977),
    (60, 0.978),
    (62, 0.979),
    (64, 0.980),
    (66, 0.980),
    (68, 0.981),
    (70, 0.982),
    (72, 0.982),
    (74, 0.983),
    (76, 0.983),
    (78, 0.984),
    (80, 0.984),
    (85, 0.985),
    (90, 0.986),
    (95, 0.987),
    (100, 0.987),
    (120, 0.989),
];

/// The unbiasing factor for a complete sample of `n` (None below 5). Between table rows the
/// factor is interpolated linearly in 1/N; beyond 120 it follows 1 − 1.32/N, the table's own
/// tail (0.989 at 120).
pub fn unbiasing_factor(n: usize) -> Option<f64> {
    let first = UNBIASING[0].0;
    let (last_n, _) = UNBIASING[UNBIASING.len() - 1];
    if n < first {
        return None;
    }
    if n > last_n {
        return Some(1.0 - 1.32 / n as f64);
    }
    for w in UNBIASING.windows(2) {
        let (n0, f0) = w[0];
        let (n1, f1) = w[1];
        if n == n0 {
            return Some(f0);
        }
        if n == n1 {
            return Some(f1);
        }
        if n > n0 && n < n1 {
            let (u0, u1, u) = (1.0 / n0 as f64, 1.0 / n1 as f64, 1.0 / n as f64);
            return Some(f0 + (f1 - f0) * (u - u0) / (u1 - u0));
        }
    }
    None
}

/// Fit a complete (uncensored) sample.
pub fn fit_values(values: &[f64]) -> Result<WeibullFit, WeibullError> {
    let s: Vec<Specimen> = values.iter().map(|&v| Specimen::failure(v)).collect();
    fit(&s)
}

/// Competing flaw populations (C1239): fit the population `target`, treating every fracture
/// from another population as censored at its fracture stress.
pub fn fit_population<L: PartialEq>(
    samples: &[(f64, L)],
    target: &L,
) -> Result<WeibullFit, WeibullError> {
    let s: Vec<Specimen> = samples
        .iter()
        .map(|(v, l)| Specimen {
            stress: *v,
            censored: l != target,
        })
        .collect();
    fit(&s)
}

struct Sums {
    s0: f64,
    s1: f64,
    s2: f64,
}

fn sums(ln_y: &[f64], m: f64) -> Sums {
    let (mut s0, mut s1, mut s2) = (0.0, 0.0, 0.0);
    for &l in ln_y {
        let w = (m * l).exp();
        s0 += w;
        s1 += w * l;
        s2 += w * l * l;
    }
    Sums { s0, s1, s2 }
}

/// The number of failures, or why the sample cannot be fitted: empty, a stress that is not a
/// positive number, fewer than two failures.
fn count_failures(samples: &[Specimen]) -> Result<usize, WeibullError> {
    if samples.is_empty() {
        return Err(WeibullError::Empty);
    }
    for (i, s) in samples.iter().enumerate() {
        if !(s.stress.is_finite() && s.stress > 0.0) {
            return Err(WeibullError::NotPositive {
                index: i,
                value: s.stress,
            });
        }
    }
    let r = samples.iter().filter(|s| !s.censored).count();
    if r == 0 {
        return Err(WeibullError::AllCensored);
    }
    if r < 2 {
        return Err(WeibullError::TooFewFailures { failures: r });
    }
    Ok(r)
}

/// The maximum-likelihood modulus m and the iterations it took: the root of the profile
/// score g(m) by safeguarded Newton steps. `ln_y` = ln(σ/σ_max) of every specimen, in the
/// order of `samples`; `mean_ln_f` its mean over the `rf` failures.
fn solve_modulus(
    samples: &[Specimen],
    ln_y: &[f64],
    mean_ln_f: f64,
    rf: f64,
) -> Result<(f64, u32), WeibullError> {
    let g = |m: f64| -> (f64, f64) {
        let s = sums(ln_y, m);
        let mean = s.s1 / s.s0;
        let var = (s.s2 / s.s0 - mean * mean).max(0.0);
        (mean - mean_ln_f - 1.0 / m, var + 1.0 / (m * m))
    };

    // Start from the Gumbel moment estimate on the failures: sd(ln σ) = π / (m √6).
    let var_f: f64 = samples
        .iter()
        .zip(ln_y)
        .filter(|(s, _)| !s.censored)
        .map(|(_, l)| (l - mean_ln_f).powi(2))
        .sum::<f64>()
        / rf;
    let mut m = if var_f > 0.0 {
        1.282_549_8 / var_f.sqrt()
    } else {
        1.0
    };
    if !(m.is_finite() && m > 0.0) {
        m = 1.0;
    }
    let (mut lo, mut hi) = (0.0_f64, f64::INFINITY);
    let mut iterations = 0u32;
    let mut converged = false;
    for _ in 0..500 {
        iterations += 1;
        let (gv, dg) = g(m);
        if gv == 0.0 {
            converged = true;
            break;
        }
        if gv < 0.0 {
            lo = lo.max(m);
        } else {
            hi = hi.min(m);
        }
        let mut next = m - gv / dg;
        if !(next.is_finite() && next > lo && next < hi) {
            next = if hi.is_finite() {
                0.5 * (lo + hi)
            } else {
                2.0 * m
            };
        }
        let step = (next - m).abs();
        m = next;
        if step <= 1e-14 * m || (hi - lo) <= 1e-15 * m {
            converged = true;
            break;
        }
    }
    if !converged || !m.is_finite() {
        return Err(WeibullError::NoConvergence);
    }
    Ok((m, iterations))
}

/// Variances of m and σ_θ from the observed information at the estimate, and, for a complete
/// sample (`complete`), z = (σ/σ_θ)^m of every specimen for the Anderson–Darling test.
///
/// Parameters (m, σ_θ). With z = σ/σ_θ, t = ln z, u = z^m and Σu = r at the estimate:
///   −∂²ℓ/∂m²    = r/m² + Σ u t²
///   −∂²ℓ/∂σ_θ²  = m² r / σ_θ²
///   −∂²ℓ/∂m∂σ_θ = −(m/σ_θ) Σ u t
fn observed_variances(
    ln_y: &[f64],
    m: f64,
    scale: f64,
    max_over_scale: f64,
    complete: bool,
    r: f64,
) -> (f64, f64, Vec<f64>) {
    let ln_ratio = max_over_scale.ln(); // ln z = ln y + ln(max/σ_θ)
    let (mut sut, mut sut2) = (0.0, 0.0);
    let mut z = Vec::with_capacity(if complete { ln_y.len() } else { 0 });
    for &l in ln_y {
        let t = l + ln_ratio;
        let u = (m * t).exp();
        sut += u * t;
        sut2 += u * t * t;
        if complete {
            z.push(u);
        }
    }
    let i_mm = r / (m * m) + sut2;
    let i_ss = m * m * r / (scale * scale);
    let i_ms = -(m / scale) * sut;
    let det = i_mm * i_ss - i_ms * i_ms;
    let (var_m, var_s) = if det > 0.0 {
        (i_ss / det, i_mm / det)
    } else {
        (f64::NAN, f64::NAN)
    };
    (var_m, var_s, z)
}

/// Fit a sample with optional right-censoring.
pub fn fit(samples: &[Specimen]) -> Result<WeibullFit, WeibullError> {
    let r = count_failures(samples)?;
    let n = samples.len();
    // Sorted once: the plot positions and the Anderson–Darling sum need the order.
    let mut sorted: Vec<Specimen> = samples.to_vec();
    sort_specimens(&mut sorted);
    let samples = &sorted[..];
    let max = samples[n - 1].stress;
    let ln_y: Vec<f64> = samples.iter().map(|s| (s.stress / max).ln()).collect();
    let rf = r as f64;
    let mean_ln_f: f64 = samples
        .iter()
        .zip(&ln_y)
        .filter(|(s, _)| !s.censored)
        .map(|(_, l)| *l)
        .sum::<f64>()
        / rf;
    // g(∞) = max ln y − mean over failures = −mean_ln_f (max ln y is 0). Zero means every
    // failure sits at the largest value: no finite root.
    let spread = -mean_ln_f;
    if spread <= 1e-14 {
        let value = samples
            .iter()
            .find(|s| !s.censored)
            .map_or(max, |s| s.stress);
        return Err(WeibullError::AllEqual { value });
    }
    let (m, iterations) = solve_modulus(samples, &ln_y, mean_ln_f, rf)?;
    let s = sums(&ln_y, m);
    let scale = max * (s.s0 / rf).powf(1.0 / m);

    let (var_m, var_s, z) = observed_variances(&ln_y, m, scale, max / scale, n == r, rf);
    let se_ln_m = var_m.sqrt() / m;
    let se_ln_s = var_s.sqrt() / scale;
    let wald = |est: f64, se: f64, level: f64| {
        let z = normal_quantile(0.5 + level / 2.0);
        Interval {
            low: est * (-z * se).exp(),
            high: est * (z * se).exp(),
        }
    };

    let n_censored = n - r;
    let unbiasing_factor = if n_censored == 0 {
        unbiasing_factor(n)
    } else {
        None
    };
    let anderson_darling = if n_censored == 0 {
        Some(anderson_darling(&z))
    } else {
        None
    };

    Ok(WeibullFit {
        n,
        n_failures: r,
        n_censored,
        modulus: m,
        modulus_unbiased: unbiasing_factor.map(|f| f * m),
        unbiasing_factor,
        scale,
        modulus_ci90: wald(m, se_ln_m, 0.90),
        modulus_ci95: wald(m, se_ln_m, 0.95),
        scale_ci90: wald(scale, se_ln_s, 0.90),
        scale_ci95: wald(scale, se_ln_s, 0.95),
        anderson_darling,
        plot: plot_points_sorted(samples),
        iterations,
    })
}

/// A² from z = (σ/σ_θ)^m in rising order (−ln(1 − F) at each value).
fn anderson_darling(z: &[f64]) -> AndersonDarling {
    let n = z.len();
    let nf = n as f64;
    let mut sum = 0.0;
    for i in 0..n {
        // ln F(x_i) = ln(1 − e^(−z)), ln(1 − F(x_(n+1−i))) = −z
        let ln_f = (-(-z[i]).exp_m1()).ln();
        let ln_s = -z[n - 1 - i];
        sum += (2.0 * i as f64 + 1.0) * (ln_f + ln_s);
    }
    let a2 = -nf - sum / nf;
    let a2_modified = a2 * (1.0 + 0.2 / nf.sqrt());
    AndersonDarling {
        a2,
        a2_modified,
        critical_5pct: 0.757,
        rejected_at_5pct: a2_modified > 0.757,
    }
}

/// Probability-plot points of the failures, by Johnson's adjusted ranks. Ties: failures are
/// ranked before survivors at the same stress (a survivor at σ outlived the failures at σ).
pub fn plot_points(samples: &[Specimen]) -> Vec<PlotPoint> {
    let mut sorted: Vec<Specimen> = samples.to_vec();
    sort_specimens(&mut sorted);
    plot_points_sorted(&sorted)
}

fn sort_specimens(s: &mut [Specimen]) {
    s.sort_unstable_by(|a, b| {
        a.stress
            .total_cmp(&b.stress)
            .then(a.censored.cmp(&b.censored))
    });
}

fn plot_points_sorted(sorted: &[Specimen]) -> Vec<PlotPoint> {
    let n = sorted.len() as f64;
    let mut prev = 0.0;
    let mut out = Vec::with_capacity(sorted.len());
    for (j, s) in sorted.iter().enumerate() {
        if s.censored {
            continue;
        }
        let reverse = n - j as f64; // items from this one to the end
        let rank = prev + (n + 1.0 - prev) / (1.0 + reverse);
        prev = rank;
        let p = (rank - 0.5) / n;
        out.push(PlotPoint {
            stress: s.stress,
            rank,
            probability: p,
            x: s.stress.ln(),
            y: (-(-p).ln_1p()).ln(),
        });
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn complete_ranks_are_integers() {
        let p = plot_points(&[
            Specimen::failure(3.0),
            Specimen::failure(1.0),
            Specimen::failure(2.0),
        ]);
        let ranks: Vec<f64> = p.iter().map(|q| q.rank).collect();
        assert_eq!(ranks, vec![1.0, 2.0, 3.0]);
        assert!((p[0].probability - 0.5 / 3.0).abs() < 1e-15);
    }

    #[test]
    fn johnson_ranks_with_a_survivor() {
        // N = 4: failure, survivor, failure, failure. Johnson: ranks 1, then
        // 1 + (5 − 1)/(1 + 2) = 2.3333, then 2.3333 + (5 − 2.3333)/(1 + 1) = 3.6667.
        let p = plot_points(&[
            Specimen::failure(1.0),
            Specimen::survivor(2.0),
            Specimen::failure(3.0),
            Specimen::failure(4.0),
        ]);
        assert_eq!(p.len(), 3);
        assert!((p[1].rank - 7.0 / 3.0).abs() < 1e-12);
        assert!((p[2].rank - 11.0 / 3.0).abs() < 1e-12);
    }

    #[test]
    fn errors() {
        assert_eq!(fit(&[]), Err(WeibullError::Empty));
        assert!(matches!(
            fit_values(&[1.0]),
            Err(WeibullError::TooFewFailures { failures: 1 })
        ));
        assert!(matches!(
            fit_values(&[2.0, 2.0, 2.0]),
            Err(WeibullError::AllEqual { .. })
        ));
        assert!(matches!(
            fit_values(&[2.0, -1.0]),
            Err(WeibullError::NotPositive { index: 1, .. })
        ));
        assert_eq!(
            fit(&[Specimen::survivor(1.0), Specimen::survivor(2.0)]),
            Err(WeibullError::AllCensored)
        );
    }
}
