//! What makes an incident's content valid: lookup codes known, numbers finite, measured
//! values matching their text, keys unique.

use std::collections::HashSet;

use chrono::{DateTime, NaiveDate, Utc};

use crate::store::dates::{date_in_range, out_of_range_message};
use crate::store::model::*;
use crate::store::Store;

/// A date within the range the store keeps (what it writes, it must read back).
fn in_range(problems: &mut Vec<(String, String)>, field: &str, d: Option<NaiveDate>) {
    if let Some(d) = d {
        if !date_in_range(d) {
            problems.push((field.to_string(), out_of_range_message(d)));
        }
    }
}

/// A time whose day is within the range the store keeps.
fn time_in_range(problems: &mut Vec<(String, String)>, field: &str, t: DateTime<Utc>) {
    if !date_in_range(t.date_naive()) {
        problems.push((field.to_string(), out_of_range_message(t.to_rfc3339())));
    }
}

fn finite(problems: &mut Vec<(String, String)>, field: &str, x: Option<f64>) {
    if let Some(v) = x {
        if !v.is_finite() {
            problems.push((field.to_string(), "must be a finite number".into()));
        }
    }
}

fn positive(problems: &mut Vec<(String, String)>, field: &str, x: Option<f64>) {
    if let Some(v) = x {
        if !v.is_finite() || v <= 0.0 {
            problems.push((field.to_string(), "must be a positive finite number".into()));
        }
    }
}

/// Check a measured value: its text and unit must parse to its SI value.
fn check_measured(
    problems: &mut Vec<(String, String)>,
    field: &str,
    m: &Measured,
    dim: shardlog_core::units::Dimension,
) {
    let typed = format!("{} {}", m.text, m.unit);
    match shardlog_core::units::parse_with_unit(&typed, dim) {
        Err(e) => problems.push((field.to_string(), e.to_string())),
        Ok((si, _)) => {
            if !(m.si.is_finite() && (si - m.si).abs() <= 1e-9 * si.abs().max(1e-300)) {
                problems.push((
                    field.to_string(),
                    format!("the SI value {} does not match \"{typed}\"", m.si),
                ));
            } else if si <= 0.0 {
                problems.push((field.to_string(), "must be greater than zero".into()));
            }
        }
    }
}

pub(super) type Lookups = crate::store::refdata::LookupSet;

fn check_code(
    lookups: &Lookups,
    problems: &mut Vec<(String, String)>,
    field: &str,
    kind: LookupKind,
    code: Option<&str>,
) {
    if let Some(c) = code {
        if !lookups.contains(kind.as_str(), c) {
            problems.push((
                field.to_string(),
                format!("unknown {} code \"{c}\"", kind.as_str().replace('_', " ")),
            ));
        }
    }
}

/// Every problem with an incident's content, as (field path, what is wrong).
pub(crate) fn validate(lookups: &Lookups, inc: &Incident) -> Vec<(String, String)> {
    let mut p = Vec::new();
    check_record(lookups, &mut p, inc);
    // keys of examinations, custody entries and attachments: unique across all three
    let mut ids = HashSet::new();
    check_examinations(lookups, &mut p, &mut ids, inc);
    check_custody_and_attachments(lookups, &mut p, &mut ids, inc);
    p
}

/// The incident's own fields: dates, sizes, glass, fracture pattern and cause.
fn check_record(lookups: &Lookups, p: &mut Vec<(String, String)>, inc: &Incident) {
    check_code(lookups, p, "status", LookupKind::Status, Some(&inc.status));
    check_code(
        lookups,
        p,
        "glass.makeup",
        LookupKind::Makeup,
        Some(&inc.glass.makeup),
    );
    in_range(p, "found_on", Some(inc.found_on));
    in_range(p, "broken_on", inc.broken_on);
    in_range(p, "installed_on", inc.installed_on);
    if let Some(i) = inc.installed_on {
        if i > inc.broken_on.unwrap_or(inc.found_on) {
            p.push((
                "installed_on".into(),
                "is after the pane broke (or was found)".into(),
            ));
        }
    }
    time_in_range(p, "created_at", inc.created_at);
    time_in_range(p, "updated_at", inc.updated_at);
    if let Some(b) = inc.broken_on {
        if b > inc.found_on {
            p.push(("broken_on".into(), "is after the date found".into()));
        }
    }
    finite(
        p,
        "environment.temperature_c",
        inc.environment.temperature_c,
    );
    positive(p, "glass.width_m", inc.glass.width_m);
    positive(p, "glass.height_m", inc.glass.height_m);
    if inc.glass.product.is_some() && inc.glass.supplier.is_none() {
        p.push((
            "glass.product".into(),
            "a product needs its supplier".into(),
        ));
    }
    if inc.glass.lot.is_some() && inc.glass.product.is_none() {
        p.push(("glass.lot".into(), "a lot needs its product".into()));
    }
    for (i, ply) in inc.glass.plies.iter().enumerate() {
        let f = format!("glass.plies[{i}]");
        check_code(
            lookups,
            p,
            &format!("{f}.material"),
            LookupKind::Material,
            ply.material.as_deref(),
        );
        check_code(
            lookups,
            p,
            &format!("{f}.temper"),
            LookupKind::TemperClass,
            ply.temper.as_deref(),
        );
        positive(p, &format!("{f}.thickness_m"), ply.thickness_m);
    }
    for (name, v) in [
        ("pattern.crack_count", inc.pattern.crack_count),
        ("pattern.fragment_count", inc.pattern.fragment_count),
    ] {
        if v.is_some_and(|n| n < 0) {
            p.push((name.into(), "must not be negative".into()));
        }
    }
    check_code(
        lookups,
        p,
        "pattern.origin_location",
        LookupKind::OriginLocation,
        inc.pattern.origin_location.as_deref(),
    );
    if let Some(c) = &inc.cause {
        check_code(
            lookups,
            p,
            "cause.category",
            LookupKind::CauseCategory,
            Some(&c.category),
        );
        check_code(
            lookups,
            p,
            "cause.confidence",
            LookupKind::Confidence,
            Some(&c.confidence),
        );
        check_code(
            lookups,
            p,
            "cause.responsibility",
            LookupKind::Responsibility,
            Some(&c.responsibility),
        );
    }
}

