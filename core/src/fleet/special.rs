//! Special functions the fleet statistics need, written out so the crate stays lean:
//! log-gamma, the regularized incomplete gamma and beta functions, their quantiles, and the
//! normal distribution. Pure, no allocation.
//!
//! Methods: Lanczos approximation for ln Γ (g = 7, 9 terms; about 15 digits); the incomplete
//! gamma by its power series below `a + 1` and Legendre's continued fraction above, the
//! incomplete beta by its continued fraction (modified Lentz), both as in Press et al.,
//! *Numerical Recipes*, 3rd ed., §6.2 and §6.4; quantiles by Newton steps kept inside a bracket
//! (bisection when a step would leave it). Checked in tests/fleet.rs against scipy 1.17.1.

use std::f64::consts::PI;

const EPS: f64 = 1e-15;
const TINY: f64 = 1e-300;

/// ln Γ(x) for x > 0 (Lanczos, g = 7). Returns +∞ for x ≤ 0.
pub fn ln_gamma(x: f64) -> f64 {
    if x <= 0.0 || !x.is_finite() {
        return f64::INFINITY;
    }
    if x < 0.5 {
        // reflection: Γ(x) Γ(1 − x) = π / sin(π x)
        return (PI / (PI * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    0.5 * (2.0 * PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Regularized lower incomplete gamma P(a, x) = γ(a, x) / Γ(a), a > 0, x ≥ 0.
pub fn gamma_p(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x.is_infinite() {
        return 1.0;
    }
    if x < a + 1.0 {
        gamma_series(a, x)
    } else {
        1.0 - gamma_cf(a, x)
    }
}

/// Regularized upper incomplete gamma Q(a, x) = 1 − P(a, x), computed without cancellation.
pub fn gamma_q(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    if x.is_infinite() {
        return 0.0;
    }
    if x < a + 1.0 {
        1.0 - gamma_series(a, x)
    } else {
        gamma_cf(a, x)
    }
}

fn gamma_prefactor(a: f64, x: f64) -> f64 {
    (a * x.ln() - x - ln_gamma(a)).exp()
}

fn gamma_series(a: f64, x: f64) -> f64 {
    let mut ap = a;
    let mut del = 1.0 / a;
    let mut sum = del;
    for _ in 0..10_000_000 {
        ap += 1.0;
        del *= x / ap;
        sum += del;
        if del.abs() < sum.abs() * EPS {
            break;
        }
    }
    (sum * gamma_prefactor(a, x)).min(1.0)
}

fn gamma_cf(a: f64, x: f64) -> f64 {
    let mut b = x + 1.0 - a;
    let mut c = 1.0 / TINY;
    let mut d = 1.0 / b;
    let mut h = d;
    let mut i = 1.0;
    for _ in 0..10_000_000 {
        let an = -i * (i - a);
        b += 2.0;
        d = an * d + b;
        if d.abs() < TINY {
            d = TINY;
        }
        c = b + an / c;
        if c.abs() < TINY {
            c = TINY;
        }
        d = 1.0 / d;
        let del = d * c;
        h *= del;
        if (del - 1.0).abs() < EPS {
            break;
        }
        i += 1.0;
    }
    (gamma_prefactor(a, x) * h).clamp(0.0, 1.0)
}

/// Density of the gamma distribution with shape `a` and unit scale.
fn gamma_density(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    ((a - 1.0) * x.ln() - x - ln_gamma(a)).exp()
}

/// Quantile of the gamma distribution (shape `a`, unit scale): x with P(a, x) = p.
pub fn gamma_quantile(a: f64, p: f64) -> f64 {
    if p <= 0.0 {
        return 0.0;
    }
    if p >= 1.0 {
        return f64::INFINITY;
    }
    // Wilson–Hilferty start, then bracketed Newton.
    let z = normal_quantile(p);
    let nu = 2.0 * a;
    let wh = 1.0 - 2.0 / (9.0 * nu) + z * (2.0 / (9.0 * nu)).sqrt();
    let mut x = if wh > 0.0 {
        0.5 * nu * wh.powi(3)
    } else {
        // small shape: P(a, x) ≈ x^a / Γ(a + 1)
        (p * (ln_gamma(a + 1.0)).exp()).powf(1.0 / a)
    };
    if !(x.is_finite() && x > 0.0) {
        x = a.max(1e-3);
    }
    let (mut lo, mut hi) = (0.0_f64, f64::INFINITY);
    for _ in 0..200 {
        let f = gamma_p(a, x) - p;
        if f.abs() < 1e-16 {
            break;
        }
        if f < 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let dens = gamma_density(a, x);
        let mut next = if dens > 0.0 { x - f / dens } else { f64::NAN };
        if !(next.is_finite() && next > lo && next < hi) {
            next = if hi.is_finite() {
                0.5 * (lo + hi)
            } else {
                2.0 * x.max(1e-3)
            };
        }
        if (next - x).abs() <= 1e-15 * x.abs() {
            x = next;
            break;
        }
        x = next;
    }
    x
}

/// Quantile of the chi-square distribution with `df` degrees of freedom.
pub fn chi2_quantile(df: f64, p: f64) -> f64 {
    2.0 * gamma_quantile(0.5 * df, p)
}

/// Upper tail of the chi-square distribution: P(X > x).
pub fn chi2_sf(df: f64, x: f64) -> f64 {
    gamma_q(0.5 * df, 0.5 * x)
}

/// Regularized incomplete beta I_x(a, b), a, b > 0, 0 ≤ x ≤ 1.
pub fn beta_i(a: f64, b: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    if x >= 1.0 {
        return 1.0;
    }
    let ln_front = ln_gamma(a + b) - ln_gamma(a) - ln_gamma(b) + a * x.ln() + b * (1.0 - x).ln();
    let front = ln_front.exp();
    if x < (a + 1.0) / (a + b + 2.0) {
        (front * beta_cf(a, b, x) / a).clamp(0.0, 1.0)
    } else {
        (1.0 - front * beta_cf(b, a, 1.0 - x) / b).clamp(0.0, 1.0)
    }
}

fn beta_cf(a: f64, b: f64, x: f64) -> f64 {
    let qab = a + b;
    let qap = a + 1.0;
    let qam = a - 1.0;
    let mut c = 1.0;
    let mut d = 1.0 - qab * x / qap;
    if d.abs() < TINY {
        d = TINY;
    }
    d = 1.0 / d;
    let mut h = d;
    for m in 1..10_000_000 {
        let m = m as f64;
        let m2 = 2.0 * m;
        let aa = m * (b - m) * x / ((qam + m2) * (a + m2));
        d = 1.0 + aa * d;
        if d.abs() < TINY {
            d = TINY;
        }
        c = 1.0 + aa / c;
        if c.abs() < TINY {
            c = TINY;
        }
        d = 1.0 / d;
        h *= d * c;
        let aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
        d = 1.0 + aa * d;
        if d.abs() < TINY {
            d = TINY;
        }
        c = 1.0 + aa / c;
        if c.abs() < TINY {
            c = TINY;
        }
        d = 1.0 / d;
        let del = d * c;
        h *= del;
        if (del - 1.0).abs() < EPS {
            break;
        }
    }
    h
}

/// Quantile of the beta distribution: x with I_x(a, b) = p (bisection with Newton steps).
pub fn beta_quantile(a: f64, b: f64, p: f64) -> f64 {
    if p <= 0.0 {
        return 0.0;
    }
    if p >= 1.0 {
        return 1.0;
    }
    let ln_beta = ln_gamma(a) + ln_gamma(b) - ln_gamma(a + b);
    let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
    let mut x = a / (a + b);
    for _ in 0..300 {
        let f = beta_i(a, b, x) - p;
        if f == 0.0 {
            break;
        }
        if f < 0.0 {
            lo = x;
        } else {
            hi = x;
        }
        let dens = ((a - 1.0) * x.ln() + (b - 1.0) * (1.0 - x).ln() - ln_beta).exp();
        let mut next = if dens > 0.0 && dens.is_finite() {
            x - f / dens
        } else {
            f64::NAN
        };
        if !(next.is_finite() && next > lo && next < hi) {
            next = 0.5 * (lo + hi);
        }
        if (next - x).abs() <= 1e-16 + 1e-15 * x {
            x = next;
            break;
        }
        x = next;
    }
    x
}

/// Complementary error function, through Q(½, x²).
pub fn erfc(x: f64) -> f64 {
    if x >= 0.0 {
        gamma_q(0.5, x * x)
    } else {
        2.0 - gamma_q(0.5, x * x)
    }
}

/// Standard normal distribution function Φ(z).
pub fn normal_cdf(z: f64) -> f64 {
    0.5 * erfc(-z / std::f64::consts::SQRT_2)
}

/// Standard normal quantile Φ⁻¹(p): Acklam's rational approximation refined by one Halley
/// step against [`erfc`] (full double precision in practice).
pub fn normal_quantile(p: f64) -> f64 {
    if p <= 0.0 {
        return f64::NEG_INFINITY;
    }
    if p >= 1.0 {
        return f64::INFINITY;
    }
    const A: [f64; 6] = [
        -3.969_683_028_665_376e1,
        2.209_460_984_245_205e2,
        -2.759_285_104_469_687e2,
        1.383_577_518_672_69e2,
        -3.066_479_806_614_716e1,
        2.506_628_277_459_239,
    ];
    const B: [f64; 5] = [
        -5.447_609_879_822_406e1,
        1.615_858_368_580_409e2,
        -1.556_989_798_598_866e2,
        6.680_131_188_771_972e1,
        -1.328_068_155_288_572e1,
    ];
    const C: [f64; 6] = [
        -7.784_894_002_430_293e-3,
        -3.223_964_580_411_365e-1,
        -2.400_758_277_161_838,
        -2.549_732_539_343_734,
        4.374_664_141_464_968,
        2.938_163_982_698_783,
    ];
    const D: [f64; 4] = [
        7.784_695_709_041_462e-3,
        3.224_671_290_700_398e-1,
        2.445_134_137_142_996,
        3.754_408_661_907_416,
    ];
    let plow = 0.02425;
    let x = if p < plow {
        let q = (-2.0 * p.ln()).sqrt();
        (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    } else if p <= 1.0 - plow {
        let q = p - 0.5;
        let r = q * q;
        (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
            / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1.0)
    } else {
        let q = (-2.0 * (1.0 - p).ln()).sqrt();
        -(((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
            / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1.0)
    };
    // one Halley step
    let e = normal_cdf(x) - p;
    let u = e * (2.0 * PI).sqrt() * (x * x / 2.0).exp();
    x - u / (1.0 + x * u / 2.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gamma_function_at_integers() {
        // Γ(n) = (n − 1)!: exact.
        assert!((ln_gamma(1.0)).abs() < 1e-14);
        assert!((ln_gamma(5.0) - 24.0_f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - PI.sqrt().ln()).abs() < 1e-13);
    }

    #[test]
    fn chi_square_two_df_is_exponential() {
        // χ²(2) has P(X ≤ x) = 1 − e^(−x/2): exact.
        let q = chi2_quantile(2.0, 0.975);
        assert!((q - (-2.0 * 0.025_f64.ln())).abs() < 1e-12, "{q}");
    }

    #[test]
    fn normal_quantile_known() {
        // 1.959963984540054: the 97.5 % point, every statistics table.
        assert!((normal_quantile(0.975) - 1.959_963_984_540_054).abs() < 1e-12);
        assert!((normal_quantile(0.5)).abs() < 1e-15);
    }

    #[test]
    fn beta_symmetric() {
        assert!((beta_i(2.0, 2.0, 0.5) - 0.5).abs() < 1e-14);
        assert!((beta_quantile(3.0, 3.0, 0.5) - 0.5).abs() < 1e-12);
    }
}
