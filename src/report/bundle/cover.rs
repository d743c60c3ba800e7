//! The cover document: what the bundle claims, its figures, and how to check it.

use super::{BundleContent, Cover, LotRate};
use crate::report::chart::{Chart, WeibullSeries};
use crate::report::doc::{Block, Document, Table};
use crate::report::summary::CAUTIONS;
use shardlog_core::canonical::{digest, Numbers};
use shardlog_core::fleet;
use shardlog_core::units;

/// "v (a to b)" with the 95 % interval, "v" without one, `missing` without a value.
fn with_interval(v: Option<f64>, ci: Option<[f64; 2]>, missing: &str) -> String {
    match (v, ci) {
        (Some(v), Some([a, b])) => format!(
            "{} ({} to {})",
            three_figures(v),
            three_figures(a),
            three_figures(b)
        ),
        (Some(v), None) => three_figures(v),
        _ => missing.to_string(),
    }
}

/// A stress already in MPa, to three significant figures with its unit (the cover's figures
/// are stored in MPa; [`shardlog_core::text::stress`] takes pascals).
fn megapascals(v: f64) -> String {
    format!("{} MPa", three_figures(v))
}

fn three_figures(v: f64) -> String {
    units::fmt_sig(v, 3)
}

/// `f` of the value, "not available" without one.
fn or_not_available<T>(v: Option<T>, f: impl Fn(T) -> String) -> String {
    v.map(f).unwrap_or_else(|| "not available".into())
}

/// The cover document.
pub fn cover_document(c: &BundleContent) -> Document {
    let mut d = summary_section(c);
    rates_section(&mut d, &c.cover);
    if let Some(lr) = &c.cover.lot_rate {
        lot_rate_section(&mut d, lr);
    }
    weibull_section(&mut d, &c.cover);
    incidents_section(&mut d, c);
    contents_section(&mut d, c);
    d
}

/// The title block and the summary: what was selected, incidents by cause and by lot.
fn summary_section(c: &BundleContent) -> Document {
    let sel = &c.selection;
    let mut reference = format!("{} ({})", sel.supplier_name, sel.supplier_code);
    if let Some(l) = &sel.lot {
        reference.push_str(&format!(", lot {l}"));
    }
    let subtitle = format!("exported {} · {}", c.exported_at, c.generator);
    let mut d = Document::new("Dispute bundle", &reference, &subtitle);
    let cv = &c.cover;
    d.heading("Summary");
    let mut scope = format!(
        "{} incident{} attributed to products of {}",
        cv.incidents,
        if cv.incidents == 1 { "" } else { "s" },
        sel.supplier_name
    );
    if let Some(l) = &sel.lot {
        scope.push_str(&format!(", lot {l}"));
    }
    scope.push_str(&match (sel.since, sel.until) {
        (Some(a), Some(b)) => format!(", found from {a} to {b}."),
        (Some(a), None) => format!(", found on or after {a}."),
        (None, Some(b)) => format!(", found on or before {b}."),
        (None, None) => ", found on any date up to the export.".to_string(),
    });
    d.para(scope);
    let mut t = Table::new(&["Cause", "Incidents"]).numeric(&[1]);
    for x in &cv.by_cause {
        t.row(vec![x.label.clone(), x.count.to_string()]);
    }
    d.subheading("Incidents by cause");
    d.push(Block::Table(t));
    let mut t = Table::new(&["Lot", "Incidents"]).numeric(&[1]);
    for x in &cv.by_lot {
        t.row(vec![x.label.clone(), x.count.to_string()]);
    }
    d.subheading("Incidents by lot");
    d.push(Block::Table(t));
    d.push(Block::Figure {
        chart: Chart::Bars {
            x_label: "incidents".into(),
            bars: cv
                .by_lot_cause
                .iter()
                .take(20)
                .map(|x| (x.label.clone(), x.count as f64))
                .collect(),
        },
        caption: format!(
            "Causes by lot, largest first{}",
            if cv.by_lot_cause.len() > 20 {
                format!(" (the 20 largest of {})", cv.by_lot_cause.len())
            } else {
                String::new()
            }
        ),
    });
    d
}

