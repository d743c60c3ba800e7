//! The incident summary: its content (serde, the input of the digest and of every renderer)
//! and the document built from it. Everything a claims engineer must see: identification,
//! the glass, the fracture pattern, the origin, the readings as measured, the computation
//! step by step with constants and their provenance, the flaw size and the cross-checks, the
//! cause, the photos with their SHA-256, the custody log, the case history and the cautions.

use std::collections::HashMap;
use std::sync::Arc;

use serde::{Deserialize, Serialize};

use super::doc::{Block, Document, Table, NOT_RECORDED};
use super::image::Picture;
use shardlog_core::canonical::{self, Numbers};
use shardlog_core::fracture::{Analysis, BoundaryResult, ConstantUsed, FlawResult};
use shardlog_core::text;
use shardlog_core::units::{self, Unit};

/// Attachment bytes by SHA-256 (absent: listed, not shown).
pub type Pictures = HashMap<String, Arc<Vec<u8>>>;

/// The cautions of design.md §6, stated once, plainly.
pub const CAUTIONS: [&str; 3] = [
    "Broken glass cuts: handle fragments with cut-resistant gloves and eye protection; \
     tempered glass can keep breaking.",
    "Estimates from fracture mirrors carry the uncertainty of the constants and readings.",
    "This tool supports, and does not replace, a qualified investigator; safety-glazing rules \
     and the conclusions that carry legal weight belong to local codes and licensed practice.",
];

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct IncidentContent {
    pub reference: String,
    pub identification: Identification,
    pub glass: Glass,
    pub pattern: Pattern,
    pub examination: Examination,
    pub cause: Cause,
    pub attachments: Vec<AttachmentRef>,
    pub custody: Vec<CustodyEntry>,
    pub history: Vec<HistoryEntry>,
    pub notes: Vec<NoteEntry>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Identification {
    pub asset: Option<String>,
    pub asset_kind: Option<String>,
    pub position: Option<String>,
    pub site: Option<String>,
    pub found_on: Option<String>,
    pub broken_on: Option<String>,
    pub environment: Option<String>,
    pub reported_by: Option<String>,
    pub how_found: Option<String>,
    pub description: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Glass {
    pub supplier: Option<String>,
    pub product: Option<String>,
    pub lot: Option<String>,
    pub makeup: Option<String>,
    pub size: Option<String>,
    pub plies: Vec<Ply>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Ply {
    pub glass_type: Option<String>,
    pub temper: Option<String>,
    pub thickness_m: Option<f64>,
    pub coating: Option<String>,
    pub edge_finish: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Pattern {
    pub crack_count: Option<i64>,
    pub branching: Option<String>,
    pub fragment_count: Option<i64>,
    pub origin_location: Option<String>,
    pub tension_face: Option<String>,
    pub description: Option<String>,
    /// The fragmentation check of a thermally toughened pane: verdict, count and minimum.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fragmentation: Option<String>,
    /// Where the minimum used comes from.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fragmentation_source: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Examination {
    pub origin_type: Option<String>,
    pub material: Option<String>,
    pub readings: Vec<Reading>,
    pub measured_flaw_depth_m: Option<f64>,
    pub measured_flaw_width_m: Option<f64>,
    /// The computation as the core gave it (recomputed or as stored).
    pub analysis: Option<Analysis>,
    /// Why there is no computation, or where it came from (code version).
    pub analysis_note: Option<String>,
    /// The load hypotheses saved with the examination, with their verdicts.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub hypotheses: Vec<crate::store::bench_record::SavedHypothesis>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Reading {
    pub boundary: String,
    pub radius_m: f64,
    /// As typed, with its unit ("0.85 mm").
    pub as_entered: Option<String>,
    pub magnification: Option<String>,
    pub analyst: Option<String>,
    pub taken_at: Option<String>,
    /// How the boundary was viewed (its label), when recorded.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub viewing: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Cause {
    pub category: Option<String>,
    pub factors: Vec<String>,
    pub confidence: Option<String>,
    pub responsibility: Option<String>,
    pub status: Option<String>,
    pub rationale: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct AttachmentRef {
    pub name: String,
    pub sha256: String,
    pub bytes: u64,
    pub media_type: Option<String>,
    pub caption: Option<String>,
    pub added_at: Option<String>,
    pub added_by: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct CustodyEntry {
    pub at: String,
    pub event: String,
    pub who: Option<String>,
    pub detail: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct HistoryEntry {
    pub at: String,
    pub actor: String,
    pub action: String,
    pub detail: Option<String>,
}

#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct NoteEntry {
    pub at: Option<String>,
    pub who: Option<String>,
    pub text: String,
}

/// The proof printed at the end of a summary: digest of the content, chain head, when.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Proof {
    pub content_sha256: String,
    pub audit_chain_head: Option<String>,
    pub exported_at: String,
    pub generator: String,
    /// The audit head signed with the database's key together with `content_sha256`
    /// (a summary made alone; in a bundle, bundle.json carries the signature).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub signed_head: Option<crate::store::signing::SignedHead>,
    /// The fleet database the summary was made from (host and database, and benches); absent
    /// for a bench file's summary.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub made_from: Option<String>,
}

impl Proof {
    pub fn pairs(&self) -> Vec<(String, String)> {
        vec![
            ("Content SHA-256".into(), self.content_sha256.clone()),
            (
                "Audit-chain head at export".into(),
                self.audit_chain_head
                    .clone()
                    .unwrap_or_else(|| "no audit entries".into()),
            ),
            ("Exported".into(), self.exported_at.clone()),
            ("Produced by".into(), self.generator.clone()),
        ]
        .into_iter()
        .chain(
            self.made_from
                .iter()
                .map(|f| ("Made from".to_string(), format!("the {f}"))),
        )
        .chain(self.signed_head.iter().flat_map(|h| {
            [
                ("Anchor (entry:hash)".to_string(), h.anchor()),
                ("Signed with key".to_string(), h.fingerprint.clone()),
                (
                    "Signature (Ed25519)".to_string(),
                    format!(
                        "{} {}",
                        &h.signature[..64.min(h.signature.len())],
                        h.signature.get(64..).unwrap_or("")
                    ),
                ),
            ]
        }))
        .chain([(
            "How to check".into(),
            "the SHA-256 is taken over the canonical JSON of this summary's content \
                 (attachments by their hash); `shardlog verify --bundle` recomputes it"
                .into(),
        )])
        .collect()
    }
}

pub fn generator() -> String {
    concat!("shardlog ", env!("CARGO_PKG_VERSION")).to_string()
}

fn or_nr(v: &Option<String>) -> String {
    match v {
        Some(s) if !s.trim().is_empty() => s.clone(),
        _ => NOT_RECORDED.to_string(),
    }
}

fn kv(label: &str, v: &Option<String>) -> (String, String) {
    (label.to_string(), or_nr(v))
}

fn mm(m: f64) -> String {
    units::format(m, Unit::Millimetre)
}
fn um(m: f64) -> String {
    units::format(m, Unit::Micrometre)
}
fn tough(v: f64) -> String {
    units::format(v, Unit::MegapascalRootMetre)
}

fn length(m: f64) -> String {
    if m.abs() < 1e-3 {
        um(m)
    } else {
        mm(m)
    }
}

fn constant_text(c: &ConstantUsed) -> String {
    let unit_fmt = |v: f64| {
        if c.symbol.starts_with('K') || c.symbol.starts_with('A') {
            tough(v)
        } else {
            units::fmt_sig(v, 3)
        }
    };
    let mut s = format!("{} = {}", c.symbol, unit_fmt(c.value));
    if let Some(sp) = c.spread {
        s.push_str(&format!(
            " (spread ±{}, one standard deviation)",
            unit_fmt(sp)
        ));
    }
    if c.overridden {
        s.push_str(", set for this calculation");
    }
    s
}

fn provenance_text(c: &ConstantUsed) -> String {
    let t = c.provenance.text();
    if t.is_empty() {
        c.provenance.mark().to_string()
    } else {
        format!("{}: {}", c.provenance.mark(), t)
    }
}

/// Build the document of one incident summary. `pictures` maps SHA-256 to the attachment's
/// bytes (absent bytes: the attachment is listed, not shown).
pub fn document(c: &IncidentContent, proof: &Proof, pictures: &Pictures) -> Document {
    let subtitle = format!(
        "{} · exported {} · {}",
        c.glass
            .supplier
            .clone()
            .unwrap_or_else(|| "supplier not recorded".into()),
        proof.exported_at,
        proof.generator
    );
    let mut d = Document::new("Incident summary", &c.reference, &subtitle);
    let id = &c.identification;

    d.heading("Identification");
    let mut asset = or_nr(&id.asset);
    if let Some(k) = id.asset_kind.as_ref().filter(|k| !k.is_empty()) {
        asset = format!("{asset} ({k})");
    }
    d.kv(vec![
        ("Reference".into(), c.reference.clone()),
        ("Asset".into(), asset),
        kv("Position", &id.position),
        kv("Site", &id.site),
        kv("Found on", &id.found_on),
        (
            "Broken on".into(),
            id.broken_on.clone().unwrap_or_else(|| "not known".into()),
        ),
        kv("Environment", &id.environment),
        kv("Reported by", &id.reported_by),
        kv("How found", &id.how_found),
    ]);
    if let Some(t) = id.description.as_ref().filter(|t| !t.is_empty()) {
        d.para(t.clone());
    }

    d.heading("The glass");
    let g = &c.glass;
    d.kv(vec![
        kv("Supplier", &g.supplier),
        kv("Product", &g.product),
        kv("Lot or batch", &g.lot),
        kv("Make-up", &g.makeup),
        kv("Size", &g.size),
    ]);
    if !g.plies.is_empty() {
        let mut t = Table::new(&[
            "Ply",
            "Glass",
            "Temper class",
            "Thickness",
            "Coating",
            "Edge finish",
        ])
        .numeric(&[0, 3]);
        for (i, p) in g.plies.iter().enumerate() {
            t.row(vec![
                (i + 1).to_string(),
                or_nr(&p.glass_type),
                or_nr(&p.temper),
                p.thickness_m.map(mm).unwrap_or_else(|| NOT_RECORDED.into()),
                p.coating.clone().unwrap_or_else(|| "none recorded".into()),
                or_nr(&p.edge_finish),
            ]);
        }
        d.push(Block::Table(t));
    }

    d.heading("Fracture pattern and origin");
    let p = &c.pattern;
    d.kv(vec![
        (
            "Crack count".into(),
            p.crack_count
                .map(|n| n.to_string())
                .unwrap_or_else(|| NOT_RECORDED.into()),
        ),
        kv("Branching", &p.branching),
        (
            "Fragment count".into(),
            p.fragment_count
                .map(|n| n.to_string())
                .unwrap_or_else(|| NOT_RECORDED.into()),
        ),
        kv("Origin location", &p.origin_location),
        kv("Origin type", &c.examination.origin_type),
        kv("Tension face", &p.tension_face),
    ]);
    if let Some(f) = &p.fragmentation {
        let mut rows = vec![("Fragmentation (EN 12150-1)".to_string(), f.clone())];
        if let Some(s) = &p.fragmentation_source {
            rows.push(("Minimum from".to_string(), s.clone()));
        }
        d.kv(rows);
    }
    if let Some(t) = p.description.as_ref().filter(|t| !t.is_empty()) {
        d.para(t.clone());
    }

    readings_section(&mut d, c);
    computation_section(&mut d, c);
    cause_section(&mut d, c);
    attachments_section(&mut d, c, pictures);
    custody_section(&mut d, c);
    history_section(&mut d, c);

    d.push(Block::Boxed {
        title: "Cautions".into(),
        lines: CAUTIONS.iter().map(|s| s.to_string()).collect(),
    });
    d.proof = proof.pairs();
    d
}

fn readings_section(d: &mut Document, c: &IncidentContent) {
    let e = &c.examination;
    d.heading("Mirror readings as measured");
    if e.readings.is_empty() {
        d.para("No mirror readings were recorded for this incident.");
    } else {
        let mut t = Table::new(&[
            "No.",
            "Boundary",
            "Radius as entered",
            "Radius",
            "Magnification",
            "Analyst",
            "Taken",
        ])
        .numeric(&[0, 3]);
        for (i, r) in e.readings.iter().enumerate() {
            t.row(vec![
                (i + 1).to_string(),
                r.boundary.clone(),
                or_nr(&r.as_entered),
                mm(r.radius_m),
                // the viewing mode joins the magnification only when recorded, so that
                // reports of readings without one render as they always did
                match (&r.magnification, &r.viewing) {
                    (Some(m), Some(v)) => format!("{m}, {v}"),
                    (None, Some(v)) => v.clone(),
                    _ => or_nr(&r.magnification),
                },
                or_nr(&r.analyst),
                or_nr(&r.taken_at),
            ]);
        }
        d.push(Block::Table(t));
        d.note("Radii are measured from the origin to the boundary on the fracture face.");
    }
    let mut flaw = Vec::new();
    if let Some(a) = e.measured_flaw_depth_m {
        flaw.push(("Measured flaw depth".to_string(), length(a)));
    }
    if let Some(w) = e.measured_flaw_width_m {
        flaw.push(("Measured flaw width".to_string(), length(w)));
    }
    if !flaw.is_empty() {
        d.kv(flaw);
    }
}

fn computation_section(d: &mut Document, c: &IncidentContent) {
    let e = &c.examination;
    d.heading("Computation, step by step");
    let Some(a) = &e.analysis else {
        d.para(
            e.analysis_note
                .clone()
                .unwrap_or_else(|| "No stress was computed: there are no usable readings.".into()),
        );
        return;
    };
    d.para(format!(
        "Material: {}. Relation used: the mirror-constant relation σ = A / √R (ASTM C1678), \
         one constant per boundary. The 95 % interval combines the scatter of the readings with \
         the spread of the constant.",
        a.material_name
    ));
    d.push(Block::Table(computation_steps(a)));
    let checks = cross_checks(a);
    if !checks.rows.is_empty() {
        d.subheading("Cross-checks");
        d.push(Block::Table(checks));
    }
    if !a.warnings.is_empty() {
        d.subheading("Warnings from the computation");
        for w in &a.warnings {
            d.para(format!("• {w}"));
        }
    }
    if let Some(n) = &e.analysis_note {
        d.note(n.clone());
    }
    hypothesis_section(d, c);
}

/// The load hypotheses saved with the examination: inputs, method, stress and verdict.
fn hypothesis_section(d: &mut Document, c: &IncidentContent) {
    let hs = &c.examination.hypotheses;
    if hs.is_empty() {
        return;
    }
    d.subheading("Load hypothesis and verdict");
    d.para(
        "Would the load believed to have acted explain the break, and should a sound pane \
         have survived it? The hypothesis' stress is compared with the measured stress (its \
         95 % interval, allowing a factor 1.5 for the load model) and, when a strength lower \
         bound of a sound pane was given, with that bound.",
    );
    for h in hs {
        let mut rows = vec![
            ("Load".to_string(), h.kind.clone()),
            (
                "Inputs".to_string(),
                if h.inputs.is_empty() {
                    "not recorded".into()
                } else {
                    h.inputs.clone()
                },
            ),
            (
                "Method".to_string(),
                if h.method.is_empty() {
                    "not recorded".into()
                } else {
                    h.method.clone()
                },
            ),
            (
                "Stress from the hypothesis".to_string(),
                h.stress_pa
                    .map(shardlog_core::text::stress)
                    .unwrap_or_else(|| "not computed".into()),
            ),
            (
                "Verdict".to_string(),
                h.verdict
                    .as_deref()
                    .map(|v| {
                        let v = v.trim_end();
                        if v.ends_with('.') {
                            v.to_string()
                        } else {
                            format!("{v}.")
                        }
                    })
                    .unwrap_or_else(|| "no verdict (no measured stress to compare)".into()),
            ),
        ];
        if let Some(s) = h.sound_part_survives {
            rows.push((
                "A sound pane under this load".to_string(),
                if s {
                    "should have survived: the break needs a flaw, damage or another stress"
                } else {
                    "should have broken"
                }
                .into(),
            ));
        }
        d.kv(rows);
    }
}

/// A table of numbered steps: quantity, value, basis.
struct Steps {
    table: Table,
    step: usize,
}

impl Steps {
    fn add(&mut self, quantity: String, value: String, basis: String) {
        self.step += 1;
        self.table
            .row(vec![self.step.to_string(), quantity, value, basis]);
    }
}

/// The computation as numbered steps: each boundary, the net stress, the residual-stress
/// correction, the applied stress, and the flaw size.
fn computation_steps(a: &Analysis) -> Table {
    let mut steps = Steps {
        table: Table::new(&["Step", "Quantity", "Value", "Basis"]),
        step: 0,
    };
    for b in &a.boundaries {
        boundary_steps(&mut steps, b);
    }
    steps.add(
        "Net stress at the origin".into(),
        format!(
            "{} (95 % interval {} to {})",
            text::stress(a.stress_pa),
            text::stress(a.stress_low_pa),
            text::stress(a.stress_high_pa)
        ),
        format!("from the {} boundary", a.headline.label()),
    );
    let r = &a.residual;
    let temper = r
        .temper
        .map(|t| t.label().to_string())
        .unwrap_or_else(|| "temper class not recorded".into());
    let mut comp = format!(
        "surface compression {}",
        text::stress(r.surface_compression_pa)
    );
    if let Some(sp) = r.surface_compression_spread_pa {
        comp.push_str(&format!(" (spread ±{})", text::stress(sp)));
    }
    if let Some(dep) = r.layer_depth_m {
        comp.push_str(&format!(", compressive layer {}", length(dep)));
    }
    steps.add(
        "Residual-stress correction".into(),
        format!(
            "{} at the {} origin",
            text::stress(r.at_origin_pa),
            r.origin.label()
        ),
        format!("{temper}; {comp}; {}", r.basis),
    );
    steps.add(
        "Applied stress (net − residual)".into(),
        format!(
            "{} (95 % interval {} to {})",
            text::stress(a.applied_stress_pa),
            text::stress(a.applied_low_pa),
            text::stress(a.applied_high_pa)
        ),
        "compression counted negative".into(),
    );
    if let Some(f) = &a.flaw {
        flaw_steps(&mut steps, f);
    }
    steps.table
}

/// Mean radius, constant and stress of one boundary.
fn boundary_steps(steps: &mut Steps, b: &BoundaryResult) {
    let label = b.boundary.label();
    let s = &b.stats;
    let mut spread = String::new();
    if let Some(sd) = s.sd {
        spread = format!(", standard deviation {}", mm(sd));
    }
    steps.add(
        format!("Mean {label} radius R"),
        mm(s.mean),
        format!(
            "{} reading{}{spread}; standard uncertainty of the mean {} ({})",
            s.n,
            if s.n == 1 { "" } else { "s" },
            mm(s.u_mean),
            s.method
        ),
    );
    steps.add(
        format!("{label} constant"),
        constant_text(&b.constant),
        provenance_text(&b.constant),
    );
    steps.add(
        format!("Stress from the {label} boundary"),
        format!(
            "{} (95 % interval {} to {})",
            text::stress(b.stress_pa),
            text::stress(b.stress_low_pa),
            text::stress(b.stress_high_pa)
        ),
        format!(
            "σ = {} / √{}; relative expanded uncertainty {} %",
            b.constant.symbol,
            mm(s.mean),
            units::fmt_sig(b.rel_u95 * 100.0, 2)
        ),
    );
}

/// Toughness, geometry factor and flaw size.
fn flaw_steps(steps: &mut Steps, f: &FlawResult) {
    steps.add(
        "Fracture toughness".into(),
        constant_text(&f.toughness),
        provenance_text(&f.toughness),
    );
    let gb = [
        f.geometry_basis.as_str(),
        f.factor.governing_point.as_str(),
        f.factor.source.as_str(),
    ]
    .iter()
    .map(|s| s.trim())
    .filter(|s| !s.is_empty())
    .collect::<Vec<_>>()
    .join("; ");
    steps.add(
        format!("Geometry factor Y ({})", f.geometry_label),
        units::fmt_sig(f.factor.y, 4),
        gb,
    );
    steps.add(
        "Flaw size a".into(),
        format!(
            "{} (95 % interval {} to {})",
            length(f.size_m),
            length(f.size_low_m),
            length(f.size_high_m)
        ),
        "a = (K_Ic / (Y · σ))², with the net stress at the origin".into(),
    );
}

/// Cross-checks of the computation: radius to flaw ratios, measured against predicted flaw,
/// the boundaries against each other, the branching distance.
fn cross_checks(a: &Analysis) -> Table {
    let mut checks = Table::new(&["Cross-check", "Found", "Expected", "Verdict"]);
    if let Some(f) = &a.flaw {
        for r in &f.ratios {
            checks.row(vec![
                format!("{} radius / flaw size", r.boundary.label()),
                units::fmt_sig(r.ratio, 3),
                format!("about {}", units::fmt_sig(r.expected, 3)),
                if r.plausible {
                    "plausible".into()
                } else {
                    "outside the usual range".into()
                },
            ]);
        }
        if let (Some(m), Some(q)) = (f.measured_m, f.measured_over_predicted) {
            checks.row(vec![
                "measured flaw / predicted flaw".into(),
                format!(
                    "{} / {} = {}",
                    length(m),
                    length(f.size_m),
                    units::fmt_sig(q, 3)
                ),
                "about 1".into(),
                if (0.5..=2.0).contains(&q) {
                    "consistent".into()
                } else {
                    "inconsistent: check the readings or the geometry".into()
                },
            ]);
        }
    }
    for k in &a.consistency {
        checks.row(vec![
            format!("{} / {} radius ratio", k.outer.label(), k.inner.label()),
            units::fmt_sig(k.radius_ratio, 3),
            format!(
                "{} (constants squared)",
                units::fmt_sig(k.expected_ratio, 3)
            ),
            if k.agrees {
                "consistent within the uncertainties".into()
            } else {
                "disagrees by more than the uncertainties allow".into()
            },
        ]);
    }
    if let Some(b) = &a.branching {
        let found = b
            .measured_m
            .map(length)
            .unwrap_or_else(|| "not measured".into());
        checks.row(vec![
            "branching distance".into(),
            found,
            format!(
                "{} (95 % interval {} to {})",
                length(b.distance_m),
                length(b.low_m),
                length(b.high_m)
            ),
            match b.measured_m {
                Some(m) if m >= b.low_m && m <= b.high_m => "within the interval".into(),
                Some(_) => "outside the interval".into(),
                None => "prediction only".into(),
            },
        ]);
    }
    checks
}

fn cause_section(d: &mut Document, c: &IncidentContent) {
    let k = &c.cause;
    d.heading("Cause and conclusion");
    d.kv(vec![
        (
            "Cause".into(),
            k.category
                .clone()
                .unwrap_or_else(|| "not yet assigned".into()),
        ),
        (
            "Contributing factors".into(),
            if k.factors.is_empty() {
                "none recorded".into()
            } else {
                k.factors.join("; ")
            },
        ),
        kv("Confidence", &k.confidence),
        kv("Responsibility", &k.responsibility),
        kv("Case status", &k.status),
    ]);
    if let Some(r) = k.rationale.as_ref().filter(|r| !r.is_empty()) {
        d.para(r.clone());
    }
    if !c.notes.is_empty() {
        d.subheading("Notes");
        for n in &c.notes {
            let who = match (&n.at, &n.who) {
                (Some(a), Some(w)) => format!("{a}, {w}: "),
                (Some(a), None) => format!("{a}: "),
                (None, Some(w)) => format!("{w}: "),
                (None, None) => String::new(),
            };
            d.para(format!("{who}{}", n.text));
        }
    }
}

/// Keep a date and time on one line in tables.
fn nb(s: &str) -> String {
    s.replace(' ', "\u{a0}")
}

fn human_bytes(n: u64) -> String {
    if n < 1024 {
        format!("{n} B")
    } else if n < 1024 * 1024 {
        format!("{} kB", units::fmt_sig(n as f64 / 1024.0, 3))
    } else {
        format!("{} MB", units::fmt_sig(n as f64 / 1048576.0, 3))
    }
}

fn attachments_section(d: &mut Document, c: &IncidentContent, pictures: &Pictures) {
    d.heading("Photos and attachments");
    if c.attachments.is_empty() {
        d.para("No photos or files are attached to this incident.");
        return;
    }
    let mut t = Table::new(&["File", "Caption", "Size, added"]);
    for a in &c.attachments {
        let mut added = human_bytes(a.bytes);
        if let Some(x) = &a.added_at {
            added.push_str(&format!("\n{}", nb(x)));
        }
        if let Some(y) = &a.added_by {
            added.push_str(&format!("\n{y}"));
        }
        t.row(vec![
            a.name.clone(),
            a.caption.clone().unwrap_or_default(),
            added,
        ]);
    }
    d.push(Block::Table(t));
    // each file's SHA-256 is printed at full width under its picture (or in its note): a
    // 64-character word in a table column would squeeze the captions into a one-word column
    for a in &c.attachments {
        let caption = a.caption.clone().unwrap_or_default();
        match pictures.get(&a.sha256) {
            Some(bytes) => d.push(Block::Picture(Picture::new(
                &a.name,
                &a.sha256,
                &caption,
                bytes.clone(),
            ))),
            None => d.note(format!(
                "{}: the file is not in this export; it is identified by SHA-256 {}",
                a.name, a.sha256
            )),
        }
    }
}

fn custody_section(d: &mut Document, c: &IncidentContent) {
    d.heading("Specimen custody");
    if c.custody.is_empty() {
        d.para("No custody entries were recorded for the specimen.");
        return;
    }
    let mut t = Table::new(&["When", "Event", "Who", "Detail"]);
    for e in &c.custody {
        t.row(vec![
            nb(&e.at),
            e.event.clone(),
            or_nr(&e.who),
            e.detail.clone().unwrap_or_default(),
        ]);
    }
    d.push(Block::Table(t));
}

fn history_section(d: &mut Document, c: &IncidentContent) {
    d.heading("Case history");
    if c.history.is_empty() {
        d.para("No history entries.");
        return;
    }
    let mut t = Table::new(&["When", "Who", "Change", "Detail"]);
    for h in &c.history {
        t.row(vec![
            nb(&h.at),
            h.actor.clone(),
            h.action.clone(),
            h.detail.clone().unwrap_or_default(),
        ]);
    }
    d.push(Block::Table(t));
    d.note("Every change is appended to the hash-chained audit log of the database.");
}

/// The JSON form of a summary: content, its digest and the proof, for other tools.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SummaryJson {
    pub format: String,
    pub content: IncidentContent,
    pub proof: Proof,
}

pub const SUMMARY_FORMAT: &str = "shardlog incident summary 1";

/// The proof of a summary's content at export time.
pub fn proof_for(
    content: &IncidentContent,
    chain_head: Option<String>,
    exported_at: &str,
) -> Result<Proof, serde_json::Error> {
    Ok(Proof {
        content_sha256: canonical::digest(content, Numbers::Shortest)?,
        audit_chain_head: chain_head,
        exported_at: exported_at.to_string(),
        generator: generator(),
        signed_head: None,
        made_from: None,
    })
}

/// Render one summary in a format.
pub fn render(
    content: &IncidentContent,
    proof: &Proof,
    pictures: &Pictures,
    format: super::Format,
    paper: super::Paper,
) -> Result<Vec<u8>, serde_json::Error> {
    use super::Format;
    Ok(match format {
        Format::Pdf => super::pdf::render(&document(content, proof, pictures), paper),
        Format::Html => {
            super::html::render(&document(content, proof, pictures), paper).into_bytes()
        }
        Format::Md => super::markdown::render(&document(content, proof, pictures)).into_bytes(),
        Format::Json => {
            let j = SummaryJson {
                format: SUMMARY_FORMAT.into(),
                content: content.clone(),
                proof: proof.clone(),
            };
            let mut s = serde_json::to_string_pretty(&j)?;
            s.push('\n');
            s.into_bytes()
        }
    })
}
