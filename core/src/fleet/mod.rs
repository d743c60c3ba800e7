//! Fleet statistics: grouping, rates, tests of difference, trends, Weibull. Pure: numbers and
//! plain structs in, numbers out; no I/O, no clock (window ends are passed in).
//!
//! - [`weibull`]: two-parameter Weibull by maximum likelihood with right-censoring (ASTM C1239).
//! - [`rates`]: exact Poisson rates, rate ratios against the rest, Holm-adjusted flags.
//! - [`group`]: counts, shares, rates and fits grouped by one or two keys over a window.
//! - [`trend`]: incidents per month, Poisson-regression trend test (of the whole fleet and of
//!   each group of a table), seasonality.
//! - [`special`]: incomplete gamma and beta functions and their quantiles.

pub mod group;
pub mod heat_soak;
pub mod pivotal;
pub mod pivotal_sim;
pub mod query;
pub mod rates;
pub mod special;
pub mod trend;
pub mod weibull;

pub use group::{
    group, group_counted, histogram, round_histogram, specimens, Exposure, FleetError,
    GroupOptions, GroupRow, GroupTable, GroupValue, IncidentFacts, Key, Window,
};
pub use query::{StatsQuery, StressKind};
pub use rates::{poisson_interval, rate_per_1000, rate_ratio, Rate, RateRatio};
pub use trend::{
    group_trends, group_trends_counted, monthly_counts, seasonality, seasonality_of_months, trend,
    GroupTrend, MonthCount, Seasonality, Trend,
};
pub use weibull::{
    fit, fit_population, fit_values, BoundMethod, Interval, Specimen, WeibullError, WeibullFit,
};

/// The one word that marks a group significantly above the rest of the fleet (exact test,
/// Holm-adjusted), in the command line, the interface and the reports alike.
pub const FLAG_WORD: &str = "HIGH";

#[cfg(test)]
mod counted_tests;
