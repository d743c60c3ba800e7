//! The dispute bundle: a folder a claims engineer sends to a supplier, and its verification.
//!
//! ```text
//! DIR/cover.pdf, cover.html   the cover summary (counts, rates, Weibull comparison)
//! DIR/incidents/REF.pdf       one summary per incident
//! DIR/attachments/SHA256.ext  the photos and files, named by their hash
//! DIR/figures.csv             one row of figures per incident
//! DIR/bundle.json             content (canonical JSON digest), audit-chain head, file list
//! ```
//!
//! `bundle.json` holds the content every file was rendered from, its SHA-256 (over the
//! canonical JSON), and the SHA-256 and size of every other file. Rendering is
//! deterministic, so [`verify_bundle`] re-renders every PDF, HTML and CSV from the content
//! and compares bytes: an edited figure in a PDF is found even when the file list was
//! edited to match. Given the database, it also rebuilds each incident's content from the
//! records and names the first field that differs.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::{Path, PathBuf};
use std::rc::Rc;
use std::sync::Arc;

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

use super::canonical::{digest, sha256_hex};
use super::chart::{Chart, WeibullSeries};
use super::doc::{Block, Document, Paper, Table};
use super::source::{incident_content, Labels};
use super::summary::{self, IncidentContent, Pictures, Proof, CAUTIONS};
use crate::store::{self, Filter, Store, StoreError};
use shardlog_core::fleet;
use shardlog_core::units;

pub const BUNDLE_FORMAT: &str = "shardlog dispute bundle 1";

