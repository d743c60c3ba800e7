//! Confidence bounds and the unbiasing factor of a complete-sample Weibull fit by pivotal
//! quantities (ASTM C1239 §9–10, after Thoman, Bain & Antle, Technometrics 11 (1969) 445).
//!
//! For a complete sample from any Weibull distribution the maximum-likelihood estimates
//! satisfy: m̂/m and m̂·ln(σ̂_θ/σ_θ) have distributions that depend on the sample size N
//! only. Their quantiles give exact bounds:
//!
//! ```text
//!   m      in [ m̂ / q(1 − α/2),  m̂ / q(α/2) ]
//!   σ_θ    in [ σ̂_θ · exp(−t(1 − α/2) / m̂),  σ̂_θ · exp(−t(α/2) / m̂) ]
//! ```
//!
//! with q(p), t(p) the p-quantiles of m̂/m and m̂·ln(σ̂_θ/σ_θ), and the unbiasing factor
//! 1 / E[m̂/m]. The quantiles are computed in this project by Monte Carlo: for each N,
//! `REPLICATES` samples of the unit Weibull (m = 1, σ_θ = 1, drawn as −ln U from the
//! splitmix64 generator started at `SEED`), each fitted by [`super::weibull::fit_values`]'s
//! likelihood solver. The table below ([`TABLE`]) was printed by `cargo bench -p
//! shardlog-core --bench weibull_table` (core/benches/weibull_table.rs), which runs
//! [`tabulate`]; the integration test
//! `fleet::pivotal_table_regenerates` reruns a few rows with fewer samples and compares.
//! With 200 000 replicates the standard error of a 5 % quantile of m̂/m is below 0.2 % of
//! its value, so three decimals are stable to about one unit in the last place.

use super::weibull::{modulus_and_scale, Specimen};

/// The fixed seed of the table.
pub const SEED: u64 = 0x5EED_C123_9000_0001;
/// Samples per sample size in the table.
pub const REPLICATES: usize = 200_000;
/// The probabilities of the tabulated quantiles: 0.025, 0.05, 0.95, 0.975.
pub const PROBABILITIES: [f64; 4] = [0.025, 0.05, 0.95, 0.975];

/// One row: sample size, unbiasing factor, quantiles of m̂/m and of m̂·ln(σ̂_θ/σ_θ) at
/// [`PROBABILITIES`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PivotalRow {
    pub n: usize,
    pub unbiasing: f64,
    pub q: [f64; 4],
    pub t: [f64; 4],
}

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

/// The row for `n`: tabulated, or interpolated linearly in 1/N between tabulated sizes.
/// `None` below 3 and above the largest tabulated size.
pub fn row(n: usize) -> Option<PivotalRow> {
    let first = TABLE.first()?;
    let last = TABLE.last()?;
    if n < first.n || n > last.n {
        return None;
    }
    for w in TABLE.windows(2) {
        let (a, b) = (w[0], w[1]);
        if n == a.n {
            return Some(a);
        }
        if n == b.n {
            return Some(b);
        }
        if n > a.n && n < b.n {
            let (ua, ub, u) = (1.0 / a.n as f64, 1.0 / b.n as f64, 1.0 / n as f64);
            let f = (u - ua) / (ub - ua);
            let mix = |x: f64, y: f64| x + f * (y - x);
            let mut q = a.q;
            let mut t = a.t;
            for i in 0..4 {
                q[i] = mix(a.q[i], b.q[i]);
                t[i] = mix(a.t[i], b.t[i]);
            }
            return Some(PivotalRow {
                n,
                unbiasing: mix(a.unbiasing, b.unbiasing),
                q,
                t,
            });
        }
    }
    None
}

/// The tabulated sample sizes.
pub const SIZES: [usize; 40] = [
    3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20, 21, 22, 23, 24, 25, 26, 27,
    28, 29, 30, 35, 40, 45, 50, 60, 70, 80, 90, 100, 120, 150, 200,
];

