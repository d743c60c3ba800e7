//! The cover document: what the bundle claims, its figures, and how to check it.

use super::{BundleContent, Cover, Excluded, LotRate};
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

/// A ratio in words with its interval: "about 127 times (95 % interval 18.1 to 5,520 times)".
/// A rate ratio cannot be negative, and its exact interval never is.
pub(crate) fn times_in_words(v: Option<f64>, ci: Option<[f64; 2]>) -> String {
    match (v, ci) {
        (Some(v), Some([a, b])) => format!(
            "about {} times (95 % interval {} to {} times)",
            figure(v),
            figure(a),
            figure(b)
        ),
        (Some(v), None) => format!("about {} times", figure(v)),
        _ => "not available".into(),
    }
}

/// A number to three significant figures, thousands grouped ("5,520", "0.882").
fn figure(v: f64) -> String {
    if v.abs() >= 1000.0 {
        let unit = 10f64.powi(v.abs().log10().floor() as i32 - 2);
        group_thousands((v / unit).round() * unit)
    } else {
        three_figures(v)
    }
}

fn group_thousands(v: f64) -> String {
    let neg = v < 0.0;
    let digits = format!("{:.0}", v.abs());
    let mut out = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(c);
    }
    if neg {
        format!("−{out}")
    } else {
        out
    }
}

