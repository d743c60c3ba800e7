//! The cover's figures: incidents by cause and lot, the rates against the other suppliers,
//! the claimed lot against the rest of the fleet, and the Weibull comparison of strengths.

use std::collections::{BTreeMap, HashMap};
use std::rc::Rc;

use super::{BundleError, Count, Cover, DisputeOptions, LotRate, LotRateRow, RateRow, WeibullRow};
use crate::report::source::Labels;
use crate::store::{self, Store};
use shardlog_core::fleet;

fn counts(items: impl Iterator<Item = String>) -> Vec<Count> {
    let mut m: BTreeMap<String, u64> = BTreeMap::new();
    for i in items {
        *m.entry(i).or_default() += 1;
    }
    let mut v: Vec<Count> = m
        .into_iter()
        .map(|(label, count)| Count { label, count })
        .collect();
    v.sort_by(|a, b| b.count.cmp(&a.count).then(a.label.cmp(&b.label)));
    v
}

fn interval(i: fleet::Interval) -> Option<[f64; 2]> {
    (i.low.is_finite() && i.high.is_finite()).then_some([i.low, i.high])
}

fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

pub(super) fn cover(
    s: &Store,
    labels: &Labels,
    sup: &store::Supplier,
    opts: &DisputeOptions,
    selected: &[store::Incident],
) -> Result<Cover, BundleError> {
    let mut notes = Vec::new();
    let cause_of = |i: &store::Incident| {
        i.cause
            .as_ref()
            .map(|c| labels.lookup(store::LookupKind::CauseCategory, &c.category))
            .unwrap_or_else(|| "cause not yet assigned".into())
    };
    let lot_of = |i: &store::Incident| {
        i.glass
            .lot
            .clone()
            .unwrap_or_else(|| "lot not recorded".into())
    };
    let by_cause = counts(selected.iter().map(cause_of));
    let by_lot = counts(selected.iter().map(lot_of));
    let by_lot_cause = counts(
        selected
            .iter()
            .map(|i| format!("{} · {}", lot_of(i), cause_of(i))),
    );
    let fleet = FleetInWindow::load(s, opts)?;
    let table = fleet::group(
        &fleet.facts,
        &fleet.exposures,
        &fleet::GroupOptions {
            keys: vec![fleet::Key::Supplier],
            window: fleet.window,
            rates: true,
            weibull: true,
            origin_type: None,
            flag_level: 0.05,
        },
    )
    .map_err(|e| BundleError::Usage(e.to_string()))?;
    if table.total_pane_years <= 0.0 {
        notes.push(
            "No panes in service are recorded for this window, so no rates per pane-year \
             could be computed; the comparison below is by counts and strengths only."
                .into(),
        );
    }
    let (rates, mut weibull) = supplier_rows(&table, labels, sup, opts.lot.is_some());
    let window = fleet.window;
    let lot_rate = match &opts.lot {
        Some(lot) => lot_rate(fleet.facts, &fleet.exposures, window, sup, lot, labels)?,
        None => None,
    };
    // with a lot, the claimed group is the lot itself
    let stresses: Vec<f64> = selected
        .iter()
        .filter_map(|i| i.current_result())
        .filter_map(|(_, r)| r.applied_stress_pa)
        .filter(|v| v.is_finite())
        .collect();
    if let Some(lot) = &opts.lot {
        let positive: Vec<f64> = stresses.iter().copied().filter(|v| *v > 0.0).collect();
        if !positive.is_empty() {
            let fit = fleet::fit_values(&positive);
            weibull.insert(
                0,
                weibull_row(
                    format!("{} lot {lot}", labels.supplier_name(&sup.code)),
                    true,
                    &fit,
                    positive.len(),
                ),
            );
        }
    }
    weibull.sort_by_key(|w| !w.claimed);
    let skipped = stresses.iter().filter(|v| **v <= 0.0).count();
    if skipped > 0 {
        notes.push(format!(
            "{skipped} incident{} with an applied stress of zero or less (residual compression \
             larger than the stress at the origin) are left out of the Weibull fit.",
            if skipped == 1 { "" } else { "s" }
        ));
    }
    Ok(Cover {
        window_since: window.since,
        window_until: window.until,
        incidents: selected.len() as u64,
        by_cause,
        by_lot,
        by_lot_cause,
        rates,
        rates_compared: table.compared,
        lot_rate,
        weibull,
        stresses_mpa: stresses.iter().map(|v| v / 1e6).collect(),
        notes,
    })
}