/// Monte Carlo quantiles (see the module notes): n, unbiasing factor, q(0.025, 0.05, 0.95,
/// 0.975), t(0.025, 0.05, 0.95, 0.975).
// Monte Carlo figures: some happen to look like 2/π or ln 10, and are not those constants
#[allow(clippy::approx_constant)]
pub const TABLE: &[PivotalRow] = &[
    // TABLE-START
    PivotalRow {
        n: 3,
        unbiasing: 0.4381,
        q: [0.5707, 0.6514, 5.8527, 8.4131],
        t: [-4.1632, -2.7284, 1.9716, 2.8505],
    },
    PivotalRow {
        n: 4,
        unbiasing: 0.6043,
        q: [0.5966, 0.6673, 3.6084, 4.6142],
        t: [-2.2757, -1.6520, 1.3649, 1.8284],
    },
    PivotalRow {
        n: 5,
        unbiasing: 0.6933,
        q: [0.6180, 0.6820, 2.8417, 3.4652],
        t: [-1.6535, -1.2444, 1.0893, 1.4198],
    },
    PivotalRow {
        n: 6,
        unbiasing: 0.7479,
        q: [0.6366, 0.6976, 2.4388, 2.8787],
        t: [-1.3245, -1.0262, 0.9368, 1.2052],
    },
    PivotalRow {
        n: 7,
        unbiasing: 0.7889,
        q: [0.6533, 0.7098, 2.1911, 2.5399],
        t: [-1.1158, -0.8826, 0.8253, 1.0452],
    },
    PivotalRow {
        n: 8,
        unbiasing: 0.8167,
        q: [0.6647, 0.7201, 2.0183, 2.3025],
        t: [-0.9910, -0.7921, 0.7521, 0.9435],
    },
    PivotalRow {
        n: 9,
        unbiasing: 0.8394,
        q: [0.6763, 0.7285, 1.9050, 2.1523],
        t: [-0.8914, -0.7192, 0.6887, 0.8606],
    },
    PivotalRow {
        n: 10,
        unbiasing: 0.8552,
        q: [0.6894, 0.7388, 1.8157, 2.0218],
        t: [-0.8175, -0.6625, 0.6426, 0.7965],
    },
    PivotalRow {
        n: 11,
        unbiasing: 0.8692,
        q: [0.6993, 0.7468, 1.7471, 1.9344],
        t: [-0.7621, -0.6199, 0.5995, 0.7451],
    },
    PivotalRow {
        n: 12,
        unbiasing: 0.8798,
        q: [0.7076, 0.7539, 1.6926, 1.8651],
        t: [-0.7157, -0.5869, 0.5730, 0.7059],
    },
    PivotalRow {
        n: 13,
        unbiasing: 0.8899,
        q: [0.7144, 0.7594, 1.6393, 1.7951],
        t: [-0.6769, -0.5561, 0.5425, 0.6712],
    },
    PivotalRow {
        n: 14,
        unbiasing: 0.8975,
        q: [0.7212, 0.7661, 1.6043, 1.7509],
        t: [-0.6414, -0.5236, 0.5170, 0.6375],
    },
    PivotalRow {
        n: 15,
        unbiasing: 0.9054,
        q: [0.7281, 0.7704, 1.5706, 1.7060],
        t: [-0.6097, -0.5040, 0.4949, 0.6105],
    },
    PivotalRow {
        n: 16,
        unbiasing: 0.9113,
        q: [0.7327, 0.7746, 1.5420, 1.6635],
        t: [-0.5882, -0.4859, 0.4793, 0.5853],
    },
    PivotalRow {
        n: 17,
        unbiasing: 0.9174,
        q: [0.7396, 0.7806, 1.5106, 1.6307],
        t: [-0.5625, -0.4649, 0.4599, 0.5626],
    },
    PivotalRow {
        n: 18,
        unbiasing: 0.9213,
        q: [0.7439, 0.7844, 1.4892, 1.6024],
        t: [-0.5447, -0.4522, 0.4481, 0.5472],
    },
    PivotalRow {
        n: 19,
        unbiasing: 0.9258,
        q: [0.7502, 0.7896, 1.4709, 1.5772],
        t: [-0.5249, -0.4342, 0.4333, 0.5293],
    },
    PivotalRow {
        n: 20,
        unbiasing: 0.9299,
        q: [0.7527, 0.7923, 1.4504, 1.5542],
        t: [-0.5092, -0.4231, 0.4164, 0.5124],
    },
    PivotalRow {
        n: 21,
        unbiasing: 0.9331,
        q: [0.7584, 0.7959, 1.4337, 1.5305],
        t: [-0.4957, -0.4103, 0.4054, 0.4960],
    },
    PivotalRow {
        n: 22,
        unbiasing: 0.9360,
        q: [0.7631, 0.7995, 1.4184, 1.5128],
        t: [-0.4794, -0.3989, 0.3960, 0.4816],
    },
    PivotalRow {
        n: 23,
        unbiasing: 0.9395,
        q: [0.7658, 0.8023, 1.4052, 1.4951],
        t: [-0.4690, -0.3901, 0.3872, 0.4721],
    },
    PivotalRow {
        n: 24,
        unbiasing: 0.9410,
        q: [0.7714, 0.8062, 1.3929, 1.4802],
        t: [-0.4553, -0.3793, 0.3783, 0.4627],
    },
    PivotalRow {
        n: 25,
        unbiasing: 0.9441,
        q: [0.7737, 0.8089, 1.3811, 1.4654],
        t: [-0.4455, -0.3711, 0.3681, 0.4469],
    },
    PivotalRow {
        n: 26,
        unbiasing: 0.9458,
        q: [0.7763, 0.8116, 1.3729, 1.4523],
        t: [-0.4334, -0.3612, 0.3615, 0.4372],
    },
    PivotalRow {
        n: 27,
        unbiasing: 0.9481,
        q: [0.7802, 0.8142, 1.3600, 1.4368],
        t: [-0.4242, -0.3548, 0.3524, 0.4291],
    },
    PivotalRow {
        n: 28,
        unbiasing: 0.9496,
        q: [0.7820, 0.8158, 1.3529, 1.4301],
        t: [-0.4176, -0.3487, 0.3465, 0.4221],
    },
    PivotalRow {
        n: 29,
        unbiasing: 0.9514,
        q: [0.7857, 0.8190, 1.3448, 1.4196],
        t: [-0.4086, -0.3419, 0.3391, 0.4119],
    },
    PivotalRow {
        n: 30,
        unbiasing: 0.9533,
        q: [0.7879, 0.8212, 1.3348, 1.4063],
        t: [-0.4006, -0.3350, 0.3315, 0.4017],
    },
    PivotalRow {
        n: 35,
        unbiasing: 0.9595,
        q: [0.8016, 0.8326, 1.3009, 1.3665],
        t: [-0.3666, -0.3077, 0.3061, 0.3710],
    },
    PivotalRow {
        n: 40,
        unbiasing: 0.9649,
        q: [0.8102, 0.8401, 1.2753, 1.3343],
        t: [-0.3399, -0.2845, 0.2857, 0.3448],
    },
    PivotalRow {
        n: 45,
        unbiasing: 0.9684,
        q: [0.8194, 0.8478, 1.2556, 1.3093],
        t: [-0.3187, -0.2664, 0.2687, 0.3242],
    },
    PivotalRow {
        n: 50,
        unbiasing: 0.9723,
        q: [0.8261, 0.8540, 1.2371, 1.2863],
        t: [-0.3003, -0.2525, 0.2526, 0.3044],
    },
    PivotalRow {
        n: 60,
        unbiasing: 0.9767,
        q: [0.8387, 0.8641, 1.2115, 1.2551],
        t: [-0.2732, -0.2289, 0.2297, 0.2759],
    },
    PivotalRow {
        n: 70,
        unbiasing: 0.9800,
        q: [0.8501, 0.8732, 1.1910, 1.2310],
        t: [-0.2524, -0.2118, 0.2130, 0.2557],
    },
    PivotalRow {
        n: 80,
        unbiasing: 0.9831,
        q: [0.8565, 0.8798, 1.1755, 1.2110],
        t: [-0.2349, -0.1967, 0.1971, 0.2372],
    },
    PivotalRow {
        n: 90,
        unbiasing: 0.9844,
        q: [0.8642, 0.8853, 1.1640, 1.1974],
        t: [-0.2216, -0.1858, 0.1869, 0.2240],
    },
    PivotalRow {
        n: 100,
        unbiasing: 0.9862,
        q: [0.8694, 0.8901, 1.1532, 1.1835],
        t: [-0.2092, -0.1753, 0.1764, 0.2115],
    },
    PivotalRow {
        n: 120,
        unbiasing: 0.9884,
        q: [0.8794, 0.8982, 1.1387, 1.1664],
        t: [-0.1898, -0.1594, 0.1604, 0.1923],
    },
    PivotalRow {
        n: 150,
        unbiasing: 0.9907,
        q: [0.8909, 0.9081, 1.1217, 1.1457],
        t: [-0.1690, -0.1423, 0.1422, 0.1709],
    },
    PivotalRow {
        n: 200,
        unbiasing: 0.9932,
        q: [0.9038, 0.9189, 1.1027, 1.1232],
        t: [-0.1464, -0.1229, 0.1232, 0.1477],
    },
    // TABLE-END
];
