//! `stats` on the fleet database, counted where the data is: whole months of the window from
//! the counts by month that schema/fleet/0007_counts.sql keeps on ingest (thousands of rows,
//! not millions), the days of a month the window cuts from `fleet_facts` by its date index,
//! and, for a Weibull fit, only the fracture stresses of the selection, in the benches' order.
//! The core computes the same figures from these counted rows as from the incidents one by
//! one ([`shardlog_core::fleet::group_counted`]).

use std::collections::HashMap;
use std::rc::Rc;

use chrono::NaiveDate;
use postgres::types::ToSql;
use shardlog_core::fleet::group::{month_bounds, months_in, NOT_RECORDED};
use shardlog_core::fleet::{IncidentFacts, Key, StatsQuery, StressKind};

use super::read::FleetReader;
use crate::store::read::CountedInput;
use crate::store::StoreError;

/// The column of a key in both `fleet_facts` and `fleet_fact_months`; None for a key they do
/// not hold (asset type, the asset's own) or that is a date (month, season).
fn column(key: Key) -> Option<&'static str> {
    Some(match key {
        Key::Cause => "cause",
        Key::OriginType => "origin_type",
        Key::Supplier => "supplier",
        Key::Product => "product",
        Key::Lot => "lot",
        Key::Site => "site",
        Key::Temper => "temper",
        Key::Bench => "owner",
        Key::AssetType | Key::Month | Key::Season => return None,
    })
}

/// Conditions (fixed texts with `$n` placeholders) and their values.
#[derive(Default)]
struct Conditions {
    texts: Vec<String>,
    values: Vec<String>,
}

impl Conditions {
    fn equal(&mut self, column: &str, value: &str) {
        self.values.push(value.to_string());
        self.texts
            .push(format!("{column} = ${}", self.values.len()));
    }
    fn sql(&self) -> String {
        if self.texts.is_empty() {
            "true".into()
        } else {
            self.texts.join(" AND ")
        }
    }
    fn params(&self) -> Vec<&(dyn ToSql + Sync)> {
        self.values
            .iter()
            .map(|v| v as &(dyn ToSql + Sync))
            .collect()
    }
}

fn day(d: NaiveDate) -> String {
    d.format("%Y-%m-%d").to_string()
}

fn bad_date(text: &str) -> StoreError {
    StoreError::Database(format!("a fleet fact with the date found {text:?}"))
}

/// One shared copy of each text (a fleet of millions has a few thousand distinct values).
#[derive(Default)]
struct Texts(HashMap<String, Rc<str>>);

impl Texts {
    fn get(&mut self, v: Option<String>) -> Option<Rc<str>> {
        v.map(|s| {
            self.0
                .entry(s.clone())
                .or_insert_with(|| Rc::from(s.as_str()))
                .clone()
        })
    }
}

/// The value of a key column of a row into its place in the facts.
fn set(f: &mut IncidentFacts, key: Key, v: Option<Rc<str>>) {
    match key {
        Key::Cause => f.cause = v,
        Key::OriginType => f.origin_type = v,
        Key::Supplier => f.supplier = v,
        Key::Product => f.product = v,
        Key::Lot => f.lot = v,
        Key::Site => f.site = v,
        Key::Temper => f.temper = v,
        Key::Bench => f.bench = v,
        Key::AssetType | Key::Month | Key::Season => {}
    }
}

