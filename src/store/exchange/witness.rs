//! Signed exports: a JSON or CSV export carries the audit head it was read at, signed with the
//! database's key, like reports and dispute bundles do; and the check of such a file, alone
//! (signature and content) or against the database (same key, the head still in the chain,
//! each exported incident as the records hold it).
//!
//! Forms (fixed: old exports must still verify):
//! - JSON: the document's field `signed_head`; its content digest is SHA-256 of the canonical
//!   JSON ([`Numbers::Shortest`]) of the whole document without that field.
//! - CSV: a first line `# shardlog signed head {…}` holding the signed head as one line of
//!   JSON; its content digest is SHA-256 of the exact bytes after that line (the header and
//!   the rows). `import` skips the line.

use std::collections::{BTreeMap, HashSet};
use std::io::Write;
use std::path::Path;

use rusqlite::params;
use sha2::{Digest, Sha256};
use shardlog_core::canonical::{self, Numbers};

use super::super::audit::INCIDENT;
use super::super::model::*;
use super::super::signing::SignedHead;
use super::super::{Anchor, Store, StoreError};
use super::csv::{csv_header, csv_records, csv_row, split_csv_signed_line, CSV_SIGNED_PREFIX};
use super::export::Damaged;
use super::{ExportDoc, FileKind};

/// The JSON field that holds an export's signed head.
pub const JSON_SIGNED_FIELD: &str = "signed_head";

/// What a signed export wrote.
#[derive(Debug, Clone)]
pub struct SignedExport {
    pub incidents: usize,
    /// None when this machine does not hold the database's private key.
    pub signed_head: Option<SignedHead>,
    pub damaged: Vec<Damaged>,
}

/// What the check of an export found.
#[derive(Debug, Clone, Default)]
pub struct ExportCheck {
    pub incidents: usize,
    pub signed_head: Option<SignedHead>,
    pub compared_with_records: bool,
    pub problems: Vec<String>,
    pub notes: Vec<String>,
}

impl ExportCheck {
    pub fn ok(&self) -> bool {
        self.problems.is_empty()
    }
}

impl Store {
    /// The JSON export of `filter` with the head it was read at, signed with the key in
    /// `key_dir` (the head and the records are read in one read transaction), written to
    /// `out` as the incidents are read: memory stays flat however many there are, and the
    /// bytes are those of the whole document serialized at once (see [`JsonFrame`]).
    pub fn export_json_signed(
        &self,
        filter: &Filter,
        key_dir: &Path,
        out: &mut dyn Write,
    ) -> Result<SignedExport, StoreError> {
        let tx = self.conn.unchecked_transaction()?;
        let (seq, hash) = self.audit_head_entry()?;
        let mut doc = self.reference_doc()?;
        let frame = JsonFrame::of(&doc)?;
        let mut digest = Sha256::new();
        digest.update(frame.canonical_head.as_bytes());
        digest.update(b"[");
        put(out, frame.pretty_head.as_bytes())?;
        put(out, b"[")?;
        let mut canon = String::new();
        let mut first = true;
        let (incidents, damaged) = self.each_readable_incident(filter, |inc| {
            canon.clear();
            canonical::to_canonical_into(&inc, Numbers::Shortest, &mut canon)?;
            if !first {
                digest.update(b",");
            }
            digest.update(canon.as_bytes());
            // an element of the document's array: on its own line, four spaces in (JSON text
            // holds no line break but those of its layout)
            let text = serde_json::to_string_pretty(&inc)?;
            put(out, if first { b"\n    " } else { b",\n    " })?;
            put(out, text.replace('\n', "\n    ").as_bytes())?;
            first = false;
            Ok(())
        })?;
        tx.commit()?;
        digest.update(b"]");
        digest.update(frame.canonical_tail.as_bytes());
        let content = canonical::hex(&digest.finalize());
        doc.signed_head = self.sign_head_at(key_dir, seq, &hash, &content)?;
        put(out, if first { b"]" } else { b"\n  ]" })?;
        put(out, JsonFrame::pretty_tail(&doc)?.as_bytes())?;
        put(out, b"\n")?;
        Ok(SignedExport {
            incidents,
            signed_head: doc.signed_head,
            damaged,
        })
    }