/// The chance of a result at least this far above the rest by luck alone, in words: a
/// p-value of 0.01 or more as a number, smaller ones as "about 1 in 2,900", and below one in
/// a hundred million as that.
pub(crate) fn chance_in_words(p: Option<f64>) -> String {
    match p {
        None => "not available".into(),
        Some(p) if p >= 0.01 => units::fmt_sig(p, 2),
        Some(p) if p < 1e-8 => "below 1 in 100 million".into(),
        Some(p) => {
            let n = 1.0 / p;
            let unit = 10f64.powi(n.log10().floor() as i32 - 1);
            format!("about 1 in {}", group_thousands((n / unit).round() * unit))
        }
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
    let cv = &c.cover;
    let mut reference = format!("{} ({})", sel.supplier_name, sel.supplier_code);
    if let Some(l) = &sel.lot {
        reference.push_str(&format!(", lot {l}"));
    }
    if let Some(x) = &cv.excluded {
        reference.push_str(&format!(": {}", claim_words(x)));
    }
    let subtitle = format!("exported {} · {}", c.exported_at, c.generator);
    let mut d = Document::new("Dispute bundle", &reference, &subtitle);
    d.heading("Summary");
    if let Some(x) = &cv.excluded {
        claim_lead(&mut d, cv, x);
    }
    let mut scope = format!(
        "{} incident{} attributed to products of {}",
        cv.incidents,
        if cv.incidents == 1 { "" } else { "s" },
        sel.supplier_name
    );
    if let Some(l) = &sel.lot {
        scope.push_str(&format!(", lot {l}"));
    }
    if let Some(x) = &cv.excluded {
        scope.push_str(&format!(", of {}", claim_words(x)));
    }
    scope.push_str(&match (sel.since, sel.until) {
        (Some(a), Some(b)) => format!(", found from {a} to {b}."),
        (Some(a), None) => format!(", found on or after {a}."),
        (None, Some(b)) => format!(", found on or before {b}."),
        (None, None) => ", found on any date up to the export.".to_string(),
    });
    d.para(scope);
    verdicts_para(&mut d, cv);
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

/// What the claim is about, in words: "nickel sulfide inclusion" or "impact or vandalism,
/// origin type impact site".
fn claim_words(x: &Excluded) -> String {
    let mut w = x.claimed_causes.join(" or ");
    if let Some(o) = &x.origin_type {
        if !w.is_empty() {
            w.push_str(", ");
        }
        w.push_str(&format!("origin type {o}"));
    }
    w
}

/// The claim's first lines: its cause, how the lot compares for it, and what was left out.
fn claim_lead(d: &mut Document, cv: &Cover, x: &Excluded) {
    let mut lead = format!("This claim concerns {} only.", claim_words(x));
    if let Some(lr) = &cv.lot_rate {
        for r in lr.rows.iter().filter(|r| r.claimed) {
            lead.push_str(&format!(
                " For {}, lot {} broke at {} the rate of the rest of the fleet; the chance of \
                 this by luck alone is {}{}.",
                r.cause,
                lr.lot,
                times_in_words(r.ratio, r.ratio_ci95),
                chance_in_words(r.p_adjusted),
                if r.flagged {
                    format!(" ({}: significantly above the rest)", fleet::FLAG_WORD)
                } else {
                    " (not significantly above the rest)".into()
                }
            ));
        }
    } else if let Some(r) = cv.rates.iter().find(|r| r.claimed) {
        lead.push_str(&format!(
            " For this, the supplier's rate is {} that of the other suppliers; the chance of \
             this by luck alone is {}{}.",
            times_in_words(r.ratio, r.ratio_ci95),
            chance_in_words(r.p_adjusted),
            if r.flagged {
                format!(" ({}: significantly above the rest)", fleet::FLAG_WORD)
            } else {
                " (not significantly above the rest)".into()
            }
        ));
    }
    d.para(lead);
    let left: u64 = x.left_out.iter().map(|c| c.count).sum();
    if left == 0 {
        d.para(format!(
            "All {} incidents of the selection are of the claimed kind; none was left out.",
            x.before
        ));
    } else {
        let parts: Vec<String> = x
            .left_out
            .iter()
            .map(|c| format!("{} {}", c.count, c.label))
            .collect();
        d.para(format!(
            "Left out: {left} of the {} incidents of this selection are of another kind and are \
             not in this bundle ({}). They are excluded by the cause recorded in each incident \
             (and the origin type of its last examination) at the time of export; incidents \
             with no cause recorded yet are never counted for the claim.",
            x.before,
            parts.join(", ")
        ));
    }
}

/// The verdicts of the load hypotheses saved with the incidents.
fn verdicts_para(d: &mut Document, cv: &Cover) {
    let v = &cv.verdicts;
    if v.with_hypothesis == 0 {
        d.para(format!(
            "Load hypotheses: none of the {} incidents has a load hypothesis saved with its \
             examination, so no verdict says whether a sound pane should have survived.",
            cv.incidents
        ));
        return;
    }
    d.para(format!(
        "Load hypotheses: {} of the {} incidents have one saved with their examination. Against \
         the measured stress: {} consistent, {} too weak, {} far too strong. Against the \
         strength of a sound pane: {} broke under a load a sound pane should have survived \
         (below what a sound pane survives), {} under a load that would break a sound pane, \
         {} with no strength bound given. Each incident's summary gives the inputs, method \
         and verdict.",
        v.with_hypothesis,
        cv.incidents,
        v.consistent,
        v.too_weak,
        v.far_too_strong,
        v.sound_pane_survives,
        v.sound_pane_breaks,
        v.with_hypothesis - v.sound_pane_survives - v.sound_pane_breaks
    ));
}

/// The rate of each supplier against the rest of the fleet.
fn rates_section(d: &mut Document, cv: &Cover) {
    d.heading("Rate against the other suppliers");
    d.para(format!(
        "Incidents{} per 1,000 pane-years from {} to {}, with exact Poisson (Garwood) 95 % \
         intervals; each supplier's rate against the rest of the fleet as a rate ratio with \
         its exact conditional 95 % interval, and the one-sided chance of a rate this far \
         above the rest by luck alone, adjusted with Holm's method over the {} suppliers \
         compared. Exposure: the panes in service recorded in the database for this window.",
        cv.excluded
            .as_ref()
            .map(|x| format!(" of {}", claim_words(x)))
            .unwrap_or_default(),
        cv.window_since,
        cv.window_until,
        cv.rates_compared
    ));
    let mut t = Table::new(&[
        "Supplier",
        "Incidents",
        "Pane-years",
        "Rate per 1,000 pane-years (95 % interval)",
        "Rate against the rest",
        "Chance by luck alone (Holm)",
        "Flag",
    ])
    .numeric(&[1, 2]);
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
            times_in_words(r.ratio, r.ratio_ci95),
            chance_in_words(r.p_adjusted),
            flag(r.flagged),
        ]);
    }
    d.push(Block::Table(t));
}

/// The flag word of a group significantly above the rest, a dash otherwise.
fn flag(flagged: bool) -> String {
    if flagged { fleet::FLAG_WORD } else { "—" }.to_string()
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
        "Rate against the rest",
        "Chance by luck alone (Holm)",
        "Flag",
    ])
    .numeric(&[1]);
    for r in &lr.rows {
        t.row(vec![
            if r.claimed {
                format!("{} (this claim)", r.cause)
            } else {
                r.cause.clone()
            },
            r.incidents.to_string(),
            with_interval(r.rate_per_1000, r.rate_ci95, "no exposure recorded"),
            format!(
                "{}, {}",
                r.rest_incidents,
                or_not_available(r.rest_rate_per_1000, three_figures)
            ),
            times_in_words(r.ratio, r.ratio_ci95),
            chance_in_words(r.p_adjusted),
            flag(r.flagged),
        ]);
    }
    d.push(Block::Table(t));
    d.note(format!(
        "{}: significantly above the rest of the fleet (exact conditional test, Holm's \
         adjustment at 5 %).",
        fleet::FLAG_WORD
    ));
}

