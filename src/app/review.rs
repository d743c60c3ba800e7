//! The fleet review: recurring causes, incidents per month with the trend test, the stress
//! histogram, the Weibull plot and the table of groups with rates and flags.
//!
//! Everything is computed when the screen opens or the grouping or window changes (from the
//! store through `RecordSource::stats_input`, or on the fleet database from its counts
//! through `stats_counted`; the figures by `shardlog_core::fleet`); the view only reads.

mod counted;

use chrono::{Months, NaiveDate};

use crate::store::model::Filter;
use crate::store::RecordSource;
use shardlog_core::fleet::query::{self, StatsQuery, StressKind};
use shardlog_core::fleet::{
    monthly_counts, round_histogram, GroupOptions, GroupTable, GroupValue, Key, MonthCount, Trend,
    WeibullFit, Window,
};

/// The panels, one at a time at 80×24 (Tab moves between them).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Panel {
    Causes,
    Months,
    Stress,
    Weibull,
    Groups,
    /// Nickel sulfide practice: heat-soaked lots against lots not soaked, time in service.
    HeatSoak,
}

impl Panel {
    pub const ALL: [Panel; 6] = [
        Panel::Causes,
        Panel::Months,
        Panel::Stress,
        Panel::Weibull,
        Panel::Groups,
        Panel::HeatSoak,
    ];

    pub fn title(self) -> &'static str {
        match self {
            Panel::Causes => "Causes",
            Panel::Months => "Per month",
            Panel::Stress => "Stress",
            Panel::Weibull => "Weibull",
            Panel::Groups => "Groups",
            Panel::HeatSoak => "Heat-soak",
        }
    }

    fn index(self) -> usize {
        Panel::ALL.iter().position(|p| *p == self).unwrap_or(0)
    }

    pub fn next(self) -> Panel {
        Panel::ALL[(self.index() + 1) % Panel::ALL.len()]
    }

    pub fn prev(self) -> Panel {
        Panel::ALL[(self.index() + Panel::ALL.len() - 1) % Panel::ALL.len()]
    }
}

/// The date window of the review.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WindowChoice {
    /// The last twelve months up to today.
    Last12,
    /// From the earliest incident (or exposure row) to today.
    All,
}

impl WindowChoice {
    pub fn label(self) -> &'static str {
        match self {
            WindowChoice::Last12 => "last 12 months",
            WindowChoice::All => "all records",
        }
    }
}

/// The keys the review groups by: those the log can also filter by (so Enter can open a
/// group), plus month and season. The bench only on the fleet database (a bench file is one
/// bench).
pub const GROUP_KEYS: [Key; 8] = [
    Key::Cause,
    Key::Bench,
    Key::Supplier,
    Key::Lot,
    Key::Site,
    Key::OriginType,
    Key::Month,
    Key::Season,
];

/// Bins of the stress histogram.
pub const HISTOGRAM_BINS: usize = 10;

/// What was computed for the current grouping and window.
#[derive(Debug, Clone)]
pub struct ReviewData {
    pub window: Window,
    /// The groups of the chosen grouping, with rates (largest first).
    pub table: GroupTable,
    /// Grouped by cause alone (the bar chart), largest first.
    pub causes: GroupTable,
    pub months: Vec<MonthCount>,
    pub trend: Result<Trend, String>,
    /// Counts per calendar month against the exposure of each month (chi-square test).
    pub seasonality: Option<shardlog_core::fleet::Seasonality>,
    /// Applied stresses in the window, Pa: (bin lower edges, counts, bin width).
    pub histogram: (Vec<f64>, Vec<u64>, f64),
    /// Incidents in the window with no stress (not in the histogram or the fit).
    pub without_stress: usize,
    pub weibull: Result<WeibullFit, String>,
    /// Exposure rows known to the store (0: rates cannot be given).
    pub exposure_rows: usize,
    /// Each group's own months and trend, aligned with `table.rows` (empty when a key is
    /// month or season).
    pub group_trends: Vec<Option<shardlog_core::fleet::GroupTrend>>,
    /// Heat-soaked lots against lots not soaked, and the nickel sulfide failures' time in
    /// service (over the window, whatever the grouping).
    pub soak: Result<shardlog_core::fleet::heat_soak::SoakComparison, String>,
    /// Computed from the counts the fleet database keeps (not from every incident's facts).
    pub from_counts: bool,
    /// The window holds more fracture stresses than the fleet reads one by one (this many):
    /// no histogram, no fit.
    pub stresses_over_cap: Option<u64>,
}

