//! `shardlog stats`: fleet recurrence and strength statistics over the database.
//!
//! The store gives one flat row per incident and the exposure rows; everything else is
//! `shardlog_core::fleet` (pure). `render` turns the figures into a table or JSON, so it can be
//! tested without a database.

mod soak;
mod text;

pub use text::to_text;

use chrono::NaiveDate;
use serde_json::{json, Value};

use super::weibull::fit_json;
use super::{parse_day, CliError, Context};
use crate::store::read::CountedInput;
use shardlog_core::fleet::query::{
    apply_only, compute, compute_counted, StatsQuery, StatsResult, StressKind,
};
use shardlog_core::fleet::query::{
    METHOD_FLAG, METHOD_GROUP_TREND, METHOD_RATE, METHOD_RATIO, METHOD_SEASON, METHOD_TREND,
};
use shardlog_core::fleet::{Exposure, IncidentFacts, Key};

#[derive(Debug, clap::Args)]
pub struct StatsArgs {
    /// Group by one or two keys: cause, origin-type, supplier, product, lot, site,
    /// asset-type, temper, month, season (e.g. --by cause,supplier).
    #[arg(long, value_name = "KEY[,KEY]", default_value = "cause")]
    pub by: String,
    /// First day of the window (YYYY-MM-DD; default: the earliest incident).
    #[arg(long, value_name = "DATE")]
    pub since: Option<String>,
    /// Last day of the window (YYYY-MM-DD; default: today).
    #[arg(long, value_name = "DATE")]
    pub until: Option<String>,
    /// Rates per 1,000 pane-years with exact intervals, rate ratios and flags.
    #[arg(long)]
    pub rates: bool,
    /// Incidents per month with a trend test, and seasonality by month of year.
    #[arg(long)]
    pub trend: bool,
    /// A Weibull fit of the fracture stresses of each group.
    #[arg(long)]
    pub weibull: bool,
    /// With --weibull: fit this origin type, the other origins censored at their stress
    /// (competing flaw populations, ASTM C1239).
    #[arg(long, value_name = "TYPE")]
    pub origin_type: Option<String>,
    /// Keep only incidents with this value (repeatable), e.g. --only cause=thermal or
    /// --only supplier=KESTREL; a supplier/product/lot/site value also narrows the exposure.
    #[arg(long, value_name = "KEY=VALUE")]
    pub only: Vec<String>,
    /// Which back-calculated stress the Weibull fit uses: applied (net minus residual
    /// stress: the service load at fracture) or net (the mirror's stress at the origin).
    #[arg(long, value_name = "applied|net", default_value = "applied")]
    pub stress: String,
    /// Nickel sulfide practice: heat-soaked lots against lots not soaked (counts, and rates
    /// where exposure of the lots is recorded), and the time in service to breakage of the
    /// nickel sulfide failures (by year in service, with the median).
    #[arg(long)]
    pub heat_soak: bool,
    /// Only the incidents (and panes in service) of this bench (on the fleet database; a
    /// bench file takes only its own code).
    #[arg(long, value_name = "CODE")]
    pub bench: Option<String>,
    /// Print JSON instead of tables.
    #[arg(long)]
    pub json: bool,
}

fn parse_date(flag: &str, text: &str) -> Result<NaiveDate, CliError> {
    parse_day(text).ok_or_else(|| {
        CliError::usage(format!(
            "{flag}: '{}' is not a date; expected YYYY-MM-DD such as 2026-03-14",
            text.trim()
        ))
    })
}

