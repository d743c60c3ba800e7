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
//! Confidence bounds: for a complete sample, from the pivotal quantities m̂/m and
//! m̂·ln(σ̂_θ/σ_θ) as ASTM C1239 gives them, with quantiles from this program's Monte Carlo
//! table ([`super::pivotal`]); the unbiasing factor 1/E[m̂/m] comes from the same table.
//! For a censored sample (or one larger than the table), Wald intervals on ln m and ln σ_θ
//! with the variances from the inverse of the observed information matrix at the estimate
//! (large-sample theory: at N = 5 a nominal 90 % Wald interval on m covers about 78 %).
//! [`BoundMethod`] says which made each bound. A fit needs three failures; below ten values
//! it carries a warning. Probability-plot positions: Johnson's adjusted ranks, then C1239's estimator
//! P = (rank − 0.5) / N (for complete samples this is exactly C1239's (i − 0.5)/N).
//! Goodness of fit: the Anderson–Darling statistic against the fitted distribution, with
//! Stephens' small-sample modification for estimated parameters (complete samples only).
//!
//! Units: whatever the caller passes (Pa inside shardlog); the modulus has none.

use super::special::normal_quantile;

/// The fewest failures a fit is made on: two points always lie on a line, so a modulus from
/// them says nothing.
pub const MIN_FAILURES: usize = 3;

/// Below this many values the result carries a warning: ASTM C1239 asks for at least 30.
pub const FEW_VALUES: usize = 10;

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
    #[error(
        "only {failures} failure(s); at least three are needed for a Weibull fit (ASTM C1239 \
         asks for 30)"
    )]
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
    /// m̂ × the unbiasing factor (complete samples only).
    pub modulus_unbiased: Option<f64>,
    pub unbiasing_factor: Option<f64>,
    /// Characteristic strength σ_θ (63.2 % failure), in the caller's unit.
    pub scale: f64,
    pub modulus_ci90: Interval,
    pub modulus_ci95: Interval,
    pub scale_ci90: Interval,
    pub scale_ci95: Interval,
    /// The large-sample Wald bounds, also when the bounds above are pivotal (for comparison).
    pub wald: WaldBounds,
    /// How the bounds on the modulus and on σ_θ were made.
    pub modulus_bounds_method: BoundMethod,
    pub scale_bounds_method: BoundMethod,
    /// Plain sentences about the fit's footing (few values).
    pub warnings: Vec<String>,
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

/// Wald intervals on ln m and ln σ_θ from the observed information.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WaldBounds {
    pub modulus_ci90: Interval,
    pub modulus_ci95: Interval,
    pub scale_ci90: Interval,
    pub scale_ci95: Interval,
}

/// How a confidence bound was made.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BoundMethod {
    /// Pivotal quantities of a complete sample (ASTM C1239), quantiles by this project's
    /// Monte Carlo table ([`super::pivotal`]): exact coverage up to the table's precision.
    Pivotal,
    /// Wald bounds on ln m and ln σ_θ from the observed information: large-sample, used for
    /// censored samples and beyond the table's largest N.
    Wald,
}

impl BoundMethod {
    /// "pivotal", "Wald": for a screen line.
    pub fn short(self) -> &'static str {
        match self {
            BoundMethod::Pivotal => "pivotal",
            BoundMethod::Wald => "Wald",
        }
    }

    pub fn label(self) -> &'static str {
        match self {
            BoundMethod::Pivotal => {
                "pivotal quantities (ASTM C1239), quantiles from this program's Monte Carlo \
                 table for a complete sample"
            }
            BoundMethod::Wald => {
                "large-sample Wald bounds from the observed information (censored sample, or \
                 more values than the pivotal table holds)"
            }
        }
    }
}

/// The unbiasing factor 1 / E[m̂/m] for a complete sample of `n` (None below the table's
/// smallest N): from the Monte Carlo table of [`super::pivotal`], interpolated in 1/N;
/// beyond its largest N as 1 − c/N with c from that last row.
pub fn unbiasing_factor(n: usize) -> Option<f64> {
    if let Some(row) = super::pivotal::row(n) {
        return Some(row.unbiasing);
    }
    let last = super::pivotal::TABLE.last()?;
    if n > last.n {
        let c = (1.0 - last.unbiasing) * last.n as f64;
        return Some(1.0 - c / n as f64);
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
    if r < MIN_FAILURES {
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

/// The maximum-likelihood modulus and characteristic strength alone (what the pivotal
/// Monte Carlo needs: no plot, no bounds).
pub fn modulus_and_scale(samples: &[Specimen]) -> Result<(f64, f64), WeibullError> {
    let r = count_failures(samples)?;
    let max = samples.iter().map(|s| s.stress).fold(0.0, f64::max);
    let ln_y: Vec<f64> = samples.iter().map(|s| (s.stress / max).ln()).collect();
    let rf = r as f64;
    let mean_ln_f = samples
        .iter()
        .zip(&ln_y)
        .filter(|(s, _)| !s.censored)
        .map(|(_, l)| *l)
        .sum::<f64>()
        / rf;
    if -mean_ln_f <= 1e-14 {
        return Err(WeibullError::AllEqual { value: max });
    }
    let (m, _) = solve_modulus(samples, &ln_y, mean_ln_f, rf)?;
    let s = sums(&ln_y, m);
    Ok((m, max * (s.s0 / rf).powf(1.0 / m)))
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
    let pivotal_row = if n_censored == 0 {
        super::pivotal::row(n)
    } else {
        None
    };
    // indices of the quantiles at 0.025, 0.05, 0.95, 0.975
    let bounds = |lo: usize, hi: usize, level: f64| match &pivotal_row {
        Some(row) => (
            Interval {
                low: m / row.q[hi],
                high: m / row.q[lo],
            },
            Interval {
                low: scale * (-row.t[hi] / m).exp(),
                high: scale * (-row.t[lo] / m).exp(),
            },
        ),
        None => (wald(m, se_ln_m, level), wald(scale, se_ln_s, level)),
    };
    let (modulus_ci90, scale_ci90) = bounds(1, 2, 0.90);
    let (modulus_ci95, scale_ci95) = bounds(0, 3, 0.95);
    let method = if pivotal_row.is_some() {
        BoundMethod::Pivotal
    } else {
        BoundMethod::Wald
    };
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
    let mut warnings = Vec::new();
    if n < FEW_VALUES {
        warnings.push(format!(
            "Only {n} values: a Weibull modulus from so few is very uncertain (see the bounds); \
             ASTM C1239 asks for at least 30."
        ));
    }

    Ok(WeibullFit {
        n,
        n_failures: r,
        n_censored,
        modulus: m,
        modulus_unbiased: unbiasing_factor.map(|f| f * m),
        unbiasing_factor,
        scale,
        modulus_ci90,
        modulus_ci95,
        scale_ci90,
        scale_ci95,
        wald: WaldBounds {
            modulus_ci90: wald(m, se_ln_m, 0.90),
            modulus_ci95: wald(m, se_ln_m, 0.95),
            scale_ci90: wald(scale, se_ln_s, 0.90),
            scale_ci95: wald(scale, se_ln_s, 0.95),
        },
        modulus_bounds_method: method,
        scale_bounds_method: method,
        warnings,
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
            fit_values(&[1.0, 2.0]),
            Err(WeibullError::TooFewFailures { failures: 2 })
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