/// The review screen's state.
#[derive(Debug, Clone)]
pub struct ReviewState {
    pub keys: Vec<Key>,
    pub window: WindowChoice,
    pub panel: Panel,
    /// Selected row per panel (index of [`Panel::ALL`]).
    pub selected: [usize; 6],
    pub data: Option<ReviewData>,
    /// Why the figures could not be computed.
    pub error: Option<String>,
    /// The per-month panel shows the group highlighted on the Groups panel, not the fleet.
    pub group_months: bool,
    /// The records are the fleet database's, of several benches: the bench is a grouping key.
    pub by_bench: bool,
}

impl Default for ReviewState {
    fn default() -> Self {
        ReviewState::new()
    }
}

impl ReviewState {
    pub fn new() -> Self {
        ReviewState {
            keys: vec![Key::Cause],
            window: WindowChoice::Last12,
            panel: Panel::Causes,
            selected: [0; 6],
            data: None,
            error: None,
            group_months: false,
            by_bench: false,
        }
    }

    pub fn selected(&self) -> usize {
        self.selected[self.panel.index()]
    }

    /// The selected row of `panel` (kept while another panel is shown).
    pub fn selected_in(&self, panel: Panel) -> usize {
        self.selected[panel.index()]
    }

    /// Rows in the current panel.
    pub fn rows(&self) -> usize {
        let Some(d) = &self.data else { return 0 };
        match self.panel {
            Panel::Causes => d.causes.rows.len(),
            Panel::Months => d.months.len(),
            Panel::Groups => d.table.rows.len(),
            Panel::Stress | Panel::Weibull | Panel::HeatSoak => 0,
        }
    }

    /// Move the selection by `delta` rows (clamped).
    pub fn move_by(&mut self, delta: i64) {
        let n = self.rows();
        let i = self.panel.index();
        if n == 0 {
            self.selected[i] = 0;
            return;
        }
        let cur = self.selected[i] as i64;
        self.selected[i] = (cur + delta).clamp(0, n as i64 - 1) as usize;
    }

    pub fn home(&mut self) {
        self.selected[self.panel.index()] = 0;
    }

    pub fn end(&mut self) {
        let n = self.rows();
        self.selected[self.panel.index()] = n.saturating_sub(1);
    }

    /// The keys this review groups by, in the order the keys cycle through them.
    pub fn group_keys(&self) -> Vec<Key> {
        GROUP_KEYS
            .into_iter()
            .filter(|k| *k != Key::Bench || self.by_bench)
            .collect()
    }

    /// Next first grouping key (the second is dropped when it would repeat the first).
    pub fn next_first_key(&mut self) {
        let cur = self.keys.first().copied().unwrap_or(Key::Cause);
        let keys = self.group_keys();
        let i = keys.iter().position(|k| *k == cur).unwrap_or(0);
        let next = keys[(i + 1) % keys.len()];
        let second = self.keys.get(1).copied().filter(|k| *k != next);
        self.keys = std::iter::once(next).chain(second).collect();
    }

    /// Next second grouping key: none, then every key but the first, then none again.
    pub fn next_second_key(&mut self) {
        let first = self.keys.first().copied().unwrap_or(Key::Cause);
        let choices: Vec<Option<Key>> = std::iter::once(None)
            .chain(
                self.group_keys()
                    .into_iter()
                    .filter(|k| *k != first)
                    .map(Some),
            )
            .collect();
        let cur = self.keys.get(1).copied();
        let i = choices.iter().position(|k| *k == cur).unwrap_or(0);
        let next = choices[(i + 1) % choices.len()];
        self.keys = std::iter::once(first).chain(next).collect();
    }