impl FleetReader {
    /// The counted input of `q`, or None when a key is one the counts do not hold (asset
    /// type): then `stats_input` reads the facts one by one.
    pub(super) fn counted(
        &self,
        q: &StatsQuery,
        today: NaiveDate,
    ) -> Result<Option<CountedInput>, StoreError> {
        let asset_type = |k: &Key| *k == Key::AssetType;
        if q.keys.iter().any(asset_type) || q.only.iter().any(|(k, _)| asset_type(k)) {
            return Ok(None);
        }
        let mut exposures = self.fleet_exposures()?;
        shardlog_core::fleet::query::apply_only(q, &mut Vec::new(), &mut exposures);
        let mut conds = Conditions::default();
        if let Some(code) = self.scope() {
            conds.equal("owner", code);
        }
        for (key, value) in &q.only {
            let Some(col) = column(*key) else { continue };
            if value == NOT_RECORDED {
                conds.texts.push(format!("{col} IS NULL"));
            } else {
                conds.equal(col, value);
            }
        }
        let until = q.until.unwrap_or(today);
        let earliest = if q.since.is_none() {
            self.earliest(&conds, until)?
        } else {
            None
        };
        let mut out = CountedInput {
            exposures,
            earliest,
            ..CountedInput::default()
        };
        let Ok(window) = q.window_from(earliest, &out.exposures, today) else {
            // the command reports the empty window itself
            return Ok(Some(out));
        };
        // a month is whole when the window holds all of it, or holds all of its incidents
        // (without --since the window starts at the first of them)
        let mut whole = Vec::new();
        let mut cut = Vec::new();
        for (y, m, first, last) in months_in(&window) {
            let Some((start, end)) = month_bounds(y, m) else {
                continue;
            };
            if (first == start || q.since.is_none()) && last == end {
                whole.push((format!("{y:04}-{m:02}"), first));
            } else {
                cut.push((first, last));
            }
        }
        let keys: Vec<Key> = q
            .keys
            .iter()
            .copied()
            .filter(|k| column(*k).is_some())
            .collect();
        let mut texts = Texts::default();
        self.whole_months(&conds, &keys, &whole, &mut texts, &mut out)?;
        self.cut_months(&conds, &keys, &cut, &mut texts, &mut out)?;
        if q.weibull {
            self.stresses(
                q,
                &conds,
                &keys,
                (window.since, window.until),
                &mut texts,
                &mut out,
            )?;
        }
        Ok(Some(out))
    }

    /// The first date found of the selected incidents up to `until`: the first month from
    /// the counts, then the first day of it from the facts.
    fn earliest(
        &self,
        conds: &Conditions,
        until: NaiveDate,
    ) -> Result<Option<NaiveDate>, StoreError> {
        let mut params = conds.params();
        let until_text = day(until);
        let until_month = until_text[..7].to_string();
        params.push(&until_month);
        let sql = format!(
            "SELECT min(month) FROM fleet_fact_months WHERE {} AND month <= ${}",
            conds.sql(),
            params.len()
        );
        let month: Option<String> = self.query_with(&sql, &params)?[0].get(0);
        let Some(month) = month else {
            return Ok(None);
        };
        let from = format!("{month}-01");
        let mut params = conds.params();
        params.push(&from);
        params.push(&until_text);
        let sql = format!(
            "SELECT min(found_on) FROM fleet_facts WHERE {} AND found_on >= ${} AND found_on <= ${}",
            conds.sql(),
            params.len() - 1,
            params.len()
        );
        let found: Option<String> = self.query_with(&sql, &params)?[0].get(0);
        found
            .map(|t| crate::store::dates::parse_date(&t).ok_or_else(|| bad_date(&t)))
            .transpose()
    }

    /// The counts of the whole months, by month and the values of the keys; each row dated
    /// the first day of its month inside the window.
    fn whole_months(
        &self,
        conds: &Conditions,
        keys: &[Key],
        whole: &[(String, NaiveDate)],
        texts: &mut Texts,
        out: &mut CountedInput,
    ) -> Result<(), StoreError> {
        if whole.is_empty() {
            return Ok(());
        }
        let dated: HashMap<&str, NaiveDate> = whole.iter().map(|(m, d)| (m.as_str(), *d)).collect();
        let months: Vec<String> = whole.iter().map(|(m, _)| m.clone()).collect();
        let mut params = conds.params();
        params.push(&months);
        let cols = key_columns(keys);
        let sql = format!(
            "SELECT month{cols}, sum(n)::bigint FROM fleet_fact_months WHERE {} AND month = ANY(${})
             GROUP BY month{cols}",
            conds.sql(),
            params.len()
        );
        for r in self.query_with(&sql, &params)? {
            let month: String = r.get(0);
            let found = *dated.get(month.as_str()).ok_or_else(|| bad_date(&month))?;
            let f = keyed_facts(found, None, keys, &r, 1, texts);
            let n: i64 = r.get(keys.len() + 1);
            out.facts.push(f);
            out.counts.push(u64::try_from(n).map_err(|_| {
                StoreError::Database(format!(
                    "the fleet counts {n} incidents in a cell of {month}"
                ))
            })?);
        }
        Ok(())
    }