/// Check the arguments of `stats` and make the query.
pub fn query_from_args(a: &StatsArgs) -> Result<StatsQuery, CliError> {
    let keys = Key::parse_list(&a.by).map_err(|e| CliError::usage(format!("--by: {e}")))?;
    let since = a
        .since
        .as_deref()
        .map(|s| parse_date("--since", s))
        .transpose()?;
    let until = a
        .until
        .as_deref()
        .map(|s| parse_date("--until", s))
        .transpose()?;
    if let (Some(s), Some(u)) = (since, until) {
        if s > u {
            return Err(CliError::usage(format!(
                "--since {s} is after --until {u}; the window would be empty"
            )));
        }
    }
    if a.origin_type.is_some() && !a.weibull {
        return Err(CliError::usage(
            "--origin-type chooses the flaw population of the Weibull fit; add --weibull",
        ));
    }
    let stress = match a.stress.trim().to_ascii_lowercase().as_str() {
        "applied" => StressKind::Applied,
        "net" => StressKind::Net,
        other => {
            return Err(CliError::usage(format!(
                "--stress: '{other}' is not applied or net"
            )))
        }
    };
    let mut only = Vec::new();
    for o in &a.only {
        let (k, v) = o.split_once('=').ok_or_else(|| {
            CliError::usage(format!(
                "--only: '{o}' is not KEY=VALUE, e.g. cause=thermal"
            ))
        })?;
        let key = Key::parse(k).map_err(|e| CliError::usage(format!("--only: {e}")))?;
        if key.is_time() {
            return Err(CliError::usage(
                "--only: use --since and --until for dates, not month or season",
            ));
        }
        only.push((key, v.trim().to_string()));
    }
    Ok(StatsQuery {
        keys,
        only,
        stress,
        since,
        until,
        rates: a.rates,
        trend: a.trend,
        weibull: a.weibull,
        origin_type: a.origin_type.clone(),
        json: a.json,
    })
}

fn opt(x: Option<f64>) -> Value {
    match x {
        Some(v) if v.is_finite() => json!(v),
        _ => Value::Null,
    }
}

fn pair(a: f64, b: f64) -> Value {
    json!([opt(Some(a)), opt(Some(b))])
}

/// JSON output.
/// A group's own trend as JSON (the monthly counts line up with the top-level trend's
/// months).
fn group_trend_json(g: &shardlog_core::fleet::GroupTrend) -> Value {
    match &g.trend {
        Ok(tr) => json!({
            "monthly_counts": tr.months.iter().map(|m| m.count).collect::<Vec<_>>(),
            "exposure_basis": tr.basis.name(),
            "ratio_per_year": opt(Some(tr.ratio_per_year)),
            "ratio_per_year_ci95": pair(tr.ratio_ci95.low, tr.ratio_ci95.high),
            "dispersion": tr.dispersion,
            "p_value": tr.p_value,
            "p_adjusted": opt(g.p_adjusted),
            "rising": g.rising,
            "falling": g.falling,
        }),
        Err(e) => json!({ "error": e.to_string() }),
    }
}