    pub fn next_window(&mut self) {
        self.window = match self.window {
            WindowChoice::Last12 => WindowChoice::All,
            WindowChoice::All => WindowChoice::Last12,
        };
    }

    /// "cause" or "supplier × lot".
    pub fn grouping_label(&self) -> String {
        self.keys
            .iter()
            .map(|k| k.name())
            .collect::<Vec<_>>()
            .join(" × ")
    }

    /// Recompute everything from the store (`today` is the window's end).
    pub fn load(&mut self, store: &dyn RecordSource, today: NaiveDate) {
        match compute(store, &self.keys, self.window, today) {
            Ok(d) => {
                self.data = Some(d);
                self.error = None;
            }
            Err(e) => {
                self.data = None;
                self.error = Some(e);
            }
        }
        let keep = self.panel;
        for p in Panel::ALL {
            self.panel = p;
            let n = self.rows();
            let i = p.index();
            self.selected[i] = self.selected[i].min(n.saturating_sub(1));
        }
        self.panel = keep;
    }

    /// The log filter for the selected row of the current panel, with the row's count, or
    /// why that row cannot be shown in the log.
    pub fn selected_filter(&self) -> Result<(Filter, u64, String), String> {
        let (f, n, label) = self.selected_filter_any()?;
        if n == 0 {
            return Err(format!("no incidents in {label}"));
        }
        Ok((f, n, label))
    }

    fn selected_filter_any(&self) -> Result<(Filter, u64, String), String> {
        let Some(d) = &self.data else {
            return Err("nothing to open: the review has no figures".to_string());
        };
        let i = self.selected();
        let mut f = Filter {
            since: Some(d.window.since),
            until: Some(d.window.until),
            ..Default::default()
        };
        match self.panel {
            Panel::Causes => {
                let row =
                    apply_row(&mut f, &d.causes, i, &d.window).ok_or("no cause to open")??;
                Ok((f, row.count, row.key.join(" · ")))
            }
            Panel::Groups => {
                let row = apply_row(&mut f, &d.table, i, &d.window).ok_or("no group to open")??;
                Ok((f, row.count, row.key.join(" · ")))
            }
            Panel::Months => {
                let m = d.months.get(i).ok_or("no month to open")?;
                let v = GroupValue::Month {
                    year: m.year,
                    month: m.month,
                };
                apply_value(&mut f, Key::Month, &v, &d.window)?;
                if !self.group_months {
                    return Ok((f, m.count, m.label()));
                }
                // the panel charts the group highlighted on Groups: open its month only
                let gi = self.selected_in(Panel::Groups);
                let row =
                    apply_row(&mut f, &d.table, gi, &d.window).ok_or("no group to open")??;
                let count = d
                    .group_trends
                    .get(gi)
                    .and_then(|g| g.as_ref())
                    .and_then(|g| g.trend.as_ref().ok())
                    .and_then(|t| {
                        t.months
                            .iter()
                            .find(|x| (x.year, x.month) == (m.year, m.month))
                    })
                    .map_or(0, |x| x.count);
                Ok((f, count, format!("{} · {}", row.key.join(" · "), m.label())))
            }
            Panel::Stress | Panel::Weibull | Panel::HeatSoak => Err(
                "Enter opens a group from the Causes, Per month or Groups panel (Tab moves)"
                    .to_string(),
            ),
        }
    }
}

/// Narrow a log filter to row `i` of a group table: `None` when there is no such row.
fn apply_row<'a>(
    f: &mut Filter,
    table: &'a GroupTable,
    i: usize,
    window: &Window,
) -> Option<Result<&'a shardlog_core::fleet::GroupRow, String>> {
    let row = table.rows.get(i)?;
    for (k, v) in table.keys.iter().zip(&row.values) {
        if let Err(e) = apply_value(f, *k, v, window) {
            return Some(Err(e));
        }
    }
    Some(Ok(row))
}

