//! Counts, shares, rates and Weibull fits of incidents grouped by one or two keys.
//!
//! Exposure: each [`Exposure`] row says how many panes of a supplier/product/lot were in
//! service at a site from one date to another. A group's exposure is the pane-years of the rows
//! that match its supplier/product/lot/site values, within the window (and, for a month or
//! season key, within that month or season). Keys that exposure rows do not carry (cause,
//! origin type, asset type, temper) only select incidents: "thermal breaks on supplier A" is
//! counted against the panes of supplier A.
//!
//! "The rest" of a group, for its rate ratio: the incidents with the same values of the
//! non-exposure keys outside the group's exposure cell, over the rest of the exposure. Grouped
//! by cause alone there is no rate ratio (every cause has the same exposure).

use std::collections::HashMap;
use std::hash::{BuildHasherDefault, Hasher};
use std::rc::Rc;

use chrono::{Datelike, NaiveDate};

use super::rates::{holm_adjust, rate_per_1000, rate_ratio, Rate, RateRatio};
use super::weibull::{fit, Specimen, WeibullError, WeibullFit};

/// The facts of one incident that the fleet statistics use. `None` means "not recorded".
///
/// The texts are shared (`Rc<str>`): a fleet of a million incidents has a few thousand
/// distinct values, and the store hands out one copy of each (`"x".into()` makes one).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct IncidentFacts {
    /// The bench that owns the incident (the fleet database; a bench file: its own code).
    pub bench: Option<Rc<str>>,
    pub cause: Option<Rc<str>>,
    pub origin_type: Option<Rc<str>>,
    pub supplier: Option<Rc<str>>,
    pub product: Option<Rc<str>>,
    pub lot: Option<Rc<str>>,
    pub site: Option<Rc<str>>,
    pub asset_type: Option<Rc<str>>,
    pub temper: Option<Rc<str>>,
    /// Date the breakage was found (the date the statistics use).
    pub found: NaiveDate,
    /// Back-calculated fracture stress, Pa (applied stress at the origin).
    pub stress_pa: Option<f64>,
}

/// Panes in service: `panes` of one supplier/product/lot at one site, from `from` until
/// `until` (inclusive; `None` = still in service at the end of the window).
#[derive(Debug, Clone, PartialEq)]
pub struct Exposure {
    /// The bench that entered the panes (its incidents are counted against them when
    /// grouped by bench).
    pub bench: Option<String>,
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub site: Option<String>,
    pub panes: f64,
    pub from: NaiveDate,
    pub until: Option<NaiveDate>,
}

/// A date window, both ends included.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Window {
    pub since: NaiveDate,
    pub until: NaiveDate,
}

impl Window {
    pub fn new(since: NaiveDate, until: NaiveDate) -> Result<Self, FleetError> {
        if since > until {
            return Err(FleetError::EmptyWindow { since, until });
        }
        Ok(Window { since, until })
    }
    pub fn contains(&self, d: NaiveDate) -> bool {
        d >= self.since && d <= self.until
    }
    pub fn days(&self) -> i64 {
        (self.until - self.since).num_days() + 1
    }
}

/// Errors of the grouping functions.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FleetError {
    #[error("the window is empty: {since} is after {until}")]
    EmptyWindow { since: NaiveDate, until: NaiveDate },
    #[error("group by one or two keys, not {0}")]
    KeyCount(usize),
    #[error("'{0}' is not a grouping key; expected one of {list}", list = Key::LIST)]
    UnknownKey(String),
    #[error("the same key is given twice: {0}")]
    RepeatedKey(&'static str),
    #[error("{facts} counted fact rows but {counts} counts")]
    CountsMismatch { facts: usize, counts: usize },
}

/// A grouping key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Key {
    /// The bench that owns the incident (a fleet of benches).
    Bench,
    Cause,
    OriginType,
    Supplier,
    Product,
    Lot,
    Site,
    AssetType,
    Temper,
    /// Calendar month, "2026-03".
    Month,
    /// Meteorological season of the northern hemisphere (winter = December to February).
    Season,
}

impl Key {
    pub const ALL: [Key; 11] = [
        Key::Bench,
        Key::Cause,
        Key::OriginType,
        Key::Supplier,
        Key::Product,
        Key::Lot,
        Key::Site,
        Key::AssetType,
        Key::Temper,
        Key::Month,
        Key::Season,
    ];
    const LIST: &'static str =
        "bench, cause, origin-type, supplier, product, lot, site, asset-type, temper, month, season";

