//! From the store's records to report content: codes turned into the labels people read
//! (lookup tables, supplier and site names), the stored computation read back (or, when none
//! was saved, computed by the core from the recorded readings), attachments by hash.

use std::collections::HashMap;
use std::sync::Arc;

use crate::store::{self, Incident, LookupKind, ReportSource, StoreError};
use shardlog_core::fracture::{self, Analysis, Boundary};
use shardlog_core::units;

use super::summary::*;
use shardlog_core::canonical::sha256_hex;

/// Labels for the codes in the records, loaded once per export.
pub struct Labels {
    lookups: HashMap<(LookupKind, String), String>,
    suppliers: HashMap<String, String>,
    products: HashMap<String, String>,
    sites: HashMap<String, String>,
    assets: HashMap<String, (String, String)>,
    /// The library and the bench's own materials, for a computation made for the report.
    materials: store::MaterialBook,
}

impl Labels {
    pub fn load(s: &dyn ReportSource) -> Result<Labels, StoreError> {
        let lookups = s
            .all_lookups()?
            .into_iter()
            .map(|e| ((e.kind, e.code), e.label))
            .collect();
        let suppliers = s
            .suppliers()?
            .into_iter()
            .map(|x| (x.code, x.name))
            .collect();
        let products = s
            .products()?
            .into_iter()
            .map(|x| (x.code, x.name))
            .collect();
        let sites = s.sites()?.into_iter().map(|x| (x.code, x.name)).collect();
        let assets = s
            .assets()?
            .into_iter()
            .map(|x| (x.code, (x.name, x.asset_type)))
            .collect();
        Ok(Labels {
            lookups,
            suppliers,
            products,
            sites,
            assets,
            materials: s.material_book()?,
        })
    }

    /// The label of a lookup code; the code itself (with underscores as spaces) if the
    /// table has none.
    pub fn lookup(&self, kind: LookupKind, code: &str) -> String {
        self.lookups
            .get(&(kind, code.to_string()))
            .cloned()
            .unwrap_or_else(|| code.replace('_', " "))
    }

    fn named(map: &HashMap<String, String>, code: &str) -> String {
        match map.get(code) {
            Some(n) if !n.contains(code) && !n.is_empty() => format!("{n} ({code})"),
            Some(n) if !n.is_empty() => n.clone(),
            _ => code.to_string(),
        }
    }

    pub fn supplier(&self, code: &str) -> String {
        Labels::named(&self.suppliers, code)
    }
    pub fn supplier_name(&self, code: &str) -> String {
        self.suppliers
            .get(code)
            .filter(|n| !n.is_empty())
            .cloned()
            .unwrap_or_else(|| code.to_string())
    }
}

fn nonempty(s: &str) -> Option<String> {
    let t = s.trim();
    if t.is_empty() {
        None
    } else {
        Some(t.to_string())
    }
}

/// A plain number with at most three significant figures and no trailing zeros.
fn trim_num(v: f64) -> String {
    super::chart::fmt_tick(v)
}

fn time(t: &chrono::DateTime<chrono::Utc>) -> String {
    t.format("%Y-%m-%d %H:%M UTC").to_string()
}

/// The bytes held for an attachment, and whether they still have its SHA-256.
#[derive(Clone)]
pub struct HeldFile {
    bytes: Arc<Vec<u8>>,
    intact: bool,
}

/// The files held for attachments, by SHA-256 as the records give it (None: no bytes held).
pub type HeldFiles = HashMap<String, Option<HeldFile>>;

/// What is held for the attachment of hash `sha256`: its bytes, checked against the hash.
pub fn held_file(sha256: &str, bytes: Option<Vec<u8>>) -> Option<HeldFile> {
    bytes.map(|b| HeldFile {
        intact: sha256_hex(&b) == sha256.to_ascii_lowercase(),
        bytes: Arc::new(b),
    })
}

/// The content of one incident's summary, and the bytes of its attachments that are present
/// (keyed by SHA-256; a file whose bytes no longer match its hash is left out and noted).
pub fn incident_content(
    s: &dyn ReportSource,
    labels: &Labels,
    inc: &Incident,
) -> Result<(IncidentContent, Pictures), StoreError> {
    let mut files = HeldFiles::new();
    for a in &inc.attachments {
        if !files.contains_key(&a.sha256) {
            let held = held_file(&a.sha256, s.attachment_bytes(&a.sha256)?);
            files.insert(a.sha256.clone(), held);
        }
    }
    let minimums = s.fragmentation_minimums()?;
    let history = s.history(&inc.id)?;
    Ok(incident_content_read(
        labels, inc, history, &minimums, &files,
    ))
}

