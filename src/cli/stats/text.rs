//! The plain-text tables of `shardlog stats`: the groups, rates, trends, seasonality and
//! Weibull fits, laid out in columns.

use shardlog_core::fleet::query::{StatsQuery, StatsResult};
use shardlog_core::fleet::query::{
    METHOD_FLAG, METHOD_GROUP_TREND, METHOD_RATE, METHOD_RATIO, METHOD_SEASON, METHOD_TREND,
};
use shardlog_core::fleet::{GroupTable, GroupTrend, Seasonality, Trend};
use shardlog_core::text::{clean, pad_left, pad_right, width};
use shardlog_core::units::{fmt_sig, Unit};

use crate::cli::weibull::fit_table;

/// A ratio or bound for the table: "∞" when the rest had no events.
fn fmt_ratio(x: f64) -> String {
    if x == f64::INFINITY {
        "∞".to_string()
    } else {
        fmt_sig(x, 3)
    }
}

/// "p = 0.03" or "p < 0.0001".
fn p_eq(p: f64) -> String {
    if p < 0.0001 {
        "p < 0.0001".to_string()
    } else {
        format!("p = {}", fmt_sig(p, 2))
    }
}

fn fmt_p(p: f64) -> String {
    if p < 0.0001 {
        "<0.0001".to_string()
    } else {
        fmt_sig(p, 2)
    }
}

/// Lay out rows of cells as columns (first `left` columns left-aligned, the rest right).
fn columns(header: &[String], rows: &[Vec<String>], left: usize) -> String {
    let n = header.len();
    let mut w = vec![0usize; n];
    for r in std::iter::once(header).chain(rows.iter().map(|r| r.as_slice())) {
        for (i, c) in r.iter().enumerate().take(n) {
            w[i] = w[i].max(width(c));
        }
    }
    let mut s = String::new();
    for r in std::iter::once(header).chain(rows.iter().map(|r| r.as_slice())) {
        let line: Vec<String> = r
            .iter()
            .enumerate()
            .take(n)
            .map(|(i, c)| {
                if i < left {
                    pad_right(c, w[i])
                } else {
                    pad_left(c, w[i])
                }
            })
            .collect();
        s.push_str("  ");
        s.push_str(line.join("  ").trim_end());
        s.push('\n');
    }
    s
}

/// Plain-text output.
pub fn to_text(q: &StatsQuery, r: &StatsResult) -> String {
    let t = &r.table;
    let mut s = String::new();
    let by: Vec<&str> = q.keys.iter().map(|k| k.name()).collect();
    let only: Vec<String> = q
        .only
        .iter()
        .map(|(k, v)| format!("{}={}", k.name(), clean(v)))
        .collect();
    s.push_str(&format!(
        "Incidents found {} to {}{}: {} (grouped by {})\n\n",
        t.window.since,
        t.window.until,
        if only.is_empty() {
            String::new()
        } else {
            format!(", only {}", only.join(", "))
        },
        t.total,
        by.join(", ")
    ));
    s.push_str(&count_table(q, t, &by));
    if q.rates {
        s.push_str(&rate_notes(t));
    }
    if let Some(tr) = &r.trend {
        s.push_str(&trend_text(tr));
    }
    if let Some(gt) = &r.group_trends {
        s.push_str(&group_trend_table(q, t, gt, &by));
    }
    if let Some(se) = &r.seasonality {
        s.push_str(&seasonality_text(se));
    }
    if q.weibull {
        s.push_str(&weibull_text(q, r, &by));
    }
    s
}

/// The groups with their counts and shares (and, with --rates, rates and ratios).
fn count_table(q: &StatsQuery, t: &GroupTable, by: &[&str]) -> String {
    let mut s = String::new();
    if t.rows.is_empty() {
        s.push_str("  no incidents in the window\n");
    }
    let mut header: Vec<String> = by.iter().map(|b| b.to_string()).collect();
    header.push("count".into());
    header.push("share".into());
    let with_rates = q.rates && t.total_pane_years > 0.0;
    if with_rates {
        for h in ["pane-yr", "rate", "95 % CI", "vs rest", "95 % CI", "p", ""] {
            header.push(h.into());
        }
    }
    let rows: Vec<Vec<String>> = t
        .rows
        .iter()
        .map(|row| {
            let mut c: Vec<String> = row.key.iter().map(|k| clean(k)).collect();
            c.push(row.count.to_string());
            c.push(format!("{:.1} %", row.share * 100.0));
            if with_rates {
                match row.rate {
                    Some(rt) => {
                        c.push(fmt_sig(rt.exposure, 4));
                        c.push(fmt_sig(rt.rate, 3));
                        c.push(format!(
                            "[{}, {}]",
                            fmt_sig(rt.ci95.low, 3),
                            fmt_sig(rt.ci95.high, 3)
                        ));
                    }
                    None => {
                        c.push("no exposure".into());
                        c.push("—".into());
                        c.push("".into());
                    }
                }
                match row.ratio {
                    Some(rr) => {
                        c.push(if rr.ratio.is_nan() {
                            "—".to_string()
                        } else {
                            format!("{}x", fmt_ratio(rr.ratio))
                        });
                        c.push(format!(
                            "[{}, {}]",
                            fmt_ratio(rr.ci95.low),
                            fmt_ratio(rr.ci95.high)
                        ));
                        c.push(fmt_p(rr.p_two_sided));
                        c.push(if row.flagged {
                            shardlog_core::fleet::FLAG_WORD.into()
                        } else {
                            "".into()
                        });
                    }
                    None => {
                        c.extend(["—".to_string(), "".into(), "".into(), "".into()]);
                    }
                }
            }
            c
        })
        .collect();
    if !t.rows.is_empty() {
        s.push_str(&columns(&header, &rows, q.keys.len()));
    }
    s
}