    pub fn name(self) -> &'static str {
        match self {
            Key::Bench => "bench",
            Key::Cause => "cause",
            Key::OriginType => "origin-type",
            Key::Supplier => "supplier",
            Key::Product => "product",
            Key::Lot => "lot",
            Key::Site => "site",
            Key::AssetType => "asset-type",
            Key::Temper => "temper",
            Key::Month => "month",
            Key::Season => "season",
        }
    }

    /// Parse a key name (`origin-type`, `origin_type` and `origin` all work).
    pub fn parse(text: &str) -> Result<Key, FleetError> {
        let t = text.trim().to_ascii_lowercase().replace('_', "-");
        let k = match t.as_str() {
            "bench" => Key::Bench,
            "cause" => Key::Cause,
            "origin-type" | "origin" => Key::OriginType,
            "supplier" => Key::Supplier,
            "product" => Key::Product,
            "lot" | "batch" => Key::Lot,
            "site" => Key::Site,
            "asset-type" | "asset" => Key::AssetType,
            "temper" | "temper-class" => Key::Temper,
            "month" => Key::Month,
            "season" => Key::Season,
            _ => return Err(FleetError::UnknownKey(text.trim().to_string())),
        };
        Ok(k)
    }

    /// Parse "cause,supplier" into one or two distinct keys.
    pub fn parse_list(text: &str) -> Result<Vec<Key>, FleetError> {
        let keys = text
            .split(',')
            .map(Key::parse)
            .collect::<Result<Vec<_>, _>>()?;
        check_keys(&keys)?;
        Ok(keys)
    }

    /// Keys that exposure rows carry.
    pub fn is_exposure(self) -> bool {
        matches!(
            self,
            Key::Bench | Key::Supplier | Key::Product | Key::Lot | Key::Site
        )
    }

    /// Keys that cut time.
    pub fn is_time(self) -> bool {
        matches!(self, Key::Month | Key::Season)
    }
}

fn check_keys(keys: &[Key]) -> Result<(), FleetError> {
    if keys.is_empty() || keys.len() > 2 {
        return Err(FleetError::KeyCount(keys.len()));
    }
    if keys.len() == 2 && keys[0] == keys[1] {
        return Err(FleetError::RepeatedKey(keys[0].name()));
    }
    Ok(())
}

/// Label for a value that was not recorded.
pub const NOT_RECORDED: &str = "(not recorded)";

/// Season index 0..4 (winter, spring, summer, autumn) of a month 1..=12.
pub fn season_of(month: u32) -> u8 {
    match month {
        12 | 1 | 2 => 0,
        3..=5 => 1,
        6..=8 => 2,
        _ => 3,
    }
}

pub const SEASON_NAMES: [&str; 4] = [
    "winter (Dec-Feb)",
    "spring (Mar-May)",
    "summer (Jun-Aug)",
    "autumn (Sep-Nov)",
];

/// The value of one key for a group, as data (for filtering the log to a group).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub enum GroupValue {
    /// A text key; `None` = not recorded.
    Text(Option<String>),
    Month {
        year: i32,
        month: u32,
    },
    /// 0 winter, 1 spring, 2 summer, 3 autumn (see [`SEASON_NAMES`]).
    Season(u8),
}

