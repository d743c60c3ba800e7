//! Nickel sulfide practice: breakage of heat-soaked lots (EN 14179-1) against lots not
//! soaked, and the time in service to breakage of the inclusion failures. Spontaneous
//! breakage from nickel sulfide stones clusters in the first years of service, so the
//! distribution is given by whole year in service, with its median.

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

use super::group::{pane_years, Exposure, Window};
use super::rates::{rate_per_1000, Rate};

/// A lot's heat-soak record as the comparison sees it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum SoakClass {
    Soaked,
    NotSoaked,
    /// No heat-soak record, or no lot.
    Unknown,
}

impl SoakClass {
    pub const ALL: [SoakClass; 3] = [SoakClass::Soaked, SoakClass::NotSoaked, SoakClass::Unknown];

    pub fn label(self) -> &'static str {
        match self {
            SoakClass::Soaked => "heat-soaked lots",
            SoakClass::NotSoaked => "lots not soaked",
            SoakClass::Unknown => "not recorded",
        }
    }
}

/// One incident as the comparison needs it.
#[derive(Debug, Clone, PartialEq)]
pub struct SoakFacts {
    pub class: SoakClass,
    /// Its cause is a nickel sulfide inclusion.
    pub nickel_sulfide: bool,
    /// The day the pane was installed, if recorded.
    pub installed_on: Option<NaiveDate>,
    /// The day it broke (else the day it was found).
    pub broke_on: NaiveDate,
}

/// One class of lots: how many lots, incidents, nickel sulfide incidents, and the rate of
/// the latter per 1,000 pane-years when exposure of those lots is recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct SoakRow {
    pub class: SoakClass,
    pub lots: usize,
    pub incidents: u64,
    pub nickel_sulfide: u64,
    /// Pane-years of the exposure rows of these lots within the window (None: no row).
    pub pane_years: Option<f64>,
    /// Nickel sulfide incidents per 1,000 pane-years, with its exact 95 % interval.
    pub rate: Option<Rate>,
}

/// Time in service to breakage of the nickel sulfide incidents that have an install date.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ServiceTime {
    /// Incidents with an install date on or before the breakage.
    pub count: u64,
    /// Nickel sulfide incidents with no install date (or one after the breakage).
    pub without_install_date: u64,
    /// Median time in service, years (365.25 days).
    pub median_years: Option<f64>,
    /// (whole years in service, count): year 0 is the first year.
    pub by_year: Vec<(u32, u64)>,
}

/// The comparison of soaked and unsoaked lots and the service time of the inclusion failures.
#[derive(Debug, Clone, PartialEq)]
pub struct SoakComparison {
    pub rows: Vec<SoakRow>,
    pub service: ServiceTime,
}

/// Compare the classes. `lots` gives each lot's class (supplier, product, lot code);
/// `exposure` is matched to lots by (supplier, product, lot) and counted within `window`.
pub fn compare(
    facts: &[SoakFacts],
    lots: &[((String, String, String), SoakClass)],
    exposure: &[Exposure],
    window: &Window,
) -> SoakComparison {
    let rows = SoakClass::ALL
        .iter()
        .map(|&class| {
            let of_class = facts.iter().filter(|f| f.class == class);
            let incidents = of_class.clone().count() as u64;
            let nickel_sulfide = of_class.filter(|f| f.nickel_sulfide).count() as u64;
            let lots_of_class: Vec<&(String, String, String)> = lots
                .iter()
                .filter(|(_, c)| *c == class)
                .map(|(k, _)| k)
                .collect();
            let mut any = false;
            let mut years = 0.0;
            if class != SoakClass::Unknown {
                for e in exposure {
                    let (Some(s), Some(p), Some(l)) = (&e.supplier, &e.product, &e.lot) else {
                        continue;
                    };
                    if lots_of_class
                        .iter()
                        .any(|(ls, lp, ll)| ls == s && lp == p && ll == l)
                    {
                        any = true;
                        years += pane_years(e, window.since, window.until);
                    }
                }
            }
            let pane_years = any.then_some(years);
            SoakRow {
                class,
                lots: lots_of_class.len(),
                incidents,
                nickel_sulfide,
                pane_years,
                rate: pane_years.and_then(|y| rate_per_1000(nickel_sulfide, y)),
            }
        })
        .collect();
    let mut days = Vec::new();
    let mut without = 0u64;
    for f in facts.iter().filter(|f| f.nickel_sulfide) {
        match f.installed_on {
            Some(i) if i <= f.broke_on => days.push((f.broke_on - i).num_days()),
            _ => without += 1,
        }
    }
    SoakComparison {
        rows,
        service: service_time(&days, without),
    }
}

