//! The cover's figures: incidents by cause and lot, the rates against the other suppliers,
//! the claimed lot against the rest of the fleet, and the Weibull comparison of strengths.

use std::collections::{BTreeMap, HashMap};
use std::rc::Rc;

use super::{
    BundleError, Count, Cover, DisputeOptions, Excluded, LotRate, LotRateRow, RateRow,
    VerdictCounts, WeibullRow,
};
use crate::report::source::Labels;
use crate::store::{self, ReportSource};
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

/// Whether a fleet incident is of the kind the claim is about (its causes, its origin type).
fn claim_matches(opts: &DisputeOptions, f: &fleet::IncidentFacts) -> bool {
    let cause_ok = opts.causes.is_empty()
        || opts.causes.iter().any(|c| match f.cause.as_deref() {
            Some(x) => x == c,
            None => c == store::NO_CAUSE,
        });
    let origin_ok = match &opts.origin_type {
        None => true,
        Some(o) => f.origin_type.as_deref() == Some(o.as_str()),
    };
    cause_ok && origin_ok
}

pub(super) fn cover(
    s: &dyn ReportSource,
    labels: &Labels,
    sup: &store::Supplier,
    opts: &DisputeOptions,
    selected: &[store::Incident],
) -> Result<Cover, BundleError> {
    let mut notes = Vec::new();
    let cause_label = |code: Option<&str>| match code {
        Some(c) if c != store::NO_CAUSE => labels.lookup(store::LookupKind::CauseCategory, c),
        _ => NO_CAUSE_LABEL.to_string(),
    };
    let cause_of = |i: &store::Incident| cause_label(i.cause.as_ref().map(|c| c.category.as_str()));
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
    // with a cause or origin selection, suppliers are compared on that kind of breakage only
    let narrowed: Vec<fleet::IncidentFacts>;
    let compared: &[fleet::IncidentFacts] = if opts.causes.is_empty() && opts.origin_type.is_none()
    {
        &fleet.facts
    } else {
        narrowed = fleet
            .facts
            .iter()
            .filter(|f| claim_matches(opts, f))
            .cloned()
            .collect();
        &narrowed
    };
    let table = fleet::group(
        compared,
        &fleet.exposures,
        &fleet::GroupOptions {
            keys: vec![fleet::Key::Supplier],
            window: fleet.window,
            rates: true,
            weibull: false,
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
    let rates = supplier_rows(&table, labels, sup);
    let window = fleet.window;
    let lot_rate = match &opts.lot {
        Some(lot) => lot_rate(
            fleet.facts.clone(),
            &fleet.exposures,
            window,
            sup,
            lot,
            labels,
            &opts.causes,
        )?,
        None => None,
    };
    let claim_name = match &opts.lot {
        Some(lot) => format!("{} lot {lot}", labels.supplier_name(&sup.code)),
        None => labels.supplier_name(&sup.code),
    };
    let weibull = weibull_rows(
        labels,
        &claim_name,
        selected,
        &fleet.facts,
        sup,
        opts,
        &cause_label,
    );
    let stresses: Vec<f64> = selected
        .iter()
        .filter_map(|i| i.current_result())
        .filter_map(|(_, r)| r.applied_stress_pa)
        .filter(|v| v.is_finite())
        .collect();
    let skipped = stresses.iter().filter(|v| **v <= 0.0).count();
    if skipped > 0 {
        notes.push(format!(
            "{skipped} incident{} with an applied stress of zero or less (residual compression \
             larger than the stress at the origin) are left out of the Weibull fit.",
            if skipped == 1 { "" } else { "s" }
        ));
    }
    let excluded = excluded(s, labels, sup, opts, selected.len() as u64, &cause_label)?;
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
        excluded,
        verdicts: verdict_counts(selected),
        notes,
    })
}

/// The label of the lot's row over every cause.
pub(super) const ALL_CAUSES: &str = "all causes";

/// How the incidents without a cause are named on the cover.
pub(super) const NO_CAUSE_LABEL: &str = "no cause recorded yet";