/// The whole fleet in the window, for the comparison with other suppliers.
struct FleetInWindow {
    facts: Vec<fleet::IncidentFacts>,
    exposures: Vec<fleet::Exposure>,
    window: fleet::Window,
}

impl FleetInWindow {
    /// The narrow copy of the facts, with only the keys the comparison groups by (the
    /// supplier; with a lot, the lot and the cause too), and only positive applied stresses
    /// (the Weibull fit takes no others). The window runs from `--since` (else the earliest
    /// date recorded) to `--until` (else today).
    fn load(s: &Store, opts: &DisputeOptions) -> Result<Self, BundleError> {
        let keys: &[fleet::Key] = match opts.lot {
            Some(_) => &[fleet::Key::Supplier, fleet::Key::Lot, fleet::Key::Cause],
            None => &[fleet::Key::Supplier],
        };
        let mut facts = s.fleet_facts(
            opts.since,
            opts.until,
            shardlog_core::fleet::StressKind::Applied,
            Some(keys),
        )?;
        let exposure = s.exposure()?;
        let earliest = facts
            .iter()
            .map(|f| f.found)
            .chain(exposure.iter().map(|e| e.installed_on))
            .min()
            .unwrap_or(opts.today);
        let since = opts.since.unwrap_or(earliest);
        let until = opts.until.unwrap_or(opts.today).max(since);
        let window =
            fleet::Window::new(since, until).map_err(|e| BundleError::Usage(e.to_string()))?;
        for f in &mut facts {
            f.stress_pa = f.stress_pa.filter(|v| v.is_finite() && *v > 0.0);
        }
        let exposures = exposure.iter().map(|e| e.to_fleet()).collect();
        Ok(Self {
            facts,
            exposures,
            window,
        })
    }
}

/// One rate row per supplier of the fleet table, and its Weibull row (with a lot, the
/// claimed supplier's Weibull row is left out: the lot's own fit stands for the claim).
fn supplier_rows(
    table: &fleet::GroupTable,
    labels: &Labels,
    sup: &store::Supplier,
    with_lot: bool,
) -> (Vec<RateRow>, Vec<WeibullRow>) {
    let mut rates = Vec::new();
    let mut weibull = Vec::new();
    for row in &table.rows {
        let code = match row.values.first() {
            Some(fleet::GroupValue::Text(Some(c))) => Some(c.clone()),
            _ => None,
        };
        let claimed = code.as_deref() == Some(sup.code.as_str());
        let name = code
            .as_deref()
            .map(|c| labels.supplier_name(c))
            .unwrap_or_else(|| "supplier not recorded".into());
        rates.push(RateRow {
            supplier: name.clone(),
            claimed,
            incidents: row.count,
            pane_years: row.rate.as_ref().map(|r| r.exposure),
            rate_per_1000: row.rate.as_ref().and_then(|r| finite(r.rate)),
            rate_ci95: row.rate.as_ref().and_then(|r| interval(r.ci95)),
            ratio: row.ratio.as_ref().and_then(|r| finite(r.ratio)),
            ratio_ci95: row.ratio.as_ref().and_then(|r| interval(r.ci95)),
            p_above: row.ratio.as_ref().and_then(|r| finite(r.p_above)),
            p_adjusted: row.p_adjusted.and_then(finite),
            flagged: row.flagged,
        });
        if let Some(fit) = &row.weibull {
            if !(claimed && with_lot) {
                weibull.push(weibull_row(name, claimed, fit, row.n_stresses));
            }
        }
    }
    (rates, weibull)
}

/// The Weibull row of one group: its fit in MPa and its plotted points, or why there is none.
fn weibull_row(
    name: String,
    claimed: bool,
    fit: &Result<fleet::WeibullFit, fleet::WeibullError>,
    n: usize,
) -> WeibullRow {
    match fit {
        Ok(f) => WeibullRow {
            group: name,
            claimed,
            n,
            modulus: finite(f.modulus),
            modulus_ci95: interval(f.modulus_ci95),
            scale_mpa: finite(f.scale / 1e6),
            scale_ci95_mpa: interval(f.scale_ci95).map(|[a, b]| [a / 1e6, b / 1e6]),
            points: f
                .plot
                .iter()
                .filter(|p| p.stress.is_finite() && p.probability.is_finite())
                .map(|p| [p.stress / 1e6, p.probability])
                .collect(),
            note: None,
        },
        Err(e) => WeibullRow {
            group: name,
            claimed,
            n,
            modulus: None,
            modulus_ci95: None,
            scale_mpa: None,
            scale_ci95_mpa: None,
            points: Vec::new(),
            note: Some(format!("no fit: {e}")),
        },
    }
}