    /// The CSV export of `filter`, its first line the signed head (see the module notes),
    /// written to `out`. The head signs the bytes after it, so the rows are read twice in
    /// one read transaction: once for their digest, then to write them after the line.
    /// Memory stays flat however many incidents there are, and nothing is written but `out`
    /// (an export to standard output works on a full disk).
    pub fn export_csv_signed(
        &self,
        filter: &Filter,
        key_dir: &Path,
        out: &mut dyn Write,
    ) -> Result<SignedExport, StoreError> {
        let tx = self.conn.unchecked_transaction()?;
        let (seq, hash) = self.audit_head_entry()?;
        let mut read = Hashing {
            inner: std::io::sink(),
            digest: Sha256::new(),
        };
        let (incidents, damaged) = self.export_csv_readable(filter, &mut read)?;
        let digest = canonical::hex(&read.digest.finalize());
        let signed_head = self.sign_head_at(key_dir, seq, &hash, &digest)?;
        if let Some(h) = &signed_head {
            put(out, CSV_SIGNED_PREFIX.as_bytes())?;
            put(out, serde_json::to_string(h)?.as_bytes())?;
            put(out, b"\n")?;
        }
        let mut written = Hashing {
            inner: out,
            digest: Sha256::new(),
        };
        self.export_csv_readable(filter, &mut written)?;
        tx.commit()?;
        // the same snapshot read twice gives the same bytes; said, not assumed
        if canonical::hex(&written.digest.finalize()) != digest {
            return Err(StoreError::Database(
                "the export's rows changed between their digest and their writing; the export is not good: make it again".into(),
            ));
        }
        Ok(SignedExport {
            incidents,
            signed_head,
            damaged,
        })
    }
}

/// The parts of an export document around its incidents, from the document without them:
/// the canonical text up to the array's place and after it (for the content digest), and
/// the pretty text up to it. Each incident's own text goes between; the array's brackets
/// and separators are written as `serde_json` and the canonical form write them.
struct JsonFrame {
    canonical_head: String,
    canonical_tail: String,
    pretty_head: String,
}

/// Where the (empty) incidents stand in the pretty text of the document: a field of the
/// top object, two spaces in.
const PRETTY_INCIDENTS: &str = "\n  \"incidents\": []";

impl JsonFrame {
    fn of(doc: &ExportDoc) -> Result<JsonFrame, StoreError> {
        // a NUL is never written raw in canonical text: it marks the array's place alone
        let marked =
            canonical::to_canonical_with_given(doc, Numbers::Shortest, &[("incidents", &["\0"])])?;
        let (head, tail) = marked
            .split_once('\0')
            .ok_or_else(|| frame_err("canonical"))?;
        let pretty = serde_json::to_string_pretty(doc)?;
        let at = pretty
            .find(PRETTY_INCIDENTS)
            .ok_or_else(|| frame_err("pretty"))?;
        Ok(JsonFrame {
            canonical_head: head.to_string(),
            canonical_tail: tail.to_string(),
            pretty_head: pretty[..at + PRETTY_INCIDENTS.len() - 2].to_string(),
        })
    }

    /// The pretty text after the incidents' array (the signed head, when there is one).
    fn pretty_tail(doc: &ExportDoc) -> Result<String, StoreError> {
        let pretty = serde_json::to_string_pretty(doc)?;
        let at = pretty
            .find(PRETTY_INCIDENTS)
            .ok_or_else(|| frame_err("pretty"))?;
        Ok(pretty[at + PRETTY_INCIDENTS.len()..].to_string())
    }
}

fn frame_err(which: &str) -> StoreError {
    StoreError::Database(format!(
        "the export's {which} text has no place for its incidents"
    ))
}

fn output_err(e: std::io::Error) -> StoreError {
    StoreError::File {
        path: "output".into(),
        message: e.to_string(),
    }
}

fn put(out: &mut dyn Write, bytes: &[u8]) -> Result<(), StoreError> {
    out.write_all(bytes).map_err(output_err)
}

/// A writer that takes the SHA-256 of what passes through it.
struct Hashing<W: Write> {
    inner: W,
    digest: Sha256,
}

impl<W: Write> Write for Hashing<W> {
    fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
        let n = self.inner.write(buf)?;
        self.digest.update(&buf[..n]);
        Ok(n)
    }
    fn flush(&mut self) -> std::io::Result<()> {
        self.inner.flush()
    }
}

/// An export as read for the check: its signed head, content digest and incidents (each by
/// reference, as a comparable JSON value).
struct ReadExport {
    signed_head: Option<SignedHead>,
    content_sha256: String,
    incidents: BTreeMap<String, serde_json::Value>,
    kind: FileKind,
}