/// The distribution of times in service given in days.
pub fn service_time(days: &[i64], without_install_date: u64) -> ServiceTime {
    const DAYS_PER_YEAR: f64 = 365.25;
    let mut years: Vec<f64> = days.iter().map(|&d| d as f64 / DAYS_PER_YEAR).collect();
    years.sort_by(f64::total_cmp);
    let median_years = match years.len() {
        0 => None,
        n if n % 2 == 1 => Some(years[n / 2]),
        n => Some((years[n / 2 - 1] + years[n / 2]) / 2.0),
    };
    let mut by_year: Vec<(u32, u64)> = Vec::new();
    for y in &years {
        let whole = y.floor() as u32;
        match by_year.last_mut() {
            Some((w, n)) if *w == whole => *n += 1,
            _ => by_year.push((whole, 1)),
        }
    }
    ServiceTime {
        count: years.len() as u64,
        without_install_date,
        median_years,
        by_year,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    #[test]
    fn the_median_and_the_years_in_service_are_counted_from_the_install_date() {
        // computed: 100, 400, 800 and 1200 days are 0.27, 1.10, 2.19 and 3.29 years;
        // the median of four is the mean of the middle two, (400 + 800) / 2 / 365.25 = 1.643
        let s = service_time(&[800, 100, 1200, 400], 2);
        assert_eq!(s.count, 4);
        assert_eq!(s.without_install_date, 2);
        assert!((s.median_years.unwrap() - 1.6427).abs() < 1e-3);
        assert_eq!(s.by_year, vec![(0, 1), (1, 1), (2, 1), (3, 1)]);
        let odd = service_time(&[10, 20, 400], 0);
        assert!((odd.median_years.unwrap() - 20.0 / 365.25).abs() < 1e-9);
        assert_eq!(odd.by_year, vec![(0, 2), (1, 1)]);
        assert_eq!(service_time(&[], 0).median_years, None);
    }

    #[test]
    fn classes_count_their_lots_incidents_and_rate_over_their_exposure() {
        let lots = vec![
            (("S".into(), "P".into(), "A".into()), SoakClass::Soaked),
            (("S".into(), "P".into(), "B".into()), SoakClass::NotSoaked),
        ];
        let f = |class, nis, inst: Option<NaiveDate>| SoakFacts {
            class,
            nickel_sulfide: nis,
            installed_on: inst,
            broke_on: d(2025, 6, 1),
        };
        let facts = vec![
            f(SoakClass::Soaked, false, None),
            f(SoakClass::NotSoaked, true, Some(d(2024, 5, 1))),
            f(SoakClass::NotSoaked, true, None),
            f(SoakClass::Unknown, true, Some(d(2026, 1, 1))),
        ];
        let exposure = vec![Exposure {
            bench: None,
            supplier: Some("S".into()),
            product: Some("P".into()),
            lot: Some("B".into()),
            site: None,
            panes: 1000.0,
            from: d(2024, 1, 1),
            until: None,
        }];
        let window = Window {
            since: d(2025, 1, 1),
            until: d(2025, 12, 31),
        };
        let c = compare(&facts, &lots, &exposure, &window);
        let soaked = &c.rows[0];
        assert_eq!(
            (soaked.lots, soaked.incidents, soaked.nickel_sulfide),
            (1, 1, 0)
        );
        assert_eq!(soaked.pane_years, None);
        let not = &c.rows[1];
        assert_eq!((not.lots, not.incidents, not.nickel_sulfide), (1, 2, 2));
        // computed: 1000 panes × 365 days / 365.25 = 999.3 pane-years; 2 / 999.3 × 1000 = 2.0
        let r = not.rate.as_ref().unwrap();
        assert!((r.exposure - 999.32).abs() < 0.01, "{}", r.exposure);
        assert!((r.rate - 2.001).abs() < 0.001, "{}", r.rate);
        // an install date after the breakage is not a time in service
        assert_eq!(c.service.count, 1);
        assert_eq!(c.service.without_install_date, 2);
        assert_eq!(c.service.by_year, vec![(1, 1)]);
    }
}