/// What to put in the bundle.
#[derive(Debug, Clone)]
pub struct DisputeOptions {
    /// Supplier code or name.
    pub supplier: String,
    pub lot: Option<String>,
    pub since: Option<NaiveDate>,
    pub until: Option<NaiveDate>,
    pub paper: Paper,
    /// Export time as shown ("2027-03-14 10:00:00 UTC") and today's date (end of the
    /// exposure window when no --until is given). Passed in: the report code reads no clock.
    pub exported_at: String,
    pub today: NaiveDate,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Selection {
    pub supplier_code: String,
    pub supplier_name: String,
    pub lot: Option<String>,
    pub since: Option<NaiveDate>,
    pub until: Option<NaiveDate>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Count {
    pub label: String,
    pub count: u64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RateRow {
    pub supplier: String,
    pub claimed: bool,
    pub incidents: u64,
    pub pane_years: Option<f64>,
    pub rate_per_1000: Option<f64>,
    pub rate_ci95: Option<[f64; 2]>,
    pub ratio: Option<f64>,
    pub ratio_ci95: Option<[f64; 2]>,
    pub p_above: Option<f64>,
    pub p_adjusted: Option<f64>,
    pub flagged: bool,
}

/// The claimed lot against every other supplier × lot of the fleet: for all causes, and for
/// each cause found in the lot against the same cause elsewhere.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotRate {
    pub lot: String,
    /// First row: all causes; then one row per cause of the lot's incidents.
    pub rows: Vec<LotRateRow>,
    /// Supplier × lot groups the all-causes Holm adjustment ran over.
    pub compared_all: usize,
    /// Cause × supplier × lot groups the per-cause Holm adjustment ran over.
    pub compared_by_cause: usize,
    /// Pane-years of the lot, and of every other supplier × lot.
    pub pane_years: f64,
    pub rest_pane_years: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotRateRow {
    /// "all causes" or the cause's label.
    pub cause: String,
    pub incidents: u64,
    pub rate_per_1000: Option<f64>,
    pub rate_ci95: Option<[f64; 2]>,
    pub rest_incidents: u64,
    pub rest_rate_per_1000: Option<f64>,
    pub ratio: Option<f64>,
    pub ratio_ci95: Option<[f64; 2]>,
    pub p_adjusted: Option<f64>,
    pub flagged: bool,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct WeibullRow {
    pub group: String,
    pub claimed: bool,
    pub n: usize,
    pub modulus: Option<f64>,
    pub modulus_ci95: Option<[f64; 2]>,
    pub scale_mpa: Option<f64>,
    pub scale_ci95_mpa: Option<[f64; 2]>,
    /// (applied stress MPa, failure probability)
    pub points: Vec<[f64; 2]>,
    pub note: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Cover {
    pub window_since: NaiveDate,
    pub window_until: NaiveDate,
    pub incidents: u64,
    pub by_cause: Vec<Count>,
    pub by_lot: Vec<Count>,
    pub by_lot_cause: Vec<Count>,
    pub rates: Vec<RateRow>,
    pub rates_compared: usize,
    /// With `--lot`: the claimed lot's rate against every other supplier × lot of the fleet.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lot_rate: Option<LotRate>,
    pub weibull: Vec<WeibullRow>,
    /// Applied stress of the selected incidents, MPa.
    pub stresses_mpa: Vec<f64>,
    pub notes: Vec<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BundleIncident {
    pub reference: String,
    pub content_sha256: String,
    pub file: String,
    pub content: IncidentContent,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BundleAttachment {
    pub sha256: String,
    pub name: String,
    pub bytes: u64,
    /// Path in the bundle; None when the database had no copy of the file.
    pub file: Option<String>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BundleContent {
    pub selection: Selection,
    pub exported_at: String,
    pub generator: String,
    pub audit_chain_head: String,
    pub paper: String,
    pub cover: Cover,
    pub incidents: Vec<BundleIncident>,
    pub attachments: Vec<BundleAttachment>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FileEntry {
    pub path: String,
    pub sha256: String,
    pub bytes: u64,
}

/// bundle.json
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BundleFile {
    pub format: String,
    pub content_sha256: String,
    pub content: BundleContent,
    pub files: Vec<FileEntry>,
}

#[derive(Debug, thiserror::Error)]
pub enum BundleError {
    #[error("{0}")]
    Usage(String),
    #[error("{0}")]
    Store(#[from] StoreError),
    #[error("{path}: {message}")]
    Io { path: String, message: String },
    #[error("bundle content: {0}")]
    Json(#[from] serde_json::Error),
}

fn io(path: &Path, e: impl std::fmt::Display) -> BundleError {
    BundleError::Io {
        path: path.display().to_string(),
        message: e.to_string(),
    }
}

/// What a written bundle holds.
#[derive(Debug, Clone)]
pub struct Written {
    pub dir: PathBuf,
    pub incidents: usize,
    pub attachments: usize,
    pub files: usize,
    pub content_sha256: String,
    pub audit_chain_head: String,
}

/// The extension an attachment gets in the bundle: from what its bytes are for photos, from
/// its name only for a few inert kinds, else `.bin` — a file named `x.html` or `x.exe` is
/// never handed to someone under a name their computer would open by running it.
fn safe_ext(name: &str, bytes: Option<&[u8]>) -> String {
    use super::image::{sniff, PictureKind};
    match bytes.map(sniff) {
        Some(PictureKind::Jpeg { .. }) => return ".jpg".into(),
        Some(PictureKind::Png { .. }) => return ".png".into(),
        _ => {}
    }
    const INERT: [&str; 9] = [
        "pdf", "txt", "csv", "tif", "tiff", "gif", "bmp", "webp", "heic",
    ];
    match name.rsplit_once('.') {
        Some((_, e)) if INERT.contains(&e.to_ascii_lowercase().as_str()) => {
            format!(".{}", e.to_ascii_lowercase())
        }
        _ => ".bin".into(),
    }
}

/// A file name for an incident reference (references are short codes, but never trust them).
fn ref_file(reference: &str) -> String {
    let s: String = reference
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    format!(
        "incidents/{}.pdf",
        if s.is_empty() { "incident".into() } else { s }
    )
}

fn resolve_supplier(s: &Store, wanted: &str) -> Result<store::Supplier, BundleError> {
    let all = s.suppliers()?;
    let w = wanted.trim();
    if let Some(x) = all
        .iter()
        .find(|x| x.code == w)
        .or_else(|| all.iter().find(|x| x.code.eq_ignore_ascii_case(w)))
        .or_else(|| all.iter().find(|x| x.name.eq_ignore_ascii_case(w)))
    {
        return Ok(x.clone());
    }
    let known: Vec<String> = all.iter().take(12).map(|x| x.code.clone()).collect();
    Err(BundleError::Usage(format!(
        "--supplier {w}: no such supplier (code or name); known codes: {}",
        if known.is_empty() {
            "none".to_string()
        } else {
            known.join(", ")
        }
    )))
}

/// Everything the bundle's files are rendered from, gathered from the store.
pub fn gather(s: &Store, opts: &DisputeOptions) -> Result<(BundleContent, Pictures), BundleError> {
    if let (Some(a), Some(b)) = (opts.since, opts.until) {
        if a > b {
            return Err(BundleError::Usage(format!(
                "--since {a} is after --until {b}"
            )));
        }
    }
    let sup = resolve_supplier(s, &opts.supplier)?;
    let labels = Labels::load(s)?;
    let head = s.audit_head()?;
    let filter = Filter {
        supplier: Some(sup.code.clone()),
        lot: opts.lot.clone(),
        since: opts.since,
        until: opts.until,
        ..Filter::default()
    };
    let ids = s.matching_ids(&filter)?;
    let mut incidents = Vec::with_capacity(ids.len());
    let mut pictures: Pictures = HashMap::new();
    let mut attachments: BTreeMap<String, BundleAttachment> = BTreeMap::new();
    let mut raw = Vec::with_capacity(ids.len());
    for id in &ids {
        let inc = s.get(id)?;
        let (content, pics) = incident_content(s, &labels, &inc)?;
        for a in &content.attachments {
            let file = pics
                .get(&a.sha256)
                .map(|b| format!("attachments/{}{}", a.sha256, safe_ext(&a.name, Some(b))));
            attachments
                .entry(a.sha256.clone())
                .or_insert_with(|| BundleAttachment {
                    sha256: a.sha256.clone(),
                    name: a.name.clone(),
                    bytes: a.bytes,
                    file,
                });
        }
        pictures.extend(pics);
        incidents.push(BundleIncident {
            reference: content.reference.clone(),
            content_sha256: digest(&content)?,
            file: ref_file(&content.reference),
            content,
        });
        raw.push(inc);
    }
    incidents.sort_by(|a, b| a.reference.cmp(&b.reference));
    let cover = cover(s, &labels, &sup, opts, &raw)?;
    let content = BundleContent {
        selection: Selection {
            supplier_code: sup.code.clone(),
            supplier_name: sup.name.clone(),
            lot: opts.lot.clone(),
            since: opts.since,
            until: opts.until,
        },
        exported_at: opts.exported_at.clone(),
        generator: summary::generator(),
        audit_chain_head: head,
        paper: match opts.paper {
            Paper::A4 => "a4".into(),
            Paper::Letter => "letter".into(),
        },
        cover,
        incidents,
        attachments: attachments.into_values().collect(),
    };
    Ok((content, pictures))
}

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

fn cover(
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

    // the whole fleet in the window, for the comparison with other suppliers: the narrow
    // copy of the facts, with only the keys the comparison groups by (the supplier; with a
    // lot, the lot and the cause too)
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
    let window = fleet::Window::new(since, until).map_err(|e| BundleError::Usage(e.to_string()))?;
    // the Weibull fit takes positive applied stresses only
    for f in &mut facts {
        f.stress_pa = f.stress_pa.filter(|v| v.is_finite() && *v > 0.0);
    }
    let exposures: Vec<fleet::Exposure> = exposure.iter().map(|e| e.to_fleet()).collect();
    let table = fleet::group(
        &facts,
        &exposures,
        &fleet::GroupOptions {
            keys: vec![fleet::Key::Supplier],
            window,
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
    let code_of = |row: &fleet::GroupRow| match row.values.first() {
        Some(fleet::GroupValue::Text(Some(c))) => Some(c.clone()),
        _ => None,
    };
    let mut rates = Vec::new();
    let mut weibull = Vec::new();
    let to_row = |name: String,
                  claimed: bool,
                  fit: &Result<fleet::WeibullFit, fleet::WeibullError>,
                  n: usize| match fit {
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
    };
    for row in &table.rows {
        let code = code_of(row);
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
            if !(claimed && opts.lot.is_some()) {
                weibull.push(to_row(name, claimed, fit, row.n_stresses));
            }
        }
    }
    let lot_rate = match &opts.lot {
        Some(lot) => lot_rate(facts, &exposures, window, sup, lot, labels)?,
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
                to_row(
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
        window_since: since,
        window_until: until,
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

/// "v (a to b)" with the 95 % interval, "v" without one, `missing` without a value.
fn with_interval(v: Option<f64>, ci: Option<[f64; 2]>, missing: &str) -> String {
    match (v, ci) {
        (Some(v), Some([a, b])) => format!("{} ({} to {})", fmt3(v), fmt3(a), fmt3(b)),
        (Some(v), None) => fmt3(v),
        _ => missing.to_string(),
    }
}

fn mpa(v: f64) -> String {
    format!("{} MPa", fmt3(v))
}

fn fmt3(v: f64) -> String {
    units::fmt_sig(v, 3)
}

fn opt<T>(v: Option<T>, f: impl Fn(T) -> String) -> String {
    v.map(f).unwrap_or_else(|| "not available".into())
}

/// The cover document.
pub fn cover_document(c: &BundleContent) -> Document {
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
            opt(r.pane_years, fmt3),
            with_interval(r.rate_per_1000, r.rate_ci95, "no exposure recorded"),
            with_interval(r.ratio, r.ratio_ci95, "not available"),
            opt(r.p_adjusted, |p| units::fmt_sig(p, 2)),
            if r.flagged { "yes" } else { "no" }.into(),
        ]);
    }
    d.push(Block::Table(t));

    if let Some(lr) = &cv.lot_rate {
        d.heading(&format!(
            "Rate of lot {} against the rest of the fleet",
            lr.lot
        ));
        d.para(format!(
            "The fleet grouped by supplier and lot: this lot ({} pane-years) against every other \
             supplier × lot together ({} pane-years), for all causes (Holm's adjustment over \
             {} groups) and for each cause found in the lot against the same cause elsewhere \
             (Holm's adjustment over {} cause × lot groups).",
            fmt3(lr.pane_years),
            fmt3(lr.rest_pane_years),
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
                format!("{}, {}", r.rest_incidents, opt(r.rest_rate_per_1000, fmt3)),
                with_interval(r.ratio, r.ratio_ci95, "not available"),
                opt(r.p_adjusted, |p| units::fmt_sig(p, 2)),
                if r.flagged { "yes" } else { "no" }.into(),
            ]);
        }
        d.push(Block::Table(t));
    }

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
                (Some(m), Some([a, b])) => format!("{} ({} to {})", fmt3(m), fmt3(a), fmt3(b)),
                _ => w.note.clone().unwrap_or_else(|| "no fit".into()),
            },
            match (w.scale_mpa, w.scale_ci95_mpa) {
                (Some(m), Some([a, b])) => format!("{} ({} to {})", mpa(m), fmt3(a), mpa(b)),
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
                    fmt3(a.applied_stress_pa / 1e6),
                    fmt3(a.applied_low_pa / 1e6),
                    fmt3(a.applied_high_pa / 1e6)
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
    d.push(Block::Boxed {
        title: "Cautions".into(),
        lines: CAUTIONS.iter().map(|s| s.to_string()).collect(),
    });
    d.proof = vec![
        (
            "Bundle content SHA-256".into(),
            digest(c).unwrap_or_else(|_| "not computable".into()),
        ),
        (
            "Audit-chain head at export".into(),
            c.audit_chain_head.clone(),
        ),
        ("Exported".into(), c.exported_at.clone()),
        ("Produced by".into(), c.generator.clone()),
    ];
    d
}

/// figures.csv: one row per incident.
pub fn figures_csv(c: &BundleContent) -> String {
    let header: Vec<String> = [
        "reference",
        "found_on",
        "supplier",
        "product",
        "lot",
        "origin_location",
        "origin_type",
        "temper",
        "thickness_mm",
        "readings",
        "boundary",
        "mean_radius_mm",
        "constant_mpa_sqrt_m",
        "constant_provenance",
        "net_stress_mpa",
        "net_low_mpa",
        "net_high_mpa",
        "residual_at_origin_mpa",
        "applied_stress_mpa",
        "applied_low_mpa",
        "applied_high_mpa",
        "flaw_size_um",
        "flaw_low_um",
        "flaw_high_um",
        "cause",
        "confidence",
        "responsibility",
        "status",
        "content_sha256",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    let num = |v: f64| {
        if v.is_finite() {
            format!("{v}")
        } else {
            String::new()
        }
    };
    let mut rows = Vec::new();
    for i in &c.incidents {
        let ct = &i.content;
        let a = ct.examination.analysis.as_ref();
        let b = a.and_then(|a| a.boundaries.iter().find(|b| b.boundary == a.headline));
        let f = a.and_then(|a| a.flaw.as_ref());
        let ply = ct.glass.plies.first();
        rows.push(vec![
            i.reference.clone(),
            ct.identification.found_on.clone().unwrap_or_default(),
            ct.glass.supplier.clone().unwrap_or_default(),
            ct.glass.product.clone().unwrap_or_default(),
            ct.glass.lot.clone().unwrap_or_default(),
            ct.pattern.origin_location.clone().unwrap_or_default(),
            ct.examination.origin_type.clone().unwrap_or_default(),
            ply.and_then(|p| p.temper.clone()).unwrap_or_default(),
            ply.and_then(|p| p.thickness_m)
                .map(|t| num(t * 1e3))
                .unwrap_or_default(),
            ct.examination.readings.len().to_string(),
            b.map(|b| b.boundary.label().to_string())
                .unwrap_or_default(),
            b.map(|b| num(b.stats.mean * 1e3)).unwrap_or_default(),
            b.map(|b| num(b.constant.value / 1e6)).unwrap_or_default(),
            b.map(|b| b.constant.provenance.to_string())
                .unwrap_or_default(),
            a.map(|a| num(a.stress_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.stress_low_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.stress_high_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.residual.at_origin_pa / 1e6))
                .unwrap_or_default(),
            a.map(|a| num(a.applied_stress_pa / 1e6))
                .unwrap_or_default(),
            a.map(|a| num(a.applied_low_pa / 1e6)).unwrap_or_default(),
            a.map(|a| num(a.applied_high_pa / 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_m * 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_low_m * 1e6)).unwrap_or_default(),
            f.map(|f| num(f.size_high_m * 1e6)).unwrap_or_default(),
            ct.cause.category.clone().unwrap_or_default(),
            ct.cause.confidence.clone().unwrap_or_default(),
            ct.cause.responsibility.clone().unwrap_or_default(),
            ct.cause.status.clone().unwrap_or_default(),
            i.content_sha256.clone(),
        ]);
    }
    super::csv(&header, &rows)
}

fn paper_of(c: &BundleContent) -> Paper {
    if c.paper == "letter" {
        Paper::Letter
    } else {
        Paper::A4
    }
}

fn incident_proof(c: &BundleContent, i: &BundleIncident) -> Proof {
    Proof {
        content_sha256: i.content_sha256.clone(),
        audit_chain_head: Some(c.audit_chain_head.clone()),
        exported_at: c.exported_at.clone(),
        generator: c.generator.clone(),
    }
}

/// Every file of the bundle except bundle.json, rendered from the content (deterministic).
/// Incident summaries are rendered on up to `threads` threads.
pub fn render_files(
    c: &BundleContent,
    pictures: &Pictures,
    threads: usize,
) -> Vec<(String, Vec<u8>)> {
    let paper = paper_of(c);
    let cover = cover_document(c);
    let mut files = vec![
        ("cover.pdf".to_string(), super::pdf::render(&cover, paper)),
        (
            "cover.html".to_string(),
            super::html::render(&cover, paper).into_bytes(),
        ),
        ("figures.csv".to_string(), figures_csv(c).into_bytes()),
    ];
    let threads = threads.clamp(1, 16);
    let chunk = c.incidents.len().div_ceil(threads).max(1);
    let rendered: Vec<Vec<(String, Vec<u8>)>> = std::thread::scope(|scope| {
        let handles: Vec<_> = c
            .incidents
            .chunks(chunk)
            .map(|part| {
                scope.spawn(move || {
                    part.iter()
                        .map(|i| {
                            let doc =
                                summary::document(&i.content, &incident_proof(c, i), pictures);
                            (i.file.clone(), super::pdf::render(&doc, paper))
                        })
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .map(|h| h.join().unwrap_or_default())
            .collect()
    });
    for r in rendered {
        files.extend(r);
    }
    for a in &c.attachments {
        if let (Some(path), Some(bytes)) = (&a.file, pictures.get(&a.sha256)) {
            files.push((path.clone(), bytes.as_ref().clone()));
        }
    }
    files
}

fn threads() -> usize {
    std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
}

/// Write the bundle into `dir` (which must not exist, or be an empty folder). The files are
/// written into a sibling temporary folder first and moved into place at the end, so an
/// interrupted export leaves no half bundle under the requested name.
pub fn write_bundle(s: &Store, opts: &DisputeOptions, dir: &Path) -> Result<Written, BundleError> {
    if dir.exists() {
        let empty = std::fs::read_dir(dir)
            .map_err(|e| io(dir, e))?
            .next()
            .is_none();
        if !empty || !dir.is_dir() {
            return Err(BundleError::Usage(format!(
                "-o {}: already exists and is not an empty folder; choose a new name",
                dir.display()
            )));
        }
    }
    let (content, pictures) = gather(s, opts)?;
    if content.incidents.is_empty() {
        return Err(BundleError::Usage(format!(
            "no incidents match supplier {}{}; nothing was written",
            content.selection.supplier_code,
            content
                .selection
                .lot
                .as_ref()
                .map(|l| format!(", lot {l}"))
                .unwrap_or_default()
        )));
    }
    let files = render_files(&content, &pictures, threads());
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "bundle".into());
    let tmp = parent.join(format!(".{name}.partial-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&tmp);
    std::fs::create_dir_all(tmp.join("incidents")).map_err(|e| io(&tmp, e))?;
    std::fs::create_dir_all(tmp.join("attachments")).map_err(|e| io(&tmp, e))?;
    let mut entries = Vec::with_capacity(files.len());
    let result = (|| -> Result<(), BundleError> {
        for (path, bytes) in &files {
            let p = tmp.join(path);
            crate::store::write_new_synced(&p, bytes, false).map_err(|e| io(&p, e))?;
            entries.push(FileEntry {
                path: path.clone(),
                sha256: sha256_hex(bytes),
                bytes: bytes.len() as u64,
            });
        }
        entries.sort_by(|a, b| a.path.cmp(&b.path));
        let content_sha256 = digest(&content)?;
        let bf = BundleFile {
            format: BUNDLE_FORMAT.into(),
            content_sha256,
            content: content.clone(),
            files: entries.clone(),
        };
        let mut json = serde_json::to_string_pretty(&bf)?;
        json.push('\n');
        let p = tmp.join("bundle.json");
        crate::store::write_new_synced(&p, json.as_bytes(), false).map_err(|e| io(&p, e))?;
        for d in [tmp.join("incidents"), tmp.join("attachments"), tmp.clone()] {
            crate::store::sync_dir(&d).map_err(|e| io(&d, e))?;
        }
        if dir.exists() {
            std::fs::remove_dir(dir).map_err(|e| io(dir, e))?;
        }
        std::fs::rename(&tmp, dir).map_err(|e| io(dir, e))?;
        crate::store::sync_dir(&parent).map_err(|e| io(&parent, e))?;
        Ok(())
    })();
    if let Err(e) = result {
        let _ = std::fs::remove_dir_all(&tmp);
        // name the bundle and the file inside it, never the temporary folder
        return Err(match e {
            BundleError::Io { path, message } => {
                let inner = Path::new(&path)
                    .strip_prefix(&tmp)
                    .map(|p| p.display().to_string())
                    .unwrap_or(path);
                BundleError::Io {
                    path: dir.display().to_string(),
                    message: format!(
                        "bundle not written ({inner}: {message}); nothing was left there"
                    ),
                }
            }
            other => other,
        });
    }
    Ok(Written {
        dir: dir.to_path_buf(),
        incidents: content.incidents.len(),
        attachments: content
            .attachments
            .iter()
            .filter(|a| a.file.is_some())
            .count(),
        files: entries.len() + 1,
        content_sha256: digest(&content)?,
        audit_chain_head: content.audit_chain_head.clone(),
    })
}

/// What `verify --bundle` found.
#[derive(Debug, Clone, Default, Serialize)]
pub struct BundleCheck {
    pub incidents: usize,
    pub files_checked: usize,
    /// Whether the records of a database were compared too.
    pub compared_with_records: bool,
    pub audit_chain_head: String,
    /// Every difference found; empty when the bundle is intact.
    pub problems: Vec<String>,
    /// Facts worth knowing that are not failures (e.g. records added since the export).
    pub notes: Vec<String>,
}

impl BundleCheck {
    pub fn ok(&self) -> bool {
        self.problems.is_empty()
    }
}

/// The first JSON path where two values differ, with both values (shortened).
pub fn first_difference(
    a: &serde_json::Value,
    b: &serde_json::Value,
    path: &str,
) -> Option<String> {
    use serde_json::Value;
    if a == b {
        return None;
    }
    match (a, b) {
        (Value::Object(x), Value::Object(y)) => {
            let keys: BTreeSet<&String> = x.keys().chain(y.keys()).collect();
            for k in keys {
                let p = format!("{path}.{k}");
                match (x.get(k), y.get(k)) {
                    (Some(u), Some(v)) => {
                        if let Some(d) = first_difference(u, v, &p) {
                            return Some(d);
                        }
                    }
                    (Some(_), None) => return Some(format!("{p}: only in the bundle")),
                    (None, Some(_)) => return Some(format!("{p}: only in the records")),
                    (None, None) => {}
                }
            }
            None
        }
        (Value::Array(x), Value::Array(y)) => {
            for (i, (u, v)) in x.iter().zip(y).enumerate() {
                if let Some(d) = first_difference(u, v, &format!("{path}[{i}]")) {
                    return Some(d);
                }
            }
            Some(format!(
                "{path}: {} entries in the bundle, {} in the records",
                x.len(),
                y.len()
            ))
        }
        _ => {
            let short = |v: &serde_json::Value| {
                let s = v.to_string();
                if s.chars().count() > 60 {
                    format!("{}…", s.chars().take(60).collect::<String>())
                } else {
                    s
                }
            };
            Some(format!(
                "{path}: the bundle has {}, the records have {}",
                short(a),
                short(b)
            ))
        }
    }
}

fn rel_files(dir: &Path) -> Result<BTreeSet<String>, BundleError> {
    let mut out = BTreeSet::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).map_err(|e| io(&d, e))? {
            let e = e.map_err(|e| io(&d, e))?;
            let p = e.path();
            let ft = e.file_type().map_err(|e| io(&p, e))?;
            if ft.is_dir() {
                stack.push(p);
            } else if let Ok(r) = p.strip_prefix(dir) {
                out.insert(r.to_string_lossy().replace('\\', "/"));
            }
        }
    }
    Ok(out)
}

/// Largest file `verify` reads into memory (a bundle's PDFs and photos are far smaller).
const MAX_FILE: u64 = 512 * 1024 * 1024;

fn read_limited(p: &Path) -> std::io::Result<Vec<u8>> {
    let meta = std::fs::metadata(p)?;
    if meta.len() > MAX_FILE {
        return Err(std::io::Error::other("larger than 512 MB"));
    }
    std::fs::read(p)
}

/// Check a bundle folder: its digest, every file's hash and size, every rendered file against
/// a fresh rendering of the content, the attachments against their names; and, given the
/// database, each incident's content against the records and the selection against the
/// incidents the records hold now.
pub fn verify_bundle(dir: &Path, store: Option<&Store>) -> Result<BundleCheck, BundleError> {
    if !dir.is_dir() {
        return Err(BundleError::Usage(format!(
            "--bundle {}: not a folder",
            dir.display()
        )));
    }
    let mut check = BundleCheck::default();
    let bj = dir.join("bundle.json");
    let text = match read_limited(&bj) {
        Ok(b) => b,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: cannot be read ({e})"));
            return Ok(check);
        }
    };
    let value: serde_json::Value = match serde_json::from_slice(&text) {
        Ok(v) => v,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: not valid JSON ({e})"));
            return Ok(check);
        }
    };
    let bf: BundleFile = match serde_json::from_value(value.clone()) {
        Ok(b) => b,
        Err(e) => {
            check
                .problems
                .push(format!("bundle.json: not a shardlog dispute bundle ({e})"));
            return Ok(check);
        }
    };
    if bf.format != BUNDLE_FORMAT {
        check.problems.push(format!(
            "bundle.json: format \"{}\" is not \"{BUNDLE_FORMAT}\"",
            bf.format
        ));
    }
    let c = &bf.content;
    check.incidents = c.incidents.len();
    check.audit_chain_head = c.audit_chain_head.clone();
    // 1. the digest over the content
    let content_value = value.get("content").cloned().unwrap_or_default();
    let recomputed = super::canonical::digest_value(&content_value);
    if recomputed != bf.content_sha256 {
        check.problems.push(format!(
            "bundle.json: its content was edited (SHA-256 of the content is {recomputed}, the bundle records {})",
            bf.content_sha256
        ));
    }
    for i in &c.incidents {
        match digest(&i.content) {
            Ok(d) if d == i.content_sha256 => {}
            _ => check.problems.push(format!(
                "incident {}: its content in bundle.json was edited (digest differs from the one recorded)",
                i.reference
            )),
        }
    }
    if c.cover.incidents as usize != c.incidents.len() {
        check.problems.push(format!(
            "bundle.json: the cover counts {} incidents but {} are listed",
            c.cover.incidents,
            c.incidents.len()
        ));
    }
    // 2. the files on disk against the file list
    let on_disk = rel_files(dir)?;
    let listed: BTreeSet<String> = bf.files.iter().map(|f| f.path.clone()).collect();
    let mut pictures: Pictures = HashMap::new();
    let mut disk_bytes: HashMap<String, Vec<u8>> = HashMap::new();
    for f in &bf.files {
        if f.path.contains("..") || f.path.starts_with('/') || f.path.contains('\\') {
            check.problems.push(format!(
                "bundle.json: file path {} leaves the bundle",
                f.path
            ));
            continue;
        }
        let p = dir.join(&f.path);
        match read_limited(&p) {
            Ok(b) => {
                check.files_checked += 1;
                let h = sha256_hex(&b);
                if h != f.sha256 || b.len() as u64 != f.bytes {
                    check.problems.push(format!(
                        "{}: the file was edited (its SHA-256 is {h}, the bundle records {})",
                        f.path, f.sha256
                    ));
                }
                disk_bytes.insert(f.path.clone(), b);
            }
            Err(_) => check
                .problems
                .push(format!("{}: the file is missing", f.path)),
        }
    }
    for extra in on_disk.difference(&listed) {
        if extra != "bundle.json" {
            check.problems.push(format!(
                "{extra}: a file that is not part of the bundle was added"
            ));
        }
    }
    // 3. attachments are what their names say
    for a in &c.attachments {
        let Some(path) = &a.file else { continue };
        if !listed.contains(path) {
            check.problems.push(format!(
                "{path}: attachment {} is not in the file list",
                a.name
            ));
        }
        if let Some(b) = disk_bytes.get(path) {
            if sha256_hex(b) != a.sha256 {
                check.problems.push(format!(
                    "{path}: the photo or file was changed (its content no longer has SHA-256 {})",
                    a.sha256
                ));
            } else {
                pictures.insert(a.sha256.clone(), Arc::new(b.clone()));
            }
        }
    }
    // every incident has its summary, every summary its incident
    let expected_pdfs: BTreeSet<String> = c.incidents.iter().map(|i| i.file.clone()).collect();
    for i in &c.incidents {
        if !listed.contains(&i.file) {
            check.problems.push(format!(
                "incident {}: its summary {} is not in the file list",
                i.reference, i.file
            ));
        }
    }
    for f in on_disk.iter().filter(|f| f.starts_with("incidents/")) {
        if !expected_pdfs.contains(f) {
            check.problems.push(format!(
                "{f}: an incident summary with no incident in bundle.json (was an incident removed?)"
            ));
        }
    }
    // 4. every rendered file equals a fresh rendering of the content
    if check.problems.is_empty() {
        for (path, bytes) in render_files(c, &pictures, threads()) {
            match disk_bytes.get(&path) {
                Some(b) if *b == bytes => {}
                Some(_) => check.problems.push(format!(
                    "{path}: differs from what the bundle's content renders to (the file was edited after export)"
                )),
                None => check.problems.push(format!("{path}: the file is missing")),
            }
        }
    }
    // 5. the records
    if let Some(s) = store {
        check.compared_with_records = true;
        compare_with_records(s, c, &mut check)?;
    }
    Ok(check)
}

fn compare_with_records(
    s: &Store,
    c: &BundleContent,
    check: &mut BundleCheck,
) -> Result<(), BundleError> {
    let chain = s.verify()?;
    if !chain.ok() {
        check.problems.push(format!(
            "database: the audit chain is broken ({})",
            chain.first_problem.clone().unwrap_or_default()
        ));
    }
    let labels = Labels::load(s)?;
    for i in &c.incidents {
        let Some(inc) = s.find(&i.reference)? else {
            check.problems.push(format!(
                "incident {}: in the bundle but no longer in the database",
                i.reference
            ));
            continue;
        };
        let (now, _) = incident_content(s, &labels, &inc)?;
        if now != i.content {
            let a = serde_json::to_value(&i.content)?;
            let b = serde_json::to_value(&now)?;
            let diff =
                first_difference(&a, &b, "content").unwrap_or_else(|| "a value differs".into());
            check.problems.push(format!(
                "incident {}: the bundle does not match the records: {diff}",
                i.reference
            ));
        }
    }
    let filter = Filter {
        supplier: Some(c.selection.supplier_code.clone()),
        lot: c.selection.lot.clone(),
        since: c.selection.since,
        until: c.selection.until,
        ..Filter::default()
    };
    let in_bundle: BTreeSet<&str> = c.incidents.iter().map(|i| i.reference.as_str()).collect();
    let mut added_later = 0;
    for id in s.matching_ids(&filter)? {
        let inc = s.get(&id)?;
        if in_bundle.contains(inc.reference.as_str()) {
            continue;
        }
        let created = inc.created_at.format("%Y-%m-%d %H:%M:%S UTC").to_string();
        if created.as_str() > c.exported_at.as_str() {
            added_later += 1;
        } else {
            check.problems.push(format!(
                "incident {}: matches the bundle's selection in the records but is missing from the bundle",
                inc.reference
            ));
        }
    }
    if added_later > 0 {
        check.notes.push(format!(
            "{added_later} incident{} matching the selection were recorded after the export",
            if added_later == 1 { "" } else { "s" }
        ));
    }
    if chain.head == c.audit_chain_head {
        check
            .notes
            .push("the records have not changed since the export (same audit-chain head)".into());
    } else {
        check.notes.push(format!(
            "the database has changed since the export (audit-chain head now {}); the bundle's incidents were compared one by one",
            chain.head
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use serde_json::json;

    #[test]
    fn first_difference_names_the_path() {
        let a = json!({"x": {"y": [1, 2, 3]}, "z": "a"});
        let b = json!({"x": {"y": [1, 5, 3]}, "z": "a"});
        assert_eq!(
            first_difference(&a, &b, "content").unwrap(),
            "content.x.y[1]: the bundle has 2, the records have 5"
        );
        assert!(first_difference(&a, &a, "c").is_none());
    }

    #[test]
    fn file_names_from_records_stay_inside_the_bundle() {
        assert_eq!(ref_file("BR-260314-0001"), "incidents/BR-260314-0001.pdf");
        assert_eq!(ref_file("../../etc/x"), "incidents/______etc_x.pdf");
        assert_eq!(safe_ext("scan.PDF", None), ".pdf");
        assert_eq!(safe_ext("photo.jpg", Some(b"<script>")), ".bin");
        assert_eq!(safe_ext("page.html", Some(b"<script>")), ".bin");
        assert_eq!(safe_ext("a.tar/../x", None), ".bin");
        assert_eq!(crate::report::chart::fmt_tick(2.0), "2");
    }
}
