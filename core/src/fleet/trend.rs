//! Incidents per month, a test for a trend, and seasonality by month of year.
//!
//! Trend test: a Poisson regression of the monthly counts on time, log(μᵢ) = β₀ + β₁ tᵢ +
//! log(exposureᵢ), fitted by iteratively reweighted least squares. The exposure is the
//! pane-years in service that month when exposure rows cover every month, else the days of the
//! month inside the window (so partly covered first and last months are not read as a dip).
//! exp(β₁) is the factor by which the rate changes per year, with a Wald interval; the p-value
//! comes from the likelihood-ratio statistic against β₁ = 0, divided by the Pearson dispersion
//! when that exceeds 1 (quasi-Poisson: breakages cluster in cold spells, so months are often
//! more variable than Poisson).
//!
//! Why a regression slope and not a CUSUM: a month-end review looks back over a fixed window
//! and wants a size (per cent per year, with an interval) and one p-value; a CUSUM is a
//! running alarm that needs a target rate and a shift size chosen beforehand, and its alarm
//! says "something changed" without saying by how much.
//!
//! Seasonality: the counts per calendar month against the counts expected from the exposure
//! (or days) each calendar month has inside the window; Pearson's chi-square test of
//! "no seasonal pattern".

use chrono::{Datelike, NaiveDate};

use super::group::{
    dates_by_row, months_in, pane_years, row_exposures, Counts, Exposure, GroupTable,
    IncidentFacts, Window,
};
use super::rates::holm_adjust;
use super::special::{chi2_sf, normal_quantile};
use super::weibull::Interval;

/// What a month's exposure was measured in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExposureBasis {
    PaneYears,
    Days,
}

impl ExposureBasis {
    pub fn name(self) -> &'static str {
        match self {
            ExposureBasis::PaneYears => "pane-years",
            ExposureBasis::Days => "days",
        }
    }
}

/// One calendar month inside the window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MonthCount {
    pub year: i32,
    pub month: u32,
    pub count: u64,
    /// Days of the month inside the window.
    pub days: i64,
    /// Pane-years in service that month (0 without exposure rows).
    pub pane_years: f64,
}

impl MonthCount {
    pub fn label(&self) -> String {
        format!("{:04}-{:02}", self.year, self.month)
    }
}

/// Incidents per month over the window (every month, zeros included).
pub fn monthly_counts(
    dates: &[NaiveDate],
    exposures: &[Exposure],
    window: &Window,
) -> Vec<MonthCount> {
    let months = months_in(window);
    let mut out: Vec<MonthCount> = months
        .iter()
        .map(|&(y, m, a, b)| MonthCount {
            year: y,
            month: m,
            count: 0,
            days: (b - a).num_days() + 1,
            pane_years: exposures.iter().map(|e| pane_years(e, a, b)).sum(),
        })
        .collect();
    if let Some(first) = months.first() {
        let (y0, m0) = (first.0, first.1);
        for d in dates {
            if !window.contains(*d) {
                continue;
            }
            let idx = (d.year() - y0) * 12 + d.month() as i32 - m0 as i32;
            if let Some(mc) = usize::try_from(idx).ok().and_then(|i| out.get_mut(i)) {
                mc.count += 1;
            }
        }
    }
    out
}

/// Why a trend could not be estimated.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TrendError {
    #[error("a trend needs at least 3 months in the window, not {0}")]
    TooFewMonths(usize),
    #[error("no incidents in the window")]
    NoEvents,
}

/// The fitted trend.
#[derive(Debug, Clone, PartialEq)]
pub struct Trend {
    pub months: Vec<MonthCount>,
    pub basis: ExposureBasis,
    /// β₁: change of the log rate per year.
    pub slope_per_year: f64,
    /// exp(β₁): the rate is multiplied by this each year.
    pub ratio_per_year: f64,
    pub ratio_ci95: Interval,
    /// Likelihood-ratio statistic against no trend (before the dispersion correction).
    pub lr_statistic: f64,
    /// Pearson χ² / (months − 2).
    pub dispersion: f64,
    pub p_value: f64,
    /// p < 0.05 and rising / falling.
    pub rising: bool,
    pub falling: bool,
    pub iterations: u32,
}

fn poisson_deviance(y: &[f64], mu: &[f64]) -> f64 {
    y.iter()
        .zip(mu)
        .map(|(&y, &m)| {
            let t = if y > 0.0 { y * (y / m).ln() } else { 0.0 };
            2.0 * (t - (y - m))
        })
        .sum()
}