/// [`incident_content`] from what was read already: the incident's audit history, the
/// fragmentation table and the files held for its attachments (every one of them a key of
/// `files`).
pub fn incident_content_read(
    labels: &Labels,
    inc: &Incident,
    history: Vec<store::HistoryEntry>,
    minimums: &[crate::store::practice::FragmentationMinimum],
    files: &HeldFiles,
) -> (IncidentContent, Pictures) {
    let (attachments, pictures) = attachments(inc, files);
    (
        IncidentContent {
            reference: inc.reference.clone(),
            identification: identification(labels, inc),
            glass: glass(labels, inc),
            pattern: pattern(labels, inc, minimums),
            examination: examination(labels, inc),
            cause: cause(labels, inc),
            attachments,
            custody: custody(labels, inc),
            history: history_entries(history),
            notes: notes(inc),
        },
        pictures,
    )
}

/// Asset, position, site, dates, environment and who reported it.
fn identification(l: &Labels, inc: &Incident) -> Identification {
    let env = &inc.environment;
    let mut envs = Vec::new();
    if let Some(t) = env.temperature_c {
        envs.push(format!("{} °C", trim_num(t).replace('-', "−")));
    }
    if let Some(x) = nonempty(&env.sun) {
        envs.push(format!("sun: {x}"));
    }
    if let Some(x) = nonempty(&env.weather) {
        envs.push(format!("weather: {x}"));
    }
    let (asset, asset_kind) = match &inc.asset {
        Some(code) => match l.assets.get(code) {
            Some((name, kind)) => {
                let shown = if name.is_empty() || name.contains(code.as_str()) {
                    code.clone()
                } else {
                    format!("{name} ({code})")
                };
                (Some(shown), Some(l.lookup(LookupKind::AssetType, kind)))
            }
            None => (Some(code.clone()), None),
        },
        None => (None, None),
    };
    Identification {
        asset,
        asset_kind,
        position: nonempty(&inc.position),
        site: inc.site.as_deref().map(|c| Labels::named(&l.sites, c)),
        found_on: Some(inc.found_on.to_string()),
        broken_on: inc.broken_on.map(|d| d.to_string()),
        environment: if envs.is_empty() {
            None
        } else {
            Some(envs.join("; "))
        },
        reported_by: nonempty(&inc.reporter),
        how_found: nonempty(&inc.how_found),
        description: nonempty(&inc.description),
    }
}

/// Supplier, product, lot, make-up, size and each ply.
fn glass(l: &Labels, inc: &Incident) -> Glass {
    let g = &inc.glass;
    let size = match (g.width_m, g.height_m) {
        (Some(w), Some(h)) => Some(format!(
            "{} × {}",
            units::format(w, units::Unit::Millimetre),
            units::format(h, units::Unit::Millimetre)
        )),
        _ => None,
    };
    Glass {
        supplier: g.supplier.as_deref().map(|c| l.supplier(c)),
        product: g.product.as_deref().map(|c| Labels::named(&l.products, c)),
        lot: g.lot.clone(),
        makeup: nonempty(&g.makeup).map(|m| l.lookup(LookupKind::Makeup, &m)),
        size,
        plies: g
            .plies
            .iter()
            .map(|p| Ply {
                glass_type: p
                    .material
                    .as_deref()
                    .map(|m| l.lookup(LookupKind::Material, m)),
                temper: p
                    .temper
                    .as_deref()
                    .map(|t| l.lookup(LookupKind::TemperClass, t)),
                thickness_m: p.thickness_m,
                coating: nonempty(&p.coating),
                edge_finish: nonempty(&p.edge_finish),
            })
            .collect(),
    }
}