/// Check an export file's bytes: alone, and against `store` when given. `expected` is the
/// fingerprint the signer must have (`verify --key`).
pub fn check_export(
    name: &str,
    bytes: &[u8],
    store: Option<&Store>,
    expected: Option<&str>,
) -> Result<ExportCheck, StoreError> {
    let mut check = ExportCheck::default();
    let read = match read_export(name, bytes) {
        Ok(r) => r,
        Err(why) => {
            check.problems.push(why);
            return Ok(check);
        }
    };
    check.incidents = read.incidents.len();
    check_signature(&read, expected, &mut check);
    check.signed_head = read.signed_head.clone();
    if let Some(s) = store {
        compare_with_records(s, &read, &mut check)?;
        check.compared_with_records = true;
    }
    Ok(check)
}

fn read_export(name: &str, bytes: &[u8]) -> Result<ReadExport, String> {
    let text = std::str::from_utf8(bytes).map_err(|_| "the file is not UTF-8 text".to_string())?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    match FileKind::detect(name, bytes) {
        FileKind::Json => read_json_export(text),
        FileKind::Csv => read_csv_export(text),
    }
}

fn read_json_export(text: &str) -> Result<ReadExport, String> {
    let mut v: serde_json::Value =
        serde_json::from_str(text).map_err(|e| format!("not a JSON export: {e}"))?;
    let obj = v
        .as_object_mut()
        .ok_or("not a shardlog JSON export (expected an object)")?;
    let signed = obj.remove(JSON_SIGNED_FIELD);
    let signed_head = match signed {
        None | Some(serde_json::Value::Null) => None,
        Some(h) => Some(
            serde_json::from_value::<SignedHead>(h)
                .map_err(|e| format!("{JSON_SIGNED_FIELD}: cannot be read ({e})"))?,
        ),
    };
    let content_sha256 = canonical::digest_value(&v, Numbers::Shortest);
    // the incidents taken out of the document, not copied: each is held once
    let list = match v.get_mut("incidents").map(serde_json::Value::take) {
        Some(serde_json::Value::Array(list)) => list,
        _ => vec![],
    };
    drop(v);
    let mut incidents = BTreeMap::new();
    for (i, inc) in list.into_iter().enumerate() {
        let reference = inc
            .get("reference")
            .and_then(|r| r.as_str())
            .ok_or_else(|| format!("incidents[{i}]: has no reference"))?
            .to_string();
        incidents.insert(reference, inc);
    }
    Ok(ReadExport {
        signed_head,
        content_sha256,
        incidents,
        kind: FileKind::Json,
    })
}

fn read_csv_export(text: &str) -> Result<ReadExport, String> {
    let (signed_head, body) = match split_csv_signed_line(text) {
        Some((line, body)) => (
            Some(
                serde_json::from_str::<SignedHead>(line)
                    .map_err(|e| format!("line 1: the signed head cannot be read ({e})"))?,
            ),
            body,
        ),
        None => (None, text),
    };
    let content_sha256 = canonical::sha256_hex(body.as_bytes());
    let records = csv_records(body).map_err(|p| p.to_string())?;
    let mut iter = records.into_iter();
    let header = iter.next().map(|(_, h)| h).unwrap_or_default();
    let at = header
        .iter()
        .position(|h| h == "ref")
        .ok_or("not a shardlog CSV export (no ref column)")?;
    let mut incidents = BTreeMap::new();
    for (_, cells) in iter {
        if cells.len() == 1 && cells[0].trim().is_empty() {
            continue;
        }
        let Some(reference) = cells.get(at) else {
            continue;
        };
        let row = header
            .iter()
            .cloned()
            .zip(cells.iter().cloned().map(serde_json::Value::String))
            .collect::<serde_json::Map<_, _>>();
        incidents.insert(reference.clone(), serde_json::Value::Object(row));
    }
    Ok(ReadExport {
        signed_head,
        content_sha256,
        incidents,
        kind: FileKind::Csv,
    })
}

fn check_signature(read: &ReadExport, expected: Option<&str>, check: &mut ExportCheck) {
    let Some(h) = &read.signed_head else {
        match expected {
            Some(k) => check.problems.push(format!(
                "the export is not signed, so it cannot be checked against key {k}"
            )),
            None => check.notes.push(
                "the export is not signed (made where the database's private key was not at hand)"
                    .into(),
            ),
        }
        return;
    };
    match h.check() {
        Err(e) => check
            .problems
            .push(format!("the signed audit head does not check: {e}")),
        Ok(signer) => {
            if let Some(k) = expected {
                if signer.fingerprint() != k {
                    check.problems.push(format!(
                        "signed with key {}, not with the expected key {k}",
                        signer.fingerprint()
                    ));
                }
            }
            check.notes.push(format!(
                "signed with key {}: audit head entry {}, {}",
                signer.fingerprint(),
                h.seq,
                h.hash
            ));
        }
    }
    if h.content_sha256 != read.content_sha256 {
        check.problems.push(
            "the content differs from what was signed (edited after export: its digest differs)"
                .into(),
        );
    }
}

