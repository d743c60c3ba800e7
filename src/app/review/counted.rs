//! The fleet review from the counts the fleet database keeps (`RecordSource::stats_counted`:
//! incidents counted by bench, month and key values, the days of a month the window cuts,
//! and the fracture stresses of the window one by one), not from every incident's facts:
//! the same figures as the review of the same records one by one.

use chrono::{Datelike, NaiveDate};

use super::{by_cause, finish, last_12_months, Computed, ReviewData, WindowChoice};
use crate::store::RecordSource;
use shardlog_core::fleet::query::{self, StatsQuery};
use shardlog_core::fleet::{monthly_counts, Key};

/// The review of `q` over the window `choice` from the counts, or None when the records are
/// not counted where they are kept (a bench file) or a key is one the counts do not hold.
pub(super) fn compute(
    store: &dyn RecordSource,
    q: &StatsQuery,
    choice: WindowChoice,
    today: NaiveDate,
) -> Result<Option<ReviewData>, String> {
    // the cause of every counted row too (the bar chart), and only the window's months
    let mut read = q.clone();
    if !read.keys.contains(&Key::Cause) {
        read.keys.push(Key::Cause);
    }
    let fixed = match choice {
        WindowChoice::Last12 => {
            let w = last_12_months(today)?;
            read.since = Some(w.since);
            read.until = Some(w.until);
            Some(w)
        }
        WindowChoice::All => None,
    };
    let Some(c) = store
        .stats_counted(&read, today)
        .map_err(|e| e.to_string())?
    else {
        return Ok(None);
    };
    let window = match fixed {
        Some(w) => w,
        None => q.window_from(c.earliest, &c.exposures, today)?,
    };
    let result = query::compute_counted(q, &c.facts, &c.counts, &c.exposures, window)?;
    let causes =
        shardlog_core::fleet::group_counted(&c.facts, &c.counts, &c.exposures, &by_cause(window))
            .map_err(|e| e.to_string())?;
    // every month of the window, then each counted row added to its month
    let mut months = monthly_counts(&[], &c.exposures, &window);
    let mut in_window: u64 = 0;
    let mut stresses = Vec::new();
    let first = months.first().map(|m| (m.year, m.month));
    for (f, &n) in c.facts.iter().zip(&c.counts) {
        if !window.contains(f.found) {
            continue;
        }
        if n == 0 {
            // a row of count 0 brings one incident's fracture stress
            stresses.extend(f.stress_pa);
            continue;
        }
        in_window += n;
        if let Some((y0, m0)) = first {
            let at = (f.found.year() - y0) * 12 + f.found.month() as i32 - m0 as i32;
            if let Some(m) = usize::try_from(at).ok().and_then(|i| months.get_mut(i)) {
                m.count += n;
            }
        }
    }
    // with the stresses left unread, none is known to be missing
    let without_stress = match c.stresses_over_cap {
        Some(_) => 0,
        None => usize::try_from(in_window)
            .map_err(|_| format!("{in_window} incidents in the window"))?
            .saturating_sub(stresses.len()),
    };
    Ok(Some(finish(
        store,
        choice,
        Computed {
            window,
            result,
            causes,
            months,
            stresses,
            without_stress,
            exposures: c.exposures,
            from_counts: true,
            stresses_over_cap: c.stresses_over_cap,
        },
    )))
}