/// The fracture pattern.
fn pattern(
    l: &Labels,
    inc: &Incident,
    table: &[crate::store::practice::FragmentationMinimum],
) -> Pattern {
    let p = &inc.pattern;
    let check = crate::store::practice::fragmentation_check(inc, table);
    Pattern {
        fragmentation: check.as_ref().map(|c| c.summary()),
        fragmentation_source: check
            .as_ref()
            .and_then(|c| c.row())
            .map(|r| r.provenance.clone()),
        crack_count: p.crack_count,
        branching: p
            .branching
            .map(|b| if b { "yes" } else { "no" }.to_string()),
        fragment_count: p.fragment_count,
        origin_location: p
            .origin_location
            .as_deref()
            .map(|o| l.lookup(LookupKind::OriginLocation, o)),
        tension_face: nonempty(&p.tension_face),
        description: None,
    }
}

/// Every reading of every examination, the last recorded flaw, origin type and material, and
/// the computation of the current result.
fn examination(l: &Labels, inc: &Incident) -> Examination {
    let mut readings = Vec::new();
    let mut flaw_depth = None;
    let mut flaw_width = None;
    let mut origin_type = None;
    let mut material = None;
    for e in &inc.examinations {
        for r in &e.readings {
            readings.push(Reading {
                boundary: r
                    .boundary
                    .parse::<Boundary>()
                    .map(|b| b.label().to_string())
                    .unwrap_or_else(|_| l.lookup(LookupKind::Boundary, &r.boundary)),
                radius_m: r.radius.si,
                as_entered: Some(format!(
                    "{} {}",
                    r.radius.text,
                    units::Unit::lookup(&r.radius.unit)
                        .map(|u| u.symbol().to_string())
                        .unwrap_or_else(|| r.radius.unit.clone())
                )),
                magnification: r.magnification.map(|m| format!("×{}", trim_num(m))),
                analyst: nonempty(&r.analyst).or_else(|| nonempty(&e.analyst)),
                taken_at: e.examined_on.map(|d| d.to_string()),
                viewing: r
                    .viewing
                    .as_deref()
                    .map(|v| l.lookup(LookupKind::ViewingMode, v)),
            });
        }
        if let Some(f) = &e.flaw {
            flaw_depth = f.depth.as_ref().map(|m| m.si).or(flaw_depth);
            flaw_width = f.width.as_ref().map(|m| m.si).or(flaw_width);
        }
        if let Some(o) = &e.origin_type {
            origin_type = Some(l.lookup(LookupKind::OriginType, o));
        }
        if let Some(m) = &e.material {
            material = Some(l.lookup(LookupKind::Material, m));
        }
    }
    let (analysis, analysis_note) = computation(inc, &l.materials);
    let hypotheses = inc
        .current_result()
        .map(|(_, r)| store::bench_record::saved_hypotheses(r))
        .unwrap_or_default();
    Examination {
        hypotheses,
        origin_type,
        material,
        readings,
        measured_flaw_depth_m: flaw_depth,
        measured_flaw_width_m: flaw_width,
        analysis,
        analysis_note,
    }
}

/// The cause as assigned (or only the case status when none is).
fn cause(l: &Labels, inc: &Incident) -> Cause {
    match &inc.cause {
        Some(c) => Cause {
            category: Some(l.lookup(LookupKind::CauseCategory, &c.category)),
            factors: c.factors.clone(),
            confidence: Some(l.lookup(LookupKind::Confidence, &c.confidence)),
            responsibility: Some(l.lookup(LookupKind::Responsibility, &c.responsibility)),
            status: Some(l.lookup(LookupKind::Status, &inc.status)),
            rationale: nonempty(&c.note),
        },
        None => Cause {
            status: Some(l.lookup(LookupKind::Status, &inc.status)),
            ..Cause::default()
        },
    }
}

/// The attachments by hash, and the bytes of each stored file that still matches its hash.
fn attachments(inc: &Incident, files: &HeldFiles) -> (Vec<AttachmentRef>, Pictures) {
    let mut pictures = HashMap::new();
    let mut attachments = Vec::new();
    for a in &inc.attachments {
        let mut caption = nonempty(&a.caption);
        if let Some(Some(held)) = files.get(&a.sha256) {
            if held.intact {
                pictures.insert(a.sha256.clone(), held.bytes.clone());
            } else {
                caption = Some(format!(
                    "{} [the stored file no longer matches this hash]",
                    caption.unwrap_or_default()
                ));
            }
        }
        attachments.push(AttachmentRef {
            name: a.file_name.clone(),
            sha256: a.sha256.clone(),
            bytes: u64::try_from(a.size_bytes).unwrap_or(0),
            media_type: nonempty(&a.media_type),
            caption,
            added_at: Some(time(&a.added_at)),
            added_by: None,
        });
    }
    (attachments, pictures)
}