pub fn to_json(q: &StatsQuery, r: &StatsResult) -> Value {
    let t = &r.table;
    let groups: Vec<Value> = t
        .rows
        .iter()
        .enumerate()
        .map(|(i, row)| {
            let mut g = json!({
                "key": row.key,
                "count": row.count,
                "share": row.share,
            });
            let m = g.as_object_mut().expect("object literal");
            if q.rates {
                m.insert("pane_years".into(), opt(row.rate.map(|r| r.exposure)));
                m.insert(
                    "rate_per_1000_pane_years".into(),
                    opt(row.rate.map(|r| r.rate)),
                );
                m.insert(
                    "rate_ci95".into(),
                    row.rate
                        .map_or(Value::Null, |r| pair(r.ci95.low, r.ci95.high)),
                );
                m.insert("rate_ratio".into(), opt(row.ratio.map(|r| r.ratio)));
                m.insert("rest_count".into(), json!(row.ratio.map(|r| r.rest_count)));
                m.insert(
                    "rest_pane_years".into(),
                    opt(row.ratio.map(|r| r.rest_exposure)),
                );
                m.insert(
                    "rate_ratio_ci95".into(),
                    row.ratio
                        .map_or(Value::Null, |r| pair(r.ci95.low, r.ci95.high)),
                );
                m.insert("p_value".into(), opt(row.ratio.map(|r| r.p_two_sided)));
                m.insert("p_above".into(), opt(row.ratio.map(|r| r.p_above)));
                m.insert("p_adjusted".into(), opt(row.p_adjusted));
                m.insert("flagged".into(), json!(row.flagged));
            }
            if let Some(gt) = &r.group_trends {
                m.insert(
                    "trend".into(),
                    gt.get(i)
                        .and_then(Option::as_ref)
                        .map_or(Value::Null, group_trend_json),
                );
            }
            if q.weibull {
                m.insert("n_stresses".into(), json!(row.n_stresses));
                m.insert(
                    "weibull".into(),
                    match &row.weibull {
                        Some(Ok(f)) => fit_json(f),
                        Some(Err(e)) => json!({ "error": e.to_string() }),
                        None => Value::Null,
                    },
                );
            }
            g
        })
        .collect();
    let mut out = json!({
        "by": q.keys.iter().map(|k| k.name()).collect::<Vec<_>>(),
        "window": { "since": t.window.since.to_string(), "until": t.window.until.to_string() },
        "total": t.total,
        "only": q.only.iter().map(|(k, v)| json!({ "key": k.name(), "value": v })).collect::<Vec<_>>(),
        "stress": q.stress.name(),
        "groups": groups,
    });
    let m = out.as_object_mut().expect("object literal");
    let mut methods = serde_json::Map::new();
    if q.rates {
        m.insert("total_pane_years".into(), json!(t.total_pane_years));
        m.insert("groups_compared".into(), json!(t.compared));
        methods.insert("rate".into(), json!(METHOD_RATE));
        methods.insert("rate_ratio".into(), json!(METHOD_RATIO));
        methods.insert("flag".into(), json!(METHOD_FLAG));
    }
    if r.group_trends.is_some() {
        methods.insert("group_trend".into(), json!(METHOD_GROUP_TREND));
    }
    if let Some(tr) = &r.trend {
        methods.insert("trend".into(), json!(METHOD_TREND));
        m.insert(
            "trend".into(),
            match tr {
                Ok(tr) => json!({
                    "months": tr.months.iter().map(|mc| json!({
                        "month": mc.label(), "count": mc.count,
                        "days": mc.days, "pane_years": mc.pane_years,
                    })).collect::<Vec<_>>(),
                    "exposure_basis": tr.basis.name(),
                    "ratio_per_year": opt(Some(tr.ratio_per_year)),
                    "ratio_per_year_ci95": pair(tr.ratio_ci95.low, tr.ratio_ci95.high),
                    "dispersion": tr.dispersion,
                    "p_value": tr.p_value,
                    "rising": tr.rising,
                    "falling": tr.falling,
                }),
                Err(e) => json!({ "error": e }),
            },
        );
    }
    if let Some(s) = &r.seasonality {
        methods.insert("seasonality".into(), json!(METHOD_SEASON));
        m.insert(
            "seasonality".into(),
            json!({
                "observed": s.observed,
                "expected": s.expected,
                "chi2": s.chi2,
                "df": s.df,
                "p_value": s.p_value,
                "peak_months": s.peak_months,
            }),
        );
    }
    if let Some(w) = &r.overall_weibull {
        m.insert(
            "weibull_all".into(),
            match w {
                Ok(f) => fit_json(f),
                Err(e) => json!({ "error": e }),
            },
        );
        if let Some(t) = &q.origin_type {
            m.insert("weibull_origin_type".into(), json!(t));
        }
    }
    m.insert("methods".into(), Value::Object(methods));
    out
}

/// Render the statistics as the command prints them.
pub fn render(
    q: &StatsQuery,
    incidents: &[IncidentFacts],
    exposures: &[Exposure],
    today: NaiveDate,
) -> Result<String, CliError> {
    let window = q
        .window(incidents, exposures, today)
        .map_err(CliError::usage)?;
    let r = compute(q, incidents, exposures, window).map_err(CliError::usage)?;
    printed(q, &r)
}

/// Render the statistics of facts counted where they are kept (the same text and JSON as
/// [`render`] of the incidents one by one).
pub fn render_counted(
    q: &StatsQuery,
    c: &CountedInput,
    today: NaiveDate,
) -> Result<String, CliError> {
    let window = q
        .window_from(c.earliest, &c.exposures, today)
        .map_err(CliError::usage)?;
    let r =
        compute_counted(q, &c.facts, &c.counts, &c.exposures, window).map_err(CliError::usage)?;
    printed(q, &r)
}

fn printed(q: &StatsQuery, r: &StatsResult) -> Result<String, CliError> {
    if q.json {
        serde_json::to_string_pretty(&to_json(q, r))
            .map(|s| s + "\n")
            .map_err(|e| CliError::work(format!("JSON output: {e}")))
    } else {
        Ok(to_text(q, r))
    }
}

