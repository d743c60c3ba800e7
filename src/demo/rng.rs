//! The demo's random draws: a small deterministic generator, so that a seed gives the
//! same demo on every machine.

/// A small deterministic generator (SplitMix64).
pub(super) struct Rng(pub(super) u64);

impl Rng {
    pub(super) fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub(super) fn f(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub(super) fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.f()
    }
    pub(super) fn below(&mut self, n: usize) -> usize {
        ((self.f() * n as f64) as usize).min(n.saturating_sub(1))
    }
    pub(super) fn chance(&mut self, p: f64) -> bool {
        self.f() < p
    }
    /// Standard normal (Box–Muller).
    pub(super) fn normal(&mut self) -> f64 {
        let u1 = self.f().max(1e-300);
        let u2 = self.f();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
    pub(super) fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
    /// Index drawn with the given weights (cumulative table).
    pub(super) fn weighted(&mut self, cumulative: &[f64]) -> usize {
        let total = cumulative.last().copied().unwrap_or(0.0);
        let x = self.f() * total;
        cumulative
            .partition_point(|c| *c <= x)
            .min(cumulative.len().saturating_sub(1))
    }
}