/// The same key as the database's, the head still in its chain, and each exported incident
/// as the records hold it (those changed after the head are only counted).
fn compare_with_records(
    s: &Store,
    read: &ReadExport,
    check: &mut ExportCheck,
) -> Result<(), StoreError> {
    let changed_after = match &read.signed_head {
        Some(h) => {
            match s.public_key()? {
                Some(db_key) if h.public_key != db_key.hex() => check.problems.push(format!(
                    "signed with key {}, but this database's key is {}",
                    h.fingerprint,
                    db_key.fingerprint()
                )),
                Some(_) => {}
                None => check.problems.push(format!(
                    "signed with key {}, but this database has no signing key: it cannot have made the export",
                    h.fingerprint
                )),
            }
            let anchor = Anchor {
                seq: h.seq,
                hash: h.hash.clone(),
            };
            for p in s.check_anchors(&[anchor])? {
                check.problems.push(format!(
                    "the export's audit head is not in this database's chain: {p} (or the export was made from a rewritten copy)"
                ));
            }
            incidents_changed_after(s, h.seq)?
        }
        None => HashSet::new(),
    };
    let mut later = 0usize;
    let soak = s.lot_heat_soaks()?;
    for (reference, exported) in &read.incidents {
        let inc = match s.find(reference) {
            Ok(Some(inc)) => inc,
            Ok(None) => {
                check.problems.push(format!(
                    "incident {reference}: in the export but not in the database"
                ));
                continue;
            }
            Err(e @ StoreError::Storage(_)) => return Err(e),
            Err(e) => {
                check.problems.push(format!(
                    "incident {reference}: the database's record cannot be read ({e})"
                ));
                continue;
            }
        };
        if changed_after.contains(&inc.id) {
            later += 1;
            continue;
        }
        let now = match read.kind {
            FileKind::Json => serde_json::to_value(&inc)?,
            FileKind::Csv => csv_value(&inc, super::export::heat_soak_of(&soak, &inc)),
        };
        if let Some(field) = first_differing_field(exported, &now) {
            check.problems.push(format!(
                "incident {reference}: the export does not match the records ({field} differs)"
            ));
        }
    }
    if later > 0 {
        check.notes.push(format!(
            "{later} exported incident{} changed in the database after the export's head; not compared",
            if later == 1 { " was" } else { "s were" }
        ));
    }
    Ok(())
}

/// The ids of incidents the audit log changed after entry `seq`.
fn incidents_changed_after(s: &Store, seq: i64) -> Result<HashSet<String>, StoreError> {
    let mut stmt = s
        .conn
        .prepare("SELECT DISTINCT entity_id FROM audit WHERE seq > ?1 AND entity = ?2")?;
    let ids = stmt
        .query_map(params![seq, INCIDENT], |r| r.get::<_, String>(0))?
        .collect::<Result<HashSet<_>, _>>()?;
    Ok(ids)
}

/// An incident's CSV row as the check reads an exported one: column name to cell text.
fn csv_value(inc: &Incident, heat_soak: Option<&HeatSoak>) -> serde_json::Value {
    let text = format!("{}\n{}\n", csv_header(), csv_row(inc, heat_soak));
    let mut rows = csv_records(&text).unwrap_or_default().into_iter();
    let header = rows.next().map(|(_, h)| h).unwrap_or_default();
    let cells = rows.next().map(|(_, c)| c).unwrap_or_default();
    serde_json::Value::Object(
        header
            .into_iter()
            .zip(cells.into_iter().map(serde_json::Value::String))
            .collect(),
    )
}

/// The first top-level field (in name order) whose value differs, if any.
fn first_differing_field(a: &serde_json::Value, b: &serde_json::Value) -> Option<String> {
    let (Some(a), Some(b)) = (a.as_object(), b.as_object()) else {
        return (a != b).then(|| "the record".to_string());
    };
    let mut keys: Vec<&String> = a.keys().chain(b.keys()).collect();
    keys.sort();
    keys.dedup();
    keys.into_iter()
        .find(|k| a.get(*k) != b.get(*k))
        .map(|k| k.to_string())
}