impl GroupValue {
    /// Does this incident belong to the group on `key`?
    pub fn matches(&self, key: Key, f: &IncidentFacts) -> bool {
        match (self, key) {
            (GroupValue::Month { year, month }, Key::Month) => {
                f.found.year() == *year && f.found.month() == *month
            }
            (GroupValue::Season(s), Key::Season) => season_of(f.found.month()) == *s,
            (GroupValue::Text(v), k) if !k.is_time() => text_of(f, k) == v.as_deref(),
            _ => false,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
enum Val<'a> {
    Text(Option<&'a str>),
    Month(i32, u32),
    Season(u8),
}

impl Val<'_> {
    fn label(&self) -> String {
        match self {
            Val::Text(Some(s)) => s.to_string(),
            Val::Text(None) => NOT_RECORDED.to_string(),
            Val::Month(y, m) => format!("{y:04}-{m:02}"),
            Val::Season(s) => SEASON_NAMES[*s as usize].to_string(),
        }
    }
    fn value(&self) -> GroupValue {
        match self {
            Val::Text(v) => GroupValue::Text(v.map(str::to_string)),
            Val::Month(y, m) => GroupValue::Month {
                year: *y,
                month: *m,
            },
            Val::Season(s) => GroupValue::Season(*s),
        }
    }
}

fn text_of(f: &IncidentFacts, k: Key) -> Option<&str> {
    match k {
        Key::Bench => f.bench.as_deref(),
        Key::Cause => f.cause.as_deref(),
        Key::OriginType => f.origin_type.as_deref(),
        Key::Supplier => f.supplier.as_deref(),
        Key::Product => f.product.as_deref(),
        Key::Lot => f.lot.as_deref(),
        Key::Site => f.site.as_deref(),
        Key::AssetType => f.asset_type.as_deref(),
        Key::Temper => f.temper.as_deref(),
        Key::Month | Key::Season => None,
    }
}

fn val_of(f: &IncidentFacts, k: Key) -> Val<'_> {
    match k {
        Key::Month => Val::Month(f.found.year(), f.found.month()),
        Key::Season => Val::Season(season_of(f.found.month())),
        _ => Val::Text(text_of(f, k)),
    }
}

fn exposure_text(e: &Exposure, k: Key) -> Option<&str> {
    match k {
        Key::Bench => e.bench.as_deref(),
        Key::Supplier => e.supplier.as_deref(),
        Key::Product => e.product.as_deref(),
        Key::Lot => e.lot.as_deref(),
        Key::Site => e.site.as_deref(),
        _ => None,
    }
}

/// Days of `[a0, a1] ∩ [b0, b1]`, both inclusive.
pub fn overlap_days(a0: NaiveDate, a1: NaiveDate, b0: NaiveDate, b1: NaiveDate) -> i64 {
    let lo = a0.max(b0);
    let hi = a1.min(b1);
    if hi < lo {
        0
    } else {
        (hi - lo).num_days() + 1
    }
}

/// Days per year used to turn pane-days into pane-years (Julian year).
pub const DAYS_PER_YEAR: f64 = 365.25;

/// Pane-years of one exposure row inside `[from, until]`.
pub fn pane_years(e: &Exposure, from: NaiveDate, until: NaiveDate) -> f64 {
    if !(e.panes.is_finite() && e.panes > 0.0) {
        return 0.0;
    }
    let end = e.until.unwrap_or(until);
    e.panes * overlap_days(e.from, end, from, until) as f64 / DAYS_PER_YEAR
}

/// First and last day of a calendar month.
pub fn month_bounds(year: i32, month: u32) -> Option<(NaiveDate, NaiveDate)> {
    let first = NaiveDate::from_ymd_opt(year, month, 1)?;
    let next = if month == 12 {
        NaiveDate::from_ymd_opt(year + 1, 1, 1)?
    } else {
        NaiveDate::from_ymd_opt(year, month + 1, 1)?
    };
    Some((first, next.pred_opt()?))
}

/// The calendar months the window touches, in order, each clipped to the window.
pub fn months_in(window: &Window) -> Vec<(i32, u32, NaiveDate, NaiveDate)> {
    let mut out = Vec::new();
    let (mut y, mut m) = (window.since.year(), window.since.month());
    while let Some((a, b)) = month_bounds(y, m) {
        if a > window.until {
            break;
        }
        out.push((y, m, a.max(window.since), b.min(window.until)));
        if m == 12 {
            y += 1;
            m = 1;
        } else {
            m += 1;
        }
    }
    out
}

/// What to compute.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupOptions {
    pub keys: Vec<Key>,
    pub window: Window,
    /// Rates per 1,000 pane-years, rate ratios and flags (needs exposure rows).
    pub rates: bool,
    /// A Weibull fit of each group's fracture stresses.
    pub weibull: bool,
    /// With `weibull`: fit this origin type only, the group's fractures from other origins
    /// censored at their stress (competing flaw populations, ASTM C1239).
    pub origin_type: Option<String>,
    /// Family-wise level for the flags (Holm), e.g. 0.05.
    pub flag_level: f64,
}