/// The claimed lot's rates against every other supplier × lot. Lot codes may repeat across
/// suppliers, so the lot key is made "supplier/lot" before grouping (in place: the facts are
/// not needed afterwards); `None` when the lot has no panes in service recorded.
fn lot_rate(
    mut facts: Vec<fleet::IncidentFacts>,
    exposures: &[fleet::Exposure],
    window: fleet::Window,
    sup: &store::Supplier,
    lot: &str,
    labels: &Labels,
) -> Result<Option<LotRate>, BundleError> {
    let joined = |s: Option<&str>, l: Option<&str>| match (s, l) {
        (Some(s), Some(l)) => Some(format!("{s}/{l}")),
        _ => None,
    };
    // a fleet has few supplier × lot pairs: make each joined text once and share it
    let mut made: HashMap<(Rc<str>, Rc<str>), Rc<str>> = HashMap::new();
    for f in &mut facts {
        f.lot = match (&f.supplier, f.lot.take()) {
            (Some(s), Some(l)) => Some(
                made.entry((s.clone(), l))
                    .or_insert_with_key(|(s, l)| format!("{s}/{l}").into())
                    .clone(),
            ),
            _ => None,
        };
    }
    let exposures: Vec<fleet::Exposure> = exposures
        .iter()
        .map(|e| {
            let mut e = e.clone();
            e.lot = joined(e.supplier.as_deref(), e.lot.as_deref());
            e
        })
        .collect();
    let key = format!("{}/{lot}", sup.code);
    let group = |keys: Vec<fleet::Key>| {
        fleet::group(
            &facts,
            &exposures,
            &fleet::GroupOptions {
                keys,
                window,
                rates: true,
                weibull: false,
                origin_type: None,
                flag_level: 0.05,
            },
        )
        .map_err(|e| BundleError::Usage(e.to_string()))
    };
    let text = |v: Option<&fleet::GroupValue>| match v {
        Some(fleet::GroupValue::Text(Some(c))) => Some(c.to_string()),
        _ => None,
    };
    let all = group(vec![fleet::Key::Lot])?;
    let Some(own) = all
        .rows
        .iter()
        .find(|r| text(r.values.first()).as_deref() == Some(&key))
    else {
        return Ok(None);
    };
    let Some(own_rate) = &own.rate else {
        return Ok(None);
    };
    let pane_years = own_rate.exposure;
    let rest_pane_years = all.total_pane_years - pane_years;
    let per_1000 = |n: u64| (rest_pane_years > 0.0).then(|| n as f64 / rest_pane_years * 1000.0);
    let row_of = |cause: String, r: &fleet::GroupRow, stratum: u64| LotRateRow {
        cause,
        incidents: r.count,
        rate_per_1000: r.rate.as_ref().and_then(|x| finite(x.rate)),
        rate_ci95: r.rate.as_ref().and_then(|x| interval(x.ci95)),
        rest_incidents: stratum.saturating_sub(r.count),
        rest_rate_per_1000: per_1000(stratum.saturating_sub(r.count)),
        ratio: r.ratio.as_ref().and_then(|x| finite(x.ratio)),
        ratio_ci95: r.ratio.as_ref().and_then(|x| interval(x.ci95)),
        p_adjusted: r.p_adjusted.and_then(finite),
        flagged: r.flagged,
    };
    let mut rows = vec![row_of("all causes".into(), own, all.total)];
    let by_cause = group(vec![fleet::Key::Cause, fleet::Key::Lot])?;
    for r in &by_cause.rows {
        if text(r.values.get(1)).as_deref() != Some(&key) {
            continue;
        }
        let cause = text(r.values.first());
        let stratum: u64 = by_cause
            .rows
            .iter()
            .filter(|o| text(o.values.first()) == cause)
            .map(|o| o.count)
            .sum();
        let label = cause
            .as_deref()
            .map(|c| labels.lookup(store::LookupKind::CauseCategory, c))
            .unwrap_or_else(|| "cause not yet assigned".into());
        rows.push(row_of(label, r, stratum));
    }
    Ok(Some(LotRate {
        lot: lot.to_string(),
        rows,
        compared_all: all.compared,
        compared_by_cause: by_cause.compared,
        pane_years,
        rest_pane_years,
    }))
}