/// Narrow a log filter to one group value.
fn apply_value(f: &mut Filter, key: Key, v: &GroupValue, window: &Window) -> Result<(), String> {
    match v {
        // the backlog: the log filters to the incidents with no cause recorded yet
        GroupValue::Text(None) if key == Key::Cause => {
            f.cause = Some(crate::store::model::NO_CAUSE.to_string());
            Ok(())
        }
        GroupValue::Text(None) => Err(format!(
            "the log cannot filter to incidents with no {} recorded",
            key.name()
        )),
        GroupValue::Text(Some(s)) => {
            let slot = match key {
                Key::Bench => &mut f.bench,
                Key::Cause => &mut f.cause,
                Key::OriginType => &mut f.origin_type,
                Key::Supplier => &mut f.supplier,
                Key::Lot => &mut f.lot,
                Key::Site => &mut f.site,
                other => {
                    return Err(format!("the log cannot filter by {}", other.name()));
                }
            };
            *slot = Some(s.clone());
            Ok(())
        }
        GroupValue::Month { year, month } => {
            let (a, b) = shardlog_core::fleet::group::month_bounds(*year, *month)
                .ok_or_else(|| format!("{year:04}-{month:02} is not a month"))?;
            f.since = Some(a.max(window.since));
            f.until = Some(b.min(window.until));
            Ok(())
        }
        GroupValue::Season(_) => Err(
            "the log filters by dates, not by season: group by month to open the incidents"
                .to_string(),
        ),
    }
}

/// The window of the last twelve months up to `today`.
pub(super) fn last_12_months(today: NaiveDate) -> Result<Window, String> {
    let since = today
        .checked_sub_months(Months::new(12))
        .and_then(|d| d.succ_opt())
        .unwrap_or(today);
    Window::new(since, today).map_err(|e| e.to_string())
}

/// The chart ranks the causes found; incidents without a cause yet (a backlog, not a cause)
/// come last whatever their count, as a Pareto chart puts "other" last.
fn backlog_last(causes: &mut GroupTable) {
    causes
        .rows
        .sort_by_key(|g| g.values.iter().all(|v| matches!(v, GroupValue::Text(None))));
}

/// Grouped by cause alone, counts only (the bar chart).
pub(super) fn by_cause(window: Window) -> GroupOptions {
    GroupOptions {
        keys: vec![Key::Cause],
        window,
        rates: false,
        weibull: false,
        origin_type: None,
        flag_level: 0.05,
    }
}

/// The review's statistics query for the grouping `keys` (the window is given apart).
fn review_query(keys: &[Key]) -> StatsQuery {
    StatsQuery {
        keys: keys.to_vec(),
        since: None,
        until: None,
        rates: true,
        trend: true,
        weibull: true,
        origin_type: None,
        only: Vec::new(),
        stress: StressKind::Applied,
        json: false,
    }
}

/// The start of the window for `choice`.
fn window_for(
    choice: WindowChoice,
    q: &StatsQuery,
    incidents: &[shardlog_core::fleet::IncidentFacts],
    exposures: &[shardlog_core::fleet::Exposure],
    today: NaiveDate,
) -> Result<Window, String> {
    match choice {
        WindowChoice::Last12 => last_12_months(today),
        WindowChoice::All => q
            .window(incidents, exposures, today)
            .map_err(|e| e.to_string()),
    }
}