    /// The days of the months the window cuts, counted from the facts by day and the values
    /// of the keys.
    fn cut_months(
        &self,
        conds: &Conditions,
        keys: &[Key],
        cut: &[(NaiveDate, NaiveDate)],
        texts: &mut Texts,
        out: &mut CountedInput,
    ) -> Result<(), StoreError> {
        let cols = key_columns(keys);
        for (first, last) in cut {
            let (from, to) = (day(*first), day(*last));
            let mut params = conds.params();
            params.push(&from);
            params.push(&to);
            let sql = format!(
                "SELECT found_on{cols}, count(*) FROM fleet_facts
                 WHERE {} AND found_on >= ${} AND found_on <= ${} GROUP BY found_on{cols}",
                conds.sql(),
                params.len() - 1,
                params.len()
            );
            for r in self.query_with(&sql, &params)? {
                let f = keyed_facts(found_on(&r)?, None, keys, &r, 1, texts);
                let n: i64 = r.get(keys.len() + 1);
                out.facts.push(f);
                out.counts.push(n.unsigned_abs());
            }
        }
        Ok(())
    }

    /// The fracture stresses of the selection inside the window, one row each (count 0), in
    /// the benches' order, with the keys and (to censor the other origins) the origin type.
    fn stresses(
        &self,
        q: &StatsQuery,
        conds: &Conditions,
        keys: &[Key],
        (since, until): (NaiveDate, NaiveDate),
        texts: &mut Texts,
        out: &mut CountedInput,
    ) -> Result<(), StoreError> {
        let mut keys = keys.to_vec();
        if q.origin_type.is_some() && !keys.contains(&Key::OriginType) {
            keys.push(Key::OriginType);
        }
        let stress = match q.stress {
            StressKind::Applied => "applied_stress_pa",
            StressKind::Net => "stress_pa",
        };
        let cols = key_columns(&keys);
        let (from, to) = (day(since), day(until));
        let mut params = conds.params();
        params.push(&from);
        params.push(&to);
        // how many, up to the cap, before any is read
        let cap = crate::store::read::stress_cap();
        let sql = format!(
            "SELECT count(*) FROM (SELECT 1 FROM fleet_facts
             WHERE {} AND found_on >= ${} AND found_on <= ${} AND {stress} IS NOT NULL LIMIT {}) x",
            conds.sql(),
            params.len() - 1,
            params.len(),
            cap + 1
        );
        let n: i64 = self.query_with(&sql, &params)?[0].get(0);
        if n.unsigned_abs() > cap {
            out.stresses_over_cap = Some(cap);
            return Ok(());
        }
        let sql = format!(
            "SELECT found_on, {stress}{cols} FROM fleet_facts
             WHERE {} AND found_on >= ${} AND found_on <= ${} AND {stress} IS NOT NULL ORDER BY ord",
            conds.sql(),
            params.len() - 1,
            params.len()
        );
        for r in self.query_with(&sql, &params)? {
            let f = keyed_facts(found_on(&r)?, r.get(1), &keys, &r, 2, texts);
            out.facts.push(f);
            out.counts.push(0);
        }
        Ok(())
    }
}

/// The columns of `keys` after a query's first ones (`, supplier, cause`).
fn key_columns(keys: &[Key]) -> String {
    keys.iter()
        .filter_map(|k| column(*k))
        .map(|c| format!(", {c}"))
        .collect()
}

/// A counted row's date, from its first column (`found_on`).
fn found_on(r: &postgres::Row) -> Result<NaiveDate, StoreError> {
    let text: String = r.get(0);
    crate::store::dates::parse_date(&text).ok_or_else(|| bad_date(&text))
}

/// The facts of a counted row: its date, its stress when given, and the values of `keys`
/// from column `first` on.
fn keyed_facts(
    found: NaiveDate,
    stress_pa: Option<f64>,
    keys: &[Key],
    r: &postgres::Row,
    first: usize,
    texts: &mut Texts,
) -> IncidentFacts {
    let mut f = IncidentFacts {
        found,
        stress_pa,
        ..IncidentFacts::default()
    };
    for (i, k) in keys.iter().enumerate() {
        set(&mut f, *k, texts.get(r.get(i + first)));
    }
    f
}