/// The filter field of a `--only` key (month and season are refused before this).
fn only_field(key: Key) -> Option<super::codes::Field> {
    use super::codes::Field;
    Some(match key {
        Key::Cause => Field::Cause,
        Key::OriginType => Field::OriginType,
        Key::Supplier => Field::Supplier,
        Key::Product => Field::Product,
        Key::Lot => Field::Lot,
        Key::Site => Field::Site,
        Key::AssetType => Field::AssetType,
        Key::Temper => Field::Temper,
        // bench codes are the fleet's own: taken as typed
        Key::Bench | Key::Month | Key::Season => return None,
    })
}

/// Every code the user typed, resolved against the database: `--origin-type` and each
/// `--only KEY=VALUE` take a code or its label in any case (`cause=none` or
/// `cause=(not recorded)` for the incidents without one); anything else is a usage error
/// listing the valid values.
fn resolve_codes(
    store: &dyn crate::store::RecordSource,
    q: &mut StatsQuery,
) -> Result<(), CliError> {
    use super::codes::{resolve, resolve_in, Field};
    if let Some(o) = &q.origin_type {
        q.origin_type = Some(resolve(store, Field::OriginType, "--origin-type", o)?);
    }
    for (key, value) in &mut q.only {
        let Some(field) = only_field(*key) else {
            continue;
        };
        if value.as_str() == shardlog_core::fleet::group::NOT_RECORDED {
            continue;
        }
        let mut choices = field.choices(store)?;
        if field != Field::Cause {
            choices.push(super::codes::Choice {
                code: shardlog_core::fleet::group::NOT_RECORDED.into(),
                label: "none".into(),
            });
        }
        let flag = format!("--only {}", key.name());
        let code = resolve_in(&choices, field, &flag, value)?;
        *value = if code == crate::store::NO_CAUSE && field == Field::Cause {
            shardlog_core::fleet::group::NOT_RECORDED.to_string()
        } else {
            code
        };
    }
    Ok(())
}

/// Lookup codes of the facts (cause, origin type, temper, asset type) replaced by their
/// labels, for the text output; `--origin-type` with them.
fn readable(
    store: &dyn crate::store::RecordSource,
    q: &mut StatsQuery,
    incidents: &mut [IncidentFacts],
) -> Result<(), CliError> {
    use crate::store::LookupKind;
    use std::collections::HashMap;
    use std::rc::Rc;
    let mut labels: HashMap<(LookupKind, String), Rc<str>> = HashMap::new();
    for e in store
        .all_lookups()
        .map_err(|e| CliError::work(e.to_string()))?
    {
        labels.insert((e.kind, e.code), Rc::from(e.label.as_str()));
    }
    let swap = |kind: LookupKind, v: &mut Option<Rc<str>>| {
        if let Some(code) = v.as_deref() {
            if let Some(l) = labels.get(&(kind, code.to_string())) {
                *v = Some(l.clone());
            }
        }
    };
    for f in incidents.iter_mut() {
        swap(LookupKind::CauseCategory, &mut f.cause);
        swap(LookupKind::OriginType, &mut f.origin_type);
        swap(LookupKind::TemperClass, &mut f.temper);
        swap(LookupKind::AssetType, &mut f.asset_type);
    }
    if let Some(o) = &q.origin_type {
        if let Some(l) = labels.get(&(LookupKind::OriginType, o.clone())) {
            q.origin_type = Some(l.to_string());
        }
    }
    Ok(())
}