/// The custody log of the physical specimen.
fn custody(l: &Labels, inc: &Incident) -> Vec<CustodyEntry> {
    inc.custody
        .iter()
        .map(|c| {
            let mut detail = Vec::new();
            if let Some(x) = nonempty(&c.location) {
                detail.push(x);
            }
            if let Some(x) = nonempty(&c.note) {
                detail.push(x);
            }
            CustodyEntry {
                at: time(&c.at),
                event: l.lookup(LookupKind::CustodyAction, &c.action),
                who: nonempty(&c.who),
                detail: if detail.is_empty() {
                    None
                } else {
                    Some(detail.join("; "))
                },
            }
        })
        .collect()
}

/// The audit history: who created or changed the record, and which fields.
fn history_entries(history: Vec<store::HistoryEntry>) -> Vec<HistoryEntry> {
    history
        .into_iter()
        .map(|h| HistoryEntry {
            at: time(&h.at),
            actor: h.actor,
            action: match h.op.as_str() {
                "insert" => "created".to_string(),
                "update" => "changed".to_string(),
                "delete" => "deleted".to_string(),
                o => o.to_string(),
            },
            detail: if h.op == "insert" || h.changed.is_empty() {
                None
            } else {
                Some(
                    h.changed
                        .iter()
                        .map(|k| field_label(k))
                        .collect::<Vec<_>>()
                        .join(", "),
                )
            },
        })
        .collect()
}

/// The incident's note and each examination's note.
fn notes(inc: &Incident) -> Vec<NoteEntry> {
    let mut notes = Vec::new();
    if let Some(n) = nonempty(&inc.notes) {
        notes.push(NoteEntry {
            at: None,
            who: None,
            text: n,
        });
    }
    for e in &inc.examinations {
        if let Some(n) = nonempty(&e.notes) {
            notes.push(NoteEntry {
                at: e.examined_on.map(|d| d.to_string()),
                who: nonempty(&e.analyst),
                text: n,
            });
        }
    }
    notes
}

/// The stored computation, when it reads as the core's `Analysis`; otherwise the core run on
/// the recorded readings, saying so.
fn computation(inc: &Incident, book: &store::MaterialBook) -> (Option<Analysis>, Option<String>) {
    if let Some((_, r)) = inc.current_result() {
        if let Ok(a) = serde_json::from_value::<Analysis>(r.analysis.clone()) {
            return (
                Some(a),
                Some(format!(
                    "Computed by {} on {} and saved with the examination.",
                    r.code_version,
                    time(&r.computed_at)
                )),
            );
        }
    }
    let Some(exam) = inc
        .examinations
        .iter()
        .rev()
        .find(|e| !e.readings.is_empty())
    else {
        return (None, None);
    };
    match analyze_exam(inc, exam, book) {
        Ok(a) => (
            Some(a),
            Some(format!(
                "Computed for this report by {} from the recorded readings (no saved \
                 computation could be read).",
                store::CODE_VERSION
            )),
        ),
        Err(e) => (
            None,
            Some(format!(
                "No stress could be computed from the recorded readings: {e}."
            )),
        ),
    }
}

/// The words for a top-level field of an incident record, as the history shows it.
fn field_label(key: &str) -> String {
    match key {
        "examinations" => "examination".into(),
        "pattern" => "fracture pattern".into(),
        "custody" => "custody log".into(),
        "found_on" => "date found".into(),
        "broken_on" => "date broken".into(),
        "reporter" => "reported by".into(),
        "glass" => "glass".into(),
        k => k.replace('_', " "),
    }
}

/// Run the core on one examination's readings (material from the examination or the first
/// ply, temper class and thickness from the first ply).
pub fn analyze_exam(
    inc: &Incident,
    exam: &store::Examination,
    book: &store::MaterialBook,
) -> Result<Analysis, String> {
    // the same input as the store computes and verify recomputes from
    let input = store::analysis::analysis_input(inc, exam, book).map_err(|e| e.to_string())?;
    fracture::analyze(&input).map_err(|e| e.to_string())
}