/// What the rates mean and how they were computed.
fn rate_notes(t: &GroupTable) -> String {
    let mut s = String::new();
    s.push('\n');
    if t.total_pane_years > 0.0 {
        s.push_str(&format!(
            "  rate = incidents per 1,000 pane-years; exposure {} pane-years in the window\n",
            fmt_sig(t.total_pane_years, 4)
        ));
        s.push_str(&format!(
            "  rates: {METHOD_RATE}\n  vs rest: {METHOD_RATIO}\n"
        ));
        if t.compared > 0 {
            s.push_str(&format!(
                "  {}: {METHOD_FLAG} ({} groups)\n",
                shardlog_core::fleet::FLAG_WORD,
                t.compared
            ));
        } else {
            s.push_str(
                "  vs rest: not given when no key is supplier, product, lot, site, month or season (every group has the same exposure)\n",
            );
        }
    } else {
        s.push_str("  rates: no exposure rows (panes in service) in the window, so no rates\n");
    }
    s
}

/// Incidents per month with the trend over the whole window.
fn trend_text(tr: &Result<Trend, String>) -> String {
    let mut s = String::new();
    s.push_str("\nIncidents per month\n");
    match tr {
        Ok(tr) => {
            let max = tr.months.iter().map(|m| m.count).max().unwrap_or(0).max(1);
            for mc in &tr.months {
                let bar = "#".repeat(((mc.count as f64 / max as f64) * 40.0).round() as usize);
                s.push_str(&format!("  {}  {:>6}  {bar}\n", mc.label(), mc.count));
            }
            let verdict = if tr.rising {
                "RISING"
            } else if tr.falling {
                "falling"
            } else {
                "no significant trend"
            };
            s.push_str(&format!(
                "  trend: rate x{} per year (95 % CI [{}, {}]), {}: {verdict}\n",
                fmt_sig(tr.ratio_per_year, 3),
                fmt_sig(tr.ratio_ci95.low, 3),
                fmt_sig(tr.ratio_ci95.high, 3),
                p_eq(tr.p_value)
            ));
            s.push_str(&format!(
                "  method: {METHOD_TREND}; exposure per month in {}; dispersion {}\n",
                tr.basis.name(),
                fmt_sig(tr.dispersion, 3)
            ));
        }
        Err(e) => s.push_str(&format!("  trend: not estimated: {e}\n")),
    }
    s
}

/// Each group's own trend.
fn group_trend_table(
    q: &StatsQuery,
    t: &GroupTable,
    gt: &[Option<GroupTrend>],
    by: &[&str],
) -> String {
    let mut s = String::new();
    s.push_str("\nTrend by group\n");
    let mut header: Vec<String> = by.iter().map(|b| b.to_string()).collect();
    for h in ["count", "x per year", "95 % CI", "p", "p adj", ""] {
        header.push(h.into());
    }
    let rows: Vec<Vec<String>> = t
        .rows
        .iter()
        .zip(gt)
        .map(|(row, g)| {
            let mut c: Vec<String> = row.key.iter().map(|k| clean(k)).collect();
            c.push(row.count.to_string());
            match g {
                Some(GroupTrend {
                    trend: Ok(tr),
                    p_adjusted,
                    rising,
                    falling,
                }) => {
                    c.push(fmt_sig(tr.ratio_per_year, 3));
                    c.push(format!(
                        "[{}, {}]",
                        fmt_sig(tr.ratio_ci95.low, 3),
                        fmt_sig(tr.ratio_ci95.high, 3)
                    ));
                    c.push(fmt_p(tr.p_value));
                    c.push(p_adjusted.map_or(String::new(), fmt_p));
                    c.push(if *rising {
                        "RISING".into()
                    } else if *falling {
                        "falling".into()
                    } else {
                        String::new()
                    });
                }
                Some(GroupTrend { trend: Err(e), .. }) => {
                    c.push(format!("not estimated: {e}"));
                }
                None => c.push("—".into()),
            }
            c
        })
        .collect();
    if !rows.is_empty() {
        s.push_str(&columns(&header, &rows, q.keys.len()));
    }
    s.push_str(&format!("  method: {METHOD_GROUP_TREND}\n"));
    s
}