fn compute(
    store: &dyn RecordSource,
    keys: &[Key],
    choice: WindowChoice,
    today: NaiveDate,
) -> Result<ReviewData, String> {
    let q = review_query(keys);
    // the fleet database counts where the data is
    if let Some(d) = counted::compute(store, &q, choice, today)? {
        return Ok(d);
    }
    let (incidents, exposures) = store
        .stats_input(&q, &[Key::Cause])
        .map_err(|e| e.to_string())?;
    let window = window_for(choice, &q, &incidents, &exposures, today)?;
    let r = query::compute(&q, &incidents, &exposures, window)?;
    let causes = shardlog_core::fleet::group(&incidents, &exposures, &by_cause(window))
        .map_err(|e| e.to_string())?;
    let dates: Vec<NaiveDate> = incidents
        .iter()
        .map(|f| f.found)
        .filter(|d| window.contains(*d))
        .collect();
    let months = monthly_counts(&dates, &exposures, &window);
    let in_window: Vec<&shardlog_core::fleet::IncidentFacts> = incidents
        .iter()
        .filter(|f| window.contains(f.found))
        .collect();
    let stresses: Vec<f64> = in_window.iter().filter_map(|f| f.stress_pa).collect();
    let without_stress = in_window.len() - stresses.len();
    Ok(finish(
        store,
        choice,
        Computed {
            window,
            result: r,
            causes,
            months,
            stresses,
            without_stress,
            exposures,
            from_counts: false,
            stresses_over_cap: None,
        },
    ))
}

/// What both ways of reading compute, before the figures every review shows are made.
pub(super) struct Computed {
    pub window: Window,
    pub result: query::StatsResult,
    /// Grouped by cause alone.
    pub causes: GroupTable,
    /// Every month of the window with its count.
    pub months: Vec<MonthCount>,
    /// The applied stresses in the window.
    pub stresses: Vec<f64>,
    pub without_stress: usize,
    pub exposures: Vec<shardlog_core::fleet::Exposure>,
    pub from_counts: bool,
    pub stresses_over_cap: Option<u64>,
}

/// The review's figures from what was computed: the chart's order of causes, the months from
/// the first incident for "all records", the stress histogram, the heat-soak comparison.
pub(super) fn finish(store: &dyn RecordSource, choice: WindowChoice, c: Computed) -> ReviewData {
    let Computed {
        window,
        result: r,
        mut causes,
        mut months,
        stresses,
        without_stress,
        exposures,
        from_counts,
        stresses_over_cap,
    } = c;
    backlog_last(&mut causes);
    if choice == WindowChoice::All {
        // "all records" starts with the exposure; the list starts at the first incident
        let first = months.iter().position(|m| m.count > 0).unwrap_or(0);
        months.drain(..first);
    }
    // round bins (1, 2, 2.5 or 5 × a power of ten in pascals: round in MPa too)
    let bins = round_histogram(&stresses, HISTOGRAM_BINS);
    let edges: Vec<f64> = bins.iter().map(|b| b.0).collect();
    let counts: Vec<u64> = bins.iter().map(|b| b.2).collect();
    let width = bins.first().map_or(0.0, |b| b.1 - b.0);
    let trend = r
        .trend
        .unwrap_or_else(|| Err("no trend was computed".to_string()));
    let weibull = match stresses_over_cap {
        Some(cap) => Err(format!(
            "the window holds more than {} fracture stresses, which the fleet database does \
             not read one by one",
            crate::app::group_thousands(cap)
        )),
        None => r
            .overall_weibull
            .unwrap_or_else(|| Err("no fit was computed".to_string())),
    };
    ReviewData {
        window,
        table: r.table,
        causes,
        months,
        trend,
        seasonality: r.seasonality,
        histogram: (edges, counts, width),
        without_stress,
        weibull,
        exposure_rows: exposures.len(),
        group_trends: r.group_trends.unwrap_or_default(),
        soak: store
            .soak_input(Some(window.since), Some(window.until))
            .map(|(facts, lots)| {
                shardlog_core::fleet::heat_soak::compare(&facts, &lots, &exposures, &window)
            })
            .map_err(|e| e.to_string()),
        from_counts,
        stresses_over_cap,
    }
}

impl ReviewState {
    /// What the status line shows on the review screen.
    pub fn status_line(&self) -> String {
        if let Some(e) = &self.error {
            return format!("review: {e}");
        }
        let Some(d) = &self.data else {
            return "review: no figures yet".to_string();
        };
        format!(
            "{} incidents · {} to {} ({}) · by {}",
            crate::app::group_thousands(d.table.total),
            d.window.since,
            d.window.until,
            self.window.label(),
            self.grouping_label()
        )
    }
}