/// With a cause or origin selection: what the claim is about and, by cause, the incidents
/// of the supplier (lot, window) it left out.
fn excluded(
    s: &dyn ReportSource,
    labels: &Labels,
    sup: &store::Supplier,
    opts: &DisputeOptions,
    kept: u64,
    cause_label: &dyn Fn(Option<&str>) -> String,
) -> Result<Option<Excluded>, BundleError> {
    if opts.causes.is_empty() && opts.origin_type.is_none() {
        return Ok(None);
    }
    let every = store::Filter {
        supplier: Some(sup.code.clone()),
        lot: opts.lot.clone(),
        since: opts.since,
        until: opts.until,
        ..store::Filter::default()
    };
    let mut before = 0u64;
    let mut left_out: BTreeMap<String, u64> = BTreeMap::new();
    for cause in s.causes_matching(&every)? {
        before += 1;
        let cause_ok = opts.causes.is_empty()
            || opts.causes.iter().any(|c| match cause.as_deref() {
                Some(x) => x == c,
                None => c == store::NO_CAUSE,
            });
        if !cause_ok {
            *left_out.entry(cause_label(cause.as_deref())).or_default() += 1;
        }
    }
    // incidents of a claimed cause left out by the origin type
    let by_cause: u64 = left_out.values().sum();
    let by_origin = before.saturating_sub(kept).saturating_sub(by_cause);
    let mut left_out = counts_from(left_out);
    if by_origin > 0 {
        left_out.push(Count {
            label: "of a claimed cause, another origin type".into(),
            count: by_origin,
        });
    }
    Ok(Some(Excluded {
        claimed_causes: opts.causes.iter().map(|c| cause_label(Some(c))).collect(),
        origin_type: opts
            .origin_type
            .as_deref()
            .map(|o| labels.lookup(store::LookupKind::OriginType, o)),
        before,
        left_out,
    }))
}

fn counts_from(m: BTreeMap<String, u64>) -> Vec<Count> {
    let mut v: Vec<Count> = m
        .into_iter()
        .map(|(label, count)| Count { label, count })
        .collect();
    v.sort_by(|a, b| b.count.cmp(&a.count).then(a.label.cmp(&b.label)));
    v
}

/// The saved hypothesis verdicts of the selected incidents, counted once per incident (the
/// load hypothesis when there is one, else the thermal one).
fn verdict_counts(selected: &[store::Incident]) -> VerdictCounts {
    let mut v = VerdictCounts::default();
    for i in selected {
        let Some((_, r)) = i.current_result() else {
            continue;
        };
        let hs = store::bench_record::saved_hypotheses(r);
        let Some(h) = hs.iter().rev().find(|h| h.verdict.is_some()).or(hs.last()) else {
            continue;
        };
        v.with_hypothesis += 1;
        match h.finding.as_deref() {
            Some("consistent") => v.consistent += 1,
            Some("too weak") => v.too_weak += 1,
            Some("far too strong") => v.far_too_strong += 1,
            _ => {}
        }
        match h.sound_part_survives {
            Some(true) => v.sound_pane_survives += 1,
            Some(false) => v.sound_pane_breaks += 1,
            None => {}
        }
    }
    v
}

/// The smallest number of stresses a Weibull fit is made from.
pub(super) const MIN_FIT: usize = 3;