/// The rate of each supplier against the rest of the fleet.
fn rates_section(d: &mut Document, cv: &Cover) {
    d.heading("Rate against the other suppliers");
    d.para(format!(
        "Incidents per 1,000 pane-years from {} to {}, with exact Poisson (Garwood) 95 % \
         intervals; each supplier's rate against the rest of the fleet as a rate ratio with \
         its exact conditional 95 % interval and one-sided p-value, adjusted with Holm's \
         method over the {} suppliers compared. Exposure: the panes in service recorded in \
         the database for this window.",
        cv.window_since, cv.window_until, cv.rates_compared
    ));
    let mut t = Table::new(&[
        "Supplier",
        "Incidents",
        "Pane-years",
        "Rate per 1,000 pane-years (95 % interval)",
        "Rate ratio against the rest (95 % interval)",
        "p (Holm)",
        "Significantly above the rest",
    ])
    .numeric(&[1, 2, 5]);
    for r in &cv.rates {
        let name = if r.claimed {
            format!("{} (this claim)", r.supplier)
        } else {
            r.supplier.clone()
        };
        t.row(vec![
            name,
            r.incidents.to_string(),
            or_not_available(r.pane_years, three_figures),
            with_interval(r.rate_per_1000, r.rate_ci95, "no exposure recorded"),
            with_interval(r.ratio, r.ratio_ci95, "not available"),
            or_not_available(r.p_adjusted, |p| units::fmt_sig(p, 2)),
            if r.flagged { "yes" } else { "no" }.into(),
        ]);
    }
    d.push(Block::Table(t));
}

/// The claimed lot against every other supplier × lot.
fn lot_rate_section(d: &mut Document, lr: &LotRate) {
    d.heading(&format!(
        "Rate of lot {} against the rest of the fleet",
        lr.lot
    ));
    d.para(format!(
        "The fleet grouped by supplier and lot: this lot ({} pane-years) against every other \
         supplier × lot together ({} pane-years), for all causes (Holm's adjustment over \
         {} groups) and for each cause found in the lot against the same cause elsewhere \
         (Holm's adjustment over {} cause × lot groups).",
        three_figures(lr.pane_years),
        three_figures(lr.rest_pane_years),
        lr.compared_all,
        lr.compared_by_cause
    ));
    let mut t = Table::new(&[
        "Cause",
        "In the lot",
        "Rate per 1,000 pane-years (95 % interval)",
        "Elsewhere: incidents, rate",
        "Rate ratio (95 % interval)",
        "p (Holm)",
        "Significantly above the rest",
    ])
    .numeric(&[1, 5]);
    for r in &lr.rows {
        t.row(vec![
            r.cause.clone(),
            r.incidents.to_string(),
            with_interval(r.rate_per_1000, r.rate_ci95, "no exposure recorded"),
            format!(
                "{}, {}",
                r.rest_incidents,
                or_not_available(r.rest_rate_per_1000, three_figures)
            ),
            with_interval(r.ratio, r.ratio_ci95, "not available"),
            or_not_available(r.p_adjusted, |p| units::fmt_sig(p, 2)),
            if r.flagged { "yes" } else { "no" }.into(),
        ]);
    }
    d.push(Block::Table(t));
}

/// The Weibull comparison of strengths, the stress histogram and the cover's notes.
fn weibull_section(d: &mut Document, cv: &Cover) {
    d.heading("Strength: Weibull comparison");
    d.para(
        "Two-parameter Weibull fits by maximum likelihood (ASTM C1239) of the applied stress \
         back-calculated for each incident, for this claim's panes and for each other \
         supplier's. A group whose line sits to the left broke at lower stresses.",
    );
    let mut t = Table::new(&[
        "Group",
        "Stresses",
        "Weibull modulus (95 % interval)",
        "Characteristic strength (95 % interval)",
    ])
    .numeric(&[1]);
    for w in &cv.weibull {
        t.row(vec![
            if w.claimed {
                format!("{} (this claim)", w.group)
            } else {
                w.group.clone()
            },
            w.n.to_string(),
            match (w.modulus, w.modulus_ci95) {
                (Some(m), Some([a, b])) => format!(
                    "{} ({} to {})",
                    three_figures(m),
                    three_figures(a),
                    three_figures(b)
                ),
                _ => w.note.clone().unwrap_or_else(|| "no fit".into()),
            },
            match (w.scale_mpa, w.scale_ci95_mpa) {
                (Some(m), Some([a, b])) => format!(
                    "{} ({} to {})",
                    megapascals(m),
                    three_figures(a),
                    megapascals(b)
                ),
                _ => "no fit".into(),
            },
        ]);
    }
    d.push(Block::Table(t));
    d.push(Block::Figure {
        chart: Chart::Weibull {
            x_label: "Applied stress (MPa)".into(),
            series: cv
                .weibull
                .iter()
                .take(6)
                .map(|w| WeibullSeries {
                    name: w.group.clone(),
                    points: w.points.iter().map(|p| (p[0], p[1])).collect(),
                    fit: match (w.modulus, w.scale_mpa) {
                        (Some(m), Some(s)) => Some((m, s)),
                        _ => None,
                    },
                })
                .collect(),
        },
        caption: "Weibull probability plot of the applied stress at fracture".into(),
    });
    let (lo, hi) = cv
        .stresses_mpa
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
            (a.min(*v), b.max(*v))
        });
    if lo.is_finite() && hi.is_finite() {
        let (edges, cnt) = fleet::histogram(&cv.stresses_mpa, 10);
        let width = if hi > lo { (hi - lo) / 10.0 } else { 1.0 };
        d.push(Block::Figure {
            chart: Chart::Histogram {
                x_label: "Applied stress (MPa)".into(),
                y_label: "incidents".into(),
                bins: edges
                    .iter()
                    .zip(&cnt)
                    .map(|(e, c)| (*e, e + width, u32::try_from(*c).unwrap_or(u32::MAX)))
                    .collect(),
                marker: None,
            },
            caption: "Back-calculated applied stress of this claim's incidents".into(),
        });
    }
    for n in &cv.notes {
        d.note(n.clone());
    }
}