/// One row of the table.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupRow {
    /// The label of each key, in the order of the keys.
    pub key: Vec<String>,
    /// The same values as data, to filter the incidents of this group.
    pub values: Vec<GroupValue>,
    pub count: u64,
    /// Fraction of all incidents in the window.
    pub share: f64,
    /// Pane-years behind the rate (None when no exposure row matches).
    pub rate: Option<Rate>,
    pub ratio: Option<RateRatio>,
    /// Holm-adjusted one-sided p-value of "above the rest".
    pub p_adjusted: Option<f64>,
    /// Rate significantly above the rest (Holm, at `flag_level`).
    pub flagged: bool,
    /// Number of fracture stresses in the group.
    pub n_stresses: usize,
    pub weibull: Option<Result<WeibullFit, WeibullError>>,
}

/// The grouped table.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupTable {
    pub keys: Vec<Key>,
    pub window: Window,
    /// Incidents in the window.
    pub total: u64,
    /// All exposure inside the window, pane-years (0 without exposure rows).
    pub total_pane_years: f64,
    /// Largest count first; ties by key.
    pub rows: Vec<GroupRow>,
    /// Number of groups the flags were adjusted over (Holm's m).
    pub compared: usize,
    pub flag_level: f64,
}

/// A small multiply-rotate hasher (the Fx scheme): grouping a million rows by short keys is
/// several times faster than with the default SipHash, and these maps are never exposed to
/// an adversary choosing keys to collide.
#[derive(Default, Clone, Copy)]
struct FxHasher(u64);

impl FxHasher {
    fn add(&mut self, w: u64) {
        self.0 = (self.0.rotate_left(5) ^ w).wrapping_mul(0x517c_c1b7_2722_0a95);
    }
}

impl Hasher for FxHasher {
    fn write(&mut self, bytes: &[u8]) {
        let mut chunks = bytes.chunks_exact(8);
        for c in &mut chunks {
            let mut b = [0u8; 8];
            b.copy_from_slice(c);
            self.add(u64::from_le_bytes(b));
        }
        let rest = chunks.remainder();
        if !rest.is_empty() {
            let mut b = [0u8; 8];
            b[..rest.len()].copy_from_slice(rest);
            self.add(u64::from_le_bytes(b));
        }
    }
    fn write_u8(&mut self, i: u8) {
        self.add(u64::from(i));
    }
    fn write_u32(&mut self, i: u32) {
        self.add(u64::from(i));
    }
    fn write_u64(&mut self, i: u64) {
        self.add(i);
    }
    fn write_usize(&mut self, i: usize) {
        self.add(i as u64);
    }
    fn finish(&self) -> u64 {
        self.0
    }
}

type FxMap<K, V> = HashMap<K, V, BuildHasherDefault<FxHasher>>;

#[derive(Default)]
struct Acc {
    count: u64,
    stresses: Vec<Specimen>,
}

fn time_cells(k: Option<Key>, v: Option<&Val<'_>>, window: &Window) -> Vec<(NaiveDate, NaiveDate)> {
    match (k, v) {
        (Some(Key::Month), Some(Val::Month(y, m))) => month_bounds(*y, *m)
            .map(|(a, b)| vec![(a.max(window.since), b.min(window.until))])
            .unwrap_or_default(),
        (Some(Key::Season), Some(Val::Season(s))) => months_in(window)
            .into_iter()
            .filter(|(_, m, _, _)| season_of(*m) == *s)
            .map(|(_, _, a, b)| (a, b))
            .collect(),
        _ => vec![(window.since, window.until)],
    }
}

/// How many incidents each fact row stands for: one each, or a count per row (facts counted
/// where they are kept, a row per cell; a row of count 0 brings only its fracture stress).
#[derive(Debug, Clone, Copy)]
pub(super) enum Counts<'a> {
    One,
    Each(&'a [u64]),
}

impl Counts<'_> {
    pub(super) fn of(self, i: usize) -> u64 {
        match self {
            Counts::One => 1,
            Counts::Each(c) => c.get(i).copied().unwrap_or(0),
        }
    }
}