/// Fit the trend over the window's months.
pub fn trend(
    dates: &[NaiveDate],
    exposures: &[Exposure],
    window: &Window,
) -> Result<Trend, TrendError> {
    let months = monthly_counts(dates, exposures, window);
    let k = months.len();
    if k < 3 {
        return Err(TrendError::TooFewMonths(k));
    }
    let total: u64 = months.iter().map(|m| m.count).sum();
    if total == 0 {
        return Err(TrendError::NoEvents);
    }
    let basis = if months.iter().all(|m| m.pane_years > 0.0) {
        ExposureBasis::PaneYears
    } else {
        ExposureBasis::Days
    };
    let e: Vec<f64> = months
        .iter()
        .map(|m| match basis {
            ExposureBasis::PaneYears => m.pane_years,
            ExposureBasis::Days => m.days as f64,
        })
        .collect();
    let y: Vec<f64> = months.iter().map(|m| m.count as f64).collect();
    let centre = (k as f64 - 1.0) / 2.0;
    let t: Vec<f64> = (0..k).map(|i| (i as f64 - centre) / 12.0).collect();
    let off: Vec<f64> = e.iter().map(|v| v.ln()).collect();

    let sum_y: f64 = y.iter().sum();
    let sum_e: f64 = e.iter().sum();
    let b0_null = (sum_y / sum_e).ln();
    let mu_null: Vec<f64> = off.iter().map(|o| (b0_null + o).exp()).collect();
    let dev_null = poisson_deviance(&y, &mu_null);

    let (mut b0, mut b1) = (b0_null, 0.0_f64);
    let mut dev = dev_null;
    let mut iterations = 0;
    let mut info = [0.0_f64; 3];
    for _ in 0..100 {
        iterations += 1;
        // weighted least squares on z = η − offset + (y − μ)/μ, weights μ
        let (mut s00, mut s01, mut s11, mut r0, mut r1) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for i in 0..k {
            let eta = b0 + b1 * t[i];
            let mu = (eta + off[i]).exp();
            let z = eta + (y[i] - mu) / mu;
            s00 += mu;
            s01 += mu * t[i];
            s11 += mu * t[i] * t[i];
            r0 += mu * z;
            r1 += mu * t[i] * z;
        }
        let det = s00 * s11 - s01 * s01;
        if !(det.is_finite() && det > 0.0) {
            break;
        }
        let nb0 = (s11 * r0 - s01 * r1) / det;
        let nb1 = (s00 * r1 - s01 * r0) / det;
        let mu: Vec<f64> = (0..k).map(|i| (nb0 + nb1 * t[i] + off[i]).exp()).collect();
        let ndev = poisson_deviance(&y, &mu);
        let done = (ndev - dev).abs() <= 1e-12 * (1.0 + ndev.abs());
        b0 = nb0;
        b1 = nb1;
        dev = ndev;
        if done {
            break;
        }
    }
    // information matrix at the estimate
    let mut pearson = 0.0;
    for i in 0..k {
        let mu = (b0 + b1 * t[i] + off[i]).exp();
        info[0] += mu;
        info[1] += mu * t[i];
        info[2] += mu * t[i] * t[i];
        pearson += (y[i] - mu).powi(2) / mu;
    }
    let dispersion = if k > 2 {
        pearson / (k as f64 - 2.0)
    } else {
        1.0
    };
    let phi = dispersion.max(1.0);
    let det = info[0] * info[2] - info[1] * info[1];
    let var_b1 = if det > 0.0 {
        phi * info[0] / det
    } else {
        f64::INFINITY
    };
    let se = var_b1.sqrt();
    let z = normal_quantile(0.975);
    let lr = (dev_null - dev).max(0.0);
    let p_value = chi2_sf(1.0, lr / phi);
    Ok(Trend {
        months,
        basis,
        slope_per_year: b1,
        ratio_per_year: b1.exp(),
        ratio_ci95: Interval {
            low: (b1 - z * se).exp(),
            high: (b1 + z * se).exp(),
        },
        lr_statistic: lr,
        dispersion,
        p_value,
        rising: p_value < 0.05 && b1 > 0.0,
        falling: p_value < 0.05 && b1 < 0.0,
        iterations,
    })
}

/// Counts by month of year against the counts expected from exposure.
#[derive(Debug, Clone, PartialEq)]
pub struct Seasonality {
    /// January first.
    pub observed: [u64; 12],
    pub expected: [f64; 12],
    pub basis: ExposureBasis,
    pub chi2: f64,
    pub df: usize,
    pub p_value: f64,
    /// Months (1..=12) whose count is highest.
    pub peak_months: Vec<u32>,
}

/// Seasonality of the incidents over the window.
pub fn seasonality(dates: &[NaiveDate], exposures: &[Exposure], window: &Window) -> Seasonality {
    let months = monthly_counts(dates, exposures, window);
    seasonality_of_months(&months)
}

