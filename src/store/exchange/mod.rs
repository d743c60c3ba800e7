//! Import and export: the full JSON document and the flat CSV view.
//!
//! The codecs ([`json`], [`csv`]) turn a file into records, each with its place in the file
//! (a CSV record keeps the physical line it starts on), and records back into text. The
//! store side reads ([`export`]) and writes ([`import`]) the database.
//!
//! Import is all or nothing: everything is checked first and every problem is listed with
//! its line (CSV) or JSON path; then one transaction writes it all, or nothing.

use serde::{Deserialize, Serialize};

use super::model::*;

mod admission;
mod bulk_import;
mod csv;
mod export;
mod exposure;
mod import;
mod json;
pub(crate) mod onepass;
mod stream_import;
mod witness;

pub use bulk_import::BULK_IMPORT_ABOVE;
pub use csv::{
    csv_guard, csv_header, csv_row, csv_unguard, parse_csv, CsvRecord, CSV_COLUMNS,
    CSV_SIGNED_PREFIX,
};
pub use export::Damaged;
pub use exposure::{exposure_csv_row, EXPOSURE_COLUMNS};
pub use json::parse_json;
pub use witness::{check_export, ExportCheck, SignedExport, JSON_SIGNED_FIELD};

/// The `format` field of a JSON export.
pub const JSON_FORMAT: &str = "shardlog-export";
pub const JSON_VERSION: u32 = 1;

/// Largest import file read (a 10 MB note is fine; a runaway file is not).
pub const MAX_IMPORT_BYTES: usize = 512 * 1024 * 1024;

/// A whole export: reference data and incidents.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ExportDoc {
    pub format: String,
    pub version: u32,
    #[serde(default)]
    pub lookups: Vec<LookupEntry>,
    #[serde(default)]
    pub sites: Vec<Site>,
    #[serde(default)]
    pub assets: Vec<Asset>,
    #[serde(default)]
    pub suppliers: Vec<Supplier>,
    #[serde(default)]
    pub products: Vec<Product>,
    #[serde(default)]
    pub lots: Vec<Lot>,
    #[serde(default)]
    pub exposure: Vec<Exposure>,
    #[serde(default)]
    pub incidents: Vec<Incident>,
    /// The audit head the export was read at, signed with the database's key (none when
    /// the private key was not at hand). Import does not need it; `verify --export` checks it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub signed_head: Option<super::signing::SignedHead>,
    /// Heat-soak records to set on lots once the incidents are written (the rows of a CSV
    /// import carry them; a JSON document's `lots` carry theirs). Never written out.
    #[serde(skip)]
    pub lot_heat_soak: Vec<Lot>,
}

impl ExportDoc {
    /// A document of this format and version with nothing in it.
    pub fn empty() -> ExportDoc {
        ExportDoc {
            format: JSON_FORMAT.into(),
            version: JSON_VERSION,
            lookups: vec![],
            sites: vec![],
            assets: vec![],
            suppliers: vec![],
            products: vec![],
            lots: vec![],
            exposure: vec![],
            incidents: vec![],
            signed_head: None,
            lot_heat_soak: vec![],
        }
    }
}

/// One problem found in an import file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Problem {
    /// "line 12, column stress_mpa" or "incidents[3].examinations[0].readings[1].radius".
    pub place: String,
    pub message: String,
}

impl Problem {
    pub(crate) fn new(place: impl Into<String>, message: impl Into<String>) -> Problem {
        Problem {
            place: place.into(),
            message: message.into(),
        }
    }
}

impl std::fmt::Display for Problem {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.place, self.message)
    }
}

/// How to import.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ImportOptions {
    /// Check and report, write nothing.
    pub dry_run: bool,
    /// Refuse codes (site, asset, supplier, product, lot) that are neither in the database
    /// nor in the file, instead of creating them.
    pub strict: bool,
    /// A folder holding the files of the attachment rows (named by their SHA-256, as in an
    /// attachment folder); without it, attachment rows are refused.
    pub attachments: Option<std::path::PathBuf>,
    /// Import an incident although one with the same asset, position and date found is
    /// already recorded (or earlier in the file); otherwise that is a problem of its line.
    pub allow_duplicates: bool,
}

/// What an import did (or would do, in a dry run).
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct ImportSummary {
    pub incidents: usize,
    pub reference_records: usize,
    /// Reference records already present with the same code, kept as they were.
    pub already_present: usize,
    pub dry_run: bool,
}

/// Why an import was refused: every problem found. Nothing was written.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ImportRejected {
    pub problems: Vec<Problem>,
}

impl std::fmt::Display for ImportRejected {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let n = self.problems.len();
        writeln!(
            f,
            "import refused, nothing was written: {n} problem{}",
            if n == 1 { "" } else { "s" }
        )?;
        for p in self.problems.iter().take(200) {
            writeln!(f, "  {p}")?;
        }
        if n > 200 {
            writeln!(f, "  ... and {} more", n - 200)?;
        }
        Ok(())
    }
}

impl std::error::Error for ImportRejected {}

/// File kinds import understands.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    Json,
    Csv,
}

impl FileKind {
    /// From the file name, else from the first character of the content.
    pub fn detect(name: &str, bytes: &[u8]) -> FileKind {
        let lower = name.to_ascii_lowercase();
        if lower.ends_with(".json") {
            return FileKind::Json;
        }
        if lower.ends_with(".csv") {
            return FileKind::Csv;
        }
        let first = bytes
            .iter()
            .copied()
            .find(|b| !b.is_ascii_whitespace() && *b != 0xEF && *b != 0xBB && *b != 0xBF);
        match first {
            Some(b'{') | Some(b'[') => FileKind::Json,
            _ => FileKind::Csv,
        }
    }
}

/// The file's text without a byte-order mark, or the line where it stops being UTF-8.
fn decode_utf8(bytes: &[u8]) -> Result<&str, Problem> {
    match std::str::from_utf8(bytes) {
        Ok(s) => Ok(s.strip_prefix('\u{feff}').unwrap_or(s)),
        Err(e) => {
            let ok = &bytes[..e.valid_up_to()];
            let line = ok.iter().filter(|b| **b == b'\n').count() + 1;
            Err(Problem::new(
                format!("line {line}"),
                "the file is not valid UTF-8 text; save it as UTF-8 and import again",
            ))
        }
    }
}