/// One Weibull population per cause: the claim's incidents by cause, then each other
/// supplier's incidents of the same causes (only those with enough stresses to fit). Causes
/// are flaw populations; fitting two as one gives a meaningless modulus.
#[allow(clippy::too_many_arguments)]
fn weibull_rows(
    labels: &Labels,
    claim_name: &str,
    selected: &[store::Incident],
    facts: &[fleet::IncidentFacts],
    sup: &store::Supplier,
    opts: &DisputeOptions,
    cause_label: &dyn Fn(Option<&str>) -> String,
) -> Vec<WeibullRow> {
    let mut claim: BTreeMap<Option<String>, Vec<f64>> = BTreeMap::new();
    for i in selected {
        let stress = i
            .current_result()
            .and_then(|(_, r)| r.applied_stress_pa)
            .filter(|v| v.is_finite() && *v > 0.0);
        let entry = claim
            .entry(i.cause.as_ref().map(|c| c.category.clone()))
            .or_default();
        if let Some(v) = stress {
            entry.push(v);
        }
    }
    // the same causes at the other suppliers
    let mut others: BTreeMap<(Option<String>, String), Vec<f64>> = BTreeMap::new();
    for f in facts {
        let (Some(s), Some(v)) = (f.supplier.as_deref(), f.stress_pa) else {
            continue;
        };
        let cause = f.cause.as_deref().map(String::from);
        if s == sup.code || !claim.contains_key(&cause) || !claim_matches(opts, f) {
            continue;
        }
        others.entry((cause, s.to_string())).or_default().push(v);
    }
    // the claim's causes with stresses, the most stresses first; each followed by the same
    // cause at the other suppliers (those with enough stresses to fit)
    let mut causes: Vec<(&Option<String>, &Vec<f64>)> =
        claim.iter().filter(|(_, v)| !v.is_empty()).collect();
    causes.sort_by(|a, b| b.1.len().cmp(&a.1.len()).then(a.0.cmp(b.0)));
    let mut rows = Vec::new();
    for (cause, values) in causes {
        let label = cause_label(cause.as_deref());
        rows.push(population_row(
            format!("{claim_name} · {label}"),
            true,
            values,
        ));
        for ((c, s), v) in others.range((cause.clone(), String::new())..) {
            if c != cause {
                break;
            }
            if v.len() < MIN_FIT {
                continue;
            }
            rows.push(population_row(
                format!("{} · {label}", labels.supplier_name(s)),
                false,
                v,
            ));
        }
    }
    rows
}

/// A population's Weibull row: its fit when it has at least [`MIN_FIT`] stresses, else the
/// count and why there is no fit.
fn population_row(group: String, claimed: bool, values: &[f64]) -> WeibullRow {
    if values.len() < MIN_FIT {
        return WeibullRow {
            group,
            claimed,
            n: values.len(),
            modulus: None,
            modulus_ci95: None,
            scale_mpa: None,
            scale_ci95_mpa: None,
            points: Vec::new(),
            note: Some(format!(
                "not fitted: {} stress{} (a fit needs at least {MIN_FIT})",
                values.len(),
                if values.len() == 1 { "" } else { "es" }
            )),
            bounds_by: None,
        };
    }
    weibull_row(group, claimed, &fleet::fit_values(values), values.len())
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
    fn load(s: &dyn ReportSource, opts: &DisputeOptions) -> Result<Self, BundleError> {
        let mut keys = vec![fleet::Key::Supplier, fleet::Key::Cause];
        if opts.lot.is_some() {
            keys.push(fleet::Key::Lot);
        }
        if opts.origin_type.is_some() {
            keys.push(fleet::Key::OriginType);
        }
        let mut facts = s.facts_in_window(
            opts.since,
            opts.until,
            shardlog_core::fleet::StressKind::Applied,
            &keys,
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

/// One rate row per supplier of the fleet table.
fn supplier_rows(
    table: &fleet::GroupTable,
    labels: &Labels,
    sup: &store::Supplier,
) -> Vec<RateRow> {
    let mut rates = Vec::new();
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
            supplier: name,
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
    }
    rates
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
            bounds_by: Some(if f.modulus_bounds_method == f.scale_bounds_method {
                f.modulus_bounds_method.short().to_string()
            } else {
                format!(
                    "{} (modulus), {} (strength)",
                    f.modulus_bounds_method.short(),
                    f.scale_bounds_method.short()
                )
            }),
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
            bounds_by: None,
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
    claimed_causes: &[String],
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
        claimed: false,
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
    let mut rows = vec![row_of(ALL_CAUSES.into(), own, all.total)];
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
            .unwrap_or_else(|| NO_CAUSE_LABEL.into());
        let mut row = row_of(label, r, stratum);
        row.claimed = claimed_causes.iter().any(|c| match cause.as_deref() {
            Some(x) => x == c,
            None => c == store::NO_CAUSE,
        });
        rows.push(row);
    }
    // the claimed causes lead, in the order they were given; then all causes, then the rest
    if !claimed_causes.is_empty() {
        let position = |r: &LotRateRow| {
            if r.claimed {
                0
            } else if r.cause == ALL_CAUSES {
                1
            } else {
                2
            }
        };
        rows.sort_by_key(position);
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
