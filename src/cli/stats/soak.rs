//! `stats --heat-soak`: nickel sulfide breakage of heat-soaked lots against lots not soaked
//! (EN 14179-1), and the time in service to breakage of the inclusion failures.

use serde_json::{json, Value};
use shardlog_core::fleet::group::Window;
use shardlog_core::fleet::heat_soak::{compare, SoakComparison};
use shardlog_core::fleet::Exposure;
use shardlog_core::units::fmt_sig;

use super::super::CliError;
use crate::store::RecordSource;

/// The comparison over `window`, the exposure matched to lots.
pub fn comparison(
    store: &dyn RecordSource,
    exposures: &[Exposure],
    window: &Window,
) -> Result<SoakComparison, CliError> {
    let (facts, lots) = store
        .soak_input(Some(window.since), Some(window.until))
        .map_err(|e| CliError::work(e.to_string()))?;
    Ok(compare(&facts, &lots, exposures, window))
}

/// The section as text: a table of the classes, then the service-time distribution.
pub fn to_text(c: &SoakComparison, window: &Window) -> String {
    let mut out = format!(
        "\nNickel sulfide and heat-soak (EN 14179-1), incidents found {} to {}\n",
        window.since, window.until
    );
    out.push_str(&format!(
        "  {:<18} {:>5} {:>10} {:>8} {:>12}  {}\n",
        "lots", "lots", "incidents", "NiS", "pane-years", "NiS per 1,000 pane-years (95 %)"
    ));
    for r in &c.rows {
        let years = r
            .pane_years
            .map(|y| fmt_sig(y, 4))
            .unwrap_or_else(|| "—".into());
        let rate = match &r.rate {
            Some(rt) => format!(
                "{} /1000 pane-years ({} – {})",
                fmt_sig(rt.rate, 3),
                fmt_sig(rt.ci95.low, 3),
                fmt_sig(rt.ci95.high, 3)
            ),
            None => "no exposure recorded".into(),
        };
        out.push_str(&format!(
            "  {:<18} {:>5} {:>10} {:>8} {:>12}  {}\n",
            r.class.label(),
            r.lots,
            r.incidents,
            r.nickel_sulfide,
            years,
            rate
        ));
    }
    let s = &c.service;
    out.push_str("\nTime in service to breakage, nickel sulfide failures\n");
    if s.count == 0 {
        out.push_str("  no nickel sulfide failure has an install date\n");
    } else {
        let median = s.median_years.map(|m| fmt_sig(m, 3)).unwrap_or_default();
        out.push_str(&format!(
            "  {} with an install date; median {median} years in service\n",
            s.count
        ));
        for (y, n) in &s.by_year {
            out.push_str(&format!(
                "  year {:>2} in service ({y} to {} years): {n:>4} {}\n",
                y + 1,
                y + 1,
                "█".repeat((*n).min(40) as usize)
            ));
        }
    }
    if s.without_install_date > 0 {
        out.push_str(&format!(
            "  {} without an install date (not counted above)\n",
            s.without_install_date
        ));
    }
    out.push_str(
        "  Spontaneous breakage from nickel sulfide stones clusters in the first years of \
         service; a heat-soak test lowers, but does not remove, the risk.\n",
    );
    out
}

/// The section as JSON.
pub fn to_json(c: &SoakComparison, window: &Window) -> Value {
    let rows: Vec<Value> = c
        .rows
        .iter()
        .map(|r| {
            json!({
                "class": format!("{:?}", r.class).to_lowercase(),
                "lots": r.lots,
                "incidents": r.incidents,
                "nickel_sulfide": r.nickel_sulfide,
                "pane_years": r.pane_years,
                "rate_per_1000_pane_years": r.rate.as_ref().map(|x| x.rate),
                "rate_ci95": r.rate.as_ref().map(|x| [x.ci95.low, x.ci95.high]),
            })
        })
        .collect();
    json!({
        "since": window.since.to_string(),
        "until": window.until.to_string(),
        "classes": rows,
        "service_time": {
            "count": c.service.count,
            "without_install_date": c.service.without_install_date,
            "median_years": c.service.median_years,
            "by_year": c.service.by_year.iter().map(|(y, n)| json!({"years_in_service": y, "count": n})).collect::<Vec<_>>(),
        },
    })
}