/// The incidents of the window by the values of the keys (with their fracture stresses when
/// a Weibull fit is asked for), and how many incidents the window holds.
fn count_groups<'a>(
    incidents: &'a [IncidentFacts],
    counts: Counts<'_>,
    opts: &GroupOptions,
) -> (FxMap<[Val<'a>; 2], Acc>, u64) {
    let keys = &opts.keys;
    let mut map: FxMap<[Val<'_>; 2], Acc> = FxMap::default();
    let mut total = 0u64;
    let target = opts.origin_type.as_deref();
    for (i, f) in incidents.iter().enumerate() {
        if !opts.window.contains(f.found) {
            continue;
        }
        let n = counts.of(i);
        total += n;
        let k = [
            val_of(f, keys[0]),
            keys.get(1).map_or(Val::Text(None), |&k| val_of(f, k)),
        ];
        let acc = map.entry(k).or_default();
        acc.count += n;
        if opts.weibull {
            if let Some(s) = f.stress_pa {
                let censored = match target {
                    Some(t) => f.origin_type.as_deref() != Some(t),
                    None => false,
                };
                acc.stresses.push(Specimen {
                    stress: s,
                    censored,
                });
            }
        }
    }
    (map, total)
}

/// Pane-years of the exposure cell of one group: the exposure rows that match its
/// supplier/product/lot/site values, within its month or season when a key is one.
fn cell_pane_years(
    k: &[Val<'_>; 2],
    cell_keys: &[(usize, Key)],
    exposures: &[Exposure],
    window: &Window,
) -> f64 {
    let time_key = cell_keys.iter().find(|(_, key)| key.is_time());
    let cells = time_cells(time_key.map(|t| t.1), time_key.map(|t| &k[t.0]), window);
    let mut py = 0.0;
    for e in exposures {
        let matches = cell_keys.iter().all(|(i, key)| {
            if key.is_time() {
                return true;
            }
            match k[*i] {
                Val::Text(v) => exposure_text(e, *key) == v,
                _ => false,
            }
        });
        if matches {
            py += cells
                .iter()
                .map(|(a, b)| pane_years(e, *a, *b))
                .sum::<f64>();
        }
    }
    py
}

/// Holm over every group that has a comparison: each such row's adjusted p-value and flag.
/// Returns how many groups were compared.
fn flag_rows(rows: &mut [GroupRow], flag_level: f64) -> usize {
    let idx: Vec<usize> = (0..rows.len())
        .filter(|&i| rows[i].ratio.is_some())
        .collect();
    let ps: Vec<f64> = idx
        .iter()
        .filter_map(|&i| rows[i].ratio.map(|r| r.p_above))
        .collect();
    let adjusted = holm_adjust(&ps);
    for (j, &i) in idx.iter().enumerate() {
        rows[i].p_adjusted = Some(adjusted[j]);
        rows[i].flagged = adjusted[j] < flag_level && rows[i].ratio.is_some_and(|r| r.ratio > 1.0);
    }
    idx.len()
}

/// Group incidents (and exposure) as asked.
pub fn group(
    incidents: &[IncidentFacts],
    exposures: &[Exposure],
    opts: &GroupOptions,
) -> Result<GroupTable, FleetError> {
    group_with(incidents, Counts::One, exposures, opts)
}

/// Group facts counted where they are kept: `incidents[i]` stands for `counts[i]` incidents
/// with its key values and date (a row of count 0 brings only its fracture stress, for the
/// Weibull fit). The same table as [`group`] over the incidents one by one, when the rows
/// with stresses come in the same order.
pub fn group_counted(
    incidents: &[IncidentFacts],
    counts: &[u64],
    exposures: &[Exposure],
    opts: &GroupOptions,
) -> Result<GroupTable, FleetError> {
    if counts.len() != incidents.len() {
        return Err(FleetError::CountsMismatch {
            facts: incidents.len(),
            counts: counts.len(),
        });
    }
    group_with(incidents, Counts::Each(counts), exposures, opts)
}

fn group_with(
    incidents: &[IncidentFacts],
    counts: Counts<'_>,
    exposures: &[Exposure],
    opts: &GroupOptions,
) -> Result<GroupTable, FleetError> {
    check_keys(&opts.keys)?;
    let window = opts.window;
    let keys = &opts.keys;
    let (map, total) = count_groups(incidents, counts, opts);

    let total_pane_years: f64 = exposures
        .iter()
        .map(|e| pane_years(e, window.since, window.until))
        .sum();
    let with_rates = opts.rates && total_pane_years > 0.0;
    let cell_keys: Vec<(usize, Key)> = keys
        .iter()
        .copied()
        .enumerate()
        .filter(|(_, k)| k.is_exposure() || k.is_time())
        .collect();
    let comparable = !cell_keys.is_empty();

    // Stratum = the values of the keys that only select incidents.
    fn stratum_of<'a>(keys: &[Key], k: &[Val<'a>; 2]) -> [Option<Val<'a>>; 2] {
        let mut s = [None, None];
        for (i, key) in keys.iter().enumerate() {
            if !(key.is_exposure() || key.is_time()) {
                s[i] = Some(k[i]);
            }
        }
        s
    }
    let mut stratum_count: FxMap<[Option<Val<'_>>; 2], u64> = FxMap::default();
    for (k, acc) in &map {
        *stratum_count.entry(stratum_of(keys, k)).or_default() += acc.count;
    }

    let mut entries: Vec<([Val<'_>; 2], Acc)> = map.into_iter().collect();
    entries.sort_by(|a, b| b.1.count.cmp(&a.1.count).then(a.0.cmp(&b.0)));

    let mut rows = Vec::with_capacity(entries.len());
    for (k, acc) in entries {
        let exposure = with_rates.then(|| cell_pane_years(&k, &cell_keys, exposures, &window));
        let rate = exposure.and_then(|py| rate_per_1000(acc.count, py));
        let ratio = match (exposure, comparable) {
            (Some(py), true) => {
                let in_stratum = stratum_count
                    .get(&stratum_of(keys, &k))
                    .copied()
                    .unwrap_or(0);
                rate_ratio(acc.count, py, in_stratum - acc.count, total_pane_years - py)
            }
            _ => None,
        };
        let weibull = if opts.weibull && !acc.stresses.is_empty() {
            Some(fit(&acc.stresses))
        } else {
            None
        };
        let key = (0..keys.len()).map(|i| k[i].label()).collect();
        let values = (0..keys.len()).map(|i| k[i].value()).collect();
        rows.push(GroupRow {
            key,
            values,
            count: acc.count,
            share: if total > 0 {
                acc.count as f64 / total as f64
            } else {
                0.0
            },
            rate,
            ratio,
            p_adjusted: None,
            flagged: false,
            n_stresses: acc.stresses.len(),
            weibull,
        });
    }

    let compared = flag_rows(&mut rows, opts.flag_level);

    Ok(GroupTable {
        keys: keys.clone(),
        window,
        total,
        total_pane_years,
        rows,
        compared,
        flag_level: opts.flag_level,
    })
}

/// The fracture stresses of the incidents in the window, as Weibull specimens: with
/// `origin_type`, fractures from other origins are censored (competing flaw populations).
pub fn specimens(
    incidents: &[IncidentFacts],
    window: &Window,
    origin_type: Option<&str>,
) -> Vec<Specimen> {
    incidents
        .iter()
        .filter(|f| window.contains(f.found))
        .filter_map(|f| {
            f.stress_pa.map(|s| Specimen {
                stress: s,
                censored: origin_type.is_some_and(|t| f.origin_type.as_deref() != Some(t)),
            })
        })
        .collect()
}

/// A histogram of values in `bins` equal bins from the smallest to the largest value:
/// (bin lower edges, counts). Empty input gives empty vectors.
pub fn histogram(values: &[f64], bins: usize) -> (Vec<f64>, Vec<u64>) {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if finite.is_empty() || bins == 0 {
        return (Vec::new(), Vec::new());
    }
    let lo = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = finite.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let width = if hi > lo {
        (hi - lo) / bins as f64
    } else {
        1.0
    };
    let mut counts = vec![0u64; bins];
    for v in finite {
        let i = (((v - lo) / width) as usize).min(bins - 1);
        counts[i] += 1;
    }
    let edges = (0..bins).map(|i| lo + i as f64 * width).collect();
    (edges, counts)
}

/// A histogram on round bin edges: a width of 1, 2, 2.5 or 5 times a power of ten chosen
/// so that about `about` bins cover the values, the first edge a multiple of the width at or
/// below the smallest value. Each bin is (low edge, high edge, count); a value on an inner
/// edge counts in the bin above it. Empty when there are no finite values.
pub fn round_histogram(values: &[f64], about: usize) -> Vec<(f64, f64, u64)> {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    if finite.is_empty() || about == 0 {
        return Vec::new();
    }
    let lo = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = finite.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let raw = if hi > lo {
        (hi - lo) / about as f64
    } else {
        lo.abs().max(1.0) / about as f64
    };
    let exponent = raw.log10().floor() as i32;
    let power = 10f64.powi(exponent);
    let mult = [1.0, 2.0, 2.5, 5.0, 10.0]
        .into_iter()
        .find(|m| m * power >= raw * (1.0 - 1e-12))
        .unwrap_or(10.0);
    // an edge k·mult·10^e, made as (k·mult) / 10^-e for e < 0 so that it is the nearest
    // double to the decimal (0.6, not 0.6000000000000001)
    let at = |k: f64| {
        if exponent < 0 {
            k * mult / 10f64.powi(-exponent)
        } else {
            k * mult * power
        }
    };
    let width = at(1.0);
    let first = (lo / width).floor();
    let bins = (((hi - at(first)) / width).floor() as usize + 1).max(1);
    let mut counts = vec![0u64; bins];
    for v in finite {
        let i = (((v - at(first)) / width).floor().max(0.0) as usize).min(bins - 1);
        counts[i] += 1;
    }
    counts
        .into_iter()
        .enumerate()
        .map(|(i, c)| (at(first + i as f64), at(first + i as f64 + 1.0), c))
        .collect()
}

/// The found dates of the incidents of each row of `table` inside its window, one list per
/// row, in its order; the rows are found by the same key values the table was built from.
pub(super) fn dates_by_row(
    incidents: &[IncidentFacts],
    counts: Counts<'_>,
    table: &GroupTable,
) -> Vec<Vec<NaiveDate>> {
    let keys = &table.keys;
    fn as_val(v: &GroupValue) -> Val<'_> {
        match v {
            GroupValue::Text(t) => Val::Text(t.as_deref()),
            GroupValue::Month { year, month } => Val::Month(*year, *month),
            GroupValue::Season(s) => Val::Season(*s),
        }
    }
    let mut index: FxMap<[Val<'_>; 2], usize> = FxMap::default();
    for (i, row) in table.rows.iter().enumerate() {
        let k = [
            row.values.first().map_or(Val::Text(None), as_val),
            row.values.get(1).map_or(Val::Text(None), as_val),
        ];
        index.insert(k, i);
    }
    let mut dates: Vec<Vec<NaiveDate>> = vec![Vec::new(); table.rows.len()];
    for (j, f) in incidents.iter().enumerate() {
        if !table.window.contains(f.found) {
            continue;
        }
        let k = [
            val_of(f, keys[0]),
            keys.get(1).map_or(Val::Text(None), |&k| val_of(f, k)),
        ];
        if let Some(&i) = index.get(&k) {
            let n = counts.of(j) as usize;
            dates[i].extend(std::iter::repeat_n(f.found, n));
        }
    }
    dates
}

/// The exposure rows of one group: those that match its supplier/product/lot/site values (all
/// of them for a group keyed only by cause, origin type, asset type or temper).
pub(super) fn row_exposures(exposures: &[Exposure], keys: &[Key], row: &GroupRow) -> Vec<Exposure> {
    exposures
        .iter()
        .filter(|e| {
            keys.iter().zip(&row.values).all(|(k, v)| match v {
                GroupValue::Text(t) if k.is_exposure() => exposure_text(e, *k) == t.as_deref(),
                _ => true,
            })
        })
        .cloned()
        .collect()
}

#[cfg(test)]
mod round_histogram_tests {
    use super::round_histogram;

    #[test]
    fn bins_are_round_and_hold_every_value() {
        // stresses from 1.88 to 31.4 MPa, about ten bins: 2.95 wide rounds up to 5
        let v = [1.88, 5.0, 7.4, 12.0, 31.4];
        let h = round_histogram(&v, 10);
        assert_eq!(h.first().map(|b| b.0), Some(0.0));
        assert_eq!(h[0].1, 5.0);
        assert_eq!(h.last().map(|b| b.1), Some(35.0));
        assert_eq!(h.len(), 7);
        assert_eq!(h.iter().map(|b| b.2).sum::<u64>(), 5);
        // small values: edges print without float noise
        let h = round_histogram(&[0.61, 0.95, 2.3], 10);
        assert!(h.iter().all(|b| format!("{}", b.0).len() <= 4), "{h:?}");
        assert_eq!(h[0].0, 0.6);
        // one value
        assert_eq!(round_histogram(&[40.0], 10).len(), 1);
        assert!(round_histogram(&[], 10).is_empty());
    }
}
