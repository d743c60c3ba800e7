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

mod cover;
mod figures;
mod gather;
mod verify;
mod write;

use std::path::{Path, PathBuf};

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

use super::doc::Paper;
use super::summary::IncidentContent;
use crate::store::signing::SignedHead;
use crate::store::StoreError;

pub use cover::cover_document;
pub use gather::{gather, selected_ids};
pub use verify::{
    first_difference, head_bench, verify_bundle, verify_bundle_with, BundleCheck, ExpectedKey,
};
pub use write::{figures_csv, render_files, write_bundle};

pub const BUNDLE_FORMAT: &str = "shardlog dispute bundle 1";

/// What to put in the bundle.
#[derive(Debug, Clone)]
pub struct DisputeOptions {
    /// Supplier code or name.
    pub supplier: String,
    pub lot: Option<String>,
    /// Cause codes the claim is about (empty: every cause); `store::NO_CAUSE` stands for the
    /// incidents with no cause recorded.
    pub causes: Vec<String>,
    /// Origin type code the claim is about.
    pub origin_type: Option<String>,
    pub since: Option<NaiveDate>,
    pub until: Option<NaiveDate>,
    pub paper: Paper,
    /// Export time as shown ("2027-03-14 10:00:00 UTC") and today's date (end of the
    /// exposure window when no --until is given). Passed in: the report code reads no clock.
    pub exported_at: String,
    pub today: NaiveDate,
    /// The folder of the database's private key: the bundle's audit head is signed with it
    /// when it holds the key. None: not signed.
    pub key_dir: Option<PathBuf>,
    /// Write the bundle even when some attachment's file is missing or no longer matches
    /// its hash; the cover then names each one. Without it such a bundle is refused.
    pub allow_missing_attachments: bool,
}

/// Which incidents the bundle holds: every field that chose them, in one place, so that
/// [`gather::selected_ids`] can run the same choice again against a database.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Selection {
    pub supplier_code: String,
    pub supplier_name: String,
    pub lot: Option<String>,
    pub since: Option<NaiveDate>,
    pub until: Option<NaiveDate>,
    /// Cause codes (any of them; empty: every cause).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub causes: Vec<String>,
    /// Origin type code of the last examination.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub origin_type: Option<String>,
}

/// Incidents of the supplier (and lot, and window) that a cause or origin type selection
/// left out, by cause.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Excluded {
    /// Labels of the claimed causes, in the order given.
    pub claimed_causes: Vec<String>,
    /// Label of the claimed origin type.
    pub origin_type: Option<String>,
    /// Incidents of the supplier (lot, window) before the selection by cause and origin.
    pub before: u64,
    /// Those left out, by cause label, largest first.
    pub left_out: Vec<Count>,
}

/// Fields added to the bundle are left out when empty, so that the digest of a bundle made
/// before them is unchanged.
fn is_false(b: &bool) -> bool {
    !*b
}

impl VerdictCounts {
    fn is_none(&self) -> bool {
        *self == VerdictCounts::default()
    }
}

/// The saved load-hypothesis verdicts of the bundle's incidents.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct VerdictCounts {
    /// Incidents with at least one saved hypothesis.
    pub with_hypothesis: u64,
    pub consistent: u64,
    pub too_weak: u64,
    pub far_too_strong: u64,
    /// Incidents whose hypothesis says a sound pane should have survived the load: they
    /// broke below what a sound pane survives.
    pub sound_pane_survives: u64,
    /// Incidents whose hypothesis says the load alone would break a sound pane.
    pub sound_pane_breaks: u64,
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
    /// One of the causes the claim is about (`--cause`).
    #[serde(default, skip_serializing_if = "is_false")]
    pub claimed: bool,
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
    /// The method of the modulus and strength bounds ("pivotal", "Wald"); absent in bundles
    /// made before the method was recorded (their digests stay as they were).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bounds_by: Option<String>,
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
    /// With `--cause` or `--origin-type`: what the claim is about and what was left out.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub excluded: Option<Excluded>,
    #[serde(default, skip_serializing_if = "VerdictCounts::is_none")]
    pub verdicts: VerdictCounts,
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
    /// Sequence number of the audit row `audit_chain_head` is the hash of (bundles made
    /// before it was recorded have none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub audit_head_seq: Option<i64>,
    pub paper: String,
    pub cover: Cover,
    pub incidents: Vec<BundleIncident>,
    pub attachments: Vec<BundleAttachment>,
    /// The fleet database the bundle was made from (its host and database, and benches);
    /// absent for a bench file's bundle (and in bundles made before it was recorded).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub made_from: Option<String>,
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
    /// The audit head signed together with `content_sha256` by the database's key.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub signed_head: Option<SignedHead>,
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
    /// The entry number of that head.
    pub audit_head_seq: Option<i64>,
    /// The signed head, None when this machine does not hold the database's private key.
    pub signed_head: Option<SignedHead>,
}
