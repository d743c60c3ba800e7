//! Incident rates against exposure, and the comparison of one group with the rest.
//!
//! - Rate interval: the exact (Garwood 1936) Poisson interval for the count k,
//!   `[χ²(α/2; 2k) / 2, χ²(1 − α/2; 2k + 2) / 2]`, divided by the exposure.
//! - Rate ratio of a group (k₁ events over exposure E₁) against the rest (k₀ over E₀):
//!   conditional on the total n = k₁ + k₀, k₁ is binomial with
//!   π = RR·E₁ / (RR·E₁ + E₀). The interval is the Clopper–Pearson interval for π mapped to
//!   RR = π/(1 − π) · E₀/E₁; the p-values are exact binomial tail sums at
//!   π₀ = E₁/(E₁ + E₀) (RR = 1): one-sided "above the rest", and two-sided as twice the smaller
//!   tail (capped at 1), which matches the central interval.
//! - Flags: Holm's step-down adjustment of the one-sided p-values over all groups compared,
//!   so the chance of flagging any group whose true rate is not above the rest stays below
//!   the level (family-wise error). A flag is a charge against a supplier or lot, so each one
//!   should stand on its own; Benjamini–Hochberg would allow a share of false flags.

use super::special::{beta_i, beta_quantile, chi2_quantile};
use super::weibull::Interval;

/// Exact Poisson interval for a count (Garwood), at confidence `level` (e.g. 0.95).
pub fn poisson_interval(count: u64, level: f64) -> Interval {
    let alpha = 1.0 - level;
    let k = count as f64;
    let low = if count == 0 {
        0.0
    } else {
        chi2_quantile(2.0 * k, alpha / 2.0) / 2.0
    };
    let high = chi2_quantile(2.0 * k + 2.0, 1.0 - alpha / 2.0) / 2.0;
    Interval { low, high }
}

/// A rate with its exact interval, per `per` units of exposure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rate {
    pub count: u64,
    pub exposure: f64,
    /// count / exposure × per
    pub rate: f64,
    pub ci95: Interval,
}

/// Incidents per 1,000 pane-years from a count and pane-years of exposure. None when the
/// exposure is not positive.
pub fn rate_per_1000(count: u64, pane_years: f64) -> Option<Rate> {
    if !(pane_years.is_finite() && pane_years > 0.0) {
        return None;
    }
    let f = 1000.0 / pane_years;
    let ci = poisson_interval(count, 0.95);
    Some(Rate {
        count,
        exposure: pane_years,
        rate: count as f64 * f,
        ci95: Interval {
            low: ci.low * f,
            high: ci.high * f,
        },
    })
}

/// Comparison of one group against the rest.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateRatio {
    /// (k₁/E₁) / (k₀/E₀); +∞ when the rest had no events.
    pub ratio: f64,
    pub ci95: Interval,
    /// Two-sided exact conditional p-value.
    pub p_two_sided: f64,
    /// One-sided p-value for "the group's rate is above the rest".
    pub p_above: f64,
    /// Events and exposure of the rest.
    pub rest_count: u64,
    pub rest_exposure: f64,
}

/// P(X ≥ k) for X ~ Binomial(n, p).
pub fn binomial_upper_tail(k: u64, n: u64, p: f64) -> f64 {
    if k == 0 {
        return 1.0;
    }
    if k > n {
        return 0.0;
    }
    beta_i(k as f64, (n - k + 1) as f64, p)
}

/// P(X ≤ k) for X ~ Binomial(n, p).
pub fn binomial_lower_tail(k: u64, n: u64, p: f64) -> f64 {
    if k >= n {
        return 1.0;
    }
    1.0 - beta_i((k + 1) as f64, (n - k) as f64, p)
}

/// Clopper–Pearson interval for a binomial proportion k/n.
pub fn clopper_pearson(k: u64, n: u64, level: f64) -> Interval {
    let a = (1.0 - level) / 2.0;
    let low = if k == 0 {
        0.0
    } else {
        beta_quantile(k as f64, (n - k + 1) as f64, a)
    };
    let high = if k >= n {
        1.0
    } else {
        beta_quantile((k + 1) as f64, (n - k) as f64, 1.0 - a)
    };
    Interval { low, high }
}

/// Rate ratio of a group (`k1` events over exposure `e1`) against the rest (`k0` over `e0`).
/// None when either exposure is not positive.
pub fn rate_ratio(k1: u64, e1: f64, k0: u64, e0: f64) -> Option<RateRatio> {
    if !(e1.is_finite() && e1 > 0.0 && e0.is_finite() && e0 > 0.0) {
        return None;
    }
    let n = k1 + k0;
    let ratio = if k0 == 0 {
        if k1 == 0 {
            f64::NAN
        } else {
            f64::INFINITY
        }
    } else {
        (k1 as f64 / e1) / (k0 as f64 / e0)
    };
    let to_rr = |p: f64| {
        if p >= 1.0 {
            f64::INFINITY
        } else {
            p / (1.0 - p) * e0 / e1
        }
    };
    let (ci95, p_two, p_above) = if n == 0 {
        (
            Interval {
                low: 0.0,
                high: f64::INFINITY,
            },
            1.0,
            1.0,
        )
    } else {
        let cp = clopper_pearson(k1, n, 0.95);
        let p0 = e1 / (e1 + e0);
        let up = binomial_upper_tail(k1, n, p0);
        let down = binomial_lower_tail(k1, n, p0);
        (
            Interval {
                low: to_rr(cp.low),
                high: to_rr(cp.high),
            },
            (2.0 * up.min(down)).min(1.0),
            up,
        )
    };
    Some(RateRatio {
        ratio,
        ci95,
        p_two_sided: p_two,
        p_above,
        rest_count: k0,
        rest_exposure: e0,
    })
}

/// Holm's step-down adjusted p-values (same order as the input). Each adjusted value is
/// compared with the family level directly.
pub fn holm_adjust(p: &[f64]) -> Vec<f64> {
    let m = p.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| p[a].total_cmp(&p[b]));
    let mut adjusted = vec![1.0; m];
    let mut running = 0.0_f64;
    for (rank, &i) in order.iter().enumerate() {
        let v = ((m - rank) as f64 * p[i]).min(1.0);
        running = running.max(v);
        adjusted[i] = running;
    }
    adjusted
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn holm_small_case() {
        // p = 0.01, 0.04, 0.03 with m = 3: sorted 0.01·3 = 0.03, 0.03·2 = 0.06, 0.04·1 → 0.06.
        let a = holm_adjust(&[0.01, 0.04, 0.03]);
        assert!((a[0] - 0.03).abs() < 1e-15);
        assert!((a[2] - 0.06).abs() < 1e-15);
        assert!((a[1] - 0.06).abs() < 1e-15);
    }

    #[test]
    fn ratio_of_equal_rates_is_one() {
        let r = rate_ratio(10, 100.0, 20, 200.0).unwrap();
        assert!((r.ratio - 1.0).abs() < 1e-15);
        assert!(r.ci95.low < 1.0 && r.ci95.high > 1.0);
        assert!(r.p_two_sided > 0.5);
    }
}
