//! Facts counted where they are kept (a row per cell, with its count) give the very figures
//! the incidents one by one give: the same counts, shares, rates, flags, trends and, from the
//! stress rows in the same order, the same Weibull fits.

use std::collections::BTreeMap;
use std::rc::Rc;

use chrono::{Datelike, NaiveDate};

use super::group::month_bounds;
use super::query::{compute, compute_counted, StatsQuery, StatsResult, StressKind};
use super::{Exposure, IncidentFacts, Key};

fn d(y: i32, m: u32, day: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, day).unwrap()
}

/// Invented: 600 incidents over 2024-2025 at two sites, three suppliers, four causes; one
/// in three with a fracture stress.
fn incidents() -> Vec<IncidentFacts> {
    let causes = ["thermal", "impact", "inclusion", "edge"];
    let suppliers = ["ALDER", "BIRCH", "CEDAR"];
    let mut out = Vec::new();
    let mut x: u64 = 7;
    for i in 0..600u64 {
        x = x
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let r = (x >> 33) as usize;
        let found = d(2024, 1, 1) + chrono::Days::new((r % 730) as u64);
        let cause = (r / 7 % 5 < 4).then(|| Rc::from(causes[r / 7 % 5 % 4]));
        out.push(IncidentFacts {
            cause,
            origin_type: Some(Rc::from(if r.is_multiple_of(3) {
                "edge"
            } else {
                "surface"
            })),
            supplier: Some(Rc::from(suppliers[r / 11 % 3])),
            site: Some(Rc::from(if i % 2 == 0 { "YARD-A" } else { "YARD-B" })),
            found,
            stress_pa: (r % 3 == 1).then_some((20.0 + (r % 97) as f64) * 1e6),
            ..Default::default()
        });
    }
    out
}

fn exposures() -> Vec<Exposure> {
    ["ALDER", "BIRCH", "CEDAR"]
        .iter()
        .enumerate()
        .map(|(i, s)| Exposure {
            supplier: Some(s.to_string()),
            product: None,
            lot: None,
            site: None,
            panes: 1000.0 * (i + 1) as f64,
            from: d(2023, 6, 1),
            until: None,
            bench: None,
        })
        .collect()
}

/// The cells a store would give: whole months of the window counted by month (dated the
/// month's first day inside the window), the days of a month the window cuts counted by day,
/// and the incidents with a stress as rows of count 0, in their order.
fn counted(
    all: &[IncidentFacts],
    since: NaiveDate,
    until: NaiveDate,
) -> (Vec<IncidentFacts>, Vec<u64>) {
    type CellKey = (NaiveDate, Option<Rc<str>>, Option<Rc<str>>, Option<Rc<str>>);
    let mut cells: BTreeMap<CellKey, u64> = BTreeMap::new();
    for f in all.iter().filter(|f| f.found >= since && f.found <= until) {
        let (first, last) = month_bounds(f.found.year(), f.found.month()).unwrap();
        let whole = first >= since && last <= until;
        let date = if whole { first } else { f.found };
        let key = (
            date,
            f.cause.clone(),
            f.supplier.clone(),
            f.origin_type.clone(),
        );
        *cells.entry(key).or_default() += 1;
    }
    let mut facts = Vec::new();
    let mut counts = Vec::new();
    for ((found, cause, supplier, origin_type), n) in cells {
        facts.push(IncidentFacts {
            cause,
            supplier,
            origin_type,
            found,
            ..Default::default()
        });
        counts.push(n);
    }
    for f in all.iter().filter(|f| f.stress_pa.is_some()) {
        facts.push(f.clone());
        counts.push(0);
    }
    (facts, counts)
}

fn shown(r: &StatsResult) -> String {
    format!(
        "{:?}\n{:?}\n{:?}\n{:?}\n{:?}",
        r.table, r.trend, r.seasonality, r.overall_weibull, r.group_trends
    )
}

#[test]
fn counted_cells_give_the_figures_of_the_incidents_one_by_one() {
    let all = incidents();
    let ex = exposures();
    let today = d(2026, 1, 15);
    for (keys, since, until, weibull, trend) in [
        (vec![Key::Cause, Key::Supplier], None, None, false, false),
        (
            vec![Key::Supplier],
            Some(d(2024, 3, 17)),
            Some(d(2025, 8, 9)),
            true,
            true,
        ),
        (vec![Key::Month], Some(d(2024, 2, 10)), None, false, false),
        (
            vec![Key::Season, Key::Cause],
            None,
            Some(d(2025, 6, 20)),
            true,
            false,
        ),
        (vec![Key::Cause], None, None, true, true),
    ] {
        let q = StatsQuery {
            keys: keys.clone(),
            since,
            until,
            rates: true,
            trend,
            weibull,
            origin_type: weibull.then(|| "edge".to_string()),
            only: vec![],
            stress: StressKind::Applied,
            json: true,
        };
        let window = q.window(&all, &ex, today).unwrap();
        let earliest = all
            .iter()
            .map(|f| f.found)
            .filter(|f| *f <= window.until)
            .min();
        assert_eq!(q.window_from(earliest, &ex, today), Ok(window), "{keys:?}");
        let one_by_one = compute(&q, &all, &ex, window).unwrap();
        let (facts, counts) = counted(&all, window.since, window.until);
        assert!(
            counts.iter().any(|&n| n > 1),
            "no cell counts several incidents"
        );
        let by_cells = compute_counted(&q, &facts, &counts, &ex, window).unwrap();
        assert!(one_by_one.table.total > 300, "{}", one_by_one.table.total);
        assert_eq!(shown(&by_cells), shown(&one_by_one), "{keys:?}");
    }
    // counts that do not line up with the rows are refused
    let q = StatsQuery {
        keys: vec![Key::Cause],
        since: None,
        until: None,
        rates: false,
        trend: false,
        weibull: false,
        origin_type: None,
        only: vec![],
        stress: StressKind::Applied,
        json: true,
    };
    let window = q.window(&all, &ex, today).unwrap();
    assert!(compute_counted(&q, &all, &[1, 2], &ex, window).is_err());
}