pub fn run(args: StatsArgs, ctx: &mut Context<'_>) -> Result<(), CliError> {
    let mut q = query_from_args(&args)?;
    let store = super::records::open_records(&ctx.db, args.bench.as_deref())?;
    let store = store.as_ref();
    resolve_codes(store, &mut q)?;
    // The clock is read here, at the edge: the default end of the window is today.
    let today = chrono::Utc::now().date_naive();
    if !args.heat_soak {
        // the fleet database counts where the data is
        let counted = store
            .stats_counted(&q, today)
            .map_err(|e| CliError::work(e.to_string()))?;
        if let Some(mut c) = counted {
            if let Some(cap) = c.stresses_over_cap {
                return Err(CliError::usage(format!(
                    "--weibull on the fleet database reads each fracture stress of the selection, \
                     and this one holds more than {cap}: narrow it (--since and --until, \
                     --only KEY=VALUE, --bench CODE)"
                )));
            }
            if !q.json {
                readable(store, &mut q, &mut c.facts)?;
            }
            let text = render_counted(&q, &c, today)?;
            ctx.out.write_all(text.as_bytes())?;
            return Ok(());
        }
    }
    let (mut incidents, mut exposures) = store
        .stats_input(&q, &[])
        .map_err(|e| CliError::work(e.to_string()))?;
    apply_only(&q, &mut incidents, &mut exposures);
    if !q.json {
        // the text shows the labels people read; --json keeps the codes
        readable(store, &mut q, &mut incidents)?;
    }
    let mut text = render(&q, &incidents, &exposures, today)?;
    if args.heat_soak {
        let window = q
            .window(&incidents, &exposures, today)
            .map_err(CliError::usage)?;
        let c = soak::comparison(store, &exposures, &window)?;
        if q.json {
            let mut v: Value =
                serde_json::from_str(&text).map_err(|e| CliError::work(format!("json: {e}")))?;
            v["heat_soak"] = soak::to_json(&c, &window);
            text = serde_json::to_string_pretty(&v)
                .map_err(|e| CliError::work(format!("json: {e}")))?;
            text.push('\n');
        } else {
            text.push_str(&soak::to_text(&c, &window));
        }
    }
    ctx.out.write_all(text.as_bytes())?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    fn fleet() -> (Vec<IncidentFacts>, Vec<Exposure>) {
        // invented: two suppliers of 2,000 panes each; "Quarry Glass" has a bad lot
        let mut inc = Vec::new();
        for i in 0..40u32 {
            let (sup, lot, cause, origin, stress) = if i % 4 == 0 {
                (
                    "Quarry Glass",
                    "Q-17",
                    "inclusion",
                    "inclusion",
                    20.0 + i as f64,
                )
            } else if i % 2 == 0 {
                (
                    "Quarry Glass",
                    "Q-18",
                    "thermal stress",
                    "edge damage from cutting",
                    30.0 + i as f64,
                )
            } else {
                (
                    "Meadow Float",
                    "M-02",
                    "impact",
                    "impact site",
                    60.0 + (i % 7) as f64 * 9.0,
                )
            };
            inc.push(IncidentFacts {
                supplier: Some(sup.into()),
                lot: Some(lot.into()),
                cause: Some(cause.into()),
                origin_type: Some(origin.into()),
                found: d(2025, 1 + i % 12, 1 + i % 27),
                stress_pa: Some(stress * 1e6),
                ..Default::default()
            });
        }
        let ex = |s: &str, lot: &str, n: f64| Exposure {
            bench: None,
            supplier: Some(s.into()),
            product: None,
            lot: Some(lot.into()),
            site: None,
            panes: n,
            from: d(2024, 1, 1),
            until: None,
        };
        (
            inc,
            vec![
                ex("Quarry Glass", "Q-17", 200.0),
                ex("Quarry Glass", "Q-18", 1800.0),
                ex("Meadow Float", "M-02", 2000.0),
            ],
        )
    }

    fn query(by: &str) -> StatsQuery {
        query_from_args(&StatsArgs {
            by: by.into(),
            since: Some("2025-01-01".into()),
            until: Some("2025-12-31".into()),
            rates: true,
            trend: true,
            weibull: true,
            origin_type: None,
            only: vec![],
            stress: "applied".into(),
            heat_soak: false,
            bench: None,
            json: false,
        })
        .unwrap()
    }

    #[test]
    fn text_names_methods_and_units() {
        let (inc, ex) = fleet();
        let s = render(&query("supplier,lot"), &inc, &ex, d(2026, 1, 1)).unwrap();
        assert!(
            s.contains("Incidents found 2025-01-01 to 2025-12-31: 40"),
            "{s}"
        );
        assert!(s.contains(shardlog_core::fleet::FLAG_WORD), "{s}");
        assert!(s.contains("Holm"), "{s}");
        assert!(s.contains("σθ MPa"), "{s}");
        assert!(s.contains("Poisson regression"), "{s}");
        assert!(
            !s.contains("NaN") && !s.contains("inf]") && !s.contains("inf,"),
            "{s}"
        );
    }

    #[test]
    fn a_group_alone_in_its_stratum_reads_infinity() {
        // inclusion breaks happen only on Quarry Glass: against no events elsewhere
        let (inc, ex) = fleet();
        let s = render(&query("cause,supplier"), &inc, &ex, d(2026, 1, 1)).unwrap();
        assert!(s.contains("∞x"), "{s}");
        assert!(!s.contains("—x"), "{s}");
        let mut q = query("cause,supplier");
        q.json = true;
        let v: Value =
            serde_json::from_str(&render(&q, &inc, &ex, d(2026, 1, 1)).unwrap()).unwrap();
        let g = v["groups"]
            .as_array()
            .unwrap()
            .iter()
            .find(|g| g["key"][0] == "inclusion")
            .unwrap();
        // JSON has no infinity: the ratio is null and the rest's count says why
        assert!(g["rate_ratio"].is_null());
        assert_eq!(g["rest_count"], 0);
        assert_eq!(g["flagged"], true);
    }

    #[test]
    fn json_groups_have_the_issue_fields() {
        let (inc, ex) = fleet();
        let mut q = query("lot");
        q.json = true;
        let v: Value =
            serde_json::from_str(&render(&q, &inc, &ex, d(2026, 1, 1)).unwrap()).unwrap();
        let g = &v["groups"][0];
        for f in [
            "key",
            "count",
            "share",
            "rate_per_1000_pane_years",
            "rate_ci95",
            "rate_ratio",
            "p_value",
            "weibull",
        ] {
            assert!(g.get(f).is_some(), "missing {f}: {g}");
        }
        // 20 of 40 on lot M-02 (largest first)
        assert_eq!(g["key"][0], "M-02");
        assert_eq!(g["count"], 20);
        assert!((g["share"].as_f64().unwrap() - 0.5).abs() < 1e-15);
        // lot Q-17: 10 breaks on 200 panes against 30 on 3,800: flagged
        let q17 = v["groups"]
            .as_array()
            .unwrap()
            .iter()
            .find(|g| g["key"][0] == "Q-17")
            .unwrap();
        assert_eq!(q17["flagged"], true);
        assert!(q17["weibull"]["modulus"].as_f64().unwrap() > 0.0);
    }

    #[test]
    fn usage_errors() {
        let a = |by: &str, since: Option<&str>, origin: Option<&str>, weibull: bool| StatsArgs {
            by: by.into(),
            since: since.map(String::from),
            until: Some("2025-12-31".into()),
            rates: false,
            trend: false,
            weibull,
            origin_type: origin.map(String::from),
            only: vec![],
            stress: "applied".into(),
            heat_soak: false,
            bench: None,
            json: false,
        };
        for args in [
            a("colour", None, None, false),
            a("cause,cause", None, None, false),
            a("cause", Some("2025-13-01"), None, false),
            a("cause", Some("2026-01-01"), None, false),
            a("cause", None, Some("inclusion"), false),
        ] {
            let e = query_from_args(&args).unwrap_err();
            assert_eq!(e.exit_code(), 2, "{e}");
        }
    }

    #[test]
    fn trend_by_group_in_json_and_text() {
        let (inc, ex) = fleet();
        let mut q = query("supplier");
        q.json = true;
        let v: Value =
            serde_json::from_str(&render(&q, &inc, &ex, d(2026, 1, 1)).unwrap()).unwrap();
        let months = v["trend"]["months"].as_array().unwrap().len();
        assert_eq!(months, 12);
        for g in v["groups"].as_array().unwrap() {
            let t = &g["trend"];
            let counts = t["monthly_counts"].as_array().unwrap();
            assert_eq!(counts.len(), months, "{g}");
            let sum: u64 = counts.iter().map(|c| c.as_u64().unwrap()).sum();
            assert_eq!(Some(sum), g["count"].as_u64(), "{g}");
            assert!(t["p_adjusted"].as_f64().unwrap() >= t["p_value"].as_f64().unwrap());
            assert!(t["rising"].is_boolean() && t["ratio_per_year"].is_number());
        }
        assert!(v["methods"]["group_trend"]
            .as_str()
            .unwrap()
            .contains("Holm"));
        // the text has the table
        q.json = false;
        let s = render(&q, &inc, &ex, d(2026, 1, 1)).unwrap();
        assert!(s.contains("Trend by group"), "{s}");
        assert!(s.contains("x per year"), "{s}");
        // grouped by month there is no per-group trend (a group is one month)
        let mut q = query("month");
        q.json = true;
        let v: Value =
            serde_json::from_str(&render(&q, &inc, &ex, d(2026, 1, 1)).unwrap()).unwrap();
        assert!(v["groups"][0].get("trend").is_none());
        assert!(v["methods"].get("group_trend").is_none());
    }
}