/// One row per incident of the bundle.
fn incidents_section(d: &mut Document, c: &BundleContent) {
    d.heading("Incidents in this bundle");
    let mut t = Table::new(&[
        "Reference",
        "Found",
        "Lot",
        "Origin",
        "Cause (confidence)",
        "Responsibility",
        "Applied stress, MPa (95 % interval)",
    ])
    .numeric(&[6]);
    for i in &c.incidents {
        let ct = &i.content;
        let stress = ct
            .examination
            .analysis
            .as_ref()
            .map(|a| {
                format!(
                    "{} ({}–{})",
                    three_figures(a.applied_stress_pa / 1e6),
                    three_figures(a.applied_low_pa / 1e6),
                    three_figures(a.applied_high_pa / 1e6)
                )
            })
            .unwrap_or_else(|| "not computed".into());
        t.row(vec![
            i.reference.clone(),
            ct.identification.found_on.clone().unwrap_or_default(),
            ct.glass
                .lot
                .clone()
                .unwrap_or_else(|| "not recorded".into()),
            ct.examination
                .origin_type
                .clone()
                .unwrap_or_else(|| "not recorded".into()),
            match (&ct.cause.category, &ct.cause.confidence) {
                (Some(c), Some(k)) => format!("{c} ({k})"),
                (Some(c), None) => c.clone(),
                (None, _) => "not yet assigned".into(),
            },
            ct.cause
                .responsibility
                .clone()
                .unwrap_or_else(|| "not recorded".into()),
            stress,
        ]);
    }
    d.push(Block::Table(t));
}

/// What the bundle holds, how to check it, the cautions and the proof.
fn contents_section(d: &mut Document, c: &BundleContent) {
    d.heading("What this bundle holds and how to check it");
    d.kv(vec![
        ("cover.pdf, cover.html".into(), "this summary".into()),
        (
            "incidents/".into(),
            format!("{} incident summaries, one PDF each", c.incidents.len()),
        ),
        (
            "attachments/".into(),
            format!(
                "{} photos and files, each named by its SHA-256",
                c.attachments.iter().filter(|a| a.file.is_some()).count()
            ),
        ),
        (
            "figures.csv".into(),
            "one row of figures per incident".into(),
        ),
        (
            "bundle.json".into(),
            "everything above as data, the digest and the SHA-256 of every file".into(),
        ),
        (
            "To check".into(),
            "shardlog verify --bundle DIR (add --db FILE to compare with the records)".into(),
        ),
    ]);
    let missing = super::write::missing_attachments(c);
    if !missing.is_empty() {
        let mut lines = vec![format!(
            "{} attachment file{} not in this bundle (missing from the attachment folder, or no longer matching the hash the record names):",
            missing.len(),
            if missing.len() == 1 { " is" } else { "s are" }
        )];
        lines.extend(missing);
        d.push(Block::Boxed {
            title: "Attachments not included".into(),
            lines,
        });
    }
    d.push(Block::Boxed {
        title: "Cautions".into(),
        lines: CAUTIONS.iter().map(|s| s.to_string()).collect(),
    });
    d.proof = vec![
        (
            "Bundle content SHA-256".into(),
            digest(c, Numbers::Shortest).unwrap_or_else(|_| "not computable".into()),
        ),
        (
            "Audit-chain head at export".into(),
            c.audit_chain_head.clone(),
        ),
        ("Exported".into(), c.exported_at.clone()),
        ("Produced by".into(), c.generator.clone()),
    ];
}