/// Seasonality of monthly counts already made (a group's own months, from its trend).
pub fn seasonality_of_months(months: &[MonthCount]) -> Seasonality {
    let basis = if !months.is_empty() && months.iter().all(|m| m.pane_years > 0.0) {
        ExposureBasis::PaneYears
    } else {
        ExposureBasis::Days
    };
    let mut observed = [0u64; 12];
    let mut weight = [0.0f64; 12];
    for m in months {
        let i = (m.month - 1) as usize;
        observed[i] += m.count;
        weight[i] += match basis {
            ExposureBasis::PaneYears => m.pane_years,
            ExposureBasis::Days => m.days as f64,
        };
    }
    let total: u64 = observed.iter().sum();
    let wsum: f64 = weight.iter().sum();
    let mut expected = [0.0f64; 12];
    let mut chi2 = 0.0;
    let mut cells = 0usize;
    for i in 0..12 {
        if wsum > 0.0 && weight[i] > 0.0 {
            expected[i] = total as f64 * weight[i] / wsum;
            cells += 1;
            if expected[i] > 0.0 {
                chi2 += (observed[i] as f64 - expected[i]).powi(2) / expected[i];
            }
        }
    }
    let df = cells.saturating_sub(1);
    let p_value = if df > 0 && total > 0 {
        chi2_sf(df as f64, chi2)
    } else {
        1.0
    };
    let max = observed.iter().copied().max().unwrap_or(0);
    let peak_months = if max > 0 {
        (1..=12u32)
            .filter(|&m| observed[(m - 1) as usize] == max)
            .collect()
    } else {
        Vec::new()
    };
    Seasonality {
        observed,
        expected,
        basis,
        chi2,
        df,
        p_value,
        peak_months,
    }
}

/// The trend of one group of a [`GroupTable`] (see [`group_trends`]).
#[derive(Debug, Clone, PartialEq)]
pub struct GroupTrend {
    pub trend: Result<Trend, TrendError>,
    /// Holm-adjusted p-value over the groups whose trend was estimated.
    pub p_adjusted: Option<f64>,
    /// Significant (Holm, at the table's `flag_level`) and rising / falling.
    pub rising: bool,
    pub falling: bool,
}

/// Each group's own incidents per month and trend (the same Poisson regression as
/// [`trend`]), against the group's own exposure: the exposure rows that match
/// its supplier/product/lot/site values; a group keyed only by cause, origin type, asset type
/// or temper is set against all the exposure, as its rate is. One entry per row of `table`,
/// in its order; `None` for every row when a key is month or season (a group that is one
/// month or one season has no trend over the window).
///
/// Flags: a group's trend is called rising or falling when its Holm-adjusted p-value (over
/// all the groups whose trend could be estimated) is below the table's `flag_level`: with
/// forty groups, one unadjusted p < 0.05 in forty is expected by chance alone.
pub fn group_trends(
    incidents: &[IncidentFacts],
    exposures: &[Exposure],
    table: &GroupTable,
) -> Vec<Option<GroupTrend>> {
    group_trends_with(incidents, Counts::One, exposures, table)
}

/// [`group_trends`] of facts counted where they are kept: `incidents[i]` stands for
/// `counts[i]` incidents (see [`super::group::group_counted`]).
pub fn group_trends_counted(
    incidents: &[IncidentFacts],
    counts: &[u64],
    exposures: &[Exposure],
    table: &GroupTable,
) -> Vec<Option<GroupTrend>> {
    group_trends_with(incidents, Counts::Each(counts), exposures, table)
}

fn group_trends_with(
    incidents: &[IncidentFacts],
    counts: Counts<'_>,
    exposures: &[Exposure],
    table: &GroupTable,
) -> Vec<Option<GroupTrend>> {
    let keys = &table.keys;
    if keys.iter().any(|k| k.is_time()) {
        return vec![None; table.rows.len()];
    }
    let window = table.window;
    let dates = dates_by_row(incidents, counts, table);
    let mut out: Vec<Option<GroupTrend>> = table
        .rows
        .iter()
        .zip(&dates)
        .map(|(row, d)| {
            let own = row_exposures(exposures, keys, row);
            Some(GroupTrend {
                trend: trend(d, &own, &window),
                p_adjusted: None,
                rising: false,
                falling: false,
            })
        })
        .collect();
    let fitted: Vec<usize> = (0..out.len())
        .filter(|&i| matches!(&out[i], Some(g) if g.trend.is_ok()))
        .collect();
    let ps: Vec<f64> = fitted
        .iter()
        .filter_map(|&i| match &out[i] {
            Some(GroupTrend { trend: Ok(t), .. }) => Some(t.p_value),
            _ => None,
        })
        .collect();
    let adjusted = holm_adjust(&ps);
    for (j, &i) in fitted.iter().enumerate() {
        if let Some(g) = out[i].as_mut() {
            if let Ok(t) = &g.trend {
                let significant = adjusted[j] < table.flag_level;
                g.rising = significant && t.slope_per_year > 0.0;
                g.falling = significant && t.slope_per_year < 0.0;
            }
            g.p_adjusted = Some(adjusted[j]);
        }
    }
    out
}