/// Each examination: its codes, readings, flaw measurements and result.
fn check_examinations(
    lookups: &Lookups,
    p: &mut Vec<(String, String)>,
    ids: &mut HashSet<String>,
    inc: &Incident,
) {
    use shardlog_core::units::Dimension;
    for (i, e) in inc.examinations.iter().enumerate() {
        let f = format!("examinations[{i}]");
        if !e.id.is_empty() && !ids.insert(e.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        in_range(p, &format!("{f}.examined_on"), e.examined_on);
        if let Some(r) = &e.result {
            time_in_range(p, &format!("{f}.result.computed_at"), r.computed_at);
        }
        check_code(
            lookups,
            p,
            &format!("{f}.origin_type"),
            LookupKind::OriginType,
            e.origin_type.as_deref(),
        );
        check_code(
            lookups,
            p,
            &format!("{f}.material"),
            LookupKind::Material,
            e.material.as_deref(),
        );
        for (j, r) in e.readings.iter().enumerate() {
            let g = format!("{f}.readings[{j}]");
            check_code(
                lookups,
                p,
                &format!("{g}.boundary"),
                LookupKind::Boundary,
                Some(&r.boundary),
            );
            check_measured(p, &format!("{g}.radius"), &r.radius, Dimension::Length);
            positive(p, &format!("{g}.magnification"), r.magnification);
            check_code(
                lookups,
                p,
                &format!("{g}.viewing"),
                LookupKind::ViewingMode,
                r.viewing.as_deref(),
            );
        }
        if let Some(fl) = &e.flaw {
            if let Some(m) = &fl.depth {
                check_measured(p, &format!("{f}.flaw.depth"), m, Dimension::Length);
            }
            if let Some(m) = &fl.width {
                check_measured(p, &format!("{f}.flaw.width"), m, Dimension::Length);
            }
        }
        if let Some(r) = &e.result {
            let g = format!("{f}.result");
            for (name, v) in [
                ("stress_pa", r.stress_pa),
                ("stress_low_pa", r.stress_low_pa),
                ("stress_high_pa", r.stress_high_pa),
                ("residual_pa", r.residual_pa),
                ("applied_stress_pa", r.applied_stress_pa),
                ("flaw_size_m", r.flaw_size_m),
            ] {
                finite(p, &format!("{g}.{name}"), v);
            }
        }
    }
}

/// Each custody entry and attachment.
fn check_custody_and_attachments(
    lookups: &Lookups,
    p: &mut Vec<(String, String)>,
    ids: &mut HashSet<String>,
    inc: &Incident,
) {
    for (i, c) in inc.custody.iter().enumerate() {
        let f = format!("custody[{i}]");
        if !c.id.is_empty() && !ids.insert(c.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        time_in_range(p, &format!("{f}.at"), c.at);
        check_code(
            lookups,
            p,
            &format!("{f}.action"),
            LookupKind::CustodyAction,
            Some(&c.action),
        );
        if c.who.trim().is_empty() {
            p.push((
                format!("{f}.who"),
                "must name who handled the specimen".into(),
            ));
        }
    }
    for (i, a) in inc.attachments.iter().enumerate() {
        let f = format!("attachments[{i}]");
        if !a.id.is_empty() && !ids.insert(a.id.clone()) {
            p.push((format!("{f}.id"), "is used twice".into()));
        }
        if a.sha256.len() != 64
            || !a
                .sha256
                .bytes()
                .all(|b| b.is_ascii_hexdigit() && !b.is_ascii_uppercase())
        {
            p.push((
                format!("{f}.sha256"),
                "must be 64 lower-case hex digits".into(),
            ));
        }
        time_in_range(p, &format!("{f}.added_at"), a.added_at);
        if a.size_bytes < 0 {
            p.push((format!("{f}.size_bytes"), "must not be negative".into()));
        }
    }
}

impl Store {
    /// Every problem with an incident's content, as (field path, what is wrong).
    pub fn validate_incident(&self, inc: &Incident) -> Vec<(String, String)> {
        validate(&self.lookups, inc)
    }
}
