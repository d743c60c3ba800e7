//! The fleet statistics query: which keys, which window, which figures; and computing them.
//!
//! `shardlog stats`, the interface's review and the dispute cover all ask the same question of
//! the same facts; this is where it is answered. The caller reads the facts (the store) and
//! passes today's date in.

use chrono::NaiveDate;

use super::group::{group_counted, Counts};
use super::trend::{seasonality, trend, Seasonality, Trend};
use super::{group, Exposure, GroupOptions, GroupTable, IncidentFacts, Key, Window};

/// Which stress of an incident the strength statistics use.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StressKind {
    /// Net minus residual stress: the service load at fracture.
    #[default]
    Applied,
    /// The mirror's stress at the origin.
    Net,
}

impl StressKind {
    pub fn name(self) -> &'static str {
        match self {
            StressKind::Applied => "applied",
            StressKind::Net => "net",
        }
    }
}

/// A checked statistics query.
#[derive(Debug, Clone, PartialEq)]
pub struct StatsQuery {
    pub keys: Vec<Key>,
    pub since: Option<NaiveDate>,
    pub until: Option<NaiveDate>,
    pub rates: bool,
    pub trend: bool,
    pub weibull: bool,
    pub origin_type: Option<String>,
    pub only: Vec<(Key, String)>,
    pub stress: StressKind,
    pub json: bool,
}

impl StatsQuery {
    /// The window: the flags, else the earliest incident (or exposure) and `today`.
    pub fn window(
        &self,
        incidents: &[IncidentFacts],
        exposures: &[Exposure],
        today: NaiveDate,
    ) -> Result<Window, String> {
        let until = self.until.unwrap_or(today);
        let earliest = incidents
            .iter()
            .map(|f| f.found)
            .filter(|d| *d <= until)
            .min();
        self.window_from(earliest, exposures, today)
    }

    /// The window when the facts are counted where they are kept: `earliest` is the first
    /// date found of the incidents up to the end of the window (the default end: `today`).
    pub fn window_from(
        &self,
        earliest: Option<NaiveDate>,
        exposures: &[Exposure],
        today: NaiveDate,
    ) -> Result<Window, String> {
        let until = self.until.unwrap_or(today);
        let since = match self.since {
            Some(s) => s,
            None => earliest
                .into_iter()
                .chain(exposures.iter().map(|e| e.from))
                .filter(|d| *d <= until)
                .min()
                .unwrap_or(until),
        };
        Window::new(since, until).map_err(|e| e.to_string())
    }
}

/// Apply the `--only` filters: incidents must match every one; exposure rows must match the
/// supplier/product/lot/site ones.
pub fn apply_only(
    q: &StatsQuery,
    incidents: &mut Vec<IncidentFacts>,
    exposures: &mut Vec<Exposure>,
) {
    if q.only.is_empty() {
        return;
    }
    let want: Vec<(Key, super::GroupValue)> = q
        .only
        .iter()
        .map(|(k, v)| {
            let value = if v == super::group::NOT_RECORDED {
                None
            } else {
                Some(v.clone())
            };
            (*k, super::GroupValue::Text(value))
        })
        .collect();
    incidents.retain(|f| want.iter().all(|(k, v)| v.matches(*k, f)));
    exposures.retain(|e| {
        q.only.iter().all(|(k, v)| {
            let field = match k {
                Key::Supplier => e.supplier.as_deref(),
                Key::Product => e.product.as_deref(),
                Key::Lot => e.lot.as_deref(),
                Key::Site => e.site.as_deref(),
                _ => return true,
            };
            field == Some(v.as_str())
        })
    });
}

/// Everything `stats` computed.
pub struct StatsResult {
    pub table: GroupTable,
    pub trend: Option<Result<Trend, String>>,
    pub seasonality: Option<Seasonality>,
    /// Pooled fit over every group (only with --weibull).
    pub overall_weibull: Option<Result<super::WeibullFit, String>>,
    /// Each group's own trend, aligned with `table.rows` (with --trend, when no key is
    /// month or season).
    pub group_trends: Option<Vec<Option<super::GroupTrend>>>,
}

/// Compute the statistics (pure).
pub fn compute(
    q: &StatsQuery,
    incidents: &[IncidentFacts],
    exposures: &[Exposure],
    window: Window,
) -> Result<StatsResult, String> {
    compute_with(q, incidents, Counts::One, exposures, window)
}

/// Compute the statistics of facts counted where they are kept: `incidents[i]` stands for
/// `counts[i]` incidents (see [`super::group::group_counted`]); the same figures as
/// [`compute`] over the incidents one by one.
pub fn compute_counted(
    q: &StatsQuery,
    incidents: &[IncidentFacts],
    counts: &[u64],
    exposures: &[Exposure],
    window: Window,
) -> Result<StatsResult, String> {
    if counts.len() != incidents.len() {
        return Err(format!(
            "{} counted fact rows but {} counts",
            incidents.len(),
            counts.len()
        ));
    }
    compute_with(q, incidents, Counts::Each(counts), exposures, window)
}

fn compute_with(
    q: &StatsQuery,
    incidents: &[IncidentFacts],
    counts: Counts<'_>,
    exposures: &[Exposure],
    window: Window,
) -> Result<StatsResult, String> {
    let opts = GroupOptions {
        keys: q.keys.clone(),
        window,
        rates: q.rates,
        weibull: q.weibull,
        origin_type: q.origin_type.clone(),
        flag_level: 0.05,
    };
    let table = match counts {
        Counts::One => group(incidents, exposures, &opts),
        Counts::Each(c) => group_counted(incidents, c, exposures, &opts),
    }
    .map_err(|e| e.to_string())?;
    let (trend_r, season) = if q.trend {
        let mut dates: Vec<NaiveDate> = Vec::new();
        for (i, f) in incidents.iter().enumerate() {
            if window.contains(f.found) {
                dates.extend(std::iter::repeat_n(f.found, counts.of(i) as usize));
            }
        }
        (
            Some(trend(&dates, exposures, &window).map_err(|e| e.to_string())),
            Some(seasonality(&dates, exposures, &window)),
        )
    } else {
        (None, None)
    };
    let overall_weibull = if q.weibull {
        let s = super::specimens(incidents, &window, q.origin_type.as_deref());
        Some(super::fit(&s).map_err(|e| e.to_string()))
    } else {
        None
    };
    let group_trends = (q.trend && !q.keys.iter().any(|k| k.is_time())).then(|| match counts {
        Counts::One => super::group_trends(incidents, exposures, &table),
        Counts::Each(c) => super::trend::group_trends_counted(incidents, c, exposures, &table),
    });
    Ok(StatsResult {
        table,
        trend: trend_r,
        seasonality: season,
        overall_weibull,
        group_trends,
    })
}

pub const METHOD_RATE: &str =
    "exact Poisson (Garwood) 95 % interval; exposure = pane-years in service inside the window";
pub const METHOD_RATIO: &str = "rate ratio against the rest of the same stratum: exact conditional binomial test and Clopper-Pearson interval";
pub const METHOD_FLAG: &str =
    "rate above the rest by a one-sided exact test, Holm-adjusted over the groups compared, 5 % family-wise";
pub const METHOD_TREND: &str = "Poisson regression of monthly counts on time (IRLS), likelihood-ratio test, quasi-Poisson when over-dispersed";
pub const METHOD_GROUP_TREND: &str = "each group's own Poisson regression on its own exposure (as the trend); rising/falling when the Holm-adjusted p-value over the groups is below 5 %";
pub const METHOD_SEASON: &str =
    "counts per calendar month against exposure in that month, Pearson chi-square";