/// The months and days a date filter covers, for counting: the whole months as a range of
/// month keys (from, inclusive; below, exclusive; either end open), and the days of the
/// months it cuts.
struct Span {
    whole: bool,
    months_from: Option<String>,
    months_below: Option<String>,
    cut: Vec<(NaiveDate, NaiveDate)>,
}

fn month_key(d: NaiveDate) -> String {
    day(d)[..7].to_string()
}

fn span(since: Option<NaiveDate>, until: Option<NaiveDate>) -> Option<Span> {
    use chrono::Datelike;
    let bounds = |d: NaiveDate| month_bounds(d.year(), d.month());
    let mut out = Span {
        whole: true,
        months_from: None,
        months_below: None,
        cut: Vec::new(),
    };
    if let (Some(s), Some(u)) = (since, until) {
        let (start, end) = bounds(s)?;
        if s > u || (u <= end && !(s == start && u == end)) {
            // nothing, or the days of one month
            out.whole = false;
            if s <= u {
                out.cut.push((s, u));
            }
            return Some(out);
        }
    }
    if let Some(s) = since {
        let (start, end) = bounds(s)?;
        if s == start {
            out.months_from = Some(month_key(s));
        } else {
            out.cut.push((s, end));
            out.months_from = Some(month_key(end.succ_opt()?));
        }
    }
    if let Some(u) = until {
        let (start, end) = bounds(u)?;
        if u == end {
            out.months_below = Some(month_key(end.succ_opt()?));
        } else {
            out.cut.push((start, u));
            out.months_below = Some(month_key(u));
        }
    }
    Some(out)
}

impl FleetReader {
    /// How many incidents match `filter`, from the counts by month (whole months) and the
    /// facts (the days of the months the dates cut); None when the filter has what the counts
    /// do not hold (a status, words to search).
    pub(super) fn counted_total(
        &self,
        client: &mut impl postgres::GenericClient,
        filter: &crate::store::Filter,
    ) -> Result<Option<u64>, StoreError> {
        // every field named, so that a new one cannot be left out of the count unnoticed
        let crate::store::Filter {
            status,
            cause,
            origin_type,
            supplier,
            lot,
            site,
            since,
            until,
            text,
            bench,
        } = filter;
        if status.is_some() || text.is_some() {
            return Ok(None);
        }
        let Some(span) = span(*since, *until) else {
            return Ok(None);
        };
        let mut conds = Conditions::default();
        for code in [self.scope(), bench.as_deref()].into_iter().flatten() {
            conds.equal("owner", code);
        }
        match cause.as_deref() {
            Some(crate::store::NO_CAUSE) => conds.texts.push("cause IS NULL".into()),
            Some(c) => conds.equal("cause", c),
            None => {}
        }
        for (col, value) in [
            ("origin_type", origin_type),
            ("supplier", supplier),
            ("lot", lot),
            ("site", site),
        ] {
            if let Some(v) = value {
                conds.equal(col, v);
            }
        }
        let pg = |e: postgres::Error| StoreError::Database(format!("fleet database: {e}"));
        let mut total: i64 = 0;
        if span.whole {
            let mut params = conds.params();
            let mut texts = vec![conds.sql()];
            if let Some(from) = &span.months_from {
                params.push(from);
                texts.push(format!("month >= ${}", params.len()));
            }
            if let Some(below) = &span.months_below {
                params.push(below);
                texts.push(format!("month < ${}", params.len()));
            }
            let sql = format!(
                "SELECT coalesce(sum(n), 0)::bigint FROM fleet_fact_months WHERE {}",
                texts.join(" AND ")
            );
            let n: i64 = client.query_one(&sql, &params).map_err(pg)?.get(0);
            total += n;
        }
        for (first, last) in &span.cut {
            let (from, to) = (day(*first), day(*last));
            let mut params = conds.params();
            params.push(&from);
            params.push(&to);
            let sql = format!(
                "SELECT count(*) FROM fleet_facts WHERE {} AND found_on >= ${} AND found_on <= ${}",
                conds.sql(),
                params.len() - 1,
                params.len()
            );
            let n: i64 = client.query_one(&sql, &params).map_err(pg)?.get(0);
            total += n;
        }
        Ok(Some(total.unsigned_abs()))
    }
}