/// Incidents by month of year against what the exposure leads one to expect.
fn seasonality_text(se: &Seasonality) -> String {
    let mut s = String::new();
    const NAMES: [&str; 12] = [
        "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
    ];
    s.push_str("\nBy month of year (observed / expected from exposure)\n  ");
    for (i, n) in NAMES.iter().enumerate() {
        s.push_str(&format!(
            "{n} {}/{}{}",
            se.observed[i],
            fmt_sig(se.expected[i], 2),
            if i == 5 {
                "\n  "
            } else if i < 11 {
                "  "
            } else {
                "\n"
            }
        ));
    }
    let peaks: Vec<&str> = se
        .peak_months
        .iter()
        .map(|m| NAMES[(*m - 1) as usize])
        .collect();
    s.push_str(&format!(
        "  seasonality: chi-square {} on {} df, {}{}; peak {}\n  method: {METHOD_SEASON}\n",
        fmt_sig(se.chi2, 3),
        se.df,
        p_eq(se.p_value),
        if se.p_value < 0.05 {
            ": months differ"
        } else {
            ": no significant pattern"
        },
        if peaks.is_empty() || peaks.len() > 3 {
            "none".to_string()
        } else {
            peaks.join(", ")
        }
    ));
    s
}

/// The Weibull fit of each group's stresses, then of all groups together.
fn weibull_text(q: &StatsQuery, r: &StatsResult, by: &[&str]) -> String {
    let t = &r.table;
    let mut s = String::new();
    s.push_str(&format!(
        "\nStrength (Weibull fit of back-calculated {} stress at fracture{})\n",
        q.stress.name(),
        match &q.origin_type {
            Some(o) => format!("; origin type '{}', other origins censored", clean(o)),
            None => String::new(),
        }
    ));
    let mut header: Vec<String> = by.iter().map(|b| b.to_string()).collect();
    for h in [
        "stresses", "censored", "m", "95 % CI", "σθ MPa", "95 % CI", "A*",
    ] {
        header.push(h.into());
    }
    let mut rows = Vec::new();
    let mut notes = Vec::new();
    let mut push =
        |rows: &mut Vec<Vec<String>>,
         label: Vec<String>,
         n: usize,
         w: Option<Result<&shardlog_core::fleet::WeibullFit, String>>| {
            let mut c = label.clone();
            c.push(n.to_string());
            match w {
                Some(Ok(f)) => {
                    c.push(f.n_censored.to_string());
                    c.push(fmt_sig(f.modulus, 3));
                    c.push(format!(
                        "[{}, {}]",
                        fmt_sig(f.modulus_ci95.low, 3),
                        fmt_sig(f.modulus_ci95.high, 3)
                    ));
                    let u = Unit::Megapascal;
                    c.push(fmt_sig(u.from_si(f.scale), 3));
                    c.push(format!(
                        "[{}, {}]",
                        fmt_sig(u.from_si(f.scale_ci95.low), 3),
                        fmt_sig(u.from_si(f.scale_ci95.high), 3)
                    ));
                    c.push(f.anderson_darling.map_or("—".to_string(), |a| {
                        format!(
                            "{}{}",
                            fmt_sig(a.a2_modified, 2),
                            if a.rejected_at_5pct { " poor fit" } else { "" }
                        )
                    }));
                }
                Some(Err(e)) => {
                    c.push("no fit".into());
                    let who: Vec<&str> = label
                        .iter()
                        .map(String::as_str)
                        .filter(|l| !l.is_empty())
                        .collect();
                    notes.push(format!("  no fit for {}: {e}\n", who.join(" / ")));
                }
                None => c.push("no stresses".into()),
            }
            rows.push(c);
        };
    for row in &t.rows {
        let w = row
            .weibull
            .as_ref()
            .map(|r| r.as_ref().map_err(|e| e.to_string()));
        push(
            &mut rows,
            row.key.iter().map(|k| clean(k)).collect(),
            row.n_stresses,
            w,
        );
    }
    let mut all_label = vec!["all".to_string()];
    all_label.resize(q.keys.len(), String::new());
    let n_all: usize = t.rows.iter().map(|r| r.n_stresses).sum();
    push(
        &mut rows,
        all_label,
        n_all,
        r.overall_weibull
            .as_ref()
            .map(|w| w.as_ref().map_err(String::clone)),
    );
    s.push_str(&columns(&header, &rows, q.keys.len()));
    for n in &notes {
        s.push_str(&clean(n.trim_end()));
        s.push('\n');
    }
    if let Some(Ok(f)) = &r.overall_weibull {
        s.push_str("\n  all groups together:\n");
        s.push_str(&fit_table(f, Unit::Megapascal, "    "));
    }
    s.push_str(&crate::cli::weibull::method_notes("  "));
    s
}
