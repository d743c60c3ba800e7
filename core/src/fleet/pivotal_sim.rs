//! The Monte Carlo behind the table of [`super::pivotal`]: unit-Weibull samples from a fixed
//! generator, each fitted by maximum likelihood, and the quantiles of the pivotal quantities.
//! Pure and deterministic: the same seed gives the same table on every machine.

use super::pivotal::{PivotalRow, PROBABILITIES};
use super::weibull::{modulus_and_scale, Specimen};

/// splitmix64 (Steele, Lea & Flood, OOPSLA 2014): a small, fixed, portable generator.
#[derive(Debug, Clone)]
pub struct SplitMix(u64);

impl SplitMix {
    pub fn new(seed: u64) -> Self {
        SplitMix(seed)
    }

    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform on (0, 1): 53 bits, never 0.
    pub fn next_open(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
}

/// m̂/m and m̂·ln(σ̂_θ/σ_θ) of `replicates` unit-Weibull samples of size `n`.
pub fn simulate(n: usize, replicates: usize, seed: u64) -> Vec<(f64, f64)> {
    let mut rng = SplitMix::new(seed ^ (n as u64).wrapping_mul(0x9E37_79B9));
    let mut out = Vec::with_capacity(replicates);
    let mut sample = vec![Specimen::failure(1.0); n];
    while out.len() < replicates {
        for s in sample.iter_mut() {
            *s = Specimen::failure(-rng.next_open().ln());
        }
        if let Ok((m, scale)) = modulus_and_scale(&sample) {
            out.push((m, m * scale.ln()));
        }
    }
    out
}

/// The p-quantile of sorted values (linear between order statistics).
fn quantile(sorted: &[f64], p: f64) -> f64 {
    let h = p * (sorted.len() - 1) as f64;
    let i = h.floor() as usize;
    let f = h - i as f64;
    let next = sorted.get(i + 1).copied().unwrap_or(sorted[i]);
    sorted[i] + f * (next - sorted[i])
}

/// One row of the table from `replicates` samples of size `n`.
pub fn tabulate(n: usize, replicates: usize, seed: u64) -> PivotalRow {
    let draws = simulate(n, replicates, seed);
    let mut q: Vec<f64> = draws.iter().map(|d| d.0).collect();
    let mut t: Vec<f64> = draws.iter().map(|d| d.1).collect();
    let mean = q.iter().sum::<f64>() / q.len() as f64;
    q.sort_unstable_by(f64::total_cmp);
    t.sort_unstable_by(f64::total_cmp);
    PivotalRow {
        n,
        unbiasing: 1.0 / mean,
        q: PROBABILITIES.map(|p| quantile(&q, p)),
        t: PROBABILITIES.map(|p| quantile(&t, p)),
    }
}