/// The Weibull comparison of strengths, the stress histogram and the cover's notes.
fn weibull_section(d: &mut Document, cv: &Cover) {
    d.heading("Strength: Weibull comparison");
    d.para(format!(
        "Two-parameter Weibull fits by maximum likelihood (ASTM C1239) of the applied stress \
         back-calculated for each incident: one population per cause, since each cause is its \
         own flaw population (a nickel sulfide stone and handling damage fitted together give \
         a meaningless modulus), for this claim's panes and, for the same causes, each other \
         supplier's. A population with fewer than {} stresses is not fitted. A line to the \
         left broke at lower stresses.",
        super::figures::MIN_FIT
    ));
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
                _ => "—".into(),
            },
        ]);
    }
    d.push(Block::Table(t));
    let methods: std::collections::BTreeSet<&str> = cv
        .weibull
        .iter()
        .filter_map(|w| w.bounds_by.as_deref())
        .collect();
    if !methods.is_empty() {
        d.note(format!(
            "Bounds by: {}. Pivotal: the pivotal quantities of ASTM C1239 for a complete sample, \
             their quantiles from this program's Monte Carlo table (a nominal 95 % covers 95 %); \
             Wald: large-sample bounds from the observed information, which cover less than \
             they claim in small samples.",
            methods.into_iter().collect::<Vec<_>>().join("; ")
        ));
    }
    if !cv.weibull.iter().any(|w| !w.claimed) {
        d.note(format!(
            "No other supplier has {} or more stresses of the same cause{} to fit for a comparison.",
            super::figures::MIN_FIT,
            if cv.weibull.iter().filter(|w| w.claimed).count() > 1 {
                "s"
            } else {
                ""
            }
        ));
    }
    d.push(Block::Figure {
        chart: Chart::Weibull {
            x_label: "Applied stress (MPa)".into(),
            series: cv
                .weibull
                .iter()
                .filter(|w| w.modulus.is_some())
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
    let bins = fleet::round_histogram(&cv.stresses_mpa, 10);
    if !bins.is_empty() {
        d.push(Block::Figure {
            chart: Chart::Histogram {
                x_label: "Applied stress (MPa)".into(),
                y_label: "incidents".into(),
                bins: bins
                    .iter()
                    .map(|(a, b, c)| (*a, *b, u32::try_from(*c).unwrap_or(u32::MAX)))
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
    let mut below_zero = 0;
    for i in &c.incidents {
        let ct = &i.content;
        let stress = ct
            .examination
            .analysis
            .as_ref()
            .map(|a| {
                if a.applied_low_pa < 0.0 {
                    below_zero += 1;
                }
                format!(
                    "{} ({} to {})",
                    signed(a.applied_stress_pa / 1e6),
                    signed(a.applied_low_pa / 1e6),
                    signed(a.applied_high_pa / 1e6)
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
    if below_zero > 0 {
        d.note(format!(
            "{below_zero} interval{} of the applied stress reach{} below zero. The applied \
             stress is the net stress at the origin minus the residual stress there; at an \
             interior origin of tempered glass the residual stress is tension, and a value \
             below zero means that tension alone can account for the break (spontaneous \
             breakage, as from a nickel sulfide stone). The interval is the net stress's \
             interval shifted by the residual stress, so its ends keep their sign.",
            if below_zero == 1 { "" } else { "s" },
            if below_zero == 1 { "es" } else { "" }
        ));
    }
}

/// A figure with a true minus sign, to three significant figures.
fn signed(v: f64) -> String {
    three_figures(v).replace('-', "−")
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
            match c.audit_head_seq {
                Some(seq) => format!("entry {seq}, {}", c.audit_chain_head),
                None => c.audit_chain_head.clone(),
            },
        ),
        ("Exported".into(), c.exported_at.clone()),
        ("Produced by".into(), c.generator.clone()),
    ];
    if let Some(f) = &c.made_from {
        d.proof.push(("Made from".into(), format!("the {f}")));
    }
}
